"""What every radiosonde reader shares: one ascent as read, its cleaning, the table.

A reader turns its format into :class:`RawSounding` objects (one per ascent, levels
in file order, missing markers already NaN, the file's line of every level). The
steps here are the same for every format:

1. position and time: from the file, else from the options (:class:`SoundingSite`);
   a sounding without either is refused in one line naming the option;
2. repeated levels (the same pressure on consecutive lines): one is kept, the one
   with most values, the first of equals; the notes say which;
3. pressure must decrease up the file, else one-line refusal;
4. levels below the station are dropped: the file's own surface level where it
   marks one (IGRA2), else the first level at or above the station elevation
   (less a 50 m allowance: station lists and the ascent's own surface level differ
   by tens of metres), else the first level with a temperature (the University of
   Wyoming lists write below-ground standard levels with a height and nothing
   else); the ground is that level's height (else the station elevation);
5. heights missing between reported ones are filled hypsometrically and scaled to
   meet the reported heights (never a jump); the reported heights must rise;
6. humidity becomes relative humidity over water per level from whichever the
   level reports (dew point, dew-point depression or relative humidity);
7. wind direction and speed become components.

The result goes through the profile readers' own checks
(:func:`icing.forecast.table.build_table`: kelvin in Celsius fields, humidity
far above saturation, ranges), so a sounding and a profile file are judged alike.
Levels without temperature or humidity stay in the table as NaN: the column
diagnosis marks them invalid (a coverage gap at those levels, never dry air).

Humidity convention: radiosonde relative humidity and dew point are reported with
respect to liquid water at all temperatures, also below 0 C (American
Meteorological Society, Glossary of Meteorology, "relative humidity": "Unless
specified otherwise, relative humidity is reported with respect to water rather
than ice because most hygrometers are sensitive to relative humidity with respect
to water even at subfreezing temperatures"; WMO-No. 8, Guide to Instruments and
Methods of Observation, Vol. I, chapter 12, from memory). The University of
Wyoming CSV output states it itself: it gives "relative humidity_%" beside a
separate "humidity wrt ice_%". Soundings are therefore read as over-water without
conversion, and the provenance says so.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field, replace

import numpy as np

from icing.calc.thermo import (
    height_from_pressure_hypsometric,
    relative_humidity_from_dewpoint,
    specific_humidity_from_relative_humidity,
)
from icing.constants import T0
from icing.errors import ForecastError
from icing.forecast.assemble import fill_along_levels
from icing.forecast.table import build_table as _build_table

__all__ = [
    "RawSounding",
    "SoundingSite",
    "parse_station",
    "to_table",
    "HUMIDITY_NOTE",
    "KNOT",
    "GROUND_ALLOWANCE_M",
    "POSITION_TOLERANCE_KM",
    "MAX_SOUNDINGS",
    "REPEAT_TOLERANCE",
    "number",
    "wind_components",
]

#: metres per second in one knot (international knot, 1852 m / 3600 s)
KNOT = 1852.0 / 3600.0
#: how far below the station elevation the ascent's own surface level may lie [m]
GROUND_ALLOWANCE_M = 50.0
#: how far the --station position may lie from the position the file gives [km]
POSITION_TOLERANCE_KM = 10.0
#: repeats of one pressure farther apart than this are refused, not merged: 1 C is ten
#: times the reporting step of temperature, 50 m several times the difference of the
#: archive's height-indexed wind levels from the pressure level they round to
REPEAT_TOLERANCE = {"temperature_c": 1.0, "height_m": 50.0}
#: the most soundings one file may bring (each is a candidate column in memory)
MAX_SOUNDINGS = 2000
HUMIDITY_NOTE = (
    "humidity: radiosonde dew point and relative humidity are over liquid water at all "
    "temperatures (the reporting convention; AMS Glossary of Meteorology, 'relative "
    "humidity'); read as over-water, no conversion"
)
_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)$")


@dataclass(frozen=True)
class SoundingSite:
    """Where and when a sounding was launched, from the options, for files that do not say.

    A file's own position and time always win; the options fill what the file
    lacks (``--station LAT,LON,ELEV_M``, ``--time ISO8601``).
    """

    lat: float | None = None
    """Station latitude. [deg]"""
    lon: float | None = None
    """Station longitude. [deg]"""
    elevation_m: float | None = None
    """Station elevation above mean sea level. [m]"""
    time: np.datetime64 | None = None
    """Launch (observation) time, UTC, datetime64[ms]."""

    @property
    def has_position(self) -> bool:
        """True when the options give a position."""
        return self.lat is not None and self.lon is not None


def parse_station(text, *, where="--station"):
    """Parse ``LAT,LON,ELEV_M`` into a :class:`SoundingSite` (time unset).

    >>> parse_station("43.56,-116.21,874")
    SoundingSite(lat=43.56, lon=-116.21, elevation_m=874.0, time=None)
    """
    parts = [p.strip() for p in str(text).split(",")]
    fix = "write e.g. --station=43.56,-116.21,874 (latitude, longitude, elevation in metres)"
    if len(parts) != 3 or not all(_NUMBER.match(p) for p in parts):
        raise ForecastError(f"{where} {text!r} is not LAT,LON,ELEV_M", where=where, fix=fix)
    lat, lon, elev = (float(p) for p in parts)
    if not (-90.0 <= lat <= 90.0 and -180.0 <= lon <= 360.0 and -500.0 <= elev <= 9000.0):
        raise ForecastError(
            f"{where} {text!r} out of range",
            where=where,
            fix="latitude -90..90, longitude -180..180, elevation -500..9000 m",
        )
    return SoundingSite(lat, lon, elev)


def number(text, *, path, where, missing=(), fix="give a number or leave the field blank"):
    """Read one numeric field: blank or a missing marker -> NaN, text -> one-line error."""
    s = text.strip()
    if not s:
        return np.nan
    if not _NUMBER.match(s):
        raise ForecastError(f"{s!r} is not a number", path=path, where=where, fix=fix)
    v = float(s)
    if not np.isfinite(v):  # e.g. hundreds of digits
        raise ForecastError(f"{s[:20]!r}... is out of range", path=path, where=where, fix=fix)
    return np.nan if v in missing else v


def wind_components(direction_deg, speed_m_s):
    """Eastward and northward wind [m/s] from the direction it blows FROM [deg] and speed.

    ``u = -V sin(dir)``, ``v = -V cos(dir)`` (meteorological convention).

    >>> [round(float(c), 6) + 0.0 for c in wind_components(270.0, 10.0)]
    [10.0, 0.0]
    """
    d = np.radians(np.asarray(direction_deg, dtype=float))
    s = np.asarray(speed_m_s, dtype=float)
    return -s * np.sin(d), -s * np.cos(d)


@dataclass(frozen=True)
class RawSounding:
    """One ascent as a reader found it: levels in file order, missing values NaN."""

    label: str
    """Profile id (station and time where known)."""
    where: str
    """Place of the ascent in the file, for messages (``line 1``, ``lines 5-139``)."""
    lines: np.ndarray
    """File line of every level (int); for files without lines, the level's index."""
    pressure_hpa: np.ndarray
    """Pressure of every level [hPa]; NaN only where the reader keeps such a level."""
    height_m: np.ndarray
    """Geopotential height [m] (NaN where not reported)."""
    temperature_c: np.ndarray
    """Temperature [C]."""
    dewpoint_c: np.ndarray
    """Dew point over water [C] (NaN where not reported)."""
    relative_humidity_pct: np.ndarray
    """Relative humidity over water [%] (NaN where not reported)."""
    wind_u: np.ndarray
    """Eastward wind [m/s]."""
    wind_v: np.ndarray
    """Northward wind [m/s]."""
    columns: dict
    """Level field -> how the file names it, for messages (``"column DWPT"``)."""
    lat: float | None = None
    """Latitude the file gives [deg]."""
    lon: float | None = None
    """Longitude the file gives [deg]."""
    elevation_m: float | None = None
    """Station elevation the file gives [m]."""
    time: np.datetime64 | None = None
    """Observation time the file gives (UTC, datetime64[ms])."""
    surface: int | None = None
    """Index of the level the file marks as the surface (IGRA2), else None."""
    prefer: str = "dewpoint"
    """Humidity to take where a level reports both: "dewpoint" or "relative_humidity"."""
    notes: tuple = field(default_factory=tuple)
    """What the reader did that the user should know."""
    place: str = "line"
    """What ``lines`` count, for messages (``"line"``, ``"profile 3, level"``)."""
    ground: tuple | None = None
    """(pressure [hPa] or None, height [m] or None) of the ground where the reader
    knows it exactly (a model's surface) and has dropped the levels below it."""


