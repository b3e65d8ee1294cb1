"""Compiled column physics (numba): imported only by :mod:`icing.calc._column_compiled`.

One loop over the columns and their levels runs the column diagnosis of
:func:`icing.calc.column.diagnose_columns` up to the SLD step, transcribing the numpy
functions that remain the documented reference (each helper names the one it
transcribes): humidity and validity (``column._humidity``, ``column._validity``), the
hypsometric heights (:func:`icing.calc.thermo.height_from_pressure_hypsometric`, Wallace &
Hobbs 2006 eq. 3.29), the ground, model liquid, the cloud mask and its one-level gaps
(:func:`icing.calc.clouds.cloud_mask`, :func:`icing.calc.clouds.bridge_single_level_gaps`),
the layers (:func:`icing.calc.clouds.cloud_layers`), the condensation base (Bolton 1980
eq. 22), the adiabatic liquid on the pseudo-adiabat (Bakhshaii & Stull 2013 as MetPy's
``moist_lapse``, fourth-order Runge-Kutta in ln p) thinned by the sub-adiabatic factor
(Braun et al. 2018, Warner 1955), Twomey (1959) activation and the gamma spectrum's MVD,
the glaciation likelihood (Meyers et al. 1992 ice nuclei, Rogers & Yau 1989 eq. 9.4
growth, the Korolev & Mazin 2003 balance), model glaciation and the freezing level.

The comparisons and IEEE operations are those of numpy in the same order (no
fast-math, no contraction into fused multiply-adds). The saturation vapour pressures
over the whole block and ``ln p`` come from numpy (one vectorised pass each), so the
humidities and the cloud mask are numpy's to the bit; the transcendentals evaluated
here (``exp``, ``log``, ``pow``: the moist adiabat, the condensation level, Twomey,
the MVD, the glaciation budget) use the C library, which may differ from numpy's
vectorised loops by an ulp: those fields agree within a tolerance stated in
``tests/test_compiled_column.py``.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from icing.calc._scalars import fmax as _fmax
from icing.calc._scalars import fmin as _fmin
from icing.calc._scalars import nan_to_num as _nan_to_num
from icing.calc.droplets import TWOMEY_A_PERCENT
from icing.calc.thermo import METPY_CONSTANTS as _C
from icing.codes import BASIS_DIAGNOSED, BASIS_MODEL, BASIS_NONE
from icing.constants import (
    CP_AIR,
    EPSILON,
    IN_CLOUD_LWC,
    LS0,
    RD,
    RHO_WATER,
    RV,
    T0,
    T_HOMOGENEOUS,
    G,
)

__all__ = ["column_front", "PAR"]

_jit = numba.njit(cache=True, error_model="numpy", nogil=True)
_NAN = np.nan
_INF = np.inf

#: Names of the entries of the parameter vector ``par`` of :func:`column_front`.
PAR = (
    "rh_warm",
    "rh_ice_fraction",
    "cloud_fraction_floor",
    "factor_at_base",
    "scale_height",
    "floor_convective",
    "max_step",
    "convective_updraft",
    "subgrid_updraft",
    "floor_stratiform_w",
    "floor_convective_w",
    "twomey_c",
    "twomey_k",
    "twomey_ckb",
    "twomey_inv",
    "gamma_m3",
    "gamma_x50",
    "gamma_shape",
    "crystal_mass",
    "growth_4pi_r",
    "minus_residence",
    "appendix_c_smallest",
)

# constants formed as the numpy reference forms them (Python floats, same order)
_OME = 1.0 - EPSILON  # thermo.specific_humidity_from_relative_humidity
_KV = 1.0 / EPSILON - 1.0  # thermo.virtual_temperature
_HYPS = RD / G * 0.5  # thermo.height_from_pressure_hypsometric, layer thickness
_RDG = RD / G
_CPG = CP_AIR / G  # column._condensation_base
_LCL_EXP = CP_AIR / RD  # thermo.lifting_condensation_level
_MT0 = _C["T0"]
_SAT0 = _C["sat_pressure_0c"]
_MRV = _C["Rv"]
_MRD = _C["Rd"]
_MCPD = _C["Cp_d"]
_MLV = _C["Lv"]
_MLS = _C["Ls"]
_MEPS = _C["epsilon"]
_LV2 = _C["Lv"] * _C["Lv"]
_W_DIFF = _C["Cp_l"] - _C["Cp_v"]  # thermo._ambaum over water
_W_POW = (_C["Cp_l"] - _C["Cp_v"]) / _C["Rv"]
_W_L0T = _C["Lv"] / _C["T0"]
_I_DIFF = _C["Cp_i"] - _C["Cp_v"]  # thermo._ambaum over ice
_I_POW = (_C["Cp_i"] - _C["Cp_v"]) / _C["Rv"]
_I_L0T = _C["Ls"] / _C["T0"]
_MEYERS = 0.1296 * 100.0  # clouds.ice_nuclei_concentration (Meyers et al. 1992)
_THIRD = 1.0 / 3.0  # droplets.gamma_slope


@_jit
def _isfinite(x):
    return x == x and abs(x) < _INF


@_jit
def _ambaum(t, latent_0, cp_diff, heat_power, l0_t0):
    """``thermo._ambaum``: Ambaum (2020) eq. 13 / 17 with MetPy's constants [Pa]."""
    latent_heat = latent_0 - cp_diff * (t - _MT0)  # eq. 15 / 18
    exp_term = (l0_t0 - latent_heat / t) / _MRV
    return _SAT0 * (_MT0 / t) ** heat_power * math.exp(exp_term)


