"""Benchmark: 100,000 columns x 40 levels through ``diagnose_columns`` in one call.

Prints the wall time, the peak memory, and the time per column against a
per-column loop of MetPy's per-profile functions measured in the same run on a
200-column subsample: for every cloud layer of a column, ``metpy.calc.moist_lapse``
from the layer's base gives the parcel temperatures and so the adiabatic LWC (the
same quantity ``diagnose_columns`` integrates for all columns at once); a second
baseline adds ``metpy.calc.parcel_profile`` per column (the usual sounding call).

The columns are invented (random but plausible winter profiles): demo data, not
check values. Run by hand: ``python benchmarks/columns.py [n_columns]``.
Targets: >= 100x faster per column than the MetPy loop, < 2 GB peak.

Both sides are timed the same way on this noisy machine: CPU time, the median
of several runs (the minimum beside it), the MetPy loop on the same subsample
every run. Large outputs live in anonymous mappings that ``tracemalloc`` does
not see, so the peak adds them to the traced peak.
"""

from __future__ import annotations

import mmap
import resource
import statistics
import sys
import time
import tracemalloc

import metpy.calc as mpcalc
import numpy as np
from metpy.units import units

from icing.calc import clouds, thermo
from icing.calc.column import _empty_output, diagnose_columns

N_LEVELS = 40


def make_columns(n, seed=2027):
    """Random winter columns, 1000-300 hPa, with one or two saturated layers."""
    rng = np.random.default_rng(seed)
    p = np.linspace(100000.0, 30000.0, N_LEVELS)
    z_std = thermo.standard_atmosphere_height(p)
    t_sfc = rng.uniform(263.0, 288.0, (n, 1))
    lapse = rng.uniform(4.5e-3, 8.0e-3, (n, 1))
    t = t_sfc - lapse * (z_std - z_std[0]) + rng.normal(0.0, 0.3, (n, N_LEVELS))
    rh = rng.uniform(0.3, 0.8, (n, N_LEVELS))
    for _ in range(2):  # up to two saturated layers per column
        base = rng.integers(0, 30, (n, 1))
        depth = rng.integers(0, 10, (n, 1))
        lev = np.arange(N_LEVELS)
        rh = np.where((lev >= base) & (lev < base + depth), 1.0, rh)
    w = rng.normal(0.0, 0.3, (n, N_LEVELS))
    ql = np.where(rh >= 1.0, rng.uniform(0.0, 3e-4, (n, N_LEVELS)), 0.0)
    return {
        "pressure": np.broadcast_to(p, (n, N_LEVELS)),
        "temperature": t,
        "relative_humidity": rh,
        "vertical_velocity": w,
        "cloud_liquid": ql,
        "precipitation_rate_mm_h": rng.uniform(0.0, 2.0, n),
    }


def metpy_loop(cols, idx, *, with_parcel_profile=False):
    """Adiabatic LWC column by column, layer by layer, with MetPy (the baseline)."""
    out = []
    for i in idx:  # the per-column loop being measured
        p = cols["pressure"][i]
        t = cols["temperature"][i]
        rh = cols["relative_humidity"][i]
        cloud = clouds.cloud_mask(rh, t)
        lwc = np.zeros(N_LEVELS)
        if with_parcel_profile:
            td = mpcalc.dewpoint_from_relative_humidity(t * units.K, rh)
            mpcalc.parcel_profile(p * units.Pa, t[0] * units.K, td[0])
        edges = np.flatnonzero(np.diff(np.concatenate([[0], cloud.astype(int), [0]])))
        for start, stop in zip(edges[::2], edges[1::2], strict=True):
            pb = p[start - 1] if start > 0 else p[start]
            tb = t[start - 1] if start > 0 else t[start]
            pl = p[start:stop]
            tp = mpcalc.moist_lapse(
                pl * units.Pa, tb * units.K, reference_pressure=pb * units.Pa
            ).m_as("K")
            rs_b = mpcalc.saturation_mixing_ratio(pb * units.Pa, tb * units.K).m
            rs = mpcalc.saturation_mixing_ratio(pl * units.Pa, tp * units.K).m
            lwc[start:stop] = np.maximum(rs_b - rs, 0) * pl / (287.0 * t[start:stop])
        out.append(lwc)
    return out


