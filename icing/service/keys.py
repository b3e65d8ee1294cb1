"""API keys: the key file, adding and removing keys, checking a presented key.

The key file is plain UTF-8 text, one key per line::

    # icing API keys: NAME sha256:HEX CREATED (the keys themselves are never stored)
    dispatch-ops sha256:0b1c...e9 2027-01-14T09:00:00Z

``NAME`` (letters, digits, ``.``, ``_``, ``-``; at most 64) is what the access
log shows; the second field is the SHA-256 of the key, in hex; the third, when
present, is when the key was made. Blank lines and lines starting with ``#``
are ignored. Keys are made by :func:`add_key` (``icing serve-key add``) from
256 random bits (``secrets``), so an unsalted SHA-256 is enough: nobody can
search a 256-bit space, and a slow salted hash (scrypt, PBKDF2) would only cost
time on every request. A presented key is hashed and compared with every stored
hash with :func:`hmac.compare_digest`, in constant time.

The server rereads the file when it changes (at most every few seconds), so a
key removed from the file stops working without a restart.
"""

from __future__ import annotations

import hashlib
import hmac
import os
import re
import secrets
import threading
import time
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

from icing.errors import InputError
from icing.outputs.atomic import atomic_write

__all__ = [
    "KEY_PREFIX",
    "KeyRecord",
    "KeyRing",
    "add_key",
    "hash_key",
    "new_key",
    "read_key_file",
    "remove_key",
]

#: Every key starts with this, so a leaked one is easy to recognise (and grep for).
KEY_PREFIX = "icing_"
_NAME = re.compile(r"^[A-Za-z0-9._-]{1,64}$")
_DIGEST = re.compile(r"^sha256:([0-9a-f]{64})$")
_HEADER = "# icing API keys: NAME sha256:HEX CREATED (the keys themselves are never stored)\n"
_MAX_KEY_CHARS = 256


@dataclass(frozen=True)
class KeyRecord:
    """One line of the key file.

    Attributes
    ----------
    name : str
        Who holds the key (shown in the access log; never the key).
    digest : bytes
        SHA-256 of the key.
    created : str or None
        When the key was made (ISO 8601, UTC).
    """

    name: str
    digest: bytes
    created: str | None = None


def new_key() -> str:
    """Return a fresh random key (256 bits from :mod:`secrets`, URL-safe)."""
    return KEY_PREFIX + secrets.token_urlsafe(32)


def hash_key(key: str) -> bytes:
    """SHA-256 of a key, as bytes."""
    return hashlib.sha256(key.encode("utf-8")).digest()


def read_key_file(path) -> list[KeyRecord]:
    """Read the key file; raise InputError naming the line and the fix."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(
            "key file not found", path=path, fix="make one with `icing serve-key add`"
        ) from None
    except (OSError, UnicodeDecodeError) as err:
        raise InputError(
            f"key file unreadable ({err})", path=path, fix="check the file and its permissions"
        ) from None
    records, seen = [], set()
    for no, line in enumerate(text.splitlines(), 1):
        line = line.strip()
        if not line or line.startswith("#"):
            continue
        fields = line.split()
        where = f"line {no}"
        if len(fields) not in (2, 3) or not _NAME.match(fields[0]):
            raise InputError(
                "not NAME sha256:HEX [CREATED]",
                path=path,
                where=where,
                fix="keep the lines written by `icing serve-key add`",
            )
        m = _DIGEST.match(fields[1])
        if not m:
            raise InputError(
                f"key {fields[0]!r}: the hash is not sha256: and 64 hex digits",
                path=path,
                where=where,
                fix="keep the lines written by `icing serve-key add`",
            )
        if fields[0] in seen:
            raise InputError(
                f"key name {fields[0]!r} appears twice",
                path=path,
                where=where,
                fix="give every key its own name",
            )
        seen.add(fields[0])
        created = fields[2] if len(fields) == 3 else None
        records.append(KeyRecord(fields[0], bytes.fromhex(m.group(1)), created))
    return records


def _write(path: Path, records) -> None:
    lines = [_HEADER] + [
        f"{r.name} sha256:{r.digest.hex()}{'' if r.created is None else ' ' + r.created}\n"
        for r in records
    ]
    atomic_write(path, "".join(lines))
    os.chmod(path, 0o600)  # the hashes are not secrets, but nobody else needs them


def add_key(path, name: str) -> str:
    """Add a key called ``name`` to the key file (made if missing); return the key.

    The key is returned once and never stored: only its hash goes into the file.
    """
    path = Path(path)
    if not _NAME.match(name or ""):
        raise InputError(
            f"key name {name!r} is not allowed",
            where="--name",
            fix="use 1-64 letters, digits, '.', '_' or '-'",
        )
    records = read_key_file(path) if path.exists() else []
    if any(r.name == name for r in records):
        raise InputError(
            f"a key called {name!r} exists",
            path=path,
            where="--name",
            fix="choose another name, or remove the old key first",
        )
    key = new_key()
    created = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    _write(path, records + [KeyRecord(name, hash_key(key), created)])
    return key


def remove_key(path, name: str) -> None:
    """Remove the key called ``name`` from the key file."""
    path = Path(path)
    records = read_key_file(path)
    kept = [r for r in records if r.name != name]
    if len(kept) == len(records):
        raise InputError(
            f"no key called {name!r}", path=path, where="--name", fix="see `icing serve-key list`"
        )
    _write(path, kept)


class KeyRing:
    """The keys of a key file, reread when the file changes.

    Parameters
    ----------
    path : path-like
        The key file (read at once: a bad file stops the server from starting).
    recheck_s : float
        Least time between two looks at the file's modification time and size. [s]
    """

    def __init__(self, path, *, recheck_s: float = 2.0):
        self.path = Path(path)
        self.recheck_s = float(recheck_s)
        self._lock = threading.Lock()
        self._stamp = self._stat()
        self._records = read_key_file(self.path)
        self._checked = time.monotonic()

    def _stat(self):
        try:
            st = self.path.stat()
        except OSError:
            return None
        return (st.st_mtime_ns, st.st_size)

    def _maybe_reload(self) -> None:
        now = time.monotonic()
        if now - self._checked < self.recheck_s:
            return
        with self._lock:
            self._checked = now
            stamp = self._stat()
            if stamp == self._stamp:
                return
            try:
                self._records = read_key_file(self.path)
            except InputError:
                # a broken or missing file admits nobody until it is fixed (fail closed)
                self._records = []
            self._stamp = stamp

    @property
    def names(self) -> list[str]:
        """Names of the keys now accepted."""
        self._maybe_reload()
        return [r.name for r in self._records]

    def verify(self, key: str | None) -> str | None:
        """Return the name of the key, or None when it is not one of the file's keys."""
        self._maybe_reload()
        if not key or len(key) > _MAX_KEY_CHARS:
            return None
        digest = hash_key(key)
        found = None
        for r in self._records:  # no early exit: the time does not depend on the match
            if hmac.compare_digest(digest, r.digest):
                found = r.name
        return found
