"""Bourgouin's (2000) precipitation-type areas: melting and refreezing energy of layers.

The area between the temperature curve and the 0 C isotherm on a thermodynamic
diagram, in J/kg, decides whether snow melts in a warm layer aloft and whether
the drops refreeze into ice pellets in the cold layer beneath
(:func:`icing.calc.sld.diagnose_sld` applies the thresholds).

Thresholds (from memory; the same values are used by an independent published
implementation of the method, a secondary source: the paper itself was not read
here):

- ``PA_SNOW`` = 2 J/kg: a warm layer aloft too weak to melt snow.
- ``PA_SURFACE_SNOW`` = 5.6 J/kg: a surface warm layer below this leaves snow.
- ``PA_MELT`` = 13.2 J/kg: complete melting (documentary: the refreezing line
  decides between rain and pellets).
- ``NA_PELLETS_OFFSET`` + ``NA_SLOPE`` PA = 66 + 0.66 PA J/kg: refrozen to ice
  pellets above; freezing rain below 46 + 0.66 PA (``NA_FREEZING_RAIN_OFFSET``),
  mixed between (reported as freezing rain: conservative, our choice).
"""

from __future__ import annotations

import numpy as np

from icing.constants import CP_AIR, RD, T0

__all__ = [
    "PA_SNOW",
    "PA_SURFACE_SNOW",
    "PA_MELT",
    "NA_PELLETS_OFFSET",
    "NA_FREEZING_RAIN_OFFSET",
    "NA_SLOPE",
    "bourgouin_layer_areas",
    "warm_layer_areas",
]

PA_SNOW = 2.0  # J/kg, Bourgouin (2000), from memory
PA_SURFACE_SNOW = 5.6  # J/kg, Bourgouin (2000), from memory
PA_MELT = 13.2  # J/kg, Bourgouin (2000), from memory
NA_PELLETS_OFFSET = 66.0  # J/kg, Bourgouin (2000): NA > 66 + 0.66 PA -> ice pellets [M]
NA_FREEZING_RAIN_OFFSET = 46.0  # J/kg, Bourgouin (2000): NA < 46 + 0.66 PA -> FZRA [M]
NA_SLOPE = 0.66  # Bourgouin (2000), from memory
_KAPPA = RD / CP_AIR


def bourgouin_layer_areas(pressure_bottom, temperature_bottom, pressure_top, temperature_top):
    """Positive and negative Bourgouin areas of the layer between two levels.

    The area between the temperature curve and the 0 C isotherm on a tephigram,
    in energy units:

    ``A = c_p integral (T - T0) d(ln theta)``

    with the temperature linear in ``ln theta`` across the layer, so a layer that
    crosses 0 C is split exactly at the crossing. For a layer entirely on one side
    this is ``c_p (T_mean - T0) ln(theta_top / theta_bottom)``, the form used by
    Bourgouin (2000) (from memory). ``|d ln theta|`` is taken, so a superadiabatic
    layer adds area rather than cancelling it.

    Parameters
    ----------
    pressure_bottom, temperature_bottom, pressure_top, temperature_top : array_like
        Pressure [Pa] and temperature [K] of the layer's bounding levels.

    Returns
    -------
    positive : numpy.ndarray
        Area of the part warmer than 0 C (melting energy). [J kg-1]
    negative : numpy.ndarray
        Area of the part colder than 0 C, as a positive number (refreezing). [J kg-1]

    References
    ----------
    Bourgouin, P. (2000), A method to determine precipitation types, Wea.
    Forecasting 15, 583-592.

    Examples
    --------
    >>> pa, na = bourgouin_layer_areas(85000.0, 275.15, 75000.0, 275.15)
    >>> round(float(pa), 1), float(na)
    (71.9, 0.0)
    """
    pb = np.asarray(pressure_bottom, dtype=float)
    pt = np.asarray(pressure_top, dtype=float)
    ta = np.asarray(temperature_bottom, dtype=float) - T0
    tb = np.asarray(temperature_top, dtype=float) - T0
    with np.errstate(invalid="ignore", divide="ignore"):
        # ln(theta_top / theta_bottom) with theta = T (p0 / p)^kappa
        dlnth = np.abs(np.log((tb + T0) / (ta + T0)) + _KAPPA * np.log(pb / pt))
        hi = np.maximum(ta, tb)
        lo = np.minimum(ta, tb)
        span = np.where(hi > lo, hi - lo, 1.0)
        # mean over the layer of max(T - T0, 0) and min(T - T0, 0), T linear in ln theta
        pos_mean = np.where(
            lo >= 0.0, 0.5 * (ta + tb), np.where(hi <= 0.0, 0.0, hi**2 / (2 * span))
        )
        neg_mean = np.where(
            hi <= 0.0, 0.5 * (ta + tb), np.where(lo >= 0.0, 0.0, -(lo**2) / (2 * span))
        )
    return CP_AIR * pos_mean * dlnth, CP_AIR * (0.0 - neg_mean) * dlnth + 0.0


