"""Heat balance at the stagnation line, ice type and ice density.

The water a collector catches (:mod:`icing.collection`) freezes, partly or
wholly, at the stagnation line according to the Messinger (1953) balance; the
frozen fraction sets the ice type and the surface temperature sets the rime
density. :func:`icing.calc.airframe.airframe_icing` runs the whole chain for
every collector of an airframe; the conventions of ours (ice-type bounds, aft
recovery, counted catch, severity) are stated in its module docstring.

References
----------
.. [Mes53] Messinger, B. L. (1953), Equilibrium temperature of an unheated icing
   surface as a function of air speed, J. Aeronaut. Sci. 20, 29-42.
.. [And04] Anderson, D. N. (2004), Manual of scaling methods, NASA/CR-2004-212875.
.. [MS84] Makkonen, L. & Stallabrass, J. R. (1984/1987), rime density
   experiments (form as quoted from memory in docs/references.md).
.. [Mac62] Macklin, W. C. (1962), The density and structure of ice formed by
   accretion, QJRMS 88, 30-50.
.. [Kor03] Korolev, A. V. et al. (2003), Microphysical characterization of mixed-
   phase clouds, QJRMS 129, 39-65.
"""

from __future__ import annotations

import functools

import numpy as np

from icing import codes
from icing.calc.thermo import (
    air_conductivity,
    air_density,
    air_viscosity,
    saturation_vapor_pressure,
    vapor_diffusivity,
)
from icing.constants import (
    CP_AIR,
    CP_WATER,
    EPSILON,
    LF0,
    LS0,
    LV0,
    PRANDTL_AIR,
    RHO_ICE,
    RV,
    T0,
)

__all__ = [
    "MIXED_MIN_FRACTION",
    "AFT_RECOVERY_FACTOR",
    "RIME_DENSITY_MIN",
    "recovery_temperature",
    "stagnation_heat_transfer",
    "evaporation_mass_flux",
    "freezing_fraction",
    "surface_temperature",
    "rime_density_makkonen",
    "rime_density_macklin62",
    "ice_density",
    "ice_type",
]

#: Lower freezing-fraction bound of "mixed" ice (our convention, see module doc).
MIXED_MIN_FRACTION = 0.3
#: Floor of rime density. [kg m-3]
RIME_DENSITY_MIN = 100.0

_LOG_BRIDGE = np.log10(173.0 / 60.0)
#: Recovery factor of the air energy term aft of the stagnation line (boundary
#: layer, 0.85-0.89; the lower end, which is colder).
AFT_RECOVERY_FACTOR = 0.85


def recovery_temperature(temperature, airspeed, *, recovery_factor=1.0):
    """Recovery (adiabatic-wall) temperature ``T_r = T + r V^2 / (2 c_p)``.

    Parameters
    ----------
    temperature : array_like
        Static air temperature. [K]
    airspeed : array_like
        Speed of the air relative to the surface. [m/s]
    recovery_factor : float
        ``r``: 1 at a stagnation point, ~0.85-0.89 in a laminar/turbulent
        boundary layer. [1]

    Returns
    -------
    numpy.ndarray
        Recovery temperature. [K]

    References
    ----------
    Energy equation for adiabatic deceleration (any gas-dynamics text); Anderson
    (2004), [And04]_.

    Examples
    --------
    >>> round(float(recovery_temperature(263.15, 100.0) - 263.15), 2)
    4.98
    """
    v = np.asarray(airspeed, dtype=float)
    return np.asarray(temperature, dtype=float) + recovery_factor * v * v / (2.0 * CP_AIR)


