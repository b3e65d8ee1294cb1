"""Unit slips at the gridded readers' edge: refused in one line, or corrected and said.

The forecasts are the invented Skerrow Basin scenario (fixtures/make_fixtures.py) with
one slip each written in; the corrected file must give the same columns as the
original (a consequence of the reading rules, not a physics value).
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest

from icing.cli import main
from icing.constants import G
from icing.errors import ForecastError
from icing.forecast import load_forecast

ROOT = Path(__file__).resolve().parents[1]
LATLON = ROOT / "fixtures" / "skerrow-latlon.nc"
T12 = np.datetime64("2027-01-14T12:00", "ms")
_spec = importlib.util.spec_from_file_location(
    "make_fixtures", ROOT / "fixtures" / "make_fixtures.py"
)
mf = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(mf)


def _write(ds, tmp_path, name="slip.nc"):
    for var in ds.variables.values():
        var.encoding = {k: v for k, v in var.encoding.items() if k in ("units", "calendar")}
    path = tmp_path / name
    ds.to_netcdf(path)
    return path


def _refused(tmp_path, ds, words):
    path = _write(ds, tmp_path)
    with pytest.raises(ForecastError) as info:
        load_forecast(path)
    line = info.value.one_line()
    assert words in line and str(path) in line and "\n" not in line and info.value.fix
    return info.value


def _same_columns(path, keys=("temperature", "relative_humidity", "height")):
    a = load_forecast(path).columns_at([57.1, 58.3], [-24.3, -21.0], [T12, T12])
    b = load_forecast(LATLON).columns_at([57.1, 58.3], [-24.3, -21.0], [T12, T12])
    for key in keys:
        # float32 storage of the edited variable: 1e-5 relative
        np.testing.assert_allclose(a.columns[key], b.columns[key], rtol=1e-5, err_msg=key)


def test_relative_humidity_fraction_in_a_percent_field(tmp_path):
    ds = mf.in_memory(LATLON)
    ds["r"] = ds["r"] / 100.0  # fractions, still labelled %
    ds["r"].attrs.update(units="%", standard_name="relative_humidity")
    err = _refused(tmp_path, ds, "a fraction written in a percent field")
    assert err.where == "variable r"


def test_celsius_labelled_kelvin(tmp_path):
    ds = mf.in_memory(LATLON)
    ds["t"] = ds["t"] - 273.15
    ds["t"].attrs.update(units="K", standard_name="air_temperature")
    _refused(tmp_path, ds, "look like Celsius labelled kelvin")


def test_geopotential_labelled_metres_is_divided_by_g(tmp_path):
    ds = mf.in_memory(LATLON)
    ds["gh"] = ds["gh"] * G  # geopotential values, "m" kept: heights 9.8 x too high
    ds["gh"].attrs.update(units="m", standard_name="geopotential_height")
    path = _write(ds, tmp_path)
    _same_columns(path)
    converted = load_forecast(path).describe()["variables"]["height"]["converted"]
    assert "geopotential (m2 s-2) labelled 'm': divided by g" in converted


def test_pressure_levels_in_pa_labelled_hpa_are_read_as_pa(tmp_path):
    ds = mf.in_memory(LATLON)
    ds = ds.assign_coords(pressure=ds["pressure"] * 100.0)  # Pa values
    ds["pressure"].attrs["units"] = "hPa"
    path = _write(ds, tmp_path)
    _same_columns(path)
    assert any("hold Pa" in n for n in load_forecast(path).describe()["notes"])


def test_pressure_levels_in_hpa_labelled_pa_are_read_as_hpa(tmp_path):
    ds = mf.in_memory(LATLON)
    ds["pressure"].attrs["units"] = "Pa"  # values 1000..300, labelled Pa
    path = _write(ds, tmp_path)
    _same_columns(path)
    assert any("hold hPa" in n for n in load_forecast(path).describe()["notes"])


def test_heights_falling_with_height_are_refused(tmp_path):
    ds = mf.in_memory(LATLON)
    ds["gh"] = ds["gh"].copy(data=ds["gh"].values[:, ::-1])  # levels reversed in one variable
    _refused(tmp_path, ds, "pressure increases with height")


def test_orography_as_geopotential_is_divided_by_g(tmp_path):
    ds = mf.in_memory(LATLON)
    ds["orog"] = ds["orog"] + 2000.0  # some high ground, then written as geopotential
    ds["orog"] = ds["orog"] * G
    ds["orog"].attrs.update(units="m", standard_name="surface_altitude")
    path = _write(ds, tmp_path)
    fc = load_forecast(path)
    z = fc.surface_height_at([57.0], [-24.0])
    assert z[0] == pytest.approx(2000.0, abs=1.0)  # float32 storage of 2000 g
    assert "divided by g" in fc.describe()["variables"]["surface_height"]["converted"]


def test_a_slip_exits_2_in_one_line_from_the_cli(tmp_path, capsys):
    ds = mf.in_memory(LATLON)
    ds["r"] = ds["r"] / 100.0
    ds["r"].attrs.update(units="%")
    path = _write(ds, tmp_path)
    route = ROOT / "routes" / "regional-dispatch.geojson"
    code = main(["screen", str(route), "--forecast", str(path), "-a", "light-piston"])
    err = capsys.readouterr().err.strip()
    assert code == 2 and "\n" not in err and str(path) in err and "percent field" in err
