"""Cloud and rain drops: fall speed, activation, spectra and their moments.

Pure, vectorised numpy functions in SI units (m, kg m-3, m-3, m s-1, K, Pa);
every argument broadcasts. The supersaturation of the CCN spectra is the one
exception in wording only: ``N = C s^k`` takes ``s`` in percent, as every
source writes it, and the functions convert at their edges.

Contents
--------
``terminal_velocity``        Beard (1976), three regimes, 0.5 um - 7 mm.
``kohler_critical``          critical radius and supersaturation (Rogers & Yau 1989).
``twomey_activation``        Twomey (1959) closed form for the activated number.
``AIR_MASSES``, ``air_mass`` CCN spectra (Hobbs et al. 1985) and gamma widths
                             (Martin et al. 1994).
``median_volume_diameter``   MVD of a gamma spectrum from LWC and number.
``marshall_palmer``          LWC and median volume diameter of rain (1948).
``spectrum_bins``            bins of a spectrum by mass, for collection integrals.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.calc import _special as special  # scipy.special, tabled for the usual runs
from icing.calc.thermo import air_density, air_viscosity
from icing.constants import RHO_WATER, G

__all__ = [
    "terminal_velocity",
    "water_surface_tension",
    "kohler_critical",
    "twomey_activation",
    "AirMass",
    "AIR_MASSES",
    "air_mass",
    "gamma_shape_from_martin_k",
    "gamma_slope",
    "median_volume_diameter",
    "marshall_palmer",
    "marshall_palmer_from_lwc",
    "MP_INTERCEPT",
    "spectrum_bins",
    "combined_median_volume_diameter",
    "LANGMUIR_D_FRACTIONS",
    "LANGMUIR_D_RATIOS",
]

# --------------------------------------------------------------------------------------
# Fall speed
# --------------------------------------------------------------------------------------

#: Beard (1976) regime 2 (19 um - 1.07 mm) coefficients b0..b6 of Y(X = ln N_Da).
_BEARD_B2 = (-3.18657, 0.992696, -1.53193e-3, -9.87059e-4, -5.78878e-4, 8.55176e-5, -3.27815e-6)
#: Beard (1976) regime 3 (1.07 - 7 mm) coefficients b0..b5 of Y(X = ln(Bo Np^1/6)).
_BEARD_B3 = (-5.00015, 5.23778, -2.04914, 0.475294, -5.42819e-2, 2.38449e-3)
_BEARD_D1 = 19e-6  # regime 1 / 2 boundary [m]
_BEARD_D2 = 1.07e-3  # regime 2 / 3 boundary [m]
_BEARD_DMIN = 0.5e-6  # smallest diameter of regime 1 [m]
_BEARD_DMAX = 7.0e-3  # largest drop of regime 3; larger drops break up [m]


def water_surface_tension(temperature):
    """Surface tension of liquid water against its vapour (IAPWS 1994).

    ``sigma = 235.8e-3 tau^1.256 (1 - 0.625 tau)`` with ``tau = 1 - T / 647.096``.

    Parameters
    ----------
    temperature : array_like
        Water temperature. [K]

    Returns
    -------
    numpy.ndarray
        Surface tension [N m-1]; NaN below 233.15 K (no bulk supercooled water) and
        above the critical point. The release states the fit for 0.01-374 C and,
        from memory, reasonable agreement with supercooled data down to -25 C; below
        that it is an extrapolation of a smooth fit (a 1-2 % matter for fall speeds).

    References
    ----------
    IAPWS (2014), Revised Release on Surface Tension of Ordinary Water Substance,
    IAPWS R1-76(2014), eq. 1.

    Examples
    --------
    >>> round(float(water_surface_tension(293.15)) * 1e3, 2)
    72.74
    """
    t = np.asarray(temperature, dtype=float)
    with np.errstate(invalid="ignore"):
        tau = 1.0 - t / 647.096
        sigma = 235.8e-3 * np.abs(tau) ** 1.256 * (1.0 - 0.625 * tau)  # IAPWS R1-76 eq. 1
    return np.where((t >= 233.15) & (tau > 0.0), sigma, np.nan)


def _polyval(coeffs, x):
    """Evaluate ``sum coeffs[n] x**n`` (coefficients in increasing order)."""
    y = np.zeros_like(x)
    for c in reversed(coeffs):  # Horner; a loop over the 6-7 coefficients, not the data
        y = y * x + c
    return y


def terminal_velocity(diameter, *, pressure=101325.0, temperature=293.15):
    """Terminal fall speed of a water drop in still air, Beard (1976).

    Beard's three regimes, each in the variables of the paper:

    1. 0.5-19 um, slip-corrected Stokes law:
       ``V = C_sc Delta_rho g d^2 / (18 eta)``, ``C_sc = 1 + 2.51 l / d``,
       ``l = l0 (eta / eta0) (p0 / p) (T / T0)^0.5`` with l0 = 6.62e-6 cm,
       eta0 = 1.818e-4 poise, p0 = 1013.25 hPa, T0 = 293.15 K.
    2. 19 um - 1.07 mm: Davies number ``N_Da = 4 rho_a Delta_rho g d^3 / (3 eta^2)``,
       ``X = ln N_Da``, ``Y = sum b_n X^n`` (n = 0..6), ``N_Re = C_sc exp(Y)``.
    3. 1.07-7 mm: Bond number ``Bo = 4 Delta_rho g d^2 / (3 sigma)``, physical
       property number ``N_P = sigma^3 rho_a^2 / (eta^4 Delta_rho g)``,
       ``X = ln(Bo N_P^(1/6))``, ``Y = sum b_n X^n`` (n = 0..5),
       ``N_Re = N_P^(1/6) exp(Y)``.

    In regimes 2 and 3 ``V = eta N_Re / (rho_a d)``.

    Parameters
    ----------
    diameter : array_like
        Drop diameter (equal-volume sphere). [m]
    pressure : array_like, optional
        Air pressure. [Pa]
    temperature : array_like, optional
        Air temperature, also taken as the drop temperature for its surface
        tension. [K]

    Returns
    -------
    numpy.ndarray
        Terminal velocity [m s-1], positive downward. NaN for diameters outside
        0.5 um - 7 mm (non-positive sizes; drops above ~7 mm break up) and where the
        surface tension is undefined (below -40 C).

    Notes
    -----
    Air density is the dry-air value ``p / (Rd T)`` (``icing.thermo.air_density``),
    viscosity Sutherland's law (``icing.thermo.air_viscosity``), surface tension
    IAPWS R1-76 (``water_surface_tension``) and water density 1000 kg m-3
    (``icing.constants.RHO_WATER``; 998 at 20 C, a 0.2 % effect). Beard states
    agreement with Gunn & Kinzer (1949) to about 2 % above 0.3 mm and about 8 %
    below; the tests hold the code to that.

    References
    ----------
    Beard, K. V. (1976), Terminal velocity and shape of cloud and precipitation drops
    aloft, J. Atmos. Sci. 33, 851-864, sections 2-4 and Table 1.
    Gunn, R. & Kinzer, G. D. (1949), J. Meteor. 6, 243-248, Table 2.

    Examples
    --------
    >>> round(float(terminal_velocity(1.0e-3)), 2)
    4.01
    >>> bool(np.isnan(terminal_velocity(8.0e-3)))
    True
    """
    d = np.asarray(diameter, dtype=float)
    p = np.asarray(pressure, dtype=float)
    t = np.asarray(temperature, dtype=float)
    rho_a = air_density(p, t)
    eta = air_viscosity(t)
    sigma = water_surface_tension(t)
    drho = RHO_WATER - rho_a
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        ds = np.where(d > 0.0, d, np.nan)
        # regime 1 (Beard 1976, section 2): mean free path and slip correction
        mfp = 6.62e-8 * (eta / 1.818e-5) * (101325.0 / p) * np.sqrt(t / 293.15)
        c_sc = 1.0 + 2.51 * mfp / ds
        v1 = c_sc * drho * G * ds**2 / (18.0 * eta)
        # regime 2 (section 3): Davies number polynomial
        x2 = np.log(4.0 * rho_a * drho * G * ds**3 / (3.0 * eta**2))
        v2 = eta * c_sc * np.exp(_polyval(_BEARD_B2, x2)) / (rho_a * ds)
        # regime 3 (section 4): Bond and physical-property numbers
        bond = 4.0 * drho * G * ds**2 / (3.0 * sigma)
        np6 = (sigma**3 * rho_a**2 / (eta**4 * drho * G)) ** (1.0 / 6.0)
        x3 = np.log(bond * np6)
        v3 = eta * np6 * np.exp(_polyval(_BEARD_B3, x3)) / (rho_a * ds)
    v = np.where(ds < _BEARD_D1, v1, np.where(ds < _BEARD_D2, v2, v3))
    inside = (ds >= _BEARD_DMIN) & (ds <= _BEARD_DMAX) & np.isfinite(sigma)
    return np.where(inside, v, np.nan)


# --------------------------------------------------------------------------------------
# Nuclei and activation
# --------------------------------------------------------------------------------------

#: Van 't Hoff factor i and molar mass M [g mol-1] of the solutes
#: (Rogers & Yau 1989, ch. 6: i = 2 for NaCl, 3 for (NH4)2SO4, full dissociation).
_SOLUTES = {
    "sodium_chloride": (2.0, 58.44),
    "ammonium_sulfate": (3.0, 132.14),
}


def kohler_critical(solute_mass, *, solute="sodium_chloride", temperature=273.15):
    """Critical radius and supersaturation of a solution droplet (Köhler theory).

    With the curvature and solute terms of Rogers & Yau (1989), ch. 6,
    ``S - 1 = a / r - b / r^3``, ``a = 3.3e-5 / T`` [cm] and ``b = 4.3 i m / M``
    [cm3] (``m`` in g, ``M`` in g mol-1), the maximum of the Köhler curve is at
    ``r* = sqrt(3 b / a)`` with ``S* - 1 = sqrt(4 a^3 / (27 b))``.

    Parameters
    ----------
    solute_mass : array_like
        Dry mass of dissolved salt per droplet. [kg]
    solute : {"sodium_chloride", "ammonium_sulfate"}, optional
        The salt; van 't Hoff factor i = 2 for NaCl and i = 3 for (NH4)2SO4 (ideal,
        complete dissociation, as Rogers & Yau take it).
    temperature : array_like, optional
        Temperature. [K]

    Returns
    -------
    critical_radius : numpy.ndarray
        Radius at the peak of the Köhler curve. [m]
    critical_supersaturation : numpy.ndarray
        ``S* - 1`` as a fraction (0.0042 = 0.42 %). NaN for non-positive masses.

    Raises
    ------
    ValueError
        For an unknown solute name (the message lists the valid ones).

    Notes
    -----
    The dilute-solution approximation of the solute term holds when the droplet is
    much larger than its dry nucleus, true at the critical radius for masses above
    ~1e-19 kg; the approximate ``a`` ignores the temperature change of the surface
    tension (a few per cent between 0 and 20 C).

    References
    ----------
    Rogers, R. R. & Yau, M. K. (1989), A Short Course in Cloud Physics, 3rd ed.,
    Pergamon, ch. 6 (eqs. 6.7-6.9 and the table of critical values).

    Examples
    --------
    >>> r, s = kohler_critical(1e-19)  # 1e-16 g of NaCl
    >>> round(float(r) * 1e6, 2), round(float(s) * 100, 2)
    (0.19, 0.42)
    """
    try:
        i, molar = _SOLUTES[solute]
    except (KeyError, TypeError):
        raise ValueError(
            f"unknown solute {solute!r}; expected one of {', '.join(_SOLUTES)}"
        ) from None
    m_g = np.asarray(solute_mass, dtype=float) * 1e3  # kg -> g
    t = np.asarray(temperature, dtype=float)
    a = 3.3e-5 / t  # curvature term [cm], Rogers & Yau eq. 6.7
    with np.errstate(invalid="ignore", divide="ignore"):
        b = np.where(m_g > 0.0, 4.3 * i * m_g / molar, np.nan)  # solute term [cm3], eq. 6.8
        r_crit_cm = np.sqrt(3.0 * b / a)  # eq. 6.9
        s_crit = np.sqrt(4.0 * a**3 / (27.0 * b))  # eq. 6.9
    return r_crit_cm * 1e-2, s_crit


#: Twomey's constant for s in percent and w in cm/s (derivation in twomey_activation).
TWOMEY_A_PERCENT = 1.63e-3 * 6.7**2


def twomey_activation(updraft, *, c_per_cm3, k):
    """Activated droplet number and peak supersaturation, Twomey (1959) closed form.

    For a CCN spectrum ``N = C s^k`` (s in %, C the count active at 1 %):

    ``s_max^(k + 2) = A w^1.5 / (C k B(3/2, k/2))``,  ``N = C s_max^k``

    with ``w`` in cm s-1, ``B`` the beta function and ``A = 7.3e-2`` (see Notes).

    Parameters
    ----------
    updraft : array_like
        Updraft speed at cloud base. [m s-1]
    c_per_cm3 : array_like
        CCN spectrum coefficient C (number active at 1 % supersaturation). [cm-3]
    k : array_like
        CCN spectrum exponent. [1]

    Returns
    -------
    number : numpy.ndarray
        Activated droplets [m-3]; 0 where ``updraft <= 0`` (no activation without
        ascent), NaN where any input is NaN or C, k are non-positive.
    s_max : numpy.ndarray
        Peak supersaturation as a fraction (0.0074 = 0.74 %); 0 where
        ``updraft <= 0``.

    Notes
    -----
    Units trap. Twomey (1959) writes the constant as ``A = 1.63e-3`` with the
    supersaturation expressed as a dew-point excess (K) near 10 C and 800 hPa. There
    ``d ln e_s / dT = L / (R_v T^2)`` = 0.067 K-1, so 1 K of dew-point excess is 6.7 %
    supersaturation: ``s_% = 6.7 s_K``. The spectrum coefficient changes with the
    unit too: ``N = C_K s_K^k = C_% s_%^k`` gives ``C_K = C_% 6.7^k``. Substituting
    both into the closed form,

    ``s_%^(k+2) = 6.7^(k+2) A_K w^1.5 / (C_% 6.7^k k B) = 6.7^2 A_K w^1.5 / (C_% k B)``

    so ``A_% = 6.7^2 x 1.63e-3 = 7.3e-2``. The constant carries the weak temperature
    and pressure dependence of Twomey's derivation; it is held at its 10 C, 800 hPa
    value. Rogers & Yau's simplified form ``N = 0.88 C^(2/(k+2)) (7e-2 w^1.5)^(k/(k+2))``
    agrees to a few per cent. Twomey's N is an upper bound (no limit on the CCN
    supply, no growth kinetics); it overestimates at large w and high C. No cap is
    applied; the caller chooses the updraft.

    References
    ----------
    Twomey, S. (1959), The nuclei of natural cloud formation. Part II: The
    supersaturation in natural clouds and the variation of cloud droplet
    concentration, Geofis. Pura Appl. 43, 243-249.
    Rogers, R. R. & Yau, M. K. (1989), A Short Course in Cloud Physics, 3rd ed., ch. 6.

    Examples
    --------
    >>> n, s = twomey_activation(1.0, c_per_cm3=100.0, k=0.7)
    >>> round(float(n) / 1e6), round(float(s) * 100, 2)
    (81, 0.74)
    """
    w = np.asarray(updraft, dtype=float)
    c = np.asarray(c_per_cm3, dtype=float)
    kk = np.asarray(k, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        ok = (c > 0.0) & (kk > 0.0)
        cs = np.where(ok, c, np.nan)
        ks = np.where(ok, kk, np.nan)
        w_cm = np.maximum(w, 0.0) * 100.0
        rhs = TWOMEY_A_PERCENT * w_cm**1.5 / (cs * ks * special.beta(1.5, ks / 2.0))
        s_pct = rhs ** (1.0 / (ks + 2.0))  # Twomey (1959) closed form
        n_cm3 = cs * s_pct**ks  # N = C s^k
    up = w > 0.0
    nan = np.isnan(w) | ~ok
    number = np.where(nan, np.nan, np.where(up, n_cm3 * 1e6, 0.0))
    s_max = np.where(nan, np.nan, np.where(up, s_pct / 100.0, 0.0))
    return number, s_max


# --------------------------------------------------------------------------------------
# Air masses and the gamma spectrum
# --------------------------------------------------------------------------------------


def gamma_shape_from_martin_k(k_martin):
    """Gamma shape mu of ``n(D) ~ D^mu exp(-Lambda D)`` from Martin's ``k = (r_v/r_e)^3``.

    For the gamma spectrum the moments are ``M_n ~ Gamma(mu + n + 1) / Lambda^n``,
    so ``r_v^3 ~ M_3 / M_0 = (mu+1)(mu+2)(mu+3) / Lambda^3`` and
    ``r_e ~ M_3 / M_2 = (mu+3) / Lambda``, hence

    ``k = (mu+1)(mu+2) / (mu+3)^2``, i.e. ``(1-k) mu^2 + (3-6k) mu + (2-9k) = 0``

    and ``mu`` is the positive root. k = 2/9 gives mu = 0 (exponential); k -> 1 is
    the monodisperse limit.

    Parameters
    ----------
    k_martin : array_like
        Martin et al. (1994) ratio, in (2/9, 1). [1]

    Returns
    -------
    numpy.ndarray
        Shape mu [1]; NaN outside (2/9, 1).

    References
    ----------
    Martin, G. M., Johnson, D. W. & Spice, A. (1994), J. Atmos. Sci. 51, 1823-1842.

    Examples
    --------
    >>> mu = gamma_shape_from_martin_k(np.array([0.80, 0.67]))
    >>> [round(float(x), 2) for x in mu]
    [11.3, 5.37]
    """
    k = np.asarray(k_martin, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        a, b, c = 1.0 - k, 3.0 - 6.0 * k, 2.0 - 9.0 * k
        mu = (-b + np.sqrt(b * b - 4.0 * a * c)) / (2.0 * a)
    return np.where((k > 2.0 / 9.0) & (k < 1.0), mu, np.nan)


@dataclass(frozen=True)
class AirMass:
    """A CCN spectrum ``N = C s^k`` and a droplet-spectrum width.

    Attributes
    ----------
    name : str
        Short name.
    c_per_cm3 : float
        CCN active at 1 % supersaturation. [cm-3]
    k : float
        CCN spectrum exponent. [1]
    shape : float
        Gamma shape mu of the cloud-droplet spectrum ``n(D) ~ D^mu exp(-Lambda D)``. [1]
    description : str
        What the air mass stands for.
    source : str
        Where the numbers come from.
    """

    name: str
    c_per_cm3: float
    k: float
    shape: float
    description: str = ""
    source: str = ""

    def describe(self) -> dict:
        """Return the air mass as a plain dict (for the assumptions written to outputs)."""
        return {
            "name": self.name,
            "c_per_cm3": self.c_per_cm3,
            "k": self.k,
            "shape": self.shape,
            "description": self.description,
            "source": self.source,
        }


#: Named air masses. C and k: Hobbs, Bowdle & Radke (1985), J. Clim. Appl. Meteor. 24,
#: 1358. Shapes: Martin et al. (1994) k = 0.80 maritime, 0.67 continental (from memory),
#: turned into a gamma mu by ``gamma_shape_from_martin_k``.
AIR_MASSES = {
    "maritime": AirMass(
        "maritime",
        290.0,
        0.7,
        round(float(gamma_shape_from_martin_k(0.80)), 2),
        "clean marine air: few CCN, narrow droplet spectra",
        "C, k: Hobbs, Bowdle & Radke (1985); width k = 0.80: Martin et al. (1994), from memory",
    ),
    "continental": AirMass(
        "continental",
        2200.0,
        0.9,
        round(float(gamma_shape_from_martin_k(0.67)), 2),
        "aged continental air: many CCN, broader relative spectra",
        "C, k: Hobbs, Bowdle & Radke (1985), aged continental; width k = 0.67: "
        "Martin et al. (1994), from memory",
    ),
}


def air_mass(name_or_dict):
    """Return a named air mass, or build one from a mapping.

    Parameters
    ----------
    name_or_dict : str or mapping or AirMass
        A name in ``AIR_MASSES`` or a mapping with ``c_per_cm3``, ``k`` and
        ``shape`` (optional ``name``, ``description``, ``source``).

    Returns
    -------
    AirMass

    Raises
    ------
    ValueError
        Unknown name (the message lists the valid names), missing keys or
        non-positive C, k or a negative shape.

    Examples
    --------
    >>> air_mass("maritime").c_per_cm3
    290.0
    >>> air_mass({"c_per_cm3": 500, "k": 0.5, "shape": 4}).name
    'user'
    """
    if isinstance(name_or_dict, AirMass):
        return name_or_dict
    if isinstance(name_or_dict, str):
        try:
            return AIR_MASSES[name_or_dict]
        except KeyError:
            raise ValueError(
                f"unknown air mass {name_or_dict!r}; expected one of "
                f"{', '.join(AIR_MASSES)} or a mapping with c_per_cm3, k, shape"
            ) from None
    try:
        c = float(name_or_dict["c_per_cm3"])
        k = float(name_or_dict["k"])
        shape = float(name_or_dict["shape"])
    except (KeyError, TypeError, ValueError):
        raise ValueError(
            f"air mass must be one of {', '.join(AIR_MASSES)} or a mapping with numeric "
            f"c_per_cm3, k and shape; got {name_or_dict!r}"
        ) from None
    if not (c > 0.0 and k > 0.0 and shape >= 0.0):
        raise ValueError(
            f"air mass needs c_per_cm3 > 0, k > 0 and shape >= 0; got c_per_cm3={c}, "
            f"k={k}, shape={shape}"
        )
    return AirMass(
        str(name_or_dict.get("name", "user")),
        c,
        k,
        shape,
        str(name_or_dict.get("description", "user-defined")),
        str(name_or_dict.get("source", "user")),
    )


def gamma_slope(lwc, number_concentration, *, shape=2.0):
    """Return the slope Lambda [m-1] of the gamma spectrum holding a given LWC and number.

    ``LWC = (pi/6) rho_w N (mu+1)(mu+2)(mu+3) / Lambda^3``; NaN where ``lwc <= 0`` or
    ``N <= 0``.

    Examples
    --------
    >>> round(float(gamma_slope(3e-4, 1e8, shape=2.0)))
    218781
    """
    q = np.asarray(lwc, dtype=float)
    n = np.asarray(number_concentration, dtype=float)
    mu = np.asarray(shape, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        m3 = (mu + 1.0) * (mu + 2.0) * (mu + 3.0)
        lam = (np.pi / 6.0 * RHO_WATER * n * m3 / q) ** (1.0 / 3.0)
    return np.where((q > 0.0) & (n > 0.0) & (mu > -1.0), lam, np.nan)


def median_volume_diameter(lwc, number_concentration, *, shape=2.0):
    """Median volume diameter of a gamma droplet spectrum.

    For ``n(D) = N0 D^mu exp(-Lambda D)`` the liquid water content is
    ``LWC = (pi/6) rho_w N Gamma(mu+4) / (Gamma(mu+1) Lambda^3)`` and the mass is
    distributed in ``x = Lambda D`` as Gamma(mu + 4), so

    ``MVD = x50(mu + 4) / Lambda``

    with ``x50`` the median of Gamma(mu + 4) (``scipy.special.gammaincinv(mu + 4, 0.5)``;
    5.670 for mu = 2, the Khrgian-Mazin spectrum).

    Parameters
    ----------
    lwc : array_like
        Liquid water content. [kg m-3]
    number_concentration : array_like
        Droplet number. [m-3]
    shape : array_like, optional
        Gamma shape mu (> -1). [1]

    Returns
    -------
    numpy.ndarray
        MVD [m]; NaN where ``lwc <= 0`` or ``N <= 0`` (no drops: there is no
        diameter, and 0 would read as "tiny drops") or inputs are NaN.

    References
    ----------
    Pruppacher, H. R. & Klett, J. D. (1997), Microphysics of Clouds and
    Precipitation, 2nd ed., ch. 2 (gamma and Khrgian-Mazin spectra; chapter from
    memory). The moments are elementary properties of the gamma distribution.

    Examples
    --------
    >>> round(float(median_volume_diameter(3e-4, 1e8, shape=2.0)) * 1e6, 1)
    25.9
    """
    mu = np.asarray(shape, dtype=float)
    lam = gamma_slope(lwc, number_concentration, shape=mu)
    with np.errstate(invalid="ignore"):
        return special.gammaincinv(mu + 4.0, 0.5) / lam


# --------------------------------------------------------------------------------------
# Rain
# --------------------------------------------------------------------------------------

#: Marshall & Palmer (1948) intercept N0 = 8000 m-3 mm-1 = 8e6 m-4.
MP_INTERCEPT = 8.0e6
_X50_EXP = float(special.gammaincinv(4.0, 0.5))  # 3.672: median of Gamma(4)


def marshall_palmer(rain_rate_mm_h):
    """Liquid water content and median volume diameter of Marshall-Palmer rain.

    ``n(D) = N0 exp(-Lambda D)``, ``N0 = 8000 m-3 mm-1``,
    ``Lambda = 4.1 R^-0.21 mm-1`` (R in mm h-1), hence

    ``LWC = pi rho_w N0 / Lambda^4`` and ``D0 = 3.67 / Lambda``

    (3.672 is the median of Gamma(4), the exponential's mass distribution).

    Parameters
    ----------
    rain_rate_mm_h : array_like
        Rain rate. [mm h-1]

    Returns
    -------
    lwc : numpy.ndarray
        Rain water content [kg m-3]; 0 where the rate is 0.
    median_volume_diameter : numpy.ndarray
        D0 [m]; NaN where the rate is <= 0 or NaN. Negative rates give NaN for both.

    Notes
    -----
    Marshall & Palmer fitted rates of about 1-23 mm/h (from memory); the
    exponential overstates the number of the smallest drops. Above 100 mm/h (our
    limit) the fit is extrapolated too far and NaN is returned.

    References
    ----------
    Marshall, J. S. & Palmer, W. McK. (1948), The distribution of raindrops with
    size, J. Meteor. 5, 165-166.

    Examples
    --------
    >>> q, d0 = marshall_palmer(1.0)
    >>> round(float(q) * 1e3, 3), round(float(d0) * 1e3, 3)
    (0.089, 0.896)
    """
    r = np.asarray(rain_rate_mm_h, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        lam = 4.1e3 * np.where(r > 0.0, r, np.nan) ** -0.21  # Lambda [m-1], MP (1948)
        lwc = np.pi * RHO_WATER * MP_INTERCEPT / lam**4  # integral of (pi/6) rho_w D^3 n(D)
        d0 = _X50_EXP / lam
    ok = (r > 0.0) & (r <= 100.0)
    lwc = np.where(ok, lwc, np.where(r == 0.0, 0.0, np.nan))
    return lwc, np.where(ok, d0, np.nan)


def marshall_palmer_from_lwc(lwc):
    """Invert the Marshall-Palmer spectrum for a given rain water content.

    ``Lambda = (pi rho_w N0 / LWC)^(1/4)``, ``D0 = 3.67 / Lambda``, and the rain rate
    of the same spectrum ``R = (4.1 / Lambda_mm)^(1 / 0.21)``.

    Parameters
    ----------
    lwc : array_like
        Rain water content. [kg m-3]

    Returns
    -------
    median_volume_diameter : numpy.ndarray
        D0 [m]; NaN where ``lwc <= 0``.
    rain_rate_mm_h : numpy.ndarray
        Equivalent rain rate [mm h-1]; 0 where ``lwc == 0``.

    Examples
    --------
    >>> d0, r = marshall_palmer_from_lwc(marshall_palmer(2.0)[0])
    >>> round(float(r), 6)
    2.0
    """
    q = np.asarray(lwc, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        lam = (np.pi * RHO_WATER * MP_INTERCEPT / np.where(q > 0.0, q, np.nan)) ** 0.25
        d0 = _X50_EXP / lam
        rate = (4.1e3 / lam) ** (1.0 / 0.21)
    return d0, np.where(q == 0.0, 0.0, rate)


# --------------------------------------------------------------------------------------
# Spectrum bins
# --------------------------------------------------------------------------------------

#: Langmuir & Blodgett (1946) "D" distribution: LWC fractions (from memory).
LANGMUIR_D_FRACTIONS = (0.05, 0.10, 0.20, 0.30, 0.20, 0.10, 0.05)
#: Langmuir & Blodgett (1946) "D" distribution: diameter / MVD per bin (from memory).
LANGMUIR_D_RATIOS = (0.31, 0.52, 0.71, 1.00, 1.37, 1.74, 2.22)


def spectrum_bins(mvd, *, shape=2.0, n_bins=7, distribution="gamma"):
    """Return representative diameters and mass fractions of a droplet spectrum.

    For integrating a size-dependent quantity (collision efficiency, fall speed)
    over the spectrum by mass: ``<f> = sum_i fraction_i f(diameter_i)``.

    ``"gamma"``: the mass of ``n(D) ~ D^mu exp(-Lambda D)`` is distributed as
    Gamma(mu + 4) in ``x = Lambda D``; the bins are ``n_bins`` equal-mass slices and
    each is represented by the diameter at its mass-quantile midpoint,
    ``D_i = gammaincinv(mu + 4, (i + 1/2) / n) / Lambda`` with
    ``Lambda = gammaincinv(mu + 4, 1/2) / MVD``; every fraction is ``1 / n``. This
    is the midpoint rule in cumulative-mass space: it needs no smoothness of the
    integrand (collision efficiencies have a cut-off where Gauss quadrature rings),
    and with an odd ``n_bins`` the middle bin sits exactly at the MVD.

    ``"langmuir-d"``: the Langmuir & Blodgett (1946) "D" distribution, seven bins of
    LWC fractions 0.05, 0.10, 0.20, 0.30, 0.20, 0.10, 0.05 at diameter ratios 0.31,
    0.52, 0.71, 1.00, 1.37, 1.74, 2.22 to the MVD (``shape`` is ignored; ``n_bins``
    must be 7).

    Parameters
    ----------
    mvd : array_like
        Median volume diameter, shape S. Pass 1.0 to get the diameter ratios. [m]
    shape : float, optional
        Gamma shape mu (``"gamma"`` only). [1]
    n_bins : int, optional
        Number of bins (>= 1).
    distribution : {"gamma", "langmuir-d"}, optional
        Which spectrum.

    Returns
    -------
    diameters : numpy.ndarray
        Shape S + (n_bins,) [m]; NaN where the MVD is NaN or <= 0.
    mass_fractions : numpy.ndarray
        Shape (n_bins,), summing to 1. [1]

    Raises
    ------
    ValueError
        Unknown distribution (the message lists the valid ones), ``n_bins < 1``, a
        Langmuir distribution with other than 7 bins or a shape <= -1.

    References
    ----------
    Langmuir, I. & Blodgett, K. B. (1946), A mathematical investigation of water
    droplet trajectories, AAF Tech. Rep. 5418 (bin table from memory).

    Examples
    --------
    >>> d, f = spectrum_bins(20e-6, n_bins=3)
    >>> [round(float(x) * 1e6, 1) for x in d], round(float(f.sum()), 12)
    ([13.0, 20.0, 29.2], 1.0)
    """
    valid = ("gamma", "langmuir-d")
    if distribution not in valid:
        raise ValueError(
            f"unknown spectrum distribution {distribution!r}; expected one of {', '.join(valid)}"
        )
    n = int(n_bins)
    if n < 1:
        raise ValueError(f"n_bins must be >= 1; got {n_bins!r}")
    m = np.asarray(mvd, dtype=float)
    m = np.where(m > 0.0, m, np.nan)
    if distribution == "langmuir-d":
        if n != 7:
            raise ValueError(f"the langmuir-d distribution has 7 bins; got n_bins={n_bins!r}")
        ratios = np.array(LANGMUIR_D_RATIOS)
        fractions = np.array(LANGMUIR_D_FRACTIONS)
    else:
        mu = float(shape)
        if not mu > -1.0:
            raise ValueError(f"gamma shape must be > -1; got {shape!r}")
        q = (np.arange(n) + 0.5) / n
        ratios = special.gammaincinv(mu + 4.0, q) / special.gammaincinv(mu + 4.0, 0.5)
        fractions = np.full(n, 1.0 / n)
    return m[..., None] * ratios, fractions


def combined_median_volume_diameter(lwc_a, mvd_a, lwc_b, mvd_b, *, shape_a=2.0, shape_b=0.0):
    """Median volume diameter of two gamma populations taken together.

    Each population ``n(D) ~ D^mu exp(-Lambda D)`` has its mass distributed as
    Gamma(mu + 4) in ``Lambda D`` with ``Lambda = x50(mu + 4) / MVD``; the mixture's
    cumulative mass fraction is

    ``F(D) = [LWC_a P(mu_a + 4, Lambda_a D) + LWC_b P(mu_b + 4, Lambda_b D)] / (LWC_a + LWC_b)``

    (``P`` the regularised lower incomplete gamma function), and its MVD solves
    ``F(D) = 1/2``, found by bisection in ``ln D`` between the two MVDs (the
    mixture's median always lies between them). 14 CFR 25 Appendix O states its
    MVD classes for the whole drop distribution (cloud droplets and drizzle or rain
    together); this turns a cloud population and an SLD population into that MVD.

    Parameters
    ----------
    lwc_a, mvd_a : array_like
        LWC [kg m-3] and MVD [m] of the first population (e.g. cloud droplets).
    lwc_b, mvd_b : array_like
        LWC [kg m-3] and MVD [m] of the second population (e.g. drizzle or rain).
    shape_a, shape_b : array_like, optional
        Gamma shapes mu (default 2 for cloud droplets, 0 -- exponential -- for
        drizzle and rain, as Marshall-Palmer). [1]

    Returns
    -------
    numpy.ndarray
        MVD of the mixture [m]. Where one population has no water (LWC <= 0 or NaN
        MVD) the other's MVD; NaN where neither has any.

    Examples
    --------
    >>> round(float(combined_median_volume_diameter(0.3e-3, 20e-6, 0.0, np.nan)) * 1e6, 1)
    20.0
    >>> d = combined_median_volume_diameter(0.2e-3, 15e-6, 0.2e-3, 200e-6)
    >>> bool(15e-6 < d < 200e-6)
    True
    """
    la, ma, lb, mb, mua, mub = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (lwc_a, mvd_a, lwc_b, mvd_b, shape_a, shape_b))
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        has_a = (la > 0.0) & (ma > 0.0)
        has_b = (lb > 0.0) & (mb > 0.0)
        wa = np.where(has_a, la, 0.0)
        wb = np.where(has_b, lb, 0.0)
        lam_a = special.gammaincinv(mua + 4.0, 0.5) / np.where(has_a, ma, 1.0)
        lam_b = special.gammaincinv(mub + 4.0, 0.5) / np.where(has_b, mb, 1.0)
        lo = np.log(np.where(has_a & has_b, np.minimum(ma, mb), 1.0))
        hi = np.log(np.where(has_a & has_b, np.maximum(ma, mb), 1.0))
        total = wa + wb
        for _ in range(50):  # bisection steps (not a loop over data): 2^-50 of the bracket
            mid = 0.5 * (lo + hi)
            d = np.exp(mid)
            frac = (
                wa * special.gammainc(mua + 4.0, lam_a * d)
                + wb * special.gammainc(mub + 4.0, lam_b * d)
            ) / np.where(total > 0.0, total, 1.0)
            below = frac < 0.5
            lo = np.where(below, mid, lo)
            hi = np.where(below, hi, mid)
        both = np.exp(0.5 * (lo + hi))
    return np.where(has_a & has_b, both, np.where(has_a, ma, np.where(has_b, mb, np.nan)))
