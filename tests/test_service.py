"""The HTTP service in process (FastAPI TestClient): every endpoint and every error status.

Forecasts: the bundled demo grid and the profile fixture (invented Skerrow Basin
scenario, see fixtures/README.md); routes from routes/. The answers are compared with
the same screening through the library, never with values typed here.
"""

import json
from pathlib import Path

import jsonschema
import pytest

from icing.caution import CAUTION

pytest.importorskip("fastapi")

from fastapi.testclient import TestClient  # noqa: E402

from icing.service import ServiceConfig, create_app  # noqa: E402

REPO = Path(__file__).resolve().parents[1]
ROUTE = json.loads((REPO / "routes" / "regional-dispatch.geojson").read_text())
POINTS = json.loads((REPO / "routes" / "flight-levels.geojson").read_text())
DEMO = "skerrow-demo.nc"
STATUSES = (400, 401, 404, 413, 422, 429, 503)


def _screen(**kw):
    body = {"route": ROUTE, "forecast": DEMO, "airframe": "twin-turboprop"}
    body.update(kw)
    return body


def _one_line(response):
    detail = response.json()["detail"]
    assert isinstance(detail, str) and detail
    assert "\n" not in detail and "Traceback" not in detail
    return detail


@pytest.fixture(scope="module")
def client(service_catalog, service_key):
    """Keys on, one worker process, no rate limit."""
    cfg = ServiceConfig(
        catalog=service_catalog, api_keys=service_key.path, workers=1, rate_per_s=0
    )
    with TestClient(create_app(cfg)) as c:
        c.headers.update(service_key.headers)
        yield c


@pytest.fixture
def make_client(service_catalog):
    """Build an in-process client for other settings (computations inline: fast to start)."""
    opened = []

    def make(**kw):
        kw.setdefault("catalog", service_catalog)
        kw.setdefault("workers", 0)
        kw.setdefault("rate_per_s", 0)
        c = TestClient(create_app(ServiceConfig(**kw)))
        c.__enter__()
        opened.append(c)
        return c

    yield make
    for c in opened:
        c.__exit__(None, None, None)


# ----------------------------------------------------------------------------- endpoints


def test_health_is_open_and_states_the_limits(client):
    r = client.get("/v1/health", headers={"Authorization": ""})
    assert r.status_code == 200
    body = r.json()
    assert body["status"] == "ok" and body["auth"] is True
    assert body["forecasts_available"] == 2
    assert body["limits"]["max_body_bytes"] == 1_048_576
    assert body["workers"]["mode"] == "processes"


def test_airframes_lists_the_presets(client):
    from icing.airframes import list_airframes

    r = client.get("/v1/airframes")
    assert r.status_code == 200
    assert [a["name"] for a in r.json()["airframes"]] == [a.name for a in list_airframes()]


def test_forecasts_give_ids_times_and_domains_never_paths(client, service_catalog):
    r = client.get("/v1/forecasts")
    assert r.status_code == 200
    by_id = {f["id"]: f for f in r.json()["forecasts"]}
    assert set(by_id) == {"skerrow-demo.nc", "skerrow-profiles.json"}
    demo = by_id[DEMO]
    assert demo["status"] == "available" and demo["kind"] == "grid"
    assert demo["valid_from"] == "2027-01-14T06:00:00Z"
    assert demo["valid_to"] == "2027-01-14T18:00:00Z"
    assert demo["bounds"] == [-31.0, 53.5, -17.0, 60.5]  # fixtures/README.md, the domain
    assert str(service_catalog) not in r.text


def test_screen_returns_the_library_feature_collection(client, service_catalog):
    from icing import load_forecast
    from icing.hazards import feature_collection
    from icing.route.readers import read_geojson_routes
    from icing.runs import screen_routes

    r = client.post("/v1/screen", json=_screen())
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("application/geo+json")
    fc = r.json()
    schema = json.loads((REPO / "icing" / "data" / "schemas" / "hazards-v1.json").read_text())
    jsonschema.validate(fc, schema)
    assert fc["caution"] == CAUTION
    assert all(f["properties"]["caution"] == CAUTION for f in fc["features"])
    assert str(service_catalog) not in r.text
    assert fc["provenance"]["forecast"] == DEMO and fc["provenance"]["files"] == [DEMO]
    # the same screening through the library (the service adds only the request's verdict)
    routes = read_geojson_routes(json.dumps(ROUTE))
    lib = feature_collection(
        screen_routes(routes, load_forecast(service_catalog / DEMO), airframe="twin-turboprop")
    )
    lib = json.loads(json.dumps(lib, default=str))
    assert fc["features"] == lib["features"]
    assert fc["summaries"] == lib["summaries"]


