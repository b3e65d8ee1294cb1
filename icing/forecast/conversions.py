"""Conversions at the reader's edge that need more than one variable, as lazy fields.

- relative humidity of a model's convention to over plane water
  (:mod:`icing.forecast.conventions`);
- mixing ratios (per kg of dry air) to mass fractions (per kg of moist air):
  vapour ``q = r / (1 + r)``; a hydrometeor ``q_x = r_x (1 - q_v)``, i.e.
  ``r_x / (1 + r_v)`` (the other condensates in the denominator are left out:
  an error below 1e-7 kg/kg at the contents models carry);
- grid-relative winds to earth-relative: the local angle between grid north and
  true north is measured on the projection itself (a short step along grid y,
  its geodesic azimuth), so the rotation holds for any conformal grid.

Each returns :class:`~icing.forecast.fields.DerivedField` objects computed block by
block, so nothing is read before it is needed.
"""

from __future__ import annotations

import numpy as np

from icing.calc.thermo import specific_humidity_from_relative_humidity
from icing.forecast.conventions import water_rh_factor
from icing.forecast.fields import DerivedField

__all__ = [
    "water_relative_humidity",
    "specific_from_mixing_ratio",
    "mass_fraction_from_mixing_ratio",
    "earth_relative_winds",
    "grid_north_azimuth",
    "base_geographic",
]


def water_relative_humidity(rh, temperature, convention, *, label=""):
    """Relative humidity over plane water from a field of another convention."""

    def func(r, t, **_window):
        return r * water_rh_factor(convention, t)

    return DerivedField(func, (rh, temperature), True, label=label)


def specific_from_mixing_ratio(r, *, label=""):
    """Specific humidity ``q = r / (1 + r)`` from a vapour mixing ratio."""

    def func(ratio, **_window):
        with np.errstate(invalid="ignore"):
            return ratio / (1.0 + ratio)

    return DerivedField(func, (r,), True, label=label)


def _vapour(humidity, hum, t, p):
    """Specific humidity [kg/kg] from whichever humidity the forecast carries."""
    with np.errstate(invalid="ignore"):
        if humidity == "specific_humidity":
            return hum
        if humidity == "relative_humidity":
            return specific_humidity_from_relative_humidity(p, t, np.clip(hum, 0.0, 1.0))
        from icing.forecast.assemble import specific_humidity_of

        return specific_humidity_of({"pressure": p, "temperature": t, "dewpoint": hum}, "dewpoint")


def mass_fraction_from_mixing_ratio(r, humidity, hum, temperature, pressure, *, label=""):
    """Mass fraction of a hydrometeor from its mixing ratio, ``q_x = r_x (1 - q_v)``.

    ``pressure`` is a Field, or a 1-D array of the level pressures (pressure levels).
    """
    levels = None if hasattr(pressure, "read") else np.asarray(pressure, float)
    inputs = (r, hum, temperature) + (() if levels is not None else (pressure,))

    def func(ratio, h, t, *p, **_window):
        if levels is not None:
            shape = [1] * t.ndim
            shape[t.ndim - 3] = levels.size
            p = (np.broadcast_to(levels.reshape(shape), t.shape),)
        q_v = np.nan_to_num(_vapour(humidity, h, t, p[0]), nan=0.0)
        return ratio * (1.0 - q_v)

    return DerivedField(func, inputs, True, label=label)


def base_geographic(crs):
    """Return the latitude-longitude system a projected or rotated grid is defined on.

    For a rotated pole the geodetic CRS pyproj reports is the rotated system itself;
    its source (base) CRS is the real latitude-longitude.
    """
    return crs.source_crs if crs.source_crs is not None else crs.geodetic_crs


def grid_north_azimuth(crs, x, y):
    """Azimuth of grid north from true north (clockwise, radians) at grid points (y, x).

    A grid-relative wind (u_g along grid x, v_g along grid y) is, earth-relative,
    ``u = u_g cos a + v_g sin a``, ``v = -u_g sin a + v_g cos a``.
    """
    from pyproj import Geod, Transformer

    xx, yy = np.meshgrid(np.asarray(x, float), np.asarray(y, float))
    step = 1e-3 * (float(np.nanmax(np.abs(np.diff(y)))) if np.size(y) > 1 else 1.0)
    inv = Transformer.from_crs(crs, base_geographic(crs), always_xy=True)
    lon0, lat0 = inv.transform(xx, yy)
    lon1, lat1 = inv.transform(xx, yy + step)
    geod = Geod(**_geod_args(crs))
    az, _, _ = geod.inv(lon0, lat0, lon1, lat1)
    return np.radians(np.asarray(az, float))


def _geod_args(crs):
    ell = base_geographic(crs).ellipsoid
    return {"a": ell.semi_major_metre, "b": ell.semi_minor_metre}


def earth_relative_winds(u, v, crs, y, x, *, labels=("", "")):
    """Earth-relative (u, v) fields from grid-relative ones on a projected or rotated grid."""

    def rotate(uu, vv, *, ys, xs, sign):
        a = grid_north_azimuth(crs, np.asarray(x)[xs], np.asarray(y)[ys])
        c, s = np.cos(a), np.sin(a)
        if sign > 0:
            return uu * c + vv * s
        return -uu * s + vv * c

    def east(uu, vv, *, ys, xs):
        return rotate(uu, vv, ys=ys, xs=xs, sign=1)

    def north(uu, vv, *, ys, xs):
        return rotate(uu, vv, ys=ys, xs=xs, sign=-1)

    return (
        DerivedField(east, (u, v), True, label=labels[0]),
        DerivedField(north, (u, v), True, label=labels[1]),
    )
