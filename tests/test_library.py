"""The plugin face: flight-planning software embeds icing as a library (README example).

Contract tests on the demo scenario (invented data; no physics value is checked).
"""

import json
from pathlib import Path

import geojson
import jsonschema
import numpy as np
import pytest
import shapely.geometry

import icing
from icing.caution import CAUTION

ROOT = Path(__file__).resolve().parents[1]
SCHEMA = json.loads((ROOT / "icing" / "data" / "schemas" / "hazards-v1.json").read_text())


@pytest.fixture(scope="module")
def result():
    route = icing.load_route(ROOT / "routes" / "regional-dispatch.geojson")
    forecast = icing.load_forecast(ROOT / "fixtures" / "skerrow-latlon.nc")
    return icing.screen_route(route, forecast, airframe="twin-turboprop")


def test_readme_example_runs(result):
    assert isinstance(result, icing.RouteScreening)
    assert result.summary["worst_severity"] in ("none", "trace", "light", "moderate", "severe")
    assert result.summary["minutes_in_icing"] >= 0
    assert result.summary["caution"] == CAUTION


def test_to_geojson_and_geo_interface(result):
    fc = result.to_geojson()
    assert fc == result.__geo_interface__
    jsonschema.validate(fc, SCHEMA)
    assert geojson.loads(json.dumps(fc)).is_valid
    for f in fc["features"]:
        geom = shapely.geometry.shape(f["geometry"])
        assert geom.is_valid and not geom.is_empty
        assert f["properties"]["caution"] == CAUTION


def test_paths_and_preset_names_are_accepted():
    r = icing.screen_route(
        ROOT / "routes" / "flight-plan.csv",
        ROOT / "fixtures" / "skerrow-profiles.json",
        airframe="light-piston",
    )
    assert r.route_name and len(r.samples.lat) > 10


def test_time_is_counted_once(result):
    s = result.samples
    flight_min = float(np.sum(s.dt_s)) / 60.0
    assert result.summary["flight_time_min"] == pytest.approx(flight_min, abs=0.01)
    by = result.summary["minutes_by_severity"]
    assert sum(by.values()) == pytest.approx(result.summary["minutes_in_icing"], abs=0.05)


def test_samples_at_flight_altitude_match_the_route(result):
    alt_ft = result.at_flight["altitude_ft"]
    assert np.nanmin(alt_ft) >= 2900 and np.nanmax(alt_ft) <= 14100  # route file: 3,000-14,000 ft


def test_bad_airframe_raises_input_error():
    route = icing.load_route(ROOT / "routes" / "regional-dispatch.geojson")
    forecast = icing.load_forecast(ROOT / "fixtures" / "skerrow-profiles.json")
    with pytest.raises(icing.AirframeError):
        icing.screen_route(route, forecast, airframe="no-such-airframe")
