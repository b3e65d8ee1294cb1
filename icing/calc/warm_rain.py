"""The warm-rain process: cloud water turned into drizzle by collision-coalescence.

Bulk rates of the two-moment scheme of Khairoutdinov & Kogan (2000), fitted to
large-eddy simulations of marine stratocumulus with bin microphysics:
autoconversion (droplets colliding into drizzle embryos) and accretion (drizzle
sweeping up droplets), integrated over the time drizzle spends in a layer by
:func:`drizzle_growth`; used by :func:`icing.calc.sld.diagnose_sld` for freezing
drizzle in warm-topped decks. Autoconversion alone, integrated once, needs more
cloud water than a sub-adiabatic deck holds (0.74 g/m3 at 95 droplets per cm3):
accretion is what grows drizzle through a layer.
"""

from __future__ import annotations

import numpy as np

from icing.calc.droplets import terminal_velocity

__all__ = [
    "khairoutdinov_kogan_autoconversion",
    "khairoutdinov_kogan_accretion",
    "drizzle_growth",
    "layer_drizzle",
    "DRIZZLE_EMBRYO_DIAMETER",
]

#: Drop size whose fall speed sets the drizzle residence time: the drizzle embryo of
#: the Khairoutdinov & Kogan (2000) autoconversion, radius 25 um (their scheme's
#: assumed size of new drizzle drops); it falls ~8 cm/s, so embryos stay in a
#: stratiform deck for the residence cap. [m]
DRIZZLE_EMBRYO_DIAMETER = 50e-6


