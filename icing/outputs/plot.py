"""Pictures of a route screening: vertical cross-section and plan-view map.

Both are drawn with matplotlib's object API (``matplotlib.figure.Figure``; no
pyplot, no global figure state) and written as PNG or SVG by the file's
suffix. Nothing is fetched from the network: the map has no tiles.

Reading in grey print and for colour-blind readers: the severity colours are
a sequential ramp of our own whose lightness falls monotonically from "trace"
to "severe", and every severity also has its own hatch (cross-section) or line
width and dash (map); SLD, coverage gaps and the ground have their own
patterns and legend entries, so no information is carried by colour alone.

SVG output keeps text and lines as vectors (``svg.fonttype = none``) and
embeds the shaded fields as an image (rasterised at the ``dpi``), so that long
routes stay small; the caution and the
legend carry the element ids ``caution`` and ``legend`` so that tools (and the
tests) can find them.
"""

from __future__ import annotations

import pathlib
import textwrap

import matplotlib
import numpy as np
from matplotlib import patheffects
from matplotlib.colors import BoundaryNorm, ListedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from matplotlib.ticker import FuncFormatter, MaxNLocator

from icing import codes
from icing.caution import CAUTION_SHORT
from icing.constants import FT
from icing.errors import InputError
from icing.outputs.atomic import replace_atomically

__all__ = [
    "SEVERITY_COLOURS",
    "SEVERITY_HATCHES",
    "GAP_LABEL",
    "plot_cross_section",
    "plot_route_map",
]

