"""CF discrete-sampling-geometry profiles (NetCDF) from data services, read as soundings.

A data service asked for the vertical profile at a point writes CF "discrete
sampling geometry" NetCDF (CF conventions 1.6 and later, chapter 9 and appendix H):
global attribute ``featureType`` = ``profile`` (one or several profiles) or
``timeSeriesProfile`` (profiles at stations over time). The THREDDS NetCDF Subset
Service writes a point request on a gridded model this way (``accept=netcdf``):
dims ``(station, profile, z)``, ``latitude(station)``, ``longitude(station)``,
``time(station, profile)`` and a vertical coordinate with ``axis = "Z"``.

Read here: the orthogonal and incomplete multidimensional representations (every
level variable shaped ``(instance dims..., z)``); the ragged-array representations
(``sample_dimension`` / ``instance_dimension``) are refused in one line. Variables
are found by CF ``standard_name``, then by the netCDF-Java names of GRIB parameters
(``Temperature_isobaric``, ``Relative_humidity_isobaric``, ...), then by common
short names; units are converted from their ``units`` attribute.

The ground: a model profile carries values extrapolated below the surface (in the
NCSS file of the tests, relative humidity is the same 73.6 % on the six levels
below the ground). The levels below the ground are told from a surface-pressure
variable, else from heights against a surface-altitude variable or the
``--station`` elevation; a file that gives none of these is refused in one line
naming what to add. Humidity: the convention of the model behind the service is
not stated in the file; relative humidity is read as over water and the notes say
so.
"""

from __future__ import annotations

import numpy as np

from icing.errors import ForecastError
from icing.forecast.netcdf import NETCDF_LOCK
from icing.forecast.netcdf import open_netcdf as _open_dataset
from icing.forecast.soundings.common import RawSounding
from icing.forecast.units import linear as _linear

__all__ = ["parse_cf_profiles", "cf_feature_type", "looks_like_cf_profile", "CF_HUMIDITY_NOTE"]

CF_HUMIDITY_NOTE = (
    "humidity: the file does not state over which phase its relative humidity is "
    "(models differ below 0 C); read as over water"
)
_FEATURE_TYPES = ("profile", "timeseriesprofile")
#: key -> (CF standard names, netCDF-Java GRIB name prefixes, short names, SI unit)
_FIND = {
    "pressure": (("air_pressure",), ("Pressure_",), ("pres", "pressure", "p"), "hPa"),
    "height": (
        ("geopotential_height", "altitude", "height"),
        ("Geopotential_height_",),
        ("gh", "hgt", "z", "height", "altitude"),
        "m",
    ),
    "temperature": (("air_temperature",), ("Temperature_",), ("t", "temp", "ta"), "degC"),
    "dewpoint": (("dew_point_temperature",), ("Dewpoint_temperature_",), ("td", "dpt"), "degC"),
    "relative_humidity": (
        ("relative_humidity",),
        ("Relative_humidity_",),
        ("rh", "r", "hur"),
        "%",
    ),
    "wind_u": (("eastward_wind",), ("u-component_of_wind_",), ("u", "ua"), "m/s"),
    "wind_v": (("northward_wind",), ("v-component_of_wind_",), ("v", "va"), "m/s"),
}
_SURFACE = {
    "surface_pressure": (("surface_air_pressure",), ("Pressure_surface",), ("ps", "sp"), "hPa"),
    "surface_height": (("surface_altitude",), ("Geopotential_height_surface",), ("orog",), "m"),
}


def cf_feature_type(path):
    """Return the CF ``featureType`` of a NetCDF file in lower case ("" when absent)."""
    try:
        import netCDF4  # already a dependency; reads one attribute without xarray's decoding

        with NETCDF_LOCK, netCDF4.Dataset(path) as nc:  # HDF5 is not thread-safe
            return str(getattr(nc, "featureType", "")).strip().lower()
    except Exception:  # unreadable here: the grid reader reports it in one line
        return ""


def looks_like_cf_profile(path, head):
    """Tell whether a file is NetCDF (by its first bytes) with a CF profile featureType."""
    netcdf = head[:4] in ("CDF\x01", "CDF\x02", "CDF\x05") or head[:8] == "\x89HDF\r\n\x1a\n"
    return netcdf and cf_feature_type(path) in _FEATURE_TYPES


