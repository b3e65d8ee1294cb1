"""A synthetic continental winter forecast for the grid benchmark (invented, our own case).

``make_winter_file(path, nx, ny)`` writes a CF-NetCDF file on a Lambert conformal grid
of nx x ny columns over an invented continent ("the Varn Plains", 5,400 x 3,200 km, placed
over the open North Pacific so that no real coast is implied
at any resolution), 40 pressure levels 1000-300 hPa, one valid time, float32:

- a north-south mountain chain (to 2,500 m) and a plateau, so that low bands are
  under the ground in places;
- cold air to the north, a warm front whose warm nose (+6 C near 800 hPa) rides over
  a sub-freezing surface layer (freezing rain), with ascent, rain and snow;
- a frontal cloud shield (saturated 900-450 hPa, supercooled liquid below -15 C ice),
  a supercooled stratocumulus deck, and upslope cloud west of the mountains;
- dry air elsewhere.

Written block by block (memory stays small); every value is invented, for speed and
memory measurements only, never a check value.

    python benchmarks/grid_data.py OUT.nc NX NY
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import numpy as np

__all__ = ["make_winter_file", "LEVELS_HPA", "EXTENT_M"]

LEVELS_HPA = np.linspace(1000.0, 300.0, 40)
EXTENT_M = (5.4e6, 3.2e6)
_RD, _G = 287.05, 9.80665
_VARS = {  # name: (standard_name, units)
    "t": ("air_temperature", "K"),
    "r": ("relative_humidity", "%"),
    "gh": ("geopotential_height", "m"),
    "clwc": ("mass_fraction_of_cloud_liquid_water_in_air", "kg kg-1"),
    "ciwc": ("mass_fraction_of_cloud_ice_in_air", "kg kg-1"),
    "crwc": ("mass_fraction_of_rain_in_air", "kg kg-1"),
    "cswc": ("mass_fraction_of_snow_in_air", "kg kg-1"),
    "w": ("lagrangian_tendency_of_air_pressure", "Pa s-1"),
}


def _surface(u, v):
    """Surface height [m] of the invented continent at normalised positions u, v (0..1)."""
    ridge = 2500.0 * np.exp(-(((u - 0.3) / 0.04) ** 2)) * (0.6 + 0.4 * np.sin(8.0 * np.pi * v))
    plateau = 900.0 * np.exp(-((u - 0.75) ** 2 + (v - 0.65) ** 2) / 0.01)
    return np.maximum(ridge + plateau, 0.0)


def _columns(u, v):
    """All variables of the columns at u, v (1-D), shaped (n, level)."""
    p = LEVELS_HPA[None, :] * 100.0
    zs = _surface(u, v)[:, None]
    z_std = 44330.8 * (1.0 - (p / 101325.0) ** 0.190263)
    front = 0.45 + 0.12 * np.sin(2.6 * np.pi * u)[:, None]
    d = v[:, None] - front  # north of the front: d > 0
    t_sfc = 286.0 - 34.0 * v[:, None] + 3.0 * np.sin(2.0 * np.pi * u)[:, None]
    t = np.maximum(t_sfc - 0.0065 * z_std, 216.0)
    nose = 7.0 * np.exp(-(((d - 0.05) / 0.05) ** 2)) * np.exp(-(((p - 80000.0) / 7000.0) ** 2))
    t = t + nose
    shield = (d > -0.02) & (d < 0.2) & (p <= 90000.0) & (p >= 45000.0)
    deck = ((u[:, None] - 0.62) ** 2 + (v[:, None] - 0.22) ** 2 < 0.02) & (p >= 85000.0)
    deck &= p <= 93000.0
    height_agl = z_std - zs
    upslope = (u[:, None] > 0.22) & (u[:, None] < 0.3) & (height_agl < 1500.0) & (height_agl > 0)
    cloud = shield | deck | upslope
    rh = np.where(cloud, 1.0, 0.45 + 0.25 * np.sin(3.0 * np.pi * u[:, None] * v[:, None]))
    tc = t - 273.15
    liquid = np.where(cloud & (tc > -25.0), 2.5e-4 * np.clip((tc + 25.0) / 20.0, 0.0, 1.0), 0.0)
    ice = np.where(shield & (tc < -12.0), 1.2e-4, 0.0)
    falling = (d > -0.02) & (d < 0.15)
    rain = np.where(falling & (p >= 75000.0) & (tc > -8.0), 1.5e-4, 0.0)
    snow = np.where(falling & (p < 75000.0), 1.0e-4, 0.0)
    omega = np.where(shield, -0.6, 0.05)
    gh = np.empty_like(t)
    gh[:, 0] = 110.0 + 0.0 * zs[:, 0]
    for k in range(1, p.shape[1]):  # hypsometric, layer by layer
        tm = 0.5 * (t[:, k - 1] + t[:, k])
        gh[:, k] = gh[:, k - 1] + _RD * tm / _G * np.log(p[0, k - 1] / p[0, k])
    ps = 101325.0 * (1.0 - 2.25577e-5 * zs[:, 0]) ** 5.25588
    prate = np.where(falling[:, 0], 2.0, 0.0) / 3600.0
    return {
        "t": t,
        "r": 100.0 * rh,
        "gh": gh,
        "clwc": liquid,
        "ciwc": ice,
        "crwc": rain,
        "cswc": snow,
        "w": omega,
        "sp": ps,
        "prate": prate,
        "orog": zs[:, 0],
    }


def _coords(nc, nx, ny):
    x = np.linspace(-EXTENT_M[0] / 2, EXTENT_M[0] / 2, nx)
    y = np.linspace(-EXTENT_M[1] / 2, EXTENT_M[1] / 2, ny)
    for name, size in (("time", 1), ("pressure", LEVELS_HPA.size), ("y", ny), ("x", nx)):
        nc.createDimension(name, size)
    v = nc.createVariable("time", "f8", ("time",))
    v.units, v.standard_name = "hours since 2031-02-03 00:00:00", "time"
    v[:] = [12.0]
    v = nc.createVariable("pressure", "f8", ("pressure",))
    v.units, v.standard_name, v.positive = "hPa", "air_pressure", "down"
    v[:] = LEVELS_HPA
    for name, values in (("x", x), ("y", y)):
        v = nc.createVariable(name, "f8", (name,))
        v.units, v.standard_name = "m", f"projection_{name}_coordinate"
        v[:] = values
    gm = nc.createVariable("lambert", "i4", ())
    gm.grid_mapping_name = "lambert_conformal_conic"
    gm.standard_parallel = [42.0, 42.0]
    gm.longitude_of_central_meridian = -150.0
    gm.latitude_of_projection_origin = 42.0
    gm.earth_radius = 6371229.0
    return x, y


def make_winter_file(path, nx, ny, *, rows_per_block=48):
    """Write the synthetic winter forecast (see the module docstring); return its path."""
    import netCDF4

    nx, ny = int(nx), int(ny)
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        with netCDF4.Dataset(tmp, "w", format="NETCDF4") as nc:
            nc.Conventions = "CF-1.8"
            nc.title = "Varn Plains synthetic winter case (invented, for benchmarks only)"
            _coords(nc, nx, ny)
            out = {}
            dims4 = ("time", "pressure", "y", "x")
            for name, (std, units) in _VARS.items():
                out[name] = nc.createVariable(name, "f4", dims4, chunksizes=(1, 40, 16, nx))
                out[name].standard_name, out[name].units = std, units
                out[name].grid_mapping = "lambert"
            for name, std, units, dims in (
                ("sp", "surface_air_pressure", "Pa", ("time", "y", "x")),
                ("prate", "precipitation_flux", "kg m-2 s-1", ("time", "y", "x")),
                ("orog", "surface_altitude", "m", ("y", "x")),
            ):
                out[name] = nc.createVariable(name, "f4", dims)
                out[name].standard_name, out[name].units = std, units
                out[name].grid_mapping = "lambert"
            uu = np.linspace(0.0, 1.0, nx)
            for r0 in range(0, ny, rows_per_block):
                r1 = min(r0 + rows_per_block, ny)
                vv = np.linspace(0.0, 1.0, ny)[r0:r1]
                u2, v2 = np.meshgrid(uu, vv)
                cols = _columns(u2.ravel(), v2.ravel())
                for name in _VARS:
                    a = cols[name].reshape(r1 - r0, nx, -1)
                    out[name][0, :, r0:r1, :] = np.moveaxis(a, -1, 0).astype(np.float32)
                out["sp"][0, r0:r1, :] = cols["sp"].reshape(r1 - r0, nx)
                out["prate"][0, r0:r1, :] = cols["prate"].reshape(r1 - r0, nx)
                out["orog"][r0:r1, :] = cols["orog"].reshape(r1 - r0, nx)
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)
    return path


if __name__ == "__main__":
    args = sys.argv[1:]
    if len(args) != 3:
        raise SystemExit(__doc__)
    p = make_winter_file(args[0], int(args[1]), int(args[2]))
    print(f"{p}  {p.stat().st_size / 1e6:.1f} MB")
