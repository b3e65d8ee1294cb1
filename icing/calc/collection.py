"""Collision efficiency of cloud and drizzle drops onto airframe collectors.

Every collector is treated as a circular cylinder across the flow: a wire,
strut or arm as itself, an airfoil leading edge or a rotor-blade section as
the cylinder of equal leading-edge curvature (see :mod:`icing.airframes`).
Two efficiencies are computed and never confused:

* the total collection efficiency ``E``: the mass caught per unit span is
  ``E * LWC * V * D`` (what the collector gathers as a whole);
* the stagnation-line efficiency ``beta0``: the local catch at the leading
  edge, which sets the heat balance there and the local ice thickness.

Both are averaged by mass over the droplet spectrum (:func:`spectrum_collection`),
not evaluated at the median volume diameter alone.

Dimensionless groups (Langmuir & Blodgett 1946), ``d`` drop diameter, ``D``
cylinder diameter, ``U`` airspeed, ``mu`` air viscosity, ``rho_a`` air
density, ``rho_w`` water density:

* inertia parameter ``K = rho_w d^2 U / (9 mu D)``
* drop Reynolds number ``Re = rho_a U d / mu``
* range parameter ``phi = Re^2 / K = 9 rho_a^2 U D / (mu rho_w)``

References
----------
.. [LB46] Langmuir, I. & Blodgett, K. B. (1946), A mathematical investigation of
   water droplet trajectories, AAF Tech. Rep. 5418.
.. [FLG88] Finstad, K. J., Lozowski, E. P. & Gates, E. M. (1988), A computational
   investigation of water droplet trajectories, J. Atmos. Oceanic Technol. 5, 160-170.
.. [FLM88] Finstad, K. J., Lozowski, E. P. & Makkonen, L. (1988), On the median
   volume diameter approximation for droplet collision efficiency, J. Atmos. Sci.
   45, 4008-4012.
"""

from __future__ import annotations

import functools

import numpy as np

from icing.calc._compiled import compiled_loops
from icing.calc.thermo import air_density, air_viscosity
from icing.constants import RHO_WATER

__all__ = [
    "K_CRITICAL",
    "FINSTAD_PHI_RANGE",
    "COLLISION_MODELS",
    "inertia_parameter",
    "range_parameter",
    "modified_inertia_parameter",
    "collision_efficiency_langmuir46",
    "collision_efficiency_finstad88",
    "stagnation_efficiency_langmuir46",
    "cylinder_collision_efficiency",
    "stagnation_efficiency",
    "spectrum_quadrature",
    "TABLE_LOG_K",
    "TABLE_LOG_PHI",
    "collection_table",
    "spectrum_collection",
    "sld_collection",
    "finstad_out_of_range",
]

#: Critical inertia parameter in potential flow: no drop reaches the cylinder
#: below it (Langmuir & Blodgett 1946).
K_CRITICAL = 0.125

#: Range of the range parameter phi over which the Finstad et al. (1988) fit was
#: made (lower bound as published; upper bound from memory).
FINSTAD_PHI_RANGE = (100.0, 1.0e4)

_PI_2 = 0.5 * np.pi
# Langmuir-Blodgett E branches meet at K0 = 1.1; the quadratic-log branch is
# slightly higher there (0.4157 vs 0.4118), so the hyperbolic branch is held at
# least at that value to keep E non-decreasing.
_LB_K0_SWITCH = 1.1
_LB_E_SWITCH = 0.466 * np.log10(8.0 * _LB_K0_SWITCH) ** 2


def inertia_parameter(droplet_diameter, cylinder_diameter, airspeed, viscosity):
    """Inertia parameter ``K = rho_w d^2 U / (9 mu D)`` (Langmuir & Blodgett 1946).

    Parameters
    ----------
    droplet_diameter : array_like
        Drop diameter ``d``. [m]
    cylinder_diameter : array_like
        Cylinder diameter ``D``. [m]
    airspeed : array_like
        Free-stream speed relative to the cylinder ``U``. [m/s]
    viscosity : array_like
        Dynamic viscosity of air ``mu``. [Pa s]

    Returns
    -------
    numpy.ndarray
        ``K`` (Stokes number based on the cylinder diameter). [1]

    Examples
    --------
    >>> round(float(inertia_parameter(20e-6, 0.05, 100.0, 1.7e-5)), 3)
    5.229
    """
    d = np.asarray(droplet_diameter, dtype=float)
    return (
        RHO_WATER
        * d
        * d
        * np.asarray(airspeed, dtype=float)
        / (9.0 * np.asarray(viscosity, dtype=float) * np.asarray(cylinder_diameter, dtype=float))
    )


