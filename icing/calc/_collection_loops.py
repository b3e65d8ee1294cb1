"""The compiled table lookup (numba): imported only by :mod:`icing.calc._compiled`.

``table_lookup`` is :func:`icing.calc.collection._table_lookup` (with its
``_phi_cell``) as one pass over the points: the same comparisons and IEEE operations
in the same order, without fast-math, so the results are the same to the last bit
(tested). The numpy function makes some twenty passes over the points, gathers
included; a grid block looks up tens of thousands of points per collector.
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["table_lookup"]

_jit = numba.njit(cache=True, error_model="numpy", nogil=True)


@_jit
def table_lookup(
    plane_e, plane_b, nphi, k_first, k_scale, x_hi, log_k, log_phi, nodes, h_scale, cell, e, b
):
    """Bilinear (E, beta0) of the flat table planes at (log10 K, log10 phi) into ``e``, ``b``.

    ``k_first``, ``k_scale``: the first node of log10 K and 1 / its step; ``x_hi``:
    the clip of the K index (``nk - 1.000001``); ``nodes``: log10 phi's nodes;
    ``h_scale``, ``cell``: 1 / the fine cell width and the cell of each fine cell
    (``collection._phi_cell_index``). A NaN input gives NaN (numpy's path raises on
    the index it cannot form; no caller passes one).
    """
    last = nodes.size - 1
    for p in range(log_k.size):
        x = (log_k[p] - k_first) * k_scale
        if x < 0.0:
            x = 0.0
        if x > x_hi:
            x = x_hi
        y = log_phi[p]
        if y < nodes[0]:
            y = nodes[0]
        if y > nodes[last]:
            y = nodes[last]
        if x != x or y != y:
            e[p] = np.nan
            b[p] = np.nan
            continue
        i = int(x)
        fx = x - i
        j = cell[int((y - nodes[0]) * h_scale)]
        if y >= nodes[min(j + 1, last)] and j < last - 1:
            j += 1
        fy = (y - nodes[j]) / (nodes[j + 1] - nodes[j])
        idx = i * nphi + j
        e[p] = _bilinear(plane_e, idx, nphi, fx, fy)
        b[p] = _bilinear(plane_b, idx, nphi, fx, fy)


@_jit
def _bilinear(plane, idx, nphi, fx, fy):
    v00 = plane[idx]
    v01 = plane[idx + 1]
    v10 = plane[idx + nphi]
    v11 = plane[idx + (nphi + 1)]
    top = v00 + fy * (v01 - v00)
    return top + fx * (v10 + fy * (v11 - v10) - top)
