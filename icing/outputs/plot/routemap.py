"""The plan-view map of screened routes: one function per layer drawn.

An equirectangular view scaled by the cosine of the mean latitude (no tiles, no
network): each route as a thin line, its icing segments coloured by severity
with a line width and dash per severity, coverage gaps dashed grey, waypoints
labelled, a graticule, a geodesic scale bar (``pyproj.Geod``, WGS 84), the
titles, the legend and the caution. Longitudes are unwrapped about the routes'
mean longitude, so antimeridian routes are drawn whole.
"""

from __future__ import annotations

import json
import textwrap
from functools import lru_cache
from importlib import resources

import matplotlib
import numpy as np
from matplotlib import patheffects
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.ticker import FuncFormatter, MaxNLocator

from icing import codes
from icing.errors import InputError
from icing.outputs.plot.style import (
    COAST_COLOUR,
    DOMAIN_COLOUR,
    GAP_HATCH_COLOUR,
    GAP_LABEL,
    MAP_STYLE,
    SEVERITY_COLOURS,
    TEXT_BOX,
    check_picture_path,
    draw_caution,
    draw_hold_marker,
    hold_handle,
    hold_runs,
    props_of,
    save,
)

__all__ = ["plot_route_map"]


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
    path, fmt = check_picture_path(path)
    items = _as_list(screenings_or_one)
    if not items:
        raise InputError("no route to draw", where="plot_route_map", fix="pass a screening")
    all_lon = np.concatenate([np.asarray(s.samples.lon, dtype=float) for s in items])
    all_lat = np.concatenate([np.asarray(s.samples.lat, dtype=float) for s in items])
    lon0 = _circular_mean_deg(all_lon)
    coslat = max(np.cos(np.deg2rad(float(np.mean(all_lat)))), 0.05)

    fig = Figure(figsize=figsize)
    FigureCanvasAgg(fig)  # a renderer, to place labels where they do not overlap
    ax = fig.add_axes([0.09, 0.17, 0.6, 0.66])
    labels = []
    for s in items:
        lon = _near(s.samples.lon, lon0)
        lat = np.asarray(s.samples.lat, dtype=float)
        ax.plot(lon, lat, color="black", linewidth=1.0, zorder=3)
        _draw_segments(ax, getattr(s, "segments", None) or [], lon0)
        labels += _draw_waypoints(ax, s, lon, lat)
        labels += _draw_holds(ax, s, lon, lat)
        labels.append(_route_label(s, lon, lat))
    xm, ym, half_x, half_y = _set_extent(ax, coslat)
    _draw_coastlines(ax, lon0)
    _draw_domain(ax, getattr(items[0], "provenance", None), lon0)
    _draw_graticule(ax)
    _draw_scale_bar(ax, xm, ym, half_x, half_y)
    _draw_titles(fig, items, title)
    _draw_legend(ax)
    _place_labels(fig, ax, labels)
    draw_caution(fig, figsize[0])
    return save(fig, path, fmt, dpi, tight=True)


@lru_cache(maxsize=1)
def _coastlines():
    """Return the bundled coastlines (Natural Earth 1:110m, public domain) as (k, 2) arrays."""
    path = resources.files("icing") / "data" / "coastlines" / "ne_110m_coastlines.geojson"
    doc = json.loads(path.read_text(encoding="utf-8"))
    return [np.asarray(line, dtype=float) for line in doc["geometry"]["coordinates"]]


def _split_at_seam(lon, lat):
    """Pieces of a line whose longitudes, moved near the map centre, jump by half a turn."""
    cut = np.flatnonzero(np.abs(np.diff(lon)) > 180.0) + 1
    return [np.column_stack(p) for p in zip(np.split(lon, cut), np.split(lat, cut), strict=True)]


def _draw_coastlines(ax, lon0):
    """Coastlines for orientation (not for navigation), under everything else."""
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    pieces = []
    for line in _coastlines():
        lon = _near(line[:, 0], lon0)
        inside = (
            (lon >= x0 - 5) & (lon <= x1 + 5) & (line[:, 1] >= y0 - 5) & (line[:, 1] <= y1 + 5)
        )
        if inside.any():
            pieces += [p for p in _split_at_seam(lon, line[:, 1]) if len(p) > 1]
    if pieces:
        ax.add_collection(
            LineCollection(
                pieces, colors=COAST_COLOUR, linewidths=0.8, zorder=1, gid="coastlines"
            ),
            autolim=False,
        )


