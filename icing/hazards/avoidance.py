"""Candidate altitudes with less icing for a stretch of the route.

For an icing segment the whole stretch is evaluated again at other altitudes of
the curtain (``icing.results.Curtain``): every multiple of the altitude step
from the floor (the terrain under the stretch plus a stated margin, or an
operator's minimum) to the ceiling (the airframe's ceiling, or a drone's
maximum height above the ground). The nearest altitude above and below the
planned one with no icing over the whole stretch is reported, or the least
severe one when none is clear, together with the icing met while climbing or
descending to it. These are candidate altitudes to check against official
advisories, never advice to fly.

Rules of the search (all conservative, all stated in the ``basis`` text):

* a candidate altitude takes the worse of the two curtain rows around it (a
  category is never interpolated);
* a candidate with any coverage gap (``codes.GAP``) on the stretch is never
  proposed, nor one below the terrain plus margin, nor one outside the
  curtain's altitude range;
* a candidate with supercooled large drops in sub-freezing air on the stretch
  is never called clear, whatever its severity code;
* a candidate in cloud is called clear only at least ``CLOUD_WARM_MARGIN_C``
  (+2 C, our choice) above 0 C all along the stretch;
* a warm layer (above 0 degC over the whole stretch) is a real option; the
  freezing rain beneath it (``codes.SLD_RAIN`` below the candidate) is named,
  because the descent out of it passes through that rain;
* the transit is flown at the stated climb or descent rate and true airspeed
  and ends where the stretch begins (the level change is made before the
  stretch); the return to the planned altitude starts where it ends. Both are
  sampled through every altitude between, and the worst severity met, its
  minutes and any coverage gap on the way are reported.
"""

from __future__ import annotations

import numpy as np

from icing import codes
from icing.constants import FT
from icing.errors import InputError

__all__ = [
    "CANDIDATE_WORDING",
    "CLOUD_WARM_MARGIN_C",
    "candidate_altitudes",
    "candidates_summary",
    "segment_candidates",
    "annotate_segments",
]

#: How every candidate altitude is worded in outputs.
CANDIDATE_WORDING = "candidate altitudes to check against official advisories; not advice to fly"
#: Margin above 0 C a candidate altitude in cloud needs to count as clear [degC]: our
#: choice (no published value used), for the 1-2 K error of forecast temperatures near
#: 0 C and the local cooling over upper wing surfaces.
CLOUD_WARM_MARGIN_C = 2.0

_FPM = FT / 60.0  # one foot per minute [m/s]
_TRANSIT_POINTS = 64  # points along each climb/descent path (about 100 ft apart or closer)


def _stretch_indices(n, samples):
    """Return the sample indices (ascending ints) selected by a slice, mask or index array."""
    if isinstance(samples, slice):
        idx = np.arange(n)[samples]
    else:
        arr = np.asarray(samples)
        if arr.dtype == bool:
            if arr.shape != (n,):
                raise InputError(
                    f"sample mask has shape {arr.shape}, expected ({n},)",
                    where="candidate_altitudes(samples=...)",
                    fix="pass a boolean mask with one value per curtain sample",
                )
            idx = np.flatnonzero(arr)
        else:
            idx = np.unique(arr.astype(int).ravel())
            if idx.size and (idx[0] < 0 or idx[-1] >= n):
                raise InputError(
                    f"sample indices outside 0..{n - 1}",
                    where="candidate_altitudes(samples=...)",
                    fix="pass indices of curtain samples",
                )
    if idx.size == 0:
        raise InputError(
            "the stretch selects no curtain samples",
            where="candidate_altitudes(samples=...)",
            fix="pass a slice, mask or indices selecting at least one sample",
        )
    return np.sort(idx)


def _bracket_rows(altitudes_m, heights_m):
    """Rows just below and just above each height (equal where a row matches), and inside."""
    alt = np.asarray(altitudes_m, dtype=float)
    h = np.asarray(heights_m, dtype=float)
    hi = np.searchsorted(alt, h, side="left")
    lo = np.searchsorted(alt, h, side="right") - 1
    inside = (lo >= 0) & (hi <= alt.size - 1)
    lo_c = np.clip(lo, 0, alt.size - 1)
    hi_c = np.clip(hi, 0, alt.size - 1)
    return lo_c, hi_c, inside


