"""Reading untrusted input: strict JSON, regular files of bounded size, stated limits.

Route and forecast files, and the bodies of service requests, come from outside. A
reader takes their bytes through this module so that a hostile or broken input ends
in one :class:`icing.errors.InputError` line (file, place, fix), never a traceback, a
hang or a process killed for memory. A leaf: the caller passes the error class to raise
(``error=RouteError``), so nothing from ``icing`` is imported here.

* :func:`read_input_bytes` opens regular files only (never a device, FIFO or folder,
  whose reading never ends) and refuses files over a stated size before reading them.
* :func:`parse_json` parses JSON (RFC 8259) strictly: ``NaN``/``Infinity`` literals
  (not JSON), numbers outside the float range, integers of more than
  :data:`MAX_INTEGER_DIGITS` digits, keys given twice in one object and nesting deeper
  than :data:`MAX_JSON_DEPTH` are refused, each naming the line.

The limits are stated here, each with its reason:

========================  ===========  ================================================
name                      value        reason
========================  ===========  ================================================
``MAX_ROUTE_FILE_BYTES``  16 MiB       a route of the most waypoints accepted (20,000)
                                       with names and times is ~5 MB in GPX; a planned
                                       route is kilobytes
``MAX_JSON_DEPTH``        64           GeoJSON needs 6 levels, the profile format 5;
                                       deeper documents only exhaust the parser
``MAX_INTEGER_DIGITS``    20           every quantity read is a float (at most ~1e308);
                                       longer integers are typing slips or attacks
========================  ===========  ================================================
"""

from __future__ import annotations

import json
import math
import os
import re
import stat
from pathlib import Path

__all__ = [
    "MAX_ROUTE_FILE_BYTES",
    "MAX_JSON_DEPTH",
    "MAX_INTEGER_DIGITS",
    "read_input_bytes",
    "parse_json",
]

MAX_ROUTE_FILE_BYTES = 16 * 1024 * 1024
MAX_JSON_DEPTH = 64
MAX_INTEGER_DIGITS = 20

_NOT_JSON = re.compile(r"-?\b(?:NaN|Infinity)\b")


def read_input_bytes(path, *, limit, error, what="file", fix=None):
    """Return the bytes of a regular file of at most ``limit`` bytes.

    Parameters
    ----------
    path : str or os.PathLike
        The file.
    limit : int
        The largest size accepted. [bytes]
    error : type
        The :class:`icing.errors.InputError` subclass raised.
    what : str
        What the file is, for the messages ("route file").
    fix : str, optional
        The fix named when the file is not of the expected kind.

    Raises
    ------
    InputError
        Missing, a folder, a device or pipe, larger than ``limit``, or unreadable.
    """
    p = Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise error("file not found", path=path, fix="check the path") from None
    except OSError as err:
        raise error(
            f"cannot read the {what} ({err.strerror})",
            path=path,
            fix="check the path and its permissions",
        ) from None
    if stat.S_ISDIR(st.st_mode):
        raise error(f"is a directory, not a {what}", path=path, fix=fix or "give a file")
    if not stat.S_ISREG(st.st_mode):
        raise error(
            f"is not a regular file (a device, pipe or socket), not a {what}",
            path=path,
            fix=fix or "give a file",
        )
    if st.st_size > limit:
        raise error(
            f"{what} is {st.st_size / 2**20:.1f} MiB, above the limit of {limit / 2**20:.0f} MiB",
            path=path,
            fix="split it or thin its points (a planned route needs few)",
        )
    try:
        with open(p, "rb") as fh:
            data = fh.read(limit + 1)
    except OSError as err:
        raise error(
            f"cannot read the {what} ({err.strerror})",
            path=path,
            fix="check the file's permissions",
        ) from None
    if len(data) > limit:  # grew while being read
        raise error(f"{what} is above the limit of {limit / 2**20:.0f} MiB", path=path)
    return data


def _line_of(text, index):
    return text.count("\n", 0, max(index, 0)) + 1