def _draw_domain(ax, provenance, lon0):
    """Outline of the forecast's area (outside it every point is a coverage gap)."""
    bounds = (provenance or {}).get("bounds")
    if not bounds or len(bounds) != 4 or not all(np.isfinite(bounds)):
        return
    w, south, e, north = (float(v) for v in bounds)
    w = float(_near(np.array([w]), lon0)[0])
    e = w + ((e - w) % 360.0 or 360.0)
    ax.add_patch(
        matplotlib.patches.Rectangle(
            (w, south),
            e - w,
            north - south,
            fill=False,
            edgecolor=DOMAIN_COLOUR,
            linewidth=1.4,
            linestyle=(0, (1, 2)),
            zorder=2,
            gid="forecast-area",
        )
    )


def _route_label(s, lon, lat):
    """Return the route's name label, at the middle of its track."""
    k = len(lon) // 2
    return (float(lon[k]), float(lat[k]), str(s.route_name), {"fontsize": 7.5, "weight": "bold"})


def _place_labels(fig, ax, labels):
    """Place labels next to their points where they overlap nothing placed before.

    Each label tries twelve positions around its point; one that fits nowhere is
    left out (the legend and the report name every waypoint and route).
    """
    renderer = fig.canvas.get_renderer()
    ax.apply_aspect()  # the axes' drawn box (the aspect shrinks it) bounds the labels
    frame = ax.get_window_extent(renderer)
    taken = []
    offsets = [
        (5, 5),
        (5, -12),
        (-5, 5),
        (-5, -12),
        (0, 12),
        (0, -18),
        (12, -3),
        (-12, -3),
        (8, 18),
        (-8, 18),
        (8, -24),
        (-8, -24),
    ]
    seen = set()
    for x, y, text, style in labels:
        key = (round(x, 3), round(y, 3), text)
        if key in seen:
            continue
        seen.add(key)
        for dx, dy in offsets:
            ann = ax.annotate(
                text,
                (x, y),
                xytext=(dx, dy),
                textcoords="offset points",
                ha="left" if dx >= 0 else "right",
                zorder=13,
                bbox=TEXT_BOX,
                annotation_clip=True,
                **style,
            )
            box = ann.get_window_extent(renderer).expanded(1.05, 1.1)
            inside = frame.contains(box.x0, box.y0) and frame.contains(box.x1, box.y1)
            if inside and not any(box.overlaps(t) for t in taken):
                taken.append(box)
                break
            ann.remove()


def _draw_segments(ax, segments, lon0):
    """Hazard segments: icing by severity (colour, width, dash), gaps dashed grey."""
    for f in segments:
        p = props_of(f)
        for line in _lines_of(f.get("geometry")):
            c = np.asarray(line, dtype=float)
            if c.ndim != 2 or c.shape[0] < 1:
                continue
            lx, ly = _near(c[:, 0], lon0), c[:, 1]
            if p.get("kind") == "coverage-gap":
                ax.plot(
                    lx, ly, color=GAP_HATCH_COLOUR, linewidth=3.0, linestyle=(0, (3, 2)), zorder=4
                )
            elif p.get("kind") == "icing" and p.get("severity") in codes.SEVERITY[1:]:
                k = codes.severity_code(p["severity"])
                lw, ls = MAP_STYLE[k]
                ax.plot(
                    lx,
                    ly,
                    color=SEVERITY_COLOURS[k],
                    linewidth=lw,
                    linestyle=ls,
                    solid_capstyle="butt",
                    zorder=5 + k,
                    path_effects=[patheffects.withStroke(linewidth=lw + 1.6, foreground="black")],
                )


def _draw_waypoints(ax, s, lon, lat):
    """Draw the waypoints (positions along the samples at their distances); return labels."""
    d = getattr(s.samples, "distance_m", None)
    if d is None or not getattr(s, "waypoints", None):
        return []
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
    return [
        (float(wx), float(wy), str(name), {"fontsize": 7})
        for (name, _), wx, wy in zip(s.waypoints, wlon, wlat, strict=True)
    ]


