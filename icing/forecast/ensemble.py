"""Ensembles: several forecasts of the same times, each a member.

Members come from a member dimension of the files (GRIB ``number``, NetCDF
``member`` / ``realization`` / ``number``: one :class:`GridForecast` per member
over the same files, :func:`icing.forecast.dataset.split_members`) or from
several files given as members (``--ensemble``: different models, or
time-lagged runs of one model valid at the same times). An
:class:`EnsembleForecast` holds the members and hands each member's whole
columns to the screening run (:meth:`EnsembleForecast.member_columns_at`), which
diagnoses them together; it never blends members into one column.

What a member does not cover (outside its grid or its valid times, missing
values) is that member's coverage gap, reported per member; it is never "no
icing" and never borrowed from another member.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from icing.errors import ForecastError
from icing.forecast.columns import ColumnSet, Forecast, as_samples, iso_time

__all__ = ["EnsembleMember", "EnsembleForecast", "member_label_of_files"]


@dataclass(frozen=True)
class EnsembleMember:
    """One member of an ensemble: its name and its forecast."""

    label: str
    """The member's name in the outputs (``"number 3 (perturbed)"``, a file name)."""
    forecast: Forecast
    """The member's forecast (a :class:`GridForecast`, or any :class:`Forecast`)."""


def member_label_of_files(paths) -> str:
    """Return a member's name from its files: the first file's name (and how many more).

    >>> member_label_of_files(["/data/gfs.t06z.f006.grib2", "/data/gfs.t06z.f009.grib2"])
    'gfs.t06z.f006.grib2 (+1 file)'
    """
    paths = [Path(p) for p in paths]
    more = len(paths) - 1
    return paths[0].name + (f" (+{more} file{'s' * (more > 1)})" if more else "")


