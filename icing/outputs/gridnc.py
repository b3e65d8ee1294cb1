"""The grid products as CF-1.8 NetCDF (``icing grid --netcdf``).

Dimensions (time, altitude, y, x) on the forecast's own grid: its coordinates and,
for projected grids, its CF ``grid_mapping`` (variable ``crs``) with the cell
centres' latitude and longitude as auxiliary coordinates. ``altitude`` is the middle
of each band [m MSL] with the band's edges as its ``bounds``.

How a coverage gap reads: ``severity`` and ``sld`` are int8 flags whose
``_FillValue`` is -1, so -1 (a coverage gap: no usable forecast data, or a band
wholly below the ground) is read as missing, never as a class: xarray decodes it to
NaN (``mask_and_scale=False`` shows the -1), netCDF4 masks it, GDAL reports it as the
band's nodata value. ``coverage`` says which kind of gap (or a partial band). The
float fields are NaN where not covered. Written slice by slice from the run's arrays,
so the memory stays one (y, x) slice.

An ensemble (or a parametric spread) adds ``severity_worst_member`` (int8 flags as
``severity``), ``members`` (int16: members with data in the band; 0 is a coverage
gap) and ``member_fraction_trace|light|moderate|severe`` (float32, units "1": the
fraction of the members with data at that word or worse; NaN where no member has
data); ``severity`` is then the stated statistic's word (its ``member_statistic``
attribute), and the global attributes give ``ensemble_members``, ``member_labels``
and ``member_statistic``.
"""

from __future__ import annotations

import json
import os
from collections import deque
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from icing._version import __version__
from icing.caution import CAUTION

__all__ = ["write_grid_netcdf", "FLAGS"]

#: int8 flag variables: (values, meanings, long name).
FLAGS = {
    "severity": (
        (0, 1, 2, 3, 4),
        "none trace light moderate severe",
        "worst icing severity in the altitude band for the airframe",
    ),
    "sld": (
        (0, 1, 2),
        "none freezing_drizzle freezing_rain",
        "worst supercooled-large-drop class in the altitude band",
    ),
    "coverage": (
        (0, 1, 2, 3),
        "complete partial gap below_ground",
        "how much of the band above the ground was diagnosed",
    ),
}

#: float32 fields: (units, long name, CF standard name or None).
FIELDS = {
    "lwc": (
        "kg m-3",
        "cloud liquid water content at the band's worst altitude",
        "mass_concentration_of_cloud_liquid_water_in_air",
    ),
    "mvd": ("m", "median volume diameter of the cloud drops at the band's worst altitude", None),
    "accretion_rate": (
        "m s-1",
        "ice accretion rate on the airframe's worst collector at the band's worst altitude",
        None,
    ),
}

_COMMENTS = {
    "severity": "-1 (_FillValue) is a coverage gap: no usable forecast data, or the band "
    "wholly below the ground (see coverage); never 'none'",
    "sld": "-1 (_FillValue) is a coverage gap, as for severity",
    "coverage": "partial: part of the band above the ground could not be diagnosed, the "
    "severity is that of the rest (at least); gap: no part could, or the rest shows no "
    "icing; below_ground: the whole band is under the surface",
}


def _coordinates(nc, result):
    """Dimensions, time, altitude (with bounds) and the grid's coordinates and mapping."""
    nt, nb, ny, nx = result.severity.shape
    for name, size in (("time", nt), ("altitude", nb), ("y", ny), ("x", nx), ("nv", 2)):
        nc.createDimension(name, size)
    t = nc.createVariable("time", "f8", ("time",))
    t.setncatts({"standard_name": "time", "units": "seconds since 1970-01-01 00:00:00"})
    t.calendar = "proleptic_gregorian"
    t[:] = np.asarray(result.times).astype("datetime64[s]").astype(np.int64).astype(float)
    edges = result.bands.edges_m
    a = nc.createVariable("altitude", "f8", ("altitude",))
    a.setncatts(
        {
            "standard_name": "altitude",
            "long_name": "middle of the altitude band above mean sea level",
            "units": "m",
            "positive": "up",
            "axis": "Z",
            "bounds": "altitude_bnds",
            "band_edges_ft": np.asarray(result.bands.edges_ft, float),
        }
    )
    a[:] = 0.5 * (edges[:-1] + edges[1:])
    nc.createVariable("altitude_bnds", "f8", ("altitude", "nv"))[:] = np.column_stack(
        [edges[:-1], edges[1:]]
    )
    _horizontal(nc, result)


