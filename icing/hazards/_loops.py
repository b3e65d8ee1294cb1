"""The compiled loops themselves (numba): imported only by :mod:`icing.hazards._compiled`.

Each loop does the comparisons and IEEE operations of its numpy reference in the same
order, without fast-math, so that the results are the same to the last bit (tested):
``locate`` is :func:`icing.hazards.readoff.locate` after its sort, ``reduce_bands`` is
``icing.hazards.bands._reduce``.
"""

from __future__ import annotations

import numba
import numpy as np

from icing.codes import GAP, SEV_NONE

__all__ = ["locate", "reduce_bands", "lerp", "validity"]

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
        x = (t - z_lo) / (z_hi - z_lo)
        if x < 0.0:  # np.clip: NaN and -0.0 kept
            x = 0.0
        if x > 1.0:
            x = 1.0
        w[s] = x
        ok = present[s] and abs(t) < _INF
        near_base = ok and t < z_min and t >= z_min - depth and lo == 0
        inside[s] = (ok and t >= z_lo and t <= z_hi) or near_base
        f_lo[s] = r * nlev + order[r, lo]
        f_hi[s] = r * nlev + order[r, hi]


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
    """Targets below each edge, per row (m, E): where each band's window starts."""
    m, nt = tgt.shape
    pos = np.empty((m, edges.size), np.int64)
    for r in range(m):
        for e in range(edges.size):
            n = 0
            for j in range(nt):
                if tgt[r, j] < edges[e]:
                    n += 1
            pos[r, e] = n
    return pos


@_jit
def _worst(r, start, n_in, width, nt, known, sev, rate, lwc):
    """Return the window's worst severity and the index of its worst target.

    Severity, then accretion rate, then cloud liquid, the first of ties; over the
    window padded to ``width`` as the numpy reference pads it (the padding can win
    only where the band is a gap, whose values are not used).
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
    pos = _positions(tgt, edges)
    for b in range(edges.size - 1):
        width = 0
        for r in range(m):
            width = max(width, pos[r, b + 1] - pos[r, b] + 1)
        for r in range(m):
            start, n_in = pos[r, b], pos[r, b + 1] - pos[r, b] + 1
            unknown = anything = False
            sld_max = 0 if n_in < width else -128
            for k in range(n_in):
                j = min(start + k, nt - 1)
                anything = anything or above[r, j]
                unknown = unknown or (above[r, j] and not known[r, j])
                sld_max = max(sld_max, sld[r, j] if known[r, j] else 0)
            worst, pick = _worst(r, start, n_in, width, nt, known, sev, rate, lwc)
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
