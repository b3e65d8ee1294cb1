"""Checks of icing.thermo against reference libraries and published values.

Reference libraries: ``iapws`` 1.5.5 (IAPWS-IF97 saturation pressure of water,
IAPWS 2011 sublimation pressure of ice Ih), ``ambiance`` 1.3.1 (ICAO standard
atmosphere 1993) and MetPy 1.7.1 (``moist_lapse``) -- the versions the tolerances
were set with; the installed versions appear in every assertion message.
"""

from __future__ import annotations

from importlib.metadata import version

import ambiance
import iapws
import metpy
import metpy.calc as mpcalc
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws._iapws import _Sublimation_Pressure
from iapws.iapws97 import _PSat_T
from metpy.units import units

from icing.calc import thermo

VERSIONS = f"iapws {iapws.__version__}, ambiance {version('ambiance')}, metpy {metpy.__version__}"


@pytest.mark.parametrize("temperature", [273.16, 283.15, 293.15, 303.15, 313.15])
def test_saturation_over_water_matches_iapws_if97(temperature):
    # reference library: iapws (IAPWS-IF97 region 4 saturation pressure, MPa)
    expected = _PSat_T(temperature) * 1e6
    got = float(thermo.saturation_vapor_pressure(temperature))
    # 0.5 %: Ambaum (2020) uses constant heat capacities; its departure from IAPWS grows
    # from 0.07 % at 0 C to 0.4 % at 40 C
    assert got == pytest.approx(expected, rel=5e-3), VERSIONS


@pytest.mark.parametrize(
    ("temperature", "rel"),
    [
        (273.16, 1e-3),
        (263.15, 1e-3),
        (253.15, 1e-3),
        (243.15, 2e-3),
        (233.15, 3e-3),
        (213.15, 1.2e-2),
    ],
)
def test_saturation_over_ice_matches_iapws_sublimation(temperature, rel):
    # reference library: iapws (IAPWS 2011 sublimation pressure of ice Ih, MPa)
    expected = _Sublimation_Pressure(temperature) * 1e6
    got = float(thermo.saturation_vapor_pressure(temperature, phase="solid"))
    # tolerance grows in the cold: constant-heat-capacity law of Ambaum (2020), 0.03 % at
    # -20 C, 0.2 % at -40 C, 1 % at -60 C
    assert got == pytest.approx(expected, rel=rel), VERSIONS


@pytest.mark.parametrize(("temperature_c", "expected"), [(-10, 0.91), (-20, 0.82), (-30, 0.75)])
def test_ice_saturation_relative_humidity(temperature_c, expected):
    # from memory: textbook ratio e_si/e_sw ~91/82/75 % at -10/-20/-30 C (Rogers & Yau
    # 1989, table 2.1, from memory); IAPWS-IF97 has no supercooled-water branch to
    # check against. 0.01: the values are recalled to two figures
    got = float(thermo.ice_saturation_relative_humidity(temperature_c + 273.15))
    assert got == pytest.approx(expected, abs=0.01)


def test_ice_saturation_relative_humidity_is_one_above_freezing():
    # definition: no ice saturation above 0 C
    assert np.all(thermo.ice_saturation_relative_humidity([273.15, 280.0]) == 1.0)


def test_standard_atmosphere_pressure_fl100():
    # published: ICAO standard atmosphere, FL100 = 3048 m pressure altitude = 696.8 hPa
    # (ICAO Doc 7488 tables, from memory; also ambiance below)
    assert float(thermo.standard_atmosphere_pressure(3048.0)) / 100 == pytest.approx(
        696.8, abs=0.05
    )  # printed to 0.1 hPa


@pytest.mark.parametrize("geometric_height", [0.0, 1000.0, 3048.0, 5000.0, 10000.0])
def test_standard_atmosphere_matches_ambiance(geometric_height):
    # reference library: ambiance 1.3.1 (ICAO 1993), pressure at geopotential height H
    atm = ambiance.Atmosphere(geometric_height)
    got = float(thermo.standard_atmosphere_pressure(float(atm.H[0])))
    assert got == pytest.approx(float(atm.pressure[0]), rel=1e-4)  # same formula; constants
    back = float(thermo.standard_atmosphere_height(float(atm.pressure[0])))
    assert back == pytest.approx(float(atm.H[0]), abs=0.5)


def test_hypsometric_heights_match_ambiance():
    # reference library: ambiance 1.3.1. Take the ICAO atmosphere's p and T on 40 levels
    # and rebuild the geopotential heights by the hypsometric equation from the ground.
    h = np.linspace(0.0, 10000.0, 40)
    atm = ambiance.Atmosphere(h)
    z = thermo.height_from_pressure_hypsometric(
        atm.pressure, atm.temperature, base_height=0.0, base_pressure=101325.0
    )
    # 1 m: trapezoidal layer means over ~250 m layers of a linear lapse; ambiance uses
    # g0 = 9.80665 and R = 287.05287, ours 287.0475 (2e-5 relative, 0.2 m at 10 km)
    np.testing.assert_allclose(z, atm.H, atol=1.0, err_msg=VERSIONS)


def test_hypsometric_default_anchor_is_standard_height():
    # regression of the documented anchor: lowest level at its standard-atmosphere height
    z = thermo.height_from_pressure_hypsometric([90000.0, 80000.0], [280.0, 273.0])
    assert z[0] == pytest.approx(float(thermo.standard_atmosphere_height(90000.0)))


