"""WRF model output (``wrfout``) read natively, on the model's own levels.

The WRF ARW output holds prognostic variables, not the quantities a screening
needs; each is derived lazily, block by block, at the reader's edge:

=====================  =====================================================
quantity               from
=====================  =====================================================
air temperature        ``(T + 300 K) ((P + PB) / 100000 Pa)^(Rd/cp)``: T is the
                       perturbation potential temperature, Rd/cp = 2/7 (WRF's
                       constants R_d = 287, c_p = 7 R_d / 2)
air pressure           ``P + PB`` (perturbation + base state) [Pa]
height of the levels   ``(PH + PHB) / g`` (g = 9.81, WRF's), destaggered from
                       the w levels to the mass levels (mean of the two around)
humidity, hydrometeors QVAPOR, QCLOUD, QICE, QRAIN, QSNOW are mixing ratios (per kg
                       of dry air): mass fractions ``q_x = r_x / (1 + sum r)``
                       over the water species in the file
vertical velocity      ``W`` destaggered to the mass levels [m/s]
wind                   ``U``, ``V`` destaggered to the mass points; grid-relative,
                       rotated to earth-relative on the projection
surface                ``PSFC`` [Pa], ``HGT`` [m]
valid times            the character array ``Times``
=====================  =====================================================

The screening is diagnosed on the model levels directly (terrain-following: no
level is below the ground), never interpolated to pressure levels first. The
projection comes from the global attributes (``MAP_PROJ`` 1 Lambert conformal,
2 polar stereographic, 3 Mercator, 6 latitude-longitude; ``TRUELAT1/2``,
``STAND_LON``, ``MOAD_CEN_LAT``) on WRF's sphere of radius 6 370 km; the x/y axes
come from projecting ``XLAT``/``XLONG`` and are checked against ``DX``/``DY``
(a cropped domain keeps its own axes).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.errors import ForecastError
from icing.forecast.build import build_grid_source
from icing.forecast.conversions import base_geographic
from icing.forecast.fields import RawVariable, lazy_raw_array

__all__ = ["is_wrf", "read_wrf_forecast", "WrfVariable"]

_G_WRF = 9.81  # WRF's gravity [m/s2]
_RD_CP = 2.0 / 7.0  # WRF's R_d / c_p
_EARTH_WRF = 6370000.0  # WRF's sphere [m]
_WATER = ("QVAPOR", "QCLOUD", "QICE", "QRAIN", "QSNOW", "QGRAUP")
_STAG = {
    "west_east_stag": "west_east",
    "south_north_stag": "south_north",
    "bottom_top_stag": "bottom_top",
}


def is_wrf(ds) -> bool:
    """Tell whether an opened NetCDF file is WRF ARW output."""
    title = str(ds.attrs.get("TITLE", ""))
    needed = {"T", "P", "PB", "PH", "PHB"}
    return ("WRF" in title or "MAP_PROJ" in ds.attrs) and needed <= set(ds.variables)


@dataclass(frozen=True, eq=False)
class WrfVariable(RawVariable):
    """A quantity derived from WRF variables, on the mass grid."""

    func: object
    """``func(*blocks)`` -> the quantity, from the source blocks on the mass grid."""
    sources: tuple
    """The WRF variables read (raw readers of the file), on this variable's dims."""
    dims: tuple = ()
    """Dimension names on the mass grid (Time, bottom_top, south_north, west_east)."""

    def read(self, index, order):
        """Read every source on the window (staggered ones one wider), destagger, combine."""
        window = {}
        for d in self.dims:
            k = index.get(d, slice(None))
            window[d] = slice(int(k), int(k) + 1) if isinstance(k, (int, np.integer)) else k
        vals = self.func(*[_on_mass_grid(src, window, self.dims) for src in self.sources])
        drop = tuple(
            a for a, d in enumerate(self.dims) if isinstance(index.get(d), (int, np.integer))
        )
        vals = vals.reshape([n for a, n in enumerate(vals.shape) if a not in drop])
        kept = [d for a, d in enumerate(self.dims) if a not in drop]
        return np.transpose(vals, [kept.index(d) for d in order])


