"""The compiled loops themselves (numba): imported only by :mod:`icing.hazards._compiled`.

Each loop does the comparisons and IEEE operations of its numpy reference in the same
order, without fast-math, so that the results are the same to the last bit (tested):
``locate`` is :func:`icing.hazards.readoff.locate` after its sort, ``band_state`` is
``icing.hazards.bands`` up to the collector physics (targets, locate, validity, the
ground and the liquid test in one pass per column), ``reduce_bands`` is
``icing.hazards.bands._reduce``.
"""

from __future__ import annotations

import numba
import numpy as np

from icing.codes import GAP, SEV_NONE, SLD_NONE
from icing.constants import IN_CLOUD_LWC

__all__ = ["locate", "band_state", "reduce_bands", "lerp", "validity"]

#: ``icing.hazards.bands.COVERAGE`` codes (a test holds them equal).
COMPLETE, PARTIAL, GAP_COVERAGE, BELOW_GROUND = range(4)

_jit = numba.njit(cache=True, error_model="numpy", nogil=True)
_INF = np.inf
_BIG = np.finfo(np.float64).max


@_jit
def _counts(zs):
    """Finite, -inf and +inf levels of each column, (3, m)."""
    out = np.zeros((3, zs.shape[0]), np.int64)
    for r in range(zs.shape[0]):
        for j in range(zs.shape[1]):
            v = zs[r, j]
            if v == _INF:
                out[2, r] += 1
            elif v == -_INF:
                out[1, r] += 1
            elif v == v:
                out[0, r] += 1
    return out


@_jit
def _weight(t, z_lo, z_hi):
    """Linear weight of ``t`` between two levels, ``np.clip``-ed to 0..1 (NaN, -0.0 kept)."""
    x = (t - z_lo) / (z_hi - z_lo)
    if x < 0.0:
        x = 0.0
    if x > 1.0:
        x = 1.0
    return x


@_jit
def locate(zs, order, c, present, tz, depth, w, inside, f_lo, f_hi):
    """Levels around each target and the weight, into ``w``, ``inside``, ``f_lo``, ``f_hi``.

    ``zs`` (m, L): each column's coordinates sorted, the non-finite ones last;
    ``order``: their indices in the diagnosis; ``c`` (column, 0 where absent),
    ``present``, ``tz``: the targets, flat.
    """
    nlev = zs.shape[1]
    counts = _counts(zs)
    for s in range(tz.size):
        r = c[s]
        t = tz[s]
        neg_inf, pos_inf = counts[1, r], counts[2, r]
        lo_i, hi_i = 0, counts[0, r]  # finite levels at or below t: a binary search
        while lo_i < hi_i:
            mid = (lo_i + hi_i) // 2
            if zs[r, mid] <= t:
                lo_i = mid + 1
            else:
                hi_i = mid
        above = lo_i
        if t == t:
            above += neg_inf
        if t == _INF:
            above += pos_inf
        lo = min(max(above - 1, 0), nlev - 2) % nlev
        hi = (lo + 1) % nlev
        z_lo, z_hi, z_min = zs[r, lo], zs[r, hi], zs[r, 0]
        x = _weight(t, z_lo, z_hi)
        w[s] = x
        ok = present[s] and abs(t) < _INF
        near_base = ok and t < z_min and t >= z_min - depth and lo == 0
        inside[s] = (ok and t >= z_lo and t <= z_hi) or near_base
        f_lo[s] = r * nlev + order[r, lo]
        f_hi[s] = r * nlev + order[r, hi]


@_jit
def _targets_of_row(zs, r, n_fin, edges, row):
    """Fill ``row`` with the edges and the finite levels strictly inside them, ascending.

    ``bands._targets``: a merge of the sorted levels with the edges, NaN padded.
    """
    e0, e1 = edges[0], edges[edges.size - 1]
    k = i = 0
    for e in range(edges.size):
        while i < n_fin and zs[r, i] < edges[e]:
            if zs[r, i] > e0 and zs[r, i] < e1:
                row[k] = zs[r, i]
                k += 1
            i += 1
        row[k] = edges[e]
        k += 1
    for j in range(k, row.size):
        row[j] = np.nan


@_jit
def _target_count(z, edges):
    """Targets of every row: the edges and each level index inside them in some column."""
    e0, e1 = edges[0], edges[edges.size - 1]
    keep = 0
    for j in range(z.shape[1]):
        for r in range(z.shape[0]):
            if z[r, j] > e0 and z[r, j] < e1:
                keep += 1
                break
    return edges.size + keep


