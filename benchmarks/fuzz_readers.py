"""Fuzz the route and profile readers, route sampling and the writer (run by hand).

    python benchmarks/fuzz_readers.py [--minutes 10] [--seed 1] [--workers 2] [--out DIR]

Mutates valid seeds (GeoJSON, CSV and GPX routes; profile JSON and CSV forecasts) at the
level of their structure (a JSON node replaced by a hostile value: NaN-like strings, huge
and tiny numbers, wrong types, objects for lists, deep nesting) and of their bytes (flips,
cuts, repeats), writes each to a file and reads it through the public loaders:
``load_routes`` then ``sample_route`` (with random airspeeds and steps), and
``load_forecast`` then ``columns_at``; one case in 50 is screened and written through
``write_outputs``. Anything raised that is not :class:`icing.errors.InputError` is a
finding; a worker process that dies (a signal) is a finding too. Each worker runs in its
own process so that a crash is seen, not suffered.

Prints the number of cases per kind, the findings by exception type and place, and keeps
each finding's input in ``--out`` (default ``fuzz-findings/``) to replay.
"""

from __future__ import annotations

import argparse
import copy
import json
import multiprocessing as mp
import random
import sys
import tempfile
import time
import traceback
import warnings
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

HOSTILE_VALUES = [
    None,
    True,
    0,
    -1,
    1e308,
    -1e308,
    1e-308,
    5e-324,
    10**19,
    "NaN",
    "Infinity",
    "1e999",
    "",
    " ",
    "x" * 500,
    "2027-13-45T99:99:99Z",
    "2027-01-14T09:00:00",
    "2027-01-14T09:00:00Z",
    [],
    {},
    [[]],
    [1, 2],
    {"lon": 1, "lat": 2},
    [None, None, None],
    ["1", "2", "3"],
    [1e308, 1e308],
    [-180.0000001, 90.0000001, 0],
    [180, -90, 99999],
    [0, 0, -99999],
]


def _seeds():
    """The valid seeds, read once: (kind, suffix, text)."""
    routes = ROOT / "routes"
    fixtures = ROOT / "fixtures"
    prof = json.loads((fixtures / "skerrow-profiles.json").read_text())
    prof["profiles"] = prof["profiles"][:3]  # small and fast; the structure is what matters
    csv_lines = (fixtures / "skerrow-profiles.csv").read_text().splitlines()
    return [
        ("route", ".geojson", (routes / "regional-dispatch.geojson").read_text()),
        ("route", ".geojson", (routes / "flight-levels.geojson").read_text()),
        ("route", ".csv", (routes / "flight-plan.csv").read_text()),
        ("route", ".gpx", (routes / "drone-inspection.gpx").read_text()),
        ("profiles", ".json", json.dumps(prof)),
        ("profiles", ".csv", "\n".join(csv_lines[:45]) + "\n"),
    ]


def _nodes(obj, path=()):
    yield path
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _nodes(v, path + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj[:8]):
            yield from _nodes(v, path + (i,))


def _get(obj, path):
    for p in path:
        obj = obj[p]
    return obj


def _set(obj, path, value):
    if not path:
        return value
    target = obj
    for p in path[:-1]:
        target = target[p]
    target[path[-1]] = value
    return obj


def _hostile(rng):
    r = rng.random()
    if r < 0.55:
        return copy.deepcopy(rng.choice(HOSTILE_VALUES))
    if r < 0.75:
        return rng.choice([rng.uniform(-1e6, 1e6), rng.uniform(-400, 400), rng.randint(-9, 9)])
    if r < 0.85:
        depth = rng.randint(20, 3000)
        return json.loads("[" * depth + "]" * depth) if depth < 60 else "deep"
    return [copy.deepcopy(rng.choice(HOSTILE_VALUES)) for _ in range(rng.randint(0, 5))]


NUMBERS = [0, -0.0, 1e-300, -1e-300, 1e300, -1e300, 5e-324, 1e15, -273.15, 100000, 0.5, 9999]


