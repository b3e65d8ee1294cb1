"""Readers behind :func:`icing.forecast.load_forecast`: profile JSON/CSV and CF-NetCDF.

Profile files become a :class:`ProfileTable` (every profile's levels padded to
one level count, SI units, levels ordered surface first). CF-NetCDF files
become a :class:`GridFile`: an xarray dataset opened lazily plus what was found
in it (variables, their unit conversions, coordinates, grid mapping), so that
:class:`icing.forecast.GridForecast` can read just a window around a route.

Every problem with the input raises :class:`icing.errors.ForecastError` naming
the file, the place (``profiles[2].levels.temperature_c[4]``, ``line 7, column
dewpoint_c``, a variable name) and the fix, on one line.
"""

from __future__ import annotations

import csv
import json
import warnings
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from icing.calc.thermo import (
    height_from_pressure_hypsometric,
    relative_humidity_from_dewpoint,
    relative_humidity_from_specific_humidity,
    saturation_vapor_pressure,
    specific_humidity_from_relative_humidity,
    vapor_pressure_from_specific_humidity,
)
from icing.constants import RHO_WATER, T0, G
from icing.errors import ForecastError, PlausibilityWarning
from icing.untrusted import parse_json

__all__ = [
    "PROFILE_LEVEL_FIELDS",
    "PROFILE_FIELDS",
    "HUMIDITY_FIELDS",
    "VAR_KEYS",
    "ProfileTable",
    "GridFile",
    "VarInfo",
    "parse_time",
    "read_profiles_json",
    "read_profiles_csv",
    "open_grid_file",
    "profile_schema",
    "specific_humidity_of",
    "fill_along_levels",
]

#: profile level field -> (column name of diagnose_columns, scale, offset) to SI
PROFILE_LEVEL_FIELDS = {
    "pressure_hpa": ("pressure", 100.0, 0.0),
    "height_m": ("height", 1.0, 0.0),
    "temperature_c": ("temperature", 1.0, T0),
    "dewpoint_c": ("dewpoint", 1.0, T0),
    "relative_humidity_pct": ("relative_humidity", 0.01, 0.0),
    "specific_humidity_g_kg": ("specific_humidity", 1e-3, 0.0),
    "cloud_liquid_g_kg": ("cloud_liquid", 1e-3, 0.0),
    "cloud_ice_g_kg": ("cloud_ice", 1e-3, 0.0),
    "rain_g_kg": ("rain", 1e-3, 0.0),
    "snow_g_kg": ("snow", 1e-3, 0.0),
    "cloud_fraction": ("cloud_fraction", 1.0, 0.0),
    "vertical_velocity_m_s": ("vertical_velocity", 1.0, 0.0),
    "wind_u_m_s": ("wind_u", 1.0, 0.0),
    "wind_v_m_s": ("wind_v", 1.0, 0.0),
}
#: per-profile field -> (column name, scale) to SI
PROFILE_FIELDS = {
    "precipitation_rate_mm_h": ("precipitation_rate_mm_h", 1.0),
    "surface_elevation_m": ("surface_height", 1.0),
    "surface_pressure_hpa": ("surface_pressure", 100.0),
}
#: humidity fields in the order of preference when a profile gives several
HUMIDITY_FIELDS = ("relative_humidity_pct", "dewpoint_c", "specific_humidity_g_kg")
_RH_ACCEPT = 1.10  # model output slightly supersaturated over water is normal
_RH_REFUSE = 1.50

# ----------------------------------------------------------------------- times


def parse_time(text, *, path=None, where=None):
    """Parse an ISO 8601 time with a zone into numpy datetime64[ms] (UTC).

    >>> parse_time("2027-01-14T12:00:00Z")
    np.datetime64('2027-01-14T12:00:00.000')
    """
    if not isinstance(text, str):
        raise ForecastError(
            f"time {text!r} is not a string",
            path=path,
            where=where,
            fix="write the time as ISO 8601, e.g. 2027-01-14T12:00:00Z",
        )
    try:
        t = datetime.fromisoformat(text.strip())
    except ValueError:
        raise ForecastError(
            f"time {text!r} is not ISO 8601",
            path=path,
            where=where,
            fix="write the time as ISO 8601, e.g. 2027-01-14T12:00:00Z",
        ) from None
    if t.tzinfo is None:
        raise ForecastError(
            f"time {text!r} has no time zone",
            path=path,
            where=where,
            fix=f"append Z for UTC ({text.strip()}Z) or an offset like +00:00",
        )
    return np.datetime64(t.astimezone(UTC).replace(tzinfo=None), "ms")


# ----------------------------------------------------------------------- profiles


@dataclass
class ProfileTable:
    """Profiles in SI units, levels padded with NaN to one count, surface first.

    ``levels`` maps the ``diagnose_columns`` keyword names (plus ``wind_u``,
    ``wind_v``) to arrays (P, L); ``scalars`` maps per-profile names to (P,).
    """

    ids: np.ndarray
    lat: np.ndarray
    lon: np.ndarray
    time: np.ndarray
    levels: dict
    scalars: dict
    humidity: str
    files: list
    issue_time: np.datetime64 | None = None
    notes: list = field(default_factory=list)
    sources: dict = field(default_factory=dict)

    @property
    def size(self):
        """Number of profiles."""
        return self.ids.size

    @staticmethod
    def concatenate(tables):
        """Join several tables (one forecast from several files)."""
        if len(tables) == 1:
            return tables[0]
        nlev = max(t.levels["pressure"].shape[1] for t in tables)
        humid = {t.humidity for t in tables}
        tables = (
            [_as_humidity(t, "relative_humidity") for t in tables] if len(humid) > 1 else tables
        )
        keys = set().union(*[t.levels for t in tables])
        levels = {}
        for k in keys:
            parts = []
            for t in tables:
                a = t.levels.get(k, np.full(t.levels["pressure"].shape, np.nan))
                parts.append(np.pad(a, ((0, 0), (0, nlev - a.shape[1])), constant_values=np.nan))
            levels[k] = np.concatenate(parts)
        scalars = {k: np.concatenate([t.scalars[k] for t in tables]) for k in tables[0].scalars}
        issue = [t.issue_time for t in tables if t.issue_time is not None]
        return ProfileTable(
            np.concatenate([t.ids for t in tables]),
            np.concatenate([t.lat for t in tables]),
            np.concatenate([t.lon for t in tables]),
            np.concatenate([t.time for t in tables]),
            levels,
            scalars,
            tables[0].humidity,
            sum((t.files for t in tables), []),
            issue[0] if issue else None,
            sum((t.notes for t in tables), []),
            _merge_sources(tables),
        )


