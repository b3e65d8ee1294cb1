"""Gridded forecasts: locate samples on the grid, read the tiles around them, interpolate.

A :class:`GridForecast` holds one or several :class:`~icing.forecast.dataset.GridSource`
(one per lead time) of the same grid. For each sample it finds the four
surrounding columns and the two valid times around it, reads only the tiles of
the grid that hold them (through a shared, lock-safe
:class:`~icing.forecast.tiles.TileCache`), and combines them: bilinear in the
horizontal, linear in time (one candidate per sample). The interpolated values
are then assembled into the column physics' inputs by
:func:`~icing.forecast.assemble.assemble_columns`.

The object locates, reads and interpolates; units, humidity conventions,
earth-relative winds and level sets were settled by the readers (the fields
arrive in SI on one level axis), and column conversions live in
:mod:`icing.forecast.assemble`.
"""

from __future__ import annotations

import numpy as np

from icing.errors import ForecastError
from icing.forecast.assemble import ColumnSpec, assemble_columns
from icing.forecast.columns import (
    ColumnSet,
    Forecast,
    as_samples,
    iso_time,
    placeholder_if_empty,
)
from icing.forecast.discovery import HUMIDITY_KEYS, OPTIONAL_KEYS
from icing.forecast.interp import combine_corners, frac_index, time_brackets
from icing.forecast.tiles import TileCache, tile_windows

__all__ = ["GridForecast"]


def _check_same_grid(a, b):
    """Refuse a lead-time file whose grid, levels or variables differ from the first."""

    def refuse(what):
        raise ForecastError(
            f"grid differs from {a.path.name} ({what})",
            path=b.path,
            fix="give files of one model grid (same coordinates, levels and variables)",
        )

    if a.x.shape != b.x.shape or a.y.shape != b.y.shape:
        refuse(f"{b.y.size}x{b.x.size} points, not {a.y.size}x{a.x.size}")
    if not (np.allclose(a.x, b.x) and np.allclose(a.y, b.y)):
        refuse("horizontal coordinates")
    if a.levels.shape != b.levels.shape or not np.allclose(a.levels, b.levels):
        refuse("vertical levels")
    if (a.crs is None) != (b.crs is None) or (a.crs is not None and a.crs != b.crs):
        refuse("grid mapping")
    if set(a.fields) != set(b.fields):
        refuse(f"variables {sorted(set(a.fields) ^ set(b.fields))}")
    for key, pa in a.provenance.items():
        pb = b.provenance[key]
        if pa != pb:
            names = f"{pa['name']} in {pa['units']} vs {pb['name']} in {pb['units']}"
            refuse(f"variable {key!r} ({names})")


def _time_map(sources):
    """Sorted valid times of all files and, per time, (file index, index in the file)."""
    pairs = sorted(
        ((t, i, j) for i, s in enumerate(sources) for j, t in enumerate(s.times)),
        key=lambda p: p[0],
    )
    times = np.array([p[0] for p in pairs], dtype="datetime64[ms]")
    dup = np.flatnonzero(np.diff(times.astype(np.int64)) == 0)
    if dup.size:
        raise ForecastError(
            f"valid time {iso_time(times[dup[0]])} appears twice",
            path=sources[pairs[dup[0]][1]].path,
            fix="give each valid time once (one file per lead time)",
        )
    return times, [(p[1], p[2]) for p in pairs]


def _as_slice(order):
    """Return the level order as a slice where it is one (a view, no copy), else None."""
    ascending = np.arange(order.size)
    if np.array_equal(order, ascending):
        return slice(None)
    if np.array_equal(order, ascending[::-1]):
        return slice(None, None, -1)
    return None


