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
"""

from __future__ import annotations

import resource
import sys
import time
import tracemalloc

import metpy.calc as mpcalc
import numpy as np
from metpy.units import units

from icing import clouds, thermo
from icing.column import diagnose_columns

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
    return {"pressure": np.broadcast_to(p, (n, N_LEVELS)), "temperature": t,
            "relative_humidity": rh, "vertical_velocity": w, "cloud_liquid": ql,
            "precipitation_rate_mm_h": rng.uniform(0.0, 2.0, n)}


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
            tp = mpcalc.moist_lapse(pl * units.Pa, tb * units.K,
                                    reference_pressure=pb * units.Pa).m_as("K")
            rs_b = mpcalc.saturation_mixing_ratio(pb * units.Pa, tb * units.K).m
            rs = mpcalc.saturation_mixing_ratio(pl * units.Pa, tp * units.K).m
            lwc[start:stop] = np.maximum(rs_b - rs, 0) * pl / (287.0 * t[start:stop])
        out.append(lwc)
    return out


def main(n=100_000, n_sub=200):
    cols = make_columns(n)
    idx = np.random.default_rng(1).choice(n, n_sub, replace=False)
    sub = {k: v[idx] for k, v in cols.items()}

    diagnose_columns(**sub)  # warm-up (imports, caches)
    tracemalloc.start()
    t0 = time.perf_counter()
    diag = diagnose_columns(**cols)
    t_ours = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0

    t0 = time.perf_counter()
    metpy_loop(cols, idx)
    t_loop = time.perf_counter() - t0
    t0 = time.perf_counter()
    metpy_loop(cols, idx[:50], with_parcel_profile=True)
    t_loop_pp = (time.perf_counter() - t0) / 50 * n_sub

    per_ours = t_ours / n
    per_loop = t_loop / n_sub
    per_loop_pp = t_loop_pp / n_sub
    cloudy = float(np.mean(diag.cloud))
    print(f"columns: {n} x {N_LEVELS} levels, cloudy levels {cloudy:.1%}")
    print(f"diagnose_columns, one call: {t_ours:.2f} s  ({per_ours * 1e6:.1f} us per column)")
    print(f"peak traced memory: {peak / 2**20:.0f} MiB; process max RSS: {rss_mb:.0f} MiB")
    print(f"MetPy per-column loop (moist_lapse per layer), {n_sub} columns: {t_loop:.2f} s "
          f"({per_loop * 1e3:.2f} ms per column)")
    print(f"  ratio per column: {per_loop / per_ours:.0f}x  (target >= 100x)")
    print(f"MetPy loop with parcel_profile too (50 columns, scaled): "
          f"{per_loop_pp * 1e3:.2f} ms per column, ratio {per_loop_pp / per_ours:.0f}x")
    print(f"memory target < 2 GB: {'met' if max(peak / 2**30, rss_mb / 1024) < 2 else 'MISSED'}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
