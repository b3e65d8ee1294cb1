"""The compiled SLD diagnosis (numba): imported only by :mod:`icing.calc._sld_compiled`.

One loop over the columns of a block (m, level), and loops over each column's levels,
doing what :func:`icing.calc.sld.diagnose_sld` does with whole-block numpy passes. The
numpy functions stay the documented reference; each part here names the one it
transcribes, with the same comparisons and the IEEE operations in the same order
(no fast-math). The published methods are:

- Bourgouin (2000) positive and negative areas (:func:`icing.calc.bourgouin.bourgouin_layer_areas`,
  :func:`icing.calc.bourgouin.warm_layer_areas`): ``_column_areas``;
- Marshall & Palmer (1948) rain sizes (:func:`icing.calc.droplets.marshall_palmer`,
  :func:`icing.calc.droplets.marshall_palmer_from_lwc`): ``_marshall_palmer``,
  ``_column_fzra``;
- Beard (1976) fall speed of the drizzle embryo, regime 2 only
  (:func:`icing.calc.droplets.terminal_velocity`): ``_embryo_fall_speed``;
- Khairoutdinov & Kogan (2000) autoconversion and accretion integrated by
  Runge-Kutta (:func:`icing.calc.warm_rain.drizzle_growth`): ``_drizzle_growth``;
- the Ambaum (2020) saturation laws of :func:`icing.calc.thermo.saturation_vapor_pressure`
  for the ice-saturation humidity: ``_ice_saturation_rh``;
- the 14 CFR 25 Appendix O bounds on freezing drizzle (``icing.calc.sld._sld_content``).

Named constants are not read here: they arrive in the arrays ``c`` (floats) and
``ci`` (codes) built by :func:`icing.calc._sld_compiled.constants` from the numpy
modules, so a cached compilation never keeps a stale threshold. The literals of the
published fits (Beard's, Marshall-Palmer's, Khairoutdinov & Kogan's, IAPWS's,
Sutherland's) are transcribed; the tests hold the two paths together.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from icing.calc._scalars import fmax as _max
from icing.calc._scalars import fmin as _min
from icing.calc._scalars import nan_to_num as _nan_to_num

__all__ = ["diagnose_block", "N_FLOAT", "N_CODE"]

_jit = numba.njit(cache=True, error_model="numpy", nogil=True)
_NAN = np.nan
_INF = np.inf

# indices into the float constants ``c`` (icing.calc._sld_compiled.constants)
(
    C_T0,
    C_RD,
    C_KAPPA,
    C_CP,
    C_PRECIP_MIN,
    C_HYDRO_MIN,
    C_NOMINAL_RATE,
    C_TOP_T_MIN,
    C_ICE_ALOFT_T,
    C_MIN_DEPTH,
    C_LWC_MIN,
    C_FEW_NUMBER,
    C_MARGINAL,
    C_FZDZ_DMAX,
    C_FZRA_DMAX,
    C_FZDZ_MVD,
    C_DMAX_OVER_D0,
    C_ENV_T_LO,
    C_ENV_Q_LO,
    C_ENV_T_HI,
    C_ENV_Q_HI,
    C_PA_SNOW,
    C_PA_SURFACE_SNOW,
    C_NA_OFFSET,
    C_NA_SLOPE,
    C_MP_COEF,
    C_X50,
    C_RHO_W,
    C_G,
    C_EMBRYO_D,
    C_SAT0,
    C_T0_TRIPLE,
    C_RV,
    C_LV,
    C_LS,
    C_CP_L,
    C_CP_V,
    C_CP_I,
    C_B2,  # 7 coefficients of Beard's regime 2, b0..b6, from here
) = range(39)
N_FLOAT = C_B2 + 7
# indices into the integer codes ``ci``
(I_GAP, I_NONE, I_DRIZZLE, I_RAIN, P_NONE, P_SNOW, P_FZDZ, P_PELLETS, P_FZRA, P_DZ, P_RA) = range(
    11
)
N_CODE = 11

# rows of the per-level float scratch (sorted order)
(
    F_P,
    F_T,
    F_Z,
    F_ZM,
    F_LWC,
    F_NUM,
    F_CTT,
    F_CTH,
    F_CBH,
    F_RAIN,
    F_SNOW,
    F_ICE,
    F_RH,
    F_FI,
    F_RHO,
    F_CPOS,
    F_CNEG,
    F_PA,
    F_NA,
    F_PROD,
    F_DRZ,
    F_SLWC,
    F_SMVD,
    F_SDMAX,
    F_XS,
    F_WS,
) = range(26)
# rows of the per-level integer scratch
(K_ORDER, K_FW, K_FC, K_KWC, K_FICE, K_FDRY, K_TOP) = range(7)
# rows of the per-level boolean scratch
(
    B_U,
    B_CLD,
    B_WA,
    B_COLD,
    B_HYDRO,
    B_PRECIP,
    B_MELTED,
    B_MRAIN,
    B_FZRA,
    B_FZDZ,
    B_SEEDED,
    B_SRC,
    B_POSS,
    B_CA,
    B_ICE,
    B_UIN,
) = range(16)


@_jit
def _ambaum(t, latent_0, cp_condensed, c):
    """:func:`icing.calc.thermo._ambaum`: Ambaum (2020) eq. 13 (water) or 17 (ice)."""
    latent_heat = latent_0 - (cp_condensed - c[C_CP_V]) * (t - c[C_T0_TRIPLE])  # eq. 15 / 18
    heat_power = (cp_condensed - c[C_CP_V]) / c[C_RV]
    exp_term = (latent_0 / c[C_T0_TRIPLE] - latent_heat / t) / c[C_RV]
    return c[C_SAT0] * (c[C_T0_TRIPLE] / t) ** heat_power * math.exp(exp_term)


@_jit
def _ice_saturation_rh(t, c):
    """:func:`icing.calc.thermo.ice_saturation_relative_humidity`: e_si / e_sw, 1 above 0 C."""
    if t >= 273.15:
        return 1.0
    return _ambaum(t, c[C_LS], c[C_CP_I], c) / _ambaum(t, c[C_LV], c[C_CP_L], c)


@_jit
def _layer_areas(pb, t_bottom, pt, t_top, c):
    """:func:`icing.calc.bourgouin.bourgouin_layer_areas` of one layer, Bourgouin (2000).

    ``A = c_p integral (T - T0) d(ln theta)``, T linear in ln theta across the layer.
    """
    t0 = c[C_T0]
    ta = t_bottom - t0
    tb = t_top - t0
    dlnth = abs(math.log((tb + t0) / (ta + t0)) + c[C_KAPPA] * math.log(pb / pt))
    hi = _max(ta, tb)
    lo = _min(ta, tb)
    span = hi - lo if hi > lo else 1.0
    if lo >= 0.0:
        pos_mean = 0.5 * (ta + tb)
    elif hi <= 0.0:
        pos_mean = 0.0
    else:
        pos_mean = hi**2 / (2 * span)
    if hi <= 0.0:
        neg_mean = 0.5 * (ta + tb)
    elif lo >= 0.0:
        neg_mean = 0.0
    else:
        neg_mean = -(lo**2) / (2 * span)
    return c[C_CP] * pos_mean * dlnth, c[C_CP] * (0.0 - neg_mean) * dlnth + 0.0


@_jit
def _column_areas(w, k, b, n, c):
    """:func:`icing.calc.bourgouin.warm_layer_areas` of one sorted column (Bourgouin 2000).

    Fills the cumulated areas, the lowest warm / cold level at or above each level,
    the warm layer's base (clipped), whether a warm layer lies above, and ``pa``/``na``.
    """
    t0 = c[C_T0]
    w[F_CPOS, 0] = 0.0
    w[F_CNEG, 0] = 0.0
    for j in range(n - 1):
        pos = neg = 0.0
        if b[B_U, j] and b[B_U, j + 1]:
            pos, neg = _layer_areas(w[F_P, j], w[F_T, j], w[F_P, j + 1], w[F_T, j + 1], c)
        if j == 0:  # np.cumsum starts from the first term itself
            w[F_CPOS, 1], w[F_CNEG, 1] = pos, neg
        else:
            w[F_CPOS, j + 1] = w[F_CPOS, j] + pos
            w[F_CNEG, j + 1] = w[F_CNEG, j] + neg
    fw = fc = n
    for j in range(n - 1, -1, -1):
        b[B_COLD, j] = b[B_U, j] and w[F_T, j] <= t0
        if b[B_U, j] and w[F_T, j] > t0:
            fw = j
        if b[B_COLD, j]:
            fc = j
        k[K_FW, j] = fw
        k[K_FC, j] = fc
    for j in range(n):
        kw = k[K_FW, j + 1] if j < n - 1 else n
        wa = kw < n
        kw_c = min(max(kw, 1), n - 1) if n > 1 else 0
        b[B_WA, j] = wa
        k[K_KWC, j] = kw_c
        if wa:
            kc = k[K_FC, kw_c]
            w[F_PA, j] = w[F_CPOS, min(max(kc, 0), n - 1)] - w[F_CPOS, kw_c - 1]
            w[F_NA, j] = w[F_CNEG, kw_c] - w[F_CNEG, j]
        else:
            w[F_PA, j] = 0.0
            w[F_NA, j] = 0.0


@_jit
def _marshall_palmer(rate, c):
    """:func:`icing.calc.droplets.marshall_palmer`: LWC and D0 of Marshall & Palmer (1948) rain.

    ``Lambda = 4.1 R^-0.21 mm-1``, ``LWC = pi rho_w N0 / Lambda^4``, ``D0 = 3.67 / Lambda``.
    """
    lam = 4.1e3 * (rate if rate > 0.0 else _NAN) ** -0.21
    lwc = c[C_MP_COEF] / lam**4.0
    d0 = c[C_X50] / lam
    if rate > 0.0 and rate <= 100.0:
        return lwc, d0
    return (0.0 if rate == 0.0 else _NAN), _NAN


@_jit
def _column_fzra(w, k, b, n, rate, given, has_rain, has_snow, c):
    """Precipitation and freezing rain of one sorted column, Bourgouin (2000).

    Transcribes ``icing.calc.sld._precipitation`` and ``_freezing_rain`` (melted aloft,
    NA at most 66 + 0.66 PA; or model rain under a melting layer) and
    ``_rain_sizes``/``_sld_content`` at the freezing-rain levels: the model's rain
    content sized by :func:`icing.calc.droplets.marshall_palmer_from_lwc`, else the
    Marshall & Palmer (1948) spectrum of the column's rate. Returns whether any level
    holds model rain or snow.
    """
    hmin = c[C_HYDRO_MIN]
    rate_flag = rate > c[C_PRECIP_MIN]
    no_info = not math.isfinite(rate) and not given
    hydro_above = cloud_above = any_hydro = False
    for j in range(n - 1, -1, -1):
        u = b[B_U, j]
        hydro = ((has_rain and w[F_RAIN, j] > hmin) or (has_snow and w[F_SNOW, j] > hmin)) and u
        b[B_HYDRO, j] = hydro
        any_hydro = any_hydro or hydro
        hydro_above = hydro_above or hydro
        cloud_above = cloud_above or b[B_CLD, j]
        b[B_CA, j] = cloud_above
        b[B_PRECIP, j] = rate_flag or hydro_above
    # Marshall-Palmer holds to 100 mm/h: heavier rates are sized at that limit
    rate_eff = _min(rate, 100.0) if rate > c[C_PRECIP_MIN] else c[C_NOMINAL_RATE]
    lwc_mp, d0_mp = _marshall_palmer(rate_eff, c)
    for j in range(n):
        wa = b[B_WA, j]
        if no_info and wa and b[B_CA, k[K_KWC, j]]:
            b[B_PRECIP, j] = True
        pa = w[F_PA, j]
        na_limit = c[C_NA_OFFSET] + c[C_NA_SLOPE] * pa
        melted = wa and pa >= c[C_PA_SNOW]
        b[B_MELTED, j] = melted
        mrain = has_rain and w[F_RAIN, j] > hmin and b[B_U, j]
        b[B_MRAIN, j] = mrain
        fzra = b[B_COLD, j] and (
            (melted and b[B_PRECIP, j] and w[F_NA, j] <= na_limit) or (mrain and wa)
        )
        b[B_FZRA, j] = fzra
        if fzra:
            if mrain:
                q_rain = w[F_RAIN, j] * w[F_RHO, j]
                lam = (c[C_MP_COEF] / (q_rain if q_rain > 0.0 else _NAN)) ** 0.25
                lwc, mvd = q_rain, c[C_X50] / lam
            else:
                lwc, mvd = lwc_mp, d0_mp
            w[F_SLWC, j] = lwc
            w[F_SMVD, j] = mvd
            w[F_SDMAX, j] = _max(_min(c[C_DMAX_OVER_D0] * mvd, c[C_FZRA_DMAX]), mvd)
    return any_hydro


@_jit
def _column_seeding(w, k, b, n, has_fi, c):
    """``icing.calc.sld._seeded`` of one sorted column: levels seeded by ice from above.

    Ice: model cloud ice or snow, or cloud or ice-saturated air colder than
    ``ICE_ALOFT_T``; it falls until clear air subsaturated over ice. Returns whether
    the column holds any ice.
    """
    hmin = c[C_HYDRO_MIN]
    first_ice = n
    for j in range(n - 1, -1, -1):
        u, cld, rh = b[B_U, j], b[B_CLD, j], w[F_RH, j]
        cold_aloft = u and w[F_T, j] < c[C_ICE_ALOFT_T]
        ice_sat = False
        # ice saturation is above 40 % over water down to about -90 C
        if cold_aloft and not cld and rh >= 0.4:
            f_i = w[F_FI, j] if has_fi else _ice_saturation_rh(w[F_T, j], c)
            ice_sat = rh >= f_i
        flag = w[F_ICE, j] > hmin or w[F_SNOW, j] > hmin or (cold_aloft and (cld or ice_sat))
        flag = flag and u
        b[B_ICE, j] = flag
        if flag:
            first_ice = j
        k[K_FICE, j] = first_ice
    first_dry = n
    for j in range(n - 1, -1, -1):
        dry = b[B_U, j] and not b[B_CLD, j] and not b[B_ICE, j] and k[K_FICE, j] < n
        if dry:  # NaN humidity counts as dry
            f_i = w[F_FI, j] if has_fi else _ice_saturation_rh(w[F_T, j], c)
            dry = not (w[F_RH, j] >= f_i)
        if dry:
            first_dry = j
        b[B_SEEDED, j] = k[K_FICE, j] < first_dry
    return k[K_FICE, 0] < n


@_jit
def _layer_mean_above(w, k, b, n):
    """``icing.calc.warm_rain._layer_mean_above``: depth-weighted mean cloud water above.

    Fills the reverse cumulative sums (``F_XS``, ``F_WS``) and each level's layer top
    (``K_TOP``); :func:`_layer_mean_at` reads the mean at a level.
    """
    xs = ws = 0.0
    run = n - 1
    for j in range(n - 1, -1, -1):
        zj = w[F_ZM, j] if math.isfinite(w[F_ZM, j]) else _NAN
        lower = zj
        if j > 0:  # level thickness: half-way to each neighbour, one-sided at the ends
            zb = w[F_ZM, j - 1] if math.isfinite(w[F_ZM, j - 1]) else _NAN
            lower = 0.5 * (zj + zb)
        upper = zj
        if j < n - 1:
            za = w[F_ZM, j + 1] if math.isfinite(w[F_ZM, j + 1]) else _NAN
            upper = 0.5 * (za + zj)
        dz = _nan_to_num(_max(upper - lower, 0.0))
        cld = b[B_CLD, j]
        x = wt = 0.0
        if cld:
            wt = dz
            x = _nan_to_num(_nan_to_num(w[F_LWC, j]) / w[F_RHO, j]) * dz
        if j == n - 1:  # np.cumsum starts from the first term itself
            xs, ws = x, wt
        else:
            xs, ws = xs + x, ws + wt
        w[F_XS, j], w[F_WS, j] = xs, ws
        end = cld and not (j < n - 1 and b[B_CLD, j + 1])
        run = min(run, j if end else n - 1)
        k[K_TOP, j] = run


@_jit
def _layer_mean_at(w, k, n, j):
    """Return the mean of :func:`_layer_mean_above` at the cloud level ``j``."""
    top = k[K_TOP, j]
    above = min(top + 1, n - 1)
    past = top + 1 < n
    sub_x = w[F_XS, above] if past else 0.0
    sub_w = w[F_WS, above] if past else 0.0
    return (w[F_XS, j] - sub_x) / (w[F_WS, j] - sub_w)


@_jit
def _embryo_fall_speed(d, p, t, c):
    """:func:`icing.calc.droplets.terminal_velocity` in Beard's (1976) regime 2 only.

    Davies number ``N_Da = 4 rho_a Delta_rho g d^3 / (3 eta^2)``, ``Y = sum b_n X^n``
    of ``X = ln N_Da``, ``V = eta C_sc exp(Y) / (rho_a d)``; Sutherland's viscosity
    (U.S. Standard Atmosphere 1976 eq. 51) and the IAPWS R1-76 surface tension (NaN
    below -40 C, as the reference). The caller checks ``d`` lies in regime 2.
    """
    rho_a = p / (c[C_RD] * t)  # icing.calc.thermo.air_density, dry
    eta = 1.458e-6 * t**1.5 / (t + 110.4)  # U.S. Std Atm 1976 eq. 51
    tau = 1.0 - t / 647.096
    sigma = _NAN
    if t >= 233.15 and tau > 0.0:
        sigma = 235.8e-3 * abs(tau) ** 1.256 * (1.0 - 0.625 * tau)  # IAPWS R1-76 eq. 1
    drho = c[C_RHO_W] - rho_a
    ds = d if d > 0.0 else _NAN
    mfp = 6.62e-8 * (eta / 1.818e-5) * (101325.0 / p) * math.sqrt(t / 293.15)
    c_sc = 1.0 + 2.51 * mfp / ds
    x2 = math.log(4.0 * rho_a * drho * c[C_G] * ds**3.0 / (3.0 * eta**2))
    y = 0.0
    for i in range(6, -1, -1):  # Horner, as icing.calc.droplets._polyval
        y = y * x2 + c[C_B2 + i]
    v2 = eta * c_sc * math.exp(y) / (rho_a * ds)
    return v2 if math.isfinite(sigma) else _NAN


@_jit
def _drizzle_growth(qc_in, number, t_res):
    """:func:`icing.calc.warm_rain.drizzle_growth`: Khairoutdinov & Kogan (2000).

    ``dq_r/dt = 1350 q_c^2.47 N_c^-1.79 + 67 (q_c q_r)^1.15`` (autoconversion, their
    eq. 29, and accretion), q_c held, q_r(0) = 0, eight classical Runge-Kutta steps,
    ``q_r <= q_c``; NaN where the droplet number is not positive.
    """
    qc = _max(qc_in, 0.0)
    t = _max(t_res, 0.0)
    nc = number * 1e-6  # m-3 -> cm-3
    rate = 1350.0 * _max(qc, 0.0) ** 2.47 * (nc if nc > 0.0 else _NAN) ** -1.79
    if qc > 0.0:
        auto = rate
    elif qc != qc or not nc > 0.0:
        auto = _NAN
    else:
        auto = 0.0
    acc_coef = 67.0 * qc**1.15
    dt = t / 8.0
    q = 0.0
    for _ in range(8):
        k1 = auto + acc_coef * _max(q, 0.0) ** 1.15
        k2 = auto + acc_coef * _max(q + 0.5 * dt * k1, 0.0) ** 1.15
        k3 = auto + acc_coef * _max(q + 0.5 * dt * k2, 0.0) ** 1.15
        k4 = auto + acc_coef * _max(q + dt * k3, 0.0) ** 1.15
        q = _min(q + dt / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4), qc)
    return _NAN if auto != auto else q


@_jit
def _column_drizzle(w, k, b, n, tau, c):
    """``icing.calc.sld._drizzle_content`` of one sorted column (warm-rain drizzle).

    Source levels: cloud in a warm-topped, deep enough, unseeded layer with liquid and
    droplets; there drizzle grows over its residence time in the layer
    (:func:`icing.calc.warm_rain.layer_drizzle`), then falls (largest content at or
    above). Fills the drizzle and the possible-drizzle levels.
    """
    any_src = False
    for j in range(n):
        src = (
            b[B_CLD, j]
            and w[F_CTT, j] >= c[C_TOP_T_MIN]
            and (w[F_CTH, j] - w[F_CBH, j]) >= c[C_MIN_DEPTH]
            and not b[B_SEEDED, j]
            and w[F_LWC, j] > 0.0
            and w[F_NUM, j] > 0.0
        )
        b[B_SRC, j] = src
        any_src = any_src or src
        w[F_PROD, j] = 0.0
    if any_src:
        _layer_mean_above(w, k, b, n)
        for j in range(n):
            if not b[B_SRC, j]:
                continue
            v_t = _embryo_fall_speed(c[C_EMBRYO_D], w[F_P, j], w[F_T, j], c)
            depth = _max(w[F_CTH, j] - w[F_ZM, j], 0.0)
            t_res = _min(depth / v_t, tau)
            q_r = _drizzle_growth(_layer_mean_at(w, k, n, j), w[F_NUM, j], t_res)
            made = w[F_RHO, j] * q_r
            w[F_PROD, j] = made if math.isfinite(made) else 0.0
    grown = _NAN
    marginal = False
    for j in range(n - 1, -1, -1):
        prod = w[F_PROD, j]
        grown = prod if j == n - 1 else _max(grown, prod)
        w[F_DRZ, j] = grown
        few = b[B_SRC, j] and w[F_NUM, j] <= c[C_FEW_NUMBER]
        marginal = marginal or (few and prod >= c[C_MARGINAL])
        b[B_POSS, j] = marginal and b[B_U, j] and grown < c[C_LWC_MIN]


@_jit
def _envelope(t, c):
    """``np.interp`` of the Appendix O freezing-drizzle LWC envelope at ``t`` [kg m-3]."""
    t_lo, q_lo, t_hi, q_hi = c[C_ENV_T_LO], c[C_ENV_Q_LO], c[C_ENV_T_HI], c[C_ENV_Q_HI]
    if t > t_hi:
        return q_hi
    if t < t_lo:
        return q_lo
    if t == t_hi:
        return q_hi
    if t == t_lo:
        return q_lo
    slope = (q_hi - q_lo) / (t_hi - t_lo)
    return slope * (t - t_lo) + q_lo


@_jit
def _column_fzdz(w, b, n, c):
    """Freezing drizzle and the per-level classes (``icing.calc.sld._diagnose_block``).

    Warm-rain drizzle of at least ``DRIZZLE_LWC_MIN``, or model rain without a melting
    layer above, at a cold level not freezing rain; LWC capped by the 14 CFR 25
    Appendix O envelope (``_sld_content``), the model's content kept where larger.
    """
    for j in range(n):
        cold = b[B_COLD, j]
        fzra = b[B_FZRA, j]
        md = cold and b[B_MRAIN, j] and not b[B_WA, j]
        fzdz = cold and (w[F_DRZ, j] >= c[C_LWC_MIN] or md) and not fzra
        b[B_FZDZ, j] = fzdz
        b[B_POSS, j] = b[B_POSS, j] and cold and not fzra and not fzdz
        if fzdz:
            capped = _min(w[F_DRZ, j], _envelope(w[F_T, j], c))
            w[F_SLWC, j] = _max(w[F_RAIN, j] * w[F_RHO, j], capped) if md else capped
            w[F_SMVD, j] = c[C_FZDZ_MVD]
            w[F_SDMAX, j] = c[C_FZDZ_DMAX]
        elif not fzra:
            w[F_SLWC, j] = 0.0
            w[F_SMVD, j] = _NAN
            w[F_SDMAX, j] = _NAN


@_jit
def _surface_type(w, k, b, n, n_use, rate, any_hydro, ice_origin, codes_, c):
    """``icing.calc.sld._surface_type``: the type at the lowest usable level.

    Returns the type code and the Bourgouin (2000) melting and refreezing areas.
    """
    if n_use == 0:
        return codes_[I_GAP], _NAN, _NAN
    t0 = w[F_T, 0]
    cold_sfc = t0 <= c[C_T0]
    warm_sfc = t0 > c[C_T0]
    evidence = rate > c[C_PRECIP_MIN] or any_hydro
    kc0 = k[K_FC, 0]
    pa_sfc = w[F_CPOS, min(max(kc0, 0), n - 1)]
    cold_aloft = kc0 < n
    liquid_drizzle_0 = w[F_DRZ, 0] >= c[C_LWC_MIN]
    ptype = codes_[P_NONE]
    if cold_sfc:
        if evidence:
            ptype = codes_[P_SNOW] if ice_origin else codes_[P_FZDZ]
        if b[B_PRECIP, 0] and b[B_MELTED, 0] and not b[B_FZRA, 0]:
            ptype = codes_[P_PELLETS]
        if b[B_FZDZ, 0]:
            ptype = codes_[P_FZDZ]
        if b[B_FZRA, 0]:
            ptype = codes_[P_FZRA]
    if warm_sfc and (evidence or liquid_drizzle_0):
        if ice_origin and cold_aloft and pa_sfc < c[C_PA_SURFACE_SNOW]:
            ptype = codes_[P_SNOW]
        elif liquid_drizzle_0 and not ice_origin:
            ptype = codes_[P_DZ]
        else:
            ptype = codes_[P_RA]
    if cold_sfc:
        return ptype, w[F_PA, 0], w[F_NA, 0]
    if warm_sfc:
        return ptype, pa_sfc, 0.0
    return ptype, _NAN, _NAN


@_jit
def _column_order(r, p, t, z, valid, below, k, b, n):
    """Usable levels of column ``r`` and their order (``icing.calc.sld._sorted_block``).

    Usable: valid, finite pressure, temperature and height, positive pressure, above
    the ground. Levels already in order (usable ones by height, the others after
    them) keep it; otherwise the stable sort of ``np.argsort(kind="stable")`` on the
    heights (+inf for unusable levels), as an insertion sort. Returns the usable count.
    """
    need = False
    last = -_INF
    n_use = 0
    for j in range(n):
        pj, tj, zj = p[r, j], t[r, j], z[r, j]
        u = (
            valid[r, j]
            and not below[r, j]
            and math.isfinite(pj)
            and math.isfinite(tj)
            and math.isfinite(zj)
            and pj > 0
        )
        b[B_UIN, j] = u
        key = zj if u else _INF
        need = need or key < last
        last = key
        n_use += u
        k[K_ORDER, j] = j
    if need:
        for i in range(1, n):
            x = k[K_ORDER, i]
            kx = z[r, x] if b[B_UIN, x] else _INF
            j = i - 1
            while j >= 0:
                y = k[K_ORDER, j]
                if not (z[r, y] if b[B_UIN, y] else _INF) > kx:
                    break
                k[K_ORDER, j + 1] = y
                j -= 1
            k[K_ORDER, j + 1] = x
    return n_use


@_jit
def _gather(r, levels, p, t, z, cloud, optional, flags, c, w, k, b, n):
    """Fill the sorted inputs of column ``r`` (``icing.calc.sld._sorted_block``).

    ``levels``: lwc, droplet number, cloud-top temperature, top and base heights,
    relative humidity (m, level each); ``optional``: rain, snow, cloud ice, ice
    saturation (used where ``flags`` say given; rain and snow 0 otherwise).
    """
    lwc, number, ctt, cth, cbh, rh = levels
    rain, snow, ice, fi = optional
    has_rain, has_snow, has_ice, has_fi = flags[0], flags[1], flags[2], flags[3]
    for i in range(n):
        j = k[K_ORDER, i]
        u = b[B_UIN, j]
        b[B_U, i] = u
        w[F_P, i] = p[r, j] if u else _NAN
        w[F_T, i] = t[r, j] if u else _NAN
        w[F_Z, i] = z[r, j]
        w[F_ZM, i] = z[r, j] if u else _NAN
        b[B_CLD, i] = cloud[r, j] and u
        w[F_LWC, i] = lwc[r, j]
        w[F_NUM, i] = number[r, j]
        w[F_CTT, i] = ctt[r, j]
        w[F_CTH, i] = cth[r, j]
        w[F_CBH, i] = cbh[r, j]
        w[F_RH, i] = rh[r, j]
        w[F_RAIN, i] = rain[r, j] if has_rain else 0.0
        w[F_SNOW, i] = snow[r, j] if has_snow else 0.0
        w[F_ICE, i] = ice[r, j] if has_ice else 0.0
        w[F_FI, i] = fi[r, j] if has_fi else _NAN
        w[F_RHO, i] = w[F_P, i] / (c[C_RD] * w[F_T, i])  # thermo.air_density, dry


@_jit
def _scatter(r, below, codes_, w, k, b, n, out):
    """Back to the input order, gaps and below-ground levels marked (``_unsorted_result``)."""
    cls, lwc, mvd, dmax, drz, poss = out
    complete = True
    for i in range(n):
        j = k[K_ORDER, i]
        if b[B_U, i]:
            if b[B_FZRA, i]:
                cls[r, j] = codes_[I_RAIN]
            elif b[B_FZDZ, i]:
                cls[r, j] = codes_[I_DRIZZLE]
            else:
                cls[r, j] = codes_[I_NONE]
            lwc[r, j] = w[F_SLWC, i]
            mvd[r, j] = w[F_SMVD, i]
            dmax[r, j] = w[F_SDMAX, i]
            drz[r, j] = w[F_DRZ, i]
            poss[r, j] = b[B_POSS, i]
        else:
            ground = below[r, j]
            complete = complete and ground
            cls[r, j] = codes_[I_NONE] if ground else codes_[I_GAP]
            lwc[r, j] = 0.0 if ground else _NAN
            mvd[r, j] = _NAN
            dmax[r, j] = _NAN
            drz[r, j] = 0.0 if ground else _NAN
            poss[r, j] = False
    return complete


@_jit
def _quiet(r, below, codes_, b, n, out):
    """Answer for a column without cloud, hydrometeors or precipitation (``_sld_quiet``).

    No SLD, no possible drizzle, type "none" (gap without a usable level); the
    Bourgouin areas are not computed for it. Returns the type and completeness.
    """
    cls, lwc, mvd, dmax, drz, poss = out
    complete = True
    any_usable = False
    for j in range(n):
        u = b[B_UIN, j]
        any_usable = any_usable or u
        gap = not u and not below[r, j]
        complete = complete and not gap
        cls[r, j] = codes_[I_GAP] if gap else codes_[I_NONE]
        lwc[r, j] = _NAN if gap else 0.0
        mvd[r, j] = _NAN
        dmax[r, j] = _NAN
        drz[r, j] = _NAN if gap else 0.0
        poss[r, j] = False
    return (codes_[P_NONE] if any_usable else codes_[I_GAP]), complete


@_jit
def diagnose_block(inputs, optional, cloud, valid, below, columns, flags, tau, c, codes_, out):
    """Diagnose SLD in a block of columns, one column at a time.

    :func:`icing.calc.sld.diagnose_sld` (the reference) on arrays shaped (m, level),
    any level order. ``inputs``: pressure, temperature, height, lwc, droplet number,
    cloud-top temperature, top and base heights, relative humidity; ``optional``:
    rain, snow, cloud ice, ice saturation (each (m, level), or a placeholder where
    ``flags`` (bool) say absent); ``columns``: precipitation rate (NaN: none), whether
    the model's rain or snow was given (bool), whether to diagnose the column (bool;
    False: the quiet answer of :func:`_quiet`, without the Bourgouin areas). ``out``:
    per-level sld_class, sld_lwc, sld_mvd, sld_dmax, drizzle_content,
    possible_drizzle, then per-column precip_type, melting and refreezing areas,
    complete; filled in place.
    """
    p, t, z, lwc, number, ctt, cth, cbh, rh = inputs
    levels = (lwc, number, ctt, cth, cbh, rh)
    rate, given, active = columns
    cls, s_lwc, s_mvd, s_dmax, drz, poss, ptype, melting, refreezing, complete = out
    per_level = (cls, s_lwc, s_mvd, s_dmax, drz, poss)
    m, n = p.shape
    w = np.empty((26, n))
    k = np.empty((7, n), np.int64)
    b = np.zeros((16, n), np.bool_)
    for r in range(m):
        n_use = _column_order(r, p, t, z, valid, below, k, b, n)
        if not active[r]:
            ptype[r], complete[r] = _quiet(r, below, codes_, b, n, per_level)
            melting[r] = refreezing[r] = _NAN
            continue
        _gather(r, levels, p, t, z, cloud, optional, flags, c, w, k, b, n)
        _column_areas(w, k, b, n, c)
        any_hydro = _column_fzra(w, k, b, n, rate[r], given[r], flags[0], flags[1], c)
        ice_origin = _column_seeding(w, k, b, n, flags[3], c)
        _column_drizzle(w, k, b, n, tau, c)
        _column_fzdz(w, b, n, c)
        ptype[r], melting[r], refreezing[r] = _surface_type(
            w, k, b, n, n_use, rate[r], any_hydro, ice_origin, codes_, c
        )
        complete[r] = _scatter(r, below, codes_, w, k, b, n, per_level)
