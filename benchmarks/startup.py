"""A one-route ``icing screen`` as a whole process against the warm library call (by hand).

    python benchmarks/startup.py [--repeat N]

Times ``icing screen routes/regional-dispatch.geojson -f fixtures/skerrow-latlon.nc -a
twin-turboprop`` as a fresh process (Python start-up, imports, opening the file, the
screening, the table on the terminal), the median of ``--repeat`` runs, against the
same screening in a warm process (the library already imported, the collection table
built): opening the forecast and screening the route (``load_forecast`` +
``screen_route``), the median of as many runs. Target: within 10x. The largest imports
of the process are listed (``python -X importtime``), so the next cut is visible, and
the run is repeated with dask hidden from the process (as in an install without the
``grid`` extra: xarray loads dask whenever it is installed).
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
ARGS = ["screen", str(ROOT / "routes" / "regional-dispatch.geojson"), "-f",
        str(ROOT / "fixtures" / "skerrow-latlon.nc"), "-a", "twin-turboprop"]  # fmt: skip
NO_DASK = "import sys; sys.modules['dask'] = None; from icing.cli import main; sys.exit(main())"


def _process(repeat, code=None):
    cmd = [sys.executable, "-m", "icing", *ARGS] if code is None else [
        sys.executable, "-c", code, *ARGS]  # fmt: skip
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def _warm(repeat):
    import icing

    route = icing.load_route(ARGS[1])
    icing.screen_route(route, icing.load_forecast(ARGS[3]), airframe=ARGS[5])  # warm-up
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        icing.screen_route(route, icing.load_forecast(ARGS[3]), airframe=ARGS[5])
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def _largest_imports(n=8):
    out = subprocess.run(
        [sys.executable, "-X", "importtime", "-m", "icing", *ARGS],
        capture_output=True,
        text=True,
        check=True,
        env={**os.environ, "PYTHONWARNINGS": "ignore"},
    ).stderr
    rows = []
    for line in out.splitlines():
        parts = line.split("|")
        if len(parts) == 3 and parts[1].strip().isdigit():
            name = parts[2].rstrip()
            if len(name) - len(name.lstrip()) <= 1:  # top-level imports only
                rows.append((int(parts[1]), name.strip()))
    return sorted(rows, reverse=True)[:n]


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=7)
    args = ap.parse_args(argv)
    _process(1)  # the collection table is built once and kept in the user's cache
    proc = _process(args.repeat)
    proc_no_dask = _process(args.repeat, NO_DASK)
    warm = _warm(args.repeat)
    print("largest top-level imports of the process [s]:")
    for us, name in _largest_imports():
        print(f"  {us / 1e6:6.3f}  {name}")
    print(f"warm library call (open the forecast, screen the route): {warm:.3f} s")
    print(f"icing screen as a process: {proc:.3f} s = {proc / warm:.1f}x (target <= 10x)")
    print(f"  the same without dask installed: {proc_no_dask:.3f} s = {proc_no_dask / warm:.1f}x")


if __name__ == "__main__":
    main()