def range_parameter(cylinder_diameter, airspeed, air_density_, viscosity):
    """Langmuir range parameter ``phi = Re^2/K = 9 rho_a^2 U D / (mu rho_w)`` [1].

    Examples
    --------
    >>> round(float(range_parameter(0.05, 100.0, 1.0, 1.7e-5)), 1)
    2647.1
    """
    rho = np.asarray(air_density_, dtype=float)
    return (
        9.0
        * rho
        * rho
        * np.asarray(airspeed, dtype=float)
        * np.asarray(cylinder_diameter, dtype=float)
        / (np.asarray(viscosity, dtype=float) * RHO_WATER)
    )


def modified_inertia_parameter(k, phi):
    """Langmuir & Blodgett's modified inertia parameter ``K0``.

    ``K0 = 1/8 + (lambda/lambda_s) (K - 1/8)`` with the drop-range ratio
    ``lambda/lambda_s = 1 / (0.8388 + 0.001483 Re + 0.1847 Re^0.5)``, clamped to
    at most 1 (its Stokes limit), and ``Re = sqrt(phi K)``.

    Parameters
    ----------
    k : array_like
        Inertia parameter ``K``. [1]
    phi : array_like
        Range parameter. [1]

    Returns
    -------
    numpy.ndarray
        ``K0``; below ``K = 1/8`` it equals ``K`` (no impingement either way). [1]

    References
    ----------
    [LB46]_; the form as quoted in docs/references.md (from memory, definitions
    checked by derivation).

    Examples
    --------
    >>> round(float(modified_inertia_parameter(1.0, 0.0)), 3)
    1.0
    """
    k = np.asarray(k, dtype=float)
    re = np.sqrt(np.maximum(np.asarray(phi, dtype=float) * k, 0.0))
    ratio = np.minimum(1.0 / (0.8388 + 0.001483 * re + 0.1847 * np.sqrt(re)), 1.0)
    return np.where(k > K_CRITICAL, K_CRITICAL + ratio * (k - K_CRITICAL), k)


def collision_efficiency_langmuir46(k, phi):
    """Total collision efficiency of a cylinder, Langmuir & Blodgett (1946) fit.

    ``E = 0.466 (log10 8 K0)^2`` for ``1/8 < K0 <= 1.1`` and
    ``E = K0 / (K0 + pi/2)`` above, with the modified inertia parameter ``K0``
    (:func:`modified_inertia_parameter`); ``E = 0`` for ``K0 <= 1/8``. Above
    ``K0 = 1.1`` the value is held at least at the lower branch's end (0.4157) so
    that ``E`` never decreases with ``K`` (the two branches differ by 0.004 there).

    Parameters
    ----------
    k, phi : array_like
        Inertia and range parameters. [1]

    Returns
    -------
    numpy.ndarray
        ``E`` in [0, 1). [1]

    References
    ----------
    [LB46]_ (fit quoted from memory in docs/references.md).

    Examples
    --------
    >>> round(float(collision_efficiency_langmuir46(1.0, 0.0)), 4)
    0.3801
    """
    k0 = modified_inertia_parameter(k, phi)
    with np.errstate(divide="ignore", invalid="ignore"):
        low = 0.466 * np.log10(8.0 * np.maximum(k0, K_CRITICAL)) ** 2  # LB46, K0 <= 1.1
        high = np.maximum(k0 / (k0 + _PI_2), _LB_E_SWITCH)  # LB46, K0 > 1.1
    e = np.where(k0 <= K_CRITICAL, 0.0, np.where(k0 <= _LB_K0_SWITCH, low, high))
    return np.where(np.isnan(k0), np.nan, np.clip(e, 0.0, 1.0))


def stagnation_efficiency_langmuir46(k, phi):
    """Stagnation-line collection efficiency ``beta0`` of a cylinder (Langmuir-Blodgett).

    ``beta0 = 1.40 (K0 - 1/8)^0.84 / (1 + 1.40 (K0 - 1/8)^0.84)``, zero for
    ``K0 <= 1/8``.

    Parameters
    ----------
    k, phi : array_like
        Inertia and range parameters. [1]

    Returns
    -------
    numpy.ndarray
        ``beta0`` in [0, 1). [1]

    References
    ----------
    [LB46]_ (fit quoted from memory in docs/references.md).

    Examples
    --------
    >>> round(float(stagnation_efficiency_langmuir46(1.0, 0.0)), 4)
    0.5558
    """
    k0 = modified_inertia_parameter(k, phi)
    x = 1.40 * np.maximum(k0 - K_CRITICAL, 0.0) ** 0.84
    return x / (1.0 + x)