def _on_mass_grid(src, window, mass_dims):
    """Read a WRF variable on a window of the mass grid, staggered axes averaged to it."""
    idx, after = {}, {}
    for d in src.dims:
        k = window[_STAG.get(d, d)]
        if d in _STAG:  # one point wider, contiguous; the step is taken after averaging
            stop = None if k.stop is None else k.stop + 1
            idx[d], after[d] = slice(k.start, stop), slice(None, None, k.step)
        else:
            idx[d] = k
    vals = src.read(idx, list(src.dims))
    for d, step in after.items():
        a = np.moveaxis(vals, src.dims.index(d), 0)
        a = 0.5 * (a[:-1] + a[1:])
        vals = np.moveaxis(a[step], 0, src.dims.index(d))
    mass = [_STAG.get(d, d) for d in src.dims]
    vals = np.transpose(vals, [mass.index(d) for d in mass_dims if d in mass])
    shape = [
        vals.shape[[m for m in mass_dims if m in mass].index(d)] if d in mass else 1
        for d in mass_dims
    ]
    return vals.reshape(shape)


def _times(ds, path):
    """Return the valid times of the character array ``Times`` (``2005-09-21_00:00:00``)."""
    if "Times" not in ds.variables:
        raise ForecastError(
            "WRF output without Times", path=path, fix="give the wrfout file whole"
        )
    raw = np.asarray(ds["Times"].values)
    if raw.dtype.kind == "S" and raw.ndim == 2:
        raw = np.array([b"".join(row) for row in raw])
    text = [(v.decode() if isinstance(v, bytes) else str(v)).strip() for v in np.atleast_1d(raw)]
    try:
        return np.array([np.datetime64(t.replace("_", "T"), "ms") for t in text])
    except ValueError:
        raise ForecastError(
            f"Times {text[0]!r} is not a WRF time (YYYY-MM-DD_hh:mm:ss)",
            path=path,
            where="variable Times",
            fix="give the wrfout file as WRF wrote it",
        ) from None


def _projection(ds, path):
    """CF grid_mapping attributes from the WRF global attributes (None: latitude-longitude)."""
    a = ds.attrs
    proj = int(a.get("MAP_PROJ", -1))
    earth = {"earth_radius": _EARTH_WRF}
    if proj == 1:
        return {
            "grid_mapping_name": "lambert_conformal_conic",
            "standard_parallel": [float(a["TRUELAT1"]), float(a["TRUELAT2"])],
            "longitude_of_central_meridian": float(a["STAND_LON"]),
            "latitude_of_projection_origin": float(a.get("MOAD_CEN_LAT", a["TRUELAT1"])),
            **earth,
        }
    if proj == 2:
        north = float(a["TRUELAT1"]) >= 0
        return {
            "grid_mapping_name": "polar_stereographic",
            "straight_vertical_longitude_from_pole": float(a["STAND_LON"]),
            "latitude_of_projection_origin": 90.0 if north else -90.0,
            "standard_parallel": float(a["TRUELAT1"]),
            **earth,
        }
    if proj == 3:
        return {
            "grid_mapping_name": "mercator",
            "longitude_of_projection_origin": float(a["STAND_LON"]),
            "standard_parallel": float(a["TRUELAT1"]),
            **earth,
        }
    if proj == 6 and float(a.get("POLE_LAT", 90.0)) == 90.0:
        return None
    raise ForecastError(
        f"WRF map projection MAP_PROJ={proj} is not read",
        path=path,
        where="global attribute MAP_PROJ",
        fix="use Lambert (1), polar stereographic (2), Mercator (3) or an unrotated "
        "latitude-longitude (6) domain",
    )