# ------------------------------------------------------------------ position and time


def _geodesic_km(lat1, lon1, lat2, lon2):
    from pyproj import Geod  # pyproj is already loaded by the profile forecast

    return abs(Geod(ellps="WGS84").inv(lon1, lat1, lon2, lat2)[2]) / 1000.0


def _place_and_time(raw, site, path):
    """Position, elevation and time of one ascent (the file's, else the options'), notes."""
    site = site or SoundingSite()
    lat, lon, notes = raw.lat, raw.lon, []
    if lat is None or lon is None:
        if not site.has_position:
            raise ForecastError(
                "the sounding gives no station position",
                path=path,
                where=raw.where,
                fix="give --station LAT,LON,ELEV_M (e.g. --station=43.56,-116.21,874)",
            )
        lat, lon = site.lat, site.lon
        notes.append("position from --station")
    elif site.has_position:
        d = _geodesic_km(lat, lon, site.lat, site.lon)
        if d > POSITION_TOLERANCE_KM:
            raise ForecastError(
                f"--station {site.lat:g},{site.lon:g} is {d:.0f} km from the position the "
                f"file gives ({lat:g},{lon:g})",
                path=path,
                where=raw.where,
                fix="drop --station (the file's position is used) or check the file",
            )
        notes.append("position from the file (--station agrees within 10 km)")
    elev = raw.elevation_m if raw.elevation_m is not None else site.elevation_m
    t = raw.time if raw.time is not None else site.time
    if t is None:
        raise ForecastError(
            "the sounding gives no observation time",
            path=path,
            where=raw.where,
            fix="give --time ISO8601 (e.g. --time 2010-12-09T12:00Z)",
        )
    if raw.time is None:
        notes.append("observation time from --time")
    elif site.time is not None and site.time != raw.time:
        notes.append("observation time from the file (--time not used for it)")
    return float(lat), float(lon), elev, np.datetime64(t, "ms"), notes