def _find(ds, zdim, key, table, *, level):
    """Find the variable of ``key`` (level variables end in ``zdim``, surface ones lack it)."""
    std, prefixes, short, _ = table[key]

    def ok(name):
        v = ds[name]
        has_z = v.dims[-1:] == (zdim,)
        return has_z if level else (zdim not in v.dims and v.dtype.kind == "f")

    names = [n for n in ds.variables if n != zdim and ok(n)]
    for n in names:
        if str(ds[n].attrs.get("standard_name", "")) in std:
            return n, "CF standard_name"
    for n in names:
        if any(n.startswith(p) for p in prefixes):
            return n, "netCDF-Java GRIB name"
    for n in names:
        if n.lower() in short:
            return n, "common name"
    return None, None


def _values(ds, name, key, target, path):
    var = ds[name]
    units = var.attrs.get("units")
    if units is None:
        raise ForecastError(
            f"no units attribute on {name}",
            path=path,
            where=f"variable {name}",
            fix=f"give {key} a units attribute (e.g. {target})",
        )
    conv = _linear(str(units), target, path=path, name=f"variable {name}")
    if conv is None:
        raise ForecastError(
            f"units {units!r} of {name} are not {key} units",
            path=path,
            where=f"variable {name}",
            fix=f"give {key} in units convertible to {target}",
        )
    return np.asarray(var.values, dtype=float) * conv[0] + conv[1]


def _zdim(ds, path):
    for name, var in ds.variables.items():
        a = var.attrs
        if str(a.get("axis", "")).upper() == "Z" or ("positive" in a and var.dims):
            return var.dims[-1], name
    raise ForecastError(
        "no vertical coordinate (a variable with axis = 'Z' or 'positive')",
        path=path,
        fix="mark the vertical coordinate with axis = 'Z' (CF conventions, chapter 4.3)",
    )


def _instance(ds, name, shape, path, what):
    """Return a per-profile variable (lat, lon, time) broadcast to the instance shape."""
    return _broadcast(np.asarray(ds[name].values), shape, path, name, what)


def _coord(ds, kinds, path, what):
    for name, var in ds.variables.items():
        std = str(var.attrs.get("standard_name", "")).lower()
        units = str(var.attrs.get("units", "")).lower()
        if std in kinds or name.lower() in kinds or units in kinds:
            return name
    raise ForecastError(
        f"no {what}", path=path, fix=f"give the profiles' {what} (CF conventions, chapter 9)"
    )


def _level_fields(ds, zdim, zname, path):
    """Level variables found (key -> values (instances..., z)), sources, how found."""
    found, sources = {}, {}
    zvar = ds[zname]
    z_units = str(zvar.attrs.get("units", ""))
    is_pressure = z_units and _linear(z_units, "Pa", path=path, name=f"variable {zname}")
    if is_pressure:
        found["pressure"] = _values(ds, zname, "pressure", "hPa", path)
        sources["pressure"] = f"{zname} (vertical coordinate)"
    for key in _FIND:
        if key in found:
            continue
        name, how = _find(ds, zdim, key, _FIND, level=True)
        if name is not None:
            found[key] = _values(ds, name, key, _FIND[key][3], path)
            sources[key] = f"{name} ({how})"
    if "pressure" not in found:
        raise ForecastError(
            "no pressure on the levels",
            path=path,
            fix="give profiles on pressure levels or with an air_pressure variable",
        )
    if "temperature" not in found:
        raise ForecastError(
            "no air temperature on the levels", path=path, fix="give air_temperature"
        )
    if "dewpoint" not in found and "relative_humidity" not in found:
        raise ForecastError(
            "no humidity on the levels",
            path=path,
            fix="give relative_humidity or dew_point_temperature on the levels",
        )
    return found, sources


def parse_cf_profiles(path, site_elevation=None):
    """Read a CF profile / timeSeriesProfile NetCDF file: RawSounding list, sources, notes."""
    with NETCDF_LOCK:  # HDF5 is not thread-safe: open, read and close under its lock
        ds = _open_dataset(path)
        try:
            return _parse(ds, path, site_elevation)
        finally:
            ds.close()


