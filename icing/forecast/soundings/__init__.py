"""Radiosonde soundings as forecasts: University of Wyoming lists and IGRA2 files.

Every reader returns the same :class:`~icing.forecast.table.ProfileTable` as the
profile JSON/CSV readers (one profile per ascent: position, valid time, levels in
SI, surface first), so the coverage radius, the time tolerance and the whole-column
diagnosis treat a sounding like any other profile. Formats, told apart by content:

- University of Wyoming text list (``TEXT:LIST``), the whole page or only its
  table: :mod:`.wyoming`;
- University of Wyoming CSV (``TEXT:CSV``): :mod:`.wyoming`;
- IGRA2 sounding data files (``USM00070026-data.txt``): :mod:`.igra2`;
- CF profile NetCDF (``featureType`` profile or timeSeriesProfile) as data
  services write it: :mod:`.cfprofile`.

What all share (repeated levels, missing markers, levels below the station,
pressure decreasing with height, the humidity convention) is in :mod:`.common`.
A file without position or time takes them from :class:`SoundingSite`
(``--station``, ``--time``); without either the read is refused in one line.
"""

from __future__ import annotations

from pathlib import Path

from icing.errors import ForecastError
from icing.forecast.soundings.cfprofile import (
    CF_HUMIDITY_NOTE,
    looks_like_cf_profile,
    parse_cf_profiles,
)
from icing.forecast.soundings.common import MAX_SOUNDINGS, SoundingSite, parse_station, to_table
from icing.forecast.soundings.igra2 import looks_like_igra2, parse_igra2
from icing.forecast.soundings.wyoming import (
    looks_like_csv,
    looks_like_text,
    parse_wyoming_csv,
    parse_wyoming_text,
)

__all__ = [
    "SOUNDING_FORMATS",
    "MAX_SOUNDINGS",
    "SoundingSite",
    "parse_station",
    "sounding_format",
    "read_sounding",
    "read_sounding_text",
    "check_site_used",
]

#: format key -> what it is (for messages and provenance)
SOUNDING_FORMATS = {
    "wyoming-text": "University of Wyoming text list",
    "wyoming-csv": "University of Wyoming CSV",
    "igra2": "IGRA2 sounding data file",
    "cf-profile": "CF profile NetCDF (discrete sampling geometry)",
}
_HEAD_BYTES = 16384

#: what each format calls the table's quantities (provenance)
_SOURCES = {
    "wyoming-text": {
        "pressure": "PRES [hPa]",
        "height": "HGHT [m]",
        "temperature": "TEMP [C]",
        "relative_humidity": "from DWPT [C] (RELH [%] where DWPT is blank), over water",
        "wind_u": "from DRCT and SKNT [knot]",
        "wind_v": "from DRCT and SKNT [knot]",
    },
    "wyoming-csv": {
        "pressure": "pressure_hPa",
        "height": "geopotential height_m",
        "temperature": "temperature_C",
        "relative_humidity": "from dew point temperature_C (relative humidity_% where blank), "
        "over water",
        "wind_u": "from wind direction_degree and wind speed_m/s",
        "wind_v": "from wind direction_degree and wind speed_m/s",
    },
    "igra2": {
        "pressure": "PRESS [Pa]",
        "height": "GPH [m]",
        "temperature": "TEMP [0.1 C]",
        "relative_humidity": "RH [0.1 %] (from TEMP - DPDP where RH is missing), over water",
        "wind_u": "from WDIR and WSPD [0.1 m/s]",
        "wind_v": "from WDIR and WSPD [0.1 m/s]",
    },
}


def _head(path):
    with open(path, "rb") as fh:
        return fh.read(_HEAD_BYTES).decode("latin-1")


def _format_of(head):
    if looks_like_igra2(head):
        return "igra2"
    if looks_like_csv(head):
        return "wyoming-csv"
    if looks_like_text(head):
        return "wyoming-text"
    return None


def sounding_format(path):
    """Return the sounding format of a file by its content (:data:`SOUNDING_FORMATS`) or None."""
    head = _head(path)
    if looks_like_cf_profile(path, head):
        return "cf-profile"
    return _format_of(head)


def read_sounding(path, *, site=None):
    """Read a radiosonde file into a :class:`~icing.forecast.table.ProfileTable`.

    Parameters
    ----------
    path : path-like
        A University of Wyoming text list or CSV, or an IGRA2 data file.
    site : SoundingSite, optional
        Station position, elevation and launch time for files that do not give
        them (``--station``, ``--time``). A file's own values win; a ``--station``
        more than 10 km from the file's position is refused.

    Raises
    ------
    ForecastError
        One line naming the file, the line and the fix: an unknown format, a field
        that is not a number, repeats that disagree, pressure not decreasing with
        height, no position or time, no level above the station.
    """
    path = Path(path)
    if sounding_format(path) == "cf-profile":
        return _read_cf_profiles(path, site)
    return read_sounding_text(path.read_bytes().decode("latin-1"), path=path, site=site)


def _read_cf_profiles(path, site):
    raws, found = parse_cf_profiles(path, None if site is None else site.elevation_m)
    sources = {k: v for k, v in found.items() if k != "dewpoint"}
    if "relative_humidity" not in sources:
        sources["relative_humidity"] = "from " + found["dewpoint"]
    return to_table(
        raws,
        site,
        path,
        kind=SOUNDING_FORMATS["cf-profile"],
        sources=sources,
        humidity_note=CF_HUMIDITY_NOTE,
    )


def read_sounding_text(text, *, path="<text>", site=None, kind=None):
    """Read a sounding given as text (see :func:`read_sounding`); ``kind`` as sniffed."""
    kind = kind or _format_of(text[:_HEAD_BYTES])
    if kind not in SOUNDING_FORMATS:
        raise ForecastError(
            "not a sounding file",
            path=path,
            fix="give a University of Wyoming text list or CSV, or an IGRA2 data file",
        )
    notes = []
    if kind == "igra2":
        raws, notes = parse_igra2(text, path)
    elif kind == "wyoming-csv":
        raws = parse_wyoming_csv(text, path)
    else:
        raws = parse_wyoming_text(text, path)
    return to_table(
        raws, site, path, kind=SOUNDING_FORMATS[kind], sources=_SOURCES[kind], notes=notes
    )


def check_site_used(site, kinds, paths):
    """Refuse ``--station`` when no forecast file is a sounding (it would be ignored)."""
    if site is not None and site.has_position and "sounding" not in kinds:
        raise ForecastError(
            "--station applies to sounding files only",
            path=paths[0],
            where="--station",
            fix="drop --station (gridded and profile files carry their own positions)",
        )
