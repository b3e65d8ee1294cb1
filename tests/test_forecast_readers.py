"""Forecast readers: profile JSON/CSV validation, CF variable discovery and units.

Profile fixtures are the invented Skerrow Basin scenario (fixtures/make_fixtures.py);
they exercise the readers, they are not check values.
"""

from __future__ import annotations

import copy
import importlib.util
import json
import warnings
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from icing.errors import ForecastError, PlausibilityWarning
from icing.forecast import load_forecast
from icing.forecast.profiles import profile_schema
from icing.forecast.table import parse_time

ROOT = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location(
    "make_fixtures", ROOT / "fixtures" / "make_fixtures.py"
)
mf = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(mf)
PROFILES = ROOT / "fixtures" / "skerrow-profiles.json"
PROFILES_CSV = ROOT / "fixtures" / "skerrow-profiles.csv"
LATLON = ROOT / "fixtures" / "skerrow-latlon.nc"
GOLDEN = ROOT / "fixtures" / "golden-columns.json"


def _doc():
    return json.loads(PROFILES.read_text())


def _one_profile_doc(**levels):
    """A small valid document (three levels), level fields overridable."""
    lv = {
        "pressure_hpa": [1000, 850, 700],
        "temperature_c": [5.0, -3.0, -10.0],
        "relative_humidity_pct": [80.0, 95.0, 60.0],
    }
    lv.update(levels)
    lv = {k: v for k, v in lv.items() if v is not None}
    return {
        "format": "icing-profiles",
        "version": 1,
        "profiles": [
            {
                "id": "P",
                "lat": 57.0,
                "lon": -24.0,
                "valid_time": "2027-01-14T12:00:00Z",
                "levels": lv,
            }
        ],
    }


def _write(tmp_path, doc, name="p.json"):
    p = tmp_path / name
    p.write_text(doc if isinstance(doc, str) else json.dumps(doc))
    return p


def _error(tmp_path, doc, name="p.json"):
    path = _write(tmp_path, doc, name)
    with pytest.raises(ForecastError) as info:
        load_forecast(path)
    err = info.value
    text = err.one_line()
    assert "\n" not in text
    assert err.path == str(path)  # names the file
    assert err.fix  # says what to do
    return err


# --------------------------------------------------------------------- schema


def test_schema_is_valid_and_fixtures_follow_it():
    import jsonschema

    schema = profile_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    for path in (PROFILES, GOLDEN):
        jsonschema.validate(json.loads(path.read_text()), schema)


def test_example_document_of_the_design_loads(tmp_path):
    # an illustrative profile (its heights are not hypsometric: kept as given)
    doc = {
        "format": "icing-profiles",
        "version": 1,
        "profiles": [
            {
                "id": "A",
                "lat": 51.2,
                "lon": -4.1,
                "valid_time": "2027-01-14T12:00:00Z",
                "levels": {
                    "pressure_hpa": [1000, 950, 900, 850, 800, 700, 600, 500],
                    "height_m": [120, 540, 990, 1460, 1950, 3010, 4200, 5570],
                    "temperature_c": [3.0, 0.5, -2.0, -4.5, -7.0, -13.0, -20.0, -28.0],
                    "dewpoint_c": [2.0, 0.0, -2.3, -4.7, -7.3, -18.0, -30.0, -40.0],
                    "cloud_liquid_g_kg": [0, 0.05, 0.20, 0.25, 0.10, 0, 0, 0],
                    "vertical_velocity_m_s": [0, 0.1, 0.2, 0.3, 0.2, 0.1, 0, 0],
                },
                "precipitation_rate_mm_h": 0.0,
            }
        ],
    }
    fc = load_forecast(_write(tmp_path, doc))
    lv = fc.table.levels
    assert fc.table.humidity == "dewpoint"
    np.testing.assert_allclose(lv["height"][0], [120, 540, 990, 1460, 1950, 3010, 4200, 5570])
    np.testing.assert_allclose(lv["cloud_liquid"][0, 3], 0.25e-3)
    np.testing.assert_allclose(lv["temperature"][0, 0], 276.15)


# --------------------------------------------------------------------- bad JSON input


