"""Speed work on the column physics keeps the values: each faster path against the plain one.

Regression checks of code paths, not of physics (the physics tests are in test_sld.py
and test_column.py): the SLD pass sorts the levels only of the columns that need it,
and sizes rain only where there is rain; the results must be those of the whole block
sorted together, to the last bit. The saturation vapour pressures computed once per
block and passed on must be the values each function computes itself. Invented
columns (a scenario of our own).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from icing.calc import sld
from icing.calc.column import diagnose_columns


def _winter_columns(n=600, seed=4):
    """Columns with a warm nose, rain and snow; a third with levels under the ground."""
    rng = np.random.default_rng(seed)
    p = np.linspace(100000.0, 30000.0, 30)
    z = 44330.8 * (1.0 - (p / 101325.0) ** 0.190263)
    t_sfc = rng.uniform(262.0, 280.0, (n, 1))
    t = (
        t_sfc
        - 0.0065 * z
        + 6.0 * np.exp(-(((p - 80000.0) / 6000.0) ** 2)) * (rng.random((n, 1)) < 0.5)
    )
    rh = np.where(rng.random((n, 30)) < 0.5, 1.0, 0.6)
    rain = np.where((p > 70000.0) & (rng.random((n, 1)) < 0.5), 2e-4, 0.0) * np.ones((n, 1))
    snow = np.where(p <= 70000.0, 1e-4, 0.0) * np.ones((n, 1))
    ps = np.where(rng.random(n) < 0.33, rng.uniform(80000.0, 95000.0, n), 101300.0)
    t[rng.random((n, 30)) < 0.01] = np.nan  # a few missing levels
    return {
        "pressure": np.broadcast_to(p, (n, 30)).copy(),
        "temperature": t,
        "relative_humidity": rh,
        "height": np.broadcast_to(z, (n, 30)).copy(),
        "rain": rain,
        "snow": snow,
        "cloud_liquid": np.where(rh >= 1.0, 2e-4, 0.0),
        "precipitation_rate_mm_h": rng.uniform(0.0, 3.0, n),
        "surface_pressure": ps,
        "surface_height": 44330.8 * (1.0 - (ps / 101325.0) ** 0.190263),
    }


def test_sld_sorting_only_the_columns_that_need_it_changes_nothing(monkeypatch):
    cols = _winter_columns()
    split = diagnose_columns(**cols)
    # the plain path: every block diagnosed whole (the columns that need it sort them all)
    monkeypatch.setattr(sld, "_diagnose_rows", sld._diagnose_block)
    whole = diagnose_columns(**cols)
    for f in dataclasses.fields(split):
        a, b = getattr(split, f.name), getattr(whole, f.name)
        if isinstance(a, np.ndarray):
            assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), f.name
    assert np.any(split.below_ground) and np.any(split.sld_class == 2)


def test_saturation_passed_on_gives_the_values_computed_afresh():
    # e_s over water and ice computed once for a block and indexed (as the column
    # diagnosis passes them on) must be the values each function computes itself
    from icing.calc import clouds, thermo

    rng = np.random.default_rng(7)
    t = rng.uniform(228.0, 285.0, (50, 30))
    t[rng.random(t.shape) < 0.02] = np.nan
    p = np.linspace(100000.0, 30000.0, 30) * np.ones((50, 1))
    rh = rng.uniform(0.3, 1.05, t.shape)
    es_w = thermo.saturation_vapor_pressure(t)
    es_i = thermo.saturation_vapor_pressure(t, phase="solid")
    sel = np.nonzero(rng.random(t.shape) < 0.4)

    def same(a, b):
        assert np.array_equal(a, b, equal_nan=True)

    same(
        thermo.specific_humidity_from_relative_humidity(p, t, rh, saturation=es_w),
        thermo.specific_humidity_from_relative_humidity(p, t, rh),
    )
    same(
        thermo.ice_saturation_relative_humidity(t, saturation=(es_w, es_i)),
        thermo.ice_saturation_relative_humidity(t),
    )
    same(
        clouds.adiabatic_lwc_gradient(p[sel], t[sel], saturation=es_w[sel]),
        clouds.adiabatic_lwc_gradient(p[sel], t[sel]),
    )
    for ice in (es_i[sel], None):
        same(
            clouds.ice_crystal_mass_growth_rate(
                t[sel], p[sel], 50e-6, saturation=(es_w[sel], ice)
            ),
            clouds.ice_crystal_mass_growth_rate(t[sel], p[sel], 50e-6),
        )
    args = (t[sel], p[sel], 2e-4, t[sel] - 5.0)
    same(
        clouds.glaciation_likelihood(*args, updraft=0.5, saturation=(es_w[sel], es_i[sel])),
        clouds.glaciation_likelihood(*args, updraft=0.5),
    )