class _Refused(Exception):
    """A value the hooks of :func:`parse_json` refuse (message, text searched for)."""

    def __init__(self, message, token, fix):
        super().__init__(message)
        self.message, self.token, self.fix = message, token, fix


def _refuse_constant(name):
    raise _Refused(
        f"{name} is not a JSON number",
        name,
        "write null for a missing value (JSON has no NaN or Infinity)",
    )


def _parse_int(digits):
    if len(digits.lstrip("-")) > MAX_INTEGER_DIGITS:
        raise _Refused(
            f"integer of {len(digits.lstrip('-'))} digits",
            digits[:20],
            f"give numbers of at most {MAX_INTEGER_DIGITS} digits (a typing slip?)",
        )
    return int(digits)


def _parse_float(text):
    value = float(text)
    if not math.isfinite(value):
        raise _Refused(
            f"number {text[:24]} is outside the range of a float",
            text[:20],
            "check the number (an exponent typed twice?)",
        )
    return value


def _pairs(pairs):
    out = {}
    for key, value in pairs:
        if key in out:
            raise _Refused(
                f"key {key[:40]!r} is given twice in one object",
                f'"{key}"',
                "keep one of them (JSON readers silently keep only the last)",
            )
        out[key] = value
    return out


def _too_deep(obj, max_depth):
    """Return True when ``obj`` nests lists and objects deeper than ``max_depth``."""
    stack = [(obj, 1)] if isinstance(obj, (list, dict)) else []
    while stack:
        node, depth = stack.pop()
        if depth > max_depth:
            return True
        children = node.values() if isinstance(node, dict) else node
        stack.extend((c, depth + 1) for c in children if isinstance(c, (list, dict)))
    return False


def parse_json(text, *, error, path=None, max_depth=MAX_JSON_DEPTH, fix=None):
    """Parse JSON text strictly; refuse what is not plain, finite, shallow JSON.

    Parameters
    ----------
    text : str
        The JSON text.
    path : str or os.PathLike, optional
        The file, named in the messages.
    error : type
        The :class:`icing.errors.InputError` subclass raised.
    max_depth : int
        The deepest nesting of lists and objects accepted.
    fix : str, optional
        The fix named for malformed JSON.

    Raises
    ------
    InputError
        Malformed JSON, NaN or Infinity literals, numbers outside the float range,
        integers of more than :data:`MAX_INTEGER_DIGITS` digits, a key given twice in
        one object, nesting deeper than ``max_depth``.

    Examples
    --------
    >>> from icing.errors import InputError
    >>> parse_json('{"a": [1, 2.5, null]}', error=InputError)
    {'a': [1, 2.5, None]}
    >>> parse_json('[NaN]', error=InputError, path="x.json")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    icing.errors.InputError: x.json: line 1: NaN is not a JSON number (fix: write null ...
    """
    try:
        obj = json.loads(
            text,
            parse_constant=_refuse_constant,
            parse_int=_parse_int,
            parse_float=_parse_float,
            object_pairs_hook=_pairs,
        )
    except _Refused as err:
        found = _NOT_JSON.search(text) if err.token in ("NaN", "Infinity", "-Infinity") else None
        index = found.start() if found else text.find(err.token)
        where = f"line {_line_of(text, index)}" if index >= 0 else None
        raise error(err.message, path=path, where=where, fix=err.fix) from None
    except json.JSONDecodeError as err:
        raise error(
            f"malformed JSON: {err.msg}",
            path=path,
            where=f"line {err.lineno} column {err.colno}",
            fix=fix or "check the JSON syntax (a missing comma or bracket?)",
        ) from None
    except RecursionError:
        obj = None
        deep = True
    else:
        deep = _too_deep(obj, max_depth)
    if deep:
        raise error(
            f"JSON nested deeper than {max_depth} levels",
            path=path,
            fix="give a plain GeoJSON or profile document (they nest a few levels)",
        )
    return obj
