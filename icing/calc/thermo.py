"""Thermodynamics: a thin, unit-free layer agreeing with :mod:`metpy.calc`.

Plain numpy arrays in, plain numpy arrays out, SI units (K, Pa, kg/kg, m).
Saturation vapour pressures follow MetPy's formulation (Ambaum 2020) with MetPy's
constants (:data:`METPY_CONSTANTS`), transcribed line for line so that the package
shares one saturation law with MetPy without loading MetPy's calc module and pint
(about a second of start-up); the tests check the two agree. The rest are closed
forms cited below.
"""

from __future__ import annotations

import numpy as np

from icing.constants import CP_AIR, EPSILON, LAPSE_STD, LV0, P0_STD, RD, RV, T0_STD, G

__all__ = [
    "METPY_CONSTANTS",
    "saturation_vapor_pressure",
    "saturation_mixing_ratio",
    "vapor_pressure_from_specific_humidity",
    "relative_humidity_from_dewpoint",
    "relative_humidity_from_specific_humidity",
    "specific_humidity_from_relative_humidity",
    "dewpoint_from_vapor_pressure",
    "virtual_temperature",
    "air_density",
    "air_viscosity",
    "air_conductivity",
    "vapor_diffusivity",
    "height_from_pressure_hypsometric",
    "standard_atmosphere_pressure",
    "standard_atmosphere_height",
    "moist_adiabat_temperature",
    "moist_adiabat_chain",
    "ice_saturation_relative_humidity",
    "lifting_condensation_level",
    "vertical_velocity_from_omega",
    "saturation_vapor_pressure_ifs",
    "saturation_vapor_pressure_ncep_gfs",
]


#: MetPy's constants (``metpy.constants.nounit``, MetPy 1.7) used by the transcriptions
#: below, to the last bit so that they agree with MetPy (checked in the tests):
#: gas constants [J kg-1 K-1], latent heats at ``T0`` [J kg-1], heat capacities
#: [J kg-1 K-1], ``T0`` [K] the triple point, ``sat_pressure_0c`` [Pa].
METPY_CONSTANTS = {
    "Rd": 287.04749097718457,
    "Rv": 461.52311572606084,
    "Lv": 2500840.0,
    "Ls": 2834540.0,
    "Cp_d": 1004.6662184201462,
    "Cp_l": 4219.400000000001,
    "Cp_v": 1860.078011865639,
    "Cp_i": 2090.0,
    "epsilon": 0.6219569100577033,
    "T0": 273.16,
    "sat_pressure_0c": 611.2,
}


def _ambaum(t, latent_0, cp_condensed):
    """Ambaum (2020) saturation over water (eq. 13) or ice (eq. 17), as MetPy writes it."""
    c = METPY_CONSTANTS
    latent_heat = latent_0 - (cp_condensed - c["Cp_v"]) * (t - c["T0"])  # eq. 15 / 18
    heat_power = (cp_condensed - c["Cp_v"]) / c["Rv"]
    exp_term = (latent_0 / c["T0"] - latent_heat / t) / c["Rv"]
    return c["sat_pressure_0c"] * (c["T0"] / t) ** heat_power * np.exp(exp_term)


