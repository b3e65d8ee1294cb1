"""The cost of an ensemble member against a single forecast (run by hand).

    python benchmarks/ensemble.py [--members 5 10 20 40] [--quick] [--workdir DIR]

Writes a synthetic Skerrow Basin forecast (``benchmarks/screen_data.py``, 48 x 48
points x 30 levels x 3 times) and, from it, CF-NetCDF ensembles of M members on a
``realization`` axis (member 0 the forecast itself, the others with invented
perturbations of our own: a uniform temperature offset and a relative-humidity scale
per member). Then, each in a fresh process (so the peak memory is that scenario's own),
one ~1,000 km route at 1 km steps is screened:

1. against the single forecast (the baseline);
2. against each ensemble in one screening (the members evaluated together);
3. against each member alone, M screenings one after the other (re-running the whole
   screening per member: the way the ensemble is not screened).

Printed: the wall time of each (median of ``--repeat`` fresh processes), the cost per
member of 2 against 1, the speed-up of 2 over 3, and the peak resident memory.

    python benchmarks/ensemble.py --grid [--members 4 8 16] [--grid-size 200 120]

``icing grid`` instead: the synthetic winter case of ``benchmarks/grid_data.py``
(invented, ours; Lambert grid, 40 levels) at ``--grid-size`` columns, and ensembles of
M members of it on a ``realization`` axis (member 0 the forecast itself, the others
with the invented perturbations above). Measured, each in a fresh process:

1. the compute cost in one process (``workers=1``, default bands, after a warm-up
   run): the single forecast, the ensemble (its members evaluated together in each
   block), and each member gridded on its own one after the other (``member=i``);
2. the whole ``icing grid -o --netcdf`` command on both cores (the process pool):
   wall time and the peak resident memory of the process tree.

Printed: the cost per member against the single forecast, the speed-up over the
members one by one, and the memory.
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


def make_ensemble(single, path, members, seed=11):
    """Write an ensemble of ``members`` on a ``realization`` axis from a single forecast.

    Member 0 is the forecast itself; member i adds a temperature offset drawn from
    N(0, 0.8 K) and scales the relative humidity by a factor from N(1, 0.06)
    (invented perturbations for timing, not a model's spread).
    """
    import numpy as np
    import xarray as xr

    rng = np.random.default_rng(seed)
    ds = xr.open_dataset(single).load()
    parts = [ds]
    for _ in range(1, members):
        m = ds.copy(deep=True)
        for name, var in ds.data_vars.items():
            sn = var.attrs.get("standard_name", "")
            if sn == "air_temperature":
                m[name] = var + rng.normal(0.0, 0.8)
            elif sn == "relative_humidity":
                m[name] = (var * rng.normal(1.0, 0.06)).clip(0, None)
        parts.append(m)
    axis = xr.DataArray(np.arange(members), dims="realization", name="realization")
    axis.attrs["standard_name"] = "realization"
    ens = xr.concat(parts, dim=axis, data_vars="all", coords="minimal", compat="override")
    ens.to_netcdf(path)
    return path


def make_grid_ensemble(single, path, members, seed=11):
    """Write ``members`` members of a grid file on a ``realization`` axis (netCDF4, by rows).

    Member 0 is the file itself; member i adds a temperature offset from N(0, 0.8 K) and
    scales the relative humidity by a factor from N(1, 0.06) (invented perturbations for
    timing, not a model's spread). Chunked one member and 16 rows at a time, as the
    single file, so a block reads the same way.
    """
    import netCDF4
    import numpy as np

    rng = np.random.default_rng(seed)
    offsets = [0.0] + list(rng.normal(0.0, 0.8, members - 1))
    scales = [1.0] + list(rng.normal(1.0, 0.06, members - 1))
    with netCDF4.Dataset(single) as src, netCDF4.Dataset(path, "w", format="NETCDF4") as dst:
        dst.setncatts(src.__dict__)
        for name, dim in src.dimensions.items():
            dst.createDimension(name, dim.size)
        dst.createDimension("realization", members)
        r = dst.createVariable("realization", "i4", ("realization",))
        r.standard_name = "realization"
        r[:] = np.arange(members)
        for name, var in src.variables.items():
            four = var.dimensions == ("time", "pressure", "y", "x")
            dims = (("realization",) if four else ()) + var.dimensions
            chunks = (1, 1, var.shape[1], 16, var.shape[3]) if four else None
            out = dst.createVariable(name, var.dtype, dims, chunksizes=chunks)
            out.setncatts(var.__dict__)
            if not four:
                out[...] = var[...]
                continue
            sn = var.__dict__.get("standard_name")
            for y0 in range(0, var.shape[2], 64):
                block = var[:, :, y0 : y0 + 64, :]
                for m in range(members):
                    vals = block
                    if sn == "air_temperature":
                        vals = block + offsets[m]
                    elif sn == "relative_humidity":
                        vals = np.clip(block * scales[m], 0.0, None)
                    out[m, :, :, y0 : y0 + 64, :] = vals
    return path


def _grid_one(kind, path, members):
    """Time one grid scenario in this process (workers=1, after a warm-up); a JSON dict."""
    import icing
    from icing.runs.grid import GridOptions, grid_forecast

    def run():
        if kind in ("single", "ensemble"):
            return [grid_forecast(path, airframe="twin-turboprop", options=GridOptions(workers=1))]
        return [
            grid_forecast(
                icing.load_forecast(path, member=i),
                airframe="twin-turboprop",
                options=GridOptions(workers=1),
                load_options={"member": i},
            )
            for i in range(members)
        ]

    run()
    t0 = time.perf_counter()
    res = run()
    return {
        "seconds": time.perf_counter() - t0,
        "peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
        "cells": int(res[0].severity[0, 0].size),
        "icing_cells": int((res[0].severity >= 1).sum()),
    }


def _grid_command(path, out):
    """Run the whole ``icing grid`` command on both cores; (seconds, peak tree MB)."""
    from grid import _run as run_tree

    cmd = [sys.executable, "-m", "icing", "grid", "-f", str(path), "-a", "twin-turboprop",
           "-o", str(out / "grid.geojson"), "--netcdf", str(out / "grid.nc")]  # fmt: skip
    wall, peak, _ = run_tree(cmd)
    return wall, peak / 2**20


def _grid_main(a, work):
    """The ``--grid`` benchmark (see the module docstring)."""
    from grid_data import make_winter_file

    nx, ny = a.grid_size
    single = work / f"winter-{nx}x{ny}.nc"
    if not single.exists():
        make_winter_file(single, nx, ny)
    base = _run("grid-single", single, 1, a.repeat)
    wall1, mem1 = _grid_command(single, work)
    print(f"grid: {base['cells']} columns x 40 levels, 10 bands; single forecast "
          f"{base['seconds']:.2f} s in one process, command on both cores {wall1:.2f} s, "
          f"peak {mem1:.0f} MB (process tree)")  # fmt: skip
    print(f"{'members':>7}  {'ensemble s':>10}  {'per member':>10}  {'x single':>8}  "
          f"{'one by one s':>12}  {'speed-up':>8}  {'command s':>9}  {'x single':>8}  "
          f"{'peak MB':>7}")  # fmt: skip
    for m in a.members:
        path = work / f"winter-{nx}x{ny}-{m}.nc"
        if not path.exists():
            make_grid_ensemble(single, path, m)
        ens = _run("grid-ensemble", path, m, a.repeat)
        naive = _run("grid-members", path, m, 1)
        wall, mem = _grid_command(path, work)
        per = ens["seconds"] / m
        print(
            f"{m:>7}  {ens['seconds']:>10.2f}  {per:>10.3f}  {per / base['seconds']:>8.2f}  "
            f"{naive['seconds']:>12.2f}  {naive['seconds'] / ens['seconds']:>8.2f}  "
            f"{wall:>9.2f}  {wall / wall1 / m:>8.2f}  {mem:>7.0f}"
        )
    print("x single: the cost per member against the single forecast; speed-up: the members "
          f"one by one over the ensemble; files in {work}")  # fmt: skip
    return 0


def _route():
    from screen import _routes

    return _routes(1)[0]


def _warm_up():
    from screen import _warm_up as warm

    warm()


def _screen(kind, path, members, route):
    """Open the forecast(s) and screen the route; return the screenings."""
    import icing

    if kind in ("single", "ensemble"):
        fc = icing.load_forecast(path)
        return [icing.screen_route(route, fc, airframe="twin-turboprop")]
    res = []  # each member alone, one screening after the other
    for i in range(members):
        fc = icing.load_forecast(path, member=i)
        res.append(icing.screen_route(route, fc, airframe="twin-turboprop"))
    return res


def _one(kind, path, members):
    """Time one scenario in this process; print a JSON line.

    The scenario runs twice, each time from freshly opened files (empty block caches);
    the second run is timed, so the process's one-time costs (imports, tables) and the
    operating system's file cache are the same for every scenario.
    """
    _warm_up()
    route = _route()
    _screen(kind, path, members, route)
    t0 = time.perf_counter()
    res = _screen(kind, path, members, route)
    elapsed = time.perf_counter() - t0
    return {
        "seconds": elapsed,
        "peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
        "samples": len(res[0].samples.lat),
        "worst": [
            r.summary.get("severity_worst_member", r.summary["worst_severity"]) for r in res
        ],
    }


def _run(kind, path, members, repeat):
    runs = []
    for _ in range(repeat):
        out = subprocess.run(
            [sys.executable, __file__, "--one", kind, str(path), str(members)],
            capture_output=True,
            text=True,
            check=True,
        )
        runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
    runs.sort(key=lambda r: r["seconds"])
    return runs[len(runs) // 2]


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--members", type=int, nargs="+", default=[5, 10, 20, 40])
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--quick", action="store_true", help="members 4 and 8, one repeat")
    p.add_argument("--workdir", default=None)
    p.add_argument("--grid", action="store_true", help="icing grid instead of a route")
    p.add_argument("--grid-size", type=int, nargs=2, default=[200, 120], metavar=("NX", "NY"))
    p.add_argument("--one", nargs=3, help=argparse.SUPPRESS)
    a = p.parse_args(argv)
    if a.one:
        kind, path, m = a.one[0], a.one[1], int(a.one[2])
        one = _grid_one(kind[5:], path, m) if kind.startswith("grid-") else _one(kind, path, m)
        print(json.dumps(one))
        return 0
    if a.quick:
        a.members, a.repeat = [4, 8], 1
    work = Path(a.workdir or tempfile.mkdtemp(prefix="icing-ensemble-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    if a.grid:
        if a.members == [5, 10, 20, 40]:
            a.members = [4, 8, 16]
        return _grid_main(a, work)
    from screen_data import make_grid_file

    single = work / "single.nc"
    if not single.exists():
        make_grid_file(single, 48, 48, 30, 3)
    base = _run("single", single, 1, a.repeat)
    print(f"route: {base['samples']} samples; single forecast {base['seconds']:.3f} s, "
          f"peak {base['peak_rss_mb']:.0f} MB")  # fmt: skip
    head = (
        f"{'members':>7}  {'ensemble s':>10}  {'per member':>10}  {'x single':>8}  "
        f"{'one by one s':>12}  {'speed-up':>8}  {'peak MB':>7}  {'peak MB 1x1':>11}"
    )
    print(head)
    for m in a.members:
        path = work / f"ensemble-{m}.nc"
        if not path.exists():
            make_ensemble(single, path, m)
        ens = _run("ensemble", path, m, a.repeat)
        naive = _run("members", path, m, 1)
        per = ens["seconds"] / m
        print(
            f"{m:>7}  {ens['seconds']:>10.3f}  {per:>10.3f}  {per / base['seconds']:>8.2f}  "
            f"{naive['seconds']:>12.3f}  {naive['seconds'] / ens['seconds']:>8.2f}  "
            f"{ens['peak_rss_mb']:>7.0f}  {naive['peak_rss_mb']:>11.0f}"
        )
        words = ["none", "trace", "light", "moderate", "severe", None]
        if ens["worst"][0] != max(naive["worst"], key=words.index):
            print("  note: the worst member's word differs from the members screened one by one")
    print(f"files in {work}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