def _finstad_raw(k, phi):
    """Evaluate the Finstad et al. (1988) fit as published, no range handling."""
    lnk = np.log(k)
    a = 1.066 * np.exp(-0.00616 * lnk - 1.103 * np.exp(-0.688 * lnk))  # A(K)
    b = 3.641 * np.exp(-0.498 * lnk - 1.497 * np.exp(-0.694 * lnk))  # B(K)
    c = 0.00637 * np.maximum(phi - 100.0, 0.0) ** 0.381  # C(phi)
    return a - 0.028 - c * (b - 0.0454)  # E = A - 0.028 - C (B - 0.0454)


@functools.lru_cache(maxsize=1)
def _finstad_peak_table():
    """Inertia parameter at which the Finstad fit peaks, tabulated against log10 phi.

    The fit turns down slowly above K ~ 1e3 (an artefact of the fit, not of the
    physics: E approaches 1 as K grows). E is held at its peak beyond it.
    """
    log_phi = np.linspace(np.log10(FINSTAD_PHI_RANGE[0]), np.log10(FINSTAD_PHI_RANGE[1]), 81)
    log_k = np.linspace(1.0, 7.0, 3001)
    e = _finstad_raw(10.0 ** log_k[None, :], 10.0 ** log_phi[:, None])
    # 10 % short of the tabulated peak: the fit is flat there (E changes by < 1e-6)
    # and interpolating between rows can then never step past the true peak
    log_kpeak = log_k[np.argmax(e, axis=1)] + np.log10(0.9)
    # the peak value, held non-increasing in phi (it wanders by 1e-5 near 1e4), so
    # that E on the plateau never grows with the collector size
    e_peak = np.minimum.accumulate(_finstad_raw(10.0**log_kpeak, 10.0**log_phi))
    return log_phi, log_kpeak, e_peak


@functools.lru_cache(maxsize=1)
def _finstad_peak_value():
    """Largest value the Finstad fit takes at phi = 100 as used here (0.984)."""
    return float(collision_efficiency_finstad88(1.0e7, 100.0))


def collision_efficiency_finstad88(k, phi):
    """Total collision efficiency of a cylinder, Finstad, Lozowski & Gates (1988).

    ``E = A - 0.028 - C (B - 0.0454)`` with
    ``A = 1.066 K^-0.00616 exp(-1.103 K^-0.688)``,
    ``B = 3.641 K^-0.498 exp(-1.497 K^-0.694)``,
    ``C = 0.00637 (phi - 100)^0.381``.

    Range handling (ours, stated):

    * ``K <= 1/8``: ``E = 0`` (no impingement in potential flow, [LB46]_); the fit
      itself is ~0 below ``K ~ 0.17`` and is clipped at 0.
    * ``phi < 100`` (small, slow sections: propellers of small drones): outside the
      fit. E falls with phi, so the fit evaluated at phi = 100 would *under*-state
      the catch there; we take the larger of the fit at phi = 100 and the
      Langmuir-Blodgett modified-inertia value at the actual phi (whose Stokes
      limit covers small phi), the latter held below the Finstad fit's peak
      (0.984) so that the two meet at phi = 100. Flagged by
      :func:`finstad_out_of_range`.
    * ``phi > 1e4`` (large bodies at speed; upper bound from memory): evaluated at
      phi = 1e4, which over-states E slightly (conservative). Flagged.
    * Large ``K``: the fit peaks near ``K ~ 1e3`` and then turns down; E is held
      at the fit's peak for the given phi so it never decreases with ``K``.
    * Always clipped to [0, 1].

    Parameters
    ----------
    k, phi : array_like
        Inertia and range parameters. [1]

    Returns
    -------
    numpy.ndarray
        ``E`` in [0, 1]. [1]

    References
    ----------
    [FLG88]_ (fit as quoted from memory in docs/references.md; also used by ISO 12494
    and Makkonen 2000).

    Examples
    --------
    >>> round(float(collision_efficiency_finstad88(1.0, 100.0)), 4)
    0.3258
    """
    k = np.asarray(k, dtype=float)
    phi = np.asarray(phi, dtype=float)
    phi_c = np.clip(phi, *FINSTAD_PHI_RANGE)
    log_phi, log_kpeak, e_peak = _finstad_peak_table()
    lp = np.log10(phi_c)
    k_peak = 10.0 ** np.interp(lp, log_phi, log_kpeak)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        kc = np.clip(k, K_CRITICAL, k_peak)
        e = np.minimum(_finstad_raw(kc, phi_c), np.interp(lp, log_phi, e_peak))
    e = np.where(k <= K_CRITICAL, 0.0, np.clip(e, 0.0, 1.0))
    low_phi = phi < FINSTAD_PHI_RANGE[0]
    if np.any(low_phi):
        # Langmuir-Blodgett held below the Finstad fit's own peak at phi = 100, so
        # the two meet at phi = 100 (exactly for 0.3 < K < 100; within 0.0075 near
        # K = 0.18, where the fits disagree on the onset of impingement, and for
        # K ~ 200-1000, where Langmuir-Blodgett nears 1 first) and E stays
        # non-decreasing in K
        e_lb = np.minimum(collision_efficiency_langmuir46(k, phi), _finstad_peak_value())
        e = np.where(low_phi, np.maximum(e, e_lb), e)
    return np.where(np.isnan(k) | np.isnan(phi), np.nan, e)


