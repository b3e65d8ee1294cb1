"""Profile files: the JSON and CSV forms of the profile input, read into a ProfileTable.

JSON (``"format": "icing-profiles"``, version 1, with its JSON Schema in
``icing/data/schemas/profiles-v1.json``) and CSV (one row per level). Both
become a :class:`~icing.forecast.table.ProfileTable` through
:func:`~icing.forecast.table.build_table`.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

from icing.errors import ForecastError
from icing.forecast.table import (
    HUMIDITY_FIELDS,
    PROFILE_FIELDS,
    PROFILE_LEVEL_FIELDS,
    build_table,
    parse_time,
)
from icing.untrusted import parse_json

__all__ = ["profile_schema", "read_profiles_json", "read_profiles_csv"]


def _not_text(path):
    raise ForecastError(
        "not a UTF-8 text file",
        path=path,
        fix="give a profile JSON, profile CSV or CF-NetCDF file",
    ) from None


def _text(path, encoding="utf-8"):
    """Return the file's text; one line when it is not UTF-8."""
    try:
        return path.read_text(encoding=encoding)
    except UnicodeDecodeError:
        _not_text(path)


def profile_schema():
    """Return the JSON Schema (dict) of the profile input (``data/schemas/profiles-v1.json``)."""
    return json.loads(
        (Path(__file__).parents[1] / "data" / "schemas" / "profiles-v1.json").read_text()
    )


def _json_where(err_path):
    out = ""
    for part in err_path:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out or "top level"


def _schema_error(doc, path):
    import jsonschema

    validator = jsonschema.Draft202012Validator(profile_schema())
    err = jsonschema.exceptions.best_match(validator.iter_errors(doc))
    if err is None:
        return
    where = _json_where(err.absolute_path)
    kind = err.validator
    if kind == "required":
        fix = "add the missing field"
    elif kind == "anyOf" and err.absolute_path and err.absolute_path[-1] == "levels":
        raise ForecastError(
            "no humidity field in the levels",
            path=path,
            where=where,
            fix="give dewpoint_c, relative_humidity_pct or specific_humidity_g_kg per level",
        )
    elif kind == "additionalProperties":
        known = sorted(err.schema.get("properties", {}))
        fix = f"remove or rename the key (known: {', '.join(known)}; 'x-' keys are free)"
    elif kind == "type":
        fix = f"give a value of type {err.validator_value}"
    elif kind == "minItems":
        fix = f"give at least {err.validator_value} items"
    elif kind in ("minimum", "maximum"):
        fix = "give a value in range"
    else:
        fix = "see icing/data/schemas/profiles-v1.json"
    message = err.message if len(err.message) < 160 else err.message[:157] + "..."
    raise ForecastError(message, path=path, where=where, fix=fix)


def read_profiles_json(path):
    """Read a profile JSON file (``icing/data/schemas/profiles-v1.json``) into a ProfileTable.

    Raises
    ------
    ForecastError
        Malformed JSON, unknown format or version, a schema violation, or a
        value that fails the checks of :func:`_check_profile` (ragged level
        arrays, pressures not monotonic, kelvin in a ``_c`` field, humidity
        far outside 0-100 %, a time without a zone).
    """
    path = Path(path)
    try:
        doc = parse_json(  # strict: NaN, Infinity, huge numbers and deep nesting refused
            path.read_text(encoding="utf-8"),
            path=path,
            error=ForecastError,
            fix="repair the JSON syntax (a missing comma or bracket?)",
        )
    except UnicodeDecodeError:
        _not_text(path)
    if not isinstance(doc, dict) or doc.get("format") != "icing-profiles":
        got = doc.get("format") if isinstance(doc, dict) else type(doc).__name__
        raise ForecastError(
            f"unknown format {got!r}",
            path=path,
            where="format",
            fix='set "format": "icing-profiles" and "version": 1',
        )
    if doc.get("version") != 1:
        raise ForecastError(
            f"unknown profile format version {doc.get('version')!r}",
            path=path,
            where="version",
            fix='this icing reads "version": 1; upgrade icing or convert',
        )
    _schema_error(doc, path)
    issue = doc.get("issue_time")
    issue = parse_time(issue, path=path, where="issue_time") if issue is not None else None

    def locate(i, name, k=None):
        if name in PROFILE_LEVEL_FIELDS:
            return f"profiles[{i}].levels.{name}" + ("" if k is None else f"[{k}]")
        return f"profiles[{i}].{name}"

    return build_table(doc["profiles"], path, locate, issue)


_CSV_REQUIRED = ("id", "lat", "lon", "valid_time", "pressure_hpa", "temperature_c")


