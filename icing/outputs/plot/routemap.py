"""The plan-view map of screened routes: one function per layer drawn.

An equirectangular view scaled by the cosine of the mean latitude (no tiles, no
network): each route as a thin line, its icing segments coloured by severity
with a line width and dash per severity, coverage gaps dashed grey, waypoints
labelled, a graticule, a geodesic scale bar (``pyproj.Geod``, WGS 84), the
titles, the legend and the caution. Longitudes are unwrapped about the routes'
mean longitude, so antimeridian routes are drawn whole.
"""

from __future__ import annotations

import matplotlib
import numpy as np
from matplotlib import patheffects
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.ticker import FuncFormatter, MaxNLocator

from icing import codes
from icing.errors import InputError
from icing.outputs.plot.style import (
    GAP_HATCH_COLOUR,
    GAP_LABEL,
    MAP_STYLE,
    SEVERITY_COLOURS,
    TEXT_BOX,
    check_picture_path,
    draw_caution,
    props_of,
    save,
    valid_times_text,
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
    ax = fig.add_axes([0.09, 0.17, 0.6, 0.7])
    for s in items:
        lon = _near(s.samples.lon, lon0)
        lat = np.asarray(s.samples.lat, dtype=float)
        ax.plot(lon, lat, color="black", linewidth=1.0, zorder=3)
        _draw_segments(ax, getattr(s, "segments", None) or [], lon0)
        _draw_waypoints(ax, s, lon, lat)
    xm, ym, half_x, half_y = _set_extent(ax, coslat)
    _draw_graticule(ax)
    _draw_scale_bar(ax, xm, ym, half_x, half_y)
    _draw_titles(fig, items, title)
    _draw_legend(ax)
    draw_caution(fig, figsize[0])
    return save(fig, path, fmt, dpi)


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
    """Waypoints: positions interpolated along the samples at their distances, labelled."""
    d = getattr(s.samples, "distance_m", None)
    if d is None or not getattr(s, "waypoints", None):
        return
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
            bbox=TEXT_BOX,
        )


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
    """Title (the routes) and the subtitle (airframes, forecast valid times)."""
    if title:
        head = title
    elif len(items) == 1:
        head = items[0].route_name
    else:
        head = f"{len(items)} routes: " + ", ".join(s.route_name for s in items)
        if len(head) > 90:
            head = head[:87].rstrip(", ") + "..."
    vt = valid_times_text(getattr(items[0], "provenance", None))
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