def _timed(fn, repeats):
    """(wall, CPU) seconds of ``repeats`` runs: dicts with the median and the minimum."""
    walls, cpus = [], []
    for _ in range(repeats):
        w0, c0 = time.perf_counter(), time.process_time()
        fn()
        walls.append(time.perf_counter() - w0)
        cpus.append(time.process_time() - c0)
    return (
        {"median": statistics.median(walls), "min": min(walls)},
        {"median": statistics.median(cpus), "min": min(cpus)},
    )


def _untraced_bytes(diag):
    """Bytes of the outputs held in anonymous mappings (invisible to tracemalloc)."""
    total = 0
    for v in vars(diag).values():
        base = v
        while isinstance(base, np.ndarray):
            base = base.base
        if isinstance(base, memoryview):
            base = base.obj
        if isinstance(v, np.ndarray) and isinstance(base, mmap.mmap):
            total += v.nbytes
    return total


def main(n=100_000, n_sub=200, repeats=5):
    cols = make_columns(n)
    idx = np.random.default_rng(1).choice(n, n_sub, replace=False)
    sub = {k: v[idx] for k, v in cols.items()}

    diagnose_columns(**sub)  # warm-up (imports, caches)
    tracemalloc.start()
    diag = diagnose_columns(**cols)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    peak += _untraced_bytes(diag)
    del diag
    wall_ours, cpu_ours = _timed(lambda: diagnose_columns(**cols), repeats)
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0

    wall_loop, cpu_loop = _timed(lambda: metpy_loop(cols, idx), repeats)
    wall_pp, cpu_pp = _timed(lambda: metpy_loop(cols, idx[:50], with_parcel_profile=True), 1)

    # what merely writing the outputs once costs on this machine (fresh pages)
    out_bytes = sum(
        np.asarray(v).nbytes
        for v in vars(diagnose_columns(**sub)).values()
        if isinstance(v, np.ndarray)
    ) * (n / n_sub)

    def touch():  # fresh memory taken the way diagnose_columns takes its outputs
        buf = _empty_output((int(out_bytes) // 8,), float)
        buf[:] = 1.0

    _, cpu_touch = _timed(touch, 3)

    d = diagnose_columns(**sub)
    med, best = cpu_ours["median"], cpu_ours["min"]
    loop = cpu_loop["median"] / n_sub
    print(
        f"columns: {n} x {N_LEVELS} levels; cloudy levels {np.mean(d.cloud):.1%} "
        f"(subsample); median (min) of {repeats} runs"
    )
    print(
        f"diagnose_columns, one call: wall {wall_ours['median']:.2f} s "
        f"({wall_ours['min']:.2f}), CPU {med:.2f} s ({best:.2f}) "
        f"= {med / n * 1e6:.1f} us CPU per column"
    )
    print(
        f"  of which writing {out_bytes / 2**20:.0f} MiB of outputs into fresh memory "
        f"costs here alone: CPU {cpu_touch['median']:.2f} s (page faults)"
    )
    print(
        f"peak memory: traced {peak / 2**20:.0f} MiB (tracemalloc, plus the mapped "
        f"outputs); process max RSS: {rss_mb:.0f} MiB"
    )
    print(
        f"MetPy per-column loop (moist_lapse per cloud layer), the same {n_sub} columns: "
        f"wall {wall_loop['median']:.2f} s, CPU {cpu_loop['median']:.2f} s "
        f"({cpu_loop['min']:.2f}) = {loop * 1e3:.2f} ms CPU per column"
    )
    print(
        f"  ratio per column, medians: CPU {loop / (med / n):.0f}x, wall "
        f"{wall_loop['median'] / n_sub / (wall_ours['median'] / n):.0f}x; "
        f"minima: CPU {cpu_loop['min'] / n_sub / (best / n):.0f}x  (target >= 100x)"
    )
    print(
        f"MetPy loop adding parcel_profile (50 columns): "
        f"{cpu_pp['median'] / 50 * 1e3:.2f} ms CPU per column, ratio "
        f"{cpu_pp['median'] / 50 / (med / n):.0f}x"
    )
    worst_gb = max(peak / 2**30, rss_mb / 1024)
    print(f"memory target < 2 GB: {'met' if worst_gb < 2 else 'MISSED'} ({worst_gb:.2f} GB)")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
