"""University of Wyoming sounding lists: the TEXT:LIST page and its CSV output.

Text list (the "TEXT:LIST" page, saved as HTML or as text, or only its table):
a title ``72681 BOI Boise Observations at 12Z 09 Dec 2010``, a header line of
column names (``PRES HGHT TEMP DWPT RELH MIXR DRCT SKNT THTA THTE THTV``), a line
of units, dashes, one line per level, then the block "Station information and
sounding indices" (``Station number: 72681``, ``Observation time: 101209/1200``,
``Station latitude: 43.56``, ``Station longitude: -116.21``, ``Station elevation:
874.0``, indices). The table is fixed-width and right-aligned with blanks for
missing values: the fields are cut at the column ends of the header line, never
split on whitespace (a blank dew point would shift every later value). A page may
hold several ascents (one title each). Position and time come from the station
block (else the title, for the time), else from the options.

CSV (``TEXT:CSV``): one row per level with the header
``time,longitude,latitude,pressure_hPa,geopotential height_m,temperature_C,dew
point temperature_C,ice point temperature_C,relative humidity_%,humidity wrt
ice_%,mixing ratio_g/kg,wind direction_degree,wind speed_m/s`` (the archive's
own names, as recorded in the siphon test fixtures); ``name_unit`` is split at the
last underscore, so variants with other units (``hPa``/``Pa``, ``C``/``K``,
``m/s``/``knot``) or the shorter names ``height``, ``dewpoint`` are read too.
Blank fields and ``-99.99`` positions are missing. The time of the first row (the
launch, in UTC, the archive's convention) is the sounding's valid time.

Humidity: the dew point where a level gives one (reported to 0.1 C), else the
relative humidity (whole percent), both over water (see :mod:`.common`).
"""

from __future__ import annotations

import csv
import re
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from icing.errors import ForecastError
from icing.forecast.soundings.common import KNOT, RawSounding, number, wind_components

__all__ = ["parse_wyoming_text", "parse_wyoming_csv", "looks_like_text", "looks_like_csv"]

_TAG = re.compile(r"<[^>]*>")
_TITLE = re.compile(
    r"(?:(?P<num>\d{5})\s+)?(?:(?P<id>[A-Z0-9]{3,4})\s+)?.*?Observations at\s+"
    r"(?P<hh>\d{1,2})Z\s+(?P<dd>\d{1,2})\s+(?P<mon>[A-Za-z]{3})\s+(?P<yyyy>\d{4})"
)
_INFO = re.compile(
    r"^\s*(?P<key>Station identifier|Station number|Observation time|Station latitude"
    r"|Station longitude|Station elevation)\s*:\s*(?P<value>.*?)\s*$"
)
_DASHES = re.compile(r"^\s*-{10,}\s*$")
_MONTHS = {
    m: i for i, m in enumerate("jan feb mar apr may jun jul aug sep oct nov dec".split(), 1)
}
#: text-list column -> (RawSounding field, {unit: (scale, offset)}); others are read, unused
_TEXT_COLUMNS = {
    "PRES": ("pressure_hpa", {"hPa": (1.0, 0.0), "mb": (1.0, 0.0)}),
    "HGHT": ("height_m", {"m": (1.0, 0.0)}),
    "TEMP": ("temperature_c", {"C": (1.0, 0.0), "K": (1.0, -273.15)}),
    "DWPT": ("dewpoint_c", {"C": (1.0, 0.0), "K": (1.0, -273.15)}),
    "RELH": ("relative_humidity_pct", {"%": (1.0, 0.0)}),
    "DRCT": ("direction", {"deg": (1.0, 0.0)}),
    "SKNT": ("speed", {"knot": (KNOT, 0.0), "kt": (KNOT, 0.0), "m/s": (1.0, 0.0)}),
    "SPED": ("speed", {"m/s": (1.0, 0.0), "knot": (KNOT, 0.0)}),
}
_DEFAULT_UNITS = {"PRES": "hPa", "HGHT": "m", "TEMP": "C", "DWPT": "C", "RELH": "%"}
_DEFAULT_UNITS.update({"DRCT": "deg", "SKNT": "knot", "SPED": "m/s"})
#: missing markers per field (999 and 9999 only where they cannot be a real value)
_MISSING = {
    "pressure_hpa": (-9999.0, -8888.0, 9999.0, 99999.0),
    "height_m": (-9999.0, -8888.0, 99999.0),
    "temperature_c": (999.0, -999.0, 999.9, -999.9, 9999.0, -9999.0, -8888.0),
    "dewpoint_c": (999.0, -999.0, 999.9, -999.9, 9999.0, -9999.0, -8888.0),
    "relative_humidity_pct": (999.0, -999.0, 9999.0, -9999.0, -8888.0),
    "direction": (999.0, 9999.0, -9999.0, -8888.0),
    "speed": (999.0, 9999.0, -9999.0, -8888.0),
    "position": (-99.99, -999.0, 999.0, -9999.0, 9999.0),
}
_FIELDS = ("pressure_hpa", "height_m", "temperature_c", "dewpoint_c", "relative_humidity_pct")


