"""Checks of icing.clouds: cloud mask, layers, adiabatic LWC, glaciation, Appendix C."""

from __future__ import annotations

import metpy.calc as mpcalc
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from metpy.units import units

from icing.calc import clouds, thermo

T0 = 273.15


# --- humidity threshold ------------------------------------------------------------------


@pytest.mark.parametrize("temperature_c", [-7.0, -10.0, -15.0, -20.0, -25.0, -30.0, -37.0])
def test_threshold_stays_above_ice_saturation(temperature_c):
    # physical law: ice cloud holds the air at ice saturation (RH_w = e_si/e_sw, MetPy /
    # Ambaum 2020 laws, checked against iapws in test_thermo); that air must not read
    # as liquid cloud. Margin of at least 1 % RH at -7 C and colder.
    t = temperature_c + T0
    f_i = float(thermo.ice_saturation_relative_humidity(t))
    assert float(clouds.liquid_cloud_rh_threshold(t)) >= f_i + 0.01


def test_threshold_near_freezing_is_the_warm_cap():
    # our stated design (clouds.liquid_cloud_rh_threshold): between about -5.3 and 0 C the
    # 95 % cap sits up to 5 % below ice saturation -- conservative there (cloud), and it
    # keeps the threshold continuous through 0 C so decks straddling 0 C stay one layer
    t = np.array([272.15, 270.15, 268.15, 274.15])
    np.testing.assert_allclose(clouds.liquid_cloud_rh_threshold(t), 0.95)


@pytest.mark.parametrize("temperature_c", [-10.0, -20.0, -30.0])
def test_ice_saturated_water_subsaturated_air_is_not_liquid_cloud(temperature_c):
    # from memory: ice-saturated air is ~91/82/75 % RH over water at -10/-20/-30 C
    # (Rogers & Yau 1989 table 2.1, from memory). Air 3 % RH above ice
    # saturation but below water saturation: an ice cloud, not liquid.
    t = temperature_c + T0
    rh = float(thermo.ice_saturation_relative_humidity(t)) + 0.03
    assert not clouds.cloud_mask(rh, t)
    # a fixed 85 % threshold would have called it liquid at -20 and -30 C
    assert clouds.cloud_mask(1.0, t)  # water-saturated air is liquid cloud


def test_threshold_is_below_water_saturation_everywhere():
    # physical law: saturated air over water is always cloud
    t = np.linspace(230.0, 300.0, 141)
    assert np.all(clouds.liquid_cloud_rh_threshold(t) < 1.0)


def test_model_cloud_water_threshold_korolev():
    # published: in-cloud LWC threshold ~0.01 g/m3 (Korolev et al. 2003, QJRMS 129, 39)
    assert clouds.IN_CLOUD_LWC == pytest.approx(1e-5)
    got = clouds.cloud_mask([0.5, 0.5], [263.15, 263.15], lwc_model=[0.9e-5, 1.1e-5])
    assert got.tolist() == [False, True]


# --- layers ------------------------------------------------------------------------------


def test_cloud_layers_two_layers_vectorised():
    # regression of the construction (half-level boundaries), two columns at once
    cloud = np.array([[0, 1, 1, 0, 1, 0], [1, 1, 0, 0, 0, 1]], bool)
    z = np.broadcast_to(np.arange(6) * 100.0, cloud.shape)
    p = np.broadcast_to(100000.0 - np.arange(6) * 1000.0, cloud.shape)
    t = np.broadcast_to(280.0 - np.arange(6) * 1.0, cloud.shape)
    lay = clouds.cloud_layers(cloud, z, p, t)
    np.testing.assert_array_equal(lay.base_index[0], [-1, 1, 1, -1, 4, -1])
    np.testing.assert_array_equal(lay.top_index[1], [1, 1, -1, -1, -1, 5])
    np.testing.assert_allclose(lay.base_height[0, 1:3], 50.0)
    np.testing.assert_allclose(lay.top_height[0, 4], 450.0)
    np.testing.assert_allclose(lay.top_temperature[0, 1:3], 278.0)
    assert lay.base_height[1, 0] == 0.0  # ground level cloudy (fog): base at that level
    assert lay.top_height[1, 5] == 500.0  # top level cloudy: top at that level
    assert np.isnan(lay.base_height[0, 0])