def _mutate_json(text, rng):
    doc = json.loads(text)
    for _ in range(rng.randint(1, 4)):
        nodes = list(_nodes(doc))
        if rng.random() < 0.6:  # gentle: a number for a number, the structure kept
            leaves = [p for p in nodes if p and isinstance(_get(doc, p), (int, float))]
            if leaves:
                path = rng.choice(leaves)
                old = _get(doc, path)
                new = rng.choice(NUMBERS + [old * rng.choice([-1, 10, 0.01, 1000, 1e-6])])
                doc = _set(doc, path, new)
                continue
        path = rng.choice(nodes)
        r = rng.random()
        parent = doc
        for p in path[:-1]:
            parent = parent[p]
        if r < 0.15 and path and isinstance(parent, dict):
            parent.pop(path[-1], None)
        elif r < 0.25 and path and isinstance(parent, list) and len(parent) > 1:
            parent.insert(rng.randrange(len(parent)), copy.deepcopy(parent[path[-1]]))
        else:
            value = _hostile(rng)
            if value == "deep":
                out = json.dumps(doc)
                return out[:-1] + ', "z": ' + "[" * 5000 + "]" * 5000 + "}"
            doc = _set(doc, path, value)
    out = json.dumps(doc, allow_nan=True)
    if rng.random() < 0.1:
        out = out.replace("1e+308", rng.choice(["NaN", "Infinity", "1e999", "1" * 5000]), 1)
    return out


def _mutate_bytes(text, rng):
    data = bytearray(text.encode("utf-8"))
    for _ in range(rng.randint(1, 6)):
        if not data:
            break
        i = rng.randrange(len(data))
        r = rng.random()
        if r < 0.3:
            data[i] = rng.randrange(256)
        elif r < 0.5:
            del data[i : i + rng.randint(1, 40)]
        elif r < 0.7:
            chunk = data[i : i + rng.randint(1, 80)]
            data[i:i] = chunk * rng.randint(1, 20)
        elif r < 0.8:
            data = data[: rng.randrange(len(data) + 1)]
        else:
            snippet = rng.choice(
                [
                    b"<!DOCTYPE x [<!ENTITY a 'b'>]>",
                    b"&a;",
                    b",,,,",
                    b'"',
                    b"\x00",
                    b"\xff\xfe",
                    b"nan",
                    b"-inf",
                    b"1e400",
                    b"\n# altitude_reference: agl\n",
                    b"<![CDATA[x]]>",
                    b"<?xml version='1.0' encoding='latin-1'?>",
                ]
            )
            data[i:i] = snippet
    return bytes(data)


def _route_case(route, rng):
    from icing.route import sample_route

    kwargs = {}
    if rng.random() < 0.5:
        kwargs["tas_kt"] = rng.choice([None, 1e-300, 0.5, 1.0, 80.0, 650.0, 1e9, float("nan")])
    if rng.random() < 0.3:
        kwargs["step_km"] = rng.choice([1e-9, 0.01, 0.5, 50.0, 1e12, -1.0])
    if rng.random() < 0.3:
        kwargs["departure"] = rng.choice(["2027-01-14T09:00:00Z", "garbage", None])
    kwargs["default_tas_kt"] = rng.choice([None, 120.0, 0.0])
    return sample_route(route, **kwargs)


def _random_route(rng):
    """A route built in code from random (often hostile) values: the library's own edge."""
    from datetime import UTC, datetime, timedelta

    from icing.route import Route, Waypoint

    def num(lo, hi):
        return rng.choice([rng.uniform(lo, hi)] * 4 + [float("nan"), float("inf"), 1e300, -0.0])

    t0 = datetime(2027, 1, 14, 9, tzinfo=UTC)
    wps = []
    for i in range(rng.randint(0, 6)):
        when = t0 + timedelta(minutes=rng.choice([0, 1, 10, 60, 5000])) * i
        wps.append(
            Waypoint(
                f"W{i}",
                num(-91, 91),
                num(-181, 181),
                num(-2000, 25000),
                rng.choice(["msl", "agl", "pressure", "msl", "bogus"]),
                rng.choice([None, None, when]),
                rng.choice([0.0, 0.0, 5.0, -1.0, 1e9]),
                rng.choice([None, None, 0.0, 100.0, 1e-300, 1e5]),
            )
        )
    return Route(
        "fuzz",
        wps,
        departure_time=rng.choice([t0, None]),
        true_airspeed_kt=rng.choice([None, 150.0, 0.0, 1e-9, 1e9]),
        ground_elevation_m=rng.choice([None, 0.0, 1e9]),
    )


def _one(kind, path, rng, workdir):
    """Read one mutated file the way a user's run would; return the number of routes."""
    from icing.forecast import load_forecast
    from icing.route import load_routes

    if kind == "sampling":
        _route_case(_random_route(rng), rng)
        return 1
    if kind == "route":
        routes = load_routes(path)
        for r in routes:
            _route_case(r, rng)
        if routes and rng.random() < 0.02:
            _screen_and_write(routes[:1], workdir)
        return len(routes)
    forecast = load_forecast([path])
    import numpy as np

    lat = np.array([57.0, 56.0, 89.9, -90.0, 0.0])
    lon = np.array([-24.5, -25.0, 179.99, -180.0, 0.0])
    t = np.array(["2027-01-14T06:00", "2027-01-14T12:00", "2027-01-14T09:00"] + ["NaT"] * 2)
    forecast.columns_at(lat, lon, t.astype("datetime64[ms]"))
    if rng.random() < 0.02:
        from icing.route import load_route

        _screen_and_write(
            [load_route(ROOT / "routes" / "regional-dispatch.geojson")], workdir, f=forecast
        )
    return 1


