"""A map of one altitude band at one valid time (``icing grid --maps``).

The band's worst severity in the route pictures' colours (:mod:`icing.outputs.plot.style`),
coverage gaps grey and hatched (never white, which reads as "no icing"), the part of
the grid where the whole band is under the ground in the ground's colour, SLD
hatched with circles, the bundled coastlines and graticule of the route map, the
title naming the band, the valid time and the airframe, and the caution. An
equirectangular view scaled by the cosine of the mean latitude; projected grids are
drawn cell by cell at their longitudes and latitudes. Grids with more cells than
the picture has pixels are shown at the worst of each few cells (said on the map).
"""

from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from icing import codes
from icing.outputs.plot.routemap import _draw_coastlines, _draw_graticule
from icing.outputs.plot.style import (
    COAST_COLOUR,
    GAP_FILL,
    GAP_HATCH,
    GAP_HATCH_COLOUR,
    GAP_LABEL,
    GROUND,
    SEVERITY_COLOURS,
    SLD_COLOUR,
    check_picture_path,
    draw_caution,
    save,
)

__all__ = ["plot_grid_map", "drawn_columns", "map_frame", "DISPLAY_CELLS"]

#: Most cells drawn; larger grids show the worst of each few cells.
DISPLAY_CELLS = 400_000
#: What each shade is, in drawing order (a larger rank wins when cells are merged).
_RANKS = ("none", "below-ground", "gap", "trace", "light", "moderate", "severe")
_COLOURS = ["#ffffff", GROUND, GAP_FILL] + [SEVERITY_COLOURS[k] for k in (1, 2, 3, 4)]
#: Outside the forecast's grid (the axes' background).
_OUTSIDE = "#dcdcdc"


def _ranks(severity, coverage):
    """Display rank of every cell (see ``_RANKS``)."""
    from icing.hazards.bands import COVERAGE_BELOW_GROUND

    sev = np.asarray(severity)
    below = np.asarray(coverage) == COVERAGE_BELOW_GROUND
    return np.where(sev >= codes.SEV_TRACE, sev + 2, np.where(sev == codes.GAP, 2 - below, 0))