@_jit
def band_state(z, zs, order, edges, depth, ground, level_valid, level_below, lwc, sld_lwc, sld):
    """Targets, located, checked and read for the liquid test, one pass per column.

    ``bands._targets``, ``readoff.locate`` (of the targets, which are ascending: the
    level search is a merge), ``readoff.read_located`` of validity, ``lwc``,
    ``sld_lwc`` and ``sld_class``, and ``bands._liquid_state``'s ground and liquid
    tests. ``z`` (m, L) heights, ``zs`` and ``order`` as :func:`locate` takes them
    (``order`` of no rows: ``zs`` is ``z``, in order); ``ground`` (m,) NaN where none;
    the level fields flat. Returns the targets (m, T) and, shaped so, ``known``
    (valid), ``above`` (present, not under the ground), severity (``SEV_NONE`` where
    valid, else ``GAP``), SLD class, accretion rate, cloud LWC and MVD as the bands
    hold them before the collector physics, and the liquid targets: their flat
    indices, weights, ``inside`` and level indices (a count of them, then arrays).
    """
    m, nlev = zs.shape
    nt = _target_count(z, edges)
    tgt = np.empty((m, nt))
    known, above = np.empty((m, nt), np.bool_), np.empty((m, nt), np.bool_)
    sev, sld_out = np.empty((m, nt), np.int8), np.empty((m, nt), np.int8)
    rate, lwc_out, mvd = np.empty((m, nt)), np.empty((m, nt)), np.full((m, nt), np.nan)
    at, w_at = np.empty(m * nt, np.int64), np.empty(m * nt)
    inside_at = np.empty(m * nt, np.bool_)
    lo_at, hi_at = np.empty(m * nt, np.int64), np.empty(m * nt, np.int64)
    counts = _counts(zs)
    n_liquid = 0
    for r in range(m):
        n_fin, neg_inf = counts[0, r], counts[1, r]
        _targets_of_row(zs, r, n_fin, edges, tgt[r])
        g = ground[r]
        p = 0  # finite levels at or below the target: the targets ascend
        for s in range(nt):
            t = tgt[r, s]
            above_n = 0
            if t == t:
                while p < n_fin and zs[r, p] <= t:
                    p += 1
                above_n = p + neg_inf
            # min(max(above_n - 1, 0), nlev - 2) % nlev, without a division a target
            lo = min(max(above_n - 1, 0), nlev - 2) if nlev > 1 else 0
            hi = lo + 1 if nlev > 1 else 0
            z_lo, z_hi, z_min = zs[r, lo], zs[r, hi], zs[r, 0]
            x = _weight(t, z_lo, z_hi)
            ok = abs(t) < _INF
            near_base = ok and t < z_min and t >= z_min - depth and lo == 0
            inside = (ok and t >= z_lo and t <= z_hi) or near_base
            f_lo = r * nlev + (lo if order.shape[0] == 0 else order[r, lo])
            f_hi = r * nlev + (hi if order.shape[0] == 0 else order[r, hi])
            under = level_below[f_lo] and (x < 0.5 or level_below[f_hi])
            valid = inside and level_valid[f_lo] and level_valid[f_hi] and not under
            ground_under = abs(g) < _INF and t < g - 1.0
            valid = valid and not ground_under
            known[r, s] = valid
            above[r, s] = ok and not (under or ground_under)
            if not valid:
                sev[r, s], sld_out[r, s], rate[r, s], lwc_out[r, s] = GAP, GAP, np.nan, np.nan
                continue
            a, b = _finite_or(lwc[f_lo], 0.0), _finite_or(lwc[f_hi], 0.0)
            cloud = a + x * (b - a)
            a, b = _finite_or(sld_lwc[f_lo], 0.0), _finite_or(sld_lwc[f_hi], 0.0)
            drops = a + x * (b - a)
            sev[r, s], sld_out[r, s] = SEV_NONE, max(max(sld[f_lo], sld[f_hi]), SLD_NONE)
            rate[r, s], lwc_out[r, s] = 0.0, cloud
            if cloud >= IN_CLOUD_LWC or drops >= IN_CLOUD_LWC:
                at[n_liquid], w_at[n_liquid], inside_at[n_liquid] = r * nt + s, x, inside
                lo_at[n_liquid], hi_at[n_liquid] = f_lo, f_hi
                n_liquid += 1
    fields = (known, above, sev, sld_out, rate, lwc_out, mvd)
    return tgt, fields, n_liquid, at, w_at, inside_at, lo_at, hi_at


@_jit
def _finite_or(x, nan):
    """``np.nan_to_num(x, nan=nan)`` of one value."""
    if x != x:
        return nan
    if x == _INF:
        return _BIG
    if x == -_INF:
        return -_BIG
    return x


@_jit
def _positions(tgt, edges):
    """Targets below each edge, per row (m, E): where each band's window starts.

    Rows ascending (NaN last) and edges ascending, as ``bands`` makes them: one merge
    of each row with the edges counts what ``sum(row < edge)`` counts.
    """
    m, nt = tgt.shape
    pos = np.empty((m, edges.size), np.int64)
    for r in range(m):
        j = 0
        for e in range(edges.size):
            while j < nt and tgt[r, j] < edges[e]:
                j += 1
            pos[r, e] = j
    return pos