def _axes(ds, attrs, path):
    """1-D y/x axes of the mass grid: projected XLAT/XLONG, checked against DX/DY."""
    lat = np.asarray(ds["XLAT"].values, float)
    lon = np.asarray(ds["XLONG"].values, float)
    lat, lon = (a[0] if a.ndim == 3 else a for a in (lat, lon))
    if attrs is None:
        return lat[:, 0], lon[0, :], None
    from pyproj import CRS, Transformer

    crs = CRS.from_cf(attrs)
    x, y = Transformer.from_crs(base_geographic(crs), crs, always_xy=True).transform(lon, lat)
    x1, y1 = np.mean(x, axis=0), np.mean(y, axis=1)
    dx, dy = float(ds.attrs.get("DX", np.nan)), float(ds.attrs.get("DY", np.nan))
    spread = max(np.max(np.abs(x - x1)), np.max(np.abs(y - y1[:, None])))
    steps_ok = np.allclose(np.diff(x1), dx, rtol=0.01) and np.allclose(np.diff(y1), dy, rtol=0.01)
    if not steps_ok or spread > 0.01 * dx:
        raise ForecastError(
            f"XLAT/XLONG do not lie on the projection's grid (spacing {np.diff(x1).mean():.0f} m "
            f"vs DX {dx:.0f} m, scatter {spread:.0f} m)",
            path=path,
            where="global attributes MAP_PROJ, TRUELAT1/2, STAND_LON",
            fix="give the wrfout file as WRF wrote it",
        )
    return y1, x1, crs


def _mixing_total(blocks):
    total = np.ones_like(blocks[0])
    for b in blocks:
        total = total + np.maximum(b, 0.0)
    return total


def _quantities(ds):
    """List the derived quantities: name -> (source variables, function, units)."""
    water = [w for w in _WATER if w in ds.variables]
    out = {
        "air_temperature": (
            ("T", "P", "PB"),
            lambda t, p, pb: (t + 300.0) * ((p + pb) / 1.0e5) ** _RD_CP,
            "K",
        ),
        "air_pressure": (("P", "PB"), lambda p, pb: p + pb, "Pa"),
        "geopotential_height": (("PH", "PHB"), lambda ph, phb: (ph + phb) / _G_WRF, "m"),
    }
    for i, w in enumerate(water):
        std = _MASS_FRACTION.get(w)
        if std is not None:
            out[std] = (tuple(water), lambda *b, i=i: b[i] / _mixing_total(b), "kg kg-1")
    if "W" in ds.variables:
        out["upward_air_velocity"] = (("W",), lambda w: w, "m s-1")
    for name, std, units in (
        ("PSFC", "surface_air_pressure", "Pa"),
        ("HGT", "surface_altitude", "m"),
    ):
        if name in ds.variables:
            out[std] = ((name,), lambda v: v, units)
    for name, std in (("U", "grid_eastward_wind"), ("V", "grid_northward_wind")):
        if name in ds.variables:
            out[std] = ((name,), lambda v: v, "m s-1")
    return out


_DERIVATIONS = {
    "air_temperature": "(T + 300 K) ((P + PB) / 1e5 Pa)^(2/7)",
    "air_pressure": "P + PB",
    "geopotential_height": "(PH + PHB) / 9.81, destaggered to mass levels",
    "specific_humidity": "QVAPOR mixing ratio: q = r / (1 + sum of the water mixing ratios)",
    "mass_fraction_of_cloud_liquid_water_in_air": "QCLOUD mixing ratio: q = r / (1 + sum r)",
    "mass_fraction_of_cloud_ice_in_air": "QICE mixing ratio: q = r / (1 + sum r)",
    "mass_fraction_of_rain_in_air": "QRAIN mixing ratio: q = r / (1 + sum r)",
    "mass_fraction_of_snow_in_air": "QSNOW mixing ratio: q = r / (1 + sum r)",
    "upward_air_velocity": "W destaggered to mass levels",
    "grid_eastward_wind": "U destaggered (grid-relative)",
    "grid_northward_wind": "V destaggered (grid-relative)",
    "surface_air_pressure": "PSFC",
    "surface_altitude": "HGT",
}
_MASS_FRACTION = {
    "QVAPOR": "specific_humidity",
    "QCLOUD": "mass_fraction_of_cloud_liquid_water_in_air",
    "QICE": "mass_fraction_of_cloud_ice_in_air",
    "QRAIN": "mass_fraction_of_rain_in_air",
    "QSNOW": "mass_fraction_of_snow_in_air",
}
_FOUND_AS = {  # long names of the grid-relative winds (rotated by the common build)
    "grid_eastward_wind": "u-component of wind",
    "grid_northward_wind": "v-component of wind",
}