def _merge_sources(tables):
    out = {}
    for t in tables:
        for key, src in t.sources.items():
            if out.get(key, src) != src:
                src = f"{out[key]}; {src}"
            out[key] = src
    return out


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
    """Read a profile JSON file (DESIGN.md 3.3) into a :class:`ProfileTable`.

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
        raise ForecastError(
            "not a UTF-8 text file",
            path=path,
            fix="give a profile JSON, profile CSV or CF-NetCDF file",
        ) from None
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

    return _build_table(doc["profiles"], path, locate, issue)


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
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise ForecastError(
            "not a UTF-8 text file",
            path=path,
            fix="give a profile JSON, profile CSV or CF-NetCDF file",
        ) from None
    reader = csv.DictReader(text.splitlines())
    header = [h.strip() for h in (reader.fieldnames or [])]
    required = ("id", "lat", "lon", "valid_time", "pressure_hpa", "temperature_c")
    missing = [c for c in required if c not in header]
    if missing:
        raise ForecastError(
            f"missing column(s) {', '.join(missing)}",
            path=path,
            where="line 1 (header)",
            fix="the header needs " + ",".join(required) + " and one humidity column",
        )
    if not any(h in header for h in HUMIDITY_FIELDS):
        raise ForecastError(
            "no humidity column",
            path=path,
            where="line 1 (header)",
            fix="add dewpoint_c, relative_humidity_pct or specific_humidity_g_kg",
        )
    known = set(required) | set(PROFILE_LEVEL_FIELDS) | set(PROFILE_FIELDS) | {"description"}
    unknown = [h for h in header if h not in known and not h.startswith("x-")]
    if unknown:
        raise ForecastError(
            f"unknown column(s) {', '.join(unknown)}",
            path=path,
            where="line 1 (header)",
            fix="rename to the profile field names (see the profile JSON "
            "format) or prefix with x-",
        )
    groups, lines = {}, {}
    for n, row in enumerate(reader, start=2):
        if None in row:  # csv.DictReader files surplus cells under the key None
            raise ForecastError(
                "more cells than header columns",
                path=path,
                where=f"line {n}",
                fix="remove the extra cells or add a header",
            )
        row = {k.strip(): (v or "").strip() for k, v in row.items()}
        key = (row["id"], row["valid_time"])
        groups.setdefault(key, []).append((n, row))
    profiles = []
    for i, ((pid, vt), rows) in enumerate(groups.items()):
        lines[i] = [n for n, _ in rows]

        def num(n, col, value, *, allow_empty=True):
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

        prof = {"id": pid, "valid_time": vt, "levels": {}}
        for col in ("lat", "lon") + tuple(c for c in PROFILE_FIELDS if c in header):
            vals = {num(n, col, r[col], allow_empty=col not in ("lat", "lon")) for n, r in rows}
            if len(vals) > 1:
                raise ForecastError(
                    f"{col} differs between the rows of profile {pid!r} at {vt}",
                    path=path,
                    where=f"lines {lines[i][0]}-{lines[i][-1]}, column {col}",
                    fix=f"repeat the same {col} on every row of the profile",
                )
            val = vals.pop()
            if val is not None:
                prof[col] = val
        for col in PROFILE_LEVEL_FIELDS:
            if col in header:
                prof["levels"][col] = [
                    num(n, col, r[col], allow_empty=col != "pressure_hpa") for n, r in rows
                ]
        profiles.append(prof)
    if not profiles:
        raise ForecastError("no data rows", path=path, fix="add one row per level")

    def locate(i, name, k=None):
        if k is None:
            return f"lines {lines[i][0]}-{lines[i][-1]}, column {name}"
        return f"line {lines[i][k]}, column {name}"

    for i, prof in enumerate(profiles):
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
    return _build_table(profiles, path, locate, None)


def _level_array(prof, name):
    vals = prof["levels"].get(name)
    if vals is None:
        return None
    return np.array([np.nan if v is None else v for v in vals], dtype=float)


def _refuse(path, where, message, fix):
    raise ForecastError(message, path=path, where=where, fix=fix)


def _check_profile(prof, i, path, locate):
    """Check one profile's values; return its level arrays (input units)."""
    arrays = {name: _level_array(prof, name) for name in PROFILE_LEVEL_FIELDS}
    arrays = {k: v for k, v in arrays.items() if v is not None}
    n = arrays["pressure_hpa"].size
    for name, a in arrays.items():
        if a.size != n:
            _refuse(
                path,
                locate(i, name),
                f"{a.size} values but pressure_hpa has {n} (ragged level arrays)",
                "give every level field one value per pressure level",
            )
    p = arrays["pressure_hpa"]

    def first_bad(mask):
        return int(np.flatnonzero(mask)[0])

    if not np.all(np.isfinite(p)):
        k = first_bad(~np.isfinite(p))
        _refuse(
            path, locate(i, "pressure_hpa", k), "missing pressure", "give every level a pressure"
        )
    if np.any(p > 1100.0):
        k = first_bad(p > 1100.0)
        _refuse(
            path,
            locate(i, "pressure_hpa", k),
            f"pressure {p[k]:g} hPa is above 1100 hPa (pascals?)",
            "give pressure in hPa (divide Pa by 100)",
        )
    if np.any(p <= 0.0):
        k = first_bad(p <= 0.0)
        _refuse(
            path,
            locate(i, "pressure_hpa", k),
            f"pressure {p[k]:g} hPa is not positive",
            "give positive pressures in hPa",
        )
    d = np.diff(p)
    if not (np.all(d < 0) or np.all(d > 0)):
        k = first_bad(d * np.sign(d[0] if d[0] != 0 else -1) <= 0) + 1
        _refuse(
            path,
            locate(i, "pressure_hpa", k),
            f"pressures not strictly monotonic at {p[k]:g} hPa",
            "order the levels by pressure, without repeats",
        )
    for name in ("temperature_c", "dewpoint_c"):
        a = arrays.get(name)
        if a is None:
            continue
        with np.errstate(invalid="ignore"):
            hot, cold = a > 60.0, a < -120.0
        if np.any(hot):
            k = first_bad(hot)
            _refuse(
                path,
                locate(i, name, k),
                f"{a[k]:g} looks like kelvin in a Celsius field",
                "give degrees Celsius (subtract 273.15)",
            )
        if np.any(cold):
            k = first_bad(cold)
            _refuse(
                path,
                locate(i, name, k),
                f"{a[k]:g} C is below -120 C",
                "check the temperatures (degrees Celsius)",
            )
    t_k = arrays["temperature_c"] + T0
    for name in HUMIDITY_FIELDS:
        a = arrays.get(name)
        if a is None:
            continue
        with np.errstate(invalid="ignore"):
            if name == "relative_humidity_pct":
                rh = a / 100.0
            elif name == "dewpoint_c":
                rh = relative_humidity_from_dewpoint(t_k, a + T0)
            else:
                if np.any(a < 0):
                    k = first_bad(a < 0)
                    _refuse(
                        path,
                        locate(i, name, k),
                        f"negative specific humidity {a[k]:g}",
                        "give specific humidity in g/kg, 0 or more",
                    )
                rh = relative_humidity_from_specific_humidity(p * 100.0, t_k, a / 1000.0)
            bad = (rh < 0.0) | (rh > _RH_REFUSE)
            odd = (rh > _RH_ACCEPT) & ~bad
        if np.any(bad):
            k = first_bad(bad)
            _refuse(
                path,
                locate(i, name, k),
                f"humidity {100 * rh[k]:.0f} % (over water) is far outside 0-100 %",
                {
                    "relative_humidity_pct": "give percent 0-100",
                    "dewpoint_c": "check that dew point is in Celsius and not above temperature",
                    "specific_humidity_g_kg": "give g/kg (kg/kg x 1000)",
                }[name],
            )
        if np.any(odd):
            k = first_bad(odd)
            warnings.warn(
                f"{path}: {locate(i, name, k)}: humidity {100 * rh[k]:.0f} % over "
                "water; clipped to saturation",
                PlausibilityWarning,
                stacklevel=5,
            )
    for name in ("cloud_liquid_g_kg", "cloud_ice_g_kg", "rain_g_kg", "snow_g_kg"):
        a = arrays.get(name)
        if a is not None:
            with np.errstate(invalid="ignore"):
                bad = (a < 0) | (a > 30.0)
            if np.any(bad):
                k = first_bad(bad)
                _refuse(
                    path,
                    locate(i, name, k),
                    f"{a[k]:g} g/kg out of range 0-30",
                    "give the mass fraction in g/kg (kg/kg x 1000)",
                )
    checks = (
        ("cloud_fraction", 0.0, 1.0, "give a fraction 0-1 (percent / 100)"),
        (
            "vertical_velocity_m_s",
            -60.0,
            60.0,
            "give the vertical velocity in m/s (omega in Pa/s is not accepted here)",
        ),
        ("wind_u_m_s", -150.0, 150.0, "give wind components in m/s"),
        ("wind_v_m_s", -150.0, 150.0, "give wind components in m/s"),
        ("height_m", -1000.0, 40000.0, "give heights in metres above mean sea level"),
    )
    for name, lo, hi, fix in checks:
        a = arrays.get(name)
        if a is not None:
            with np.errstate(invalid="ignore"):
                bad = (a < lo) | (a > hi)
            if np.any(bad):
                k = first_bad(bad)
                _refuse(path, locate(i, name, k), f"{a[k]:g} out of range {lo:g} to {hi:g}", fix)
    for name, lo, hi, fix in (
        ("precipitation_rate_mm_h", 0.0, 500.0, "give mm/h, 0 or more"),
        ("surface_elevation_m", -500.0, 9000.0, "give metres MSL"),
        ("surface_pressure_hpa", 300.0, 1100.0, "give hPa"),
    ):
        v = prof.get(name)
        if v is not None and not lo <= v <= hi:
            _refuse(path, locate(i, name), f"{name} {v:g} out of range {lo:g}-{hi:g}", fix)
    return arrays


