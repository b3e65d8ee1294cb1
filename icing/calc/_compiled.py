"""Loader of the compiled loops of the column physics (optional: numba).

A grid run diagnoses millions of columns; there the column physics runs as compiled
loops over columns and levels (:mod:`icing.calc._column_loops`) instead of numpy passes
over whole blocks, and the collector physics looks its collection tables up in one
compiled pass (:mod:`icing.calc._collection_loops`,
``airframe_severity(compiled=True)``). The numpy functions remain the reference, and
only callers that ask for the loops get them (``diagnose_columns(..., compiled=True)``,
which the grid path sets): importing numba costs about 0.3 s a process, more than a
route or a profile saves. Where the compiled code is kept and how ``ICING_COMPILED=0``
turns the loops off: :func:`icing.cachedir.load_compiled`, shared with the SLD and the
read-off loops.
"""

from __future__ import annotations

import functools
import importlib

from icing.cachedir import load_compiled

__all__ = ["compiled_loops"]

#: The modules of compiled loops this loader may import (they import numba).
_MODULES = ("icing.calc._column_loops", "icing.calc._collection_loops")


@functools.cache
def compiled_loops(module):
    """Return the compiled-loop module ``module``, or None without numba or when turned off."""
    if module not in _MODULES:
        raise ValueError(f"unknown compiled module {module!r}; expected one of {_MODULES}")
    # optional heavy dependency (numba): imported only here, only when asked for
    return load_compiled(lambda: importlib.import_module(module))