def test_screen_outcome_fails_closed(client):
    """Contracts, section 5: a coverage gap meets fail_on unless gaps are accepted."""
    plain = client.post("/v1/screen", json=_screen(fail_on="severe")).json()
    worst = plain["summaries"][0]["worst_severity"]
    assert worst != "severe" and plain["summaries"][0]["gap_km"] == 0
    assert plain["summaries"][0]["outcome"] == "not-met"
    assert plain["outcome"]["result"] == "not-met"
    met = client.post("/v1/screen", json=_screen(fail_on=worst)).json()
    assert met["summaries"][0]["outcome"] == "met" and met["outcome"]["routes_met"]
    # the same route carried west out of the forecast domain (lon -31..-17): a gap
    out = json.loads(json.dumps(ROUTE))
    out["geometry"]["coordinates"][0][0] = -33.0
    gap = client.post("/v1/screen", json=_screen(route=out, fail_on="severe")).json()
    assert gap["summaries"][0]["gap_km"] > 0
    assert gap["summaries"][0]["outcome"] == "met"
    assert "coverage gap" in gap["summaries"][0]["outcome_reason"]
    ok = client.post("/v1/screen", json=_screen(route=out, fail_on="severe", accept_gaps=True))
    assert ok.json()["summaries"][0]["outcome"] == "incomplete"


def test_screen_waypoints_several_routes_and_departure(client):
    r = client.post(
        "/v1/screen",
        json=_screen(route=POINTS, forecast="skerrow-profiles.json", airframe="regional-jet"),
    )
    assert r.status_code == 200 and len(r.json()["summaries"]) == 1
    two = {
        "type": "FeatureCollection",
        "features": [dict(ROUTE, properties=dict(ROUTE["properties"], name=n)) for n in "AB"],
    }
    r = client.post("/v1/screen", json=_screen(route=two, depart="2027-01-14T10:00:00+01:00"))
    assert r.status_code == 200
    fc = r.json()
    assert [s["route"] for s in fc["summaries"]] == ["A", "B"]
    first = min(f["properties"]["start_time"] for f in fc["features"])
    assert first.startswith("2027-01-14T09:00")  # +01:00 read as 09:00 UTC


def test_profile_column_and_coverage_gap(client):
    body = {"forecast": DEMO, "lat": 57.0, "lon": -24.5, "airframe": "light-piston"}
    r = client.post("/v1/profile", json=dict(body, time="2027-01-14T12:00:00Z"))
    assert r.status_code == 200
    p = r.json()
    assert p["covered"] is True and p["caution"] == CAUTION
    assert p["time"] == "2027-01-14T12:00:00Z" and len(p["levels"]) == 21
    assert any(lv["cloud"] for lv in p["levels"])  # the stratiform deck (fixtures/README.md)
    gap = client.post("/v1/profile", json=dict(body, lat=-10.0)).json()
    assert gap["covered"] is False and gap["levels"] == [] and gap["caution"] == CAUTION


# ----------------------------------------------------------------------------- errors


def test_400_body_not_a_json_object(client):
    for raw in (b"{not json", b"[1, 2]", b""):
        r = client.post("/v1/screen", content=raw, headers={"content-type": "application/json"})
        assert r.status_code == 400, raw
        assert _one_line(r).startswith("body:")


def test_401_without_or_with_a_wrong_key(client):
    for headers in ({"Authorization": ""}, {"Authorization": "Bearer nope"}, {"X": "y"}):
        for method, path in (("get", "/v1/forecasts"), ("post", "/v1/screen")):
            c = TestClient(client.app)  # no default key
            r = getattr(c, method)(path, headers=headers)
            assert r.status_code == 401
            assert r.headers["www-authenticate"].startswith("Bearer")
            assert "Authorization" in _one_line(r)


