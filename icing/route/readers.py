"""Route file readers: GeoJSON (RFC 7946), CSV and GPX 1.1.

Every reader returns a list of :class:`icing.route.Route` and raises
:class:`icing.errors.RouteError` with the file, the place and the fix on bad
input. :func:`read_routes` picks the reader by content (``{`` or ``[``: JSON,
``<``: XML) and, for other content, by extension.

GeoJSON
    A LineString Feature (positions ``[lon, lat, alt_m]``; a MultiLineString cut
    at the antimeridian is joined again), a FeatureCollection of Point waypoints
    in order (one route), or a FeatureCollection of LineString Features (one
    route each). RFC 7946 defines the third coordinate as height above the
    ellipsoid; it is taken as metres above mean sea level (the geoid differs by
    up to ~100 m) unless ``altitude_reference`` says ``"agl"`` or ``"pressure"``.
    Route properties: ``name``, ``departure_time``, ``true_airspeed_kt``,
    ``altitude_reference``, ``ground_elevation_m``, ``airframe``, and for LineStrings lists
    parallel to the positions: ``times``, ``hold_min``, ``waypoint_names``;
    ``altitude_ft`` or ``flight_level`` (a number or a list) for 2-D positions.
    A FeatureCollection of Points takes the route properties from its
    ``properties`` member or foreign members; each Point may give ``name``,
    ``time``, ``altitude_ft`` (feet in the route's reference, MSL by default),
    ``flight_level`` (pressure altitude), ``hold_min``, ``tas_kt``. Properties
    win over the third coordinate.
CSV
    Header ``name,lat,lon,altitude_ft[,time]``, optional columns
    ``altitude_reference``, ``flight_level`` (instead of ``altitude_ft``),
    ``tas_kt``, ``hold_min`` and ``route`` (several routes in one file). Comment
    lines (``#``) may declare settings for the whole file (``# altitude_reference:
    agl``, ``# airframe: small-multirotor``; see :data:`CSV_SETTINGS`): they are
    honoured, and a comment that reads like an unknown setting is refused; other
    comments and blank lines pass. Whitespace and a byte-order mark are tolerated.
    The route is named after the file unless a ``# name:`` line names it.
GPX 1.1
    ``rte``/``rtept`` and ``trk``/``trkseg``/``trkpt`` (segments of a track are
    joined), ``ele`` in metres, optional ``time`` and ``name``; each ``rte`` or
    ``trk`` is a route. Extensions in the namespace :data:`GPX_EXTENSION_NS`:
    on the ``rte``/``trk``: ``altitude_reference``, ``true_airspeed_kt``,
    ``departure_time``, ``ground_elevation_m``, ``airframe``; on a point: ``hold_min``,
    ``tas_kt``.
"""

from __future__ import annotations

import json
from pathlib import Path

from icing.constants import FT
from icing.errors import RouteError
from icing.route.csvroutes import CSV_SETTINGS, read_csv_routes
from icing.route.fields import (
    _DEFAULT_ALTITUDE,
    _altitude,
    _default_names,
    _flight_level_m,
    _hold_min,
    _optional_time,
    _reference,
    _route_fields,
    _tas_kt,
)
from icing.route.gpxroutes import GPX_EXTENSION_NS, read_gpx_routes
from icing.route.model import Waypoint, check_number, check_position, check_waypoint_count
from icing.untrusted import MAX_ROUTE_FILE_BYTES, parse_json, read_input_bytes

__all__ = [
    "load_routes",
    "load_route",
    "GPX_EXTENSION_NS",
    "read_routes",
    "read_geojson_routes",
    "read_csv_routes",
    "read_gpx_routes",
    "CSV_SETTINGS",
]

_JSON_EXT = (".geojson", ".json")
_CSV_EXT = (".csv", ".txt")
_GPX_EXT = (".gpx", ".xml")
_FORMAT_FIX = "give a GeoJSON (.geojson), CSV (.csv) or GPX (.gpx) route file"


