"""GRIB1 and GRIB2 forecasts through ecCodes: scan once, decode only what is read.

The file is scanned once, message by message (multi-field GRIB2 messages field by
field), reading only the header keys. Fields are grouped by parameter and level
type: each group becomes one raw variable with its own level set, so variables
on other level sets are kept (relative humidity on 25 levels beside temperature
on 26, vertical velocity and cloud water on 21). Valid times come from each
field's validity date and time ((reference time, step) pairs become one valid-time
axis; where two runs give the same valid time, the later run is kept). Values are
decoded lazily, field by field, into a bounded cache.

Ensembles. ecCodes' ``number`` key (an alias of ``perturbationNumber``, with
``totalNumber`` for ``numberOfForecastsInEnsemble``) numbers the members: in GRIB2
it is defined by the individual-ensemble-forecast product templates 4.1 and 4.11
(WMO Manual on Codes, code table 4.0), which also carry ``typeOfEnsembleForecast``
(code table 4.6: 0/1 unperturbed high/low-resolution control, 2/3 negatively/
positively perturbed, 4 multi-model) -- NCEP GEFS and ECMWF ENS GRIB2 code their
members so (docs/references.md, [WMO306] and [ecCodes]); in GRIB1 by the centre's
local definition (ECMWF local definition 1:
``marsType`` cf control, pf perturbed, with ``number``). Several numbers in a file
make a ``number`` dimension: the member axis (one member with ``member=``).
Products derived from the members (GRIB2 templates 4.2-4.7, 4.9, 4.10, 4.12-4.14:
ensemble mean and spread, cluster, probability, percentile and error fields; GRIB1
ECMWF ``marsType`` em, es, ep) are not forecasts of the air: they are skipped and
said, and a file holding nothing else is refused.

The raw variables carry the GRIB identity as attributes (``GRIB_edition``,
``GRIB_discipline``, ``GRIB_parameterCategory``, ``GRIB_parameterNumber`` or
``GRIB_paramId``, ``GRIB_typeOfLevel``, ``GRIB_shortName``, ``GRIB_name``,
``units``): discovery finds them by GRIB parameter identity
(:mod:`icing.forecast.discovery`), then :func:`icing.forecast.build.build_grid_source`
builds the internal structure as for NetCDF.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from icing.errors import ForecastError
from icing.forecast.build import build_grid_source
from icing.forecast.fields import RawVariable, lazy_raw_array
from icing.forecast.gribgrid import grib_grid, grid_signature
from icing.forecast.gribparams import GRIB1_PARAMETERS, GRIB2_PARAMETERS, PARAM_IDS

__all__ = ["ECCODES_LOCK", "grib_edition", "read_grib_forecast", "GribFile", "GribVariable"]

#: level types read as vertical coordinates (levels in SI): unit, CF attributes
_LEVEL_TYPES = {
    "isobaric": ("Pa", {"standard_name": "air_pressure", "positive": "down"}),
    "heightAboveSea": ("m", {"standard_name": "altitude", "positive": "up"}),
    "heightAboveGround": ("m", {"standard_name": "height", "positive": "up"}),
}
#: ecCodes level types that are one kind here (pressure levels in hPa or Pa)
_NORMAL_TYPES = {"isobaricInhPa": "isobaric", "isobaricInPa": "isobaric"}
_TEMPERATURE_IDS = {("grib2", 0, 0, 0), ("grib1", 130)}
#: One lock for every ecCodes call of this package: the library of the pip wheels is
#: not known to be built thread-safe, so scans, decodes and grid reads are serialised.
ECCODES_LOCK = threading.RLock()


def grib_edition(path) -> int | None:
    """Return the edition of the first GRIB message of a file (None if not GRIB)."""
    with open(path, "rb") as fh:
        head = fh.read(4096)
    at = head.find(b"GRIB")
    if at < 0 or len(head) < at + 8:
        return None
    return head[at + 7]


def _refuse(path, edition, message, fix, where=None):
    raise ForecastError(f"GRIB{edition or ''}: {message}", path=path, where=where, fix=fix)


def _get(h, key, default=None):
    import eccodes

    try:
        return eccodes.codes_get(h, key) if eccodes.codes_is_defined(h, key) else default
    except Exception:  # keys that cannot be computed for this message
        return default


def _get_int(h, key):
    """Return an integer key as a number (code-table keys otherwise come as abbreviations)."""
    import eccodes

    try:
        return int(eccodes.codes_get_long(h, key)) if eccodes.codes_is_defined(h, key) else None
    except Exception:  # missing or not representable
        return None


def _datetime(date, time):
    d = str(int(date)).zfill(8)
    t = str(int(time)).zfill(4)
    return np.datetime64(f"{d[:4]}-{d[4:6]}-{d[6:]}T{t[:2]}:{t[2:]}", "ms")


@dataclass(frozen=True)
class _Field:
    """One field of the file: where it is and what it is."""

    offset: int
    sub: int
    group: tuple
    level: float
    valid: np.datetime64
    reference: np.datetime64
    number: int | None
    grid: tuple
    product: str = "forecast"
    """"forecast", "control", "perturbed", "member" (ensemble members; "member" when
    neither control nor perturbed, e.g. an ensemble of analyses) or "derived" (mean,
    spread, probability ...: not a forecast of the air)."""


def _identity(h):
    """Parameter identity: GRIB2 (discipline, category, number) or GRIB1 paramId."""
    if _get(h, "edition") == 2:
        return (
            "grib2",
            _get(h, "discipline"),
            _get(h, "parameterCategory"),
            _get(h, "parameterNumber"),
        )
    return ("grib1", _get(h, "paramId"), _get(h, "table2Version"), _get(h, "indicatorOfParameter"))


def _uv_relative(h):
    """Return 1 when vectors are grid-relative (bit 5 of GRIB2 table 3.3, GRIB1 table 7)."""
    flag = _get_int(h, "uvRelativeToGrid")
    if flag is None:
        flags = _get_int(h, "resolutionAndComponentFlags") or 0
        flag = 1 if flags & 8 else 0
    return int(flag)


def _relevant(identity, level_type):
    """Whether a group may be used (its parameter is in the identity tables)."""
    if level_type not in _LEVEL_TYPES and level_type != "surface":
        return False
    if identity[0] == "grib2":
        return identity[1:] in GRIB2_PARAMETERS
    return identity[1] in PARAM_IDS or identity[3] in GRIB1_PARAMETERS


def _group_attrs(h, identity, level_type):
    """Attributes of a group's raw variable, computed once per group.

    ecCodes' named keys (short name, name, units) cost about 2 ms each, so they
    are read only for the groups a screening may use.
    """
    relevant = _relevant(identity, level_type)
    if identity[0] == "grib2":
        code = "-".join(map(str, identity[1:]))
    else:
        code = f"{identity[2]}-{identity[3]}"
    attrs = {
        "GRIB_edition": int(_get(h, "edition")),
        "GRIB_typeOfLevel": level_type,
        "GRIB_shortName": str(_get(h, "shortName", "unknown")) if relevant else f"p{code}",
        "GRIB_name": str(_get(h, "name", "")) if relevant else "",
        "GRIB_centre": str(_get(h, "centre", "")),
        "GRIB_generatingProcessIdentifier": int(_get(h, "generatingProcessIdentifier", 0) or 0),
        "GRIB_uvRelativeToGrid": _uv_relative(h),
        "long_name": str(_get(h, "name", "")) if relevant else f"GRIB parameter {code}",
        "units": str(_get(h, "units", "")) if relevant else "unknown",
    }
    if identity[0] == "grib2":
        attrs.update(
            GRIB_discipline=identity[1],
            GRIB_parameterCategory=identity[2],
            GRIB_parameterNumber=identity[3],
        )
    else:
        attrs.update(
            GRIB_paramId=int(identity[1] or 0),
            GRIB_table2Version=identity[2],
            GRIB_indicatorOfParameter=identity[3],
        )
    return attrs


def _surface(h):
    """Return the integer level type (GRIB2 table 4.5, GRIB1 table 3) and the level in SI.

    Integer keys only (the named ``typeOfLevel`` costs a millisecond a message): GRIB2
    levels from their scaled value (Pa for pressure, m for heights), GRIB1 from
    ``level`` (hPa for pressure).
    """
    if _get_int(h, "edition") == 2:
        kind = _get_int(h, "typeOfFirstFixedSurface")
        value = _get_int(h, "scaledValueOfFirstFixedSurface")
        factor = _get_int(h, "scaleFactorOfFirstFixedSurface")
        if value is None or factor is None or abs(value) >= 2**31 - 1 or abs(factor) > 20:
            return ("grib2", kind), float(_get(h, "level", 0) or 0)
        return ("grib2", kind), float(value) * 10.0 ** (-float(factor))
    kind = _get_int(h, "indicatorOfTypeOfLevel")
    level = float(_get(h, "level", 0) or 0)
    return ("grib1", kind), level * 100.0 if kind == 100 else level


def _scan_one(h, index, info, level_types, first_of_grid):
    """Return the :class:`_Field` of one handle, filling the per-group and per-grid caches."""
    identity = _identity(h)
    surface, level = _surface(h)
    if surface not in level_types:
        level_types[surface] = str(_get(h, "typeOfLevel", "unknown"))
    level_type = _NORMAL_TYPES.get(level_types[surface], level_types[surface])
    group = (identity, level_type)
    if group not in info:
        info[group] = _group_attrs(h, identity, level_type)
    grid = grid_signature(h)
    if grid not in first_of_grid:
        first_of_grid[grid] = index
    product = _product(h)
    number = _get(h, "number") if product != "forecast" else None
    return _Field(
        offset=0,
        sub=0,
        group=group,
        level=level,
        valid=_datetime(_get(h, "validityDate"), _get(h, "validityTime")),
        reference=_datetime(_get(h, "dataDate"), _get(h, "dataTime")),
        number=None if number is None else int(number),
        grid=grid,
        product=product,
    )


#: GRIB2 product templates (code table 4.0) of products derived from an ensemble's
#: members: mean/spread (2, 12), clusters (3, 4, 13, 14), probabilities (5, 9),
#: percentiles (6, 10), forecast errors (7)
_DERIVED_TEMPLATES = {2, 3, 4, 5, 6, 7, 9, 10, 12, 13, 14}
#: GRIB2 product templates of individual ensemble members (code table 4.0: 1, 11)
_MEMBER_TEMPLATES = {1, 11}
#: ECMWF GRIB1 ``marsType`` codes: control (cf), perturbed (pf), and derived products
#: (em ensemble mean, es ensemble standard deviation, ep probability)
_MARS_CONTROL, _MARS_PERTURBED, _MARS_DERIVED = 10, 11, {17, 18, 30}


def _product(h):
    """Return what a field is: a forecast, an ensemble member, or derived.

    Integer keys only (cheap): GRIB2 ``productDefinitionTemplateNumber`` with
    ``typeOfEnsembleForecast`` (code table 4.6) for members; GRIB1 ``marsType`` of
    ECMWF's local definition, else ``number`` where a local definition defines it
    (with ``numberOfForecastsInEnsemble`` above 1 and another ``marsType``: "member").
    """
    if _get_int(h, "edition") == 2:
        template = _get_int(h, "productDefinitionTemplateNumber")
        if template in _DERIVED_TEMPLATES:
            return "derived"
        if template not in _MEMBER_TEMPLATES:
            return "forecast"
        kind = _get_int(h, "typeOfEnsembleForecast")
        return "control" if kind in (0, 1) else "perturbed"
    mars = _get_int(h, "marsType")
    if mars in _MARS_DERIVED:
        return "derived"
    if mars == _MARS_CONTROL:
        return "control"
    if mars == _MARS_PERTURBED or (mars is None and _get_int(h, "number") is not None):
        return "perturbed"
    if (_get_int(h, "numberOfForecastsInEnsemble") or 0) > 1 and _get_int(h, "number") is not None:
        # members of another kind, e.g. ECMWF's ensemble of data assimilations (ERA5 EDA:
        # analyses, marsType "an", numbered 0-9 out of 10)
        return "member"
    return "forecast"


def scan(path, edition):
    """Scan every field's header: (fields, group attributes, first field index of each grid).

    Raises
    ------
    ForecastError
        A truncated or corrupt file (the field and byte where reading stopped).
    """
    import eccodes

    eccodes.codes_grib_multi_support_on()
    fields, info, level_types, first_of_grid = [], {}, {}, {}
    with open(path, "rb") as fh:
        prev, sub = -1, 0
        while True:
            at = fh.tell()
            try:
                h = eccodes.codes_grib_new_from_file(fh)
            except Exception as exc:  # ecCodes raises several kinds for broken messages
                _refuse(
                    path,
                    edition,
                    f"unreadable message after {len(fields)} field(s) at byte {at:,} "
                    f"({type(exc).__name__}: the file is truncated or corrupt)",
                    "download or copy the file again",
                    where=f"field {len(fields) + 1}",
                )
            if h is None:
                break
            try:
                offset = int(eccodes.codes_get_message_offset(h))
                sub = sub + 1 if offset == prev else 0
                prev = offset
                f = _scan_one(h, len(fields), info, level_types, first_of_grid)
                fields.append(
                    _Field(
                        offset,
                        sub,
                        f.group,
                        f.level,
                        f.valid,
                        f.reference,
                        f.number,
                        f.grid,
                        f.product,
                    )
                )
            finally:
                eccodes.codes_release(h)
    if not fields:
        _refuse(path, edition, "no GRIB message could be read", "give a GRIB1 or GRIB2 file")
    _check_complete(path, edition, fields[-1])
    return fields, info, first_of_grid


def _check_complete(path, edition, last):
    """Refuse a file whose last message ends early (ecCodes may skip it silently)."""
    size = Path(path).stat().st_size
    with open(path, "rb") as fh:
        fh.seek(last.offset)
        head = fh.read(16)
    if len(head) < 16:
        return
    total = int.from_bytes(head[8:16], "big") if head[7] == 2 else int.from_bytes(head[4:7], "big")
    if last.offset + total > size:
        _refuse(
            path,
            edition,
            f"the last message (at byte {last.offset:,}) needs {total:,} bytes but the file "
            f"ends after {size - last.offset:,}: the file is truncated",
            "download or copy the file again",
        )


class GribFile:
    """An opened GRIB file: decodes fields on demand into a bounded, lock-protected cache."""

    def __init__(self, path, fields, grid, *, cache_bytes=256 * 2**20):
        self.path = Path(path)
        self.fields = fields
        self.grid = grid
        self.cache_bytes = int(cache_bytes)
        self._cache: OrderedDict = OrderedDict()
        self._bytes = 0

    def values(self, i) -> np.ndarray:
        """Field ``i`` decoded as (ny, nx) float64, NaN where the bitmap says missing."""
        with ECCODES_LOCK:
            hit = self._cache.get(i)
            if hit is not None:
                self._cache.move_to_end(i)
                return hit
            try:
                vals = self._decode(self.fields[i])
            except Exception as exc:  # ecCodes raises its own kinds for broken fields
                f = self.fields[i]
                raise ForecastError(
                    f"field at byte {f.offset:,} cannot be decoded ({type(exc).__name__})",
                    path=self.path,
                    where=f"{f.group[1]} level {f.level:g}",
                    fix="download or copy the file again",
                ) from None
            self._cache[i] = vals
            self._bytes += vals.nbytes
            while self._bytes > self.cache_bytes and len(self._cache) > 1:
                self._bytes -= self._cache.popitem(last=False)[1].nbytes
            return vals

    def _decode(self, f):
        import eccodes

        h = _open_field(self.path, f)
        try:
            if _get(h, "bitmapPresent", 0):
                eccodes.codes_set(h, "missingValue", 9.999e20)
                vals = np.asarray(eccodes.codes_get_values(h), float)
                vals[vals >= 9.999e20] = np.nan
            else:
                vals = np.asarray(eccodes.codes_get_values(h), float)
        finally:
            eccodes.codes_release(h)
        ny, nx = self.grid.y.size, self.grid.x.size
        vals = vals.reshape((nx, ny)).T if self.grid.column_major else vals.reshape((ny, nx))
        vals.setflags(write=False)
        return vals


@dataclass(frozen=True, eq=False)
class GribVariable(RawVariable):
    """One group (parameter, level type) as a (time, [number,] [level,] y, x) variable."""

    file: GribFile
    """The opened file."""
    table: np.ndarray = field(repr=False)
    """Field index per (time, [number,] [level]); -1 where the file has no field (NaN)."""
    dims: tuple = ()
    """Dimension names: ("time", ["number",] [level dim,] y, x)."""

    def read(self, index, order):
        """Read ``index`` (slices, integers or index arrays) with axes in ``order``."""
        sel = [index.get(d, slice(None)) for d in self.dims]
        lead = [
            np.atleast_1d(np.arange(n)[k]) for n, k in zip(self.table.shape, sel, strict=False)
        ]
        ys, xs = sel[-2], sel[-1]
        ny = np.arange(self.file.grid.y.size)[ys].size
        nx = np.arange(self.file.grid.x.size)[xs].size
        picked = self.table[np.ix_(*lead)]
        out = np.full(picked.shape + (ny, nx), np.nan)
        for pos in zip(*np.nonzero(picked >= 0), strict=True):
            out[pos] = self.file.values(picked[pos])[ys][:, xs]
        drop = [a for a, k in enumerate(sel) if isinstance(k, (int, np.integer))]
        out = out.reshape([n for a, n in enumerate(out.shape) if a not in drop])
        dims = [d for a, d in enumerate(self.dims) if a not in drop]
        return np.transpose(out, [dims.index(d) for d in order])


def _choose_grid(fields, info, path, edition):
    """Pick the grid of the temperature on pressure levels (else the most common)."""
    temp = [
        f.grid
        for f in fields
        if f.group[0][:2] in _TEMPERATURE_IDS or f.group[0] in _TEMPERATURE_IDS
        if f.group[1] == "isobaric"
    ]
    grids = [f.grid for f in fields]
    grid = temp[0] if temp else max(set(grids), key=grids.count)
    others = sum(1 for g in grids if g != grid)
    notes = [f"{others} field(s) on another grid ignored"] if others else []
    return grid, notes


def _latest_runs(fields):
    """One field per (group, level, valid time, member): the latest run's; notes.

    Fields of one run repeated at one place (a layer known here by its top only, or
    a message given twice) keep the first, and the notes say how many were left.
    """
    best, repeats = {}, 0
    for i, f in enumerate(fields):
        key = (f.group, f.level, f.valid, f.number)
        if key in best and f.reference == fields[best[key]].reference:
            repeats += 1
        if key not in best or f.reference > fields[best[key]].reference:
            best[key] = i
    dropped = len(fields) - len(best) - repeats
    notes = (
        [f"{dropped} field(s) of earlier runs at the same valid time skipped"] if dropped else []
    )
    if repeats:
        notes.append(
            f"{repeats} field(s) repeating another of the same run, level and valid time "
            "skipped (the first kept)"
        )
    return sorted(best.values()), notes


def _level_dims(groups):
    """Name one level dimension per distinct (level type, level set)."""
    names, by_type = {}, {}
    for group, levels in groups.items():
        level_type = group[1]
        if len(levels) < 2:
            continue
        sets = by_type.setdefault(level_type, [])
        if levels not in sets:
            sets.append(levels)
        k = sets.index(levels)
        names[group] = level_type if k == 0 else f"{level_type}_{k + 1}"
    return names


def _horizontal(grid):
    """Dimension names and coordinates of the grid's y/x axes."""
    if grid.grid_mapping is None:
        return ("latitude", "longitude"), {
            "latitude": (
                "latitude",
                grid.y,
                {"units": "degrees_north", "standard_name": "latitude"},
            ),
            "longitude": (
                "longitude",
                grid.x,
                {"units": "degrees_east", "standard_name": "longitude"},
            ),
        }
    if grid.kind == "rotated_ll":
        return ("rlat", "rlon"), {
            "rlat": ("rlat", grid.y, {"units": "degrees", "standard_name": "grid_latitude"}),
            "rlon": ("rlon", grid.x, {"units": "degrees", "standard_name": "grid_longitude"}),
        }
    return ("y", "x"), {
        "y": ("y", grid.y, {"units": "m", "standard_name": "projection_y_coordinate"}),
        "x": ("x", grid.x, {"units": "m", "standard_name": "projection_x_coordinate"}),
    }


