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

import contextvars
import csv
import json
import re
import xml.etree.ElementTree as ET
from pathlib import Path

from icing.constants import FT
from icing.errors import RouteError
from icing.route.model import (
    ALTITUDE_REFERENCES,
    Route,
    Waypoint,
    check_altitude,
    check_number,
    check_position,
    check_waypoints,
    parse_time,
)

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

#: XML namespace of this project's GPX extension elements.
GPX_EXTENSION_NS = "urn:icing:gpx:1"

_GPX_NS = ("http://www.topografix.com/GPX/1/1", "http://www.topografix.com/GPX/1/0", "")
_JSON_EXT = (".geojson", ".json")
_CSV_EXT = (".csv", ".txt")
_GPX_EXT = (".gpx", ".xml")
_FORMAT_FIX = "give a GeoJSON (.geojson), CSV (.csv) or GPX (.gpx) route file"

#: The altitude for waypoints a file gives none for (``--altitude-ft`` /
#: ``--flight-level``): (metres, reference, the option's name), and the places that
#: gave their own. Set by :func:`read_routes` for the duration of one read.
_DEFAULT_ALTITUDE = contextvars.ContextVar("default_altitude", default=None)


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
    if not p.exists():
        raise RouteError("file not found", path=path, fix="check the path")
    if p.is_dir():
        raise RouteError("is a directory, not a route file", path=path, fix=_FORMAT_FIX)
    raw = p.read_bytes()
    encoding = "utf-16" if raw[:2] in (b"\xff\xfe", b"\xfe\xff") else "utf-8-sig"
    try:
        text = raw.decode(encoding)
    except UnicodeDecodeError as err:
        raise RouteError(
            f"not a UTF-8 (or UTF-16 with BOM) text file (byte {err.start})",
            path=path,
            fix=_FORMAT_FIX,
        ) from None
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
        true_airspeed_kt=_optional_number(
            props.get("true_airspeed_kt"),
            "true_airspeed_kt",
            path=path,
            where=p + "true_airspeed_kt",
            low=0.0,
            high=2000.0,
        ),
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


# --------------------------------------------------------------------------- GeoJSON


def read_geojson_routes(text, *, path=None):
    """Read the routes of a GeoJSON text (see the module docstring)."""
    try:
        obj = json.loads(text)
    except json.JSONDecodeError as err:
        raise RouteError(
            f"malformed JSON: {err.msg}",
            path=path,
            where=f"line {err.lineno} column {err.colno}",
            fix="check the JSON syntax",
        ) from None
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
            if geom.get("type") == "Point":
                return _default_names([_points_route([obj], {}, path)], path)
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
        hold = (
            _optional_number(
                holds[i],
                "hold_min",
                path=path,
                where=f"{pp}hold_min[{i}]",
                low=0.0,
                high=24 * 60.0,
            )
            or 0.0
        )
        name = names[i] if names[i] is not None else f"WP{i + 1}"
        wps.append(Waypoint(str(name), lat, lon, alt, wref, t, hold, None))
    fields = _route_fields(props, path=path, where=(p + "properties") if not bare else "")
    return fields, wps, (lambda i: f"{cw}[{i}]")


def _points_route(features, defaults, path):
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
        hold = (
            _optional_number(
                props.get("hold_min"),
                "hold_min",
                path=path,
                where=where + ".properties.hold_min",
                low=0.0,
                high=24 * 60.0,
            )
            or 0.0
        )
        tas = _optional_number(
            props.get("tas_kt"),
            "tas_kt",
            path=path,
            where=where + ".properties.tas_kt",
            low=0.0,
            high=2000.0,
        )
        name = props.get("name") or f"WP{i + 1}"
        wps.append(Waypoint(str(name), lat, lon, alt, wref, t, hold, tas))
    fields = _route_fields(defaults, path=path, where="properties")
    return fields, wps, (lambda i: f"features[{i}]")


# --------------------------------------------------------------------------- CSV

_CSV_COLUMNS = (
    "name",
    "lat",
    "lon",
    "altitude_ft",
    "time",
    "altitude_reference",
    "flight_level",
    "tas_kt",
    "hold_min",
    "route",
)


#: Settings a CSV route file may declare in comment lines (``# key: value``).
CSV_SETTINGS = (
    "name",
    "airframe",
    "altitude_reference",
    "departure_time",
    "true_airspeed_kt",
    "ground_elevation_m",
)
_SETTING = re.compile(r"^#\s*([A-Za-z][A-Za-z0-9_ -]{0,40}?)\s*[:=]\s*(\S.*?)\s*$")