def read_routes(path, *, altitude_ft=None, flight_level=None):
    """Read every route of a GeoJSON, CSV or GPX file (chosen by content and extension).

    ``altitude_ft`` (feet in the route's own reference: MSL unless the route says
    ``agl``) or ``flight_level`` gives the altitude of routes drawn in two
    dimensions; a file whose waypoints carry their own altitudes is refused with
    either, so that no altitude is silently replaced.
    """
    if altitude_ft is not None and flight_level is not None:
        raise RouteError(
            "both an altitude in feet and a flight level are given",
            path=path,
            fix="give --altitude-ft or --flight-level, not both",
        )
    default = None
    if altitude_ft is not None:
        alt = check_number(altitude_ft, "altitude_ft", where="--altitude-ft", low=-3000.0)
        default = (alt * FT, None, "--altitude-ft")
    elif flight_level is not None:
        alt = _flight_level_m(flight_level, path=None, where="--flight-level")
        default = (alt, "pressure", "--flight-level")
    token = _DEFAULT_ALTITUDE.set(default)
    try:
        routes = _read_routes(path)
    finally:
        _DEFAULT_ALTITUDE.reset(token)
    return routes


def _read_routes(path):
    p = Path(path)
    raw = read_input_bytes(
        p, limit=MAX_ROUTE_FILE_BYTES, error=RouteError, what="route file", fix=_FORMAT_FIX
    )
    encoding = "utf-16" if raw[:2] in (b"\xff\xfe", b"\xfe\xff") else "utf-8-sig"
    try:
        text = raw.decode(encoding)
    except UnicodeDecodeError as err:
        raise RouteError(
            f"not a UTF-8 (or UTF-16 with BOM) text file (byte {err.start})",
            path=path,
            fix=_FORMAT_FIX,
        ) from None
    if "\x00" in text:
        raise RouteError(
            f"NUL byte at character {text.index(chr(0))}: a binary file, not a route file",
            path=path,
            fix=_FORMAT_FIX,
        )
    text = text.lstrip("\ufeff")
    if not text.strip():
        raise RouteError("file is empty", path=path, fix=_FORMAT_FIX)
    first = text.lstrip()[0]
    ext = p.suffix.lower()
    if first in "{[":
        return read_geojson_routes(text, path=path)
    if first == "<":
        return read_gpx_routes(text, path=path)
    if ext in _JSON_EXT:
        return read_geojson_routes(text, path=path)
    if ext in _GPX_EXT:
        return read_gpx_routes(text, path=path)
    if ext in _CSV_EXT or _looks_like_csv(text):
        return read_csv_routes(text, path=path)
    raise RouteError(
        f"unknown extension {ext or '(none)'!r} and the content is not GeoJSON, "
        "GPX or a CSV with a lat,lon header",
        path=path,
        fix=_FORMAT_FIX,
    )


def _looks_like_csv(text):
    for line in text.splitlines():
        s = line.strip()
        if s and not s.startswith("#"):
            cols = {c.strip().lower() for c in s.split(",")}
            return {"lat", "lon"} <= cols
    return False


# --------------------------------------------------------------------------- GeoJSON


def read_geojson_routes(text, *, path=None):
    """Read the routes of a GeoJSON text (see the module docstring)."""
    obj = parse_json(text, path=path, error=RouteError)
    if not isinstance(obj, dict) or "type" not in obj:
        raise RouteError(
            "not a GeoJSON object (no 'type' member)",
            path=path,
            fix="give a LineString Feature or a FeatureCollection",
        )
    kind = obj["type"]
    if kind == "FeatureCollection":
        features = obj.get("features")
        if not isinstance(features, list) or not features:
            raise RouteError(
                "FeatureCollection has no features",
                path=path,
                where="features",
                fix="add a LineString route or Point waypoints",
            )
        defaults = _collection_properties(obj)
        geoms = []
        for i, f in enumerate(features):
            geom, _ = _feature_parts(f, path=path, where=f"features[{i}]")
            geoms.append(geom.get("type"))
        if all(g == "Point" for g in geoms):
            return _default_names([_points_route(features, defaults, path)], path)
        if all(g in ("LineString", "MultiLineString") for g in geoms):
            routes = [
                _line_route(f, defaults, path, f"features[{i}]") for i, f in enumerate(features)
            ]
            return _default_names(routes, path)
        odd = next(i for i, g in enumerate(geoms) if g not in ("LineString", "MultiLineString"))
        if "Point" in geoms and any(g in ("LineString", "MultiLineString") for g in geoms):
            raise RouteError(
                "FeatureCollection mixes Point and LineString features",
                path=path,
                where=f"features[{odd}]",
                fix="give either Point waypoints or LineString routes",
            )
        raise _wrong_geometry(geoms[odd], path, f"features[{odd}].geometry")
    if kind == "Feature":
        geom, _ = _feature_parts(obj, path=path, where="")
        if geom.get("type") not in ("LineString", "MultiLineString"):
            if geom.get("type") == "Point":  # a hover: the feature is the route too
                own = obj.get("properties")
                own = own if isinstance(own, dict) else {}
                return _default_names([_points_route([obj], own, path)], path)
            raise _wrong_geometry(geom.get("type"), path, "geometry")
        return _default_names([_line_route(obj, {}, path, "")], path)
    if kind in ("LineString", "MultiLineString"):
        feature = {"type": "Feature", "geometry": obj, "properties": {}}
        return _default_names([_line_route(feature, {}, path, "", bare=True)], path)
    raise _wrong_geometry(kind, path, "type")