def _screen_and_write(routes, workdir, f=None):
    from icing.forecast import load_forecast
    from icing.outputs.write import write_outputs
    from icing.runs.screen import screen_route

    f = f or load_forecast([ROOT / "fixtures" / "skerrow-profiles.json"])
    s = [screen_route(r, f, airframe="twin-turboprop") for r in routes]
    write_outputs(s, out_geojson=Path(workdir) / "o.geojson", samples=Path(workdir) / "s.csv")


def _worker(seed, deadline, queue, out_dir):
    """Fuzz until the deadline; report (kind, count) and findings through the queue."""
    from icing.errors import InputError

    rng = random.Random(seed)
    seeds = _seeds()
    warnings.simplefilter("ignore")
    counts = Counter()
    with tempfile.TemporaryDirectory(prefix="icing-fuzz-") as tmp:
        while time.time() < deadline:
            kind, suffix, text = rng.choice(seeds + [("sampling", "", "")])
            if kind == "sampling":
                counts["sampling"] += 1
                try:
                    _one(kind, None, rng, tmp)
                except InputError:
                    counts["refused"] += 1
                except Exception as err:
                    tb = traceback.extract_tb(err.__traceback__)[-1]
                    key = f"{type(err).__name__} at {Path(tb.filename).name}:{tb.lineno}"
                    queue.put(("finding", key, str(err)[:200], "(a random Route in code)"))
                continue
            try:
                if suffix == ".json" or (suffix == ".geojson" and rng.random() < 0.7):
                    data = _mutate_json(text, rng).encode("utf-8", "surrogatepass")
                else:
                    data = _mutate_bytes(text, rng)
            except (RecursionError, ValueError):  # the generator's own limits, not a finding
                continue
            path = Path(tmp) / f"case{suffix}"
            path.write_bytes(data)
            counts[kind + suffix] += 1
            try:
                _one(kind, path, rng, tmp)
            except InputError:
                counts["refused"] += 1
            except Exception as err:  # a finding: keep the input
                tb = traceback.extract_tb(err.__traceback__)[-1]
                key = f"{type(err).__name__} at {Path(tb.filename).name}:{tb.lineno}"
                keep = Path(out_dir) / f"{seed}-{sum(counts.values())}{suffix}"
                keep.write_bytes(data)
                queue.put(("finding", key, str(err)[:200], str(keep)))
    queue.put(("counts", dict(counts)))


def _drain(queue, counts, findings):
    """Take the workers' messages: counts, and findings (the first of each kind printed)."""
    while not queue.empty():
        msg = queue.get()
        if msg[0] == "counts":
            counts.update(msg[1])
            continue
        findings[msg[1]] += 1
        if findings[msg[1]] == 1:
            print(f"finding: {msg[1]}: {msg[2]} ({msg[3]})", flush=True)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--out", default="fuzz-findings")
    args = ap.parse_args(argv)
    Path(args.out).mkdir(exist_ok=True)
    deadline = time.time() + 60 * args.minutes
    queue = mp.get_context("spawn").Queue()
    seed, counts, findings, crashes = args.seed, Counter(), Counter(), 0
    procs = {}
    while time.time() < deadline or procs:
        while len(procs) < args.workers and time.time() < deadline:
            # short-lived workers: a crash loses little, and is counted
            p = mp.get_context("spawn").Process(
                target=_worker, args=(seed, min(deadline, time.time() + 60), queue, args.out)
            )
            p.start()
            procs[p] = seed
            seed += 1
        _drain(queue, counts, findings)
        for p in list(procs):
            if not p.is_alive():
                p.join()
                if p.exitcode != 0:
                    crashes += 1
                    print(f"worker {procs[p]} died with exit code {p.exitcode}", flush=True)
                del procs[p]
        time.sleep(0.2)
    _drain(queue, counts, findings)
    total = sum(v for k, v in counts.items() if k != "refused")
    print(f"cases: {total} ({', '.join(f'{k} {v}' for k, v in sorted(counts.items()))})")
    print(
        f"findings: {sum(findings.values())} of {len(findings)} kinds; worker crashes: {crashes}"
    )
    for key, n in findings.most_common():
        print(f"  {n:6d}  {key}")
    return 1 if findings or crashes else 0


if __name__ == "__main__":
    sys.exit(main())
