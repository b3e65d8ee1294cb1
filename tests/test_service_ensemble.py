"""The service and ensemble forecasts: the catalogue lists members, screen and profile use them.

The ensemble is the ``gfs_ensemble`` fixture's four-member GRIB2 file: built from the
real NCEP GFS file of tests/data/real (origin in its README.md), the control member
the real forecast, the others dried (an invented perturbation of our own). Answers are
compared with the same calls through the library, never with values typed here.
"""

from __future__ import annotations

import asyncio
import json
import logging
import shutil
from pathlib import Path

import jsonschema
import pytest

pytest.importorskip("fastapi")

from fastapi.testclient import TestClient  # noqa: E402

from icing.caution import CAUTION  # noqa: E402
from icing.service import ServiceConfig, create_app  # noqa: E402

REPO = Path(__file__).resolve().parents[1]
ENS = "gfs-members.grib2"
DEMO = "skerrow-demo.nc"


@pytest.fixture(scope="module")
def catalog(gfs_ensemble, tmp_path_factory):
    """A catalogue of the four-member GRIB ensemble and the demo grid."""
    from icing.forecast import demo_forecast_path

    folder = tmp_path_factory.mktemp("ensemble-catalogue")
    shutil.copy(gfs_ensemble.grib, folder / ENS)
    shutil.copy(demo_forecast_path(), folder / DEMO)
    return folder


@pytest.fixture(scope="module")
def client(catalog):
    cfg = ServiceConfig(catalog=catalog, workers=1, rate_per_s=0)
    with TestClient(create_app(cfg)) as c:
        yield c


@pytest.fixture(scope="module")
def lakes(gfs_ensemble):
    """The lakes route of the ensemble fixture as a GeoJSON route, and its departure."""
    coords = [[lon, lat, z] for lat, lon, z in ((w.lat, w.lon, w.altitude_m)
              for w in gfs_ensemble.route.waypoints)]  # fmt: skip
    depart = gfs_ensemble.departure.strftime("%Y-%m-%dT%H:%M:%SZ")
    feature = {
        "type": "Feature",
        "properties": {"name": gfs_ensemble.route.name, "departure_time": depart},
        "geometry": {"type": "LineString", "coordinates": coords},
    }
    return feature


def _one_line(r, field):
    body = r.json()
    assert body["field"] == field, body
    detail = body["detail"]
    assert "\n" not in detail and "Traceback" not in detail and "fix" in detail
    return detail


def test_forecasts_list_the_members(client, catalog):
    r = client.get("/v1/forecasts")
    assert r.status_code == 200
    by_id = {f["id"]: f for f in r.json()["forecasts"]}
    ens = by_id[ENS]
    assert ens["status"] == "available" and ens["kind"] == "ensemble"
    assert [m["index"] for m in ens["members"]] == [0, 1, 2, 3]
    assert ens["members"][0]["label"] == "number 0 (control)"
    assert ens["vertical"] == "pressure" and ens["levels"]
    assert "members" not in by_id[DEMO] or by_id[DEMO]["members"] is None
    assert str(catalog) not in r.text


def test_screen_an_ensemble_as_the_library_does(client, lakes, gfs_ensemble):
    from icing import load_forecast
    from icing.hazards import feature_collection
    from icing.route.readers import read_geojson_routes
    from icing.runs import ScreenOptions, screen_routes

    body = {"route": lakes, "forecast": ENS, "airframe": "light-piston"}
    r = client.post("/v1/screen", json=body)
    assert r.status_code == 200, r.text
    fc = r.json()
    schema = json.loads((REPO / "icing" / "data" / "schemas" / "hazards-v1.json").read_text())
    jsonschema.validate(fc, schema)
    assert fc["caution"] == CAUTION
    s = fc["summaries"][0]
    assert s["members"] == 4 and s["member_statistic"] == "median"
    routes = read_geojson_routes(json.dumps(lakes), path=None)
    lib = feature_collection(
        screen_routes(
            routes,
            load_forecast(gfs_ensemble.grib),
            airframe="light-piston",
            options=ScreenOptions(step_km=1.0),
        )  # fmt: skip
    )
    want = lib["summaries"][0]
    for key in (
        "worst_severity",
        "severity_worst_member",
        "member_fraction",
        "members_covering_min",
    ):
        assert s[key] == want[key], key
    props = [f["properties"] for f in fc["features"]]
    assert props and all(p["members"] == 4 and "member_fraction" in p for p in props)
    assert [p["severity_worst_member"] for p in props] == [
        f["properties"]["severity_worst_member"] for f in lib["features"]
    ]


def test_member_statistic_is_a_request_field(client, lakes):
    body = {"route": lakes, "forecast": ENS, "airframe": "light-piston"}
    worst = client.post("/v1/screen", json={**body, "member_statistic": "worst"})
    assert worst.status_code == 200
    s = worst.json()["summaries"][0]
    assert s["member_statistic"] == "worst" and s["worst_severity"] == s["severity_worst_member"]
    bad = client.post("/v1/screen", json={**body, "member_statistic": "p20"})
    assert bad.status_code == 422
    assert "member_statistic" in _one_line(bad, "member_statistic")


def test_profile_of_one_member_or_a_one_line_422(client, gfs_ensemble):
    from icing import load_forecast
    from icing.runs import diagnose_point

    at = {"forecast": ENS, "lat": 43.0, "lon": -86.0, "airframe": "light-piston"}
    r = client.post("/v1/profile", json=at)
    assert r.status_code == 422  # never a 503 "could not be read"
    detail = _one_line(r, "member")
    assert "ensemble of 4 members" in detail and "member" in detail and "0..3" in detail
    r = client.post("/v1/profile", json={**at, "member": 0})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["member"] == {"index": 0, "label": "number 0 (control)", "members": 4}
    lib = diagnose_point(load_forecast(gfs_ensemble.grib, member=0), 43.0, -86.0,
                         airframe="light-piston")  # fmt: skip
    assert [lv["severity"] for lv in body["levels"]] == [lv["severity"] for lv in lib["levels"]]
    assert client.post("/v1/profile", json={**at, "member": 7}).status_code == 422
    single = client.post("/v1/profile", json={**at, "forecast": DEMO, "lat": 57.0,
                                              "lon": -24.5, "member": 0})  # fmt: skip
    assert single.status_code == 422 and "single forecast" in _one_line(single, "member")


def test_warm_up_opens_an_ensemble_without_a_failure(catalog, caplog):
    from icing.service.app import _warm_up
    from icing.service.catalog import Catalogue
    from icing.service.jobs import ForecastStore, run_job
    from icing.service.pool import JobPool

    cat = Catalogue(catalog)
    cat.refresh(force=True)
    refs = [e.ref() for e in cat.entries()]
    status, body, _ = run_job({"kind": "open", "refs": refs, "airframe": "light-piston"},
                              ForecastStore())  # fmt: skip
    assert status == 200 and json.loads(body)["opened"] == 2

    async def warm():
        pool = JobPool(0, run_timeout_s=60, queue_limit=4, queue_timeout_s=60)
        await pool.start()
        try:
            await _warm_up(cat, pool)
        finally:
            await pool.close()

    with caplog.at_level(logging.WARNING, logger="icing.service"):
        asyncio.run(warm())
    assert not [r for r in caplog.records if r.levelno >= logging.WARNING], caplog.text
