"""CSV route files: a header row, one waypoint per row, settings in comment lines.

Header ``name,lat,lon,altitude_ft[,time]``, optional columns ``altitude_reference``,
``flight_level`` (instead of ``altitude_ft``), ``tas_kt``, ``hold_min`` and ``route``
(several routes in one file). Comment lines (``#``) may declare settings for the
whole file (``# altitude_reference: agl``, ``# airframe: small-multirotor``; see
:data:`CSV_SETTINGS`): they are honoured, and a comment that reads like an unknown
setting is refused, so that no declaration is silently ignored.
"""

from __future__ import annotations

import csv
import re

from icing.errors import RouteError
from icing.route.fields import (
    _DEFAULT_ALTITUDE,
    _altitude,
    _default_names,
    _hold_min,
    _optional_time,
    _reference,
    _route_fields,
    _tas_kt,
)
from icing.route.model import Waypoint, check_position, check_waypoint_count

__all__ = ["CSV_SETTINGS", "read_csv_routes"]


_CSV_COLUMNS = (
    "name",
    "lat",
    "lon",
    "altitude_ft",
    "time",
    "altitude_reference",
    "flight_level",
    "tas_kt",
    "hold_min",
    "route",
)


#: Settings a CSV route file may declare in comment lines (``# key: value``).
CSV_SETTINGS = (
    "name",
    "airframe",
    "altitude_reference",
    "departure_time",
    "true_airspeed_kt",
    "ground_elevation_m",
)
_SETTING = re.compile(r"^#\s*([A-Za-z][A-Za-z0-9_ -]{0,40}?)\s*[:=]\s*(\S.*?)\s*$")


def _csv_setting(line, lineno, path, settings):
    """Honour a ``# key: value`` comment line, or refuse it; prose comments pass."""
    m = _SETTING.match(line)
    if not m:
        return
    key = re.sub(r"[\s-]+", "_", m.group(1).strip().lower())
    where = f"line {lineno}"
    if key not in CSV_SETTINGS:
        raise RouteError(
            f"comment {line[:60]!r} reads like a setting, but {key!r} is not one this "
            "reader knows",
            path=path,
            where=where,
            fix=f"use one of {', '.join(CSV_SETTINGS)} (e.g. '# altitude_reference: agl'), "
            "or write the comment without ':' or '='",
        )
    if key in settings and settings[key] != m.group(2):
        raise RouteError(
            f"{key} is declared twice with different values",
            path=path,
            where=where,
            fix=f"declare {key} once",
        )
    settings[key] = m.group(2)


def _csv_rows(text, path):
    """Split a CSV text into (line number, fields) rows and the comment settings."""
    rows, settings = [], {}
    for lineno, line in enumerate(text.lstrip("\ufeff").splitlines(), start=1):
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            _csv_setting(s, lineno, path, settings)
            continue
        try:
            fields = next(csv.reader([s], skipinitialspace=True, strict=True))
        except csv.Error as err:
            raise RouteError(
                f"malformed CSV: {err}", path=path, where=f"line {lineno}", fix="check the quoting"
            ) from None
        rows.append((lineno, [x.strip() for x in fields]))
    if not rows:
        raise RouteError(
            "no header and no rows (only comments or blank lines)",
            path=path,
            fix="start with the header name,lat,lon,altitude_ft[,time]",
        )
    return rows, settings


def _csv_header(rows, path):
    """Check the header row; return it (lower case)."""
    head_line, header = rows[0]
    header = [h.lower() for h in header]
    if not {"lat", "lon"} <= set(header) or len(set(header)) != len(header):
        separator = " separated by commas, not semicolons" if ";" in header[0] else ""
        raise RouteError(
            f"header {','.join(header)[:80]!r} is not a route header",
            path=path,
            where=f"line {head_line}",
            fix="start with the header name,lat,lon,altitude_ft[,time] "
            f"(unique column names{separator})",
        )
    has_altitude = "altitude_ft" in header or "flight_level" in header
    if not has_altitude and _DEFAULT_ALTITUDE.get() is None:
        raise RouteError(
            "header has no altitude_ft or flight_level column (missing altitude)",
            path=path,
            where=f"line {head_line}",
            fix="add an altitude_ft (feet) or flight_level column, or give --altitude-ft / "
            "--flight-level",
        )
    if len(rows) == 1:
        raise RouteError(
            "no waypoint rows after the header",
            path=path,
            where=f"line {head_line}",
            fix="add at least two waypoints",
        )
    return header


def _csv_waypoint(row, i, where, path, default_ref):
    """One waypoint from a CSV row (a dict of column -> text or None)."""
    lat, lon = check_position(row["lat"], row["lon"], path=path, where=where)
    ref = _reference(row.get("altitude_reference") or default_ref, path=path, where=where)
    if row.get("altitude_reference") and default_ref and ref != default_ref.lower():
        raise RouteError(
            f"altitude_reference {ref!r} differs from the file's declared {default_ref!r}",
            path=path,
            where=where,
            fix="declare one altitude reference per file",
        )
    alt, wref = _altitude(
        path=path,
        where=where,
        reference=ref,
        feet=row.get("altitude_ft"),
        flight_level=row.get("flight_level"),
    )
    t = _optional_time(row.get("time"), path=path, where=where)
    hold = _hold_min(row.get("hold_min"), path=path, where=where)
    tas = _tas_kt(row.get("tas_kt"), path=path, where=where)
    return Waypoint(row.get("name") or f"WP{i + 1}", lat, lon, alt, wref, t, hold, tas)


def read_csv_routes(text, *, path=None):
    """Read the routes of a CSV text (see the module docstring).

    Comment lines declaring a setting (``# altitude_reference: agl``; the keys in
    :data:`CSV_SETTINGS`) are honoured for every route of the file; a comment that
    reads like a setting with an unknown key is refused, so that no declaration is
    silently ignored. Comments without ``:`` or ``=`` are prose and pass.
    """
    rows, settings = _csv_rows(text, path)
    header = _csv_header(rows, path)
    groups = {}
    for lineno, fields in rows[1:]:
        if len(fields) > len(header):
            raise RouteError(
                f"{len(fields)} fields for {len(header)} header columns",
                path=path,
                where=f"line {lineno}",
                fix="check the commas in this line",
            )
        row = dict(zip(header, fields + [""] * (len(header) - len(fields)), strict=True))
        row = {k: (v if v != "" else None) for k, v in row.items()}
        groups.setdefault(row.get("route") or "", []).append((lineno, row))
    declared = _route_fields(settings, path=path, where="")
    routes = []
    for key, items in groups.items():
        check_waypoint_count(len(items), path=path, where=f"route {key!r}" if key else None)
        wps = [
            _csv_waypoint(row, i, f"line {lineno}", path, settings.get("altitude_reference"))
            for i, (lineno, row) in enumerate(items)
        ]
        lines = [lineno for lineno, _ in items]
        fields = {**declared, "name": key or declared["name"]}
        routes.append((fields, wps, (lambda i, lines=lines: f"line {lines[i]}")))
    return _default_names(routes, path)