def test_viscosity_sutherland_at_zero_celsius():
    # published: U.S. Standard Atmosphere 1976, eq. 51: 1.716e-5 Pa s at 273.15 K
    assert float(thermo.air_viscosity(273.15)) == pytest.approx(1.716e-5, rel=5e-4)  # 4 fig.


def test_viscosity_matches_ambiance():
    # reference library: ambiance 1.3.1 dynamic viscosity (same Sutherland law, ICAO 1993)
    atm = ambiance.Atmosphere([0.0, 5000.0, 10000.0])
    np.testing.assert_allclose(
        thermo.air_viscosity(atm.temperature), atm.dynamic_viscosity, rtol=1e-4, err_msg=VERSIONS
    )


@settings(max_examples=60, deadline=None)
@given(t=st.floats(233.15, 313.15), rh=st.floats(0.05, 1.0))
def test_dewpoint_relative_humidity_round_trip(t, rh):
    # physical law (round trip): RH -> vapour pressure -> dewpoint -> RH
    e = rh * thermo.saturation_vapor_pressure(t)
    td = thermo.dewpoint_from_vapor_pressure(e)
    assert float(td) <= t + 1e-9
    # 1e-6: MetPy's inverse of its own saturation law is exact to rounding
    assert float(thermo.relative_humidity_from_dewpoint(t, td)) == pytest.approx(rh, rel=1e-6)


@settings(max_examples=40, deadline=None)
@given(p=st.floats(30000.0, 105000.0), t=st.floats(233.15, 310.0), rh=st.floats(0.0, 1.05))
def test_specific_humidity_round_trip(p, t, rh):
    # physical law (round trip): RH -> q -> RH
    q = thermo.specific_humidity_from_relative_humidity(p, t, rh)
    back = float(thermo.relative_humidity_from_specific_humidity(p, t, q))
    assert back == pytest.approx(rh, rel=1e-9, abs=1e-12)


# --- moist adiabat ------------------------------------------------------------------

LEVELS = np.array([1000.0, 925.0, 850.0, 700.0, 500.0, 400.0, 300.0, 250.0]) * 100.0


@pytest.mark.parametrize("start_c", [30.0, 15.0, 5.0, -5.0, -20.0])
def test_moist_adiabat_matches_metpy_moist_lapse(start_c):
    # reference library: MetPy moist_lapse (LSODA, rtol 1.5e-8) with the same equation
    ref = mpcalc.moist_lapse(LEVELS * units.Pa, (start_c + 273.15) * units.K).m_as("K")
    got = thermo.moist_adiabat_temperature(LEVELS, start_c + 273.15, LEVELS[0])
    # 0.005 K: RK4 with steps <= 0.2 in ln p errs < 1e-3 K; margin for MetPy's solver
    np.testing.assert_allclose(got, ref, atol=5e-3, err_msg=VERSIONS)


def test_moist_adiabat_from_a_middle_start_both_ways():
    # reference library: MetPy moist_lapse with reference_pressure inside the levels
    start = 70000.0
    ref = mpcalc.moist_lapse(
        LEVELS * units.Pa, 265.0 * units.K, reference_pressure=start * units.Pa
    ).m_as("K")
    got = thermo.moist_adiabat_temperature(LEVELS, 265.0, start)
    np.testing.assert_allclose(got, ref, atol=5e-3)  # as above


def test_moist_adiabat_vectorised_and_nan_safe():
    # physical law: each column is independent; NaN stays local
    starts = np.array([[290.0, np.nan], [270.0, 280.0]])
    p = np.broadcast_to(LEVELS, (2, 2, LEVELS.size)).copy()
    p[1, 1, 3] = np.nan
    got = thermo.moist_adiabat_temperature(p, starts, LEVELS[0])
    assert got.shape == (2, 2, LEVELS.size)
    assert np.isnan(got[0, 1]).all() and np.isnan(got[1, 1, 3])
    assert np.isfinite(np.delete(got[1, 1], 3)).all()
    one = thermo.moist_adiabat_temperature(LEVELS, 270.0, LEVELS[0])
    np.testing.assert_allclose(got[1, 0], one, rtol=1e-12)  # batch-independent
    # physical law: a saturated parcel cools on ascent
    assert np.all(np.diff(one) < 0)


@pytest.mark.parametrize("t, rh", [(275.15, 0.9), (290.0, 0.5), (260.0, 0.7), (300.0, 0.3)])
def test_lifting_condensation_level_against_metpy(t, rh):
    # reference library: MetPy's iterative lcl (version in the venv); Bolton's (1980)
    # eq. 22 is within 0.1 K of it for RH 0.2-1 (his stated accuracy); pressure within
    # 0.2 %: the dry-air exponent c_p/R_d is used, not Bolton's moist kappa
    import metpy.calc as mpcalc
    from metpy.units import units

    from icing.calc.thermo import lifting_condensation_level

    td = mpcalc.dewpoint_from_relative_humidity(t * units.K, rh)
    p_ref, t_ref = mpcalc.lcl(90000.0 * units.Pa, t * units.K, td)
    p, tl = lifting_condensation_level(90000.0, t, rh)
    assert float(tl) == pytest.approx(t_ref.m_as("K"), abs=0.1)
    assert float(p) == pytest.approx(p_ref.m_as("Pa"), rel=2e-3)


def test_saturated_air_is_at_its_own_condensation_level():
    from icing.calc.thermo import lifting_condensation_level

    p, t = lifting_condensation_level(80000.0, 265.0, [1.0, 1.03])
    np.testing.assert_allclose(p, 80000.0)
    np.testing.assert_allclose(t, 265.0)
