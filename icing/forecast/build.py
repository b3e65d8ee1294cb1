"""From an opened gridded file to the internal structure (:class:`GridSource`).

Every gridded reader opens its file as an xarray Dataset of raw variables (lazy)
with a :class:`~icing.forecast.fields.RawVariable` behind each, then hands it
here: the same steps find the variables (:mod:`icing.forecast.discovery`), the
frame, times and grid mapping (:mod:`icing.forecast.coords`), convert units once
(:mod:`icing.forecast.units`), check the values for unit slips
(:mod:`icing.forecast.plausibility`), bring every level variable to the
temperature's levels, and apply the conversions that need several variables
(:mod:`icing.forecast.conversions`: humidity conventions, mixing ratios,
earth-relative winds). Every step leaves its trace in the provenance.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from icing.constants import G
from icing.errors import ForecastError
from icing.forecast import conversions, memo, plausibility
from icing.forecast.conventions import humidity_convention
from icing.forecast.coords import (
    check_monotonic,
    coordinate_si,
    grid_mapping,
    issue_time,
    layout_of,
    level_coordinates,
    valid_times,
)
from icing.forecast.dataset import GridSource
from icing.forecast.discovery import (
    HUMIDITY_KEYS,
    LEVEL_KEYS,
    OPTIONAL_KEYS,
    VAR_KEYS,
    check_var_map,
    dimension_kinds,
    files_variables,
    find_variable,
    is_mixing_ratio,
    level_dim_of,
)
from icing.forecast.fields import FileField, LevelRegridField
from icing.forecast.gribparams import MIXING_RATIO_NOTE
from icing.forecast.interp import level_weights
from icing.forecast.units import Conversion, conversion_of

__all__ = ["build_grid_source", "CLOUD_WATER_NOTE"]

#: how model cloud water is used (said in the provenance of cloud_liquid)
CLOUD_WATER_NOTE = (
    "grid-box mean mass fraction; divided by the layer cloud fraction to an in-cloud "
    "value where the file has one, else used as it is (then it understates in-cloud "
    "liquid); combined with the liquid diagnosed from humidity by taking the larger, "
    "never the sum (models under-predict supercooled liquid: Forbes & Ahlgrimm 2014, "
    "Mon. Wea. Rev. 142, 3425)"
)


def _require_temperature(ds, kinds, var_map, path):
    found = find_variable(ds, kinds, "temperature", var_map, path=path)
    if found is None:
        raise ForecastError(
            "no air temperature on levels found (by standard_name air_temperature, GRIB "
            f"parameter or a name like t, TMP, Temperature_isobaric); the file has: "
            f"{files_variables(ds, kinds)}",
            path=path,
            fix="map the temperature variable with --var temperature=NAME",
        )
    return found[0]


@dataclass(frozen=True)
class _Found:
    """One variable found for a key, its conversion, and a sample of its values in SI."""

    key: str
    name: str
    how: str
    conversion: Conversion
    level_dim: str | None
    sample: np.ndarray
    mixing_ratio: bool = False
    extra: tuple = ()


def _sample(ds, lay, var, level_dim, path):
    """Read the variable at up to 6 x 6 columns spread over the grid, first time.

    Kept per process for the same file and variable (:func:`icing.forecast.memo.sample`).
    """
    idx = {
        lay.y_dim: slice(0, None, max(1, ds.sizes[lay.y_dim] // 6)),
        lay.x_dim: slice(0, None, max(1, ds.sizes[lay.x_dim] // 6)),
        **lay.other,
    }
    for d in (lay.time_dim, lay.step_dim):
        if d:
            idx[d] = 0
    idx = {d: i for d, i in idx.items() if d in var.dims}
    for d in var.dims:
        if d not in idx and d != level_dim and ds.sizes[d] == 1:
            idx[d] = 0
    order = [d for d in (level_dim, lay.y_dim, lay.x_dim) if d in var.dims]

    def read():
        return np.asarray(var.isel(idx).transpose(*order).values, dtype=float)

    return memo.sample(path, var, idx, read, order)


def _find(ds, kinds, lay, key, var_map, path, vertical=None):
    res = find_variable(
        ds, kinds, key, var_map, path=path, hdims=(lay.y_dim, lay.x_dim), vertical=vertical
    )
    if res is None:
        return None
    name, how = res
    var = ds[name]
    ld = level_dim_of(ds, kinds, var) if key in LEVEL_KEYS else None
    sample = _sample(ds, lay, var, ld, path)
    conv = conversion_of(key, var, path=path, name=name, sample=sample)
    si = sample * conv.scale + conv.offset
    derived = var.attrs.get("derived_from")
    extra = (f"from {derived}",) if derived else ()
    return _Found(key, name, how, conv, ld, si, is_mixing_ratio(ds, name) and not derived, extra)


def _require(ds, kinds, lay, key, var_map, path, vertical, what):
    f = _find(ds, kinds, lay, key, var_map, path, vertical)
    if f is None:
        raise ForecastError(
            f"no {what} found; the file has: {files_variables(ds, kinds)}",
            path=path,
            fix=f"map it with --var {key}=NAME",
        )
    return f


def _find_all(ds, kinds, lay, vertical, var_map, path):
    """Find every key: temperature, a humidity, and pressure (and height) off pressure levels."""
    found = {"temperature": _find(ds, kinds, lay, "temperature", var_map, path)}
    for hum in HUMIDITY_KEYS:
        f = _find(ds, kinds, lay, hum, var_map, path, vertical)
        if f is not None:
            found[hum] = f
            break
    else:
        raise ForecastError(
            "no humidity variable found (relative_humidity, dew_point_temperature or "
            f"specific_humidity, on {vertical} levels); the file has: "
            f"{files_variables(ds, kinds)}",
            path=path,
            fix="map one with --var relative_humidity=NAME (or dewpoint=, specific_humidity=)",
        )
    if vertical in ("height", "model"):
        found["pressure"] = _require(
            ds, kinds, lay, "pressure", var_map, path, vertical, VAR_KEYS["pressure"]
        )
    if vertical == "model":
        found["height"] = _require(
            ds, kinds, lay, "height", var_map, path, vertical, "height of the model levels"
        )
    for key in OPTIONAL_KEYS:
        if key in found or (key == "height" and vertical == "height"):
            continue
        f = _find(ds, kinds, lay, key, var_map, path, vertical)
        if f is not None:
            found[key] = f
    return found


def _corrected_geopotential(f, level_coords, vertical, path):
    """Heights that are geopotential labelled metres, divided by g (said)."""
    if vertical != "pressure" or f.level_dim is None:
        return f
    p = level_coords[f.level_dim].reshape((-1,) + (1,) * (f.sample.ndim - 1))
    if not plausibility.geopotential_as_metres(f.sample, p, name=f.name, path=path):
        return f
    conv = replace(f.conversion, scale=f.conversion.scale / G, offset=f.conversion.offset / G)
    note = f"values are geopotential (m2 s-2) labelled {f.conversion.units!r}: divided by g"
    return replace(f, conversion=conv, sample=f.sample / G, extra=f.extra + (note,))


def _corrected_orography(f):
    """Surface heights above 9 km labelled metres are geopotential: divided by g (said)."""
    with np.errstate(invalid="ignore"):
        top = np.nanmax(f.sample) if np.isfinite(f.sample).any() else 0.0
    if not 9000.0 * 1.2 < top < 9000.0 * G:
        return f
    conv = replace(f.conversion, scale=f.conversion.scale / G, offset=f.conversion.offset / G)
    note = f"values up to {top:.0f} are geopotential labelled {f.conversion.units!r}: divided by g"
    return replace(f, conversion=conv, sample=f.sample / G, extra=f.extra + (note,))


def _checked(found, level_coords, lay, vertical, path):
    """Refuse implausible values; correct the unambiguous slips (said in the provenance)."""
    t = found["temperature"]
    plausibility.check_temperature(t.sample, name=t.name, units=t.conversion.units, path=path)
    if "relative_humidity" in found:
        r = found["relative_humidity"]
        plausibility.check_relative_humidity(
            r.sample, name=r.name, units=r.conversion.units, path=path
        )
    if "height" in found:
        found["height"] = _corrected_geopotential(found["height"], level_coords, vertical, path)
    if "surface_height" in found:
        found["surface_height"] = _corrected_orography(found["surface_height"])
    levels = level_coords[lay.level_dim]
    for key, sign in (("height", 1.0), ("pressure", -1.0)):
        f = found.get(key)
        if f is not None and f.level_dim == lay.level_dim and vertical != key:
            plausibility.check_monotonic_heights(
                sign * f.sample, levels, name=f.name, vertical=vertical, path=path
            )
    return found


def _missing_levels(weights, levels, vertical):
    """List the forecast's levels a variable lacks, surface first, in words."""
    _, _, _, valid = weights
    order = np.argsort(-levels) if vertical == "pressure" else np.argsort(levels)
    lacking = [levels[i] for i in order if not valid[i]]
    if not lacking:
        return None
    if vertical == "pressure":
        return ", ".join(f"{v / 100:g}" for v in lacking) + " hPa"
    return ", ".join(f"{v:g}" for v in lacking) + " m"