def _build_table(profiles, path, locate, issue_time):
    """Turn checked profile dicts into a ProfileTable (SI, surface first, NaN-padded)."""
    checked = [_check_profile(prof, i, path, locate) for i, prof in enumerate(profiles)]
    times = np.array(
        [
            parse_time(prof["valid_time"], path=path, where=locate(i, "valid_time"))
            for i, prof in enumerate(profiles)
        ],
        dtype="datetime64[ms]",
    )
    kinds = [next(h for h in HUMIDITY_FIELDS if h in arr) for arr in checked]
    sources = {}
    for name, (key, _, _) in PROFILE_LEVEL_FIELDS.items():
        if name not in HUMIDITY_FIELDS and any(name in arr for arr in checked):
            sources[key] = name
    for name, (key, _) in PROFILE_FIELDS.items():
        if any(prof.get(name) is not None for prof in profiles):
            sources[key] = name
    used = sorted(set(kinds), key=HUMIDITY_FIELDS.index)
    hum_key = PROFILE_LEVEL_FIELDS[used[0]][0] if len(used) == 1 else "relative_humidity"
    sources[hum_key] = used[0] if len(used) == 1 else "from " + " / ".join(used)
    humidity = PROFILE_LEVEL_FIELDS[kinds[0]][0] if len(set(kinds)) == 1 else "relative_humidity"
    nlev = max(a["pressure_hpa"].size for a in checked)
    P = len(profiles)
    levels, notes = {}, []
    for arr, kind in zip(checked, kinds, strict=True):
        if arr["pressure_hpa"][0] < arr["pressure_hpa"][-1]:  # surface first
            for k in arr:
                arr[k] = arr[k][::-1]
        if humidity == "relative_humidity" and kind != "relative_humidity_pct":
            arr["relative_humidity_pct"] = 100.0 * _rh_from(arr, kind)
        for k in [
            h for h in HUMIDITY_FIELDS if h in arr and PROFILE_LEVEL_FIELDS[h][0] != humidity
        ]:
            del arr[k]
    names = set().union(*checked)
    for name in names:
        key, scale, offset = PROFILE_LEVEL_FIELDS[name]
        out = np.full((P, nlev), np.nan)
        for j, arr in enumerate(checked):
            if name in arr:
                out[j, : arr[name].size] = arr[name] * scale + offset
        levels[key] = out
    scalars = {}
    for name, (key, scale) in PROFILE_FIELDS.items():
        scalars[key] = np.array(
            [np.nan if prof.get(name) is None else prof[name] * scale for prof in profiles],
            dtype=float,
        )
    nclip = _clip_humidity(levels, humidity)
    if nclip:
        notes.append(f"humidity above saturation over water clipped at {nclip} level(s)")
    if (
        "height" not in levels
        or (np.isnan(levels["height"]) & np.isfinite(levels["pressure"])).any()
    ):
        _fill_heights(levels, scalars, humidity, notes)
        sources["height"] = (
            "height_m, " if "height" in sources else ""
        ) + "computed hypsometrically where absent"
    return ProfileTable(
        np.array([str(prof["id"]) for prof in profiles], dtype=object),
        np.array([float(prof["lat"]) for prof in profiles]),
        np.array([float(prof["lon"]) for prof in profiles]),
        times,
        levels,
        scalars,
        humidity,
        [str(path)],
        issue_time,
        notes,
        sources,
    )


