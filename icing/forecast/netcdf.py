"""CF-NetCDF, data-service NetCDF and WRF output: open lazily, hand to the common build.

The file is opened with netCDF4 for fast block reads; its metadata are read
through the same handle (:func:`icing.forecast.ncview.nc_view`, decoded as xarray
decodes) or, for the files that need more of xarray's decoding and for the files
netCDF4 cannot open, through xarray (netCDF4, else h5netcdf). WRF output (recognised by its global
attributes and variables) goes through :mod:`icing.forecast.wrf`; everything else
straight to :func:`icing.forecast.build.build_grid_source`, which finds the
variables and yields the internal structure.
"""

from __future__ import annotations

import threading
from pathlib import Path

from icing.errors import ForecastError
from icing.forecast.build import build_grid_source
from icing.forecast.fields import NetcdfVariable
from icing.forecast.ncview import nc_view
from icing.forecast.wrf import is_wrf, read_wrf_forecast

__all__ = ["NETCDF_LOCK", "open_netcdf", "open_netcdf4", "read_netcdf_forecast"]

#: One lock for every NetCDF/HDF5 call of this package (open, read, close): the HDF5
#: library of the pip wheels is not built thread-safe, and two threads in it at once
#: (even on different files) can crash the process. Reentrant, so that a close run by
#: the garbage collector inside a read takes it again.
NETCDF_LOCK = threading.RLock()


class _Handle:
    """An open netCDF4 Dataset, closed under the lock when the last reader drops it."""

    def __init__(self, nc):
        self.nc = nc

    def __del__(self):
        with NETCDF_LOCK:
            try:
                self.nc.close()
            except Exception:  # already closed, or the library is shutting down
                pass


def open_netcdf(path):
    """Open a NetCDF file lazily with xarray (netCDF4, then h5netcdf); one-line error."""
    import xarray as xr

    errors = []
    for engine in ("netcdf4", "h5netcdf"):
        try:
            return xr.open_dataset(path, engine=engine, cache=False, decode_timedelta=True)
        except Exception as exc:  # the engines raise many kinds; report the first one
            errors.append(f"{engine}: {str(exc).splitlines()[0] if str(exc) else type(exc)}")
    raise ForecastError(
        f"not a readable NetCDF file ({errors[0]})",
        path=path,
        fix="give a CF-NetCDF file (netCDF4/HDF5 or classic), a profile JSON or a profile CSV",
    )


def open_netcdf4(path):
    """Open the file with netCDF4 for direct block reads, or None when it cannot be."""
    try:
        import netCDF4

        nc = netCDF4.Dataset(path)
    except Exception:  # h5netcdf-only files: reads go through xarray
        return None
    nc.set_auto_maskandscale(True)
    return nc


def raw_variables(ds, nc):
    """Return ``raw_of(name)``: the file's variables as raw readers under one lock."""
    handle = None if nc is None else _Handle(nc)
    cache = {}

    def raw_of(name):
        if name not in cache:
            nc_var = None if nc is None else nc.variables.get(name)
            cache[name] = NetcdfVariable(name, ds[name].variable, nc_var, NETCDF_LOCK, handle)
        return cache[name]

    return raw_of


def read_netcdf_forecast(path, *, var_map=None, member=None, rh_convention=None):
    """Read a CF-NetCDF (or data-service NetCDF) forecast into a GridSource.

    The discovery reads the netCDF4 view of the file where it serves (no xarray
    import: a one-route screening starts 0.4 s sooner), else the xarray view, which
    is closed afterwards when netCDF4 can read the file (reads go through netCDF4,
    under :data:`NETCDF_LOCK`). WRF output always goes through xarray.
    """
    path = Path(path)
    with NETCDF_LOCK:
        nc = open_netcdf4(path)
        ds = None if nc is None else nc_view(nc, NETCDF_LOCK)
        if ds is None or is_wrf(ds):
            ds = open_netcdf(path)
        raw_of = raw_variables(ds, nc)
        try:
            if is_wrf(ds):
                return read_wrf_forecast(
                    ds, path, raw_of, var_map=var_map, rh_convention=rh_convention
                )
            return build_grid_source(
                ds, path, raw_of, var_map=var_map, rh_convention=rh_convention, member=member
            )
        finally:
            if nc is not None:
                ds.close()
