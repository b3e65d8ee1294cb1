"""Bounds on what one request may ask: routes, waypoints and samples.

The samples of a route (one every ``step_km``, every 20 s of flight and every
100 ft of climb, plus a hold's samples) set the cost of a screening, so the
service estimates them from the waypoints before any work and refuses a request
that would exceed its bound, naming the field and the fix. The estimate takes
the flight time from the waypoint times where given, else from the true
airspeed in still air; a head wind can lengthen it, which the run-time limit
bounds in turn.

Examples
--------
>>> count_positions({"type": "Feature", "geometry": {"type": "LineString",
...     "coordinates": [[-26.0, 56.5, 900.0], [-24.9, 56.95, 900.0]]}})
2
"""

from __future__ import annotations

import math

__all__ = ["count_positions", "estimate_samples"]

_EARTH_RADIUS_M = 6_371_008.8  # mean radius (IUGG); an estimate needs no ellipsoid
_KT = 1852.0 / 3600.0
_STEP_S = 20.0  # the sampler's time step [s] (icing.route.sample_route)
_STEP_Z_M = 100.0 * 0.3048  # the sampler's altitude step [m]


def count_positions(obj, _depth=0) -> int:
    """Count the positions of a GeoJSON object (0 for what is not GeoJSON)."""
    if not isinstance(obj, dict) or _depth > 3:
        return 0
    kind = obj.get("type")
    if kind == "FeatureCollection":
        feats = obj.get("features")
        return sum(count_positions(f, _depth + 1) for f in feats) if isinstance(feats, list) else 0
    if kind == "Feature":
        return count_positions(obj.get("geometry"), _depth + 1)
    coords = obj.get("coordinates")
    if not isinstance(coords, list):
        return 0
    if kind == "Point":
        return 1
    if kind == "LineString":
        return len(coords)
    if kind == "MultiLineString":
        return sum(len(c) for c in coords if isinstance(c, list))
    return 0


def _distance_m(a, b) -> float:
    """Return the great-circle distance between two waypoints (haversine) [m]."""
    p1, p2 = math.radians(a.lat), math.radians(b.lat)
    dp, dl = p2 - p1, math.radians(b.lon - a.lon)
    h = math.sin(dp / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    return 2 * _EARTH_RADIUS_M * math.asin(min(1.0, math.sqrt(h)))


def estimate_samples(route, *, step_km: float, default_tas_kt: float) -> int:
    """Estimate the number of samples of one route (see the module docstring)."""
    wps = route.waypoints
    tas_route = route.true_airspeed_kt or default_tas_kt
    total = 0
    for i, w in enumerate(wps):
        hold_s = max(0.0, float(w.hold_min or 0.0)) * 60.0
        total += 1 + (math.ceil(hold_s / _STEP_S) if hold_s > 0 else 0)
        if i + 1 == len(wps):
            break
        nxt = wps[i + 1]
        d = _distance_m(w, nxt)
        dz = abs(nxt.altitude_m - w.altitude_m)
        if w.time is not None and nxt.time is not None:
            dur = max(0.0, (nxt.time - w.time).total_seconds() - hold_s)
        else:
            tas = (w.tas_kt or tas_route or 0.0) * _KT
            dur = math.hypot(d, dz) / tas if tas > 0 else 0.0
        parts = (d / (step_km * 1000.0), dz / _STEP_Z_M, dur / _STEP_S)
        total += max(1, *(math.ceil(x) for x in parts)) - 1
    return int(total)
