"""Icing over altitude bands, column by column: the products of a grid run.

A grid run diagnoses every column of a block of the forecast
(:func:`icing.calc.diagnose_columns`) and reduces it at once to a few numbers per
altitude band, so that memory follows the block, never the grid. Each band is read
with the same functions as a route and ``icing profile``
(:func:`icing.hazards.readoff.read_off`, :func:`icing.hazards.readoff.severity_at`, the
airframe's level-flight speed schedule in the forecast's air):

- **Where a band is read.** At its two edges and at every forecast level inside
  it. The read-off is linear between levels, so its extremes lie there; a cell and
  ``icing profile`` at its centre give the same severity at every level inside the
  band, and the band's word is the worst of those and of its edges.
- **Collector physics only where there is liquid.** Every altitude is read first
  for its validity, ground, liquid and SLD class only; the whole read-off and
  :func:`icing.calc.airframe_icing` run only where there is at least 0.01 g/m3 of
  cloud or SLD liquid (``IN_CLOUD_LWC``). Elsewhere the collector physics catches
  nothing and the word is "none" (the airframe chain gives the same: it ignores
  liquid below that threshold).
- **Below the ground.** The part of a band under the surface is left out: the word
  is the worst over the part above it. A band wholly under the surface is not a
  hazard and not "none" either: severity ``codes.GAP`` with coverage
  ``"below-ground"``.
- **Missing data is never "no icing".** An altitude above the ground without usable
  forecast data is unknown. Where the rest of the band shows icing, the band
  shows that icing (at least that) and its coverage is ``"partial"``; where the rest
  shows none, none cannot be asserted: severity ``codes.GAP``, coverage ``"gap"``.

The float products are those of the band's worst altitude, ranked by severity, then
accretion rate, then cloud liquid: its cloud liquid water content, the median volume
diameter of its cloud drops (NaN where there are none) and the accretion rate on the
airframe's worst collector.

Arrays are shaped (band, column); a block's columns are flat (``m = rows x columns``,
and a leading member axis, when ensembles are gridded, folds into ``m`` the same way).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing import codes
from icing.calc.airspeed import PHASE_LEVEL
from icing.constants import FT, IN_CLOUD_LWC
from icing.errors import InputError
from icing.hazards._compiled import compiled_kernels
from icing.hazards.readoff import (
    EXTRAPOLATE_M,
    locate,
    read_located,
    severity_at,
    sorted_levels,
    subset,
)

__all__ = [
    "Bands",
    "parse_bands",
    "BandProducts",
    "band_products",
    "COVERAGE",
    "COVERAGE_COMPLETE",
    "COVERAGE_PARTIAL",
    "COVERAGE_GAP",
    "COVERAGE_BELOW_GROUND",
    "MAX_BANDS",
    "PRODUCT_DTYPES",
]

#: Coverage of a band in a cell, index = code (written as CF flags).
COVERAGE = ("complete", "partial", "gap", "below-ground")
COVERAGE_COMPLETE, COVERAGE_PARTIAL, COVERAGE_GAP, COVERAGE_BELOW_GROUND = range(4)

#: The products of a band and their types (classes int8, fields float32).
PRODUCT_DTYPES = {
    "severity": np.int8,
    "sld": np.int8,
    "coverage": np.int8,
    "lwc": np.float32,
    "mvd": np.float32,
    "accretion_rate": np.float32,
}

#: The most bands of one run: 100 ft bands from the sea to FL600 would be 600; a
#: hundred bands already resolve 500 ft over 50,000 ft (each band is an output layer).
MAX_BANDS = 100
#: Band edges: from below the Dead Sea shore to 20 km, as the route altitudes. [ft]
_EDGE_RANGE_FT = (-1500.0, 65600.0)
#: The thinnest band: finer than 100 ft resolves nothing a forecast's levels can tell. [ft]
_MIN_DEPTH_FT = 100.0


@dataclass(frozen=True)
class Bands:
    """Altitude bands [ft MSL]: band ``i`` is ``edges_ft[i] .. edges_ft[i + 1]``."""

    edges_ft: tuple
    """Ascending band edges. [ft MSL]"""

    @property
    def count(self) -> int:
        """Number of bands."""
        return len(self.edges_ft) - 1

    @property
    def edges_m(self) -> np.ndarray:
        """Band edges [m MSL]."""
        return np.asarray(self.edges_ft, float) * FT

    def bounds_ft(self, i):
        """(lowest, highest) altitude of band ``i`` [ft MSL]."""
        return float(self.edges_ft[i]), float(self.edges_ft[i + 1])

    def label(self, i) -> str:
        """Return a short label of band ``i``, e.g. ``"4,000-6,000 ft"``."""
        lo, hi = self.bounds_ft(i)
        return f"{lo:,.0f}-{hi:,.0f} ft"

    def describe(self) -> dict:
        """Return the bands as a JSON-able dict (assumptions of the outputs)."""
        return {
            "edges_ft": [float(e) for e in self.edges_ft],
            "reference": "msl",
            "read_at": "each band's edges and every forecast level inside it (the read-off "
            "is linear between levels); the worst of them",
        }


def parse_bands(text) -> Bands:
    """Parse ``START:STOP:STEP`` or a list ``A,B,C,...`` of band edges [ft MSL].

    >>> parse_bands("0:6000:2000").edges_ft
    (0.0, 2000.0, 4000.0, 6000.0)
    >>> parse_bands("0,3000,10000").count
    2
    """
    where, fix = "--bands-ft", "write START:STOP:STEP, e.g. 0:20000:2000, or edges A,B,C"
    raw = str(text).strip()
    try:
        parts = [float(v) for v in raw.split(":" if ":" in raw else ",")]
    except ValueError:
        raise InputError(f"{raw!r} is not a set of band edges", where=where, fix=fix) from None
    if ":" in raw:
        if len(parts) != 3 or not parts[2] > 0:
            raise InputError(f"{raw!r} is not START:STOP:STEP", where=where, fix=fix)
        start, stop, step = parts
        n = int(np.floor((stop - start) / step + 1e-9)) if np.isfinite(stop - start) else -1
        if n > MAX_BANDS:
            raise InputError(
                f"{raw!r} gives {n} bands, above the limit of {MAX_BANDS}",
                where=where,
                fix="use a larger step or a narrower range",
            )
        parts = [start + i * step for i in range(n + 1)]
    return _checked(parts, raw, where)


def _checked(edges, raw, where):
    """Refuse edges that give no band, run backwards, are too thin or out of range."""
    e = np.asarray(edges, float)
    if e.size < 2 or not np.all(np.isfinite(e)):
        raise InputError(f"{raw!r} gives no band", where=where, fix="give at least two edges")
    if e.size - 1 > MAX_BANDS:
        raise InputError(
            f"{raw!r} gives {e.size - 1} bands, above the limit of {MAX_BANDS}",
            where=where,
            fix="give fewer edges",
        )
    if np.any(np.diff(e) < _MIN_DEPTH_FT):
        raise InputError(
            f"{raw!r}: edges must rise by at least {_MIN_DEPTH_FT:g} ft",
            where=where,
            fix="give ascending edges at least 100 ft apart",
        )
    lo, hi = _EDGE_RANGE_FT
    if e[0] < lo or e[-1] > hi:
        raise InputError(
            f"{raw!r} reaches outside {lo:g}..{hi:g} ft",
            where=where,
            fix="give edges in feet MSL, from below the sea to 20 km",
        )
    return Bands(tuple(float(v) for v in e))


@dataclass(frozen=True)
class BandProducts:
    """The icing products of a set of columns per altitude band; arrays (band, column)."""

    severity: np.ndarray
    """int8 ``codes.SEVERITY`` index, worst in the band; ``codes.GAP`` (-1) where not covered."""
    sld: np.ndarray
    """int8 ``codes.SLD_*``, worst in the band; ``codes.GAP`` where not covered."""
    coverage: np.ndarray
    """int8 :data:`COVERAGE` code of the band in each column."""
    lwc: np.ndarray
    """float32 cloud liquid water content at the band's worst altitude (NaN in gaps). [kg m-3]"""
    mvd: np.ndarray
    """float32 median volume diameter of the cloud drops there (NaN where none). [m]"""
    accretion_rate: np.ndarray
    """float32 ice accretion rate on the airframe's worst collector there. [m s-1]"""


