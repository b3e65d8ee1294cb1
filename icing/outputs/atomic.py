"""Atomic file writing: every output appears whole or not at all."""

from __future__ import annotations

import os
import uuid
from pathlib import Path

__all__ = ["replace_atomically", "atomic_write"]


def replace_atomically(path, write) -> Path:
    """Call ``write(tmp_path)`` on a temporary file next to ``path``, then rename it.

    Nothing half-written is ever left at ``path``: on any error the temporary
    file is removed and ``path`` keeps its old content.
    """
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.{uuid.uuid4().hex[:8]}.part")
    try:
        write(tmp)
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return path


def atomic_write(path, data, *, binary=False) -> Path:
    """Write text (or bytes) to ``path`` atomically, creating its folder if needed."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    if binary:
        return replace_atomically(path, lambda tmp: tmp.write_bytes(data))
    return replace_atomically(path, lambda tmp: tmp.write_text(data, encoding="utf-8"))
