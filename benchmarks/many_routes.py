"""Memory when screening many routes: 1,000 routes kept, peak and growth per 100 (by hand).

    python benchmarks/many_routes.py [--routes 1000] [--km 300] [--workdir DIR]

Writes a synthetic Skerrow Basin CF-NetCDF forecast (``benchmarks/screen_data.py``,
150 x 150 points x 20 levels x 5 times), then screens ``--routes`` routes of about
``--km`` km each against it in this process, keeping every result (as ``icing screen``
does until it writes them). After each hundred it collects garbage and prints the
resident memory, the growth over that hundred, and the numpy memory the results keep
alive (a view counts its whole base, so a view of a large working array shows).

Targets: peak resident memory under 1 GB for 1,000 routes, and the growth per hundred
routes flat after the first (printed as the ratio of each hundred's growth to the
second hundred's, the baseline measured in the same run; the first hundred also pays
the imports, the file's block cache and the collection tables).
"""

from __future__ import annotations

import argparse
import gc
import resource
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))


def _rss_mb():
    """Return the resident memory of this process now [MB]."""
    with open("/proc/self/statm") as fh:
        pages = int(fh.read().split()[1])
    return pages * resource.getpagesize() / 1e6


def _peak_mb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _routes(n, km, seed=11):
    """n routes of about ``km`` km across the Skerrow Basin (invented names), 3 waypoints."""
    from datetime import UTC, datetime

    import numpy as np

    from icing.route import Route, Waypoint

    rng = np.random.default_rng(seed)
    dep = datetime(2027, 1, 14, 8, 0, tzinfo=UTC)
    half = km / 2.0 / 111.0  # degrees of latitude for half the route
    out = []
    for i in range(n):
        lat0, lon0 = rng.uniform(55.0, 59.0), rng.uniform(-28.0, -20.0)
        pts = [(lat0 - half, lon0 - 0.5), (lat0, lon0), (lat0 + half, lon0 + 0.5)]
        alts = rng.uniform(1500.0, 5000.0, 3)
        wps = [
            Waypoint(f"M{i:04d}{k}", la, lo, float(a))
            for k, ((la, lo), a) in enumerate(zip(pts, alts, strict=True))
        ]
        out.append(Route(f"many-{i:04d}", wps, departure_time=dep, true_airspeed_kt=220.0))
    return out


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--routes", type=int, default=1000)
    p.add_argument("--km", type=float, default=300.0)
    p.add_argument("--workdir", default=None)
    a = p.parse_args(argv)

    from screen import _kept_bytes
    from screen_data import make_grid_file

    import icing

    work = Path(a.workdir or tempfile.mkdtemp(prefix="icing-many-"))
    grid = work / "grid-150.nc"
    if not grid.exists():
        make_grid_file(grid, 150, 150, 20, 5)
    forecast = icing.load_forecast(grid)
    routes = _routes(a.routes, a.km)
    gc.collect()
    start = _rss_mb()
    print(f"{a.routes} routes of ~{a.km:.0f} km; resident memory before screening {start:.0f} MB")
    print(" routes   resident MB   growth MB/100   ratio to 2nd hundred   kept MB/route   s/route")
    kept, marks, t0 = [], [start], time.perf_counter()
    baseline = None
    for i, route in enumerate(routes, start=1):
        kept.append(icing.screen_route(route, forecast, airframe="twin-turboprop"))
        if i % 100 == 0 or i == len(routes):
            gc.collect()
            now = _rss_mb()
            growth = (now - marks[-1]) * 100.0 / (i - 100 * (len(marks) - 1))
            marks.append(now)
            if len(marks) == 3:
                baseline = growth
            ratio = "" if baseline is None or len(marks) < 3 else f"{growth / baseline:.2f}"
            per_route = _kept_bytes(kept) / len(kept) / 1e6
            rate = (time.perf_counter() - t0) / i
            cols = f"{i:7d}   {now:11.0f}   {growth:13.1f}   {ratio:>20}"
            print(f"{cols}   {per_route:13.3f}   {rate:7.3f}")
    peak = _peak_mb()
    print(
        f"peak resident memory {peak:.0f} MB (target < 1000 MB); samples kept "
        f"{sum(len(s.samples) for s in kept)}"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
