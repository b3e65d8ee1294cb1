"""Which variable of a file is which quantity, and what each dimension is.

Discovery order (the first hit wins): the user's mapping (``--var KEY=NAME``),
CF ``standard_name``, GRIB parameter identity (:mod:`icing.forecast.gribparams`:
GRIB files, cfgrib output, netCDF-Java/THREDDS translations), then names (the
common model-output names and the netCDF-Java GRIB names such as
``Temperature_isobaric``; a ``standard_name`` holding a non-CF name counts as a
name) and long names (``Temperature @ Isobaric surface``). A mapped variable of
the wrong shape is refused; a variable found otherwise must have the expected
vertical dimension (a level variable on levels of the temperature's kind, a
surface variable without levels).

The functions work on an xarray Dataset and its dimension kinds
(:func:`dimension_kinds`), so every gridded reader (CF-NetCDF, service NetCDF,
GRIB, WRF) shares them.
"""

from __future__ import annotations

import numpy as np

from icing.errors import ForecastError
from icing.forecast.gribparams import grib_identity
from icing.forecast.units import is_dimension

__all__ = [
    "VAR_KEYS",
    "LEVEL_KEYS",
    "STANDARD_NAMES",
    "COMMON_NAMES",
    "HUMIDITY_KEYS",
    "classify_dim",
    "dimension_kinds",
    "level_dim_of",
    "check_var_map",
    "candidates",
    "find_variable",
    "SURFACE_KEYS",
    "OPTIONAL_KEYS",
    "files_variables",
]

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
LEVEL_KEYS = (
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
STANDARD_NAMES = {
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
COMMON_NAMES = {
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

#: netCDF-Java (THREDDS) names of GRIB variables, searched with the common names
SERVICE_NAMES = {
    "temperature": ("Temperature_isobaric", "Temperature_height_above_sea"),
    "relative_humidity": ("Relative_humidity_isobaric",),
    "dewpoint": ("Dewpoint_temperature_isobaric", "Dew_point_temperature_isobaric"),
    "specific_humidity": ("Specific_humidity_isobaric",),
    "height": ("Geopotential_height_isobaric",),
    "pressure": ("Pressure_height_above_sea", "Pressure_hybrid"),
    "cloud_liquid": ("Cloud_mixing_ratio_isobaric", "Cloud_water_isobaric"),
    "cloud_ice": ("Ice_water_mixing_ratio_isobaric", "Cloud_ice_mixing_ratio_isobaric"),
    "rain": ("Rain_mixing_ratio_isobaric",),
    "snow": ("Snow_mixing_ratio_isobaric",),
    "cloud_fraction": ("Total_cloud_cover_isobaric", "Fraction_of_cloud_cover_isobaric"),
    "vertical_velocity": (
        "Vertical_velocity_pressure_isobaric",
        "Vertical_velocity_geometric_isobaric",
    ),
    "wind_u": ("u-component_of_wind_isobaric",),
    "wind_v": ("v-component_of_wind_isobaric",),
    "precipitation_rate": ("Precipitation_rate_surface",),
    "surface_pressure": ("Pressure_surface",),
    "surface_height": ("Geopotential_height_surface", "Model_terrain_height_surface"),
}
#: long names (lower case, before any " @ ") -> key
LONG_NAMES = {
    "temperature": "temperature",
    "air temperature": "temperature",
    "relative humidity": "relative_humidity",
    "dew point temperature": "dewpoint",
    "dewpoint temperature": "dewpoint",
    "specific humidity": "specific_humidity",
    "geopotential height": "height",
    "geopotential": "height",
    "pressure": "pressure",
    "cloud mixing ratio": "cloud_liquid",
    "cloud water mixing ratio": "cloud_liquid",
    "specific cloud liquid water content": "cloud_liquid",
    "ice water mixing ratio": "cloud_ice",
    "specific cloud ice water content": "cloud_ice",
    "rain mixing ratio": "rain",
    "specific rain water content": "rain",
    "snow mixing ratio": "snow",
    "specific snow water content": "snow",
    "total cloud cover": "cloud_fraction",
    "fraction of cloud cover": "cloud_fraction",
    "vertical velocity (pressure)": "vertical_velocity",
    "vertical velocity (geometric)": "vertical_velocity",
    "u-component of wind": "wind_u",
    "v-component of wind": "wind_v",
    "precipitation rate": "precipitation_rate",
    "surface pressure": "surface_pressure",
    "orography": "surface_height",
    "model terrain height": "surface_height",
}
#: names whose quantity is a mixing ratio (per kg of dry air), not a mass fraction
MIXING_RATIO_NAMES = (
    "CLWMR",
    "ICMR",
    "RWMR",
    "SNMR",
    "QCLOUD",
    "QICE",
    "QRAIN",
    "QSNOW",
    "QVAPOR",
)
#: keys of fields without levels; their GRIB level type must be the surface
SURFACE_KEYS = ("precipitation_rate", "surface_pressure", "surface_height")

#: humidity keys in the order of preference
HUMIDITY_KEYS = ("relative_humidity", "dewpoint", "specific_humidity")
#: keys searched after temperature and humidity (and pressure off pressure levels)
OPTIONAL_KEYS = tuple(k for k in VAR_KEYS if k not in ("temperature", "pressure", *HUMIDITY_KEYS))

_LAT_UNITS = {"degrees_north", "degree_north", "degree_n", "degrees_n", "degreen", "degreesn"}
_LON_UNITS = {"degrees_east", "degree_east", "degree_e", "degrees_e", "degreee", "degreese"}


def classify_dim(ds, dim):
    """Classify a dimension: time, step, lat, lon, x, y, pressure, height, model, or None."""
    coord = ds.variables.get(dim)
    if coord is None:
        return None
    if np.issubdtype(coord.dtype, np.datetime64):
        return "time"
    if np.issubdtype(coord.dtype, np.timedelta64):
        return "step"
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
    if std == "model_level_number":
        return "model"
    if std == "air_pressure":
        return "pressure"
    if std in ("height", "altitude", "geopotential_height"):
        return "height"
    if units and is_dimension(units, "Pa"):
        return "pressure"
    if (
        units
        and is_dimension(units, "m")
        and (
            str(a.get("axis", "")).upper() == "Z"
            or "positive" in a
            or name in ("height", "altitude", "z", "level", "lev", "alt", "heightabovesea")
        )
    ):
        return "height"
    if str(a.get("axis", "")).upper() == "Z" or "positive" in a:
        return "level-unknown"
    return None


def dimension_kinds(ds) -> dict:
    """``{dimension: kind}`` for every dimension of the dataset (see :func:`classify_dim`)."""
    return {d: classify_dim(ds, d) for d in ds.dims}


def level_dim_of(ds, kinds, var):
    """Return the vertical dimension (size > 1) of a variable, or None."""
    dims = [
        d
        for d in var.dims
        if kinds.get(d) in ("pressure", "height", "model", "level-unknown") and ds.sizes[d] > 1
    ]
    return dims[0] if dims else None


def check_var_map(ds, var_map, *, path):
    """Refuse a mapping with an unknown key or a variable the file does not have."""
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


def _cf_names():
    return {n for names in STANDARD_NAMES.values() for n in names}


_LEVEL_ORDER = {"isobaric": 0, "heightAboveSea": 1, "heightAboveGround": 2}


def _grib_candidates(ds, key):
    """Variables whose GRIB identity says ``key``, pressure levels and most levels first."""
    found = []
    for name in ds.data_vars:
        var = ds.variables[name]
        ident = grib_identity(var.attrs)
        if ident is None or key not in ident.keys:
            continue
        if key in SURFACE_KEYS and ident.level_type not in (None, "surface"):
            continue
        rank = (_LEVEL_ORDER.get(ident.level_type, 3), -var.size)
        found.append((rank, name, f"GRIB parameter {ident.code} ({ident.description})"))
    return [(name, how) for _, name, how in sorted(found)]


def _long_name_key(text):
    text = str(text).split(" @ ")[0].strip().lower()
    return LONG_NAMES.get(text)


def candidates(ds, key, var_map):
    """Yield ``(name, how found)`` for ``key`` in the order of discovery."""
    if key in var_map:
        yield var_map[key], "mapping"
    cf = _cf_names()
    attrs = {name: ds.variables[name].attrs for name in ds.data_vars}
    for name, a in attrs.items():
        if str(a.get("standard_name", "")) in STANDARD_NAMES[key]:
            yield name, "standard_name"
    yield from _grib_candidates(ds, key)
    for name in COMMON_NAMES[key] + SERVICE_NAMES.get(key, ()):
        if name in attrs:
            yield name, "name"
    for name, a in attrs.items():
        std = str(a.get("standard_name", ""))
        if std and std not in cf and (std in COMMON_NAMES[key] or _long_name_key(std) == key):
            yield name, f"standard_name {std!r} (not a CF name) read as a name"
    for name, a in attrs.items():
        if _long_name_key(a.get("long_name", "")) == key:
            yield name, "long_name"


def is_mixing_ratio(ds, name):
    """Tell whether a variable holds a mixing ratio (per kg of dry air), by its identity."""
    var = ds.variables[name]
    ident = grib_identity(var.attrs)
    if ident is not None:
        return ident.mixing_ratio
    std = str(var.attrs.get("standard_name", ""))
    long_name = str(var.attrs.get("long_name", var.attrs.get("description", ""))).lower()
    return (
        name in MIXING_RATIO_NAMES
        or std.endswith("_mixing_ratio")
        or ("mixing ratio" in long_name and "specific" not in long_name)
    )


def _acceptable(ds, kinds, var, key, vertical):
    """Shape check: (fits, level kind) for a candidate of ``key``."""
    ld = level_dim_of(ds, kinds, var)
    if (ld is not None) != (key in LEVEL_KEYS):
        return False, None
    kind = None if ld is None else kinds.get(ld)
    if ld is None or vertical is None:
        return True, kind
    return kind == vertical, kind


def find_variable(ds, kinds, key, var_map, *, path, hdims=None, vertical=None):
    """Return ``(name, how found)`` of the first candidate of the right shape, or None.

    ``hdims`` (the horizontal dimensions of the temperature) must all be on the
    variable; ``vertical`` (the temperature's level kind) must be the kind of a
    level variable's levels. A level key needs a vertical dimension, a surface key
    none; a mapped variable of the wrong shape is refused. Levels of an unknown
    kind are taken only when nothing better is found (and then refused by name).
    """
    fallback = None
    seen = set()
    for name, how in candidates(ds, key, var_map):
        if name in seen:
            continue
        seen.add(name)
        var = ds.variables[name]
        if hdims is not None and not set(hdims) <= set(var.dims):
            continue
        ok, kind = _acceptable(ds, kinds, var, key, vertical)
        if ok and kind != "level-unknown":
            return name, how
        if ok and fallback is None:
            fallback = (name, how)
        if how == "mapping" and not ok:
            want_level = key in LEVEL_KEYS
            raise ForecastError(
                f"variable {name!r} mapped to {key} "
                f"{'has no' if want_level else 'has a'} vertical dimension"
                if (level_dim_of(ds, kinds, var) is not None) != want_level
                else f"variable {name!r} mapped to {key} is on {kind} levels, not {vertical}",
                path=path,
                where=f"--var {key}={name}",
                fix="map a variable of the right shape",
            )
    return fallback


def files_variables(ds, kinds, *, limit=12):
    """Describe the data variables of a file in one line (for 'not found' messages)."""
    parts = []
    for name in ds.data_vars:
        var = ds.variables[name]
        if var.ndim < 2:
            continue
        ld = level_dim_of(ds, kinds, var)
        where = f"{ds.sizes[ld]} {kinds.get(ld)} levels" if ld else "no levels"
        units = var.attrs.get("units", "no units")
        parts.append(f"{name} ({units}, {where})")
    more = f" and {len(parts) - limit} more" if len(parts) > limit else ""
    return "; ".join(parts[:limit]) + more if parts else "no gridded variables"