def stagnation_heat_transfer(cylinder_diameter, airspeed, *, pressure, temperature):
    """Convective heat-transfer coefficient at the stagnation line of a cylinder.

    ``h_c = Nu k / D`` with ``Nu = 1.14 Re_D^0.5 Pr^0.4``, ``Re_D = rho V D / mu``:
    the laminar stagnation-point (Hiemenz) boundary layer with the potential-flow
    velocity gradient ``4 U / D`` of a cylinder, ``Nu_D = 2 Re_D^0.5 (-theta'(0))``
    (confirmed by solving the Hiemenz equations in the tests: within 1 % for Pr
    0.7-1). Measured cylinder stagnation lines run somewhat lower (their velocity
    gradient is below the potential-flow value; from memory, by some 5-10 %), so
    the heat transfer, and with it the freezing, errs on the high side.

    Parameters
    ----------
    cylinder_diameter : array_like
        Cylinder (equivalent) diameter. [m]
    airspeed : array_like
        Speed relative to the cylinder. [m/s]
    pressure, temperature : array_like
        Air pressure [Pa] and temperature [K].

    Returns
    -------
    numpy.ndarray
        ``h_c``. [W m-2 K-1]

    Examples
    --------
    >>> 100 < float(stagnation_heat_transfer(0.05, 100.0, pressure=70000.0,
    ...                                       temperature=263.15)) < 1000
    True
    """
    d = np.asarray(cylinder_diameter, dtype=float)
    rho = air_density(pressure, temperature)
    mu = air_viscosity(temperature)
    re = rho * np.asarray(airspeed, dtype=float) * d / mu
    nu = 1.14 * np.sqrt(re) * PRANDTL_AIR**0.4  # Nu = 1.14 Re^0.5 Pr^0.4
    return nu * air_conductivity(temperature) / d


def _evaporation_coefficient(pressure, temperature, *, rho=None, mu=None):
    """``(Pr/Sc)^(2/3) eps / (c_p p)``: mass flux per (h_c * vapour-pressure excess).

    ``rho`` and ``mu``: the dry air's density and viscosity at (pressure, temperature),
    when the caller has them (the same values).
    """
    rho = air_density(pressure, temperature) if rho is None else rho
    mu = air_viscosity(temperature) if mu is None else mu
    sc = mu / (rho * vapor_diffusivity(temperature, pressure))
    return (PRANDTL_AIR / sc) ** (2.0 / 3.0) * EPSILON / (CP_AIR * np.asarray(pressure, float))


def evaporation_mass_flux(
    h_c, surface_vapor_pressure, ambient_vapor_pressure, *, pressure, temperature
):
    """Evaporation (or sublimation) mass flux by the Chilton-Colburn analogy.

    ``m_e = (h_c / c_p) (Pr/Sc)^(2/3) eps (e_s - e_a) / p``: heat and mass transfer
    coefficients related by the Lewis number to the two-thirds power.

    Parameters
    ----------
    h_c : array_like
        Heat-transfer coefficient. [W m-2 K-1]
    surface_vapor_pressure, ambient_vapor_pressure : array_like
        Vapour pressure at the surface (saturation at the surface temperature)
        and in the free stream. [Pa]
    pressure, temperature : array_like
        Air pressure [Pa] and temperature [K].

    Returns
    -------
    numpy.ndarray
        Mass flux leaving the surface (negative: condensation). [kg m-2 s-1]

    References
    ----------
    Chilton, T. H. & Colburn, A. P. (1934), Ind. Eng. Chem. 26, 1183; as used in
    the Messinger balance by Anderson (2004) [And04]_.

    Examples
    --------
    >>> float(evaporation_mass_flux(300.0, 611.0, 611.0, pressure=8e4, temperature=270.0))
    0.0
    """
    coef = _evaporation_coefficient(pressure, temperature)
    return (
        np.asarray(h_c, float)
        * coef
        * (np.asarray(surface_vapor_pressure, float) - np.asarray(ambient_vapor_pressure, float))
    )


@functools.lru_cache(maxsize=1)
def _es_freezing():
    """Return the saturation vapour pressure over water at 0 C [Pa]."""
    return float(saturation_vapor_pressure(T0, phase="liquid"))


def _glaze_fraction(t, v, m_imp, h_c, evap_coef, e_a, recovery_factor):
    """Messinger freezing fraction at T_s = 0 C in Anderson's (2004) form.

    ``recovery_factor`` scales the kinetic heating of both the air and the drops
    (1 at the stagnation line).
    """
    e_f = _es_freezing()  # saturation over water at 0 C [Pa]
    phi = T0 - t - recovery_factor * v * v / (2.0 * CP_WATER)  # drop energy term [K]
    evap = evap_coef * (e_f - e_a) * LV0  # evaporation term of theta [K]
    theta = (T0 - t - recovery_factor * v * v / (2.0 * CP_AIR)) + evap  # air energy term [K]
    with np.errstate(divide="ignore", invalid="ignore"):
        b = m_imp * CP_WATER / h_c  # relative heat factor [1]
        n0 = CP_WATER / LF0 * (phi + theta / b)  # n0 = (c_w/Lf)(phi + theta/b)
    return np.where(m_imp > 0.0, n0, np.nan)