def finstad_out_of_range(k, phi):
    """Return True where the Finstad et al. (1988) fit is used outside its range.

    Outside: ``phi`` below 100 or above 1e4, or ``K`` above ~1000 (where the fit
    is held at its peak). [bool]

    Examples
    --------
    >>> finstad_out_of_range(5.0, 50.0).item()
    True
    """
    k = np.asarray(k, dtype=float)
    phi = np.asarray(phi, dtype=float)
    return (phi < FINSTAD_PHI_RANGE[0]) | (phi > FINSTAD_PHI_RANGE[1]) | (k > 1.0e3)


#: Collision-efficiency models, by name (the ``model=`` keyword).
COLLISION_MODELS = {
    "finstad88": collision_efficiency_finstad88,
    "langmuir46": collision_efficiency_langmuir46,
}


def _model(model):
    try:
        return COLLISION_MODELS[model]
    except (KeyError, TypeError):
        raise ValueError(
            f"unknown collision-efficiency model {model!r}; "
            f"expected one of {', '.join(sorted(COLLISION_MODELS))}"
        ) from None


def _groups(droplet_diameter, cylinder_diameter, airspeed, pressure, temperature):
    mu = air_viscosity(temperature)
    rho = air_density(pressure, temperature)
    k = inertia_parameter(droplet_diameter, cylinder_diameter, airspeed, mu)
    phi = range_parameter(cylinder_diameter, airspeed, rho, mu)
    return k, phi


def cylinder_collision_efficiency(
    droplet_diameter, cylinder_diameter, airspeed, *, pressure, temperature, model="finstad88"
):
    """Total collision efficiency ``E`` of a cylinder for drops of one size.

    Parameters
    ----------
    droplet_diameter : array_like
        Drop diameter. [m]
    cylinder_diameter : array_like
        Cylinder (or equivalent-cylinder) diameter. [m]
    airspeed : array_like
        Speed of the air relative to the cylinder. [m/s]
    pressure : array_like
        Air pressure. [Pa]
    temperature : array_like
        Air temperature. [K]
    model : {"finstad88", "langmuir46"}
        The fit (:data:`COLLISION_MODELS`).

    Returns
    -------
    numpy.ndarray
        ``E`` in [0, 1], broadcast over the inputs; NaN where an input is NaN.
        Zero below the critical inertia parameter ``K = 1/8``.

    Raises
    ------
    ValueError
        An unknown ``model`` (the message lists the valid names).

    Notes
    -----
    ``K`` and ``phi`` as in the module docstring; the range handling of each fit
    is given in :func:`collision_efficiency_finstad88` and
    :func:`collision_efficiency_langmuir46`.

    Examples
    --------
    >>> e = cylinder_collision_efficiency(20e-6, 0.05, 100.0, pressure=70000.0,
    ...                                   temperature=263.15)
    >>> 0.5 < float(e) < 0.8
    True
    """
    fn = _model(model)
    k, phi = _groups(droplet_diameter, cylinder_diameter, airspeed, pressure, temperature)
    return fn(k, phi)


