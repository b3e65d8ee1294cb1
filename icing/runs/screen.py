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

from dataclasses import dataclass, replace

import numpy as np

from icing import codes
from icing.caution import CAUTION
from icing.constants import FT, T0
from icing.hazards.readoff import icing_at, read_off, take_last, worst_over_candidates
from icing.hazards.results import Curtain, RouteScreening

__all__ = ["ScreenOptions", "screen_route", "screen_routes"]


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


def _flight_targets(samples, ground):
    """Vertical target of each sample and the coordinate it is matched on.

    MSL altitudes are matched on height, AGL ones on height above ``ground`` (NaN
    where the ground is unknown, which reads as a coverage gap), pressure altitudes
    (flight levels) on the standard-atmosphere pressure.
    """
    alt = np.asarray(samples.altitude_m, float)
    if samples.altitude_reference == "pressure":
        from icing.calc.thermo import standard_atmosphere_pressure

        return standard_atmosphere_pressure(alt), "pressure"
    if samples.altitude_reference == "agl":
        return alt + ground, "msl"
    return alt, "msl"


def _ground_height(route, samples, forecast, colset):
    """Surface height under each sample [m]: the route's, the forecast's, else NaN."""
    n = len(samples.lat)
    given = getattr(route, "ground_elevation_m", None)
    if given is not None:
        return np.full(n, float(given))
    sh = np.asarray(forecast.surface_height_at(samples.lat, samples.lon), float)
    surf = colset.columns.get("surface_height")
    if not np.isfinite(sh).any() and surf is not None:
        first = np.asarray(colset.candidates)[:, 0]
        sh = np.where(first >= 0, np.asarray(surf, float)[np.maximum(first, 0)], np.nan)
    return sh


