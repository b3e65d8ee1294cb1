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


def _arrays(obj, seen=None):
    """Every numpy array reachable from a screening (fields, dicts, namespaces)."""
    seen = set() if seen is None else seen
    if id(obj) in seen:
        return []
    seen.add(id(obj))
    if isinstance(obj, np.ndarray):
        return [obj]
    if isinstance(obj, dict):
        return [a for v in obj.values() for a in _arrays(v, seen)]
    if isinstance(obj, (list, tuple)):
        return [a for v in obj for a in _arrays(v, seen)]
    if hasattr(obj, "__dict__") or hasattr(obj, "__dataclass_fields__"):
        names = getattr(obj, "__dataclass_fields__", None) or vars(obj)
        return [a for k in names for a in _arrays(getattr(obj, k), seen)]
    return []


def test_screening_is_frozen_and_built_once(result):
    import dataclasses

    with pytest.raises(dataclasses.FrozenInstanceError):
        result.summary = {}
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.curtain.severity = None
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.samples.tas = None
    # the summary holds the candidate altitudes and the caution from the start
    assert "candidate_altitudes_ft" in result.summary and result.summary["caution"] == CAUTION
    # no private key is slipped into the GeoJSON features
    assert all(not k.startswith("_") for f in result.segments for k in f)


def test_screening_keeps_copies_not_views_of_working_arrays(result):
    arrays = _arrays(result)
    assert arrays
    # a view would keep the pipeline's (sample, row, candidate) arrays alive
    assert all(a.base is None for a in arrays), [a.shape for a in arrays if a.base is not None]
    kept = sum(a.nbytes for a in arrays)
    n, rows = result.curtain.severity.shape
    # the curtain's eight (n, a) fields plus about forty per-sample arrays, 8 bytes each;
    # the factor 2 leaves room for object arrays of names (pointers) and small extras
    assert kept < 2 * 8 * (8 * n * rows + 40 * n), kept