def _targets(height, edges):
    """Altitudes read in each column, ascending: the band edges and the levels inside.

    Returns (m, T) heights [m], NaN padded at the top of each row.
    """
    z = np.asarray(height, float)
    with np.errstate(invalid="ignore"):
        inside = np.isfinite(z) & (z > edges[0]) & (z < edges[-1])
    keep = inside.any(axis=0)  # only levels inside the range in some column
    levels = np.where(inside[:, keep], z[:, keep], np.nan)
    both = np.concatenate([np.broadcast_to(edges, (z.shape[0], edges.size)), levels], axis=1)
    return np.sort(both, axis=1)  # NaN sort last


def _liquid_state(diag, tgt, ground):
    """Read every target for its validity and liquid; return the pieces the bands need."""
    m = tgt.shape[0]
    ci = np.broadcast_to(np.arange(m)[:, None], tgt.shape)
    at = locate(diag, ci, tgt)  # once: the liquid ones are read again
    s = read_located(diag, at, fields=("lwc", "sld_lwc", "sld_class"))
    below, valid = s["below_ground"], s["valid"]
    if ground is not None:
        g = np.asarray(ground, float)[:, None]
        with np.errstate(invalid="ignore"):
            # the target itself: the read-off holds the lowest level's height below it
            under = np.isfinite(g) & (tgt < g - 1.0)
        below, valid = below | under, valid & ~under
    with np.errstate(invalid="ignore"):
        liquid = valid & ((s["lwc"] >= IN_CLOUD_LWC) | (s["sld_lwc"] >= IN_CLOUD_LWC))
    return s, at, below, valid, liquid


