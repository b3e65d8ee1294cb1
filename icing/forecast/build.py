"""From an opened gridded file to the internal structure (:class:`GridSource`).

Every gridded reader opens its file as an xarray Dataset of raw variables (lazy)
with a :class:`~icing.forecast.fields.RawVariable` behind each, then hands it
here: the same steps find the variables (:mod:`icing.forecast.discovery`),
the coordinates, valid times and grid mapping, convert units once
(:mod:`icing.forecast.units`) and bring every level variable to the
temperature's levels. Each step is a function over ``(dataset, kinds)``
(``kinds`` the dimension kinds of :func:`~icing.forecast.discovery.dimension_kinds`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from icing.constants import G
from icing.errors import ForecastError
from icing.forecast.dataset import GridSource
from icing.forecast.discovery import (
    HUMIDITY_KEYS,
    LEVEL_KEYS,
    VAR_KEYS,
    check_var_map,
    dimension_kinds,
    find_variable,
    level_dim_of,
)
from icing.forecast.fields import FileField, LevelRegridField
from icing.forecast.interp import level_weights
from icing.forecast.units import conversion_of, linear, units_of

__all__ = [
    "Layout",
    "build_grid_source",
    "horizontal_dims",
    "valid_times",
    "issue_time",
    "grid_mapping",
    "coordinate_si",
]

_RH_REFUSE = 1.50
#: optional keys searched after temperature, humidity (and pressure on height levels)
_OPTIONAL = (
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
)


@dataclass(frozen=True)
class Layout:
    """Where the temperature's dimensions are: the frame every other variable is read in."""

    temperature: str
    """Name of the temperature variable."""
    y_dim: str
    """y (latitude) dimension."""
    x_dim: str
    """x (longitude) dimension."""
    level_dim: str
    """Vertical dimension of the temperature."""
    time_dim: str | None
    """Valid-time dimension, None for a single-time file."""
    other: dict = field(default_factory=dict)
    """Other dimensions (size 1) held at index 0."""


def _require_temperature(ds, kinds, var_map, path):
    found = find_variable(ds, kinds, "temperature", var_map, path=path)
    if found is None:
        raise ForecastError(
            "no air temperature on levels found (standard_name "
            "air_temperature or a common name like t, T, TMP)",
            path=path,
            fix="map the temperature variable with --var temperature=NAME",
        )
    return found[0]


def horizontal_dims(ds, kinds, name, path):
    """Return (y_dim, x_dim) of a variable; refuse when they cannot be told."""
    var = ds[name]
    hx = [d for d in var.dims if kinds.get(d) in ("lon", "x")]
    hy = [d for d in var.dims if kinds.get(d) in ("lat", "y")]
    if len(hx) != 1 or len(hy) != 1:
        raise ForecastError(
            f"cannot tell the horizontal coordinates of {name!r} (dims {', '.join(var.dims)})",
            path=path,
            where=f"variable {name}",
            fix="give 1-D latitude/longitude or projection_x/y coordinates with "
            "standard_name attributes",
        )
    return hy[0], hx[0]


def _layout(ds, kinds, tname, path):
    """Return the temperature's frame; refuse model levels, extra dimensions, several times."""
    y_dim, x_dim = horizontal_dims(ds, kinds, tname, path)
    tvar = ds[tname]
    level_dim = level_dim_of(ds, kinds, tvar)
    if kinds[level_dim] == "level-unknown":
        raise ForecastError(
            f"vertical coordinate {level_dim!r} is neither pressure nor height (model levels?)",
            path=path,
            where=f"coordinate {level_dim}",
            fix="interpolate to pressure or height levels first (units hPa/Pa or m)",
        )
    time_dims = [d for d in tvar.dims if kinds.get(d) == "time"]
    other = {d: 0 for d in tvar.dims if d not in (x_dim, y_dim, level_dim, *time_dims)}
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
    return Layout(tname, y_dim, x_dim, level_dim, time_dim, other)


def _datetimes(values):
    return np.asarray(values).astype("datetime64[ms]")


