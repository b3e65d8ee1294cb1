"""Routes: waypoints, the readers of route files, and sampling along the track.

The flight as planned enters here: :func:`load_routes` reads GeoJSON, CSV and
GPX files into :class:`Route` objects, and :func:`sample_route` turns a route
into :class:`RouteSamples`, the points at which the forecast is read.
"""

from icing.route.model import ALTITUDE_REFERENCES, Route, Waypoint, parse_time
from icing.route.readers import load_route, load_routes
from icing.route.sampling import GROUND_SPEED_FLOOR, RouteSamples, sample_route

__all__ = [
    "ALTITUDE_REFERENCES",
    "GROUND_SPEED_FLOOR",
    "Route",
    "RouteSamples",
    "Waypoint",
    "load_route",
    "load_routes",
    "parse_time",
    "sample_route",
]
