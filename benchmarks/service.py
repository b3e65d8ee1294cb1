"""Load test of ``icing serve`` and its throughput against the library (run by hand).

    python benchmarks/service.py [--requests 2000] [--concurrency 16] [--workers N]
                                 [--inline] [--quick]

1. Library baseline: the same one-route screening (routes/regional-dispatch.geojson, 459
   km, against the bundled demo forecast, twin-turboprop) through the library in this
   process: ``screen_routes`` + ``feature_collection``, forecast opened once; requests/s.
2. A real ``icing serve`` on the loopback interface (keys on, rate limit off, the
   default worker processes), warmed up, then ``--requests`` screenings at
   ``--concurrency`` from an asyncio HTTP client: p50/p95/p99 latency, requests/s,
   failures (anything but a 200 with a FeatureCollection), and the resident memory of
   the server process and of its workers before, half way and after.
3. ``--inline``: the same against ``--workers 0`` (computations on one thread of the
   server process, sharing one forecast): the alternative the process pool was chosen
   over (DEVELOPERS.md, "The service").

Printed: the figures and the ratio of the service's requests/s to the library's,
measured in the same run. The client shares the machine with the server: on 2 cores it
takes part of the CPU the server would otherwise have.
"""

from __future__ import annotations

import argparse
import asyncio
import json
import os
import shutil
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
ROUTE = json.loads((REPO / "routes" / "regional-dispatch.geojson").read_text())
BODY = {"route": ROUTE, "forecast": "skerrow-demo.nc", "airframe": "twin-turboprop"}


def children(pid) -> list[int]:
    """Every descendant process of pid (Linux /proc)."""
    out = []
    for task in Path(f"/proc/{pid}/task").iterdir():
        kids = (task / "children").read_text().split()
        for k in kids:
            out += [int(k), *children(int(k))]
    return out


