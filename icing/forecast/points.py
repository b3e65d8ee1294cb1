"""Scattered columns (profile files, soundings): every profile near a sample is a candidate.

A :class:`ProfileForecast` reads the profile form of the internal structure
(:func:`~icing.forecast.dataset.profile_dataset`: dimensions (profile, level)).
Every profile within ``radius_km`` (geodesic) at the one or two valid times
bracketing a sample is a separate candidate; the caller diagnoses each and keeps
the worst. Profiles are never blended (blending a cloudy and a dry sounding
halves the liquid and invents marginal layers).
"""

from __future__ import annotations

import numpy as np

from icing.forecast.columns import (
    ColumnSet,
    Forecast,
    as_samples,
    iso_time,
    placeholder_if_empty,
)
from icing.forecast.dataset import profile_dataset
from icing.forecast.interp import time_brackets
from icing.forecast.table import ProfileTable

__all__ = ["ProfileForecast"]

_PER_COLUMN = ("precipitation_rate_mm_h", "surface_pressure", "surface_height")
_WIND = ("wind_u", "wind_v")


class ProfileForecast(Forecast):
    """Soundings or model columns at scattered places (profile JSON/CSV, soundings).

    Parameters
    ----------
    table : ProfileTable
        The profiles, as every profile reader yields them.
    radius_km, time_tolerance_h : float
        See :func:`icing.forecast.load_forecast`.
    """

    kind = "profiles"

    def __init__(self, table: ProfileTable, *, radius_km, time_tolerance_h):
        from pyproj import Geod

        self.table = table
        self.dataset = profile_dataset(table)
        ds = self.dataset
        dims = {k: ds[k].dims for k in ds.data_vars}
        self._levels = {k: ds[k].values for k, d in dims.items() if d == ("profile", "level")}
        self._scalars = {k: ds[k].values for k, d in dims.items() if d == ("profile",)}
        self._lat = ds["latitude"].values
        self._lon = ds["longitude"].values
        self._time = ds["time"].values.astype("datetime64[ms]")
        self._ids = ds["profile_id"].values
        self.radius_km = float(radius_km)
        self.time_tolerance_h = float(time_tolerance_h)
        self.valid_times = np.unique(self._time)
        self.files = list(table.files)
        self.has_wind = all(w in self._levels for w in _WIND) and bool(
            np.isfinite(self._levels["wind_u"]).any()
        )
        self._geod = Geod(ellps="WGS84")

    @property
    def bounds(self):
        """(lon_min, lat_min, lon_max, lat_max) of the profile positions [deg]."""
        lon = (self._lon + 180.0) % 360.0 - 180.0
        return (float(lon.min()), float(self._lat.min()), float(lon.max()), float(self._lat.max()))

    def _distances_km(self, lat, lon):
        """Geodesic distance from every sample to every profile (n, P) [km]."""
        la = np.broadcast_to(lat[:, None], (lat.size, self._lat.size))
        lo = np.broadcast_to(lon[:, None], la.shape)
        _, _, d = self._geod.inv(
            lo.ravel(),
            la.ravel(),
            np.broadcast_to(self._lon, la.shape).ravel(),
            np.broadcast_to(self._lat, la.shape).ravel(),
        )
        return np.asarray(d).reshape(la.shape) / 1000.0

    def _candidates(self, lat, lon, t):
        """Which profiles each sample may use: (use (n, P), distance (n, P), gap reason)."""
        n = lat.size
        i0, i1, _, inside = time_brackets(self.valid_times, t, self.time_tolerance_h * 3.6e6)
        vt_index = np.searchsorted(self.valid_times, self._time)  # profile -> valid-time index
        dist = self._distances_km(lat, lon) if n else np.zeros((0, self._ids.size))
        near = dist <= self.radius_km
        at_time = (vt_index[None, :] == i0[:, None]) | (vt_index[None, :] == i1[:, None])
        use = near & at_time & inside[:, None]
        covered = use.any(axis=1)
        # the place first (as on grids): far from every profile is "outside-radius";
        # near a profile but not covered: none of the near ones is valid around that time
        gap = np.where(
            covered, "", np.where(near.any(axis=1), "outside-time-window", "outside-radius")
        )
        return use, dist, gap

    def columns_at(self, lat, lon, time, *, fields=None):
        """Candidate profiles for every sample (see :class:`ColumnSet`).

        ``fields`` is accepted for symmetry with grids and ignored.
        """
        lat, lon, t = as_samples(lat, lon, time)
        use, dist, gap = self._candidates(lat, lon, t)
        used = np.flatnonzero(use.any(axis=0))
        remap = np.full(self._ids.size, -1)
        remap[used] = np.arange(used.size)
        k = max(int(use.sum(axis=1).max(initial=0)), 1)
        order = np.argsort(np.where(use, dist, np.inf), axis=1, kind="stable")[:, :k]
        sel = np.take_along_axis(use, order, 1)
        candidates = np.where(sel, remap[order], -1)
        cand_d = np.where(sel, np.take_along_axis(dist, order, 1), np.nan)
        cols = {key: val[used] for key, val in self._levels.items() if key not in _WIND}
        for key in _PER_COLUMN:
            vals = self._scalars.get(key)
            if vals is not None and np.isfinite(vals[used]).any():
                cols[key] = vals[used]
        wind = {w: self._levels[w][used] if w in self._levels else None for w in _WIND}
        return placeholder_if_empty(
            ColumnSet(
                cols,
                candidates.astype(int),
                use.any(axis=1),
                gap.astype(str),
                wind["wind_u"],
                wind["wind_v"],
                self._lat[used],
                self._lon[used],
                self._time[used],
                self._ids[used].astype(str),
                cand_d,
            )
        )

    def surface_height_at(self, lat, lon):
        """Surface elevation of the nearest profile within the radius that gives one [m]."""
        lat = np.atleast_1d(np.asarray(lat, dtype=float))
        lon = np.atleast_1d(np.asarray(lon, dtype=float))
        zs = self._scalars["surface_height"]
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
            "issue_time": None if tab.issue_time is None else iso_time(tab.issue_time),
            "valid_times": [iso_time(v) for v in self.valid_times],
            "profiles": int(self._ids.size),
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
