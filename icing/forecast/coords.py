"""Where a gridded file's values stand: horizontal axes, levels, valid times, grid mapping.

Functions over ``(dataset, kinds)`` (``kinds`` from
:func:`~icing.forecast.discovery.dimension_kinds`) shared by every gridded reader:
the temperature's frame (:class:`Layout`), the valid times (one time axis, or
(reference time, step) pairs), the forecast reference time, the CF grid mapping,
and coordinates in SI (with the unit slips of pressure levels caught, see
:mod:`icing.forecast.plausibility`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from icing.constants import G
from icing.errors import ForecastError
from icing.forecast.discovery import level_dim_of
from icing.forecast.plausibility import level_pressure_slip
from icing.forecast.units import linear, units_of

__all__ = [
    "Layout",
    "MEMBER_DIMS",
    "is_member_dim",
    "member_values",
    "layout_of",
    "horizontal_dims",
    "valid_times",
    "issue_time",
    "grid_mapping",
    "coordinate_si",
    "check_monotonic",
    "level_coordinates",
]


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
    """Valid-time (or reference-time) dimension, None for a single-time file."""
    other: dict = field(default_factory=dict)
    """Other dimensions held at one index (size 1, or the chosen ensemble member)."""
    step_dim: str | None = None
    """Forecast-step dimension beside ``time_dim`` ((reference time, step) files)."""
    member_dim: str | None = None
    """Ensemble-member dimension kept as a member axis (several members, none chosen);
    ``other`` holds it at the first member, :func:`icing.forecast.dataset.split_members`
    gives the others."""


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


#: dimension names of ensemble members (GRIB ``number``, CF ``realization``, ...)
MEMBER_DIMS = ("number", "member", "realization", "realisation", "ensemble", "ens")


def is_member_dim(ds, d) -> bool:
    """Whether a dimension holds ensemble members: by name, or CF ``standard_name`` realization."""
    if d.lower() in MEMBER_DIMS:
        return True
    return d in ds.variables and ds.variables[d].attrs.get("standard_name") == "realization"


def member_values(ds, d) -> np.ndarray:
    """Return the member coordinate's values (0, 1, ... when the dimension has no coordinate)."""
    return np.asarray(ds[d].values) if d in ds.variables else np.arange(ds.sizes[d])


def _member_index(ds, d, member, tname, path):
    """Index of the chosen member along an ensemble dimension (None: keep every member)."""
    if member is None:
        return None
    values = member_values(ds, d)
    shown = f"{values.min()}..{values.max()}" if values.dtype.kind in "iuf" else str(list(values))
    hits = np.flatnonzero(values == member)
    if not hits.size:
        raise ForecastError(
            f"member {member} is not in {d!r} ({shown})",
            path=path,
            where=f"dimension {d}",
            fix="give one of the members listed",
        )
    return int(hits[0])


def _other_dims(ds, tvar, skip, member, path):
    """Other dimensions held at one index, and the member dimension kept as a member axis."""
    other, member_dim = {}, None
    for d in tvar.dims:
        if d in skip:
            continue
        if ds.sizes[d] == 1:
            other[d] = 0
        elif is_member_dim(ds, d) and member_dim is None:
            index = _member_index(ds, d, member, tvar.name, path)
            other[d] = 0 if index is None else index
            member_dim = d if index is None else None
        else:
            raise ForecastError(
                f"{tvar.name!r} has an extra dimension {d!r} of size {ds.sizes[d]}",
                path=path,
                where=f"variable {tvar.name}",
                fix=f"select one {d} before screening (or one member with --member N)",
            )
    return other, member_dim


def layout_of(ds, kinds, tname, path, member=None):
    """Return the temperature's frame; refuse unknown levels, extra dimensions, several times."""
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
    step_dims = [d for d in tvar.dims if kinds.get(d) == "step"]
    if len(time_dims) > 1 or len(step_dims) > 1 or (step_dims and not time_dims):
        raise ForecastError(
            f"{tname!r} has several time dimensions",
            path=path,
            where=f"variable {tname}",
            fix="give valid times along one dimension, or (reference time, step)",
        )
    skip = (x_dim, y_dim, level_dim, *time_dims, *step_dims)
    other, member_dim = _other_dims(ds, tvar, skip, member, path)
    time_dim = time_dims[0] if time_dims else None
    step_dim = step_dims[0] if step_dims else None
    return Layout(tname, y_dim, x_dim, level_dim, time_dim, other, step_dim, member_dim)


