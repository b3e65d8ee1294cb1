"""Collision efficiency of drops onto cylinders (icing.collection).

Sources of the check values:
- Langmuir & Blodgett (1946), AAF Tech. Rep. 5418: the fits of E and beta0 with the
  modified inertia parameter, as quoted in docs/references.md (from memory there; the
  definitions checked by derivation). Expected numbers below are *derived from the
  published fit* by hand (math module), not read from a table.
- Finstad, Lozowski & Gates (1988), J. Atmos. Oceanic Technol. 5, 160: the fit of E,
  as quoted in docs/references.md (from memory there); expected numbers *derived from the
  published fit* by hand.
- Finstad, Lozowski & Makkonen (1988), J. Atmos. Sci. 45, 4008: the MVD alone errs by
  ~0.02 in E against the spectrum (docs/references.md [V]).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from icing.calc import collection as col
from icing.calc.thermo import air_density, air_viscosity

P, T = 70000.0, 263.15  # a typical icing level (700 hPa, -10 C)


# ---------------------------------------------------------------- dimensionless groups
def test_inertia_parameter_definition():
    # K = rho_w d^2 U / (9 mu D), Langmuir & Blodgett (1946); derived by hand
    k = col.inertia_parameter(20e-6, 0.05, 100.0, 1.7e-5)
    assert float(k) == pytest.approx(1000.0 * 4e-10 * 100.0 / (9 * 1.7e-5 * 0.05), rel=1e-12)


def test_range_parameter_is_re_squared_over_k():
    # phi = Re^2 / K (Langmuir & Blodgett 1946): an identity, exact to rounding
    d, D, u, mu, rho = 20e-6, 0.05, 80.0, 1.7e-5, 0.9
    re = rho * u * d / mu
    k = col.inertia_parameter(d, D, u, mu)
    assert float(col.range_parameter(D, u, rho, mu)) == pytest.approx(re**2 / k, rel=1e-12)


def test_modified_inertia_parameter_derived_point():
    # derived from the published fit: K = 10, phi = 1000 -> Re = 100,
    # lambda/lambda_s = 1 / (0.8388 + 0.1483 + 1.847)
    ratio = 1.0 / (0.8388 + 0.001483 * 100.0 + 0.1847 * 10.0)
    expected = 0.125 + ratio * (10.0 - 0.125)
    assert float(col.modified_inertia_parameter(10.0, 1000.0)) == pytest.approx(expected, 1e-12)


def test_modified_inertia_parameter_stokes_limit():
    # Re -> 0: the drop-range ratio is clamped at 1 (its Stokes value), K0 = K
    assert float(col.modified_inertia_parameter(3.0, 0.0)) == pytest.approx(3.0)


# ---------------------------------------------------------------- Langmuir-Blodgett fit
@pytest.mark.parametrize(
    "k, expected",
    [
        # derived from the published fit (phi = 0, so K0 = K):
        (1.0, 0.466 * math.log10(8.0) ** 2),  # quadratic-log branch: 0.38006
        (0.5, 0.466 * math.log10(4.0) ** 2),  # 0.16873
        (2.0, 2.0 / (2.0 + math.pi / 2)),  # hyperbolic branch: 0.56009
        (10.0, 10.0 / (10.0 + math.pi / 2)),  # 0.86424
    ],
)
def test_langmuir_blodgett_e_derived_points(k, expected):
    # tolerance: exact transcription, rounding only
    assert float(col.collision_efficiency_langmuir46(k, 0.0)) == pytest.approx(expected, 1e-12)


@pytest.mark.parametrize("k", [0.5, 1.0, 3.0, 30.0])
def test_langmuir_blodgett_beta0_derived_points(k):
    # derived from the published fit: beta0 = 1.40 x^0.84 / (1 + 1.40 x^0.84), x = K0 - 1/8
    x = 1.40 * (k - 0.125) ** 0.84
    got = float(col.stagnation_efficiency_langmuir46(k, 0.0))
    assert got == pytest.approx(x / (1 + x), 1e-12)


def test_langmuir_blodgett_branches_joined_without_a_step_down():
    # the two published branches differ by 0.004 at K0 = 1.1 (0.4157 vs 0.4118, derived);
    # we hold the upper one at the lower one's end so E never decreases
    just_below = float(col.collision_efficiency_langmuir46(1.1, 0.0))
    just_above = float(col.collision_efficiency_langmuir46(1.1 + 1e-9, 0.0))
    assert just_above >= just_below
    assert just_below == pytest.approx(0.466 * math.log10(8.8) ** 2, 1e-12)


# ---------------------------------------------------------------- Finstad et al. fit
def _finstad_by_hand(k, phi):
    """The published fit, transcribed independently of the module (math module)."""
    a = 1.066 * k**-0.00616 * math.exp(-1.103 * k**-0.688)
    b = 3.641 * k**-0.498 * math.exp(-1.497 * k**-0.694)
    c = 0.00637 * (phi - 100.0) ** 0.381
    return a - 0.028 - c * (b - 0.0454)


@pytest.mark.parametrize(
    "k, phi",
    [(1.0, 100.0), (1.0, 1000.0), (3.0, 300.0), (10.0, 1000.0), (100.0, 5000.0), (0.5, 2000.0)],
)
def test_finstad_derived_points(k, phi):
    # derived from the published fit; inside its range (phi 100..1e4, K < 1e3):
    # the module must reproduce the formula to rounding
    assert float(col.collision_efficiency_finstad88(k, phi)) == pytest.approx(
        _finstad_by_hand(k, phi), abs=1e-12
    )


def test_finstad_k1_phi100_value():
    # derived from the published fit: A(1) - 0.028 = 1.066 exp(-1.103) - 0.028 = 0.32578
    e = float(col.collision_efficiency_finstad88(1.0, 100.0))
    assert e == pytest.approx(0.325777, abs=1e-6)  # 6 decimals of the hand value


def test_finstad_near_zero_below_k_017():
    # published statement (docs/references.md): E ~ 0 below K ~ 0.17 (fit clipped at 0 there)
    assert float(col.collision_efficiency_finstad88(0.16, 100.0)) == 0.0
    assert float(col.collision_efficiency_finstad88(0.25, 100.0)) > 0.0


def test_finstad_held_at_its_peak_at_large_k():
    # the fit turns down above K ~ 1e3 (derived from the fit); we hold E at its peak
    k = np.logspace(2, 6, 400)
    e = col.collision_efficiency_finstad88(k, 1000.0)
    assert np.all(np.diff(e) >= 0.0)
    assert _finstad_by_hand(1e5, 1000.0) < _finstad_by_hand(2e3, 1000.0)  # the fit's turn-down
    assert e[-1] == pytest.approx(max(_finstad_by_hand(x, 1000.0) for x in k), abs=1e-4)


def test_finstad_below_phi_100_is_flagged_and_not_below_the_fit_edge():
    # ours: below phi = 100 E is at least the fit at phi = 100 (E falls with phi, so
    # the true value there is not lower) and the point is flagged
    k = np.array([0.5, 1.0, 5.0, 50.0])
    low = col.collision_efficiency_finstad88(k, 30.0)
    edge = col.collision_efficiency_finstad88(k, 100.0)
    assert np.all(low >= edge)
    assert np.all(col.finstad_out_of_range(k, 30.0))
    assert not np.any(col.finstad_out_of_range(k, 500.0))


def test_finstad_joins_langmuir_at_phi_100():
    # ours: the low-phi rule meets the fit at phi = 100 within 0.0075 (near K = 0.18,
    # where the two fits disagree on the onset of impingement, and K ~ 200-1000,
    # where Langmuir-Blodgett nears 1 first); exactly in between
    k = np.logspace(-0.9, 6, 3000)
    below = col.collision_efficiency_finstad88(k, 100.0 - 1e-9)
    at = col.collision_efficiency_finstad88(k, 100.0)
    assert np.max(np.abs(below - at)) < 0.0075
    assert np.max(np.abs(below - at)[(k > 0.3) & (k < 100.0)]) < 1e-9


# ---------------------------------------------------------------- critical K, bounds
@pytest.mark.parametrize("model", ["finstad88", "langmuir46"])
@pytest.mark.parametrize("phi", [0.0, 50.0, 100.0, 1e3, 1e4, 1e6])
def test_no_impingement_below_critical_k(model, phi):
    # Langmuir & Blodgett (1946): no drop reaches a cylinder below K = 1/8 (potential flow)
    k = np.array([0.0, 0.01, 0.1, 0.125])
    assert np.all(col.COLLISION_MODELS[model](k, phi) == 0.0)
    assert float(col.stagnation_efficiency_langmuir46(0.125, phi)) == 0.0


def test_langmuir_impinges_just_above_critical_k():
    # Langmuir & Blodgett (1946): E > 0 as soon as K0 > 1/8
    assert float(col.collision_efficiency_langmuir46(0.13, 0.0)) > 0.0


@pytest.mark.parametrize("model", ["finstad88", "langmuir46"])
def test_e_non_decreasing_in_k_everywhere(model):
    # physical law (a more inertial drop hits at least as often), enforced over the
    # whole plane, in and outside each fit's range
    k = np.logspace(-2, 7, 6000)
    for phi in np.logspace(-1, 7, 60):
        e = col.COLLISION_MODELS[model](k, phi)
        assert np.all(np.diff(e) >= 0.0), phi
        assert np.all((e >= 0.0) & (e <= 1.0))


def test_unknown_model_error_lists_valid_names():
    with pytest.raises(ValueError, match="finstad88, langmuir46"):
        col.cylinder_collision_efficiency(
            20e-6, 0.05, 100.0, pressure=P, temperature=T, model="nope"
        )


def test_nan_in_nan_out():
    e = col.cylinder_collision_efficiency(
        np.array([20e-6, np.nan]), 0.05, 100.0, pressure=P, temperature=T
    )
    assert np.isfinite(e[0]) and np.isnan(e[1])


# ---------------------------------------------------------------- physical invariants
drops = st.floats(1e-6, 3e-3)
bodies = st.floats(2e-4, 2.0)
speeds = st.floats(1.0, 320.0)
pressures = st.floats(3e4, 1.05e5)
temps = st.floats(233.15, 278.15)
models = st.sampled_from(["finstad88", "langmuir46"])


@settings(max_examples=200, deadline=None)
@given(drops, bodies, speeds, pressures, temps, models)
def test_bounds_and_beta0_at_least_e(d, D, u, p, t, model):
    # 0 <= E <= beta0 <= 1: a cylinder catches best on its stagnation line
    e = float(col.cylinder_collision_efficiency(d, D, u, pressure=p, temperature=t, model=model))
    b = float(col.stagnation_efficiency(d, D, u, pressure=p, temperature=t, model=model))
    assert 0.0 <= e <= b <= 1.0


@settings(max_examples=150, deadline=None)
@given(drops, st.floats(1.01, 3.0), bodies, speeds, pressures, temps, models)
def test_e_grows_with_drop_size(d, factor, D, u, p, t, model):
    # physical law: larger drops are more inertial (K ~ d^2) and hit more
    kw = dict(pressure=p, temperature=t, model=model)
    small = float(col.cylinder_collision_efficiency(d, D, u, **kw))
    large = float(col.cylinder_collision_efficiency(d * factor, D, u, **kw))
    # tolerance: Re (hence phi K) also grows with d; the phi = 100 join allows 0.0075
    assert large >= small - 0.0075


@settings(max_examples=150, deadline=None)
@given(drops, bodies, st.floats(1.01, 5.0), speeds, pressures, temps, models)
def test_e_falls_with_collector_size(d, D, factor, u, p, t, model):
    # physical law: a larger body deflects the flow further upstream (K ~ 1/D)
    kw = dict(pressure=p, temperature=t, model=model)
    small = float(col.cylinder_collision_efficiency(d, D, u, **kw))
    large = float(col.cylinder_collision_efficiency(d, D * factor, u, **kw))
    # tolerance: the interpolated peak of the Finstad plateau (held non-increasing in
    # phi) moves by < 1e-7 between its table rows (found by scanning)
    assert large <= small + 1e-6


@settings(max_examples=150, deadline=None)
@given(
    st.floats(5e-6, 100e-6),
    st.floats(0.02, 1.0),
    st.floats(5.0, 250.0),
    st.floats(1.01, 2.0),
    pressures,
    temps,
)
def test_e_grows_with_speed_within_range(d, D, u, factor, p, t):
    # physical law, within the fits' range (sections of 2 cm and more, cloud and
    # drizzle drops). Langmuir-Blodgett: strictly. Finstad: its phi term competes
    # with K, and the phi = 100 join: within 0.0075 (derived by scanning the fit).
    lb = [
        float(
            col.cylinder_collision_efficiency(
                d, D, x, pressure=p, temperature=t, model="langmuir46"
            )
        )
        for x in (u, u * factor)
    ]
    fi = [
        float(col.cylinder_collision_efficiency(d, D, x, pressure=p, temperature=t))
        for x in (u, u * factor)
    ]
    assert lb[1] >= lb[0] - 1e-12
    assert fi[1] >= fi[0] - 0.0075


# ---------------------------------------------------------------- spectrum
def test_spectrum_quadrature_uses_the_project_spectrum():
    # the droplet module's spectrum_bins is the one spectrum definition
    from icing.calc.droplets import spectrum_bins

    d, f = spectrum_bins(20e-6, shape=2.0, n_bins=7)
    r, w = col.spectrum_quadrature(2.0, 7)
    np.testing.assert_allclose(r, np.asarray(d) / 20e-6, rtol=1e-12)
    np.testing.assert_allclose(w, f, rtol=1e-12)
    assert w.sum() == pytest.approx(1.0, abs=1e-12)


def test_spectrum_average_close_to_mvd_value_in_the_usual_range():
    # Finstad, Lozowski & Makkonen (1988): the MVD alone errs by ~0.02 in E.
    # tolerance 0.03: ~0.02 published, plus the coarseness of a 7-bin quadrature
    for u in (60.0, 100.0, 150.0):
        e_spec, _ = col.spectrum_collection(20e-6, 0.05, u, pressure=P, temperature=T)
        e_mvd = col.cylinder_collision_efficiency(20e-6, 0.05, u, pressure=P, temperature=T)
        assert abs(float(e_spec) - float(e_mvd)) < 0.03


def test_spectrum_catches_large_drops_where_the_mvd_does_not():
    # near the critical K the large drops of the spectrum still hit (physical; ours)
    kw = dict(pressure=P, temperature=T)
    mvd, D, u = 8e-6, 0.15, 40.0  # K at the MVD ~ 0.11 < 1/8
    assert float(col.cylinder_collision_efficiency(mvd, D, u, **kw)) == 0.0
    e, b = col.spectrum_collection(mvd, D, u, **kw)
    assert float(e) > 0.0 and float(b) > 0.0


def test_table_matches_direct_sum():
    # the precomputed table is interpolated within 1e-3 of the direct sum (our design
    # tolerance: below the fits' own accuracy by an order of magnitude)
    rng = np.random.default_rng(7)
    n = 20000
    mvd = rng.uniform(5e-6, 60e-6, n)
    D = np.exp(rng.uniform(np.log(3e-4), np.log(1.0), n))
    u = rng.uniform(1.0, 300.0, n)
    p = rng.uniform(3e4, 1.05e5, n)
    t = rng.uniform(233.0, 278.0, n)
    for model in ("finstad88", "langmuir46"):
        kw = dict(pressure=p, temperature=t, model=model)
        e1, b1 = col.spectrum_collection(mvd, D, u, method="direct", **kw)
        e2, b2 = col.spectrum_collection(mvd, D, u, method="table", **kw)
        assert np.max(np.abs(e1 - e2)) < 1e-3
        assert np.max(np.abs(b1 - b2)) < 1e-3


def test_spectrum_collection_broadcasts_and_propagates_nan():
    e, b = col.spectrum_collection(
        np.array([[15e-6], [np.nan]]), np.array([0.02, 0.2]), 80.0, pressure=P, temperature=T
    )
    assert e.shape == (2, 2) and np.all(np.isnan(e[1])) and np.all(np.isfinite(e[0]))
    assert np.all(e[0, 0] > e[0, 1])  # smaller collector catches more


def test_sld_millimetre_drops_hit_almost_all():
    # physical: mm drops have K in the thousands on airframe sections, E -> ~1
    # (0.95: the Finstad fit itself peaks at 0.98)
    e, b = col.sld_collection(
        np.array([0.5e-3, 1.5e-3]), 0.06, 70.0, pressure=9e4, temperature=269.15
    )
    assert np.all(e > 0.95) and np.all(b >= e)
    e0, b0 = col.sld_collection(np.nan, 0.06, 70.0, pressure=9e4, temperature=269.15)
    assert float(e0) == 0.0 and float(b0) == 0.0


def test_air_properties_used_are_the_project_ones():
    # K and phi use thermo's Sutherland viscosity and density (one set of air properties)
    mu = air_viscosity(T)
    rho = air_density(P, T)
    k = col.inertia_parameter(20e-6, 0.05, 100.0, mu)
    phi = col.range_parameter(0.05, 100.0, rho, mu)
    e = col.cylinder_collision_efficiency(20e-6, 0.05, 100.0, pressure=P, temperature=T)
    assert float(e) == pytest.approx(float(col.collision_efficiency_finstad88(k, phi)), 1e-12)


# ---------------------------------------------------------------- trajectory check
def _trajectories(k, phi, y0, x0=-8.0, dt=0.005, drag="langmuir"):
    """Integrate drop trajectories onto a cylinder (ours); return hit flags and angles.

    Potential flow about the cylinder (lengths in radii, speeds in U, time in R/U),
    drop motion dv/dt = f(Re) (u - v) / K with K = rho_w d^2 U / (9 mu D) (= 2 tau U / D)
    and the drag correction f = C_D Re / 24 of Langmuir & Blodgett, 1 + 0.197 Re^0.63 +
    2.6e-4 Re^1.38 (from memory), or of Schiller & Naumann (1933), 1 + 0.15 Re^0.687
    (the standard sphere-drag fit, Clift, Grace & Weber 1978, Re < 800),
    Re = sqrt(phi K) |u - v|. RK4; drops start 8 radii upstream at offsets y0 with
    the local air velocity.
    """
    re_u = math.sqrt(phi * k)
    n = y0.size

    def air(x, y):
        r4 = (x * x + y * y) ** 2
        return 1.0 - (x * x - y * y) / r4, -2.0 * x * y / r4

    def deriv(s):
        x, y, u, v = s
        ua, va = air(x, y)
        du, dv = ua - u, va - v
        re = re_u * np.hypot(du, dv)
        if drag == "schiller-naumann":
            f = 1.0 + 0.15 * re**0.687
        else:
            f = 1.0 + 0.197 * re**0.63 + 2.6e-4 * re**1.38
        return np.stack([u, v, f * du / k, f * dv / k])

    s = np.stack([np.full(n, x0), y0, *air(np.full(n, x0), y0)])
    hit = np.zeros(n, bool)
    theta = np.full(n, np.nan)
    active = np.ones(n, bool)
    for _ in range(int(20 / dt)):  # time steps of one batch of trajectories
        if not active.any():
            break
        a = s[:, active]
        k1 = deriv(a)
        k2 = deriv(a + 0.5 * dt * k1)
        k3 = deriv(a + 0.5 * dt * k2)
        k4 = deriv(a + dt * k3)
        a = a + dt / 6.0 * (k1 + 2 * k2 + 2 * k3 + k4)
        s[:, active] = a
        idx = np.flatnonzero(active)
        reached = a[0] ** 2 + a[1] ** 2 <= 1.0
        hit[idx[reached]] = True
        theta[idx[reached]] = np.arctan2(a[1][reached], -a[0][reached])
        active[idx[reached | (a[0] > 0.0)]] = False
    return hit, theta


def _trajectory_efficiency(k, phi, n=161, drag="langmuir"):
    """Total efficiency: the largest offset (in radii) that still reaches the surface."""
    y0 = np.linspace(0.0, 1.0, n)
    hit, _ = _trajectories(k, phi, y0, drag=drag)
    return float(y0[hit].max()) if hit.any() else 0.0


def _trajectory_stagnation_efficiency(k, phi):
    """beta0 = d(offset)/d(arc) at the stagnation line, from near-axis trajectories."""
    y0 = np.linspace(0.005, 0.05, 10)
    hit, theta = _trajectories(k, phi, y0, dt=0.002)
    return float(np.polyfit(theta[hit], y0[hit], 1)[0])


@pytest.mark.parametrize(
    "k, phi", [(0.25, 0.0), (1.0, 0.0), (4.0, 0.0), (1.0, 1000.0), (4.0, 1000.0), (10.0, 100.0)]
)
def test_fits_agree_with_an_independent_trajectory_calculation(k, phi):
    # ours: trajectories in potential flow with the Langmuir-Blodgett drag law. This
    # checks the K and phi conventions (a factor 2 in K would move E by ~0.2).
    # tolerance 0.05: the two fits differ by up to ~0.05 here, the drag law is from
    # memory, and the offset grid resolves E to 1/160
    e = _trajectory_efficiency(k, phi)
    assert e == pytest.approx(float(col.collision_efficiency_langmuir46(k, phi)), abs=0.05)
    if phi >= 100.0:
        assert e == pytest.approx(float(col.collision_efficiency_finstad88(k, phi)), abs=0.05)


def test_trajectory_critical_inertia_parameter():
    # Langmuir & Blodgett (1946): in potential flow with Stokes drag no drop hits below
    # K = 1/8; the independent trajectory calculation agrees
    assert _trajectory_efficiency(0.11, 0.0) == 0.0
    assert _trajectory_efficiency(0.25, 0.0) > 0.0


def test_many_spectrum_shapes_fall_back_to_the_direct_sum():
    # a continuum of gamma shapes is summed directly rather than tabulated per shape
    shape = np.linspace(0.0, 6.0, 40)
    kw = dict(pressure=P, temperature=T, shape=shape)
    e1, b1 = col.spectrum_collection(18e-6, 0.04, 90.0, method="table", **kw)
    e2, b2 = col.spectrum_collection(18e-6, 0.04, 90.0, method="direct", **kw)
    np.testing.assert_allclose(e1, e2, atol=1e-12)
    few = col.spectrum_collection(
        18e-6,
        0.04,
        90.0,
        method="table",
        pressure=P,
        temperature=T,
        shape=np.array([1.0, 3.0, 1.0]),
    )[0]
    ref = col.spectrum_collection(
        18e-6,
        0.04,
        90.0,
        method="direct",
        pressure=P,
        temperature=T,
        shape=np.array([1.0, 3.0, 1.0]),
    )[0]
    np.testing.assert_allclose(few, ref, atol=1e-3)  # table design tolerance
    assert few[1] != few[0]  # a narrower spectrum collects differently


@pytest.mark.parametrize(
    "k, phi", [(0.5, 0.0), (1.0, 0.0), (4.0, 0.0), (1.0, 1000.0), (10.0, 100.0)]
)
def test_beta0_agrees_with_an_independent_trajectory_calculation(k, phi):
    # ours: the slope of offset against impact arc near the stagnation line.
    # tolerance 0.06: the fit's own scatter, the drag law from memory, and the impact
    # point taken at the first step inside the surface
    b = _trajectory_stagnation_efficiency(k, phi)
    assert b == pytest.approx(float(col.stagnation_efficiency_langmuir46(k, phi)), abs=0.06)


@pytest.mark.parametrize(
    "k, phi",
    [(0.5, 1000.0), (1.0, 1000.0), (2.0, 3000.0), (1.0, 10000.0), (4.0, 10000.0), (10.0, 5000.0)],
)
def test_finstad_fit_agrees_with_trajectories_at_aircraft_range_parameters(k, phi):
    # phi 1,000-10,000 covers wing and tail leading edges at flight speeds. Ours: the
    # trajectory integration above with the Schiller & Naumann (1933) sphere drag, a
    # drag law independent of both fits. Tolerance 0.03: the offset grid resolves E to
    # 1/160 and the fit's own scatter against Finstad et al.'s computations is ~0.02
    e = _trajectory_efficiency(k, phi, drag="schiller-naumann")
    assert e == pytest.approx(float(col.collision_efficiency_finstad88(k, phi)), abs=0.03)