def _file_fields(found, lay, level_coords, vertical, raw_of, notes, pairs=None):
    """One lazy SI field per key, level variables brought to the temperature's levels."""
    fields, missing = {}, {}
    levels = level_coords[lay.level_dim]
    for key, f in found.items():
        raw = raw_of(f.name)
        fixed = {d: i for d, i in lay.other.items() if d in raw.dims}
        time_dim = lay.time_dim if lay.time_dim in raw.dims else None
        if lay.step_dim and time_dim and lay.step_dim not in raw.dims:
            # no step on a (reference time, step) file: valid at the latest reference time
            fixed[time_dim], time_dim = len(np.unique([p[0] for p in pairs])) - 1, None
        fld = FileField(
            raw,
            lay.y_dim,
            lay.x_dim,
            time_dim,
            f.level_dim,
            tuple(fixed.items()),
            f.conversion.scale,
            f.conversion.offset,
            label=f.name,
            steps=(lay.step_dim, pairs) if lay.step_dim in raw.dims else None,
        )
        if f.level_dim is not None and f.level_dim != lay.level_dim:
            w = level_weights(level_coords[f.level_dim], levels, log=vertical == "pressure")
            fld = LevelRegridField(fld, w, label=f.name)
            missing[key] = _missing_levels(w, levels, vertical)
            notes.append(
                f"{f.name} is on its own levels ({f.level_dim}); interpolated "
                f"to the {lay.level_dim} levels"
                + (f", missing at {missing[key]}" if missing[key] else "")
            )
        fields[key] = fld
    return fields, missing


