"""Read diagnosed columns off at flight altitudes, and the airframe's icing there.

Columns are diagnosed whole (:func:`icing.calc.diagnose_columns`); only then are
their fields read off at the targets (the flight altitude, the rows of the
altitude curtain), linearly between the two bracketing levels. Where several
candidate columns stand near a sample, the worst candidate is kept: a cloudy and
a dry sounding are never blended.
"""

from __future__ import annotations

import numpy as np

from icing import codes
from icing.calc.airframe import airframe_icing
from icing.constants import IN_CLOUD_LWC

__all__ = ["read_off", "icing_at", "worst_over_candidates", "take_last"]

#: Depth below a column's lowest level over which its values are held (near-surface air). [m]
_EXTRAPOLATE_M = 300.0

#: Fields of ColumnDiagnosis interpolated linearly in the vertical.
_LINEAR = (
    "temperature",
    "relative_humidity",
    "lwc",
    "lwc_model",
    "lwc_diagnosed",
    "droplet_number",
    "mvd",
    "glaciation",
    "sld_lwc",
    "sld_mvd",
)


def _vertical_coordinate(diag, reference):
    """Monotonic vertical coordinate of the diagnosed levels: height, or -ln p."""
    if reference == "pressure":
        return -np.log(np.asarray(diag.pressure, float))
    return np.asarray(diag.height, float)


def read_off(diag, column_index, target, *, reference="msl", fields=None):
    """Read diagnosed column fields off at target altitudes.

    Parameters
    ----------
    diag : ColumnDiagnosis
        Diagnosis of m columns, fields shaped (m, level).
    column_index : ndarray of int, shape S
        The column of every target (-1: none, which reads as invalid).
    target : ndarray, shape S
        Target height MSL [m] (``reference="msl"``) or pressure [Pa]
        (``reference="pressure"``).
    reference : {"msl", "pressure"}
    fields : collection of str, optional
        Only these of the ``_LINEAR`` fields (``lwc`` always); the others are left out.
        Default all.

    Returns
    -------
    dict of ndarray, shape S
        The ``_LINEAR`` fields interpolated linearly, ``sld_class`` the worse of the
        two bracketing levels, ``basis`` of the level with more liquid, ``pressure``
        log-linearly, ``valid`` (both levels valid, inside the column, column
        present) and ``below_ground``.
    """
    z = _vertical_coordinate(diag, reference)  # (m, L)
    m, nlev = z.shape
    order = np.argsort(np.where(np.isfinite(z), z, np.inf), axis=-1)
    zs = np.take_along_axis(z, order, -1)
    ci = np.asarray(column_index)
    present = ci >= 0
    c = np.where(present, ci, 0)
    tgt = np.asarray(target, float)
    tz = -np.log(tgt) if reference == "pressure" else tgt
    col_z = zs[c]  # S + (L,)
    with np.errstate(invalid="ignore"):
        above = np.sum(col_z <= tz[..., None], axis=-1)  # number of levels at or below
    lo = np.clip(above - 1, 0, nlev - 2)
    hi = lo + 1
    del col_z  # the largest temporary: (targets, levels)
    z_lo, z_hi = zs[c, lo], zs[c, hi]
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.clip((tz - z_lo) / (z_hi - z_lo), 0.0, 1.0)
    inside = present & np.isfinite(tz) & (tz >= z_lo) & (tz <= z_hi)
    # Between the ground and the lowest forecast level the lowest level's values hold,
    # over a limited depth only (a model's lowest level is its near-surface air).
    z_min = zs[c, 0]
    depth = np.log(1.0 + _EXTRAPOLATE_M / 8000.0) if reference == "pressure" else _EXTRAPOLATE_M
    near_base = present & np.isfinite(tz) & (tz < z_min) & (tz >= z_min - depth) & (lo == 0)
    inside = inside | near_base
    # flat indices of the two bracketing levels of every target, in file level order
    f_lo = c * nlev + order[c, lo]
    f_hi = c * nlev + order[c, hi]

    def pick(field):
        a = np.broadcast_to(np.asarray(field), (m, nlev)).reshape(-1)
        return a[f_lo], a[f_hi]

    out = {}
    wanted = _LINEAR if fields is None else [n for n in _LINEAR if n in fields or n == "lwc"]
    for name in wanted:
        a, b = pick(getattr(diag, name))
        a = np.asarray(a, float)
        b = np.asarray(b, float)
        if name in ("mvd", "sld_mvd", "droplet_number", "glaciation"):
            # a size exists only where its population does: take the other level's size
            a = np.where(np.isfinite(a), a, b)
            b = np.where(np.isfinite(b), b, a)
        else:
            a = np.nan_to_num(a, nan=0.0) if name.startswith(("lwc", "sld_lwc")) else a
            b = np.nan_to_num(b, nan=0.0) if name.startswith(("lwc", "sld_lwc")) else b
        out[name] = a + w * (b - a)
    pa, pb = pick(diag.pressure)
    out["pressure"] = np.exp(np.log(pa) + w * (np.log(pb) - np.log(pa)))
    ha, hb = pick(diag.height)
    out["height"] = ha + w * (hb - ha)
    sa, sb = pick(diag.sld_class)
    # GAP (-1) marks an unusable level; validity is carried by ``valid`` below
    out["sld_class"] = np.maximum(np.maximum(sa, sb), codes.SLD_NONE)
    mu = np.broadcast_to(np.asarray(getattr(diag, "spectrum_shape", 2.0), float), z.shape)
    mu_a, mu_b = pick(mu)
    out["spectrum_shape"] = np.where(
        np.isfinite(mu_a), mu_a, np.where(np.isfinite(mu_b), mu_b, 2.0)
    )
    ba, bb = pick(diag.basis)
    la, lb = pick(diag.lwc)
    out["basis"] = np.where(np.nan_to_num(la) >= np.nan_to_num(lb), ba, bb)
    va, vb = pick(diag.valid)
    ga, gb = pick(diag.below_ground)
    out["below_ground"] = present & (ga & ((w < 0.5) | gb))
    out["valid"] = inside & va & vb & ~out["below_ground"]
    out["cloud"] = out["lwc"] >= IN_CLOUD_LWC
    # flags: glaciated by the model only where both levels are; possible drizzle where
    # either is (a stated possibility is never interpolated away)
    for name, both in (("model_glaciated", True), ("possible_drizzle", False)):
        flag = getattr(diag, name, None)
        if flag is None:
            out[name] = np.zeros(out["valid"].shape, bool)
            continue
        fa, fb = pick(np.asarray(flag, bool))
        out[name] = (fa & fb) if both else (fa | fb)
    return out


