"""The catalogue: the forecasts in one folder, named by stable ids.

Every regular file in the folder is one forecast; every sub-folder is one
forecast made of all its files (one file per lead time). Names starting with
``.``, ``~`` or ``#`` and names ending in ``.part``, ``.tmp``, ``.partial`` or
``.swp`` are skipped, so a file being copied in under a temporary name and
renamed when complete (the safe way to publish a forecast) is never half read.

A forecast's id is its file (or folder) name when that name is made of letters,
digits, ``.``, ``_`` and ``-`` only; other names are spelt with ``-`` for every
other character plus six hex digits of the name's hash, so ids stay unique,
stable and safe in a URL. Clients name forecasts by id; paths never leave the
server.

The folder is rescanned on request, at most every ``min_interval_s`` seconds:
a new file, a file whose size or modification time changed, and a removed file
are seen then. A changed file is opened again (here for its valid times and
domain, and in each worker before its next use).
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import logging
import re
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path

from icing.errors import InputError

__all__ = ["Catalogue", "CatalogueEntry", "forecast_id", "scrub_paths"]

log = logging.getLogger("icing.service")

_SAFE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,127}$")
_SKIP_PREFIX = (".", "~", "#")
_SKIP_SUFFIX = (".part", ".tmp", ".partial", ".swp", ".lock")


def forecast_id(name: str) -> str:
    """Return the catalogue id of a file or folder name.

    >>> forecast_id("skerrow-demo.nc")
    'skerrow-demo.nc'
    >>> forecast_id("wrfout_d01_2027-01-14_00:00:00")
    'wrfout_d01_2027-01-14_00-00-00-aceb20'
    """
    if _SAFE.match(name):
        return name
    spelt = re.sub(r"[^A-Za-z0-9._-]", "-", name).lstrip("._-")[:100] or "forecast"
    return f"{spelt}-{hashlib.sha256(name.encode('utf-8', 'surrogateescape')).hexdigest()[:6]}"


def scrub_paths(text: str, paths, directory=None, *, quoted=False) -> str:
    """Return ``text`` with every server folder of ``paths`` (and ``directory``) removed.

    Library messages name the files they read; clients see file names only.
    ``quoted`` matches the folders as they appear inside a JSON string.

    >>> scrub_paths("/srv/fc/a.nc: not NetCDF", ["/srv/fc/a.nc"])
    'a.nc: not NetCDF'
    """
    dirs = {str(Path(p).parent) for p in paths} | ({str(directory)} if directory else set())
    for d in sorted((d for d in dirs if len(d) > 1), key=len, reverse=True):
        for form in (d + "/", d):
            text = text.replace(json.dumps(form)[1:-1] if quoted else form, "")
    return text


def _skipped(name: str) -> bool:
    return name.startswith(_SKIP_PREFIX) or name.lower().endswith(_SKIP_SUFFIX)


@dataclass(frozen=True)
class CatalogueEntry:
    """One forecast of the catalogue.

    Attributes
    ----------
    id : str
        Stable id (from the file or folder name).
    paths : tuple of str
        The files (server side only; never shown to clients).
    signature : tuple
        (name, modification time [ns], size [bytes]) of every file: a change reopens.
    available : bool
        The forecast could be opened.
    info : dict
        What clients see: kind, valid times, domain, issue time, levels; or the
        reason it is unavailable.
    """

    id: str
    paths: tuple
    signature: tuple
    available: bool
    info: dict = field(default_factory=dict)

    def ref(self) -> dict:
        """Return what a worker needs to open the forecast (picklable)."""
        return {"id": self.id, "paths": list(self.paths), "signature": self.signature}


def _describe(forecast_id_: str, forecast) -> dict:
    """Describe an open forecast for clients (no paths)."""
    desc = forecast.describe()
    times = list(desc.get("valid_times") or [])
    bounds = desc.get("bounds") or list(forecast.bounds)
    info = {
        "id": forecast_id_,
        "status": "available",
        "kind": desc.get("kind"),
        "issue_time": desc.get("issue_time"),
        "valid_times": times,
        "valid_from": times[0] if times else None,
        "valid_to": times[-1] if times else None,
        "time_tolerance_h": desc.get("time_tolerance_h"),
        "bounds": [round(float(b), 6) for b in bounds],
    }
    if desc.get("kind") == "grid" or desc.get("member_kind") == "grid":
        info.update(vertical=desc.get("vertical"), levels=desc.get("levels"))
    else:
        info.update(profiles=desc.get("profiles"), radius_km=desc.get("radius_km"))
    if hasattr(forecast, "member_columns_at"):  # an ensemble: its members, by index
        info["members"] = [
            {"index": i, "label": str(label)} for i, label in enumerate(forecast.labels)
        ]
        info["member_origin"] = desc.get("member_origin")
    return info


def _unavailable(forecast_id_: str, reason: str) -> dict:
    return {"id": forecast_id_, "status": "unavailable", "reason": reason}


class Catalogue:
    """The forecasts of one folder, rescanned when asked (at most every ``min_interval_s``).

    Parameters
    ----------
    directory : path-like
        The catalogue folder.
    min_interval_s : float
        Least time between two scans. [s]
    opener : callable
        ``opener(paths) -> Forecast`` (default :func:`icing.forecast.load_forecast`).
    file_lock : lock, optional
        Held while a forecast is opened: the netCDF and HDF5 C libraries must not be
        entered by two threads at once, so a server that also computes on a thread
        (the inline pool) shares its lock here.
    """

    def __init__(self, directory, *, min_interval_s: float = 5.0, opener=None, file_lock=None):
        self.directory = Path(directory)
        if not self.directory.is_dir():
            raise InputError(
                "the catalogue is not a folder",
                path=self.directory,
                where="--catalog",
                fix="give the folder that holds the forecast files",
            )
        if opener is None:
            from icing.forecast import load_forecast as opener
        self._opener = opener
        self._file_lock = file_lock if file_lock is not None else contextlib.nullcontext()
        self.min_interval_s = float(min_interval_s)
        self._entries: dict[str, CatalogueEntry] = {}
        self._lock = threading.Lock()
        self._scanned = -float("inf")

    def _files(self):
        """(id, paths, signature) of every forecast in the folder, by name."""
        out = []
        try:
            items = sorted(self.directory.iterdir(), key=lambda p: p.name)
        except OSError as err:
            log.error("catalogue folder unreadable: %s", err)
            return out
        for p in items:
            if _skipped(p.name):
                continue
            try:
                if p.is_dir():
                    files = sorted(
                        (f for f in p.iterdir() if f.is_file() and not _skipped(f.name)),
                        key=lambda f: f.name,
                    )
                elif p.is_file():
                    files = [p]
                else:
                    continue
                sig = tuple((f.name, f.stat().st_mtime_ns, f.stat().st_size) for f in files)
            except OSError:  # removed while scanning: seen at the next scan
                continue
            if files:
                out.append((forecast_id(p.name), tuple(str(f) for f in files), sig))
        return out

    def refresh(self, *, force: bool = False) -> bool:
        """Scan the folder if due (or ``force``); return True when the catalogue changed."""
        with self._lock:
            now = time.monotonic()
            if not force and now - self._scanned < self.min_interval_s:
                return False
            self._scanned = now
            old = self._entries
            new = {}
            for fid, paths, sig in self._files():
                if fid in new:
                    continue
                prev = old.get(fid)
                new[fid] = prev if prev is not None and prev.signature == sig else None
                if new[fid] is None:
                    new[fid] = self._open(fid, paths, sig)
            changed = list(new) != list(old) or any(new[k] is not old.get(k) for k in new)
            self._entries = new
            return changed

    def _open(self, fid, paths, sig) -> CatalogueEntry:
        try:
            with self._file_lock:
                forecast = self._opener(list(paths))
                info = _describe(fid, forecast)
            log.info("catalogue: %s available (%s)", fid, info.get("kind"))
            return CatalogueEntry(fid, paths, sig, True, info)
        except InputError as err:
            # the reason without the path: clients never see server paths
            reason = " ".join(
                [*([err.where] if err.where else []), err.message]
                + ([f"(fix: {err.fix})"] if err.fix else [])
            )
            reason = scrub_paths(reason, paths, self.directory)
            log.warning("catalogue: %s unavailable: %s", fid, err.one_line())
        except Exception as err:  # a reader's bug must not stop the catalogue
            reason = "the file could not be read (the server log has the details)"
            log.exception("catalogue: %s unavailable: %s", fid, type(err).__name__)
        return CatalogueEntry(fid, paths, sig, False, _unavailable(fid, reason))

    def due(self) -> bool:
        """Tell whether a scan is due (the last one is older than ``min_interval_s``)."""
        return time.monotonic() - self._scanned >= self.min_interval_s

    def entries(self) -> list[CatalogueEntry]:
        """Return the entries, by id."""
        return list(self._entries.values())

    def get(self, forecast_id_: str) -> CatalogueEntry | None:
        """Return the entry of an id, or None."""
        return self._entries.get(forecast_id_)