def _balance_terms(
    temperature, airspeed, pressure, lwc, beta0, cylinder_diameter, relative_humidity
):
    """(T, V, impinging flux, h_c, evaporation coefficient, ambient vapour pressure)."""
    t = np.asarray(temperature, dtype=float)
    v = np.asarray(airspeed, dtype=float)
    h_c = stagnation_heat_transfer(cylinder_diameter, v, pressure=pressure, temperature=t)
    coef = _evaporation_coefficient(pressure, t)
    e_a = np.asarray(relative_humidity, float) * saturation_vapor_pressure(t, phase="liquid")
    m_imp = np.asarray(lwc, float) * v * np.asarray(beta0, float)
    return t, v, m_imp, h_c, coef, e_a


def freezing_fraction(
    temperature,
    airspeed,
    *,
    pressure,
    lwc,
    beta0,
    cylinder_diameter,
    relative_humidity=1.0,
    recovery_factor=1.0,
):
    """Stagnation-line freezing fraction ``n0``, Messinger (1953) balance.

    In the form of Anderson (2004): ``n0 = (c_w / Lf) (phi + theta / b)`` with the
    drop energy term ``phi = T_f - T - r V^2 / (2 c_w)`` (sensible heat to bring
    the drops to 0 C less their kinetic energy), the air energy term
    ``theta = (T_f - T - r V^2 / (2 c_p)) + Lv m_e / h_c`` (convection to the
    recovery temperature plus evaporation, ``m_e`` the evaporation mass flux at
    ``T_s = 0 C``), and the relative heat factor
    ``b = LWC V beta0 c_w / h_c``. Convection: :func:`stagnation_heat_transfer`;
    evaporation: Chilton-Colburn (:func:`evaporation_mass_flux`) between
    saturation over water at 0 C and the ambient vapour pressure
    ``RH e_s,w(T)``.

    ``n0 >= 1``: dry growth (rime); ``0 < n0 < 1``: wet growth (glaze) with
    runback; ``n0 <= 0``: no ice. With dry air evaporation can keep ``n0 > 0``
    slightly above 0 C.

    Parameters
    ----------
    temperature : array_like
        Static air temperature. [K]
    airspeed : array_like
        Speed relative to the collector. [m/s]
    pressure : array_like
        Air pressure. [Pa]
    lwc : array_like
        Liquid water content of the impinging drops. [kg m-3]
    beta0 : array_like
        Stagnation-line collection efficiency. [1]
    cylinder_diameter : array_like
        Equivalent cylinder diameter (for the heat transfer). [m]
    relative_humidity : array_like
        Ambient relative humidity over water (fraction). [1]
    recovery_factor : float
        Recovery factor ``r`` of the kinetic heating of air and drops: 1 at the
        stagnation line (``AFT_RECOVERY_FACTOR`` gives the aft balance). [1]

    Returns
    -------
    numpy.ndarray
        ``n0`` (not clipped); NaN where no water impinges.

    References
    ----------
    [Mes53]_, [And04]_ eqs. for n0, phi, theta, b (as quoted in docs/references.md,
    from memory).

    Examples
    --------
    >>> n_cold = freezing_fraction(253.15, 60.0, pressure=7e4, lwc=3e-4, beta0=0.7,
    ...                            cylinder_diameter=0.05)
    >>> n_warm = freezing_fraction(271.15, 60.0, pressure=9e4, lwc=8e-4, beta0=0.7,
    ...                            cylinder_diameter=0.05)
    >>> bool(n_cold > 1.0 > n_warm > 0.0)
    True
    """
    terms = _balance_terms(
        temperature, airspeed, pressure, lwc, beta0, cylinder_diameter, relative_humidity
    )
    return _glaze_fraction(*terms, recovery_factor)