def looks_like_text(head):
    """Tell whether ``head`` (the start of a file, as text) is a Wyoming text list."""
    for line in head.splitlines()[:60]:
        line = _TAG.sub("", line)
        if _is_header(line) or ("Observations at" in line and _TITLE.search(line)):
            return True
    return False


def looks_like_csv(head):
    """Tell whether ``head`` opens with a Wyoming CSV header (not icing's profile CSV)."""
    first = head.lstrip("\ufeff").split("\n", 1)[0]
    raw = [f.strip().lower() for f in first.split(",")]
    if "valid_time" in raw or "id" in raw:  # the profile CSV (icing's own format)
        return False
    names = [_csv_name(f)[0] for f in raw]
    return "pressure" in names and "temperature" in names


def _is_header(line):
    tokens = line.split()
    return (
        "PRES" in tokens and "TEMP" in tokens and all(t.isalpha() and t.isupper() for t in tokens)
    )


# ----------------------------------------------------------------------- text list


def _spans(header):
    """(name, start, end) of every column: a column ends where its name ends."""
    out, start = [], 0
    for m in re.finditer(r"\S+", header):
        out.append((m.group(), start, m.end()))
        start = m.end()
    return out


def _units(line, spans, path, n):
    units = {}
    for name, a, b in spans:
        unit = line[a:b].strip()
        known = _TEXT_COLUMNS.get(name, (None, None))[1]
        if known is not None and unit not in known:
            raise ForecastError(
                f"unknown unit {unit!r} of column {name}",
                path=path,
                where=f"line {n}, column {name}",
                fix=f"give {name} in {' or '.join(known)}",
            )
        units[name] = unit
    return units


def _blocks(lines, path):
    """Split a page into ascents: title, header spans, units, data rows, station block."""
    blocks, cur, state = [], None, "out"

    def new(title=None):
        b = {"title": title, "spans": None, "units": None, "rows": [], "info": {}, "line": None}
        blocks.append(b)
        return b

    for n, raw in enumerate(lines, start=1):
        line = _TAG.sub("", raw).rstrip("\r\n")
        title = _TITLE.search(line) if "Observations at" in line else None
        if title:
            cur, state = new((title, n)), "out"
            continue
        if _is_header(line):
            if cur is None or cur["spans"] is not None:
                cur = new()
            cur["spans"], cur["line"], state = _spans(line), n, "units"
            continue
        info = _INFO.match(line)
        if info and cur is not None:
            cur["info"][info.group("key")] = (info.group("value"), n)
            state = "out"
            continue
        if state == "units":
            if _DASHES.match(line) or not line.strip():
                continue
            if not re.search(r"\d", line):
                cur["units"] = _units(line, cur["spans"], path, n)
                continue
            state = "table"
        if state == "table":
            if _DASHES.match(line):
                continue
            if not line.strip() or "Station information" in line:
                state = "out"
                continue
            cur["rows"].append((n, line))
    return [b for b in blocks if b["spans"] is not None or b["rows"]]


def _row_values(n, line, spans, path):
    end = spans[-1][2]
    if line[end:].strip():
        raise ForecastError(
            f"text beyond the last column: {line[end:].strip()!r}",
            path=path,
            where=f"line {n}",
            fix="keep every value inside its column (the table is fixed-width)",
        )
    out = {}
    for name, a, b in spans:
        field = _TEXT_COLUMNS.get(name, (name, None))[0]
        out[name] = number(
            line[a:b],
            path=path,
            where=f"line {n}, column {name}",
            missing=_MISSING.get(field, ()),
            fix="give a number, or blanks for a missing value, inside the column",
        )
    return out


