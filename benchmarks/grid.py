"""``icing grid`` over a continental grid: speed, memory and growth (run by hand).

    python benchmarks/grid.py [--quick] [--workdir DIR] [--keep] [--workers N] [--dask]

Writes the synthetic winter case of ``benchmarks/grid_data.py`` (invented, ours) at
1799 x 1059 columns (1.9 M) x 40 levels, and at half and a quarter of the columns over
the same area, then measures:

1. the baseline: one saturation-vapour-pressure pass
   (``icing.calc.thermo.saturation_vapor_pressure``) over the same 1.9 M x 40 points,
   in this process, the median of three;
2. ``icing grid -o OUT.geojson --netcdf OUT.nc`` on each file as a whole process
   (start-up, reading, physics, polygons and NetCDF included), default bands and
   workers; wall time and the peak resident memory of the whole process tree
   (sampled every 0.1 s: the run and its worker processes together);
3. the growth exponent of the time with the number of columns (least squares over
   the three sizes);
4. a per-column loop over MetPy's profile functions (``parcel_profile`` and
   ``moist_lapse`` per cloud layer: the adiabatic-liquid core of the column physics
   only) on 100 columns of the file, scaled to the whole grid;
5. with ``--dask``, the same run on a dask.distributed ``LocalCluster`` on the
   loopback interface (the ``--scheduler`` path), for comparison with the pool.

Targets: under 30x the baseline, under 2 GB, exponent at most 1.05.
``--quick`` uses grids 16 times smaller (a smoke run; its ratios mean little).
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

FULL = (1799, 1059)  # 1,905,141 columns


def _tree_rss(pid):
    """Resident memory [bytes] of a process and all its descendants."""
    children = {}
    for d in os.listdir("/proc"):
        if not d.isdigit():
            continue
        try:
            with open(f"/proc/{d}/stat") as fh:
                ppid = int(fh.read().rsplit(")", 1)[1].split()[1])
            children.setdefault(ppid, []).append(int(d))
        except (OSError, IndexError, ValueError):
            continue
    total, todo = 0, [pid]
    while todo:
        p = todo.pop()
        todo += children.get(p, [])
        try:
            with open(f"/proc/{p}/status") as fh:
                for line in fh:
                    if line.startswith("VmRSS:"):
                        total += int(line.split()[1]) * 1024
        except OSError:
            pass
    return total


def _run(cmd, env=None):
    """Run a command; return (wall seconds, peak tree RSS bytes, stdout)."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    peak = [0]

    def watch():
        while proc.poll() is None:
            peak[0] = max(peak[0], _tree_rss(proc.pid))
            time.sleep(0.1)

    w = threading.Thread(target=watch, daemon=True)
    w.start()
    out, err = proc.communicate()
    wall = time.perf_counter() - t0
    w.join()
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed:\n{err.decode()}")
    return wall, peak[0], out.decode()


def _svp_baseline(path, repeats=3):
    """Seconds of one saturation-vapour-pressure pass over every point of the file.

    Two ways, the faster one is the baseline (the stricter target): one call over the
    whole (level, y, x) array (its 600 MB temporaries fault fresh pages in), and the
    same pass in slices of about a million points (each in cache-friendly memory).
    """
    import netCDF4

    from icing.calc.thermo import saturation_vapor_pressure

    with netCDF4.Dataset(path) as nc:
        t = np.asarray(nc["t"][0], dtype=float)  # (level, y, x), in memory for the pass
    saturation_vapor_pressure(t[:, :2, :2])  # first-call costs out of the timing
    flat = t.reshape(-1)
    step = 2**20

    def sliced():
        for i in range(0, flat.size, step):
            saturation_vapor_pressure(flat[i : i + step])

    out = {}
    for name, fn in (("one call", lambda: saturation_vapor_pressure(t)), ("slices", sliced)):
        times = []
        for _ in range(repeats):
            t0 = time.perf_counter()
            fn()
            times.append(time.perf_counter() - t0)
        out[name] = statistics.median(times)
    return out, t.size


def _metpy_loop(path, n=100):
    """Seconds per column of a per-column MetPy loop (see the module docstring)."""
    import netCDF4
    from columns import metpy_loop

    with netCDF4.Dataset(path) as nc:
        ny, nx = nc.dimensions["y"].size, nc.dimensions["x"].size
        rng = np.random.default_rng(3)
        rows = rng.choice(ny, n)
        cols = rng.choice(nx, n)
        t = np.stack([nc["t"][0, :, r, c] for r, c in zip(rows, cols, strict=True)])
        rh = np.stack([nc["r"][0, :, r, c] for r, c in zip(rows, cols, strict=True)]) / 100.0
        p = np.asarray(nc["pressure"][:], float) * 100.0
    data = {
        "pressure": np.broadcast_to(p, t.shape),
        "temperature": np.asarray(t, float),
        "relative_humidity": np.asarray(rh, float),
    }
    t0 = time.perf_counter()
    metpy_loop(data, np.arange(n), with_parcel_profile=True)
    return (time.perf_counter() - t0) / n


