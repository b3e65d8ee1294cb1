"""Whole columns of a gridded forecast, block by block, straight from the file.

A grid run does not interpolate: every grid column is a column. The grid is cut
into blocks of rows (or of one row's columns, on very wide grids) small enough for
the column physics to hold in memory at once (:func:`plan_blocks`);
:func:`read_block_columns` reads each field on a block from the file
(:meth:`icing.forecast.grid.GridForecast.read_block`), lays it out as columns
``(m, level)`` with ``m = rows x columns`` (levels surface first, SI) and assembles
them exactly as a route's columns are assembled
(:func:`icing.forecast.assemble.assemble_columns`: humidity clipped, heights,
omega to w, the ground). Cell centres are given in longitude and latitude for the
outputs (:func:`cell_lonlat`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.forecast.assemble import assemble_columns

__all__ = [
    "Block",
    "BlockColumns",
    "plan_blocks",
    "read_block_columns",
    "read_member_block_columns",
    "cell_lonlat",
    "bound_file_caches",
]


@dataclass(frozen=True)
class Block:
    """A window of the grid at one valid time."""

    time_index: int
    """Index into the forecast's valid times."""
    y0: int
    """First row."""
    y1: int
    """One past the last row."""
    x0: int
    """First column."""
    x1: int
    """One past the last column."""

    @property
    def ys(self) -> slice:
        """The rows, as a slice."""
        return slice(self.y0, self.y1)

    @property
    def xs(self) -> slice:
        """The columns, as a slice."""
        return slice(self.x0, self.x1)

    @property
    def shape(self) -> tuple:
        """(rows, columns) of the window."""
        return (self.y1 - self.y0, self.x1 - self.x0)


@dataclass(frozen=True)
class BlockColumns:
    """The columns of one block, ready for :func:`icing.calc.diagnose_columns`."""

    block: Block
    """Where they come from."""
    columns: dict
    """``diagnose_columns`` keyword arrays: (m, level) and per-column (m,), SI."""
    usable: np.ndarray
    """bool (m,): the column has at least one level with pressure, temperature, height and
    humidity; the others are coverage gaps ("missing-values")."""
    saturation: np.ndarray | None = None
    """The saturation vapour pressure over water at the columns' temperatures [Pa] where
    assembling them computed it (``diagnose_columns(saturation=...)``), else None."""