def _group_table(fields, keep, group, times, numbers, levels, has_level):
    """Field index per (time, [number,] [level]) of one group; -1 where missing.

    With ``numbers`` (the group is an ensemble's) a field without a member number
    has no place and is left out (the caller says so).
    """
    shape = (
        (times.size,)
        + ((len(numbers),) if numbers else ())
        + ((len(levels),) if has_level else ())
    )
    table = np.full(shape, -1)
    for i in keep:
        f = fields[i]
        if f.group == group and (not numbers or f.number in numbers):
            pos = (int(np.searchsorted(times, f.valid)),)
            pos += (numbers.index(f.number),) if numbers else ()
            pos += (levels.index(f.level),) if has_level else ()
            table[pos] = i
    return table


def _member_labels(fields, keep, numbers):
    """Return a label per member number: ``"number 0 (control)"``, ``"number 3 (perturbed)"``."""
    kind = {}
    for i in keep:
        f = fields[i]
        if f.number is not None and f.number not in kind:
            kind[f.number] = f.product
    return [
        f"number {n}" + (f" ({kind[n]})" if kind.get(n) in ("control", "perturbed") else "")
        for n in numbers
    ]


def _without_derived(fields, keep, path, edition):
    """Leave out the products derived from members (mean, spread ...); say so, or refuse."""
    derived = [i for i in keep if fields[i].product == "derived"]
    if not derived:
        return keep, []
    rest = [i for i in keep if fields[i].product != "derived"]
    if not rest:
        _refuse(
            path,
            edition,
            "holds products derived from an ensemble (mean, spread, probabilities: GRIB2 "
            "templates 4.2-4.14, ECMWF em/es/ep), not forecasts of the air",
            "give the members themselves (control and perturbed forecasts) or a "
            "deterministic forecast",
        )
    return rest, [f"{len(derived)} field(s) derived from an ensemble (mean, spread ...) skipped"]