def _is_reference_time(name, var):
    return str(var.attrs.get("standard_name", "")) == "forecast_reference_time" or name in (
        "forecast_reference_time",
        "reftime",
    )


def valid_times(ds, time_dim, tname, path):
    """Return the valid times along ``time_dim`` (or the one scalar valid time), datetime64[ms]."""
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
            and not _is_reference_time(n, v)
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
    return times


def issue_time(ds):
    """Return the forecast reference time (scalar coordinate), or None."""
    issue = None
    for n, v in ds.coords.items():
        if _is_reference_time(n, v) and v.ndim == 0 and np.issubdtype(v.dtype, np.datetime64):
            issue = np.datetime64(v.values, "ms")
    return issue


def grid_mapping(ds, kinds, lay, path):
    """Return (crs, grid description, CF attributes, notes) of the temperature's grid."""
    tname, x_dim, y_dim = lay.temperature, lay.x_dim, lay.y_dim
    if kinds[x_dim] != "x":
        if kinds[x_dim] != "lon" or kinds[y_dim] != "lat":
            raise ForecastError(
                f"mixed horizontal coordinates {y_dim}/{x_dim}",
                path=path,
                where=f"variable {tname}",
                fix="give latitude-longitude or x/y",
            )
        return None, "latitude-longitude", None, []
    gm_name = ds[tname].attrs.get("grid_mapping")
    if not gm_name or gm_name not in ds.variables:
        raise ForecastError(
            f"projected coordinates {x_dim}/{y_dim} without a grid_mapping",
            path=path,
            where=f"variable {tname}",
            fix="add the CF grid_mapping attribute and variable",
        )
    from pyproj import CRS

    attrs = dict(ds[gm_name].attrs)
    try:
        crs = CRS.from_cf(attrs)
    except Exception as exc:
        raise ForecastError(
            f"grid mapping not understood ({exc})",
            path=path,
            where=f"variable {gm_name}",
            fix="give CF grid_mapping attributes",
        ) from None
    grid = f"projected ({attrs.get('grid_mapping_name', crs.name)})"
    note = "grid mapping: " + ", ".join(
        f"{k}={np.asarray(v).tolist()}" for k, v in attrs.items() if k != "crs_wkt"
    )
    return crs, grid, attrs, [note]


def coordinate_si(ds, dim, kind, *, projected, path):
    """Return a coordinate's values in SI: x/y in m (projected), pressure in Pa, height in m."""
    c = ds.variables[dim]
    vals = np.asarray(c.values, dtype=float)
    u = units_of(c)
    where = f"coordinate {dim}"
    if kind in ("x", "y") and projected:
        conv = linear(u or "m", "m", path=path, name=where)
        return vals * conv[0] + conv[1] if conv else vals
    if kind not in ("pressure", "height"):
        return vals
    target = "Pa" if kind == "pressure" else "m"
    if u is None:
        raise ForecastError(
            f"vertical coordinate {dim!r} has no units",
            path=path,
            where=where,
            fix="add units (hPa, Pa or m)",
        )
    conv = linear(u, target, path=path, name=where)
    if conv is None and kind == "height":
        c2 = linear(u, "m2 s-2", path=path, name=where)
        conv = None if c2 is None else (c2[0] / G, c2[1] / G)
    if conv is None:
        raise ForecastError(
            f"units {u!r} of {dim!r} are not {target}",
            path=path,
            where=where,
            fix="give hPa, Pa or m",
        )
    return vals * conv[0] + conv[1]


def _check_monotonic(dim, vals, path):
    d = np.diff(vals)
    if vals.size < 2 or not (np.all(d > 0) or np.all(d < 0)):
        raise ForecastError(
            f"coordinate {dim!r} is not strictly monotonic with 2+ points",
            path=path,
            where=f"coordinate {dim}",
            fix="give a regular grid with at least 2 points per axis",
        )


@dataclass(frozen=True)
class _Found:
    """One variable found for a key, with its conversion and a sample column in SI."""

    key: str
    name: str
    how: str
    conversion: object
    level_dim: str | None
    sample: np.ndarray


