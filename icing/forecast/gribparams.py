"""GRIB parameter identity: which quantity a variable is, from its GRIB codes.

A variable read from GRIB (by this package or by cfgrib) or translated from
GRIB by a data service (netCDF-Java / THREDDS) carries its GRIB parameter as
attributes. :func:`grib_identity` reads them, whatever the spelling:

- ``GRIB_discipline`` / ``GRIB_parameterCategory`` / ``GRIB_parameterNumber``
  (this package, cfgrib), ``GRIB_param_discipline`` / ``_category`` / ``_number``,
  ``Grib2_Parameter`` = [d, c, n] (netCDF-Java), ``Grib_Variable_Id`` =
  ``VAR_d-c-n_Lt`` (netCDF-Java, GRIB2) or ``VAR_centre-sub-table-param_Lt`` (GRIB1);
- GRIB1: ``GRIB_table2Version`` + ``GRIB_indicatorOfParameter``,
  ``Grib1_TableVersion`` + ``Grib1_Parameter``, or the ecCodes ``GRIB_paramId``.

Tables: WMO GRIB2 code table 4.2 (discipline-category-number), WMO GRIB1 code
table 2 (versions 1-3, used by NCEP as its table 2 with local additions) and the
ECMWF parameter ids ecCodes uses as ``paramId``. Level types: WMO GRIB2 code
table 4.5 and GRIB1 code table 3, as words.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

__all__ = ["GribIdentity", "grib_identity", "MIXING_RATIO_NOTE"]

#: GRIB2 (discipline, category, number) -> (keys, mixing ratio?, short description)
GRIB2_PARAMETERS = {
    (0, 0, 0): (("temperature",), False, "temperature"),
    (0, 0, 6): (("dewpoint",), False, "dew point temperature"),
    (0, 1, 0): (("specific_humidity",), False, "specific humidity"),
    (0, 1, 1): (("relative_humidity",), False, "relative humidity"),
    (0, 1, 2): (("specific_humidity",), True, "humidity mixing ratio"),
    (0, 1, 7): (("precipitation_rate",), False, "precipitation rate"),
    (0, 1, 22): (("cloud_liquid",), True, "cloud mixing ratio"),
    (0, 1, 23): (("cloud_ice",), True, "ice water mixing ratio"),
    (0, 1, 24): (("rain",), True, "rain mixing ratio"),
    (0, 1, 25): (("snow",), True, "snow mixing ratio"),
    (0, 1, 82): (("cloud_ice",), True, "cloud ice mixing ratio"),
    (0, 1, 83): (("cloud_liquid",), False, "specific cloud liquid water content"),
    (0, 1, 84): (("cloud_ice",), False, "specific cloud ice water content"),
    (0, 1, 85): (("rain",), False, "specific rain water content"),
    (0, 1, 86): (("snow",), False, "specific snow water content"),
    (0, 2, 2): (("wind_u",), False, "u-component of wind"),
    (0, 2, 3): (("wind_v",), False, "v-component of wind"),
    (0, 2, 8): (("vertical_velocity",), False, "vertical velocity (pressure)"),
    (0, 2, 9): (("vertical_velocity",), False, "vertical velocity (geometric)"),
    (0, 3, 0): (("pressure", "surface_pressure"), False, "pressure"),
    (0, 3, 4): (("height", "surface_height"), False, "geopotential"),
    (0, 3, 5): (("height", "surface_height"), False, "geopotential height"),
    (0, 3, 6): (("height", "surface_height"), False, "geometric height"),
    (0, 6, 1): (("cloud_fraction",), False, "total cloud cover"),
    (0, 6, 22): (("cloud_fraction",), False, "cloud cover"),
    (0, 6, 32): (("cloud_fraction",), False, "fraction of cloud cover"),
    (2, 0, 7): (("surface_height",), False, "model terrain height"),
}
#: GRIB1 code table 2 (versions 1-3; NCEP's table 2 adds 153) -> as above
GRIB1_PARAMETERS = {
    1: (("pressure", "surface_pressure"), False, "pressure"),
    6: (("height", "surface_height"), False, "geopotential"),
    7: (("height", "surface_height"), False, "geopotential height"),
    8: (("height", "surface_height"), False, "geometric height"),
    11: (("temperature",), False, "temperature"),
    17: (("dewpoint",), False, "dew point temperature"),
    33: (("wind_u",), False, "u-component of wind"),
    34: (("wind_v",), False, "v-component of wind"),
    39: (("vertical_velocity",), False, "vertical velocity (pressure)"),
    40: (("vertical_velocity",), False, "vertical velocity (geometric)"),
    51: (("specific_humidity",), False, "specific humidity"),
    52: (("relative_humidity",), False, "relative humidity"),
    53: (("specific_humidity",), True, "humidity mixing ratio"),
    59: (("precipitation_rate",), False, "precipitation rate"),
    71: (("cloud_fraction",), False, "total cloud cover"),
    153: (("cloud_liquid",), True, "cloud mixing ratio (NCEP table 2)"),
}
#: ECMWF parameter ids (ecCodes ``paramId``) -> as above
PARAM_IDS = {
    54: (("pressure",), False, "pressure"),
    75: (("rain",), False, "specific rain water content"),
    76: (("snow",), False, "specific snow water content"),
    129: (("height", "surface_height"), False, "geopotential"),
    130: (("temperature",), False, "temperature"),
    131: (("wind_u",), False, "u-component of wind"),
    132: (("wind_v",), False, "v-component of wind"),
    133: (("specific_humidity",), False, "specific humidity"),
    134: (("surface_pressure",), False, "surface pressure"),
    135: (("vertical_velocity",), False, "vertical velocity (pressure)"),
    156: (("height",), False, "geopotential height"),
    157: (("relative_humidity",), False, "relative humidity"),
    246: (("cloud_liquid",), False, "specific cloud liquid water content"),
    247: (("cloud_ice",), False, "specific cloud ice water content"),
    248: (("cloud_fraction",), False, "fraction of cloud cover"),
    3017: (("dewpoint",), False, "dew point temperature"),
    3059: (("precipitation_rate",), False, "precipitation rate"),
    228002: (("surface_height",), False, "orography"),
}
#: GRIB2 code table 4.5 -> level-type word
_LEVEL_TYPES_2 = {
    1: "surface",
    100: "isobaric",
    101: "meanSea",
    102: "heightAboveSea",
    103: "heightAboveGround",
    104: "sigma",
    105: "hybrid",
}
#: GRIB1 code table 3 -> level-type word
_LEVEL_TYPES_1 = {
    1: "surface",
    100: "isobaric",
    102: "meanSea",
    103: "heightAboveSea",
    105: "heightAboveGround",
    107: "sigma",
    109: "hybrid",
}
#: ecCodes typeOfLevel -> level-type word
_TYPE_OF_LEVEL = {"isobaricInhPa": "isobaric", "isobaricInPa": "isobaric", "isobaric": "isobaric"}

MIXING_RATIO_NOTE = "mixing ratio (per kg of dry air) converted to a mass fraction"


@dataclass(frozen=True)
class GribIdentity:
    """What a variable's GRIB codes say it is."""

    keys: tuple
    """Internal keys it may be (a surface key where its level type is the surface)."""
    code: str
    """The code as written in the provenance, e.g. "GRIB2 0-1-1"."""
    description: str
    """The parameter in words."""
    mixing_ratio: bool
    """The quantity is a mixing ratio (per kg of dry air), not a mass fraction."""
    level_type: str | None
    """"surface", "isobaric", "heightAboveGround" ... or None when not said."""