def _raw_dataset(gfile, fields, keep, info):
    """Build the file as an xarray Dataset of lazy raw variables, and ``raw_of``.

    Dimensions: ``time`` (valid times), ``number`` (ensemble members, when the file
    has several), a level dimension per level set, and the grid's y/x.
    """
    import xarray as xr

    times = np.array(sorted({fields[i].valid for i in keep}), dtype="datetime64[ms]")
    numbers = sorted({fields[i].number for i in keep if fields[i].number is not None})
    numbers = numbers if len(numbers) > 1 else []
    groups, numbered = {}, set()
    for i in keep:
        groups.setdefault(fields[i].group, set()).add(fields[i].level)
        if numbers and fields[i].number is not None:
            numbered.add(fields[i].group)
    groups = {g: tuple(sorted(levels)) for g, levels in groups.items()}
    level_dims = _level_dims(groups)
    (ydim, xdim), coords = _horizontal(gfile.grid)
    coords["time"] = ("time", times.astype("datetime64[ns]"))
    if numbers:
        attrs = {"long_name": "ensemble member (GRIB number)", "standard_name": "realization"}
        coords["number"] = ("number", np.asarray(numbers), attrs)
        coords["number_label"] = ("number", np.asarray(_member_labels(fields, keep, numbers)))
    for group, dim in level_dims.items():
        unit, attrs = _LEVEL_TYPES.get(group[1], (None, {"axis": "Z"}))
        attrs = {**attrs, "long_name": f"GRIB level type {group[1]}"}
        attrs.update({"units": unit} if unit else {})  # hybrid, sigma ...: a level of unknown kind
        coords[dim] = (dim, np.asarray(groups[group], float), attrs)
    raws, data = {}, {}
    for group, levels in groups.items():
        dim = level_dims.get(group)
        nums = numbers if group in numbered else []
        table = _group_table(fields, keep, group, times, nums, levels, dim is not None)
        dims = ("time",) + (("number",) if nums else ()) + ((dim,) if dim else ())
        dims += (ydim, xdim)
        name = f"{info[group]['GRIB_shortName']}_{group[1]}"
        raws[name] = GribVariable(gfile, table, dims)
        attrs = dict(info[group])
        if gfile.grid.grid_mapping is not None:
            attrs["grid_mapping"] = "crs"
        shape = table.shape + (gfile.grid.y.size, gfile.grid.x.size)
        data[name] = xr.Variable(dims, lazy_raw_array(raws[name], shape), attrs=attrs)
    if gfile.grid.grid_mapping is not None:
        data["crs"] = xr.Variable((), 0, attrs=dict(gfile.grid.grid_mapping))
    return xr.Dataset(data, coords=coords), raws.__getitem__


