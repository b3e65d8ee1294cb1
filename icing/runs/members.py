"""The members of a screening: each member's whole columns at the samples, diagnosed together.

A single forecast is one member. An ensemble (:class:`icing.forecast.ensemble.
EnsembleForecast`) has a member per forecast; a parametric spread (``--spread``,
:mod:`icing.runs.spread`) has a member per variant of the column options on the
one forecast's columns. Every member's columns are diagnosed in one call of
:func:`icing.calc.column.diagnose_columns` where the members' columns share their
variables and level count (one file's members always do; different models are
grouped by what they carry), and the diagnoses are joined along the column axis,
so the read-off and the airframe physics then run over every member at once.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from icing import codes

__all__ = ["MemberColumns", "member_columns", "join_diagnoses", "diagnose_grouped"]


@dataclass(frozen=True)
class MemberColumns:
    """Every member's diagnosed columns and which of them each sample uses."""

    labels: tuple
    """The members' names, in member order (``("forecast",)`` for a single forecast)."""
    kind: str
    """``"single"``, ``"ensemble"`` or ``"spread"``."""
    diag: object
    """:class:`~icing.calc.column.ColumnDiagnosis` of all members' columns, joined."""
    candidates: np.ndarray
    """int (n, member, k): columns of ``diag`` per sample and member, -1 padded."""
    covered: np.ndarray
    """bool (n, member): the member has a usable column at the sample."""
    gap_reason: np.ndarray
    """str (n, member): why a member has none there ("" where covered)."""
    first: object
    """The first member's :class:`~icing.forecast.columns.ColumnSet` (the ground under
    the samples, where the forecast gives no other)."""
    details: tuple = ()
    """Per member, a dict for the outputs (spread: the choice varied and its source)."""

    @property
    def count(self) -> int:
        """Number of members."""
        return len(self.labels)


def _pad_levels(a, n_lev, fill):
    """Pad a (m, L) array with ``fill`` on top to (m, n_lev)."""
    if a.shape[-1] == n_lev:
        return a
    pad = np.full(a.shape[:-1] + (n_lev - a.shape[-1],), fill, dtype=a.dtype)
    return np.concatenate([a, pad], axis=-1)


def _fill_of(name, a):
    """Return the value of a padded (missing) level: NaN, False, or the "unknown" code."""
    if a.dtype == bool:
        return False
    if name in ("sld_class", "precip_type"):
        return codes.GAP
    if np.issubdtype(a.dtype, np.integer):
        return 0
    return np.nan


def join_diagnoses(diags):
    """Join column diagnoses along the column axis (levels padded on top as unusable).

    Parameters
    ----------
    diags : sequence of ColumnDiagnosis
        Diagnoses of (m_i, L_i) columns.

    Returns
    -------
    ColumnDiagnosis
        (sum m_i, max L_i) columns; padded levels are invalid (NaN, ``valid`` False,
        ``sld_class`` GAP); warnings joined, the first diagnosis's assumptions.
    """
    diags = list(diags)
    if len(diags) == 1:
        return diags[0]
    n_lev = max(np.asarray(d.pressure).shape[-1] for d in diags)
    values = {}
    for f in fields(diags[0]):
        if f.name in ("warnings", "assumptions"):
            continue
        parts = [np.asarray(getattr(d, f.name)) for d in diags]
        if parts[0].ndim == 2:
            fill = _fill_of(f.name, parts[0])
            parts = [_pad_levels(p, n_lev, fill) for p in parts]
        values[f.name] = np.concatenate(parts, axis=0)
    warnings = list(dict.fromkeys(w for d in diags for w in d.warnings))
    return type(diags[0])(**values, warnings=warnings, assumptions=diags[0].assumptions)