# ------------------------------------------------------------------ levels


def _level_arrays(raw):
    return {
        "pressure_hpa": raw.pressure_hpa,
        "height_m": raw.height_m,
        "temperature_c": raw.temperature_c,
        "dewpoint_c": raw.dewpoint_c,
        "relative_humidity_pct": raw.relative_humidity_pct,
        "wind_u": raw.wind_u,
        "wind_v": raw.wind_v,
    }


def _drop_repeats(raw, arrays, lines, path):
    """Keep one of consecutive levels at the same pressure (most values, then the first).

    Repeats that disagree (temperature or height apart by more than
    :data:`REPEAT_TOLERANCE`) are refused: which one is right cannot be told.
    """
    p = arrays["pressure_hpa"]
    same = np.concatenate([[False], p[1:] == p[:-1]])  # level at the pressure of the one before
    keep = np.ones(p.size, bool)
    if not same.any():
        return keep, []
    group = np.cumsum(~same) - 1
    filled = np.sum([np.isfinite(a) for a in arrays.values()], axis=0)
    notes = []
    for g in np.unique(group[same]):  # only the few pressures given more than once
        idx = np.flatnonzero(group == g)
        for name, tol in REPEAT_TOLERANCE.items():
            v = arrays[name][idx]
            v = v[np.isfinite(v)]
            if v.size > 1 and v.max() - v.min() > tol:
                what = name.split("_")[0]
                raise ForecastError(
                    f"{p[idx[0]]:g} hPa given {idx.size} times with different {what}s "
                    f"({', '.join(f'{x:g}' for x in v)})",
                    path=path,
                    where=f"{raw.place}s {', '.join(str(int(lines[i])) for i in idx)}, "
                    f"{raw.columns[name]}",
                    fix="remove the wrong line",
                )
        best = idx[np.argmax(filled[idx])]  # argmax: the first of equals
        keep[idx] = False
        keep[best] = True
        others = ", ".join(str(int(lines[i])) for i in idx if i != best)
        notes.append(
            f"{p[best]:g} hPa repeated: {raw.place} {int(lines[best])} kept, {others} left out"
        )
    return keep, notes


def _check_decreasing(raw, p, z, lines, path):
    """Pressure must fall up the file, and reported heights must rise with it."""
    dp = np.diff(p)
    if np.any(dp >= 0):
        k = int(np.flatnonzero(dp >= 0)[0]) + 1
        raise ForecastError(
            f"pressure {p[k]:g} hPa is not below the {p[k - 1]:g} hPa of the level before: "
            "pressure must decrease with height",
            path=path,
            where=f"{raw.place} {int(lines[k])}, {raw.columns['pressure_hpa']}",
            fix="list the levels from the surface up, each once",
        )
    known = np.flatnonzero(np.isfinite(z))
    dz = np.diff(z[known])
    if np.any(dz < 0):
        k = int(known[int(np.flatnonzero(dz < 0)[0]) + 1])
        raise ForecastError(
            f"height {z[k]:g} m at {p[k]:g} hPa is below a lower-pressure level's: "
            "pressure must decrease with height",
            path=path,
            where=f"{raw.place} {int(lines[k])}, {raw.columns['height_m']}",
            fix="check the heights and pressures of these levels",
        )