def _dry_surface_temperature(t, v, m_imp, h_c, evap_coef, e_a, recovery_factor, iterations=4):
    """Newton solution of the dry-growth balance for the surface temperature."""
    t_r = t + recovery_factor * v * v / (2.0 * CP_AIR)
    gain = m_imp * (LF0 + 0.5 * v * v)  # latent heat of fusion + drop kinetic energy
    # first guess: sublimation at its 0 C value, linear balance in T_s
    e_f = _es_freezing()
    ts = (gain + h_c * t_r + m_imp * CP_WATER * t - h_c * evap_coef * (e_f - e_a) * LS0) / (
        h_c + m_imp * CP_WATER
    )
    ts = np.clip(ts, t - 5.0, T0)
    # the factors that do not change from step to step, formed once (the same values:
    # each product keeps its left-to-right order)
    h_e = h_c * evap_coef
    h_el = h_e * LS0
    m_c = m_imp * CP_WATER
    slope0 = -h_c - m_c
    lo = t - 20.0
    for _ in range(iterations):
        es = saturation_vapor_pressure(ts, phase="solid")
        f = gain + h_c * (t_r - ts) - h_e * (es - e_a) * LS0 - m_c * (ts - t)
        dfdt = slope0 - h_el * es * LS0 / (RV * ts * ts)
        ts = np.clip(ts - f / dfdt, lo, T0)
    return ts


def surface_temperature(
    temperature,
    airspeed,
    *,
    pressure,
    lwc,
    beta0,
    cylinder_diameter,
    relative_humidity=1.0,
    recovery_factor=1.0,
):
    """Stagnation-line surface temperature from the Messinger balance.

    In dry growth (``n0 >= 1``) all impinging water freezes and the surface is
    below 0 C: ``m (Lf + V^2/2) + h_c (T_r - T_s) = m_s Ls + m c_w (T_s - T)``
    (fusion heat and drop kinetic energy against convection to the recovery
    temperature, sublimation by Chilton-Colburn with saturation over ice at
    ``T_s``, and warming of the drops), solved by four vectorised Newton steps.
    In wet growth the surface is at 0 C.

    Parameters
    ----------
    temperature, airspeed, pressure, lwc, beta0, cylinder_diameter, relative_humidity,
    recovery_factor
        As :func:`freezing_fraction`.

    Returns
    -------
    numpy.ndarray
        Surface temperature, at most 273.15 K. [K]; NaN where no water impinges.

    Examples
    --------
    >>> ts = surface_temperature(253.15, 60.0, pressure=7e4, lwc=3e-4, beta0=0.7,
    ...                          cylinder_diameter=0.05)
    >>> bool(253.15 < ts < 273.15)
    True
    """
    terms = _balance_terms(
        temperature, airspeed, pressure, lwc, beta0, cylinder_diameter, relative_humidity
    )
    n0 = _glaze_fraction(*terms, recovery_factor)
    ts = _dry_surface_temperature(*terms, recovery_factor)
    return np.where(np.isnan(n0), np.nan, np.where(n0 >= 1.0, ts, T0))


