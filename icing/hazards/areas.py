"""Polygons of the cells of each class on a forecast grid, in longitude and latitude.

The outlines follow the cells exactly before they are simplified: every edge between
two cells of different classes (and the grid's outline) is a boundary. The
boundaries are cut where classes meet, so that the lines are noded, and GEOS's
polygonizer (``shapely.polygonize``) turns them into faces, each one connected set of
cells of one class. All the faces of a grid form a coverage (they share their
edges), which ``shapely.coverage_simplify`` simplifies to the grid spacing without
opening gaps or overlaps between neighbouring classes. Then:

- latitude-longitude grids map the vertices onto the cell edges (longitudes kept
  continuous across 180 degrees); projected grids are densified along their edges
  and brought to longitude and latitude with pyproj;
- every polygon is split at the antimeridian (RFC 7946, section 3.1.9), the parts
  beyond it moved by a whole turn; a ring round a pole is closed along the pole;
- rings are valid, exteriors counter-clockwise and holes clockwise (RFC 7946,
  section 3.1.6), coordinates to at most 6 decimals.

Plain computation on arrays and geometries: nothing is read or written here.
"""

from __future__ import annotations

import numpy as np

__all__ = ["class_polygons", "cell_edges"]

#: Sentinel class of the cells outside the grid (the grid's outline is a boundary).
_OUTSIDE = -32768
#: Simplification tolerance, in cells: boundaries move by at most about a cell.
_SIMPLIFY_CELLS = 0.75
#: Longest edge of a projected grid's outline before it is brought to lon/lat, in cells.
_DENSIFY_CELLS = 4.0


def cell_edges(c):
    """Edges of the cells centred on a monotonic 1-D coordinate (n + 1 values).

    >>> cell_edges(np.array([0.0, 1.0, 3.0])).tolist()
    [-0.5, 0.5, 2.0, 4.0]
    """
    c = np.asarray(c, float)
    if c.size == 1:
        return np.array([c[0] - 0.5, c[0] + 0.5])
    mid = 0.5 * (c[1:] + c[:-1])
    return np.concatenate([[c[0] - (mid[0] - c[0])], mid, [c[-1] + (c[-1] - mid[-1])]])