BAD_JSON = {
    # name: (document edit, expected words in the message, expected place)
    "malformed": (
        '{"format": "icing-profiles", "version": 1, "profiles": [}',
        "malformed JSON",
        "line 1",
    ),
    "unknown-format": (
        {"format": "soundings", "version": 1, "profiles": []},
        "unknown format",
        "format",
    ),
    "unknown-version": (
        {"format": "icing-profiles", "version": 2, "profiles": []},
        "version",
        "version",
    ),
    "ragged": (
        _one_profile_doc(temperature_c=[5.0, -3.0]),
        "ragged",
        "profiles[0].levels.temperature_c",
    ),
    "not-monotonic": (
        _one_profile_doc(pressure_hpa=[1000, 700, 850]),
        "monotonic",
        "profiles[0].levels.pressure_hpa[2]",
    ),
    "repeated-pressure": (
        _one_profile_doc(pressure_hpa=[1000, 850, 850]),
        "monotonic",
        "profiles[0].levels.pressure_hpa[2]",
    ),
    "kelvin-in-celsius": (
        _one_profile_doc(temperature_c=[278.0, 270.0, 263.0]),
        "kelvin",
        "profiles[0].levels.temperature_c[0]",
    ),
    "kelvin-dewpoint": (
        _one_profile_doc(relative_humidity_pct=None, dewpoint_c=[275.0, 268.0, 255.0]),
        "kelvin",
        "profiles[0].levels.dewpoint_c[0]",
    ),
    "pressure-in-pa": (
        _one_profile_doc(pressure_hpa=[100000, 85000, 70000]),
        "pascals",
        "profiles[0].levels.pressure_hpa[0]",
    ),
    "humidity-far-above": (
        _one_profile_doc(relative_humidity_pct=[80, 160, 60]),
        "far outside",
        "profiles[0].levels.relative_humidity_pct[1]",
    ),
    "humidity-negative": (
        _one_profile_doc(relative_humidity_pct=[80, -5, 60]),
        "far outside",
        "profiles[0].levels.relative_humidity_pct[1]",
    ),
    "humidity-fraction-as-kg-kg": (
        _one_profile_doc(relative_humidity_pct=None, specific_humidity_g_kg=[40, 30, 20]),
        "far outside",
        "profiles[0].levels.specific_humidity_g_kg[0]",
    ),
    "no-humidity": (
        _one_profile_doc(relative_humidity_pct=None),
        "no humidity",
        "profiles[0].levels",
    ),
    "missing-temperature": (
        _one_profile_doc(temperature_c=None),
        "temperature_c",
        "profiles[0].levels",
    ),
    "unknown-level-field": (
        _one_profile_doc(humidity=[1, 2, 3]),
        "humidity",
        "profiles[0].levels",
    ),
    "cloud-fraction-percent": (
        _one_profile_doc(cloud_fraction=[0, 80, 100]),
        "out of range",
        "profiles[0].levels.cloud_fraction[1]",
    ),
}


@pytest.mark.parametrize("case", sorted(BAD_JSON))
def test_bad_profile_json_gives_one_line_error(tmp_path, case):
    doc, words, where = BAD_JSON[case]
    err = _error(tmp_path, doc)
    assert words in err.one_line()
    assert err.where is not None and err.where.startswith(where)


@pytest.mark.parametrize(
    "field, value, words",
    [
        ("valid_time", "2027-01-14T12:00:00", "no time zone"),
        ("valid_time", "14/01/2027 12:00", "not ISO 8601"),
        ("valid_time", 20270114, "type"),
        ("lat", 95.0, "maximum"),
        ("precipitation_rate_mm_h", -1.0, "minimum"),
        ("surface_pressure_hpa", 101325.0, "out of range"),
    ],
)
def test_bad_profile_fields(tmp_path, field, value, words):
    doc = _one_profile_doc()
    doc["profiles"][0][field] = value
    err = _error(tmp_path, doc)
    assert words in err.one_line()
    assert err.where.startswith("profiles[0]")


def test_time_without_zone_suggests_appending_z(tmp_path):
    doc = _one_profile_doc()
    doc["profiles"][0]["valid_time"] = "2027-01-14T12:00:00"
    err = _error(tmp_path, doc)
    assert "append Z" in err.fix and err.where == "profiles[0].valid_time"


