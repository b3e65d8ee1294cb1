"""Cloud layers, adiabatic and sub-adiabatic liquid water, and glaciation likelihood.

Vectorised over any number of columns: every function takes arrays shaped
``(..., level)`` with the levels ordered from the ground up (``column.py``
sorts them and puts the results back in the caller's order). SI units inside.

The chain is:

1. :func:`liquid_cloud_rh_threshold` and :func:`cloud_mask` -- where liquid
   cloud is (model cloud water, else relative humidity over water above a
   temperature-dependent threshold that stays above ice saturation below about
   -5 degC);
2. :func:`cloud_layers` -- contiguous cloudy levels, with base and top at the
   half levels around them and the layer's cloud-top temperature;
3. :func:`adiabatic_lwc` and :func:`sub_adiabatic_factor` -- the liquid a
   parcel lifted from the layer's base would condense, thinned by mixing;
4. :func:`glaciation_likelihood` -- reported beside the liquid, never
   subtracted from it: observed phase is bimodal (Korolev et al. 2003), so a
   mean liquid fraction would under-warn exactly where full-liquid patches are;
5. :func:`appendix_c_exceedances` and :func:`appendix_c_warnings` -- where the
   liquid passes the 14 CFR 25 Appendix C envelopes (values from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.calc import thermo
from icing.constants import IN_CLOUD_LWC as _IN_CLOUD_LWC
from icing.constants import LS0, RD, RV, T0, T_HOMOGENEOUS, G

__all__ = [
    "IN_CLOUD_LWC",
    "RH_THRESHOLD_MODELS",
    "liquid_cloud_rh_threshold",
    "cloud_mask",
    "bridge_single_level_gaps",
    "cloud_layers",
    "CloudLayers",
    "adiabatic_lwc",
    "adiabatic_lwc_gradient",
    "sub_adiabatic_factor",
    "ice_nuclei_concentration",
    "ice_crystal_mass_growth_rate",
    "liquid_maintenance_updraft",
    "glaciation_likelihood",
    "APPENDIX_C_CONTINUOUS_MAX",
    "APPENDIX_C_INTERMITTENT_MAX",
    "appendix_c_limit",
    "appendix_c_exceedances",
    "appendix_c_warnings",
]

#: In-cloud liquid water content threshold [kg m-3] (0.01 g/m3, Korolev et al. 2003).
IN_CLOUD_LWC = _IN_CLOUD_LWC  # constants.IN_CLOUD_LWC (Korolev et al. 2003)


#: Names of the humidity-threshold models of :func:`liquid_cloud_rh_threshold`.
RH_THRESHOLD_MODELS = ("ice-water-blend", "water-saturation")


def liquid_cloud_rh_threshold(
    temperature, *, model="ice-water-blend", warm=0.95, ice_fraction=0.5, ice_saturation=None
):
    """Relative humidity over water above which a level is taken as liquid cloud.

    ``"ice-water-blend"`` (default):
    ``RH_c(T) = min(warm, f_i + ice_fraction (1 - f_i))`` with ``f_i = e_si / e_sw``
    the water relative humidity of ice-saturated air (1 at and above 0 degC).
    ``"water-saturation"``: ``RH_c = 0.999`` (saturated air only, for humidities that
    are exact, e.g. from a model that saturates its cloudy cells).

    Reasoning: an ice cloud holds the air near ice saturation, which is only
    ~91/82/75 % over water at -10/-20/-30 degC, so a fixed 85-90 % threshold
    calls ice cloud liquid. Liquid cloud needs water saturation; model and
    sounding humidities scatter below it. The threshold therefore sits a fixed
    fraction (default half-way) of the way from ice to water saturation, and at
    most at ``warm`` (95 %, common practice for coarse model grids, no source).
    Between about -5 degC and 0 degC the cap lies up to 5 % below ice
    saturation: there the two saturations differ by less than humidity errors
    and the conservative reading for screening is "cloud"; the cap also keeps
    the threshold continuous through 0 degC, so a deck straddling 0 degC stays
    one layer.

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]
    model : {"ice-water-blend", "water-saturation"}
        Threshold model.
    warm : float, optional
        Threshold above freezing and cap below it. [1]
    ice_fraction : float, optional
        Position of the threshold between ice (0) and water (1) saturation. [1]
    ice_saturation : array_like, optional
        ``thermo.ice_saturation_relative_humidity(temperature)`` when the caller has
        it already (saves computing it again). [1]

    Returns
    -------
    numpy.ndarray
        Threshold relative humidity over water. [1]

    Raises
    ------
    ValueError
        Unknown model (the message lists the valid names).

    Examples
    --------
    >>> [round(float(v), 3) for v in liquid_cloud_rh_threshold([283.15, 263.15, 243.15])]
    [0.95, 0.95, 0.873]
    """
    t = np.asarray(temperature, dtype=float)
    if model == "water-saturation":
        return np.where(np.isnan(t), np.nan, 0.999)
    if model != "ice-water-blend":
        raise ValueError(
            f"unknown humidity-threshold model {model!r}; expected one of "
            f"{', '.join(RH_THRESHOLD_MODELS)}"
        )
    f_i = (
        thermo.ice_saturation_relative_humidity(t)
        if ice_saturation is None
        else np.asarray(ice_saturation, dtype=float)
    )
    return np.minimum(warm, f_i + ice_fraction * (1.0 - f_i))


def cloud_mask(
    relative_humidity,
    temperature,
    *,
    lwc_model=None,
    valid=None,
    model="ice-water-blend",
    warm=0.95,
    ice_fraction=0.5,
    ice_saturation=None,
):
    """Liquid-cloud mask: model cloud water above 0.01 g/m3, or humidity above threshold.

    Parameters
    ----------
    relative_humidity : array_like, shape (..., level)
        Relative humidity over water. [1]
    temperature : array_like, shape (..., level)
        Air temperature. [K]
    lwc_model : array_like, optional
        Model cloud liquid water content. [kg m-3]
    valid : array_like of bool, optional
        Levels with usable data (others are never cloud).
    model, warm, ice_fraction, ice_saturation : optional
        Passed to :func:`liquid_cloud_rh_threshold`.

    Returns
    -------
    numpy.ndarray of bool

    Notes
    -----
    Either source suffices (logical or): model cloud water is a grid mean and
    models under-predict supercooled liquid, so for screening a saturated level
    without model liquid is still cloud. The in-cloud threshold 0.01 g/m3 is
    that of Korolev et al. (2003).

    References
    ----------
    Korolev, A. V. et al. (2003), QJRMS 129, 39-65.

    Examples
    --------
    >>> cloud_mask([0.99, 0.85, 0.85], [263.15, 253.15, 253.15],
    ...            lwc_model=[0.0, 0.0, 5e-5]).tolist()
    [True, False, True]
    """
    rh = np.asarray(relative_humidity, dtype=float)
    with np.errstate(invalid="ignore"):
        cloud = rh >= liquid_cloud_rh_threshold(
            temperature,
            model=model,
            warm=warm,
            ice_fraction=ice_fraction,
            ice_saturation=ice_saturation,
        )
        if lwc_model is not None:
            cloud = cloud | (np.asarray(lwc_model, dtype=float) >= IN_CLOUD_LWC)
    if valid is not None:
        cloud = cloud & np.asarray(valid, dtype=bool)
    return cloud


def bridge_single_level_gaps(
    cloud, relative_humidity, temperature, *, valid=None, ice_saturation=None
):
    """Close one-level gaps inside a cloud deck where the air is at least ice-saturated.

    A single level between two cloudy levels whose humidity is at or above ice
    saturation (``RH >= e_si/e_sw``) is humidity noise inside one deck more often
    than a real break; closing it keeps the deck one layer, so its adiabatic liquid
    does not restart from zero above the gap (the conservative reading for
    screening; common practice, no source). Drier gaps stay open.

    Parameters
    ----------
    cloud : array_like of bool, shape (..., level)
        Cloud mask, levels ordered from the ground up.
    relative_humidity, temperature : array_like, shape (..., level)
        [1], [K].
    valid : array_like of bool, optional
        Levels with usable data (gaps at unusable levels stay open).
    ice_saturation : array_like, optional
        ``thermo.ice_saturation_relative_humidity(temperature)`` when the caller has
        it already. [1]

    Returns
    -------
    numpy.ndarray of bool

    Examples
    --------
    >>> bridge_single_level_gaps([True, False, True, False, True, False, False, True],
    ...                          [1.0, 0.92, 1.0, 0.5, 1.0, 0.92, 0.92, 1.0], 263.15).tolist()
    [True, True, True, False, True, False, False, True]
    """
    cloud = np.asarray(cloud, dtype=bool)
    if cloud.shape[-1] < 3:
        return cloud
    rh = np.broadcast_to(np.asarray(relative_humidity, dtype=float), cloud.shape)
    if ice_saturation is None:
        ice_saturation = thermo.ice_saturation_relative_humidity(temperature)
    with np.errstate(invalid="ignore"):
        moist = rh >= ice_saturation
    if valid is not None:
        moist = moist & np.asarray(valid, dtype=bool)
    gap = ~cloud[..., 1:-1] & cloud[..., :-2] & cloud[..., 2:] & moist[..., 1:-1]
    out = cloud.copy()
    out[..., 1:-1] |= gap
    return out


@dataclass(frozen=True)
class CloudLayers:
    """Per-level description of the cloud layer that holds each level.

    Every field is shaped (..., level) like the cloud mask; -1 (indices) or NaN
    (values) outside cloud. Built by :func:`cloud_layers`, never changed afterwards.
    """

    base_index: np.ndarray
    """int: lowest cloudy level of the layer."""
    top_index: np.ndarray
    """int: highest cloudy level of the layer."""
    base_height: np.ndarray
    """Height of the half level below the base level. [m]"""
    top_height: np.ndarray
    """Height of the half level above the top level. [m]"""
    base_pressure: np.ndarray
    """Pressure at the base half level (log-pressure mid-point). [Pa]"""
    base_temperature: np.ndarray
    """Temperature at the base half level. [K]"""
    top_temperature: np.ndarray
    """Temperature of the highest cloudy level of the layer. [K]"""


def _half_level(values, at, index, *, log=False, above=False):
    """Values half-way between level ``index`` and its neighbour, at the points ``at``.

    ``at``: the row indices of the points (a tuple, as ``np.nonzero`` gives without its
    last entry); ``index``: each point's level. The half level below (or ``above``) is
    the mean of the two levels (of their logarithms with ``log``); a level at the edge,
    or whose neighbour has no data, keeps its own value. Only the points asked for are
    computed (a block's cloudy levels are a fraction of its levels).
    """
    n = values.shape[-1]
    lo = index if above else index - 1
    hi = lo + 1
    edge = (lo < 0) | (hi > n - 1)
    own = values[at + (index,)]
    v_lo = values[at + (np.clip(lo, 0, n - 1),)]
    v_hi = values[at + (np.clip(hi, 0, n - 1),)]
    if log:
        own, v_lo, v_hi = np.log(own), np.log(v_lo), np.log(v_hi)
    mid = 0.5 * (v_hi + v_lo)
    out = np.where(edge | ~np.isfinite(mid), own, mid)
    return np.exp(out) if log else out


def cloud_layers(cloud, height, pressure, temperature):
    """Contiguous cloudy levels as layers, vectorised with running maxima.

    Parameters
    ----------
    cloud : array_like of bool, shape (..., level)
        Cloud mask, levels ordered from the ground up.
    height, pressure, temperature : array_like, shape (..., level)
        Level height [m], pressure [Pa] and temperature [K].

    Returns
    -------
    CloudLayers

    Notes
    -----
    A layer starts at a cloudy level whose lower neighbour is clear, and ends at
    one whose upper neighbour is clear. The base index of every level is the
    running maximum of the start indices, the top index the reversed running
    minimum of the end indices; boundaries sit at the half levels (log-pressure
    mid-points), so a layer one level deep still has a depth.

    Examples
    --------
    >>> lay = cloud_layers([False, True, True, False], [0.0, 500.0, 1000.0, 1500.0],
    ...                    [100000.0, 95000.0, 90000.0, 85000.0],
    ...                    [280.0, 277.0, 274.0, 271.0])
    >>> lay.base_height.tolist()[1:3], lay.top_height.tolist()[1:3]
    ([250.0, 250.0], [1250.0, 1250.0])
    """
    cloud = np.asarray(cloud, dtype=bool)
    z = np.asarray(height, dtype=float)
    p = np.asarray(pressure, dtype=float)
    t = np.asarray(temperature, dtype=float)
    n = cloud.shape[-1]
    idx = np.broadcast_to(np.arange(n), cloud.shape)
    no = np.zeros(cloud.shape[:-1] + (1,), dtype=bool)
    start = cloud & ~np.concatenate([no, cloud[..., :-1]], axis=-1)
    end = cloud & ~np.concatenate([cloud[..., 1:], no], axis=-1)
    base_i = np.maximum.accumulate(np.where(start, idx, 0), axis=-1)
    top_i = np.flip(np.minimum.accumulate(np.flip(np.where(end, idx, n - 1), -1), axis=-1), -1)
    where = np.nonzero(cloud)  # only cloudy levels are looked up
    rows = where[:-1]
    b_at, t_at = base_i[where], top_i[where]

    def pick(a, i, **half):
        out = np.full(cloud.shape, np.nan)
        with np.errstate(invalid="ignore", divide="ignore"):
            out[where] = _half_level(a, rows, i, **half) if half else a[rows + (i,)]
        return out

    return CloudLayers(
        base_index=np.where(cloud, base_i, -1),
        top_index=np.where(cloud, top_i, -1),
        base_height=pick(z, b_at, above=False),
        top_height=pick(z, t_at, above=True),
        base_pressure=pick(p, b_at, log=True),
        base_temperature=pick(t, b_at, above=False),
        top_temperature=pick(t, t_at),
    )


def adiabatic_lwc(
    pressure,
    temperature,
    base_pressure,
    base_temperature,
    *,
    specific_humidity=0.0,
    max_step=0.2,
    follows=None,
):
    """Adiabatic liquid water content of a parcel lifted from cloud base.

    ``LWC_ad(z) = rho(z) [r_s(p_b, T_b) - r_s(p, T_parcel(p))]`` with the parcel
    on the pseudo-adiabat through the base (:func:`icing.thermo.moist_adiabat_temperature`;
    with ``follows``, carried from level to level by :func:`icing.thermo.moist_adiabat_chain`).

    Parameters
    ----------
    pressure, temperature : array_like, shape (...)
        Level pressure [Pa] and environmental temperature [K] (for the density).
    base_pressure, base_temperature : array_like, shape (...)
        Cloud-base pressure [Pa] and temperature [K] of the level's layer.
    specific_humidity : array_like, optional
        For the air density. [kg/kg]
    max_step : float, optional
        Integration sub-step in ln p (see ``moist_adiabat_temperature``).
    follows : array_like of int, optional
        Flat inputs only: for each level, an earlier level of the same parcel to carry
        it on from, or -1 (``moist_adiabat_chain``). By default every level is
        integrated from its base.

    Returns
    -------
    numpy.ndarray
        Adiabatic liquid water content, >= 0. [kg m-3] NaN where inputs are NaN.

    References
    ----------
    Rogers, R. R. & Yau, M. K. (1989), A Short Course in Cloud Physics, 3rd ed.,
    ch. 2-3 (adiabatic liquid water content); Bakhshaii & Stull (2013) via MetPy.

    Examples
    --------
    >>> lwc = adiabatic_lwc(85000.0, 270.0, 90000.0, 273.15)
    >>> round(float(lwc) * 1000, 2)
    0.68
    """
    p = np.asarray(pressure, dtype=float)
    pb = np.asarray(base_pressure, dtype=float)
    tb = np.asarray(base_temperature, dtype=float)
    shape = np.broadcast_shapes(p.shape, pb.shape, tb.shape)
    if follows is not None:
        if len(shape) != 1:
            raise ValueError("follows needs flat (one-dimensional) levels")
        t_parcel = thermo.moist_adiabat_chain(
            np.broadcast_to(p, shape), tb, pb, follows, max_step=max_step
        )
    else:
        t_parcel = thermo.moist_adiabat_temperature(
            np.broadcast_to(p, shape)[..., None],
            np.broadcast_to(tb, shape),
            np.broadcast_to(pb, shape),
            max_step=max_step,
        )[..., 0]
    with np.errstate(invalid="ignore"):
        r_base = thermo.saturation_mixing_ratio(pb, tb)
        r_here = thermo.saturation_mixing_ratio(p, t_parcel)
        rho = thermo.air_density(p, temperature, specific_humidity)
        lwc = rho * (r_base - r_here)  # condensed since the base, per unit volume
        return np.where(np.isnan(lwc), np.nan, np.maximum(lwc, 0.0))


def adiabatic_lwc_gradient(pressure, temperature, *, saturation=None):
    """Rate of increase of adiabatic LWC with height, ``dLWC_ad/dz`` [kg m-4].

    ``dLWC/dz = -rho dr_s/dz``, ``dr_s/dz = r_s [Lv/(Rv T^2) dT/dz + g/(Rd T)]`` along
    the moist adiabat (Clausius-Clapeyron with ``e_s << p``), with ``dT/dz`` from the
    MetPy moist-lapse formula. About 1.5-2 g/m3 per km near 0 degC low down, less in
    the cold (textbook order, Rogers & Yau 1989 ch. 2, from memory).

    Parameters
    ----------
    pressure, temperature : array_like
        Pressure [Pa] and temperature [K] of saturated air.
    saturation : array_like, optional
        Saturation vapour pressure over water at ``temperature`` when the caller
        has it already (the same values, one pass fewer). [Pa]

    Returns
    -------
    numpy.ndarray
        ``dLWC_ad/dz`` [kg m-4]; NaN where inputs are NaN.

    References
    ----------
    Rogers, R. R. & Yau, M. K. (1989), A Short Course in Cloud Physics, 3rd ed., ch. 2.

    Examples
    --------
    >>> round(float(adiabatic_lwc_gradient(90000.0, 273.15)) * 1e6, 2)
    1.61
    """
    lv = thermo.METPY_CONSTANTS["Lv"]  # MetPy's, as in its moist lapse rate
    p = np.asarray(pressure, dtype=float)
    t = np.asarray(temperature, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        dt_dlnp = thermo._moist_lapse_rate_lnp(np.log(p), t, saturation)
        dt_dz = -dt_dlnp * G / (RD * t)  # hydrostatic: d ln p / dz = -g / (Rd T)
        rs = thermo.saturation_mixing_ratio(p, t, saturation=saturation)
        drs_dz = rs * (lv / (RV * t**2) * dt_dz + G / (RD * t))
        return -thermo.air_density(p, t) * drs_dz


def sub_adiabatic_factor(
    height_above_base, *, factor_at_base=0.77, scale_height=1500.0, floor=0.0
):
    """Observed-to-adiabatic LWC ratio, falling with height above cloud base.

    ``f(h) = max(f_0 exp(-h / H), floor)``.

    ``f_0 = 0.77`` is the mean ratio in marine stratocumulus (Braun et al. 2018,
    0.77 +- 0.13); the fall with height follows Warner (1955), whose cumulus
    ratios drop to about 0.2-0.5 a few km above base (from memory; the paper
    itself not read here). With ``H = 1500 m`` a 500 m layer keeps ~0.55 of
    adiabatic and the product ``f(h) LWC_ad(h)`` peaks at ``h = H`` (~0.6-0.7
    g/m3 near 0 degC): deep stratiform layers do not integrate to several g/m3.
    ``H`` is our choice, no source. Convective layers take a ``floor`` (the
    column diagnosis uses 0.2, the low end of Warner's range): the exponential
    alone would fall below the observed cumulus ratios (0.04 at 4.5 km above
    base) and under-warn exactly where cumulus liquid is largest.

    Parameters
    ----------
    height_above_base : array_like
        Height above the cloud base. [m] Negative values give NaN.
    factor_at_base, scale_height : float, optional
        ``f_0`` [1] and ``H`` [m].
    floor : float or array_like, optional
        Smallest factor (0: none). [1]

    Returns
    -------
    numpy.ndarray
        Factor in [floor, f_0] (NaN below the base). [1]

    References
    ----------
    Braun, R. A. et al. (2018), J. Geophys. Res. Atmos. (NE Pacific stratocumulus).
    Warner, J. (1955), The water content of cumuliform cloud, Tellus 7, 449-457.

    Examples
    --------
    >>> round(float(sub_adiabatic_factor(0.0)), 2), round(float(sub_adiabatic_factor(1500.0)), 3)
    (0.77, 0.283)
    >>> round(float(sub_adiabatic_factor(4500.0, floor=0.2)), 2)
    0.2
    """
    h = np.asarray(height_above_base, dtype=float)
    with np.errstate(invalid="ignore"):
        f = np.maximum(factor_at_base * np.exp(-h / scale_height), floor)
        return np.where(h >= 0, f, np.nan)


def ice_nuclei_concentration(temperature, *, model="meyers92", aerosol_per_cm3=1.0):
    """Ice-nucleus concentration at water saturation [m-3].

    ===============  ===============================================================
    ``"fletcher62"``  ``N = 1e-2 exp(0.6 (273.15 - T))`` /m3 (Fletcher 1962)
    ``"meyers92"``    ``N = exp(-0.639 + 0.1296 * 100 (S_i - 1))`` /L, S_i at water
                      saturation (Meyers et al. 1992, eq. 2.4)
    ``"demott10"``    ``N = 5.94e-5 (273.16 - T)^3.33 n_aer^(0.0264 (273.16 - T) + 0.0033)``
                      /L, ``n_aer`` aerosol > 0.5 um per cm3 (DeMott et al. 2010, eq. 1)
    ===============  ===============================================================

    NaN above 0 degC (no ice nucleation) and below -38 degC (homogeneous freezing
    takes over); each fit is used outside its observed range only within those bounds.

    Parameters
    ----------
    temperature : array_like
        Temperature. [K]
    model : str, optional
        One of the names above.
    aerosol_per_cm3 : float, optional
        Aerosol > 0.5 um for ``"demott10"``. [cm-3]

    Returns
    -------
    numpy.ndarray
        Ice-nucleus concentration. [m-3]

    References
    ----------
    Fletcher, N. H. (1962), The Physics of Rainclouds, Cambridge.
    Meyers, M. P., DeMott, P. J. & Cotton, W. R. (1992), J. Appl. Meteor. 31, 708-721.
    DeMott, P. J. et al. (2010), PNAS 107, 11217-11222.

    Examples
    --------
    >>> round(float(ice_nuclei_concentration(253.15, model="fletcher62")), 1)
    1627.5
    """
    t = np.asarray(temperature, dtype=float)
    dt = T0 - t
    with np.errstate(invalid="ignore", over="ignore"):
        if model == "fletcher62":
            n = 1e-2 * np.exp(0.6 * dt)  # Fletcher (1962)
        elif model == "meyers92":
            si = 1.0 / thermo.ice_saturation_relative_humidity(t)  # S_i at water saturation
            n = 1e3 * np.exp(-0.639 + 0.1296 * 100.0 * (si - 1.0))  # Meyers (1992) eq. 2.4
        elif model == "demott10":
            d = 273.16 - t
            n = 1e3 * 5.94e-5 * d**3.33 * aerosol_per_cm3 ** (0.0264 * d + 0.0033)  # eq. 1
        else:
            raise ValueError(
                f"unknown ice-nucleus model {model!r}; expected one of "
                "fletcher62, meyers92, demott10"
            )
        inside = (t <= T0) & (t >= T_HOMOGENEOUS)
        return np.where(inside, n, np.nan)


def ice_crystal_mass_growth_rate(temperature, pressure, radius, *, saturation=None):
    """Diffusional mass growth of an ice crystal in water-saturated air [kg s-1].

    ``dm/dt = 4 pi C (S_i - 1) / (F_k + F_d)`` (Rogers & Yau 1989, eq. 9.4) with
    ``C = r`` (a sphere: the simplest capacitance; plates ``2 r / pi``),
    ``S_i = e_sw / e_si``, ``F_k = (L_s/(R_v T) - 1) L_s/(k T)``,
    ``F_d = R_v T / (e_si D)``.

    Parameters
    ----------
    temperature, pressure : array_like
        [K], [Pa]. Zero growth at and above 0 degC.
    radius : array_like
        Crystal radius (the capacitance of a sphere). [m]
    saturation : (array_like, array_like), optional
        Saturation vapour pressures over water and over ice at ``temperature``
        when the caller has them already (the same values, no pass). [Pa]

    Returns
    -------
    numpy.ndarray
        Mass growth rate, >= 0. [kg s-1]

    References
    ----------
    Rogers, R. R. & Yau, M. K. (1989), A Short Course in Cloud Physics, eq. 9.4.

    Examples
    --------
    >>> round(float(ice_crystal_mass_growth_rate(263.15, 70000.0, 50e-6)) * 1e13, 1)
    25.1
    """
    t = np.asarray(temperature, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        if saturation is None:
            saturation = thermo.saturation_vapor_pressure(t), None
        e_w, e_i = saturation
        e_i = thermo.saturation_vapor_pressure(t, phase="solid") if e_i is None else e_i
        s_i = e_w / e_i
        f_k = (LS0 / (RV * t) - 1.0) * LS0 / (thermo.air_conductivity(t) * t)  # R&Y 9.4
        f_d = RV * t / (e_i * thermo.vapor_diffusivity(t, pressure))
        rate = 4.0 * np.pi * np.asarray(radius, dtype=float) * (s_i - 1.0) / (f_k + f_d)
        return np.where(t < T0, np.maximum(rate, 0.0), 0.0)


def liquid_maintenance_updraft(temperature, pressure, ice_number, *, ice_radius=50e-6):
    """Updraft above which supercooled liquid survives among growing ice [m s-1].

    Korolev & Mazin (2003) give the threshold in the form
    ``w* = (E_s - E_i)/E_i * eta * N_i r_i`` (from memory). Here ``eta`` is derived
    from a budget: the ascent supplies condensate at ``w dLWC_ad/dz``; crystals at
    water saturation take up ``N_i dm/dt`` (:func:`ice_crystal_mass_growth_rate`);
    liquid is maintained where supply exceeds uptake, so
    ``w* = N_i dm/dt / (dLWC_ad/dz)``, proportional to ``(S_i - 1) N_i r_i`` as
    in their form.

    Parameters
    ----------
    temperature, pressure : array_like
        [K], [Pa].
    ice_number : array_like
        Ice crystal number concentration. [m-3]
    ice_radius : float or array_like, optional
        Crystal radius. [m]

    Returns
    -------
    numpy.ndarray
        Threshold updraft. [m s-1]

    References
    ----------
    Korolev, A. & Mazin, I. (2003), J. Atmos. Sci. 60, 2957-2974.

    Examples
    --------
    >>> round(float(liquid_maintenance_updraft(263.15, 70000.0, 1e5)), 3)
    0.251
    """
    uptake = np.asarray(ice_number, dtype=float) * ice_crystal_mass_growth_rate(
        temperature, pressure, ice_radius
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        return uptake / adiabatic_lwc_gradient(pressure, temperature)


def glaciation_likelihood(
    temperature,
    pressure,
    lwc,
    cloud_top_temperature,
    *,
    ice_above=0.0,
    updraft=0.0,
    air_density=None,
    ice_nuclei_model="meyers92",
    aerosol_per_cm3=1.0,
    ice_radius=50e-6,
    crystal_density=500.0,
    residence_time=3600.0,
    saturation=None,
):
    """Likelihood [0..1] that the liquid at a level has been (or is being) glaciated.

    Reported beside the LWC, never multiplied into it.

    Ice crystals come from two sources: primary ice on the ice nuclei active at
    the cloud-top temperature (:func:`ice_nuclei_concentration`), and crystals
    falling in from above (model cloud ice and snow above the level, ``ice_above``
    [kg/kg], turned into a number with crystals of ``ice_radius`` and
    ``crystal_density``). Growing at water saturation they take up
    ``U = N_i dm/dt``; the updraft supplies ``S = w dLWC_ad/dz`` (the
    Korolev & Mazin 2003 balance, see :func:`liquid_maintenance_updraft`). The
    liquid is consumed in ``tau = LWC / (U - S)`` when ``U > S``; the likelihood
    is ``1 - exp(-t_res / tau)`` for a residence time ``t_res`` (our choice,
    default 1 h, no source). Below -38 degC it is 1, above 0 degC 0.

    Parameters
    ----------
    temperature, pressure : array_like, shape (...)
        Level temperature [K] and pressure [Pa].
    lwc : array_like
        Liquid water content at the level. [kg m-3]
    cloud_top_temperature : array_like
        Of the level's layer. [K]
    ice_above : array_like, optional
        Largest cloud-ice plus snow mixing ratio at or above the level. [kg/kg]
    updraft : array_like, optional
        Updraft at the level (negative treated as 0). [m s-1]
    air_density : array_like, optional
        [kg m-3]; from ``pressure`` and ``temperature`` when absent.
    ice_nuclei_model, aerosol_per_cm3 : optional
        Passed to :func:`ice_nuclei_concentration`.
    ice_radius, crystal_density : float, optional
        Typical crystal radius [m] and bulk density [kg m-3] (our choices).
    residence_time : float, optional
        Exposure time of the liquid to the ice. [s]
    saturation : (array_like, array_like), optional
        Saturation vapour pressures over water and over ice at ``temperature``
        when the caller has them already (the same values, no pass). [Pa]

    Returns
    -------
    numpy.ndarray
        Likelihood in [0, 1]; NaN where an input is NaN.

    Examples
    --------
    >>> thin = glaciation_likelihood(265.15, 80000.0, 2e-4, 265.15)
    >>> deep = glaciation_likelihood(248.15, 60000.0, 2e-4, 248.15, ice_above=1e-4)
    >>> bool(thin < 0.2), bool(deep > 0.8)
    (True, True)
    """
    t = np.asarray(temperature, dtype=float)
    p = np.asarray(pressure, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        rho = thermo.air_density(p, t) if air_density is None else air_density
        ctt = np.clip(np.asarray(cloud_top_temperature, dtype=float), T_HOMOGENEOUS, T0)
        n_primary = np.nan_to_num(
            ice_nuclei_concentration(ctt, model=ice_nuclei_model, aerosol_per_cm3=aerosol_per_cm3)
        )
        crystal_mass = crystal_density * 4.0 / 3.0 * np.pi * ice_radius**3
        n_falling = np.maximum(np.asarray(ice_above, dtype=float), 0.0) * rho / crystal_mass
        uptake = (n_primary + n_falling) * ice_crystal_mass_growth_rate(
            t, p, ice_radius, saturation=saturation
        )
        gradient = adiabatic_lwc_gradient(
            p, t, saturation=None if saturation is None else saturation[0]
        )
        supply = np.maximum(np.asarray(updraft, dtype=float), 0.0) * gradient
        net = np.maximum(uptake - supply, 0.0)
        lwc = np.maximum(np.asarray(lwc, dtype=float), IN_CLOUD_LWC)
        likelihood = 1.0 - np.exp(-residence_time * net / lwc)
        likelihood = np.where(t <= T_HOMOGENEOUS, 1.0, np.where(t >= T0, 0.0, likelihood))
        nan = np.isnan(t) | np.isnan(p) | np.isnan(np.asarray(cloud_top_temperature, float))
        return np.where(nan, np.nan, likelihood)


#: Appendix C continuous-maximum LWC at MED 15 um [(degC, g/m3)]: FROM MEMORY of
#: 14 CFR 25 Appendix C figure 1. The regulation's text (continuous maximum: 17.4 nmi,
#: figure 1; intermittent maximum: 2.6 nmi, figure 4) was read; the figures' values
#: could not be read here, so these stay from memory: check before relying on them.
APPENDIX_C_CONTINUOUS_MAX = ((-30.0, 0.2), (-20.0, 0.35), (-10.0, 0.6), (0.0, 0.8))
#: Appendix C intermittent-maximum LWC at MED 15 um [(degC, g/m3)]: FROM MEMORY of
#: figure 4 (about 2.5-3 g/m3 near 0 degC); the lower, more cautious end is used.
APPENDIX_C_INTERMITTENT_MAX = ((-40.0, 1.0), (-30.0, 1.3), (-20.0, 1.9), (-10.0, 2.4), (0.0, 2.5))


#: The smallest LWC of either envelope [kg m-3]: no level at or below it passes one.
_APPENDIX_C_SMALLEST = 1e-3 * min(
    v for _, v in APPENDIX_C_CONTINUOUS_MAX + APPENDIX_C_INTERMITTENT_MAX
)


def appendix_c_limit(temperature, envelope):
    """Envelope LWC at a temperature, linear between the points, NaN outside [kg m-3].

    Examples
    --------
    >>> round(float(appendix_c_limit(263.15, APPENDIX_C_CONTINUOUS_MAX)) * 1000, 2)
    0.6
    """
    tc = np.asarray(temperature, dtype=float) - T0
    xs, ys = zip(*envelope, strict=True)
    with np.errstate(invalid="ignore"):
        inside = (tc >= xs[0]) & (tc <= xs[-1])
        return np.where(inside, np.interp(tc, xs, ys) * 1e-3, np.nan)


def appendix_c_exceedances(lwc, temperature, *, convective=None):
    """Count the levels whose LWC passes the Appendix C envelopes (values from memory).

    Stratiform levels (``convective`` False) are compared with the continuous
    maximum, all levels with the intermittent maximum.

    Returns
    -------
    dict
        ``{"continuous maximum": (count, worst [kg m-3]), "intermittent maximum": ...}``,
        only the envelopes passed at least once.

    Examples
    --------
    >>> appendix_c_exceedances([0.5e-3, 1.0e-3], [263.15, 263.15])
    {'continuous maximum': (1, 0.001)}
    """
    lwc = np.asarray(lwc, dtype=float)
    t = np.asarray(temperature, dtype=float)
    conv = np.zeros(lwc.shape, bool) if convective is None else np.asarray(convective, bool)
    lwc, t, conv = np.broadcast_arrays(lwc, t, conv)
    # only levels above the smallest envelope value can pass one: look at those alone
    with np.errstate(invalid="ignore"):
        near = lwc > _APPENDIX_C_SMALLEST
    lwc, t, conv = lwc[near], t[near], conv[near]
    out = {}
    with np.errstate(invalid="ignore"):
        for name, envelope, mask in (
            ("continuous maximum", APPENDIX_C_CONTINUOUS_MAX, ~conv),
            ("intermittent maximum", APPENDIX_C_INTERMITTENT_MAX, np.ones_like(conv)),
        ):
            over = mask & (lwc > appendix_c_limit(t, envelope))
            count = int(np.count_nonzero(over))
            if count:
                out[name] = (count, float(np.max(np.where(over, lwc, 0.0))))
    return out


_ENVELOPE_TEXT = {
    "continuous maximum": "stratiform levels; 0.8 g/m3 at 0 C to 0.2 g/m3 at -30 C",
    "intermittent maximum": "all levels; 2.5 g/m3 at 0 C to 1.0 g/m3 at -40 C",
}


def appendix_c_warnings(exceedances):
    """Turn :func:`appendix_c_exceedances` counts into warning lines (one per envelope).

    Examples
    --------
    >>> appendix_c_warnings({"continuous maximum": (3, 0.0012)})[0][:48]
    'LWC above the 14 CFR 25 Appendix C continuous ma'
    """
    return [
        f"LWC above the 14 CFR 25 Appendix C {name} envelope ({_ENVELOPE_TEXT[name]}; "
        f"envelope values from memory) at {count} level(s), up to {worst * 1e3:.2f} g/m3"
        for name, (count, worst) in exceedances.items()
    ]
