"""The main job: screen a route against a forecast for an airframe.

Order of work: whole columns are brought to each sample
(:meth:`Forecast.columns_at`), each column is diagnosed whole
(:func:`icing.column.diagnose_columns`), and only then are the results read
off at the flight altitude and on an altitude curtain for the cross-section and
the avoidance search. Where several forecast columns stand near a sample
(profile files), each is diagnosed on its own and the worst is kept: a cloudy
and a dry sounding are never blended.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from types import SimpleNamespace

import numpy as np

from icing import codes
from icing.calc.airspeed import PHASE_LEVEL, PHASES
from icing.calc.severity import NOTE_POSSIBLE_DRIZZLE, severity_reasons
from icing.caution import CAUTION
from icing.constants import FT, KT, RD, T0, G
from icing.hazards.ensemble import MemberStatistic, reduce_members
from icing.hazards.outcome import Condition, route_outcome
from icing.hazards.readoff import icing_at, read_off, take_last, worst_over_candidates
from icing.hazards.results import Curtain, RouteScreening
from icing.runs.speeds import flight_phase, route_for_timing, sample_airspeed

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
    condition : Condition or None
        The dispatcher's condition (``--fail-on`` ...); sets each route's ``outcome``.
    candidate_step_ft : float or None
        Step of the candidate-altitude search; default suited to the airframe's band
        (1,000 ft for aircraft; for drones a step giving about eight altitudes inside
        their height band, e.g. 50 ft within 400 ft). [ft]
    member_statistic : str
        Ensembles and spreads: the statistic whose word is ``severity``
        (``"median"``, ``"worst"``, ``"pNN"``; :class:`icing.hazards.ensemble.MemberStatistic`).
    spread : str or tuple or None
        A parametric spread on a single forecast (``"all"`` or choices of
        :data:`icing.runs.spread.SPREAD_CHOICES`); None for none.
    """

    step_km: float = 1.0
    curtain_step_ft: float = 500.0
    curtain_top_ft: float | None = None
    terrain_margin_ft: float = 1000.0
    all_segments: bool = False
    condition: Condition | None = None
    candidate_step_ft: float | None = None
    member_statistic: str = "median"
    spread: str | tuple | None = None

    def __post_init__(self):
        MemberStatistic.parse(self.member_statistic)  # refuses an unknown statistic

    def describe(self) -> dict:
        """Return the options as a JSON-serialisable dict."""
        return {
            "sample_step_km": self.step_km,
            "curtain_step_ft": self.curtain_step_ft,
            "terrain_margin_ft": self.terrain_margin_ft,
            "candidate_altitude_step_ft": self.candidate_step_ft or "suited to the band",
            "condition": None if self.condition is None else self.condition.describe(),
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
    airframe=None,
    step_km: float | None = None,
    tas_kt: float | None = None,
    departure=None,
    column_options=None,
    options: ScreenOptions | None = None,
    segment_prefix: str | None = None,
) -> RouteScreening:
    """Screen one route against a forecast for one airframe.

    Parameters
    ----------
    route : Route or str or path
        The route (``icing.load_route``) or a route file.
    forecast : Forecast or str or path
        The forecast (``icing.load_forecast``) or a forecast file.
    airframe : Airframe or str or None
        Preset name, airframe TOML file or :class:`icing.airframes.Airframe`; None
        takes the route's own ``airframe`` (an error when the route names none).
    step_km : float, optional
        Largest distance between samples along the track; overrides
        ``options.step_km`` (default 1 km). [km]
    tas_kt : float, optional
        True airspeed at the flight altitude; default the route's own speeds where
        it gives them, else the airframe's speed schedule by phase of flight in the
        forecast's air (:mod:`icing.runs.speeds`). [kt]
    departure : datetime, optional
        Overrides the route's departure time (timezone-aware).
    column_options : ColumnOptions, optional
        Column-physics choices (air mass, sub-adiabatic factor, ...).
    options : ScreenOptions, optional
        Run choices (curtain, all segments, condition, ...).
    segment_prefix : str, optional
        Prefix of the segment ids; default made from the route's name, so ids do not
        change with the order of the routes.

    Returns
    -------
    RouteScreening
        Samples, per-sample values at the flight altitude, the altitude curtain,
        GeoJSON segments (each with the caution) and the summary.
    """
    from icing.calc.column import ColumnOptions
    from icing.runs.members import member_columns
    from icing.runs.spread import spread_variants

    options = options or ScreenOptions()
    if step_km is not None:
        options = replace(options, step_km=step_km)
    column_options = column_options or ColumnOptions()
    route, forecast, airframe = _loaded(route, forecast, airframe)
    _check_spread(options, forecast)
    timed, given = route_for_timing(route, airframe, tas_kt=tas_kt)
    samples = _sample(timed, forecast, airframe, options, tas_kt, departure)
    spread = spread_variants(column_options, options.spread) if options.spread else None
    members = member_columns(forecast, samples, column_options, spread=spread)
    ground = _ground_height(route, samples, forecast, members.first)
    tg = _targets(samples, ground, airframe, options)
    ev = SimpleNamespace(samples=samples, route=route, airframe=airframe, given=given)
    if members.count == 1:
        ci, red = _candidate_columns(members, tg["targets"].shape[1]), None
    else:
        ci, red = _members_pass(members, tg, ground, ev, options.member_statistic)
    state = _state_at(members.diag, ci, tg["targets"], tg["vref"], ground)
    tas_ms = _target_airspeeds(samples, route, airframe, given, state)
    result, sev = icing_at(airframe, state, tas_ms)
    notes = result.notes | np.where(state.get("possible_drizzle", False), NOTE_POSSIBLE_DRIZZLE, 0)
    kbest = worst_over_candidates(sev, result.accretion_rate_mm_h)  # (n, a+1)

    def best(a):
        """Return the worst candidate's value, (n, a+1)."""
        return take_last(np.broadcast_to(a, sev.shape), kbest)

    cover = _sample_coverage(members)
    at = _at_flight(samples, cover, members.diag, state, result, best(sev), best, airframe, ci)
    at.update(
        _flight_altitudes(samples, tg["vref"], best(state["height"])[:, -1], tg["flight"], ground)
    )
    _speeds_and_reasons(at, best(tas_ms)[:, -1], best(notes)[:, -1], samples, route)
    at["gap_reason"] = _ground_gap_reason(at["gap_reason"], samples, ground)
    curtain = Curtain(
        distance_km=at["distance_km"],
        altitudes_m=tg["alts_m"],
        altitude_reference=tg["vref"],
        severity=best(sev)[:, :-1],
        below_ground=best(state["below_ground"])[:, :-1],
        temperature_c=best(state["temperature"])[:, :-1] - T0,
        cloud=best(state["cloud"])[:, :-1],
        sld_class=best(state["sld_class"])[:, :-1],
        ice_type=best(result.ice_type)[:, :-1],
        accretion_rate_mm_h=best(result.accretion_rate_mm_h)[:, :-1],
        ground_m=ground,
        **_curtain_members(red),
    )
    if red is not None:
        at.update(_flight_members(red, members))
    run = SimpleNamespace(
        route=route, airframe=airframe, samples=samples, forecast=forecast, members=members
    )
    return _assemble(run, at, curtain, column_options, options, segment_prefix)