def _grid_cmd(path, out, workers, scheduler=None):
    cmd = [sys.executable, "-m", "icing", "grid", "-f", str(path), "-a", "twin-turboprop",
           "-o", str(out / "grid.geojson"), "--netcdf", str(out / "grid.nc")]  # fmt: skip
    if workers:
        cmd += ["--workers", str(workers)]
    if scheduler:
        cmd += ["--scheduler", scheduler]
    return cmd


def _files(work, quick):
    from grid_data import make_winter_file

    nx, ny = FULL
    if quick:
        nx, ny = nx // 4, ny // 4
    sizes = {
        "quarter": (int(round(nx / 2)), int(round(ny / 2))),
        "half": (int(round(nx / 2**0.5)), int(round(ny / 2**0.5))),
        "full": (nx, ny),
    }
    out = {}
    for name, (x, y) in sizes.items():
        path = work / f"winter-{x}x{y}.nc"
        if not path.exists():
            t0 = time.perf_counter()
            make_winter_file(path, x, y)
            print(f"wrote {path.name} ({path.stat().st_size / 1e9:.2f} GB) in "
                  f"{time.perf_counter() - t0:.0f} s", flush=True)  # fmt: skip
        out[name] = (path, x * y)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--workdir", default=None)
    ap.add_argument("--keep", action="store_true")
    ap.add_argument("--workers", type=int, default=None)
    ap.add_argument("--dask", action="store_true")
    args = ap.parse_args(argv)
    work = Path(args.workdir or tempfile.mkdtemp(prefix="icing-grid-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    files = _files(work, args.quick)
    full_path, full_n = files["full"]
    for path, _ in files.values():  # the same file-cache state for every timed run
        subprocess.run(["cat", str(path)], stdout=subprocess.DEVNULL, check=True)
    svp_ways, points = _svp_baseline(full_path)
    svp = min(svp_ways.values())
    print(f"baseline: one saturation-vapour-pressure pass over {points / 1e6:.1f} M points "
          f"{svp:.2f} s ({', '.join(f'{k} {v:.2f} s' for k, v in svp_ways.items())})",
          flush=True)  # fmt: skip
    results = {}
    for name, (path, n) in files.items():
        out = work / f"out-{name}"
        out.mkdir(exist_ok=True)
        wall, rss, _ = _run(_grid_cmd(path, out, args.workers))
        results[name] = {"columns": n, "wall_s": wall, "peak_rss_gb": rss / 1e9}
        print(f"icing grid, {name}: {n / 1e6:.2f} M columns {wall:.1f} s, peak "
              f"{rss / 1e9:.2f} GB", flush=True)  # fmt: skip
    ns = np.array([r["columns"] for r in results.values()], float)
    ts = np.array([r["wall_s"] for r in results.values()], float)
    exponent = float(np.polyfit(np.log(ns), np.log(ts), 1)[0])
    per_column = _metpy_loop(full_path)
    full = results["full"]
    report = {
        "columns": full_n,
        "levels": 40,
        "svp_pass_s": svp,
        "svp_pass_ways_s": svp_ways,
        "grid_s": full["wall_s"],
        "ratio_to_svp": full["wall_s"] / svp,
        "peak_rss_gb": full["peak_rss_gb"],
        "growth_exponent": exponent,
        "metpy_loop_s_per_column": per_column,
        "metpy_loop_whole_grid_s": per_column * full_n,
        "metpy_loop_over_grid": per_column * full_n / full["wall_s"],
        "sizes": results,
    }
    if args.dask:
        report["dask"] = _dask_run(full_path, work)
    print(json.dumps(report, indent=1))
    print(
        f"\nicing grid {full['wall_s']:.1f} s = {report['ratio_to_svp']:.1f}x one svp pass "
        f"(target < 30x); peak {full['peak_rss_gb']:.2f} GB (target < 2 GB); growth exponent "
        f"{exponent:.3f} (target <= 1.05); a per-column MetPy loop would take "
        f"{report['metpy_loop_whole_grid_s'] / 3600:.1f} h = "
        f"{report['metpy_loop_over_grid']:.0f}x icing grid"
    )
    if not args.keep and args.workdir is None:
        import shutil

        shutil.rmtree(work, ignore_errors=True)


def _dask_run(path, work):
    """The same run on a LocalCluster (2 worker processes, one thread each, loopback)."""
    from distributed import LocalCluster

    with LocalCluster(
        n_workers=os.cpu_count() or 2,
        threads_per_worker=1,
        processes=True,
        host="127.0.0.1",
        dashboard_address=":0",
    ) as cluster:
        out = work / "out-dask"
        out.mkdir(exist_ok=True)
        wall, rss, _ = _run(_grid_cmd(path, out, None, cluster.scheduler_address))
    print(f"icing grid on a LocalCluster: {wall:.1f} s (client process peak {rss / 1e9:.2f} GB)")
    return {"wall_s": wall, "client_peak_rss_gb": rss / 1e9}


if __name__ == "__main__":
    main()
