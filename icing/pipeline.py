"""The main job: screen a route against a forecast for an airframe.

Order of work (DESIGN.md section 1): whole columns are brought to each sample
(:meth:`Forecast.columns_at`), each column is diagnosed whole
(:func:`icing.column.diagnose_columns`), and only then are the results read
off at the flight altitude and on an altitude curtain for the cross-section and
the avoidance search. Where several forecast columns stand near a sample
(profile files), each is diagnosed on its own and the worst is kept: a cloudy
and a dry sounding are never blended.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import codes
from .caution import CAUTION
from .constants import FT
from .results import Curtain, RouteScreening

__all__ = ["screen_route", "screen_routes", "read_off", "ScreenOptions", "diagnose_point"]

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


@dataclass(frozen=True)
class ScreenOptions:
    """Choices of a screening run (all stated in the output's assumptions).

    Attributes
    ----------
    step_km : float
        Largest distance between samples. [km]
    curtain_step_ft : float
        Vertical spacing of the cross-section curtain. [ft]
    curtain_top_ft : float or None
        Top of the curtain (default: the airframe ceiling plus 2,000 ft).
    terrain_margin_ft : float
        Clearance above the terrain for candidate altitudes (aircraft). [ft]
    all_segments : bool
        Also write the "no-icing" segments.
    """

    step_km: float = 1.0
    curtain_step_ft: float = 500.0
    curtain_top_ft: float | None = None
    terrain_margin_ft: float = 1000.0
    all_segments: bool = False

    def describe(self) -> dict:
        """Return the options as a JSON-serialisable dict."""
        return {
            "sample_step_km": self.step_km,
            "curtain_step_ft": self.curtain_step_ft,
            "terrain_margin_ft": self.terrain_margin_ft,
            "candidate_altitude_step_ft": 1000.0,
            "worst_of_candidates": "profiles within the coverage radius and valid times around "
            "each sample are diagnosed one by one and the worst is kept (never blended)",
        }


def _vertical_coordinate(diag, reference):
    """Monotonic vertical coordinate of the diagnosed levels: height, or -ln p."""
    if reference == "pressure":
        return -np.log(np.asarray(diag.pressure, float))
    return np.asarray(diag.height, float)


def read_off(diag, column_index, target, *, reference="msl"):
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
    z_lo = np.take_along_axis(col_z, lo[..., None], -1)[..., 0]
    z_hi = np.take_along_axis(col_z, hi[..., None], -1)[..., 0]
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.clip((tz - z_lo) / (z_hi - z_lo), 0.0, 1.0)
    inside = present & np.isfinite(tz) & (tz >= z_lo) & (tz <= z_hi)
    # Between the ground and the lowest forecast level the lowest level's values hold,
    # over a limited depth only (a model's lowest level is its near-surface air).
    z_min = col_z[..., 0]
    depth = np.log(1.0 + _EXTRAPOLATE_M / 8000.0) if reference == "pressure" else _EXTRAPOLATE_M
    near_base = present & np.isfinite(tz) & (tz < z_min) & (tz >= z_min - depth) & (lo == 0)
    inside = inside | near_base
    i_lo = np.take_along_axis(order[c], lo[..., None], -1)[..., 0]
    i_hi = np.take_along_axis(order[c], hi[..., None], -1)[..., 0]

    def pick(field):
        a = np.asarray(field)
        return a[c, i_lo], a[c, i_hi]

    out = {}
    for name in _LINEAR:
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
    out["cloud"] = out["lwc"] >= 1e-5  # 0.01 g/m3, Korolev et al. (2003) in-cloud threshold
    return out


def _icing_at(airframe, state, airspeed):
    from .accretion import airframe_icing

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
    )
    sev = np.where(state["valid"], result.severity, codes.GAP)
    return result, sev


def _worst_over_candidates(sev, rate):
    """Index of the worst candidate along the last axis (severity, then rate)."""
    score = np.where(sev == codes.GAP, -1e12, sev * 1e6 + np.nan_to_num(rate))
    return np.argmax(score, axis=-1)


def _take(a, k):
    a = np.asarray(a)
    return np.take_along_axis(a, k[..., None], -1)[..., 0]


def _flight_targets(route, samples, forecast, colset, diag):
    """Flight altitude as the vertical target of each sample, and its MSL height."""
    ref = samples.altitude_reference
    alt = np.asarray(samples.altitude_m, float)
    if ref == "pressure":
        from .thermo import standard_atmosphere_pressure

        return standard_atmosphere_pressure(alt), "pressure"
    if ref == "agl":
        ground = _ground_height(route, samples, forecast, colset, diag)
        return alt + np.nan_to_num(ground, nan=np.nan), "msl"
    return alt, "msl"


def _ground_height(route, samples, forecast, colset, diag):
    n = len(samples.lat)
    given = getattr(route, "ground_elevation_m", None)
    if given is not None:
        return np.full(n, float(given))
    sh = None
    if hasattr(forecast, "surface_height_at"):
        sh = np.asarray(forecast.surface_height_at(samples.lat, samples.lon), float)
    if sh is None or not np.isfinite(sh).any():
        surf = colset.columns.get("surface_height")
        if surf is not None:
            first = np.asarray(colset.candidates)[:, 0]
            sh = np.where(first >= 0, np.asarray(surf, float)[np.maximum(first, 0)], np.nan)
    return np.full(n, np.nan) if sh is None else sh


def _diagnose(colset, options):
    from .column import diagnose_columns

    cols = {k: v for k, v in colset.columns.items() if k not in ("wind_u", "wind_v")}
    return diagnose_columns(**cols, options=options)


def screen_route(
    route,
    forecast,
    *,
    airframe,
    step_km: float = 1.0,
    tas_kt: float | None = None,
    departure=None,
    column_options=None,
    options: ScreenOptions | None = None,
    segment_prefix: str = "",
) -> RouteScreening:
    """Screen one route against a forecast for one airframe.

    Parameters
    ----------
    route : Route or str or path
        The route (``icing.load_route``) or a route file.
    forecast : Forecast or str or path
        The forecast (``icing.load_forecast``) or a forecast file.
    airframe : Airframe or str
        Preset name, airframe TOML file or :class:`icing.airframes.Airframe`.
    step_km : float
        Largest distance between samples along the track. [km]
    tas_kt : float, optional
        True airspeed; default the route's, else the airframe's cruise speed. [kt]
    departure : datetime, optional
        Overrides the route's departure time (timezone-aware).
    column_options : ColumnOptions, optional
        Column-physics choices (air mass, sub-adiabatic factor, ...).
    options : ScreenOptions, optional
        Run choices (curtain, all segments, ...).

    Returns
    -------
    RouteScreening
        Samples, per-sample values at the flight altitude, the altitude curtain,
        GeoJSON segments (each with the caution) and the summary.
    """
    from .airframes import load_airframe
    from .avoidance import annotate_segments
    from .column import ColumnOptions
    from .forecast import load_forecast
    from .route import load_route, sample_route

    options = options or ScreenOptions(step_km=step_km)
    if options.step_km != step_km and step_km != 1.0:
        options = ScreenOptions(**{**options.__dict__, "step_km": step_km})
    column_options = column_options or ColumnOptions()
    if not hasattr(route, "waypoints"):
        route = load_route(route)
    if not hasattr(forecast, "columns_at"):
        forecast = load_forecast(forecast)
    if not hasattr(airframe, "collectors"):
        airframe = load_airframe(airframe)
    wind = forecast.wind_at if getattr(forecast, "has_wind", False) else None
    samples = sample_route(
        route,
        step_km=options.step_km,
        tas_kt=tas_kt,
        default_tas_kt=airframe.true_airspeed_kt,
        departure=departure,
        wind=wind,
    )
    n = len(samples.lat)
    colset = forecast.columns_at(samples.lat, samples.lon, samples.time)
    diag = _diagnose(colset, column_options)
    cand = np.asarray(colset.candidates)  # (n, k)
    covered = np.asarray(colset.covered, bool)
    cand = np.where(covered[:, None], cand, -1)

    # --- vertical targets: the flight altitude plus the curtain rows ---------------
    target_flight, vref = _flight_targets(route, samples, forecast, colset, diag)
    top_ft = options.curtain_top_ft or (airframe.ceiling_ft or 25000.0) + 2000.0
    step = options.curtain_step_ft
    if vref == "pressure":
        from .thermo import standard_atmosphere_pressure

        alts_m = np.arange(0.0, top_ft + 1, step) * FT
        curtain_target = np.broadcast_to(standard_atmosphere_pressure(alts_m), (n, alts_m.size))
    else:
        alts_m = np.arange(0.0, top_ft + 1, step) * FT
        curtain_target = np.broadcast_to(alts_m, (n, alts_m.size))
    targets = np.concatenate([curtain_target, target_flight[:, None]], axis=1)  # (n, a+1)
    k = cand.shape[1]
    tgt = np.broadcast_to(targets[:, :, None], targets.shape + (k,))
    ci = np.broadcast_to(cand[:, None, :], tgt.shape)
    state = read_off(diag, ci, tgt, reference=vref)
    ground = _ground_height(route, samples, forecast, colset, diag)
    with np.errstate(invalid="ignore"):
        under = np.isfinite(ground)[:, None, None] & (
            state["height"] < ground[:, None, None] - 1.0
        )
    state["below_ground"] = state["below_ground"] | under
    state["valid"] = state["valid"] & ~under
    tas_ms = np.asarray(samples.tas, float)[:, None, None]
    result, sev = _icing_at(airframe, state, np.broadcast_to(tas_ms, tgt.shape))
    kbest = _worst_over_candidates(sev, result.accretion_rate_mm_h)  # (n, a+1)

    def best(a):
        return _take(np.broadcast_to(a, sev.shape), kbest)

    sev_b = best(sev)
    # --- at the flight altitude ------------------------------------------------------
    f = -1
    from .constants import T0

    col_best = _take(ci, kbest)[:, f]
    at = {
        "covered": covered & (sev_b[:, f] != codes.GAP),
        "gap_reason": np.where(
            covered & (sev_b[:, f] == codes.GAP),
            "missing-values or outside the column",
            np.asarray(colset.gap_reason, dtype=object),
        ),
        "severity": sev_b[:, f],
        "altitude_ft": np.asarray(samples.altitude_m, float) / FT,
        "altitude_msl_m": best(state["height"])[:, f]
        if vref == "pressure"
        else np.asarray(target_flight, float),
        "distance_km": np.asarray(samples.distance_m) / 1000.0,
        "pressure_hpa": best(state["pressure"])[:, f] / 100.0,
        "temperature_c": best(state["temperature"])[:, f] - T0,
        "relative_humidity_pct": best(state["relative_humidity"])[:, f] * 100.0,
        "cloud": best(state["cloud"])[:, f],
        "lwc_g_m3": best(state["lwc"])[:, f] * 1000.0,
        "lwc_model_g_m3": best(state["lwc_model"])[:, f] * 1000.0,
        "lwc_diagnosed_g_m3": best(state["lwc_diagnosed"])[:, f] * 1000.0,
        "basis": best(state["basis"])[:, f],
        "droplet_number_cm3": best(state["droplet_number"])[:, f] / 1e6,
        "mvd_um": best(state["mvd"])[:, f] * 1e6,
        "glaciation": best(state["glaciation"])[:, f],
        "sld_class": best(state["sld_class"])[:, f],
        "sld_lwc_g_m3": best(state["sld_lwc"])[:, f] * 1000.0,
        "sld_mvd_um": best(state["sld_mvd"])[:, f] * 1e6,
        "collection_efficiency": best(result.collection_efficiency)[:, f],
        "beta0": best(result.beta0)[:, f],
        "freezing_fraction": best(result.freezing_fraction)[:, f],
        "ice_type": best(result.ice_type)[:, f],
        "ice_density_kg_m3": best(result.ice_density)[:, f],
        "accretion_rate_mm_h": best(result.accretion_rate_mm_h)[:, f],
        "worst_collector": np.array(
            [airframe.collectors[int(i)].name for i in best(result.worst_collector)[:, f]],
            dtype=object,
        ),
        "reference_collector": airframe.reference,
        "column": col_best,
    }
    gap = at["severity"] == codes.GAP
    at["gap_reason"] = np.where(gap & (at["gap_reason"] == ""), "missing-values", at["gap_reason"])
    at["gap_reason"] = np.where(gap, at["gap_reason"], "")
    for key in ("ice_type", "sld_class", "basis"):
        at[key] = np.where(gap, 0, at[key]).astype(int)
    at["accretion_mm"] = np.nan_to_num(at["accretion_rate_mm_h"]) * np.asarray(samples.dt_s) / 3600
    at["per_collector"] = {
        name: {
            key: best(np.asarray(getattr(pc, key) if hasattr(pc, key) else pc[key]))[:, f]
            for key in ("collection_efficiency", "accretion_rate_mm_h", "severity")
        }
        for name, pc in result.per_collector.items()
    }
    fz = np.asarray(diag.freezing_level, float)
    at["freezing_level_m"] = np.where(col_best >= 0, fz[np.maximum(col_best, 0)], np.nan)

    # --- curtain ---------------------------------------------------------------------
    below = best(state["below_ground"])[:, :f]
    curtain = Curtain(
        distance_km=at["distance_km"],
        altitudes_m=alts_m,
        altitude_reference=vref,
        severity=sev_b[:, :f],
        below_ground=below,
        temperature_c=best(state["temperature"])[:, :f] - T0,
        cloud=best(state["cloud"])[:, :f],
        sld_class=best(state["sld_class"])[:, :f],
        ice_type=best(result.ice_type)[:, :f],
        accretion_rate_mm_h=best(result.accretion_rate_mm_h)[:, :f],
        ground_m=ground,
    )
    screening = RouteScreening(
        route_name=route.name,
        airframe_name=airframe.name,
        samples=samples,
        at_flight=at,
        curtain=curtain,
        segments=[],
        summary={},
        waypoints=list(
            zip(
                list(samples.waypoint_names),
                [float(d) / 1000.0 for d in samples.waypoint_distance_m],
                strict=True,
            )
        ),
        provenance=_provenance(forecast, samples, colset),
        assumptions=_assumptions(column_options, options, forecast, airframe),
    )
    from .hazards import build_segments, route_summary

    screening.segments = build_segments(
        route.name,
        airframe.name,
        samples,
        at,
        all_segments=options.all_segments,
        id_prefix=segment_prefix,
    )
    limits = _altitude_limits(airframe, options)
    screening.ceiling_m = limits["ceiling_m"]
    screening.max_agl_m = limits["max_agl_m"]
    candidates = annotate_segments(screening, **limits, summary=False)
    screening.summary = route_summary(screening, airframe=airframe)
    screening.summary["candidate_altitudes_ft"] = _summary_candidates(
        candidates, screening.segments
    )
    from .avoidance import CANDIDATE_WORDING

    screening.summary["candidate_altitudes_wording"] = CANDIDATE_WORDING
    screening.summary["caution"] = CAUTION
    return screening


def _summary_candidates(candidates, segments):
    """Compact, JSON-ready candidate altitudes per icing segment, for the summary."""
    severity = {f["properties"]["segment_id"]: f["properties"]["severity"] for f in segments}
    out = []
    for r in candidates or []:
        above, below = r.get("above"), r.get("below")
        out.append(
            {
                "segment_id": r.get("segment_id"),
                "severity": severity.get(r.get("segment_id")),
                "stretch_km": r.get("stretch_km"),
                "above_ft": None if above is None else above.get("altitude_ft"),
                "above_severity": None if above is None else above.get("worst_severity"),
                "below_ft": None if below is None else below.get("altitude_ft"),
                "below_severity": None if below is None else below.get("worst_severity"),
                "ice_free_altitudes_ft": list(r.get("ice_free_altitudes_ft", [])),
                "text": r.get("text"),
            }
        )
    return out


def _altitude_limits(airframe, options):
    """Search limits for candidate altitudes: terrain margin, ceiling, drone AGL limits."""
    agl_max = getattr(airframe, "max_altitude_agl_ft", None)
    if agl_max:
        # drones: between their minimum and maximum height above the ground
        return {
            "ceiling_m": None if airframe.ceiling_ft is None else airframe.ceiling_ft * FT,
            "max_agl_m": float(agl_max) * FT,
            "terrain_margin_ft": float(getattr(airframe, "min_altitude_ft", None) or 100.0),
        }
    return {
        "ceiling_m": float(airframe.ceiling_ft or 25000.0) * FT,
        "max_agl_m": None,
        "terrain_margin_ft": options.terrain_margin_ft,
    }


def _provenance(forecast, samples, colset):
    prov = dict(forecast.describe()) if hasattr(forecast, "describe") else {}
    times = np.asarray(samples.time)
    if times.size:
        from .hazards import _iso

        prov["route_time_window"] = [_iso(times.min()), _iso(times.max())]
    return prov


def _assumptions(column_options, options, forecast, airframe):
    out = {}
    if hasattr(column_options, "describe"):
        out["column"] = column_options.describe()
    out["screening"] = options.describe()
    from .accretion import assumptions as collector_assumptions

    out["collectors"] = collector_assumptions()
    desc = forecast.describe() if hasattr(forecast, "describe") else {}
    for key in ("radius_km", "time_tolerance_h"):
        if key in desc:
            out.setdefault("coverage", {})[key] = desc[key]
    out["airframe"] = airframe.describe() if hasattr(airframe, "describe") else airframe.name
    out["altitude_reference_note"] = (
        "GeoJSON third coordinates are read and written as metres above mean sea level "
        "(not the WGS 84 ellipsoid of RFC 7946; the geoid differs by up to ~100 m), unless "
        "the route says altitude_reference 'agl' or 'pressure'"
    )
    return out


def screen_routes(
    routes, forecast, *, airframe, progress=None, **kwargs
) -> list[RouteScreening]:
    """Screen several routes against one forecast (segment ids unique across routes).

    ``progress``, if given, is called as ``progress(done, total, route_name)`` after
    each route (the CLI draws a progress line from it).
    """
    routes = list(routes)
    out = []
    for i, r in enumerate(routes):
        out.append(
            screen_route(r, forecast, airframe=airframe, segment_prefix=f"R{i + 1}-", **kwargs)
        )
        if progress is not None:
            progress(i + 1, len(routes), out[-1].route_name)
    return out


def diagnose_point(forecast, lat, lon, time=None, *, airframe=None, column_options=None):
    """Diagnose the forecast column at one point, level by level (``icing profile``).

    Returns
    -------
    dict
        ``levels`` (list of dicts per level, ascending height), ``candidates`` used,
        ``covered``, ``gap_reason``; the worst candidate column is shown.
    """
    from .airframes import load_airframe
    from .column import ColumnOptions

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
    diag = _diagnose(colset, column_options)
    cands = [int(c) for c in np.asarray(colset.candidates)[0] if c >= 0]
    af = (
        load_airframe(airframe)
        if airframe is not None and not hasattr(airframe, "collectors")
        else airframe
    )
    best = None
    for c in cands:
        lev = np.asarray(diag.pressure).shape[-1]
        state = {name: np.asarray(getattr(diag, name))[c] for name in _LINEAR}
        state.update(
            pressure=np.asarray(diag.pressure)[c],
            sld_class=np.asarray(diag.sld_class)[c],
            valid=np.asarray(diag.valid)[c] & ~np.asarray(diag.below_ground)[c],
        )
        res = sev = None
        if af is not None:
            res, sev = _icing_at(af, state, af.cruise_tas)
        score = (int(np.max(sev)) if sev is not None else 0, float(np.nansum(state["lwc"])))
        if best is None or score > best[0]:
            best = (score, c, state, res, sev, lev)
    _, c, state, res, sev, lev = best
    order = np.argsort(np.asarray(diag.height)[c])
    levels = []
    for i in order:
        row = {
            "pressure_hpa": round(float(np.asarray(diag.pressure)[c, i]) / 100.0, 2),
            "height_m": round(float(np.asarray(diag.height)[c, i]), 1),
            "temperature_c": round(float(np.asarray(diag.temperature)[c, i]) - 273.15, 2),
            "relative_humidity_pct": round(
                float(np.asarray(diag.relative_humidity)[c, i]) * 100, 1
            ),
            "cloud": bool(np.asarray(diag.cloud)[c, i]),
            "lwc_g_m3": round(float(np.nan_to_num(np.asarray(diag.lwc)[c, i])) * 1000, 4),
            "basis": str(
                codes.words(np.asarray(diag.basis)[c, i], codes.BASIS, gap="coverage-gap")
            ),
            "droplet_number_cm3": _r(np.asarray(diag.droplet_number)[c, i] / 1e6, 1),
            "mvd_um": _r(np.asarray(diag.mvd)[c, i] * 1e6, 2),
            "glaciation": _r(np.asarray(diag.glaciation)[c, i], 3),
            "sld": str(
                codes.words(
                    np.asarray(diag.sld_class)[c, i], codes.SLD_CLASSES, gap="coverage-gap"
                )
            ),
            "below_ground": bool(np.asarray(diag.below_ground)[c, i]),
            "valid": bool(np.asarray(diag.valid)[c, i]),
        }
        if res is not None:
            s = int(sev[i])
            row.update(
                collection_efficiency=_r(res.collection_efficiency[i], 4),
                accretion_rate_mm_h=_r(res.accretion_rate_mm_h[i], 3),
                ice_type=codes.ICE_TYPES[int(res.ice_type[i])],
                severity="coverage-gap" if s == codes.GAP else codes.SEVERITY[s],
            )
        else:
            row.update(
                collection_efficiency=None, accretion_rate_mm_h=None, ice_type=None, severity=None
            )
        levels.append(row)
    return {
        "covered": True,
        "gap_reason": "",
        "candidates": len(cands),
        "levels": levels,
        "precip_type": codes.PRECIP_TYPES[int(np.asarray(diag.precip_type)[c])],
        "freezing_level_m": _r(np.asarray(diag.freezing_level)[c], 1),
        "warnings": list(getattr(diag, "warnings", []) or []),
        "airframe": None if af is None else af.name,
    }


def _r(x, nd):
    x = float(x)
    return round(x, nd) if np.isfinite(x) else None