def saturation_vapor_pressure(temperature, *, phase="liquid"):
    """Saturation vapour pressure over plane water or ice (Ambaum 2020, as MetPy).

    ``e_s = e_s0 (T0 / T)^((c_pl - c_pv) / R_v) exp((L_0 / T0 - L(T) / T) / R_v)``
    with ``L(T) = L_0 - (c_pl - c_pv)(T - T0)`` (eqs. 13 and 15; over ice eqs. 17
    and 18 with ``L_s`` and ``c_pi``), MetPy's constants (:data:`METPY_CONSTANTS`).

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]
    phase : {"liquid", "solid"}
        Saturation over liquid water (also supercooled) or over ice.

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure. [Pa]

    References
    ----------
    Ambaum, M. H. P. (2020), QJRMS 146, 4252-4258; MetPy's
    ``metpy.calc.saturation_vapor_pressure``, transcribed.

    Examples
    --------
    >>> round(float(saturation_vapor_pressure(273.16)), 1)
    611.2
    """
    t = np.asarray(temperature, dtype=float)
    if phase not in ("liquid", "solid"):
        raise ValueError(f"unknown phase {phase!r}; expected 'liquid' or 'solid'")
    c = METPY_CONSTANTS
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        if phase == "liquid":
            return np.asarray(_ambaum(t, c["Lv"], c["Cp_l"]), dtype=float)
        return np.asarray(_ambaum(t, c["Ls"], c["Cp_i"]), dtype=float)


def saturation_mixing_ratio(pressure, temperature, *, phase="liquid", saturation=None):
    """Saturation mixing ratio ``eps e_s / (p - e_s)`` [kg/kg].

    Parameters
    ----------
    pressure : array_like
        Air pressure. [Pa]
    temperature : array_like
        Air temperature. [K]
    phase : {"liquid", "solid"}
        Over water or over ice.
    saturation : array_like, optional
        ``saturation_vapor_pressure(temperature, phase=phase)`` when the caller has
        it already (the same values, one pass fewer). [Pa]

    Examples
    --------
    >>> round(float(saturation_mixing_ratio(100000.0, 283.15)) * 1000, 2)
    7.72
    """
    es = saturation_vapor_pressure(temperature, phase=phase) if saturation is None else saturation
    p = np.asarray(pressure, dtype=float)
    es = np.minimum(es, 0.5 * p)  # guard: never above half the air pressure
    return EPSILON * es / (p - es)


def vapor_pressure_from_specific_humidity(pressure, specific_humidity):
    """Vapour pressure from specific humidity, ``e = p q / (eps + (1 - eps) q)`` [Pa]."""
    q = np.asarray(specific_humidity, dtype=float)
    return np.asarray(pressure, dtype=float) * q / (EPSILON + (1.0 - EPSILON) * q)


def relative_humidity_from_dewpoint(temperature, dewpoint):
    """Relative humidity over water, ``e_s(Td) / e_s(T)``, as a fraction [1]."""
    return saturation_vapor_pressure(dewpoint) / saturation_vapor_pressure(temperature)


def relative_humidity_from_specific_humidity(pressure, temperature, specific_humidity):
    """Relative humidity over water (vapour-pressure ratio) as a fraction [1]."""
    e = vapor_pressure_from_specific_humidity(pressure, specific_humidity)
    return e / saturation_vapor_pressure(temperature)


def specific_humidity_from_relative_humidity(
    pressure, temperature, relative_humidity, *, saturation=None
):
    """Specific humidity from relative humidity over water (fraction) [kg/kg].

    ``saturation``, optional: ``saturation_vapor_pressure(temperature)`` when the
    caller has it already (the same values, one pass fewer). [Pa]
    """
    es = saturation_vapor_pressure(temperature) if saturation is None else saturation
    e = np.asarray(relative_humidity, dtype=float) * es
    p = np.asarray(pressure, dtype=float)
    return EPSILON * e / (p - (1.0 - EPSILON) * e)