def _worst_pair(a, b):
    """Worse of two severity arrays, GAP (-1) winning over every code."""
    gap = (a == codes.GAP) | (b == codes.GAP)
    return np.where(gap, codes.GAP, np.maximum(a, b))


def _transit(curtain, start_km, end_km, h0_m, heights_m, *, climb_m_s, descent_m_s, tas):
    """Worst severity, icing minutes and gap flag met changing level to/from each candidate.

    The level change to a candidate ends at ``start_km`` (begins ``d`` earlier,
    ``d = tas * |dh| / rate``); the return starts at ``end_km``. Both paths are
    sampled at ``_TRANSIT_POINTS`` altitudes; each point takes the worse of the
    two curtain columns and the two rows around it.
    """
    dist = np.asarray(curtain.distance_km, dtype=float)
    h = np.asarray(heights_m, dtype=float)[:, None]  # (c, 1)
    dh = h - h0_m
    rate_to = np.where(dh > 0, climb_m_s, descent_m_s)
    rate_back = np.where(dh > 0, descent_m_s, climb_m_s)
    f = np.linspace(0.0, 1.0, _TRANSIT_POINTS)[None, :]  # (1, k)
    t_to = np.abs(dh) / rate_to  # (c, 1) [s]
    t_back = np.abs(dh) / rate_back
    # Entry: h0 at start - d_to, candidate at start.  Return: candidate at end, h0 at end + d.
    km_to = start_km - tas * t_to / 1000.0 * (1.0 - f)
    km_back = end_km + tas * t_back / 1000.0 * f
    alt_to = h0_m + dh * f
    alt_back = h - dh * f
    km = np.concatenate([km_to, km_back], axis=1)
    alt = np.concatenate([alt_to, alt_back], axis=1)
    km = np.clip(km, dist[0], dist[-1])
    c_hi = np.clip(np.searchsorted(dist, km, side="left"), 0, dist.size - 1)
    c_lo = np.clip(np.searchsorted(dist, km, side="right") - 1, 0, dist.size - 1)
    r_lo, r_hi, inside = _bracket_rows(curtain.altitudes_m, alt)
    sev = np.asarray(curtain.severity)
    below = np.asarray(curtain.below_ground, dtype=bool)
    worst = _worst_pair(
        _worst_pair(sev[c_lo, r_lo], sev[c_lo, r_hi]),
        _worst_pair(sev[c_hi, r_lo], sev[c_hi, r_hi]),
    )
    ground = below[c_lo, r_lo] | below[c_hi, r_lo]
    gap = ((worst == codes.GAP) & ~ground) | ~inside
    icing = np.where(worst > codes.SEV_NONE, worst, codes.SEV_NONE)
    k = _TRANSIT_POINTS
    minutes = (
        (icing[:, :k] > 0).mean(axis=1) * t_to[:, 0]
        + (icing[:, k:] > 0).mean(axis=1) * t_back[:, 0]
    ) / 60.0
    return {
        "worst": icing.max(axis=1),
        "entry": icing[:, :k].max(axis=1),
        "return": icing[:, k:].max(axis=1),
        "icing_min": minutes,
        "gap": gap.any(axis=1),
        "minutes": (t_to[:, 0] + t_back[:, 0]) / 60.0,
    }


def _ft_value(value_ft, step_ft):
    """Altitude in feet as an int when the step is whole feet, else a float."""
    return int(round(value_ft)) if float(step_ft).is_integer() else round(float(value_ft), 1)