def _rh_from(arr, kind):
    t = arr["temperature_c"] + T0
    if kind == "dewpoint_c":
        return relative_humidity_from_dewpoint(t, arr["dewpoint_c"] + T0)
    return relative_humidity_from_specific_humidity(
        arr["pressure_hpa"] * 100.0, t, arr["specific_humidity_g_kg"] / 1000.0
    )


def _clip_humidity(levels, humidity):
    """Clip humidity to saturation over water (and 0); return the count of clipped levels."""
    a = levels[humidity]
    with np.errstate(invalid="ignore"):
        if humidity == "relative_humidity":
            limit = np.ones_like(a)
        elif humidity == "dewpoint":
            limit = levels["temperature"]
        else:
            limit = specific_humidity_from_relative_humidity(
                levels["pressure"], levels["temperature"], 1.0
            )
        over = a > limit
        levels[humidity] = np.where(
            over, limit, np.maximum(a, 0.0) if humidity != "dewpoint" else a
        )
    return int(over.sum())


def specific_humidity_of(levels, humidity):
    """Specific humidity [kg/kg] from whichever humidity the levels carry."""
    p, t, a = levels["pressure"], levels["temperature"], levels[humidity]
    with np.errstate(invalid="ignore"):
        if humidity == "specific_humidity":
            return a
        if humidity == "relative_humidity":
            return specific_humidity_from_relative_humidity(p, t, a)
        e = saturation_vapor_pressure(a)
        return specific_humidity_from_relative_humidity(p, t, e / saturation_vapor_pressure(t))


def fill_along_levels(a):
    """Fill NaN along the last axis from the nearest valid level below, else above.

    Used only to keep the hypsometric integration going through missing
    temperatures (e.g. levels below the ground); the filled values are never
    returned as data.

    >>> fill_along_levels(np.array([np.nan, 1.0, np.nan, 3.0, np.nan])).tolist()
    [1.0, 1.0, 1.0, 3.0, 3.0]
    """
    a = np.asarray(a, dtype=float)
    ok = np.isfinite(a)
    n = a.shape[-1]
    idx = np.where(ok, np.arange(n), 0)
    fwd = np.maximum.accumulate(idx, axis=-1)
    first = np.argmax(ok, axis=-1)[..., None]
    fwd = np.where(np.take_along_axis(ok, fwd, -1), fwd, first)
    return np.take_along_axis(a, fwd, -1)


def _fill_heights(levels, scalars, humidity, notes):
    """Hypsometric heights where ``height`` is absent (per profile, NaN levels kept NaN)."""
    p, t = levels["pressure"], levels["temperature"]
    q = np.nan_to_num(specific_humidity_of(levels, humidity), nan=0.0)
    zs, ps = scalars["surface_height"], scalars["surface_pressure"]
    anchored = np.isfinite(zs) & np.isfinite(ps)
    # padded levels: continue the pressure downward so the integration stays finite
    pad = ~np.isfinite(p)
    pf = np.where(pad, np.nanmin(p, axis=1, keepdims=True) * 0.5 ** np.cumsum(pad, axis=1), p)
    tf = fill_along_levels(t)
    with np.errstate(invalid="ignore"):
        z_anch = height_from_pressure_hypsometric(
            pf,
            tf,
            specific_humidity=q,
            base_height=np.where(anchored, zs, 0.0),
            base_pressure=np.where(anchored, ps, pf[:, 0]),
        )
        z_std = height_from_pressure_hypsometric(pf, tf, specific_humidity=q)
    z = np.where(anchored[:, None], z_anch, z_std)
    z = np.where(pad, np.nan, z)
    old = levels.get("height")
    levels["height"] = z if old is None else np.where(np.isfinite(old), old, z)
    notes.append(
        "heights computed hypsometrically where absent (anchored on surface "
        "elevation and pressure when both are given, else the lowest level's "
        "standard-atmosphere height)"
    )


def _as_humidity(table, humidity):
    if table.humidity == humidity:
        return table
    lv = dict(table.levels)
    q = specific_humidity_of(lv, table.humidity)
    with np.errstate(invalid="ignore"):
        e = vapor_pressure_from_specific_humidity(lv["pressure"], q)
        lv["relative_humidity"] = e / saturation_vapor_pressure(lv["temperature"])
    del lv[table.humidity]
    sources = dict(table.sources)
    sources[humidity] = "from " + sources.pop(table.humidity, table.humidity)
    return ProfileTable(
        table.ids,
        table.lat,
        table.lon,
        table.time,
        lv,
        table.scalars,
        humidity,
        table.files,
        table.issue_time,
        table.notes,
        sources,
    )


# ----------------------------------------------------------------------- CF-NetCDF

