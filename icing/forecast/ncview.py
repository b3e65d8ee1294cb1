"""A CF-NetCDF file's metadata through netCDF4 alone, for the variable discovery.

The discovery (:mod:`icing.forecast.build`, :mod:`~icing.forecast.discovery`,
:mod:`~icing.forecast.coords`) reads a file through the parts of an xarray Dataset it
needs: variables with their dimensions, attributes and decoded values, the
coordinates, the dimension sizes, the global attributes. Opening a file with xarray
costs a one-route ``icing screen`` about 0.4 s of imports (xarray, pandas, and dask and
pint whenever they are installed: xarray imports them to recognise their arrays), so
:func:`nc_view` gives the same view from the netCDF4 handle the blocks are read
through, decoded as xarray decodes (``mask_and_scale``, ``decode_times``,
``decode_timedelta``, ``decode_coords``):

- ``_FillValue`` and ``missing_value`` become NaN (integers promoted to float32 up to
  two bytes, float64 above), and leave the attributes;
- ``units`` "<unit> since <date>" on the standard calendar become datetime64 values
  (``units`` and ``calendar`` leave the attributes);
- a dimension's own variable and the variables named by ``coordinates`` attributes
  are coordinates (the attribute leaves);
- the chunk sizes are in ``encoding["chunksizes"]``, and ``least_significant_digit``
  leaves the attributes.

Only files those rules describe exactly are viewed so: packed values
(``scale_factor``, ``add_offset``, ``_Unsigned``), strings and characters,
user-defined types, time spans (``units`` "hours" without "since"), other calendars,
reference dates other than ISO in UTC, fractional or missing times, and dangling or
global ``coordinates`` attributes make :func:`nc_view` return None, and the reader
opens the file with xarray as before. ``tests/test_forecast_readers.py`` holds the
two views equal on every NetCDF file of the repository.
"""

from __future__ import annotations

import re

import numpy as np

__all__ = ["NcView", "NcVariable", "nc_view", "read_raw"]

#: nanoseconds per CF time unit (singular or plural, as xarray reads them)
_NS = {
    "day": 86_400_000_000_000,
    "hour": 3_600_000_000_000,
    "minute": 60_000_000_000,
    "second": 1_000_000_000,
    "millisecond": 1_000_000,
    "microsecond": 1_000,
    "nanosecond": 1,
}
_STANDARD_CALENDARS = ("standard", "gregorian", "proleptic_gregorian")
_REFERENCE = re.compile(
    r"^(\d{4})-(\d{1,2})-(\d{1,2})"
    r"(?:[ T](\d{1,2}):(\d{1,2})(?::(\d{1,2})(?:\.(\d{1,9}))?)?)?"
    r"\s*(?:Z|UTC|GMT|[+]00:?00)?$"
)
#: attributes xarray's decoding moves out of ``attrs``
_MASK_ATTRS = ("_FillValue", "missing_value")
_ENCODING_ATTRS = ("least_significant_digit",)


def read_raw(var, key):
    """Read ``var[key]`` as stored, undecoded (the caller holds the file's lock).

    The handle decodes (masks and scales) by default; it is turned off for the read
    and back on after it.
    """
    var.set_auto_maskandscale(False)
    try:
        return np.asarray(var[key])
    finally:
        var.set_auto_maskandscale(True)


class _Unsupported(Exception):
    """The file needs xarray's decoding (see the module docstring)."""


def _time_unit(units):
    """Return (ns per unit, reference datetime64[ns]) of CF "<unit> since <date>"; None else."""
    unit, sep, ref = str(units).strip().partition(" since ")
    if not sep:
        return None
    unit = unit.strip().lower()
    unit = unit[:-1] if unit.endswith("s") else unit
    m = _REFERENCE.match(ref.strip())
    if unit not in _NS or m is None:
        raise _Unsupported(f"time units {units!r}")
    y, mo, d, hh, mi, ss, frac = m.groups()
    stamp = f"{int(y):04d}-{int(mo):02d}-{int(d):02d}T{int(hh or 0):02d}:{int(mi or 0):02d}"
    stamp += f":{int(ss or 0):02d}.{(frac or '0').ljust(9, '0')}"
    return _NS[unit], np.datetime64(stamp, "ns")


def _is_time_span(units):
    """Units xarray decodes into timedeltas (``decode_timedelta=True``)."""
    u = str(units).strip().lower()
    return (u[:-1] if u.endswith("s") else u) in _NS