def candidate_altitudes(
    curtain,
    samples,
    *,
    flight_altitude_m,
    ceiling_m=None,
    floor_m=None,
    terrain_margin_ft=1000.0,
    max_agl_m=None,
    step_ft=1000.0,
    climb_rate_fpm=500.0,
    descent_rate_fpm=500.0,
    tas_m_s,
):
    """Nearest altitudes above and below with no icing along a stretch of the route.

    Parameters
    ----------
    curtain : icing.results.Curtain
        The diagnosis on the (sample, altitude) grid.
    samples : slice, bool ndarray (n,) or int ndarray
        The curtain samples of the stretch (an icing segment).
    flight_altitude_m : float
        The planned altitude over the stretch, in the curtain's reference. [m]
    ceiling_m : float, optional
        Highest altitude to consider (the airframe's ceiling); default the top of
        the curtain. [m]
    floor_m : float, optional
        Lowest altitude to consider (an operator's minimum); the terrain under the
        stretch plus ``terrain_margin_ft`` always applies as well. [m]
    terrain_margin_ft : float
        Height above the highest terrain of the stretch below which no altitude
        is proposed (1,000 ft for aircraft; a drone's minimum height). [ft]
    max_agl_m : float, optional
        Largest height above the ground allowed (drones): the ceiling becomes at
        most the lowest terrain of the stretch plus this. [m]
    step_ft : float
        Altitude step; candidates are its multiples. [ft]
    climb_rate_fpm, descent_rate_fpm : float
        Rates of the level change to the candidate and back. [ft/min]
    tas_m_s : float
        True airspeed during the level change. [m/s]

    Returns
    -------
    dict
        ``above`` and ``below`` (dict or None) with ``altitude_ft``, ``altitude_m``,
        ``flight_level`` (pressure reference only, else None), ``change_ft``,
        ``clear`` (bool), ``worst_severity`` (word), ``sld`` (worst SLD class word at
        that altitude), ``warm_layer`` (bool), ``freezing_rain_below`` (bool),
        ``transit_severity`` (word, the worse of ``entry_severity`` and
        ``return_severity``), ``transit_icing_min``, ``transit_min``,
        ``transit_gap`` (bool) and ``note``; ``ice_free_altitudes_ft`` (every clear
        candidate, ascending, multiples of ``step_ft``); ``ice_free_flight_levels``
        (pressure reference only); ``gap_altitudes_ft`` (candidates refused for a
        coverage gap); ``planned_altitude_ft``, ``floor_ft``, ``ceiling_ft``,
        ``stretch_km``; ``text`` (one line naming both options, worded as
        candidates); ``basis`` (the wording and the rules).

    Raises
    ------
    InputError
        When the stretch selects no sample or a rate or speed is not positive.

    Notes
    -----
    The search rules are listed in the module docstring. It is a screening of
    the forecast curtain, not a route clearance: a "clear" altitude is only as
    good as the forecast and the diagnosis behind it.

    Examples
    --------
    >>> import numpy as np
    >>> from icing.hazards.results import Curtain
    >>> alt = np.arange(0, 6001, 304.8)                       # every 1,000 ft
    >>> sev = np.where((alt > 1000) & (alt < 2500), 2, 0)[None, :].repeat(3, 0)
    >>> cur = Curtain(np.array([0.0, 1.0, 2.0]), alt, "msl", sev, np.zeros(sev.shape, bool),
    ...               np.full(sev.shape, -5.0), sev > 0, np.zeros_like(sev), sev > 0,
    ...               np.zeros(sev.shape), np.zeros(3))
    >>> out = candidate_altitudes(cur, slice(None), flight_altitude_m=6000 * 0.3048,
    ...                           tas_m_s=60.0, ceiling_m=5000.0)
    >>> out["above"]["altitude_ft"], out["below"]["altitude_ft"]
    (9000, 3000)
    """
    for name, value in (
        ("climb_rate_fpm", climb_rate_fpm),
        ("descent_rate_fpm", descent_rate_fpm),
        ("tas_m_s", tas_m_s),
        ("step_ft", step_ft),
    ):
        if not np.isfinite(value) or value <= 0:
            raise InputError(
                f"{name} must be a positive number, got {value!r}",
                where="candidate_altitudes",
                fix=f"pass a positive {name}",
            )
    dist = np.asarray(curtain.distance_km, dtype=float)
    idx = _stretch_indices(dist.size, samples)
    st = _stretch(curtain, idx)
    h0 = float(flight_altitude_m)
    grid = _candidate_grid(
        st, floor_m, terrain_margin_ft, ceiling_m, max_agl_m, step_ft, curtain.altitudes_m
    )
    ev = _evaluate(st, grid["cand_m"])
    if not st["terrain_known"]:
        # unknown terrain under the stretch: nothing lower than planned is proposed
        ev["eligible"] &= grid["cand_m"] >= h0 - 1e-6
    start_km, end_km = float(dist[idx[0]]), float(dist[idx[-1]])
    ev["transit"] = _transit(
        curtain,
        start_km,
        end_km,
        h0,
        grid["cand_m"],
        climb_m_s=climb_rate_fpm * _FPM,
        descent_m_s=descent_rate_fpm * _FPM,
        tas=float(tas_m_s),
    )
    pressure = getattr(curtain, "altitude_reference", "msl") == "pressure"
    cand_ft, clear = grid["cand_ft"], ev["clear"]
    above = _pick(ev, grid, h0, step_ft, pressure, "above")
    below = _pick(ev, grid, h0, step_ft, pressure, "below")
    rules = {
        "step_ft": step_ft,
        "terrain_margin_ft": terrain_margin_ft,
        "floor_m": floor_m,
        "max_agl_m": max_agl_m,
        "climb_rate_fpm": climb_rate_fpm,
        "descent_rate_fpm": descent_rate_fpm,
        "tas_m_s": tas_m_s,
    }
    return {
        "above": above,
        "below": below,
        "text": _one_line(start_km, end_km, above, below),
        "ice_free_altitudes_ft": [_ft_value(v, step_ft) for v in cand_ft[clear]],
        "ice_free_flight_levels": (
            [int(round(v / 100.0)) for v in cand_ft[clear]] if pressure else None
        ),
        "gap_altitudes_ft": [_ft_value(v, step_ft) for v in cand_ft[ev["gap"]]],
        "planned_altitude_ft": _ft_value(h0 / FT, 1.0),
        "floor_ft": _ft_value(grid["k_lo"] * step_ft, step_ft) if cand_ft.size else None,
        "ceiling_ft": _ft_value(grid["k_hi"] * step_ft, step_ft) if cand_ft.size else None,
        "stretch_km": [round(start_km, 3), round(end_km, 3)],
        "altitude_reference": getattr(curtain, "altitude_reference", "msl"),
        "terrain_known": st["terrain_known"],
        "basis": _basis_text(start_km, end_km, st["terrain_known"], **rules),
    }