class GridForecast(Forecast):
    """Gridded forecast (one or several files of one grid), read lazily by tiles.

    Parameters
    ----------
    sources : list of GridSource
        The files, one grid; several files are several lead times.
    radius_km, time_tolerance_h : float
        See :func:`icing.forecast.load_forecast`.
    tile : int, optional
        Tile size [grid points] (default from the file's chunking, else 32).
    chunk : int
        Samples interpolated at a time (bounded memory for grid-wide calls).
    cache : TileCache, optional
        Blocks kept between calls (shared by every thread using the forecast).
    cache_tag : hashable, optional
        Part of every cache key: forecasts sharing one cache (the members of an
        ensemble) keep their blocks apart.
    """

    kind = "grid"
    #: Axis of the valid times in a block read (a leading member axis moves it to 1).
    _time_axis = 0

    def __init__(
        self,
        sources,
        *,
        radius_km=50.0,
        time_tolerance_h=3.0,
        tile=None,
        chunk=8192,
        cache=None,
        cache_tag=None,
    ):
        ref = sources[0]
        for s in sources[1:]:
            _check_same_grid(ref, s)
        self.sources = tuple(sources)
        self.files = [str(s.path) for s in sources]
        self.radius_km = float(radius_km)
        self.time_tolerance_h = float(time_tolerance_h)
        self.valid_times, self._time_map = _time_map(sources)
        self.variables = dict(ref.provenance)
        self.has_wind = "wind_u" in ref.fields and "wind_v" in ref.fields
        self.humidity = next(h for h in HUMIDITY_KEYS if h in ref.fields)
        self.geographic = ref.crs is None
        self._x, self._y = ref.x, ref.y
        if self.geographic:
            step = float(np.median(np.abs(np.diff(ref.x))))
            span = abs(ref.x[-1] - ref.x[0]) + step
            self.periodic = abs(span - 360.0) < 0.5 * step and ref.x[-1] > ref.x[0]
            self._transformer = None
        else:
            from pyproj import Transformer

            self.periodic = False
            self._transformer = Transformer.from_crs("EPSG:4326", ref.crs, always_xy=True)
        self.vertical = ref.vertical
        self._order = (
            np.argsort(-ref.levels) if ref.vertical == "pressure" else np.argsort(ref.levels)
        )
        self.levels = ref.levels[self._order]
        self._order_slice = _as_slice(self._order)
        self._spec = ColumnSpec(
            self.levels,
            ref.vertical,
            self.humidity,
            ref.height_above_ground,
            self.variables.get("vertical_velocity", {}).get("converted", "").startswith("omega"),
            ground_unknown=self._ground_unknown(ref),
        )
        hint = ref.tile_hint
        self.tile = int(tile or (max(8, min(64, hint)) if hint else 32))
        self.chunk = int(chunk)
        self.cache = cache if cache is not None else TileCache()
        self.cache_tag = cache_tag

    @staticmethod
    def _ground_unknown(ref):
        """Pressure levels without surface pressure or surface height: the ground is unknown."""
        return ref.vertical == "pressure" and not (
            {"surface_pressure", "surface_height"} & set(ref.fields)
        )

    def with_tiling(self, *, tile=None, chunk=None):
        """Return the same forecast read with another tile size or sample chunk (fresh cache)."""
        return GridForecast(
            list(self.sources),
            radius_km=self.radius_km,
            time_tolerance_h=self.time_tolerance_h,
            tile=tile or self.tile,
            chunk=chunk or self.chunk,
        )

    def with_cache(self, cache, tag):
        """Return the same forecast reading through a shared cache under its own ``tag``."""
        return GridForecast(
            list(self.sources),
            radius_km=self.radius_km,
            time_tolerance_h=self.time_tolerance_h,
            tile=self.tile,
            chunk=self.chunk,
            cache=cache,
            cache_tag=tag,
        )

    @property
    def read_stats(self) -> dict:
        """Blocks and values read from the files, and cache hits, so far."""
        return self.cache.stats().as_dict()

    @property
    def dataset(self):
        """The first file's internal structure (an xarray Dataset, lazy)."""
        return self.sources[0].dataset

    # ------------------------------------------------------------------ geometry

    def _grid_xy(self, lat, lon):
        if self.geographic:
            xmin = float(self._x.min())
            return xmin + np.mod(lon - xmin, 360.0), lat
        x, y = self._transformer.transform(lon, lat)
        return np.asarray(x, dtype=float), np.asarray(y, dtype=float)

    def _locate(self, lat, lon):
        gx, gy = self._grid_xy(lat, lon)
        ix0, ix1, wx, inx = frac_index(gx, self._x, periodic=self.periodic)
        iy0, iy1, wy, iny = frac_index(gy, self._y)
        ok = inx & iny & (np.abs(lat) <= 90.0)
        return (iy0, iy1, wy), (ix0, ix1, wx), ok

    @property
    def bounds(self):
        """(lon_min, lat_min, lon_max, lat_max) [deg]; lon_min > lon_max across 180."""
        if self.geographic:
            ys = self._y
            if self.periodic:
                return (-180.0, float(ys.min()), 180.0, float(ys.max()))
            lo, hi = (float(((v + 180.0) % 360.0) - 180.0) for v in (self._x.min(), self._x.max()))
            if hi == -180.0:
                hi = 180.0
            return (lo, float(ys.min()), hi, float(ys.max()))
        from pyproj import Transformer

        inv = Transformer.from_crs(self.sources[0].crs, "EPSG:4326", always_xy=True)
        x, y = self._x, self._y
        xs = np.concatenate([x, np.full(y.size, x[-1]), x[::-1], np.full(y.size, x[0])])
        ys = np.concatenate([np.full(x.size, y[0]), y, np.full(x.size, y[-1]), y[::-1]])
        lon, lat = inv.transform(xs, ys)
        return (float(np.min(lon)), float(np.min(lat)), float(np.max(lon)), float(np.max(lat)))

    # ------------------------------------------------------------------ reading

    def _read_blocks(self, key, times, ys, xs):
        """One field on a block of the grid at the given valid-time indices.

        Returns ``{time index: array}``, each (level, y, x) or (y, x), SI, levels
        surface first. Times from one file are read in one slice.
        """
        out, by_file = {}, {}
        for t in times:
            fi, lt = self._time_map[int(t)]
            by_file.setdefault(fi, []).append((int(t), lt))
        xkey = (xs.start, xs.stop) if isinstance(xs, slice) else tuple(xs.tolist())
        for fi, pairs in by_file.items():
            fld = self.sources[fi].fields[key]
            lo = min(lt for _, lt in pairs)
            tslice = slice(lo, max(lt for _, lt in pairs) + 1) if fld.timed else None
            tkey = None if tslice is None else (lo, tslice.stop)
            ck = (self.cache_tag, fi, key, ys.start, ys.stop, xkey, tkey)
            vals = self.cache.get_or_read(
                ck, lambda f=fld, t=tslice: self._read_field(f, t, ys, xs)
            )
            for t, lt in pairs:
                out[t] = vals[(slice(None),) * self._time_axis + (lt - lo,)] if fld.timed else vals
        return out

    def _read_field(self, fld, tslice, ys, xs):
        """Read a block and put its levels surface first."""
        vals = fld.read(tslice, ys, xs)
        if fld.levelled:
            axis = 1 if fld.timed else 0
            if self._order_slice is None:
                vals = np.take(vals, self._order, axis=axis)
            else:
                vals = vals[(slice(None),) * axis + (self._order_slice,)]
        return vals

    def read_block(self, key, time_index, ys, xs):
        """Read one field on a window of the grid at one valid time, straight from the file.

        Returns the block ``(level, y, x)`` (levelled fields, levels surface first) or
        ``(y, x)``, in SI, float64. Not cached: a grid run reads each block once.
        """
        fi, lt = self._time_map[int(time_index)]
        fld = self.sources[fi].fields[key]
        vals = self._read_field(fld, slice(lt, lt + 1) if fld.timed else None, ys, xs)
        return vals[0] if fld.timed else vals

    def column_keys(self, *, wind=False):
        """Return the variables a column is assembled from (the winds only when asked for)."""
        return [k for k in self._keys(None) if wind or k not in ("wind_u", "wind_v")]

    @property
    def column_spec(self):
        """What the columns' values are, for :func:`icing.forecast.assemble.assemble_columns`."""
        return self._spec

    def _corner_values(self, keys, iy, ix, it0, it1):
        """Corner columns (n, 2 times, 2 y, 2 x[, level]) of each key, read by tiles."""
        n = iy[0].size
        out = {}
        windows = tile_windows(
            iy[0], ix[0], self.tile, self._y.size, self._x.size, periodic=self.periodic
        )
        for sel, ys, xs, ly, lx in windows:
            times = np.unique(np.concatenate([it0[sel], it1[sel]]))
            for key in keys:
                static = not self.sources[0].fields[key].timed
                blocks = self._read_blocks(key, times[:1] if static else times, ys, xs)
                for t, blk in blocks.items():
                    if key not in out:
                        out[key] = np.full((n, 2, 2, 2) + blk.shape[:-2], np.nan)
                    for a, tt in enumerate((it0, it1)):
                        m = np.ones(sel.size, bool) if static else tt[sel] == t
                        if not m.any():
                            continue
                        s = sel[m]
                        for b in (0, 1):
                            for c in (0, 1):
                                v = blk[..., ly[m] + b, lx[m] + c]
                                out[key][s, a, b, c] = np.moveaxis(v, -1, 0) if v.ndim > 1 else v
        return out

    def _interpolate(self, lat, lon, t, keys):
        """Interpolated values of keys at the samples, and coverage."""
        (iy0, iy1, wy), (ix0, ix1, wx), inside_grid = self._locate(lat, lon)
        it0, it1, wt, inside_time = time_brackets(
            self.valid_times, t, self.time_tolerance_h * 3.6e6
        )
        use = np.flatnonzero(inside_grid & inside_time)
        gap = np.where(
            inside_grid, np.where(inside_time, "", "outside-time-window"), "outside-grid"
        ).astype(object)
        parts = {key: [] for key in keys}
        for start in range(0, use.size, self.chunk):  # bounded memory for grid-wide calls
            u = use[start : start + self.chunk]
            corners = self._corner_values(keys, (iy0[u], iy1[u]), (ix0[u], ix1[u]), it0[u], it1[u])
            for key in keys:
                parts[key].append(combine_corners(corners[key], wy[u], wx[u], wt[u]))
        vals = {}
        for key in keys:
            if parts[key]:
                vals[key] = np.concatenate(parts[key])
            else:  # no sample inside: empty arrays of the right shape
                lev = self.sources[0].fields[key].levelled
                vals[key] = np.zeros((0, self.levels.size) if lev else (0,))
        return vals, use, gap

    def _keys(self, fields):
        base = ["temperature", self.humidity, "surface_pressure", "surface_height"]
        base += {"pressure": ["height"], "height": ["pressure"], "model": ["pressure", "height"]}[
            self.vertical
        ]
        optional = [k for k in OPTIONAL_KEYS if k not in base and (fields is None or k in fields)]
        return [k for k in base + optional if k in self.sources[0].fields]

    def columns_at(self, lat, lon, time, *, fields=None):
        """Each sample's own interpolated whole column (k = 1); see :class:`ColumnSet`.

        ``fields`` limits the optional variables read (e.g. ``("wind_u", "wind_v")``).
        """
        lat, lon, t = as_samples(lat, lon, time)
        vals, use, gap = self._interpolate(lat, lon, t, self._keys(fields))
        return self._column_set(vals, use, gap, lat, lon, t)

    def _column_set(self, vals, use, gap, lat, lon, t):
        """Build the :class:`ColumnSet` of interpolated values at the samples ``use``."""
        n = lat.size
        m = use.size
        cols = assemble_columns(vals, m, self._spec)
        good = np.ones(m, bool)
        if m:
            ok_level = (
                np.isfinite(cols["pressure"])
                & np.isfinite(cols["temperature"])
                & np.isfinite(cols["height"])
                & np.isfinite(cols[self.humidity])
            )
            good = ok_level.any(axis=1)
        gap[use[~good]] = "missing-values"
        covered = gap == ""
        keep = use[good]
        index = np.full(n, -1)
        index[keep] = np.arange(keep.size)
        # drop the columns of samples without any usable level
        cols = {k: v[good] for k, v in cols.items()}
        wind_u = cols.pop("wind_u", None)
        wind_v = cols.pop("wind_v", None)
        cand_d = np.where(index >= 0, 0.0, np.nan)[:, None]
        return placeholder_if_empty(
            ColumnSet(
                cols,
                index[:, None],
                covered,
                gap.astype(str),
                wind_u,
                wind_v,
                lat[keep],
                lon[keep],
                t[keep],
                np.full(keep.size, "", dtype=object),
                cand_d,
            )
        )

    def surface_height_at(self, lat, lon):
        """Surface height [m] (bilinear; first valid time); NaN outside or unknown."""
        lat = np.atleast_1d(np.asarray(lat, dtype=float))
        lon = np.atleast_1d(np.asarray(lon, dtype=float))
        out = np.full(lat.shape, np.nan)
        if "surface_height" not in self.sources[0].fields or lat.size == 0:
            return out
        t = np.full(lat.shape, self.valid_times[0])
        vals, use, _ = self._interpolate(lat, lon, t, ["surface_height"])
        if use.size:
            out[use] = self._one_value(vals["surface_height"])
        return out

    @staticmethod
    def _one_value(values):
        """One value per sample of interpolated values (members reduce theirs)."""
        return values

    def describe(self):
        """Provenance dict (files, kind, grid, times, variables and their names)."""
        ref = self.sources[0]
        issue = [s.issue_time for s in self.sources if s.issue_time is not None]
        return {
            "kind": "grid",
            "files": self.files,
            "format": ref.format,
            "grid": ref.grid,
            "issue_time": iso_time(issue[0]) if issue else None,
            "valid_times": [iso_time(v) for v in self.valid_times],
            "radius_km": self.radius_km,
            "time_tolerance_h": self.time_tolerance_h,
            "vertical": self.vertical,
            "levels": int(self.levels.size),
            "humidity": self.humidity,
            "shape": {"y": int(ref.y.size), "x": int(ref.x.size)},
            "variables": {k: dict(v) for k, v in self.variables.items()},
            "bounds": list(self.bounds),
            "notes": sum((list(s.notes) for s in self.sources), []) + self._ground_note(),
        }

    def _ground_note(self):
        if not self._spec.ground_unknown:
            return []
        return [
            "no surface pressure or orography in the file: the ground is taken at mean sea "
            "level, so levels whose geopotential height is below 0 m are below the ground (the "
            "lowest usable level is the lowest above sea level); under higher ground the file "
            "cannot tell which levels lie in the terrain: they are used as the model wrote "
            "them, and heights above ground stay unknown"
        ]
