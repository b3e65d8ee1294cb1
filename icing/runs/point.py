"""One forecast column level by level, for one airframe (``icing profile``)."""

from __future__ import annotations

import numpy as np

from icing import codes
from icing.calc.airspeed import PHASE_LEVEL
from icing.calc.severity import NOTE_POSSIBLE_DRIZZLE, severity_reasons
from icing.constants import KT, T0
from icing.hazards.readoff import icing_at, read_off

__all__ = ["diagnose_point"]


def diagnose_point(
    forecast, lat, lon, time=None, *, airframe=None, column_options=None, tas_kt=None
):
    """Diagnose the forecast column at one point, level by level (``icing profile``).

    Each level is flown level at ``tas_kt`` when given, else at the airframe's
    speed schedule for that altitude (its level-flight speed, converted to true
    airspeed with the column's own pressure and temperature).

    Returns
    -------
    dict
        ``levels`` (list of dicts per level, ascending height), ``candidates`` used,
        ``covered``, ``gap_reason``; the worst candidate column is shown.
    """
    from icing.airframes import load_airframe
    from icing.calc.column import ColumnOptions, diagnose_columns

    column_options = column_options or ColumnOptions()
    if time is None:
        time = np.asarray(forecast.valid_times)[0]
    t = np.array([np.datetime64(time, "ms")])
    colset = forecast.columns_at(np.array([float(lat)]), np.array([float(lon)]), t)
    if not bool(np.asarray(colset.covered)[0]):
        return {
            "covered": False,
            "gap_reason": str(np.asarray(colset.gap_reason)[0]),
            "levels": [],
        }
    diag = diagnose_columns(**colset.columns, options=column_options)
    cands = np.array([c for c in np.asarray(colset.candidates)[0] if c >= 0])
    af = load_airframe(airframe) if isinstance(airframe, str) else airframe
    # every candidate column read off at its own levels: the same read-off as a route
    height = np.asarray(diag.height, float)[cands]  # (k, L)
    ci = np.broadcast_to(cands[:, None], height.shape)
    state = read_off(diag, ci, height)
    res = sev = tas = None
    if af is not None:
        tas = _level_airspeeds(af, state, tas_kt)
        res, sev = icing_at(af, state, tas)
        worst = np.where(sev == codes.GAP, -1, sev).max(axis=1)
    else:
        worst = np.zeros(len(cands))
    # the worst candidate: highest severity, then most liquid in the column
    k = int(np.lexsort((np.nansum(state["lwc"], axis=1), worst))[-1])
    c = int(cands[k])
    possible = state.get("possible_drizzle", np.zeros(height.shape, bool))
    icing = None if res is None else (res, sev, tas, possible)
    levels = [_level_row(diag, c, i, k, icing) for i in np.argsort(height[k])]
    return {
        "covered": True,
        "gap_reason": "",
        "candidates": len(cands),
        "levels": levels,
        "precip_type": codes.PRECIP_TYPES[int(diag.precip_type[c])],
        "freezing_level_m": _r(diag.freezing_level[c], 1),
        "warnings": list(diag.warnings),
        "airframe": None if af is None else af.name,
        "airspeed": None
        if af is None
        else (
            f"{float(tas_kt):g} kt true at every level"
            if tas_kt is not None
            else "the airframe's level-flight speed schedule at each altitude"
        ),
    }


def _level_row(diag, c, i, k, icing):
    """One level of column ``c`` (candidate ``k``) as a JSON-able dict."""
    unknown = not diag.valid[c, i] and not diag.below_ground[c, i]  # a coverage gap
    row = {
        "pressure_hpa": _r(diag.pressure[c, i] / 100.0, 2),
        "height_m": _r(diag.height[c, i], 1),
        "temperature_c": _r(diag.temperature[c, i] - T0, 2),
        "relative_humidity_pct": _r(diag.relative_humidity[c, i] * 100, 1),
        "cloud": bool(diag.cloud[c, i]),
        "lwc_g_m3": None if unknown else _r(np.nan_to_num(diag.lwc[c, i]) * 1000, 4),
        "basis": "coverage-gap"
        if unknown
        else str(codes.words(diag.basis[c, i], codes.BASIS, gap="coverage-gap")),
        "droplet_number_cm3": _r(diag.droplet_number[c, i] / 1e6, 1),
        "mvd_um": _r(diag.mvd[c, i] * 1e6, 2),
        "glaciation": _r(diag.glaciation[c, i], 3),
        "sld": str(codes.words(diag.sld_class[c, i], codes.SLD_CLASSES, gap="coverage-gap")),
        "below_ground": bool(diag.below_ground[c, i]),
        "valid": bool(diag.valid[c, i]),
        "collection_efficiency": None,
        "accretion_rate_mm_h": None,
        "ice_type": None,
        "severity": None,
        "tas_kt": None,
        "reasons": [],
    }
    if icing is None:
        return row
    res, sev, tas, possible = icing
    notes = int(res.notes[k, i]) | (NOTE_POSSIBLE_DRIZZLE if possible[k, i] else 0)
    row.update(
        collection_efficiency=_r(res.collection_efficiency[k, i], 4),
        accretion_rate_mm_h=_r(res.accretion_rate_mm_h[k, i], 3),
        ice_type=None if sev[k, i] == codes.GAP else codes.ICE_TYPES[int(res.ice_type[k, i])],
        severity=str(codes.words(sev[k, i], codes.SEVERITY, gap="coverage-gap")),
        tas_kt=_r(tas[k, i] / KT, 1),
        reasons=[] if sev[k, i] == codes.GAP else severity_reasons(notes, tas_kt=tas[k, i] / KT),
    )
    return row


def _level_airspeeds(airframe, state, tas_kt):
    """Return the true airspeed [m/s] of every level: ``tas_kt`` if given, else the schedule's."""
    if tas_kt is not None:
        return np.full(state["pressure"].shape, float(tas_kt) * KT)
    return airframe.schedule.true_airspeed(
        PHASE_LEVEL, state["pressure"], state["temperature"], state["height"]
    )


def _r(x, nd):
    x = float(x)
    return round(x, nd) if np.isfinite(x) else None