def stagnation_efficiency(
    droplet_diameter, cylinder_diameter, airspeed, *, pressure, temperature, model="finstad88"
):
    """Stagnation-line efficiency ``beta0`` of a cylinder for drops of one size.

    The Langmuir-Blodgett ``beta0`` fit with the modified inertia parameter
    (:func:`stagnation_efficiency_langmuir46`) serves both models: we do not
    carry Finstad et al.'s own ``beta0`` fit (not known to us reliably). Since
    the stagnation line is where a cylinder catches best, ``beta0 >= E``; the
    result is held at least at the chosen model's ``E``.

    Parameters
    ----------
    droplet_diameter, cylinder_diameter, airspeed, pressure, temperature, model
        As :func:`cylinder_collision_efficiency`.

    Returns
    -------
    numpy.ndarray
        ``beta0`` in [0, 1]. [1]

    Examples
    --------
    >>> b = stagnation_efficiency(20e-6, 0.05, 100.0, pressure=70000.0, temperature=263.15)
    >>> 0.6 < float(b) < 0.9
    True
    """
    fn = _model(model)
    k, phi = _groups(droplet_diameter, cylinder_diameter, airspeed, pressure, temperature)
    return np.maximum(stagnation_efficiency_langmuir46(k, phi), fn(k, phi))


def spectrum_quadrature(shape=2.0, n_bins=7):
    """Diameter ratios to the MVD and mass fractions for integrating over a spectrum.

    The project's one spectrum definition, :func:`icing.droplets.spectrum_bins`, at
    MVD = 1: equal-mass quantile midpoints of the gamma spectrum
    ``n(D) ~ D^mu exp(-Lambda D)`` by mass (not Gauss quadrature, which rings at the
    collision cut-off).

    Parameters
    ----------
    shape : float
        Gamma shape ``mu``. [1]
    n_bins : int
        Number of bins.

    Returns
    -------
    ratios, fractions : numpy.ndarray (n_bins,)
        Diameter over MVD, and mass fractions summing to 1.

    Examples
    --------
    >>> r, f = spectrum_quadrature(2.0, 7)
    >>> round(float(f.sum()), 12)
    1.0
    """
    return _spectrum_quadrature_cached(float(shape), int(n_bins))


@functools.lru_cache(maxsize=64)
def _spectrum_quadrature_cached(shape, n_bins):
    from icing.calc.droplets import spectrum_bins

    ratios, fractions = spectrum_bins(1.0, shape=shape, n_bins=n_bins)
    return np.asarray(ratios, float).reshape(-1), np.asarray(fractions, float).reshape(-1)


def _ratios_per_point(shape, n_bins, n):
    """Ratios and fractions shaped (n, n_bins), or (n_bins,) for one shape."""
    shape = np.asarray(shape, dtype=float)
    if shape.ndim == 0 or np.all(shape == shape.flat[0]):
        s = float(shape.flat[0]) if shape.size else 2.0
        if not np.isfinite(s):
            s = 2.0
        return spectrum_quadrature(s, n_bins)
    shape = np.broadcast_to(shape, (n,))
    ok = np.isfinite(shape)
    uniq, inv = np.unique(np.where(ok, shape, 2.0), return_inverse=True)
    tables = [spectrum_quadrature(float(u), n_bins) for u in uniq]
    r = np.stack([t[0] for t in tables])[inv]
    f = np.stack([t[1] for t in tables])[inv]
    return r, f


def _spectrum_kernel(k_mvd, phi, ratios, fractions, model_fn):
    """Mass-averaged (E, beta0) for inertia parameters ``k_mvd`` (n,) and ``phi`` (n,)."""
    k = k_mvd[:, None] * ratios**2  # K scales as d^2
    ph = phi[:, None]
    e = model_fn(k, ph)
    b = np.maximum(stagnation_efficiency_langmuir46(k, ph), e)
    return (e * fractions).sum(axis=-1), (b * fractions).sum(axis=-1)


#: Grid of :func:`collection_table`: (first, last, step) of log10 K at the MVD.
TABLE_LOG_K = (-3.0, 6.0, 0.01)
#: Nodes of log10 phi: every 0.05 decade from 0.1 to 1e7, plus nodes crowding
#: geometrically onto phi = 100 from both sides: above it Finstad's
#: C = 0.00637 (phi - 100)^0.381 has an infinite slope, below it the low-phi
#: rule takes over. Together they keep the bilinear interpolation within 1e-3
#: of the direct sum (checked in the tests).
_CROWD = 2.0e-5 * 2.0 ** np.arange(12)
TABLE_LOG_PHI = np.union1d(
    np.round(-1.0 + 0.05 * np.arange(161), 10), np.concatenate([2.0 - _CROWD, 2.0 + _CROWD])
)
TABLE_LOG_PHI.setflags(write=False)


