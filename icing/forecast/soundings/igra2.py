"""IGRA2 sounding data files (NOAA Integrated Global Radiosonde Archive, version 2).

Format (NOAA NCEI, "IGRA 2 Sounding Data Files", format description
``igra2-data-format.txt``, versions 2.0-2.2): each ascent is a header record and
NUMLEV data records, columns fixed:

=========  =======  ==========================================================
header     columns  meaning
=========  =======  ==========================================================
HEADREC    1        ``#``
ID         2-12     station (e.g. USM00070026)
YEAR       14-17
MONTH      19-20
DAY        22-23
HOUR       25-26    nominal or observation hour UTC, 99 = missing
RELTIME    28-31    release time HHMM UTC; HH99 minute missing, 9999 missing
NUMLEV     33-36    number of data records that follow
P_SRC      38-45    source of the pressure levels
NP_SRC     47-54    source of the non-pressure levels
LAT        56-62    latitude, ten-thousandths of a degree
LON        64-71    longitude, ten-thousandths of a degree
=========  =======  ==========================================================

=========  =======  ==========================================================
data       columns  meaning
=========  =======  ==========================================================
LVLTYP1    1        1 standard pressure level, 2 other pressure level,
                    3 non-pressure level
LVLTYP2    2        1 surface, 2 tropopause, 0 other
ETIME      4-8      elapsed time since launch MMMSS
PRESS      10-15    pressure [Pa]
PFLAG      16       quality flag
GPH        17-21    geopotential height [m]
ZFLAG      22       quality flag
TEMP       23-27    temperature [0.1 C]
TFLAG      28       quality flag
RH         29-33    relative humidity [0.1 %]
DPDP       35-39    dew-point depression [0.1 C]
WDIR       41-45    wind direction [deg from north]
WSPD       47-51    wind speed [0.1 m/s]
=========  =======  ==========================================================

Missing values: -9999 (missing before quality assurance) and -8888 (removed by
IGRA quality assurance; the other values at the level remain valid); both are
read as missing, and the notes count the -8888 removals. Quality flags, as NOAA
documents them: blank = not checked by the climatology checks (but passed all
other applicable checks), ``A`` = within the tier-1 climatological limits (tier 2
not applied), ``B`` = passed tier 1 and tier 2. All three mark a value that
passed the archive's quality assurance (a failed value is replaced by -8888), so
all are used; any other flag is refused.

Reading: the surface level (LVLTYP2 = 1) is the ground; pressure levels below it
are dropped; non-pressure levels (LVLTYP1 = 3, heights only, usually winds) are
left out and counted in the notes; the valid time is the nominal HOUR (the
release time goes to the notes), or the release hour where HOUR is 99. A file
holds many ascents: each becomes one profile with its own valid time. An ascent
with fewer data records than its NUMLEV (a truncated file) is left out, with a
note. Humidity: the reported relative humidity (0.1 %) where given, else the dew
point from the dew-point depression, both over water (see :mod:`.common`).
"""

from __future__ import annotations

import re
from datetime import datetime
from pathlib import Path

import numpy as np

from icing.errors import ForecastError
from icing.forecast.soundings.common import RawSounding, wind_components

__all__ = ["parse_igra2", "looks_like_igra2"]

_HEADER = re.compile(
    r"^#(?P<id>[A-Z0-9]{11}) (?P<year>\d{4}) (?P<month>\d\d) (?P<day>\d\d) (?P<hour>\d\d) "
    r"(?P<reltime>[\d ]{4}) (?P<numlev>[\d ]{4}) (?P<psrc>.{8}) (?P<npsrc>.{8}) "
    r"(?P<lat>[\d -]{7}) (?P<lon>[\d -]{8})\s*$"
)
_DATA = re.compile(
    r"^(?P<t1>\d)(?P<t2>\d) (?P<etime>[\d -]{5}) (?P<press>[\d -]{6})(?P<pflag>.)"
    r"(?P<gph>[\d -]{5})(?P<zflag>.)(?P<temp>[\d -]{5})(?P<tflag>.)(?P<rh>[\d -]{5}) "
    r"(?P<dpdp>[\d -]{5}) (?P<wdir>[\d -]{5}) (?P<wspd>[\d -]{5})\s*$"
)
_FIELDS = ("press", "gph", "temp", "rh", "dpdp", "wdir", "wspd")
_SCALE = {"press": 0.01, "gph": 1.0, "temp": 0.1, "rh": 0.1, "dpdp": 0.1, "wdir": 1.0}
_SCALE["wspd"] = 0.1
_COLUMNS = {
    "pressure_hpa": "PRESS (columns 10-15)",
    "height_m": "GPH (columns 17-21)",
    "temperature_c": "TEMP (columns 23-27)",
    "dewpoint_c": "DPDP (columns 35-39)",
    "relative_humidity_pct": "RH (columns 29-33)",
    "wind_u": "WDIR/WSPD (columns 41-51)",
    "wind_v": "WDIR/WSPD (columns 41-51)",
}