def _stretch(curtain, idx):
    """Return the curtain columns of a stretch, and the ground under it."""
    alt = np.asarray(curtain.altitudes_m, dtype=float)
    below = np.asarray(curtain.below_ground, dtype=bool)[idx]
    ground = np.asarray(curtain.ground_m, dtype=float)[idx]
    # Ground under the stretch: the given surface, else the top of the below-ground rows.
    rows_below = np.where(below, alt[None, :], -np.inf).max(axis=1)
    ground = np.where(np.isfinite(ground), ground, rows_below)
    terrain_known = bool(np.isfinite(ground).all())
    return {
        "alt": alt,
        "sev": np.asarray(curtain.severity)[idx],  # (m, a)
        "below": below,
        "temp": np.asarray(curtain.temperature_c, dtype=float)[idx],
        "sld": np.asarray(curtain.sld_class)[idx],
        "cloud": np.asarray(curtain.cloud, dtype=bool)[idx],
        "ground": np.where(np.isfinite(ground), ground, alt[0]),
        "terrain_known": terrain_known,
    }


def _candidate_grid(st, floor_m, terrain_margin_ft, ceiling_m, max_agl_m, step_ft, altitudes_m):
    """Candidate altitudes: multiples of the step between the floor and the ceiling."""
    alt = np.asarray(altitudes_m, dtype=float)
    ground = st["ground"]
    lo_m = ground.max() + terrain_margin_ft * FT
    if floor_m is not None:
        lo_m = max(lo_m, float(floor_m))
    hi_m = alt[-1] if ceiling_m is None else min(float(ceiling_m), alt[-1])
    if max_agl_m is not None:
        hi_m = min(hi_m, ground.min() + float(max_agl_m))
    # Multiples of the step in feet (compare in feet to keep them exact).
    k_lo = np.ceil(lo_m / FT / step_ft - 1e-9)
    k_hi = np.floor(hi_m / FT / step_ft + 1e-9)
    cand_ft = np.arange(k_lo, k_hi + 1) * step_ft if k_hi >= k_lo else np.zeros(0)
    return {"k_lo": k_lo, "k_hi": k_hi, "cand_ft": cand_ft, "cand_m": cand_ft * FT}