# --- adiabatic LWC -------------------------------------------------------------------------


def test_adiabatic_lwc_matches_metpy_parcel():
    # reference library: MetPy moist_lapse + saturation_mixing_ratio + density
    p = np.array([90000.0, 85000.0, 80000.0, 70000.0])
    tp = mpcalc.moist_lapse(p * units.Pa, 273.15 * units.K).m_as("K")
    rs = mpcalc.saturation_mixing_ratio(p * units.Pa, tp * units.K).m_as("")
    t_env = tp - 1.0
    rho = mpcalc.density(p * units.Pa, t_env * units.K, 0.0).m_as("kg/m^3")
    ref = rho * (rs[0] - rs)
    got = clouds.adiabatic_lwc(p, t_env, 90000.0, 273.15)
    # 0.3 %: MetPy's mixing ratio has no half-pressure guard and uses its Rd; RK4 steps
    np.testing.assert_allclose(got, ref, rtol=3e-3, atol=1e-9)


def test_adiabatic_lwc_rate_near_zero_celsius_low_levels():
    # from memory: adiabatic LWC grows by about 1-2 g/m3 per km near 0 C at low levels
    # (textbook order, Rogers & Yau 1989 ch. 2, from memory); range set to that order
    p_base, t_base = 90000.0, 273.15
    p = thermo.standard_atmosphere_pressure(thermo.standard_atmosphere_height(p_base) + 500.0)
    lwc = float(clouds.adiabatic_lwc(p, t_base - 3.0, p_base, t_base))
    assert 0.5e-3 <= lwc <= 1.0e-3  # 1-2 g/m3 per km over 500 m
    grad = float(clouds.adiabatic_lwc_gradient(p_base, t_base))
    assert 1.0e-6 <= grad <= 2.0e-6  # same order, per metre


def test_adiabatic_lwc_gradient_consistent_with_integral():
    # regression (self-consistency): the analytic gradient matches a finite difference
    # of the integrated LWC over a 200 m step, within 5 % (curvature over the step)
    p0, t0 = 85000.0, 268.15
    dz = 200.0
    p1 = p0 * np.exp(-9.80665 * dz / (287.0 * t0))
    lwc = float(clouds.adiabatic_lwc(p1, t0, p0, t0))
    assert lwc / dz == pytest.approx(float(clouds.adiabatic_lwc_gradient(p0, t0)), rel=0.05)


@settings(max_examples=40, deadline=None)
@given(
    t_base=st.floats(240.0, 300.0), p_base=st.floats(60000.0, 100000.0), dlnp=st.floats(0.0, 0.6)
)
def test_adiabatic_lwc_is_nonnegative_and_grows_with_height(t_base, p_base, dlnp):
    # physical laws: LWC >= 0, and the condensed mass per unit mass of air grows with
    # height above base in a lifted parcel (per unit volume it may fall in the cold,
    # where little vapour is left and the air thins faster)
    p = p_base * np.exp(-np.array([dlnp / 2, dlnp]))
    lwc = clouds.adiabatic_lwc(p, t_base, p_base, t_base)
    assert np.all(lwc >= 0.0)
    q_l = lwc / thermo.air_density(p, t_base)
    assert q_l[1] >= q_l[0] * (1 - 1e-12)


def test_sub_adiabatic_factor():
    # published: LWC/LWC_ad = 0.77 +- 0.13 in marine stratocumulus (Braun et al. 2018)
    assert float(clouds.sub_adiabatic_factor(0.0)) == pytest.approx(0.77)
    # from memory: Warner (1955) ratios fall with height to ~0.2-0.5 a few km up
    f = clouds.sub_adiabatic_factor([0.0, 500.0, 1000.0, 2000.0, 3000.0])
    assert np.all(np.diff(f) < 0)
    assert 0.1 <= f[3] <= 0.5
    assert np.isnan(clouds.sub_adiabatic_factor(-10.0))


