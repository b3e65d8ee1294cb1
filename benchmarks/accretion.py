"""Speed of the collector physics: 1 million points x all collectors of one airframe.

Run by hand: ``python benchmarks/accretion.py [--points N] [--airframe NAME]``.
Prints the time and point-collectors per second of :func:`icing.calc.airframe_icing`
(spectrum integrated, table method), and ratios against baselines measured in the
same run: the direct sum over the spectrum bins at every point, and a pure-Python
loop of single-point calls over 1,000 points, scaled. Target: more than 1 million
point-collectors per second on one core.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # one core

import argparse  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

from icing.airframes import load_airframe  # noqa: E402
from icing.calc.airframe import airframe_icing  # noqa: E402


def _inputs(n, seed=0):
    """Random icing states over the usual ranges (a benchmark fixture, not data)."""
    rng = np.random.default_rng(seed)
    return dict(
        lwc=rng.uniform(0.0, 1.5e-3, n),
        mvd=rng.uniform(8e-6, 40e-6, n),
        temperature=rng.uniform(238.15, 276.15, n),
        pressure=rng.uniform(4.5e4, 1.02e5, n),
        relative_humidity=rng.uniform(0.9, 1.0, n),
        sld_lwc=np.where(rng.random(n) < 0.05, 2e-4, 0.0),
        sld_mvd=np.full(n, 300e-6),
        sld_class=np.ones(n),
    )


def _best(fn, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=1_000_000)
    ap.add_argument("--airframe", default="light-piston")
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args(argv)

    af = load_airframe(args.airframe)
    n, m = args.points, len(af.collectors)
    kw = _inputs(n)
    airframe_icing(af, **{k: v[:16] for k, v in kw.items()})  # build tables, warm caches

    t_table = _best(lambda: airframe_icing(af, **kw), args.repeats)
    t_direct = _best(lambda: airframe_icing(af, spectrum_method="direct", **kw), 1)
    small = {k: v[:1000] for k, v in kw.items()}

    def loop():
        for i in range(1000):  # the pure-Python baseline: one point per call
            airframe_icing(af, **{k: v[i] for k, v in small.items()})

    t_loop = _best(loop, 1) * n / 1000

    rate = n * m / t_table
    print(f"airframe {af.name}: {m} collectors, {n:,} points, spectrum integrated (7 bins)")
    print(f"  table method : {t_table:8.3f} s   {rate / 1e6:6.2f} M point-collectors/s")
    print(
        f"  direct sum   : {t_direct:8.3f} s   {n * m / t_direct / 1e6:6.2f} M "
        f"point-collectors/s   (table is {t_direct / t_table:5.1f}x faster)"
    )
    print(
        f"  Python loop  : {t_loop:8.1f} s   {n * m / t_loop / 1e6:6.4f} M "
        f"point-collectors/s   (scaled from 1,000 points; table is {t_loop / t_table:7.0f}x"
        " faster)"
    )
    print(f"  target > 1 M point-collectors/s: {'met' if rate > 1e6 else 'NOT met'}")


if __name__ == "__main__":
    main()
