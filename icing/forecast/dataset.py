"""The one internal forecast structure every reader yields.

Gridded readers (CF-NetCDF, service NetCDF, GRIB, WRF) yield a :class:`GridSource`;
its ``dataset`` is an xarray Dataset in SI with dimensions (time, level, y, x),
the CF ``grid_mapping`` variable ``crs`` (projected grids), and per-variable
provenance attributes (``source_name``, ``found_by``, ``source_units``,
``converted``, ``humidity_convention`` ...). The variables are lazy: each is
backed by the same :class:`icing.forecast.fields.Field` that
:class:`icing.forecast.grid.GridForecast` reads block by block (``fields``), so
nothing is loaded until a block is asked for.

Profile readers (JSON, CSV, soundings) yield a
:class:`icing.forecast.table.ProfileTable`; :func:`profile_dataset` gives it
the same conventions with a ``profile`` dimension in place of (y, x).

Variable names are the internal keys (:data:`icing.forecast.discovery.VAR_KEYS`),
units SI (K, Pa, m, kg/kg, m/s; ``precipitation_rate`` in mm/h as its name in
the columns says), relative humidity a fraction over plane water.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

__all__ = [
    "GridSource",
    "grid_dataset",
    "profile_dataset",
    "split_members",
    "DIMS",
    "CF_NAMES",
]

#: the dimensions of the internal gridded structure, in order
DIMS = ("time", "level", "y", "x")

_LEVEL_ATTRS = {
    "pressure": {"units": "Pa", "standard_name": "air_pressure", "positive": "down"},
    "height": {"units": "m", "standard_name": "altitude", "positive": "up"},
    "model": {"units": "1", "standard_name": "model_level_number", "positive": "up"},
}


@dataclass(frozen=True, eq=False)
class GridSource:
    """One gridded forecast file as the internal structure: lazy SI fields and what they are."""

    path: Path
    """The file."""
    format: str
    """What the file is ("CF-NetCDF", "GRIB2", "WRF", ...)."""
    fields: dict
    """``{key: Field}``: the variables found, each a lazy SI reader on the common levels."""
    provenance: dict
    """``{key: dict}``: source name, how found, units, conversions, conventions."""
    times: np.ndarray
    """Valid times (datetime64[ms], UTC) along the fields' time axis."""
    issue_time: np.datetime64 | None
    """Forecast reference time, when the file says it."""
    y: np.ndarray
    """y coordinate: latitude [deg] or projection y [m]."""
    x: np.ndarray
    """x coordinate: longitude [deg] or projection x [m]."""
    crs: object | None
    """pyproj CRS of projected grids; None for latitude-longitude grids."""
    grid: str
    """A description of the grid ("latitude-longitude", "projected (...)")."""
    grid_mapping: dict | None
    """CF grid_mapping attributes of projected grids."""
    levels: np.ndarray
    """The common level axis (file order): pressure [Pa], height [m] or model level number."""
    vertical: str
    """"pressure" | "height" | "model" (terrain-following: pressure and height are fields)."""
    height_above_ground: bool
    """Height levels are above the surface (CF standard_name ``height``)."""
    notes: tuple
    """What the reader did that a user should know (said in the provenance)."""
    tile_hint: int | None = None
    """The file's chunk size along y/x, a good tile size for reads."""
    member: int | None = None
    """The ensemble member the fields read (its value on the member dimension), or None."""
    member_dim: str | None = None
    """The file's member dimension when it holds several members and none was chosen:
    the fields read the first; :func:`split_members` gives one source per member."""
    members: tuple = ()
    """The member values along ``member_dim`` (GRIB ``number``, CF ``realization`` ...)."""
    member_labels: tuple = ()
    """A name of each member for the outputs (e.g. ``"number 0 (control)"``)."""

    @property
    def dataset(self):
        """The internal structure as an xarray Dataset (lazy; see the module docstring)."""
        return grid_dataset(self)


def split_members(src: GridSource) -> list[GridSource]:
    """One source per ensemble member of a file with a member dimension (else ``[src]``).

    The members share the file, its discovery and its conversions; each reads its
    own index of the member dimension (:func:`icing.forecast.fields.at_member`).
    """
    from icing.forecast.fields import at_member

    if src.member_dim is None or len(src.members) < 2:
        return [src]
    out = []
    for i, value in enumerate(src.members):
        label = src.member_labels[i] if i < len(src.member_labels) else f"{src.member_dim} {value}"
        out.append(
            replace(
                src,
                fields={k: at_member(f, src.member_dim, i) for k, f in src.fields.items()},
                member=value,
                member_dim=None,
                members=(value,),
                member_labels=(label,),
            )
        )
    return out


