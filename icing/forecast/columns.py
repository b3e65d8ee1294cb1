"""What a forecast hands to the column physics: :class:`ColumnSet`, and the :class:`Forecast` base.

A forecast brings whole columns to route samples (complete
profiles are moved to the sample's position and time, never values at the flight
altitude). :meth:`Forecast.columns_at` returns a :class:`ColumnSet`: columns in
SI units with exactly the keyword names of :func:`icing.calc.column.diagnose_columns`,
the candidate columns of every sample and the coverage of every sample.

Coverage: a sample outside the radius or the grid, outside the valid-time window
(first - tolerance .. last + tolerance), or whose column has no usable level is
not covered; ``gap_reason`` says why (:data:`GAP_REASONS`; the place is judged
first). A gap is never "no icing".
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = [
    "GAP_REASONS",
    "ColumnSet",
    "Forecast",
    "as_samples",
    "iso_time",
    "placeholder_if_empty",
]

#: the words of ``ColumnSet.gap_reason``
GAP_REASONS = ("outside-radius", "outside-grid", "outside-time-window", "missing-values")


@dataclass(frozen=True)
class ColumnSet:
    """Whole columns for a set of samples, and which columns each sample may use.

    Notes
    -----
    m >= 1 always: when no sample is covered one all-NaN placeholder column is
    returned that no sample points to, so ``np.where(candidates >= 0,
    candidates, 0)`` stays a valid index.
    """

    columns: dict
    """``diagnose_columns`` keyword arguments: level arrays (m, level) in SI (pressure [Pa],
    temperature [K], one humidity, height [m], optional cloud_liquid/cloud_ice/rain/snow
    [kg/kg], cloud_fraction [1], vertical_velocity [m/s]) and per-column arrays (m,)
    (precipitation_rate_mm_h, surface_pressure [Pa], surface_height [m])."""
    candidates: np.ndarray
    """int (n, k): indices into the m columns for each sample, -1 padded (all -1 where
    the sample is not covered)."""
    covered: np.ndarray
    """bool (n,): the sample has at least one usable column."""
    gap_reason: np.ndarray
    """str (n,): one of :data:`GAP_REASONS`, "" where covered."""
    wind_u: np.ndarray | None = None
    """Eastward wind (m, level) [m/s], or None (not a ``diagnose_columns`` argument)."""
    wind_v: np.ndarray | None = None
    """Northward wind (m, level) [m/s], or None."""
    column_lat: np.ndarray = field(default_factory=lambda: np.zeros(0))
    """Latitude of each column (m,) [deg]: the sample for grids, the profile for profiles."""
    column_lon: np.ndarray = field(default_factory=lambda: np.zeros(0))
    """Longitude of each column (m,) [deg]."""
    column_time: np.ndarray = field(default_factory=lambda: np.zeros(0, "datetime64[ms]"))
    """Valid time of each column (m,) (UTC)."""
    column_id: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=object))
    """Profile id of each column (m,) ("" for grid columns)."""
    candidate_distance_km: np.ndarray = field(default_factory=lambda: np.zeros((0, 1)))
    """Geodesic distance from sample to candidate (n, k) [km] (NaN padded; 0 on grids)."""

    @property
    def n_columns(self) -> int:
        """Number of columns m."""
        return int(self.columns["pressure"].shape[0])


def placeholder_if_empty(cs: ColumnSet) -> ColumnSet:
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


def iso_time(t) -> str:
    """Return a time as ISO 8601 UTC to the second, e.g. ``2027-01-14T12:00:00Z``."""
    return str(np.datetime_as_string(np.datetime64(t, "s"), unit="s")) + "Z"


def as_samples(lat, lon, time):
    """Return (lat, lon, time) as 1-D arrays of one shape; time as datetime64[ms] (UTC)."""
    lat = np.atleast_1d(np.asarray(lat, dtype=float))
    lon = np.atleast_1d(np.asarray(lon, dtype=float))
    t = np.atleast_1d(np.asarray(time))
    if not np.issubdtype(t.dtype, np.datetime64):
        raise TypeError("time must be numpy datetime64 (UTC)")
    t = np.broadcast_to(t.astype("datetime64[ms]"), lat.shape)
    if lat.shape != lon.shape:
        raise ValueError("lat and lon must have the same shape")
    return lat, lon, t


class Forecast:
    """A forecast that can hand whole columns to route samples.

    Use :func:`icing.forecast.load_forecast`; the concrete classes are
    :class:`icing.forecast.GridForecast` and :class:`icing.forecast.ProfileForecast`.
    Both read the one internal forecast structure (``dataset``, an xarray Dataset
    in SI; see DEVELOPERS.md, "The forecast layer").
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
        lat, lon, t = as_samples(lat, lon, time)
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