class EnsembleForecast(Forecast):
    """Members forecasting the same times; each is read and diagnosed on its own.

    Parameters
    ----------
    members : sequence of EnsembleMember
        At least two members, with distinct labels.
    origin : str
        Where the members come from (``"member dimension"`` or ``"files given as
        members"``), for the provenance.
    whole_source : GridSource, optional
        The first file with its member dimension (members from a member dimension):
        its ``dataset`` is the ensemble's internal structure with a ``member`` axis.
    joint : MemberGridForecast, optional
        The same members read together (members from a member dimension): the
        members' columns, winds and ground come from it, one read for all.
    """

    kind = "ensemble"

    def __init__(self, members, *, origin: str, whole_source=None, joint=None):
        members = tuple(members)
        if len(members) < 2:
            raise ForecastError(
                f"an ensemble needs at least two members, got {len(members)}",
                fix="give two or more forecasts as members, or screen the one forecast "
                "without --ensemble",
            )
        labels = [m.label for m in members]
        if len(set(labels)) != len(labels):
            raise ForecastError(
                "two members have one name", fix="give each member once (distinct files)"
            )
        self.members = members
        self.origin = str(origin)
        self._whole_source = whole_source
        self._joint = joint
        first = members[0].forecast
        self.radius_km = first.radius_km
        self.time_tolerance_h = first.time_tolerance_h
        self.valid_times = np.unique(
            np.concatenate([np.asarray(m.forecast.valid_times, "datetime64[ms]") for m in members])
        )
        self.has_wind = any(m.forecast.has_wind for m in members)
        self.files = list(dict.fromkeys(f for m in members for f in m.forecast.files))

    @property
    def labels(self) -> tuple:
        """The members' names, in member order."""
        return tuple(m.label for m in self.members)

    @property
    def joint(self):
        """The members read together (files with a member dimension), or None.

        A :class:`~icing.forecast.membergrid.MemberGridForecast`: a grid run reads
        every member's block in one read of the file.
        """
        return self._joint

    @property
    def dataset(self):
        """Return the internal structure (xarray Dataset).

        With a ``member`` axis when the members share a file's member dimension (its
        first file), else the first member's.
        """
        if self._whole_source is not None:
            return self._whole_source.dataset
        return self.members[0].forecast.dataset

    def member_columns_at(self, lat, lon, time, *, fields=None) -> list:
        """Each member's :class:`ColumnSet` at the samples (see :meth:`Forecast.columns_at`)."""
        lat, lon, t = as_samples(lat, lon, time)
        if self._joint is not None:
            return self._joint.member_columns_at(lat, lon, t, fields=fields)
        return [m.forecast.columns_at(lat, lon, t, fields=fields) for m in self.members]

    def columns_at(self, lat, lon, time, **kwargs) -> ColumnSet:
        """Refused: an ensemble has one column per member (see :meth:`member_columns_at`)."""
        raise ForecastError(
            f"an ensemble of {len(self.members)} members has no single column",
            where="ensemble",
            fix="screen routes against it (icing screen), or pick one member with --member N "
            "(a member dimension) or give one file",
        )

    def wind_at(self, lat, lon, altitude_m, time):
        """Mean wind (u, v) [m/s] of the members that have winds (used to time the route).

        One timing serves every member, so that the members are compared at the same
        samples; the mean of the members' winds is that timing's wind.
        """
        lat, lon, t = as_samples(lat, lon, time)
        if self._joint is not None:
            u, v = self._joint.member_winds_at(lat, lon, altitude_m, t)
            return u.mean(axis=0), v.mean(axis=0)
        us, vs = [], []
        for m in self.members:
            if m.forecast.has_wind:
                u, v = m.forecast.wind_at(lat, lon, altitude_m, t)
                us.append(u)
                vs.append(v)
        if not us:
            return np.zeros(lat.shape), np.zeros(lat.shape)
        return np.mean(us, axis=0), np.mean(vs, axis=0)

    def surface_height_at(self, lat, lon):
        """Median of the members' surface heights [m] (NaN where no member knows it)."""
        if self._joint is not None:
            return self._joint.surface_height_at(lat, lon)
        heights = np.array([m.forecast.surface_height_at(lat, lon) for m in self.members], float)
        out = np.full(heights.shape[1:], np.nan)
        known = np.isfinite(heights).any(axis=0)
        if known.any():
            out[known] = np.nanmedian(heights[:, known], axis=0)
        return out

    @property
    def bounds(self):
        """Where every member covers: the intersection of the members' bounds.

        Members crossing the antimeridian (lon_min > lon_max) or not overlapping
        give the first member's bounds.
        """
        boxes = [tuple(m.forecast.bounds) for m in self.members]
        if any(b[0] > b[2] for b in boxes):
            return boxes[0]
        lo_lon = max(b[0] for b in boxes)
        lo_lat = max(b[1] for b in boxes)
        hi_lon = min(b[2] for b in boxes)
        hi_lat = min(b[3] for b in boxes)
        if lo_lon >= hi_lon or lo_lat >= hi_lat:
            return boxes[0]
        return (lo_lon, lo_lat, hi_lon, hi_lat)

    def describe(self) -> dict:
        """Provenance: the ensemble, then each member's own (files, issue and valid times)."""
        first = self.members[0].forecast.describe()
        out = {k: v for k, v in first.items() if k not in ("files", "valid_times", "notes")}
        out.update(
            kind="ensemble",
            member_kind=first.get("kind"),
            members=len(self.members),
            member_origin=self.origin,
            files=list(self.files),
            valid_times=[iso_time(v) for v in self.valid_times],
            bounds=list(self.bounds),
        )
        out["member_forecasts"] = [self._member_description(m) for m in self.members]
        notes = list(first.get("notes", []))
        spans = {tuple(d["valid_time_range"]) for d in out["member_forecasts"]}
        if len(spans) > 1:
            notes.append(
                "the members cover different valid times: each member's coverage of the "
                "route is reported (member_coverage); a time a member does not cover is "
                "that member's coverage gap"
            )
        out["notes"] = notes
        return out

    @staticmethod
    def _member_description(m):
        d = m.forecast.describe()
        times = list(d.get("valid_times") or [])
        return {
            "member": m.label,
            "files": [Path(f).name for f in d.get("files", [])],  # names (the paths: files)
            "format": d.get("format"),
            "issue_time": d.get("issue_time"),
            "valid_time_range": [times[0], times[-1]] if times else [None, None],
        }