def _rev_cummin(a):
    """Minimum over this and every higher level (last axis)."""
    return np.minimum.accumulate(a[..., ::-1], axis=-1)[..., ::-1]


def _rev_cummax(a):
    """Maximum over this and every higher level (last axis)."""
    return np.maximum.accumulate(a[..., ::-1], axis=-1)[..., ::-1]


def _take(a, idx):
    return np.take_along_axis(a, idx, axis=-1)


def warm_layer_areas(usable, pressure, temperature):
    """Bourgouin areas, cumulated upward from the lowest usable level, per level.

    Arrays shaped (..., level), levels sorted ground-up (usable ones first).

    ``pa``/``na``: positive area of the nearest warm layer above each level and the
    negative area between that layer's base and the level; ``cpos``: cumulated
    positive area; ``first_cold``: lowest cold level at or above; ``kw_c``: index
    of the warm layer's base (clipped); ``warm_above``: a warm layer lies above.
    """
    u, p, t = usable, pressure, temperature
    shape = p.shape
    nlev = shape[-1]
    idx = np.broadcast_to(np.arange(nlev), shape)
    warm = u & (t > T0)
    cold = u & (t <= T0)
    pos, neg = bourgouin_layer_areas(p[..., :-1], t[..., :-1], p[..., 1:], t[..., 1:])
    layer_ok = u[..., :-1] & u[..., 1:]
    zeros = np.zeros(shape[:-1] + (1,))
    cpos = np.concatenate([zeros, np.cumsum(np.where(layer_ok, pos, 0.0), -1)], -1)
    cneg = np.concatenate([zeros, np.cumsum(np.where(layer_ok, neg, 0.0), -1)], -1)
    first_warm = _rev_cummin(np.where(warm, idx, nlev))  # lowest warm level >= j
    first_cold = _rev_cummin(np.where(cold, idx, nlev))  # lowest cold level >= j
    kw = np.concatenate([first_warm[..., 1:], np.full(shape[:-1] + (1,), nlev)], -1)
    warm_above = kw < nlev  # a warm layer lies strictly above level j
    kw_c = np.clip(kw, 1, nlev - 1) if nlev > 1 else np.zeros_like(kw)
    kc = np.where(warm_above, _take(first_cold, kw_c), nlev)  # top of that warm layer
    pa = np.where(warm_above, _take(cpos, np.clip(kc, 0, nlev - 1)) - _take(cpos, kw_c - 1), 0.0)
    na = np.where(warm_above, _take(cneg, kw_c) - cneg, 0.0)
    return {
        "warm": warm,
        "cold": cold,
        "cpos": cpos,
        "first_cold": first_cold,
        "kw_c": kw_c,
        "warm_above": warm_above,
        "pa": pa,
        "na": na,
    }
