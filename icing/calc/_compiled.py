"""Loader of the compiled loops of the physics (optional: numba).

A grid run diagnoses millions of columns; there the column physics runs as compiled
loops over columns and levels (:mod:`icing.calc._column_loops`) instead of numpy passes
over whole blocks. The numpy functions remain the reference, and only callers that ask
for the loops get them (``diagnose_columns(..., compiled=True)``, which the grid path
sets): importing numba costs about 0.3 s a process, more than a route or a profile
saves. The compiled code is kept between runs in the package's cache folder
(:func:`icing.cachedir.cache_folder`, ``numba`` in it) unless ``NUMBA_CACHE_DIR`` says
otherwise; ``ICING_COMPILED=0`` turns the loops off.
"""

from __future__ import annotations

import functools
import importlib
import os

__all__ = ["compiled_loops"]

#: The modules of compiled loops this loader may import (they import numba).
_MODULES = ("icing.calc._column_loops",)


@functools.cache
def compiled_loops(module):
    """Return the compiled-loop module ``module``, or None without numba or when turned off."""
    if module not in _MODULES:
        raise ValueError(f"unknown compiled module {module!r}; expected one of {_MODULES}")
    if os.environ.get("ICING_COMPILED", "1") == "0":
        return None
    _cache_folder()
    try:  # optional heavy dependency (numba): imported only here, only when asked for
        return importlib.import_module(module)
    except ImportError:
        return None


def _cache_folder():
    """Point numba's cache at the package's cache folder (before numba is imported)."""
    from icing.cachedir import cache_folder

    folder = cache_folder()
    if "NUMBA_CACHE_DIR" not in os.environ and folder is not None:
        os.environ["NUMBA_CACHE_DIR"] = str(folder / "numba")
