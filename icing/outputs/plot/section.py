"""The vertical cross-section of a screened route: one function per layer drawn.

Distance along the route (waypoint names on the top axis) against altitude in
feet: severity for the airframe (colour ramp plus hatch), coverage gaps, SLD,
cloud outline, isotherms, the ground, the planned flight path with its icing
stretches, the candidate altitudes, the axes and titles, the legend and the
caution. Drawn with matplotlib's object API (no pyplot, no global state).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from matplotlib import patheffects
from matplotlib.colors import BoundaryNorm, ListedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from icing import codes
from icing.constants import FT
from icing.errors import InputError
from icing.outputs.plot.members import PANEL_WORDS, draw_member_panel
from icing.outputs.plot.style import (
    CANDIDATE_COLOUR,
    CLOUD_COLOUR,
    GAP_FILL,
    GAP_HATCH,
    GAP_HATCH_COLOUR,
    GAP_LABEL,
    GROUND,
    HATCH_COLOURS,
    ISOTHERM_COLOUR,
    ISOTHERMS,
    MARKERS,
    SEVERITY_COLOURS,
    SEVERITY_HATCHES,
    SLD_COLOUR,
    SLD_HATCH,
    TEXT_BOX,
    check_picture_path,
    draw_caution,
    draw_hold_marker,
    hold_handle,
    hold_runs,
    props_of,
    save,
    severity_handles,
)

__all__ = ["plot_cross_section"]


@dataclass(frozen=True)
class _Frame:
    """Where the curtain lands on the picture: the axis coordinates of every cell."""

    x: np.ndarray
    """(n,) distance along the route [km]."""
    rows: np.ndarray
    """(a,) curtain rows in the curtain's reference [ft]."""
    shift: np.ndarray
    """(n,) what is subtracted from an altitude to place it on the axis (the ground
    for the height-above-ground axis, else 0) [ft]."""
    agl: bool
    """The vertical axis is height above the ground."""

    @property
    def X(self):  # noqa: N802 - the grid's conventional name
        return np.broadcast_to(self.x[:, None], (self.x.size, self.rows.size))

    @property
    def Y(self):  # noqa: N802
        return self.rows[None, :] - self.shift[:, None]

    def y_at(self, km, alt_ft):
        """Axis position of an altitude [ft, curtain reference] at a distance [km]."""
        return np.asarray(alt_ft, float) - np.interp(km, self.x, self.shift)


def _ground_ft(cur):
    alt = np.asarray(cur.altitudes_m, dtype=float)
    below = np.asarray(cur.below_ground, dtype=bool)
    top_below = np.where(below, alt[None, :], -np.inf).max(axis=1)
    g = np.asarray(cur.ground_m, dtype=float)
    g = np.where(np.isfinite(g), g, top_below)
    return np.where(np.isfinite(g), g, np.nan) / FT


