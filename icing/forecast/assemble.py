"""From interpolated forecast values to the column physics' inputs.

A gridded forecast interpolates its fields to the samples; what comes out is
what the file holds, in SI. :func:`assemble_columns` turns it into the keyword
arguments of :func:`icing.calc.column.diagnose_columns`, surface first:

- pressure levels become the ``pressure`` column; height levels the ``height``
  column (plus the surface height when the heights are above ground);
- humidity is clipped to saturation over water (model output a little above
  100 % is normal);
- heights absent from a pressure-level file are computed hypsometrically, on
  the interpolated column so that they agree with its temperatures;
- omega is turned into an upward velocity with the column's own density;
- hydrometeors are clipped at 0, cloud fraction to 0..1.

The physics lives in :mod:`icing.calc.thermo`; this module only applies it to
the assembled column, so that every conversion that needs several variables
uses the same column the diagnosis sees.
"""

from __future__ import annotations

import functools
import importlib
from dataclasses import dataclass

import numpy as np

from icing.calc.thermo import (
    height_from_pressure_hypsometric,
    saturation_vapor_pressure,
    specific_humidity_from_relative_humidity,
    vertical_velocity_from_omega,
)
from icing.constants import RD, G

__all__ = ["ColumnSpec", "assemble_columns", "specific_humidity_of", "fill_along_levels"]

_HYDROMETEORS = ("cloud_liquid", "cloud_ice", "rain", "snow")


@dataclass(frozen=True)
class ColumnSpec:
    """What a gridded forecast's interpolated values are, for :func:`assemble_columns`."""

    levels: np.ndarray
    """The level values, surface first: pressure [Pa], height [m] or model level number."""
    vertical: str
    """"pressure" | "height" | "model"."""
    humidity: str
    """The humidity key the forecast carries."""
    height_above_ground: bool = False
    """Height levels are above the surface (add the surface height)."""
    omega: bool = False
    """``vertical_velocity`` holds omega [Pa/s] (to convert)."""
    ground_unknown: bool = False
    """Neither surface pressure nor surface height: the ground is taken at mean sea level
    (the lowest ground there is) so that levels beneath are below the ground."""


def specific_humidity_of(levels, humidity, *, computed=None):
    """Return the specific humidity [kg/kg] from whichever humidity the levels carry.

    ``computed``, optional: a dict that receives ``saturation``, the saturation vapour
    pressure over water at the levels' temperatures [Pa], where it was computed (from
    relative humidity or dewpoint), for the column diagnosis to take again.
    """
    p, t, a = levels["pressure"], levels["temperature"], levels[humidity]
    with np.errstate(invalid="ignore"):
        if humidity == "specific_humidity":
            return a
        es = saturation_vapor_pressure(t)
        if computed is not None:
            computed["saturation"] = es
        if humidity == "relative_humidity":
            return specific_humidity_from_relative_humidity(p, t, a, saturation=es)
        e = saturation_vapor_pressure(a)
        return specific_humidity_from_relative_humidity(p, t, e / es, saturation=es)


def fill_along_levels(a):
    """Fill NaN along the last axis from the nearest valid level below, else above.

    Used only to keep the hypsometric integration going through missing
    temperatures (e.g. levels below the ground); the filled values are never
    returned as data.

    >>> fill_along_levels(np.array([np.nan, 1.0, np.nan, 3.0, np.nan])).tolist()
    [1.0, 1.0, 1.0, 3.0, 3.0]
    """
    a = np.asarray(a, dtype=float)
    ok = np.isfinite(a)
    n = a.shape[-1]
    idx = np.where(ok, np.arange(n), 0)
    fwd = np.maximum.accumulate(idx, axis=-1)
    first = np.argmax(ok, axis=-1)[..., None]
    fwd = np.where(np.take_along_axis(ok, fwd, -1), fwd, first)
    return np.take_along_axis(a, fwd, -1)