@_jit
def _es_water(t):
    return _ambaum(t, _MLV, _W_DIFF, _W_POW, _W_L0T)


@_jit
def _mixing_ratio(p, es):
    """``thermo.saturation_mixing_ratio`` with the vapour pressure given [kg/kg]."""
    es = _fmin(es, 0.5 * p)
    return EPSILON * es / (p - es)


@_jit
def _lapse(pr, temp, es):
    """``thermo._moist_lapse_rate_lnp`` at ``pr = exp(ln p)``: dT/d ln p of the pseudo-adiabat.

    Bakhshaii & Stull (2013) as MetPy's ``moist_lapse``; ``es`` the saturation vapour
    pressure over water at ``temp``.
    """
    rs = _mixing_ratio(pr, es)
    return (_MRD * temp + _MLV * rs) / (_MCPD + _LV2 * rs * _MEPS / (_MRD * temp**2))


@_jit
def _adiabat_start(t0, p0):
    """Return what every level integrated from ``(p0, t0)`` shares.

    ``ln p0``, ``p0`` as ``exp(ln p0)`` and the first Runge-Kutta stage there: the same
    values each level would compute (zeros where the start is not valid, which
    :func:`_moist_adiabat` refuses).
    """
    if not (_isfinite(p0) and p0 > 0 and _isfinite(t0)):
        return 0.0, 0.0, 0.0
    x0 = math.log(p0)
    pr0 = math.exp(x0)
    return x0, pr0, _lapse(pr0, t0, _es_water(t0))


@_jit
def _moist_adiabat(p, lnp, t0, p0, start, max_step):
    """``thermo.moist_adiabat_temperature`` of one level: RK4 in ln p from (p0, t0) [K].

    The numpy reference advances every value through the batch's largest number of
    sub-steps, the finished ones with a zero step that adds exactly 0 (the lapse rate
    is finite); here each value stops after its own ``ceil(|span| / max_step)``. The
    pressures ``exp(x + h/2)`` of the second and third stages and ``exp(x + h)`` of the
    fourth and the next step's first are computed once (the same values), and the
    start's ``ln p0``, ``exp(ln p0)`` and first stage come from :func:`_adiabat_start`,
    once a layer.
    """
    if not (_isfinite(p) and p > 0 and _isfinite(p0) and p0 > 0 and _isfinite(t0)):
        return _NAN
    x, pr, k1 = start
    span = lnp - x
    steps = np.ceil(abs(span) / max_step)
    h = span / max(steps, 1.0) if steps > 0 else 0.0
    temp = t0
    for step in range(int(steps)):
        if step > 0:
            k1 = _lapse(pr, temp, _es_water(temp))
        pr_mid = math.exp(x + 0.5 * h)
        t2 = temp + 0.5 * h * k1
        k2 = _lapse(pr_mid, t2, _es_water(t2))
        t3 = temp + 0.5 * h * k2
        k3 = _lapse(pr_mid, t3, _es_water(t3))
        x = x + h
        pr = math.exp(x)
        t4 = temp + h * k3
        k4 = _lapse(pr, t4, _es_water(t4))
        temp = temp + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
    return temp