def _wrong_geometry(kind, path, where):
    return RouteError(
        f"geometry type {kind!r} is not a route",
        path=path,
        where=where,
        fix="give a LineString (or MultiLineString cut at the antimeridian) or Point waypoints",
    )


def _collection_properties(obj):
    props = dict(obj.get("properties") or {}) if isinstance(obj.get("properties"), dict) else {}
    for key in (
        "name",
        "departure_time",
        "true_airspeed_kt",
        "altitude_reference",
        "ground_elevation_m",
        "airframe",
    ):
        if key in obj and key not in props:
            props[key] = obj[key]
    return props


def _feature_parts(f, *, path, where):
    p = where + "." if where else ""
    if not isinstance(f, dict) or f.get("type") != "Feature":
        raise RouteError(
            "not a GeoJSON Feature",
            path=path,
            where=where or "type",
            fix='each member of "features" is {"type": "Feature", ...}',
        )
    geom = f.get("geometry")
    if not isinstance(geom, dict) or "type" not in geom:
        raise RouteError(
            "Feature has no geometry",
            path=path,
            where=p + "geometry",
            fix="give a LineString or Point geometry",
        )
    props = f.get("properties") or {}
    if not isinstance(props, dict):
        raise RouteError(
            "properties is not an object",
            path=path,
            where=p + "properties",
            fix="give properties as a JSON object",
        )
    return geom, props


def _position(pos, *, path, where):
    if (
        not isinstance(pos, list)
        or len(pos) < 2
        or any(isinstance(c, bool) or not isinstance(c, (int, float)) for c in pos)
    ):
        raise RouteError(
            f"position {json.dumps(pos)[:60]} is not [lon, lat(, alt_m)]",
            path=path,
            where=where,
            fix="positions are [lon, lat, alt_m] numbers",
        )
    lat, lon = check_position(pos[1], pos[0], path=path, where=where)
    return lat, lon, (pos[2] if len(pos) > 2 else None)


def _parallel(props, key, n, *, path, where, scalar_ok=False):
    """Return a per-vertex list property (or a scalar repeated, when allowed)."""
    value = props.get(key)
    if value is None:
        return [None] * n
    if isinstance(value, list):
        if len(value) != n:
            raise RouteError(
                f"{key} has {len(value)} entries for {n} positions",
                path=path,
                where=where + key,
                fix=f"give one {key} entry per position",
            )
        return value
    if scalar_ok:
        return [value] * n
    raise RouteError(
        f"{key} is not a list",
        path=path,
        where=where + key,
        fix=f"give {key} as a list parallel to the coordinates",
    )


def _line_coordinates(geom, *, path, where):
    coords = geom.get("coordinates")
    if geom["type"] == "MultiLineString":
        if not isinstance(coords, list) or not all(isinstance(c, list) for c in coords):
            raise RouteError(
                "MultiLineString coordinates are not lists of positions",
                path=path,
                where=where,
                fix="check the coordinates",
            )
        joined = []
        for part in coords:
            for pos in part:
                if joined and _same_point(joined[-1], pos):
                    continue
                joined.append(pos)
        return joined
    if not isinstance(coords, list):
        raise RouteError(
            "LineString has no coordinates list",
            path=path,
            where=where,
            fix="give coordinates as a list of [lon, lat, alt_m]",
        )
    return coords


def _same_point(a, b):
    if not (isinstance(a, list) and isinstance(b, list)):
        return False  # not positions: the position check names them
    try:
        return (
            float(a[1]) == float(b[1])
            and abs(((float(a[0]) - float(b[0]) + 180.0) % 360.0) - 180.0) < 1e-9
            and (a[2:3] == b[2:3])
        )
    except (TypeError, ValueError, IndexError):
        return False