#: variable keys usable in ``var_map`` -> what they are
VAR_KEYS = {
    "temperature": "air temperature on levels",
    "relative_humidity": "relative humidity on levels (over water)",
    "dewpoint": "dew point on levels",
    "specific_humidity": "specific humidity on levels",
    "height": "geopotential height or geopotential on levels",
    "pressure": "air pressure on levels (height-level files)",
    "cloud_liquid": "cloud liquid water mass fraction",
    "cloud_ice": "cloud ice mass fraction",
    "rain": "rain mass fraction",
    "snow": "snow mass fraction",
    "cloud_fraction": "cloud area fraction in the layer",
    "vertical_velocity": "omega (Pa/s) or upward air velocity (m/s)",
    "wind_u": "eastward wind",
    "wind_v": "northward wind",
    "precipitation_rate": "precipitation flux (kg m-2 s-1) or rate (mm/h)",
    "surface_pressure": "surface air pressure",
    "surface_height": "surface altitude or surface geopotential",
}
_LEVEL_KEYS = (
    "temperature",
    "relative_humidity",
    "dewpoint",
    "specific_humidity",
    "height",
    "pressure",
    "cloud_liquid",
    "cloud_ice",
    "rain",
    "snow",
    "cloud_fraction",
    "vertical_velocity",
    "wind_u",
    "wind_v",
)
_STANDARD_NAMES = {
    "temperature": ("air_temperature",),
    "relative_humidity": ("relative_humidity",),
    "dewpoint": ("dew_point_temperature",),
    "specific_humidity": ("specific_humidity",),
    "height": ("geopotential_height", "geopotential"),
    "pressure": ("air_pressure",),
    "cloud_liquid": (
        "mass_fraction_of_cloud_liquid_water_in_air",
        "cloud_liquid_water_mixing_ratio",
    ),
    "cloud_ice": ("mass_fraction_of_cloud_ice_in_air", "cloud_ice_mixing_ratio"),
    "rain": ("mass_fraction_of_rain_in_air",),
    "snow": ("mass_fraction_of_snow_in_air",),
    "cloud_fraction": ("cloud_area_fraction_in_atmosphere_layer",),
    "vertical_velocity": ("lagrangian_tendency_of_air_pressure", "upward_air_velocity"),
    "wind_u": ("eastward_wind",),
    "wind_v": ("northward_wind",),
    "precipitation_rate": ("precipitation_flux", "lwe_precipitation_rate"),
    "surface_pressure": ("surface_air_pressure",),
    "surface_height": ("surface_altitude", "surface_geopotential"),
}
_COMMON_NAMES = {
    "temperature": ("t", "T", "temp", "TMP", "ta", "TT", "tk"),
    "relative_humidity": ("r", "rh", "RH", "hur", "RELHUM", "relhum"),
    "dewpoint": ("dpt", "DPT", "td", "dewpoint"),
    "specific_humidity": ("q", "SPFH", "hus", "QV", "qv"),
    "height": ("gh", "z", "HGT", "zg", "hgt", "Z", "GH"),
    "pressure": ("pres", "PRES", "p", "P", "pressure"),
    "cloud_liquid": ("clwc", "CLWMR", "clw", "QCLOUD", "qc", "QC"),
    "cloud_ice": ("ciwc", "ICMR", "cli", "QICE", "qi", "QI"),
    "rain": ("crwc", "RWMR", "QRAIN", "qr", "QR"),
    "snow": ("cswc", "SNMR", "QSNOW", "qs", "QS"),
    "cloud_fraction": ("cc", "cl", "TCDC", "CLD", "cldfra", "CLDFRA"),
    "vertical_velocity": ("w", "wz", "omega", "VVEL", "DZDT", "wap", "wa", "W"),
    "wind_u": ("u", "U", "UGRD", "ua"),
    "wind_v": ("v", "V", "VGRD", "va"),
    "precipitation_rate": ("prate", "PRATE", "pr", "precip_rate", "tprate"),
    "surface_pressure": ("sp", "PRES_surface", "ps", "PSFC", "pres_sfc"),
    "surface_height": (
        "orog",
        "HGT_surface",
        "hsurf",
        "HSURF",
        "zs",
        "z",
        "orography",
        "surface_geopotential",
    ),
}
# target SI unit per key; "height"-like keys also accept geopotential (divided by g)
_TARGET = {
    "temperature": "K",
    "dewpoint": "K",
    "relative_humidity": "1",
    "specific_humidity": "1",
    "height": "m",
    "pressure": "Pa",
    "cloud_liquid": "1",
    "cloud_ice": "1",
    "rain": "1",
    "snow": "1",
    "cloud_fraction": "1",
    "vertical_velocity": "m/s",
    "wind_u": "m/s",
    "wind_v": "m/s",
    "precipitation_rate": "mm/h",
    "surface_pressure": "Pa",
    "surface_height": "m",
}


@dataclass
class VarInfo:
    """A variable found in a CF file and how to bring it to SI."""

    key: str
    name: str
    found_by: str
    units: str
    scale: float
    offset: float
    level_dim: str | None
    transform: str = ""  # "" | "omega" (Pa/s -> m/s needs rho)

    def describe(self):
        """Provenance of this variable for ``Forecast.describe()``."""
        out = {"name": self.name, "found_by": self.found_by, "units": self.units}
        if self.transform == "omega":
            out["converted"] = "omega to w = -omega / (rho g)"
        return out


@dataclass
class GridFile:
    """A lazily opened CF-NetCDF file and what was found in it."""

    path: Path
    ds: object
    variables: dict
    time_dim: str | None
    times: np.ndarray
    y_dim: str
    x_dim: str
    y: np.ndarray
    x: np.ndarray
    crs: object | None
    grid: str
    level_dim: str
    levels: np.ndarray
    vertical: str  # "pressure" | "height"
    height_above_ground: bool
    issue_time: np.datetime64 | None
    notes: list
    other_dims: dict

    def raw_variable(self, name):
        """Return the netCDF4 variable (masked and scaled), or None: faster block reads.

        xarray's lazy indexing costs about 0.5 ms a read; reading the same block
        through netCDF4 directly costs a quarter of that. None when the file is
        not readable by netCDF4 (then the xarray dataset is used).
        """
        if not hasattr(self, "_nc"):
            try:
                import netCDF4

                self._nc = netCDF4.Dataset(self.path)
            except Exception:  # h5netcdf-only files: fall back to xarray
                self._nc = None
        if self._nc is None or name not in self._nc.variables:
            return None
        var = self._nc.variables[name]
        var.set_auto_maskandscale(True)
        return var


def _units_of(var):
    u = var.attrs.get("units")
    return None if u is None else str(u).strip()


def _ureg():
    from metpy.units import units

    return units


_UNIT_ALIASES = {
    "C": "degC",
    "Celsius": "degC",
    "celsius": "degC",
    "deg C": "degC",
    "degrees C": "degC",
    "degrees_Celsius": "degC",
    "fraction": "1",
    "0-1": "1",
    "-": "1",
    "": "1",
    "(0 - 1)": "1",
    "kg/kg": "kg kg-1",
    "g/kg": "g kg-1",
    "gpm": "m",
    "m2/s2": "m2 s-2",
    "m**2 s**-2": "m2 s-2",
    "mm/h": "mm h-1",
    "mm/hr": "mm h-1",
    "Pa/s": "Pa s-1",
    "m/s": "m s-1",
    "millibars": "mbar",
    "millibar": "mbar",
    "percent": "%",
    "K/K": "1",
}


