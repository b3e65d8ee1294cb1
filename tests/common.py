"""Canonical fixtures shared by the test modules (invented places and names).

Routes are set in the invented Skerrow Basin scenario (see routes/README.md),
except the antimeridian crossing, which sits over the open North Pacific.
They are frozen dataclasses, safe to share between tests.
"""

from __future__ import annotations

from datetime import UTC, datetime

from icing.constants import FT
from icing.route import Route, Waypoint

__all__ = [
    "DEPARTURE",
    "STRAIGHT_ROUTE",
    "ANTIMERIDIAN_ROUTE",
    "SINGLE_POINT_ROUTE",
    "EMPTY_ROUTE",
    "write_text",
]

#: Departure time of the fixtures, inside the demo forecast window.
DEPARTURE = datetime(2027, 1, 14, 9, 0, tzinfo=UTC)

#: Two waypoints ~100 km apart at a constant 8,000 ft MSL, 200 kt, no waypoint times.
STRAIGHT_ROUTE = Route(
    name="straight",
    waypoints=(
        Waypoint("KARVO", 57.0, -25.0, 8000 * FT, "msl"),
        Waypoint("PENTU", 57.0, -23.35, 8000 * FT, "msl"),
    ),
    departure_time=DEPARTURE,
    true_airspeed_kt=200.0,
    source="fixture",
)

#: Westbound across 180 degrees at 52 N (lon 179 -> -179 is about 137 km), FL120.
ANTIMERIDIAN_ROUTE = Route(
    name="antimeridian",
    waypoints=(
        Waypoint("VEKTU", 52.0, -179.0, 120 * 100 * FT, "pressure"),
        Waypoint("SOLRI", 52.0, 179.0, 120 * 100 * FT, "pressure"),
    ),
    departure_time=DEPARTURE,
    true_airspeed_kt=300.0,
    source="fixture",
)

#: A drone hovering 10 min at 300 ft AGL over the sea surface.
SINGLE_POINT_ROUTE = Route(
    name="hover",
    waypoints=(Waypoint("HOVRA", 57.2, -24.5, 300 * FT, "agl", DEPARTURE, 10.0, 0.0),),
    departure_time=None,
    true_airspeed_kt=None,
    source="fixture",
    ground_elevation_m=0.0,
)

#: A route without waypoints (never valid).
EMPTY_ROUTE = Route(
    name="empty", waypoints=(), departure_time=DEPARTURE, true_airspeed_kt=150.0, source="fixture"
)


def write_text(directory, name, text, *, encoding="utf-8"):
    """Write ``text`` to ``directory / name`` and return the path."""
    path = directory / name
    path.write_text(text, encoding=encoding)
    return path
