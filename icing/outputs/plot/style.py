"""Shared style of the pictures: colours, hatches, the caution box, the output checks.

Reading in grey print and for colour-blind readers: the severity colours are
a sequential ramp of our own whose lightness falls monotonically from "trace"
to "severe", and every severity also has its own hatch (cross-section) or line
width and dash (map); SLD, coverage gaps and the ground have their own
patterns and legend entries, so no information is carried by colour alone.

SVG output keeps text and lines as vectors (``svg.fonttype = none``) and
embeds the shaded fields as an image (rasterised at the ``dpi``), so that long
routes stay small; the caution and the legend carry the element ids
``caution`` and ``legend`` so that tools (and the tests) can find them.
"""

from __future__ import annotations

import pathlib
import textwrap

import matplotlib
from matplotlib.patches import Patch

from icing import codes
from icing.caution import CAUTION_SHORT
from icing.errors import InputError
from icing.outputs.atomic import replace_atomically

__all__ = [
    "SEVERITY_COLOURS",
    "SEVERITY_HATCHES",
    "HATCH_COLOURS",
    "MAP_STYLE",
    "MARKERS",
    "GAP_LABEL",
    "GAP_FILL",
    "GAP_HATCH",
    "GAP_HATCH_COLOUR",
    "SLD_HATCH",
    "SLD_COLOUR",
    "GROUND",
    "CLOUD_COLOUR",
    "CANDIDATE_COLOUR",
    "COAST_COLOUR",
    "DOMAIN_COLOUR",
    "ISOTHERMS",
    "ISOTHERM_COLOUR",
    "TEXT_BOX",
    "check_output_path",
    "check_picture_path",
    "save",
    "draw_caution",
    "severity_handles",
    "hold_handle",
    "hold_runs",
    "draw_hold_marker",
    "valid_times_text",
    "props_of",
]

