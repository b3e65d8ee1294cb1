"""Atomic file writing: every output appears whole or not at all."""

from __future__ import annotations

import os
import uuid
from pathlib import Path

__all__ = ["replace_atomically", "atomic_write"]


def replace_atomically(path, write, *, keep_suffix=False) -> Path:
    """Call ``write(tmp_path)`` on a temporary file next to ``path``, then rename it.

    Nothing half-written is ever left at ``path``: on any error the temporary
    file is removed and ``path`` keeps its old content. ``keep_suffix`` ends the
    temporary name with the target's own suffix (for writers that go by it).
    """
    path = Path(path)
    end = f".part{path.suffix}" if keep_suffix else ".part"
    tmp = path.with_name(f".{path.name}.{os.getpid()}.{uuid.uuid4().hex[:8]}{end}")
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
