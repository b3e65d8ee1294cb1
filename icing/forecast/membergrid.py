"""The members of files with a member dimension, read together.

A :class:`MemberGridForecast` reads the same tiles as a :class:`GridForecast`, with a
leading member axis: each block is one read across the file's member dimension
(:func:`icing.forecast.fields.read_members`), and the samples are located, and the
corners and times weighted, once for every member. What comes out is each member's
:class:`~icing.forecast.columns.ColumnSet`, the same as the member's own
``GridForecast`` gives (``tests/test_ensemble_forecast.py`` holds them equal).
"""

from __future__ import annotations

import numpy as np

from icing.errors import ForecastError
from icing.forecast.columns import as_samples
from icing.forecast.fields import read_members
from icing.forecast.grid import GridForecast

__all__ = ["MemberGridForecast"]


class MemberGridForecast(GridForecast):
    """Every member of files with a member dimension, read and interpolated together.

    Parameters
    ----------
    sources : list of GridSource
        The files (lead times), each with the same ``member_dim`` and ``members``.
    **options
        As :class:`GridForecast`.
    """

    kind = "grid-members"
    _time_axis = 1  # blocks are (member, [time,] [level,] y, x)

    def __init__(self, sources, **options):
        ref = sources[0]
        self.member_dim = ref.member_dim
        self.n_members = max(1, len(ref.members))
        # samples interpolated at a time: the corner arrays of all members stay the size
        # of a single forecast's (memory bounded whatever the member count)
        options.setdefault("chunk", max(16, 8192 // self.n_members))
        # tiles a member count times smaller in area: a block of every member holds
        # about as many values as a single forecast's block
        hint = ref.tile_hint
        base = max(8, min(64, hint)) if hint else 32
        options.setdefault("tile", max(8, int(base / self.n_members**0.5)))
        super().__init__(sources, **options)

    def _read_field(self, fld, tslice, ys, xs):
        """Read a block of every member, levels surface first: (member, [time,] [level,] y, x)."""
        vals = read_members(fld, self.member_dim, self.n_members, tslice, ys, xs)
        if fld.levelled:
            vals = np.take(vals, self._order, axis=2 if fld.timed else 1)
        return np.ascontiguousarray(vals)

    def read_block(self, key, time_index, ys, xs):
        """Read one field on a window at one valid time for every member, straight from the file.

        Returns ``(member, level, y, x)`` (levelled fields, levels surface first) or
        ``(member, y, x)``, SI; one read across the member dimension (a grid run's block).
        """
        fi, lt = self._time_map[int(time_index)]
        fld = self.sources[fi].fields[key]
        vals = self._read_field(fld, slice(lt, lt + 1) if fld.timed else None, ys, xs)
        return vals[:, 0] if fld.timed else vals

    def member_columns_at(self, lat, lon, time, *, fields=None) -> list:
        """Each member's :class:`ColumnSet` at the samples (one read for all members)."""
        lat, lon, t = as_samples(lat, lon, time)
        vals, use, gap = self._interpolate(lat, lon, t, self._keys(fields))
        out = []
        for j in range(self.n_members):
            one = {
                k: (v[:, j] if use.size else v) for k, v in vals.items()
            }  # empty arrays are the same for every member
            out.append(self._column_set(one, use, gap.copy(), lat, lon, t))
        return out

    def columns_at(self, lat, lon, time, **kwargs):
        """Refused: every member has its own column (see :meth:`member_columns_at`)."""
        raise ForecastError(
            f"an ensemble of {self.n_members} members has no single column",
            where="ensemble",
            fix="pick one member with --member N",
        )

    @staticmethod
    def _one_value(values):
        """Return the members' median per sample (the ground); NaN where unknown."""
        out = np.full(values.shape[0], np.nan)
        known = np.isfinite(values).any(axis=1)
        if known.any():
            out[known] = np.nanmedian(values[known], axis=1)
        return out

    def member_winds_at(self, lat, lon, altitude_m, time):
        """Wind (u, v) [m/s] of every member at the points, (member, n); 0 where unknown.

        The nearest level by height, as :meth:`Forecast.wind_at` for one forecast.
        """
        lat, lon, t = as_samples(lat, lon, time)
        alt = np.broadcast_to(np.asarray(altitude_m, dtype=float), lat.shape)
        shape = (self.n_members,) + lat.shape
        u, v = np.zeros(shape), np.zeros(shape)
        if not self.has_wind or lat.size == 0:
            return u, v
        for j, cs in enumerate(self.member_columns_at(lat, lon, t, fields=("wind_u", "wind_v"))):
            if cs.wind_u is None:
                continue
            col = cs.candidates[:, 0]
            ok = col >= 0
            c = np.where(ok, col, 0)
            dz = np.abs(cs.columns["height"][c] - alt[:, None])
            dz = np.where(np.isfinite(dz), dz, np.inf)
            lev = np.argmin(dz, axis=-1)[:, None]
            uu = np.take_along_axis(cs.wind_u[c], lev, -1)[:, 0]
            vv = np.take_along_axis(cs.wind_v[c], lev, -1)[:, 0]
            good = ok & np.isfinite(uu) & np.isfinite(vv) & np.isfinite(dz.min(axis=-1))
            u[j] = np.where(good, uu, 0.0)
            v[j] = np.where(good, vv, 0.0)
        return u, v