def _horizontal(nc, result):
    """Write the grid's x/y and, for projected grids, its mapping and the cells' lat/lon."""
    x = nc.createVariable("x", "f8", ("x",))
    y = nc.createVariable("y", "f8", ("y",))
    crs = nc.createVariable("crs", "i4", ())
    if result.crs is None:
        x.setncatts({"standard_name": "longitude", "units": "degrees_east", "axis": "X"})
        y.setncatts({"standard_name": "latitude", "units": "degrees_north", "axis": "Y"})
        crs.setncatts(
            {
                "grid_mapping_name": "latitude_longitude",
                "semi_major_axis": 6378137.0,
                "inverse_flattening": 298.257223563,
            }
        )
        x[:], y[:] = result.x, result.y
        return
    for v, axis in ((x, "x"), (y, "y")):
        v.setncatts(
            {"standard_name": f"projection_{axis}_coordinate", "units": "m", "axis": axis.upper()}
        )
    x[:], y[:] = result.x, result.y
    attrs = {k: v for k, v in (result.grid_mapping or {}).items() if v is not None}
    crs.setncatts(
        {k: (np.asarray(v) if isinstance(v, (list, tuple)) else v) for k, v in attrs.items()}
    )
    crs.crs_wkt = result.crs.to_wkt()
    from icing.forecast.blocks import cell_lonlat

    lon, lat = result.lonlat if result.lonlat is not None else cell_lonlat(result)
    for name, values, std, units in (
        ("lat", lat, "latitude", "degrees_north"),
        ("lon", lon, "longitude", "degrees_east"),
    ):
        v = nc.createVariable(name, "f8", ("y", "x"))
        v.setncatts({"standard_name": std, "units": units})
        v[:] = values


def _variables(nc, result):
    """Create the product variables (int8 flags, float32 fields), empty."""
    dims = ("time", "altitude", "y", "x")
    ny, nx = result.severity.shape[2:]
    common = {"grid_mapping": "crs"}
    if result.crs is not None:
        common["coordinates"] = "lat lon"
    chunks = (1, 1, ny, nx)
    out = {}
    for name, (values, meanings, long_name) in FLAGS.items():
        fill = -1 if name != "coverage" else False
        v = nc.createVariable(
            name, "i1", dims, zlib=True, complevel=1, chunksizes=chunks, fill_value=fill
        )
        v.setncatts(
            {
                "long_name": long_name,
                "flag_values": np.asarray(values, np.int8),
                "flag_meanings": meanings,
                "valid_range": np.asarray([0, values[-1]], np.int8),
                "comment": _COMMENTS[name],
                "cell_methods": "altitude: maximum",
                **common,
            }
        )
        out[name] = v
    for name, (units, long_name, standard) in FIELDS.items():
        v = nc.createVariable(
            name, "f4", dims, zlib=True, complevel=1, chunksizes=chunks, fill_value=np.nan
        )
        attrs = {"units": units, "long_name": long_name, **common}
        if standard:
            attrs["standard_name"] = standard
        v.setncatts(attrs)
        out[name] = v
    return out


