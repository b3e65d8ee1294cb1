"""GRIB2 read directly against the same data in CF-NetCDF: one route through the CLI (by hand).

    python benchmarks/grib_vs_netcdf.py [--repeat N] [--workdir DIR]

The real NCEP GFS 2.5 degree GRIB2 file of the tests (tests/data/real, 3.8 MB, 343
fields) is converted inside this benchmark to CF-NetCDF: the reader's own internal
structure (the variables a screening uses, in SI, RH already over water) is written
with xarray. Then the same ~330 km route over the Great Lakes is screened with
``icing screen ROUTE --forecast FILE --airframe light-piston -o OUT`` in fresh
processes, N times on each file, and the median wall times and their ratio are printed
(target: GRIB within 3x of NetCDF). The two outputs must agree (same summaries).
Each file is read once, untimed, before the timed runs, so both are timed with the
system's file cache in the same state.
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
GRIB = ROOT / "tests" / "data" / "real" / "gfs.t12z.pgrbf120.2p5deg.grib2"
ROUTE = {
    "type": "Feature",
    "properties": {"name": "lakes shuttle", "departure_time": "2011-01-15T11:30:00Z"},
    "geometry": {
        "type": "LineString",
        "coordinates": [[-88.0, 43.0, 3000.0], [-84.0, 43.0, 3000.0]],
    },
}


def convert(grib, out):
    """Write the GRIB file's internal structure as CF-NetCDF (float32, as services write)."""
    from icing.forecast import load_forecast

    ds = load_forecast(grib).dataset.load()
    encoding = {name: {"dtype": "float32"} for name in ds.data_vars if ds[name].ndim > 1}
    ds = ds.rename(y="latitude", x="longitude")
    ds.to_netcdf(out, encoding=encoding)
    return out


def screen(route, forecast, out):
    """Run ``icing screen`` in a fresh process; return (wall seconds, summaries)."""
    cmd = [sys.executable, "-m", "icing", "screen", str(route), "--forecast", str(forecast)]
    cmd += ["--airframe", "light-piston", "-o", str(out)]
    t0 = time.perf_counter()
    r = subprocess.run(cmd, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    if r.returncode != 0:
        raise SystemExit(f"icing screen failed on {forecast}: {r.stderr.strip()}")
    return wall, json.loads(Path(out).read_text())["summaries"]


def main(argv=None):
    """Print the median times of the GRIB2 and NetCDF screenings and their ratio."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5, help="timed runs per file (median)")
    ap.add_argument("--workdir", default=None, help="folder for the files (default: temporary)")
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        work = Path(args.workdir or tmp)
        work.mkdir(parents=True, exist_ok=True)
        route = work / "route.geojson"
        route.write_text(json.dumps(ROUTE))
        t0 = time.perf_counter()
        nc = convert(GRIB, work / "gfs-converted.nc")
        print(
            f"converted {GRIB.name} ({GRIB.stat().st_size / 1e6:.1f} MB) to CF-NetCDF "
            f"({nc.stat().st_size / 1e6:.1f} MB) in {time.perf_counter() - t0:.2f} s"
        )
        results = {}
        for name, path in (("GRIB2", GRIB), ("CF-NetCDF", nc)):
            screen(route, path, work / "warm.geojson")  # file cache warmed, untimed
            runs = [screen(route, path, work / f"{name}.geojson") for _ in range(args.repeat)]
            results[name] = (statistics.median(w for w, _ in runs), runs[0][1])
            print(
                f"{name:10s} median {results[name][0]:.2f} s over {args.repeat} runs "
                f"({', '.join(f'{w:.2f}' for w, _ in runs)})"
            )
        same = [
            (a["worst_severity"], a["minutes_in_icing"])
            == (b["worst_severity"], b["minutes_in_icing"])
            for a, b in zip(results["GRIB2"][1], results["CF-NetCDF"][1], strict=True)
        ]
        ratio = results["GRIB2"][0] / results["CF-NetCDF"][0]
        print(f"ratio GRIB2 / CF-NetCDF = {ratio:.2f} (target <= 3); same summaries: {all(same)}")
        return 0 if ratio <= 3.0 and all(same) else 1


if __name__ == "__main__":
    sys.exit(main())
