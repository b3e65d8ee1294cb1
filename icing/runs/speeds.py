"""The airspeed of every sample and every curtain row: the route's own, else the schedule.

A route may give its own true airspeeds (``--tas-kt``, the route's
``true_airspeed_kt``, a waypoint's ``tas_kt``): they are used where given. Everywhere
else the airframe's speed schedule (:class:`icing.calc.airspeed.SpeedSchedule`)
gives the speed of the phase of flight (level, climb, descent, hold) at the
sample's altitude, converted to true airspeed with the forecast's pressure and
temperature there. The route is timed with the same schedule in the standard
atmosphere (the forecast's air is read only once the samples have times); the
icing at each sample then uses the forecast's air. The curtain rows (the
cross-section and the candidate-altitude search) are flown level at the
schedule's speed of each altitude.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from icing.calc.airspeed import PHASE_CLIMB, PHASE_DESCENT, PHASE_HOLD, PHASE_LEVEL
from icing.calc.thermo import standard_atmosphere_pressure
from icing.constants import FT, KT, LAPSE_STD, T0_STD

__all__ = ["LEVEL_TOLERANCE_M", "route_for_timing", "flight_phase", "sample_airspeed"]

#: A leg changing altitude by less than this is flown level (100 ft, our choice). [m]
LEVEL_TOLERANCE_M = 100.0 * FT


def _leg_phase(dz):
    """Phase code of legs changing altitude by ``dz`` [m]."""
    dz = np.asarray(dz, dtype=float)
    return np.where(
        dz > LEVEL_TOLERANCE_M,
        PHASE_CLIMB,
        np.where(dz < -LEVEL_TOLERANCE_M, PHASE_DESCENT, PHASE_LEVEL),
    )


def _msl(route, altitude_m):
    """Approximate height above mean sea level of route altitudes [m]."""
    alt = np.asarray(altitude_m, dtype=float)
    if route.altitude_reference == "agl":
        return alt + (route.ground_elevation_m or 0.0)
    return alt  # MSL as is; pressure altitude is its standard-atmosphere height


def route_for_timing(route, airframe, *, tas_kt=None):
    """Return the route with the schedule's true airspeed on every leg that has none.

    Returns ``(route, given)``: the route to sample (legs without a speed get the
    schedule's speed of their phase at their mid altitude in the standard
    atmosphere) and, per waypoint, whether its leg's speed came from the route or
    the caller (``tas_kt`` or the route's ``true_airspeed_kt``: every leg).
    """
    wps = route.waypoints
    n = len(wps)
    if tas_kt is not None or route.true_airspeed_kt is not None or n == 0:
        return route, np.ones(n, bool)
    given = np.array([w.tas_kt is not None for w in wps], bool)
    if given.all():
        return route, given
    alt = _msl(route, [w.altitude_m for w in wps])
    nxt = np.append(alt[1:], alt[-1])
    mid = 0.5 * (alt + nxt)
    p = standard_atmosphere_pressure(mid)
    t = T0_STD - LAPSE_STD * mid
    phase = _leg_phase(nxt - alt)
    tas = airframe.schedule.true_airspeed(phase, p, t, mid) / KT
    tas = np.where(np.isfinite(tas), tas, airframe.true_airspeed_kt)
    new = tuple(
        w if given[i] else replace(w, tas_kt=float(round(tas[i], 3))) for i, w in enumerate(wps)
    )
    return replace(route, waypoints=new), given


def flight_phase(samples, route):
    """Phase of flight of every sample: hold, else the climb/descent/level of its leg."""
    alt = _msl(route, [w.altitude_m for w in route.waypoints])
    leg = np.asarray(samples.leg, dtype=int)
    if alt.size < 2:
        phase = np.full(leg.shape, PHASE_LEVEL)
    else:
        dz = np.diff(alt)
        phase = _leg_phase(dz)[np.clip(leg, 0, dz.size - 1)]
    return np.where(np.asarray(samples.hold, bool), PHASE_HOLD, phase).astype(np.int8)


def sample_airspeed(samples, route, airframe, given, *, pressure, temperature, height):
    """Return the true airspeed [m/s] of every sample (and candidate), in the forecast's air.

    Parameters
    ----------
    samples : RouteSamples
        The samples (``tas`` is the timing speed of each sample's leg).
    route : Route
        The route as given (before :func:`route_for_timing`).
    airframe : Airframe
    given : ndarray of bool
        Per waypoint, the leg's speed came from the route or the caller.
    pressure, temperature, height : ndarray, shape (n, ...)
        The forecast's air at each sample's flight altitude (any trailing axes:
        candidate columns). [Pa], [K], [m MSL]

    Returns
    -------
    ndarray, shape of ``pressure``
        The route's own speed where given, else the schedule's.
    """
    p = np.asarray(pressure, dtype=float)
    phase = flight_phase(samples, route)
    extra = (1,) * (p.ndim - 1)
    ph = phase.reshape(phase.shape + extra)
    scheduled = airframe.schedule.true_airspeed(ph, p, temperature, height)
    leg = np.clip(np.asarray(samples.leg, dtype=int), 0, max(len(given) - 1, 0))
    own = np.asarray(given, bool)[leg] if len(given) else np.ones(leg.shape, bool)
    own = own.reshape(own.shape + extra)
    tas = np.asarray(samples.tas, dtype=float).reshape(own.shape[:1] + extra)
    return np.where(own, tas, scheduled)