def _sample_column(ds, lay, var, level_dim):
    """Read the variable at the grid's first point and first time (a quick plausibility look)."""
    idx = {lay.y_dim: 0, lay.x_dim: 0, **lay.other}
    if lay.time_dim:
        idx[lay.time_dim] = 0
    idx = {d: i for d, i in idx.items() if d in var.dims}
    for d in var.dims:
        if d not in idx and d != level_dim and ds.sizes[d] == 1:
            idx[d] = 0
    return np.asarray(var.isel(idx).values, dtype=float)


def _find(ds, kinds, lay, key, var_map, path):
    res = find_variable(ds, kinds, key, var_map, path=path, hdims=(lay.y_dim, lay.x_dim))
    if res is None:
        return None
    name, how = res
    var = ds[name]
    ld = level_dim_of(ds, kinds, var) if key in LEVEL_KEYS else None
    sample = _sample_column(ds, lay, var, ld)
    conv = conversion_of(key, var, path=path, name=name, sample=sample)
    return _Found(key, name, how, conv, ld, sample * conv.scale + conv.offset)


def _check_temperature(found, path):
    t = found.sample
    with np.errstate(invalid="ignore"):
        if np.nanmax(t, initial=-np.inf) > 360 or np.nanmin(t, initial=np.inf) < 150:
            raise ForecastError(
                f"temperatures {np.nanmin(t):.1f}..{np.nanmax(t):.1f} K are "
                f"implausible (units attribute {found.conversion.units!r})",
                path=path,
                where=f"variable {found.name}",
                fix="correct the units attribute (K or degC)",
            )


def _check_relative_humidity(found, path):
    rh = found.sample
    with np.errstate(invalid="ignore"):
        if np.nanmax(rh, initial=0.0) > _RH_REFUSE:
            raise ForecastError(
                f"relative humidity up to {100 * np.nanmax(rh):.0f} % "
                f"(units attribute {found.conversion.units!r})",
                path=path,
                where=f"variable {found.name}",
                fix="give % or a fraction and set the units attribute",
            )


def _find_all(ds, kinds, lay, vertical, var_map, path):
    """Every key found, temperature and humidity required (height-level files: pressure)."""
    found = {"temperature": _find(ds, kinds, lay, "temperature", var_map, path)}
    _check_temperature(found["temperature"], path)
    for hum in HUMIDITY_KEYS:
        f = _find(ds, kinds, lay, hum, var_map, path)
        if f is not None:
            found[hum] = f
            break
    else:
        raise ForecastError(
            "no humidity variable found (relative_humidity, "
            "dew_point_temperature or specific_humidity)",
            path=path,
            fix="map one with --var relative_humidity=NAME (or dewpoint=, specific_humidity=)",
        )
    if "relative_humidity" in found:
        _check_relative_humidity(found["relative_humidity"], path)
    if vertical == "height":
        f = _find(ds, kinds, lay, "pressure", var_map, path)
        if f is None:
            raise ForecastError(
                f"no {VAR_KEYS['pressure']} found",
                path=path,
                fix="map it with --var pressure=NAME",
            )
        found["pressure"] = f
    for key in _OPTIONAL:
        if key == "height" and vertical == "height":
            continue
        f = _find(ds, kinds, lay, key, var_map, path)
        if f is not None:
            found[key] = f
    return found


def _level_sets(ds, kinds, found, lay, vertical, path):
    """SI values of every level dimension in use; refuse a mix of level kinds."""
    lev = lay.level_dim
    coords = {lev: coordinate_si(ds, lev, vertical, projected=False, path=path)}
    for f in found.values():
        ld = f.level_dim
        if ld is None or ld in coords:
            continue
        if kinds[ld] != vertical:
            raise ForecastError(
                f"{f.name!r} is on {kinds[ld]} levels but {lay.temperature!r} "
                f"on {vertical} levels",
                path=path,
                where=f"variable {f.name}",
                fix="give all level variables on one kind of level",
            )
        coords[ld] = coordinate_si(ds, ld, kinds[ld], projected=False, path=path)
    return coords


