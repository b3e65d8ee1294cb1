"""An ensemble's map of one altitude band at one valid time: fractions of members.

Beside each severity map of an ensemble (``icing grid --maps``; the severity shown
there is the stated statistic's), one picture with two panels: the fraction of the
members at light or worse and at moderate or worse, in the bands and the blue-green
colours of the route cross-section's member panels (:mod:`icing.outputs.plot.members`),
a ramp that shares no colour with the severity ramp, so a fraction is never read as
a severity. A fraction of 0 (no member) is white; where no member has data the cell
is grey and hatched like every coverage gap (never white); where some members have no
data the cell is dotted (its fraction is among the members with data; the NetCDF's
``members`` says how many); the band under every member's ground is drawn as ground.
Grids with more cells than the picture has pixels show the largest fraction of each
few cells (said on the map). The title names the band, the airframe, the member
count and the statistic; the caution is at the foot.
"""

from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from icing import codes
from icing.hazards.bands import COVERAGE_BELOW_GROUND
from icing.hazards.ensemble import FRACTION_BAND_LABELS, SHOWN_FRACTION_WORDS, fraction_band
from icing.outputs.plot.gridmap import DISPLAY_CELLS, _coarsen, _hatch, drawn_columns, map_frame
from icing.outputs.plot.members import FRACTION_COLOURS
from icing.outputs.plot.routemap import _draw_coastlines, _draw_graticule
from icing.outputs.plot.style import (
    COAST_COLOUR,
    GAP_FILL,
    GAP_HATCH,
    GAP_HATCH_COLOUR,
    GAP_LABEL,
    GROUND,
    check_picture_path,
    draw_caution,
    save,
)

__all__ = ["plot_grid_member_map"]

#: Display ranks: 0 no member, 1 below every member's ground, 2 no member has data,
#: 3.. the fraction bands (a larger rank wins when cells are merged for display).
_COLOURS = ["#ffffff", GROUND, GAP_FILL, *FRACTION_COLOURS]
#: Outside the forecast's grid (the axes' background), as the severity maps.
_OUTSIDE = "#dcdcdc"
#: Hatch of the cells where some members have no data.
_FEWER_HATCH = ".."
_FEWER_COLOUR = "#4a4a4a"


def _ranks(fraction, coverage):
    """Display rank of every cell (see ``_COLOURS``)."""
    band = fraction_band(fraction)
    below = np.asarray(coverage) == COVERAGE_BELOW_GROUND
    return np.where(band >= 1, band + 2, np.where(band == 0, 0, np.where(below, 1, 2)))


def plot_grid_member_map(result, t, b, path, *, dpi=110):
    """Draw the fractions of members of band ``b`` at valid time ``t``; write a PNG.

    Parameters
    ----------
    result : GridResult
        A grid run over an ensemble or a spread (``result.members > 1``).
    t, b : int
        Index of the valid time and of the band.
    path : str or pathlib.Path
        Output file (``.png`` or ``.svg``).

    Returns
    -------
    pathlib.Path
    """
    path, fmt = check_picture_path(path)
    words = SHOWN_FRACTION_WORDS
    x, (cov, covering, *shown) = drawn_columns(
        result,
        (result.coverage[t, b], result.members_covering[t, b])
        + tuple(result.member_fraction[w][t, b] for w in words),
    )
    fractions = dict(zip(words, shown, strict=True))
    f = max(1, int(np.ceil(np.sqrt(cov.size / DISPLAY_CELLS))))
    lon, lat, coslat, extent = map_frame(result, x, f)
    panel_w, width = 4.3, 11.5
    map_h = float(
        np.clip(panel_w * (extent[3] - extent[2]) / ((extent[1] - extent[0]) * coslat), 1.8, 5.5)
    )
    height = map_h + 1.7
    fig = Figure(figsize=(width, height))
    FigureCanvasAgg(fig)
    fewer = _coarsen(((covering > 0) & (covering < result.members)).astype(np.int8), f)
    for i, word in enumerate(SHOWN_FRACTION_WORDS):
        left = 0.06 + i * (panel_w + 0.45) / width
        ax = fig.add_axes([left, 0.8 / height, panel_w / width, map_h / height])
        rank = _coarsen(_ranks(fractions[word], cov), f)
        _panel(ax, lon, lat, rank, fewer > 0, extent, coslat)
        worse = "" if word == codes.SEVERITY[-1] else " or worse"
        ax.set_title(f"members at {word}{worse}", fontsize=9, loc="left", pad=3)
        if i == len(SHOWN_FRACTION_WORDS) - 1:
            _legend(ax)
    _titles(fig, result, t, b, f, top=1.0 - 0.2 / height, step=0.3 / height)
    draw_caution(fig, width)
    return save(fig, path, fmt, dpi, tight=True)


