"""Compiled loops of a grid run's read-off and band reduction (optional: numba).

A grid run locates ~40 altitudes in every column and reduces them to bands; in numpy
each step is a pass over the whole block, so these two steps cost as much as a tenth
of the physics they serve. Where numba is installed (the ``grid`` extra) they run as
one pass per column up to the liquid test and one scan per column and band instead
(:mod:`icing.hazards._loops`).
The numpy functions (:func:`icing.hazards.readoff.locate`,
:func:`icing.hazards.bands.band_products`) remain the reference: the loops do the same
comparisons and the same IEEE operations in the same order (no fast-math), and the
tests hold both paths equal to the last bit.

Only the grid uses them: ``icing screen`` and ``icing profile`` read a few hundred
targets, where importing numba (about 0.3 s) would cost more than it saves. The
compiled code is kept between runs in the user's cache folder (``ICING_CACHE_DIR``,
default ``~/.cache/icing``, ``numba`` in it) unless ``NUMBA_CACHE_DIR`` says otherwise;
``ICING_COMPILED=0`` turns the loops off.
"""

from __future__ import annotations

import functools

from icing.cachedir import load_compiled

__all__ = ["compiled_kernels"]


@functools.lru_cache(maxsize=1)
def compiled_kernels():
    """Return the compiled loops (a namespace), or None without numba or when turned off."""
    return load_compiled(_import_loops)


def _import_loops():
    # optional heavy dependency (numba): only a grid run imports it, and only here
    from icing.hazards import _loops

    return _loops
