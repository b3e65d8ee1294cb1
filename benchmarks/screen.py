"""Route-screening speed and scale against gridded CF-NetCDF forecasts (run by hand).

    python benchmarks/screen.py [--quick] [--workdir DIR] [--keep]

Writes a synthetic Skerrow Basin forecast of ~300 x 300 points x 30 levels x 5 times
(``benchmarks/screen_data.py``) and one with 10x the points, then measures, each in a
fresh process (so the peak memory is that scenario's own):

1. one ~1,000 km route at 1 km steps, after the file is open (target < 1 s);
2. 100 such routes (target < 30 s);
3. the single route against the 10x larger file (target < 1.5x the time of 1).

Printed: wall times, peak resident memory, and the ratios against the baselines measured
in the same run (scenario 1 is the baseline of 2 and 3). ``--quick`` uses files 4x
smaller in each horizontal direction for a fast smoke run.
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


def _one(path, nroutes):
    import icing

    t0 = time.perf_counter()
    fc = icing.load_forecast(path)
    t_open = time.perf_counter() - t0
    routes = _routes(nroutes + 1)
    # the first route of a process pays one-time costs (MetPy's import on first use, the
    # spectrum-collection table of the airframe): timed apart as "cold"
    t1 = time.perf_counter()
    icing.screen_route(routes[-1], fc, airframe="twin-turboprop")
    t_cold = time.perf_counter() - t1
    t1 = time.perf_counter()
    res = [icing.screen_route(r, fc, airframe="twin-turboprop") for r in routes[:nroutes]]
    t_screen = time.perf_counter() - t1
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    samples = sum(len(r.samples.lat) for r in res)
    return {"open_s": t_open, "cold_s": t_cold, "screen_s": t_screen, "peak_rss_mb": rss_mb,
            "samples": samples, "km": sum(r.summary["distance_km"] for r in res)}


def _run(path, nroutes):
    out = subprocess.run(
        [sys.executable, __file__, "--one", str(path), str(nroutes)],
        capture_output=True, text=True, check=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    p.add_argument("--workdir", default=None)
    p.add_argument("--keep", action="store_true")
    p.add_argument("--one", nargs=2, help=argparse.SUPPRESS)
    a = p.parse_args(argv)
    if a.one:
        print(json.dumps(_one(a.one[0], int(a.one[1]))))
        return 0
    from screen_data import make_grid_file

    div = 4 if a.quick else 1
    work = Path(a.workdir or tempfile.mkdtemp(prefix="icing-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    base = work / f"grid-{300 // div}.nc"
    big = work / f"grid-{949 // div}.nc"  # 949^2 ~ 10 x 300^2 points
    for path, n in ((base, 300 // div), (big, 949 // div)):
        if not path.exists():
            t0 = time.perf_counter()
            make_grid_file(path, n, n, 30, 5)
            print(f"wrote {path.name}: {n}x{n}x30x5, {path.stat().st_size / 1e6:.0f} MB "
                  f"in {time.perf_counter() - t0:.1f} s")
    one = _run(base, 1)
    many = _run(base, 100)
    large = _run(big, 1)
    print(f"\n1 route  ({one['km']:.0f} km, {one['samples']} samples): "
          f"{one['screen_s']:.3f} s after open and a first route "
          f"(first route of the process {one['cold_s']:.2f} s; {one['open_s']:.2f} s to open), "
          f"peak {one['peak_rss_mb']:.0f} MB   target < 1 s")
    print(f"100 routes ({many['samples']} samples): {many['screen_s']:.2f} s, "
          f"peak {many['peak_rss_mb']:.0f} MB   target < 30 s; "
          f"ratio to 100 x one route: {many['screen_s'] / (100 * one['screen_s']):.2f}")
    print(f"1 route, 10x larger file: {large['screen_s']:.3f} s, peak {large['peak_rss_mb']:.0f} MB;"
          f" ratio to the baseline file: {large['screen_s'] / one['screen_s']:.2f}"
          "   target < 1.5")
    if not a.keep and a.workdir is None:
        for f in (base, big):
            f.unlink(missing_ok=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