def _panel(ax, lon, lat, rank, fewer, extent, coslat):
    """One threshold's fractions, its gaps and its cells with fewer members, on ``ax``."""
    ax.set_facecolor(_OUTSIDE)  # beyond the forecast's grid: no data, not "no member"
    cmap = ListedColormap(_COLOURS)
    ax.pcolormesh(lon, lat, rank, cmap=cmap, vmin=-0.5, vmax=7.5, shading="flat", zorder=0.5)
    cx = 0.25 * (lon[:-1, :-1] + lon[1:, 1:] + lon[:-1, 1:] + lon[1:, :-1])
    cy = 0.25 * (lat[:-1, :-1] + lat[1:, 1:] + lat[:-1, 1:] + lat[1:, :-1])
    _hatch(ax, cx, cy, rank == 2, GAP_HATCH, GAP_HATCH_COLOUR)
    _hatch(ax, cx, cy, fewer & (rank != 2), _FEWER_HATCH, _FEWER_COLOUR)
    ax.set_xlim(*extent[:2])
    ax.set_ylim(*extent[2:])
    ax.set_aspect(1.0 / coslat)
    ax.tick_params(labelsize=7)
    _draw_coastlines(ax, float(np.median(lon)))
    _draw_graticule(ax)


def _titles(fig, result, t, b, f, *, top, step):
    """Title (band, airframe, members) and subtitle (valid time, statistic, display)."""
    fig.text(
        0.06,
        top,
        f"Fraction of {result.members} members icing for {result.airframe}, "
        f"{result.bands.label(b)} MSL",
        fontsize=12,
        weight="bold",
        va="top",
        gid="title",
    )
    issued = (result.provenance or {}).get("issue_time")
    note = (
        f"valid {result.time_text(t)}"
        + (f"; issued {issued}" if issued else "")
        + f"; the severity map beside this one shows the {result.member_statistic} member; "
        "each member's word is the worst in the band; fractions of the members with data"
        + (f"; largest of each {f}x{f} cells" if f > 1 else "")
    )
    fig.text(0.06, top - step, note, fontsize=7.5, va="top", gid="subtitle")


def _legend(ax):
    handles = [
        Patch(facecolor=c, edgecolor="#555555", linewidth=0.4, label=label)
        for c, label in zip(FRACTION_COLOURS, FRACTION_BAND_LABELS[1:], strict=True)
    ] + [
        Patch(facecolor="#ffffff", edgecolor="#555555", label="no member"),
        Patch(facecolor=GAP_FILL, edgecolor=GAP_HATCH_COLOUR, hatch=GAP_HATCH, label=GAP_LABEL),
        Patch(
            facecolor="#ffffff",
            edgecolor=_FEWER_COLOUR,
            hatch=_FEWER_HATCH,
            label="some members without data",
        ),
        Patch(facecolor=GROUND, edgecolor="#555555", label="band below the ground"),
        Patch(facecolor=_OUTSIDE, edgecolor="#555555", label="outside the forecast"),
        Line2D([], [], color=COAST_COLOUR, linewidth=0.8, label="coast (Natural Earth)"),
    ]
    leg = ax.legend(
        handles=handles,
        loc="upper left",
        bbox_to_anchor=(1.03, 1.0),
        fontsize=7,
        handlelength=2.5,
        borderaxespad=0.0,
        title="members",
        title_fontsize=7,
    )
    leg.set_gid("legend")