def test_missing_required_profile_field(tmp_path):
    doc = _one_profile_doc()
    del doc["profiles"][0]["lat"]
    err = _error(tmp_path, doc)
    assert "'lat' is a required property" in err.message and err.where == "profiles[0]"


def test_missing_file_and_directory(tmp_path):
    with pytest.raises(ForecastError, match="file not found") as info:
        load_forecast(tmp_path / "nope.json")
    assert info.value.path.endswith("nope.json") and info.value.fix
    with pytest.raises(ForecastError, match="directory"):
        load_forecast(tmp_path)


def test_error_place_in_a_later_profile(tmp_path):
    doc = _doc()
    doc["profiles"][2]["levels"]["temperature_c"][4] = 290.0
    err = _error(tmp_path, doc)
    assert err.where == "profiles[2].levels.temperature_c[4]"


# --------------------------------------------------------------------- humidity limits


def test_relative_humidity_a_little_above_100_is_accepted_and_clipped(tmp_path):
    # model output up to ~110 % over water is normal: accepted, clipped
    fc = load_forecast(_write(tmp_path, _one_profile_doc(relative_humidity_pct=[80, 105, 60])))
    rh = fc.table.levels["relative_humidity"][0]
    np.testing.assert_allclose(rh, [0.80, 1.0, 0.60])
    assert any("clipped" in n for n in fc.describe()["notes"])


def test_relative_humidity_well_above_110_warns(tmp_path):
    path = _write(tmp_path, _one_profile_doc(relative_humidity_pct=[80, 125, 60]))
    with pytest.warns(PlausibilityWarning, match="relative_humidity_pct"):
        load_forecast(path)


def test_dewpoint_slightly_above_temperature_is_clipped(tmp_path):
    doc = _one_profile_doc(relative_humidity_pct=None, dewpoint_c=[4.0, -2.8, -15.0])
    fc = load_forecast(_write(tmp_path, doc))
    td = fc.table.levels["dewpoint"][0]
    t = fc.table.levels["temperature"][0]
    assert np.all(td <= t)
    np.testing.assert_allclose(td[1], t[1])


def test_null_level_values_become_nan(tmp_path):
    fc = load_forecast(_write(tmp_path, _one_profile_doc(temperature_c=[5.0, None, -10.0])))
    t = fc.table.levels["temperature"][0]
    assert np.isnan(t[1]) and np.isfinite(t[[0, 2]]).all()


def test_mixed_humidity_kinds_become_relative_humidity(tmp_path):
    a = _one_profile_doc()
    b = _one_profile_doc(relative_humidity_pct=None, dewpoint_c=[2.0, -4.0, -20.0])
    a["profiles"].append(copy.deepcopy(b["profiles"][0]) | {"id": "Q"})
    fc = load_forecast(_write(tmp_path, a))
    assert fc.table.humidity == "relative_humidity"
    rh = fc.table.levels["relative_humidity"][1]
    # RH from dew point over water, MetPy's saturation law (reference library)
    import metpy.calc as mpcalc
    from metpy.units import units

    expect = mpcalc.relative_humidity_from_dewpoint(
        units.Quantity([5.0, -3.0, -10.0], "degC"), units.Quantity([2.0, -4.0, -20.0], "degC")
    )
    np.testing.assert_allclose(rh, expect.m_as(""), rtol=1e-6)  # same formula, float noise


# --------------------------------------------------------------------- CSV


def test_csv_profiles_equal_json_profiles():
    a = load_forecast(PROFILES_CSV).table
    b = load_forecast(PROFILES).table
    assert list(a.ids) == list(b.ids)
    for key in b.levels:
        np.testing.assert_allclose(a.levels[key], b.levels[key], equal_nan=True)
    np.testing.assert_array_equal(a.time, b.time)


CSV_HEAD = "id,lat,lon,valid_time,pressure_hpa,temperature_c,relative_humidity_pct"