def _icing_where_liquid(diag, airframe, tgt, located, liquid, valid):
    """Severity, accretion rate [mm/h] and cloud MVD [m] at every target (m, T)."""
    sev = np.where(valid, codes.SEV_NONE, codes.GAP).astype(np.int8)
    rate = np.where(valid, 0.0, np.nan)
    mvd = np.full(tgt.shape, np.nan)
    at = np.nonzero(liquid)
    if at[0].size:
        sev[at], rate[at], mvd[at] = _collector_physics(
            diag, airframe, subset(located, at), valid[at], compiled=False
        )
    return sev, rate, mvd


def _collector_physics(diag, airframe, located, valid, compiled):
    """Severity, accretion rate [mm/h] and cloud MVD [m] at located liquid targets."""
    st = read_located(diag, located, compiled=compiled)
    st["valid"] = st["valid"] & valid  # the ground test of _liquid_state
    tas = airframe.schedule.true_airspeed(
        PHASE_LEVEL, st["pressure"], st["temperature"], st["height"]
    )
    sev, rate = severity_at(airframe, st, tas, compiled=compiled)
    with np.errstate(invalid="ignore"):
        mvd = np.where(st["lwc"] >= IN_CLOUD_LWC, st["mvd"], np.nan)
    return sev, rate, mvd