def _member_variables(nc, result):
    """Create an ensemble's variables and state the statistic on ``severity`` (empty)."""
    from icing.hazards.ensemble import FRACTION_MEANING, MemberStatistic

    dims = ("time", "altitude", "y", "x")
    ny, nx = result.severity.shape[2:]
    common = {"grid_mapping": "crs"}
    if result.crs is not None:
        common["coordinates"] = "lat lon"
    opts = {"zlib": True, "complevel": 1, "chunksizes": (1, 1, ny, nx)}
    stat = MemberStatistic.parse(result.member_statistic)
    sev = nc.variables["severity"]
    sev.long_name = f"icing severity in the altitude band for the airframe: {stat.name} of the "
    sev.long_name += f"{result.members} members"
    sev.member_statistic = stat.name
    sev.member_statistic_meaning = stat.describe()
    method = {"median": " realization: median", "worst": " realization: maximum"}
    sev.cell_methods = "altitude: maximum" + method.get(stat.name, "")
    out = {}
    worst = nc.createVariable("severity_worst_member", "i1", dims, fill_value=-1, **opts)
    values, meanings, _ = FLAGS["severity"]
    worst.setncatts(
        {
            "long_name": "worst icing severity of any member in the altitude band",
            "flag_values": np.asarray(values, np.int8),
            "flag_meanings": meanings,
            "valid_range": np.asarray([0, values[-1]], np.int8),
            "cell_methods": "altitude: maximum realization: maximum",
            "comment": "-1 (_FillValue): no member has data here (a coverage gap)",
            **common,
        }
    )
    out["severity_worst_member"] = worst
    count = nc.createVariable("members", "i2", dims, fill_value=False, **opts)
    count.setncatts(
        {
            "long_name": "number of members with data in the altitude band",
            "units": "1",
            "valid_range": np.asarray([0, result.members], np.int16),
            "members_in_ensemble": np.int16(result.members),
            "comment": "0 is a coverage gap in every member (never 'none'); fewer than "
            "members_in_ensemble: the fractions and the statistic are those of the members "
            "with data",
            **common,
        }
    )
    out["members_covering"] = count
    for word in result.member_fraction:
        v = nc.createVariable(f"member_fraction_{word}", "f4", dims, fill_value=np.nan, **opts)
        worse = "" if word == "severe" else " or worse"
        v.setncatts(
            {
                "long_name": f"fraction of members at {word}{worse} icing in the altitude band",
                "units": "1",
                "valid_range": np.asarray([0.0, 1.0], np.float32),
                "comment": FRACTION_MEANING + "; NaN where no member has data",
                **common,
            }
        )
        out[f"member_fraction:{word}"] = v
    return out


def _member_array(result, name):
    """Return the result's array behind a variable (``member_fraction:<word>``: a fraction)."""
    if name.startswith("member_fraction:"):
        return result.member_fraction[name.split(":", 1)[1]]
    return getattr(result, name)


def write_grid_netcdf(result, path):
    """Write a :class:`icing.hazards.gridded.GridResult` as CF-1.8 NetCDF at ``path``."""
    import netCDF4

    from icing.forecast.netcdf import NETCDF_LOCK

    with NETCDF_LOCK, netCDF4.Dataset(path, "w", format="NETCDF4") as nc:
        nc.set_auto_mask(False)
        nc.setncatts(
            {
                "Conventions": "CF-1.8",
                "title": f"In-flight icing hazard for {result.airframe}, by altitude band",
                "source": f"icing {__version__}",
                "airframe": result.airframe,
                "caution": CAUTION,
                "provenance": json.dumps(result.provenance, default=str),
                "assumptions": json.dumps(result.assumptions, default=str),
            }
        )
        _coordinates(nc, result)
        variables = _variables(nc, result)
        if result.members > 1:
            nc.setncatts(
                {
                    "ensemble_members": np.int16(result.members),
                    "member_labels": json.dumps(list(result.member_labels)),
                    "member_statistic": result.member_statistic,
                }
            )
            variables.update(_member_variables(nc, result))
        arrays = {v.name: _member_array(result, name) for name, v in variables.items()}
    _write_slices(path, arrays)
    return path