def test_404_unknown_forecast_and_path(client):
    r = client.post("/v1/screen", json=_screen(forecast="gfs-yesterday.nc"))
    assert r.status_code == 404 and r.json()["field"] == "forecast"
    assert "GET /v1/forecasts" in _one_line(r)
    r = client.post(
        "/v1/profile", json={"forecast": "../etc", "lat": 0, "lon": 0, "airframe": "light-piston"}
    )
    assert r.status_code == 404
    assert client.get("/v1/nothing").status_code == 404


def test_413_body_too_large_declared_or_streamed(make_client):
    c = make_client(max_body_bytes=500)
    r = c.post("/v1/screen", json=_screen())  # about 700 bytes
    assert r.status_code == 413 and "500 bytes" in _one_line(r)

    def chunks():  # no Content-Length: counted as it arrives
        for _ in range(10):
            yield b" " * 500

    r = c.post("/v1/screen", content=chunks(), headers={"content-type": "application/json"})
    assert r.status_code == 413


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"route": None}, "route"),
        ({"airframe": "/etc/passwd"}, "airframe"),
        ({"airframe": "my-aircraft.toml"}, "airframe"),
        ({"depart": "2027-01-14T09:00:00"}, "depart"),
        ({"depart": "tomorrow"}, "depart"),
        ({"fail_on": "extreme"}, "fail_on"),
        ({"forecast": ""}, "forecast"),
        ({"departure": "2027-01-14T09:00:00Z"}, "departure"),
        ({"route": {"type": "Feature", "geometry": {"type": "Polygon"}}}, "route"),
        (
            {
                "route": {
                    "type": "Feature",
                    "properties": {},
                    "geometry": {
                        "type": "LineString",
                        "coordinates": [[-26, 56.5, 900], [-25, 99, 900]],
                    },
                }
            },
            "route",
        ),
    ],
)
def test_422_names_the_field_and_the_fix(client, change, field):
    body = _screen(**change)
    if change.get("route", 0) is None:
        del body["route"]
    r = client.post("/v1/screen", json=body)
    assert r.status_code == 422
    assert r.json()["field"] == field
    line = _one_line(r)
    assert line.startswith(field) and "fix:" in line


def test_422_route_without_time_names_depart(client):
    bare = json.loads(json.dumps(ROUTE))
    del bare["properties"]["departure_time"]
    r = client.post("/v1/screen", json=_screen(route=bare))
    assert r.status_code == 422 and "depart" in _one_line(r)
    assert (
        client.post(
            "/v1/screen", json=_screen(route=bare, depart="2027-01-14T09:00:00Z")
        ).status_code
        == 200
    )


def test_422_profile_position_out_of_range(client):
    for lat, lon in ((91, 0), (0, 200)):
        r = client.post(
            "/v1/profile",
            json={"forecast": DEMO, "lat": lat, "lon": lon, "airframe": "light-piston"},
        )
        assert r.status_code == 422 and r.json()["field"] in ("lat", "lon")


def test_422_route_points_and_samples_are_bounded(make_client):
    c = make_client(max_positions=5, max_samples=100)
    r = c.post("/v1/screen", json=_screen())  # 7 positions
    assert r.status_code == 422 and "at most 5" in _one_line(r)
    short = json.loads(json.dumps(ROUTE))
    short["geometry"]["coordinates"] = short["geometry"]["coordinates"][:3]
    short["properties"]["waypoint_names"] = short["properties"]["waypoint_names"][:3]
    r = c.post("/v1/screen", json=_screen(route=short))  # ~190 km: ~190 samples
    assert r.status_code == 422 and "samples" in _one_line(r) and "split" in _one_line(r)


def test_429_rate_limit_per_key_with_retry_after(make_client, service_key):
    c = make_client(api_keys=service_key.path, rate_per_s=0.01, burst=2)
    c.headers.update(service_key.headers)
    assert [c.get("/v1/airframes").status_code for _ in range(2)] == [200, 200]
    r = c.get("/v1/airframes")
    assert r.status_code == 429 and int(r.headers["retry-after"]) >= 1
    assert "retry after" in _one_line(r)
    assert c.get("/v1/health").status_code == 200  # monitors are never limited