def screen_route(
    route,
    forecast,
    *,
    airframe,
    step_km: float | None = None,
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
    step_km : float, optional
        Largest distance between samples along the track; overrides
        ``options.step_km`` (default 1 km). [km]
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
    from icing.airframes import load_airframe
    from icing.calc.column import ColumnOptions, diagnose_columns
    from icing.calc.thermo import standard_atmosphere_pressure
    from icing.forecast import load_forecast
    from icing.hazards.avoidance import CANDIDATE_WORDING, annotate_segments
    from icing.hazards.segments import build_segments, route_summary
    from icing.route import load_route, sample_route

    options = options or ScreenOptions()
    if step_km is not None:
        options = replace(options, step_km=step_km)
    column_options = column_options or ColumnOptions()
    if not hasattr(route, "waypoints"):
        route = load_route(route)
    if not hasattr(forecast, "columns_at"):
        forecast = load_forecast(forecast)
    if not hasattr(airframe, "collectors"):
        airframe = load_airframe(airframe)
    samples = sample_route(
        route,
        step_km=options.step_km,
        tas_kt=tas_kt,
        default_tas_kt=airframe.true_airspeed_kt,
        departure=departure,
        wind=forecast.wind_at if forecast.has_wind else None,
    )
    n = len(samples.lat)
    colset = forecast.columns_at(samples.lat, samples.lon, samples.time)
    diag = diagnose_columns(**colset.columns, options=column_options)
    covered = np.asarray(colset.covered, bool)
    cand = np.where(covered[:, None], np.asarray(colset.candidates), -1)  # (n, k)
    ground = _ground_height(route, samples, forecast, colset)

    # --- vertical targets: the curtain rows, then the flight altitude (last column) ---
    target_flight, vref = _flight_targets(samples, ground)
    top_ft = options.curtain_top_ft or (airframe.ceiling_ft or 25000.0) + 2000.0
    alts_m = np.arange(0.0, top_ft + 1, options.curtain_step_ft) * FT
    rows = standard_atmosphere_pressure(alts_m) if vref == "pressure" else alts_m
    targets = np.concatenate([np.broadcast_to(rows, (n, alts_m.size)), target_flight[:, None]], 1)
    tgt = np.broadcast_to(targets[:, :, None], targets.shape + (cand.shape[1],))
    ci = np.broadcast_to(cand[:, None, :], tgt.shape)
    state = read_off(diag, ci, tgt, reference=vref)
    with np.errstate(invalid="ignore"):
        under = np.isfinite(ground)[:, None, None] & (
            state["height"] < ground[:, None, None] - 1.0
        )
    state["below_ground"] = state["below_ground"] | under
    state["valid"] = state["valid"] & ~under
    tas_ms = np.broadcast_to(np.asarray(samples.tas, float)[:, None, None], tgt.shape)
    result, sev = icing_at(airframe, state, tas_ms)
    kbest = worst_over_candidates(sev, result.accretion_rate_mm_h)  # (n, a+1)

    def best(a):
        """Return the worst candidate's value, (n, a+1)."""
        return take_last(np.broadcast_to(a, sev.shape), kbest)

    at = _at_flight(samples, colset, diag, state, result, best(sev), best, airframe, ci)
    at["altitude_msl_m"] = best(state["height"])[:, -1] if vref == "pressure" else target_flight
    curtain = Curtain(
        distance_km=at["distance_km"],
        altitudes_m=alts_m,
        altitude_reference=vref,
        severity=best(sev)[:, :-1],
        below_ground=best(state["below_ground"])[:, :-1],
        temperature_c=best(state["temperature"])[:, :-1] - T0,
        cloud=best(state["cloud"])[:, :-1],
        sld_class=best(state["sld_class"])[:, :-1],
        ice_type=best(result.ice_type)[:, :-1],
        accretion_rate_mm_h=best(result.accretion_rate_mm_h)[:, :-1],
        ground_m=ground,
    )
    limits = _altitude_limits(airframe, options)
    screening = RouteScreening(
        route_name=route.name,
        airframe_name=airframe.name,
        samples=samples,
        at_flight=at,
        curtain=curtain,
        segments=build_segments(
            route.name,
            airframe.name,
            samples,
            at,
            all_segments=options.all_segments,
            id_prefix=segment_prefix,
        ),
        summary={},
        waypoints=[
            (str(name), float(d) / 1000.0)
            for name, d in zip(samples.waypoint_names, samples.waypoint_distance_m, strict=True)
        ],
        provenance=_provenance(forecast, samples),
        assumptions=_assumptions(column_options, options, forecast, airframe),
        ceiling_m=limits["ceiling_m"],
        max_agl_m=limits["max_agl_m"],
    )
    candidates = annotate_segments(screening, **limits, summary=False)
    screening.summary = route_summary(screening, airframe=airframe)
    screening.summary["candidate_altitudes_ft"] = _summary_candidates(
        candidates, screening.segments
    )
    screening.summary["candidate_altitudes_wording"] = CANDIDATE_WORDING
    screening.summary["caution"] = CAUTION
    return screening


def _at_flight(samples, colset, diag, state, result, sev_b, best, airframe, column_index):
    """Per-sample values at the planned altitude (the last target column), for output."""

    def flight(a):
        return best(a)[:, -1]

    sev = sev_b[:, -1]
    gap = sev == codes.GAP
    covered = np.asarray(colset.covered, bool)
    # why a sample is a gap: the forecast's reason, else no usable level at that altitude
    reason = np.where(covered, "missing-values", np.asarray(colset.gap_reason, dtype=object))
    names = np.array([c.name for c in airframe.collectors], dtype=object)
    at = {
        "covered": ~gap,
        "gap_reason": np.where(gap, reason, ""),
        "severity": sev,
        "altitude_ft": np.asarray(samples.altitude_m, float) / FT,
        "distance_km": np.asarray(samples.distance_m) / 1000.0,
        "pressure_hpa": flight(state["pressure"]) / 100.0,
        "temperature_c": flight(state["temperature"]) - T0,
        "relative_humidity_pct": flight(state["relative_humidity"]) * 100.0,
        "cloud": flight(state["cloud"]),
        "lwc_g_m3": flight(state["lwc"]) * 1000.0,
        "lwc_model_g_m3": flight(state["lwc_model"]) * 1000.0,
        "lwc_diagnosed_g_m3": flight(state["lwc_diagnosed"]) * 1000.0,
        "droplet_number_cm3": flight(state["droplet_number"]) / 1e6,
        "mvd_um": flight(state["mvd"]) * 1e6,
        "glaciation": flight(state["glaciation"]),
        "sld_lwc_g_m3": flight(state["sld_lwc"]) * 1000.0,
        "sld_mvd_um": flight(state["sld_mvd"]) * 1e6,
        "collection_efficiency": flight(result.collection_efficiency),
        "beta0": flight(result.beta0),
        "freezing_fraction": flight(result.freezing_fraction),
        "ice_density_kg_m3": flight(result.ice_density),
        "accretion_rate_mm_h": flight(result.accretion_rate_mm_h),
        "worst_collector": names[flight(result.worst_collector)],
        "reference_collector": airframe.reference,
    }
    for key, a in (
        ("ice_type", result.ice_type),
        ("sld_class", state["sld_class"]),
        ("basis", state["basis"]),
    ):
        at[key] = np.where(gap, 0, flight(a)).astype(int)
    at["accretion_mm"] = np.nan_to_num(at["accretion_rate_mm_h"]) * np.asarray(samples.dt_s) / 3600
    at["per_collector"] = {
        name: {
            key: flight(pc[key])
            for key in ("collection_efficiency", "accretion_rate_mm_h", "severity")
        }
        for name, pc in result.per_collector.items()
    }
    col = flight(column_index)  # the column each sample's values came from (-1: none)
    fz = np.asarray(diag.freezing_level, float)
    at["freezing_level_m"] = np.where(col >= 0, fz[np.maximum(col, 0)], np.nan)
    return at


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


def _provenance(forecast, samples):
    prov = dict(forecast.describe())
    times = np.asarray(samples.time)
    if times.size:
        from icing.hazards.segments import _iso

        prov["route_time_window"] = [_iso(times.min()), _iso(times.max())]
    return prov


def _assumptions(column_options, options, forecast, airframe):
    out = {"column": column_options.describe(), "screening": options.describe()}
    from icing.calc.airframe import assumptions as collector_assumptions

    out["collectors"] = collector_assumptions()
    desc = forecast.describe()
    for key in ("radius_km", "time_tolerance_h"):
        if key in desc:
            out.setdefault("coverage", {})[key] = desc[key]
    out["airframe"] = airframe.describe()
    out["altitude_reference_note"] = (
        "GeoJSON third coordinates are read and written as metres above mean sea level "
        "(not the WGS 84 ellipsoid of RFC 7946; the geoid differs by up to ~100 m), unless "
        "the route says altitude_reference 'agl' or 'pressure'"
    )
    return out


def screen_routes(routes, forecast, *, airframe, progress=None, **kwargs) -> list[RouteScreening]:
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