def _mass_dims(ds, names):
    """Mass-grid dimensions of a quantity from its first source variable."""
    return tuple(_STAG.get(d, d) for d in ds[names[0]].dims)


def _raw_dataset(ds, nc_raw, times, y, x, attrs):
    """Build the WRF file as a Dataset of derived quantities (lazy), and ``raw_of``."""
    import xarray as xr

    nz = ds.sizes["bottom_top"]
    coords = {
        "Time": ("Time", times.astype("datetime64[ns]")),
        "bottom_top": (
            "bottom_top",
            np.arange(1, nz + 1, dtype=float),
            {"standard_name": "model_level_number", "axis": "Z", "positive": "up"},
        ),
        "south_north": ("south_north", y, _axis_attrs("y", attrs)),
        "west_east": ("west_east", x, _axis_attrs("x", attrs)),
    }
    raws, data = {}, {}
    for std, (names, func, units) in _quantities(ds).items():
        dims = _mass_dims(ds, names)
        raws[std] = WrfVariable(func, tuple(nc_raw(n) for n in names), dims)
        shape = tuple(
            {"Time": times.size, "bottom_top": nz, "south_north": y.size, "west_east": x.size}[d]
            for d in dims
        )
        var_attrs = {
            "units": units,
            "long_name": std.replace("_", " "),
            "derived_from": f"WRF {_DERIVATIONS.get(std, ', '.join(names))}",
        }
        if std in _FOUND_AS:  # found by long name; rotated to earth-relative by the build
            var_attrs["GRIB_uvRelativeToGrid"] = 1
            var_attrs["long_name"] = _FOUND_AS[std]
        else:
            var_attrs["standard_name"] = std
        if attrs is not None:
            var_attrs["grid_mapping"] = "crs"
        data[std] = xr.Variable(dims, lazy_raw_array(raws[std], shape), attrs=var_attrs)
    if attrs is not None:
        data["crs"] = xr.Variable((), 0, attrs=dict(attrs))
    return xr.Dataset(data, coords=coords), raws.__getitem__


def _axis_attrs(axis, attrs):
    if attrs is None:
        return {
            "y": {"standard_name": "latitude", "units": "degrees_north"},
            "x": {"standard_name": "longitude", "units": "degrees_east"},
        }[axis]
    return {"standard_name": f"projection_{axis}_coordinate", "units": "m"}


def read_wrf_forecast(ds, path, nc_raw, *, var_map=None, rh_convention=None):
    """Read an opened WRF output file into a GridSource (see the module docstring)."""
    times = _times(ds, path)
    attrs = _projection(ds, path)
    y, x, _ = _axes(ds, attrs, path)
    raw_ds, raw_of = _raw_dataset(ds, nc_raw, times, y, x, attrs)
    levels = ds.sizes["bottom_top"]
    notes = [
        f"WRF output ({ds.attrs.get('TITLE', '').strip()}): diagnosed on the {levels} "
        "model levels (not interpolated to pressure levels); temperature from T + 300 K "
        "and P + PB, heights from PH + PHB destaggered, water species mixing ratios "
        "turned into mass fractions, winds destaggered and rotated to earth-relative"
    ]
    return build_grid_source(
        raw_ds, path, raw_of, var_map=var_map, fmt="WRF", notes=notes, rh_convention=rh_convention
    )