def _mask_fill(ax, fr, mask, *, hatch, hatch_colour, zorder):
    """Hatch the cells where ``mask`` is true (contour of the 0/1 field at 0.5)."""
    if not mask.any():
        return None
    cs = ax.contourf(
        fr.X,
        fr.Y,
        mask.astype(float),
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


def _flight_path(screening):
    """Distance [km] and altitude [ft, in the curtain's reference] of the planned path.

    The altitude is above mean sea level (AGL routes stand on the ground under them),
    or the pressure altitude for routes flown on flight levels.
    """
    at = getattr(screening, "at_flight", None) or {}
    samples = getattr(screening, "samples", None)
    x = at.get("distance_km")
    if x is None and samples is not None and getattr(samples, "distance_m", None) is not None:
        x = np.asarray(samples.distance_m, dtype=float) / 1000.0
    y = at.get("curtain_altitude_m")
    y = None if y is None else np.asarray(y, float) / FT
    if y is None:
        y = at.get("altitude_ft")
    if y is None and samples is not None and getattr(samples, "altitude_m", None) is not None:
        y = np.asarray(samples.altitude_m, dtype=float) / FT
    if x is None or y is None:
        return None, None
    return np.asarray(x, dtype=float), np.asarray(y, dtype=float)


def _runs(flags):
    """(start, stop) index pairs of the runs of True in a 1-D bool array."""
    f = np.r_[False, np.asarray(flags, dtype=bool), False]
    edges = np.flatnonzero(np.diff(f.astype(int)))
    return list(zip(edges[::2], edges[1::2], strict=True))


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


def _draw_candidates(ax, seg_props, fr):
    """Mark candidate altitudes with no icing diagnosed; return True when any was drawn.

    Every clear altitude of a stretch is a short tick at its middle; the nearest
    clear altitudes above and below are a dashed line across the stretch (one per
    run of adjacent stretches sharing it) with a triangle and a label.
    """
    drawn = False
    x = fr.x
    for p in seg_props:
        alts = p.get("candidate_altitudes_ft") or p.get("ice_free_altitudes_ft") or []
        if p.get("kind") != "icing" or not alts:
            continue
        mid = 0.5 * (float(p["start_km"]) + float(p["end_km"]))
        ax.plot(
            np.full(len(alts), mid),
            fr.y_at(mid, alts),
            linestyle="none",
            marker="_",
            markersize=9,
            markeredgewidth=1.6,
            color=CANDIDATE_COLOUR,
            zorder=9,
        )
        drawn = True
    spacing = float(np.median(np.diff(x))) if x.size > 1 else 0.0
    for side, h, fl, a, b in _candidate_runs(seg_props, join_km=2.5 * spacing):
        mid = 0.5 * (a + b)
        up = side == "above"
        km = np.linspace(a, max(b, a + 1e-3), 24)
        ax.plot(
            km,
            fr.y_at(km, np.full(km.size, h)),
            color=CANDIDATE_COLOUR,
            linewidth=1.2,
            linestyle=(0, (2, 2)),
            zorder=6,
        )
        ax.plot(
            [mid],
            [fr.y_at(mid, h)],
            marker="^" if up else "v",
            markersize=7,
            color=CANDIDATE_COLOUR,
            markeredgecolor="black",
            zorder=9,
        )
        ax.annotate(
            f"{h:.0f} ft" if fl is None else f"FL{int(fl):03d}",
            (mid, fr.y_at(mid, h)),
            xytext=(0, 5 if up else -5),
            textcoords="offset points",
            ha="center",
            va="bottom" if up else "top",
            fontsize=6,
            color="black",
            zorder=9,
            bbox=TEXT_BOX,
        )
        drawn = True
    return drawn


def _altitude_top_ft(y, fy, seg_props, band_top_ft=None):
    """Top of the picture [ft]: enough above the path and the candidates, within the curtain.

    Aircraft: three times the highest planned altitude, at least 3,000 ft above it.
    Drones (``band_top_ft``, the top of their height band on the axis): a close view,
    twice the highest planned height and 300 ft above the band's top.
    """
    top = float(y[-1])
    if fy is None or not np.isfinite(fy).any():
        return top
    high = float(np.nanmax(fy))
    drone = band_top_ft is not None and np.isfinite(band_top_ft)
    want = max(2.0 * high, band_top_ft + 300.0) if drone else max(3.0 * high, high + 3000.0)
    margin = 200.0 if drone else 1000.0
    for p in seg_props:
        for o in (p.get("vertical_options") or {}).values():
            if isinstance(o, dict) and o.get("altitude_ft") is not None:
                want = max(want, float(o["altitude_ft"]) + margin)
    return max(min(top, want), high + (100.0 if drone else 500.0))  # the path is inside


def _label_gaps(ax, fr, gap, y_bottom, y_top):
    """Label each stretch of coverage gap once, on its tallest visible band."""
    x = fr.x
    y = fr.rows - float(np.median(fr.shift))
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
    screening,
    path,
    *,
    title=None,
    figsize=(11.0, 6.8),
    dpi=150,
    candidates=True,
    ylim_ft=None,
    axis="msl",
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
        Draw the candidate altitudes with no icing diagnosed from the segment properties.
    ylim_ft : (float, float), optional
        Altitude range shown. [ft] Default: the curtain's bottom to its top, or
        for low flights (drones) to three times the highest planned altitude,
        at least 3,000 ft above it and above the nearest candidates.
    axis : {"msl", "agl"}
        Vertical axis: feet above mean sea level (AGL routes are drawn at their
        true height over the drawn ground), or height above the ground (drone
        work: the ground is the axis's zero and every column is shifted by it).

    Returns
    -------
    pathlib.Path
        The file written (written to a temporary file and renamed).

    Raises
    ------
    InputError
        When the suffix is not ``.png``/``.svg`` or the folder does not exist.
    """
    path, fmt = check_picture_path(path)
    cur = screening.curtain
    sev = np.asarray(cur.severity)
    below = np.asarray(cur.below_ground, dtype=bool)
    gap = (sev == codes.GAP) & ~below
    fr = _frame(cur, axis)
    pressure = getattr(cur, "altitude_reference", "msl") == "pressure"
    panels = PANEL_WORDS if getattr(cur, "member_fraction", None) else ()
    figsize, rects = _layout(figsize, len(panels), 0.62 if pressure else 0.66)
    fig = Figure(figsize=figsize)
    ax = fig.add_axes(rects[0])
    _draw_severity(ax, fr, sev)
    _draw_gaps(ax, fr, gap)
    _draw_sld(ax, fr, np.asarray(cur.sld_class), below)
    _draw_cloud(ax, fr, np.asarray(cur.cloud, dtype=bool) & ~below)
    temp = np.where(below | gap, np.nan, np.asarray(cur.temperature_c, float))
    _draw_isotherms(ax, fr, temp)  # none through coverage gaps: temperature unknown there
    _draw_ground(ax, fr, _ground_ft(cur))
    fx, fy = _flight_path(screening)
    seg_props = [props_of(f) for f in (getattr(screening, "segments", None) or [])]
    if fx is not None:
        fy = fr.y_at(fx, fy)
        _draw_flight_path(ax, fx, fy, seg_props)
        _draw_holds(ax, screening, fx, fy)
    have_candidates = _draw_candidates(ax, seg_props, fr) if candidates else False
    ax.set_xlim(fr.x[0], fr.x[-1] if fr.x[-1] > fr.x[0] else fr.x[0] + 1.0)
    y_axis = fr.rows - (float(np.nanmin(fr.shift)) if fr.agl else 0.0)
    band = getattr(screening, "max_agl_m", None)
    if band is not None:
        band = band / FT + (0.0 if fr.agl else float(np.nanmax(_ground_ft(cur), initial=0.0)))
    y_top = _altitude_top_ft(y_axis, fy, seg_props, band) if ylim_ft is None else float(ylim_ft[1])
    y_bottom = (0.0 if fr.agl else fr.rows[0]) if ylim_ft is None else float(ylim_ft[0])
    ax.set_ylim(y_bottom, y_top)
    _label_gaps(ax, fr, gap, y_bottom, y_top)
    _draw_axes(ax, pressure, list(getattr(screening, "waypoints", None) or []), fr.agl)
    _draw_time_axis(ax, screening)
    _draw_titles(fig, screening, title, rects[0][1] + rects[0][3])
    _draw_legend(ax, pressure, have_candidates)
    for i, word in enumerate(panels):
        pax = fig.add_axes(rects[i + 1], sharex=ax)
        draw_member_panel(pax, fr, cur, word, path=(fx, fy), legend=i == 0)
        pax.set_ylim(y_bottom, y_top)
        pax.set_xlabel("distance along the route [km]" if i == len(panels) - 1 else "", fontsize=8)
    draw_caution(fig, figsize[0])
    return save(fig, path, fmt, dpi, tight=True)


#: Member panels [in]: height of one, room under the severity panel (its time axis),
#: room between panels, room under the last one (axis label, caution).
_PANEL_IN, _UNDER_MAIN_IN, _BETWEEN_IN, _BOTTOM_IN = 1.55, 1.45, 0.6, 1.15


def _layout(figsize, panels, width):
    """Figure size and axes rectangles: the severity panel, then the member panels below it.

    Without member panels the single panel keeps its place; with them the figure
    grows downwards by the panels and the room between them. Sizes in inches.
    """
    w, h = figsize
    if not panels:
        return (w, h), [[0.075, 0.27, width, 0.56]]
    y, boxes = _BOTTOM_IN, []
    for i in range(panels):  # from the bottom up
        boxes.insert(0, (y, _PANEL_IN))
        y += _PANEL_IN + (_UNDER_MAIN_IN if i == panels - 1 else _BETWEEN_IN)
    total = y + 0.56 * h + 0.17 * h
    rects = [[0.075, y / total, width, 0.56 * h / total]]
    rects += [[0.075, b / total, width, hh / total] for b, hh in boxes]
    return (w, total), rects


def _frame(cur, axis):
    """Return the picture's frame: MSL (or pressure altitude) rows, or height above the ground."""
    if axis not in ("msl", "agl"):
        raise InputError(
            f"cross-section axis {axis!r} not supported",
            where="plot_cross_section(axis=...)",
            fix="use 'msl' or 'agl'",
        )
    x = np.asarray(cur.distance_km, dtype=float)
    rows = np.asarray(cur.altitudes_m, dtype=float) / FT
    agl = axis == "agl" and getattr(cur, "altitude_reference", "msl") != "pressure"
    g = _ground_ft(cur)
    shift = np.where(np.isfinite(g), g, 0.0) if agl else np.zeros(x.size)
    return _Frame(x=x, rows=rows, shift=shift, agl=agl)


def _draw_severity(ax, fr, sev):
    """Severity fill (cells as they are: nearest shading) and its hatches."""
    shown = np.ma.masked_where(sev < codes.SEV_TRACE, sev)
    cmap = ListedColormap([SEVERITY_COLOURS[k] for k in (1, 2, 3, 4)])
    norm = BoundaryNorm([0.5, 1.5, 2.5, 3.5, 4.5], cmap.N)
    ax.pcolormesh(
        fr.X, fr.Y, shown, cmap=cmap, norm=norm, shading="nearest", zorder=1, rasterized=True
    )
    for k in (codes.SEV_LIGHT, codes.SEV_MODERATE, codes.SEV_SEVERE):
        _mask_fill(
            ax, fr, sev == k, hatch=SEVERITY_HATCHES[k], hatch_colour=HATCH_COLOURS[k], zorder=2
        )


def _draw_gaps(ax, fr, gap):
    """Coverage gaps: grey, hatched (labelled later, once the limits are known)."""
    if not gap.any():
        return
    ax.pcolormesh(
        fr.X,
        fr.Y,
        np.ma.masked_where(~gap, np.ones(gap.shape)),
        cmap=ListedColormap([GAP_FILL]),
        vmin=0,
        vmax=2,
        shading="nearest",
        zorder=1,
        rasterized=True,
    )
    _mask_fill(ax, fr, gap, hatch=GAP_HATCH, hatch_colour=GAP_HATCH_COLOUR, zorder=2)


def _draw_sld(ax, fr, sld, below):
    """SLD areas: circle hatches with a dashed outline."""
    for cls, hatch in SLD_HATCH.items():
        m = (sld == cls) & ~below
        if _mask_fill(ax, fr, m, hatch=hatch, hatch_colour=SLD_COLOUR, zorder=3):
            _outline(ax, fr, m, SLD_COLOUR, 1.0, (0, (3, 1.5)), 3)


def _draw_cloud(ax, fr, cloud):
    """Draw the cloud outline (bases and tops)."""
    if cloud.any() and not cloud.all():
        _outline(ax, fr, cloud, CLOUD_COLOUR, 1.3, (0, (6, 2, 1, 2)), 4)


def _outline(ax, fr, mask, colour, width, style, zorder):
    """Draw the edge of the cells where ``mask`` is true."""
    ax.contour(
        fr.X,
        fr.Y,
        mask.astype(float),
        levels=[0.5],
        colors=colour,
        linewidths=width,
        linestyles=[style],
        zorder=zorder,
    )


def _draw_isotherms(ax, fr, temp):
    """Isotherms 0, -10, -20 degC, labelled (none where the temperature is unknown)."""
    finite = np.isfinite(temp)
    if not finite.any():
        return
    tmin, tmax = temp[finite].min(), temp[finite].max()
    levels = sorted(lv for lv in ISOTHERMS if tmin < lv < tmax)
    if not levels:
        return
    cs = ax.contour(
        fr.X,
        fr.Y,
        temp,
        levels=levels,
        colors=ISOTHERM_COLOUR,
        linestyles=[ISOTHERMS[lv][0] for lv in levels],
        linewidths=[ISOTHERMS[lv][1] for lv in levels],
        zorder=4,
    )
    ax.clabel(cs, fmt={lv: f"{lv:d} \u00b0C" for lv in levels}, fontsize=7, inline=True)


def _draw_ground(ax, fr, g):
    """Draw the ground under the route (filled, with its outline)."""
    if not np.isfinite(g).any():
        return
    g = np.where(np.isfinite(g), g, fr.rows[0]) - fr.shift
    floor = min(fr.rows[0], float(g.min())) - (1e5 if fr.agl else 0.0)
    ax.fill_between(fr.x, floor, g, color=GROUND, zorder=5, linewidth=0)
    ax.plot(fr.x, g, color="black", linewidth=1.2, zorder=5)


def _draw_flight_path(ax, fx, fy, seg_props):
    """Draw the planned path; its gaps dashed, its icing stretches thick with markers.

    Markers stand at even spacing along the route (about forty over its length),
    shaped by the severity there, so that short segments never pile up into a smear.
    """
    halo = [patheffects.withStroke(linewidth=4.5, foreground="white")]
    ax.plot(fx, fy, color="black", linewidth=2.2, zorder=7, path_effects=halo)
    span = float(fx[-1] - fx[0]) if fx.size > 1 else 0.0
    spots = np.linspace(fx[0], fx[-1], 41)[1:-1] if span > 0 else np.array([])
    for p in seg_props:
        a, b = float(p.get("start_km", np.inf)), float(p.get("end_km", -np.inf))
        inside = (fx >= a - 1e-9) & (fx <= b + 1e-9)
        if not inside.any():
            continue
        if p.get("kind") == "coverage-gap":
            ax.plot(
                fx[inside],
                fy[inside],
                color=GAP_HATCH_COLOUR,
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
                solid_capstyle="butt",
                path_effects=[patheffects.withStroke(linewidth=6.0, foreground="white")],
            )
            here = spots[(spots >= a) & (spots <= b)]
            if not here.size:
                here = np.array([0.5 * (a + b)])
            ax.plot(
                here,
                np.interp(here, fx, fy),
                linestyle="none",
                marker=MARKERS[k],
                markersize=6,
                markerfacecolor=SEVERITY_COLOURS[k],
                markeredgecolor="black",
                markeredgewidth=0.8,
                zorder=9,
            )


def _draw_holds(ax, screening, fx, fy):
    """Mark each hold (hover or loiter): it takes time but no distance."""
    for a, b, minutes in hold_runs(getattr(screening, "samples", None)):
        km, alt = float(fx[a]), float(np.nanmean(fy[a:b]))
        draw_hold_marker(ax, km, alt, zorder=10)
        ax.annotate(
            f"hold {minutes:.0f} min",
            (km, alt),
            xytext=(8, 8),
            textcoords="offset points",
            fontsize=7,
            zorder=10,
            bbox=TEXT_BOX,
            gid="hold-label",
        )


def _draw_axes(ax, pressure, wps, agl=False):
    """Axis labels, the flight-level axis and the waypoints on the top axis."""
    ax.set_xlabel("distance along the route [km]", fontsize=8)
    if agl:
        ax.set_ylabel("height above the ground [ft]")
    else:
        ax.set_ylabel("pressure altitude [ft]" if pressure else "altitude [ft MSL]")
    if pressure:
        sec = ax.secondary_yaxis("right", functions=(lambda v: v / 100.0, lambda v: v * 100.0))
        sec.set_ylabel("flight level")
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


def _draw_time_axis(ax, screening):
    """Draw a second distance axis below the first, labelled with the planned times [UTC]."""
    samples = getattr(screening, "samples", None)
    if samples is None or getattr(samples, "time", None) is None:
        return
    km = np.asarray(samples.distance_m, float) / 1000.0
    t = np.asarray(samples.time).astype("datetime64[ms]").astype(np.int64) / 60000.0  # [min]
    if km.size < 2 or km[-1] <= km[0]:
        return
    span = t[-1] - t[0]
    step = next((m for m in (5, 10, 15, 30, 60, 120, 180, 360) if span / m <= 8), 720)
    marks = np.arange(np.ceil(t[0] / step) * step, t[-1] + 1e-9, step)
    ticks = np.interp(marks, t, km)  # where the flight is at each round time
    keep = []  # during a hold several times fall on one place: label the first only
    for i, x in enumerate(ticks):
        if not keep or x - ticks[keep[-1]] > 0.04 * (km[-1] - km[0]):
            keep.append(i)
    marks, ticks = marks[keep], ticks[keep]
    labels = [np.datetime64(int(round(v)), "m").item().strftime("%H:%M") for v in marks]
    sec = ax.secondary_xaxis(-0.2)
    sec.set_xticks(ticks, labels=labels, fontsize=7)
    sec.set_xlabel("planned time [UTC]", fontsize=8)


def _draw_titles(fig, screening, title, top=0.83):
    """Title (route and airframe) and the subtitle with the flight's own times."""
    head = title or f"{screening.route_name} \u2014 {screening.airframe_name}"
    sub = "icing severity cross-section (reference collector)"
    cur = screening.curtain
    if getattr(cur, "members", 1) > 1:
        sub = (
            f"icing severity of the {cur.member_statistic} of {cur.members} members "
            "(reference collector)"
        )
    times = _flight_times(screening)
    if times:
        sub += f"; departs {times[0]}, arrives {times[1]}"
    issued = (getattr(screening, "provenance", None) or {}).get("issue_time")
    if issued:
        sub += f"; forecast issued {issued}"
    h = fig.get_figheight()  # the titles stand a fixed distance above the panel [in]
    fig.text(0.075, top + 0.918 / h, head, fontsize=11, weight="bold", va="top", gid="title")
    fig.text(0.075, top + 0.646 / h, sub, fontsize=8, va="top", gid="subtitle")


def _flight_times(screening):
    """Departure and arrival as text (UTC), or None."""
    samples = getattr(screening, "samples", None)
    t = getattr(samples, "time", None)
    if t is None or not np.size(t):
        return None
    t = np.asarray(t).astype("datetime64[m]")
    first, last = t.min().item(), t.max().item()
    end = last.strftime("%H:%M UTC" if first.date() == last.date() else "%Y-%m-%d %H:%M UTC")
    return first.strftime("%Y-%m-%d %H:%M UTC"), end


def _draw_legend(ax, pressure, have_candidates):
    """Draw the legend: severities, gaps, SLD, ground, cloud, isotherms, path, candidates."""
    handles = (
        severity_handles()
        + [
            Patch(
                facecolor=GAP_FILL, edgecolor=GAP_HATCH_COLOUR, hatch=GAP_HATCH, label=GAP_LABEL
            ),
            Patch(
                facecolor="white",
                edgecolor=SLD_COLOUR,
                hatch=SLD_HATCH[codes.SLD_DRIZZLE],
                label="SLD: freezing drizzle",
            ),
            Patch(
                facecolor="white",
                edgecolor=SLD_COLOUR,
                hatch=SLD_HATCH[codes.SLD_RAIN],
                label="SLD: freezing rain",
            ),
            Patch(facecolor=GROUND, edgecolor="black", label="ground"),
            Line2D(
                [], [], color=CLOUD_COLOUR, linestyle=(0, (6, 2, 1, 2)), label="cloud base / top"
            ),
        ]
        + [
            Line2D(
                [], [], color=ISOTHERM_COLOUR, linestyle=ls, linewidth=lw, label=f"{lv} \u00b0C"
            )
            for lv, (ls, lw) in ISOTHERMS.items()
        ]
        + [
            Line2D([], [], color="black", linewidth=2.2, label="planned flight path"),
            hold_handle("hold (time at one place)"),
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
        handles += _candidate_handles()
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


def _candidate_handles():
    """Legend entries of the candidate altitudes."""
    return [
        Line2D(
            [],
            [],
            color=CANDIDATE_COLOUR,
            linestyle="none",
            marker="_",
            markersize=9,
            markeredgewidth=1.6,
            label="candidate altitude, no icing diagnosed\n(check against official advisories)",
        ),
        Line2D(
            [],
            [],
            color=CANDIDATE_COLOUR,
            linestyle=(0, (2, 2)),
            marker="^",
            markeredgecolor="black",
            label="nearest candidate above / below",
        ),
    ]