def _stack(colsets, offsets):
    """Candidates (n, member, k), coverage and gap reasons of several column sets."""
    n = len(np.asarray(colsets[0].covered))
    k = max(np.asarray(c.candidates).shape[1] for c in colsets)
    cand = np.full((n, len(colsets), k), -1, dtype=np.int64)
    covered = np.zeros((n, len(colsets)), bool)
    reason = np.full((n, len(colsets)), "", dtype=object)
    for j, (cs, off) in enumerate(zip(colsets, offsets, strict=True)):
        c = np.asarray(cs.candidates)
        ok = np.asarray(cs.covered, bool)
        cand[:, j, : c.shape[1]] = np.where((c >= 0) & ok[:, None], c + off, -1)
        covered[:, j] = ok
        reason[:, j] = np.asarray(cs.gap_reason, dtype=object)
    return cand, covered, reason


def _diagnose_groups(colsets, options):
    """Diagnose the members' column sets (see :func:`diagnose_grouped`)."""
    return diagnose_grouped([cs.columns for cs in colsets], options)


def diagnose_grouped(column_dicts, options, *, compiled=False):
    """Diagnose several members' columns: one call per group of members with the same inputs.

    Parameters
    ----------
    column_dicts : sequence of dict
        Each member's ``diagnose_columns`` keyword arrays, (m_i, level) and (m_i,).
    options : ColumnOptions
    compiled : bool, optional
        Passed to ``diagnose_columns`` (large grids: the compiled column physics and SLD).

    Returns
    -------
    (ColumnDiagnosis, list of int)
        The joined diagnosis (:func:`join_diagnoses`) and each member's first column in it.
    """
    from icing.calc.column import diagnose_columns

    def signature(cols):
        return tuple(sorted((k, np.asarray(v).shape[1:]) for k, v in cols.items()))

    groups = {}
    for j, cols in enumerate(column_dicts):
        groups.setdefault(signature(cols), []).append(j)
    diags, offsets, start = [], [0] * len(column_dicts), 0
    for members in groups.values():
        cols = {
            key: np.concatenate([np.asarray(column_dicts[j][key]) for j in members])
            for key in column_dicts[members[0]]
        }
        diags.append(diagnose_columns(**cols, options=options, compiled=compiled))
        for j in members:
            offsets[j] = start
            start += len(np.asarray(column_dicts[j]["pressure"]))
    return join_diagnoses(diags), offsets


def member_columns(forecast, samples, column_options, *, spread=None) -> MemberColumns:
    """Bring every member's whole columns to the samples and diagnose them.

    Parameters
    ----------
    forecast : Forecast
        A single forecast, or an :class:`~icing.forecast.ensemble.EnsembleForecast`.
    samples : RouteSamples
        Where and when.
    column_options : ColumnOptions
        The stated column-physics choices.
    spread : sequence of SpreadVariant, optional
        A parametric spread on a single forecast (:func:`icing.runs.spread.spread_variants`).

    Returns
    -------
    MemberColumns
    """
    from icing.calc.column import diagnose_columns

    lat, lon, t = samples.lat, samples.lon, samples.time
    if hasattr(forecast, "member_columns_at"):
        colsets = forecast.member_columns_at(lat, lon, t)
        diag, offsets = _diagnose_groups(colsets, column_options)
        cand, covered, reason = _stack(colsets, offsets)
        details = tuple({"member": m.label} for m in forecast.members)
        return MemberColumns(
            forecast.labels, "ensemble", diag, cand, covered, reason, colsets[0], details
        )
    colset = forecast.columns_at(lat, lon, t)
    if not spread:
        diag = diagnose_columns(**colset.columns, options=column_options)
        cand, covered, reason = _stack([colset], [0])
        return MemberColumns(("forecast",), "single", diag, cand, covered, reason, colset)
    diags = [diagnose_columns(**colset.columns, options=v.options) for v in spread]
    m = colset.n_columns
    cand, covered, reason = _stack([colset] * len(spread), [i * m for i in range(len(spread))])
    return MemberColumns(
        tuple(v.label for v in spread),
        "spread",
        join_diagnoses(diags),
        cand,
        covered,
        reason,
        colset,
        tuple(v.describe() for v in spread),
    )
