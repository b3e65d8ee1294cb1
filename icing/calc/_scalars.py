"""Scalar helpers shared by the compiled loops of the column physics (numba).

numpy's ``minimum``, ``maximum`` and ``nan_to_num`` of one value, for
:mod:`icing.calc._column_loops` and :mod:`icing.calc._sld_loops`, which transcribe
numpy code value by value. numba's on-disk cache notices changes to a loop's own file
only: after editing this module, empty the cache folder (``numba`` in
``ICING_CACHE_DIR``, default ``~/.cache/icing``) so that the loops are compiled again.
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["fmin", "fmax", "nan_to_num"]

_jit = numba.njit(cache=True, error_model="numpy", nogil=True)
_NAN = np.nan
_INF = np.inf
_BIG = np.finfo(np.float64).max


@_jit
def fmin(a, b):
    """``np.minimum`` of two values (NaN from either)."""
    if a != a or b != b:
        return _NAN
    return a if a <= b else b


@_jit
def fmax(a, b):
    """``np.maximum`` of two values (NaN from either)."""
    if a != a or b != b:
        return _NAN
    return a if a >= b else b


@_jit
def nan_to_num(x):
    """``np.nan_to_num`` of one value (NaN 0, infinities the largest finite numbers)."""
    if x != x:
        return 0.0
    if x == _INF:
        return _BIG
    if x == -_INF:
        return -_BIG
    return x
