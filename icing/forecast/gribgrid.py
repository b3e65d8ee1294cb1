"""GRIB grid definitions: 1-D x/y coordinates and a CF grid_mapping from the message itself.

Supported: regular latitude-longitude and regular Gaussian grids (x/y are
longitude/latitude), Lambert conformal, polar stereographic, Mercator (x/y in
metres, the projection built from the grid definition with the earth shape as
coded) and rotated latitude-longitude (x/y in rotated degrees). The x/y axes are
put together from the first grid point, the increments and the scanning mode,
then checked against the latitudes and longitudes ecCodes computes for the same
message: a grid whose corners disagree is refused, never used half-understood.
Reduced ("thinned") grids and the rest are refused in one line.

Earth shape (WMO GRIB2 code table 3.2; GRIB1 resolution-and-component flags):
spheres keep their coded radius (6 367 470 m, 6 371 229 m, 6 371 200 m or the
producer's), oblate shapes their axes (IAU 1965, GRS80, WGS 84 or the producer's).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.errors import ForecastError
from icing.forecast.conversions import base_geographic

__all__ = ["GribGrid", "grib_grid", "earth_shape", "grid_signature"]

_REGULAR = ("regular_ll", "regular_gg")
_PROJECTED = ("lambert", "polar_stereographic", "mercator")
_REDUCED = ("reduced_ll", "reduced_gg", "reduced_rotated_gg", "reduced_stretched_gg")


@dataclass(frozen=True)
class GribGrid:
    """A GRIB grid as 1-D axes and, for projected and rotated grids, a CF grid mapping."""

    kind: str
    """ecCodes ``gridType``."""
    y: np.ndarray
    """y axis in scanning order: latitude [deg], projection y [m] or rotated latitude [deg]."""
    x: np.ndarray
    """x axis in scanning order: longitude [deg], projection x [m] or rotated longitude."""
    grid_mapping: dict | None
    """CF grid_mapping attributes; None for latitude-longitude grids."""
    column_major: bool
    """Values run along y first (``jPointsAreConsecutive``)."""
    description: str
    """The grid in words, for the provenance."""


def _get(h, key, default=None):
    import eccodes

    try:
        return eccodes.codes_get(h, key) if eccodes.codes_is_defined(h, key) else default
    except Exception:  # a key that cannot be computed for this message
        return default


def grid_signature(h):
    """Return the keys that make two messages share one grid."""
    keys = (
        "gridType",
        "numberOfDataPoints",
        "latitudeOfFirstGridPointInDegrees",
        "longitudeOfFirstGridPointInDegrees",
        "iScansNegatively",
        "jScansPositively",
    )
    return tuple(_get(h, k) for k in keys)


def earth_shape(h):
    """Return the CF earth attributes of a message (earth_radius or the two semi-axes)."""
    edition = _get(h, "edition")
    if edition == 1:
        if _get(h, "earthIsOblate", 0):
            return {"semi_major_axis": 6378160.0, "semi_minor_axis": 6356775.0}
        return {"earth_radius": 6367470.0}
    shape = _get(h, "shapeOfTheEarth")
    fixed = {
        0: {"earth_radius": 6367470.0},
        2: {"semi_major_axis": 6378160.0, "semi_minor_axis": 6356775.0},
        4: {"semi_major_axis": 6378137.0, "inverse_flattening": 298.257222101},
        5: {"semi_major_axis": 6378137.0, "inverse_flattening": 298.257223563},
        6: {"earth_radius": 6371229.0},
        8: {"earth_radius": 6371200.0},
    }
    if shape in fixed:
        return fixed[shape]
    if shape == 1:
        return {"earth_radius": float(_get(h, "radius"))}
    if shape in (3, 7):
        a, b = _get(h, "earthMajorAxis"), _get(h, "earthMinorAxis")
        if a and b:
            scale = 1000.0 if shape == 3 and a < 1e5 else 1.0  # code 3: kilometres
            return {"semi_major_axis": a * scale, "semi_minor_axis": b * scale}
    return None


def _refuse(path, edition, message, fix):
    raise ForecastError(f"GRIB{edition}: {message}", path=path, fix=fix)


def _axis(first, step, n, negative):
    return first + (-step if negative else step) * np.arange(n, dtype=float)


def _latlon_axes(h):
    """Latitude and longitude axes of a regular or Gaussian grid, in scanning order."""
    import eccodes

    ni, nj = int(_get(h, "Ni")), int(_get(h, "Nj"))
    lat = np.asarray(eccodes.codes_get_array(h, "distinctLatitudes"), float)
    lon = np.asarray(eccodes.codes_get_array(h, "distinctLongitudes"), float)
    lat = np.sort(lat) if _get(h, "jScansPositively", 0) else np.sort(lat)[::-1]
    lon = np.sort(lon)[::-1] if _get(h, "iScansNegatively", 0) else np.sort(lon)
    if lat.size != nj or lon.size != ni:
        raise ValueError("axes do not match Ni/Nj")
    return lat, lon


def _projection_attrs(h, kind, earth):
    """CF grid_mapping attributes of a projected GRIB grid."""
    if kind == "lambert":
        return {
            "grid_mapping_name": "lambert_conformal_conic",
            "standard_parallel": [
                float(_get(h, "Latin1InDegrees")),
                float(_get(h, "Latin2InDegrees")),
            ],
            "longitude_of_central_meridian": float(_get(h, "LoVInDegrees")),
            "latitude_of_projection_origin": float(_get(h, "LaDInDegrees")),
            **earth,
        }
    if kind == "polar_stereographic":
        south = bool(int(_get(h, "projectionCentreFlag", 0)) & 128)
        lad = _get(h, "LaDInDegrees", 60.0)  # GRIB1 is true at 60 degrees
        return {
            "grid_mapping_name": "polar_stereographic",
            "straight_vertical_longitude_from_pole": float(
                _get(h, "orientationOfTheGridInDegrees")
            ),
            "latitude_of_projection_origin": -90.0 if south else 90.0,
            "standard_parallel": float(-abs(lad) if south else abs(lad)),
            **earth,
        }
    return {
        "grid_mapping_name": "mercator",
        "longitude_of_projection_origin": 0.0,
        "standard_parallel": float(_get(h, "LaDInDegrees")),
        **earth,
    }


def _projected_axes(h, attrs):
    """x/y axes [m] of a projected grid from its first point, increments and scanning."""
    from pyproj import CRS, Transformer

    crs = CRS.from_cf(attrs)
    to_xy = Transformer.from_crs(base_geographic(crs), crs, always_xy=True)
    x0, y0 = to_xy.transform(
        _get(h, "longitudeOfFirstGridPointInDegrees"), _get(h, "latitudeOfFirstGridPointInDegrees")
    )
    nx = int(_get(h, "Nx") or _get(h, "Ni"))
    ny = int(_get(h, "Ny") or _get(h, "Nj"))
    dx = float(_get(h, "DxInMetres") or _get(h, "DiInMetres"))
    dy = float(_get(h, "DyInMetres") or _get(h, "DjInMetres"))
    x = _axis(x0, dx, nx, bool(_get(h, "iScansNegatively", 0)))
    y = _axis(y0, dy, ny, not _get(h, "jScansPositively", 0))
    return y, x, crs


def _rotated(h, earth):
    """Rotated latitude-longitude: CF attributes and the rotated axes [deg]."""
    angle = float(_get(h, "angleOfRotationInDegrees", 0.0) or 0.0)
    if angle != 0.0:
        raise ValueError(f"rotation angle {angle} about the new polar axis")
    attrs = {
        "grid_mapping_name": "rotated_latitude_longitude",
        "grid_north_pole_latitude": -float(_get(h, "latitudeOfSouthernPoleInDegrees")),
        "grid_north_pole_longitude": (float(_get(h, "longitudeOfSouthernPoleInDegrees")) % 360.0)
        - 180.0,
        **earth,
    }
    ni, nj = int(_get(h, "Ni")), int(_get(h, "Nj"))
    di = float(_get(h, "iDirectionIncrementInDegrees"))
    dj = float(_get(h, "jDirectionIncrementInDegrees"))
    lon0 = float(_get(h, "longitudeOfFirstGridPointInDegrees"))
    lon0 = lon0 - 360.0 if lon0 > 180.0 else lon0
    x = _axis(lon0, di, ni, bool(_get(h, "iScansNegatively", 0)))
    y = _axis(
        float(_get(h, "latitudeOfFirstGridPointInDegrees")),
        dj,
        nj,
        not _get(h, "jScansPositively", 0),
    )
    return attrs, y, x


def _check_against_eccodes(h, grid, crs):
    """Compare the corners of our axes with ecCodes' own latitudes and longitudes."""
    import eccodes

    lat = np.asarray(eccodes.codes_get_array(h, "latitudes"), float)
    lon = np.asarray(eccodes.codes_get_array(h, "longitudes"), float)
    ny, nx = grid.y.size, grid.x.size
    shape = (nx, ny) if grid.column_major else (ny, nx)
    lat, lon = lat.reshape(shape), lon.reshape(shape)
    if grid.column_major:
        lat, lon = lat.T, lon.T
    jj = np.array([0, 0, ny - 1, ny - 1])
    ii = np.array([0, nx - 1, 0, nx - 1])
    if crs is None:
        glat, glon = grid.y[jj], grid.x[ii]
    else:
        from pyproj import Transformer

        inv = Transformer.from_crs(crs, base_geographic(crs), always_xy=True)
        glon, glat = inv.transform(grid.x[ii], grid.y[jj])
    dlon = (np.asarray(glon) - lon[jj, ii] + 180.0) % 360.0 - 180.0
    err = np.hypot(np.asarray(glat) - lat[jj, ii], dlon * np.cos(np.radians(lat[jj, ii])))
    return float(np.max(err))