@functools.lru_cache(maxsize=32)
def collection_table(model="finstad88", shape=2.0, n_bins=7):
    """Spectrum-averaged ``(E, beta0)`` tabulated on log10 K(MVD) x log10 phi.

    For a fixed spectrum shape the averages depend on the inertia parameter at
    the MVD and on the range parameter only (``K_i = K_mvd (d_i/MVD)^2``), so one
    table serves every collector and air state. Built once per (model, shape,
    n_bins) by the direct sum (:func:`spectrum_collection` with
    ``method="direct"``); read by bilinear interpolation. Outside the grid the
    edge values are used: below ``K = 1e-3`` no bin reaches ``K = 1/8`` (``E = 0``
    exactly), above ``K = 1e6`` ``E`` is at the fit's peak; ``phi`` is held in
    [0.1, 1e7] (below 0.1 the Stokes limit holds, within 1e-3).

    Returns
    -------
    numpy.ndarray (n_k, n_phi, 2)
        ``E`` and ``beta0`` on the grid of :data:`TABLE_LOG_K` x :data:`TABLE_LOG_PHI`.

    Examples
    --------
    >>> collection_table("finstad88", 2.0, 7).shape
    (901, 185, 2)
    """
    fn = _model(model)
    cached = _cached_table(model, shape, n_bins)
    if cached is not None:
        return cached
    lk = _grid(TABLE_LOG_K)
    lp = TABLE_LOG_PHI
    k = np.repeat(10.0**lk, lp.size)
    phi = np.tile(10.0**lp, lk.size)
    ratios, fractions = spectrum_quadrature(shape, n_bins)
    with np.errstate(invalid="ignore", divide="ignore"):
        e, b = _spectrum_kernel(k, phi, ratios, fractions, fn)
    table = np.stack([e, b], axis=-1).reshape(lk.size, lp.size, 2)
    _store_table(table, model, shape, n_bins)
    table.setflags(write=False)
    return table


def _table_path(model, shape, n_bins):
    """Return where a built table is kept between runs (None: no cache folder).

    The name carries a digest of the code that builds the table (this module and the
    droplet spectra) and of its grid, so a change of either builds it afresh.
    The folder is :func:`icing.cachedir.cache_folder` (``ICING_CACHE_DIR``; empty: no
    cache).
    """
    import hashlib
    from pathlib import Path

    from icing.cachedir import cache_folder

    folder = cache_folder()
    if folder is None:
        return None
    here = Path(__file__).resolve().parent
    h = hashlib.sha256()
    for name in ("collection.py", "droplets.py"):
        h.update((here / name).read_bytes())
    h.update(repr((TABLE_LOG_K, TABLE_LOG_PHI.tolist(), model, float(shape), n_bins)).encode())
    return folder / f"collection-table-{h.hexdigest()[:24]}.npy"


def _cached_table(model, shape, n_bins):
    """Return the table built by an earlier run (read-only), or None."""
    try:
        path = _table_path(model, shape, n_bins)
        if path is None or not path.is_file():
            return None
        table = np.load(path, allow_pickle=False)
    except (OSError, ValueError):
        return None
    if table.shape != (_grid(TABLE_LOG_K).size, TABLE_LOG_PHI.size, 2):
        return None
    table.setflags(write=False)
    return table


def _store_table(table, model, shape, n_bins):
    """Keep a built table for later runs (written whole, then renamed; errors ignored).

    Building it takes about a quarter of a second, several times a route's
    screening; reading it back a few milliseconds.
    """
    import os
    import uuid

    try:
        path = _table_path(model, shape, n_bins)
        if path is None:
            return
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_name(f".{path.name}.{os.getpid()}.{uuid.uuid4().hex[:8]}.npy")
        try:
            np.save(tmp, table, allow_pickle=False)
            os.replace(tmp, path)
        finally:
            tmp.unlink(missing_ok=True)
    except OSError:
        pass  # a read-only home: build the table again next time


def _grid(spec):
    first, last, step = spec
    return first + step * np.arange(int(round((last - first) / step)) + 1)