@pytest.mark.parametrize(
    "text, words, where",
    [
        ("id,lat,lon,pressure_hpa,temperature_c,relative_humidity_pct\n", "valid_time", "line 1"),
        (
            "id,lat,lon,valid_time,pressure_hpa,temperature_c\nP,57,-24,2027-01-14T12:00Z,1000,5\n",
            "humidity",
            "line 1",
        ),
        (CSV_HEAD + ",wind\nP,57,-24,2027-01-14T12:00Z,1000,5,80,3\n", "unknown column", "line 1"),
        (
            CSV_HEAD
            + "\nP,57,-24,2027-01-14T12:00Z,1000,5,80\nP,57,-24,2027-01-14T12:00Z,850,x,90\n",
            "not a number",
            "line 3, column temperature_c",
        ),
        (
            CSV_HEAD
            + "\nP,57,-24,2027-01-14T12:00Z,1000,5,80\nP,57.5,-24,2027-01-14T12:00Z,850,1,90\n",
            "differs",
            "lines 2-3, column lat",
        ),
        (
            CSV_HEAD
            + "\nP,57,-24,2027-01-14T12:00Z,1000,5,80\nP,57,-24,2027-01-14T12:00Z,1000,1,90\n",
            "monotonic",
            "line 3, column pressure_hpa",
        ),
        (
            CSV_HEAD
            + "\nP,57,-24,2027-01-14T12:00,1000,5,80\nP,57,-24,2027-01-14T12:00,850,1,90\n",
            "no time zone",
            "lines 2-3, column valid_time",
        ),
        (
            CSV_HEAD
            + "\nP,57,-24,2027-01-14T12:00Z,1000,280,80\nP,57,-24,2027-01-14T12:00Z,850,1,90\n",
            "kelvin",
            "line 2, column temperature_c",
        ),
        (
            CSV_HEAD
            + "\nP,97,-24,2027-01-14T12:00Z,1000,5,80\nP,97,-24,2027-01-14T12:00Z,850,1,90\n",
            "out of range",
            "lines 2-3, column lat",
        ),
        (CSV_HEAD + "\nP,57,-24,2027-01-14T12:00Z,1000,5,80\n", "fewer than 2 levels", "line"),
        (CSV_HEAD + "\n", "no data rows", None),
    ],
)
def test_bad_profile_csv(tmp_path, text, words, where):
    err = _error(tmp_path, text, name="p.csv")
    assert words in err.one_line()
    if where:
        assert err.where.startswith(where)


# --------------------------------------------------------------------- NetCDF


def _latlon_ds():
    """The lat-lon fixture in memory (a fresh copy, encodings dropped for fast writes)."""
    return mf.in_memory(LATLON)


def _to_nc(ds, tmp_path, name="f.nc"):
    p = tmp_path / name
    ds.to_netcdf(p)
    return p


def test_malformed_netcdf(tmp_path):
    p = tmp_path / "broken.nc"
    p.write_bytes(b"\x89HDF\r\n\x1a\n" + b"\x00" * 64)
    with pytest.raises(ForecastError, match="not a readable NetCDF") as info:
        load_forecast(p)
    assert info.value.path == str(p) and info.value.fix


def test_unknown_format(tmp_path):
    p = tmp_path / "f.bin"
    p.write_bytes(bytes(range(7)) * 3)
    with pytest.raises(ForecastError, match="unknown forecast format"):
        load_forecast(p)


def test_no_temperature_names_the_var_option(tmp_path):
    ds = _latlon_ds().drop_vars("t")
    with pytest.raises(ForecastError, match="temperature") as info:
        load_forecast(_to_nc(ds, tmp_path))
    assert "--var temperature=NAME" in info.value.fix


def test_no_humidity(tmp_path):
    ds = _latlon_ds().drop_vars("r")
    with pytest.raises(ForecastError, match="humidity") as info:
        load_forecast(_to_nc(ds, tmp_path))
    assert "--var" in info.value.fix


@pytest.mark.parametrize(
    "name, units, words, where",
    [
        ("t", "degC", "implausible", "variable t"),  # kelvin values labelled Celsius
        ("r", "bananas", "not understood", "variable r"),
        ("u", "K", "cannot be converted", "variable u"),
    ],
)
def test_bad_units_attribute(tmp_path, name, units, words, where):
    ds = _latlon_ds()
    ds[name].attrs["units"] = units
    with pytest.raises(ForecastError, match=words) as info:
        load_forecast(_to_nc(ds, tmp_path))
    assert info.value.where == where and info.value.fix


