"""NetCDF as data services write it: a THREDDS subset of the NCEP GFS, read with no mapping.

Real data (tests/data/real, origin and licence in its README.md): ``GFS_test.nc``, an NCEP
GFS analysis of 2010-10-26 12 UTC over North America, 20-65 N, 1 degree, as written by
a THREDDS NetCDF subset service (MetPy test data): netCDF-Java GRIB names, no
standard_name, RH on its own levels, longitudes 0-360, latitudes descending, no surface
pressure or orography. Expectations come from the raw file read with xarray.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from icing.errors import ForecastError
from icing.forecast import load_forecast

FILE = "GFS_test.nc"
T12 = np.datetime64("2010-10-26T12:00", "ms")


def _copy(real_data, tmp_path, edit, name="service.nc"):
    with xr.open_dataset(real_data / FILE) as ds:
        ds = edit(ds.load())
    path = tmp_path / name
    ds.to_netcdf(path)
    return path


def test_service_file_screens_with_no_mapping(real_data, screen_cli):
    code, fc, rows = screen_cli(
        [[-88.0, 42.0, 1500.0], [-80.0, 42.0, 1500.0]],
        real_data / FILE,
        departure="2010-10-26T11:00:00Z",
        name="lake hop",
    )
    assert code == 0 and rows and all(r["covered"] == "True" for r in rows)
    var = fc["provenance"]["variables"]
    assert var["temperature"]["name"] == "Temperature_isobaric"
    assert var["temperature"]["found_by"] == "GRIB parameter GRIB2 0-0-0 (temperature)"
    assert var["relative_humidity"]["name"] == "Relative_humidity_isobaric"
    # the model is not named in the file: read as over water, and said
    assert var["relative_humidity"]["humidity_convention"].startswith("unknown")
    assert any("isobaric5" in n and "own levels" in n for n in fc["provenance"]["notes"])


def test_relative_humidity_on_its_own_levels_fills_the_level_it_lacks(real_data):
    # RH has no 20 hPa level (isobaric5 has 25 of the 26 levels of isobaric3): it is
    # interpolated there in log pressure between 30 and 10 hPa, never a gap
    fc = load_forecast(real_data / FILE)
    cs = fc.columns_at([45.0], [-100.0], [T12])
    assert cs.covered.all()
    p = cs.columns["pressure"][0]
    rh = cs.columns["relative_humidity"][0]
    assert np.isfinite(rh).all()
    with xr.open_dataset(real_data / FILE) as ds:
        raw = ds["Relative_humidity_isobaric"].sel(lat=45.0, lon=260.0).isel(time=0)
        r10, r30 = (float(raw.sel(isobaric5=v)) / 100 for v in (1000.0, 3000.0))
    w = np.log(3000 / 2000) / np.log(3000 / 1000)  # linear in log p
    expect = min((1 - w) * r30 + w * r10, 1.0)
    assert rh[p == 2000.0][0] == pytest.approx(expect, rel=1e-6)  # float32 file values


def test_levels_a_variable_lacks_aloft_are_listed_in_order_and_not_a_gap(
    real_data, tmp_path, screen_cli
):
    # older archives carry RH up to 300 hPa only: the levels above have no humidity
    # (no data there, listed surface first), the columns below stay whole
    def cut_rh(ds):
        rh = ds["Relative_humidity_isobaric"].sel(isobaric5=slice(30000.0, None))
        ds = ds.drop_vars(["Relative_humidity_isobaric", "isobaric5"])
        ds["Relative_humidity_isobaric"] = rh
        return ds

    path = _copy(real_data, tmp_path, cut_rh)
    fc = load_forecast(path)
    missing = fc.describe()["variables"]["relative_humidity"]["missing_levels"]
    assert missing == "250, 200, 150, 100, 70, 50, 30, 20, 10 hPa"
    code, out, rows = screen_cli(
        [[-88.0, 42.0, 3000.0], [-84.0, 42.0, 3000.0]], path, departure="2010-10-26T11:00:00Z"
    )
    assert code == 0 and all(r["covered"] == "True" for r in rows)


def test_longitudes_0_360_latitudes_descending_and_where_the_grid_ends(real_data, screen_cli):
    # northward across the grid's north edge (65 N in the raw file) at 100 W
    code, fc, rows = screen_cli(
        [[-100.0, 62.0, 3000.0], [-100.0, 68.0, 3000.0]],
        real_data / FILE,
        departure="2010-10-26T11:00:00Z",
        name="north run",
    )
    assert code == 0
    covered = [float(r["lat"]) for r in rows if r["covered"] == "True"]
    outside = [float(r["lat"]) for r in rows if r["gap_reason"] == "outside-grid"]
    with xr.open_dataset(real_data / FILE) as ds:
        edge = float(ds["lat"].max())
    assert edge == 65.0
    # samples every ~1 km (0.009 deg of latitude): the gap starts at the edge
    assert max(covered) == pytest.approx(edge, abs=0.01) and min(outside) > edge
    assert fc["summaries"][0]["gap_km"] > 300.0


def test_no_surface_fields_ground_at_sea_level_and_no_freezing_level_below_it(
    real_data, screen_cli
):
    # the 2010-10-26 storm: the raw 1000 hPa surface lies below sea level (z < 0) over
    # Manitoba; a file without surface pressure or orography once gave a freezing level
    # below the ground there
    with xr.open_dataset(real_data / FILE) as ds:
        z = float(
            ds["Geopotential_height_isobaric"]
            .isel(time=0)
            .sel(isobaric3=100000.0, lat=56.0, lon=259.0)
        )
    assert z < 0
    code, fc, rows = screen_cli(
        [[-101.0, 56.0, 600.0], [-95.0, 57.0, 600.0]],
        real_data / FILE,
        departure="2010-10-26T11:00:00Z",
        name="storm crossing",
    )
    assert code == 0 and all(r["covered"] == "True" for r in rows)
    summary = fc["summaries"][0]
    low = summary["freezing_level_ft_min"]
    assert low is None or low >= 0.0
    assert any("ground is taken at mean sea level" in n for n in fc["provenance"]["notes"])
    fc2 = load_forecast(real_data / FILE)
    cs = fc2.columns_at([56.0], [-101.0], [T12])
    assert cs.columns["surface_pressure"][0] < 100000.0  # the 1000 hPa level is below it


def test_convention_stated_by_the_user_or_by_service_attributes(real_data, tmp_path):
    fc = load_forecast(real_data / FILE, rh_convention="ncep-gfs")
    conv = fc.describe()["variables"]["relative_humidity"]["humidity_convention"]
    assert conv.startswith("ncep-gfs") and "stated by the user" in conv

    def name_the_model(ds):
        ds.attrs["Originating_or_generating_Center"] = (
            "US National Weather Service, National Centres for Environmental Prediction (NCEP)"
        )
        key = "Analysis_or_forecast_generating_process_identifier_defined_by_originating_centre"
        ds.attrs[key] = "Global Forecast System Model"
        return ds

    fc = load_forecast(_copy(real_data, tmp_path, name_the_model))
    conv = fc.describe()["variables"]["relative_humidity"]["humidity_convention"]
    assert conv.startswith("ncep-gfs") and "global attributes" in conv
    a = load_forecast(real_data / FILE).columns_at([60.0], [-120.0], [T12])
    b = fc.columns_at([60.0], [-120.0], [T12])
    cold = a.columns["temperature"][0] < 263.0
    # below -10 C the blend-referenced humidity is smaller over water
    assert np.all(
        b.columns["relative_humidity"][0][cold] <= a.columns["relative_humidity"][0][cold]
    )


def test_non_cf_standard_name_is_read_as_a_name(real_data, tmp_path):
    def rename(ds):
        ds = ds.rename(Temperature_isobaric="air")
        ds["air"].attrs = {"standard_name": "Temperature", "units": "K"}  # not a CF name
        return ds

    fc = load_forecast(_copy(real_data, tmp_path, rename))
    assert fc.describe()["variables"]["temperature"]["found_by"] == (
        "standard_name 'Temperature' (not a CF name) read as a name"
    )


def test_missing_humidity_lists_what_was_found(real_data, tmp_path):
    path = _copy(real_data, tmp_path, lambda ds: ds.drop_vars("Relative_humidity_isobaric"))
    with pytest.raises(ForecastError, match="no humidity") as info:
        load_forecast(path)
    assert "Temperature_isobaric (K, 26 pressure levels)" in info.value.message
    assert "\n" not in info.value.one_line()