def _evaluate(st, cand_m):
    """Severity, gaps, warm layers and SLD at each candidate over the whole stretch."""
    alt, sev, below, ground = st["alt"], st["sev"], st["below"], st["ground"]
    temp, sld = st["temp"], st["sld"]
    r_lo, r_hi, inside = _bracket_rows(alt, cand_m)
    sev_c = _worst_pair(sev[:, r_lo], sev[:, r_hi])  # (m, c)
    below_c = below[:, r_lo] | below[:, r_hi] | (cand_m[None, :] < ground[:, None])
    gap_c = ((sev_c == codes.GAP) & ~below_c).any(axis=0) | ~inside
    ground_c = below_c.any(axis=0)
    with np.errstate(invalid="ignore"):
        t_c = np.fmin(temp[:, r_lo], temp[:, r_hi])  # colder row (NaN-safe)
        warm_c = (t_c > 0.0).all(axis=0)
        sld_c = np.maximum(sld[:, r_lo], sld[:, r_hi])
        sld_freezing = ((sld_c > codes.SLD_NONE) & ~(t_c > 0.0)).any(axis=0)
        rain_rows = (sld == codes.SLD_RAIN) & ~below  # (m, a)
        fzra_below = (rain_rows[:, None, :] & (alt[None, None, :] < cand_m[None, :, None])).any(
            axis=(0, 2)
        )
    worst_c = np.where(sev_c == codes.GAP, codes.SEV_NONE, sev_c).max(axis=0)
    eligible = ~gap_c & ~ground_c
    # cloud within the margin above 0 C is never called clear (CLOUD_WARM_MARGIN_C)
    cloud = st["cloud"]
    with np.errstate(invalid="ignore"):
        near_freezing = ((cloud[:, r_lo] | cloud[:, r_hi]) & ~(t_c >= CLOUD_WARM_MARGIN_C)).any(
            axis=0
        )
    return {
        "worst": worst_c,
        "gap": gap_c,
        "eligible": eligible,
        "clear": eligible & (worst_c == codes.SEV_NONE) & ~sld_freezing & ~near_freezing,
        "near_freezing": near_freezing,
        "warm": warm_c,
        "sld": sld_c,
        "sld_freezing": sld_freezing,
        "fzra_below": fzra_below,
    }


def _option_notes(ev, j, ft, direction):
    """Return the plain-language notes of one candidate altitude."""
    tr = ev["transit"]
    notes = []
    if ev["clear"][j]:
        notes.append(f"no icing diagnosed along the whole stretch at {ft} ft")
    else:
        notes.append(
            f"no clear altitude {direction}; least severe along the stretch: "
            f"{codes.SEVERITY[ev['worst'][j]]} at {ft} ft"
        )
    if ev["warm"][j]:
        notes.append("warm layer (above 0 C along the stretch)")
    if ev["near_freezing"][j] and ev["worst"][j] == codes.SEV_NONE:
        notes.append(f"cloud within {CLOUD_WARM_MARGIN_C:g} C above freezing: not called clear")
    if ev["fzra_below"][j]:
        notes.append("freezing rain beneath this altitude: met again on descent")
    if ev["sld_freezing"][j]:
        notes.append("supercooled large drops at this altitude")
    if tr["worst"][j] > codes.SEV_NONE:
        notes.append(
            f"icing while changing level: {codes.SEVERITY[tr['entry'][j]]} on the way "
            f"there, {codes.SEVERITY[tr['return'][j]]} on the way back "
            f"(about {tr['icing_min'][j]:.1f} min of {tr['minutes'][j]:.1f} min)"
        )
    if tr["gap"][j]:
        notes.append("coverage gap crossed while changing level: icing unknown there")
    notes.append(CANDIDATE_WORDING)
    return notes