def _check_csv_header(header, path):
    """Refuse a header without the required, a humidity, or with unknown columns."""
    missing = [c for c in _CSV_REQUIRED if c not in header]
    if missing:
        raise ForecastError(
            f"missing column(s) {', '.join(missing)}",
            path=path,
            where="line 1 (header)",
            fix="the header needs " + ",".join(_CSV_REQUIRED) + " and one humidity column",
        )
    if not any(h in header for h in HUMIDITY_FIELDS):
        raise ForecastError(
            "no humidity column",
            path=path,
            where="line 1 (header)",
            fix="add dewpoint_c, relative_humidity_pct or specific_humidity_g_kg",
        )
    known = set(_CSV_REQUIRED) | set(PROFILE_LEVEL_FIELDS) | set(PROFILE_FIELDS) | {"description"}
    unknown = [h for h in header if h not in known and not h.startswith("x-")]
    if unknown:
        raise ForecastError(
            f"unknown column(s) {', '.join(unknown)}",
            path=path,
            where="line 1 (header)",
            fix="rename to the profile field names (see the profile JSON "
            "format) or prefix with x-",
        )


def _csv_groups(reader, path):
    """Rows grouped by (id, valid_time) in file order: ``{key: [(line, row), ...]}``."""
    groups = {}
    for n, row in enumerate(reader, start=2):
        if None in row:  # csv.DictReader files surplus cells under the key None
            raise ForecastError(
                "more cells than header columns",
                path=path,
                where=f"line {n}",
                fix="remove the extra cells or add a header",
            )
        row = {k.strip(): (v or "").strip() for k, v in row.items()}
        groups.setdefault((row["id"], row["valid_time"]), []).append((n, row))
    return groups


def _csv_number(n, col, value, path, *, allow_empty=True):
    """Return a cell as a float (None when empty and allowed)."""
    if value == "":
        if allow_empty:
            return None
        raise ForecastError(
            f"empty {col}", path=path, where=f"line {n}, column {col}", fix="give a number"
        )
    try:
        return float(value)
    except ValueError:
        raise ForecastError(
            f"{value!r} is not a number",
            path=path,
            where=f"line {n}, column {col}",
            fix="give a number",
        ) from None


def _csv_profile(pid, vt, rows, header, path):
    """One profile dict from its rows (per-profile values equal on every row)."""
    first, last = rows[0][0], rows[-1][0]
    prof = {"id": pid, "valid_time": vt, "levels": {}}
    for col in ("lat", "lon") + tuple(c for c in PROFILE_FIELDS if c in header):
        optional = col not in ("lat", "lon")
        vals = {_csv_number(n, col, r[col], path, allow_empty=optional) for n, r in rows}
        if len(vals) > 1:
            raise ForecastError(
                f"{col} differs between the rows of profile {pid!r} at {vt}",
                path=path,
                where=f"lines {first}-{last}, column {col}",
                fix=f"repeat the same {col} on every row of the profile",
            )
        val = vals.pop()
        if val is not None:
            prof[col] = val
    for col in PROFILE_LEVEL_FIELDS:
        if col in header:
            prof["levels"][col] = [
                _csv_number(n, col, r[col], path, allow_empty=col != "pressure_hpa")
                for n, r in rows
            ]
    return prof


def _check_csv_profile(prof, i, path, locate):
    """Refuse a position out of range or fewer than two levels."""
    for col in ("lat", "lon"):
        lim = 90.0 if col == "lat" else 360.0
        lo = -90.0 if col == "lat" else -180.0
        if not lo <= prof[col] <= lim:
            raise ForecastError(
                f"{col} {prof[col]} out of range",
                path=path,
                where=locate(i, col),
                fix=f"give {col} in [{lo}, {lim}]",
            )
    if len(prof["levels"]["pressure_hpa"]) < 2:
        raise ForecastError(
            f"profile {prof['id']!r} has fewer than 2 levels",
            path=path,
            where=locate(i, "pressure_hpa"),
            fix="give one row per level",
        )


def read_profiles_csv(path):
    """Read a profile CSV file (one row per level) into a :class:`ProfileTable`.

    Columns: ``id, lat, lon, valid_time, pressure_hpa, temperature_c`` and one of
    ``dewpoint_c, relative_humidity_pct, specific_humidity_g_kg``; optional the
    other level fields of the JSON format (``height_m``, ``cloud_liquid_g_kg``,
    ...) and the per-profile fields (``precipitation_rate_mm_h``,
    ``surface_elevation_m``, ``surface_pressure_hpa``) repeated on every row of
    the profile. Rows with the same ``id`` and ``valid_time`` form one profile,
    in file order. Empty cells are missing values.
    """
    path = Path(path)
    reader = csv.DictReader(_text(path, "utf-8-sig").splitlines())
    header = [h.strip() for h in (reader.fieldnames or [])]
    _check_csv_header(header, path)
    groups = _csv_groups(reader, path)
    lines = {i: [n for n, _ in rows] for i, rows in enumerate(groups.values())}
    profiles = [_csv_profile(pid, vt, rows, header, path) for (pid, vt), rows in groups.items()]
    if not profiles:
        raise ForecastError("no data rows", path=path, fix="add one row per level")

    def locate(i, name, k=None):
        if k is None:
            return f"lines {lines[i][0]}-{lines[i][-1]}, column {name}"
        return f"line {lines[i][k]}, column {name}"

    for i, prof in enumerate(profiles):
        _check_csv_profile(prof, i, path, locate)
    return build_table(profiles, path, locate, None)
