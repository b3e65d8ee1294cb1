"""The members of a grid run: an ensemble, or a parametric spread, block by block.

Each block's members are evaluated together, in one vectorised pass: their columns
are folded into one column axis (member-major: column ``j * m + i`` is member ``j``
at cell ``i``), diagnosed in one :func:`icing.calc.diagnose_columns` call where they
carry the same variables and levels (one file's members always do; a spread's
members differ in their options, one call each over the same columns), reduced to
band products at once (:func:`icing.hazards.bands.band_products`), then the member
axis is reduced per cell (:func:`icing.hazards.gridmembers.reduce_band_members`).
A block of an ensemble holds ``block_columns // members`` grid cells, so a worker
diagnoses at most ``block_columns`` columns at a time whatever the member count:
its memory stays that of a single forecast's block.

Where members come from:

- ``"ensemble"``: a file's member dimension (GRIB ``number``, NetCDF
  ``realization``...): every field of a block is one read across the members;
- ``"files"``: forecasts given as members (``--ensemble``); they must share one grid
  (levels may differ); a member without the valid time is a gap at every cell;
- ``"spread"``: one forecast read once per block, diagnosed once per variant of the
  column options (``--spread``, :mod:`icing.runs.spread`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing import codes
from icing.errors import InputError
from icing.hazards.bands import COVERAGE_GAP, BandProducts, band_products
from icing.hazards.ensemble import FRACTION_MEANING, MemberStatistic
from icing.hazards.gridmembers import reduce_band_members

__all__ = ["MemberPlan", "member_plan", "reference_grid", "member_block_products"]


@dataclass(frozen=True)
class MemberPlan:
    """The members of a grid run and how their blocks are read (small, picklable)."""

    kind: str
    """``"ensemble"`` (a file's member dimension), ``"files"`` or ``"spread"``."""
    labels: tuple
    """The members' names, in member order."""
    statistic: MemberStatistic
    """The statistic whose word is each cell's ``severity``."""
    spread: tuple = ()
    """The spread's variants (:class:`icing.runs.spread.SpreadVariant`), for ``"spread"``."""
    origin: str = ""
    """Where the members come from, in words (for the assumptions)."""

    @property
    def count(self) -> int:
        """Number of members."""
        return len(self.labels)

    def describe(self) -> dict:
        """Return the members for the assumptions of the outputs."""
        out = {
            "members": self.count,
            "origin": self.origin,
            "member_list": [v.describe() for v in self.spread]
            if self.spread
            else [{"member": label} for label in self.labels],
            "statistic": self.statistic.name,
            "statistic_meaning": self.statistic.describe(),
            "member_fraction": FRACTION_MEANING,
            "evaluation": "every block's members in one vectorised pass (columns folded "
            "member-major); a block holds block_columns // members grid cells",
        }
        return out


def member_plan(forecast, *, statistic="median", spread=None, column_options=None):
    """Return the members of a grid run over ``forecast`` (None for a single forecast).

    Raises
    ------
    InputError
        ``--spread`` with an ensemble, members that are not gridded or not on one grid.
    """
    statistic = MemberStatistic.parse(statistic)
    if hasattr(forecast, "member_columns_at"):
        if spread:
            raise InputError(
                "--spread applies to a single forecast, not to an ensemble",
                where="--spread",
                fix="grid the ensemble, or the spread of one of its members (--member N)",
            )
        _check_member_grids(forecast)
        kind = "ensemble" if forecast.joint is not None else "files"
        return MemberPlan(kind, tuple(forecast.labels), statistic, origin=forecast.origin)
    if spread:
        from icing.runs.spread import spread_variants

        variants = spread_variants(column_options, spread)
        origin = "parametric spread: the stated column options with one choice changed each"
        return MemberPlan("spread", tuple(v.label for v in variants), statistic, variants, origin)
    return None


def reference_grid(forecast):
    """Return the grid forecast whose grid the cells are (an ensemble's first member's)."""
    if hasattr(forecast, "member_columns_at"):
        return forecast.joint or forecast.members[0].forecast
    return forecast


def _check_member_grids(forecast):
    """Refuse members that are not gridded or not on the first member's grid."""
    ref = forecast.members[0].forecast
    for m in forecast.members:
        fc = m.forecast
        if getattr(fc, "kind", None) != "grid":
            raise InputError(
                f"member {m.label!r} is not a gridded forecast",
                where="--ensemble",
                fix="give GRIB, NetCDF or WRF files as members (profile and sounding files "
                "are points: screen routes against them)",
            )
        a, b = ref.sources[0], fc.sources[0]
        same = (
            a.x.shape == b.x.shape
            and a.y.shape == b.y.shape
            and np.allclose(a.x, b.x)
            and np.allclose(a.y, b.y)
            and ((a.crs is None and b.crs is None) or (a.crs is not None and a.crs == b.crs))
        )
        if not same:
            raise InputError(
                f"member {m.label!r} is on another grid than {forecast.members[0].label!r} "
                f"({b.y.size}x{b.x.size} against {a.y.size}x{a.x.size} points, or another "
                "projection)",
                where="--ensemble",
                fix="give members on one model grid (regrid them onto one first), or screen "
                "routes against them (icing screen takes members on different grids)",
            )


def job_files(forecast, plan):
    """``(paths, extra load keywords)`` for a worker to open the members again."""
    if plan is not None and plan.kind == "files":
        groups = dict.fromkeys(tuple(str(p) for p in m.forecast.files) for m in forecast.members)
        return tuple(groups), {"ensemble": True}
    return tuple(str(p) for p in forecast.files), {}


def member_block_products(forecast, block, job):
    """Return the reduced band products of every member of one block (module docstring)."""
    plan = job.members
    if plan.kind == "ensemble":
        from icing.forecast.blocks import read_member_block_columns

        joint = forecast.joint
        bc = read_member_block_columns(joint, _at_time(forecast, joint, block))
        diag = _diagnose([bc.columns], job)
        ground = bc.columns.get("surface_height")
        prod = band_products(diag, job.airframe, job.bands, ground=ground, compiled=job.compiled)
    elif plan.kind == "spread":
        prod = _spread_products(forecast, block, job)
    else:
        prod = _file_member_products(forecast, block, job)
    return reduce_band_members(prod, plan.count, plan.statistic)


def _diagnose(column_dicts, job):
    from icing.runs.members import diagnose_grouped

    return diagnose_grouped(column_dicts, job.column_options, compiled=job.compiled)[0]


def _at_time(forecast, member, block):
    """Return the block at the member's index of the ensemble's valid time (None: none)."""
    from dataclasses import replace

    t = np.asarray(forecast.valid_times, "datetime64[ms]")[block.time_index]
    hit = np.flatnonzero(np.asarray(member.valid_times, "datetime64[ms]") == t)
    return replace(block, time_index=int(hit[0])) if hit.size else None


def _spread_products(forecast, block, job):
    """One read of the block, one diagnosis per variant, one band reduction over them all."""
    from icing.calc.column import diagnose_columns
    from icing.forecast.blocks import read_block_columns
    from icing.runs.members import join_diagnoses

    bc = read_block_columns(forecast, block)
    diag = join_diagnoses(
        [
            diagnose_columns(**bc.columns, options=v.options, compiled=job.compiled)
            for v in job.members.spread
        ]
    )
    ground = bc.columns.get("surface_height")
    if ground is not None:
        ground = np.tile(np.asarray(ground, float), job.members.count)
    return band_products(diag, job.airframe, job.bands, ground=ground, compiled=job.compiled)


def _file_member_products(forecast, block, job):
    """Each member's block read on its own; the members with the valid time evaluated at once."""
    from icing.forecast.blocks import read_block_columns

    present, cols = [], []
    for j, m in enumerate(forecast.members):
        own = _at_time(forecast, m.forecast, block)
        if own is not None:
            present.append(j)
            cols.append(read_block_columns(m.forecast, own).columns)
    cells = block.shape[0] * block.shape[1]
    if not present:
        return _gap_products(job.bands.count, job.members.count * cells)
    diag = _diagnose(cols, job)
    ground = None
    if all("surface_height" in c for c in cols):
        ground = np.concatenate([np.asarray(c["surface_height"], float) for c in cols])
    prod = band_products(diag, job.airframe, job.bands, ground=ground, compiled=job.compiled)
    if len(present) == job.members.count:
        return prod
    return _with_missing(prod, present, job.members.count, cells)


def _gap_products(bands, columns):
    """Band products of columns without data: every band a coverage gap."""
    gap = np.full((bands, columns), codes.GAP, np.int8)
    nan = np.full((bands, columns), np.nan, np.float32)
    cov = np.full((bands, columns), COVERAGE_GAP, np.int8)
    return BandProducts(gap, gap.copy(), cov, nan, nan.copy(), nan.copy())


def _with_missing(prod, present, members, cells):
    """Insert gap products for the members absent at this valid time (member-major)."""
    full = _gap_products(prod.severity.shape[0], members * cells)
    nb = prod.severity.shape[0]
    out = {}
    for name in ("severity", "sld", "coverage", "lwc", "mvd", "accretion_rate"):
        a = getattr(full, name).reshape(nb, members, cells)
        a[:, present] = getattr(prod, name).reshape(nb, len(present), cells)
        out[name] = a.reshape(nb, members * cells)
    return BandProducts(**out)