def icing_at(airframe, state, airspeed):
    """Airframe icing at read-off states; severity ``codes.GAP`` where a state is invalid.

    Returns
    -------
    (AirframeIcing, ndarray)
        The collector results and the severity with gaps marked.
    """
    result = airframe_icing(
        airframe,
        lwc=np.where(state["valid"], state["lwc"], np.nan),
        mvd=state["mvd"],
        temperature=state["temperature"],
        pressure=state["pressure"],
        spectrum_shape=state.get("spectrum_shape", 2.0),
        sld_lwc=np.nan_to_num(state["sld_lwc"]),
        sld_mvd=state["sld_mvd"],
        sld_class=state["sld_class"],
        airspeed=airspeed,
        relative_humidity=np.clip(np.nan_to_num(state["relative_humidity"], nan=1.0), 0, 1.2),
        glaciation=state.get("glaciation"),
        model_glaciated=state.get("model_glaciated"),
        basis=state.get("basis"),
    )
    sev = np.where(state["valid"], result.severity, codes.GAP)
    return result, sev


def worst_over_candidates(sev, rate):
    """Index of the worst candidate along the last axis (severity, then rate)."""
    score = np.where(sev == codes.GAP, -1e12, sev * 1e6 + np.nan_to_num(rate))
    return np.argmax(score, axis=-1)


def take_last(a, k):
    """Pick ``a[..., k]`` per leading index (``k`` shaped like ``a`` without its last axis)."""
    a = np.asarray(a)
    return np.take_along_axis(a, k[..., None], -1)[..., 0]