def _field_array(fld, shape, member_dim=None):
    """Wrap a :class:`Field` as a lazy xarray array (outer indexing, read on demand).

    With ``member_dim`` the array has a leading member axis: each member index
    reads the field at that index of the file's member dimension.
    """
    from xarray.backends import BackendArray
    from xarray.core import indexing

    from icing.forecast.fields import at_member

    class FieldArray(BackendArray):
        def __init__(self):
            self.shape = shape
            self.dtype = np.dtype(float)

        def __getitem__(self, key):
            return indexing.explicit_indexing_adapter(
                key, self.shape, indexing.IndexingSupport.OUTER, self._read
            )

        def _read(self, key):
            """Read the smallest block covering ``key`` (member by member) and index it."""
            if member_dim is None:
                return self._read_one(fld, key)
            picked = np.arange(shape[0])[key[0]]
            blocks = [
                self._read_one(at_member(fld, member_dim, int(i)), key[1:])
                for i in np.atleast_1d(picked)
            ]
            return blocks[0] if np.ndim(picked) == 0 else np.stack(blocks)

        def _read_one(self, fld, key):
            """Read one member's block covering ``key`` and index it."""
            names = (["t"] if fld.timed else []) + (["l"] if fld.levelled else []) + ["y", "x"]
            reads, post = {}, []
            for name, k in zip(names, key, strict=True):
                if name == "l":  # whole columns are read: index the levels afterwards
                    post.append(k)
                    continue
                window, rest = _window(k)
                reads[name] = window
                post.append(rest)
            block = fld.read(reads.get("t", slice(None)), reads["y"], reads["x"])
            for axis in reversed(range(len(post))):  # outer indexing: one axis at a time
                k = post[axis]
                block = (
                    block[(slice(None),) * axis + (k,)]
                    if not _is_array(k)
                    else np.take(block, k, axis=axis)
                )
            return block

    return indexing.LazilyIndexedArray(FieldArray())


def _is_array(k):
    return isinstance(k, np.ndarray) and k.ndim == 1


def _window(k):
    """Split an outer index into a contiguous read window and the index within it."""
    if isinstance(k, slice):
        return slice(k.start, k.stop), slice(None, None, k.step)
    k = np.asarray(k)
    if k.ndim == 0:
        return slice(int(k), int(k) + 1), 0
    lo = int(k.min()) if k.size else 0
    return slice(lo, int(k.max()) + 1 if k.size else 0), k - lo


def grid_dataset(src: GridSource):
    """Build the lazy xarray Dataset of a :class:`GridSource` (no data is read)."""
    import xarray as xr

    geographic = src.crs is None
    coords = {
        "time": ("time", src.times.astype("datetime64[ns]")),
        "level": (
            "level",
            np.asarray(src.levels, float),
            {**_LEVEL_ATTRS[src.vertical], "vertical": src.vertical},
        ),
        "y": ("y", src.y, _axis_attrs("y", geographic)),
        "x": ("x", src.x, _axis_attrs("x", geographic)),
    }
    if src.issue_time is not None:
        coords["forecast_reference_time"] = ((), np.datetime64(src.issue_time, "ns"))
    several = src.member_dim is not None and len(src.members) > 1
    member_attrs = {"standard_name": "realization", "long_name": "ensemble member"}
    if several:  # a member axis: each member reads its own index of the file's dimension
        coords["member"] = ("member", np.asarray(src.members), member_attrs)
        coords["member_label"] = ("member", np.asarray(src.member_labels, dtype=object))
    elif src.member is not None:  # one member of an ensemble file
        coords["member"] = ((), src.member, {**member_attrs, "long_name": "ensemble member read"})
    sizes = {"time": src.times.size, "level": src.levels.size, "y": src.y.size, "x": src.x.size}
    sizes["member"] = len(src.members)
    data = {}
    for key, fld in src.fields.items():
        dims = ("time",) * fld.timed + ("level",) * fld.levelled + ("y", "x")
        member_dim = src.member_dim if several and _has_member(fld, src.member_dim) else None
        dims = ("member",) * (member_dim is not None) + dims
        shape = tuple(sizes[d] for d in dims)
        attrs = _variable_attrs(key, src.provenance.get(key, {}))
        if not geographic:
            attrs["grid_mapping"] = "crs"
        data[key] = xr.Variable(dims, _field_array(fld, shape, member_dim), attrs=attrs)
    if not geographic:
        data["crs"] = xr.Variable((), 0, attrs=dict(src.grid_mapping or {}))
    attrs = {
        "source_file": str(src.path),
        "source_format": src.format,
        "vertical": src.vertical,
        "notes": "; ".join(src.notes),
    }
    return xr.Dataset(data, coords=coords, attrs=attrs)