def _text_time(block, path):
    value = block["info"].get("Observation time")
    if value is not None:
        m = re.fullmatch(r"(\d{2})(\d{2})(\d{2})/(\d{2})(\d{2})", value[0])
        year = None
        if block["title"] is not None:
            year = int(block["title"][0].group("yyyy"))
        if m:
            yy, mo, dd, hh, mi = (int(g) for g in m.groups())
            if year is None or year % 100 != yy:
                year = yy + (1900 if yy >= 70 else 2000)  # the archive starts in the 1970s
            return _datetime(year, mo, dd, hh, mi, path, f"line {value[1]}")
        raise ForecastError(
            f"observation time {value[0]!r} is not YYMMDD/HHMM",
            path=path,
            where=f"line {value[1]}",
            fix="write it as e.g. 101209/1200",
        )
    if block["title"] is not None:
        t, n = block["title"]
        month = _MONTHS.get(t.group("mon").lower())
        if month is None:
            raise ForecastError(
                f"unknown month {t.group('mon')!r} in the title",
                path=path,
                where=f"line {n}",
                fix="write the month as Jan, Feb, ...",
            )
        return _datetime(
            int(t.group("yyyy")),
            month,
            int(t.group("dd")),
            int(t.group("hh")),
            0,
            path,
            f"line {n}",
        )
    return None


def _datetime(y, mo, d, h, mi, path, where):
    try:
        t = datetime(y, mo, d, h, mi)
    except ValueError:
        raise ForecastError(
            f"no such time {y:04d}-{mo:02d}-{d:02d} {h:02d}:{mi:02d}",
            path=path,
            where=where,
            fix="check the observation time",
        ) from None
    return np.datetime64(t, "ms")


def _info_number(block, key, path, lo, hi):
    value = block["info"].get(key)
    if value is None:
        return None
    v = number(value[0], path=path, where=f"line {value[1]}", fix=f"give the {key.lower()}")
    if not lo <= v <= hi:
        raise ForecastError(
            f"{key.lower()} {v:g} out of range {lo:g} to {hi:g}",
            path=path,
            where=f"line {value[1]}",
            fix=f"check the {key.lower()}",
        )
    return v


def _text_block(block, path, stem):
    spans = block["spans"]
    if spans is None:
        raise ForecastError(
            "levels without a PRES/TEMP header line",
            path=path,
            where=f"line {block['rows'][0][0]}",
            fix="keep the header line of column names above the levels",
        )
    names = [s[0] for s in spans]
    for need in ("PRES", "TEMP"):
        if need not in names:
            raise ForecastError(
                f"no {need} column",
                path=path,
                where=f"line {block['line']}",
                fix="give a full list",
            )
    if "DWPT" not in names and "RELH" not in names:
        raise ForecastError(
            "no humidity column (DWPT or RELH)",
            path=path,
            where=f"line {block['line']}",
            fix="give the list with its DWPT or RELH column",
        )
    if not block["rows"]:
        raise ForecastError(
            "no levels under the header",
            path=path,
            where=f"line {block['line']}",
            fix="give levels",
        )
    units = block["units"] or {k: _DEFAULT_UNITS.get(k, "") for k in names}
    rows = [_row_values(n, line, spans, path) for n, line in block["rows"]]
    cols = {}
    for name in names:
        field, table = _TEXT_COLUMNS.get(name, (None, None))
        if field is None or field in cols:
            continue
        scale, offset = table[units.get(name) or _DEFAULT_UNITS[name]]
        cols[field] = np.array([r[name] for r in rows]) * scale + offset
    return _raw_from_columns(block, cols, names, path, stem)