def _table_lookup(table, log_k, log_phi, compiled=False):
    """Bilinear interpolation of ``table`` at (log10 K, log10 phi), both (n,).

    ``compiled``: as one compiled pass where numba is installed
    (:mod:`icing.calc._collection_loops`, the same values to the bit).
    """
    nk, nphi = table.shape[:2]
    loops = compiled_loops("icing.calc._collection_loops") if compiled else None
    if loops is not None:
        h, cell = _phi_cell_index()
        e, b = np.empty(log_k.shape), np.empty(log_k.shape)
        loops.table_lookup(
            *_planes(table),
            nphi,
            float(TABLE_LOG_K[0]),
            1.0 / TABLE_LOG_K[2],
            nk - 1.000001,
            np.ascontiguousarray(log_k, dtype=float),
            np.ascontiguousarray(log_phi, dtype=float),
            TABLE_LOG_PHI,
            1.0 / h,
            cell,
            e,
            b,
        )
        return e, b
    x = (log_k - TABLE_LOG_K[0]) * (1.0 / TABLE_LOG_K[2])
    np.clip(x, 0.0, nk - 1.000001, out=x)
    i = x.astype(np.intp)
    fx = x - i
    nodes = TABLE_LOG_PHI
    y = np.clip(log_phi, nodes[0], nodes[-1])
    j = _phi_cell(y)
    fy = (y - nodes[j]) / (nodes[j + 1] - nodes[j])
    idx = i * nphi + j
    out = []
    for plane in _planes(table):
        v00 = plane.take(idx)
        v01 = plane.take(idx + 1)
        v10 = plane.take(idx + nphi)
        v11 = plane.take(idx + (nphi + 1))
        top = v00 + fy * (v01 - v00)
        out.append(top + fx * (v10 + fy * (v11 - v10) - top))
    return out[0], out[1]


@functools.lru_cache(maxsize=1)
def _phi_cell_index():
    """Cell lookup on a uniform grid finer than the smallest node spacing."""
    nodes = TABLE_LOG_PHI
    h = 0.5 * np.diff(nodes).min()
    edges = nodes[0] + h * np.arange(int(np.ceil((nodes[-1] - nodes[0]) / h)) + 2)
    cell = np.clip(np.searchsorted(nodes, edges, side="right") - 1, 0, nodes.size - 2)
    return h, cell.astype(np.intp)


def _phi_cell(y):
    """Index j of the phi cell holding y (nodes[j] <= y < nodes[j+1]), in O(1)."""
    nodes = TABLE_LOG_PHI
    h, cell = _phi_cell_index()
    j = cell.take(((y - nodes[0]) * (1.0 / h)).astype(np.intp))
    # a fine cell holds at most one node: one step corrects the index
    j += (y >= nodes.take(np.minimum(j + 1, nodes.size - 1))) & (j < nodes.size - 2)
    return j


_PLANES: dict = {}


def _planes(table):
    """Contiguous flat E and beta0 planes of a (cached) table."""
    key = id(table)
    if key not in _PLANES:
        _PLANES[key] = (
            table,
            np.ascontiguousarray(table[..., 0]).ravel(),
            np.ascontiguousarray(table[..., 1]).ravel(),
        )
    return _PLANES[key][1:]


_MAX_TABLES = 8


def _spectrum_fast(log_k, log_phi, shape, n_bins, model, compiled=False):
    """Table-interpolated (E, beta0), per-point shapes grouped by unique value."""
    shape = np.asarray(shape, dtype=float)
    if shape.ndim == 0 or shape.size == 1:
        table = collection_table(model, float(shape.flat[0]), n_bins)
        return _table_lookup(table, log_k, log_phi, compiled)
    shape = np.broadcast_to(shape, log_k.shape)
    if shape.size == 0:
        return np.empty_like(log_k), np.empty_like(log_k)
    first = float(shape.flat[0])
    if np.all(shape == first):  # one air mass (the usual case): no sort
        return _table_lookup(collection_table(model, first, n_bins), log_k, log_phi, compiled)
    uniq, inv = np.unique(shape, return_inverse=True)
    if uniq.size > _MAX_TABLES:  # a continuum of shapes: the direct sum, not many tables
        ratios, fractions = _ratios_per_point(shape, n_bins, log_k.size)
        return _spectrum_kernel(10.0**log_k, 10.0**log_phi, ratios, fractions, _model(model))
    e = np.empty_like(log_k)
    b = np.empty_like(log_k)
    for u_i, u in enumerate(uniq):  # a handful of air-mass shapes, not points
        sel = inv == u_i
        e[sel], b[sel] = _table_lookup(
            collection_table(model, float(u), n_bins), log_k[sel], log_phi[sel], compiled
        )
    return e, b