def test_model_levels_are_refused(tmp_path):
    ds = _latlon_ds().rename({"pressure": "hybrid"})
    ds["hybrid"] = (
        "hybrid",
        np.arange(ds.sizes["hybrid"], dtype=float),
        {"positive": "down", "long_name": "model level"},
    )
    with pytest.raises(ForecastError, match="model levels"):
        load_forecast(_to_nc(ds, tmp_path))


def test_extra_member_dimension_forms_members(tmp_path):
    # a member dimension forms an ensemble (docs/contracts.md, section 8)
    ds = _latlon_ds()
    ds["t"] = ds["t"].expand_dims(number=[0, 1]).copy()
    fc = load_forecast(_to_nc(ds, tmp_path))
    assert fc.kind == "ensemble" and fc.labels == ("number 0", "number 1")


def test_var_map_errors(tmp_path):
    with pytest.raises(ForecastError, match="unknown variable key") as info:
        load_forecast(LATLON, var_map={"temp": "t"})
    assert "temperature" in info.value.fix
    with pytest.raises(ForecastError, match="not in the file"):
        load_forecast(LATLON, var_map={"temperature": "nope"})
    with pytest.raises(ForecastError, match="vertical dimension"):
        load_forecast(LATLON, var_map={"temperature": "sp"})
    with pytest.raises(ForecastError, match="gridded files only"):
        load_forecast(PROFILES, var_map={"temperature": "t"})


@pytest.mark.parametrize("units, scale", [("K", 1.0), ("degC", 1.0)])
def test_temperature_units(tmp_path, units, scale):
    ds = _latlon_ds()
    if units == "degC":
        ds["t"] = ds["t"] - 273.15
    ds["t"].attrs.update(units=units, standard_name="air_temperature")
    fc = load_forecast(_to_nc(ds, tmp_path))
    t = np.datetime64("2027-01-14T12:00", "ms")
    cs = fc.columns_at([57.0], [-24.5], [t])
    ref = _latlon_ds()["t"].sel(latitude=57.0, longitude=-24.5, time=t).values
    np.testing.assert_allclose(cs.columns["temperature"][0], ref, atol=1e-4)  # float32 input


def test_geopotential_is_divided_by_g(tmp_path):
    from icing.constants import G

    ds = _latlon_ds()
    ds["gh"] = ds["gh"] * G
    ds["gh"].attrs.update(units="m2 s-2", standard_name="geopotential")
    fc = load_forecast(_to_nc(ds, tmp_path))
    t = np.datetime64("2027-01-14T12:00", "ms")
    cs = fc.columns_at([57.0], [-24.5], [t])
    ref = _latlon_ds()["gh"].sel(latitude=57.0, longitude=-24.5, time=t).values
    np.testing.assert_allclose(cs.columns["height"][0], ref, rtol=1e-6)  # float32 round trip


def test_units_guessed_when_missing_are_stated(tmp_path):
    ds = _latlon_ds()
    del ds["r"].attrs["units"]
    fc = load_forecast(_to_nc(ds, tmp_path))
    assert "assumed" in fc.describe()["variables"]["relative_humidity"]["units"]
    t = np.datetime64("2027-01-14T12:00", "ms")
    rh = fc.columns_at([57.0], [-24.5], [t]).columns["relative_humidity"]
    assert np.nanmax(rh) <= 1.0 and np.nanmax(rh) > 0.9


