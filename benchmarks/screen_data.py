"""Large synthetic CF-NetCDF forecasts for the route benchmarks (Skerrow Basin scenario).

``make_grid_file(path, nx, ny, nlev, ntimes)`` writes a latitude-longitude file
over the invented Skerrow Basin (lat 53.5..60.5 N, lon 31..17 W) with the
analytic columns of ``fixtures/make_fixtures.py``: nx x ny points, nlev
pressure levels from 1000 to 300 hPa, ntimes valid times from
2027-01-14T06:00Z every 3 h. Written block by block (memory stays small),
chunked (1, nlev, 64, 64), uncompressed unless ``compress=True``.

    python benchmarks/screen_data.py OUT.nc NX NY NLEV NTIMES
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "fixtures"))
import make_fixtures as mf  # noqa: E402

__all__ = ["make_grid_file", "DOMAIN"]

DOMAIN = mf.DOMAIN
_LEVEL_VARS = {  # name: (column key, standard_name, units)
    "t": ("temperature", "air_temperature", "K"),
    "r": ("relative_humidity", "relative_humidity", "%"),
    "gh": ("height", "geopotential_height", "m"),
    "clwc": ("cloud_liquid", "mass_fraction_of_cloud_liquid_water_in_air", "kg kg-1"),
    "ciwc": ("cloud_ice", "mass_fraction_of_cloud_ice_in_air", "kg kg-1"),
    "crwc": ("rain", "mass_fraction_of_rain_in_air", "kg kg-1"),
    "cswc": ("snow", "mass_fraction_of_snow_in_air", "kg kg-1"),
    "w": ("omega", "lagrangian_tendency_of_air_pressure", "Pa s-1"),
    "u": ("wind_u", "eastward_wind", "m s-1"),
    "v": ("wind_v", "northward_wind", "m s-1"),
}
_SURFACE_VARS = {
    "sp": ("surface_pressure", "surface_air_pressure", "Pa"),
    "prate": ("precipitation_rate_mm_h", "precipitation_flux", "kg m-2 s-1"),
}


def make_grid_file(path, nx, ny, nlev, ntimes, *, compress=False, rows_per_block=32, domain=None):
    """Write a synthetic Skerrow Basin CF-NetCDF forecast of the given size.

    Parameters
    ----------
    path : path-like
        Output file (written to a temporary name, then renamed).
    nx, ny : int
        Longitude and latitude points over the domain (at least 2 each).
    nlev : int
        Pressure levels, evenly spaced from 1000 to 300 hPa (at least 2).
    ntimes : int
        Valid times from 2027-01-14T06:00Z every 3 hours (at least 1).
    compress : bool
        zlib level 1 with shuffle (smaller, slower to read).
    domain : tuple, optional
        (lat_min, lat_max, lon_min, lon_max) [deg] instead of the Skerrow domain,
        e.g. a larger box at the same spacing for a "larger file, same route"
        benchmark (outside the Skerrow boxes the columns are dry background).

    Returns
    -------
    pathlib.Path
    """
    import os

    import netCDF4

    nx, ny, nlev, ntimes = int(nx), int(ny), int(nlev), int(ntimes)
    if min(nx, ny, nlev) < 2 or ntimes < 1:
        raise ValueError("need nx, ny, nlev >= 2 and ntimes >= 1")
    lat0, lat1, lon0, lon1 = DOMAIN if domain is None else domain
    lats = np.linspace(lat1, lat0, ny)  # north to south, as many models write
    lons = np.linspace(lon0, lon1, nx)
    levels = np.linspace(1000.0, 300.0, nlev)
    hours = 6.0 + 3.0 * np.arange(ntimes)
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    chunks = (1, nlev, min(ny, 64), min(nx, 64))
    opts = {"zlib": True, "complevel": 1, "shuffle": True} if compress else {}
    try:
        with netCDF4.Dataset(tmp, "w", format="NETCDF4") as nc:
            nc.Conventions = "CF-1.8"
            nc.title = "Skerrow Basin synthetic benchmark forecast (invented)"
            for name, size in (
                ("time", ntimes),
                ("pressure", nlev),
                ("latitude", ny),
                ("longitude", nx),
            ):
                nc.createDimension(name, size)
            v = nc.createVariable("time", "f8", ("time",))
            v.units, v.standard_name = "hours since 2027-01-14 00:00:00", "time"
            v[:] = hours
            v = nc.createVariable("pressure", "f8", ("pressure",))
            v.units, v.standard_name, v.positive = "hPa", "air_pressure", "down"
            v[:] = levels
            v = nc.createVariable("latitude", "f8", ("latitude",))
            v.units, v.standard_name = "degrees_north", "latitude"
            v[:] = lats
            v = nc.createVariable("longitude", "f8", ("longitude",))
            v.units, v.standard_name = "degrees_east", "longitude"
            v[:] = lons
            out = {}
            for name, (_, std, units) in _LEVEL_VARS.items():
                out[name] = nc.createVariable(
                    name,
                    "f4",
                    ("time", "pressure", "latitude", "longitude"),
                    chunksizes=chunks,
                    **opts,
                )
                out[name].standard_name, out[name].units = std, units
            for name, (_, std, units) in _SURFACE_VARS.items():
                out[name] = nc.createVariable(
                    name,
                    "f4",
                    ("time", "latitude", "longitude"),
                    chunksizes=chunks[:1] + chunks[2:],
                    **opts,
                )
                out[name].standard_name, out[name].units = std, units
            v = nc.createVariable("orog", "f4", ("latitude", "longitude"))
            v.standard_name, v.units = "surface_altitude", "m"
            v[:] = np.zeros((ny, nx), np.float32)
            for it, h in enumerate(hours):
                time_index = (h - 6.0) / 6.0
                for r0 in range(0, ny, rows_per_block):
                    r1 = min(r0 + rows_per_block, ny)
                    lon2, lat2 = np.meshgrid(lons, lats[r0:r1])
                    cols = mf.skerrow_columns(
                        lat2.ravel(), lon2.ravel(), time_index, levels_hpa=levels
                    )
                    for name, (key, _, _) in _LEVEL_VARS.items():
                        a = cols[key].reshape(r1 - r0, nx, nlev)
                        out[name][it, :, r0:r1, :] = np.moveaxis(a, -1, 0).astype(np.float32)
                    out["sp"][it, r0:r1, :] = cols["surface_pressure"].reshape(r1 - r0, nx)
                    out["prate"][it, r0:r1, :] = (
                        cols["precipitation_rate_mm_h"] / 3600.0
                    ).reshape(r1 - r0, nx)
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)
    return path


if __name__ == "__main__":
    args = sys.argv[1:]
    if len(args) != 5:
        raise SystemExit(__doc__)
    p = make_grid_file(args[0], *map(int, args[1:]))
    print(f"{p}  {p.stat().st_size / 1e6:.1f} MB")