def _write_slices(path, arrays):
    """Write the products ``{variable: array (time, altitude, y, x)}``, one chunk a slice.

    Every product variable is chunked one (y, x) slice a chunk through netCDF's ``zlib``:
    HDF5's shuffle and deflate filters. The chunks are encoded here as those filters
    encode them (the bytes of each value spread into planes, then zlib at the
    variable's level) in a pool of threads, zlib working outside the interpreter lock,
    and stored as they are with h5py's direct chunk write: the same data as netCDF's own
    write, on every core instead of one (on the benchmark grid, ten bands: 1.2 s of
    writing on one core, about 1.0 s of it zlib). Where h5py is missing, or a variable has
    another filter pipeline, its slices go through netCDF.
    """
    encoders = _chunk_encoders(path, arrays)
    slow = [name for name in arrays if name not in encoders]
    if slow:
        import netCDF4

        from icing.forecast.netcdf import NETCDF_LOCK

        with NETCDF_LOCK, netCDF4.Dataset(path, "a") as nc:
            nc.set_auto_mask(False)
            for name in slow:
                a = arrays[name]
                for t, b in np.ndindex(*a.shape[:2]):
                    nc.variables[name][t, b] = np.asarray(a[t, b])
    if not encoders:
        return
    import h5py

    jobs = [(name, t, b) for name in encoders for t, b in np.ndindex(*arrays[name].shape[:2])]

    def encode(job):
        name, t, b = job
        return encoders[name](np.asarray(arrays[name][t, b]))

    threads = max(1, min(4, os.cpu_count() or 1))
    with h5py.File(path, "r+") as f, ThreadPoolExecutor(threads) as pool:
        window = deque()
        for job in jobs:  # a bounded window in flight: memory of a few slices
            window.append((job, pool.submit(encode, job)))
            if len(window) > 2 * threads:
                _store_chunk(f, *window.popleft())
        while window:
            _store_chunk(f, *window.popleft())


def _store_chunk(f, job, future):
    name, t, b = job
    f[name].id.write_direct_chunk((t, b, 0, 0), future.result(), 0)


def _chunk_encoders(path, arrays):
    """``{variable: encode(slice) -> bytes}`` for the variables h5py can take chunks of."""
    try:
        import h5py
    except ImportError:
        return {}
    out = {}
    with h5py.File(path, "r") as f:
        for name, a in arrays.items():
            d = f[name]
            if d.chunks != (1, 1) + tuple(a.shape[2:]) or d.dtype != a.dtype:
                continue
            plist = d.id.get_create_plist()
            pipeline = [plist.get_filter(i)[:3] for i in range(plist.get_nfilters())]
            encode = _encoder(pipeline, np.dtype(d.dtype))
            if encode is not None:
                out[name] = encode
    return out


def _encoder(pipeline, dtype):
    """Return the encoding of HDF5's shuffle (filter 2) then deflate (filter 1), or None.

    Shuffle stores the first bytes of all the values, then their second bytes, and so
    on; deflate is zlib's format at the level of its one parameter. Other pipelines
    give None.
    """
    import zlib

    codes = [code for code, _, _ in pipeline]
    if codes not in ([2, 1], [1]):
        return None
    shuffle = codes[0] == 2
    if shuffle and pipeline[0][2] and pipeline[0][2][0] != dtype.itemsize:
        return None
    deflate = pipeline[-1][2]
    if len(deflate) != 1:
        return None
    level = int(deflate[0])

    def encode(values):
        data = np.ascontiguousarray(values, dtype=dtype).view(np.uint8)
        if shuffle and dtype.itemsize > 1:
            data = np.ascontiguousarray(data.reshape(-1, dtype.itemsize).T)
        return zlib.compress(data, level)

    return encode
