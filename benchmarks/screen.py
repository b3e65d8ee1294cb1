"""Route-screening speed and scale against gridded CF-NetCDF forecasts (run by hand).

    python benchmarks/screen.py [--quick] [--workdir DIR] [--keep]

Writes a synthetic Skerrow Basin forecast of ~300 x 300 points x 30 levels x 5 times
(``benchmarks/screen_data.py``) and one with 10x the points, then measures, each in a
fresh process (so the peak memory is that scenario's own):

1. one ~1,000 km route at 1 km steps, after the file is open (target < 1 s);
2. 100 such routes (target < 30 s);
3. the single route against a file with 10x the points over 10x the area at the same
   spacing (target < 1.5x the time of 1: the cost follows the route, not the grid);
   ``--finer`` adds a 10x file over the same area (finer spacing: the route crosses ~3x
   more cells, so more time there is expected; printed for information).

Printed: wall times, peak resident memory, and the ratios against the baselines measured
in the same run (scenario 1 is the baseline of 2 and 3). Each file is read once, untimed,
before the timed runs, so all are timed with the system's file cache in the same state;
the one-time set-up of a process (MetPy's import, the collection table) is timed apart.
``--quick`` uses files 4x smaller in each horizontal direction for a fast smoke run.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
#: fresh processes per single-route timing; the median is reported (2 shared cores are noisy)
REPEAT = 5
sys.path.insert(0, str(HERE))


def _routes(n, seed=7):
    """n ~1,000 km routes across the Skerrow Basin (invented waypoint names)."""
    import numpy as np

    from icing.route import Route, Waypoint

    rng = np.random.default_rng(seed)
    out = []
    from datetime import UTC, datetime

    dep = datetime(2027, 1, 14, 8, 0, tzinfo=UTC)
    for i in range(n):
        dlat, dlon = rng.uniform(-0.4, 0.4, 2)
        pts = [(54.0 + dlat, -30.0 + dlon), (57.0 + dlat, -24.0 + dlon), (60.0 + dlat, -18.2)]
        alts = [3000.0, 4000.0, 3500.0]
        wps = tuple(
            Waypoint(f"BX{i:03d}{k}", la, lo, a, "msl")
            for k, ((la, lo), a) in enumerate(zip(pts, alts, strict=True))
        )
        out.append(Route(f"bench-{i:03d}", wps, departure_time=dep, true_airspeed_kt=250.0))
    return out


def _warm_up():
    """Pay the one-time costs of a process on a tiny synthetic column."""
    import numpy as np

    import icing

    p = np.array([[100000.0, 85000.0, 70000.0]])
    t = np.array([[275.0, 268.0, 258.0]])
    d = icing.calc.diagnose_columns(p, t, relative_humidity=np.ones_like(p))
    icing.calc.airframe_icing(
        icing.load_airframe("twin-turboprop"), lwc=d.lwc, mvd=d.mvd, temperature=t, pressure=p
    )


def _one(path, nroutes):
    import icing

    t0 = time.perf_counter()
    fc = icing.load_forecast(path)
    t_open = time.perf_counter() - t0
    routes = _routes(nroutes)
    # One-time costs of a process, timed apart and without touching the forecast file:
    # MetPy's import on first use and the airframe's spectrum-collection table.
    t1 = time.perf_counter()
    _warm_up()
    t_setup = time.perf_counter() - t1
    # The routes then run with the forecast's block cache empty: the first route reads
    # its tiles from the file; later routes over the same area find some cached.
    t1 = time.perf_counter()
    first = icing.screen_route(routes[0], fc, airframe="twin-turboprop")
    t_first = time.perf_counter() - t1
    t1 = time.perf_counter()
    res = [first] + [icing.screen_route(r, fc, airframe="twin-turboprop") for r in routes[1:]]
    t_screen = t_first + time.perf_counter() - t1
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    samples = sum(len(r.samples.lat) for r in res)
    return {
        "open_s": t_open,
        "setup_s": t_setup,
        "first_s": t_first,
        "screen_s": t_screen,
        "peak_rss_mb": rss_mb,
        "samples": samples,
        "km": sum(r.summary["distance_km"] for r in res),
        "kept_mb_per_route": _kept_bytes(res) / len(res) / 1e6,
    }


def _kept_bytes(results):
    """Bytes of numpy memory the screenings keep alive (a view counts its whole base)."""
    import numpy as np

    seen, bases = set(), {}

    def walk(obj):
        if id(obj) in seen:
            return
        seen.add(id(obj))
        if isinstance(obj, np.ndarray):
            base = obj
            while isinstance(base.base, np.ndarray):
                base = base.base
            bases[id(base)] = base.nbytes
        elif isinstance(obj, dict):
            for v in obj.values():
                walk(v)
        elif isinstance(obj, (list, tuple)):
            for v in obj:
                walk(v)
        elif hasattr(obj, "__dataclass_fields__"):
            for k in obj.__dataclass_fields__:
                walk(getattr(obj, k))

    walk(list(results))
    return sum(bases.values())


def _run(path, nroutes, repeat=1):
    """Run one scenario in ``repeat`` fresh processes; keep the one with the median time."""
    runs = []
    for _ in range(repeat):
        out = subprocess.run(
            [sys.executable, __file__, "--one", str(path), str(nroutes)],
            capture_output=True,
            text=True,
            check=True,
        )
        runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
    runs.sort(key=lambda r: r["first_s"])
    return runs[len(runs) // 2]


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    p.add_argument("--workdir", default=None)
    p.add_argument("--keep", action="store_true")
    p.add_argument(
        "--finer",
        action="store_true",
        help="also time a 10x file that is finer over the same area",
    )
    p.add_argument("--one", nargs=2, help=argparse.SUPPRESS)
    a = p.parse_args(argv)
    if a.one:
        print(json.dumps(_one(a.one[0], int(a.one[1]))))
        return 0
    from screen_data import make_grid_file

    div = 4 if a.quick else 1
    work = Path(a.workdir or tempfile.mkdtemp(prefix="icing-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    from screen_data import DOMAIN

    lat0, lat1, lon0, lon1 = DOMAIN
    grow = 10**0.5  # 10x the area at the same grid spacing
    clat, clon = (lat0 + lat1) / 2, (lon0 + lon1) / 2
    wide = (
        clat - (lat1 - lat0) * grow / 2,
        clat + (lat1 - lat0) * grow / 2,
        clon - (lon1 - lon0) * grow / 2,
        clon + (lon1 - lon0) * grow / 2,
    )
    n0, n1 = 300 // div, 949 // div  # 949^2 ~ 10 x 300^2 points
    base = work / f"grid-{n0}.nc"
    big = work / f"grid-{n1}-wide.nc"
    fine = work / f"grid-{n1}.nc"
    files = [(base, n0, None), (big, n1, wide)] + ([(fine, n1, None)] if a.finer else [])
    for path, n, dom in files:
        if not path.exists():
            t0 = time.perf_counter()
            make_grid_file(path, n, n, 30, 5, domain=dom)
            print(
                f"wrote {path.name}: {n}x{n}x30x5, {path.stat().st_size / 1e6:.0f} MB "
                f"in {time.perf_counter() - t0:.1f} s"
            )
    # One untimed pass over each file first, so that every file is timed with the
    # operating system's file cache in the same (warm) state; the forecast's own block
    # cache starts empty in every timed process.
    for path, _, _ in files:
        _run(path, 1)
    one = _run(base, 1, repeat=REPEAT)
    many = _run(base, 100)
    large = _run(big, 1, repeat=REPEAT)
    print(
        f"\n1 route  ({one['km']:.0f} km, {one['samples']} samples): "
        f"{one['first_s']:.3f} s after open, block cache empty "
        f"({one['open_s']:.2f} s to open; one-time process set-up {one['setup_s']:.2f} s), "
        f"peak {one['peak_rss_mb']:.0f} MB   target < 1 s"
    )
    print(
        f"100 routes ({many['samples']} samples): {many['screen_s']:.2f} s, "
        f"peak {many['peak_rss_mb']:.0f} MB   target < 30 s; "
        f"ratio to 100 x the first route: {many['screen_s'] / (100 * one['first_s']):.2f}; "
        f"kept per screened route {many['kept_mb_per_route']:.2f} MB (arrays the results keep "
        "alive, views counted at their whole base)   target < 1.5 MB"
    )
    print(
        f"1 route, 10x larger file (10x the area, same spacing): {large['first_s']:.3f} s, "
        f"peak {large['peak_rss_mb']:.0f} MB; ratio to the baseline file: "
        f"{large['first_s'] / one['first_s']:.2f}   target < 1.5"
    )
    if a.finer:
        fin = _run(fine, 1, repeat=REPEAT)
        print(
            f"1 route, 10x larger file (same area, 3.2x finer spacing; the route crosses "
            f"~3x more cells): {fin['first_s']:.3f} s; ratio to the baseline file: "
            f"{fin['first_s'] / one['first_s']:.2f}   (informational)"
        )
    if not a.keep and a.workdir is None:
        for f, _, _ in files:
            f.unlink(missing_ok=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
