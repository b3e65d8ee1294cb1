"""Routes and waypoints: the planned flight as the readers give it, and its checks.

A :class:`Route` is a list of :class:`Waypoint` objects with an altitude in one
reference (``"msl"``, ``"agl"`` or ``"pressure"``), optional times, holds and
airspeeds. The readers (:mod:`icing.route.readers`) build routes from GeoJSON,
CSV and GPX files; :func:`icing.route.sampling.sample_route` turns a route into
the points along the flight path at which the forecast is read.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

import numpy as np
from pyproj import Geod

from icing.errors import RouteError, warn_plausibility

__all__ = [
    "ALTITUDE_REFERENCES",
    "Waypoint",
    "Route",
    "parse_time",
    "format_time",
    "check_number",
    "check_position",
    "check_altitude",
    "check_waypoints",
    "check_airspeed_kt",
    "check_waypoint_count",
    "warn_plausibility",
    "MAX_WAYPOINTS",
    "MAX_FLIGHT_HOURS",
    "AIRSPEED_RANGE_KT",
    "HIGHEST_ALTITUDE_M",
]

#: The altitude references a route may use: metres above mean sea level, metres
#: above ground level, and pressure altitude in metres (flight level x 100 ft).
ALTITUDE_REFERENCES = ("msl", "agl", "pressure")

_GEOD = Geod(ellps="WGS84")

# Plausibility limits of a route; a value outside is refused in one line naming the slip.
#: The highest altitude accepted [m] (about 65,600 ft): supercooled liquid does not
#: survive below -40 C, which the standard atmosphere reaches near 7.5 km, and no flight
#: this tool serves goes above 20 km; metres above it are feet given as metres.
HIGHEST_ALTITUDE_M = 20_000.0
_FEET_LIKE_AGL_M = 1_500.0  # drone-class (AGL) routes stay far below 5,000 ft AGL: warn
_LOWEST_M = -1_000.0  # below the lowest land surface (Dead Sea, ~-430 m)
#: True airspeeds accepted [kt]: below 1 kt a 1 km leg takes over half an hour (a
#: fraction or a unit slip; a hover is a hold, not a slow leg); above 700 kt an aircraft
#: is supersonic at every altitude where icing occurs (the speed of sound is at least
#: ~573 kt below 11 km, ICAO standard atmosphere).
AIRSPEED_RANGE_KT = (1.0, 700.0)
#: The most waypoints of one route: a planned route has tens to hundreds; 20,000 is a
#: 1 Hz recorded track of 5.5 h. Each waypoint is a sample, and samples size the work.
MAX_WAYPOINTS = 20_000
#: The longest timeline of one route [h]: the longest flights last under a day and
#: forecasts used for planning reach a few days; a longer span is a date slip.
MAX_FLIGHT_HOURS = 72.0
# waypoint times implying more ground speed are refused (common practice, no source:
# no subsonic aircraft with the strongest jet-stream tail wind reaches 1,000 kt)
_IMPOSSIBLE_GROUND_SPEED_KT = 1_000.0
_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)


@dataclass(frozen=True)
class Waypoint:
    """One point of a route.

    Parameters
    ----------
    name : str
        Waypoint name (readers name unnamed points ``WP1``, ``WP2``, ...).
    lat, lon : float
        WGS 84 latitude and longitude. [degrees]
    altitude_m : float
        Altitude in the reference ``altitude_reference``. [m]
    altitude_reference : str
        ``"msl"`` (above mean sea level), ``"agl"`` (above ground level) or
        ``"pressure"`` (pressure altitude: FL100 = 3048 m, the 696.8 hPa surface
        of the ICAO standard atmosphere).
    time : datetime or None
        Arrival time at the waypoint, timezone-aware (UTC).
    hold_min : float
        Time spent at the waypoint (hover or loiter) before leaving it. [min]
    tas_kt : float or None
        True airspeed on the leg leaving this waypoint and during its hold. [kt]
    """

    name: str
    lat: float
    lon: float
    altitude_m: float
    altitude_reference: str = "msl"
    time: datetime | None = None
    hold_min: float = 0.0
    tas_kt: float | None = None


@dataclass(frozen=True)
class Route:
    """A named sequence of waypoints.

    Parameters
    ----------
    name : str
        Route name (written into every output segment).
    waypoints : sequence of Waypoint
        In flight order (stored as a tuple).
    departure_time : datetime or None
        Time at the first waypoint, timezone-aware; ignored where the first
        waypoint carries its own time (they must then agree).
    true_airspeed_kt : float or None
        Cruise true airspeed for legs without their own ``tas_kt``. [kt]
    source : str or None
        The file the route came from.
    ground_elevation_m : float or None
        Surface height for AGL routes when the forecast has none. [m]
    altitude_reference : str or None
        The reference shared by all waypoints; derived from them when None.
    airframe : str or None
        The airframe the route is planned for (preset name or TOML file), when the
        route file names one; screening takes it when no airframe is given.
    """

    name: str
    waypoints: tuple = ()
    departure_time: datetime | None = None
    true_airspeed_kt: float | None = None
    source: str | None = None
    ground_elevation_m: float | None = None
    altitude_reference: str | None = None
    airframe: str | None = None

    def __post_init__(self):
        object.__setattr__(self, "waypoints", tuple(self.waypoints))
        if self.altitude_reference is None:
            refs = {w.altitude_reference for w in self.waypoints}
            object.__setattr__(
                self,
                "altitude_reference",
                refs.pop() if len(refs) == 1 else ("msl" if not refs else "mixed"),
            )

    def __len__(self):
        return len(self.waypoints)

    @property
    def __geo_interface__(self):
        """The route as a GeoJSON LineString Feature (``[lon, lat, alt_m]``)."""
        coords = [
            [round(w.lon, 6), round(w.lat, 6), round(w.altitude_m, 1)] for w in self.waypoints
        ]
        geometry = (
            {"type": "Point", "coordinates": coords[0]}
            if len(coords) == 1
            else {"type": "LineString", "coordinates": coords}
        )
        return {
            "type": "Feature",
            "geometry": geometry,
            "properties": {
                "name": self.name,
                "altitude_reference": self.altitude_reference,
                "waypoint_names": [w.name for w in self.waypoints],
            },
        }


# --------------------------------------------------------------------------- helpers


def parse_time(value, *, path=None, where=None, what="time"):
    """Parse an ISO 8601 time with a zone into an aware UTC datetime.

    Accepts a string, an aware ``datetime`` or a ``numpy.datetime64`` (taken as
    UTC). Times without a zone are refused.

    Examples
    --------
    >>> parse_time("2027-01-14T09:00:00+01:00").isoformat()
    '2027-01-14T08:00:00+00:00'
    """
    if isinstance(value, np.datetime64):
        if np.isnat(value):
            raise RouteError(
                f"{what} is NaT (not a time)",
                path=path,
                where=where,
                fix="give a time like 2027-01-14T09:00:00Z",
            )
        ms = value.astype("datetime64[ms]").astype(np.int64)
        return _EPOCH + timedelta(milliseconds=int(ms))
    if isinstance(value, datetime):
        parsed = value
        shown = value.isoformat()
    elif isinstance(value, str):
        shown = value.strip()
        try:
            parsed = datetime.fromisoformat(shown)
        except ValueError:
            raise RouteError(
                f"{what} {shown!r} is not an ISO 8601 time",
                path=path,
                where=where,
                fix="write it like 2027-01-14T09:00:00Z",
            ) from None
    else:
        raise RouteError(
            f"{what} {value!r} is not an ISO 8601 time string",
            path=path,
            where=where,
            fix="write it like 2027-01-14T09:00:00Z",
        )
    if parsed.tzinfo is None or parsed.utcoffset() is None:
        raise RouteError(
            f"{what} {shown!r} has no time zone",
            path=path,
            where=where,
            fix="append Z or +00:00 (UTC)",
        )
    return parsed.astimezone(UTC)


def format_time(t):
    """Format an aware datetime as ``YYYY-MM-DDTHH:MM:SSZ``."""
    return t.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def check_number(value, what, *, path=None, where=None, low=None, high=None, fix=None):
    """Return ``value`` as a finite float within [low, high], else raise RouteError."""
    if isinstance(value, bool) or value is None:
        number = math.nan
    else:
        try:
            number = float(value)
        except (TypeError, ValueError):
            number = math.nan
    if not math.isfinite(number):
        raise RouteError(
            f"{what} {value!r} is not a number",
            path=path,
            where=where,
            fix=fix or f"give {what} as a number",
        )
    if (low is not None and number < low) or (high is not None and number > high):
        raise RouteError(
            f"{what} {number:g} is outside {low:g}..{high:g}",
            path=path,
            where=where,
            fix=fix or f"give {what} within {low:g}..{high:g}",
        )
    return number


def check_position(lat, lon, *, path=None, where=None):
    """Return (lat, lon) as floats after checking their ranges."""
    lat = check_number(
        lat,
        "latitude",
        path=path,
        where=where,
        low=-90.0,
        high=90.0,
        fix="latitude in degrees north, -90..90 (GeoJSON order is lon, lat)",
    )
    lon = check_number(
        lon,
        "longitude",
        path=path,
        where=where,
        low=-180.0,
        high=180.0,
        fix="longitude in degrees east, -180..180",
    )
    return lat, lon


def check_altitude(altitude_m, reference, *, path=None, where=None, given_in_metres=False):
    """Check an altitude [m] in its reference; warn when metres look like feet."""
    if reference not in ALTITUDE_REFERENCES:
        raise RouteError(
            f"altitude_reference {reference!r} is not one of {', '.join(ALTITUDE_REFERENCES)}",
            path=path,
            where=where,
            fix='use "msl", "agl" or "pressure"',
        )
    altitude_m = check_number(
        altitude_m, "altitude", path=path, where=where, fix="give the altitude as a number"
    )
    low = 0.0 if reference == "agl" else _LOWEST_M
    if altitude_m < low:
        raise RouteError(
            f"altitude {altitude_m:g} m {reference.upper()} is below {low:g} m",
            path=path,
            where=where,
            fix="check the altitude and its unit",
        )
    if altitude_m > HIGHEST_ALTITUDE_M:
        unit = "m" if given_in_metres else "m (from the feet or flight level given)"
        slip = (
            "it looks like feet given as metres (positions carry metres; use altitude_ft)"
            if given_in_metres
            else "check the value and its unit"
        )
        raise RouteError(
            f"altitude {altitude_m:g} {unit} {reference.upper()} is above "
            f"{HIGHEST_ALTITUDE_M:g} m (65,600 ft), where no icing-relevant flight goes; {slip}",
            path=path,
            where=where,
            fix="give the altitude in metres, or use altitude_ft / flight_level",
        )
    if given_in_metres and reference == "agl" and altitude_m > _FEET_LIKE_AGL_M:
        place = ": ".join(str(p) for p in (path, where) if p)
        warn_plausibility(
            f"{place}: altitude {altitude_m:g} m AGL is above {_FEET_LIKE_AGL_M:g} m; it "
            "looks like feet given as metres (positions carry metres; use altitude_ft for feet)"
        )
    return altitude_m


def check_airspeed_kt(value, what, *, path=None, where=None, hover_ok=False):
    """Return a true airspeed [kt] within :data:`AIRSPEED_RANGE_KT`, else raise RouteError.

    ``hover_ok`` accepts exactly 0 (a hover waypoint's own speed, used only during its hold).
    """
    kt = check_number(value, what, path=path, where=where)
    low, high = AIRSPEED_RANGE_KT
    if hover_ok and kt == 0.0:
        return kt
    if kt < low:
        raise RouteError(
            f"{what} {kt:g} kt is below {low:g} kt (a 1 km leg would take over half an hour); "
            "a fraction or a unit slip?",
            path=path,
            where=where,
            fix=f"give the true airspeed in knots, {low:g}..{high:g} (hover with hold_min)",
        )
    if kt > high:
        raise RouteError(
            f"{what} {kt:g} kt is above {high:g} kt (supersonic wherever icing occurs); "
            "km/h or another unit given as knots?",
            path=path,
            where=where,
            fix=f"give the true airspeed in knots, {low:g}..{high:g}",
        )
    return kt


def check_waypoint_count(n, *, path=None, where=None):
    """Refuse a route of more than :data:`MAX_WAYPOINTS` waypoints (each is a sample)."""
    if n > MAX_WAYPOINTS:
        raise RouteError(
            f"route has {n} points, above the limit of {MAX_WAYPOINTS} per route",
            path=path,
            where=where,
            fix="thin the track (a point every few hundred metres is plenty: the route is "
            "sampled every 1 km or 20 s anyway) or split it into several routes",
        )


def _where_waypoint(i, w):
    return f"waypoint {i + 1} ({w.name})"


def check_waypoints(route, *, path=None, where_of=None):
    """Check a route as a whole; raise RouteError naming the place.

    Checks: at least two waypoints (one is allowed with ``hold_min > 0``, a
    hover), one altitude reference, positions and altitudes, aware and
    increasing times that leave room for the holds, and a departure time that
    agrees with the first waypoint's time.
    """
    path = path if path is not None else route.source
    wps = route.waypoints
    where_of = where_of or (lambda i: _where_waypoint(i, wps[i]))
    if len(wps) == 0:
        raise RouteError(
            f"route {route.name!r} has no waypoints", path=path, fix="give at least two waypoints"
        )
    if len(wps) == 1 and not (wps[0].hold_min and wps[0].hold_min > 0):
        raise RouteError(
            f"route {route.name!r} has a single waypoint",
            path=path,
            where=where_of(0),
            fix="give at least two waypoints, or hold_min > 0 for a hover",
        )
    check_waypoint_count(len(wps), path=path)
    refs = [w.altitude_reference for w in wps]
    for i, w in enumerate(wps):
        check_position(w.lat, w.lon, path=path, where=where_of(i))
        check_altitude(w.altitude_m, w.altitude_reference, path=path, where=where_of(i))
        check_number(w.hold_min, "hold_min", path=path, where=where_of(i), low=0.0, high=24 * 60.0)
        if w.tas_kt is not None:
            check_airspeed_kt(w.tas_kt, "tas_kt", path=path, where=where_of(i), hover_ok=True)
        if w.time is not None:
            parse_time(w.time, path=path, where=where_of(i))
        if refs[i] != refs[0]:
            raise RouteError(
                f"altitude reference {refs[i]!r} differs from {refs[0]!r} of the first waypoint",
                path=path,
                where=where_of(i),
                fix="use one altitude reference per route (flight levels or feet, not both)",
            )
    if route.altitude_reference not in (refs[0], None):
        raise RouteError(
            f"route altitude_reference {route.altitude_reference!r} differs from "
            f"the waypoints' {refs[0]!r}",
            path=path,
            fix="use one altitude reference per route",
        )
    if route.true_airspeed_kt is not None:
        check_airspeed_kt(
            route.true_airspeed_kt, "true_airspeed_kt", path=path, where="true_airspeed_kt"
        )
    if route.departure_time is not None:
        dep = parse_time(route.departure_time, path=path, where="departure_time")
        if wps[0].time is not None and parse_time(wps[0].time) != dep:
            raise RouteError(
                f"departure_time {format_time(dep)} differs from the first "
                f"waypoint's time {format_time(parse_time(wps[0].time))}",
                path=path,
                where=where_of(0),
                fix="give one of them, or make them agree",
            )
    timed = [i for i, w in enumerate(wps) if w.time is not None]
    if len(timed) > 1:
        lat = np.array([w.lat for w in wps])
        lon = np.array([w.lon for w in wps])
        _, _, dist = _GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        cum = np.concatenate([[0.0], np.cumsum(np.atleast_1d(dist))])
        for a, b in zip(timed[:-1], timed[1:], strict=True):
            ta, tb = parse_time(wps[a].time), parse_time(wps[b].time)
            holds = sum(w.hold_min for w in wps[a:b]) * 60.0
            moving = (tb - ta).total_seconds() - holds
            if moving < 0 or (moving == 0 and cum[b] > cum[a]):
                extra = f" plus {holds / 60:g} min of holds" if holds else ""
                raise RouteError(
                    f"time {format_time(tb)} is not after {format_time(ta)} "
                    f"({wps[a].name}){extra}",
                    path=path,
                    where=where_of(b),
                    fix="times must increase along the route",
                )
            _check_leg_time(wps, a, b, cum[b] - cum[a], moving, path=path, where=where_of(b))
        first, last = parse_time(wps[timed[0]].time), parse_time(wps[timed[-1]].time)
        span_h = (last - first).total_seconds() / 3600.0
        if span_h > MAX_FLIGHT_HOURS:
            raise RouteError(
                f"the waypoint times span {span_h:.0f} h (from {format_time(first)} to "
                f"{format_time(last)}), above the limit of {MAX_FLIGHT_HOURS:g} h; a date slip?",
                path=path,
                where=where_of(timed[-1]),
                fix="check the dates of the waypoint times",
            )


def _check_leg_time(wps, a, b, distance_m, moving_s, *, path, where):
    """Refuse waypoint times that imply more than 1,000 kt over the ground (a time slip)."""
    if moving_s <= 0:
        return
    kt = distance_m / moving_s / (1852.0 / 3600.0)
    if kt > _IMPOSSIBLE_GROUND_SPEED_KT:
        raise RouteError(
            f"the times of {wps[a].name} and {wps[b].name} imply {kt:.0f} kt over the ground "
            f"(no aircraft reaches {_IMPOSSIBLE_GROUND_SPEED_KT:g} kt); an hour or date slip?",
            path=path,
            where=where,
            fix="check the waypoint times (and their zone)",
        )