def test_503_when_busy_past_the_run_time_or_forecast_unreadable(make_client, tmp_path):
    import shutil

    shutil.copy(REPO / "fixtures" / "skerrow-profiles.json", tmp_path / "ok.json")
    (tmp_path / "broken.nc").write_bytes(b"CDF\x01 truncated")
    c = make_client(catalog=tmp_path, queue_limit=0, warm_up=False)
    r = c.post("/v1/screen", json=_screen(forecast="broken.nc"))
    assert r.status_code == 503 and r.json()["field"] == "forecast"
    assert str(tmp_path) not in r.text
    pool = c.app.state.pool
    slot = pool._idle.get_nowait()  # the only worker is now taken
    try:
        r = c.get("/v1/health")
        assert r.json()["workers"]["busy"] == 0
        r = c.post("/v1/screen", json=_screen(forecast="ok.json", route=POINTS))
        assert r.status_code == 503 and "busy" in _one_line(r)
        assert int(r.headers["retry-after"]) >= 1
    finally:
        pool._idle.put_nowait(slot)
    assert c.post("/v1/screen", json=_screen(forecast="ok.json", route=POINTS)).status_code == 200


def test_503_past_the_run_time_stops_the_worker_and_serves_on(make_client):
    # without the warm-up the first run opens the forecast: slower than the limit
    c = make_client(workers=1, run_timeout_s=0.05, warm_up=False)
    r = c.post("/v1/screen", json=_screen())
    assert r.status_code == 503 and "limit of 0.05 s" in _one_line(r)
    assert c.get("/v1/health").status_code == 200
    stats = c.app.state.pool.stats()
    assert stats["timeouts"] == 1


def test_every_error_status_is_documented(client):
    doc = client.get("/openapi.json").json()
    screen = doc["paths"]["/v1/screen"]["post"]["responses"]
    assert {str(s) for s in STATUSES} <= set(screen)
    assert "application/geo+json" in screen["200"]["content"]
    assert doc["components"]["securitySchemes"]["bearer"]["scheme"] == "bearer"
    req = doc["components"]["schemas"]["ScreenRequest"]
    assert req["examples"] and all(p.get("description") for p in req["properties"].values())
    assert CAUTION in doc["info"]["description"]


# ----------------------------------------------------------------------------- the rest


def test_inline_mode_gives_the_same_screening(make_client, client):
    inline = make_client().post("/v1/screen", json=_screen()).json()
    pooled = client.post("/v1/screen", json=_screen()).json()
    assert inline["features"] == pooled["features"]
    assert inline["summaries"] == pooled["summaries"]


def test_access_log_is_json_lines_without_key_or_body(client, service_key, caplog):
    import logging

    with caplog.at_level(logging.INFO, logger="icing.service.access"):
        client.post("/v1/screen", json=_screen(forecast="missing.nc"))
    lines = [
        json.loads(r.getMessage()) for r in caplog.records if r.name == "icing.service.access"
    ]
    assert lines[-1]["key"] == service_key.name and lines[-1]["status"] == 404
    assert lines[-1]["method"] == "POST" and lines[-1]["path"] == "/v1/screen"
    assert {"time", "duration_ms", "request_id"} <= set(lines[-1])
    text = caplog.text
    assert service_key.key not in text and "ODRIX" not in text


def test_cors_is_off_unless_an_origin_is_configured(make_client, service_key):
    origin = {"Origin": "https://planner.example"}
    plain = make_client()
    assert "access-control-allow-origin" not in plain.get("/v1/airframes", headers=origin).headers
    c = make_client(cors_origins=("https://planner.example",), api_keys=service_key.path)
    pre = c.options(
        "/v1/screen",
        headers={
            **origin,
            "Access-Control-Request-Method": "POST",
            "Access-Control-Request-Headers": "authorization,content-type",
        },
    )
    assert pre.status_code == 200
    assert pre.headers["access-control-allow-origin"] == "https://planner.example"
    r = c.get("/v1/airframes", headers={**origin, **service_key.headers})
    assert r.headers["access-control-allow-origin"] == "https://planner.example"
    other = c.get(
        "/v1/airframes", headers={"Origin": "https://elsewhere.example", **service_key.headers}
    )
    assert "access-control-allow-origin" not in other.headers