#: Target points (samples x curtain rows x members x candidates) read off and evaluated
#: in one vectorised pass; more members are evaluated in passes of this size, which
#: bounds the memory (the read-off holds ~30 levels of ~20 fields per point).
POINTS_PER_PASS = 2**17


def _check_spread(options, forecast):
    """Refuse --spread on an ensemble: the fractions would mix forecasts and assumptions."""
    if options.spread and hasattr(forecast, "member_columns_at"):
        from icing.errors import InputError

        raise InputError(
            "--spread applies to a single forecast, not to an ensemble",
            where="--spread",
            fix="screen the ensemble, or the spread of one of its members (--member N)",
        )


def _candidate_columns(members, rows):
    """Return the one member's candidate columns of every target, (n, rows, k)."""
    cand = members.candidates[:, 0, :]
    return np.broadcast_to(cand[:, None, :], (cand.shape[0], rows, cand.shape[1]))


def _members_pass(members, tg, ground, ev, statistic):
    """Evaluate every member at every target, reduce the member axis, pick the columns.

    Members are evaluated together (in passes of :data:`POINTS_PER_PASS` target
    points); each member keeps its worst candidate column. Returns the columns of
    the statistic's member at each target, (n, rows, 1), and the reduction (with
    each member's flight-altitude words, ``member_severity`` (n, member)).
    """
    cand = members.candidates  # (n, M, k)
    n, n_members, k = cand.shape
    rows = tg["targets"].shape[1]
    sev = np.empty((n, rows, n_members), np.int8)
    score = np.empty((n, rows, n_members), np.float32)
    kbest = np.empty((n, rows, n_members), np.int64)
    per = max(1, POINTS_PER_PASS // max(1, n * rows * k))
    for m0 in range(0, n_members, per):
        m1 = min(n_members, m0 + per)
        ci = np.broadcast_to(cand[:, None, m0:m1, :], (n, rows, m1 - m0, k))
        s, rate = _member_chunk(members.diag, ci, tg, ground, ev)
        kb = worst_over_candidates(s, rate)  # (n, rows, m)
        kbest[..., m0:m1] = kb
        sev[..., m0:m1] = take_last(s, kb)
        score[..., m0:m1] = take_last(rate, kb)
    red = reduce_members(sev, statistic, score=score, axis=-1)
    pick = red.statistic_member  # (n, rows)
    k_pick = np.take_along_axis(kbest, pick[..., None], -1)[..., 0]
    cols = cand[np.arange(n)[:, None], pick, k_pick]  # (n, rows)
    return cols[..., None], SimpleNamespace(reduction=red, member_severity=sev[:, -1, :])


#: What the members' pass reads off everywhere (the rest only where there is water).
_FIRST_READ = ("temperature", "pressure", "lwc", "sld_lwc", "sld_class")


def _member_chunk(diag, ci, tg, ground, ev):
    """Severity and accretion rate of members' columns ``ci`` (n, rows, m, k) at the targets.

    Where a usable state has no cloud liquid, drizzle or rain (no water to catch) the
    word is "none" and no ice grows, without the collector physics; an unusable state
    is ``codes.GAP``. Only the wet states (most of a curtain is dry air) are read off in
    full and evaluated with :func:`icing_at`, exactly as a single forecast's are.
    """
    first = _state_at(diag, ci, tg["targets"], tg["vref"], ground, fields=_FIRST_READ)
    tas = _target_airspeeds(ev.samples, ev.route, ev.airframe, ev.given, first)
    valid = np.asarray(first["valid"], bool)
    wet = valid & (
        (np.nan_to_num(first["lwc"]) > 0)
        | (np.nan_to_num(first["sld_lwc"]) > 0)
        | (np.asarray(first["sld_class"]) > codes.SLD_NONE)
    )
    sev = np.where(valid, codes.SEV_NONE, codes.GAP).astype(np.int8)
    rate = np.zeros(valid.shape)
    if wet.any():
        extra = (1,) * (ci.ndim - 2)
        tgt = np.broadcast_to(tg["targets"].reshape(tg["targets"].shape + extra), ci.shape)
        state = read_off(diag, ci[wet], tgt[wet], reference=tg["vref"])
        state["valid"] = valid[wet]  # the ground check of the first read holds
        state["below_ground"] = np.asarray(first["below_ground"])[wet]
        result, s = icing_at(ev.airframe, state, tas[wet])
        sev[wet] = s
        rate[wet] = np.nan_to_num(result.accretion_rate_mm_h)
    return sev, rate


def _sample_coverage(members):
    """Per sample: whether any member has a column, and why none has (members' reasons)."""
    covered = members.covered.any(axis=1)
    reason = np.full(covered.shape, "", dtype=object)
    for i in np.flatnonzero(~covered):
        reason[i] = ", ".join(sorted({str(r) for r in members.gap_reason[i] if r}))
    return SimpleNamespace(covered=covered, gap_reason=reason)


def _curtain_members(ens):
    """Return the curtain's member fields (none for a single forecast)."""
    if ens is None:
        return {}
    red = ens.reduction
    return {
        "members": red.members,
        "member_statistic": red.statistic.name,
        "member_fraction": {w: f[:, :-1] for w, f in red.member_fraction.items()},
        "severity_worst_member": red.severity_worst_member[:, :-1],
    }


def _flight_members(ens, members):
    """Per-sample member fields at the flight altitude (ensembles and spreads)."""
    red = ens.reduction
    return {
        "members": red.members,
        "member_labels": np.asarray(members.labels, dtype=object),
        "member_statistic": red.statistic.name,
        "members_covering": red.members_covering[:, -1].astype(np.int16),
        "severity_worst_member": red.severity_worst_member[:, -1].astype(np.int8),
        "member_fraction": {w: f[:, -1] for w, f in red.member_fraction.items()},
        "member_severity": ens.member_severity,
        "member_gap_reason": np.asarray(members.gap_reason, dtype=object),
    }


def _target_airspeeds(samples, route, airframe, given, state):
    """Return the true airspeed of every target (n, a + 1, k): curtain rows, then flight.

    Curtain rows are flown level at the schedule's speed of their altitude; the
    flight altitude at the route's own speed where given, else the schedule's
    speed of the sample's phase of flight (:mod:`icing.runs.speeds`).
    """
    p, t, z = state["pressure"], state["temperature"], state["height"]
    rows = airframe.schedule.true_airspeed(PHASE_LEVEL, p[:, :-1], t[:, :-1], z[:, :-1])
    flight = sample_airspeed(
        samples, route, airframe, given, pressure=p[:, -1], temperature=t[:, -1], height=z[:, -1]
    )
    return np.concatenate([rows, flight[:, None, :]], axis=1)


def _speeds_and_reasons(at, tas_ms, notes, samples, route):
    """Add the airspeed, phase of flight and severity reasons of every sample to ``at``.

    The reasons name the airspeed to the nearest 10 kt, so a segment flown at a
    steady speed repeats one reason; several reasons of a sample are joined by " | ".
    """
    at["tas_kt"] = tas_ms / KT
    at["phase"] = np.asarray(PHASES, dtype=object)[flight_phase(samples, route)]
    at["severity_notes"] = np.where(at["severity"] == codes.GAP, 0, notes).astype(np.int16)
    at["severity_reasons"] = np.array(
        [
            " | ".join(severity_reasons(n, tas_kt=round(v, -1) if np.isfinite(v) else v))
            for n, v in zip(at["severity_notes"], at["tas_kt"], strict=True)
        ],
        dtype=object,
    )


def _loaded(route, forecast, airframe):
    """Return route, forecast and airframe objects from objects, files or preset names."""
    from icing.airframes import load_airframe
    from icing.forecast import load_forecast
    from icing.route import load_route

    if not hasattr(route, "waypoints"):
        route = load_route(route)
    if not hasattr(forecast, "columns_at"):
        forecast = load_forecast(forecast)
    airframe = _route_airframe(route, airframe, load_airframe)
    return route, forecast, airframe


def _sample(route, forecast, airframe, options, tas_kt, departure):
    """Sample the route (timed with the forecast's winds where it has them)."""
    from icing.route import sample_route

    return sample_route(
        route,
        step_km=options.step_km,
        tas_kt=tas_kt,
        default_tas_kt=airframe.true_airspeed_kt,
        departure=departure,
        wind=forecast.wind_at if forecast.has_wind else None,
    )


def _targets(samples, ground, airframe, options):
    """Vertical targets of every sample: the curtain rows, then the flight altitude.

    Returns a dict: ``targets`` (n, a + 1) heights [m] or pressures [Pa], the
    curtain ``alts_m``, the vertical reference ``vref`` and the ``flight`` targets.
    """
    from icing.calc.thermo import standard_atmosphere_pressure

    n = len(samples.lat)
    target_flight, vref = _flight_targets(samples, ground)
    alts_m = _curtain_rows(airframe, options, ground)
    rows = standard_atmosphere_pressure(alts_m) if vref == "pressure" else alts_m
    targets = np.concatenate([np.broadcast_to(rows, (n, alts_m.size)), target_flight[:, None]], 1)
    return {"targets": targets, "alts_m": alts_m, "vref": vref, "flight": target_flight}


def _state_at(diag, ci, targets, vref, ground, fields=None):
    """Read the diagnosed columns ``ci`` off at the targets (fields shaped like ``ci``).

    ``ci`` is (n, a + 1, ...) (trailing axes: members, candidate columns); the
    targets (n, a + 1) are the same for each. Targets under the ground are unusable
    and below-ground (:func:`_under_ground`). ``fields`` limits the fields read
    (:func:`icing.hazards.readoff.read_off`).
    """
    extra = (1,) * (ci.ndim - 2)
    tgt = np.broadcast_to(targets.reshape(targets.shape + extra), ci.shape)
    if fields is not None and vref == "pressure":
        fields = tuple(dict.fromkeys((*fields, "pressure", "temperature")))
    state = read_off(diag, ci, tgt, reference=vref, fields=fields)
    under = _under_ground(state, tgt, vref, ground.reshape(ground.shape + (1,) * (ci.ndim - 1)))
    state["below_ground"] = state["below_ground"] | under
    state["valid"] = state["valid"] & ~under
    return state


def _under_ground(state, tgt, vref, g):
    """Which targets (n, a + 1, ...) lie under the ground ``g`` [m MSL].

    Curtain rows (every target but the last) by their own altitude, as a grid
    band's (:mod:`icing.hazards.bands`): the height read off is held at the
    column's lowest level under it, so a row under the terrain of a column whose
    lowest level stands above the ground (terrain-following levels: WRF) would
    otherwise read as a coverage gap instead of ground. A pressure row's altitude
    under the lowest level comes from the hypsometric equation over the lowest
    level's temperature (isothermal layer; Wallace & Hobbs 2006, eq. 3.29). The
    flight altitude (the last target) is compared by the height read off: a route
    at an airfield lower than the forecast's smoothed terrain keeps the lowest
    level's near-surface values over the read-off's 300 m (``hazards.readoff``).
    """
    height = np.array(state["height"], float)
    if vref == "pressure":
        p_read, t_read = state["pressure"], state["temperature"]
        with np.errstate(invalid="ignore", divide="ignore"):
            # dz = (Rd T / g) ln(p / p_lowest) under the lowest level (eq. 3.29, T constant)
            depth = RD * t_read / G * np.log(tgt / p_read)
            rows = np.where(tgt > p_read, height - depth, height)
    else:
        rows = tgt
    height[:, :-1] = rows[:, :-1]
    with np.errstate(invalid="ignore"):
        return np.isfinite(g) & (height < g - 1.0)


def _assemble(run, at, curtain, column_options, options, segment_prefix):
    """Build the screening once: segments with their candidate altitudes, then the summary.

    ``run`` holds the route, airframe, samples, forecast and members of the screening.
    """
    from icing.hazards.avoidance import CANDIDATE_WORDING, segment_candidates
    from icing.hazards.segments import build_segments, route_summary, segment_prefix_of

    route, airframe, samples, forecast = run.route, run.airframe, run.samples, run.forecast

    limits = _altitude_limits(airframe, options)
    segments = build_segments(
        route.name,
        airframe.name,
        samples,
        at,
        all_segments=options.all_segments,
        id_prefix=segment_prefix_of(route.name) if segment_prefix is None else segment_prefix,
    )
    segments, candidates = segment_candidates(
        segments, curtain, samples=samples, at_flight=at, **limits
    )
    summary = route_summary(
        SimpleNamespace(
            route_name=route.name,
            airframe_name=airframe.name,
            samples=samples,
            at_flight=at,
            segments=segments,
        ),
        airframe=airframe,
    )
    outcome, reason = route_outcome(summary, options.condition)
    summary = {
        **{k: summary[k] for k in ("route", "airframe")},
        "outcome": outcome,
        "outcome_reason": reason,
        "condition": None if options.condition is None else options.condition.describe(),
        **{k: v for k, v in summary.items() if k not in ("route", "airframe")},
    }
    stretches = _summary_candidates(candidates, segments)
    summary["candidate_altitudes"] = stretches
    summary["candidate_altitudes_ft"] = stretches  # deprecated name, kept one release
    summary["candidate_altitudes_wording"] = CANDIDATE_WORDING
    summary["caution"] = CAUTION
    return RouteScreening(
        route_name=route.name,
        airframe_name=airframe.name,
        samples=samples,
        at_flight=at,
        curtain=curtain,
        segments=segments,
        summary=summary,
        waypoints=[
            (str(name), float(d) / 1000.0)
            for name, d in zip(samples.waypoint_names, samples.waypoint_distance_m, strict=True)
        ],
        provenance=_provenance(forecast, samples),
        assumptions=_assumptions(column_options, options, forecast, airframe, limits, run.members),
        ceiling_m=limits["ceiling_m"],
        max_agl_m=limits["max_agl_m"],
        candidates=candidates,
    )


def _route_airframe(route, airframe, load_airframe):
    """Return the airframe to screen with: the one given, else the route's own; no default."""
    from icing.errors import AirframeError

    if airframe is None:
        airframe = getattr(route, "airframe", None)
    if airframe is None:
        from icing.airframes import list_airframes

        names = ", ".join(a.name for a in list_airframes())
        raise AirframeError(
            f"no airframe named for route {route.name!r}",
            path=getattr(route, "source", None),
            fix=f"give --airframe NAME|FILE.toml or an 'airframe' property in the route "
            f"(presets: {names})",
        )
    return airframe if hasattr(airframe, "collectors") else load_airframe(airframe)


def _curtain_rows(airframe, options, ground):
    """Curtain altitudes [m]: every ``curtain_step_ft`` to the top, finer in a drone's band.

    A drone's candidate altitudes are searched every few tens of feet inside its height
    band, so the curtain has rows at that step up to the band's top over the highest
    ground; above it the usual step continues.
    """
    top_ft = options.curtain_top_ft or (airframe.ceiling_ft or 25000.0) + 2000.0
    rows_ft = np.arange(0.0, top_ft + 1, options.curtain_step_ft)
    band = _drone_band_ft(airframe)
    if band is not None:
        g = np.asarray(ground, float)
        g_ft = float(np.nanmax(g)) / FT if np.isfinite(g).any() else 0.0
        step = options.candidate_step_ft or _band_step_ft(band)
        fine = np.arange(0.0, max(g_ft, 0.0) + band[1] + options.curtain_step_ft + 1, step)
        rows_ft = np.union1d(rows_ft, fine[fine <= top_ft])
    return rows_ft * FT


def _drone_band_ft(airframe):
    """(lowest, highest) height above ground of a drone [ft], None for aircraft."""
    agl_max = getattr(airframe, "max_altitude_agl_ft", None)
    if not agl_max:
        return None
    return float(getattr(airframe, "min_altitude_ft", None) or 100.0), float(agl_max)


def _band_step_ft(band):
    """Return a candidate step suited to a height band: about eight altitudes inside it.

    Aircraft bands (thousands of feet) keep 1,000 ft; a drone's 100-400 ft band gets
    50 ft. The steps are round numbers a pilot reads and flies (common practice).
    """
    depth = band[1] - band[0]
    for step in (1000.0, 500.0, 250.0, 100.0, 50.0):
        if depth / step >= 6:
            return step
    return 25.0


def _ground_gap_reason(reason, samples, ground):
    """Name the gap of an AGL sample over unknown ground: the fix is a ground elevation."""
    if samples.altitude_reference != "agl":
        return reason
    unknown = (reason == "missing-values") & ~np.isfinite(np.asarray(ground, float))
    return np.where(unknown, "surface-height-unknown", reason)


def _flight_altitudes(samples, vref, level_height_m, target_flight, ground):
    """Per-sample altitudes for the outputs: MSL (the one output reference), the route's own.

    Flight levels are matched on pressure: their MSL height is the forecast's height
    of that pressure; where the forecast has none (a coverage gap) the
    standard-atmosphere height stands in (pressure altitude = MSL in the ISA).
    """
    own = np.asarray(samples.altitude_m, float)
    if vref == "pressure":
        msl = np.where(np.isfinite(level_height_m), level_height_m, own)
        curtain = own
    else:
        msl = np.where(np.isfinite(target_flight), target_flight, own)
        curtain = msl
    return {
        "altitude_msl_m": msl,
        "altitude_ft": msl / FT,
        "route_altitude_ft": own / FT,
        "curtain_altitude_m": curtain,
        "ground_m": np.asarray(ground, float),
        "tas_m_s": np.asarray(samples.tas, float),
    }


def _at_flight(samples, cover, diag, state, result, sev_b, best, airframe, column_index):
    """Per-sample values at the planned altitude (the last target column), for output."""

    def flight(a):
        return best(a)[:, -1]

    sev = sev_b[:, -1]
    gap = sev == codes.GAP
    covered = np.asarray(cover.covered, bool)
    # why a sample is a gap: the forecast's reason, else no usable level at that altitude
    reason = np.where(covered, "missing-values", np.asarray(cover.gap_reason, dtype=object))
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
                "candidate_altitudes_ft": list(r.get("ice_free_altitudes_ft", [])),
                "ice_free_altitudes_ft": list(r.get("ice_free_altitudes_ft", [])),  # deprecated
                "text": r.get("text"),
            }
        )
    return out