def _humidity_conversion(fields, found, file_attrs, raw_attrs, rh_convention):
    """Bring relative humidity to over water; return the provenance text."""
    if "relative_humidity" not in fields:
        hum = next(h for h in HUMIDITY_KEYS if h in fields)
        return {hum: "not applicable (no relative humidity; vapour from " + hum + ")"}
    conv, how = humidity_convention(raw_attrs("relative_humidity"), file_attrs, rh_convention)
    if conv.name not in ("water", "unknown"):
        fields["relative_humidity"] = conversions.water_relative_humidity(
            fields["relative_humidity"], fields["temperature"], conv, label="rh-water"
        )
        text = f"{conv.name}: {conv.description}; converted to over water ({how}; {conv.source})"
    elif conv.name == "water":
        text = f"water: {conv.description} ({how}; {conv.source})"
    else:
        text = f"unknown: {conv.description} ({how})"
    return {"relative_humidity": text}


def _mixing_ratios(fields, found, vertical, levels, converted):
    """Mixing ratios (per kg of dry air) to mass fractions (per kg of moist air)."""
    hum = next(h for h in HUMIDITY_KEYS if h in fields)
    if hum == "specific_humidity" and found[hum].mixing_ratio:
        fields[hum] = conversions.specific_from_mixing_ratio(fields[hum], label="q-from-r")
        converted[hum] = "vapour " + MIXING_RATIO_NOTE + ": q = r / (1 + r)"
    pressure = levels if vertical == "pressure" else fields["pressure"]
    for key in ("cloud_liquid", "cloud_ice", "rain", "snow"):
        if key in fields and found[key].mixing_ratio:
            fields[key] = conversions.mass_fraction_from_mixing_ratio(
                fields[key], hum, fields[hum], fields["temperature"], pressure, label=key
            )
            converted[key] = MIXING_RATIO_NOTE + ": q = r (1 - q_v)"


def _winds(fields, raw_attrs, crs, y, x, converted):
    """Grid-relative winds (GRIB flag, WRF) to earth-relative on projected or rotated grids."""
    if crs is None or not {"wind_u", "wind_v"} <= set(fields):
        return
    relative = [
        int(raw_attrs(k).get("GRIB_uvRelativeToGrid", 0) or 0) for k in ("wind_u", "wind_v")
    ]
    if not any(relative):
        return
    fields["wind_u"], fields["wind_v"] = conversions.earth_relative_winds(
        fields["wind_u"], fields["wind_v"], crs, y, x, labels=("u-earth", "v-earth")
    )
    for key in ("wind_u", "wind_v"):
        converted[key] = "grid-relative wind rotated to earth-relative"


def _provenance(found, missing, converted, conventions):
    """Per-variable provenance: source name, how found, units, conversions, conventions."""
    out = {}
    for key, f in found.items():
        p = {"name": f.name, "found_by": f.how, "units": f.conversion.units}
        notes = []
        if f.conversion.transform == "omega":
            notes.append("omega to w = -omega / (rho g)")
        notes += list(f.extra)
        if key in converted:
            notes.append(converted[key])
        if notes:
            p["converted"] = "; ".join(notes)
        if key in conventions:
            p["humidity_convention"] = conventions[key]
        if missing.get(key):
            p["missing_levels"] = missing[key]
        if key == "cloud_liquid":
            p["cloud_water"] = CLOUD_WATER_NOTE
        out[key] = p
    return out