#: Fill colour per severity code 1..4 (trace, light, moderate, severe): a
#: sequential sand -> ochre -> rust -> plum ramp of our own, lightness falling.
SEVERITY_COLOURS = {
    codes.SEV_TRACE: "#f4ecc2",
    codes.SEV_LIGHT: "#e0a96d",
    codes.SEV_MODERATE: "#a8553a",
    codes.SEV_SEVERE: "#4b1f45",
}
#: Hatch per severity (cross-section).
SEVERITY_HATCHES = {
    codes.SEV_TRACE: "",
    codes.SEV_LIGHT: "..",
    codes.SEV_MODERATE: "//",
    codes.SEV_SEVERE: "xx",
}
#: The hatch colour that shows on each severity's fill.
HATCH_COLOURS = {1: "#3a3a3a", 2: "#3a3a3a", 3: "#f2f2f2", 4: "#f2f2f2"}
#: Map line width and dash per severity (reads in grey print).
MAP_STYLE = {
    codes.SEV_TRACE: (2.0, (0, (1.0, 1.2))),
    codes.SEV_LIGHT: (3.0, (0, (4.0, 1.5))),
    codes.SEV_MODERATE: (4.5, "solid"),
    codes.SEV_SEVERE: (6.5, "solid"),
}
#: Marker shape per severity on the flight path.
MARKERS = {
    codes.SEV_TRACE: "h",  # not a circle: an open circle marks a hold
    codes.SEV_LIGHT: "s",
    codes.SEV_MODERATE: "D",
    codes.SEV_SEVERE: "X",
}
GAP_LABEL = "coverage gap \u2014 no data, not 'no icing'"
GAP_FILL, GAP_HATCH, GAP_HATCH_COLOUR = "#b3b3b3", "--", "#5e5e5e"
SLD_HATCH = {codes.SLD_DRIZZLE: "o", codes.SLD_RAIN: "O"}
SLD_COLOUR = "#0a8f9a"
GROUND = "#5c5346"
CLOUD_COLOUR = "#2b5fad"
CANDIDATE_COLOUR = "#1b7f3b"
COAST_COLOUR = "#8fa3b8"
DOMAIN_COLOUR = "#3b5b7a"
#: Isotherms drawn [degC] -> (line style, width), in a grey that the black path stands out from.
ISOTHERMS = {0: ((0, (8, 2, 2, 2)), 1.3), -10: ((0, (5, 2.5)), 1.0), -20: ((0, (1.2, 1.8)), 1.0)}
ISOTHERM_COLOUR = "#4a4a4a"
# A light box behind labels (a path-effect halo would turn SVG text into paths).
TEXT_BOX = {"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.8}
_SAVE_RC = {"svg.fonttype": "none", "hatch.linewidth": 0.7, "svg.hashsalt": "icing"}


def check_output_path(path, suffixes, *, what):
    """Return ``(path, format)`` for an output file, or raise naming the fix.

    ``suffixes`` lists the accepted formats (lower case, no dot); the first is
    the one suggested in the message.
    """
    path = pathlib.Path(path)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in suffixes:
        raise InputError(
            f"{what} format {path.suffix or '(none)'!r} not supported",
            path=path,
            fix="name the file " + " or ".join(f"*.{s}" for s in suffixes),
        )
    if not path.parent.is_dir():
        raise InputError(
            f"the folder for the {what} does not exist",
            path=path,
            fix=f"create {path.parent} first",
        )
    return path, fmt


def check_picture_path(path):
    """Return ``(path, format)`` of a picture (``.png`` or ``.svg``)."""
    return check_output_path(path, ("png", "svg"), what="picture")


def save(fig, path, fmt, dpi, *, tight=False):
    """Write a figure atomically (temporary file, then renamed).

    ``tight`` grows or trims the page to what is drawn, so that no label, legend or
    title is cut off at the edge.
    """
    extra = {"bbox_inches": "tight", "pad_inches": 0.12} if tight else {}
    with matplotlib.rc_context(_SAVE_RC):
        replace_atomically(path, lambda tmp: fig.savefig(tmp, format=fmt, dpi=dpi, **extra))
    return path


def draw_caution(fig, width_in):
    """Draw the short caution in a box at the bottom of the figure."""
    chars = max(40, int(width_in * 15))
    text = "\n".join(textwrap.wrap(CAUTION_SHORT, chars))
    t = fig.text(
        0.5,
        0.012,
        text,
        ha="center",
        va="bottom",
        fontsize=7.5,
        gid="caution",
        bbox={
            "boxstyle": "round,pad=0.4",
            "facecolor": "#fff8d8",
            "edgecolor": "#222222",
            "linewidth": 0.8,
        },
    )
    t.set_label("caution")
    return t


def severity_handles():
    """Legend patches of the four severities (fill and hatch)."""
    return [
        Patch(
            facecolor=SEVERITY_COLOURS[k],
            edgecolor=HATCH_COLOURS[k],
            hatch=SEVERITY_HATCHES[k],
            linewidth=0.5,
            label=codes.SEVERITY[k],
        )
        for k in (codes.SEV_TRACE, codes.SEV_LIGHT, codes.SEV_MODERATE, codes.SEV_SEVERE)
    ]


def hold_runs(samples):
    """Each hold of a route as (first sample, stop, minutes held); empty without holds."""
    import numpy as np

    hold = getattr(samples, "hold", None)
    if hold is None or not np.any(hold):
        return []
    hold = np.asarray(hold, bool)
    dt = np.asarray(samples.dt_s, float)
    edges = np.flatnonzero(np.diff(np.r_[0, hold.astype(int), 0]))
    return [
        (int(a), int(b), float(dt[a:b].sum()) / 60.0)
        for a, b in zip(edges[::2], edges[1::2], strict=True)
    ]


def draw_hold_marker(ax, x, y, *, zorder):
    """Draw a hold's open circle at one place."""
    ax.plot(
        [x],
        [y],
        marker="o",
        markersize=12,
        markerfacecolor="none",
        markeredgecolor="black",
        markeredgewidth=1.6,
        zorder=zorder,
    )


def hold_handle(label):
    """Legend entry of a hold (an open circle, on the map and the cross-section)."""
    from matplotlib.lines import Line2D

    return Line2D(
        [],
        [],
        color="black",
        linestyle="none",
        marker="o",
        markerfacecolor="none",
        markersize=9,
        label=label,
    )


def valid_times_text(provenance):
    """Short text of the forecast valid times (first and last when there are many)."""
    vt = (provenance or {}).get("valid_times")
    if not vt:
        return None
    if isinstance(vt, str):
        return vt
    vt = [str(v) for v in vt]
    if len(vt) <= 3:
        return ", ".join(vt)
    return f"{vt[0]} \u2026 {vt[-1]} ({len(vt)} times)"


def props_of(feature):
    """Return the properties of a GeoJSON Feature dict (or the dict itself)."""
    return feature.get("properties", feature) if isinstance(feature, dict) else {}