#: Fill colour per severity code 1..4 (trace, light, moderate, severe): a
#: sequential sand -> ochre -> rust -> plum ramp of our own, lightness falling.
SEVERITY_COLOURS = {
    codes.SEV_TRACE: "#f4ecc2",
    codes.SEV_LIGHT: "#e0a96d",
    codes.SEV_MODERATE: "#a8553a",
    codes.SEV_SEVERE: "#4b1f45",
}
#: Hatch per severity (cross-section) and the hatch colour that shows on its fill.
SEVERITY_HATCHES = {
    codes.SEV_TRACE: "",
    codes.SEV_LIGHT: "..",
    codes.SEV_MODERATE: "//",
    codes.SEV_SEVERE: "xx",
}
_HATCH_COLOURS = {1: "#3a3a3a", 2: "#3a3a3a", 3: "#f2f2f2", 4: "#f2f2f2"}
#: Map line width and dash per severity (reads in grey print).
_MAP_STYLE = {
    codes.SEV_TRACE: (2.0, (0, (1.0, 1.2))),
    codes.SEV_LIGHT: (3.0, (0, (4.0, 1.5))),
    codes.SEV_MODERATE: (4.5, "solid"),
    codes.SEV_SEVERE: (6.5, "solid"),
}
_MARKERS = {
    codes.SEV_TRACE: "o",
    codes.SEV_LIGHT: "s",
    codes.SEV_MODERATE: "D",
    codes.SEV_SEVERE: "X",
}
GAP_LABEL = "coverage gap \u2014 no data, not 'no icing'"
_GAP_FILL, _GAP_HATCH, _GAP_HATCH_COLOUR = "#b3b3b3", "--", "#5e5e5e"
_SLD_HATCH = {codes.SLD_DRIZZLE: "o", codes.SLD_RAIN: "O"}
_SLD_COLOUR = "#0a8f9a"
_GROUND = "#5c5346"
_CLOUD_COLOUR = "#2b5fad"
_CANDIDATE_COLOUR = "#1b7f3b"
_ISOTHERMS = {0: ("solid", 1.6), -10: ((0, (5, 2.5)), 1.1), -20: ((0, (1.2, 1.8)), 1.1)}
# A light box behind labels (a path-effect halo would turn SVG text into paths).
_TEXT_BOX = {"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.8}
_SAVE_RC = {"svg.fonttype": "none", "hatch.linewidth": 0.7, "svg.hashsalt": "icing"}


# --------------------------------------------------------------------------- output


def _check_output_path(path, suffixes, *, what):
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


def _check_picture_path(path):
    return _check_output_path(path, ("png", "svg"), what="picture")


def _save(fig, path, fmt, dpi):
    with matplotlib.rc_context(_SAVE_RC):
        replace_atomically(path, lambda tmp: fig.savefig(tmp, format=fmt, dpi=dpi))
    return path


def _caution(fig, width_in):
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


def _severity_handles():
    return [
        Patch(
            facecolor=SEVERITY_COLOURS[k],
            edgecolor=_HATCH_COLOURS[k],
            hatch=SEVERITY_HATCHES[k],
            linewidth=0.5,
            label=codes.SEVERITY[k],
        )
        for k in (codes.SEV_TRACE, codes.SEV_LIGHT, codes.SEV_MODERATE, codes.SEV_SEVERE)
    ]


def _valid_times_text(provenance):
    vt = (provenance or {}).get("valid_times")
    if not vt:
        return None
    if isinstance(vt, str):
        return vt
    vt = [str(v) for v in vt]
    if len(vt) <= 3:
        return ", ".join(vt)
    return f"{vt[0]} \u2026 {vt[-1]} ({len(vt)} times)"


# ---------------------------------------------------------------------- cross-section


def _ground_ft(cur):
    alt = np.asarray(cur.altitudes_m, dtype=float)
    below = np.asarray(cur.below_ground, dtype=bool)
    top_below = np.where(below, alt[None, :], -np.inf).max(axis=1)
    g = np.asarray(cur.ground_m, dtype=float)
    g = np.where(np.isfinite(g), g, top_below)
    return np.where(np.isfinite(g), g, np.nan) / FT


def _mask_fill(ax, x, y, mask, *, hatch, hatch_colour, zorder):
    """Hatch the cells where ``mask`` is true (contour of the 0/1 field at 0.5)."""
    if not mask.any():
        return None
    cs = ax.contourf(
        x,
        y,
        mask.T.astype(float),
        levels=[0.5, 1.5],
        colors="none",
        hatches=[hatch],
        zorder=zorder,
    )
    if hasattr(cs, "set_hatchcolor"):
        cs.set_hatchcolor(hatch_colour)
    else:  # older matplotlib: the hatch takes the edge colour
        cs.set_edgecolor(hatch_colour)
    cs.set_linewidth(0.0)
    cs.set_rasterized(True)  # fields as an image, lines and text stay vector (small SVG)
    return cs


def _runs(flags):
    """(start, stop) index pairs of the runs of True in a 1-D bool array."""
    f = np.r_[False, np.asarray(flags, dtype=bool), False]
    edges = np.flatnonzero(np.diff(f.astype(int)))
    return list(zip(edges[::2], edges[1::2], strict=True))


def _flight_path(screening):
    at = getattr(screening, "at_flight", None) or {}
    samples = getattr(screening, "samples", None)
    x = at.get("distance_km")
    if x is None and samples is not None and getattr(samples, "distance_m", None) is not None:
        x = np.asarray(samples.distance_m, dtype=float) / 1000.0
    y = at.get("altitude_ft")
    if y is None and samples is not None and getattr(samples, "altitude_m", None) is not None:
        y = np.asarray(samples.altitude_m, dtype=float) / FT
    if x is None or y is None:
        return None, None
    return np.asarray(x, dtype=float), np.asarray(y, dtype=float)


def _props(feature):
    return feature.get("properties", feature) if isinstance(feature, dict) else {}


def _candidate_runs(seg_props, join_km):
    """Nearest clear candidates as runs: adjacent stretches with the same one are merged.

    Returns a list of ``(side, altitude_ft, flight_level, start_km, end_km)``.
    """
    items = []
    for p in seg_props:
        opts = p.get("vertical_options") or {}
        if p.get("kind") != "icing":
            continue
        for side in ("above", "below"):
            o = opts.get(side)
            if o and o.get("clear"):
                items.append(
                    (
                        side,
                        float(o["altitude_ft"]),
                        o.get("flight_level"),
                        float(p["start_km"]),
                        float(p["end_km"]),
                    )
                )
    items.sort(key=lambda t: (t[0], t[1], t[3]))
    runs = []
    for it in items:
        last = runs[-1] if runs else None
        if last and last[:2] == it[:2] and it[3] <= last[4] + join_km:
            runs[-1] = (*last[:4], max(last[4], it[4]))
        else:
            runs.append(it)
    return runs


def _draw_candidates(ax, seg_props, x):
    """Mark candidate ice-free altitudes; return True when any was drawn.

    Every clear altitude of a stretch is a short tick at its middle; the nearest
    clear altitudes above and below are a dashed line across the stretch (one per
    run of adjacent stretches sharing it) with a triangle and a label.
    """
    drawn = False
    for p in seg_props:
        alts = p.get("ice_free_altitudes_ft") or []
        if p.get("kind") != "icing" or not alts:
            continue
        mid = 0.5 * (float(p["start_km"]) + float(p["end_km"]))
        ax.plot(
            np.full(len(alts), mid),
            alts,
            linestyle="none",
            marker="_",
            markersize=9,
            markeredgewidth=1.6,
            color=_CANDIDATE_COLOUR,
            zorder=9,
        )
        drawn = True
    spacing = float(np.median(np.diff(x))) if x.size > 1 else 0.0
    for side, h, fl, a, b in _candidate_runs(seg_props, join_km=2.5 * spacing):
        mid = 0.5 * (a + b)
        up = side == "above"
        ax.hlines(
            [h],
            a,
            max(b, a + 1e-3),
            colors=_CANDIDATE_COLOUR,
            linewidths=1.2,
            linestyles=[(0, (2, 2))],
            zorder=6,
        )
        ax.plot(
            [mid],
            [h],
            marker="^" if up else "v",
            markersize=7,
            color=_CANDIDATE_COLOUR,
            markeredgecolor="black",
            zorder=9,
        )
        ax.annotate(
            f"{h:.0f} ft" if fl is None else f"FL{int(fl):03d}",
            (mid, h),
            xytext=(0, 5 if up else -5),
            textcoords="offset points",
            ha="center",
            va="bottom" if up else "top",
            fontsize=6,
            color="black",
            zorder=9,
            bbox=_TEXT_BOX,
        )
        drawn = True
    return drawn


def _altitude_top_ft(y, fy, seg_props):
    """Top of the picture [ft]: enough above the path and the candidates, within the curtain."""
    top = float(y[-1])
    if fy is None or not np.isfinite(fy).any():
        return top
    high = float(np.nanmax(fy))
    want = max(3.0 * high, high + 3000.0)
    for p in seg_props:
        for o in (p.get("vertical_options") or {}).values():
            if isinstance(o, dict) and o.get("altitude_ft") is not None:
                want = max(want, float(o["altitude_ft"]) + 1000.0)
    return max(min(top, want), high + 500.0)  # the path is always inside


def _label_gaps(ax, x, y, gap, y_bottom, y_top):
    """Label each stretch of coverage gap once, on its tallest visible band."""
    span = x[-1] - x[0] if x.size > 1 else 1.0
    runs = _runs(gap.any(axis=1))
    if not runs:
        return
    widest = max(runs, key=lambda r: x[r[1] - 1] - x[r[0]])
    visible = (y >= y_bottom) & (y <= y_top)
    for a, b in runs:
        width = x[b - 1] - x[a]
        if width < 0.015 * span and (a, b) != widest:
            continue  # too narrow to carry a label; the legend names the pattern
        bands = _runs(gap[a:b].any(axis=0) & visible)
        if not bands:
            continue
        lo, hi = max(bands, key=lambda r: r[1] - r[0])
        ax.text(
            0.5 * (x[a] + x[b - 1]),
            0.5 * (y[lo] + y[hi - 1]),
            GAP_LABEL,
            rotation=90 if width < 0.25 * span and (hi - lo) > 3 else 0,
            ha="center",
            va="center",
            fontsize=7,
            zorder=6,
            gid="gap-label",
            clip_on=True,
            bbox={
                "facecolor": "white",
                "edgecolor": "#444444",
                "alpha": 0.9,
                "boxstyle": "round,pad=0.25",
                "linewidth": 0.6,
            },
        )


def plot_cross_section(
    screening, path, *, title=None, figsize=(11.0, 6.5), dpi=150, candidates=True, ylim_ft=None
):
    """Draw the route's vertical cross-section and write it as PNG or SVG.

    Distance along the route (waypoint names on the top axis) against altitude
    in feet: the severity for the airframe's reference collector at every
    altitude (``curtain.severity``; colour ramp plus hatch per severity), the
    0, -10 and -20 degC isotherms (labelled), the cloud outline (bases and
    tops), SLD areas (circle hatches), coverage gaps (grey, hatched, labelled),
    the ground, the planned flight path with its icing stretches highlighted
    (thick line and a marker shape per severity), the candidate ice-free
    altitudes of each icing segment (``ice_free_altitudes_ft``), a title with
    route, airframe and forecast valid times, and the caution.

    Parameters
    ----------
    screening : icing.results.RouteScreening
    path : str or pathlib.Path
        Output file; ``.png`` or ``.svg``.
    title : str, optional
        Replaces the first title line (route and airframe).
    figsize : (float, float)
        Figure size. [in]
    dpi : float
        Resolution of PNG output. [1/in]
    candidates : bool
        Draw the candidate ice-free altitudes from the segment properties.
    ylim_ft : (float, float), optional
        Altitude range shown. [ft] Default: the curtain's bottom to its top, or
        for low flights (drones) to three times the highest planned altitude,
        at least 3,000 ft above it and above the nearest candidates.

    Returns
    -------
    pathlib.Path
        The file written (written to a temporary file and renamed).

    Raises
    ------
    InputError
        When the suffix is not ``.png``/``.svg`` or the folder does not exist.
    """
    path, fmt = _check_picture_path(path)
    cur = screening.curtain
    x = np.asarray(cur.distance_km, dtype=float)
    y = np.asarray(cur.altitudes_m, dtype=float) / FT
    sev = np.asarray(cur.severity)
    below = np.asarray(cur.below_ground, dtype=bool)
    gap = (sev == codes.GAP) & ~below

    fig = Figure(figsize=figsize)
    pressure = getattr(cur, "altitude_reference", "msl") == "pressure"
    ax = fig.add_axes([0.075, 0.2, 0.62 if pressure else 0.66, 0.62])
    # Severity fill (cells as they are: nearest shading) and its hatches.
    shown = np.ma.masked_where(sev < codes.SEV_TRACE, sev)
    cmap = ListedColormap([SEVERITY_COLOURS[k] for k in (1, 2, 3, 4)])
    norm = BoundaryNorm([0.5, 1.5, 2.5, 3.5, 4.5], cmap.N)
    ax.pcolormesh(
        x, y, shown.T, cmap=cmap, norm=norm, shading="nearest", zorder=1, rasterized=True
    )
    for k in (codes.SEV_LIGHT, codes.SEV_MODERATE, codes.SEV_SEVERE):
        _mask_fill(
            ax, x, y, sev == k, hatch=SEVERITY_HATCHES[k], hatch_colour=_HATCH_COLOURS[k], zorder=2
        )
    # Coverage gaps: grey, hatched, labelled.
    if gap.any():
        ax.pcolormesh(
            x,
            y,
            np.ma.masked_where(~gap, np.ones(gap.shape)).T,
            cmap=ListedColormap([_GAP_FILL]),
            vmin=0,
            vmax=2,
            shading="nearest",
            zorder=1,
            rasterized=True,
        )
        _mask_fill(ax, x, y, gap, hatch=_GAP_HATCH, hatch_colour=_GAP_HATCH_COLOUR, zorder=2)
    # SLD: circle hatches with an outline.
    sld = np.asarray(cur.sld_class)
    for cls, hatch in _SLD_HATCH.items():
        m = (sld == cls) & ~below
        if _mask_fill(ax, x, y, m, hatch=hatch, hatch_colour=_SLD_COLOUR, zorder=3):
            ax.contour(
                x,
                y,
                m.T.astype(float),
                levels=[0.5],
                colors=_SLD_COLOUR,
                linewidths=1.0,
                linestyles=[(0, (3, 1.5))],
                zorder=3,
            )
    # Cloud outline (bases and tops).
    cloud = np.asarray(cur.cloud, dtype=bool) & ~below
    if cloud.any() and not cloud.all():
        ax.contour(
            x,
            y,
            cloud.T.astype(float),
            levels=[0.5],
            colors=_CLOUD_COLOUR,
            linewidths=1.3,
            linestyles=[(0, (6, 2, 1, 2))],
            zorder=4,
        )
    # Isotherms 0, -10, -20 degC, labelled.
    temp = np.where(below, np.nan, np.asarray(cur.temperature_c, dtype=float))
    finite = np.isfinite(temp)
    if finite.any():
        tmin, tmax = temp[finite].min(), temp[finite].max()
        levels = sorted(lv for lv in _ISOTHERMS if tmin < lv < tmax)
        if levels:
            cs = ax.contour(
                x,
                y,
                temp.T,
                levels=levels,
                colors="#151515",
                linestyles=[_ISOTHERMS[lv][0] for lv in levels],
                linewidths=[_ISOTHERMS[lv][1] for lv in levels],
                zorder=4,
            )
            ax.clabel(cs, fmt={lv: f"{lv:d} \u00b0C" for lv in levels}, fontsize=7, inline=True)
    # Ground.
    g = _ground_ft(cur)
    if np.isfinite(g).any():
        ax.fill_between(
            x, y[0], np.where(np.isfinite(g), g, y[0]), color=_GROUND, zorder=5, linewidth=0
        )
        ax.plot(x, g, color="black", linewidth=1.2, zorder=5)
    # Flight path and its icing stretches.
    fx, fy = _flight_path(screening)
    halo = [patheffects.withStroke(linewidth=4.0, foreground="white")]
    seg_props = [_props(f) for f in (getattr(screening, "segments", None) or [])]
    if fx is not None:
        ax.plot(fx, fy, color="black", linewidth=1.5, zorder=7, path_effects=halo)
        for p in seg_props:
            inside = (fx >= float(p.get("start_km", np.inf)) - 1e-9) & (
                fx <= float(p.get("end_km", -np.inf)) + 1e-9
            )
            if not inside.any():
                continue
            if p.get("kind") == "coverage-gap":
                ax.plot(
                    fx[inside],
                    fy[inside],
                    color=_GAP_HATCH_COLOUR,
                    linewidth=3.0,
                    linestyle=(0, (3, 2)),
                    zorder=8,
                )
            elif p.get("kind") == "icing" and p.get("severity") in codes.SEVERITY[1:]:
                k = codes.severity_code(p["severity"])
                ax.plot(
                    fx[inside],
                    fy[inside],
                    color="black",
                    linewidth=4.0,
                    zorder=8,
                    marker=_MARKERS[k],
                    markersize=6,
                    markerfacecolor=SEVERITY_COLOURS[k],
                    markeredgecolor="black",
                    markeredgewidth=0.8,
                    markevery=max(1, int(inside.sum()) // 4),
                    path_effects=[patheffects.withStroke(linewidth=6.0, foreground="white")],
                )
    # Candidate ice-free altitudes of each icing segment.
    have_candidates = _draw_candidates(ax, seg_props, x) if candidates else False

    # Axes, waypoints, labels.
    ax.set_xlim(x[0], x[-1])
    y_top = _altitude_top_ft(y, fy, seg_props) if ylim_ft is None else float(ylim_ft[1])
    y_bottom = y[0] if ylim_ft is None else float(ylim_ft[0])
    ax.set_ylim(y_bottom, y_top)
    _label_gaps(ax, x, y, gap, y_bottom, y_top)
    ax.set_xlabel("distance along the route [km]")
    ax.set_ylabel("pressure altitude [ft]" if pressure else "altitude [ft MSL]")
    if pressure:
        sec = ax.secondary_yaxis("right", functions=(lambda v: v / 100.0, lambda v: v * 100.0))
        sec.set_ylabel("flight level")
    wps = list(getattr(screening, "waypoints", None) or [])
    if wps:
        top = ax.secondary_xaxis("top")
        top.set_xticks(
            [float(d) for _, d in wps],
            labels=[str(n) for n, _ in wps],
            fontsize=7,
            rotation=30,
            ha="left",
        )
        for _, d in wps:
            ax.axvline(float(d), color="#777777", linewidth=0.5, linestyle=":", zorder=4)

    head = title or f"{screening.route_name} \u2014 {screening.airframe_name}"
    vt = _valid_times_text(getattr(screening, "provenance", None))
    sub = "icing severity cross-section (reference collector)"
    if vt:
        sub += f"; forecast valid {vt}"
    fig.text(0.075, 0.965, head, fontsize=11, weight="bold", va="top", gid="title")
    fig.text(0.075, 0.925, sub, fontsize=8, va="top")

    handles = (
        _severity_handles()
        + [
            Patch(
                facecolor=_GAP_FILL, edgecolor=_GAP_HATCH_COLOUR, hatch=_GAP_HATCH, label=GAP_LABEL
            ),
            Patch(
                facecolor="white",
                edgecolor=_SLD_COLOUR,
                hatch=_SLD_HATCH[codes.SLD_DRIZZLE],
                label="SLD: freezing drizzle",
            ),
            Patch(
                facecolor="white",
                edgecolor=_SLD_COLOUR,
                hatch=_SLD_HATCH[codes.SLD_RAIN],
                label="SLD: freezing rain",
            ),
            Patch(facecolor=_GROUND, edgecolor="black", label="ground"),
            Line2D(
                [], [], color=_CLOUD_COLOUR, linestyle=(0, (6, 2, 1, 2)), label="cloud base / top"
            ),
        ]
        + [
            Line2D([], [], color="#151515", linestyle=ls, linewidth=lw, label=f"{lv} \u00b0C")
            for lv, (ls, lw) in _ISOTHERMS.items()
        ]
        + [
            Line2D([], [], color="black", linewidth=1.5, label="planned flight path"),
            Line2D(
                [],
                [],
                color="black",
                linewidth=4.0,
                marker="s",
                markerfacecolor=SEVERITY_COLOURS[2],
                label="icing on the path (marker = severity)",
            ),
        ]
    )
    if have_candidates:
        handles += [
            Line2D(
                [],
                [],
                color=_CANDIDATE_COLOUR,
                linestyle="none",
                marker="_",
                markersize=9,
                markeredgewidth=1.6,
                label="candidate ice-free altitude\n(check against official advisories)",
            ),
            Line2D(
                [],
                [],
                color=_CANDIDATE_COLOUR,
                linestyle=(0, (2, 2)),
                marker="^",
                markeredgecolor="black",
                label="nearest candidate above / below",
            ),
        ]
    leg = ax.legend(
        handles=handles,
        loc="upper left",
        bbox_to_anchor=(1.09 if pressure else 1.015, 1.0),
        fontsize=6.5,
        frameon=True,
        borderaxespad=0.0,
        handlelength=2.4,
    )
    leg.set_gid("legend")
    _caution(fig, figsize[0])
    return _save(fig, path, fmt, dpi)


# ------------------------------------------------------------------------------ map


def _as_list(screenings):
    if isinstance(screenings, (list, tuple)):
        return list(screenings)
    return [screenings]


def _circular_mean_deg(lon):
    r = np.deg2rad(np.asarray(lon, dtype=float))
    return float(np.rad2deg(np.arctan2(np.sin(r).mean(), np.cos(r).mean())))


def _near(lon, lon0):
    """Longitudes moved by whole turns to within 180 deg of ``lon0`` (antimeridian-safe)."""
    return lon0 + (np.asarray(lon, dtype=float) - lon0 + 180.0) % 360.0 - 180.0


def _lon_label(v, _pos=None):
    w = (v + 180.0) % 360.0 - 180.0
    if abs(w) < 1e-9 or abs(abs(w) - 180.0) < 1e-9:
        return f"{abs(w):g}\u00b0"
    return f"{abs(w):g}\u00b0{'E' if w > 0 else 'W'}"


def _lat_label(v, _pos=None):
    return f"{abs(v):g}\u00b0{'N' if v > 0 else 'S' if v < 0 else ''}"


def _lines_of(geometry):
    if not geometry:
        return []
    if geometry.get("type") == "LineString":
        return [geometry["coordinates"]]
    if geometry.get("type") == "MultiLineString":
        return list(geometry["coordinates"])
    return []


def _nice_length(km):
    e = 10.0 ** np.floor(np.log10(km))
    for m in (5.0, 2.0, 1.0):
        if m * e <= km:
            return m * e
    return e


def plot_route_map(screenings_or_one, path, *, title=None, figsize=(9.0, 6.5), dpi=150):
    """Draw the routes in plan view with their hazard segments; write PNG or SVG.

    An equirectangular view scaled by the cosine of the mean latitude (no
    tiles, no network): each route as a thin line, its icing segments coloured
    by severity with a line width and dash per severity, coverage gaps dashed
    grey, waypoints labelled, a graticule, a geodesic scale bar
    (``pyproj.Geod``, WGS 84) and the caution. Longitudes are unwrapped about
    the routes' mean longitude, so antimeridian routes are drawn whole.

    Parameters
    ----------
    screenings_or_one : RouteScreening or sequence of RouteScreening
    path : str or pathlib.Path
        Output file; ``.png`` or ``.svg``.
    title : str, optional
    figsize : (float, float)
        [in]
    dpi : float
        [1/in]

    Returns
    -------
    pathlib.Path
    """
    from pyproj import Geod

    path, fmt = _check_picture_path(path)
    items = _as_list(screenings_or_one)
    if not items:
        raise InputError("no route to draw", where="plot_route_map", fix="pass a screening")
    all_lon = np.concatenate([np.asarray(s.samples.lon, dtype=float) for s in items])
    all_lat = np.concatenate([np.asarray(s.samples.lat, dtype=float) for s in items])
    lon0 = _circular_mean_deg(all_lon)
    lat0 = float(np.mean(all_lat))
    coslat = max(np.cos(np.deg2rad(lat0)), 0.05)

    fig = Figure(figsize=figsize)
    ax = fig.add_axes([0.09, 0.17, 0.6, 0.7])
    for s in items:
        lon = _near(s.samples.lon, lon0)
        lat = np.asarray(s.samples.lat, dtype=float)
        ax.plot(lon, lat, color="black", linewidth=1.0, zorder=3)
        for f in getattr(s, "segments", None) or []:
            p = _props(f)
            for line in _lines_of(f.get("geometry")):
                c = np.asarray(line, dtype=float)
                if c.ndim != 2 or c.shape[0] < 1:
                    continue
                lx, ly = _near(c[:, 0], lon0), c[:, 1]
                if p.get("kind") == "coverage-gap":
                    ax.plot(
                        lx,
                        ly,
                        color=_GAP_HATCH_COLOUR,
                        linewidth=3.0,
                        linestyle=(0, (3, 2)),
                        zorder=4,
                    )
                elif p.get("kind") == "icing" and p.get("severity") in codes.SEVERITY[1:]:
                    k = codes.severity_code(p["severity"])
                    lw, ls = _MAP_STYLE[k]
                    ax.plot(
                        lx,
                        ly,
                        color=SEVERITY_COLOURS[k],
                        linewidth=lw,
                        linestyle=ls,
                        solid_capstyle="butt",
                        zorder=5 + k,
                        path_effects=[
                            patheffects.withStroke(linewidth=lw + 1.6, foreground="black")
                        ],
                    )
        # Waypoints: positions interpolated along the samples at their distances.
        d = getattr(s.samples, "distance_m", None)
        if d is not None and getattr(s, "waypoints", None):
            d = np.asarray(d, dtype=float) / 1000.0
            wd = np.array([float(w[1]) for w in s.waypoints])
            wlon = np.interp(wd, d, np.unwrap(lon, period=360.0))
            wlat = np.interp(wd, d, lat)
            ax.plot(
                wlon,
                wlat,
                linestyle="none",
                marker="^",
                markersize=6,
                markerfacecolor="white",
                markeredgecolor="black",
                zorder=12,
            )
            for (name, _), wx, wy in zip(s.waypoints, wlon, wlat, strict=True):
                ax.annotate(
                    str(name),
                    (wx, wy),
                    xytext=(4, 4),
                    textcoords="offset points",
                    fontsize=7,
                    zorder=13,
                    bbox=_TEXT_BOX,
                )

    # Extent with a margin, the cos-lat aspect, the graticule.
    xs = ax.dataLim
    x0, x1, y0, y1 = xs.x0, xs.x1, xs.y0, xs.y1
    span = max((x1 - x0) * coslat, y1 - y0, 0.05)
    xm, ym = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    half_x = 0.6 * span / coslat
    half_y = 0.6 * span
    ax.set_xlim(xm - half_x, xm + half_x)
    ax.set_ylim(ym - half_y, ym + half_y)
    ax.set_aspect(1.0 / coslat)
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_locator(MaxNLocator(nbins=6, steps=[1, 2, 2.5, 5, 10]))
    ax.xaxis.set_major_formatter(FuncFormatter(_lon_label))
    ax.yaxis.set_major_formatter(FuncFormatter(_lat_label))
    ax.tick_params(labelsize=7)
    ax.grid(True, color="#999999", linewidth=0.5, linestyle=":")
    # Scale bar (geodesic length along the parallel of the bar).
    geod = Geod(ellps="WGS84")
    bar_lat = ym - 0.85 * half_y
    bar_lon = xm - 0.9 * half_x
    km_per_deg = geod.inv(bar_lon, bar_lat, bar_lon + 1.0, bar_lat)[2] / 1000.0
    length_km = _nice_length(0.25 * 2.0 * half_x * km_per_deg)
    deg = length_km / km_per_deg
    for i, colour in enumerate(("black", "white")):
        ax.add_patch(
            matplotlib.patches.Rectangle(
                (bar_lon + i * deg / 2.0, bar_lat),
                deg / 2.0,
                0.012 * 2 * half_y,
                facecolor=colour,
                edgecolor="black",
                linewidth=0.8,
                zorder=14,
            )
        )
    ax.text(
        bar_lon + deg / 2.0,
        bar_lat + 0.03 * 2 * half_y,
        f"{length_km:g} km",
        ha="center",
        va="bottom",
        fontsize=7,
        zorder=14,
        gid="scale-bar",
    )

    if title:
        head = title
    elif len(items) == 1:
        head = items[0].route_name
    else:
        head = f"{len(items)} routes: " + ", ".join(s.route_name for s in items)
        if len(head) > 90:
            head = head[:87].rstrip(", ") + "..."
    vt = _valid_times_text(getattr(items[0], "provenance", None))
    frames = ", ".join(dict.fromkeys(s.airframe_name for s in items))
    fig.text(0.09, 0.965, head, fontsize=11, weight="bold", va="top", gid="title")
    fig.text(
        0.09,
        0.925,
        f"icing hazard along the route{'s' if len(items) > 1 else ''}"
        f" ({frames})" + (f"; forecast valid {vt}" if vt else ""),
        fontsize=8,
        va="top",
    )
    handles = [
        Line2D(
            [],
            [],
            color=SEVERITY_COLOURS[k],
            linewidth=_MAP_STYLE[k][0],
            linestyle=_MAP_STYLE[k][1],
            label=codes.SEVERITY[k],
            path_effects=[
                patheffects.withStroke(linewidth=_MAP_STYLE[k][0] + 1.6, foreground="black")
            ],
        )
        for k in (1, 2, 3, 4)
    ] + [
        Line2D(
            [], [], color=_GAP_HATCH_COLOUR, linewidth=3.0, linestyle=(0, (3, 2)), label=GAP_LABEL
        ),
        Line2D([], [], color="black", linewidth=1.0, label="route"),
        Line2D(
            [],
            [],
            color="black",
            linestyle="none",
            marker="^",
            markerfacecolor="white",
            label="waypoint",
        ),
    ]
    leg = ax.legend(
        handles=handles,
        loc="upper left",
        bbox_to_anchor=(1.03, 1.0),
        fontsize=7,
        handlelength=3.5,
        borderaxespad=0.0,
    )
    leg.set_gid("legend")
    _caution(fig, figsize[0])
    return _save(fig, path, fmt, dpi)