def band_products(diag, airframe, bands: Bands, *, ground=None, compiled=False) -> BandProducts:
    """Reduce diagnosed columns to the icing products of each altitude band.

    Parameters
    ----------
    diag : ColumnDiagnosis
        Diagnosis of m columns, fields shaped (m, level).
    airframe : Airframe
        The airframe (its collectors and its speed schedule).
    bands : Bands
        The altitude bands [ft MSL].
    ground : array_like, shape (m,), optional
        Surface height under each column (NaN where unknown). [m]
    compiled : bool, optional
        Everything but the collector physics in the compiled loops where numba is
        installed (:mod:`icing.hazards._compiled`; the same values). Worth it for
        large grids only: importing numba and loading the loops costs about 0.3 s a
        process.

    Returns
    -------
    BandProducts
        Arrays shaped (band, m); see the module docstring for what each holds.
    """
    loops = compiled_kernels() if compiled else None
    if loops is not None:
        return _products_compiled(loops, diag, airframe, bands.edges_m, ground)
    tgt = _targets(diag.height, bands.edges_m)
    s, located, below, valid, liquid = _liquid_state(diag, tgt, ground)
    sev, rate, mvd = _icing_where_liquid(diag, airframe, tgt, located, liquid, valid)
    lwc = np.where(valid, s["lwc"], np.nan)
    sld = np.where(valid, s["sld_class"], codes.GAP)
    present = np.isfinite(tgt)
    known = present & (sev >= codes.SEV_NONE)
    above = present & ~below
    return _reduce_numpy(tgt, bands.edges_m, known, above, sev, sld, rate, lwc, mvd)


def _products_compiled(loops, diag, airframe, edges, ground):
    """:func:`band_products` by the compiled loops, the collector physics aside.

    One pass per column to the liquid test (``_loops.band_state``: the targets,
    located, checked and read as :func:`_liquid_state` reads them), the collector
    physics at the liquid targets alone as in numpy, one reduction pass.
    """
    z = np.asarray(diag.height, float)
    m, nlev = z.shape
    with np.errstate(invalid="ignore"):  # strictly ascending and finite: sorted already
        in_order = bool(np.all(z[:, 1:] > z[:, :-1]) and np.all(z[:, 0] > -np.inf))
    zs, order = (z, np.empty((0, nlev), np.int64)) if in_order else sorted_levels(z)
    g = np.full(m, np.nan) if ground is None else np.asarray(ground, float).reshape(m)

    def flat(name, dtype):
        a = np.broadcast_to(np.asarray(getattr(diag, name)), (m, nlev))
        return np.ascontiguousarray(a, dtype=dtype).reshape(-1)

    tgt, fields, n, at, w, inside, f_lo, f_hi = loops.band_state(
        *(np.ascontiguousarray(a) for a in (z, zs)),
        np.ascontiguousarray(order, dtype=np.int64),
        np.ascontiguousarray(edges, dtype=float),
        EXTRAPOLATE_M,
        np.ascontiguousarray(g),
        *(flat(k, bool) for k in ("valid", "below_ground")),
        *(flat(k, float) for k in ("lwc", "sld_lwc")),
        flat("sld_class", np.int8),
    )
    known, above, sev, sld, rate, lwc, mvd = fields
    if n:
        located = {"shape": (m, nlev), "present": np.ones(n, bool), "w": w[:n]}
        located.update(inside=inside[:n], f_lo=f_lo[:n], f_hi=f_hi[:n])
        got = _collector_physics(diag, airframe, located, True, compiled=True)
        for a, v in zip((sev, rate, mvd), got, strict=True):
            a.reshape(-1)[at[:n]] = v
        known.reshape(-1)[at[:n]] = sev.reshape(-1)[at[:n]] >= codes.SEV_NONE
    return _reduce(tgt, edges, known, above, sev, sld, rate, lwc, mvd, compiled=True)


def _reduce(tgt, edges, known, above, sev, sld, rate, lwc, mvd, compiled=True):
    """Per band: worst severity and SLD, coverage, and the worst altitude's values.

    ``compiled``: in the compiled loop where numba is installed
    (:mod:`icing.hazards._compiled`), else in numpy (:func:`_reduce_numpy`, the
    reference: the same values).
    """
    loops = compiled_kernels() if compiled else None
    if loops is None:
        return _reduce_numpy(tgt, edges, known, above, sev, sld, rate, lwc, mvd)
    nb, m = edges.size - 1, tgt.shape[0]
    classes = np.empty((3, nb, m), np.int8)
    fields = np.empty((3, nb, m), np.float32)
    args = [np.ascontiguousarray(a) for a in (tgt, edges, known, above, sev, sld, rate, lwc, mvd)]
    loops.reduce_bands(*args, classes, fields)
    names = ("severity", "sld", "coverage"), ("lwc", "mvd", "accretion_rate")
    return BandProducts(
        **dict(zip(names[0], classes, strict=True)), **dict(zip(names[1], fields, strict=True))
    )


