"""Forecasts: read profile files or gridded CF-NetCDF and bring whole columns to samples.

:func:`load_forecast` reads one or several files (several lead times form one
forecast) into a :class:`Forecast`. :meth:`Forecast.columns_at` returns a
:class:`ColumnSet`: whole columns in SI units with exactly the keyword names
of :func:`icing.column.diagnose_columns`, the candidate columns of every
sample, and the coverage of every sample.

Interpolation order (DESIGN.md section 1): complete profiles are brought to the
sample's position and time, never values at the flight altitude.

- Grids: bilinear in the horizontal on the four surrounding columns and
  linear between the two valid times around the sample (one candidate per
  sample). Only the tiles of the grid around the samples are read from the
  file, so the cost grows with the route, not with the grid.
- Profile files: every profile within ``radius_km`` (geodesic) at the one or
  two valid times bracketing the sample is a separate candidate; the caller
  diagnoses each and keeps the worst. Profiles are never blended.

Coverage: a sample outside the radius or the grid, outside the valid-time
window (first - tolerance .. last + tolerance), or whose column has no usable
level is not covered; ``gap_reason`` says why ("outside-radius",
"outside-grid", "outside-time-window", "missing-values"; the place is judged
first). A gap is never "no icing". Humidity is clipped to saturation over
water (model output a little above 100 % is normal). Levels are ordered
surface first (decreasing pressure); columns with NaN at some levels are still
returned (the diagnosis marks those levels invalid), and profiles with fewer
levels are padded with NaN at the top.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

import numpy as np

from icing.calc.thermo import air_density, height_from_pressure_hypsometric
from icing.constants import G
from icing.errors import ForecastError
from icing.forecast.readers import (
    VAR_KEYS,
    ProfileTable,
    fill_along_levels,
    open_grid_file,
    parse_time,
    read_profiles_csv,
    read_profiles_json,
    specific_humidity_of,
)
from icing.forecast.soundings import check_site_used, read_sounding, sounding_format  # soundings

__all__ = [
    "ColumnSet",
    "Forecast",
    "ProfileForecast",
    "GridForecast",
    "load_forecast",
    "demo_forecast_path",
    "parse_time",
    "VAR_KEYS",
    "GAP_REASONS",
]

#: the words of ``ColumnSet.gap_reason``
GAP_REASONS = ("outside-radius", "outside-grid", "outside-time-window", "missing-values")
_REQUIRED = ("pressure", "temperature", "height")
_HUMIDITY = ("dewpoint", "relative_humidity", "specific_humidity")
_PER_COLUMN = ("precipitation_rate_mm_h", "surface_pressure", "surface_height")


def demo_forecast_path() -> Path:
    """Path of the bundled demo forecast (Skerrow Basin, CF-NetCDF lat-lon)."""
    return Path(str(resources.files("icing") / "data" / "demo" / "skerrow-demo.nc"))


@dataclass
class ColumnSet:
    """Whole columns for a set of samples, and which columns each sample may use.

    Attributes
    ----------
    columns : dict
        ``diagnose_columns`` keyword arguments: level arrays (m, level) in SI
        (pressure [Pa], temperature [K], one humidity, height [m], optional
        cloud_liquid/cloud_ice/rain/snow [kg/kg], cloud_fraction [1],
        vertical_velocity [m/s]) and per-column arrays (m,)
        (precipitation_rate_mm_h, surface_pressure [Pa], surface_height [m]).
    candidates : numpy.ndarray of int, shape (n, k)
        Indices into the m columns for each sample, -1 padded (and all -1
        where the sample is not covered).
    covered : numpy.ndarray of bool, shape (n,)
    gap_reason : numpy.ndarray of str, shape (n,)
        One of :data:`GAP_REASONS`, "" where covered.
    wind_u, wind_v : numpy.ndarray or None, shape (m, level)
        Wind components [m/s] (not a ``diagnose_columns`` argument).
    column_lat, column_lon, column_time : numpy.ndarray, shape (m,)
        Where and when each column stands (the sample for grids, the profile
        for profile files).
    column_id : numpy.ndarray of str, shape (m,)
        The profile id ("" for grid columns).
    candidate_distance_km : numpy.ndarray, shape (n, k)
        Geodesic distance from sample to candidate (NaN padded; 0 on grids).

    Notes
    -----
    m >= 1 always: when no sample is covered one all-NaN placeholder column is
    returned that no sample points to, so ``np.where(candidates >= 0,
    candidates, 0)`` stays a valid index.
    """

    columns: dict
    candidates: np.ndarray
    covered: np.ndarray
    gap_reason: np.ndarray
    wind_u: np.ndarray | None = None
    wind_v: np.ndarray | None = None
    column_lat: np.ndarray = field(default_factory=lambda: np.zeros(0))
    column_lon: np.ndarray = field(default_factory=lambda: np.zeros(0))
    column_time: np.ndarray = field(default_factory=lambda: np.zeros(0, "datetime64[ms]"))
    column_id: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=object))
    candidate_distance_km: np.ndarray = field(default_factory=lambda: np.zeros((0, 1)))

    @property
    def n_columns(self) -> int:
        """Number of columns m."""
        return int(self.columns["pressure"].shape[0])


def _placeholder_if_empty(cs):
    """Give a ColumnSet without columns one all-NaN column (m = 1, never a candidate).

    Callers index columns with ``np.where(candidates >= 0, candidates, 0)``;
    with m >= 1 that stays valid when no sample is covered.
    """
    if cs.n_columns > 0:
        return cs
    one = {k: np.full((1,) + v.shape[1:], np.nan) for k, v in cs.columns.items()}
    wind = [
        None if w is None else np.full((1,) + w.shape[1:], np.nan) for w in (cs.wind_u, cs.wind_v)
    ]
    return ColumnSet(
        one,
        cs.candidates,
        cs.covered,
        cs.gap_reason,
        wind[0],
        wind[1],
        np.full(1, np.nan),
        np.full(1, np.nan),
        np.full(1, np.datetime64("NaT"), dtype="datetime64[ms]"),
        np.array([""], dtype=object),
        cs.candidate_distance_km,
    )


def _as_samples(lat, lon, time):
    lat = np.atleast_1d(np.asarray(lat, dtype=float))
    lon = np.atleast_1d(np.asarray(lon, dtype=float))
    t = np.atleast_1d(np.asarray(time))
    if not np.issubdtype(t.dtype, np.datetime64):
        raise TypeError("time must be numpy datetime64 (UTC)")
    t = np.broadcast_to(t.astype("datetime64[ms]"), lat.shape)
    if lat.shape != lon.shape:
        raise ValueError("lat and lon must have the same shape")
    return lat, lon, t


def _time_brackets(valid_times, t, tol_ms):
    """Return the bracketing time indices (i0, i1), the weight of i1 and the window mask."""
    vt = valid_times.astype("datetime64[ms]").astype(np.int64).astype(float)
    ts = t.astype(np.int64).astype(float)
    inside = (ts >= vt[0] - tol_ms) & (ts <= vt[-1] + tol_ms)
    if vt.size == 1:
        z = np.zeros(ts.shape, dtype=int)
        return z, z, np.zeros(ts.shape), inside
    f = np.interp(ts, vt, np.arange(vt.size, dtype=float))
    i0 = np.clip(np.floor(f).astype(int), 0, vt.size - 2)
    w = np.clip(f - i0, 0.0, 1.0)
    i1 = i0 + 1
    # exactly on a valid time (or held at an end): one time only
    i1 = np.where(w == 0.0, i0, i1)
    i0 = np.where(w == 1.0, i1, i0)
    return i0, i1, w, inside


class Forecast:
    """A forecast that can hand whole columns to route samples.

    Use :func:`load_forecast`; the concrete classes are :class:`GridForecast`
    and :class:`ProfileForecast`.
    """

    kind = "abstract"
    radius_km: float
    time_tolerance_h: float
    valid_times: np.ndarray
    has_wind: bool
    files: list

    def columns_at(self, lat, lon, time, **kwargs) -> ColumnSet:  # pragma: no cover
        """Columns for samples at (lat, lon, time); see :class:`ColumnSet`."""
        raise NotImplementedError

    def describe(self) -> dict:  # pragma: no cover
        """Provenance: files, kind, issue and valid times, radius, tolerance, variables."""
        raise NotImplementedError

    @property
    def bounds(self):  # pragma: no cover
        """(lon_min, lat_min, lon_max, lat_max) [deg] (RFC 7946 bbox order)."""
        raise NotImplementedError

    def surface_height_at(self, lat, lon):  # pragma: no cover
        """Surface height [m] at the points (NaN where unknown)."""
        raise NotImplementedError

    def wind_at(self, lat, lon, altitude_m, time):
        """Wind (u, v) [m/s] at the points: nearest level by height; zeros where unknown.

        Profile forecasts average the candidate profiles' winds.
        """
        lat, lon, t = _as_samples(lat, lon, time)
        alt = np.broadcast_to(np.asarray(altitude_m, dtype=float), lat.shape)
        u = np.zeros(lat.shape)
        v = np.zeros(lat.shape)
        if not self.has_wind or lat.size == 0:
            return u, v
        cs = self.columns_at(lat, lon, t, fields=("wind_u", "wind_v"))
        if cs.wind_u is None or cs.n_columns == 0:
            return u, v
        z = cs.columns["height"]
        cand = cs.candidates
        ok = cand >= 0
        c = np.where(ok, cand, 0)
        dz = np.abs(z[c] - alt[:, None, None])  # (n, k, level)
        dz = np.where(np.isfinite(dz), dz, np.inf)
        lev = np.argmin(dz, axis=-1)
        uu = np.take_along_axis(cs.wind_u[c], lev[..., None], -1)[..., 0]
        vv = np.take_along_axis(cs.wind_v[c], lev[..., None], -1)[..., 0]
        good = ok & np.isfinite(uu) & np.isfinite(vv) & np.isfinite(dz.min(axis=-1))
        cnt = good.sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            u = np.where(cnt > 0, np.where(good, uu, 0.0).sum(axis=1) / cnt, 0.0)
            v = np.where(cnt > 0, np.where(good, vv, 0.0).sum(axis=1) / cnt, 0.0)
        return u, v


# --------------------------------------------------------------------------- profiles


class ProfileForecast(Forecast):
    """Soundings or model columns from profile files (JSON or CSV)."""

    kind = "profiles"

    def __init__(self, table: ProfileTable, *, radius_km, time_tolerance_h):
        self.table = table
        self.radius_km = float(radius_km)
        self.time_tolerance_h = float(time_tolerance_h)
        self.valid_times = np.unique(table.time)
        self.files = list(table.files)
        self.has_wind = (
            "wind_u" in table.levels
            and "wind_v" in table.levels
            and bool(np.isfinite(table.levels["wind_u"]).any())
        )
        from pyproj import Geod

        self._geod = Geod(ellps="WGS84")

    @property
    def bounds(self):
        """(lon_min, lat_min, lon_max, lat_max) of the profile positions [deg]."""
        lon = (self.table.lon + 180.0) % 360.0 - 180.0
        return (
            float(lon.min()),
            float(self.table.lat.min()),
            float(lon.max()),
            float(self.table.lat.max()),
        )

    def _distances_km(self, lat, lon, idx=None):
        tl = self.table.lat if idx is None else self.table.lat[idx]
        tn = self.table.lon if idx is None else self.table.lon[idx]
        la = np.broadcast_to(lat[:, None], (lat.size, tl.size))
        lo = np.broadcast_to(lon[:, None], la.shape)
        _, _, d = self._geod.inv(
            lo.ravel(),
            la.ravel(),
            np.broadcast_to(tn, la.shape).ravel(),
            np.broadcast_to(tl, la.shape).ravel(),
        )
        return np.asarray(d).reshape(la.shape) / 1000.0

    def columns_at(self, lat, lon, time, *, fields=None):
        """Candidate profiles for every sample (see :class:`ColumnSet`).

        ``fields`` is accepted for symmetry with grids and ignored.
        """
        lat, lon, t = _as_samples(lat, lon, time)
        n = lat.size
        tab = self.table
        i0, i1, _, inside = _time_brackets(self.valid_times, t, self.time_tolerance_h * 3.6e6)
        vt_index = np.searchsorted(self.valid_times, tab.time)  # profile -> valid-time index
        dist = self._distances_km(lat, lon) if n else np.zeros((0, tab.size))
        near = dist <= self.radius_km
        at_time = (vt_index[None, :] == i0[:, None]) | (vt_index[None, :] == i1[:, None])
        use = near & at_time & inside[:, None]
        covered = use.any(axis=1)
        # the place first (as on grids): far from every profile is "outside-radius"
        # near a profile but not covered: none of the near ones is valid around that time
        gap = np.where(
            covered, "", np.where(near.any(axis=1), "outside-time-window", "outside-radius")
        )
        used = np.flatnonzero(use.any(axis=0))
        remap = np.full(tab.size, -1)
        remap[used] = np.arange(used.size)
        k = max(int(use.sum(axis=1).max(initial=0)), 1)
        order = np.argsort(np.where(use, dist, np.inf), axis=1, kind="stable")[:, :k]
        sel = np.take_along_axis(use, order, 1)
        candidates = np.where(sel, remap[order], -1)
        cand_d = np.where(sel, np.take_along_axis(dist, order, 1), np.nan)
        cols = {
            key: val[used] for key, val in tab.levels.items() if key not in ("wind_u", "wind_v")
        }
        for key in _PER_COLUMN:
            vals = tab.scalars.get(key)
            if vals is not None and np.isfinite(vals[used]).any():
                cols[key] = vals[used]
        wind = {w: tab.levels[w][used] if w in tab.levels else None for w in ("wind_u", "wind_v")}
        return _placeholder_if_empty(
            ColumnSet(
                cols,
                candidates.astype(int),
                covered,
                gap.astype(str),
                wind["wind_u"],
                wind["wind_v"],
                tab.lat[used],
                tab.lon[used],
                tab.time[used],
                tab.ids[used].astype(str),
                cand_d,
            )
        )

    def surface_height_at(self, lat, lon):
        """Surface elevation of the nearest profile within the radius that gives one [m]."""
        lat = np.atleast_1d(np.asarray(lat, dtype=float))
        lon = np.atleast_1d(np.asarray(lon, dtype=float))
        zs = self.table.scalars["surface_height"]
        d = np.where(np.isfinite(zs)[None, :], self._distances_km(lat, lon), np.inf)
        j = np.argmin(d, axis=1)
        ok = d[np.arange(lat.size), j] <= self.radius_km
        return np.where(ok, zs[j], np.nan)

    def describe(self):
        """Provenance dict (files, kind, times, radius, tolerance, fields found)."""
        tab = self.table
        return {
            "kind": "profiles",
            "files": self.files,
            "issue_time": None if tab.issue_time is None else _iso(tab.issue_time),
            "valid_times": [_iso(v) for v in self.valid_times],
            "profiles": int(tab.size),
            "radius_km": self.radius_km,
            "time_tolerance_h": self.time_tolerance_h,
            "humidity": tab.humidity,
            "variables": {
                key: {"name": src, "found_by": "profile field"}
                for key, src in sorted(tab.sources.items())
            },
            "bounds": list(self.bounds),
            "notes": list(tab.notes),
        }


def _iso(t):
    return str(np.datetime_as_string(np.datetime64(t, "s"), unit="s")) + "Z"


# --------------------------------------------------------------------------- grids


def _level_weights(src, dst, *, log):
    """Linear weights taking values on levels ``src`` to levels ``dst`` (NaN outside)."""
    s = np.log(src) if log else np.asarray(src, dtype=float)
    d = np.log(dst) if log else np.asarray(dst, dtype=float)
    order = np.argsort(s)
    ss = s[order]
    f = np.interp(d, ss, np.arange(ss.size, dtype=float))
    i0 = np.clip(np.floor(f).astype(int), 0, max(ss.size - 2, 0))
    i1 = np.minimum(i0 + 1, ss.size - 1)
    w = f - i0
    tol = 1e-9 * max(abs(ss[-1] - ss[0]), 1.0)
    valid = (d >= ss[0] - tol) & (d <= ss[-1] + tol)
    return order[i0], order[i1], w, valid


def _apply_level_weights(a, lw):
    i0, i1, w, valid = lw
    with np.errstate(invalid="ignore"):
        out = a[..., i0] * (1.0 - w) + np.where(w > 0, a[..., i1] * w, 0.0)
    return np.where(valid, out, np.nan)


def _read_raw(var, idx):
    """Read a netCDF4 variable with an xarray-style index dict; NaN where masked.

    Dimensions indexed by an integer are dropped (as ``isel`` does); an index
    array (a wrapped longitude window) is read sorted and put back in order.
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
    a = var[tuple(key)]
    a = np.ma.filled(np.ma.asarray(a).astype(float), np.nan)
    if reorder is not None:
        a = np.take(a, reorder[1], axis=reorder[0])
    return a