def _runs(boundary, key):
    """Maximal runs of boundary edges along the last axis with one key: (line, start, stop)."""
    n = boundary.shape[-1]
    cont = np.zeros(boundary.shape, bool)
    cont[:, 1:] = boundary[:, 1:] & boundary[:, :-1] & (key[:, 1:] == key[:, :-1])
    idx = np.flatnonzero(boundary)
    if idx.size == 0:
        return np.zeros((0, 3), int)
    first = np.flatnonzero(~cont.reshape(-1)[idx])
    last = np.r_[first[1:] - 1, idx.size - 1]
    a, b = idx[first], idx[last]
    return np.column_stack([a // n, a % n, b % n + 1])


def _boundaries(codes):
    """Noded boundary segments between cells of different classes, in cell-edge units.

    Returns an array (k, 2, 2) of segments ``((x0, y0), (x1, y1))``: vertex (i, j) is
    the corner between cell columns i-1, i and rows j-1, j.
    """
    ny, nx = codes.shape
    p = np.full((ny + 2, nx + 2), _OUTSIDE, dtype=np.int32)
    p[1:-1, 1:-1] = codes
    # edges along y-line j (between rows j-1 and j), x from i to i+1
    lo, hi = p[:-1, 1:-1], p[1:, 1:-1]
    h = _runs(lo != hi, lo.astype(np.int64) * 65536 + hi)
    # edges along x-line i (between columns i-1 and i), y from j to j+1
    left, right = p[1:-1, :-1].T, p[1:-1, 1:].T
    v = _runs(left != right, left.astype(np.int64) * 65536 + right)
    seg_h = np.stack([np.column_stack([h[:, 1], h[:, 0]]), np.column_stack([h[:, 2], h[:, 0]])], 1)
    seg_v = np.stack([np.column_stack([v[:, 0], v[:, 1]]), np.column_stack([v[:, 0], v[:, 2]])], 1)
    return np.concatenate([seg_h, seg_v]).astype(float)


def _faces(codes):
    """Faces of the class boundaries and the class of each (cell-edge units)."""
    import shapely

    segs = _boundaries(codes)
    faces = shapely.get_parts(shapely.polygonize(shapely.linestrings(segs)))
    if faces.size == 0:
        return faces, np.zeros(0, int)
    inside = shapely.get_coordinates(shapely.point_on_surface(faces))
    i = np.clip(np.floor(inside[:, 0]).astype(int), 0, codes.shape[1] - 1)
    j = np.clip(np.floor(inside[:, 1]).astype(int), 0, codes.shape[0] - 1)
    return faces, codes[j, i]


def class_polygons(codes, x, y, *, crs=None, periodic=False, wanted=None):
    """Polygons in longitude and latitude of the cells of each class of a grid.

    Parameters
    ----------
    codes : ndarray of int, shape (y, x)
        Class of every cell (values above -32768).
    x, y : ndarray
        Cell-centre coordinates: longitude and latitude [deg] (``crs`` None), or
        projection coordinates [m].
    crs : pyproj.CRS, optional
        The grid's projection.
    periodic : bool
        The longitudes go all the way round (the first and last columns touch).
    wanted : collection of int, optional
        The classes to return (default every class present).

    Returns
    -------
    dict
        ``{class: shapely (Multi)Polygon}`` in longitude and latitude [deg], split
        at the antimeridian, exteriors counter-clockwise, valid.
    """
    import shapely

    codes = np.asarray(codes)
    faces, cls = _faces(codes)
    if faces.size == 0:
        return {}
    faces = shapely.coverage_simplify(faces, _SIMPLIFY_CELLS, simplify_boundary=False)
    keep = ~shapely.is_empty(faces)
    if wanted is not None:
        keep &= np.isin(cls, list(wanted))
    faces, cls = faces[keep], cls[keep]
    xe, ye = cell_edges(x), cell_edges(y)
    if crs is None:
        faces = shapely.transform(faces, _lonlat_edges(np.unwrap(xe, period=360.0), ye))
    else:
        faces = _projected_to_lonlat(faces, xe, ye, crs)
    out = {}
    for c in np.unique(cls):
        mine = faces[cls == c]
        geom = shapely.union_all(mine) if periodic else _collect(mine)
        geom = _finished(_split_antimeridian(geom))
        if geom is not None:
            out[int(c)] = geom
    return out


def _polygons_of(geoms):
    """Every Polygon inside the geometries (collections and multi-parts opened)."""
    import shapely

    out = []
    for g in shapely.get_parts(np.atleast_1d(geoms)):
        if g.geom_type == "Polygon":
            out.append(g)
        elif g.geom_type in ("MultiPolygon", "GeometryCollection"):
            out += _polygons_of(g)
    return out


def _collect(geoms):
    import shapely

    polys = _polygons_of(geoms)
    if not polys:
        return None
    return shapely.multipolygons(polys) if len(polys) > 1 else polys[0]


def _lonlat_edges(xe, ye):
    """Map cell-edge units onto longitude and latitude edges (a shapely transform)."""

    def tf(c):
        lon = np.interp(c[:, 0], np.arange(xe.size), xe)
        lat = np.clip(np.interp(c[:, 1], np.arange(ye.size), ye), -90.0, 90.0)
        return np.column_stack([lon, lat])

    return tf


def _projected_to_lonlat(faces, xe, ye, crs):
    """Faces in cell-edge units of a projected grid -> lon/lat, densified, unwrapped."""
    import shapely
    from pyproj import Transformer  # projected grids only

    inv = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    dense = shapely.segmentize(faces, _DENSIFY_CELLS)
    out = []
    for face in dense:
        rings = []
        for ring in [face.exterior, *face.interiors]:
            c = np.asarray(ring.coords)
            px = np.interp(c[:, 0], np.arange(xe.size), xe)
            py = np.interp(c[:, 1], np.arange(ye.size), ye)
            lon, lat = inv.transform(px, py)
            rings.append(_unwrapped_ring(np.asarray(lon, float), np.asarray(lat, float)))
        out.append(shapely.Polygon(rings[0], [_beside(r, rings[0]) for r in rings[1:]]))
    return np.array(out, dtype=object)


def _unwrapped_ring(lon, lat):
    """Make a ring's longitudes continuous; close a ring round a pole along the pole."""
    lon = np.unwrap(lon, period=360.0)
    turn = lon[-1] - lon[0]
    if abs(turn) > 180.0:  # it went round a pole: follow the pole back to the start
        pole = 90.0 if np.mean(lat) > 0 else -90.0
        lon = np.r_[lon, lon[-1], lon[0]]
        lat = np.r_[lat, pole, pole]
    return np.column_stack([lon, lat])


def _beside(hole, shell):
    """Move a hole's ring by whole turns of longitude onto its shell's.

    Each ring is unwrapped from its own first point, so near the antimeridian a hole
    can come out a turn away from its shell (at -179.9 inside a shell at 180.1): an
    invalid polygon ("hole lies outside shell") that the antimeridian cut cannot take.
    """
    turns = np.round((np.mean(shell[:, 0]) - np.mean(hole[:, 0])) / 360.0)
    return hole + [360.0 * turns, 0.0] if turns else hole


def _split_antimeridian(geom):
    """Cut at 180 + k 360 degrees and move each piece by whole turns into -180..180."""
    import shapely

    if geom is None:
        return None
    xmin, _, xmax, _ = shapely.bounds(geom)
    k0 = int(np.floor((xmin + 180.0) / 360.0))
    k1 = int(np.floor((xmax + 180.0) / 360.0 - 1e-12))
    if k0 == k1 == 0:
        return geom
    if not shapely.is_valid(geom):  # faces side by side in one multi-part: GEOS cuts valid ones
        geom = shapely.make_valid(geom)
    pieces = []
    for k in range(k0, k1 + 1):
        box = shapely.box(-180.0 + 360.0 * k, -90.0, 180.0 + 360.0 * k, 90.0)
        part = shapely.intersection(geom, box)
        if not shapely.is_empty(part):
            pieces.append(shapely.transform(part, lambda c, k=k: c - [360.0 * k, 0.0]))
    return _collect(pieces) if pieces else None


def _finished(geom):
    """Make valid, 6 decimals, exteriors counter-clockwise; None when nothing is left."""
    import shapely

    if geom is None or shapely.is_empty(geom):
        return None
    # 1e-6 degree is 0.1 m: rounding cannot fold a ring of cells a kilometre or more wide
    geom = shapely.transform(geom, lambda c: np.round(c, 6))
    if not shapely.is_valid(geom):
        geom = shapely.make_valid(geom)
    polys = [p for p in _polygons_of(geom) if p.area > 0]
    if not polys:
        return None
    geom = shapely.multipolygons(polys) if len(polys) > 1 else polys[0]
    return shapely.orient_polygons(geom)
