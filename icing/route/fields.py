"""Fields shared by the route readers: altitudes, times, numbers, route-level properties.

Each function checks one value and raises :class:`icing.errors.RouteError` naming the
file, the place and the fix. :data:`_DEFAULT_ALTITUDE` carries ``--altitude-ft`` /
``--flight-level`` into the readers for the duration of one read.
"""

from __future__ import annotations

import contextvars
from pathlib import Path

from icing.constants import FT
from icing.errors import RouteError
from icing.route.model import (
    ALTITUDE_REFERENCES,
    Route,
    check_airspeed_kt,
    check_altitude,
    check_number,
    check_waypoints,
    parse_time,
)

__all__ = [
    "_DEFAULT_ALTITUDE",
    "_altitude",
    "_default_names",
    "_flight_level_m",
    "_hold_min",
    "_tas_kt",
    "_optional_number",
    "_optional_time",
    "_reference",
    "_route_fields",
]

#: The altitude for waypoints a file gives none for (``--altitude-ft`` /
#: ``--flight-level``): (metres, reference, the option's name), and the places that
#: gave their own. Set by :func:`read_routes` for the duration of one read.
_DEFAULT_ALTITUDE = contextvars.ContextVar("default_altitude", default=None)


def _finish(route, path, where_of):
    check_waypoints(route, path=path, where_of=where_of)
    return route


def _optional_time(value, *, path, where, what="time"):
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    return parse_time(value, path=path, where=where, what=what)


def _optional_number(value, what, *, path, where, low, high):
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    return check_number(value, what, path=path, where=where, low=low, high=high)


def _hold_min(value, *, path, where):
    """Minutes of hold (hover, loiter) at a waypoint: 0 when not given, at most a day."""
    return (
        _optional_number(value, "hold_min", path=path, where=where, low=0.0, high=24 * 60.0) or 0.0
    )


def _tas_kt(value, *, path, where):
    """Return the true airspeed of a waypoint's leg [kt] (0: a hover), None when not given."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    return check_airspeed_kt(value, "tas_kt", path=path, where=where, hover_ok=True)


def _flight_level_m(value, *, path, where):
    fl = check_number(
        value,
        "flight_level",
        path=path,
        where=where,
        low=-20.0,
        high=999.0,
        fix="flight_level is pressure altitude in hundreds of feet (FL100 = 10,000 ft)",
    )
    return fl * 100.0 * FT


def _altitude(*, path, where, reference, metres=None, feet=None, flight_level=None):
    """Altitude [m] and its reference from the ways a file may give it."""
    state = _DEFAULT_ALTITUDE.get()
    if state is not None and (metres, feet, flight_level) != (None, None, None):
        option = state[2]
        raise RouteError(
            f"the route gives its own altitude here, and {option} is given too",
            path=path,
            where=where,
            fix=f"{option} is for routes drawn without altitudes: drop it, or remove the "
            "altitudes from the file",
        )
    if feet is not None and flight_level is not None:
        raise RouteError(
            "both altitude_ft and flight_level are given",
            path=path,
            where=where,
            fix="give one of them",
        )
    if flight_level is not None:
        if reference not in ("msl", "pressure"):
            raise RouteError(
                f"flight_level given with altitude_reference {reference!r}",
                path=path,
                where=where,
                fix='flight levels are pressure altitudes: use "pressure"',
            )
        alt = _flight_level_m(flight_level, path=path, where=where)
        return check_altitude(alt, "pressure", path=path, where=where), "pressure"
    if feet is not None:
        alt = check_number(feet, "altitude_ft", path=path, where=where) * FT
        return check_altitude(alt, reference, path=path, where=where), reference
    if metres is not None:
        alt = check_number(
            metres,
            "altitude",
            path=path,
            where=where,
            fix="the third coordinate is the altitude in metres",
        )
        return check_altitude(
            alt, reference, path=path, where=where, given_in_metres=True
        ), reference
    state = _DEFAULT_ALTITUDE.get()
    if state is not None:
        alt, ref, option = state
        ref = ref or reference
        return check_altitude(alt, ref, path=path, where=option), ref
    raise RouteError(
        "missing altitude",
        path=path,
        where=where,
        fix="give [lon, lat, alt_m] positions, altitude_ft or flight_level, or "
        "--altitude-ft / --flight-level for a route drawn in two dimensions",
    )


def _reference(value, *, path, where):
    if value is None:
        return "msl"
    ref = str(value).strip().lower()
    if ref not in ALTITUDE_REFERENCES:
        raise RouteError(
            f"altitude_reference {value!r} is not one of {', '.join(ALTITUDE_REFERENCES)}",
            path=path,
            where=where,
            fix='use "msl", "agl" or "pressure"',
        )
    return ref


def _route_fields(props, *, path, where):
    """Route-level fields shared by the readers."""
    p = "" if not where else where + "."
    name = props.get("name")
    return dict(
        name=None if name is None else str(name),
        departure_time=_optional_time(
            props.get("departure_time"),
            path=path,
            where=p + "departure_time",
            what="departure_time",
        ),
        true_airspeed_kt=_airspeed(props.get("true_airspeed_kt"), path=path, where=p),
        ground_elevation_m=_optional_number(
            props.get("ground_elevation_m"),
            "ground_elevation_m",
            path=path,
            where=p + "ground_elevation_m",
            low=-500.0,
            high=9000.0,
        ),
        airframe=_optional_name(props.get("airframe"), path=path, where=p + "airframe"),
    )


def _airspeed(value, *, path, where):
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    return check_airspeed_kt(
        value, "true_airspeed_kt", path=path, where=where + "true_airspeed_kt"
    )


def _optional_name(value, *, path, where):
    """Return the airframe name or file named by the route (None when absent)."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    if not isinstance(value, str):
        raise RouteError(
            f"airframe {value!r} is not a name",
            path=path,
            where=where,
            fix="give the airframe as a preset name or a TOML file name (see `icing airframes`)",
        )
    return value.strip()


def _default_names(routes, path):
    stem = Path(path).stem if path else "route"
    out = []
    for j, (fields, wps, where_of) in enumerate(routes):
        if not fields.get("name"):
            fields["name"] = stem if len(routes) == 1 else f"{stem}-{j + 1}"
        route = Route(waypoints=wps, source=None if path is None else str(path), **fields)
        out.append(_finish(route, path, where_of))
    return out