def _ground(surface_p, arrays, elev):
    """(index of the lowest level in the air, ground height or None), or (None, None).

    The file's surface level where it marks one; else the first level with a
    temperature not more than the allowance below the station elevation. When that
    level lies more than the allowance above the station (the surface observation
    is missing), the air starts at the first level not below the station, and the
    levels up to the first temperature are kept as levels without data.
    """
    p, z, t = arrays["pressure_hpa"], arrays["height_m"], arrays["temperature_c"]
    if surface_p is not None and np.isfinite(surface_p) and (p == surface_p).any():
        g = int(np.argmax(p == surface_p))
        return g, (z[g] if np.isfinite(z[g]) else elev)
    low = high = np.zeros(p.size, bool)
    if elev is not None:
        with np.errstate(invalid="ignore"):
            low = np.isfinite(z) & (z < elev - GROUND_ALLOWANCE_M)
            high = np.isfinite(z) & (z > elev + GROUND_ALLOWANCE_M)
    ok = np.isfinite(t) & ~low
    if not ok.any():
        return None, None
    g = int(np.argmax(ok))
    if high[g]:
        g = int(np.argmax(~low))
        return g, elev
    return g, (z[g] if np.isfinite(z[g]) else elev)


def _fill_heights(p_hpa, t_c, rh_pct, z):
    """Heights where not reported: hypsometric between reported ones, scaled to meet them.

    Returns the heights and the count filled. Levels above the highest or below the
    lowest reported height continue hypsometrically from it; with no reported height
    at all the heights stay NaN (the profile table computes them from the ground).
    """
    missing = ~np.isfinite(z)
    known = np.flatnonzero(~missing)
    if not missing.any() or known.size == 0:
        return z, 0
    tk = fill_along_levels(t_c) + T0
    with np.errstate(all="ignore"):  # implausible values are refused by the table checks
        q = specific_humidity_from_relative_humidity(p_hpa * 100.0, tk, rh_pct / 100.0)
        zh = height_from_pressure_hypsometric(
            p_hpa * 100.0, tk, specific_humidity=np.nan_to_num(q)
        )
    idx = np.arange(z.size)
    below = np.maximum.accumulate(np.where(~missing, idx, -1))  # last reported at or below
    above = np.minimum.accumulate(np.where(~missing, idx, z.size)[::-1])[::-1]
    has_b, has_a = below >= 0, above < z.size
    b, a = np.clip(below, 0, z.size - 1), np.clip(above, 0, z.size - 1)
    with np.errstate(all="ignore"):
        scale = np.where(has_b & has_a & (a > b), (z[a] - z[b]) / (zh[a] - zh[b]), 1.0)
        out = np.where(has_b, z[b] + (zh - zh[b]) * scale, z[a] - (zh[a] - zh))
    return np.where(missing, out, z), int(missing.sum())


def _humidity_pct(raw, t, td, rh):
    """Relative humidity over water [%] per level from what the level reports."""
    with np.errstate(all="ignore"):  # implausible values are refused by the table checks
        from_td = 100.0 * relative_humidity_from_dewpoint(t + T0, td + T0)
    if raw.prefer == "dewpoint":
        return np.where(np.isfinite(from_td), from_td, rh)
    return np.where(np.isfinite(rh), rh, from_td)


def _cut_below_ground(raw, arrays, lines, elev, path):
    """Drop the levels under the ground; return arrays, lines, ground height, notes."""
    surface_p = None if raw.surface is None else raw.pressure_hpa[raw.surface]
    g, ground_z = _ground(surface_p, arrays, elev)
    if raw.ground is not None and arrays["pressure_hpa"].size:
        g, ground_z = 0, raw.ground[1]  # the reader cut at the model's surface already
    if g is None:
        raise ForecastError(
            "no level with a temperature above the station",
            path=path,
            where=raw.where,
            fix="check the file: it holds no usable level",
        )
    notes = []
    if g > 0:
        p_g = arrays["pressure_hpa"][g]
        notes.append(f"{g} level(s) below the station left out (ground {p_g:g} hPa)")
    if raw.ground is None and elev is not None and ground_z is not None:
        if abs(ground_z - elev) > 10.0:
            notes.append(
                f"station elevation {elev:g} m, the ascent's surface level at {ground_z:g} m: "
                "the surface level is the ground"
            )
    return {k: v[g:] for k, v in arrays.items()}, lines[g:], ground_z, notes


