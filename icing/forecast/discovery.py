"""Which variable of a file is which quantity, and what each dimension is.

Discovery order (the first hit wins): the user's mapping (``--var KEY=NAME``),
CF ``standard_name``, then the common model-output names. A mapped variable of
the wrong shape is refused; a variable found by a name must have the expected
vertical dimension (a level variable on levels, a surface variable without).

The functions work on an xarray Dataset and its dimension kinds
(:func:`dimension_kinds`), so every gridded reader (CF-NetCDF, service NetCDF,
GRIB, WRF) shares them.
"""

from __future__ import annotations

import numpy as np

from icing.errors import ForecastError
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

#: humidity keys in the order of preference
HUMIDITY_KEYS = ("relative_humidity", "dewpoint", "specific_humidity")

_LAT_UNITS = {"degrees_north", "degree_north", "degree_n", "degrees_n", "degreen", "degreesn"}
_LON_UNITS = {"degrees_east", "degree_east", "degree_e", "degrees_e", "degreee", "degreese"}


def classify_dim(ds, dim):
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


def candidates(ds, key, var_map):
    """Yield ``(name, how found)`` for ``key`` in the order of discovery."""
    if key in var_map:
        yield var_map[key], "mapping"
    for name, var in ds.data_vars.items():
        if str(var.attrs.get("standard_name", "")) in STANDARD_NAMES[key]:
            yield name, "standard_name"
    for name in COMMON_NAMES[key]:
        if name in ds.data_vars:
            yield name, "name"


def find_variable(ds, kinds, key, var_map, *, path, hdims=None):
    """Return ``(name, how found)`` of the first candidate of the right shape, or None.

    ``hdims`` (the horizontal dimensions of the temperature) must all be on the
    variable. A level key needs a vertical dimension, a surface key none; a mapped
    variable of the wrong shape is refused.
    """
    want_level = key in LEVEL_KEYS
    for name, how in candidates(ds, key, var_map):
        var = ds[name]
        if hdims is not None and not set(hdims) <= set(var.dims):
            continue
        has_level = level_dim_of(ds, kinds, var) is not None
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