def cpu_s(pid) -> float:
    """CPU time (user + system) of a process and its descendants so far [s] (Linux /proc)."""
    total = 0.0
    for p in [pid, *children(pid)]:
        try:
            fields = Path(f"/proc/{p}/stat").read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        total += (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    return total


def memory(pid) -> dict:
    from icing.service.pool import rss_mb

    kids = children(pid)
    return {"server": rss_mb(pid), "workers": sum(rss_mb(k) for k in kids), "processes": len(kids)}


def library_rate(n: int) -> tuple[float, float]:
    """Requests/s and CPU s per request of the same screening through the library."""
    import icing
    from icing.hazards import feature_collection
    from icing.route.readers import read_geojson_routes
    from icing.runs import screen_routes

    forecast = icing.load_forecast(icing.demo_forecast_path())
    text = json.dumps(ROUTE)
    feature_collection(
        screen_routes(read_geojson_routes(text), forecast, airframe="twin-turboprop")
    )
    t, c = time.perf_counter(), time.process_time()
    for _ in range(n):
        routes = read_geojson_routes(text)
        feature_collection(screen_routes(routes, forecast, airframe="twin-turboprop"))
    return n / (time.perf_counter() - t), (time.process_time() - c) / n


def start(catalog: Path, keys: Path, workers: int | None, log: Path):
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    cmd = [sys.executable, "-m", "icing", "serve", "--catalog", str(catalog), "--port", str(port)]
    cmd += ["--api-keys", str(keys), "--rate-limit", "0"]
    if workers is not None:
        cmd += ["--workers", str(workers)]
    proc = subprocess.Popen(cmd, stdout=open(log, "wb"), stderr=subprocess.STDOUT)
    url = f"http://127.0.0.1:{port}"
    import httpx

    for _ in range(600):
        try:
            if httpx.get(url + "/v1/health", timeout=2).status_code == 200:
                return proc, url
        except httpx.TransportError:
            time.sleep(0.1)
    proc.kill()
    raise SystemExit(log.read_text()[-2000:])


async def load(url, headers, n, concurrency):
    """n screenings at the given concurrency; latencies [s], failures, wall time [s]."""
    import httpx

    latencies, failures = [], []
    todo = iter(range(n))
    limits = httpx.Limits(max_connections=concurrency, max_keepalive_connections=concurrency)
    async with httpx.AsyncClient(base_url=url, headers=headers, timeout=120, limits=limits) as c:

        async def worker():
            for _ in todo:
                t = time.perf_counter()
                try:
                    r = await c.post("/v1/screen", json=BODY)
                    ok = r.status_code == 200 and r.json()["type"] == "FeatureCollection"
                    if not ok:
                        failures.append(f"{r.status_code} {r.text[:200]}")
                except Exception as err:  # a lost request is a failure, whatever the cause
                    failures.append(repr(err))
                latencies.append(time.perf_counter() - t)

        t0 = time.perf_counter()
        await asyncio.gather(*[worker() for _ in range(concurrency)])
        return latencies, failures, time.perf_counter() - t0


def run_service(label, workers, args, keys, catalog, tmp, lib_rate):
    from icing.service.keys import read_key_file  # noqa: F401  (the key file is ready)

    proc, url = start(catalog, keys.path, workers, tmp / f"{label}.log")
    headers = {"Authorization": f"Bearer {keys.key}"}
    try:
        warm = max(8, 4 * (workers or 1))
        asyncio.run(load(url, headers, warm, min(args.concurrency, warm)))
        mem0, cpu0 = memory(proc.pid), cpu_s(proc.pid)
        half = args.requests // 2
        lat1, fail1, wall1 = asyncio.run(load(url, headers, half, args.concurrency))
        mem1 = memory(proc.pid)
        lat2, fail2, wall2 = asyncio.run(
            load(url, headers, args.requests - half, args.concurrency)
        )
        mem2, cpu2 = memory(proc.pid), cpu_s(proc.pid)
    finally:
        proc.terminate()
        proc.wait(60)
    lat = sorted(lat1 + lat2)
    q = statistics.quantiles(lat, n=100)
    rate = len(lat) / (wall1 + wall2)
    print(f"\n[{label}] {len(lat)} one-route screenings at concurrency {args.concurrency}")
    p50, p95, p99 = (q[i] * 1000 for i in (49, 94, 98))
    print(f"  latency p50 {p50:.0f} ms, p95 {p95:.0f} ms, p99 {p99:.0f} ms")
    print(
        f"  throughput {rate:.1f} requests/s (first half {len(lat1) / wall1:.1f}, second half "
        f"{len(lat2) / wall2:.1f}); failures {len(fail1) + len(fail2)}"
    )
    for f in (fail1 + fail2)[:5]:
        print(f"    {f}")
    for name, m in (("before", mem0), ("half way", mem1), ("after", mem2)):
        print(
            f"  memory {name:<8}: server {m['server']:.1f} MiB, {m['processes']} child "
            f"processes (workers, fork server, resource tracker) {m['workers']:.1f} MiB"
        )
    lib_rps, lib_cpu = lib_rate
    per_request = (cpu2 - cpu0) / len(lat)
    print(
        f"  server + workers CPU per request {per_request * 1000:.0f} ms (library "
        f"{lib_cpu * 1000:.0f} ms): {lib_cpu / per_request:.2f}x the library's efficiency"
    )
    print(f"  ratio of requests/s to the library in one process: {rate / lib_rps:.2f}x")
    print(f"  load average during the run: {os.getloadavg()[0]:.1f} (other work on the machine?)")
    return rate


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--requests", type=int, default=2000)
    p.add_argument("--concurrency", type=int, default=16)
    p.add_argument("--workers", type=int, default=None, help="default: the server's own")
    p.add_argument("--inline", action="store_true", help="also measure --workers 0")
    p.add_argument("--quick", action="store_true", help="200 requests, a short baseline")
    args = p.parse_args(argv)
    if args.quick:
        args.requests = min(args.requests, 200)
    from types import SimpleNamespace

    import icing
    from icing.service.keys import add_key

    tmp = Path(tempfile.mkdtemp(prefix="icing-service-bench-"))
    try:
        catalog = tmp / "catalogue"
        catalog.mkdir()
        shutil.copy(icing.demo_forecast_path(), catalog / "skerrow-demo.nc")
        keys = SimpleNamespace(path=tmp / "keys.txt")
        keys.key = add_key(keys.path, "bench")
        lib = library_rate(20 if args.quick else 100)
        print(
            f"[library] one-route screening in this process: {lib[0]:.1f} requests/s "
            f"({1000 / lib[0]:.0f} ms each, {lib[1] * 1000:.0f} ms CPU)"
        )
        run_service("processes", args.workers, args, keys, catalog, tmp, lib)
        if args.inline:
            run_service("inline", 0, args, keys, catalog, tmp, lib)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