def _csv_setting(line, lineno, path, settings):
    """Honour a ``# key: value`` comment line, or refuse it; prose comments pass."""
    m = _SETTING.match(line)
    if not m:
        return
    key = re.sub(r"[\s-]+", "_", m.group(1).strip().lower())
    where = f"line {lineno}"
    if key not in CSV_SETTINGS:
        raise RouteError(
            f"comment {line[:60]!r} reads like a setting, but {key!r} is not one this "
            "reader knows",
            path=path,
            where=where,
            fix=f"use one of {', '.join(CSV_SETTINGS)} (e.g. '# altitude_reference: agl'), "
            "or write the comment without ':' or '='",
        )
    if key in settings and settings[key] != m.group(2):
        raise RouteError(
            f"{key} is declared twice with different values",
            path=path,
            where=where,
            fix=f"declare {key} once",
        )
    settings[key] = m.group(2)


def _csv_rows(text, path):
    """Split a CSV text into (line number, fields) rows and the comment settings."""
    rows, settings = [], {}
    for lineno, line in enumerate(text.lstrip("\ufeff").splitlines(), start=1):
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            _csv_setting(s, lineno, path, settings)
            continue
        try:
            fields = next(csv.reader([s], skipinitialspace=True, strict=True))
        except csv.Error as err:
            raise RouteError(
                f"malformed CSV: {err}", path=path, where=f"line {lineno}", fix="check the quoting"
            ) from None
        rows.append((lineno, [x.strip() for x in fields]))
    if not rows:
        raise RouteError(
            "no header and no rows (only comments or blank lines)",
            path=path,
            fix="start with the header name,lat,lon,altitude_ft[,time]",
        )
    return rows, settings


def _csv_header(rows, path):
    """Check the header row; return it (lower case)."""
    head_line, header = rows[0]
    header = [h.lower() for h in header]
    if not {"lat", "lon"} <= set(header) or len(set(header)) != len(header):
        separator = " separated by commas, not semicolons" if ";" in header[0] else ""
        raise RouteError(
            f"header {','.join(header)[:80]!r} is not a route header",
            path=path,
            where=f"line {head_line}",
            fix="start with the header name,lat,lon,altitude_ft[,time] "
            f"(unique column names{separator})",
        )
    has_altitude = "altitude_ft" in header or "flight_level" in header
    if not has_altitude and _DEFAULT_ALTITUDE.get() is None:
        raise RouteError(
            "header has no altitude_ft or flight_level column (missing altitude)",
            path=path,
            where=f"line {head_line}",
            fix="add an altitude_ft (feet) or flight_level column, or give --altitude-ft / "
            "--flight-level",
        )
    if len(rows) == 1:
        raise RouteError(
            "no waypoint rows after the header",
            path=path,
            where=f"line {head_line}",
            fix="add at least two waypoints",
        )
    return header


def _csv_waypoint(row, i, where, path, default_ref):
    """One waypoint from a CSV row (a dict of column -> text or None)."""
    lat, lon = check_position(row["lat"], row["lon"], path=path, where=where)
    ref = _reference(row.get("altitude_reference") or default_ref, path=path, where=where)
    if row.get("altitude_reference") and default_ref and ref != default_ref.lower():
        raise RouteError(
            f"altitude_reference {ref!r} differs from the file's declared {default_ref!r}",
            path=path,
            where=where,
            fix="declare one altitude reference per file",
        )
    alt, wref = _altitude(
        path=path,
        where=where,
        reference=ref,
        feet=row.get("altitude_ft"),
        flight_level=row.get("flight_level"),
    )
    t = _optional_time(row.get("time"), path=path, where=where)
    hold = (
        _optional_number(
            row.get("hold_min"), "hold_min", path=path, where=where, low=0.0, high=24 * 60.0
        )
        or 0.0
    )
    tas = _optional_number(
        row.get("tas_kt"), "tas_kt", path=path, where=where, low=0.0, high=2000.0
    )
    return Waypoint(row.get("name") or f"WP{i + 1}", lat, lon, alt, wref, t, hold, tas)


def read_csv_routes(text, *, path=None):
    """Read the routes of a CSV text (see the module docstring).

    Comment lines declaring a setting (``# altitude_reference: agl``; the keys in
    :data:`CSV_SETTINGS`) are honoured for every route of the file; a comment that
    reads like a setting with an unknown key is refused, so that no declaration is
    silently ignored. Comments without ``:`` or ``=`` are prose and pass.
    """
    rows, settings = _csv_rows(text, path)
    header = _csv_header(rows, path)
    groups = {}
    for lineno, fields in rows[1:]:
        if len(fields) > len(header):
            raise RouteError(
                f"{len(fields)} fields for {len(header)} header columns",
                path=path,
                where=f"line {lineno}",
                fix="check the commas in this line",
            )
        row = dict(zip(header, fields + [""] * (len(header) - len(fields)), strict=True))
        row = {k: (v if v != "" else None) for k, v in row.items()}
        groups.setdefault(row.get("route") or "", []).append((lineno, row))
    declared = _route_fields(settings, path=path, where="")
    routes = []
    for key, items in groups.items():
        wps = [
            _csv_waypoint(row, i, f"line {lineno}", path, settings.get("altitude_reference"))
            for i, (lineno, row) in enumerate(items)
        ]
        lines = [lineno for lineno, _ in items]
        fields = {**declared, "name": key or declared["name"]}
        routes.append((fields, wps, (lambda i, lines=lines: f"line {lines[i]}")))
    return _default_names(routes, path)