def _datetimes(values):
    return np.asarray(values).astype("datetime64[ms]")


def _is_reference_time(name, var):
    return str(var.attrs.get("standard_name", "")) == "forecast_reference_time" or name in (
        "forecast_reference_time",
        "reftime",
    )


def _step_pairs(ds, lay, path):
    """Return the valid times of (reference time, step) files, once each, and their pairs."""
    ref = _datetimes(ds.variables[lay.time_dim].values)
    step = np.asarray(ds.variables[lay.step_dim].values).astype("timedelta64[ms]")
    valid = ref[:, None] + step[None, :]
    best = {}
    for i in range(ref.size):
        for j in range(step.size):
            best[valid[i, j]] = (i, j)  # later reference times come later: they win
    times = np.array(sorted(best), dtype="datetime64[ms]")
    return times, tuple(best[t] for t in times)


def valid_times(ds, time_dim, tname, path, lay=None):
    """Return the valid times along ``time_dim`` (or the one scalar valid time), datetime64[ms].

    With a step dimension (``lay.step_dim``) the valid times are reference time + step,
    and the (time index, step index) pair of each is returned too.
    """
    if lay is not None and lay.step_dim is not None:
        return _step_pairs(ds, lay, path)
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
    return (times, None) if lay is not None else times


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
    from icing.forecast.memo import crs_from_cf

    attrs = dict(ds[gm_name].attrs)
    try:
        crs = crs_from_cf(attrs)  # PROJ's database once per process (0.17 s a look-up)
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


def check_monotonic(dim, vals, path):
    """Refuse a horizontal axis that is not strictly monotonic with at least 2 points."""
    d = np.diff(vals)
    if vals.size < 2 or not (np.all(d > 0) or np.all(d < 0)):
        raise ForecastError(
            f"coordinate {dim!r} is not strictly monotonic with 2+ points",
            path=path,
            where=f"coordinate {dim}",
            fix="give a regular grid with at least 2 points per axis",
        )


def _pressure_levels(ds, dim, path, notes):
    """Pressure-level coordinate in Pa, with a unit slip corrected and said."""
    vals = coordinate_si(ds, dim, "pressure", projected=False, path=path)
    units = units_of(ds.variables[dim])
    factor = level_pressure_slip(vals, dim=dim, units=units, path=path)
    if factor != 1.0:
        wrong, right = ("hPa", "Pa") if factor < 1 else ("Pa", "hPa")
        notes.append(
            f"levels of {dim} are labelled {units!r} but hold {right} "
            f"({vals.min() / 100:g}..{vals.max() / 100:g} hPa as labelled): read as {right}, "
            f"the {wrong} label taken for a slip"
        )
        vals = vals * factor
    return vals


def level_coordinates(ds, kinds, found_level_dims, lay, vertical, path, notes):
    """SI values of every level dimension in use; refuse a mix of level kinds.

    ``found_level_dims`` is ``{variable name: level dimension}`` of the level
    variables found. Model levels keep their numbers (pressure and height are fields).
    """
    coords = {}
    for name, ld in [(lay.temperature, lay.level_dim)] + list(found_level_dims.items()):
        if ld is None or ld in coords:
            continue
        if kinds[ld] != vertical:
            raise ForecastError(
                f"{name!r} is on {kinds[ld]} levels but {lay.temperature!r} on {vertical} levels",
                path=path,
                where=f"variable {name}",
                fix="give all level variables on one kind of level",
            )
        if vertical == "pressure":
            coords[ld] = _pressure_levels(ds, ld, path, notes)
        else:
            coords[ld] = coordinate_si(ds, ld, kinds[ld], projected=False, path=path)
    return coords