def looks_like_igra2(head):
    """Tell whether ``head`` (the start of a file, as text) opens with an IGRA2 header."""
    first = head.lstrip("\ufeff").split("\n", 1)[0].rstrip("\r")
    return bool(_HEADER.match(first))


def _int(text, *, path, where, what):
    s = text.strip()
    try:
        return int(s) if s else -9999
    except ValueError:
        raise ForecastError(
            f"{what} {s!r} is not a whole number",
            path=path,
            where=where,
            fix="keep the IGRA2 fixed columns (see the archive's format description)",
        ) from None


def _header(line, n, path):
    m = _HEADER.match(line)
    if m is None:
        raise ForecastError(
            "not an IGRA2 header record",
            path=path,
            where=f"line {n}",
            fix="keep the header as '#ID YEAR MM DD HH HHMM NLEV ...' in its fixed columns",
        )
    g = {
        k: _int(m.group(k), path=path, where=f"line {n}", what=k.upper())
        for k in ("year", "month", "day", "hour", "reltime", "numlev", "lat", "lon")
    }
    lat, lon = g["lat"] / 1e4, g["lon"] / 1e4
    if not (-90.0 <= lat <= 90.0 and -180.0 <= lon <= 360.0):
        raise ForecastError(
            f"position {lat:g},{lon:g} out of range",
            path=path,
            where=f"line {n}, LAT/LON",
            fix="give LAT and LON in ten-thousandths of a degree",
        )
    return m.group("id"), g, lat, lon


def _time(g, n, path):
    """Return the valid time (nominal hour, else release hour; None if neither) and notes."""
    hour, rel = g["hour"], g["reltime"]
    notes = []
    if hour == 99:
        if rel < 0 or rel // 100 > 23:
            return None, ["no hour and no release time: left out"]
        hour = rel // 100
        notes.append(f"nominal hour missing: the release hour {hour:02d} UTC is used")
    elif 0 <= rel <= 2399 and rel // 100 <= 23:
        minute = rel % 100
        notes.append(
            f"released {rel // 100:02d}:{minute:02d} UTC"
            if minute < 60
            else f"released at {rel // 100:02d} UTC"
        )
    try:
        t = datetime(g["year"], g["month"], g["day"], hour)
    except ValueError:
        raise ForecastError(
            f"no such date/hour {g['year']}-{g['month']:02d}-{g['day']:02d} {hour:02d}",
            path=path,
            where=f"line {n}",
            fix="check YEAR, MONTH, DAY and HOUR of the header record",
        ) from None
    return np.datetime64(t, "ms"), notes


def _data(line, n, path):
    m = _DATA.match(line)
    if m is None:
        raise ForecastError(
            "not an IGRA2 data record",
            path=path,
            where=f"line {n}",
            fix="keep the data record's fixed columns (LVLTYP1 LVLTYP2 ETIME PRESS ...)",
        )
    t1, t2 = int(m.group("t1")), int(m.group("t2"))
    if t1 not in (1, 2, 3) or t2 not in (0, 1, 2):
        raise ForecastError(
            f"level type {t1}{t2} unknown",
            path=path,
            where=f"line {n}, columns 1-2",
            fix="LVLTYP1 is 1, 2 or 3 and LVLTYP2 is 0, 1 or 2",
        )
    for flag in ("pflag", "zflag", "tflag"):
        if m.group(flag) not in (" ", "A", "B"):
            raise ForecastError(
                f"quality flag {m.group(flag)!r} unknown",
                path=path,
                where=f"line {n}, {flag.upper()}",
                fix="IGRA2 flags are blank, A or B",
            )
    vals = [_int(m.group(f), path=path, where=f"line {n}", what=f.upper()) for f in _FIELDS]
    return t1, t2, vals