def _line_route(f, defaults, path, where, bare=False):
    geom, own = _feature_parts(f, path=path, where=where) if not bare else (f["geometry"], {})
    props = {**defaults, **own}
    p = where + "." if where else ""
    pp = p + "properties."
    cw = p + "geometry.coordinates" if not bare else "coordinates"
    coords = _line_coordinates(geom, path=path, where=cw)
    n = len(coords)
    check_waypoint_count(n, path=path, where=cw)
    ref = _reference(props.get("altitude_reference"), path=path, where=pp + "altitude_reference")
    times = _parallel(props, "times", n, path=path, where=pp)
    holds = _parallel(props, "hold_min", n, path=path, where=pp)
    names = _parallel(props, "waypoint_names", n, path=path, where=pp)
    feet = _parallel(props, "altitude_ft", n, path=path, where=pp, scalar_ok=True)
    levels = _parallel(props, "flight_level", n, path=path, where=pp, scalar_ok=True)
    wps = []
    for i, pos in enumerate(coords):
        wi = f"{cw}[{i}]"
        lat, lon, z = _position(pos, path=path, where=wi)
        alt, wref = _altitude(
            path=path, where=wi, reference=ref, metres=z, feet=feet[i], flight_level=levels[i]
        )
        t = _optional_time(times[i], path=path, where=f"{pp}times[{i}]")
        hold = _hold_min(holds[i], path=path, where=f"{pp}hold_min[{i}]")
        name = names[i] if names[i] is not None else f"WP{i + 1}"
        wps.append(Waypoint(str(name), lat, lon, alt, wref, t, hold, None))
    fields = _route_fields(props, path=path, where=(p + "properties") if not bare else "")
    return fields, wps, (lambda i: f"{cw}[{i}]")


def _points_route(features, defaults, path):
    check_waypoint_count(len(features), path=path, where="features")
    ref = _reference(
        defaults.get("altitude_reference"), path=path, where="properties.altitude_reference"
    )
    wps = []
    for i, f in enumerate(features):
        where = f"features[{i}]"
        geom, props = _feature_parts(f, path=path, where=where)
        lat, lon, z = _position(
            geom.get("coordinates"), path=path, where=where + ".geometry.coordinates"
        )
        pref = (
            _reference(
                props["altitude_reference"],
                path=path,
                where=where + ".properties.altitude_reference",
            )
            if props.get("altitude_reference") is not None
            else ref
        )
        alt, wref = _altitude(
            path=path,
            where=where,
            reference=pref,
            metres=z,
            feet=props.get("altitude_ft"),
            flight_level=props.get("flight_level"),
        )
        t = _optional_time(props.get("time"), path=path, where=where + ".properties.time")
        hold = _hold_min(props.get("hold_min"), path=path, where=where + ".properties.hold_min")
        tas = _tas_kt(props.get("tas_kt"), path=path, where=where + ".properties.tas_kt")
        name = props.get("name") or f"WP{i + 1}"
        wps.append(Waypoint(str(name), lat, lon, alt, wref, t, hold, tas))
    fields = _route_fields(defaults, path=path, where="properties")
    return fields, wps, (lambda i: f"features[{i}]")


def load_routes(path, *, altitude_ft=None, flight_level=None):
    """Read every route in a GeoJSON, CSV or GPX file.

    The format is chosen by content (``{`` JSON, ``<`` XML) and extension
    (``.geojson``/``.json``, ``.csv``/``.txt``, ``.gpx``/``.xml``); see
    the ``read_*_routes`` functions for what each format may carry.

    Parameters
    ----------
    path : str or os.PathLike
        The route file.
    altitude_ft, flight_level : float, optional
        The altitude of a route drawn without altitudes (feet in the route's
        reference, or a flight level); refused when the file gives altitudes.

    Returns
    -------
    list of Route
        One or more routes, in file order.

    Raises
    ------
    RouteError
        The file is missing, empty, malformed or holds an unusable route; the
        message names the file, the place and the fix.
    """
    return read_routes(path, altitude_ft=altitude_ft, flight_level=flight_level)


def load_route(path, **kwargs):
    """Read the single route of a file (see :func:`load_routes`).

    Raises
    ------
    RouteError
        Also when the file holds several routes (they are named).
    """
    routes = load_routes(path, **kwargs)
    if len(routes) != 1:
        names = ", ".join(repr(r.name) for r in routes)
        raise RouteError(
            f"file holds {len(routes)} routes ({names}), one was expected",
            path=path,
            fix="use load_routes to read them all",
        )
    return routes[0]