def _quantity(units_str, *, path, name):
    ureg = _ureg()
    s = _UNIT_ALIASES.get(units_str, units_str)
    try:
        return ureg.Quantity(1.0, ureg.parse_units(s) if s != "1" else ureg.dimensionless)
    except Exception:
        raise ForecastError(
            f"units {units_str!r} not understood",
            path=path,
            where=name,
            fix="set a udunits/CF units attribute (e.g. K, Pa, %, kg kg-1)",
        ) from None


def _linear(units_str, target, *, path, name):
    """(scale, offset) with si = raw * scale + offset, or None if not convertible."""
    ureg = _ureg()
    q0 = _quantity(units_str, path=path, name=name)
    try:
        tgt = ureg.dimensionless if target == "1" else ureg.parse_units(target)
        if q0.dimensionality != ureg.Quantity(1.0, tgt).dimensionality:
            return None
        a = ureg.Quantity(0.0, q0.units).to(tgt).magnitude
        b = ureg.Quantity(1.0, q0.units).to(tgt).magnitude
    except Exception:
        return None
    return float(b - a), float(a)


def _conversion(key, var, *, path, name, sample):
    """Return the unit conversion of a found variable to the SI target of ``key``."""
    units_str = _units_of(var)
    transform = ""
    if units_str is None:  # guess from the values, say so
        units_str = {
            "temperature": "K" if np.nanmax(sample) > 100 else "degC",
            "dewpoint": "K" if np.nanmax(sample) > 100 else "degC",
            "relative_humidity": "%" if np.nanmax(sample) > 1.5 else "1",
            "cloud_fraction": "%" if np.nanmax(sample) > 1.5 else "1",
        }.get(key, _TARGET[key])
        guessed = True
    else:
        guessed = False
    target = _TARGET[key]
    conv = _linear(units_str, target, path=path, name=f"variable {name}")
    if conv is None and key in ("height", "surface_height"):
        c2 = _linear(units_str, "m2 s-2", path=path, name=f"variable {name}")
        if c2 is not None:
            conv = (c2[0] / G, c2[1] / G)
    if conv is None and key == "vertical_velocity":
        conv = _linear(units_str, "Pa/s", path=path, name=f"variable {name}")
        transform = "omega" if conv is not None else ""
    if conv is None and key == "precipitation_rate":
        c2 = _linear(units_str, "kg m-2 s-1", path=path, name=f"variable {name}")
        if c2 is not None:  # mass flux / rho_w -> m/s -> mm/h
            conv = (c2[0] / RHO_WATER * 3.6e6, c2[1] / RHO_WATER * 3.6e6)
    if conv is None:
        raise ForecastError(
            f"units {units_str!r} of {key} cannot be converted to {target}",
            path=path,
            where=f"variable {name}",
            fix=f"give {key} in units convertible to {target}, or map another "
            f"variable with --var {key}=NAME",
        )
    return units_str + (" (assumed: no units attribute)" if guessed else ""), conv, transform


_LAT_UNITS = {"degrees_north", "degree_north", "degree_n", "degrees_n", "degreen", "degreesn"}
_LON_UNITS = {"degrees_east", "degree_east", "degree_e", "degrees_e", "degreee", "degreese"}


def _classify_dim(ds, dim):
    """Classify a dimension: time, lat, lon, x, y, pressure, height, or None."""
    coord = ds.variables.get(dim)
    if coord is None:
        return None
    if np.issubdtype(coord.dtype, np.datetime64):
        return "time"
    for name, var in ds.coords.items():  # e.g. valid_time(step)
        if name != dim and var.dims == (dim,) and np.issubdtype(var.dtype, np.datetime64):
            return "time"
    a = coord.attrs
    std = str(a.get("standard_name", "")).lower()
    units = str(a.get("units", "")).strip()
    name = dim.lower()
    if std == "latitude" or units.lower() in _LAT_UNITS or name in ("lat", "latitude"):
        return "lat"
    if std == "longitude" or units.lower() in _LON_UNITS or name in ("lon", "longitude"):
        return "lon"
    if (
        std in ("projection_x_coordinate", "grid_longitude")
        or name in ("x", "xc")
        or str(a.get("axis", "")).upper() == "X"
    ):
        return "x"
    if (
        std in ("projection_y_coordinate", "grid_latitude")
        or name in ("y", "yc")
        or str(a.get("axis", "")).upper() == "Y"
    ):
        return "y"
    if std == "air_pressure":
        return "pressure"
    if std in ("height", "altitude", "geopotential_height"):
        return "height"
    if units:
        try:
            dim_q = _quantity(units, path=None, name=dim).dimensionality
        except ForecastError:
            dim_q = None
        ureg = _ureg()
        if dim_q == ureg.Quantity(1.0, "Pa").dimensionality:
            return "pressure"
        if dim_q == ureg.Quantity(1.0, "m").dimensionality and (
            str(a.get("axis", "")).upper() == "Z"
            or "positive" in a
            or name in ("height", "altitude", "z", "level", "lev", "alt", "heightabovesea")
        ):
            return "height"
    if str(a.get("axis", "")).upper() == "Z" or "positive" in a:
        return "level-unknown"
    return None


def _open_dataset(path):
    import xarray as xr

    errors = []
    for engine in ("netcdf4", "h5netcdf"):
        try:
            return xr.open_dataset(path, engine=engine, cache=False, decode_timedelta=True)
        except Exception as exc:  # the engines raise many kinds; report the first one
            errors.append(f"{engine}: {str(exc).splitlines()[0] if str(exc) else type(exc)}")
    raise ForecastError(
        f"not a readable NetCDF file ({errors[0]})",
        path=path,
        fix="give a CF-NetCDF file (netCDF4/HDF5 or classic), a profile JSON or a profile CSV",
    )


def _datetimes(values):
    return np.asarray(values).astype("datetime64[ms]")


