"""Forecasts: whole columns at route samples, coverage, time, grids and profiles.

The forecasts are the invented Skerrow Basin scenario (fixtures/make_fixtures.py).
Most expectations here are exact consequences of the interpolation rules (a
column between grid points is the weighted mean of the grid columns), checked
against values read straight from the file with xarray; physics checks name
their source.
"""

from __future__ import annotations

import importlib.util
import inspect
import json
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from icing.errors import ForecastError
from icing.forecast import (
    GAP_REASONS,
    ColumnSet,
    GridForecast,
    ProfileForecast,
    demo_forecast_path,
    load_forecast,
)

ROOT = Path(__file__).resolve().parents[1]
FIX = ROOT / "fixtures"
LATLON = FIX / "skerrow-latlon.nc"
LCC = FIX / "skerrow-lcc.nc"
PROFILES = FIX / "skerrow-profiles.json"
GOLDEN = FIX / "golden-columns.json"
T06, T12, T18 = (np.datetime64(f"2027-01-14T{h}:00", "ms") for h in ("06", "12", "18"))


def _module(name, path):
    spec = importlib.util.spec_from_file_location(name, path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


mf = _module("make_fixtures", FIX / "make_fixtures.py")


def _ds():
    """The lat-lon fixture in memory (a fresh copy, encodings dropped for fast writes)."""
    return mf.in_memory(LATLON)


def _write(ds, tmp_path, name="f.nc"):
    for var in ds.variables.values():
        var.encoding = {k: v for k, v in var.encoding.items() if k in ("units", "calendar")}
    p = tmp_path / name
    ds.to_netcdf(p)
    return p


def _grid_column(ds, name, lat, lon, time):
    v = ds[name].sel(latitude=lat, longitude=lon)
    return np.asarray(v.sel(time=time).values if "time" in v.dims else v.values, float)


# --------------------------------------------------------------------------- contract


def test_columns_use_the_keyword_names_of_diagnose_columns():
    from icing.calc.column import diagnose_columns

    names = set(inspect.signature(diagnose_columns).parameters) - {"options"}
    for path in (LATLON, LCC, PROFILES):
        cs = load_forecast(path).columns_at([57.0], [-24.5], [T12])
        assert isinstance(cs, ColumnSet)
        assert set(cs.columns) <= names, set(cs.columns) - names
        assert {"pressure", "temperature", "height"} <= set(cs.columns)
        m = cs.n_columns
        for key, val in cs.columns.items():
            per_column = key in ("precipitation_rate_mm_h", "surface_pressure", "surface_height")
            assert val.shape == ((m,) if per_column else (m, cs.columns["pressure"].shape[1]))
        assert cs.wind_u.shape == cs.columns["pressure"].shape
        assert cs.candidates.dtype.kind == "i" and cs.candidates.shape[0] == 1
        diagnose_columns(**cs.columns)  # the columns feed the diagnosis as they are


def test_levels_surface_first_in_si():
    cs = load_forecast(LATLON).columns_at([57.0], [-24.5], [T12])
    p = cs.columns["pressure"][0]
    assert np.all(np.diff(p) < 0) and p[0] == 100000.0  # Pa, 1000 hPa first
    assert np.all(np.diff(cs.columns["height"][0]) > 0)
    assert 210 < np.nanmin(cs.columns["temperature"]) < np.nanmax(cs.columns["temperature"]) < 290


def test_gap_reasons_are_the_documented_words():
    assert GAP_REASONS == (
        "outside-radius",
        "outside-grid",
        "outside-time-window",
        "missing-values",
    )


# --------------------------------------------------------------------------- lat-lon grids


def test_grid_point_column_is_the_file_column():
    ds = _ds()
    cs = load_forecast(LATLON).columns_at([57.0], [-24.5], [T12])
    np.testing.assert_allclose(
        cs.columns["temperature"][0], _grid_column(ds, "t", 57.0, -24.5, T12), rtol=1e-6
    )
    np.testing.assert_allclose(
        cs.columns["relative_humidity"][0],
        np.minimum(_grid_column(ds, "r", 57.0, -24.5, T12) / 100, 1.0),
        rtol=1e-6,
    )
    np.testing.assert_allclose(cs.columns["height"][0], _grid_column(ds, "gh", 57.0, -24.5, T12))
    np.testing.assert_allclose(
        cs.columns["cloud_liquid"][0], _grid_column(ds, "clwc", 57.0, -24.5, T12), rtol=1e-6
    )
    np.testing.assert_allclose(
        cs.columns["precipitation_rate_mm_h"][0],
        _grid_column(ds, "prate", 57.0, -24.5, T12) * 3600.0,
        rtol=1e-5,
    )
    assert cs.covered.all() and cs.gap_reason[0] == ""


def test_bilinear_whole_column_between_grid_points():
    ds = _ds()
    # a quarter of the way east and half way north inside one 0.25 deg cell
    lat, lon = 57.125, -24.4375
    cs = load_forecast(LATLON).columns_at([lat], [lon], [T12])
    c = {(a, b): _grid_column(ds, "t", a, b, T12) for a in (57.0, 57.25) for b in (-24.5, -24.25)}
    expect = 0.5 * (0.75 * c[57.0, -24.5] + 0.25 * c[57.0, -24.25]) + 0.5 * (
        0.75 * c[57.25, -24.5] + 0.25 * c[57.25, -24.25]
    )
    np.testing.assert_allclose(cs.columns["temperature"][0], expect, rtol=1e-9)


def test_time_linear_between_valid_times():
    ds = _ds()
    t09 = np.datetime64("2027-01-14T09:00", "ms")
    t10 = np.datetime64("2027-01-14T10:00", "ms")
    fc = load_forecast(LATLON)
    cs = fc.columns_at([57.0, 57.0], [-24.5, -24.5], [t09, t10])
    a, b = _grid_column(ds, "t", 57.0, -24.5, T06), _grid_column(ds, "t", 57.0, -24.5, T12)
    np.testing.assert_allclose(cs.columns["temperature"][0], 0.5 * (a + b), rtol=1e-9)
    np.testing.assert_allclose(cs.columns["temperature"][1], a / 3 + 2 * b / 3, rtol=1e-9)


@pytest.mark.parametrize(
    "layout",
    [
        {"lon360": True},
        {"lat_ascending": True},
        {"pressure_unit": "Pa", "levels_ascending": True},
        {"lon360": True, "lat_ascending": True, "pressure_unit": "Pa"},
    ],
)
def test_grid_layouts_give_the_same_column(tmp_path, layout):
    path = _write(mf.latlon_dataset(**layout), tmp_path)
    lat, lon, t = [57.13, 59.4, 55.02], [-24.61, -19.9, -30.8], [T12, T06, T18]
    ref = load_forecast(LATLON).columns_at(lat, lon, t)
    got = load_forecast(path).columns_at(lat, lon, t)
    assert got.covered.all()
    for key in ref.columns:
        # float32 storage vs the quantised fixture: 0.01 K / 0.1 % / 1 m steps
        np.testing.assert_allclose(
            got.columns[key], ref.columns[key], rtol=2e-3, atol=2e-2, err_msg=key
        )


def test_longitude_east_of_180_on_a_0_360_grid(tmp_path):
    path = _write(mf.latlon_dataset(lon360=True), tmp_path)
    fc = load_forecast(path)
    a = fc.columns_at([57.0], [-24.5], [T12]).columns["temperature"]
    b = fc.columns_at([57.0], [335.5], [T12]).columns["temperature"]
    np.testing.assert_array_equal(a, b)
    assert fc.bounds == pytest.approx((-31.0, 53.5, -17.0, 60.5))


def test_global_grid_wraps_around_the_meridian(tmp_path):
    ds = mf.latlon_dataset(step_deg=1.0, lon360=True, domain=(55.0, 58.0, 0.0, 359.0))
    fc = load_forecast(_write(ds, tmp_path))
    assert fc.periodic
    cs = fc.columns_at([56.0, 56.0], [359.5, -0.5], [T12, T12])
    assert cs.covered.all()
    t = ds["t"].sel(time=T12, latitude=56.0)
    expect = 0.5 * (t.sel(longitude=359.0).values + t.sel(longitude=0.0).values)
    np.testing.assert_allclose(cs.columns["temperature"][0], expect, rtol=1e-6)
    np.testing.assert_allclose(cs.columns["temperature"][1], expect, rtol=1e-6)


def test_outside_grid_and_time_window_are_gaps():
    fc = load_forecast(LATLON, time_tolerance_h=3.0)
    lat = [57.0, 62.0, 57.0, 57.0, 57.0, 57.0]
    lon = [-24.5, -24.5, -40.0, -24.5, -24.5, -24.5]
    t = [
        T12,
        T12,
        T12,
        T18 + np.timedelta64(4, "h"),
        T06 - np.timedelta64(2, "h"),
        T18 + np.timedelta64(3, "h"),
    ]
    cs = fc.columns_at(lat, lon, t)
    assert cs.gap_reason.tolist() == [
        "",
        "outside-grid",
        "outside-grid",
        "outside-time-window",
        "",
        "",
    ]
    assert cs.covered.tolist() == [True, False, False, False, True, True]
    assert (cs.candidates[~cs.covered] == -1).all()
    assert (cs.candidates[cs.covered, 0] >= 0).all()
    # within the tolerance the end time is held, never extrapolated
    ds = _ds()
    np.testing.assert_allclose(
        cs.columns["temperature"][cs.candidates[4, 0]],
        _grid_column(ds, "t", 57.0, -24.5, T06),
        rtol=1e-9,
    )


def test_single_time_analysis_within_tolerance(tmp_path):
    path = _write(_ds().isel(time=[1]), tmp_path)
    fc = load_forecast(path, time_tolerance_h=2.0)
    t = [
        T12 + np.timedelta64(90, "m"),
        T12 - np.timedelta64(2, "h"),
        T12 + np.timedelta64(150, "m"),
    ]
    cs = fc.columns_at([57.0] * 3, [-24.5] * 3, t)
    assert cs.gap_reason.tolist() == ["", "", "outside-time-window"]
    fc0 = load_forecast(path, time_tolerance_h=0.0)
    assert fc0.columns_at([57.0], [-24.5], [T12]).covered.all()
    assert not fc0.columns_at([57.0], [-24.5], [T12 + np.timedelta64(1, "m")]).covered.any()


def test_scalar_time_coordinate_is_one_valid_time(tmp_path):
    path = _write(_ds().isel(time=1), tmp_path)  # time becomes a scalar coordinate
    fc = load_forecast(path)
    assert fc.valid_times.tolist() == [T12.astype(object)]
    assert fc.columns_at([57.0], [-24.5], [T12]).covered.all()


def test_several_files_form_one_forecast(tmp_path):
    ds = _ds()
    paths = [_write(ds.isel(time=[i]), tmp_path, f"lead{i}.nc") for i in (2, 0, 1)]
    fc = load_forecast(paths)
    assert fc.valid_times.tolist() == [T06.astype(object), T12.astype(object), T18.astype(object)]
    t = [np.datetime64("2027-01-14T09:00", "ms"), np.datetime64("2027-01-14T16:30", "ms")]
    a = fc.columns_at([57.1, 58.0], [-24.3, -21.0], t)
    b = load_forecast(LATLON).columns_at([57.1, 58.0], [-24.3, -21.0], t)
    for key in b.columns:
        np.testing.assert_allclose(a.columns[key], b.columns[key], rtol=1e-9, err_msg=key)
    assert len(fc.describe()["files"]) == 3


def test_inconsistent_grids_are_refused(tmp_path):
    a = _write(_ds().isel(time=[0]), tmp_path, "a.nc")
    b = _write(mf.latlon_dataset(step_deg=0.5).isel(time=[1]), tmp_path, "b.nc")
    with pytest.raises(ForecastError, match="grid differs") as info:
        load_forecast([a, b])
    assert info.value.path == str(b) and "one model grid" in info.value.fix
    c = _write(_ds().isel(time=[0], pressure=slice(0, 15)), tmp_path, "c.nc")
    with pytest.raises(ForecastError, match="vertical levels"):
        load_forecast([a, c])
    d = _write(_ds().isel(time=[0]), tmp_path, "d.nc")
    with pytest.raises(ForecastError, match="appears twice"):
        load_forecast([a, d])
    with pytest.raises(ForecastError, match="mixed"):
        load_forecast([a, PROFILES])


def test_missing_values_gap_and_partial_nan_levels(tmp_path):
    ds = _ds()
    ds["t"].loc[{"latitude": 57.0, "longitude": -24.5}] = np.nan  # whole column missing
    ds["t"].loc[{"latitude": 58.0, "longitude": -24.5, "pressure": 500.0}] = np.nan
    fc = load_forecast(_write(ds, tmp_path))
    cs = fc.columns_at([57.0, 58.0, 56.0], [-24.5, -24.5, -24.5], [T12] * 3)
    assert cs.gap_reason.tolist() == ["missing-values", "", ""]
    col = cs.columns["temperature"][cs.candidates[1, 0]]
    k = int(np.flatnonzero(cs.columns["pressure"][0] == 50000.0)[0])
    assert np.isnan(col[k]) and np.isfinite(np.delete(col, k)).all()


def test_omega_converted_to_vertical_velocity():
    # w = -omega / (rho g), hydrostatic (Wallace & Hobbs 2006, eq. 7.33, from memory);
    # the fixture made omega from w with dry-air density
    fc = load_forecast(LATLON)
    cs = fc.columns_at([57.0], [-20.0], [T12])  # the convective cell, updraft to 8 m/s
    ref = mf.skerrow_columns(np.array([57.0]), np.array([-20.0]), 1)["vertical_velocity"][0]
    # tolerance: moist vs dry density (virtual temperature, < 1 % here) and the
    # 1e-3 Pa/s quantisation of the stored omega
    np.testing.assert_allclose(cs.columns["vertical_velocity"][0], ref, rtol=0.01, atol=2e-3)
    assert fc.describe()["variables"]["vertical_velocity"]["converted"].startswith("omega")


def test_variables_on_their_own_levels_are_interpolated(tmp_path):
    ds = _ds()
    rh = ds["r"].isel(pressure=slice(0, 12, 2)).rename(pressure="plev_rh")  # 1000..750 hPa
    ds = ds.drop_vars("r")
    ds["r"] = rh
    fc = load_forecast(_write(ds, tmp_path))
    cs = fc.columns_at([57.0], [-24.5], [T12])
    got = cs.columns["relative_humidity"][0]
    p = cs.columns["pressure"][0] / 100
    ref = _grid_column(_ds(), "r", 57.0, -24.5, T12) / 100
    on = np.isin(p, rh["plev_rh"].values)
    np.testing.assert_allclose(got[on], np.minimum(ref[on], 1.0), rtol=1e-6)
    assert np.isnan(got[p < 750]).all()  # above the variable's levels: missing, not invented
    between = p == 975.0
    lo, hi = ref[p == 1000.0], ref[p == 950.0]  # linear in log p between its neighbours
    w = np.log(1000 / 975) / np.log(1000 / 950)
    np.testing.assert_allclose(got[between], (1 - w) * lo + w * hi, rtol=1e-6)
    assert any("own levels" in n for n in fc.describe()["notes"])


def test_height_level_file(tmp_path):
    ds = mf.height_level_dataset()
    path = _write(ds, tmp_path)
    fc = load_forecast(path)
    assert fc.vertical == "height"
    cs = fc.columns_at([57.0], [-24.5], [T12])
    np.testing.assert_allclose(cs.columns["height"][0], ds["height"].values)
    np.testing.assert_allclose(
        cs.columns["pressure"][0], _grid_column(ds, "pres", 57.0, -24.5, T12), rtol=1e-6
    )
    # temperature at each height equals the pressure-level column interpolated in height
    ref = load_forecast(LATLON).columns_at([57.0], [-24.5], [T12])
    expect = np.interp(
        ds["height"].values, ref.columns["height"][0], ref.columns["temperature"][0]
    )
    np.testing.assert_allclose(cs.columns["temperature"][0], expect, atol=0.02)  # float32


def test_height_level_file_needs_pressure(tmp_path):
    path = _write(mf.height_level_dataset().drop_vars("pres"), tmp_path)
    with pytest.raises(ForecastError, match="air pressure on levels") as info:
        load_forecast(path)
    assert "--var pressure=NAME" in info.value.fix


def test_heights_hypsometric_when_the_grid_has_none(tmp_path):
    path = _write(_ds().drop_vars("gh"), tmp_path)
    cs = load_forecast(path).columns_at([57.0], [-24.5], [T12])
    ref = _grid_column(_ds(), "gh", 57.0, -24.5, T12)
    # the fixture heights are hypsometric from the same surface anchor: metres apart
    # (the fixture stores heights to 1 m and temperatures to 0.01 K)
    np.testing.assert_allclose(cs.columns["height"][0], ref, atol=2.0)


def test_var_map_finds_renamed_variables(tmp_path):
    ds = _ds().rename(t="air_temp_k", r="humid")
    for name in ("air_temp_k", "humid"):
        del ds[name].attrs["standard_name"]
    path = _write(ds, tmp_path)
    with pytest.raises(ForecastError, match="temperature"):
        load_forecast(path)
    fc = load_forecast(path, var_map={"temperature": "air_temp_k", "relative_humidity": "humid"})
    cs = fc.columns_at([57.0], [-24.5], [T12])
    ref = load_forecast(LATLON).columns_at([57.0], [-24.5], [T12])
    np.testing.assert_allclose(cs.columns["temperature"], ref.columns["temperature"])
    found = fc.describe()["variables"]
    assert found["temperature"] == {"name": "air_temp_k", "found_by": "mapping", "units": "K"}
    assert found["height"]["found_by"] == "standard_name"


def test_var_map_overrides_the_search():
    fc = load_forecast(LATLON, var_map={"cloud_liquid": "crwc"})
    cs = fc.columns_at([59.25], [-20.0], [T12])
    np.testing.assert_allclose(
        cs.columns["cloud_liquid"][0], _grid_column(_ds(), "crwc", 59.25, -20.0, T12), rtol=1e-6
    )


# --------------------------------------------------------------------------- projected grid


def test_projected_grid_matches_the_scenario():
    fc = load_forecast(LCC)
    assert fc.describe()["grid"].startswith("projected (lambert_conformal_conic")
    lat = np.array([57.3, 54.2, 59.25, 56.6])
    lon = np.array([-28.1, -29.5, -20.0, -24.0])
    cs = fc.columns_at(lat, lon, [T12] * 4)
    assert cs.covered.all()
    ref = mf.skerrow_columns(lat, lon, 1)
    # bilinear interpolation of smooth analytic fields on a 25 km grid plus float32
    # storage: about 0.01 K and 1 m where the fields are smooth (first two points);
    # across the warm-nose box edge (third) the columns still agree to 0.5 K
    np.testing.assert_allclose(cs.columns["temperature"][:2], ref["temperature"][:2], atol=0.05)
    np.testing.assert_allclose(cs.columns["height"][:2], ref["height"][:2], atol=2.0)
    np.testing.assert_allclose(cs.columns["temperature"][2:], ref["temperature"][2:], atol=0.5)
    # upward_air_velocity in m/s by name ("wz"), no omega conversion
    assert "converted" not in fc.describe()["variables"]["vertical_velocity"]


def test_projected_grid_outside_and_bounds():
    fc = load_forecast(LCC)
    cs = fc.columns_at([50.0, 57.0, 57.0], [-24.0, -45.0, -24.0], [T12] * 3)
    assert cs.gap_reason.tolist() == ["outside-grid", "outside-grid", ""]
    lon0, lat0, lon1, lat1 = fc.bounds
    assert lon0 < -31.0 and lon1 > -17.0 and lat0 < 53.5 and lat1 > 60.5


def test_projected_grid_without_grid_mapping_is_refused(tmp_path):
    with xr.open_dataset(LCC) as ds:
        ds = ds.load()
    del ds["T"].attrs["grid_mapping"]
    with pytest.raises(ForecastError, match="grid_mapping"):
        load_forecast(_write(ds, tmp_path))


# --------------------------------------------------------------------------- lazy reading


def test_only_tiles_around_the_route_are_read(tmp_path):
    bench = _module("screen_data", ROOT / "benchmarks" / "screen_data.py")
    small = bench.make_grid_file(tmp_path / "small.nc", 120, 60, 6, 2)
    large = bench.make_grid_file(tmp_path / "large.nc", 480, 240, 6, 2)
    lat = np.linspace(56.0, 56.5, 50)
    lon = np.linspace(-25.0, -24.0, 50)
    t = np.full(50, np.datetime64("2027-01-14T07:00", "ms"))
    counts = {}
    for name, path in (("small", small), ("large", large)):
        fc = load_forecast(path).with_tiling(tile=8)
        cs = fc.columns_at(lat, lon, t)
        assert cs.covered.all()
        counts[name] = fc.read_stats["values"]
        grid_values = 240 * 480 * 6 * 2 * 10 if name == "large" else 120 * 60 * 6 * 2 * 10
        assert fc.read_stats["values"] < 0.15 * grid_values
    # the same route reads about as much from a grid 16x larger (finer): the cost
    # follows the route (its tiles), not the grid
    assert counts["large"] < 6 * counts["small"]


def test_one_sample_reads_one_small_tile():
    fc = load_forecast(LATLON).with_tiling(tile=4)
    fc.columns_at([57.0], [-24.5], [T12])
    full = 29 * 57 * 21 * 3
    assert fc.read_stats["values"] < 0.02 * full * len(fc.variables)


# --------------------------------------------------------------------------- wind, surface


def test_wind_at_nearest_level_and_zero_outside():
    fc = load_forecast(LATLON)
    assert fc.has_wind
    cs = fc.columns_at([57.0], [-24.5], [T12])
    z = cs.columns["height"][0]
    k = int(np.argmin(np.abs(z - 3000.0)))
    u, v = fc.wind_at([57.0, 70.0], [-24.5, 0.0], [3000.0, 3000.0], [T12, T12])
    assert u[0] == pytest.approx(cs.wind_u[0, k]) and v[0] == pytest.approx(cs.wind_v[0, k])
    assert u[1] == 0.0 and v[1] == 0.0


def test_surface_height():
    fc = load_forecast(LATLON)
    np.testing.assert_array_equal(fc.surface_height_at([57.0, 80.0], [-24.0, 0.0]), [0.0, np.nan])
    pf = load_forecast(PROFILES)
    np.testing.assert_array_equal(pf.surface_height_at([57.0, 40.0], [-24.5, 0.0]), [0.0, np.nan])


def test_describe_provenance():
    d = load_forecast(LATLON).describe()
    assert d["kind"] == "grid" and d["files"] == [str(LATLON)]
    assert d["issue_time"] == "2027-01-14T00:00:00Z"
    assert d["valid_times"] == [
        "2027-01-14T06:00:00Z",
        "2027-01-14T12:00:00Z",
        "2027-01-14T18:00:00Z",
    ]
    assert d["time_tolerance_h"] == 3.0 and d["radius_km"] == 50.0
    assert d["variables"]["temperature"] == {
        "name": "t",
        "found_by": "standard_name",
        "units": "K",
    }
    json.dumps(d)  # provenance goes into the GeoJSON as it is
    p = load_forecast(PROFILES, radius_km=30.0).describe()
    assert p["kind"] == "profiles" and p["radius_km"] == 30.0 and p["profiles"] == 15
    json.dumps(p)


def test_demo_forecast_is_bundled_and_small():
    path = demo_forecast_path()
    assert path.exists() and path.stat().st_size < 2_000_000
    fc = load_forecast(path)
    assert isinstance(fc, GridForecast)
    lon0, lat0, lon1, lat1 = fc.bounds
    assert (lon0, lat0, lon1, lat1) == pytest.approx((-31.0, 53.5, -17.0, 60.5))
    for path in FIX.glob("*.*"):
        assert path.stat().st_size < 2_000_000, path


# --------------------------------------------------------------------------- profiles


def test_profile_candidates_within_radius_at_bracketing_times():
    fc = load_forecast(PROFILES, radius_km=50.0)
    assert isinstance(fc, ProfileForecast)
    t09 = np.datetime64("2027-01-14T09:00", "ms")
    cs = fc.columns_at([57.2, 57.0, 57.0], [-24.5, -24.5, -22.0], [t09, T12, T12])
    # at 09Z: the deck profile at 06Z and at 12Z, each its own candidate
    c0 = cs.candidates[0][cs.candidates[0] >= 0]
    assert sorted(cs.column_time[c0].tolist()) == [T06.astype(object), T12.astype(object)]
    assert set(cs.column_id[c0]) == {"skerrow-deck"}
    # exactly at 12Z: one time only
    c1 = cs.candidates[1][cs.candidates[1] >= 0]
    assert cs.column_time[c1].tolist() == [T12.astype(object)]
    # 152 km from the deck site: outside the radius
    assert cs.gap_reason.tolist() == ["", "", "outside-radius"]
    assert (cs.candidates[2] == -1).all()
    # distances are geodesic: 0.2 deg of latitude at 57 N is 22.3 km (WGS 84, pyproj)
    assert np.nanmin(cs.candidate_distance_km[0]) == pytest.approx(22.27, abs=0.01)


def test_profiles_are_never_blended():
    fc = load_forecast(PROFILES, radius_km=300.0)
    cs = fc.columns_at([57.0], [-22.2], [np.datetime64("2027-01-14T09:00", "ms")])
    cand = cs.candidates[0][cs.candidates[0] >= 0]
    assert len(cand) > 2  # deck and cell sites at two times
    tab = fc.table
    for c in cand:
        j = np.flatnonzero((tab.ids == cs.column_id[c]) & (tab.time == cs.column_time[c]))[0]
        np.testing.assert_array_equal(cs.columns["temperature"][c], tab.levels["temperature"][j])
    # nearest candidates first
    d = cs.candidate_distance_km[0][: len(cand)]
    assert np.all(np.diff(d) >= 0)


def test_profile_time_window():
    fc = load_forecast(PROFILES, time_tolerance_h=1.0)
    cs = fc.columns_at(
        [57.0] * 3,
        [-24.5] * 3,
        [
            T06 - np.timedelta64(30, "m"),
            T06 - np.timedelta64(90, "m"),
            T18 + np.timedelta64(2, "h"),
        ],
    )
    assert cs.gap_reason.tolist() == ["", "outside-time-window", "outside-time-window"]


def test_profile_json_round_trip(tmp_path):
    doc = mf.profiles_document()
    path = mf.write_profiles(tmp_path / "p.json", doc)
    fc = load_forecast(path)
    tab = fc.table
    for i, prof in enumerate(doc["profiles"]):
        lv = prof["levels"]
        np.testing.assert_allclose(tab.levels["pressure"][i], np.array(lv["pressure_hpa"]) * 100)
        np.testing.assert_allclose(
            tab.levels["temperature"][i], np.array(lv["temperature_c"]) + 273.15
        )
        np.testing.assert_allclose(
            tab.levels["relative_humidity"][i],
            np.minimum(np.array(lv["relative_humidity_pct"]) / 100, 1),
        )
        np.testing.assert_allclose(
            tab.levels["cloud_liquid"][i], np.array(lv["cloud_liquid_g_kg"]) / 1000
        )
        np.testing.assert_allclose(tab.levels["wind_u"][i], lv["wind_u_m_s"])
        assert tab.scalars["precipitation_rate_mm_h"][i] == prof["precipitation_rate_mm_h"]
        assert tab.time[i] == np.datetime64(prof["valid_time"][:-1], "ms")
        assert tab.ids[i] == prof["id"]


def test_hypsometric_heights_when_absent_match_given_heights(tmp_path):
    doc = mf.profiles_document()
    given = load_forecast(mf.write_profiles(tmp_path / "a.json", doc)).table.levels["height"]
    for prof in doc["profiles"]:
        prof["levels"].pop("height_m", None)
    absent = load_forecast(mf.write_profiles(tmp_path / "b.json", doc)).table.levels["height"]
    # the fixture heights are hypsometric from the same anchor; the file rounds
    # heights to 0.1 m, temperatures to 0.01 K and humidity to 0.1 %
    np.testing.assert_allclose(absent, given, atol=1.0)


def test_hypsometric_layer_thickness_against_metpy(tmp_path):
    import metpy.calc as mpcalc
    from metpy.units import units

    doc = mf.profiles_document()
    prof = doc["profiles"][4]  # the dry site: no heights in the file
    assert "height_m" not in prof["levels"]
    fc = load_forecast(mf.write_profiles(tmp_path / "p.json", doc))
    z = fc.table.levels["height"][4]
    p = units.Quantity(np.array(prof["levels"]["pressure_hpa"]), "hPa")
    t = units.Quantity(np.array(prof["levels"]["temperature_c"]), "degC")
    rh = np.array(prof["levels"]["relative_humidity_pct"]) / 100
    w = mpcalc.mixing_ratio_from_relative_humidity(p, t, rh)
    dz = mpcalc.thickness_hydrostatic(p[:7], t[:7], mixing_ratio=w[:7]).m_as("m")
    # reference library: MetPy thickness_hydrostatic (trapezoid in ln p, like ours);
    # 0.2 % covers MetPy's mixing-ratio form of Tv and its own constants
    assert z[6] - z[0] == pytest.approx(dz, rel=2e-3)
    # anchored on surface elevation 0 m at the surface pressure: 1000 hPa sits
    # about 8 m per hPa above a ~1008 hPa surface (ICAO standard atmosphere, from memory)
    sp = prof["surface_pressure_hpa"]
    assert z[0] == pytest.approx(8.3 * (sp - 1000.0), rel=0.1)


def test_hypsometric_heights_without_surface_anchor(tmp_path):
    from icing.calc.thermo import standard_atmosphere_height

    doc = {
        "format": "icing-profiles",
        "version": 1,
        "profiles": [
            {
                "id": "X",
                "lat": 56.0,
                "lon": -28.0,
                "valid_time": "2027-01-14T12:00Z",
                "levels": {
                    "pressure_hpa": [950, 900, 850],
                    "temperature_c": [2.0, -1.0, -4.0],
                    "relative_humidity_pct": [70, 70, 70],
                },
            }
        ],
    }
    z = load_forecast(mf.write_profiles(tmp_path / "p.json", doc)).table.levels["height"][0]
    # lowest level at its standard-atmosphere height (ICAO; icing.thermo)
    assert z[0] == pytest.approx(float(standard_atmosphere_height(95000.0)))
    assert 400 < z[1] - z[0] < 460  # ~430 m for 50 hPa at ~270 K (hypsometric)


def test_profiles_with_different_level_counts_are_padded(tmp_path):
    doc = mf.profiles_document()
    lv = doc["profiles"][0]["levels"]
    for key in lv:
        lv[key] = lv[key][:10]
    fc = load_forecast(mf.write_profiles(tmp_path / "p.json", doc))
    t = fc.table.levels["temperature"]
    assert t.shape == (15, 21)
    assert np.isnan(t[0, 10:]).all() and np.isfinite(t[1]).all()
    assert np.isnan(fc.table.levels["height"][0, 10:]).all()


def test_several_profile_files_form_one_forecast(tmp_path):
    doc = mf.profiles_document()
    a, b = dict(doc), dict(doc)
    a["profiles"], b["profiles"] = doc["profiles"][:5], doc["profiles"][5:]
    fc = load_forecast(
        [mf.write_profiles(tmp_path / "a.json", a), mf.write_profiles(tmp_path / "b.json", b)]
    )
    assert fc.table.size == 15 and len(fc.describe()["files"]) == 2
    assert len(fc.valid_times) == 3


def test_golden_columns_load():
    fc = load_forecast(GOLDEN)
    assert set(fc.table.ids) == {
        "stratiform-deck",
        "warm-nose",
        "drizzle-deck",
        "convective-cell",
        "dry",
        "glaciating-deep-cold-deck",
        "ice-pellets-deep-cold",
    }


def test_bad_radius_and_tolerance():
    with pytest.raises(ForecastError, match="radius"):
        load_forecast(PROFILES, radius_km=0.0)
    with pytest.raises(ForecastError, match="tolerance"):
        load_forecast(PROFILES, time_tolerance_h=-1.0)


def test_fixture_generator_is_deterministic(tmp_path):
    a = mf.write_golden(tmp_path / "a.json").read_text()
    assert a == GOLDEN.read_text()
    assert json.loads(mf.write_profiles(tmp_path / "p.json").read_text()) == json.loads(
        PROFILES.read_text()
    )


@pytest.mark.parametrize("path", [LATLON, PROFILES])
def test_no_sample_covered_gives_one_placeholder_column(path):
    cs = load_forecast(path).columns_at([10.0, 11.0], [100.0, 100.0], [T12, T12])
    assert not cs.covered.any() and (cs.candidates == -1).all()
    assert cs.n_columns == 1 and np.isnan(cs.columns["temperature"]).all()
    assert set(cs.gap_reason) <= {"outside-grid", "outside-radius"}


@pytest.mark.parametrize("make", [lambda: mf.lcc_dataset(xy_units="km"), mf.rotated_pole_dataset])
def test_other_projections_and_coordinate_units(tmp_path, make):
    fc = load_forecast(_write(make(), tmp_path))
    lat = np.array([57.3, 54.2])
    lon = np.array([-28.1, -29.5])
    cs = fc.columns_at(lat, lon, [T12] * 2)
    assert cs.covered.all()
    ref = mf.skerrow_columns(lat, lon, 1)
    # smooth background: bilinear on a ~25 km grid, float32 storage (as above)
    np.testing.assert_allclose(cs.columns["temperature"], ref["temperature"], atol=0.05)


def test_hypsometric_heights_survive_missing_levels_below_ground(tmp_path):
    ds = _ds().drop_vars("gh")
    ds["t"].loc[{"latitude": 57.0, "longitude": -24.5, "pressure": 1000.0}] = np.nan
    cs = load_forecast(_write(ds, tmp_path)).columns_at([57.0], [-24.5], [T12])
    z = cs.columns["height"][0]
    assert np.isfinite(z).all()
    ref = _grid_column(_ds(), "gh", 57.0, -24.5, T12)
    # one missing level near the surface: the layer above it is integrated with the
    # temperature of its neighbour (within 0.5 K here), a few metres at most
    np.testing.assert_allclose(z, ref, atol=5.0)


def test_profile_provenance_names_the_fields(tmp_path):
    d = load_forecast(PROFILES).describe()["variables"]
    assert d["temperature"]["name"] == "temperature_c"
    assert d["height"]["name"] == "height_m, computed hypsometrically where absent"
    doc = mf.profiles_document()
    doc["profiles"] = doc["profiles"][:4]  # all with heights
    d = load_forecast(mf.write_profiles(tmp_path / "p.json", doc)).describe()["variables"]
    assert d["height"]["name"] == "height_m"


def test_samples_are_processed_in_chunks_with_the_same_result():
    fc = load_forecast(LATLON)
    rng = np.random.default_rng(7)
    lat = rng.uniform(53.0, 61.0, 300)
    lon = rng.uniform(-32.0, -16.0, 300)
    t = T06 + (rng.uniform(0, 14, 300) * 3.6e6).astype("timedelta64[ms]")
    whole = fc.columns_at(lat, lon, t)
    parts = fc.with_tiling(chunk=17).columns_at(lat, lon, t)
    np.testing.assert_array_equal(whole.candidates, parts.candidates)
    for key in whole.columns:
        np.testing.assert_array_equal(whole.columns[key], parts.columns[key])


def test_size_one_extra_dimension_is_read_through(tmp_path):
    ds = _ds()
    for name in ("t", "r", "gh"):
        ds[name] = ds[name].expand_dims(number=[0]).copy()
    a = load_forecast(_write(ds, tmp_path)).columns_at([57.1], [-24.3], [T12])
    b = load_forecast(LATLON).columns_at([57.1], [-24.3], [T12])
    for key in ("temperature", "relative_humidity", "height"):
        np.testing.assert_array_equal(a.columns[key], b.columns[key])


def test_blocks_are_cached_between_calls_and_reads_match_xarray(monkeypatch):
    lat, lon, t = [57.1, 59.3], [-24.3, -19.6], [T12, T18]
    fc = load_forecast(LATLON)
    first = fc.columns_at(lat, lon, t)
    reads = fc.read_stats["reads"]
    again = fc.columns_at(lat, lon, t)
    assert fc.read_stats["reads"] == reads and fc.read_stats["cache_hits"] > 0
    # the xarray path (files netCDF4 cannot open) gives the same columns
    monkeypatch.setattr("icing.forecast.netcdf.open_netcdf4", lambda path: None)
    slow = load_forecast(LATLON).columns_at(lat, lon, t)
    for key in first.columns:
        np.testing.assert_array_equal(again.columns[key], first.columns[key])
        np.testing.assert_allclose(slow.columns[key], first.columns[key], rtol=1e-12)


def test_height_levels_above_ground_add_the_surface_altitude(tmp_path):
    ds = mf.height_level_dataset()
    ds["height"].attrs["standard_name"] = "height"  # CF: above the surface
    ds["orog"] = ds["orog"] + 150.0
    fc = load_forecast(_write(ds, tmp_path))
    cs = fc.columns_at([57.0], [-24.5], [T12])
    np.testing.assert_allclose(cs.columns["height"][0], ds["height"].values + 150.0)
    assert any("above ground" in n for n in fc.describe()["notes"])


def test_profile_gap_judges_the_place_first():
    fc = load_forecast(PROFILES, time_tolerance_h=1.0)
    late = T18 + np.timedelta64(5, "h")
    cs = fc.columns_at([10.0, 57.0], [100.0, -24.5], [late, late])
    assert cs.gap_reason.tolist() == ["outside-radius", "outside-time-window"]


def test_height_levels_above_ground_without_a_surface_are_refused(tmp_path):
    # Heights above an unknown surface cannot be placed: refused, never read as MSL.
    ds = mf.height_level_dataset().drop_vars("orog")
    ds["height"].attrs["standard_name"] = "height"
    with pytest.raises(ForecastError, match="no surface height"):
        load_forecast(_write(ds, tmp_path))
