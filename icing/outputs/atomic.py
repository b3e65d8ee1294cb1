"""Atomic file writing: every output appears whole or not at all, and a run's outputs together.

* :func:`replace_atomically` / :func:`atomic_write`: one file, written to a temporary
  file beside it and renamed.
* :func:`write_together`: the files of one run. Each is written to its temporary file
  first; only when all are complete are they renamed into place, as a group. Should a
  rename fail, those already renamed are rolled back (earlier contents restored, new
  files removed), so a failed run leaves nothing new behind and no file half-replaced.
  Before anything is written, the targets are checked: never one of the run's inputs,
  never two outputs at the same path, never a folder.
"""

from __future__ import annotations

import os
import shutil
import uuid
from pathlib import Path

from icing.errors import InputError

__all__ = ["replace_atomically", "atomic_write", "write_together", "check_targets"]


def _temporary(path: Path, tag: str = "part") -> Path:
    """Return a hidden name beside ``path`` that keeps its suffix (writers go by it)."""
    return path.with_name(f".{path.name}.{os.getpid()}.{uuid.uuid4().hex[:8]}.{tag}{path.suffix}")


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


def _same(a: Path, b: Path) -> bool:
    """Whether two paths name one file (after links; hard links and case folding too)."""
    if a.resolve() == b.resolve():
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:  # one of them does not exist (yet): they are not the same file
        return False


def check_targets(targets, inputs=()):
    """Refuse outputs that name an input, one another, or a folder (one line, nothing written).

    Parameters
    ----------
    targets : sequence of (path, role)
        The outputs of a run and what each is (``"-o"``, ``"the summary beside -o"``).
    inputs : sequence of (path, role)
        The files the run read (route, forecast and airframe files).

    Raises
    ------
    InputError
        An output at the path of an input or of another output, or at a folder.
    """
    seen = []
    for path, role in targets:
        path = Path(path)
        if path.is_dir():
            raise InputError(
                f"{role} is a folder", path=path, fix="name a file for it, not a folder"
            )
        for inp, what in inputs:
            if _same(path, Path(inp)):
                raise InputError(
                    f"{role} would overwrite the {what}",
                    path=path,
                    fix=f"name another file for {role}; inputs are never overwritten",
                )
        for other, other_role in seen:
            if _same(path, other):
                raise InputError(
                    f"{role} and {other_role} are the same file",
                    path=path,
                    fix="give each output its own file name",
                )
        seen.append((path, role))


def write_together(files, *, inputs=()):
    """Write a run's files as a group: all complete, then all renamed, or none.

    Parameters
    ----------
    files : sequence of (path, write, role)
        ``write(tmp_path)`` writes the whole file at ``tmp_path`` (a hidden name beside
        ``path`` with the same suffix); ``role`` names the output in messages.
    inputs : sequence of (path, role)
        The run's input files: no output may be one of them.

    Returns
    -------
    list of pathlib.Path
        The paths written, in the order given.

    Raises
    ------
    InputError
        From :func:`check_targets`, before anything is written.
    Exception
        Whatever a writer or a rename raised; then no new file remains and every
        existing target keeps its old content.
    """
    files = [(Path(p), write, role) for p, write, role in files]
    check_targets([(p, role) for p, _, role in files], inputs)
    made = []  # folders this call created, removed again on failure (when empty)
    for p, _, _ in files:
        for parent in reversed(p.parents):
            if not parent.exists():
                parent.mkdir()
                made.append(parent)
    staged = []
    try:
        for p, write, _ in files:
            tmp = _temporary(p)
            staged.append(tmp)
            write(tmp)
        _commit([p for p, _, _ in files], staged)
    except BaseException:
        for tmp in staged:
            tmp.unlink(missing_ok=True)
        for folder in reversed(made):
            try:
                folder.rmdir()
            except OSError:
                pass
        raise
    return [p for p, _, _ in files]


def _commit(targets, staged):
    """Rename every staged file onto its target; on a failure, undo the renames done."""
    done = []  # (target, backup or None)
    try:
        for target, tmp in zip(targets, staged, strict=True):
            backup = None
            if target.exists():
                backup = _temporary(target, "old")
                try:
                    os.link(target, backup)  # the old content stays at target meanwhile
                except OSError:  # no hard links on this file system
                    shutil.copy2(target, backup)
            done.append((target, backup))
            os.replace(tmp, target)
    except BaseException:
        for target, backup in reversed(done):
            if backup is not None:
                os.replace(backup, target)
            else:
                target.unlink(missing_ok=True)
        raise
    for _, backup in done:
        if backup is not None:
            backup.unlink(missing_ok=True)