def _ascent(station, g, lat, lon, n_head, records, path):
    """One ascent's records -> RawSounding, or None (with the reason) when unusable."""
    t, notes = _time(g, n_head, path)
    label = f"{station} {np.datetime_as_string(t, unit='h')}Z" if t is not None else station
    if t is None:
        return None, f"{station} line {n_head}: {notes[0]}"
    lines = np.array([r[0] for r in records])
    t1 = np.array([r[1] for r in records])
    t2 = np.array([r[2] for r in records])
    v = np.array([r[3] for r in records], dtype=float).reshape(len(records), len(_FIELDS))
    removed = int(np.sum(v == -8888))
    v = np.where((v == -9999) | (v == -8888), np.nan, v) * np.array([_SCALE[f] for f in _FIELDS])
    press, gph, temp, rh, dpdp, wdir, wspd = v.T
    surface = np.flatnonzero((t2 == 1) & np.isfinite(press))
    nonp = (t1 == 3) | ~np.isfinite(press)
    if nonp.any():
        notes.append(f"{int(nonp.sum())} level(s) without pressure (heights only) left out")
    if removed:
        notes.append(f"{removed} value(s) removed by the archive's quality assurance (-8888)")
    with np.errstate(invalid="ignore"):
        bad = (wdir < 0) | (wdir > 360) | (wspd < 0) | (dpdp < 0) | (rh < 0)
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        raise ForecastError(
            "negative humidity or wind, or direction above 360",
            path=path,
            where=f"line {lines[k]}",
            fix="check the RH, DPDP, WDIR and WSPD columns of this record",
        )
    u, w = wind_components(wdir, wspd)
    keep = ~nonp
    idx = np.flatnonzero(keep)
    return RawSounding(
        label=label,
        where=f"line {n_head}",
        lines=lines[keep],
        pressure_hpa=press[keep],
        height_m=gph[keep],
        temperature_c=temp[keep],
        dewpoint_c=(temp - dpdp)[keep],
        relative_humidity_pct=rh[keep],
        wind_u=u[keep],
        wind_v=w[keep],
        columns=_COLUMNS,
        lat=lat,
        lon=lon,
        elevation_m=float(gph[surface[0]])
        if surface.size and np.isfinite(gph[surface[0]])
        else None,
        time=t,
        surface=int(np.searchsorted(idx, surface[0])) if surface.size else None,
        prefer="relative_humidity",
        notes=tuple(notes),
    ), None


def parse_igra2(text, path):
    """Read an IGRA2 data file into :class:`RawSounding` objects and file notes."""
    path = Path(path)
    raws, notes = [], []
    head = None
    records = []

    def close(truncated_at=None):
        if head is None:
            return
        station, g, lat, lon, n = head
        if len(records) < g["numlev"]:
            notes.append(
                f"{station} line {n}: {len(records)} of {g['numlev']} levels in the file "
                "(truncated): left out"
            )
            return
        raw, why = _ascent(station, g, lat, lon, n, records, path)
        if raw is None:
            notes.append(why)
        else:
            raws.append(raw)

    for n, line in enumerate(text.splitlines(), start=1):
        line = line.rstrip("\r")
        if line.startswith("#"):
            close()
            station, g, lat, lon = _header(line, n, path)
            head, records = (station, g, lat, lon, n), []
            continue
        if not line.strip():
            continue
        if head is None:
            raise ForecastError(
                "data record before the first header record",
                path=path,
                where=f"line {n}",
                fix="start the file with a '#' header record",
            )
        if len(records) >= head[1]["numlev"]:
            raise ForecastError(
                f"more data records than the {head[1]['numlev']} the header announces",
                path=path,
                where=f"line {n}",
                fix=f"correct NUMLEV in the header at line {head[4]} or remove the extra records",
            )
        records.append((n, *_data(line, n, path)))
    close()
    if not raws:
        raise ForecastError(
            "no complete sounding in the file",
            path=path,
            fix="give an IGRA2 data file with at least one complete ascent",
        )
    return raws, notes