def _reduce_numpy(tgt, edges, known, above, sev, sld, rate, lwc, mvd):
    """:func:`_reduce` in numpy: each band a window of every row, all rows at once."""
    m, nt = tgt.shape
    nb = edges.size - 1
    out = {
        "severity": np.empty((nb, m), np.int8),
        "sld": np.empty((nb, m), np.int8),
        "coverage": np.empty((nb, m), np.int8),
        "lwc": np.empty((nb, m), np.float32),
        "mvd": np.empty((nb, m), np.float32),
        "accretion_rate": np.empty((nb, m), np.float32),
    }
    # rows are ascending: each band's targets are a short window of each row
    with np.errstate(invalid="ignore"):
        pos = np.stack([np.sum(tgt < e, axis=1) for e in edges], axis=1)  # (m, E)
    flat = {
        "known": known.reshape(-1),
        "above": above.reshape(-1),
        "sev": np.where(known, sev, -2).astype(np.int8).reshape(-1),
        "sld": np.where(known, sld, codes.SLD_NONE).astype(np.int8).reshape(-1),
        "rate": np.where(known, np.nan_to_num(rate, nan=-1.0), -1.0).reshape(-1),
        "wet": np.where(known, np.nan_to_num(lwc, nan=-1.0), -1.0).reshape(-1),
        "lwc": lwc.reshape(-1),
        "mvd": mvd.reshape(-1),
        "accretion_rate": (rate / 3.6e6).reshape(-1),
    }
    start = np.arange(m) * nt
    for b in range(nb):
        n_in = pos[:, b + 1] - pos[:, b] + 1  # targets of the band in each row (both edges)
        width = int(n_in.max())
        idx = np.minimum(pos[:, b : b + 1] + np.arange(width), nt - 1) + start[:, None]
        inb = np.arange(width) < n_in[:, None]
        _band(out, b, idx, inb, flat)
    return BandProducts(**out)


def _band(out, b, idx, inb, flat):
    """Fill band ``b`` of ``out`` from its targets ``idx`` (m, K) into the flat arrays."""
    known = flat["known"].take(idx) & inb
    above = flat["above"].take(idx) & inb
    sev = np.where(inb, flat["sev"].take(idx), -2)
    worst = sev.max(axis=1)
    unknown = (above & ~known).any(axis=1)
    anything = above.any(axis=1)
    gap = ~anything | (unknown & (worst <= codes.SEV_NONE))
    out["severity"][b] = np.where(gap, codes.GAP, worst)
    out["coverage"][b] = np.where(
        ~anything,
        COVERAGE_BELOW_GROUND,
        np.where(gap, COVERAGE_GAP, np.where(unknown, COVERAGE_PARTIAL, COVERAGE_COMPLETE)),
    )
    out["sld"][b] = np.where(gap, codes.GAP, np.where(inb, flat["sld"].take(idx), 0).max(axis=1))
    # the worst altitude: severity, then accretion rate, then cloud liquid (the lowest of ties)
    first = sev == worst[:, None]
    rate = np.where(first, flat["rate"].take(idx), -2.0)
    second = first & (rate == rate.max(axis=1)[:, None])
    k = np.argmax(np.where(second, flat["wet"].take(idx), -2.0), axis=1)
    pick = np.take_along_axis(idx, k[:, None], -1)[:, 0]
    for name in ("lwc", "mvd", "accretion_rate"):
        out[name][b] = np.where(gap, np.nan, flat[name].take(pick))
