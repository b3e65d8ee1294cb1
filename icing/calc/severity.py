"""Severity words from the ice an airframe's collector takes on.

The counted catch of a collector (:mod:`icing.calc.airframe`) is mapped onto the
earlier AIM edition's representative rates "on the outer wing" (trace < 6 mm/h,
light 6-25, moderate 25-75, severe > 75 mm/h); ice protection, the time until the
collector's ice tolerance is reached, and supercooled large drops striking aft of
the protected areas raise or set the word. The conventions are stated in the
module docstring of :mod:`icing.calc.airframe`.
"""

from __future__ import annotations

import numpy as np

from icing import codes
from icing.constants import IN_CLOUD_LWC as _IN_CLOUD_LWC

__all__ = [
    "AIM_RATES_MM_H",
    "TOLERANCE_MINUTES",
    "PROTECTION_RESIDUAL",
    "IN_CLOUD_LWC",
    "rate_severity",
    "collector_severity",
]

#: In-cloud liquid threshold (Korolev et al. 2003): 0.01 g/m3. [kg m-3]
IN_CLOUD_LWC = _IN_CLOUD_LWC  # constants.IN_CLOUD_LWC (Korolev et al. 2003)
#: Earlier AIM edition's representative outer-wing rates: trace/light,
#: light/moderate and moderate/severe boundaries. [mm/h]
AIM_RATES_MM_H = (6.0, 25.0, 75.0)
#: Minutes to ice tolerance that raise an unprotected collector's severity to
#: severe / at least moderate / at least light (our convention).
TOLERANCE_MINUTES = (5.0, 20.0, 60.0)
#: Fraction of the caught ice that each kind of ice protection leaves on the
#: protected collector, for the severity scale (our convention, see module doc).
PROTECTION_RESIDUAL = {"none": 1.0, "de-ice": 1.0 / 3.0, "anti-ice": 0.1}


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


def collector_severity(
    outer_wing, freezes, time_to_tolerance, prot, *, sld_ice, sld_cold, sld_class
):
    """Severity code of one collector (conventions: :mod:`icing.calc.airframe`).

    Parameters
    ----------
    outer_wing : ndarray
        Equivalent outer-wing rate of the counted catch, after protection. [mm/h]
    freezes : ndarray of bool
        Some of the catch freezes on the collector.
    time_to_tolerance : ndarray
        Minutes until the collector's ice tolerance is reached. [min]
    prot : {"none", "de-ice", "anti-ice"}
        The collector's ice protection.
    sld_ice, sld_cold : ndarray of bool
        SLD freezes on the collector; SLD strikes it in sub-freezing air.
    sld_class : ndarray
        ``codes.SLD_*`` of the SLD population.

    Returns
    -------
    ndarray of int8
        ``codes.SEVERITY`` index.
    """
    sev = rate_severity(outer_wing).astype(np.int16)
    if prot == "none":
        floor = np.select(
            [
                time_to_tolerance < TOLERANCE_MINUTES[0],
                time_to_tolerance < TOLERANCE_MINUTES[1],
                time_to_tolerance < TOLERANCE_MINUTES[2],
            ],
            [codes.SEV_SEVERE, codes.SEV_MODERATE, codes.SEV_LIGHT],
            codes.SEV_NONE,
        )
        sev = np.where(freezes, np.maximum(sev, floor), sev)
    rain = sld_ice & (sld_class == codes.SLD_RAIN)
    drizzle = sld_ice & (sld_class != codes.SLD_RAIN)
    sld_floor = {
        "none": (codes.SEV_SEVERE, codes.SEV_MODERATE),
        "de-ice": (codes.SEV_SEVERE, codes.SEV_SEVERE),
        "anti-ice": (codes.SEV_MODERATE, codes.SEV_MODERATE),
    }[prot]
    if np.any(sld_ice):
        sev = np.where(rain, np.maximum(sev, sld_floor[0]), sev)
        sev = np.where(drizzle, np.maximum(sev, sld_floor[1]), sev)
    sev = np.where(freezes | sld_cold, np.maximum(sev, codes.SEV_TRACE), codes.SEV_NONE)
    return sev.astype(np.int8)