def test_deep_layer_lwc_stays_bounded():
    # common practice, no source: a 3 km stratiform deck from a 0 C base must not reach
    # several g/m3; bound 1.5 g/m3 (above Appendix C's continuous maximum of ~0.8 g/m3,
    # from memory; the adiabatic value is ~2.6 g/m3)
    p_base = 90000.0
    h = np.linspace(0.0, 3000.0, 31)
    p = thermo.standard_atmosphere_pressure(thermo.standard_atmosphere_height(p_base) + h)
    ad = clouds.adiabatic_lwc(p, 273.15 - 6.5e-3 * h, p_base, 273.15)
    lwc = ad * clouds.sub_adiabatic_factor(h)
    assert ad[-1] > 2.4e-3  # the adiabatic value itself: ~2.6 g/m3 (regression)
    assert lwc.max() < 1.5e-3


# --- ice nuclei and glaciation -----------------------------------------------------------


def test_ice_nuclei_formulas():
    # published formulas (docs/references.md [V]): Fletcher (1962) 1e-2 exp(0.6 dT) /m3 at -20 C
    assert float(clouds.ice_nuclei_concentration(253.15, model="fletcher62")) == pytest.approx(
        1e-2 * np.exp(12.0)
    )
    # Meyers et al. (1992) eq. 2.4 at water saturation, -20 C: S_i - 1 from e_sw/e_si
    si = float(1.0 / thermo.ice_saturation_relative_humidity(253.15))
    assert float(clouds.ice_nuclei_concentration(253.15)) == pytest.approx(
        1e3 * np.exp(-0.639 + 12.96 * (si - 1.0))
    )
    # DeMott et al. (2010) eq. 1 at -20 C and 1 aerosol /cm3
    assert float(clouds.ice_nuclei_concentration(253.15, model="demott10")) == pytest.approx(
        1e3 * 5.94e-5 * 20.01**3.33 * 1.0
    )
    # physical law: more nuclei active in the colder; none outside [-38, 0] C
    n = clouds.ice_nuclei_concentration(np.array([268.15, 258.15, 248.15]))
    assert np.all(np.diff(n) > 0)
    assert np.isnan(clouds.ice_nuclei_concentration([275.0, 230.0])).all()
    with pytest.raises(ValueError, match="fletcher62"):
        clouds.ice_nuclei_concentration(260.0, model="unknown")


def test_liquid_maintenance_updraft_form():
    # from memory: Korolev & Mazin (2003) w* = (E_s - E_i)/E_i eta N_i r_i, i.e.
    # proportional to N_i and to r_i at fixed T, p (the form, not their eta)
    w1 = clouds.liquid_maintenance_updraft(263.15, 70000.0, 1e5, ice_radius=50e-6)
    w2 = clouds.liquid_maintenance_updraft(263.15, 70000.0, 2e5, ice_radius=50e-6)
    w3 = clouds.liquid_maintenance_updraft(263.15, 70000.0, 1e5, ice_radius=100e-6)
    assert float(w2 / w1) == pytest.approx(2.0) and float(w3 / w1) == pytest.approx(2.0)
    # regression: ~0.25 m/s for 100 /L of 50 um crystals at -10 C, 700 hPa (order of the
    # 0.1-1 m/s KM2003 discuss for such ice, from memory)
    assert 0.05 < float(w1) < 1.0


def test_glaciation_deep_cold_deck_with_ice_from_above_is_likely():
    # physical reasoning (seeder-feeder; Korolev & Mazin 2003 balance): a -25 C deck with
    # 0.25 g/kg of ice and snow falling into it and weak ascent glaciates
    g = clouds.glaciation_likelihood(248.15, 60000.0, 2e-4, 250.0, ice_above=2.5e-4, updraft=0.3)
    assert float(g) > 0.8