def _frame(ds, kinds, lay, path, notes):
    """Return times, grid mapping and horizontal axes of the temperature's frame."""
    times, pairs = valid_times(ds, lay.time_dim, lay.temperature, path, lay)
    if pairs is not None:
        notes.append(
            f"(reference time, step) pairs ({lay.time_dim}, {lay.step_dim}) read as "
            f"{times.size} valid times (where two runs give one valid time, the later run)"
        )
    crs, grid, gm_attrs, gm_notes = grid_mapping(ds, kinds, lay, path)
    notes += gm_notes
    projected = crs is not None and not crs.is_geographic
    x = coordinate_si(ds, lay.x_dim, kinds[lay.x_dim], projected=projected, path=path)
    y = coordinate_si(ds, lay.y_dim, kinds[lay.y_dim], projected=projected, path=path)
    for dim, vals in ((lay.x_dim, x), (lay.y_dim, y)):
        check_monotonic(dim, vals, path)
    return times, pairs, crs, grid, gm_attrs, y, x


def _above_ground(ds, lay, vertical, found, path, notes):
    std_z = str(ds.variables[lay.level_dim].attrs.get("standard_name", ""))
    above = vertical == "height" and std_z == "height"
    if above:
        if "surface_height" not in found:
            raise ForecastError(
                "height levels are above ground (standard_name height) but "
                "the file has no surface height",
                path=path,
                where="vertical coordinate",
                fix="add surface_altitude or map one with --var surface_height=NAME",
            )
        notes.append("height levels are above ground (standard_name height)")
    return above


def build_grid_source(
    ds, path, raw_of, *, var_map=None, fmt="CF-NetCDF", notes=(), rh_convention=None, member=None
):
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
    rh_convention : str, optional
        The relative humidity's convention when the user states it
        (:data:`icing.forecast.conventions.CONVENTIONS`).
    member : int, optional
        The ensemble member to read along a member dimension.

    Returns
    -------
    GridSource
    """
    path, notes = Path(path), list(notes)
    var_map = dict(var_map or {})
    check_var_map(ds, var_map, path=path)
    kinds = dimension_kinds(ds)
    lay = layout_of(ds, kinds, _require_temperature(ds, kinds, var_map, path), path, member)
    times, pairs, crs, grid, gm_attrs, y, x = _frame(ds, kinds, lay, path, notes)
    members = [d for d in lay.other if ds.sizes[d] > 1 and d != lay.member_dim]
    for d in members:
        notes.append(f"ensemble member {member} of {ds.sizes[d]} read (dimension {d})")
    values, labels = _members_of(ds, lay.member_dim, notes)
    vertical = kinds[lay.level_dim]
    found = _find_all(ds, kinds, lay, vertical, var_map, path)
    above_ground = _above_ground(ds, lay, vertical, found, path, notes)
    level_dims = {f.name: f.level_dim for f in found.values() if f.key != "temperature"}
    level_coords = level_coordinates(ds, kinds, level_dims, lay, vertical, path, notes)
    found = _checked(found, level_coords, lay, vertical, path)
    fields, missing = _file_fields(found, lay, level_coords, vertical, raw_of, notes, pairs)
    raw_attrs = lambda key: dict(ds[found[key].name].attrs)  # noqa: E731
    conventions = _humidity_conversion(fields, found, dict(ds.attrs), raw_attrs, rh_convention)
    converted = {}
    _mixing_ratios(fields, found, vertical, level_coords[lay.level_dim], converted)
    _winds(fields, raw_attrs, crs, y, x, converted)
    chunks = ds[lay.temperature].encoding.get("chunksizes")
    return GridSource(
        path=path,
        format=fmt,
        fields=fields,
        provenance=_provenance(found, missing, converted, conventions),
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
        member=member if members else (values[0] if values else None),
        member_dim=lay.member_dim,
        members=values,
        member_labels=labels,
    )


def _members_of(ds, member_dim, notes):
    """Return the member values and labels of a file with a member dimension (``()`` without)."""
    from icing.forecast.coords import member_values

    if member_dim is None:
        return (), ()
    values = tuple(v.item() if hasattr(v, "item") else v for v in member_values(ds, member_dim))
    label_var = f"{member_dim}_label"
    if label_var in ds.variables and ds.variables[label_var].dims == (member_dim,):
        labels = tuple(str(x) for x in np.asarray(ds.variables[label_var].values))
    else:
        labels = tuple(f"{member_dim} {v}" for v in values)
    notes.append(f"ensemble of {len(values)} members along dimension {member_dim!r}")
    return values, labels
