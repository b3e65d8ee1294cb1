"""Warm a grid run's worker processes before they are forked (imported for its effect).

``icing grid`` forks its worker processes from a server process
(:mod:`multiprocessing`'s fork server), which the run starts while it opens the forecast
(:func:`icing.runs.grid.start_workers`). The server imports the modules named to it
and nothing else, so this module's import does the work every worker would otherwise
do on its own before its first block: import the forecast readers, and load the
compiled loops of the block assembly, the column physics and the bands from numba's
cache by running them once on a few columns of our own (an invented profile; the
results are thrown away).
Measured on the benchmark's grid: about 0.75 s a worker (numba's import 0.2 s, the
cached loops' first calls 0.45 s), now spent once, while the main process reads the
forecast. Nothing here may fail the server: a failure only leaves the workers cold.
"""

from __future__ import annotations

import os
import warnings

import numpy as np

__all__ = ["warm"]


def _columns(m=4, n=24):
    """Columns with a cloud deck, a warm nose and rain, so every loop runs (invented)."""
    p = np.linspace(100000.0, 40000.0, n)
    z = 44330.0 * (1.0 - (p / 101325.0) ** 0.19)
    t = 270.0 - 0.0065 * z  # sub-freezing at the ground
    t = np.where((z > 1000.0) & (z < 2000.0), 276.0, t)  # a warm nose aloft
    rh = np.where((z > 500.0) & (z < 4000.0), 1.0, 0.6)

    def level(a):
        return np.ascontiguousarray(np.broadcast_to(a, (m, n)), dtype=float)

    return {
        "pressure": level(p),
        "temperature": level(t),
        "relative_humidity": level(rh),
        "height": level(z),
        "cloud_liquid": level(np.where(rh >= 1.0, 2e-4, 0.0)),
        "cloud_ice": level(np.zeros(n)),
        "rain": level(np.where(z < 2000.0, 1e-4, 0.0)),
        "snow": level(np.where(z > 2000.0, 1e-4, 0.0)),
        "vertical_velocity": level(np.full(n, 0.1)),
        "surface_pressure": np.full(m, 101000.0),
        "surface_height": np.full(m, 50.0),
        "precipitation_rate_mm_h": np.full(m, 1.0),
    }


def warm():
    """Import the readers and run the compiled loops once (their cached code loaded)."""
    import icing.forecast.load  # noqa: F401  (the readers every worker opens files with)

    if os.environ.get("ICING_COMPILED", "1") == "0":
        return
    from icing.airframes import load_airframe
    from icing.calc.column import diagnose_columns
    from icing.forecast.assemble import _loops
    from icing.hazards.bands import band_products, parse_bands

    cols = _columns()
    assembly = _loops()  # the block assembly's loops (humidity, omega)
    if assembly is not None:
        one = np.ones(1)
        assembly.specific_humidity(one, one, one, 0, np.empty(1))
        assembly.updraft_from_omega(one, one, one, one, np.empty(1))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        diag = diagnose_columns(**cols, compiled=True)
        band_products(
            diag,
            load_airframe("twin-turboprop"),
            parse_bands("0:20000:2000"),
            ground=cols["surface_height"],
            compiled=True,
        )


try:  # for its effect in the fork server (module docstring); never fatal
    warm()
except Exception:  # noqa: BLE001 - a cold worker still works
    pass