def _parse(ds, path, site_elevation):
    for name, var in ds.variables.items():
        if "sample_dimension" in var.attrs or "instance_dimension" in var.attrs:
            raise ForecastError(
                "ragged-array profiles are not read",
                path=path,
                where=f"variable {name}",
                fix="write the profiles as multidimensional arrays (instance, level)",
            )
    zdim, zname = _zdim(ds, path)
    found, sources = _level_fields(ds, zdim, zname, path)
    shape = np.broadcast_shapes(*(a.shape for a in found.values()))
    found = {k: np.broadcast_to(a, shape) for k, a in found.items()}
    inst = shape[:-1]
    lat = _coord(ds, ("latitude", "lat", "degrees_north"), path, "latitude")
    lat = _instance(ds, lat, inst, path, "latitude")
    lon = _coord(ds, ("longitude", "lon", "degrees_east"), path, "longitude")
    lon = _instance(ds, lon, inst, path, "longitude")
    tname = _coord(ds, ("time",), path, "time")
    if not np.issubdtype(ds[tname].dtype, np.datetime64):
        raise ForecastError(
            "times not understood",
            path=path,
            where=f"variable {tname}",
            fix="give time with CF units such as 'hours since 2015-06-12T12:00:00Z'",
        )
    time = _instance(ds, tname, inst, path, "time")
    surface = {}
    for key in _SURFACE:
        name, how = _find(ds, zdim, key, _SURFACE, level=False)
        if name is not None:
            vals = _values(ds, name, key, _SURFACE[key][3], path)
            surface[key] = _broadcast(vals, inst, path, name, key)
            sources[key] = f"{name} ({how})"
    if "surface_pressure" not in surface and (
        "height" not in found or ("surface_height" not in surface and site_elevation is None)
    ):
        raise ForecastError(
            "no surface pressure and no heights with a surface altitude: levels below the "
            "ground cannot be told apart (models extrapolate values there)",
            path=path,
            fix="request the surface pressure too (e.g. Pressure_surface), or geopotential "
            "height plus --station LAT,LON,ELEV_M",
        )
    if "surface_height" not in surface and site_elevation is not None:
        surface["surface_height"] = np.full(inst, float(site_elevation))
        sources["surface_height"] = "--station elevation"
    return _raws(found, surface, lat, lon, time, inst, sources), sources


def _broadcast(vals, shape, path, name, what):
    try:
        return np.broadcast_to(vals, shape)
    except ValueError:
        raise ForecastError(
            f"{what} has shape {np.shape(vals)}, not broadcastable to the profiles {shape}",
            path=path,
            where=f"variable {name}",
            fix="give one value per profile or station",
        ) from None


_FIELD = {"pressure": "pressure_hpa", "height": "height_m", "temperature": "temperature_c"}
_FIELD |= {"dewpoint": "dewpoint_c", "relative_humidity": "relative_humidity_pct"}
_FIELD |= {"wind_u": "wind_u", "wind_v": "wind_v"}


def _raws(found, surface, lat, lon, time, inst, sources):
    raws = []
    nan = np.full(found["pressure"].shape[-1], np.nan)
    for i, idx in enumerate(np.ndindex(*inst) if inst else [()]):
        lev = {k: np.asarray(a[idx], dtype=float) for k, a in found.items()}
        p = lev["pressure"]
        order = np.argsort(-np.where(np.isfinite(p), p, -np.inf), kind="stable")  # surface first
        lev = {k: a[order] for k, a in lev.items()}
        ps, zs = (surface[k][idx] if k in surface else np.nan for k in _SURFACE)
        keep = np.isfinite(lev["pressure"])
        with np.errstate(invalid="ignore"):
            if np.isfinite(ps):
                keep &= lev["pressure"] <= ps
            elif np.isfinite(zs) and "height" in lev:
                keep &= ~(lev["height"] < zs)
        below = int(np.isfinite(lev["pressure"]).sum() - keep.sum())
        u, v = lev.get("wind_u", nan), lev.get("wind_v", nan)
        t = np.datetime64(time[idx], "ms")
        raws.append(
            RawSounding(
                label=f"profile {i} {np.datetime_as_string(t, unit='m')}Z",
                where=f"profile {i}",
                lines=order[keep],
                pressure_hpa=lev["pressure"][keep],
                height_m=lev.get("height", nan)[keep],
                temperature_c=lev["temperature"][keep],
                dewpoint_c=lev.get("dewpoint", nan)[keep],
                relative_humidity_pct=lev.get("relative_humidity", nan)[keep],
                wind_u=u[keep],
                wind_v=v[keep],
                columns={"height_m": "the heights"}
                | {
                    _FIELD[k]: f"variable {v.split()[0]}"
                    for k, v in sources.items()
                    if k in _FIELD
                },
                lat=float(lat[idx]),
                lon=float(lon[idx]),
                time=t,
                prefer="relative_humidity",
                notes=(f"{below} level(s) below the model surface left out",) if below else (),
                place=f"profile {i}, level",
                ground=(
                    float(ps) if np.isfinite(ps) else None,
                    float(zs) if np.isfinite(zs) else None,
                ),
            )
        )
    return raws