def _option(ev, grid, h0, step_ft, pressure, j, direction):
    """One candidate altitude as a JSON-ready dict."""
    cand_ft, cand_m, tr = grid["cand_ft"], grid["cand_m"], ev["transit"]
    ft = _ft_value(cand_ft[j], step_ft)
    return {
        "altitude_ft": ft,
        "altitude_m": round(float(cand_m[j]), 1),
        "flight_level": int(round(cand_ft[j] / 100.0)) if pressure else None,
        "change_ft": _ft_value(cand_ft[j] - h0 / FT, 1.0),
        "clear": bool(ev["clear"][j]),
        "worst_severity": codes.SEVERITY[int(ev["worst"][j])],
        "sld": codes.SLD_CLASSES[int(ev["sld"][:, j].max())],
        "warm_layer": bool(ev["warm"][j]),
        "freezing_rain_below": bool(ev["fzra_below"][j]),
        "transit_severity": codes.SEVERITY[int(tr["worst"][j])],
        "entry_severity": codes.SEVERITY[int(tr["entry"][j])],
        "return_severity": codes.SEVERITY[int(tr["return"][j])],
        "transit_icing_min": round(float(tr["icing_min"][j]), 2),
        "transit_min": round(float(tr["minutes"][j]), 2),
        "transit_gap": bool(tr["gap"][j]),
        "note": "; ".join(_option_notes(ev, j, ft, direction)),
    }


def _pick(ev, grid, h0, step_ft, pressure, side):
    """Return the best candidate on one side: clear first, then least severe, then nearest."""
    cand_m = grid["cand_m"]
    sel = ev["eligible"] & ((cand_m > h0 + 1e-6) if side == "above" else (cand_m < h0 - 1e-6))
    if not sel.any():
        return None
    j_all = np.flatnonzero(sel)
    dist_ft = np.abs(cand_m[j_all] - h0)
    # Clear first, then least severe, then nearest (transit icing is reported, not ranked).
    order = np.lexsort((dist_ft, ev["worst"][j_all], ~ev["clear"][j_all]))
    return _option(ev, grid, h0, step_ft, pressure, j_all[order[0]], side)


def _basis_text(
    start_km,
    end_km,
    terrain_known,
    *,
    step_ft,
    terrain_margin_ft,
    floor_m,
    max_agl_m,
    climb_rate_fpm,
    descent_rate_fpm,
    tas_m_s,
):
    """Return the rules of the search, in words, for the output."""
    return (
        f"{CANDIDATE_WORDING}. Whole stretch {start_km:.1f}-{end_km:.1f} km evaluated "
        f"every {step_ft:g} ft from {terrain_margin_ft:g} ft above the highest terrain"
        + ("" if floor_m is None else " (or the stated floor)")
        + " to the ceiling"
        + ("" if max_agl_m is None else " (within the stated height above ground)")
        + "; the worse curtain row around each altitude is used; altitudes with any "
        "coverage gap or below the terrain margin are never proposed; level change at "
        f"{climb_rate_fpm:g} ft/min up, {descent_rate_fpm:g} ft/min down, "
        f"{float(tas_m_s):.0f} m/s true airspeed, made before the stretch and undone "
        "after it, its icing counted"
        + (
            ""
            if terrain_known
            else "; the terrain under this stretch is unknown, so no altitude below the "
            "planned one is proposed"
        )
    )