def test_specific_humidity_in_g_per_kg(tmp_path):
    from icing.calc.thermo import specific_humidity_from_relative_humidity

    ds = _latlon_ds()
    p = ds["pressure"] * 100.0
    q = specific_humidity_from_relative_humidity(
        p.values[None, :, None, None], ds["t"].values, ds["r"].values / 100.0
    )
    ds["q"] = (
        ds["t"].dims,
        (q * 1000.0).astype(np.float32),
        {"standard_name": "specific_humidity", "units": "g kg-1"},
    )
    ds = ds.drop_vars("r")
    fc = load_forecast(_to_nc(ds, tmp_path))
    assert fc.humidity == "specific_humidity"
    t = np.datetime64("2027-01-14T12:00", "ms")
    cs = fc.columns_at([57.0], [-24.5], [t])
    iy, ix = 14, 26  # 57.0 N, 24.5 W on the 0.25 deg grid (latitude descending)
    np.testing.assert_allclose(cs.columns["specific_humidity"][0], q[1, :, iy, ix], rtol=1e-6)


def test_parse_time():
    assert parse_time("2027-01-14T13:00:00+01:00") == np.datetime64("2027-01-14T12:00", "ms")
    with pytest.raises(ForecastError, match="no time zone"):
        parse_time("2027-01-14T12:00:00", path="x.json", where="t")


def test_lead_time_files_with_different_units_are_refused(tmp_path):
    # Reads apply the first file's names and unit conversions to every file: a second
    # file in degC must be refused, not read as temperatures near 0 K.
    import xarray as xr

    from icing.errors import ForecastError
    from icing.forecast import load_forecast

    with xr.open_dataset(ROOT / "fixtures" / "skerrow-latlon.nc") as ds:
        ds = ds.load()
    first, second = tmp_path / "lead0.nc", tmp_path / "lead1.nc"
    ds.isel(time=[0]).to_netcdf(first)
    later = ds.isel(time=[1]).copy()
    later["t"] = later["t"] - 273.15
    later["t"].attrs = {**ds["t"].attrs, "units": "degC"}
    later.to_netcdf(second)
    with pytest.raises(ForecastError, match="variable 'temperature'"):
        load_forecast([first, second])


def test_profile_csv_row_with_extra_cells_is_one_line_error(tmp_path):
    from icing.errors import ForecastError
    from icing.forecast import load_forecast

    src = (ROOT / "fixtures" / "skerrow-profiles.csv").read_text().splitlines()
    src[1] = src[1] + ",99,98"
    bad = tmp_path / "extra.csv"
    bad.write_text("\n".join(src) + "\n")
    with pytest.raises(ForecastError, match="more cells than header columns"):
        load_forecast(bad)


def test_reference_time_and_step_become_valid_times(tmp_path):
    # files converted from GRIB keep (reference time, step) with a 2-D valid time: read
    # as valid times, the same columns as the file with one time axis (reading rules)
    ds = _latlon_ds()
    ref = np.datetime64("2027-01-14T00:00", "ns")
    steps = (ds["time"].values - ref).astype("timedelta64[ns]")
    two = ds.rename(time="step").assign_coords(step=steps).expand_dims(time=[ref])
    two = two.assign_coords(valid_time=(("time", "step"), (ref + steps)[None, :]))
    path = tmp_path / "steps.nc"
    for var in two.variables.values():
        var.encoding = {}
    two.to_netcdf(path)
    fc = load_forecast(path)
    assert fc.valid_times.size == 3
    t = np.datetime64("2027-01-14T09:00", "ms")
    a = fc.columns_at([57.1], [-24.3], [t]).columns
    b = load_forecast(LATLON).columns_at([57.1], [-24.3], [t]).columns
    for key in b:
        np.testing.assert_allclose(a[key], b[key], rtol=1e-6, err_msg=key)
    assert any("(reference time, step)" in n for n in fc.describe()["notes"])


def test_one_member_of_a_netcdf_ensemble_with_member(tmp_path):
    ds = _latlon_ds()
    for name in ("t", "r", "gh"):
        ds[name] = xr.concat([ds[name], ds[name] + 1.0], dim="number").assign_coords(number=[0, 1])
    path = _to_nc(ds, tmp_path)
    t = np.datetime64("2027-01-14T12:00", "ms")
    one = load_forecast(path, member=1).columns_at([57.0], [-24.5], [t]).columns["temperature"]
    ref = load_forecast(LATLON).columns_at([57.0], [-24.5], [t]).columns["temperature"]
    np.testing.assert_allclose(one, ref + 1.0, rtol=1e-6)  # member 1 is member 0 + 1 K
    with pytest.raises(ForecastError, match="member 5 is not in"):
        load_forecast(path, member=5)


