"""What opening a gridded file learned that is costly to learn again, kept per process.

Two steps take most of the time of opening a large gridded file, and neither result
changes while the file does not:

- the coordinate reference system of a CF grid mapping: pyproj's ``CRS.from_cf`` looks
  the datum up in PROJ's database, about 0.17 s a call whatever the file;
- the value samples the unit checks read (a few columns spread over the grid, see
  :mod:`icing.forecast.build`): on a file chunked by rows they touch every chunk row,
  about 12 ms a variable on the benchmark's continental grid.

Both are kept here, keyed by everything they depend on: a CRS by the grid mapping's
attributes; a sample by the file (resolved path, device, inode, size and modification
time, so that a rewritten file is read again), the variable (name, dimensions, shape,
attributes) and the indices read. A file that cannot be stat'ed is never kept.

``icing grid`` hands its process's entries to its worker processes with the job
(:func:`export`, :func:`adopt`): each worker then opens the forecast in about 0.1 s
instead of 0.5-1.2 s (measured on the benchmark grid, two workers starting together).
The values are the same either way; tests/test_forecast_memo.py checks it.
"""

from __future__ import annotations

import os
import threading
from collections import OrderedDict

import numpy as np

__all__ = ["crs_from_cf", "sample", "export", "adopt", "clear"]

_CRS_MAX = 32
_SAMPLES_MAX = 1024
_LOCK = threading.Lock()
_CRS: OrderedDict = OrderedDict()  # attributes key -> pyproj CRS
_SAMPLES: OrderedDict = OrderedDict()  # (file, variable, indices) key -> read-only array


def _value_key(value):
    """Return a hashable, exact stand-in for an attribute or index value."""
    if isinstance(value, slice):
        return ("slice", value.start, value.stop, value.step)
    a = np.asarray(value)
    return (a.dtype.str, a.shape, a.tobytes()) if a.dtype != object else repr(value)


def _attrs_key(attrs):
    return tuple(sorted((str(k), _value_key(v)) for k, v in dict(attrs).items()))


def _keep(store, key, value, limit):
    with _LOCK:
        store[key] = value
        store.move_to_end(key)
        while len(store) > limit:
            store.popitem(last=False)


def _get(store, key):
    with _LOCK:
        value = store.get(key)
        if value is not None:
            store.move_to_end(key)
        return value


def crs_from_cf(attrs):
    """``pyproj.CRS.from_cf(attrs)``, looked up once per process for the same attributes.

    Errors are those of ``from_cf`` (nothing is kept then).
    """
    key = _attrs_key(attrs)
    crs = _get(_CRS, key)
    if crs is None:
        from pyproj import CRS

        crs = CRS.from_cf(dict(attrs))
        _keep(_CRS, key, crs, _CRS_MAX)
    return crs


def _file_key(path):
    try:
        st = os.stat(path)
    except (OSError, TypeError, ValueError):
        return None
    return (os.path.realpath(path), st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns)


def sample(path, variable, index, read, order=()):
    """Return ``read()``, the sample of ``variable`` at ``index`` in the file at ``path``.

    Parameters
    ----------
    path : path-like
        The file the variable is read from (a path that cannot be stat'ed is read every
        time).
    variable : object
        The variable: its ``name``, ``dims``, ``shape`` and ``attrs`` are part of the key
        (one file may hold several datasets with a variable of the same name).
    index : dict
        ``{dimension: int or slice}`` read.
    read : callable
        Reads the sample (a float array) when it is not kept.
    order : tuple of str
        The dimensions' order in the sample.

    Returns
    -------
    numpy.ndarray
        The sample (read-only when kept: callers compute from it, never into it).
    """
    fkey = _file_key(path)
    if fkey is None:
        return read()
    key = (
        fkey,
        str(getattr(variable, "name", "")),
        tuple(variable.dims),
        tuple(variable.shape),
        _attrs_key(getattr(variable, "attrs", {})),
        tuple(sorted((str(d), _value_key(i)) for d, i in index.items())),
        tuple(str(d) for d in order),
    )
    kept = _get(_SAMPLES, key)
    if kept is not None:
        return kept
    value = np.array(read(), dtype=float)
    value.setflags(write=False)
    _keep(_SAMPLES, key, value, _SAMPLES_MAX)
    return value


def export(paths=None):
    """Return this process's entries, picklable, for :func:`adopt` in another process.

    ``paths``: keep only the samples of these files (all when None; groups of paths,
    as an ensemble's members are given, are flattened).
    """
    real = None if paths is None else {os.path.realpath(p) for p in _flat(paths)}
    with _LOCK:
        samples = [(k, v) for k, v in _SAMPLES.items() if real is None or k[0][0] in real]
        return {"crs": list(_CRS.items()), "samples": samples}


def _flat(paths):
    for p in paths:
        if isinstance(p, (tuple, list)):
            yield from _flat(p)
        else:
            yield p


def adopt(entries):
    """Keep another process's entries (:func:`export`); None does nothing.

    The samples' file keys still hold: a file rewritten since no longer matches them.
    """
    if not entries:
        return
    for key, crs in entries.get("crs", ()):
        _keep(_CRS, key, crs, _CRS_MAX)
    for key, value in entries.get("samples", ()):
        value = np.array(value, dtype=float)
        value.setflags(write=False)
        _keep(_SAMPLES, key, value, _SAMPLES_MAX)


def clear():
    """Forget everything kept (tests)."""
    with _LOCK:
        _CRS.clear()
        _SAMPLES.clear()
