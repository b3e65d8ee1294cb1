"""Geodesic sampling along a route: the points at which the forecast is read.

Sampling follows geodesics on the WGS 84 ellipsoid (``pyproj.Geod``). Between
two waypoints the sample spacing is the smallest of the distance step, about
20 s of flight and about 100 ft of altitude change, so short drone legs and
climbs through thin layers are resolved. Altitude is linear in distance along
each leg. A hold (``hold_min`` at a waypoint) puts samples at that point spread
over the hold. Longitudes are normalised to [-180, 180), so routes across the
antimeridian sample like any other.

Times come from waypoint times (linear in distance between two timed
waypoints) or from a departure time and the true airspeed, corrected by an
optional wind (ground speed = TAS + along-track wind component, floored at
:data:`GROUND_SPEED_FLOOR` of the TAS).

Examples
--------
>>> from datetime import datetime, timezone
>>> from icing.route.model import Route, Waypoint
>>> t0 = datetime(2027, 1, 14, 9, 0, tzinfo=timezone.utc)
>>> route = Route("demo", [Waypoint("reg-01", 56.5, -26.0, 3000.0),
...                        Waypoint("reg-02", 56.95, -24.9, 3000.0)],
...               departure_time=t0, true_airspeed_kt=250.0)
>>> s = sample_route(route)
>>> len(s), round(float(s.distance_m[-1]) / 1000, 1), round(float(s.dt_s.sum()))
(85, 83.9, 653)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import UTC, datetime

import numpy as np
from pyproj import Geod

from icing.constants import FT, KT
from icing.errors import RouteError
from icing.route.model import (
    check_airspeed_kt,
    check_number,
    check_waypoints,
    parse_time,
    warn_plausibility,
)

__all__ = [
    "GROUND_SPEED_FLOOR",
    "MAX_SAMPLES",
    "STEP_LIMITS",
    "RouteSamples",
    "sample_route",
]

#: Ground speed is never taken below this fraction of the true airspeed when a
#: head wind is applied (common practice, no source: an aircraft making less
#: than a quarter of its airspeed over the ground would not fly the plan).
GROUND_SPEED_FLOOR = 0.25

_GEOD = Geod(ellps="WGS84")
#: The most samples of one route: more than a 15,000 km flight needs at the default
#: 1 km step (a day's hold at 20 s is 4,320). Each sample is a forecast column
#: diagnosed and read off on the whole altitude curtain for every candidate profile,
#: about 75 kB of working memory while it is screened (20,000 samples measured at
#: 1.5 GB and 15 s), so samples size the work and the memory of a run.
MAX_SAMPLES = 20_000
#: The finest sampling steps accepted, by argument: finer than 10 m, 1 s or 10 ft
#: resolves nothing a forecast holds (its cells are kilometres wide and tens of metres
#: deep) and only multiplies the work. Coarser steps only lower the work (a caller may
#: switch a criterion off with a huge step); the command line states its own bounds.
STEP_LIMITS = {"step_km": 0.01, "max_step_s": 1.0, "max_step_ft": 10.0}
_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)
# waypoint times implying more ground speed look wrong (common practice, no source:
# subsonic aircraft with a jet-stream tail wind stay below ~750 kt)
_FASTEST_GROUND_SPEED = 800.0 * KT


@dataclass(frozen=True)
class RouteSamples:
    """Points along a route at which the forecast is read; arrays shaped (n,).

    Frozen: built once by :func:`sample_route`, never edited afterwards.

    Attributes
    ----------
    lat, lon : ndarray
        WGS 84 position, longitude in [-180, 180). [degrees]
    altitude_m : ndarray
        Altitude in ``altitude_reference``. [m]
    distance_m : ndarray
        Geodesic distance along the track from the first waypoint. [m]
    time : ndarray of datetime64[ms]
        UTC time at the sample.
    tas : ndarray
        True airspeed (where no airspeed was given, the speed implied by the
        waypoint times). [m/s]
    leg : ndarray of int
        Index of the leg (waypoint ``leg`` to ``leg + 1``).
    from_waypoint, to_waypoint : ndarray of object
        Names of the waypoints around the sample (the same name during a hold).
    hold : ndarray of bool
        The sample is at a hold waypoint during its hold.
    dt_s : ndarray
        Time each sample stands for (half the intervals to its neighbours); each
        instant of the flight belongs to exactly one sample, so they add up to the
        flight time. [s]
    altitude_reference : str
        ``"msl"``, ``"agl"`` or ``"pressure"``.
    route_name : str
        Name of the route.
    waypoint_distance_m : ndarray
        Distance along the track of each waypoint, shaped (number of waypoints,). [m]
    waypoint_names : list of str
        Names of the waypoints.
    ground_elevation_m : float or None
        The route's given surface height (for AGL routes). [m]
    ground_speed : ndarray
        Ground speed (3-D path speed) on the sample's leg; 0 during holds. [m/s]
    """

    lat: np.ndarray
    lon: np.ndarray
    altitude_m: np.ndarray
    distance_m: np.ndarray
    time: np.ndarray
    tas: np.ndarray
    leg: np.ndarray
    from_waypoint: np.ndarray
    to_waypoint: np.ndarray
    hold: np.ndarray
    dt_s: np.ndarray
    altitude_reference: str = "msl"
    route_name: str = ""
    waypoint_distance_m: np.ndarray = field(default_factory=lambda: np.zeros(0))
    waypoint_names: list = field(default_factory=list)
    ground_elevation_m: float | None = None
    ground_speed: np.ndarray | None = None

    def __len__(self):
        return int(self.lat.shape[0])


# --------------------------------------------------------------------------- sampling


def _epoch_s(t):
    return (t - _EPOCH).total_seconds()


def _interleave(a, b):
    """[a0, b0, a1, b1, ..., a_last] for len(a) == len(b) + 1."""
    out = np.empty(a.size + b.size, dtype=np.result_type(a, b))
    out[0::2] = a
    out[1::2] = b
    return out


def _check_step(value, what):
    low = STEP_LIMITS[what]
    return check_number(
        value, what, where=what, low=low, high=1e12, fix=f"give {what} of at least {low:g}"
    )


def sample_route(
    route,
    *,
    step_km=1.0,
    max_step_s=20.0,
    max_step_ft=100.0,
    tas_kt=None,
    departure=None,
    wind=None,
    default_tas_kt=None,
):
    """Sample a route along its geodesics in distance, time and altitude.

    Parameters
    ----------
    route : Route
        The route.
    step_km : float
        Largest distance between samples. [km]
    max_step_s : float
        Largest flight time between samples (in still air; a wind changes it
        by the ratio of true airspeed to ground speed). [s]
    max_step_ft : float
        Largest altitude change between samples. [ft]
    tas_kt : float, optional
        True airspeed for every leg, overriding the route's. [kt]
    departure : str, datetime or numpy.datetime64, optional
        Departure time overriding the route's: the whole timeline (waypoint
        times included) is shifted to start then.
    wind : callable, optional
        ``wind(lat, lon, altitude_m, time) -> (u, v)`` [m/s] on arrays (time as
        datetime64[ms]; ``altitude_m`` an approximate height above mean sea
        level: AGL plus the route's ``ground_elevation_m``, pressure altitude as
        it is); turns airspeed into ground speed on legs timed by the airspeed
        (not between timed waypoints). NaN winds count as calm.
    default_tas_kt : float, optional
        True airspeed for legs without any other (e.g. the airframe's cruise
        speed). [kt]

    Returns
    -------
    RouteSamples

    Raises
    ------
    RouteError
        No waypoints, inconsistent times, no time to start from (give a
        departure time) or no airspeed for a leg that needs one.

    Notes
    -----
    Each leg is cut into ``max(d / step, |dz| / max_step_ft, t / max_step_s)``
    equal parts, ``d`` its geodesic length, ``dz`` its altitude change and ``t``
    its flight time. Between two timed waypoints time is linear in 3-D path
    length (distance and climb), holds excepted; elsewhere a leg takes its
    path length over the ground speed, one pass: the wind is read at the
    middle of each part at the still-air time.
    """
    check_waypoints(route)
    step_m = _check_step(step_km, "step_km") * 1000.0
    step_s = _check_step(max_step_s, "max_step_s")
    step_z = _check_step(max_step_ft, "max_step_ft") * FT
    wp = _waypoint_arrays(route, departure)
    tas_wp = _waypoint_tas(route, tas_kt, default_tas_kt)
    legs = _legs(wp)
    legs.update(_leg_durations(route, wp, legs, tas_wp))
    grid = _subdivide(route, wp, legs, step_m, step_z, step_s)
    pos = _positions(wp, legs, grid)
    clock = _timeline(route, wp, legs, grid, wind)
    return _assemble(route, wp, legs, grid, pos, clock, tas_wp)


def _waypoint_arrays(route, departure):
    """Per-waypoint arrays: names, position, altitude, hold [s] and time anchors [s]."""
    wps = route.waypoints
    anchor = np.array([np.nan if w.time is None else _epoch_s(parse_time(w.time)) for w in wps])
    if np.isnan(anchor[0]) and route.departure_time is not None:
        anchor[0] = _epoch_s(parse_time(route.departure_time))
    dep_override = (
        None
        if departure is None
        else _epoch_s(parse_time(departure, where="departure", what="departure"))
    )
    if np.all(np.isnan(anchor)):
        if dep_override is None:
            raise RouteError(
                f"route {route.name!r} has no departure time and no waypoint times",
                path=route.source,
                fix="give departure_time in the route or --depart",
            )
        anchor[0] = dep_override
    return {
        "nw": len(wps),
        "name": np.array([w.name for w in wps], dtype=object),
        "lat": np.array([w.lat for w in wps], dtype=float),
        "lon": np.array([w.lon for w in wps], dtype=float),
        "alt": np.array([w.altitude_m for w in wps], dtype=float),
        "hold": np.array([w.hold_min for w in wps], dtype=float) * 60.0,
        "anchor": anchor,
        "dep_override": dep_override,
    }


def _waypoint_tas(route, tas_kt, default_tas_kt):
    """Return the true airspeed leaving each waypoint [m/s], NaN where unknown."""

    def speed_kt(value, what, where):
        return None if value is None else check_airspeed_kt(value, what, where=where)

    tas_arg = speed_kt(tas_kt, "tas_kt", "tas_kt (--tas-kt)")
    tas_default = speed_kt(default_tas_kt, "default_tas_kt", "the airframe's true_airspeed_kt")
    tas_wp = np.array([np.nan if w.tas_kt is None else w.tas_kt for w in route.waypoints])
    tas_route = route.true_airspeed_kt
    if tas_arg is not None:
        tas_wp[:] = tas_arg
    else:
        fallback = tas_route if tas_route is not None else tas_default
        if fallback is not None:
            tas_wp[np.isnan(tas_wp)] = fallback
    return tas_wp * KT


def _legs(wp):
    """Geodesic legs: azimuth, length, climb, 3-D path and the running sums."""
    lat, lon, alt, hold = wp["lat"], wp["lon"], wp["alt"], wp["hold"]
    nl = wp["nw"] - 1
    if nl > 0:
        az12, _, dist = _GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        az12, dist = np.atleast_1d(az12).astype(float), np.atleast_1d(dist).astype(float)
    else:
        az12 = dist = np.zeros(0)
    dz = np.diff(alt)
    path3 = np.hypot(dist, dz)
    return {
        "nl": nl,
        "az12": az12,
        "dist": dist,
        "dz": dz,
        "path3": path3,
        "cum_h": np.concatenate([[0.0], np.cumsum(dist)]),
        "cum_3": np.concatenate([[0.0], np.cumsum(path3)]),
        "cum_hold": np.concatenate([[0.0], np.cumsum(hold)]),  # hold time before waypoint i
    }


def _leg_durations(route, wp, legs, tas_wp):
    """Leg durations: anchored spans from the times, else path length / TAS."""
    nl, path3, name, anchor = legs["nl"], legs["path3"], wp["name"], wp["anchor"]
    cum_3, cum_hold = legs["cum_3"], legs["cum_hold"]
    duration = np.full(nl, np.nan)
    anchored = np.zeros(nl, dtype=bool)
    a_idx = np.flatnonzero(~np.isnan(anchor))
    if a_idx.size > 1 and nl > 0:
        k = np.arange(nl)
        inside = (k >= a_idx[0]) & (k < a_idx[-1])
        pos = np.searchsorted(a_idx, k[inside], side="right")
        ai, aj = a_idx[pos - 1], a_idx[pos]
        moving = anchor[aj] - anchor[ai] - (cum_hold[aj] - cum_hold[ai])
        span = cum_3[aj] - cum_3[ai]
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.where(span > 0, path3[inside] / span, 1.0 / (aj - ai))
        duration[inside] = moving * share
        anchored[inside] = True
    tas_leg = tas_wp[:-1].copy()
    free = ~anchored
    missing = free & ~(tas_leg > 0) & (path3 > 0)
    if np.any(missing):
        i = int(np.flatnonzero(missing)[0])
        raise RouteError(
            f"no true airspeed for the leg {name[i]} -> {name[i + 1]} of route {route.name!r}",
            path=route.source,
            fix="give --tas-kt, an airframe, or true_airspeed_kt in the route",
        )
    with np.errstate(invalid="ignore", divide="ignore"):
        duration[free] = np.where(path3[free] > 0, path3[free] / tas_leg[free], 0.0)
        implied = np.where(duration > 0, path3 / duration, 0.0)
    tas_leg = np.where(np.isnan(tas_leg), implied, tas_leg)
    fast = anchored & (implied > _FASTEST_GROUND_SPEED)
    if np.any(fast):
        i = int(np.flatnonzero(fast)[0])
        warn_plausibility(
            f"route {route.name!r}: the waypoint times imply "
            f"{implied[i] / KT:.0f} kt over the ground from {name[i]} to "
            f"{name[i + 1]}; check the times"
        )
    return {"duration": duration, "anchored": anchored, "tas_leg": tas_leg, "a_idx": a_idx}


def _parts(x):
    return np.ceil(np.maximum(x, 0.0) * (1.0 - 1e-12))


def _subdivide(route, wp, legs, step_m, step_z, step_s):
    """How many parts each leg and hold is cut into, and which sample belongs where."""
    nl, hold = legs["nl"], wp["hold"]
    parts = (
        np.maximum.reduce(
            [
                np.ones(nl),
                _parts(legs["dist"] / step_m),
                _parts(np.abs(legs["dz"]) / step_z),
                _parts(legs["duration"] / step_s),
            ]
        )
        if nl
        else np.zeros(0)
    )
    held = np.where(hold > 0, np.maximum(2.0, _parts(hold / step_s)), 0.0)
    # counted in floats first: no integer overflow, whatever the steps and speeds
    count = float(np.sum(np.where(hold > 0, held + 1.0, 1.0)) + np.sum(parts - 1.0))
    if not count <= MAX_SAMPLES:
        hours = (np.nansum(legs["duration"]) + hold.sum()) / 3600.0
        raise RouteError(
            f"route {route.name!r} would give {count:.3g} samples ({hours:.3g} h of flight "
            f"at the airspeeds given), above the limit of {MAX_SAMPLES} per route",
            path=route.source,
            fix="check the true airspeed (knots); else use a larger step_km / max_step_s / "
            "max_step_ft, or split the route",
        )
    n, m = parts.astype(np.int64), held.astype(np.int64)
    block = np.where(hold > 0, m + 1, 1)
    total = int(block.sum() + (n - 1).sum())
    # samples: block 0, interior of leg 0, block 1, ..., block nw-1
    counts = _interleave(block, n - 1)
    seg = np.repeat(np.arange(counts.size), counts)
    local = np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts)
    is_block = seg % 2 == 0
    owner = seg // 2  # waypoint index for blocks, leg index for interiors
    frac = np.where(
        is_block,
        0.0,
        (local + 1) / np.where(is_block, 1, n[np.minimum(owner, max(nl - 1, 0))] if nl else 1),
    )
    return {
        "n": n,
        "m": m,
        "block": block,
        "total": total,
        "is_block": is_block,
        "owner": owner,
        "frac": frac,
    }


def _positions(wp, legs, grid):
    """Sample positions, altitudes and distances along the geodesic legs."""
    owner, is_block, frac = grid["owner"], grid["is_block"], grid["frac"]
    lat, lon, alt = wp["lat"], wp["lon"], wp["alt"]
    s_lat, s_lon = lat[owner].copy(), lon[owner].copy()
    s_alt = alt[owner].copy()
    s_dist = legs["cum_h"][owner].copy()
    inner = ~is_block
    if np.any(inner):
        kk = owner[inner]
        f = frac[inner]
        lo, la, _ = _GEOD.fwd(lon[kk], lat[kk], legs["az12"][kk], f * legs["dist"][kk])
        s_lon[inner], s_lat[inner] = lo, la
        s_alt[inner] = alt[kk] + f * legs["dz"][kk]
        s_dist[inner] = legs["cum_h"][kk] + f * legs["dist"][kk]
    return {"lat": s_lat, "lon": s_lon, "alt": s_alt, "dist": s_dist}


def _timeline(route, wp, legs, grid, wind):
    """Time of every sample (relative and start), with the wind on untimed legs."""
    nl, n, m, block = legs["nl"], grid["n"], grid["m"], grid["block"]
    hold, a_idx = wp["hold"], legs["a_idx"]
    # intervals between samples: hold parts inside blocks, leg parts between them
    hold_part = np.where(m > 0, hold / np.maximum(m, 1), 0.0)
    i_counts = _interleave(block - 1, n)
    i_seg = np.repeat(np.arange(i_counts.size), i_counts)
    i_owner = i_seg // 2
    i_leg = i_seg % 2 == 1
    leg_sub = np.repeat(np.arange(nl), n)  # leg of each leg part, in order
    sub_path = (legs["path3"] / np.maximum(n, 1))[leg_sub]
    sub_dur = (legs["duration"] / np.maximum(n, 1))[leg_sub]

    def timeline(sub_dur):
        dur = np.where(i_leg, 0.0, hold_part[i_owner])
        dur[i_leg] = sub_dur
        rel = np.concatenate([[0.0], np.cumsum(dur)])
        first = np.concatenate([[0], np.cumsum(block + np.append(n - 1, 0))[:-1]])
        start = wp["anchor"][a_idx[0]] - rel[first[a_idx[0]]]
        return rel, start

    rel, start = timeline(sub_dur)
    gs_sub = np.where(sub_dur > 0, sub_path / np.where(sub_dur > 0, sub_dur, 1.0), 0.0)
    windy = ~legs["anchored"][leg_sub] & (sub_path > 0)
    if wind is not None and np.any(windy):
        gs = _wind_ground_speed(
            route, wp, legs, n, leg_sub, windy, rel, start, i_leg, sub_dur, wind
        )
        sub_dur = sub_dur.copy()
        sub_dur[windy] = sub_path[windy] / gs
        gs_sub[windy] = gs
        rel, start = timeline(sub_dur)
    if wp["dep_override"] is not None:
        start = wp["dep_override"]
    return {"rel": rel, "start": start, "gs_sub": gs_sub, "leg_sub": leg_sub}


def _wind_ground_speed(route, wp, legs, n, leg_sub, windy, rel, start, i_leg, sub_dur, wind):
    """Ground speed of the windy leg parts: TAS plus the along-track wind, floored."""
    lon, lat, alt = wp["lon"], wp["lat"], wp["alt"]
    kk = leg_sub[windy]
    j = (np.arange(leg_sub.size) - np.repeat(np.cumsum(n) - n, n))[windy]
    f = (j + 0.5) / n[kk]
    lo, la, back = _GEOD.fwd(lon[kk], lat[kk], legs["az12"][kk], f * legs["dist"][kk])
    lo = (np.asarray(lo) + 180.0) % 360.0 - 180.0
    track = np.radians(np.asarray(back) + 180.0)
    interval_start = rel[:-1][i_leg][windy]
    t_mid = start + interval_start + 0.5 * sub_dur[windy]
    t_mid64 = np.round(t_mid * 1000.0).astype(np.int64).astype("datetime64[ms]")
    z_mid = alt[kk] + f * legs["dz"][kk]
    if route.altitude_reference == "agl":  # the wind is read by height above sea level
        z_mid = z_mid + (route.ground_elevation_m or 0.0)
    u, v = wind(np.asarray(la), lo, z_mid, t_mid64)
    u = np.nan_to_num(np.broadcast_to(np.asarray(u, dtype=float), kk.shape), nan=0.0)
    v = np.nan_to_num(np.broadcast_to(np.asarray(v, dtype=float), kk.shape), nan=0.0)
    tas_here = legs["tas_leg"][kk]
    gs = tas_here + u * np.sin(track) + v * np.cos(track)
    floor = GROUND_SPEED_FLOOR * tas_here
    if np.any(gs < floor):
        warn_plausibility(
            f"route {route.name!r}: the wind exceeds "
            f"{1 - GROUND_SPEED_FLOOR:.0%} of the true airspeed on "
            f"{int(np.sum(gs < floor))} of {gs.size} parts; ground speed "
            f"floored at {GROUND_SPEED_FLOOR:.0%} of it"
        )
    return np.maximum(gs, floor)


def _assemble(route, wp, legs, grid, pos, clock, tas_wp):
    """Per-sample attributes (leg, waypoints, hold, airspeeds) and the RouteSamples."""
    nl, n, name = legs["nl"], grid["n"], wp["name"]
    owner, is_block, total = grid["owner"], grid["is_block"], grid["total"]
    rel, start = clock["rel"], clock["start"]
    t_ms = np.round((start + rel) * 1000.0).astype(np.int64)
    times = t_ms.astype("datetime64[ms]")
    dt = 0.5 * (np.diff(rel, prepend=rel[0]) + np.diff(rel, append=rel[-1]))
    last_leg = max(nl - 1, 0)
    s_leg = np.where(is_block, np.minimum(owner, last_leg), owner)
    s_hold = is_block & (wp["hold"][owner] > 0)
    if nl:
        wp_of_leg_from, wp_of_leg_to = name[s_leg], name[s_leg + 1]
        tas_s = legs["tas_leg"][s_leg]
        gs_leg = np.zeros(nl)
        np.add.at(gs_leg, clock["leg_sub"], clock["gs_sub"])
        gs_s = (gs_leg / np.maximum(n, 1))[s_leg]
    else:
        wp_of_leg_from = wp_of_leg_to = name[owner]
        tas_s = np.zeros(total)
        gs_s = np.zeros(total)
    from_wp = np.where(s_hold, name[owner], wp_of_leg_from).astype(object)
    to_wp = np.where(s_hold, name[owner], wp_of_leg_to).astype(object)
    tas_hold = tas_wp[owner]
    tas_s = np.where(s_hold & np.isfinite(tas_hold), tas_hold, tas_s)
    tas_s = np.nan_to_num(tas_s, nan=0.0)
    gs_s = np.where(s_hold, 0.0, gs_s)
    return RouteSamples(
        lat=pos["lat"],
        lon=(pos["lon"] + 180.0) % 360.0 - 180.0,
        altitude_m=pos["alt"],
        distance_m=pos["dist"],
        time=times,
        tas=tas_s.astype(float),
        leg=s_leg.astype(np.int64),
        from_waypoint=from_wp,
        to_waypoint=to_wp,
        hold=s_hold,
        dt_s=dt,
        altitude_reference=route.altitude_reference,
        route_name=route.name,
        waypoint_distance_m=legs["cum_h"],
        waypoint_names=list(name),
        ground_elevation_m=route.ground_elevation_m,
        ground_speed=gs_s,
    )
