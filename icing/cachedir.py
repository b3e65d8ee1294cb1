"""Where the package keeps what it builds once and reuses between runs.

The collection-efficiency table (:mod:`icing.calc.collection`) and the grid's compiled
loops (:mod:`icing.hazards._compiled`, :mod:`icing.calc._sld_compiled`) are kept in
one folder: ``ICING_CACHE_DIR`` when set (empty: keep nothing), else ``icing`` in the
user's cache folder (``XDG_CACHE_HOME`` or ``~/.cache``).
"""

from __future__ import annotations

import os
from pathlib import Path

__all__ = ["cache_folder", "prepare_compiled", "load_compiled"]


def cache_folder() -> Path | None:
    """Return the package's cache folder, or None when ``ICING_CACHE_DIR`` is empty."""
    folder = os.environ.get("ICING_CACHE_DIR")
    if folder is None:
        base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
        folder = os.path.join(base, "icing")
    return Path(folder) if folder else None


def prepare_compiled() -> bool:
    """Get ready to load compiled loops (numba); False when ``ICING_COMPILED=0``.

    Points numba's cache at ``numba`` in the package's cache folder (before numba is
    imported) unless ``NUMBA_CACHE_DIR`` says otherwise.
    """
    if os.environ.get("ICING_COMPILED", "1") == "0":
        return False
    folder = cache_folder()
    if "NUMBA_CACHE_DIR" not in os.environ and folder is not None:
        os.environ["NUMBA_CACHE_DIR"] = str(folder / "numba")
    return True


def load_compiled(load):
    """Return ``load()``, which imports a module of compiled loops, or None.

    None when ``ICING_COMPILED=0`` or without numba (``load`` raising ImportError).
    """
    if not prepare_compiled():
        return None
    try:
        return load()
    except ImportError:
        return None
