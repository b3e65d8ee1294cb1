"""Profiles in SI: the :class:`ProfileTable` every profile reader yields, and how it is built.

Profile readers (JSON, CSV, and the sounding formats) turn their file into a
list of profile dicts in the profile-file field names (``pressure_hpa``,
``temperature_c`` ...) and hand it to :func:`build_table`, which checks every
value (:func:`check_profile`), converts to SI, orders the levels surface first,
pads them with NaN to one level count, clips humidity to saturation over water
and computes heights hypsometrically where absent.

Every problem with the input raises :class:`icing.errors.ForecastError` naming
the file, the place (``profiles[2].levels.temperature_c[4]``, ``line 7, column
dewpoint_c``) and the fix, on one line.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from datetime import UTC, datetime

import numpy as np

from icing.calc.thermo import (
    height_from_pressure_hypsometric,
    relative_humidity_from_dewpoint,
    relative_humidity_from_specific_humidity,
    saturation_vapor_pressure,
    specific_humidity_from_relative_humidity,
    vapor_pressure_from_specific_humidity,
)
from icing.constants import T0
from icing.errors import ForecastError, PlausibilityWarning
from icing.forecast.assemble import fill_along_levels, specific_humidity_of

__all__ = [
    "PROFILE_LEVEL_FIELDS",
    "PROFILE_FIELDS",
    "HUMIDITY_FIELDS",
    "ProfileTable",
    "parse_time",
    "check_profile",
    "build_table",
]

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


@dataclass(frozen=True)
class ProfileTable:
    """Profiles in SI units, levels padded with NaN to one count, surface first.

    ``levels`` maps the ``diagnose_columns`` keyword names (plus ``wind_u``,
    ``wind_v``) to arrays (P, L); ``scalars`` maps per-profile names to (P,).
    """

    ids: np.ndarray
    """Profile ids (P,) (station or column names)."""
    lat: np.ndarray
    """Latitude of each profile (P,). [deg]"""
    lon: np.ndarray
    """Longitude of each profile (P,). [deg]"""
    time: np.ndarray
    """Valid (launch) time of each profile (P,), datetime64[ms] UTC."""
    levels: dict
    """``{key: (P, L)}`` level arrays in SI, surface first, NaN padded."""
    scalars: dict
    """``{key: (P,)}``: precipitation_rate_mm_h, surface_height [m], surface_pressure [Pa]."""
    humidity: str
    """The humidity key the levels carry."""
    files: list
    """The files read."""
    issue_time: np.datetime64 | None = None
    """Forecast reference time, when the file says it."""
    notes: list = field(default_factory=list)
    """What the reader did that a user should know."""
    sources: dict = field(default_factory=dict)
    """``{key: source field name}`` for the provenance."""

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


def _level_array(prof, name):
    vals = prof["levels"].get(name)
    if vals is None:
        return None
    return np.array([np.nan if v is None else v for v in vals], dtype=float)


def _refuse(path, where, message, fix):
    raise ForecastError(message, path=path, where=where, fix=fix)


def _first_bad(mask):
    return int(np.flatnonzero(mask)[0])


def _check_shapes(arrays, i, path, locate):
    """Refuse ragged level arrays."""
    n = arrays["pressure_hpa"].size
    for name, a in arrays.items():
        if a.size != n:
            _refuse(
                path,
                locate(i, name),
                f"{a.size} values but pressure_hpa has {n} (ragged level arrays)",
                "give every level field one value per pressure level",
            )


def _check_pressures(p, i, path, locate):
    """Refuse missing, non-positive, Pa-sized or non-monotonic pressures."""
    where = "pressure_hpa"
    if not np.all(np.isfinite(p)):
        k = _first_bad(~np.isfinite(p))
        _refuse(path, locate(i, where, k), "missing pressure", "give every level a pressure")
    if np.any(p > 1100.0):
        k = _first_bad(p > 1100.0)
        _refuse(
            path,
            locate(i, where, k),
            f"pressure {p[k]:g} hPa is above 1100 hPa (pascals?)",
            "give pressure in hPa (divide Pa by 100)",
        )
    if np.any(p <= 0.0):
        k = _first_bad(p <= 0.0)
        _refuse(
            path,
            locate(i, where, k),
            f"pressure {p[k]:g} hPa is not positive",
            "give positive pressures in hPa",
        )
    d = np.diff(p)
    if not (np.all(d < 0) or np.all(d > 0)):
        k = _first_bad(d * np.sign(d[0] if d[0] != 0 else -1) <= 0) + 1
        _refuse(
            path,
            locate(i, where, k),
            f"pressures not strictly monotonic at {p[k]:g} hPa",
            "order the levels by pressure, without repeats",
        )


def _check_temperatures(arrays, i, path, locate):
    """Refuse kelvin in a Celsius field and temperatures below -120 C."""
    for name in ("temperature_c", "dewpoint_c"):
        a = arrays.get(name)
        if a is None:
            continue
        with np.errstate(invalid="ignore"):
            hot, cold = a > 60.0, a < -120.0
        if np.any(hot):
            k = _first_bad(hot)
            _refuse(
                path,
                locate(i, name, k),
                f"{a[k]:g} looks like kelvin in a Celsius field",
                "give degrees Celsius (subtract 273.15)",
            )
        if np.any(cold):
            k = _first_bad(cold)
            _refuse(
                path,
                locate(i, name, k),
                f"{a[k]:g} C is below -120 C",
                "check the temperatures (degrees Celsius)",
            )


_HUMIDITY_FIX = {
    "relative_humidity_pct": "give percent 0-100",
    "dewpoint_c": "check that dew point is in Celsius and not above temperature",
    "specific_humidity_g_kg": "give g/kg (kg/kg x 1000)",
}


def _water_rh(name, a, p, t_k, i, path, locate):
    """Relative humidity over water from one humidity field (fraction)."""
    with np.errstate(invalid="ignore"):
        if name == "relative_humidity_pct":
            return a / 100.0
        if name == "dewpoint_c":
            return relative_humidity_from_dewpoint(t_k, a + T0)
        if np.any(a < 0):
            k = _first_bad(a < 0)
            _refuse(
                path,
                locate(i, name, k),
                f"negative specific humidity {a[k]:g}",
                "give specific humidity in g/kg, 0 or more",
            )
        return relative_humidity_from_specific_humidity(p * 100.0, t_k, a / 1000.0)


def _check_humidity(arrays, i, path, locate):
    """Refuse humidity far outside 0-100 % over water; warn a little above 100 %."""
    t_k = arrays["temperature_c"] + T0
    p = arrays["pressure_hpa"]
    for name in HUMIDITY_FIELDS:
        a = arrays.get(name)
        if a is None:
            continue
        rh = _water_rh(name, a, p, t_k, i, path, locate)
        with np.errstate(invalid="ignore"):
            bad = (rh < 0.0) | (rh > _RH_REFUSE)
            odd = (rh > _RH_ACCEPT) & ~bad
        if np.any(bad):
            k = _first_bad(bad)
            _refuse(
                path,
                locate(i, name, k),
                f"humidity {100 * rh[k]:.0f} % (over water) is far outside 0-100 %",
                _HUMIDITY_FIX[name],
            )
        if np.any(odd):
            k = _first_bad(odd)
            warnings.warn(
                f"{path}: {locate(i, name, k)}: humidity {100 * rh[k]:.0f} % over "
                "water; clipped to saturation",
                PlausibilityWarning,
                stacklevel=6,
            )


_LEVEL_RANGES = tuple(
    (name, 0.0, 30.0, "give the mass fraction in g/kg (kg/kg x 1000)")
    for name in ("cloud_liquid_g_kg", "cloud_ice_g_kg", "rain_g_kg", "snow_g_kg")
) + (
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
_PROFILE_RANGES = (
    ("precipitation_rate_mm_h", 0.0, 500.0, "give mm/h, 0 or more"),
    ("surface_elevation_m", -500.0, 9000.0, "give metres MSL"),
    ("surface_pressure_hpa", 300.0, 1100.0, "give hPa"),
)


def _check_ranges(prof, arrays, i, path, locate):
    """Refuse level and per-profile values outside their plausible ranges."""
    for name, lo, hi, fix in _LEVEL_RANGES:
        a = arrays.get(name)
        if a is None:
            continue
        with np.errstate(invalid="ignore"):
            bad = (a < lo) | (a > hi)
        if np.any(bad):
            k = _first_bad(bad)
            if name.endswith("_g_kg"):
                message = f"{a[k]:g} g/kg out of range 0-30"
            else:
                message = f"{a[k]:g} out of range {lo:g} to {hi:g}"
            _refuse(path, locate(i, name, k), message, fix)
    for name, lo, hi, fix in _PROFILE_RANGES:
        v = prof.get(name)
        if v is not None and not lo <= v <= hi:
            _refuse(path, locate(i, name), f"{name} {v:g} out of range {lo:g}-{hi:g}", fix)


def check_profile(prof, i, path, locate):
    """Check one profile's values; return its level arrays (input units).

    ``locate(i, name, k=None)`` names the place of profile ``i``'s field
    ``name`` (level ``k``) in the file, for the messages.
    """
    arrays = {name: _level_array(prof, name) for name in PROFILE_LEVEL_FIELDS}
    arrays = {k: v for k, v in arrays.items() if v is not None}
    _check_shapes(arrays, i, path, locate)
    _check_pressures(arrays["pressure_hpa"], i, path, locate)
    _check_temperatures(arrays, i, path, locate)
    _check_humidity(arrays, i, path, locate)
    _check_ranges(prof, arrays, i, path, locate)
    return arrays


def _sources(profiles, checked, kinds):
    """``{key: source field}`` of the fields the profiles give (for the provenance)."""
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
    return sources


def _level_table(checked, kinds, humidity):
    """Level arrays in SI, surface first, one humidity, NaN padded to one level count."""
    nlev = max(a["pressure_hpa"].size for a in checked)
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
    levels = {}
    for name in set().union(*checked):
        key, scale, offset = PROFILE_LEVEL_FIELDS[name]
        out = np.full((len(checked), nlev), np.nan)
        for j, arr in enumerate(checked):
            if name in arr:
                out[j, : arr[name].size] = arr[name] * scale + offset
        levels[key] = out
    return levels


def build_table(profiles, path, locate, issue_time):
    """Turn profile dicts into a checked ProfileTable (SI, surface first, NaN-padded).

    Parameters
    ----------
    profiles : list of dict
        Each with ``id``, ``lat``, ``lon``, ``valid_time`` (ISO 8601 with a zone),
        ``levels`` (``{field: list}`` in the profile-file field names of
        :data:`PROFILE_LEVEL_FIELDS`, None for missing) and optional per-profile
        fields (:data:`PROFILE_FIELDS`).
    path : path-like
        The file, for messages and the provenance.
    locate : callable
        ``locate(i, name, k=None)`` -> the place of a value in the file.
    issue_time : numpy.datetime64 or None
        Forecast reference time, when known.
    """
    checked = [check_profile(prof, i, path, locate) for i, prof in enumerate(profiles)]
    times = np.array(
        [
            parse_time(prof["valid_time"], path=path, where=locate(i, "valid_time"))
            for i, prof in enumerate(profiles)
        ],
        dtype="datetime64[ms]",
    )
    kinds = [next(h for h in HUMIDITY_FIELDS if h in arr) for arr in checked]
    sources = _sources(profiles, checked, kinds)
    humidity = PROFILE_LEVEL_FIELDS[kinds[0]][0] if len(set(kinds)) == 1 else "relative_humidity"
    levels, notes = _level_table(checked, kinds, humidity), []
    scalars = {
        key: np.array(
            [np.nan if prof.get(name) is None else prof[name] * scale for prof in profiles],
            dtype=float,
        )
        for name, (key, scale) in PROFILE_FIELDS.items()
    }
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