def _one_line(start_km, end_km, above, below):
    """One line for terminals and summaries: both options, worded as candidates."""
    parts = []
    for side, o in (("above", above), ("below", below)):
        if o is None:
            parts.append(f"{side}: none in range")
            continue
        alt = f"{o['altitude_ft']} ft"
        if o["flight_level"] is not None:
            alt += f" (FL{o['flight_level']:03d})"
        state = "no icing on the stretch" if o["clear"] else f"{o['worst_severity']} at best"
        extra = f", {o['transit_severity']} while changing level"
        if o["transit_severity"] == "none":
            extra = ""
        if o["freezing_rain_below"]:
            extra += ", freezing rain beneath"
        parts.append(f"{side}: {alt}, {state}{extra}")
    return f"{start_km:.0f}-{end_km:.0f} km: " + "; ".join(parts) + f" ({CANDIDATE_WORDING})"


def _segment_mask(distance_km, props):
    """Curtain samples inside a segment's [start_km, end_km] (the nearest one if none)."""
    d = np.asarray(distance_km, dtype=float)
    a, b = float(props["start_km"]), float(props["end_km"])
    tol = 1e-6 * max(1.0, abs(b))
    mask = (d >= a - tol) & (d <= b + tol)
    if not mask.any():
        mask[np.argmin(np.abs(d - 0.5 * (a + b)))] = True
    return mask


def segment_candidates(
    segments,
    curtain,
    *,
    samples=None,
    at_flight=None,
    ceiling_m=None,
    floor_m=None,
    terrain_margin_ft=1000.0,
    max_agl_m=None,
    step_ft=1000.0,
    climb_rate_fpm=500.0,
    descent_rate_fpm=500.0,
    tas_m_s=None,
):
    """Candidate altitudes of every icing segment; new features carrying them.

    Parameters
    ----------
    segments : sequence of dict
        GeoJSON Feature dicts; ``kind == "icing"`` ones are searched. They are
        not changed: the features returned are new dicts.
    curtain : icing.hazards.results.Curtain
    samples : RouteSamples, optional
        For the true airspeed of each stretch (``tas`` [m/s]).
    at_flight : dict, optional
        For the planned altitude of each stretch (``altitude_ft``).
    ceiling_m, floor_m, terrain_margin_ft, max_agl_m, step_ft, climb_rate_fpm, descent_rate_fpm
        As for :func:`candidate_altitudes`.
    tas_m_s : float, optional
        True airspeed [m/s]; default the mean of ``samples.tas`` over the
        stretch, else ``at_flight["tas_m_s"]``.

    Returns
    -------
    (list of dict, list of dict)
        The features (icing ones with ``ice_free_altitudes_ft`` and
        ``vertical_options`` filled in), and one :func:`candidate_altitudes`
        result per icing segment with its ``segment_id``.
    """
    at = at_flight or {}
    features, results = [], []
    for feature in segments:
        props = feature.get("properties", feature)
        if props.get("kind") != "icing":
            features.append(feature)
            continue
        mask = _segment_mask(curtain.distance_km, props)
        res = candidate_altitudes(
            curtain,
            mask,
            flight_altitude_m=_planned_altitude_m(samples, at, mask, props),
            ceiling_m=ceiling_m,
            floor_m=floor_m,
            terrain_margin_ft=terrain_margin_ft,
            max_agl_m=max_agl_m,
            step_ft=step_ft,
            climb_rate_fpm=climb_rate_fpm,
            descent_rate_fpm=descent_rate_fpm,
            tas_m_s=_stretch_tas(tas_m_s, samples, at, mask, props),
        )
        res["segment_id"] = props.get("segment_id")
        if res["segment_id"] is not None:
            res["text"] = f"{res['segment_id']} {res['text']}"
        results.append(res)
        new_props = dict(props)
        new_props["candidate_altitudes_ft"] = list(res["ice_free_altitudes_ft"])
        new_props["ice_free_altitudes_ft"] = list(res["ice_free_altitudes_ft"])  # deprecated
        new_props["vertical_options"] = {
            k: res[k]
            for k in (
                "above",
                "below",
                "ice_free_flight_levels",
                "floor_ft",
                "ceiling_ft",
                "basis",
            )
        }
        features.append(
            {**feature, "properties": new_props} if "properties" in feature else new_props
        )
    return features, results


