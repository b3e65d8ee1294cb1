"""Heat balance, ice type, density, accretion rate and severity per collector.

The water a collector catches (:mod:`icing.collection`) freezes, partly or
wholly, at the stagnation line according to the Messinger (1953) balance; the
frozen fraction sets the ice type, the surface temperature sets the rime
density, and the catch rate, the airframe's ice protection and its ice
tolerance set the severity. :func:`airframe_icing` runs the whole chain for
every collector of an airframe over arrays of any shape.

Conventions of ours, stated once:

* **Ice type** from the stagnation freezing fraction ``n0``: ``n0 >= 1`` rime
  (dry growth); ``MIXED_MIN_FRACTION <= n0 < 1`` (0.3) mixed (wet growth, most
  water freezes near the leading edge, some runs back); ``0 < n0 < 0.3`` clear
  (wet growth, most water runs back and freezes aft as clear ice). Runback is
  flagged wherever ``n0 < 1`` and ice forms.
* **Aft of the stagnation line** the kinetic heating is smaller: the boundary
  layer recovers only part of the dynamic temperature (``AFT_RECOVERY_FACTOR``
  = 0.85 of the stagnation kinetic heating, air and drops; the low end of the
  0.85-0.89 boundary-layer recovery factors). The same Messinger balance with
  that heating gives the aft freezing fraction ``n_aft``. Where ``n0 <= 0`` at
  the stagnation line but ``n_aft > 0``, water runs back and freezes aft: clear
  ice with runback, nothing frozen at the stagnation line itself. Where neither
  freezes there is no ice (a fast airframe's ram rise, e.g. a jet at cruise
  near -10 C).
* **Counted catch**: runback water freezes aft, so the severity counts the
  caught water, not the fraction frozen at the stagnation line: all of it where
  ``max(n0, n_aft) >= 0.3`` (it refreezes over a few such stretches aft), in
  proportion ``max(n0, n_aft) / 0.3`` below (very wet growth: most water leaves
  the surface unfrozen). This keeps the count continuous from rime through
  clear ice to none.
* **Severity** maps the collector's counted catch onto the earlier AIM
  edition's representative rates "on the outer wing" (trace < 6 mm/h, light
  6-25, moderate 25-75, severe > 75 mm/h). The collector's rate on that scale,
  the *equivalent outer-wing rate*, is the caught mass spread as solid ice over
  the collector's frontal height, ``E LWC V / 917 kg m-3`` [mm/h] (for an airfoil
  the equivalent cylinder's frontal height, twice its leading-edge radius), times
  the fraction of it the collector's ice protection leaves on the airframe
  (``PROTECTION_RESIDUAL``; the AIM words are defined by the effect on the
  aircraft and by what its protection can do):

  - ``none`` (1): all of it; and the time until the collector's ice tolerance is
    reached (from the total-catch stagnation thickness rate at the ice's own
    density) raises the word: under ``TOLERANCE_MINUTES`` 5 min severe, under
    20 min at least moderate, under 60 min at least light;
  - ``de-ice`` (1/3; boots, cyclic electric): the surface sheds its ice each
    cycle; what counts is the ice between cycles and the residual after them;
  - ``anti-ice`` (1/10; heated, evaporative or running-wet): the surface stays
    clear; what counts is runback refreezing aft of the heated zone.

  A turboprop with boots in ordinary stratiform cloud thus reads moderate, not
  the severe its unprotected wing rate would give; an anti-iced jet in the same
  cloud at holding speed reads light.
* **SLD** (at least 0.01 g/m3 of drizzle or rain drops that freeze on the
  collector) impinge aft of the protected areas, the AIM's mark of severe
  icing: freezing rain reads severe on unprotected and boot-protected
  collectors and at least moderate on anti-iced ones; freezing drizzle reads
  severe on boot-protected collectors and at least moderate on unprotected and
  anti-iced ones.
* "trace" needs at least 0.01 g/m3 of supercooled liquid (the in-cloud
  threshold of Korolev et al. 2003); less reads none.
* Missing input (NaN) reads ``codes.GAP``, never none.

References
----------
.. [Mes53] Messinger, B. L. (1953), Equilibrium temperature of an unheated icing
   surface as a function of air speed, J. Aeronaut. Sci. 20, 29-42.
.. [And04] Anderson, D. N. (2004), Manual of scaling methods, NASA/CR-2004-212875.
.. [MS84] Makkonen, L. & Stallabrass, J. R. (1984/1987), rime density
   experiments (form as quoted from memory in REFERENCES.md).
.. [Mac62] Macklin, W. C. (1962), The density and structure of ice formed by
   accretion, QJRMS 88, 30-50.
.. [Kor03] Korolev, A. V. et al. (2003), Microphysical characterization of mixed-
   phase clouds, QJRMS 129, 39-65.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from . import codes
from .collection import (
    _model,
    _ratios_per_point,
    _spectrum_fast,
    _spectrum_kernel,
    finstad_out_of_range,
    inertia_parameter,
    range_parameter,
    spectrum_quadrature,
)
from .constants import (
    CP_AIR,
    CP_WATER,
    EPSILON,
    LF0,
    LS0,
    LV0,
    PRANDTL_AIR,
    RHO_ICE,
    RHO_WATER,
    RV,
    T0,
)
from .constants import IN_CLOUD_LWC as _IN_CLOUD_LWC
from .thermo import (
    air_conductivity,
    air_density,
    air_viscosity,
    saturation_vapor_pressure,
    vapor_diffusivity,
)

__all__ = [
    "MIXED_MIN_FRACTION",
    "IN_CLOUD_LWC",
    "AIM_RATES_MM_H",
    "TOLERANCE_MINUTES",
    "PROTECTION_RESIDUAL",
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
    "rate_severity",
    "AirframeIcing",
    "airframe_icing",
    "fit_range_flags",
    "assumptions",
]

#: Lower freezing-fraction bound of "mixed" ice (our convention, see module doc).
MIXED_MIN_FRACTION = 0.3
#: In-cloud liquid threshold (Korolev et al. 2003): 0.01 g/m3. [kg m-3]
IN_CLOUD_LWC = _IN_CLOUD_LWC  # constants.IN_CLOUD_LWC (Korolev et al. 2003)
#: Earlier AIM edition's representative outer-wing rates: trace/light,
#: light/moderate and moderate/severe boundaries. [mm/h]
AIM_RATES_MM_H = (6.0, 25.0, 75.0)
#: Minutes to ice tolerance that raise an unprotected collector's severity to
#: severe / at least moderate / at least light (our convention).
TOLERANCE_MINUTES = (5.0, 20.0, 60.0)
#: Floor of rime density. [kg m-3]
RIME_DENSITY_MIN = 100.0

_LOG_BRIDGE = np.log10(173.0 / 60.0)
#: Fraction of the caught ice that each kind of ice protection leaves on the
#: protected collector, for the severity scale (our convention, see module doc).
PROTECTION_RESIDUAL = {"none": 1.0, "de-ice": 1.0 / 3.0, "anti-ice": 0.1}
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

    ``h_c = Nu k / D`` with ``Nu = 1.14 Re_D^0.5 Pr^0.4`` (laminar stagnation
    flow on a cylinder, from memory), ``Re_D = rho V D / mu``.

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


def _evaporation_coefficient(pressure, temperature):
    """``(Pr/Sc)^(2/3) eps / (c_p p)``: mass flux per (h_c * vapour-pressure excess)."""
    rho = air_density(pressure, temperature)
    sc = air_viscosity(temperature) / (rho * vapor_diffusivity(temperature, pressure))
    return (PRANDTL_AIR / sc) ** (2.0 / 3.0) * EPSILON / (CP_AIR * np.asarray(pressure, float))


def evaporation_mass_flux(h_c, surface_vapor_pressure, ambient_vapor_pressure, *, pressure,
                          temperature):
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
    return np.asarray(h_c, float) * coef * (
        np.asarray(surface_vapor_pressure, float) - np.asarray(ambient_vapor_pressure, float)
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


def _balance_terms(temperature, airspeed, pressure, lwc, beta0, cylinder_diameter,
                   relative_humidity):
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
    [Mes53]_, [And04]_ eqs. for n0, phi, theta, b (as quoted in REFERENCES.md,
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
    terms = _balance_terms(temperature, airspeed, pressure, lwc, beta0, cylinder_diameter,
                           relative_humidity)
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
    for _ in range(iterations):
        es = saturation_vapor_pressure(ts, phase="solid")
        f = gain + h_c * (t_r - ts) - h_c * evap_coef * (es - e_a) * LS0 - m_imp * CP_WATER * (
            ts - t
        )
        dfdt = -h_c - m_imp * CP_WATER - h_c * evap_coef * LS0 * es * LS0 / (RV * ts * ts)
        ts = np.clip(ts - f / dfdt, t - 20.0, T0)
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
    terms = _balance_terms(temperature, airspeed, pressure, lwc, beta0, cylinder_diameter,
                           relative_humidity)
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
            np.where(n >= MIXED_MIN_FRACTION, codes.ICE_MIXED,
                     np.where(n > 0.0, codes.ICE_CLEAR, codes.ICE_NONE)),
        )
    return out.astype(np.int8)


def rate_severity(rate_mm_h):
    """Return the severity code of a rate on the AIM outer-wing scale.

    Trace below 6 mm/h, light 6-25, moderate 25-75, severe from 75 mm/h; 0 for
    a zero rate.

    Examples
    --------
    >>> rate_severity([0.0, 3.0, 10.0, 50.0, 100.0]).tolist()
    [0, 1, 2, 3, 4]
    """
    r = np.asarray(rate_mm_h, dtype=float)
    sev = (r > 0.0).astype(np.int8)
    for bound in AIM_RATES_MM_H:
        sev += r >= bound
    return sev


_FIELDS = (
    "severity",
    "collection_efficiency",
    "beta0",
    "freezing_fraction",
    "ice_type",
    "ice_density",
    "accretion_rate_mm_h",
    "mass_rate",
    "runback",
    "time_to_tolerance_min",
)


@dataclass(frozen=True)
class AirframeIcing:
    """Icing of an airframe at every point of an array (shape S).

    Attributes
    ----------
    severity : ndarray int8
        ``codes.SEVERITY`` index 0..4; ``codes.GAP`` (-1) where input is missing.
    worst_collector : ndarray int
        Index into ``airframe.collectors`` of the collector setting severity (the
        reference collector where nothing ices).
    collection_efficiency : ndarray
        Overall total collection efficiency ``E`` of the worst collector: cloud and
        SLD populations weighted by their liquid water content. [1]
    beta0 : ndarray
        Stagnation-line efficiency, weighted the same way. [1]
    freezing_fraction : ndarray
        Stagnation freezing fraction ``n0`` (not clipped; NaN without water). [1]
    ice_type : ndarray int8
        ``codes.ICE_TYPES`` index.
    ice_density : ndarray
        [kg m-3]; NaN where no ice.
    accretion_rate_mm_h : ndarray
        Stagnation thickness rate of the ice frozen there,
        ``beta0 LWC V min(n0, 1) / rho_ice``. [mm/h]
    mass_rate : ndarray
        Total catch per unit span ``E LWC V D`` (cloud and SLD). [kg m-1 s-1]
    runback : ndarray bool
        Water runs back (``0 < n0 < 1``).
    time_to_tolerance_min : ndarray
        Minutes until the collector's ice tolerance is reached at the total-catch
        stagnation rate; ``inf`` where no ice, NaN in gaps. [min]
    per_collector : dict
        Collector name -> dict of the same fields (except ``worst_collector``).
    """

    severity: np.ndarray
    worst_collector: np.ndarray
    collection_efficiency: np.ndarray
    beta0: np.ndarray
    freezing_fraction: np.ndarray
    ice_type: np.ndarray
    ice_density: np.ndarray
    accretion_rate_mm_h: np.ndarray
    mass_rate: np.ndarray
    runback: np.ndarray
    time_to_tolerance_min: np.ndarray
    per_collector: dict = field(default_factory=dict)


def _collector_icing(c, prot, tol_mm, st, recovery_factor):
    """All fields for one collector on flat arrays (n,); ``st`` holds the air state."""
    d = float(c.diameter)
    v = c.speed(st["v"])
    lwc, sld_lwc = st["lwc"], st["sld_lwc"]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if st["method"] == "table":
            lv = np.log10(np.maximum(v, 1e-6))
            ld = np.log10(d)
            e, b0 = _spectrum_fast(st["lk0"] + lv - ld, st["lp0"] + lv + ld, st["shape"],
                                   st["n_bins"], st["model"])
        else:
            phi = range_parameter(d, v, st["rho"], st["mu"])
            e, b0 = _spectrum_kernel(inertia_parameter(st["mvd"], d, v, st["mu"]), phi,
                                     st["ratios"], st["fractions"], st["model_fn"])
        e = np.where(lwc > 0.0, e * c.catch_factor, 0.0)
        b0 = np.where(lwc > 0.0, b0, 0.0)
        has_sld = sld_lwc > 0.0
        if np.any(has_sld):
            sel = has_sld
            es = np.zeros_like(e)
            bs = np.zeros_like(e)
            vs = v[sel] if np.ndim(v) else np.broadcast_to(v, e.shape)[sel]
            phi_s = range_parameter(d, vs, st["rho"][sel], st["mu"][sel])
            k_s = inertia_parameter(st["sld_mvd"][sel], d, vs, st["mu"][sel])
            es[sel], bs[sel] = _spectrum_kernel(k_s, phi_s, st["sld_ratios"],
                                                st["sld_fractions"], st["model_fn"])
            es *= c.catch_factor
        else:
            es = bs = np.zeros_like(e)
        t, coef, e_a = st["t"], st["coef"], st["e_a"]
        flux_total = (e * lwc + es * sld_lwc) * v  # total catch per frontal area [kg m-2 s-1]
        m_imp = (b0 * lwc + bs * sld_lwc) * v  # stagnation impinging flux [kg m-2 s-1]
        h_c = st["h_c"](d, v)
        n0 = _glaze_fraction(t, v, m_imp, h_c, coef, e_a, recovery_factor)
        n_aft = _glaze_fraction(t, v, m_imp, h_c, coef, e_a,
                                recovery_factor * AFT_RECOVERY_FACTOR)
        stag = (m_imp > 0.0) & (n0 > 0.0)  # ice at the stagnation line
        # fraction of the catch that freezes somewhere on the collector (module doc)
        counted = np.clip(np.fmax(n0, n_aft) / MIXED_MIN_FRACTION, 0.0, 1.0)
        counted = np.where(m_imp > 0.0, counted, 0.0)
        freezes = counted > 0.0
        dry = stag & (n0 >= 1.0)
        ts = np.full_like(t, T0)
        if np.any(dry):
            vd = np.broadcast_to(v, t.shape)[dry]
            ts[dry] = _dry_surface_temperature(
                t[dry], vd, m_imp[dry], h_c[dry], coef[dry], e_a[dry], recovery_factor
            )
        mvd_eff = np.where(lwc > 0.0, st["mvd"], st["sld_mvd"])
        rho_i = np.where(freezes, ice_density(mvd_eff, v, ts, glaze=~dry), np.nan)
        per_rho = np.where(freezes, 3.6e6 / rho_i, 0.0)  # kg m-2 s-1 -> mm/h of this ice
        stag_rate = np.where(stag, m_imp * np.minimum(n0, 1.0) * per_rho, 0.0)
        catch_rate = m_imp * counted * per_rho  # caught at the stagnation line, frozen anywhere
        # equivalent outer-wing rate: counted mass as solid ice over the frontal height
        outer_wing = flux_total * counted * (3.6e6 / RHO_ICE * PROTECTION_RESIDUAL[prot])
        ttt = np.where(freezes, 60.0 * tol_mm / catch_rate, np.inf)
    sev = rate_severity(outer_wing).astype(np.int16)
    if prot == "none":
        floor = np.select(
            [ttt < TOLERANCE_MINUTES[0], ttt < TOLERANCE_MINUTES[1], ttt < TOLERANCE_MINUTES[2]],
            [codes.SEV_SEVERE, codes.SEV_MODERATE, codes.SEV_LIGHT],
            codes.SEV_NONE,
        )
        sev = np.where(freezes, np.maximum(sev, floor), sev)
    # Large drops strike and run back aft of the leading edge, where kinetic heating is
    # smaller and local static temperatures fall below ambient: in sub-freezing air the
    # SLD floors hold whatever the stagnation balance says (common practice, no source;
    # a screening tool must not let ram heating hide freezing rain).
    sld_cold = has_sld & ((bs > 0.0) | (es > 0.0)) & (t <= T0)
    sld_ice = (freezes & has_sld & (bs > 0.0)) | sld_cold
    rain = sld_ice & (st["sld_class"] == codes.SLD_RAIN)
    drizzle = sld_ice & (st["sld_class"] != codes.SLD_RAIN)
    sld_floor = {
        "none": (codes.SEV_SEVERE, codes.SEV_MODERATE),
        "de-ice": (codes.SEV_SEVERE, codes.SEV_SEVERE),
        "anti-ice": (codes.SEV_MODERATE, codes.SEV_MODERATE),
    }[prot]
    if np.any(sld_ice):
        sev = np.where(rain, np.maximum(sev, sld_floor[0]), sev)
        sev = np.where(drizzle, np.maximum(sev, sld_floor[1]), sev)
    sev = np.where(freezes | sld_cold, np.maximum(sev, codes.SEV_TRACE), codes.SEV_NONE)
    with np.errstate(invalid="ignore", divide="ignore"):
        total_lwc = lwc + sld_lwc
        e_all = np.where(total_lwc > 0.0, (e * lwc + es * sld_lwc) / total_lwc, e)
        b_all = np.where(total_lwc > 0.0, (b0 * lwc + bs * sld_lwc) / total_lwc, b0)
    return {
        "severity": sev.astype(np.int8),
        "collection_efficiency": e_all,
        "beta0": b_all,
        "freezing_fraction": n0,
        "ice_type": np.where(stag, ice_type(n0),
                             np.where(freezes | sld_cold, codes.ICE_CLEAR,
                                      codes.ICE_NONE)).astype(np.int8),
        "ice_density": rho_i,
        "accretion_rate_mm_h": stag_rate,
        "mass_rate": flux_total * d,
        "runback": (freezes & (n0 < 1.0)) | sld_cold,
        "time_to_tolerance_min": ttt,
        "_tie": catch_rate / tol_mm,
    }


def _broadcast_inputs(lwc, mvd, temperature, pressure, spectrum_shape, sld_lwc, sld_mvd,
                      sld_class, airspeed, relative_humidity):
    arrays = np.broadcast_arrays(
        *(np.asarray(a, dtype=float) for a in (lwc, mvd, temperature, pressure, spectrum_shape,
                                              sld_lwc, sld_mvd, sld_class, airspeed,
                                              relative_humidity))
    )
    return arrays[0].shape, [a.reshape(-1) for a in arrays]


def airframe_icing(
    airframe,
    *,
    lwc,
    mvd,
    temperature,
    pressure,
    spectrum_shape=2.0,
    sld_lwc=0.0,
    sld_mvd=np.nan,
    sld_class=0,
    airspeed=None,
    relative_humidity=1.0,
    model="finstad88",
    n_bins=7,
    recovery_factor=1.0,
    spectrum_method="table",
):
    """Icing of every collector of an airframe, and the airframe's severity.

    For each collector: total and stagnation collection efficiency over the
    cloud-drop spectrum and, separately, over the SLD population
    (:mod:`icing.collection`); the Messinger balance on the combined stagnation
    catch (:func:`freezing_fraction`), the surface temperature in dry growth,
    the ice type and density, the stagnation thickness rate, the total catch and
    its time to the collector's ice tolerance, and the severity (module
    docstring). The airframe's severity is the worst over its critical
    collectors (ties: the one reaching its tolerance first).

    Parameters
    ----------
    airframe : icing.airframes.Airframe
        The airframe and its collectors.
    lwc : array_like
        Supercooled cloud liquid water content. [kg m-3]
    mvd : array_like
        Cloud-drop median volume diameter. [m]
    temperature : array_like
        Static air temperature. [K]
    pressure : array_like
        Air pressure. [Pa]
    spectrum_shape : array_like
        Gamma shape ``mu`` of the cloud-drop spectrum. [1]
    sld_lwc : array_like
        Liquid water content of the drizzle/rain population. [kg m-3]
    sld_mvd : array_like
        Its median volume diameter (NaN: none). [m]
    sld_class : array_like of int
        ``codes.SLD_*`` (0 none, 1 freezing drizzle, 2 freezing rain).
    airspeed : array_like, optional
        True airspeed; default the airframe's cruise speed. [m/s]
    relative_humidity : array_like
        Ambient relative humidity over water (fraction). [1]
    model : {"finstad88", "langmuir46"}
        Collision-efficiency fit.
    n_bins : int
        Quadrature nodes of the spectra.
    recovery_factor : float
        Recovery factor at the stagnation line. [1]
    spectrum_method : {"table", "direct"}
        Cloud-drop collection from the precomputed spectrum table
        (:func:`icing.collection.collection_table`, within 1e-3) or the direct
        sum over the bins at every point.

    Returns
    -------
    AirframeIcing
        Every field shaped like the broadcast inputs.

    Notes
    -----
    Liquid below 0.01 g/m3 (Korolev et al. 2003) is ignored in each population.
    NaN in ``temperature``, ``pressure``, ``lwc``, ``airspeed``,
    ``relative_humidity``, or in ``mvd`` / ``spectrum_shape`` where there is
    cloud liquid, or in ``sld_mvd`` where there is SLD liquid, gives
    ``severity = codes.GAP``.

    Examples
    --------
    >>> from icing.airframes import load_airframe
    >>> res = airframe_icing(load_airframe("light-piston"), lwc=3e-4, mvd=20e-6,
    ...                      temperature=263.15, pressure=80000.0)
    >>> from icing.codes import SEVERITY
    >>> SEVERITY[int(res.severity)] in ("light", "moderate")
    True
    """
    fn = _model(model)
    if airspeed is None:
        airspeed = airframe.cruise_tas
    shape, (lwc, mvd, t, p, mu_shape, sld_lwc, sld_mvd, sld_cls, v_air, rh) = _broadcast_inputs(
        lwc, mvd, temperature, pressure, spectrum_shape, sld_lwc, sld_mvd, sld_class, airspeed,
        relative_humidity,
    )
    n = lwc.size
    gap = (np.isnan(t) | np.isnan(p) | np.isnan(lwc) | np.isnan(v_air) | np.isnan(rh)
           | np.isnan(sld_lwc) | (np.nan_to_num(sld_cls, nan=-1) < codes.SLD_NONE))
    cloud = np.where(gap, False, lwc >= IN_CLOUD_LWC)
    gap |= cloud & (np.isnan(mvd) | np.isnan(mu_shape) | (mvd <= 0.0))
    sld = np.where(gap, False, sld_lwc >= IN_CLOUD_LWC)
    gap |= sld & (np.isnan(sld_mvd) | (sld_mvd <= 0.0))
    # working arrays with safe values in gaps (results masked afterwards)
    t_w = np.where(gap, 263.15, t)
    p_w = np.where(gap, 7.0e4, p)
    v_w = np.where(gap, 50.0, np.maximum(v_air, 0.0))
    rh_w = np.where(gap, 1.0, np.clip(rh, 0.0, 1.2))
    lwc_w = np.where(cloud & ~gap, lwc, 0.0)
    mvd_w = np.where(cloud & ~gap, mvd, 20e-6)
    sld_w = np.where(sld & ~gap, sld_lwc, 0.0)
    sld_mvd_w = np.where(sld & ~gap, sld_mvd, 1e-3)
    cls_w = np.where(sld & ~gap, np.nan_to_num(sld_cls), 0.0)
    shape_w = np.where(cloud & ~gap & np.isfinite(mu_shape), mu_shape, 2.0)
    rho = air_density(p_w, t_w)
    mu = air_viscosity(t_w)
    kcond = air_conductivity(t_w)
    pr04 = PRANDTL_AIR**0.4

    def h_c(d, v):
        return 1.14 * np.sqrt(rho * v * d / mu) * pr04 * kcond / d  # Nu = 1.14 Re^0.5 Pr^0.4

    st = {
        "v": v_w, "t": t_w, "rho": rho, "mu": mu, "lwc": lwc_w, "mvd": mvd_w,
        "sld_lwc": sld_w, "sld_mvd": sld_mvd_w, "sld_class": cls_w, "h_c": h_c,
        "model": model, "model_fn": fn,
        "n_bins": n_bins, "method": spectrum_method, "shape": shape_w,
        "coef": _evaporation_coefficient(p_w, t_w),
        "e_a": rh_w * saturation_vapor_pressure(t_w, phase="liquid"),
    }
    st["sld_ratios"], st["sld_fractions"] = spectrum_quadrature(0.0, n_bins)
    if spectrum_method == "table":
        with np.errstate(divide="ignore"):
            # log10 K - log10(V/D) and log10 phi - log10(V D)
            st["lk0"] = 2.0 * np.log10(mvd_w) - np.log10(9.0 * mu / RHO_WATER)
            st["lp0"] = np.log10(9.0 * rho * rho / (mu * RHO_WATER))
    elif spectrum_method == "direct":
        st["ratios"], st["fractions"] = _ratios_per_point(shape_w, n_bins, n)
    else:
        raise ValueError(f"unknown spectrum_method {spectrum_method!r}; expected table, direct")

    per = {}
    for c in airframe.collectors:
        prot = c.protection or airframe.ice_protection
        tol = c.ice_tolerance_mm if c.ice_tolerance_mm is not None else airframe.ice_tolerance_mm
        per[c.name] = _collector_icing(c, prot, float(tol), st, recovery_factor)
    names = [c.name for c in airframe.collectors]
    ref = names.index(airframe.reference)
    # worst critical collector: highest severity, ties to the one reaching its
    # tolerance first; the reference collector where nothing ices
    worst = np.full(n, ref, dtype=np.intp)
    best = np.zeros(n)
    for i, c in enumerate(airframe.collectors):  # collectors, not points
        if not c.critical:
            continue
        tie = per[c.name].pop("_tie")
        score = per[c.name]["severity"] + 0.5 * tie / (1.0 + tie)
        better = score > best
        worst[better] = i
        best = np.maximum(best, score)
    for c in airframe.collectors:
        per[c.name].pop("_tie", None)
    out = {}
    for f in _FIELDS:
        pick = per[names[ref]][f]
        for i, nm in enumerate(names):
            if i != ref and airframe.collectors[i].critical:
                pick = np.where(worst == i, per[nm][f], pick)
        out[f] = pick
    any_gap = bool(gap.any())
    for f in _FIELDS:
        for nm in names:
            a = _mask_gap(per[nm][f], gap, f) if any_gap else per[nm][f]
            per[nm][f] = a.reshape(shape)
        if any_gap:
            out[f] = _mask_gap(out[f], gap, f)
    return AirframeIcing(
        worst_collector=worst.reshape(shape),
        per_collector=per,
        **{f: np.asarray(out[f]).reshape(shape) for f in _FIELDS},
    )


def _mask_gap(a, gap, name):
    if name in ("severity",):
        return np.where(gap, codes.GAP, a).astype(np.int8)
    if name == "ice_type":
        return np.where(gap, codes.ICE_NONE, a).astype(np.int8)
    if name == "runback":
        return np.where(gap, False, a)
    return np.where(gap, np.nan, a)


def fit_range_flags(airframe, *, mvd, temperature, pressure, airspeed=None, model="finstad88"):
    """Where each collector's collision efficiency leaves its fit's range.

    For ``model="finstad88"``: True where the range parameter at the collector is
    outside 100..1e4 or the inertia parameter at the MVD above ~1e3
    (:func:`icing.collection.finstad_out_of_range`; how each case is handled is
    in :func:`icing.collection.collision_efficiency_finstad88`). The
    Langmuir-Blodgett fit is defined for every ``phi`` (all False). For the
    assumptions written with the results.

    Parameters
    ----------
    airframe : icing.airframes.Airframe
    mvd, temperature, pressure : array_like
        Cloud-drop MVD [m], air temperature [K] and pressure [Pa].
    airspeed : array_like, optional
        True airspeed; default the airframe's cruise speed. [m/s]
    model : {"finstad88", "langmuir46"}

    Returns
    -------
    dict of str -> numpy.ndarray of bool

    Examples
    --------
    >>> from icing.airframes import load_airframe
    >>> flags = fit_range_flags(load_airframe("small-multirotor"), mvd=15e-6,
    ...                         temperature=263.15, pressure=9e4)
    >>> bool(flags["propeller"]), bool(flags["arm"])
    (True, False)
    """
    _model(model)
    v = airframe.cruise_tas if airspeed is None else airspeed
    t = np.asarray(temperature, dtype=float)
    rho = air_density(pressure, t)
    mu = air_viscosity(t)
    out = {}
    for c in airframe.collectors:
        u = c.speed(v)
        k = inertia_parameter(mvd, c.diameter, u, mu)
        phi = range_parameter(c.diameter, u, rho, mu)
        if model == "finstad88":
            out[c.name] = np.asarray(finstad_out_of_range(k, phi))
        else:
            out[c.name] = np.zeros(np.shape(k), dtype=bool)
    return out


def assumptions(*, model="finstad88", n_bins=7, spectrum_method="table"):
    """Return the collector-physics conventions as a JSON-able dict for the outputs.

    Examples
    --------
    >>> assumptions()["ice_type"]["mixed_min_freezing_fraction"]
    0.3
    """
    _model(model)
    return {
        "collision_efficiency": {
            "model": model,
            "spectrum": f"gamma, mass-weighted over {n_bins} bins ({spectrum_method})",
            "sld_spectrum": "exponential (gamma shape 0)",
            "equivalent_cylinder": "airfoil and rotor sections: D = 2 * 1.1019 t^2 c "
                                   "(NACA 4-digit leading-edge radius)",
            "below_phi_100": "max(Finstad at phi = 100, Langmuir-Blodgett), flagged",
            "above_phi_1e4": "Finstad at phi = 1e4 (conservative), flagged",
        },
        "heat_balance": {
            "model": "Messinger (1953) in Anderson (2004) form, stagnation line",
            "nusselt": "1.14 Re^0.5 Pr^0.4",
            "evaporation": "Chilton-Colburn, saturation over water at 0 C",
            "aft_recovery_factor": AFT_RECOVERY_FACTOR,
        },
        "ice_type": {"rime_min_freezing_fraction": 1.0,
                     "mixed_min_freezing_fraction": MIXED_MIN_FRACTION},
        "ice_density": "Makkonen-Stallabrass 1 <= R <= 60, bridged to 917 kg/m3 at R = 173; "
                       "917 kg/m3 for glaze; impact speed = section speed",
        "severity": {
            "scale_mm_h": list(AIM_RATES_MM_H),
            "rate": "counted catch as solid ice over the collector's frontal height",
            "protection_residual": dict(PROTECTION_RESIDUAL),
            "tolerance_minutes_unprotected": list(TOLERANCE_MINUTES),
            "in_cloud_lwc_g_m3": IN_CLOUD_LWC * 1e3,
            "sld": "freezing rain: severe (none, de-ice), >= moderate (anti-ice); freezing "
                   "drizzle: severe (de-ice), >= moderate (none, anti-ice)",
        },
    }