@_jit
def _half(v, index, above, log):
    """``clouds._half_level`` of one point of a column ``v``."""
    n = v.size
    lo = index if above else index - 1
    hi = lo + 1
    edge = lo < 0 or hi > n - 1
    own = v[index]
    v_lo = v[min(max(lo, 0), n - 1)]
    v_hi = v[min(max(hi, 0), n - 1)]
    if log:
        own, v_lo, v_hi = math.log(own), math.log(v_lo), math.log(v_hi)
    mid = 0.5 * (v_hi + v_lo)
    out = own if edge or not _isfinite(mid) else mid
    return math.exp(out) if log else out


@_jit
def _humidity_pass(p, t, es_w, kind, hum, aux, given, inputs, rh, q, valid):
    """``column._humidity`` and ``column._validity`` of every level; True if all valid.

    ``kind``: 0 relative humidity, 1 dewpoint (``aux`` its saturation vapour
    pressure), 2 specific humidity; ``inputs`` the per-level inputs, ``given`` which.
    """
    n, m = p.shape
    for i in range(n):
        for j in range(m):
            pj, tj, e_s = p[i, j], t[i, j], es_w[i, j]
            if kind == 2:
                qq = hum[i, j]
                e = pj * qq / (EPSILON + _OME * qq)
                r = e / e_s
            else:
                r = hum[i, j] if kind == 0 else aux[i, j] / e_s
                e = r * e_s
                qq = EPSILON * e / (pj - _OME * e)
            rh[i, j], q[i, j] = r, qq
            ok = _isfinite(pj) and pj > 0 and _isfinite(tj) and tj > 0
            valid[i, j] = ok and _isfinite(hum[i, j])
    for k in range(len(inputs)):
        if given[k]:
            x = inputs[k]
            for i in range(n):
                for j in range(m):
                    if not _isfinite(x[i, j]):
                        valid[i, j] = False
    all_valid = True
    for i in range(n):
        for j in range(m):
            all_valid = all_valid and valid[i, j]
    return all_valid


@_jit
def _hypsometric(i, p, t, q, lnp, valid, all_valid, base, log_sp, sh, anchor, tv, zc, z):
    """``thermo.height_from_pressure_hypsometric`` of column ``i`` as ``column._heights`` calls it.

    Invalid levels take the values of the nearest valid level below (above at the
    bottom); ``anchor``: the standard-atmosphere height of the column's largest
    pressure (numpy's, one value a column). Wallace & Hobbs (2006) eq. 3.29.
    """
    m = p.shape[1]
    any_valid = False
    for j in range(m):
        any_valid = any_valid or valid[i, j]
    im, pmax, lmax = 0, -_INF, _NAN
    below = -1
    for j in range(m):
        pj = p[i, j]
        p_ok = _isfinite(pj) and pj > 0
        if all_valid:
            tf, qf, pf, lf = t[i, j], q[i, j], pj, lnp[i, j]
        else:
            if valid[i, j]:
                below = j
            pick = below
            if pick < 0:
                pick = m - 1
                for k in range(j, m):
                    if valid[i, k]:
                        pick = k
                        break
            good = valid[i, pick]
            tf = t[i, pick] if good else _NAN
            qf = _nan_to_num(q[i, pick] if good else _NAN)
            pf = pj if p_ok else (p[i, pick] if good else _NAN)
            lf = lnp[i, j] if p_ok else (lnp[i, pick] if good else _NAN)
        tv[j] = tf * (1.0 + _KV * qf)
        zc[j] = lf  # ln p, until the heights overwrite it below
        if pmax == pmax and (pf > pmax or pf != pf):  # np.argmax: first max, NaN first
            im, pmax, lmax = j, pf, lf
    lnp_prev = zc[0]
    zc[0] = 0.0
    for j in range(1, m):
        lnp_j = zc[j]
        zc[j] = zc[j - 1] + _HYPS * (tv[j] + tv[j - 1]) * (lnp_prev - lnp_j)
        lnp_prev = lnp_j
    if base:
        zb = zc[im] + _RDG * tv[im] * (lmax - log_sp[i])
        bz = sh[i]
    else:
        zb, bz = zc[im], anchor[i]
    for j in range(m):
        pj = p[i, j]
        z[i, j] = zc[j] - zb + bz if any_valid and _isfinite(pj) and pj > 0 else _NAN