def _altitude_limits(airframe, options):
    """Search limits for candidate altitudes: terrain margin, ceiling, drone AGL limits."""
    agl_max = getattr(airframe, "max_altitude_agl_ft", None)
    if agl_max:
        # drones: between their minimum and maximum height above the ground
        band = _drone_band_ft(airframe)
        return {
            "ceiling_m": None if airframe.ceiling_ft is None else airframe.ceiling_ft * FT,
            "max_agl_m": float(agl_max) * FT,
            "terrain_margin_ft": band[0],
            "step_ft": options.candidate_step_ft or _band_step_ft(band),
        }
    return {
        "ceiling_m": float(airframe.ceiling_ft or 25000.0) * FT,
        "max_agl_m": None,
        "terrain_margin_ft": options.terrain_margin_ft,
        "step_ft": options.candidate_step_ft or 1000.0,
    }


def _provenance(forecast, samples):
    prov = dict(forecast.describe())
    times = np.asarray(samples.time)
    if times.size:
        from icing.hazards.segments import _iso

        prov["route_time_window"] = [_iso(times.min()), _iso(times.max())]
    return prov


def _member_assumptions(options, members):
    """How the members were formed and reduced (ensembles and spreads)."""
    from icing.hazards.ensemble import FRACTION_MEANING

    statistic = MemberStatistic.parse(options.member_statistic)
    return {
        "kind": members.kind,
        "members": members.count,
        "member_list": list(members.details),
        "statistic": statistic.name,
        "statistic_meaning": statistic.describe(),
        "severity": f"severity is the {statistic.name} member's word at each sample; "
        "severity_worst_member the worst member's",
        "member_fraction": FRACTION_MEANING,
        "evaluation": "each member's whole columns diagnosed, read off and evaluated for the "
        "airframe like a single forecast's, all members in one vectorised pass (passes of "
        f"{POINTS_PER_PASS} target points); members are never blended into one column",
        "route_timing": "one timing for every member, with the mean of the members' winds",
        "candidate_altitudes": f"searched on the {statistic.name} member's words",
    }