def _draw_holds(ax, s, lon, lat):
    """Circle each hold (hover, loiter) and return its label ("hold 10 min")."""
    out = []
    for a, _, minutes in hold_runs(s.samples):
        draw_hold_marker(ax, lon[a], lat[a], zorder=12)
        out.append(
            (
                float(lon[a]),
                float(lat[a]),
                f"hold {minutes:.0f} min",
                {"fontsize": 7, "style": "italic"},
            )
        )
    return out


def _set_extent(ax, coslat):
    """Extent with a margin and the cos-lat aspect; returns the centre and half-spans."""
    xs = ax.dataLim
    x0, x1, y0, y1 = xs.x0, xs.x1, xs.y0, xs.y1
    span = max((x1 - x0) * coslat, y1 - y0, 0.05)
    xm, ym = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    half_x = 0.6 * span / coslat
    half_y = 0.6 * span
    ax.set_xlim(xm - half_x, xm + half_x)
    ax.set_ylim(ym - half_y, ym + half_y)
    ax.set_aspect(1.0 / coslat)
    return xm, ym, half_x, half_y


def _draw_graticule(ax):
    """Graticule lines and degree labels."""
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_locator(MaxNLocator(nbins=6, steps=[1, 2, 2.5, 5, 10]))
    ax.xaxis.set_major_formatter(FuncFormatter(_lon_label))
    ax.yaxis.set_major_formatter(FuncFormatter(_lat_label))
    ax.tick_params(labelsize=7)
    ax.grid(True, color="#999999", linewidth=0.5, linestyle=":")


def _draw_scale_bar(ax, xm, ym, half_x, half_y):
    """Scale bar (geodesic length along the parallel of the bar)."""
    from pyproj import Geod

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


def _draw_titles(fig, items, title):
    """Title (the routes, wrapped, never cut) and the subtitle (airframes, flight times)."""
    names = list(dict.fromkeys(s.route_name for s in items))
    if title:
        head = title
    elif len(names) == 1:
        head = names[0]
    else:
        head = f"{len(names)} routes: " + ", ".join(names)
    lines = textwrap.wrap(head, 80)
    if len(lines) > 2:
        lines = lines[:2]
        lines[1] = lines[1][:76].rstrip(", ") + " \u2026"
    frames = ", ".join(dict.fromkeys(s.airframe_name for s in items))
    times = [np.asarray(s.samples.time).astype("datetime64[m]") for s in items]
    first = min(t.min() for t in times).item()
    last = max(t.max() for t in times).item()
    when = f"{first:%Y-%m-%d %H:%M}\u2013{last:%H:%M} UTC"
    issued = (getattr(items[0], "provenance", None) or {}).get("issue_time")
    fig.text(0.09, 0.975, "\n".join(lines), fontsize=11, weight="bold", va="top", gid="title")
    fig.text(
        0.09,
        0.975 - 0.042 * len(lines),
        f"icing hazard along the route{'s' if len(names) > 1 else ''} ({frames}); flights "
        f"{when}" + (f"; forecast issued {issued}" if issued else ""),
        fontsize=8,
        va="top",
        gid="subtitle",
    )


def _draw_legend(ax):
    """Draw the legend: severities, gaps, route and waypoints."""
    handles = [
        Line2D(
            [],
            [],
            color=SEVERITY_COLOURS[k],
            linewidth=MAP_STYLE[k][0],
            linestyle=MAP_STYLE[k][1],
            label=codes.SEVERITY[k],
            path_effects=[
                patheffects.withStroke(linewidth=MAP_STYLE[k][0] + 1.6, foreground="black")
            ],
        )
        for k in (1, 2, 3, 4)
    ] + [
        Line2D(
            [], [], color=GAP_HATCH_COLOUR, linewidth=3.0, linestyle=(0, (3, 2)), label=GAP_LABEL
        ),
        Line2D([], [], color="black", linewidth=1.0, label="route"),
        Line2D([], [], color=COAST_COLOUR, linewidth=0.8, label="coast (Natural Earth)"),
        Line2D(
            [],
            [],
            color=DOMAIN_COLOUR,
            linewidth=1.4,
            linestyle=(0, (1, 2)),
            label="forecast area",
        ),
        hold_handle("hold"),
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