def _clip_humidity(hum, humidity, temperature):
    """Clip to physical values (saturation over water, and 0)."""
    with np.errstate(invalid="ignore"):
        if humidity == "relative_humidity":
            return np.clip(hum, 0.0, 1.0)
        if humidity == "dewpoint":
            return np.minimum(hum, temperature)
        return np.maximum(hum, 0.0)


def _hypsometric_heights(cols, q):
    """Heights of a pressure-level column without heights in the file (``q`` [kg/kg])."""
    anchored = "surface_pressure" in cols and "surface_height" in cols
    with np.errstate(invalid="ignore"):
        return height_from_pressure_hypsometric(
            cols["pressure"],
            fill_along_levels(cols["temperature"]),
            specific_humidity=q,
            base_height=cols["surface_height"] if anchored else None,
            base_pressure=cols["surface_pressure"] if anchored else None,
        )


def _vertical_coordinates(vals, m, spec, cols):
    """Pressure and height columns from the levels and the fields."""
    n_lev = spec.levels.size
    if spec.vertical == "pressure":
        cols["pressure"] = np.broadcast_to(spec.levels, (m, n_lev)).copy()
        return
    cols["pressure"] = vals["pressure"]
    if spec.vertical == "model":
        cols["height"] = vals["height"]
        return
    z = np.broadcast_to(spec.levels, (m, n_lev)).copy()
    if spec.height_above_ground:
        # an unknown surface leaves the heights unknown: a gap, never MSL
        z = z + vals["surface_height"][:, None]
    cols["height"] = z


def _sea_level_ground(cols):
    """Pressure at mean sea level in each column: the ground when the file gives none.

    A pressure level under the ground carries values extrapolated by the model's
    post-processing; without surface pressure or orography the only ground known
    for certain is mean sea level (0 m). The pressure there is interpolated (linear
    in ln p) between the levels around 0 m, or, when every level lies above sea
    level, carried down from the lowest one hypsometrically. Given as the columns'
    surface pressure, it makes the diagnosis treat the levels beneath as below the
    ground (so the lowest usable level is the lowest above sea level); the surface
    height stays unknown (heights above ground are not invented).
    """
    z, p, t = cols["height"], cols["pressure"], cols["temperature"]
    with np.errstate(invalid="ignore", divide="ignore"):
        above = np.isfinite(z) & (z >= 0.0)
        k = np.argmax(above, axis=-1)
        rows = np.arange(z.shape[0])
        k0 = np.maximum(k - 1, 0)
        z0, z1 = z[rows, k0], z[rows, k]
        lnp = np.log(p)
        w = np.where(z1 > z0, (0.0 - z0) / (z1 - z0), 0.0)
        inside = lnp[rows, k0] + w * (lnp[rows, k] - lnp[rows, k0])
        down = lnp[rows, 0] + G * z[rows, 0] / (RD * t[rows, 0])  # all levels above 0 m
        lnp0 = np.where(k > 0, inside, down)
        return np.where(above.any(axis=-1), np.exp(lnp0), np.nan)


@functools.cache
def _loops():
    """Return the loops of :mod:`icing.forecast._assemble_loops`, or None (no numba)."""
    from icing.cachedir import load_compiled

    return load_compiled(lambda: importlib.import_module("icing.forecast._assemble_loops"))


def _specific_humidity_compiled(cols, humidity, computed, loops):
    """Return ``nan_to_num(specific_humidity_of(...), nan=0.0)`` in one compiled pass."""
    p, t, a = cols["pressure"], cols["temperature"], cols[humidity]
    kind = {"relative_humidity": 0, "dewpoint": 1, "specific_humidity": 2}[humidity]
    with np.errstate(invalid="ignore"):
        es = saturation_vapor_pressure(t) if kind != 2 else p  # p: a stand-in, not read
        hum = saturation_vapor_pressure(a) if kind == 1 else a
    if kind != 2 and computed is not None:
        computed["saturation"] = es
    return _run_flat(loops.specific_humidity, (p, hum, es), kind)