def _coarsen(a, f):
    """Return the largest value of each f x f block of ``a`` (edges padded with the least)."""
    if f == 1:
        return a
    ny, nx = a.shape
    py, px = -ny % f, -nx % f
    a = np.pad(a, ((0, py), (0, px)), constant_values=a.min())
    return a.reshape(a.shape[0] // f, f, a.shape[1] // f, f).max(axis=(1, 3))


def _corners(result, x, f):
    """Cell-corner longitudes and latitudes (unwrapped), every ``f`` cells."""
    from icing.hazards.areas import cell_edges

    xe, ye = cell_edges(x), cell_edges(result.y)
    xe = np.r_[xe[::f], xe[-1]] if (xe.size - 1) % f else xe[::f]
    ye = np.r_[ye[::f], ye[-1]] if (ye.size - 1) % f else ye[::f]
    if result.crs is None:
        lon, lat = np.meshgrid(np.unwrap(xe, period=360.0), np.clip(ye, -90, 90))
        return lon, lat
    from pyproj import Transformer  # projected grids only

    inv = Transformer.from_crs(result.crs, "EPSG:4326", always_xy=True)
    lon, lat = inv.transform(*np.meshgrid(xe, ye))
    return np.unwrap(np.unwrap(np.asarray(lon), period=360.0, axis=1), period=360.0, axis=0), lat


def drawn_columns(result, arrays):
    """Return the grid's x and ``arrays`` (y, x) in the order they are drawn.

    A global longitude-latitude grid is drawn from -180 to 180: its columns are put
    in that order; any other grid is drawn as it is.
    """
    x = np.asarray(result.x, float)
    arrays = [np.asarray(a) for a in arrays]
    if result.periodic and result.crs is None:
        order = np.argsort(((x + 180.0) % 360.0) - 180.0, kind="stable")
        x = ((x[order] + 180.0) % 360.0) - 180.0
        arrays = [a[:, order] for a in arrays]
    return x, arrays


def map_frame(result, x, f):
    """Return a map's cell corners (lon, lat), its aspect and its extent.

    Each map cell is ``f`` x ``f`` grid cells; the aspect is the cosine of the map's
    middle latitude; the extent is (west, east, south, north).
    """
    lon, lat = _corners(result, x, f)
    coslat = max(np.cos(np.deg2rad(float(np.median(lat)))), 0.05)
    extent = (float(lon.min()), float(lon.max()), float(lat.min()), float(lat.max()))
    return lon, lat, coslat, extent


def plot_grid_map(result, t, b, path, *, width_in=9.0, dpi=110):
    """Draw band ``b`` at valid time ``t`` of a grid run; write a PNG.

    Parameters
    ----------
    result : GridResult
        The grid run (:func:`icing.runs.grid.grid_forecast`).
    t, b : int
        Index of the valid time and of the band.
    path : str or pathlib.Path
        Output file (``.png`` or ``.svg``).

    Returns
    -------
    pathlib.Path
    """
    path, fmt = check_picture_path(path)
    x, (sev, cov, sld) = drawn_columns(
        result, (result.severity[t, b], result.coverage[t, b], result.sld[t, b])
    )
    f = max(1, int(np.ceil(np.sqrt(sev.size / DISPLAY_CELLS))))
    rank = _coarsen(_ranks(sev, cov), f)
    lon, lat, coslat, extent = map_frame(result, x, f)
    lon0 = float(np.median(lon))  # longitudes are continuous: coastlines go near them
    # the figure as tall as the map needs: 5.6 in wide, title above, caution below
    map_h = float(
        np.clip(5.6 * (extent[3] - extent[2]) / ((extent[1] - extent[0]) * coslat), 2.0, 7.0)
    )
    height = map_h + 1.9
    fig = Figure(figsize=(width_in, height))
    FigureCanvasAgg(fig)
    ax = fig.add_axes([0.08, 1.0 / height, 5.6 / width_in, map_h / height])
    ax.set_facecolor(_OUTSIDE)  # beyond the forecast's grid: no data, not "none"
    cmap = ListedColormap(_COLOURS)
    ax.pcolormesh(lon, lat, rank, cmap=cmap, vmin=-0.5, vmax=6.5, shading="flat", zorder=0.5)
    cx = 0.25 * (lon[:-1, :-1] + lon[1:, 1:] + lon[:-1, 1:] + lon[1:, :-1])
    cy = 0.25 * (lat[:-1, :-1] + lat[1:, 1:] + lat[:-1, 1:] + lat[1:, :-1])
    _hatch(ax, cx, cy, rank == 2, GAP_HATCH, GAP_HATCH_COLOUR)
    _hatch(ax, cx, cy, _coarsen(np.asarray(sld) > codes.SLD_NONE, f), "oo", SLD_COLOUR)
    ax.set_xlim(*extent[:2])
    ax.set_ylim(*extent[2:])
    ax.set_aspect(1.0 / coslat)
    _draw_coastlines(ax, lon0)
    _draw_graticule(ax)
    _titles(fig, result, t, b, f, top=1.0 - 0.25 / height, step=0.3 / height)
    _legend(ax)
    draw_caution(fig, width_in)
    return save(fig, path, fmt, dpi, tight=True)


def _hatch(ax, x, y, mask, hatch, colour):
    """Hatch the cells of ``mask`` (filled contours of the mask, no fill colour)."""
    m = np.asarray(mask, float)
    if not m.any() or min(m.shape) < 2:
        return
    import matplotlib

    with matplotlib.rc_context({"hatch.color": colour, "hatch.linewidth": 0.6}):
        ax.contourf(x, y, m, levels=[0.5, 1.5], colors="none", hatches=[hatch], zorder=3)


def _titles(fig, result, t, b, f, *, top, step):
    """Title (band, airframe) and subtitle (valid time, issue, what a shade means)."""
    issued = (result.provenance or {}).get("issue_time")
    fig.text(
        0.08,
        top,
        f"Icing for {result.airframe}, {result.bands.label(b)} MSL",
        fontsize=12,
        weight="bold",
        va="top",
        gid="title",
    )
    note = "worst in the band" + (f", worst of each {f}x{f} cells" if f > 1 else "")
    if getattr(result, "members", 1) > 1:  # an ensemble: the statistic's word
        note += (
            f"; the {result.member_statistic} of {result.members} members (fractions of "
            "members: the map named -members.png)"
        )
    fig.text(
        0.08,
        top - step,
        f"valid {result.time_text(t)}"
        + (f"; forecast issued {issued}" if issued else "")
        + f"; {note}",
        fontsize=8,
        va="top",
        gid="subtitle",
    )


def _legend(ax):
    handles = [
        Patch(facecolor=SEVERITY_COLOURS[k], edgecolor="#555555", label=codes.SEVERITY[k])
        for k in (1, 2, 3, 4)
    ] + [
        Patch(facecolor="#ffffff", edgecolor="#555555", label="none diagnosed"),
        Patch(facecolor=GAP_FILL, edgecolor=GAP_HATCH_COLOUR, hatch=GAP_HATCH, label=GAP_LABEL),
        Patch(facecolor=GROUND, edgecolor="#555555", label="band below the ground"),
        Patch(facecolor=_OUTSIDE, edgecolor="#555555", label="outside the forecast"),
        Patch(
            facecolor="none", edgecolor=SLD_COLOUR, hatch="oo", label="SLD (freezing drizzle/rain)"
        ),
        Line2D([], [], color=COAST_COLOUR, linewidth=0.8, label="coast (Natural Earth)"),
    ]
    leg = ax.legend(
        handles=handles,
        loc="upper left",
        bbox_to_anchor=(1.03, 1.0),
        fontsize=7,
        handlelength=2.5,
        borderaxespad=0.0,
    )
    leg.set_gid("legend")