def _assumptions(column_options, options, forecast, airframe, limits, members):
    out = {"column": column_options.describe(), "screening": options.describe()}
    if members.count > 1:
        out["members"] = _member_assumptions(options, members)
    out["screening"]["candidate_altitude_step_ft"] = limits["step_ft"]
    from icing.calc.airframe import assumptions as collector_assumptions

    out["collectors"] = collector_assumptions()
    desc = forecast.describe()
    for key in ("radius_km", "time_tolerance_h"):
        if key in desc:
            out.setdefault("coverage", {})[key] = desc[key]
    out["airframe"] = airframe.describe()
    out["altitude_reference_note"] = (
        "every output altitude is above mean sea level (altitude_reference 'msl'): GeoJSON "
        "third coordinates are metres MSL (not the WGS 84 ellipsoid of RFC 7946; the geoid "
        "differs by up to ~100 m); AGL routes are placed on the ground under them and flight "
        "levels on the forecast's height of their pressure (the standard atmosphere where the "
        "forecast has none); the route's own reference is route_altitude_reference"
    )
    return out


def screen_routes(
    routes, forecast, *, airframe=None, progress=None, id_tag="", **kwargs
) -> list[RouteScreening]:
    """Screen several routes against one forecast (segment ids unique across routes).

    Segment ids come from each route's name (``skerrow-dispatch-001``), so they do not
    change with the order of the routes; routes of the same name get ``-2``, ``-3`` ...
    in the order given; ``id_tag`` goes after the name (a departure time, when one
    run screens several departures). ``airframe`` None takes each route's own. ``progress``, if
    given, is called as ``progress(done, total, route_name)`` after each route (the
    CLI draws a progress line from it).
    """
    from icing.hazards.segments import segment_prefix_of

    routes = list(routes)
    out, used = [], {}
    for r in routes:
        prefix = segment_prefix_of(r.name) if hasattr(r, "name") else None
        if prefix is not None:
            used[prefix] = used.get(prefix, 0) + 1
            if used[prefix] > 1:
                prefix = f"{prefix[:-1]}-{used[prefix]}-"
            prefix += id_tag
        out.append(screen_route(r, forecast, airframe=airframe, segment_prefix=prefix, **kwargs))
        if progress is not None:
            progress(len(out), len(routes), out[-1].route_name)
    return out