@_jit
def _cloud_column(i, rh, t, f_ice, lwc_model, has_cl, air, blend, bridge, par, cloud, raw):
    """``clouds.cloud_mask`` and ``clouds.bridge_single_level_gaps`` of column ``i``.

    Returns whether the column holds cloud.
    """
    m = t.shape[1]
    for j in range(m):
        if blend:
            f_i = f_ice[i, j]
            thr = _fmin(par[0], f_i + par[1] * (1.0 - f_i))
        else:
            thr = _NAN if t[i, j] != t[i, j] else 0.999
        c = rh[i, j] >= thr
        if has_cl:
            c = c or lwc_model[i, j] >= IN_CLOUD_LWC
        raw[j] = c and air[j]
        cloud[i, j] = raw[j]
    if bridge and m >= 3:
        for j in range(1, m - 1):
            moist = rh[i, j] >= f_ice[i, j] and air[j]
            if not raw[j] and raw[j - 1] and raw[j + 1] and moist:
                cloud[i, j] = True
    for j in range(m):
        if cloud[i, j]:
            return True
    return False


@_jit
def _layers_column(i, cloud, z, p, t, air, base_i, top_i, lay, work):
    """``clouds.cloud_layers`` of column ``i`` over the air levels (others NaN).

    ``lay`` (five arrays): base height, top height, base pressure, base temperature,
    top temperature.
    """
    m = t.shape[1]
    za, pa, ta = work[0], work[1], work[2]
    for j in range(m):
        za[j] = z[i, j] if air[j] else _NAN
        pa[j] = p[i, j] if air[j] else _NAN
        ta[j] = t[i, j] if air[j] else _NAN
    j = 0
    while j < m:
        if not cloud[i, j]:
            base_i[i, j] = top_i[i, j] = -1
            for f in range(5):
                lay[f][i, j] = _NAN
            j += 1
            continue
        b = j
        while j + 1 < m and cloud[i, j + 1]:
            j += 1
        tp = j
        bh, th = _half(za, b, False, False), _half(za, tp, True, False)
        bp, bt = _half(pa, b, False, True), _half(ta, b, False, False)
        for k in range(b, tp + 1):
            base_i[i, k], top_i[i, k] = b, tp
            lay[0][i, k], lay[1][i, k], lay[2][i, k] = bh, th, bp
            lay[3][i, k], lay[4][i, k] = bt, ta[tp]
        j += 1


@_jit
def _updraft_column(i, cloud, base_i, top_i, w, has_w, par, conv, w_eff, wcol, work):
    """``column._updraft`` of column ``i``: convective layers and the activation updraft.

    ``wcol`` receives ``nan_to_num(w)``; ``w_eff`` is written at the cloudy levels.
    The layer's largest ``|w|`` is read as the numpy reference computes it (one running
    maximum over levels lifted by ``1e7`` per layer started, then lowered again).
    """
    m = cloud.shape[1]
    absw, acc, off = work[3], work[4], work[5]
    count = 0
    for j in range(m):
        wj = _nan_to_num(w[i, j]) if has_w else 0.0
        wcol[j] = wj
        absw[j] = _fmin(abs(wj), 1e5) if cloud[i, j] else 0.0
        if base_i[i, j] == j:
            count += 1
        off[j] = count * 1e7
        v = absw[j] + off[j]
        acc[j] = v if j == 0 else _fmax(acc[j - 1], v)
    for j in range(m):
        top = max(top_i[i, j], 0)
        conv[i, j] = cloud[i, j] and acc[top] - off[top] >= par[7]
        if cloud[i, j]:
            w_base = absw[max(base_i[i, j], 0)] + par[8]
            w_eff[j] = _fmax(w_base, par[10] if conv[i, j] else par[9])


