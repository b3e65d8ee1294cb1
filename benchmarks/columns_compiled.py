"""Benchmark: one block of grid columns through ``diagnose_columns``, numpy vs compiled.

For each block index given, reads the 3,600-column block of a gridded forecast (as
``icing grid`` plans them) and times ``diagnose_columns`` on it with the numpy path
and with the compiled loops (``compiled=True``, warm: compiled and loaded before
timing), CPU time, the median and the minimum of several runs, and their ratio. With
``--cold`` it also times the first call in a fresh process with an empty numba cache
(the compile time a machine pays once).

Run by hand: ``python benchmarks/columns_compiled.py FILE [BLOCK ...] [--cold]``
(default: the demo forecast, its first block). Needs numba (the ``grid`` extra).
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
import time
import warnings


def _cpu(f, runs=9):
    times = []
    for _ in range(runs):
        t0 = time.process_time()
        f()
        times.append(time.process_time() - t0)
    return statistics.median(times) * 1e3, min(times) * 1e3


def _blocks(path):
    from icing.forecast import load_forecast
    from icing.forecast.blocks import plan_blocks

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fc = load_forecast([path])
    src = fc.sources[0]
    return fc, plan_blocks(src.y.size, src.x.size, [0], columns=3600)


def _cold(path, index):
    """Seconds of the first compiled call in a fresh process with an empty numba cache."""
    code = (
        "import time, warnings, sys; warnings.simplefilter('ignore');"
        "sys.path.insert(0, 'benchmarks'); import columns_compiled as b;"
        "from icing.forecast.blocks import read_block_columns;"
        "from icing.calc.column import diagnose_columns;"
        f"fc, blocks = b._blocks({str(path)!r}); bc = read_block_columns(fc, blocks[{index}]);"
        "t0 = time.perf_counter(); diagnose_columns(**bc.columns, compiled=True);"
        "print(time.perf_counter() - t0)"
    )
    with tempfile.TemporaryDirectory() as cache:
        env = os.environ | {"NUMBA_CACHE_DIR": cache}
        out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True)
    return float(out.stdout.strip().splitlines()[-1])


def main(argv):
    from icing.calc.column import diagnose_columns
    from icing.forecast.blocks import read_block_columns

    cold = "--cold" in argv
    args = [a for a in argv if a != "--cold"]
    path = args[0] if args else "icing/data/demo/skerrow-demo.nc"
    indices = [int(a) for a in args[1:]] or [0]
    fc, blocks = _blocks(path)
    print(f"{path}: {len(blocks)} blocks")
    for i in indices:
        bc = read_block_columns(fc, blocks[i])
        n = bc.columns["pressure"].shape[0]
        diagnose_columns(**bc.columns, compiled=True)  # compiled and loaded: warm
        ref = _cpu(lambda bc=bc: diagnose_columns(**bc.columns))
        fast = _cpu(lambda bc=bc: diagnose_columns(**bc.columns, compiled=True))
        print(
            f"block {i} ({n} columns): numpy {ref[0]:.1f} ms (min {ref[1]:.1f}), compiled "
            f"{fast[0]:.1f} ms (min {fast[1]:.1f}), ratio {ref[0] / fast[0]:.2f}"
        )
    if cold:
        print(f"first compiled call, empty cache: {_cold(path, indices[0]):.1f} s")


if __name__ == "__main__":
    main(sys.argv[1:])