# ------------------------------------------------------------ netCDF4 view vs xarray view

_REPO = Path(__file__).resolve().parents[1]
_REPO_NETCDF = sorted(  # the gridded ones (CF profile files are soundings)
    p.relative_to(_REPO)
    for folder in ("fixtures", "icing/data/demo", "tests/data/real")
    for p in (_REPO / folder).glob("*.nc")
    if "profile" not in p.name
)


def _sources(path, monkeypatch, *, through_xarray):
    """The GridSources of ``path``, the metadata read through netCDF4 or through xarray."""
    import icing.forecast.netcdf as ncmod

    with monkeypatch.context() as m:
        if through_xarray:
            m.setattr(ncmod, "nc_view", lambda nc, lock: None)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return load_forecast(path).sources


def _same_source(a, b):
    """Two GridSources hold the same discovery, provenance, frame and field values."""
    names = ("format", "provenance", "grid", "vertical", "height_above_ground", "notes")
    names += ("tile_hint", "member", "member_dim", "members", "member_labels", "path")
    for name in names:
        assert getattr(a, name) == getattr(b, name), name
    for name in ("times", "y", "x", "levels"):
        assert np.array_equal(getattr(a, name), getattr(b, name)), name
    assert a.issue_time == b.issue_time or (a.issue_time is None and b.issue_time is None)
    assert (a.crs is None) == (b.crs is None) and (a.crs is None or a.crs == b.crs)
    assert repr(a.grid_mapping) == repr(b.grid_mapping)
    assert list(a.fields) == list(b.fields)
    ys, xs = slice(0, min(a.y.size, 9)), slice(0, min(a.x.size, 9))
    for key in a.fields:
        va, vb = a.fields[key].read(slice(0, 1), ys, xs), b.fields[key].read(slice(0, 1), ys, xs)
        assert np.array_equal(va, vb, equal_nan=True), key


@pytest.mark.parametrize("rel", _REPO_NETCDF, ids=str)
def test_netcdf4_view_reads_every_repository_file_as_xarray_does(rel, monkeypatch):
    """Where the netCDF4 view serves, the forecast is the xarray view's, field for field.

    The variable discovery reads a NetCDF file's metadata through netCDF4 alone (no
    xarray import on a screening's path); files needing more of xarray's decoding
    fall back to it. Either way the result must be the one xarray's view gives.
    """
    path = _REPO / rel
    fast = _sources(path, monkeypatch, through_xarray=False)
    slow = _sources(path, monkeypatch, through_xarray=True)
    assert len(fast) == len(slow)
    for a, b in zip(fast, slow, strict=True):
        _same_source(a, b)


def test_netcdf4_view_serves_the_cf_fixtures_and_refuses_what_needs_xarray(tmp_path):
    """The view is used for the plain CF files and declines packed values and time spans."""
    import netCDF4

    from icing.forecast.ncview import nc_view
    from icing.forecast.netcdf import NETCDF_LOCK

    for rel in ("fixtures/skerrow-latlon.nc", "fixtures/skerrow-lcc.nc"):
        with netCDF4.Dataset(_REPO / rel) as nc:
            view = nc_view(nc, NETCDF_LOCK)
            assert view is not None
            ref = xr.open_dataset(_REPO / rel)
            assert list(view.data_vars) == list(ref.data_vars)
            assert set(view.coords) == set(ref.coords)
            assert dict(view.sizes) == dict(ref.sizes)
            for name in ref.variables:
                assert view[name].dims == ref[name].dims, name
                assert set(view[name].attrs) == set(ref[name].attrs), name
                assert view[name].dtype == ref[name].dtype or name in ref.coords, name
            ref.close()
    ds = _latlon_ds()
    packed = ds.copy()
    packed["t"].encoding.update(
        dtype="int16", scale_factor=0.01, add_offset=250.0, _FillValue=-32768
    )
    span = ds.assign(lead=("time", np.arange(ds.sizes["time"], dtype=float)))
    span["lead"].attrs["units"] = "hours"
    for name, case in (("packed.nc", packed), ("span.nc", span)):
        p = _to_nc(case, tmp_path, name)
        with netCDF4.Dataset(p) as nc:
            assert nc_view(nc, NETCDF_LOCK) is None, name
        load_forecast(p)  # read through xarray instead