@_jit
def _twomey(w, par):
    """``droplets.twomey_activation`` of one updraft (Twomey 1959 closed form) [m-3]."""
    w_cm = _fmax(w, 0.0) * 100.0
    rhs = TWOMEY_A_PERCENT * w_cm**1.5 / par[13]
    s_pct = rhs ** par[14]
    n_cm3 = par[11] * s_pct ** par[12]
    if w != w:
        return _NAN
    return n_cm3 * 1e6 if w > 0.0 else 0.0


@_jit
def _meyers(ctt_raw):
    """Primary ice nuclei at the layer's top temperature (Meyers et al. 1992 eq. 2.4) [m-3].

    ``np.nan_to_num(clouds.ice_nuclei_concentration(clip(ctt, -38 C, 0 C)))``.
    """
    ctt = ctt_raw
    if ctt == ctt:
        ctt = min(max(ctt, T_HOMOGENEOUS), T0)
    if ctt >= 273.15:
        f_i = 1.0
    else:
        f_i = _ambaum(ctt, _MLS, _I_DIFF, _I_POW, _I_L0T) / _es_water(ctt)
    si = 1.0 / f_i
    n = 1e3 * math.exp(-0.639 + _MEYERS * (si - 1.0))
    inside = ctt <= T0 and ctt >= T_HOMOGENEOUS
    return _nan_to_num(n if inside else _NAN)


@_jit
def _glaciation(tj, pj, lnp, lwc, ctt_raw, n_primary, ice_above, w, rho, e_w, e_i, par):
    """``clouds.glaciation_likelihood`` of one cloudy level (meyers92 ice nuclei).

    Growth by Rogers & Yau (1989) eq. 9.4 (``clouds.ice_crystal_mass_growth_rate``),
    supply by ``clouds.adiabatic_lwc_gradient``, the Korolev & Mazin (2003) balance.
    The budget is computed only between -38 and 0 degC, where it is not overwritten.
    """
    if tj != tj or pj != pj or ctt_raw != ctt_raw:
        return _NAN
    if tj <= T_HOMOGENEOUS:
        return 1.0
    if tj >= T0:
        return 0.0
    n_falling = _fmax(ice_above, 0.0) * rho / par[18]
    s_i = e_w / e_i
    k_air = 2.64638e-3 * tj**1.5 / (tj + 245.4 * 10.0 ** (-12.0 / tj))  # US Std Atm eq. 53
    f_k = (LS0 / (RV * tj) - 1.0) * LS0 / (k_air * tj)  # R&Y 9.4
    f_d = RV * tj / (e_i * (2.26e-5 * (tj / 273.15) ** 1.81 * (101325.0 / pj)))
    rate = par[19] * (s_i - 1.0) / (f_k + f_d)
    growth = _fmax(rate, 0.0)  # tj < T0 here
    uptake = (n_primary + n_falling) * growth
    dt_dlnp = _lapse(math.exp(lnp), tj, e_w)
    dt_dz = -dt_dlnp * G / (RD * tj)
    rs = _mixing_ratio(pj, e_w)
    drs_dz = rs * (_MLV / (RV * tj**2) * dt_dz + G / (RD * tj))
    gradient = -(pj / (RD * tj)) * drs_dz
    supply = _fmax(_fmax(w, 0.0), 0.0) * gradient
    net = _fmax(uptake - supply, 0.0)
    lw = _fmax(lwc, IN_CLOUD_LWC)
    return 1.0 - math.exp(par[20] * net / lw)