class NcVariable:
    """One variable of an :class:`NcView`: dimensions, attributes, decoded values."""

    def __init__(self, var, dims, attrs, *, fills, time, encoding, lock):
        self.name = var.name
        self.dims = dims
        self.attrs = attrs
        self.encoding = encoding
        self.shape = tuple(int(n) for n in var.shape)
        self.ndim = len(self.shape)
        self.size = int(np.prod(self.shape, dtype=np.int64))
        self._var, self._fills, self._time, self._lock = var, fills, time, lock
        raw = np.dtype(var.dtype)
        if time is not None:
            self.dtype = np.dtype("datetime64[ns]")
        elif fills is not None and raw.kind in "iu":
            self.dtype = np.dtype(np.float32 if raw.itemsize <= 2 else np.float64)
        else:
            self.dtype = raw

    @property
    def variable(self):
        """The variable itself (as xarray's ``DataArray.variable``)."""
        return self

    @property
    def values(self):
        """All values, decoded."""
        return self._read(())

    def isel(self, index):
        """Select by per-dimension integer or slice indices (read when asked)."""
        return _Selection(self, dict(index))

    def _read(self, key):
        """Read ``key`` (a tuple over ``dims``) raw and decode it as xarray does."""
        with self._lock:
            a = read_raw(self._var, key if key else Ellipsis)
        if self._time is not None:
            return self._decode_time(a)
        if self._fills is None:
            return a
        missing = np.isin(a, self._fills)
        a = a.astype(self.dtype)  # integers promoted as xarray promotes them
        a[missing] = np.nan
        return a

    def _decode_time(self, a):
        ns_per, ref = self._time
        if self._fills is not None and np.isin(a, self._fills).any():
            raise _Unsupported("missing times")
        ns = np.asarray(a, dtype=np.float64) * ns_per
        if not np.all(np.isfinite(ns)) or np.any(ns != np.round(ns)) or np.any(np.abs(ns) > 9e18):
            raise _Unsupported("fractional or out-of-range times")
        return ref + ns.astype(np.int64).astype("timedelta64[ns]")


class _Selection:
    """``NcVariable.isel(...)``: dimensions kept and a read in any axis order."""

    def __init__(self, var, index):
        self._var, self._index = var, index
        self.dims = tuple(d for d in var.dims if not isinstance(index.get(d), (int, np.integer)))
        self._order = self.dims

    def transpose(self, *dims):
        """Return the same selection, read with its axes in ``dims`` order."""
        out = _Selection(self._var, self._index)
        out._order = tuple(dims)
        return out

    @property
    def values(self):
        """The selected values, decoded, axes in the transposed order."""
        key = tuple(self._index.get(d, slice(None)) for d in self._var.dims)
        a = self._var._read(key)
        return np.transpose(a, [self.dims.index(d) for d in self._order])


class NcView:
    """The parts of an xarray Dataset that the discovery reads (see the module docstring)."""

    def __init__(self, variables, coord_names, attrs):
        self.variables = variables
        self.coords = {n: v for n, v in variables.items() if n in coord_names}
        self.data_vars = {n: v for n, v in variables.items() if n not in coord_names}
        self.attrs = attrs
        sizes = {}
        for v in variables.values():
            for d, n in zip(v.dims, v.shape, strict=True):
                sizes.setdefault(d, n)
        self.sizes = sizes
        self.dims = dict(sizes)

    def __getitem__(self, name):
        return self.variables[name]

    def __contains__(self, name):
        return name in self.variables

    def get(self, name, default=None):
        """Return the variable ``name``, or ``default``."""
        return self.variables.get(name, default)

    def close(self):
        """Nothing to close: the netCDF4 handle belongs to the reader."""


def _variable(var, lock, coord_names):
    """Return an :class:`NcVariable`, or raise :class:`_Unsupported`."""
    if not isinstance(var.datatype, np.dtype) or var.datatype.kind not in "iuf":
        raise _Unsupported(f"type of {var.name}")  # strings, characters, user-defined types
    dtype = var.datatype
    attrs = {k: var.getncattr(k) for k in var.ncattrs()}
    if any(k in attrs for k in ("scale_factor", "add_offset", "_Unsigned")):
        raise _Unsupported(f"packed {var.name}")
    for k in _ENCODING_ATTRS:
        attrs.pop(k, None)
    fills = [np.asarray(attrs.pop(k)).ravel() for k in _MASK_ATTRS if k in attrs]
    fills = np.concatenate(fills).astype(dtype) if fills else None
    time = None
    if "units" in attrs:
        if _is_time_span(attrs["units"]):
            raise _Unsupported(f"time span {var.name}")
        time = _time_unit(attrs["units"])
    if time is not None:
        calendar = str(attrs.get("calendar", "standard")).strip().lower()
        if calendar not in _STANDARD_CALENDARS:
            raise _Unsupported(f"calendar {calendar}")
        attrs.pop("units")
        attrs.pop("calendar", None)
    if "coordinates" in attrs:
        coord_names.update(str(attrs.pop("coordinates")).split())
    chunking = var.chunking()
    encoding = {}
    if chunking is not None:
        contiguous = chunking == "contiguous"
        encoding = {
            "contiguous": contiguous,
            "chunksizes": None if contiguous else tuple(chunking),
        }
    return NcVariable(
        var, tuple(var.dimensions), attrs, fills=fills, time=time, encoding=encoding, lock=lock
    )


def nc_view(nc, lock):
    """Return an :class:`NcView` of an open netCDF4 Dataset, or None (xarray needed).

    ``lock`` guards every read (the HDF5 library is not thread-safe).
    """
    try:
        if "coordinates" in nc.ncattrs():
            raise _Unsupported("global coordinates attribute")
        coord_names, variables = set(), {}
        for name, var in nc.variables.items():
            variables[name] = _variable(var, lock, coord_names)
        if not coord_names <= set(variables):
            raise _Unsupported("a coordinates attribute names a missing variable")
        for name, v in variables.items():
            if name in v.dims:
                if v.dims != (name,):
                    raise _Unsupported(f"{name} is a dimension and a multi-dimensional variable")
                coord_names.add(name)
        attrs = {k: nc.getncattr(k) for k in nc.ncattrs()}
        return NcView(variables, coord_names, attrs)
    except _Unsupported:
        return None