# --------------------------------------------------------------------------- GPX


def read_gpx_routes(text, *, path=None):
    """Read the routes of a GPX 1.1 text (see the module docstring)."""
    head = text[:4096].upper()
    if "<!DOCTYPE" in head or "<!ENTITY" in head:
        raise RouteError(
            "GPX with a DOCTYPE or entity declarations is refused",
            path=path,
            fix="remove the <!DOCTYPE ...> declaration",
        )
    try:
        root = ET.fromstring(text)
    except ET.ParseError as err:
        line, col = err.position
        raise RouteError(
            f"malformed XML: {str(err).split(':')[0]}",
            path=path,
            where=f"line {line} column {col + 1}",
            fix="check the XML syntax",
        ) from None
    ns = root.tag[1:].split("}")[0] if root.tag.startswith("{") else ""
    local = root.tag.split("}")[-1]
    if local != "gpx" or ns not in _GPX_NS:
        raise RouteError(
            f"root element <{local}> is not GPX",
            path=path,
            where="line 1",
            fix='give a GPX 1.1 file (<gpx xmlns="http://www.topografix.com/GPX/1/1">)',
        )
    q = (lambda tag: f"{{{ns}}}{tag}") if ns else (lambda tag: tag)
    routes = []
    for r, rte in enumerate(root.findall(q("rte"))):
        routes.append(_gpx_route(rte, rte.findall(q("rtept")), q, path, f"rte {r + 1}", "rtept"))
    for r, trk in enumerate(root.findall(q("trk"))):
        points = [pt for seg in trk.findall(q("trkseg")) for pt in seg.findall(q("trkpt"))]
        routes.append(_gpx_route(trk, points, q, path, f"trk {r + 1}", "trkpt"))
    if not routes:
        has_wpt = root.find(q("wpt")) is not None
        raise RouteError(
            "GPX has no rte or trk" + (" (only wpt waypoints)" if has_wpt else ""),
            path=path,
            fix="put the waypoints in order in a <rte> of <rtept>",
        )
    return _default_names(routes, path)


def _text(el, tag):
    child = el.find(tag)
    if child is None or child.text is None or not child.text.strip():
        return None
    return child.text.strip()


def _extensions(el, q):
    ext = el.find(q("extensions"))
    out = {}
    if ext is not None:
        for child in ext.iter():
            if child.tag.startswith(f"{{{GPX_EXTENSION_NS}}}") and child.text:
                out[child.tag.split("}")[-1]] = child.text.strip()
    return out


def _gpx_route(el, points, q, path, where, point_tag):
    ext = _extensions(el, q)
    ref = _reference(
        ext.get("altitude_reference"), path=path, where=f"{where} extensions altitude_reference"
    )
    wps = []
    for i, pt in enumerate(points):
        wi = f"{where} {point_tag} {i + 1}"
        lat, lon = check_position(pt.get("lat"), pt.get("lon"), path=path, where=wi)
        ele = _text(pt, q("ele"))
        if ele is None and _DEFAULT_ALTITUDE.get() is None:
            raise RouteError(
                "missing altitude (no <ele>)",
                path=path,
                where=wi,
                fix="give <ele> in metres, or --altitude-ft / --flight-level",
            )
        pext = _extensions(pt, q)
        alt, wref = _altitude(path=path, where=wi, reference=ref, metres=ele)
        t = _optional_time(_text(pt, q("time")), path=path, where=wi)
        hold = (
            _optional_number(
                pext.get("hold_min"), "hold_min", path=path, where=wi, low=0.0, high=24 * 60.0
            )
            or 0.0
        )
        tas = _optional_number(
            pext.get("tas_kt"), "tas_kt", path=path, where=wi, low=0.0, high=2000.0
        )
        wps.append(
            Waypoint(_text(pt, q("name")) or f"WP{i + 1}", lat, lon, alt, wref, t, hold, tas)
        )
    props = {
        "name": _text(el, q("name")),
        **{
            k: ext.get(k)
            for k in ("departure_time", "true_airspeed_kt", "ground_elevation_m", "airframe")
        },
    }
    fields = _route_fields(props, path=path, where=f"{where} extensions")
    wheres = [f"{where} {point_tag} {i + 1}" for i in range(len(points))]
    if not points:
        wheres = [where]
    return fields, wps, (lambda i: wheres[min(i, len(wheres) - 1)])


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