@_jit
def _liquid_column(i, p, t, z, q, rh, lnp, rho, base_i, top_i, conv, liquid, air, par, out):
    """``column._diagnosed_liquid`` of column ``i`` into ``out``: ``f(h) LWC_ad`` in cloud.

    Per layer, the condensation level (``thermo.lifting_condensation_level``, Bolton
    1980 eq. 22, and the dry adiabat) of the air at its lowest cloudy level; per liquid
    level, ``clouds.adiabatic_lwc`` on the pseudo-adiabat from there, thinned by
    ``clouds.sub_adiabatic_factor`` (Braun et al. 2018; Warner 1955 floor in convection).
    The parcel is carried up the layer as ``column._diagnosed_liquid`` carries it: a
    level above the condensation level continues from the liquid level below it (from
    the condensation level at the first, or after a level without a temperature), a
    level at or under it starts from the condensation level.
    """
    m = p.shape[1]
    last_base = -1
    p_l = t_l = z_l = r_base = 0.0
    start = (0.0, 0.0, 0.0)
    t_c = p_c = 0.0  # the parcel's last level (pressure, temperature) and its start
    from_c = start
    for j in range(m):
        out[i, j] = 0.0 if air[j] else _NAN
        if not liquid[j]:
            continue
        b = base_i[i, j]
        if b != last_base:  # the same base for the whole layer
            last_base = b
            p_b, t_b, z_b, rh_b = p[i, b], t[i, b], z[i, b], rh[i, b]
            rh_b = rh_b if _isfinite(rh_b) else 1.0
            rh_c = _fmin(rh_b, 1.0) if rh_b > 0.0 else _NAN
            t_l = 1.0 / (1.0 / (t_b - 55.0) - math.log(rh_c) / 2840.0) + 55.0  # Bolton eq. 22
            p_l = p_b * (t_l / t_b) ** _LCL_EXP
            z_l = z_b + _CPG * (t_b - t_l)
            r_base = _mixing_ratio(p_l, _es_water(t_l))
            start = _adiabat_start(t_l, p_l)
            t_c, p_c, from_c = t_l, p_l, start
        if p[i, j] < p_l:  # above the condensation level: on from the level below
            t_parcel = _moist_adiabat(p[i, j], lnp[i, j], t_c, p_c, from_c, par[6])
            if _isfinite(t_parcel):
                t_c, p_c = t_parcel, p[i, j]
                from_c = _adiabat_start(t_c, p_c)
            else:
                t_c, p_c, from_c = t_l, p_l, start
        else:
            t_parcel = _moist_adiabat(p[i, j], lnp[i, j], t_l, p_l, start, par[6])
        r_here = _mixing_ratio(p[i, j], _es_water(t_parcel))
        lwc = rho[i, j] * (r_base - r_here)
        ad = _NAN if lwc != lwc else _fmax(lwc, 0.0)
        h = z[i, j] - z_l
        f = _fmax(par[3] * math.exp(-h / par[4]), par[5] if conv[i, j] else 0.0)
        f = f if h >= 0 else _NAN
        ad_f = _nan_to_num(ad * f)
        out[i, j] = ad_f if ad_f > 1e-12 else 0.0  # drop round-off at the base


@_jit
def _freezing(i, t, z, air):
    """``column._freezing_level`` of column ``i``: the lowest 0 degC crossing in air [m]."""
    for j in range(t.shape[1] - 1):
        ta, tb = t[i, j], t[i, j + 1]
        if air[j] and air[j + 1] and (ta > T0) != (tb > T0):
            frac = (ta - T0) / (ta - tb if ta != tb else 1.0)
            za = z[i, j]
            return za + frac * (z[i, j + 1] - za)
    return _NAN