def plan_blocks(ny, nx, time_indices, *, columns=4000):
    """Cut the grid into blocks of at most ``columns`` grid columns at each valid time.

    Whole rows where a row holds at most ``columns`` (reads stay contiguous in the
    file), else pieces of one row.

    >>> [b.shape for b in plan_blocks(5, 3, [0], columns=7)]
    [(2, 3), (2, 3), (1, 3)]
    """
    out = []
    for t in time_indices:
        if nx <= columns:
            rows = max(1, columns // nx)
            out += [Block(int(t), y, min(y + rows, ny), 0, nx) for y in range(0, ny, rows)]
        else:
            out += [
                Block(int(t), y, y + 1, x, min(x + columns, nx))
                for y in range(ny)
                for x in range(0, nx, columns)
            ]
    return out


def read_block_columns(forecast, block: Block, *, compiled=False) -> BlockColumns:
    """Read every variable of a block and assemble its columns (see the module docstring).

    ``compiled``: assemble with the compiled loops (``assemble_columns(compiled=...)``).
    """
    ny, nx = block.shape
    m = ny * nx
    n_lev = forecast.levels.size
    vals = {}
    for key in forecast.column_keys():
        a = forecast.read_block(key, block.time_index, block.ys, block.xs)
        if a.ndim == 3:  # (level, y, x) -> (y * x, level)
            vals[key] = np.ascontiguousarray(a.reshape(n_lev, m).T)
        else:
            vals[key] = a.reshape(m)
    computed = {}
    cols = assemble_columns(vals, m, forecast.column_spec, computed=computed, compiled=compiled)
    return BlockColumns(block, cols, _usable(cols, forecast.humidity), computed.get("saturation"))


def read_member_block_columns(forecast, block: Block) -> BlockColumns:
    """Every member's columns of a block, members folded into the columns (member-major).

    ``forecast`` reads every member at once (a
    :class:`~icing.forecast.membergrid.MemberGridForecast`): one read of each field
    across the file's member dimension. Column ``j * m + i`` is member ``j`` at cell
    ``i`` of the block (``m = rows x columns``), assembled as a single forecast's.
    """
    ny, nx = block.shape
    m = ny * nx
    k = forecast.n_members
    n_lev = forecast.levels.size
    vals = {}
    for key in forecast.column_keys():
        a = np.asarray(forecast.read_block(key, block.time_index, block.ys, block.xs))
        if a.ndim == 4:  # (member, level, y, x) -> (member * y * x, level)
            vals[key] = np.ascontiguousarray(np.moveaxis(a.reshape(k, n_lev, m), 1, 2))
            vals[key] = vals[key].reshape(k * m, n_lev)
        else:  # (member, y, x); fields without the dimension were broadcast
            vals[key] = np.ascontiguousarray(np.broadcast_to(a, (k, ny, nx))).reshape(k * m)
    cols = assemble_columns(vals, k * m, forecast.column_spec)
    return BlockColumns(block, cols, _usable(cols, forecast.humidity))


def _usable(cols, humidity):
    """Columns with at least one level of pressure, temperature, height and humidity."""
    with np.errstate(invalid="ignore"):
        ok = (
            np.isfinite(cols["pressure"])
            & np.isfinite(cols["temperature"])
            & np.isfinite(cols["height"])
            & np.isfinite(cols[humidity])
        )
    return ok.any(axis=1)


def cell_lonlat(source, ys=slice(None), xs=slice(None)):
    """Longitude and latitude of the cell centres of a window, shaped (y, x) [deg].

    Latitude-longitude grids give their axes (longitudes in -180..180); projected
    grids are brought back with pyproj from their CRS.
    """
    x = np.asarray(source.x, float)[xs]
    y = np.asarray(source.y, float)[ys]
    if source.crs is None:
        lon, lat = np.meshgrid(((x + 180.0) % 360.0) - 180.0, y)
        return lon, lat
    from pyproj import Transformer  # only for projected grids

    inv = Transformer.from_crs(source.crs, "EPSG:4326", always_xy=True)
    xx, yy = np.meshgrid(x, y)
    lon, lat = inv.transform(xx, yy)
    return np.asarray(lon, float), np.asarray(lat, float)


def _raw_variables(field, seen):
    """Yield the file variables behind a field (through regridded and derived fields)."""
    if id(field) in seen:
        return
    seen.add(id(field))
    raw = getattr(field, "raw", None)
    if raw is not None:
        yield raw
    for inner in (getattr(field, "source", None), *getattr(field, "inputs", ())):
        if inner is not None:
            yield from _raw_variables(inner, seen)


def bound_file_caches(forecast, *, chunks=1):
    """Keep the HDF5 chunk cache of every NetCDF variable to ``chunks`` of its chunks.

    The netCDF library gives each variable a cache of 64 MiB by default: reading a
    continental file block by block fills every variable's cache in turn, so each
    process grows by hundreds of MiB (measured: 300 MiB to 560 MiB over 60 blocks of a
    0.5 M-column file). Blocks of rows are read in file order, so one chunk per
    variable is all that is ever read again (the next block's rows in the same chunk).
    GRIB files keep their own bounded cache (:mod:`icing.forecast.grib`).
    """
    from icing.forecast.netcdf import NETCDF_LOCK

    seen, done = set(), set()
    for src in forecast.sources:
        for field in src.fields.values():
            for raw in _raw_variables(field, seen):
                var = getattr(raw, "nc_var", None)
                if var is None or id(var) in done:
                    continue
                done.add(id(var))
                with NETCDF_LOCK:
                    shape = var.chunking()
                    if shape == "contiguous" or not shape:
                        continue
                    size = int(np.prod(shape)) * var.dtype.itemsize * int(chunks)
                    var.set_var_chunk_cache(size=max(size, 2**20))