def read_grib_forecast(path, *, var_map=None, member=None, rh_convention=None):
    """Read a GRIB1 or GRIB2 forecast into a GridSource (see the module docstring).

    Errors found after the scan (a variable missing, an implausible value) name the
    edition too.
    """
    path = Path(path)
    edition = grib_edition(path)
    with ECCODES_LOCK:
        fields, info, first_of_grid = scan(path, edition)
    grid_key, notes = _choose_grid(fields, info, path, edition)
    on_grid = [f for f in fields if f.grid == grid_key]
    keep, run_notes = _latest_runs(on_grid)
    keep, derived_notes = _without_derived(on_grid, keep, path, edition)
    run_notes += derived_notes
    with ECCODES_LOCK:
        grid = _grid_of(path, fields[first_of_grid[grid_key]], edition)
    gfile = GribFile(path, on_grid, grid)
    ds, raw_of = _raw_dataset(gfile, on_grid, keep, info)
    notes = [f"GRIB{edition} read with ecCodes; grid {grid.description}"] + notes + run_notes
    if member is not None and "number" not in ds.dims:
        _refuse(
            path,
            edition,
            f"--member {member} given but the file holds one member",
            "drop --member",
        )
    try:
        return build_grid_source(
            ds,
            path,
            raw_of,
            var_map=var_map,
            fmt=f"GRIB{edition}",
            notes=notes,
            rh_convention=rh_convention,
            member=member,
        )
    except ForecastError as err:
        raise ForecastError(
            f"GRIB{edition}: {err.message}", path=err.path, where=err.where, fix=err.fix
        ) from None


def _open_field(path, f):
    """Return an ecCodes handle of field ``f`` (the ``f.sub``-th field of its message)."""
    import eccodes

    eccodes.codes_grib_multi_support_on()
    with open(path, "rb") as fh:
        eccodes.codes_grib_multi_support_reset_file(fh)  # multi-field state of this read
        fh.seek(f.offset)
        for _ in range(f.sub):
            eccodes.codes_release(eccodes.codes_grib_new_from_file(fh))
        return eccodes.codes_grib_new_from_file(fh)


def _grid_of(path, f, edition):
    """Open the message of field ``f`` and read its grid definition."""
    import eccodes

    h = _open_field(path, f)
    try:
        return grib_grid(h, path=path)
    finally:
        eccodes.codes_release(h)