@_jit
def column_front(a, kind, given, inputs, cols, flags, par, fo, bo, io, basis, col_out):
    """Diagnose columns up to the SLD step (``column._diagnose_core``), in place.

    ``a`` (six arrays, n x level): pressure, temperature, ``ln p``, the saturation vapour
    pressures over water and ice, the water humidity of ice saturation (numpy's);
    ``kind``/``given``/``inputs``: the humidity and the per-level inputs (see
    :func:`_humidity_pass`, ``inputs`` in ``column._LEVEL_INPUTS`` order, ``aux`` the
    dewpoint's saturation vapour pressure at index 10, the humidity at 11); ``cols``
    (6, n): surface height, surface pressure, its log, the standard-atmosphere anchor,
    whether the column carries model cloud liquid, and model ice or snow (1 or 0);
    ``flags``: height given, surface anchor, below-ground test (0 none, 1 height, 2
    pressure), humidity-threshold blend, gap bridging, model ice or snow given, model
    liquid given, cloud fraction given, vertical velocity given, cloud ice given, snow
    given.

    Outputs: ``fo`` (16 float arrays, see :mod:`icing.calc._column_compiled`), ``bo``
    (7 bool arrays), ``io`` (base and top index, int64), ``basis`` (int8), ``col_out``
    (n,) the freezing level.
    """
    p, t, lnp, es_w, es_i, f_ice = a[0], a[1], a[2], a[3], a[4], a[5]
    rh, q, z, rho, lwc_model, lwc_diag = fo[0], fo[1], fo[2], fo[3], fo[4], fo[5]
    valid, below, cloud, conv, liquid_b, glaciated = bo[0], bo[1], bo[2], bo[3], bo[4], bo[5]
    n, m = p.shape
    all_valid = _humidity_pass(p, t, es_w, kind, inputs[11], inputs[10], given, inputs[:10],
                               rh, q, valid)  # fmt: skip
    has_height, base, below_mode, blend, bridge = flags[0], flags[1], flags[2], flags[3], flags[4]
    ice_given, has_cl, has_cf, has_w, has_ci, has_snow = (
        flags[5],
        flags[6],
        flags[7],
        flags[8],
        flags[9],
        flags[10],
    )
    tv, zc, raw, air = np.empty(m), np.empty(m), np.zeros(m, np.bool_), np.zeros(m, np.bool_)
    w_eff, wcol, ice = np.empty(m), np.empty(m), np.empty(m)
    work = np.empty((7, m))  # scratch rows of the per-column steps
    for i in range(n):
        if has_height:
            for j in range(m):
                z[i, j] = inputs[3][i, j]
        else:
            _hypsometric(i, p, t, q, lnp, valid, all_valid, base, cols[2], cols[0], cols[3],
                         tv, zc, z)  # fmt: skip
        for j in range(m):
            valid[i, j] = valid[i, j] and _isfinite(z[i, j])
            if below_mode == 1:
                below[i, j] = _isfinite(cols[0, i]) and z[i, j] < cols[0, i]
            elif below_mode == 2:
                below[i, j] = _isfinite(cols[1, i]) and p[i, j] > cols[1, i]
            else:
                below[i, j] = False
            air[j] = valid[i, j] and not below[i, j]
            rho[i, j] = p[i, j] / (RD * (t[i, j] * (1.0 + _KV * _nan_to_num(q[i, j]))))
            lm = 0.0
            if has_cl:
                lm = _fmax(inputs[4][i, j], 0.0) * rho[i, j]
                if has_cf:
                    lm = lm / _fmin(_fmax(inputs[8][i, j], par[2]), 1.0)
            lwc_model[i, j] = lm
        cloudy = _cloud_column(i, rh, t, f_ice, lwc_model, has_cl, air, blend, bridge, par,
                               cloud, raw)  # fmt: skip
        if cloudy:
            _layers_column(i, cloud, z, p, t, air, io[0], io[1], fo[11:], work)
        for j in range(m):  # a layer resting on a missing level has an unknown base
            b = io[0][i, j] if cloudy else -1
            if not cloudy:
                io[0][i, j] = io[1][i, j] = -1
                for f in range(11, 16):
                    fo[f][i, j] = _NAN
            elif cloud[i, j] and b >= 1 and not valid[i, b - 1] and not below[i, b - 1]:
                valid[i, j] = False
        both = ice_given and has_cl and cols[4, i] > 0.0 and cols[5, i] > 0.0
        for j in range(m):
            air[j] = valid[i, j] and not below[i, j]
            liquid_b[i, j] = cloud[i, j] and t[i, j] > T_HOMOGENEOUS
            ice[j] = 0.0
            if has_ci:
                ice[j] = ice[j] + _fmax(_nan_to_num(inputs[5][i, j]), 0.0)
            if has_snow:
                ice[j] = ice[j] + _fmax(_nan_to_num(inputs[7][i, j]), 0.0)
            gl = both and ice[j] * rho[i, j] >= IN_CLOUD_LWC and lwc_model[i, j] < IN_CLOUD_LWC
            glaciated[i, j] = gl and air[j]
            lm = lwc_model[i, j] if t[i, j] > T_HOMOGENEOUS else 0.0
            lwc_model[i, j] = lm if air[j] else _NAN
        if cloudy:
            _updraft_column(i, cloud, io[0], io[1], inputs[9], has_w, par, conv, w_eff, wcol,
                            work)  # fmt: skip
            _liquid_column(i, p, t, z, q, rh, lnp, rho, io[0], io[1], conv, liquid_b[i], air,
                           par, lwc_diag)  # fmt: skip
            _finish_column(i, p, t, lnp, rho, es_w, es_i, fo, bo, io, basis, air, w_eff, wcol,
                           ice, par, work)  # fmt: skip
        else:
            _clear_column(i, fo, bo, basis, air)
        col_out[i] = _freezing(i, t, z, air)