def spectrum_collection(
    mvd,
    cylinder_diameter,
    airspeed,
    *,
    pressure,
    temperature,
    shape=2.0,
    model="finstad88",
    n_bins=7,
    method="direct",
):
    """Total and stagnation-line efficiency averaged by mass over a drop spectrum.

    ``E = sum_i f_i E(d_i)`` and ``beta0 = sum_i f_i beta0(d_i)`` over the bins of
    the gamma spectrum of median volume diameter ``mvd`` (mass fractions ``f_i``;
    :func:`spectrum_quadrature`). Finstad, Lozowski & Makkonen (1988) show the MVD
    alone errs by ~0.02 in ``E``; near the critical ``K`` it errs much more (the
    large drops of the spectrum still hit), which the integration captures.

    Parameters
    ----------
    mvd : array_like
        Median volume diameter of the population. [m]
    cylinder_diameter : array_like
        Cylinder (equivalent) diameter. [m]
    airspeed : array_like
        Speed relative to the cylinder. [m/s]
    pressure, temperature : array_like
        Air pressure [Pa] and temperature [K].
    shape : float or array_like
        Gamma shape ``mu`` of ``n(D) ~ D^mu exp(-Lambda D)``. [1]
    model : {"finstad88", "langmuir46"}
        Collision-efficiency fit.
    n_bins : int
        Quadrature nodes.
    method : {"direct", "table"}
        Sum over the bins at every point, or interpolate the precomputed
        :func:`collection_table` (within 1e-3; about ten times faster).

    Returns
    -------
    E, beta0 : numpy.ndarray
        Broadcast shape of the inputs; NaN where an input is NaN; 0 where ``mvd``
        is 0.

    Examples
    --------
    >>> e, b = spectrum_collection(20e-6, 0.05, 100.0, pressure=70000.0,
    ...                            temperature=263.15)
    >>> bool(0.0 < e < b < 1.0)
    True
    """
    fn = _model(model)
    if method not in ("direct", "table"):
        raise ValueError(f"unknown method {method!r}; expected one of direct, table")
    arrays = np.broadcast_arrays(
        *(
            np.asarray(a, dtype=float)
            for a in (mvd, cylinder_diameter, airspeed, pressure, temperature, shape)
        )
    )
    out_shape = arrays[0].shape
    m, dc, u, p, t, mu_shape = (a.reshape(-1) for a in arrays)
    mu = air_viscosity(t)
    rho = air_density(p, t)
    k_mvd = inertia_parameter(m, dc, u, mu)
    phi = range_parameter(dc, u, rho, mu)
    bad = np.isnan(k_mvd) | np.isnan(phi) | np.isnan(mu_shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        if method == "table":
            e, b = _spectrum_fast(
                np.log10(np.where(bad, 1.0, k_mvd)),
                np.log10(np.where(bad, 1.0, phi)),
                np.where(bad, 2.0, mu_shape),
                n_bins,
                model,
            )
        else:
            ratios, fractions = _ratios_per_point(np.where(bad, 2.0, mu_shape), n_bins, m.size)
            e, b = _spectrum_kernel(k_mvd, phi, ratios, fractions, fn)
    e = np.where(bad, np.nan, np.where(m > 0.0, e, 0.0))
    b = np.where(bad, np.nan, np.where(m > 0.0, b, 0.0))
    return e.reshape(out_shape), b.reshape(out_shape)


def sld_collection(
    sld_mvd,
    cylinder_diameter,
    airspeed,
    *,
    pressure,
    temperature,
    model="finstad88",
    n_bins=7,
    method="direct",
):
    """Collect the drizzle or rain population (supercooled large drops).

    The same integration as :func:`spectrum_collection` over an exponential
    (Marshall-Palmer-like, ``mu = 0``) spectrum of the given MVD. Millimetre drops
    have ``K`` in the hundreds to thousands on airframe sections: ``E`` and
    ``beta0`` near 1. NaN ``sld_mvd`` (no SLD) gives 0.

    Returns
    -------
    E, beta0 : numpy.ndarray

    Examples
    --------
    >>> e, b = sld_collection(1e-3, 0.05, 60.0, pressure=90000.0, temperature=270.15)
    >>> bool(e > 0.95)
    True
    """
    m = np.asarray(sld_mvd, dtype=float)
    e, b = spectrum_collection(
        np.where(np.isnan(m), 0.0, m),
        cylinder_diameter,
        airspeed,
        pressure=pressure,
        temperature=temperature,
        shape=0.0,
        model=model,
        n_bins=n_bins,
        method=method,
    )
    none = np.isnan(m) | (m <= 0.0)
    return np.where(none, 0.0, e), np.where(none, 0.0, b)