def _frac_index(v, c, *, periodic=False):
    """(i0, i1, weight, inside) of values v on the monotonic 1-D coordinate c."""
    n = c.size
    asc = c[-1] > c[0]
    cs = c if asc else c[::-1]
    step = float(np.median(np.abs(np.diff(cs))))
    if periodic:
        v = cs[0] + np.mod(v - cs[0], 360.0)
        span = cs[0] + 360.0 - cs[-1]
        f = np.where(
            v > cs[-1], (n - 1) + (v - cs[-1]) / span, np.interp(v, cs, np.arange(n, dtype=float))
        )
        inside = np.isfinite(v)
        i0 = np.floor(f).astype(int) % n
        w = f - np.floor(f)
        return i0, (i0 + 1) % n, w, inside
    eps = 1e-6 * step
    inside = (v >= cs[0] - eps) & (v <= cs[-1] + eps)
    f = np.interp(v, cs, np.arange(n, dtype=float))
    if not asc:
        f = (n - 1) - f
    i0 = np.clip(np.floor(f).astype(int), 0, n - 2)
    w = np.clip(f - i0, 0.0, 1.0)
    return i0, i0 + 1, w, inside


class GridForecast(Forecast):
    """Gridded CF-NetCDF forecast (one or several files), read lazily by tiles."""

    kind = "grid"

    def __init__(self, files, *, radius_km=50.0, time_tolerance_h=3.0, tile=None):
        self.files = [str(f.path) for f in files]
        self._files = files
        self.radius_km = float(radius_km)
        self.time_tolerance_h = float(time_tolerance_h)
        ref = files[0]
        for f in files[1:]:
            self._check_same_grid(ref, f)
        pairs = [(t, i, j) for i, f in enumerate(files) for j, t in enumerate(f.times)]
        pairs.sort(key=lambda p: p[0])
        times = np.array([p[0] for p in pairs], dtype="datetime64[ms]")
        dup = np.flatnonzero(np.diff(times.astype(np.int64)) == 0)
        if dup.size:
            t = times[dup[0]]
            raise ForecastError(
                f"valid time {_iso(t)} appears twice",
                path=files[pairs[dup[0]][1]].path,
                fix="give each valid time once (one file per lead time)",
            )
        self.valid_times = times
        self._time_map = [(p[1], p[2]) for p in pairs]
        self.variables = ref.variables
        self.has_wind = "wind_u" in ref.variables and "wind_v" in ref.variables
        self.humidity = next(h for h in _HUMIDITY if h in ref.variables)
        self.geographic = ref.crs is None
        x = ref.x
        if self.geographic:
            x = ref.x.copy()
            step = float(np.median(np.abs(np.diff(x))))
            self.periodic = abs(abs(x[-1] - x[0]) + step - 360.0) < 0.5 * step and x[-1] > x[0]
            self._transformer = None
        else:
            from pyproj import Transformer

            self.periodic = False
            self._transformer = Transformer.from_crs("EPSG:4326", ref.crs, always_xy=True)
        self._x, self._y = x, ref.y
        surface_first = (
            np.argsort(-ref.levels) if ref.vertical == "pressure" else np.argsort(ref.levels)
        )
        self.levels = ref.levels[surface_first]
        self.vertical = ref.vertical
        self._level_w = {
            dim: _level_weights(vals, self.levels, log=ref.vertical == "pressure")
            for dim, vals in ref.level_coords.items()
        }
        chunks = ref.ds[ref.variables["temperature"].name].encoding.get("chunksizes")
        self.tile = int(tile or (max(8, min(64, min(chunks[-2:]))) if chunks else 32))
        self.read_stats = {"reads": 0, "values": 0, "cache_hits": 0}
        self.chunk = 8192  # samples interpolated at a time
        self.cache_bytes = 256 * 2**20  # blocks kept for later calls (several routes)
        self._cache = {}
        self._cached_bytes = 0

    @staticmethod
    def _check_same_grid(a, b):
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
        if set(a.variables) != set(b.variables):
            refuse(f"variables {sorted(set(a.variables) ^ set(b.variables))}")
        # reads use the first file's names and unit conversions for every file
        for key, va in a.variables.items():
            vb = b.variables[key]
            same = (va.name, va.scale, va.offset, va.level_dim, va.transform) == (
                vb.name,
                vb.scale,
                vb.offset,
                vb.level_dim,
                vb.transform,
            )
            if not same:
                refuse(f"variable {key!r} ({va.name} in {va.units} vs {vb.name} in {vb.units})")

    # ------------------------------------------------------------------ geometry

    def _grid_xy(self, lat, lon):
        if self.geographic:
            xmin = float(self._x.min())
            return xmin + np.mod(lon - xmin, 360.0), lat
        x, y = self._transformer.transform(lon, lat)
        return np.asarray(x, dtype=float), np.asarray(y, dtype=float)

    def _locate(self, lat, lon):
        gx, gy = self._grid_xy(lat, lon)
        ix0, ix1, wx, inx = _frac_index(gx, self._x, periodic=self.periodic)
        iy0, iy1, wy, iny = _frac_index(gy, self._y)
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

        inv = Transformer.from_crs(self._files[0].crs, "EPSG:4326", always_xy=True)
        xs = np.concatenate(
            [
                self._x,
                np.full(self._y.size, self._x[-1]),
                self._x[::-1],
                np.full(self._y.size, self._x[0]),
            ]
        )
        ys = np.concatenate(
            [
                np.full(self._x.size, self._y[0]),
                self._y,
                np.full(self._x.size, self._y[-1]),
                self._y[::-1],
            ]
        )
        lon, lat = inv.transform(xs, ys)
        return (float(np.min(lon)), float(np.min(lat)), float(np.max(lon)), float(np.max(lat)))

    # ------------------------------------------------------------------ reading

    def _read_blocks(self, key, times, ys, xs):
        """One variable on a block of the grid at the given valid-time indices.

        Returns ``{time index: array}``, each (level, y, x) or (y, x), SI, float.
        Times from one file are read in one slice.
        """
        info = self.variables[key]
        out = {}
        by_file = {}
        for t in times:
            fi, lt = self._time_map[int(t)]
            by_file.setdefault(fi, []).append((int(t), lt))
        for fi, pairs in by_file.items():
            gf = self._files[fi]
            var = gf.ds[info.name]
            idx = {gf.y_dim: ys, gf.x_dim: xs}
            timed = gf.time_dim is not None and gf.time_dim in var.dims
            if timed:
                lts = [lt for _, lt in pairs]
                idx[gf.time_dim] = slice(min(lts), max(lts) + 1)
            for d in var.dims:
                if d not in idx and d != info.level_dim:
                    idx[d] = 0
            order = [
                d
                for d in (gf.time_dim if timed else None, info.level_dim, gf.y_dim, gf.x_dim)
                if d is not None
            ]
            ck = (
                fi,
                info.name,
                ys.start,
                ys.stop,
                (xs.start, xs.stop) if isinstance(xs, slice) else tuple(xs.tolist()),
                (idx[gf.time_dim].start, idx[gf.time_dim].stop) if timed else None,
            )
            vals = self._cache.get(ck)
            if vals is not None:
                self._cache[ck] = self._cache.pop(ck)  # most recently used last
                self.read_stats["cache_hits"] += 1
            else:
                vals = self._read_uncached(gf, var, info, idx, order)
                self._cache[ck] = vals
                self._cached_bytes += vals.nbytes
                while self._cached_bytes > self.cache_bytes and len(self._cache) > 1:
                    self._cached_bytes -= self._cache.pop(next(iter(self._cache))).nbytes
            for t, lt in pairs:
                out[t] = vals[lt - min(lt for _, lt in pairs)] if timed else vals
        return out

    def _read_uncached(self, gf, var, info, idx, order):
        """Read one block from the file (netCDF4 directly when possible), SI, float."""
        raw = gf.raw_variable(info.name)
        if raw is not None and tuple(raw.dimensions) == tuple(var.dims):
            vals = _read_raw(raw, idx)
            kept = [d for d in var.dims if not isinstance(idx.get(d), (int, np.integer))]
            vals = np.transpose(vals, [kept.index(d) for d in order])
        else:
            vals = np.asarray(var.isel(idx).transpose(*order).values, dtype=float)
        vals = vals * info.scale + info.offset
        self.read_stats["reads"] += 1
        self.read_stats["values"] += vals.size
        return vals

    def _corner_values(self, keys, iy, ix, it0, it1):
        """Corner columns (n, 2 times, 2 y, 2 x[, level]) of each key, read by tiles."""
        T = self.tile
        ny, nx = self._y.size, self._x.size
        n = iy[0].size
        out = {}
        tiles = (iy[0] // T) * (nx // T + 2) + ix[0] // T
        for tile in np.unique(tiles):
            sel = np.flatnonzero(tiles == tile)
            y0 = (iy[0][sel[0]] // T) * T
            x0 = (ix[0][sel[0]] // T) * T
            ys = slice(y0, min(y0 + T + 1, ny))
            if self.periodic:
                xs = np.arange(x0, x0 + T + 1) % nx
            else:
                xs = slice(x0, min(x0 + T + 1, nx))
            ly = iy[0][sel] - y0
            lx = ix[0][sel] - x0
            times = np.unique(np.concatenate([it0[sel], it1[sel]]))
            for key in keys:
                static = self._is_static(key)
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

    def _is_static(self, key):
        info = self.variables[key]
        gf = self._files[0]
        return gf.time_dim is None or gf.time_dim not in gf.ds[info.name].dims

    @staticmethod
    def _combine(v, wy, wx, wt):
        """Bilinear in space, linear in time; zero weights never spread NaN."""
        wts = (
            np.stack([1.0 - wt, wt], 1)[:, :, None, None]
            * np.stack([1.0 - wy, wy], 1)[:, None, :, None]
            * np.stack([1.0 - wx, wx], 1)[:, None, None, :]
        )
        wts = wts.reshape(wts.shape + (1,) * (v.ndim - 4))
        with np.errstate(invalid="ignore"):
            part = np.where(wts > 0, v * wts, 0.0)
        return part.sum(axis=(1, 2, 3))

    def _interpolate(self, lat, lon, t, keys):
        """Interpolated values of keys at the samples, and coverage."""
        (iy0, iy1, wy), (ix0, ix1, wx), inside_grid = self._locate(lat, lon)
        it0, it1, wt, inside_time = _time_brackets(
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
                v = self._combine(corners[key], wy[u], wx[u], wt[u])
                info = self.variables[key]
                if info.level_dim is not None:
                    v = _apply_level_weights(v, self._level_w[info.level_dim])
                parts[key].append(v)
        vals = {}
        for key in keys:
            if parts[key]:
                vals[key] = np.concatenate(parts[key])
            else:  # no sample inside: empty arrays of the right shape
                lev = self.variables[key].level_dim is not None
                vals[key] = np.zeros((0, self.levels.size) if lev else (0,))
        return vals, use, gap

    def columns_at(self, lat, lon, time, *, fields=None):
        """Each sample's own interpolated whole column (k = 1); see :class:`ColumnSet`.

        ``fields`` limits the optional variables read (e.g. ``("wind_u", "wind_v")``).
        """
        lat, lon, t = _as_samples(lat, lon, time)
        n = lat.size
        base = ["temperature", self.humidity, "surface_pressure", "surface_height"]
        base += ["height"] if self.vertical == "pressure" else ["pressure"]
        optional = [
            "cloud_liquid",
            "cloud_ice",
            "rain",
            "snow",
            "cloud_fraction",
            "vertical_velocity",
            "precipitation_rate",
            "wind_u",
            "wind_v",
        ]
        if fields is not None:
            optional = [k for k in optional if k in fields]
        keys = [k for k in base + optional if k in self.variables]
        vals, use, gap = self._interpolate(lat, lon, t, keys)
        m = use.size
        cols = self._assemble(vals, m)
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
        return _placeholder_if_empty(
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

    def _assemble(self, vals, m):
        """Interpolated values -> diagnose_columns keyword arrays (SI, surface first)."""
        cols = {}
        L = self.levels.size
        if self.vertical == "pressure":
            cols["pressure"] = np.broadcast_to(self.levels, (m, L)).copy()
        else:
            cols["pressure"] = vals["pressure"]
        cols["temperature"] = vals["temperature"]
        hum = vals[self.humidity]
        with np.errstate(invalid="ignore"):  # clip to physical (saturation over water)
            if self.humidity == "relative_humidity":
                hum = np.clip(hum, 0.0, 1.0)
            elif self.humidity == "dewpoint":
                hum = np.minimum(hum, cols["temperature"])
            else:
                hum = np.maximum(hum, 0.0)
        cols[self.humidity] = hum
        for key in ("surface_pressure", "surface_height"):
            if key in vals:
                cols[key] = vals[key]
        if self.vertical == "pressure":
            if "height" in vals:
                cols["height"] = vals["height"]
            else:
                q = np.nan_to_num(specific_humidity_of(cols, self.humidity), nan=0.0)
                anchored = "surface_pressure" in cols and "surface_height" in cols
                with np.errstate(invalid="ignore"):
                    cols["height"] = height_from_pressure_hypsometric(
                        cols["pressure"],
                        fill_along_levels(cols["temperature"]),
                        specific_humidity=q,
                        base_height=cols["surface_height"] if anchored else None,
                        base_pressure=cols["surface_pressure"] if anchored else None,
                    )
        else:
            z = np.broadcast_to(self.levels, (m, L)).copy()
            if self._files[0].height_above_ground:
                # an unknown surface leaves the heights unknown: a gap, never MSL
                z = z + cols["surface_height"][:, None]
            cols["height"] = z
        for key in ("cloud_liquid", "cloud_ice", "rain", "snow", "cloud_fraction"):
            if key in vals:
                cols[key] = (
                    np.maximum(vals[key], 0.0)
                    if key != "cloud_fraction"
                    else np.clip(vals[key], 0.0, 1.0)
                )
        if "vertical_velocity" in vals:
            w = vals["vertical_velocity"]
            if self.variables["vertical_velocity"].transform == "omega":
                q = np.nan_to_num(specific_humidity_of(cols, self.humidity), nan=0.0)
                rho = air_density(cols["pressure"], cols["temperature"], q)
                with np.errstate(invalid="ignore"):
                    w = -w / (rho * G)  # omega = -rho g w (hydrostatic)
            cols["vertical_velocity"] = w
        if "precipitation_rate" in vals:
            cols["precipitation_rate_mm_h"] = np.maximum(vals["precipitation_rate"], 0.0)
        for key in ("wind_u", "wind_v"):
            if key in vals:
                cols[key] = vals[key]
        return cols

    def surface_height_at(self, lat, lon):
        """Surface height [m] (bilinear; first valid time); NaN outside or unknown."""
        lat = np.atleast_1d(np.asarray(lat, dtype=float))
        lon = np.atleast_1d(np.asarray(lon, dtype=float))
        out = np.full(lat.shape, np.nan)
        if "surface_height" not in self.variables or lat.size == 0:
            return out
        t = np.full(lat.shape, self.valid_times[0])
        vals, use, _ = self._interpolate(lat, lon, t, ["surface_height"])
        if use.size:
            out[use] = vals["surface_height"]
        return out

    def describe(self):
        """Provenance dict (files, kind, grid, times, variables and their names)."""
        ref = self._files[0]
        issue = [f.issue_time for f in self._files if f.issue_time is not None]
        return {
            "kind": "grid",
            "files": self.files,
            "grid": ref.grid,
            "issue_time": _iso(issue[0]) if issue else None,
            "valid_times": [_iso(v) for v in self.valid_times],
            "radius_km": self.radius_km,
            "time_tolerance_h": self.time_tolerance_h,
            "vertical": self.vertical,
            "levels": int(self.levels.size),
            "humidity": self.humidity,
            "shape": {"y": int(ref.y.size), "x": int(ref.x.size)},
            "variables": {k: v.describe() for k, v in self.variables.items()},
            "bounds": list(self.bounds),
            "notes": sum((f.notes for f in self._files), []),
        }


# --------------------------------------------------------------------------- loading


def _sniff(path: Path):
    with open(path, "rb") as fh:
        head = fh.read(8)
    if head[:4] in (b"CDF\x01", b"CDF\x02", b"CDF\x05") or head == b"\x89HDF\r\n\x1a\n":
        return "sounding" if sounding_format(path) else "netcdf"  # soundings hook: CF profiles
    if head[:4] == b"GRIB":
        return "grib"
    text = head.lstrip()
    if text[:1] in (b"{", b"["):
        return "json"
    if sounding_format(path) is not None:  # soundings hook: radiosonde files, by content
        return "sounding"
    suffix = path.suffix.lower()
    return {
        ".json": "json",
        ".csv": "csv",
        ".nc": "netcdf",
        ".nc4": "netcdf",
        ".cdf": "netcdf",
        ".grib": "grib",
        ".grib2": "grib",
        ".grb2": "grib",
    }.get(suffix, "csv" if b"," in head else "unknown")


def load_forecast(
    paths, *, radius_km=50.0, time_tolerance_h=3.0, var_map=None, sounding_site=None
) -> Forecast:
    """Read one or several forecast files into one :class:`Forecast`.

    Parameters
    ----------
    paths : path-like or list of path-like
        Profile JSON (``"format": "icing-profiles"``), profile CSV, CF-NetCDF or
        radiosonde soundings (University of Wyoming text or CSV, IGRA2).
        Several files (lead times) form one forecast: grids must share one
        grid and levels, valid times must not repeat.
    radius_km : float
        Profile files: profiles within this geodesic distance of a sample are
        its candidates; beyond it the sample is a coverage gap. [km]
    time_tolerance_h : float
        How far before the first / after the last valid time a sample may lie
        and still use that time (a single-time analysis is used within it). [h]
    var_map : dict, optional
        Gridded files: ``{key: variable name}`` (keys: :data:`VAR_KEYS`). A
        mapped name is used first; unmapped keys are found by CF
        ``standard_name``, then by common model-output names.
    sounding_site : icing.forecast.soundings.SoundingSite, optional
        Radiosonde files: station position, elevation and launch time for files
        that do not give them (``--station``, ``--time``).

    Returns
    -------
    Forecast
        :class:`GridForecast` or :class:`ProfileForecast`.

    Raises
    ------
    ForecastError
        A missing, unreadable or inconsistent file, one line naming the file,
        the place and the fix.
    """
    if isinstance(paths, (str, Path)):
        paths = [paths]
    paths = [Path(p) for p in paths]
    if not paths:
        raise ForecastError("no forecast file given", fix="give at least one forecast file")
    if not (radius_km > 0):
        raise ForecastError(
            f"radius {radius_km} km is not positive",
            where="radius_km",
            fix="give a positive radius",
        )
    if not (time_tolerance_h >= 0):
        raise ForecastError(
            f"time tolerance {time_tolerance_h} h is negative",
            where="time_tolerance_h",
            fix="give 0 or more hours",
        )
    kinds = []
    for p in paths:
        if not p.exists():
            raise ForecastError("file not found", path=p, fix="check the path")
        if p.is_dir():
            raise ForecastError("is a directory", path=p, fix="give the forecast file(s) in it")
        kinds.append(_sniff(p))
    for p, k in zip(paths, kinds, strict=True):
        if k == "grib":
            raise ForecastError(
                "GRIB2 is not read directly",
                path=p,
                fix="convert to CF-NetCDF (e.g. with cfgrib/xarray) first",
            )
        if k == "unknown":
            raise ForecastError(
                "unknown forecast format",
                path=p,
                fix="give a profile JSON, profile CSV or CF-NetCDF file, or a radiosonde "
                "sounding (University of Wyoming text or CSV, IGRA2)",
            )
    check_site_used(sounding_site, kinds, paths)  # soundings hook: --station needs a sounding
    if "netcdf" in kinds and any(k != "netcdf" for k in kinds):
        raise ForecastError(
            "gridded and profile files mixed in one forecast",
            path=paths[kinds.index("netcdf")],
            fix="screen against either gridded files or profile files",
        )
    if kinds[0] == "netcdf":
        files = [open_grid_file(p, var_map) for p in paths]
        return GridForecast(files, radius_km=radius_km, time_tolerance_h=time_tolerance_h)
    if var_map:
        raise ForecastError(
            "a variable mapping applies to gridded files only",
            path=paths[0],
            where="--var",
            fix="drop --var for profile files",
        )
    tables = [
        read_sounding(p, site=sounding_site)  # soundings hook
        if k == "sounding"
        else (read_profiles_json(p) if k == "json" else read_profiles_csv(p))
        for p, k in zip(paths, kinds, strict=True)
    ]
    return ProfileForecast(
        ProfileTable.concatenate(tables), radius_km=radius_km, time_tolerance_h=time_tolerance_h
    )