def _provenance(f):
    out = {"name": f.name, "found_by": f.how, "units": f.conversion.units}
    if f.conversion.transform == "omega":
        out["converted"] = "omega to w = -omega / (rho g)"
    return out


def _fields(found, lay, level_coords, vertical, raw_of, notes):
    """One lazy SI field per key, level variables brought to the temperature's levels."""
    fields = {}
    for key, f in found.items():
        fld = FileField(
            raw_of(f.name),
            lay.y_dim,
            lay.x_dim,
            lay.time_dim if lay.time_dim in raw_of(f.name).dims else None,
            f.level_dim,
            tuple((d, i) for d, i in lay.other.items() if d in raw_of(f.name).dims),
            f.conversion.scale,
            f.conversion.offset,
            label=f.name,
        )
        if f.level_dim is not None and f.level_dim != lay.level_dim:
            w = level_weights(
                level_coords[f.level_dim], level_coords[lay.level_dim], log=vertical == "pressure"
            )
            fld = LevelRegridField(fld, w, label=f.name)
            notes.append(
                f"{f.name} is on its own levels ({f.level_dim}); interpolated "
                f"to the {lay.level_dim} levels"
            )
        fields[key] = fld
    return fields


def build_grid_source(ds, path, raw_of, *, var_map=None, fmt="CF-NetCDF", notes=()):
    """Find everything a screening needs in an opened gridded file.

    Parameters
    ----------
    ds : xarray.Dataset
        The file opened lazily (raw variables, their attributes and coordinates).
    path : path-like
        The file (for messages).
    raw_of : callable
        ``raw_of(name)`` -> :class:`~icing.forecast.fields.RawVariable` of a variable.
    var_map : dict, optional
        ``{key: variable name}`` overriding the search (keys: ``VAR_KEYS``).
    fmt : str
        What the file is, for the provenance.
    notes : sequence of str
        What the reader already did, for the provenance.

    Returns
    -------
    GridSource
    """
    path = Path(path)
    var_map = dict(var_map or {})
    check_var_map(ds, var_map, path=path)
    kinds = dimension_kinds(ds)
    lay = _layout(ds, kinds, _require_temperature(ds, kinds, var_map, path), path)
    times = valid_times(ds, lay.time_dim, lay.temperature, path)
    crs, grid, gm_attrs, gm_notes = grid_mapping(ds, kinds, lay, path)
    notes = list(notes) + gm_notes
    projected = crs is not None and not crs.is_geographic
    x = coordinate_si(ds, lay.x_dim, kinds[lay.x_dim], projected=projected, path=path)
    y = coordinate_si(ds, lay.y_dim, kinds[lay.y_dim], projected=projected, path=path)
    for dim, vals in ((lay.x_dim, x), (lay.y_dim, y)):
        _check_monotonic(dim, vals, path)
    vertical = kinds[lay.level_dim]
    std_z = str(ds.variables[lay.level_dim].attrs.get("standard_name", ""))
    above_ground = vertical == "height" and std_z == "height"
    found = _find_all(ds, kinds, lay, vertical, var_map, path)
    if above_ground:
        if "surface_height" not in found:
            raise ForecastError(
                "height levels are above ground (standard_name height) but "
                "the file has no surface height",
                path=path,
                where="vertical coordinate",
                fix="add surface_altitude or map one with --var surface_height=NAME",
            )
        notes.append("height levels are above ground (standard_name height)")
    level_coords = _level_sets(ds, kinds, found, lay, vertical, path)
    fields = _fields(found, lay, level_coords, vertical, raw_of, notes)
    chunks = ds[lay.temperature].encoding.get("chunksizes")
    return GridSource(
        path=path,
        format=fmt,
        fields=fields,
        provenance={k: _provenance(f) for k, f in found.items()},
        times=times,
        issue_time=issue_time(ds),
        y=y,
        x=x,
        crs=crs,
        grid=grid,
        grid_mapping=gm_attrs,
        levels=level_coords[lay.level_dim],
        vertical=vertical,
        height_above_ground=above_ground,
        notes=tuple(notes),
        tile_hint=int(min(chunks[-2:])) if chunks else None,
    )
