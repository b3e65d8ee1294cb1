"""A real ``icing serve`` (uvicorn) on the loopback interface, called over HTTP.

The server is the ``live_service`` fixture (tests/conftest.py): a separate process
started from the command line, keys on, two worker processes. The load test here is
small (the full one is ``benchmarks/service.py``): nothing may be lost and the
server's memory must not grow with the requests.
"""

import json
import signal
import threading
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

from icing.caution import CAUTION

httpx = pytest.importorskip("httpx")

REPO = Path(__file__).resolve().parents[1]
ROUTE = json.loads((REPO / "routes" / "regional-dispatch.geojson").read_text())
SCREEN = {"route": ROUTE, "forecast": "skerrow-demo.nc", "airframe": "twin-turboprop"}
PROFILE = {"forecast": "skerrow-demo.nc", "lat": 57.0, "lon": -24.5, "airframe": "light-piston"}


def test_endpoints_over_http(live_service):
    with httpx.Client(base_url=live_service.url, timeout=60) as c:
        assert c.get("/v1/health").json()["auth"] is True
        assert c.get("/v1/forecasts").status_code == 401
        h = live_service.headers
        ids = [f["id"] for f in c.get("/v1/forecasts", headers=h).json()["forecasts"]]
        assert "skerrow-demo.nc" in ids
        r = c.post("/v1/screen", json=dict(SCREEN, fail_on="light"), headers=h)
        assert r.status_code == 200 and r.headers["content-type"] == "application/geo+json"
        fc = r.json()
        assert fc["caution"] == CAUTION and fc["summaries"][0]["outcome"] == "met"
        r = c.post("/v1/profile", json=PROFILE, headers=h)
        assert r.status_code == 200 and r.json()["caution"] == CAUTION
        assert c.get("/openapi.json", headers=h).json()["info"]["title"] == "icing"


def test_small_load_nothing_lost_memory_flat(live_service):
    """200 requests at concurrency 8 (the benchmark does 2,000 at 16)."""
    h = live_service.headers

    def call(i):
        with_route = i % 4 != 3
        path, body = ("/v1/screen", SCREEN) if with_route else ("/v1/profile", PROFILE)
        t = time.perf_counter()
        r = client.post(path, json=body, headers=h)
        return r.status_code, time.perf_counter() - t, len(r.content)

    with httpx.Client(base_url=live_service.url, timeout=120) as client:
        list(ThreadPoolExecutor(8).map(call, range(40)))  # warm: forecasts open, caches full
        before = client.get("/v1/health").json()["workers"]["rss_mb"]
        results = list(ThreadPoolExecutor(8).map(call, range(200)))
        after = client.get("/v1/health").json()["workers"]["rss_mb"]
    assert [s for s, _, _ in results] == [200] * 200
    assert all(n > 1000 for _, _, n in results)
    if before["server"] is not None:  # Linux: /proc
        # bounded growth: a leak of one result per request (~70 kB) would add ~14 MB
        assert after["server"] - before["server"] < 10.0, (before, after)
        assert after["workers"] - before["workers"] < 40.0, (before, after)
    lines = live_service.access_log.read_text().splitlines()
    assert len(lines) >= 240
    records = [json.loads(line) for line in lines]
    screened = [r for r in records if r["path"] == "/v1/screen" and r["status"] == 200]
    assert len(screened) >= 150 and {r["key"] for r in screened} == {"dispatch-test"}
    assert live_service.headers["Authorization"][7:] not in live_service.access_log.read_text()


def test_graceful_shutdown_finishes_the_request_in_flight(start_service, service_catalog):
    service = start_service(service_catalog, "--workers", "1")
    far = json.loads(json.dumps(ROUTE))  # many samples: the request is still running at SIGTERM
    far["properties"]["true_airspeed_kt"] = 60
    answer = {}

    def call():
        with httpx.Client(base_url=service.url, timeout=60) as c:
            answer["response"] = c.post("/v1/screen", json=dict(SCREEN, route=far))

    caller = threading.Thread(target=call)
    caller.start()
    deadline = time.monotonic() + 30
    with httpx.Client(base_url=service.url, timeout=5) as c:
        while c.get("/v1/health").json()["workers"]["busy"] == 0:
            assert time.monotonic() < deadline
            time.sleep(0.01)
    service.process.send_signal(signal.SIGTERM)
    caller.join(60)
    assert answer["response"].status_code == 200
    assert answer["response"].json()["caution"] == CAUTION
    assert service.process.wait(30) == 0
    with pytest.raises(httpx.TransportError):
        httpx.get(service.url + "/v1/health", timeout=2)
