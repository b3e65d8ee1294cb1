"""The warm-rain process: cloud water turned into drizzle by collision-coalescence.

Bulk rates of the two-moment scheme of Khairoutdinov & Kogan (2000), fitted to
large-eddy simulations of marine stratocumulus with bin microphysics; used by
:func:`icing.calc.sld.diagnose_sld` for freezing drizzle in warm-topped decks.
"""

from __future__ import annotations

import numpy as np

__all__ = ["khairoutdinov_kogan_autoconversion"]


def khairoutdinov_kogan_autoconversion(cloud_water, droplet_number):
    """Autoconversion rate of cloud water to drizzle, Khairoutdinov & Kogan (2000).

    ``dq_r / dt = 1350 q_c^2.47 N_c^-1.79`` (their eq. 29), ``q_c`` in kg/kg and
    ``N_c`` in cm-3.

    Parameters
    ----------
    cloud_water : array_like
        Cloud liquid mixing ratio q_c. [kg kg-1]
    droplet_number : array_like
        Cloud droplet number. [m-3]

    Returns
    -------
    numpy.ndarray
        Drizzle production rate [kg kg-1 s-1]; 0 where ``q_c <= 0``, NaN where the
        number is non-positive or NaN.

    Notes
    -----
    Fitted to large-eddy simulations of marine stratocumulus with bin microphysics;
    outside such clouds (deep or strongly sheared cloud, N_c far above ~300 cm-3)
    it is an extrapolation that this package accepts for screening.

    References
    ----------
    Khairoutdinov, M. & Kogan, Y. (2000), A new cloud physics parameterization in a
    large-eddy simulation model of marine stratocumulus, Mon. Wea. Rev. 128, 229-243.

    Examples
    --------
    >>> round(float(khairoutdinov_kogan_autoconversion(5e-4, 50e6)) * 1e9, 2)
    8.62
    """
    qc = np.asarray(cloud_water, dtype=float)
    nc = np.asarray(droplet_number, dtype=float) * 1e-6  # m-3 -> cm-3
    with np.errstate(invalid="ignore", divide="ignore"):
        rate = 1350.0 * np.maximum(qc, 0.0) ** 2.47 * np.where(nc > 0.0, nc, np.nan) ** -1.79
    return np.where(qc > 0.0, rate, np.where(np.isnan(qc) | ~(nc > 0.0), np.nan, 0.0))
