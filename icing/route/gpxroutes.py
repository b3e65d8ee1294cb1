"""GPX 1.1 route files: ``rte``/``rtept`` and ``trk``/``trkseg``/``trkpt``.

``ele`` in metres, optional ``time`` and ``name``; each ``rte`` or ``trk`` is a route.
Extensions in the namespace :data:`GPX_EXTENSION_NS`: on the ``rte``/``trk``:
``altitude_reference``, ``true_airspeed_kt``, ``departure_time``,
``ground_elevation_m``, ``airframe``; on a point: ``hold_min``, ``tas_kt``.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import defusedxml
import defusedxml.ElementTree as SafeET

from icing.errors import RouteError
from icing.route.fields import (
    _DEFAULT_ALTITUDE,
    _altitude,
    _default_names,
    _hold_min,
    _optional_time,
    _reference,
    _route_fields,
    _tas_kt,
)
from icing.route.model import Waypoint, check_position, check_waypoint_count

__all__ = ["GPX_EXTENSION_NS", "read_gpx_routes"]

#: XML namespace of this project's GPX extension elements.
GPX_EXTENSION_NS = "urn:icing:gpx:1"

_GPX_NS = ("http://www.topografix.com/GPX/1/1", "http://www.topografix.com/GPX/1/0", "")


def read_gpx_routes(text, *, path=None):
    """Read the routes of a GPX 1.1 text (see the module docstring).

    The XML goes through ``defusedxml`` with DTDs forbidden: a ``<!DOCTYPE>`` (and so
    any entity declaration or external reference) anywhere in the file is refused.
    """
    try:
        # forbid_dtd: a DOCTYPE anywhere in the file is refused, so no entity (internal,
        # external or nested) is ever declared, let alone expanded
        root = SafeET.fromstring(text, forbid_dtd=True)
    except defusedxml.DefusedXmlException as err:
        what = {
            "DTDForbidden": "a <!DOCTYPE> declaration",
            "EntitiesForbidden": "an <!ENTITY> declaration",
            "ExternalReferenceForbidden": "an external reference",
        }.get(type(err).__name__, "a DTD construct")
        found = text.upper().find("<!DOCTYPE")
        raise RouteError(
            f"GPX with {what} is refused (entities and DTDs are never read)",
            path=path,
            where=None if found < 0 else f"line {text.count(chr(10), 0, found) + 1}",
            fix="remove the <!DOCTYPE ...> and <!ENTITY ...> declarations (GPX needs none)",
        ) from None
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
    check_waypoint_count(len(points), path=path, where=where)
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
        hold = _hold_min(pext.get("hold_min"), path=path, where=wi)
        tas = _tas_kt(pext.get("tas_kt"), path=path, where=wi)
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