def grib_grid(h, *, path):
    """Build the :class:`GribGrid` of a message's grid; refuse what cannot be read.

    Raises
    ------
    ForecastError
        Reduced (thinned) grids, spectral or other unsupported grid types, and
        grid definitions whose corners disagree with ecCodes' coordinates.
    """
    edition = _get(h, "edition")
    kind = _get(h, "gridType")
    column_major = bool(_get(h, "jPointsAreConsecutive", 0))
    if kind in _REDUCED or _get(h, "PLPresent", 0):
        _refuse(
            path,
            edition,
            f"reduced (thinned) grid {kind!r}: rows of different lengths are not read",
            "ask the data service for a regular latitude-longitude grid, or regrid "
            "the file to one first (e.g. CDO remapbil or MARS grid=0.25/0.25)",
        )
    earth = earth_shape(h)
    try:
        if kind in _REGULAR:
            y, x = _latlon_axes(h)
            grid = GribGrid(kind, y, x, None, column_major, "latitude-longitude")
            crs = None
        elif kind in _PROJECTED or kind == "rotated_ll":
            if earth is None:
                raise ValueError(f"earth shape {_get(h, 'shapeOfTheEarth')} not supported")
            if kind == "rotated_ll":
                attrs, y, x = _rotated(h, earth)
                from pyproj import CRS

                crs = CRS.from_cf(attrs)
            else:
                attrs = _projection_attrs(h, kind, earth)
                y, x, crs = _projected_axes(h, attrs)
            grid = GribGrid(
                kind, y, x, attrs, column_major, f"projected ({attrs['grid_mapping_name']})"
            )
        else:
            raise ValueError(f"grid type {kind!r} is not read")
        err = _check_against_eccodes(h, grid, crs)
    except Exception as exc:  # ours (ValueError) and ecCodes' (inconsistent definitions)
        if isinstance(exc, ForecastError):
            raise
        _refuse(
            path,
            edition,
            f"grid definition not understood ({exc})",
            "give a regular latitude-longitude, Lambert, polar-stereographic, Mercator "
            "or rotated latitude-longitude grid",
        )
    spacing = abs(float(np.median(np.diff(grid.y)))) if grid.y.size > 1 else 1.0
    deg = spacing if crs is None or crs.is_geographic else spacing / 111e3
    if not err <= 0.05 * max(deg, 1e-6):
        _refuse(
            path,
            edition,
            f"grid {kind!r}: corners computed from the grid definition miss ecCodes' "
            f"coordinates by {err:.3f} degrees",
            "report the file; it is not read rather than misplaced",
        )
    return grid