def _updraft_compiled(omega, p, t, q, loops):
    """``thermo.vertical_velocity_from_omega(omega, p, t, q)`` in one compiled pass."""
    return _run_flat(loops.updraft_from_omega, (omega, p, t, q))


def _run_flat(loop, arrays, *extra):
    """Run an elementwise ``loop(*flat arrays, *extra, out)`` over the broadcast arrays."""
    shape = np.broadcast_shapes(*(np.shape(a) for a in arrays))
    flat = [np.ascontiguousarray(np.broadcast_to(a, shape), dtype=float).ravel() for a in arrays]
    out = np.empty(shape)
    loop(*flat, *extra, out.reshape(-1))
    return out


def assemble_columns(vals, m, spec: ColumnSpec, *, computed=None, compiled=False) -> dict:
    """Turn interpolated values (SI, surface first) into ``diagnose_columns`` keyword arrays.

    Parameters
    ----------
    vals : dict
        ``{key: array}``: level keys shaped (m, level), surface keys (m,), as
        interpolated from the forecast's fields (plus ``wind_u``/``wind_v``).
    m : int
        Number of columns.
    spec : ColumnSpec
        What the values are.
    computed : dict, optional
        Receives what was computed on the way that the column diagnosis can take
        again (``diagnose_columns(saturation=...)``): ``saturation``, the saturation
        vapour pressure over water at the columns' temperatures [Pa], where the
        specific humidity was needed (hypsometric heights, omega) from relative
        humidity or dewpoint.
    compiled : bool, optional
        The specific humidity and the omega conversion as compiled loops where numba is
        installed (:mod:`icing.forecast._assemble_loops`: numpy's values to the bit,
        one pass each instead of a dozen); the grid sets it for large grids.

    Returns
    -------
    dict
        The columns (``precipitation_rate_mm_h`` for the precipitation rate; the
        winds kept under ``wind_u``/``wind_v`` for the caller to take out).
    """
    cols = {}
    _vertical_coordinates(vals, m, spec, cols)
    cols["temperature"] = vals["temperature"]
    cols[spec.humidity] = _clip_humidity(vals[spec.humidity], spec.humidity, cols["temperature"])
    for key in ("surface_pressure", "surface_height"):
        if key in vals:
            cols[key] = vals[key]
    kept = {}
    loops = _loops() if compiled else None

    def q():  # the specific humidity, computed once if at all (NaN as dry)
        if "q" not in kept:
            kept["q"] = (
                _specific_humidity_compiled(cols, spec.humidity, computed, loops)
                if loops is not None
                else np.nan_to_num(
                    specific_humidity_of(cols, spec.humidity, computed=computed), nan=0.0
                )
            )
        return kept["q"]

    if spec.vertical == "pressure":
        z = vals.get("height")
        cols["height"] = z if z is not None else _hypsometric_heights(cols, q())
    if spec.ground_unknown:
        cols["surface_pressure"] = _sea_level_ground(cols)
    for key in _HYDROMETEORS:
        if key in vals:
            cols[key] = np.maximum(vals[key], 0.0)
    if "cloud_fraction" in vals:
        cols["cloud_fraction"] = np.clip(vals["cloud_fraction"], 0.0, 1.0)
    if "vertical_velocity" in vals:
        w = vals["vertical_velocity"]
        if spec.omega and loops is not None:
            w = _updraft_compiled(w, cols["pressure"], cols["temperature"], q(), loops)
        elif spec.omega:
            with np.errstate(invalid="ignore"):
                w = vertical_velocity_from_omega(w, cols["pressure"], cols["temperature"], q())
        cols["vertical_velocity"] = w
    if "precipitation_rate" in vals:
        cols["precipitation_rate_mm_h"] = np.maximum(vals["precipitation_rate"], 0.0)
    for key in ("wind_u", "wind_v"):
        if key in vals:
            cols[key] = vals[key]
    return cols