def _clean(raw, site, path):
    """One ascent -> (profile dict for the table, file line per level, notes)."""
    lat, lon, elev, t, notes = _place_and_time(raw, site, path)
    arrays = _level_arrays(raw)
    lines = np.asarray(raw.lines)
    notes += list(raw.notes)
    keep, rep = _drop_repeats(raw, arrays, lines, path)
    notes += rep
    arrays, lines, ground_z, cut = _cut_below_ground(
        raw, {k: v[keep] for k, v in arrays.items()}, lines[keep], elev, path
    )
    notes += cut
    p, z = arrays["pressure_hpa"], arrays["height_m"]
    _check_decreasing(raw, p, z, lines, path)
    if p.size < 2:
        raise ForecastError(
            f"only {p.size} level above the station",
            path=path,
            where=raw.where,
            fix="give a sounding with at least two levels",
        )
    t_c = arrays["temperature_c"]
    rh = _humidity_pct(raw, t_c, arrays["dewpoint_c"], arrays["relative_humidity_pct"])
    z, nfill = _fill_heights(p, t_c, rh, z)
    if nfill:
        notes.append(f"heights of {nfill} level(s) filled hypsometrically between reported ones")
    prof = {
        "id": raw.label,
        "lat": lat,
        "lon": lon,
        "valid_time": str(np.datetime_as_string(t, unit="s")) + "Z",
        "levels": {
            "pressure_hpa": p.tolist(),
            "height_m": _none_for_nan(z),
            "temperature_c": _none_for_nan(t_c),
            "relative_humidity_pct": _none_for_nan(rh),
            "wind_u_m_s": _none_for_nan(arrays["wind_u"]),
            "wind_v_m_s": _none_for_nan(arrays["wind_v"]),
        },
    }
    surface_p = float(p[0]) if raw.ground is None else raw.ground[0]
    if surface_p is not None:
        prof["surface_pressure_hpa"] = float(surface_p)
    if ground_z is not None and np.isfinite(ground_z):
        prof["surface_elevation_m"] = float(ground_z)
    return prof, lines, notes


def _none_for_nan(a):
    return [None if not np.isfinite(v) else float(v) for v in a]


def to_table(raws, site, path, *, kind, sources, notes=(), humidity_note=HUMIDITY_NOTE):
    """Clean every ascent and build one :class:`~icing.forecast.table.ProfileTable`.

    Parameters
    ----------
    raws : list of RawSounding
        The ascents of one file, in file order.
    site : SoundingSite or None
        Position and time from the options, for ascents whose file does not say.
    path : path-like
        The file (for messages and provenance).
    kind : str
        The format, for the notes ("University of Wyoming text list", ...).
    sources : dict
        Table key -> how the file names it (provenance: ``temperature`` ->
        ``"TEMP [C]"``).
    notes : sequence of str
        Notes about the whole file.
    humidity_note : str
        The humidity convention, for the provenance (radiosondes: over water).
    """
    if not raws:
        raise ForecastError(
            "no sounding in the file", path=path, fix="give a file with at least one ascent"
        )
    if len(raws) > MAX_SOUNDINGS:
        raise ForecastError(
            f"{len(raws)} soundings in one file (at most {MAX_SOUNDINGS} are read)",
            path=path,
            fix="cut the file to the days of the flight (keep each header with its levels)",
        )
    profiles, lines, all_notes = [], [], [f"{kind}: {len(raws)} sounding(s)", *notes]
    for raw in raws:
        prof, ln, nt = _clean(raw, site, path)
        profiles.append(prof)
        lines.append(ln)
        all_notes += [f"{raw.label}: {n}" for n in nt]
    columns = [raw.columns for raw in raws]

    def locate(i, name, k=None):
        label = columns[i].get(_FIELD_OF.get(name, name), name)
        if k is None:
            return f"{raws[i].where}, {label}"
        return f"{raws[i].place} {int(lines[i][k])}, {label}"

    table = _build_table(profiles, path, locate, None)
    src = {
        key: name for key, name in sources.items() if key in table.levels or key in table.scalars
    }
    src["relative_humidity"] = sources.get("relative_humidity", "relative humidity over water")
    for key, what in (
        ("surface_height", "the ascent's surface level (else the station elevation)"),
        ("surface_pressure", "the ascent's surface level"),
    ):
        if np.isfinite(table.scalars[key]).any():
            src.setdefault(key, what)
        else:
            src.pop(key, None)
    return replace(table, notes=all_notes + table.notes + [humidity_note], sources=src)


#: table field of the checks -> RawSounding column key used for messages
_FIELD_OF = {"wind_u_m_s": "wind_u", "wind_v_m_s": "wind_v"}