def _int(v):
    try:
        return int(np.asarray(v).ravel()[0])
    except (TypeError, ValueError, IndexError):
        return None


def _level_type(a):
    if "GRIB_typeOfLevel" in a:
        t = str(a["GRIB_typeOfLevel"])
        return _TYPE_OF_LEVEL.get(t, t)
    if "Grib2_Level_Type" in a:
        return _LEVEL_TYPES_2.get(_int(a["Grib2_Level_Type"]), "other")
    if "Grib1_Level_Type" in a:
        return _LEVEL_TYPES_1.get(_int(a["Grib1_Level_Type"]), "other")
    m = re.search(r"_L(\d+)", str(a.get("Grib_Variable_Id", "")))
    if m:
        return _LEVEL_TYPES_2.get(int(m.group(1)), "other")
    return None


def _grib2_triplet(a):
    for names in (
        ("GRIB_discipline", "GRIB_parameterCategory", "GRIB_parameterNumber"),
        ("GRIB_param_discipline", "GRIB_param_category", "GRIB_param_number"),
    ):
        if all(n in a for n in names):
            return tuple(_int(a[n]) for n in names)
    if "Grib2_Parameter" in a:
        v = np.asarray(a["Grib2_Parameter"]).ravel()
        if v.size == 3:
            return tuple(int(x) for x in v)
    m = re.fullmatch(r"VAR_(\d+)-(\d+)-(\d+)_L\d+.*", str(a.get("Grib_Variable_Id", "")))
    return tuple(int(x) for x in m.groups()) if m else None


def _grib1_parameter(a):
    """(table version, parameter) of a GRIB1 variable, or None."""
    if "GRIB_table2Version" in a and "GRIB_indicatorOfParameter" in a:
        return _int(a["GRIB_table2Version"]), _int(a["GRIB_indicatorOfParameter"])
    if "Grib1_Parameter" in a:
        return _int(a.get("Grib1_TableVersion", 2)), _int(a["Grib1_Parameter"])
    m = re.fullmatch(r"VAR_(\d+)-(\d+)-(\d+)-(\d+)_L\d+.*", str(a.get("Grib_Variable_Id", "")))
    return (int(m.group(3)), int(m.group(4))) if m else None


def grib_identity(attrs) -> GribIdentity | None:
    """Return what a variable's GRIB attributes say it is, or None."""
    a = dict(attrs)
    level = _level_type(a)
    triplet = _grib2_triplet(a)
    if triplet in GRIB2_PARAMETERS:
        keys, mixing, text = GRIB2_PARAMETERS[triplet]
        return GribIdentity(keys, "GRIB2 " + "-".join(map(str, triplet)), text, mixing, level)
    g1 = _grib1_parameter(a)
    if g1 is not None and g1[0] is not None and g1[0] <= 3 and g1[1] in GRIB1_PARAMETERS:
        keys, mixing, text = GRIB1_PARAMETERS[g1[1]]
        return GribIdentity(keys, f"GRIB1 table {g1[0]} parameter {g1[1]}", text, mixing, level)
    pid = _int(a.get("GRIB_paramId")) if "GRIB_paramId" in a else None
    if pid in PARAM_IDS:
        keys, mixing, text = PARAM_IDS[pid]
        return GribIdentity(keys, f"paramId {pid}", text, mixing, level)
    return None