@_jit
def _finish_column(i, p, t, lnp, rho, es_w, es_i, fo, bo, io, basis, air, w_eff, wcol, ice,
                   par, work):  # fmt: skip
    """Combine the liquid; droplets, glaciation and Appendix C candidates of column ``i``.

    ``column._combine_liquid`` (the larger of model and diagnosed, with its basis),
    ``column._droplets`` (Twomey 1959 at the base, the gamma spectrum's MVD,
    ``droplets.median_volume_diameter``), ``column._glaciation`` and the levels whose
    liquid can pass an Appendix C envelope (``clouds.appendix_c_exceedances``).
    """
    m = p.shape[1]
    lwc_model, lwc_diag, lwc = fo[4], fo[5], fo[6]
    number, mvd, shape, glac, top_t = fo[7], fo[8], fo[9], fo[10], fo[15]
    cloud, liquid, near = bo[2], bo[4], bo[6]
    ice_above = work[6]
    run = -_INF
    for j in range(m - 1, -1, -1):
        run = _fmax(run, ice[j])
        ice_above[j] = run
    last_top, n_primary, last_base, n_drop = -2, 0.0, -2, _NAN
    for j in range(m):
        ok = liquid[i, j]
        lm, ld = lwc_model[i, j], lwc_diag[i, j]
        v = _fmax(lm, ld) if ok else 0.0
        v = v if air[j] else _NAN
        lwc[i, j] = v
        if ok and v > 0:
            basis[i, j] = BASIS_MODEL if lm >= ld else BASIS_DIAGNOSED
        else:
            basis[i, j] = BASIS_NONE
        number[i, j] = mvd[i, j] = _NAN
        shape[i, j] = par[17] if ok else _NAN
        if ok:
            b = io[0][i, j]
            if b != last_base:
                last_base, n_drop = b, _twomey(w_eff[j], par)
            number[i, j] = n_drop
            if v >= IN_CLOUD_LWC:
                lam = _NAN
                if v > 0.0 and n_drop > 0.0 and par[17] > -1.0:
                    lam = (np.pi / 6.0 * RHO_WATER * n_drop * par[15] / v) ** _THIRD
                mvd[i, j] = par[16] / lam
        glac[i, j] = _NAN
        if cloud[i, j]:
            tp = io[1][i, j]
            if tp != last_top:
                last_top, n_primary = tp, _meyers(top_t[i, j])
            glac[i, j] = _glaciation(t[i, j], p[i, j], lnp[i, j], v, top_t[i, j], n_primary,
                                     ice_above[j], wcol[j], rho[i, j], es_w[i, j], es_i[i, j],
                                     par)  # fmt: skip
        near[i, j] = air[j] and v > par[21]


@_jit
def _clear_column(i, fo, bo, basis, air):
    """Write what :func:`_finish_column` and its steps give a column without cloud.

    No convection, no liquid (0 in air, NaN elsewhere), no basis, no droplets, no
    glaciation likelihood, nothing near an Appendix C envelope.
    """
    for j in range(air.size):
        v = 0.0 if air[j] else _NAN
        fo[5][i, j] = fo[6][i, j] = v
        fo[7][i, j] = fo[8][i, j] = fo[9][i, j] = fo[10][i, j] = _NAN
        bo[3][i, j] = bo[6][i, j] = False
        basis[i, j] = BASIS_NONE