@_jit
def _worst_by_scans(r, start, n_in, width, nt, known, sev, rate, lwc):
    """Return the window's worst severity and the index of its worst target, by scans.

    Severity, then accretion rate, then cloud liquid, the first of ties, over the
    window padded to ``width`` as the numpy reference pads it (the padding can win
    only where the band is a gap, whose values are not used). ``reduce_bands`` finds
    the same in its one scan but where a rate or liquid below -2 (an infinite negative
    input) would meet the reference's -2 stand-ins: then it asks this.
    """
    worst = -2
    for k in range(n_in):
        j = min(start + k, nt - 1)
        worst = max(worst, sev[r, j] if known[r, j] else -2)
    best_rate = -2.0
    for k in range(width):
        j = min(start + k, nt - 1)
        s = (sev[r, j] if known[r, j] else -2) if k < n_in else -2
        if s == worst:
            best_rate = max(best_rate, _finite_or(rate[r, j], -1.0) if known[r, j] else -1.0)
    pick, best_wet = 0, -_INF
    for k in range(width):
        j = min(start + k, nt - 1)
        s = (sev[r, j] if known[r, j] else -2) if k < n_in else -2
        q = _finite_or(rate[r, j], -1.0) if known[r, j] else -1.0
        v = -2.0
        if s == worst and q == best_rate:
            v = _finite_or(lwc[r, j], -1.0) if known[r, j] else -1.0
        if v > best_wet:
            pick, best_wet = j, v
    return worst, pick


@_jit
def reduce_bands(tgt, edges, known, above, sev, sld, rate, lwc, mvd, classes, fields):
    """Per band and column, what ``bands._reduce`` computes.

    Fills ``classes`` int8 (3, band, m): severity, SLD, coverage; and ``fields``
    float32 (3, band, m): cloud LWC, MVD and accretion rate at the band's worst target.
    """
    m, nt = tgt.shape
    nb = edges.size - 1
    pos = _positions(tgt, edges)
    width = np.zeros(nb, np.int64)  # the numpy reference's window of each band
    for r in range(m):
        for b in range(nb):
            width[b] = max(width[b], pos[r, b + 1] - pos[r, b] + 1)
    for r in range(m):  # row by row: each row's targets are read once, in cache
        for b in range(nb):
            start, n_in = pos[r, b], pos[r, b + 1] - pos[r, b] + 1
            unknown = anything = False
            sld_max = 0 if n_in < width[b] else -128
            # the worst target: severity, then accretion rate, then cloud liquid, the
            # first of ties (every known target's severity is SEV_NONE or worse)
            worst, best_rate, best_wet, pick = -2, -2.0, -_INF, 0
            for k in range(n_in):
                j = min(start + k, nt - 1)
                anything = anything or above[r, j]
                if not known[r, j]:
                    unknown = unknown or above[r, j]
                    sld_max = max(sld_max, 0)
                    continue
                sld_max = max(sld_max, sld[r, j])
                s, q = sev[r, j], _finite_or(rate[r, j], -1.0)
                v = _finite_or(lwc[r, j], -1.0)
                if s > worst or (
                    s == worst and (q > best_rate or (q == best_rate and v > best_wet))
                ):
                    worst, best_rate, best_wet, pick = s, q, v, j
            if worst > -2 and (best_rate <= -2.0 or best_wet <= -2.0):
                worst, pick = _worst_by_scans(r, start, n_in, width[b], nt, known, sev, rate, lwc)
            gap = (not anything) or (unknown and worst <= SEV_NONE)
            classes[0, b, r] = GAP if gap else worst
            classes[1, b, r] = GAP if gap else sld_max
            cover = PARTIAL if unknown else COMPLETE
            classes[2, b, r] = BELOW_GROUND if not anything else (GAP_COVERAGE if gap else cover)
            if gap:
                for f in range(3):
                    fields[f, b, r] = np.nan
            else:
                fields[0, b, r] = lwc[r, pick]
                fields[1, b, r] = mvd[r, pick]
                fields[2, b, r] = rate[r, pick] / 3.6e6


@_jit
def lerp(a, f_lo, f_hi, w, mode, out):
    """Read ``a`` (flat levels) linearly at each target, as ``readoff.read_located``.

    ``mode`` 0: as is; 1: NaN as 0 (``np.nan_to_num``, liquid); 2: a size missing at
    one level takes the other level's.
    """
    for s in range(w.size):
        x, y = a[f_lo[s]], a[f_hi[s]]
        if mode == 1:
            x, y = _finite_or(x, 0.0), _finite_or(y, 0.0)
        elif mode == 2:
            if not abs(x) < _INF:
                x = y
            if not abs(y) < _INF:
                y = x
        out[s] = x + w[s] * (y - x)


@_jit
def validity(level_valid, level_below, f_lo, f_hi, w, present, inside, valid, below):
    """Below the ground and valid at each target, as ``readoff.read_located``."""
    for s in range(w.size):
        under = present[s] and level_below[f_lo[s]] and (w[s] < 0.5 or level_below[f_hi[s]])
        below[s] = under
        valid[s] = inside[s] and level_valid[f_lo[s]] and level_valid[f_hi[s]] and not under