def test_glaciation_thin_warm_deck_without_ice_is_unlikely():
    # physical reasoning: few ice nuclei act at -8 C (Meyers et al. 1992: ~1 /L), no ice
    # falls in; clouds topped warmer than about -10 C are mostly liquid (Cober et al. 2001,
    # from memory)
    g = clouds.glaciation_likelihood(265.15, 85000.0, 2e-4, 265.15, updraft=0.2)
    assert float(g) < 0.2


def test_glaciation_bounds_and_limits():
    # physical laws: in [0, 1]; 1 below homogeneous freezing; 0 above 0 C; updraft keeps
    # liquid (Korolev & Mazin 2003); more ice above -> more likely
    t = np.linspace(230.0, 276.0, 24)
    g = clouds.glaciation_likelihood(t, 70000.0, 2e-4, t, ice_above=1e-4)
    assert np.all((g >= 0) & (g <= 1))
    assert np.all(g[t <= 235.15] == 1.0) and np.all(g[t >= T0] == 0.0)
    slow = clouds.glaciation_likelihood(253.15, 70000.0, 2e-4, 253.15, ice_above=3e-5, updraft=0.0)
    fast = clouds.glaciation_likelihood(253.15, 70000.0, 2e-4, 253.15, ice_above=3e-5, updraft=2.0)
    more = clouds.glaciation_likelihood(253.15, 70000.0, 2e-4, 253.15, ice_above=1e-4, updraft=0.0)
    assert fast < slow < more
    assert np.isnan(clouds.glaciation_likelihood(np.nan, 70000.0, 1e-4, 260.0))


# --- Appendix C ----------------------------------------------------------------------------


def test_appendix_c_envelope_values_from_memory():
    # from memory (14 CFR 25 Appendix C fig. 1, continuous maximum at MED 15 um): about
    # 0.8 g/m3 at 0 C falling to about 0.2 g/m3 at -30 C
    lim = clouds.appendix_c_limit(np.array([273.15, 243.15]), clouds.APPENDIX_C_CONTINUOUS_MAX)
    np.testing.assert_allclose(lim, [0.8e-3, 0.2e-3])
    # from memory: intermittent maximum about 2.5-3 g/m3 near 0 C
    im = float(clouds.appendix_c_limit(273.15, clouds.APPENDIX_C_INTERMITTENT_MAX))
    assert 2.5e-3 <= im <= 3.0e-3
    assert np.isnan(clouds.appendix_c_limit(280.0, clouds.APPENDIX_C_CONTINUOUS_MAX))


def test_appendix_c_warnings_are_strings_with_counts():
    ex = clouds.appendix_c_exceedances(
        [1.0e-3, 0.3e-3, 3.0e-3], [263.15, 263.15, 263.15], convective=[False, False, True]
    )
    assert ex == {"continuous maximum": (1, 1.0e-3), "intermittent maximum": (1, 3.0e-3)}
    lines = clouds.appendix_c_warnings(ex)
    assert len(lines) == 2 and all("from memory" in s for s in lines)


def test_threshold_models_dispatch():
    # stated models: the saturation model only takes saturated air as cloud
    assert float(clouds.liquid_cloud_rh_threshold(263.15, model="water-saturation")) == 0.999
    with pytest.raises(ValueError, match="ice-water-blend"):
        clouds.liquid_cloud_rh_threshold(263.15, model="fixed")


def test_glaciation_rises_as_the_cloud_top_cools():
    # physical law: more ice nuclei act in colder cloud tops (Meyers et al. 1992), so in
    # still air the likelihood rises monotonically from -5 C to -35 C
    t = np.arange(-5.0, -36.0, -5.0) + T0
    g = clouds.glaciation_likelihood(t, 60000.0, 2e-4, t)
    assert np.all(np.diff(g) > 0) and g[0] < 0.1 and g[-1] > 0.9