def _raw_from_columns(block, cols, names, path, stem):
    lines = np.array([r for r, _ in block["rows"]])
    title = block["title"][0] if block["title"] else None
    num = _info_text(block, "Station number") or (title.group("num") if title else None)
    ident = _info_text(block, "Station identifier") or (title.group("id") if title else None)
    t = _text_time(block, path)
    label = " ".join(x for x in (num, ident) if x) or stem
    if t is not None:
        label += " " + str(np.datetime_as_string(t, unit="h")) + "Z"
    where = f"line {block['title'][1]}" if block["title"] else f"lines {lines[0]}-{lines[-1]}"
    labels = {f: f"column {c}" for c, (f, _) in _TEXT_COLUMNS.items() if c in names}
    return _raw(
        cols,
        lines,
        path,
        labels | {"wind_u": "columns DRCT/SKNT", "wind_v": "columns DRCT/SKNT"},
        label=label,
        where=where,
        lat=_info_number(block, "Station latitude", path, -90.0, 90.0),
        lon=_info_number(block, "Station longitude", path, -180.0, 360.0),
        elevation_m=_info_number(block, "Station elevation", path, -500.0, 9000.0),
        time=t,
    )


def _raw(cols, lines, path, labels, **meta):
    """Build a RawSounding from parsed columns (absent ones NaN), dew point preferred."""
    nan = np.full(lines.size, np.nan)
    p, u, v = _pressure_and_wind(cols, lines, path, labels["pressure_hpa"], labels["wind_u"])
    return RawSounding(
        lines=lines,
        pressure_hpa=p,
        height_m=cols.get("height_m", nan),
        temperature_c=cols["temperature_c"],
        dewpoint_c=cols.get("dewpoint_c", nan),
        relative_humidity_pct=cols.get("relative_humidity_pct", nan),
        wind_u=u,
        wind_v=v,
        columns=labels,
        prefer="dewpoint",
        **meta,
    )


def _info_text(block, key):
    value = block["info"].get(key)
    return value[0] if value and value[0] else None


def _pressure_and_wind(cols, lines, path, p_label, wind_label):
    """Pressure (every level must have one) and wind components of a parsed table."""
    p = cols["pressure_hpa"]
    if not np.all(np.isfinite(p)):
        k = int(np.flatnonzero(~np.isfinite(p))[0])
        raise ForecastError(
            "missing pressure",
            path=path,
            where=f"line {lines[k]}, {p_label}",
            fix="give every level its pressure",
        )
    nan = np.full(lines.size, np.nan)
    direction, speed = cols.get("direction", nan), cols.get("speed", nan)
    with np.errstate(invalid="ignore"):
        bad = (direction < 0) | (direction > 360) | (speed < 0)
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        raise ForecastError(
            f"wind {direction[k]:g} deg {speed[k]:g} out of range",
            path=path,
            where=f"line {lines[k]}, {wind_label}",
            fix="give the direction 0-360 deg and a speed of 0 or more",
        )
    return (p, *wind_components(direction, speed))


def parse_wyoming_text(text, path):
    """Read a Wyoming text list into :class:`RawSounding` objects (one per ascent)."""
    path = Path(path)
    blocks = _blocks(text.splitlines(), path)
    if not blocks:
        raise ForecastError(
            "no sounding table (a header line with PRES and TEMP) found",
            path=path,
            fix="give the University of Wyoming TEXT:LIST page or its table",
        )
    return [_text_block(b, path, path.stem) for b in blocks]


# ----------------------------------------------------------------------- CSV

#: CSV column name (lower case, without unit) -> (RawSounding field, {unit: (scale, offset)})
_CSV_COLUMNS = {
    "pressure": ("pressure_hpa", {"hpa": (1.0, 0.0), "mb": (1.0, 0.0), "pa": (0.01, 0.0)}),
    "geopotential height": ("height_m", {"m": (1.0, 0.0)}),
    "height": ("height_m", {"m": (1.0, 0.0)}),
    "temperature": ("temperature_c", {"c": (1.0, 0.0), "k": (1.0, -273.15)}),
    "dew point temperature": ("dewpoint_c", {"c": (1.0, 0.0), "k": (1.0, -273.15)}),
    "dewpoint": ("dewpoint_c", {"c": (1.0, 0.0), "k": (1.0, -273.15)}),
    "relative humidity": ("relative_humidity_pct", {"%": (1.0, 0.0)}),
    "wind direction": ("direction", {"degree": (1.0, 0.0), "deg": (1.0, 0.0)}),
    "wind speed": ("speed", {"m/s": (1.0, 0.0), "knot": (KNOT, 0.0), "kt": (KNOT, 0.0)}),
}


def _csv_name(text):
    s = " ".join(text.strip().split())
    name, _, unit = s.rpartition("_") if "_" in s else (s, "", "")
    return name.lower(), unit


