"""Lazy readers of the internal forecast variables: blocks in SI, read on demand.

A :class:`Field` is one variable of the internal forecast structure. It reads a
block ``([time,] [level,] y, x)`` in SI units, float64, on the forecast's common
level axis, only when asked: gridded files are never loaded whole. Fields are
built by the readers at the file's edge and never change afterwards:

- :class:`FileField`: a variable of the file with its unit conversion
  (``si = raw * scale + offset``), its dimensions mapped to (time, level, y, x);
- :class:`LevelRegridField`: a field on its own level set brought to the
  forecast's levels (linear in log-pressure or in height; missing outside its
  own levels, never invented);
- :class:`DerivedField`: a quantity computed point by point from other fields
  (humidity conventions, earth-relative winds, mixing ratios, WRF temperature).

Raw reads go through a :class:`RawVariable` (netCDF4 directly when the file
allows it, xarray otherwise; the GRIB reader has its own); each file's reads
are serialised by that file's lock (netCDF4 and ecCodes handles are not safe
to share between threads).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, replace

import numpy as np

from icing.forecast.ncview import read_raw

__all__ = [
    "Field",
    "FileField",
    "LevelRegridField",
    "DerivedField",
    "RawVariable",
    "NetcdfVariable",
    "read_netcdf4",
    "plain_fill_values",
    "lazy_raw_array",
    "at_member",
    "read_members",
]


class RawVariable:
    """A variable of a file, read by a dict of per-dimension indices.

    Subclasses set ``dims`` and implement :meth:`read`: integer indices drop
    their dimension; the result's axes follow ``order``.
    """

    dims: tuple = ()

    def read(self, index: dict, order: list) -> np.ndarray:  # pragma: no cover
        """Return the values at ``index`` as float64 with axes in ``order`` (NaN = missing)."""
        raise NotImplementedError

    def read_scaled(self, index: dict, order: list, scale: float, offset: float) -> np.ndarray:
        """Return ``read(index, order) * scale + offset`` (the same values)."""
        return self.read(index, order) * scale + offset


#: Attributes that make netCDF4 decode more than "these values are missing".
_DECODED_ATTRS = frozenset(
    ("scale_factor", "add_offset", "valid_min", "valid_max", "valid_range", "_Unsigned")
)


def plain_fill_values(var):
    """Return the values netCDF4 masks in a plain float variable (None if it decodes more).

    A float variable without packing (``scale_factor``, ``add_offset``, ``_Unsigned``)
    or valid-range attributes is masked by netCDF4 where it equals ``_FillValue`` (the
    library's default fill value for its type when the attribute is absent) or one of
    ``missing_value``. Such a variable can be read raw and masked by those values
    alone, which costs a third of netCDF4's masked read (measured on a 144,000-value
    float32 block: 0.19 ms against 0.5-1.0 ms). Returned in the variable's own dtype,
    so that the comparison is exact.
    """
    import netCDF4  # present wherever nc_var is: the handle came from it

    dtype = np.dtype(var.dtype)
    attrs = set(var.ncattrs())
    if dtype.kind != "f" or attrs & _DECODED_ATTRS:
        return None
    if "_FillValue" in attrs:
        fills = [var.getncattr("_FillValue")]
    else:
        fills = [netCDF4.default_fillvals[dtype.str[1:]]]
    if "missing_value" in attrs:
        fills += list(np.ravel(var.getncattr("missing_value")))
    return np.asarray(fills, dtype=dtype)


def read_netcdf4(var, idx, fills=None):
    """Read a netCDF4 variable with an xarray-style index dict; NaN where masked.

    Dimensions indexed by an integer are dropped (as ``isel`` does); an index
    array (a wrapped longitude window) is read sorted and put back in order.
    ``fills``: :func:`plain_fill_values` of the variable, to read it raw and mask
    those values (the same result as netCDF4's decoding, faster); None decodes
    through netCDF4.
    """
    key, keep, reorder = [], [], None
    for axis, d in enumerate(var.dimensions):
        i = idx.get(d, slice(None))
        if isinstance(i, np.ndarray):
            order = np.argsort(i, kind="stable")
            key.append(i[order])
            reorder = (len(keep), np.argsort(order))
            keep.append(axis)
        else:
            key.append(i)
            if not isinstance(i, (int, np.integer)):
                keep.append(axis)
    if fills is None:
        a = var[tuple(key)]
        a = np.ma.filled(np.ma.asarray(a).astype(float), np.nan)
    else:
        raw = read_raw(var, tuple(key))
        a = raw.astype(float)
        missing = raw == fills[0]
        for value in fills[1:]:
            missing |= raw == value
        if missing.any():  # usually none: no masked assignment
            a[missing] = np.nan
    if reorder is not None:
        a = np.take(a, reorder[1], axis=reorder[0])
    return a


@dataclass(frozen=True, eq=False)
class NetcdfVariable(RawVariable):
    """A NetCDF variable: read through netCDF4 directly when possible, else xarray.

    xarray's lazy indexing costs about 0.5 ms a read; reading the same block
    through netCDF4 directly costs a quarter of that.
    """

    name: str
    """The variable's name in the file."""
    xr_var: object
    """The lazily opened xarray variable (metadata, and the fallback read)."""
    nc_var: object | None
    """The netCDF4 variable (masked and scaled), or None (h5netcdf-only files)."""
    lock: object = field(repr=False)
    """The lock every NetCDF read takes (the HDF5 library is not thread-safe)."""
    handle: object = field(default=None, repr=False)
    """The open netCDF4 file, kept open while a reader of it lives."""

    @functools.cached_property
    def _fills(self):
        """:func:`plain_fill_values` of ``nc_var``, looked up once."""
        with self.lock:
            return plain_fill_values(self.nc_var)

    @property
    def dims(self):
        """The variable's dimension names."""
        return tuple(self.xr_var.dims)

    def read(self, index, order):
        """Read ``index`` with axes in ``order``; float64, NaN where masked."""
        with self.lock:
            if self._direct:
                return self._read_direct(index, order)
            sub = self.xr_var.isel({d: i for d, i in index.items() if d in self.dims})
            return np.asarray(sub.transpose(*order).values, dtype=float)

    def read_scaled(self, index, order, scale, offset):
        """Return ``read(index, order) * scale + offset``.

        Read through netCDF4, the values are new and ours: they are scaled in place (the
        same operations in the same order, without two new arrays).
        """
        if not self._direct:
            return self.read(index, order) * scale + offset
        with self.lock:
            vals = self._read_direct(index, order)
        np.multiply(vals, scale, out=vals)
        np.add(vals, offset, out=vals)
        return vals

    @functools.cached_property
    def _direct(self):
        """Read through netCDF4 (not xarray)."""
        return self.nc_var is not None and tuple(self.nc_var.dimensions) == self.dims

    def _read_direct(self, index, order):
        vals = read_netcdf4(self.nc_var, index, self._fills)  # a new array, ours
        kept = [d for d in self.dims if not isinstance(index.get(d), (int, np.integer))]
        return np.transpose(vals, [kept.index(d) for d in order])


class Field:
    """One variable of the internal forecast structure, read lazily in SI.

    ``timed``: the block has a leading time axis; ``levelled``: it has a level
    axis (before y, x). ``read(times, ys, xs)`` takes a slice of valid-time
    indices (ignored when not timed) and slices (or an index array for x) of
    the grid.
    """

    timed: bool
    levelled: bool
    label: str

    def read(self, times, ys, xs) -> np.ndarray:  # pragma: no cover
        """Return the block ([time,] [level,] y, x) in SI, float64."""
        raise NotImplementedError


@dataclass(frozen=True, eq=False)
class FileField(Field):
    """A variable of the file, converted to SI, its dimensions mapped to (time, level, y, x)."""

    raw: RawVariable
    """The file's variable."""
    y_dim: str
    """Its y (latitude) dimension."""
    x_dim: str
    """Its x (longitude) dimension."""
    time_dim: str | None = None
    """Its valid-time dimension, None when static (orography) or single-time."""
    level_dim: str | None = None
    """Its vertical dimension, None for surface fields."""
    fixed: tuple = ()
    """``(dimension, index)`` pairs of other dimensions held fixed (size-1 member...)."""
    scale: float = 1.0
    """SI = raw * scale + offset."""
    offset: float = 0.0
    """SI = raw * scale + offset."""
    label: str = ""
    """A name for messages and cache keys."""
    steps: tuple | None = None
    """(reference time, step) files: ``(step dimension, ((time index, step index), ...))``,
    one pair per valid time."""

    @property
    def timed(self):
        """The block has a time axis."""
        return self.time_dim is not None

    @property
    def levelled(self):
        """The block has a level axis."""
        return self.level_dim is not None

    def read(self, times, ys, xs):
        """Read the block; see :class:`Field`."""
        if self.steps is not None:
            step_dim, pairs = self.steps
            fixed = dict(self.fixed)
            blocks = []
            for ti, si in pairs[times]:
                one = replace(
                    self,
                    steps=None,
                    time_dim=None,
                    fixed=tuple({**fixed, self.time_dim: ti, step_dim: si}.items()),
                )
                blocks.append(one.read(None, ys, xs))
            return np.stack(blocks)
        idx = {self.y_dim: ys, self.x_dim: xs, **dict(self.fixed)}
        if self.timed:
            idx[self.time_dim] = times
        for d in self.raw.dims:
            if d not in idx and d != self.level_dim:
                idx[d] = 0
        order = [
            d for d in (self.time_dim, self.level_dim, self.y_dim, self.x_dim) if d is not None
        ]
        return self.raw.read_scaled(idx, order, self.scale, self.offset)


@dataclass(frozen=True, eq=False)
class LevelRegridField(Field):
    """A field on its own levels brought to the forecast's levels (NaN outside its own)."""

    source: Field
    """The field on its own levels."""
    weights: tuple
    """:func:`icing.forecast.interp.level_weights` from its levels to the forecast's."""
    label: str = ""
    """A name for messages and cache keys."""

    @property
    def timed(self):
        """The block has a time axis."""
        return self.source.timed

    @property
    def levelled(self):
        """The block has a level axis."""
        return True

    def read(self, times, ys, xs):
        """Read the source block and interpolate it along the level axis."""
        from icing.forecast.interp import apply_level_weights

        vals = self.source.read(times, ys, xs)
        return apply_level_weights(vals, self.weights, axis=1 if self.timed else 0)


@dataclass(frozen=True, eq=False)
class DerivedField(Field):
    """A quantity computed point by point from other fields.

    ``func(*blocks, ys=..., xs=...)`` receives the input blocks (static inputs
    broadcast against timed ones) and the window, and returns the block.
    """

    func: object
    """The computation."""
    inputs: tuple
    """The fields it reads, in the order ``func`` takes them."""
    levelled: bool = True
    """The result has a level axis."""
    label: str = ""
    """A name for messages and cache keys."""

    @property
    def timed(self):
        """The block has a time axis when any input has one."""
        return any(f.timed for f in self.inputs)

    def read(self, times, ys, xs):
        """Read the inputs and compute the block."""
        blocks = [f.read(times, ys, xs) for f in self.inputs]
        if self.timed:
            nt = next(b.shape[0] for b, f in zip(blocks, self.inputs, strict=True) if f.timed)
            blocks = [
                b if f.timed else np.broadcast_to(b, (nt,) + b.shape)
                for b, f in zip(blocks, self.inputs, strict=True)
            ]
        return self.func(*blocks, ys=ys, xs=xs)


def at_member(fld: Field, dim: str, index: int) -> Field:
    """Return the same field read at another index of a member dimension.

    Every file variable behind the field (through level regridding and derived
    quantities) that has ``dim`` is held at ``index`` instead; variables without
    it (orography, a static field) are shared by every member.
    """
    if isinstance(fld, FileField):
        if dim not in fld.raw.dims:
            return fld
        return replace(fld, fixed=tuple({**dict(fld.fixed), dim: int(index)}.items()))
    if isinstance(fld, LevelRegridField):
        return replace(fld, source=at_member(fld.source, dim, index))
    if isinstance(fld, DerivedField):
        return replace(fld, inputs=tuple(at_member(f, dim, index) for f in fld.inputs))
    raise TypeError(f"cannot move a {type(fld).__name__} to another member")


def read_members(fld: Field, dim: str, count: int, times, ys, xs) -> np.ndarray:
    """Read a block of every member at once: ``(member, [time,] [level,] y, x)``.

    One read of each file variable across the member dimension ``dim`` (``count``
    members) instead of one read per member; variables without the dimension are
    shared by every member. The conversions of derived fields broadcast over the
    leading member axis.
    """
    if isinstance(fld, FileField):
        if dim not in fld.raw.dims:
            block = fld.read(times, ys, xs)
            return np.broadcast_to(block, (count,) + block.shape)
        return _file_members(fld, dim, times, ys, xs)
    if isinstance(fld, LevelRegridField):
        from icing.forecast.interp import apply_level_weights

        vals = read_members(fld.source, dim, count, times, ys, xs)
        return apply_level_weights(vals, fld.weights, axis=2 if fld.timed else 1)
    if isinstance(fld, DerivedField):
        blocks = [read_members(f, dim, count, times, ys, xs) for f in fld.inputs]
        if fld.timed:
            nt = next(b.shape[1] for b, f in zip(blocks, fld.inputs, strict=True) if f.timed)
            blocks = [
                b if f.timed else np.broadcast_to(b[:, None], (count, nt) + b.shape[1:])
                for b, f in zip(blocks, fld.inputs, strict=True)
            ]
        return fld.func(*blocks, ys=ys, xs=xs)
    return np.stack([at_member(fld, dim, i).read(times, ys, xs) for i in range(count)])


def _file_members(fld, dim, times, ys, xs):
    """Read a file variable's block across the member dimension (leading axis)."""
    fixed = {d: i for d, i in fld.fixed if d != dim}
    if fld.steps is not None:
        step_dim, pairs = fld.steps
        blocks = []
        for ti, si in pairs[times]:
            at = tuple({**fixed, fld.time_dim: ti, step_dim: si}.items())
            one = replace(fld, steps=None, time_dim=None, fixed=at)
            blocks.append(_file_members(one, dim, None, ys, xs))
        return np.stack(blocks, axis=1)
    idx = {fld.y_dim: ys, fld.x_dim: xs, **fixed, dim: slice(None)}
    if fld.timed:
        idx[fld.time_dim] = times
    for d in fld.raw.dims:
        if d not in idx and d != fld.level_dim:
            idx[d] = 0
    order = [dim] + [
        d for d in (fld.time_dim, fld.level_dim, fld.y_dim, fld.x_dim) if d is not None
    ]
    return fld.raw.read(idx, order) * fld.scale + fld.offset


def lazy_raw_array(raw: RawVariable, shape):
    """Wrap a :class:`RawVariable` as a lazy xarray array (outer indexing, read on demand)."""
    from xarray.backends import BackendArray
    from xarray.core import indexing

    class RawArray(BackendArray):
        def __init__(self):
            self.shape = tuple(shape)
            self.dtype = np.dtype(float)

        def __getitem__(self, key):
            return indexing.explicit_indexing_adapter(
                key, self.shape, indexing.IndexingSupport.OUTER, self._read
            )

        def _read(self, key):
            idx, drop = {}, []
            for axis, (d, k) in enumerate(zip(raw.dims, key, strict=True)):
                if isinstance(k, (int, np.integer)):
                    idx[d] = slice(int(k), int(k) + 1)
                    drop.append(axis)
                else:
                    idx[d] = k
            vals = raw.read(idx, list(raw.dims))
            return vals.reshape([n for a, n in enumerate(vals.shape) if a not in drop])

    return indexing.LazilyIndexedArray(RawArray())