def candidates_summary(results):
    """Compact, JSON-ready candidate altitudes per icing segment (for summaries)."""
    return [
        {
            "segment_id": r["segment_id"],
            "stretch_km": r["stretch_km"],
            "above_ft": None if r["above"] is None else r["above"]["altitude_ft"],
            "above_severity": None if r["above"] is None else r["above"]["worst_severity"],
            "below_ft": None if r["below"] is None else r["below"]["altitude_ft"],
            "below_severity": None if r["below"] is None else r["below"]["worst_severity"],
            "ice_free_altitudes_ft": r["ice_free_altitudes_ft"],
        }
        for r in results
    ]


def annotate_segments(screening, *, summary=True, **kwargs):
    """Return a new screening whose icing segments carry their candidate altitudes.

    Parameters
    ----------
    screening : icing.hazards.results.RouteScreening
        Not changed.
    summary : bool
        Also put the list of options into the new summary's
        ``candidate_altitudes`` (with ``candidate_altitudes_wording``).
    **kwargs
        As for :func:`segment_candidates`; ``ceiling_m`` and ``max_agl_m``
        default to the screening's (or its ``assumptions``).

    Returns
    -------
    RouteScreening
        A copy with the new segments, ``candidates`` and (optionally) summary.
    """
    from dataclasses import replace

    assumptions = getattr(screening, "assumptions", None) or {}
    for key in ("ceiling_m", "max_agl_m"):
        if kwargs.get(key) is None:
            kwargs[key] = getattr(screening, key, None) or assumptions.get(key)
    features, results = segment_candidates(
        screening.segments,
        screening.curtain,
        samples=getattr(screening, "samples", None),
        at_flight=getattr(screening, "at_flight", None),
        **kwargs,
    )
    new_summary = dict(getattr(screening, "summary", None) or {})
    if summary:
        new_summary["candidate_altitudes"] = candidates_summary(results)
        new_summary["candidate_altitudes_wording"] = CANDIDATE_WORDING
    return replace(screening, segments=features, candidates=results, summary=new_summary)


def _stretch_tas(tas_m_s, samples, at, mask, props):
    """Return the true airspeed over a stretch [m/s]: given, else the samples' mean."""
    tas = tas_m_s
    if tas is None:
        tas_arr = getattr(samples, "tas", None)
        if tas_arr is None:
            tas_arr = at.get("tas_m_s")
        if tas_arr is not None and np.size(tas_arr) == mask.size:
            tas = float(np.nanmean(np.asarray(tas_arr, dtype=float)[mask]))
    if tas is None or not np.isfinite(tas):
        raise InputError(
            "no true airspeed for the level-change exposure",
            where=f"segment {props.get('segment_id')!r}",
            fix="pass tas_m_s= or give the samples a tas array",
        )
    return tas


def _planned_altitude_m(samples, at, mask, props):
    """Mean planned altitude over the stretch [m], from the samples or the segment."""
    ft = at.get("altitude_ft")
    if ft is not None and np.size(ft) == mask.size:
        return float(np.nanmean(np.asarray(ft, dtype=float)[mask])) * FT
    alt = getattr(samples, "altitude_m", None)
    if alt is not None and np.size(alt) == mask.size:
        return float(np.nanmean(np.asarray(alt, dtype=float)[mask]))
    lo, hi = props.get("altitude_ft_min"), props.get("altitude_ft_max")
    if lo is None or hi is None:
        raise InputError(
            "no planned altitude for the stretch",
            where=f"segment {props.get('segment_id')!r}",
            fix="give at_flight['altitude_ft'] or altitude_ft_min/max",
        )
    return 0.5 * (float(lo) + float(hi)) * FT