def open_grid_file(path, var_map=None):
    """Open a CF-NetCDF forecast lazily and find its variables and coordinates.

    Parameters
    ----------
    path : path-like
        The file.
    var_map : dict, optional
        ``{key: variable name}`` overriding the search (keys: :data:`VAR_KEYS`).

    Returns
    -------
    GridFile
    """
    path = Path(path)
    ds = _open_dataset(path)
    var_map = dict(var_map or {})
    for key, name in var_map.items():
        if key not in VAR_KEYS:
            raise ForecastError(
                f"unknown variable key {key!r} in the variable mapping",
                path=path,
                where=f"--var {key}={name}",
                fix=f"use one of {', '.join(VAR_KEYS)}",
            )
        if name not in ds.data_vars:
            raise ForecastError(
                f"variable {name!r} (mapped to {key}) not in the file",
                path=path,
                where=f"--var {key}={name}",
                fix=f"use one of {', '.join(map(str, ds.data_vars))}",
            )
    kinds = {d: _classify_dim(ds, d) for d in ds.dims}

    def level_dim_of(var):
        dims = [
            d
            for d in var.dims
            if kinds.get(d) in ("pressure", "height", "level-unknown") and ds.sizes[d] > 1
        ]
        return dims[0] if dims else None

    def candidates(key):
        if key in var_map:
            yield var_map[key], "mapping"
        for name, var in ds.data_vars.items():
            if str(var.attrs.get("standard_name", "")) in _STANDARD_NAMES[key]:
                yield name, "standard_name"
        for name in _COMMON_NAMES[key]:
            if name in ds.data_vars:
                yield name, "name"

    def find(key, hdims=None):
        want_level = key in _LEVEL_KEYS
        for name, how in candidates(key):
            var = ds[name]
            if hdims is not None and not set(hdims) <= set(var.dims):
                continue
            has_level = level_dim_of(var) is not None
            if has_level == want_level:
                return name, how
            if how == "mapping":
                raise ForecastError(
                    f"variable {name!r} mapped to {key} "
                    f"{'has no' if want_level else 'has a'} vertical dimension",
                    path=path,
                    where=f"--var {key}={name}",
                    fix="map a variable of the right shape",
                )
        return None

    found = find("temperature")
    if found is None:
        raise ForecastError(
            "no air temperature on levels found (standard_name "
            "air_temperature or a common name like t, T, TMP)",
            path=path,
            fix="map the temperature variable with --var temperature=NAME",
        )
    tname = found[0]
    tvar = ds[tname]
    dims = {d: kinds.get(d) for d in tvar.dims}
    hx = [d for d, k in dims.items() if k in ("lon", "x")]
    hy = [d for d, k in dims.items() if k in ("lat", "y")]
    if len(hx) != 1 or len(hy) != 1:
        raise ForecastError(
            f"cannot tell the horizontal coordinates of {tname!r} (dims {', '.join(tvar.dims)})",
            path=path,
            where=f"variable {tname}",
            fix="give 1-D latitude/longitude or projection_x/y coordinates with "
            "standard_name attributes",
        )
    x_dim, y_dim = hx[0], hy[0]
    level_dim = level_dim_of(tvar)
    if kinds[level_dim] == "level-unknown":
        raise ForecastError(
            f"vertical coordinate {level_dim!r} is neither pressure nor height (model levels?)",
            path=path,
            where=f"coordinate {level_dim}",
            fix="interpolate to pressure or height levels first (units hPa/Pa or m)",
        )
    time_dims = [d for d, k in dims.items() if k == "time"]
    other = {
        d: 0 for d, k in dims.items() if d not in (x_dim, y_dim, level_dim) and d not in time_dims
    }
    for d in other:
        if ds.sizes[d] > 1:
            raise ForecastError(
                f"{tname!r} has an extra dimension {d!r} of size {ds.sizes[d]}",
                path=path,
                where=f"variable {tname}",
                fix="select one member/realisation before screening",
            )
    if len(time_dims) > 1:
        raise ForecastError(
            f"{tname!r} has several time dimensions",
            path=path,
            where=f"variable {tname}",
            fix="give valid times along one dimension",
        )
    time_dim = time_dims[0] if time_dims else None
    if time_dim is not None:
        tc = ds.variables[time_dim]
        if not np.issubdtype(tc.dtype, np.datetime64):
            tc = next(
                v
                for n, v in ds.coords.items()
                if v.dims == (time_dim,) and np.issubdtype(v.dtype, np.datetime64)
            )
        times = _datetimes(tc.values)
    else:
        scal = [
            v
            for n, v in ds.coords.items()
            if v.ndim == 0
            and np.issubdtype(v.dtype, np.datetime64)
            and str(v.attrs.get("standard_name", "")) != "forecast_reference_time"
            and n not in ("forecast_reference_time", "reftime")
        ]
        if not scal:
            raise ForecastError(
                "no valid time found",
                path=path,
                where=f"variable {tname}",
                fix="add a time coordinate (CF units 'hours since ...')",
            )
        times = _datetimes(np.atleast_1d(scal[0].values))
    if np.any(np.isnat(times)):
        raise ForecastError(
            "undecodable valid time",
            path=path,
            where=f"dimension {time_dim}",
            fix="give CF time units such as 'hours since 2027-01-14 00:00:00'",
        )
    issue = None
    for n, v in ds.coords.items():
        if (
            (
                str(v.attrs.get("standard_name", "")) == "forecast_reference_time"
                or n in ("forecast_reference_time", "reftime")
            )
            and v.ndim == 0
            and np.issubdtype(v.dtype, np.datetime64)
        ):
            issue = np.datetime64(v.values, "ms")
    notes = []
    crs, grid = None, "latitude-longitude"
    if kinds[x_dim] == "x":
        gm_name = tvar.attrs.get("grid_mapping")
        if not gm_name or gm_name not in ds.variables:
            raise ForecastError(
                f"projected coordinates {x_dim}/{y_dim} without a grid_mapping",
                path=path,
                where=f"variable {tname}",
                fix="add the CF grid_mapping attribute and variable",
            )
        from pyproj import CRS

        try:
            crs = CRS.from_cf(dict(ds[gm_name].attrs))
        except Exception as exc:
            raise ForecastError(
                f"grid mapping not understood ({exc})",
                path=path,
                where=f"variable {gm_name}",
                fix="give CF grid_mapping attributes",
            ) from None
        grid = f"projected ({ds[gm_name].attrs.get('grid_mapping_name', crs.name)})"
        notes.append(
            "grid mapping: "
            + ", ".join(
                f"{k}={np.asarray(v).tolist()}"
                for k, v in ds[gm_name].attrs.items()
                if k != "crs_wkt"
            )
        )
    elif kinds[x_dim] != "lon" or kinds[y_dim] != "lat":
        raise ForecastError(
            f"mixed horizontal coordinates {y_dim}/{x_dim}",
            path=path,
            where=f"variable {tname}",
            fix="give latitude-longitude or x/y",
        )

    def coord_si(dim, kind):
        c = ds.variables[dim]
        vals = np.asarray(c.values, dtype=float)
        u = _units_of(c)
        if kind in ("x", "y") and crs is not None and not crs.is_geographic:
            conv = _linear(u or "m", "m", path=path, name=f"coordinate {dim}")
            return vals * conv[0] + conv[1] if conv else vals
        if kind in ("pressure", "height"):
            target = "Pa" if kind == "pressure" else "m"
            if u is None:
                raise ForecastError(
                    f"vertical coordinate {dim!r} has no units",
                    path=path,
                    where=f"coordinate {dim}",
                    fix="add units (hPa, Pa or m)",
                )
            conv = _linear(u, target, path=path, name=f"coordinate {dim}")
            if conv is None and kind == "height":
                c2 = _linear(u, "m2 s-2", path=path, name=f"coordinate {dim}")
                conv = None if c2 is None else (c2[0] / G, c2[1] / G)
            if conv is None:
                raise ForecastError(
                    f"units {u!r} of {dim!r} are not {target}",
                    path=path,
                    where=f"coordinate {dim}",
                    fix="give hPa, Pa or m",
                )
            return vals * conv[0] + conv[1]
        return vals

    x = coord_si(x_dim, kinds[x_dim])
    y = coord_si(y_dim, kinds[y_dim])
    for dim, vals in ((x_dim, x), (y_dim, y)):
        d = np.diff(vals)
        if vals.size < 2 or not (np.all(d > 0) or np.all(d < 0)):
            raise ForecastError(
                f"coordinate {dim!r} is not strictly monotonic with 2+ points",
                path=path,
                where=f"coordinate {dim}",
                fix="give a regular grid with at least 2 points per axis",
            )
    vertical = kinds[level_dim]
    levels = coord_si(level_dim, vertical)
    level_coords = {level_dim: levels}
    std_z = str(ds.variables[level_dim].attrs.get("standard_name", ""))
    above_ground = vertical == "height" and std_z == "height"
    hdims = (y_dim, x_dim)
    variables = {}
    sample_index = {y_dim: 0, x_dim: 0, **({time_dim: 0} if time_dim else {}), **other}

    def add(key, required=False):
        res = find(key, hdims)
        if res is None:
            if required:
                raise ForecastError(
                    f"no {VAR_KEYS[key]} found", path=path, fix=f"map it with --var {key}=NAME"
                )
            return None
        name, how = res
        var = ds[name]
        ld = level_dim_of(var) if key in _LEVEL_KEYS else None
        if ld is not None and ld not in level_coords:
            if kinds[ld] != vertical:
                raise ForecastError(
                    f"{name!r} is on {kinds[ld]} levels but {tname!r} on {vertical} levels",
                    path=path,
                    where=f"variable {name}",
                    fix="give all level variables on one kind of level",
                )
            level_coords[ld] = coord_si(ld, kinds[ld])
        idx = {d: i for d, i in sample_index.items() if d in var.dims}
        for d in var.dims:
            if d not in idx and d not in (ld,) and ds.sizes[d] == 1:
                idx[d] = 0
        sample = np.asarray(var.isel(idx).values, dtype=float)
        units, (scale, offset), transform = _conversion(
            key, var, path=path, name=name, sample=sample
        )
        variables[key] = VarInfo(key, name, how, units, scale, offset, ld, transform)
        return variables[key], sample * scale + offset

    _, t_sample = add("temperature", required=True)
    with np.errstate(invalid="ignore"):
        if np.nanmax(t_sample, initial=-np.inf) > 360 or np.nanmin(t_sample, initial=np.inf) < 150:
            raise ForecastError(
                f"temperatures {np.nanmin(t_sample):.1f}..{np.nanmax(t_sample):.1f} K are "
                f"implausible (units attribute {variables['temperature'].units!r})",
                path=path,
                where=f"variable {tname}",
                fix="correct the units attribute (K or degC)",
            )
    for hum in ("relative_humidity", "dewpoint", "specific_humidity"):
        found = add(hum)
        if found is not None:
            break
    else:
        raise ForecastError(
            "no humidity variable found (relative_humidity, "
            "dew_point_temperature or specific_humidity)",
            path=path,
            fix="map one with --var relative_humidity=NAME (or dewpoint=, specific_humidity=)",
        )
    if hum == "relative_humidity":
        rh = found[1]
        with np.errstate(invalid="ignore"):
            if np.nanmax(rh, initial=0.0) > _RH_REFUSE:
                raise ForecastError(
                    f"relative humidity up to {100 * np.nanmax(rh):.0f} % "
                    "(units attribute "
                    f"{variables['relative_humidity'].units!r})",
                    path=path,
                    where=f"variable {variables['relative_humidity'].name}",
                    fix="give % or a fraction and set the units attribute",
                )
    if vertical == "height":
        add("pressure", required=True)
    for key in (
        "height",
        "cloud_liquid",
        "cloud_ice",
        "rain",
        "snow",
        "cloud_fraction",
        "vertical_velocity",
        "wind_u",
        "wind_v",
        "precipitation_rate",
        "surface_pressure",
        "surface_height",
    ):
        if key == "height" and vertical == "height":
            continue
        add(key)
    if vertical == "height" and above_ground:
        if "surface_height" not in variables:
            raise ForecastError(
                "height levels are above ground (standard_name height) but "
                "the file has no surface height",
                path=path,
                where="vertical coordinate",
                fix="add surface_altitude or map one with --var surface_height=NAME",
            )
        notes.append("height levels are above ground (standard_name height)")
    for info in variables.values():
        if info.level_dim is not None and info.level_dim != level_dim:
            notes.append(
                f"{info.name} is on its own levels ({info.level_dim}); interpolated "
                f"to the {level_dim} levels"
            )
    gf = GridFile(
        path,
        ds,
        variables,
        time_dim,
        times,
        y_dim,
        x_dim,
        y,
        x,
        crs,
        grid,
        level_dim,
        levels,
        vertical,
        above_ground,
        issue,
        notes,
        other,
    )
    gf.level_coords = level_coords
    return gf
