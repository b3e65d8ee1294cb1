"""Where a sample falls on a forecast's axes, and the weights that bring values to it.

Plain numpy, no files: fractional indices on monotonic 1-D coordinates
(horizontal, with longitude wrap-around), the two valid times bracketing a
sample, linear weights between two level sets, and the bilinear-in-space,
linear-in-time combination of corner columns. :class:`icing.forecast.grid.GridForecast`
and the profile forecast use them; the readers use :func:`level_weights` to bring
a variable on its own levels to the forecast's levels.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "frac_index",
    "time_brackets",
    "level_weights",
    "apply_level_weights",
    "combine_corners",
]


def frac_index(v, c, *, periodic=False):
    """Return (i0, i1, weight, inside) of values ``v`` on the monotonic 1-D coordinate ``c``.

    ``periodic`` treats ``c`` as longitudes covering the whole circle (the cell
    from the last point back to the first is used); otherwise values outside
    ``c`` are flagged ``inside = False`` and clamped to the end cells.

    >>> i0, i1, w, ok = frac_index(np.array([0.25, 3.0]), np.array([0.0, 1.0, 2.0]))
    >>> i0.tolist(), i1.tolist(), w.tolist(), ok.tolist()
    ([0, 1], [1, 2], [0.25, 1.0], [True, False])
    """
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


def time_brackets(valid_times, t, tol_ms):
    """Return the bracketing time indices (i0, i1), the weight of i1 and the window mask.

    A sample exactly on a valid time (or held at an end within the tolerance)
    uses one time only; outside ``first - tol .. last + tol`` it is outside the
    window.
    """
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


def level_weights(src, dst, *, log):
    """Linear weights taking values on levels ``src`` to levels ``dst`` (invalid outside).

    ``log`` interpolates in the logarithm of the level value (pressure levels).
    Returns (i0, i1, w, valid) with ``value = a[i0] (1 - w) + a[i1] w``.
    """
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


def apply_level_weights(a, lw, axis=-1):
    """Apply :func:`level_weights` along ``axis`` of ``a``; NaN outside the source levels."""
    i0, i1, w, valid = lw
    a = np.moveaxis(a, axis, -1)
    with np.errstate(invalid="ignore"):
        out = a[..., i0] * (1.0 - w) + np.where(w > 0, a[..., i1] * w, 0.0)
    return np.moveaxis(np.where(valid, out, np.nan), -1, axis)


def combine_corners(v, wy, wx, wt):
    """Bilinear in space, linear in time: (n, 2 t, 2 y, 2 x[, ...]) -> (n[, ...]).

    Zero weights never spread NaN (a sample on a grid point does not need its
    neighbours).
    """
    wts = (
        np.stack([1.0 - wt, wt], 1)[:, :, None, None]
        * np.stack([1.0 - wy, wy], 1)[:, None, :, None]
        * np.stack([1.0 - wx, wx], 1)[:, None, None, :]
    )
    wts = wts.reshape(wts.shape + (1,) * (v.ndim - 4))
    with np.errstate(invalid="ignore"):
        part = np.where(wts > 0, v * wts, 0.0)
    return part.sum(axis=(1, 2, 3))