def rime_density_makkonen(r):
    """Rime density, Makkonen & Stallabrass form, valid for ``1 <= R <= 60``.

    ``rho = 0.378 + 0.425 log10 R - 0.0823 (log10 R)^2`` g/cm3 (from memory).

    Parameters
    ----------
    r : array_like
        Macklin's parameter ``R = -MVD[um] v0[m/s] / (2 Ts[C])``. [1]

    Returns
    -------
    numpy.ndarray
        Density [kg m-3]; NaN outside ``1 <= R <= 60`` (no extrapolation).

    Examples
    --------
    >>> round(float(rime_density_makkonen(10.0)), 1)
    720.7
    """
    r = np.asarray(r, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.log10(r)
        rho = 1000.0 * (0.378 + 0.425 * x - 0.0823 * x * x)  # g/cm3 -> kg/m3
    return np.where((r >= 1.0) & (r <= 60.0), rho, np.nan)


def rime_density_macklin62(r):
    """Rime density, Macklin (1962): ``rho = 110 R^0.76`` kg/m3 for ``1 <= R <= 10``.

    Returns NaN outside that range (range from memory).

    Examples
    --------
    >>> round(float(rime_density_macklin62(10.0)), 1)
    633.0
    """
    r = np.asarray(r, dtype=float)
    with np.errstate(invalid="ignore"):
        rho = 110.0 * r**0.76  # Macklin 1962
    return np.where((r >= 1.0) & (r <= 10.0), rho, np.nan)


def ice_density(mvd, impact_speed, surface_temperature_, *, glaze=False, model="makkonen"):
    """Accreted ice density: rime by Macklin's parameter ``R``, 917 kg/m3 for glaze.

    ``R = -MVD[um] v0 / (2 Ts[C])`` with ``v0`` the drop impact speed (we use the
    free-stream speed at the section, an upper bound of the impact speed: it
    over-states ``R`` and the density, i.e. under-states thickness slightly).
    Outside the fit's range: ``R < 1`` holds the value at ``R = 1`` (378 kg/m3; no
    extrapolation); ``R > 60`` bridges (ours) linearly in ``log10 R`` from the value
    at 60 (874 kg/m3) to 917 kg/m3 at ``R = 173``, where the fit's own quadratic
    reaches solid ice, so the density runs continuously into wet growth. The
    result is bounded to [100, 917] kg/m3. ``model="macklin"`` uses
    Macklin (1962) where ``1 <= R <= 10`` and Makkonen-Stallabrass elsewhere.

    Parameters
    ----------
    mvd : array_like
        Median volume diameter. [m]
    impact_speed : array_like
        Drop impact speed ``v0``. [m/s]
    surface_temperature_ : array_like
        Surface temperature. [K]
    glaze : array_like of bool
        Wet growth (density 917 kg/m3).
    model : {"makkonen", "macklin"}

    Returns
    -------
    numpy.ndarray
        Density. [kg m-3]

    Examples
    --------
    >>> round(float(ice_density(20e-6, 20.0, 253.15)), 0)
    721.0
    """
    if model not in ("makkonen", "macklin"):
        raise ValueError(f"unknown ice density model {model!r}; expected makkonen, macklin")
    ts_c = np.minimum(np.asarray(surface_temperature_, float) - T0, -1e-3)
    r = -np.asarray(mvd, float) * 1e6 * np.asarray(impact_speed, float) / (2.0 * ts_c)
    rc = np.clip(r, 1.0, 60.0)
    rho = rime_density_makkonen(rc)
    if model == "macklin":
        rho = np.where((r >= 1.0) & (r <= 10.0), rime_density_macklin62(rc), rho)
    # bridge above R = 60 (ours): linear in log10 R from the fit's edge value to
    # 917 kg/m3 at R = 173, where the fit's own curve reaches solid ice; this keeps
    # the density continuous into wet growth (Ts -> 0 C, R -> infinity)
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.clip(np.log10(np.maximum(r, 60.0) / 60.0) / _LOG_BRIDGE, 0.0, 1.0)
    rho = np.where(r > 60.0, rho + w * (RHO_ICE - rho), rho)
    rho = np.clip(rho, RIME_DENSITY_MIN, RHO_ICE)
    return np.where(np.asarray(glaze, bool), RHO_ICE, np.where(np.isnan(r), np.nan, rho))


def ice_type(n0):
    """Ice type code (``codes.ICE_*``) from the stagnation freezing fraction.

    ``n0 >= 1`` rime; ``MIXED_MIN_FRACTION <= n0 < 1`` mixed; ``0 < n0 <
    MIXED_MIN_FRACTION`` clear; ``n0 <= 0`` or NaN none (our convention).

    Examples
    --------
    >>> ice_type([1.2, 0.6, 0.1, -0.5]).tolist()
    [1, 2, 3, 0]
    """
    n = np.asarray(n0, dtype=float)
    with np.errstate(invalid="ignore"):
        out = np.where(
            n >= 1.0,
            codes.ICE_RIME,
            np.where(
                n >= MIXED_MIN_FRACTION,
                codes.ICE_MIXED,
                np.where(n > 0.0, codes.ICE_CLEAR, codes.ICE_NONE),
            ),
        )
    return out.astype(np.int8)