def dewpoint_from_vapor_pressure(vapor_pressure):
    """Dew point over water, the exact inverse of :func:`saturation_vapor_pressure` [K].

    MetPy's ``dewpoint`` (a Bolton-type closed form) starts three Newton steps on
    ``e_s(Td) = e`` with ``de_s/dT = e_s Lv(T) / (Rv T^2)`` (Clausius-Clapeyron,
    ``Lv(T) = Lv0 - 2370 (T - 273.15)``, Rogers & Yau 1989 table 2.1 slope, from
    memory), which remove its 0.01-0.03 K departure from the saturation law used
    everywhere else.

    Examples
    --------
    >>> round(float(dewpoint_from_vapor_pressure(611.2)), 3)
    273.16
    """
    e = np.asarray(vapor_pressure, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        e_ok = np.where(e > 0, e, np.nan)
        val = np.log(e_ok / METPY_CONSTANTS["sat_pressure_0c"])  # MetPy's dewpoint, as written
        td = 273.15 + 243.5 * val / (17.67 - val)
        for _ in range(3):  # Newton steps on the saturation law (not a level loop)
            es = saturation_vapor_pressure(td)
            lv = LV0 - 2370.0 * (td - 273.15)
            td = td - (es - e_ok) / (es * lv / (RV * td * td))
    return td


def virtual_temperature(temperature, specific_humidity):
    """Virtual temperature ``T (1 + 0.608 q)`` (Wallace & Hobbs 2006, eq. 3.60) [K]."""
    q = np.asarray(specific_humidity, dtype=float)
    return np.asarray(temperature, dtype=float) * (1.0 + (1.0 / EPSILON - 1.0) * q)


def air_density(pressure, temperature, specific_humidity=0.0):
    """Moist-air density ``p / (Rd Tv)`` [kg m-3].

    Examples
    --------
    >>> round(float(air_density(101325.0, 288.15)), 4)
    1.225
    """
    return np.asarray(pressure, dtype=float) / (
        RD * virtual_temperature(temperature, specific_humidity)
    )


def air_viscosity(temperature):
    """Dynamic viscosity of air by Sutherland's law.

    ``mu = 1.458e-6 T^1.5 / (T + 110.4)`` (U.S. Standard Atmosphere 1976, eq. 51).

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]

    Returns
    -------
    numpy.ndarray
        Dynamic viscosity. [Pa s]

    References
    ----------
    NOAA/NASA/USAF (1976), U.S. Standard Atmosphere, 1976, eq. 51.

    Examples
    --------
    >>> round(float(air_viscosity(273.15)) * 1e5, 3)
    1.716
    """
    t = np.asarray(temperature, dtype=float)
    return 1.458e-6 * t**1.5 / (t + 110.4)  # U.S. Std Atm 1976 eq. 51


def air_conductivity(temperature):
    """Thermal conductivity of air (U.S. Standard Atmosphere 1976, eq. 53) [W m-1 K-1].

    ``k = 2.64638e-3 T^1.5 / (T + 245.4 * 10^(-12/T))``

    Examples
    --------
    >>> round(float(air_conductivity(273.15)), 5)
    0.02414
    """
    t = np.asarray(temperature, dtype=float)
    return 2.64638e-3 * t**1.5 / (t + 245.4 * 10.0 ** (-12.0 / t))  # eq. 53


def vapor_diffusivity(temperature, pressure):
    """Diffusivity of water vapour in air, ``2.26e-5 (T/T0)^1.81 (p0/p)`` [m2 s-1].

    Pruppacher & Klett (1997), eq. 13-3 (2.11e-5 at 0 C in their form; the value
    2.26e-5 used here is the Rogers & Yau 1989 table value, from memory).
    """
    t = np.asarray(temperature, dtype=float)
    return 2.26e-5 * (t / 273.15) ** 1.81 * (101325.0 / np.asarray(pressure, dtype=float))


def height_from_pressure_hypsometric(
    pressure, temperature, *, specific_humidity=None, base_height=None, base_pressure=None
):
    """Geopotential height of every level by the hypsometric equation.

    Integrates ``dz = (Rd Tv / g) d ln p`` level by level (layer-mean Tv) from a
    base: ``base_height`` at ``base_pressure`` (e.g. surface elevation and
    surface pressure); without a base the lowest level is placed at its ICAO
    standard-atmosphere height.

    Parameters
    ----------
    pressure, temperature : array_like, shape (..., level)
        Level pressure [Pa] and temperature [K], levels in any monotonic order.
    specific_humidity : array_like, optional
        Specific humidity (..., level). [kg/kg]
    base_height, base_pressure : array_like, optional, shape (...)
        Height [m] and pressure [Pa] of the reference level.

    Returns
    -------
    numpy.ndarray
        Height of every level, shape (..., level). [m]

    References
    ----------
    Wallace, J. M. & Hobbs, P. V. (2006), Atmospheric Science, eq. 3.29.
    """
    p = np.asarray(pressure, dtype=float)
    t = np.asarray(temperature, dtype=float)
    q = 0.0 if specific_humidity is None else np.asarray(specific_humidity, dtype=float)
    tv = np.broadcast_to(virtual_temperature(t, q), np.broadcast_shapes(p.shape, t.shape))
    p = np.broadcast_to(p, tv.shape)
    lnp = np.log(p)
    layer = RD / G * 0.5 * (tv[..., 1:] + tv[..., :-1]) * (lnp[..., :-1] - lnp[..., 1:])
    z = np.concatenate([np.zeros(tv.shape[:-1] + (1,)), np.cumsum(layer, axis=-1)], axis=-1)
    if base_pressure is None:
        # anchor: lowest (highest-pressure) level at its standard-atmosphere height
        i = np.argmax(p, axis=-1)[..., None]
        anchor = standard_atmosphere_height(np.take_along_axis(p, i, -1))
        return z - np.take_along_axis(z, i, -1) + anchor
    bp = np.asarray(base_pressure, dtype=float)[..., None]
    bz = np.asarray(0.0 if base_height is None else base_height, dtype=float)[..., None]
    # height of the base pressure within the column, log-pressure interpolation
    i = np.argmax(p, axis=-1)[..., None]
    tv_b = np.take_along_axis(tv, i, -1)
    z_at_pmax = np.take_along_axis(z, i, -1)
    p_max = np.take_along_axis(p, i, -1)
    z_base_in_column = z_at_pmax + RD / G * tv_b * (np.log(p_max) - np.log(bp))
    return z - z_base_in_column + bz


def standard_atmosphere_pressure(height):
    """Pressure of the ICAO standard atmosphere below 11 km [Pa].

    ``p = p0 (1 - L h / T0)^(g / (Rd L))``; this also converts pressure altitude
    to pressure (FL100 = 3048 m -> 696.8 hPa).

    Examples
    --------
    >>> round(float(standard_atmosphere_pressure(3048.0)) / 100, 1)
    696.8
    """
    h = np.asarray(height, dtype=float)
    return P0_STD * (1.0 - LAPSE_STD * h / T0_STD) ** (G / (RD * LAPSE_STD))


def standard_atmosphere_height(pressure):
    """Height (pressure altitude) of a pressure in the ICAO standard atmosphere [m].

    Examples
    --------
    >>> round(float(standard_atmosphere_height(69681.7)))
    3048
    """
    p = np.asarray(pressure, dtype=float)
    return T0_STD / LAPSE_STD * (1.0 - (p / P0_STD) ** (RD * LAPSE_STD / G))


def ice_saturation_relative_humidity(temperature, *, saturation=None):
    """Relative humidity over water of air saturated over ice, ``e_si / e_sw`` [1].

    Equal to 1 at and above 0 degC (no ice saturation there); about 0.91, 0.82
    and 0.75 at -10, -20 and -30 degC with MetPy's (Ambaum 2020) laws.

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]
    saturation : (array_like, array_like), optional
        The saturation vapour pressures over water and over ice at ``temperature``
        when the caller has them already (the same values, no pass). [Pa]

    Returns
    -------
    numpy.ndarray
        Water relative humidity at ice saturation, in (0, 1]. [1]

    Examples
    --------
    >>> round(float(ice_saturation_relative_humidity(253.15)), 3)
    0.822
    """
    t = np.asarray(temperature, dtype=float)
    with np.errstate(invalid="ignore"):
        if saturation is None:
            saturation = saturation_vapor_pressure(t), saturation_vapor_pressure(t, phase="solid")
        ratio = saturation[1] / saturation[0]
        return np.where(t >= 273.15, 1.0, ratio)


def _moist_lapse_rate_lnp(lnp, temperature, saturation=None):
    """``dT / d ln p`` of a saturated pseudo-adiabatic parcel [K] (Bakhshaii & Stull 2013).

    The formula of MetPy's ``moist_lapse`` with MetPy's constants, so the two agree;
    ``saturation``: e_s over water at ``temperature`` where the caller has it. [Pa]
    """
    c = METPY_CONSTANTS
    rs = saturation_mixing_ratio(np.exp(lnp), temperature, saturation=saturation)
    return (c["Rd"] * temperature + c["Lv"] * rs) / (  # Bakhshaii & Stull (2013) via MetPy
        c["Cp_d"] + c["Lv"] * c["Lv"] * rs * c["epsilon"] / (c["Rd"] * temperature**2)
    )


def moist_adiabat_temperature(pressure, start_temperature, start_pressure, *, max_step=0.2):
    """Temperature of a saturated parcel lifted (or lowered) pseudo-adiabatically.

    Integrates ``dT/dp = (1/p) (Rd T + Lv r_s) / (c_pd + Lv^2 r_s eps / (Rd T^2))``
    -- the equation of MetPy's ``moist_lapse`` -- in ``ln p`` with the classical
    fourth-order Runge-Kutta scheme, from each column's start to every level at
    once: all columns and levels advance together through a fixed number of
    sub-steps, so the cost does not grow with a Python loop over columns or levels.

    Parameters
    ----------
    pressure : array_like, shape (..., level)
        Pressure of the levels where the parcel temperature is wanted, in any
        order. [Pa]
    start_temperature : array_like, shape (...)
        Parcel temperature at ``start_pressure`` (saturated there). [K]
    start_pressure : array_like, shape (...)
        Pressure where the parcel starts. [Pa]
    max_step : float, optional
        Largest sub-step in ``ln p``. The default 0.2 (about 20 % in pressure)
        keeps the error against MetPy's adaptive solver below 0.001 K from 1000 to
        200 hPa.

    Returns
    -------
    numpy.ndarray, shape (..., level)
        Parcel temperature. [K] NaN where any input is NaN or non-positive.

    Notes
    -----
    Pseudo-adiabatic (condensate removed, no ice phase), as MetPy's
    ``moist_lapse``. Valid where saturation over water is defined (``e_s < p``):
    between about 1100 hPa and 10 hPa in tropospheric temperatures.

    References
    ----------
    Bakhshaii, A. & Stull, R. (2013), J. Appl. Meteor. Climatol. 52, 5-15, as
    implemented by MetPy's ``moist_lapse`` (May et al. 2022, BAMS 103, E2273).

    Examples
    --------
    >>> t = moist_adiabat_temperature([92500.0, 85000.0, 50000.0], 278.15, 92500.0)
    >>> [round(float(v) - 273.15, 2) for v in t]
    [5.0, 1.0, -28.39]
    """
    p = np.asarray(pressure, dtype=float)
    t0 = np.asarray(start_temperature, dtype=float)[..., None]
    p0 = np.asarray(start_pressure, dtype=float)[..., None]
    shape = np.broadcast_shapes(p.shape, t0.shape, p0.shape)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        bad = ~(np.isfinite(p) & (p > 0) & np.isfinite(p0) & (p0 > 0) & np.isfinite(t0))
        bad = np.broadcast_to(bad, shape)
        x0 = np.log(np.where(p0 > 0, p0, np.nan))
        span = np.broadcast_to(np.log(np.where(p > 0, p, np.nan)) - x0, shape)
        # each value takes its own number of equal sub-steps, so a result does not
        # depend on the other columns of the batch
        steps = np.where(bad, 0, np.ceil(np.abs(np.where(bad, 0.0, span)) / max_step))
        n = int(steps.max()) if steps.size else 0
        temperature = np.where(bad, 273.15, np.broadcast_to(t0, shape))  # placeholder
        x = np.where(bad, np.log(50000.0), np.broadcast_to(x0, shape))
        h_full = np.where(steps > 0, np.where(bad, 0.0, span) / np.maximum(steps, 1), 0.0)
        for j in range(n):  # sub-steps of the integration (not levels)
            h = np.where(steps > j, h_full, 0.0)
            k1 = _moist_lapse_rate_lnp(x, temperature)
            k2 = _moist_lapse_rate_lnp(x + 0.5 * h, temperature + 0.5 * h * k1)
            k3 = _moist_lapse_rate_lnp(x + 0.5 * h, temperature + 0.5 * h * k2)
            k4 = _moist_lapse_rate_lnp(x + h, temperature + h * k3)
            temperature = temperature + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
            x = x + h
        return np.where(bad, np.nan, temperature)


def moist_adiabat_chain(pressure, start_temperature, start_pressure, follows, *, max_step=0.2):
    """Parcel temperatures along the levels of a cloud, each continuing from the one below.

    :func:`moist_adiabat_temperature` integrates every level from the start, so a
    layer of ``n`` levels costs ``n`` integrations that grow with its depth. Here value
    ``i`` continues the same pseudo-adiabat from value ``follows[i]`` (its pressure and
    the temperature found there), with its own ``ceil(|ln p - ln p_from| / max_step)``
    equal sub-steps of the same Runge-Kutta scheme, so the parcel crosses each span of
    the layer once. ``follows[i] = -1``, or a value whose temperature is not finite,
    starts it from ``(start_pressure[i], start_temperature[i])``. The sub-steps are
    never longer than ``max_step`` and, between neighbouring levels, usually much
    shorter; the tests hold the chain to MetPy's adaptive solver as closely as the
    direct integration.

    Parameters
    ----------
    pressure : array_like, shape (n,)
        Pressure of each value. [Pa]
    start_temperature, start_pressure : array_like, shape (n,)
        Where a value's parcel starts when it follows none (saturated there). [K], [Pa]
    follows : array_like of int, shape (n,)
        Index of an earlier value (``follows[i] < i``) to continue from, or -1.
    max_step : float, optional
        Largest sub-step in ``ln p`` (:func:`moist_adiabat_temperature`).

    Returns
    -------
    numpy.ndarray, shape (n,)
        Parcel temperature. [K] NaN where its pressure or start is not usable.

    References
    ----------
    The equation and scheme of :func:`moist_adiabat_temperature` (Bakhshaii & Stull
    2013, as MetPy's ``moist_lapse``).

    Examples
    --------
    >>> p = [85000.0, 70000.0, 50000.0]
    >>> chained = moist_adiabat_chain(p, [278.15] * 3, [92500.0] * 3, [-1, 0, 1])
    >>> direct = moist_adiabat_temperature(p, 278.15, 92500.0)
    >>> bool(np.all(np.abs(chained - direct) < 0.01))
    True
    """
    p = np.asarray(pressure, dtype=float).reshape(-1)
    t0 = np.broadcast_to(np.asarray(start_temperature, dtype=float), p.shape)
    p0 = np.broadcast_to(np.asarray(start_pressure, dtype=float), p.shape)
    f = np.broadcast_to(np.asarray(follows, dtype=np.intp), p.shape)
    if np.any(f >= np.arange(p.size)):
        raise ValueError("follows[i] must be an earlier value (less than i) or -1")
    # a value's depth in its chain: those of one depth depend on the one before only
    depth = np.zeros(p.size, np.intp)
    linked = f >= 0
    while True:
        deeper = np.where(linked, depth[np.maximum(f, 0)] + 1, 0)
        if np.array_equal(deeper, depth):
            break
        depth = deeper
    out = np.full(p.size, np.nan)
    for d in range(int(depth.max()) + 1 if p.size else 0):
        at = np.flatnonzero(depth == d)
        prev = f[at]
        with np.errstate(invalid="ignore"):
            on = (prev >= 0) & np.isfinite(out[np.maximum(prev, 0)])
        t_from = np.where(on, out[np.maximum(prev, 0)], t0[at])
        p_from = np.where(on, p[np.maximum(prev, 0)], p0[at])
        t_at = moist_adiabat_temperature(p[at, None], t_from, p_from, max_step=max_step)
        out[at] = t_at[:, 0]
    return out


def lifting_condensation_level(pressure, temperature, relative_humidity):
    """Pressure and temperature at which air lifted dry-adiabatically saturates.

    Bolton (1980), eq. 22: ``T_L = 1 / (1/(T - 55) - ln(RH)/2840) + 55`` (T in K,
    RH over water as a fraction; within 0.1 K of the exact value for RH 0.2-1),
    and the dry adiabat ``p_L = p (T_L / T)^(c_p / R_d)``. Saturated or
    supersaturated air (RH >= 1) is at its own condensation level.

    Parameters
    ----------
    pressure, temperature : array_like
        Pressure [Pa] and temperature [K] of the air.
    relative_humidity : array_like
        Relative humidity over water. [1]

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        LCL pressure [Pa] and temperature [K]; NaN where an input is NaN or the
        humidity is not positive.

    References
    ----------
    Bolton, D. (1980), The computation of equivalent potential temperature,
    Mon. Wea. Rev. 108, 1046-1053, eq. 22.

    Examples
    --------
    >>> p, t = lifting_condensation_level(90000.0, 275.15, 0.9)
    >>> round(float(p) / 100, 1), round(float(t) - 273.15, 2)
    (879.7, 0.22)
    """
    p = np.asarray(pressure, dtype=float)
    t = np.asarray(temperature, dtype=float)
    rh = np.asarray(relative_humidity, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        rh_c = np.where(rh > 0.0, np.minimum(rh, 1.0), np.nan)
        t_l = 1.0 / (1.0 / (t - 55.0) - np.log(rh_c) / 2840.0) + 55.0  # Bolton (1980) eq. 22
        p_l = p * (t_l / t) ** (CP_AIR / RD)  # dry adiabat from the level to the LCL
    return p_l, t_l


def vertical_velocity_from_omega(omega, pressure, temperature, specific_humidity=0.0):
    """Vertical velocity from the pressure tendency omega, hydrostatic.

    Parameters
    ----------
    omega : array_like
        Lagrangian tendency of air pressure, Dp/Dt. [Pa/s]
    pressure, temperature : array_like
        Air pressure [Pa] and temperature [K] at the same points.
    specific_humidity : array_like, optional
        For the moist air density. [kg/kg]

    Returns
    -------
    numpy.ndarray
        Upward air velocity. [m/s]

    Notes
    -----
    ``w = -omega / (rho g)`` (hydrostatic: ``dp = -rho g dz``), with the moist
    density of :func:`air_density`. Valid where the vertical motion is nearly
    hydrostatic (horizontal scales well above the depth of the layer).

    References
    ----------
    Wallace, J. M. & Hobbs, P. V. (2006), Atmospheric Science, 2nd ed., eq. 7.33
    (from memory).

    Examples
    --------
    >>> round(float(vertical_velocity_from_omega(-1.0, 70000.0, 263.15)), 3)
    0.11
    """
    rho = air_density(pressure, temperature, specific_humidity)
    return -np.asarray(omega, dtype=float) / (rho * G)


def saturation_vapor_pressure_ifs(temperature, *, phase="liquid"):
    """Saturation vapour pressure as the ECMWF IFS diagnoses it (Tetens form).

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]
    phase : {"liquid", "solid", "mixed"}
        Over water, over ice, or the IFS mixed phase: water at and above 273.16 K,
        ice at and below 250.16 K, and between them ``alpha e_w + (1 - alpha) e_i``
        with ``alpha = ((T - 250.16) / 23)^2``.

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure. [Pa]

    Notes
    -----
    ``e = a1 exp(a3 (T - 273.16) / (T - a4))``, a1 = 611.21 Pa; water a3 = 17.502,
    a4 = 32.19 K; ice a3 = 22.587, a4 = -0.7 K (IFS documentation, Part IV:
    Physical processes, section 7.4 (Cy45r1) / chapter 12 (Cy47r3)). ECMWF defines
    its relative humidity with respect to this mixed phase below 0 C.

    Examples
    --------
    >>> round(float(saturation_vapor_pressure_ifs(273.16)), 2)
    611.21
    """
    t = np.asarray(temperature, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        e_w = 611.21 * np.exp(17.502 * (t - 273.16) / (t - 32.19))
        e_i = 611.21 * np.exp(22.587 * (t - 273.16) / (t + 0.7))
    alpha = np.clip((t - 250.16) / (273.16 - 250.16), 0.0, 1.0) ** 2
    return _saturation_phase(e_w, e_i, alpha, phase)


def saturation_vapor_pressure_ncep_gfs(temperature, *, phase="liquid"):
    """Saturation vapour pressure as the NCEP GFS post-processor computes it.

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]
    phase : {"liquid", "solid", "mixed"}
        Over water, over ice, or the GFS blend: water at and above 273.16 K, ice
        below 253.16 K, and linear in temperature between them,
        ``w e_l + (1 - w) e_i`` with ``w = (T - 253.16) / 20``.

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure. [Pa]

    Notes
    -----
    Clausius-Clapeyron with latent heats varying linearly in temperature:
    ``e = psat (Ttp/T)^A exp(B (1 - Ttp/T))`` with ``A = -(cv - cl)/Rv`` and
    ``B = A + L/(Rv Ttp)`` (``cl`` the liquid, ``cs`` the ice heat capacity, ``L``
    the latent heat of vaporisation, or sublimation for ice), psat = 610.78 Pa,
    Ttp = 273.16 K, cv = 1846, cl = 4185.5, cs = 2106 J/kg/K, Lv = 2.5e6,
    Lf = 3.3358e5 J/kg, Rv = 461.5 J/kg/K: the GFS physics constants, as used by
    the NCEP post-processor's relative humidity for the GFS (function FPVSNEW of
    CALRH_GFS, NCEP Unified Post Processor).

    Examples
    --------
    >>> round(float(saturation_vapor_pressure_ncep_gfs(273.16)), 2)
    610.78
    """
    t = np.asarray(temperature, dtype=float)
    ttp, psat, rv = 273.16, 610.78, 461.5
    cv, cl, cs, hv, hf = 1846.0, 4185.5, 2106.0, 2.5e6, 3.3358e5
    with np.errstate(invalid="ignore", divide="ignore"):
        tr = ttp / t
        a_l = -(cv - cl) / rv
        e_l = psat * tr**a_l * np.exp((a_l + hv / (rv * ttp)) * (1.0 - tr))
        a_i = -(cv - cs) / rv
        e_i = psat * tr**a_i * np.exp((a_i + (hv + hf) / (rv * ttp)) * (1.0 - tr))
    w = np.clip((t - (ttp - 20.0)) / 20.0, 0.0, 1.0)
    return _saturation_phase(e_l, e_i, w, phase)


def _saturation_phase(e_water, e_ice, weight, phase):
    """Pick water, ice, or the blend ``weight e_water + (1 - weight) e_ice``."""
    if phase == "liquid":
        return e_water
    if phase == "solid":
        return e_ice
    if phase != "mixed":
        raise ValueError(f"phase {phase!r} is not 'liquid', 'solid' or 'mixed'")
    return weight * e_water + (1.0 - weight) * e_ice