def khairoutdinov_kogan_autoconversion(cloud_water, droplet_number):
    """Autoconversion rate of cloud water to drizzle, Khairoutdinov & Kogan (2000).

    ``dq_r / dt = 1350 q_c^2.47 N_c^-1.79`` (their eq. 29), ``q_c`` in kg/kg and
    ``N_c`` in cm-3 (constants as tabulated by Wood 2005, Table 1: confirmed in
    secondary sources).

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


def khairoutdinov_kogan_accretion(cloud_water, drizzle_water):
    """Accretion rate of cloud water by drizzle, Khairoutdinov & Kogan (2000).

    ``dq_r / dt = 67 (q_c q_r)^1.15`` (the accretion term of their scheme, as
    tabulated by Wood 2005, Table 1; confirmed in secondary sources), mixing
    ratios in kg/kg: drizzle drops
    sweeping up cloud droplets, the collision-coalescence growth that follows the
    first drizzle embryos.

    Parameters
    ----------
    cloud_water, drizzle_water : array_like
        Cloud and drizzle mixing ratios q_c, q_r. [kg kg-1]

    Returns
    -------
    numpy.ndarray
        Drizzle production rate [kg kg-1 s-1]; 0 where either is 0.

    References
    ----------
    Khairoutdinov, M. & Kogan, Y. (2000), Mon. Wea. Rev. 128, 229-243.
    Wood, R. (2005), Drizzle in stratiform boundary layer clouds. Part II:
    Microphysical aspects, J. Atmos. Sci. 62, 3034-3050, Table 1.

    Examples
    --------
    >>> round(float(khairoutdinov_kogan_accretion(4e-4, 1e-5)) * 1e9, 2)
    14.74
    """
    qc = np.maximum(np.asarray(cloud_water, dtype=float), 0.0)
    qr = np.maximum(np.asarray(drizzle_water, dtype=float), 0.0)
    return 67.0 * (qc * qr) ** 1.15  # KK2000 accretion term


def drizzle_growth(cloud_water, droplet_number, residence_time, *, steps=8):
    """Drizzle mixing ratio grown from none over a residence time in cloud.

    Integrates ``dq_r/dt = A(q_c, N_c) + K(q_c, q_r)``, the Khairoutdinov & Kogan
    (2000) autoconversion (:func:`khairoutdinov_kogan_autoconversion`) and
    accretion (:func:`khairoutdinov_kogan_accretion`), with the cloud water held
    at ``q_c`` (a deck whose updrafts replenish what the drizzle takes) and
    ``q_r(0) = 0``, by ``steps`` classical Runge-Kutta steps of equal length
    (vectorised over any shape). The drizzle never exceeds the cloud water it
    grows from (``q_r <= q_c``).

    Parameters
    ----------
    cloud_water : array_like
        Cloud liquid mixing ratio q_c. [kg kg-1]
    droplet_number : array_like
        Cloud droplet number. [m-3]
    residence_time : array_like
        Time the drizzle spends growing in the cloud. [s]
    steps : int, optional
        Runge-Kutta steps (8 keep the result within 1 % of an adaptive solver for
        0.1-1 g/kg, 30-300 cm-3 and up to an hour: far inside the uncertainty of
        the fitted rates).

    Returns
    -------
    numpy.ndarray
        Drizzle mixing ratio after ``residence_time``. [kg kg-1]; NaN where the
        droplet number is not positive.

    Examples
    --------
    >>> q = drizzle_growth(4e-4, 75e6, [0.0, 900.0, 1800.0])
    >>> [round(float(x) * 1e6, 2) for x in q]
    [0.0, 3.77, 18.31]
    """
    qc = np.maximum(np.asarray(cloud_water, dtype=float), 0.0)
    t = np.maximum(np.asarray(residence_time, dtype=float), 0.0)
    auto = khairoutdinov_kogan_autoconversion(qc, droplet_number)
    qc, t, auto = np.broadcast_arrays(qc, t, auto)
    acc_coef = 67.0 * qc**1.15  # accretion = acc_coef q_r^1.15

    def rate(q):
        return auto + acc_coef * np.maximum(q, 0.0) ** 1.15

    dt = t / float(steps)
    q = np.zeros(qc.shape)
    with np.errstate(invalid="ignore", over="ignore"):
        for _ in range(int(steps)):  # time steps, each over every point at once
            k1 = rate(q)
            k2 = rate(q + 0.5 * dt * k1)
            k3 = rate(q + 0.5 * dt * k2)
            k4 = rate(q + dt * k3)
            q = np.minimum(q + dt / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4), qc)
    return np.where(np.isnan(auto), np.nan, q)


def layer_drizzle(
    height,
    air_density,
    cloud,
    lwc,
    droplet_number,
    cloud_top_height,
    pressure,
    temperature,
    *,
    source,
    max_residence_time=3600.0,
):
    """Drizzle grown in each cloud layer, and carried down below it [kg m-3].

    For every source level (a cloud level where the warm-rain process may run:
    ``source``), drizzle grows by :func:`drizzle_growth` over its residence time
    in the layer above the level, ``t = (z_top - z) / v_t``, at most
    ``max_residence_time``, with the fall speed ``v_t`` of a
    ``DRIZZLE_EMBRYO_DIAMETER`` drop (Beard 1976, :func:`icing.calc.droplets.terminal_velocity`;
    about 8 cm/s) and the cloud water the
    drizzle met on its way: the depth-weighted mean of the layer's cloud water
    from the level to its top. Drizzle falls: each level receives the largest
    content grown at or above it (no evaporation below cloud: conservative).

    Parameters
    ----------
    height : array_like, shape (..., level)
        Level heights, ground up (sorted). [m]
    air_density : array_like, shape (..., level)
        [kg m-3]
    cloud : array_like of bool, shape (..., level)
        Cloud mask (its contiguous runs are the layers).
    lwc : array_like, shape (..., level)
        Cloud liquid water content. [kg m-3]
    droplet_number : array_like, shape (..., level)
        Cloud droplet number. [m-3]
    cloud_top_height : array_like, shape (..., level)
        Top of the layer holding each level (NaN outside cloud). [m]
    pressure, temperature : array_like, shape (..., level)
        For the fall speed. [Pa], [K]
    source : array_like of bool, shape (..., level)
        Levels where drizzle may grow.
    max_residence_time : float
        Longest residence time. [s]

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Drizzle content reaching each level [kg m-3] and the content grown at the
        level itself (0 outside ``source``) [kg m-3].

    Examples
    --------
    A 600 m deck holding 0.1 to 0.6 g/m3 of cloud water, 75 droplets per cm3:

    >>> z = np.arange(0.0, 1201.0, 100.0)
    >>> cld = (z >= 400.0) & (z <= 1000.0)
    >>> lwc = np.where(cld, 1e-3 * (0.1 + 0.5 * (z - 400.0) / 600.0), 0.0)
    >>> rho = np.full(z.shape, 1.1)
    >>> top = np.where(cld, 1050.0, np.nan)
    >>> got, _ = layer_drizzle(z, rho, cld, lwc, np.full(z.shape, 75e6), top,
    ...                        np.full(z.shape, 9e4), np.full(z.shape, 268.0), source=cld)
    >>> round(float(got[0]) * 1e3, 3)
    0.517
    """
    z = np.asarray(height, dtype=float)
    rho = np.asarray(air_density, dtype=float)
    cld = np.asarray(cloud, dtype=bool)
    src = np.asarray(source, dtype=bool) & cld
    shape = z.shape
    produced = np.zeros(shape)
    if not src.any():
        return produced, produced
    with np.errstate(invalid="ignore", divide="ignore"):
        qc_mean = np.full(shape, np.nan)
        rows = src.any(axis=-1)  # only columns with a source level (the costly part)
        qc_mean[rows] = _layer_mean_above(
            np.where(cld[rows], np.asarray(lwc, float)[rows] / rho[rows], 0.0), z[rows], cld[rows]
        )
        at = np.nonzero(src)
        v_t = terminal_velocity(
            DRIZZLE_EMBRYO_DIAMETER,
            pressure=np.asarray(pressure, float)[at],
            temperature=np.asarray(temperature, float)[at],
        )
        depth = np.maximum(np.asarray(cloud_top_height, float)[at] - z[at], 0.0)
        t_res = np.minimum(depth / v_t, float(max_residence_time))
        q_r = drizzle_growth(qc_mean[at], np.asarray(droplet_number, float)[at], t_res)
        made = rho[at] * q_r
        produced[at] = np.where(np.isfinite(made), made, 0.0)
    grown = np.maximum.accumulate(produced[..., ::-1], axis=-1)[..., ::-1]  # falls
    return grown, produced


def _layer_mean_above(values, height, cloud):
    """Depth-weighted mean of ``values`` from each level to the top of its cloud layer."""
    z = height
    n = z.shape[-1]
    # level thickness: half-way to each neighbour (one-sided at the column's ends)
    zf = np.where(np.isfinite(z), z, np.nan)
    mid = 0.5 * (zf[..., 1:] + zf[..., :-1])
    lower = np.concatenate([zf[..., :1], mid], axis=-1)
    upper = np.concatenate([mid, zf[..., -1:]], axis=-1)
    dz = np.nan_to_num(np.maximum(upper - lower, 0.0))
    w = np.where(cloud, dz, 0.0)
    x = np.where(cloud, np.nan_to_num(values) * dz, 0.0)
    # reverse cumulative sums, restarted at the top of every layer
    csum_x = np.cumsum(x[..., ::-1], axis=-1)[..., ::-1]
    csum_w = np.cumsum(w[..., ::-1], axis=-1)[..., ::-1]
    idx = np.broadcast_to(np.arange(n), z.shape)
    nxt = np.concatenate([cloud[..., 1:], np.zeros(cloud.shape[:-1] + (1,), bool)], axis=-1)
    end = cloud & ~nxt
    top = np.minimum.accumulate(np.where(end, idx, n - 1)[..., ::-1], axis=-1)[..., ::-1]
    above = np.minimum(top + 1, n - 1)
    past = (top + 1) < n  # the layer ends below the column top
    sub_x = np.where(past, np.take_along_axis(csum_x, above, -1), 0.0)
    sub_w = np.where(past, np.take_along_axis(csum_w, above, -1), 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(cloud, (csum_x - sub_x) / (csum_w - sub_w), np.nan)
