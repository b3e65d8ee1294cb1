"""The parcel carried up a cloud level by level (``thermo.moist_adiabat_chain``).

The column diagnosis integrates the pseudo-adiabat of a cloud layer once through the
layer, each level continuing from the liquid level below it, instead of once per level
from the condensation level. The physics checks hold it to MetPy's adaptive solver (a
reference library); the others check the chaining itself (which level follows which,
NaN handling) and that the compiled column loop carries the parcel the same way.
"""

from __future__ import annotations

import metpy
import metpy.calc as mpcalc
import numpy as np
import pytest
from metpy.units import units

from icing.calc import clouds, column, thermo
from icing.calc.column import diagnose_columns

LEVELS = np.array([1000.0, 950.0, 925.0, 900.0, 850.0, 800.0, 700.0, 600.0, 500.0, 400.0, 300.0])
LEVELS = LEVELS * 100.0


@pytest.mark.parametrize("start_c", [25.0, 10.0, 0.0, -10.0, -25.0])
def test_chain_matches_metpy_moist_lapse(start_c):
    # reference library: MetPy moist_lapse (LSODA, rtol 1.5e-8), the same equation
    ref = mpcalc.moist_lapse(LEVELS * units.Pa, (start_c + 273.15) * units.K).m_as("K")
    follows = np.arange(LEVELS.size) - 1  # each level from the one below; the first from 0
    got = thermo.moist_adiabat_chain(LEVELS, start_c + 273.15, LEVELS[0], follows)
    # 0.005 K: the bound the direct integration is held to (tests/test_thermo.py)
    np.testing.assert_allclose(got, ref, atol=5e-3, err_msg=f"metpy {metpy.__version__}")


def test_chain_is_no_less_accurate_than_the_direct_integration():
    # reference library: MetPy moist_lapse; shorter sub-steps cannot err more here
    ref = mpcalc.moist_lapse(LEVELS * units.Pa, 288.15 * units.K).m_as("K")
    direct = thermo.moist_adiabat_temperature(LEVELS, 288.15, LEVELS[0])
    chained = thermo.moist_adiabat_chain(LEVELS, 288.15, LEVELS[0], np.arange(LEVELS.size) - 1)
    assert np.max(np.abs(chained - ref)) <= np.max(np.abs(direct - ref)) + 1e-6


def test_unlinked_values_are_the_direct_integration():
    # transcription check: follows = -1 everywhere is moist_adiabat_temperature
    t0 = np.array([290.0, 280.0, 270.0])
    p0 = np.array([95000.0, 90000.0, 85000.0])
    p = np.array([60000.0, 70000.0, 95000.0])
    got = thermo.moist_adiabat_chain(p, t0, p0, [-1, -1, -1])
    want = thermo.moist_adiabat_temperature(p[:, None], t0, p0)[:, 0]
    np.testing.assert_array_equal(got, want)


def test_a_link_without_a_temperature_restarts_from_the_start():
    # the chain never carries NaN on: a level after an unusable one starts afresh
    p = np.array([90000.0, np.nan, 70000.0])
    got = thermo.moist_adiabat_chain(p, 280.0, 95000.0, [-1, 0, 1])
    assert np.isnan(got[1])
    direct = thermo.moist_adiabat_temperature(np.array([70000.0]), 280.0, 95000.0)[0]
    assert got[2] == direct


def test_follows_must_point_back():
    with pytest.raises(ValueError, match="earlier value"):
        thermo.moist_adiabat_chain([80000.0, 70000.0], 280.0, 90000.0, [1, -1])


def test_links_stay_inside_a_column_and_a_layer_above_its_base():
    # which level follows which: (column, level) of a mask, two layers in column 0
    p = np.broadcast_to([95000.0, 90000.0, 85000.0, 80000.0, 75000.0], (2, 5))
    mask = np.array([[True, True, False, True, True], [True, True, True, False, False]])
    base = np.array([[0, 0, 0, 3, 3], [0, 0, 0, 0, 0]])
    sel = np.nonzero(mask)
    p_l = np.array([92000.0, 92000.0, 79000.0, 79000.0, 96000.0, 96000.0, 96000.0])
    links = column._parcel_links(p[sel], p_l, base[sel], sel)
    # column 0: level 0 under its base (start), 1 first above (start), 3 under the
    # second layer's base (start), 4 first above it (start); column 1: all above
    # the base, so 1 follows 0 and 2 follows 1, but 0 starts its column
    assert links.tolist() == [-1, -1, -1, -1, -1, 4, 5]


def test_adiabatic_lwc_follows_needs_flat_levels():
    with pytest.raises(ValueError, match="flat"):
        clouds.adiabatic_lwc(np.ones((2, 2)) * 8e4, 270.0, 9e4, 275.0, follows=[[-1, -1]] * 2)


def test_carrying_the_parcel_moves_the_liquid_by_the_integration_error_only(monkeypatch):
    # the same columns with every level integrated from its base (the previous method):
    # the two differ by the RK4 error of the longer steps only (seen: 9e-6 relative at
    # most over 7.5 M levels of benchmarks/grid.py's invented grid); 1e-4 bounds it
    p = np.linspace(100000.0, 45000.0, 23)
    t = np.linspace(284.0, 250.0, 23)
    rh = np.where((p < 97000.0) & (p > 52000.0), 1.0, 0.6)
    rh[12] = 0.5  # two layers
    chained = np.asarray(diagnose_columns(p, t, relative_humidity=rh).lwc_diagnosed)
    monkeypatch.setattr(column, "_parcel_links", lambda p_sel, *a: np.full(p_sel.size, -1))
    direct = np.asarray(diagnose_columns(p, t, relative_humidity=rh).lwc_diagnosed)
    assert (direct > 1e-5).sum() >= 15  # deep layers: many levels carried on
    np.testing.assert_allclose(chained, direct, rtol=1e-4, atol=1e-12)


def test_the_compiled_loop_carries_the_parcel_as_numpy_does():
    # equivalence (not physics): deep layers, a level without data inside one
    pytest.importorskip("numba")
    p = np.broadcast_to(np.linspace(100000.0, 45000.0, 23), (3, 23)).copy()
    t = np.broadcast_to(np.linspace(284.0, 250.0, 23), (3, 23)).copy()
    rh = np.where((p < 97000.0) & (p > 52000.0), 1.0, 0.6)
    rh[1, 12] = 0.5
    t[2, 9] = np.nan
    ref = diagnose_columns(p, t, relative_humidity=rh).lwc_diagnosed
    got = diagnose_columns(p, t, relative_humidity=rh, compiled=True).lwc_diagnosed
    # the loops' exp/pow differ from numpy's by ulps (tests/test_compiled_column.py)
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=1e-15)
    assert np.array_equal(np.isnan(got), np.isnan(ref))