def test_netcdf4_view_masks_fill_values_and_decodes_times_as_xarray(tmp_path, monkeypatch):
    """Fill values, integer promotion and CF times come out of both views alike."""
    ds = _latlon_ds()
    t = ds["t"].values.copy()
    t[0, 0, 0, 0] = np.nan
    ds["t"] = (ds["t"].dims, t, ds["t"].attrs)
    ds["t"].encoding["_FillValue"] = -999.0
    ds["time"].encoding.update(units="minutes since 2027-01-14T00:00:00Z", dtype="int32")
    p = _to_nc(ds, tmp_path)
    import netCDF4

    from icing.forecast.ncview import nc_view
    from icing.forecast.netcdf import NETCDF_LOCK

    with netCDF4.Dataset(p) as nc:
        assert nc_view(nc, NETCDF_LOCK) is not None  # the case is the view's own
    fast = _sources(p, monkeypatch, through_xarray=False)
    slow = _sources(p, monkeypatch, through_xarray=True)
    for a, b in zip(fast, slow, strict=True):
        _same_source(a, b)


# ------------------------------------------------------------ raw block reads


def _every_variable_read_both_ways(path):
    """Each variable of ``path`` read whole by netCDF4's decoding and by the raw read."""
    import netCDF4

    from icing.forecast.fields import plain_fill_values, read_netcdf4

    with netCDF4.Dataset(path) as nc:
        nc.set_auto_maskandscale(True)
        for name, var in nc.variables.items():
            if np.dtype(var.dtype).kind not in "fiu" or not var.dimensions:
                continue
            fills = plain_fill_values(var)
            ref = read_netcdf4(var, {})
            fast = ref if fills is None else read_netcdf4(var, {}, fills)
            yield name, fills, ref, fast


@pytest.mark.parametrize("rel", _REPO_NETCDF, ids=str)
def test_raw_block_reads_mask_as_netcdf4_does(rel):
    """Plain float variables read raw and masked by their fill values equal netCDF4's reads."""
    for name, _, ref, fast in _every_variable_read_both_ways(_REPO / rel):
        assert np.array_equal(ref, fast, equal_nan=True), name


def test_raw_block_reads_honour_default_fill_and_missing_values(tmp_path):
    """No _FillValue: the library's default fill is missing; missing_value lists; packed data.

    netCDF4 masks a float variable's default fill value when it has no _FillValue,
    every value of a ``missing_value`` list, and decodes packed variables: the raw
    read must give the same, and must step aside for packed ones.
    """
    import netCDF4

    path = tmp_path / "fills.nc"
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("x", 5)
        a = nc.createVariable("a", "f4", ("x",), fill_value=False)
        a[:] = np.array([1, netCDF4.default_fillvals["f4"], np.nan, 3, -1], "f4")
        b = nc.createVariable("b", "f4", ("x",), fill_value=np.float32(np.nan))
        b[:] = [1, 2, np.nan, 4, 5]
        c = nc.createVariable("c", "f8", ("x",), fill_value=-999.0)
        c.missing_value = np.array([-1.0, -2.0])
        c[:] = [1, -999, -1, -2, 5]
        d = nc.createVariable("d", "i2", ("x",), fill_value=-1)
        d.scale_factor, d.add_offset = 0.5, 200.0
        d[:] = np.ma.array([200.0, 201.0, 0.0, 202.5, 199.0], mask=[0, 0, 1, 0, 0])
    got = {name: (fills, fast) for name, fills, _, fast in _every_variable_read_both_ways(path)}
    assert np.isnan(got["a"][1][[1, 2]]).all() and got["a"][1][4] == -1.0
    assert np.array_equal(got["c"][1], [1, np.nan, np.nan, np.nan, 5], equal_nan=True)
    assert got["d"][0] is None  # packed: netCDF4 decodes it
    assert np.array_equal(got["d"][1], [200.0, 201.0, np.nan, 202.5, 199.0], equal_nan=True)