def _csv_header(header, path):
    fields = {}
    for j, text in enumerate(header):
        name, unit = _csv_name(text)
        if name in ("time", "latitude", "longitude"):
            fields.setdefault(name, (j, None))
            continue
        spec = _CSV_COLUMNS.get(name)
        if spec is None or spec[0] in fields:
            continue
        if unit.lower() not in spec[1]:
            raise ForecastError(
                f"unknown unit {unit!r} of column {text.strip()!r}",
                path=path,
                where="line 1 (header)",
                fix=f"give it in {' or '.join(spec[1])}",
            )
        fields[spec[0]] = (j, spec[1][unit.lower()])
    for need in ("pressure_hpa", "temperature_c"):
        if need not in fields:
            raise ForecastError(
                f"no {need.split('_')[0]} column",
                path=path,
                where="line 1 (header)",
                fix="give the CSV as the archive writes it (pressure_hPa, temperature_C, ...)",
            )
    if "dewpoint_c" not in fields and "relative_humidity_pct" not in fields:
        raise ForecastError(
            "no humidity column",
            path=path,
            where="line 1 (header)",
            fix="give the dew point temperature_C or relative humidity_% column",
        )
    return fields


def _csv_time(text, path, n):
    try:
        t = datetime.fromisoformat(text.strip())
    except ValueError:
        raise ForecastError(
            f"time {text.strip()!r} is not YYYY-MM-DD HH:MM:SS",
            path=path,
            where=f"line {n}, column time",
            fix="write the time as e.g. 2010-12-09 11:06:00 (UTC)",
        ) from None
    if t.tzinfo is not None:
        t = t.astimezone(UTC).replace(tzinfo=None)
    return np.datetime64(t, "ms")


def parse_wyoming_csv(text, path):
    """Read a Wyoming CSV (one ascent) into a one-element list of :class:`RawSounding`."""
    path = Path(path)
    rows = list(csv.reader(text.lstrip("\ufeff").splitlines()))
    if not rows:
        raise ForecastError("empty file", path=path, fix="give the archive's CSV")
    header, body = rows[0], [(n, r) for n, r in enumerate(rows[1:], start=2) if any(r)]
    fields = _csv_header(header, path)
    if not body:
        raise ForecastError("no data rows", path=path, fix="give one row per level")
    cols = {k: [] for k in fields if k not in ("time",)}
    t = None
    for n, r in body:
        if len(r) != len(header):
            raise ForecastError(
                f"{len(r)} cells but the header has {len(header)}",
                path=path,
                where=f"line {n}",
                fix="give every row one cell per header column",
            )
        for key, (j, conv) in fields.items():
            if key == "time":
                t = _csv_time(r[j], path, n) if t is None else t
                continue
            miss = _MISSING["position"] if conv is None else _MISSING.get(key, ())
            v = number(
                r[j], path=path, where=f"line {n}, column {header[j].strip()}", missing=miss
            )
            cols[key].append(v if conv is None else v * conv[0] + conv[1])
    arr = {k: np.array(v) for k, v in cols.items()}
    lat = _first(arr.get("latitude"), -90.0, 90.0)
    lon = _first(arr.get("longitude"), -180.0, 360.0)
    block = {"title": None, "rows": body, "info": {}, "line": 1}
    raw = _raw_from_csv(block, arr, fields, header, path, t, lat, lon)
    return [raw]


def _first(a, lo, hi):
    if a is None:
        return None
    ok = np.isfinite(a) & (a >= lo) & (a <= hi)
    return float(a[np.argmax(ok)]) if ok.any() else None


def _raw_from_csv(block, arr, fields, header, path, t, lat, lon):
    lines = np.array([n for n, _ in block["rows"]])
    name = {k: f"column {header[j].strip()}" for k, (j, _) in fields.items()}
    label = path.stem + ("" if t is None else " " + str(np.datetime_as_string(t, unit="m")) + "Z")
    note = "valid time: the launch time of the first row (UTC, the archive's convention)"
    return _raw(
        arr,
        lines,
        path,
        name | {"wind_u": "the wind columns", "wind_v": "the wind columns"},
        label=label,
        where=f"lines 2-{lines[-1]}",
        lat=lat,
        lon=lon,
        time=t,
        notes=(note,) if t is not None else (),
    )