def _has_member(fld, dim) -> bool:
    """Whether any file variable behind a field has the member dimension."""
    from icing.forecast.fields import DerivedField, FileField, LevelRegridField

    if isinstance(fld, FileField):
        return dim in fld.raw.dims
    if isinstance(fld, LevelRegridField):
        return _has_member(fld.source, dim)
    if isinstance(fld, DerivedField):
        return any(_has_member(f, dim) for f in fld.inputs)
    return False


#: CF standard names of the internal variables
CF_NAMES = {
    "temperature": "air_temperature",
    "relative_humidity": "relative_humidity",
    "dewpoint": "dew_point_temperature",
    "specific_humidity": "specific_humidity",
    "height": "geopotential_height",
    "pressure": "air_pressure",
    "cloud_liquid": "mass_fraction_of_cloud_liquid_water_in_air",
    "cloud_ice": "mass_fraction_of_cloud_ice_in_air",
    "rain": "mass_fraction_of_rain_in_air",
    "snow": "mass_fraction_of_snow_in_air",
    "cloud_fraction": "cloud_area_fraction_in_atmosphere_layer",
    "vertical_velocity": "upward_air_velocity",
    "wind_u": "eastward_wind",
    "wind_v": "northward_wind",
    "precipitation_rate": "lwe_precipitation_rate",
    "surface_pressure": "surface_air_pressure",
    "surface_height": "surface_altitude",
}
_SI_UNITS = {"m/s": "m s-1", "mm/h": "mm h-1"}


def _variable_attrs(key, prov):
    """CF attributes of an internal variable: standard name, SI units, provenance."""
    from icing.forecast.units import TARGET_UNITS

    units = TARGET_UNITS.get(key, "1")
    attrs = {"standard_name": CF_NAMES.get(key, key), "units": _SI_UNITS.get(units, units)}
    if key == "vertical_velocity" and str(prov.get("converted", "")).startswith("omega"):
        # omega is kept as read and turned into w on the assembled column
        attrs.update(standard_name="lagrangian_tendency_of_air_pressure", units="Pa s-1")
    rename = {"name": "source_name", "units": "source_units"}
    for k, v in prov.items():
        attrs[rename.get(k, k)] = v if isinstance(v, (int, float, str)) else str(v)
    return attrs


def _axis_attrs(axis, geographic):
    if geographic:
        return {
            "y": {"standard_name": "latitude", "units": "degrees_north"},
            "x": {"standard_name": "longitude", "units": "degrees_east"},
        }[axis]
    return {"standard_name": f"projection_{axis}_coordinate", "units": "m", "axis": axis.upper()}


def profile_dataset(table):
    """Build the internal structure of a :class:`~icing.forecast.table.ProfileTable`.

    Dimensions (profile, level): the level arrays in SI, surface first, NaN
    padded; per-profile ``latitude``, ``longitude``, ``time`` and ``profile_id``
    coordinates and the per-profile scalars; provenance in the attributes.
    """
    import xarray as xr

    data = {
        key: xr.Variable(("profile", "level"), np.asarray(val, float), {"source_name": src})
        for key, val in table.levels.items()
        for src in [table.sources.get(key, key)]
    }
    for key, val in table.scalars.items():
        data[key] = xr.Variable(("profile",), np.asarray(val, float))
    coords = {
        "profile_id": ("profile", np.asarray(table.ids, dtype=object)),
        "latitude": ("profile", np.asarray(table.lat, float)),
        "longitude": ("profile", np.asarray(table.lon, float)),
        "time": ("profile", np.asarray(table.time).astype("datetime64[ns]")),
    }
    attrs = {
        "source_file": "; ".join(str(f) for f in table.files),
        "humidity": table.humidity,
        "notes": "; ".join(table.notes),
    }
    return xr.Dataset(data, coords=coords, attrs=attrs)
