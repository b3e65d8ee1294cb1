"""GIS kit: GeoPackage layers, KML with absolute altitudes, QGIS and OGC SLD styles.

* GeoPackage (``-o OUT.gpkg``): layer ``hazards`` (one feature per segment, the
  GeoJSON properties as fields) and layer ``routes`` (one feature per route: its
  track and its summary), written through GDAL by ``pyogrio`` (the ``gis``
  extra). List and object values are JSON text. The QGIS style is stored in the
  GeoPackage's ``layer_styles`` table (QGIS applies it on opening) and written
  beside it as ``OUT.qml``, with an OGC SLD 1.1 style ``OUT.sld`` for web map
  servers. Both colour by ``severity_rank`` with the colours of the pictures.
* KML (``-o OUT.kml``): segments at their altitudes above mean sea level
  (``altitudeMode`` absolute, never clamped to the ground), one folder per route.

Every feature carries the caution as a field; nothing here computes a hazard.
"""

from __future__ import annotations

import json
import sqlite3
from datetime import UTC, datetime
from html import escape
from pathlib import Path

import numpy as np

from icing import codes
from icing.caution import CAUTION
from icing.outputs.atomic import write_together
from icing.outputs.plot.style import GAP_FILL, MAP_STYLE, SEVERITY_COLOURS

__all__ = [
    "write_geopackage",
    "geopackage_writer",
    "kml_text",
    "qml_text",
    "sld_text",
    "STYLE_RULES",
]

#: The style rules shared by QML and SLD: (label, field, value, colour, width [mm], dashed).
STYLE_RULES = [
    (codes.SEVERITY[k], "severity_rank", k, SEVERITY_COLOURS[k], 0.35 * MAP_STYLE[k][0], False)
    for k in (codes.SEV_SEVERE, codes.SEV_MODERATE, codes.SEV_LIGHT, codes.SEV_TRACE)
] + [
    ("coverage gap (no data, not 'no icing')", "kind", "coverage-gap", "#5e5e5e", 1.0, True),
    ("no icing", "severity_rank", 0, "#7a9a7a", 0.3, False),
]


def _hex_rgb(colour):
    c = colour.lstrip("#")
    return tuple(int(c[i : i + 2], 16) for i in (0, 2, 4))


# ----------------------------------------------------------------------- GeoPackage


def _field_values(records, key):
    """One field's values as an array for GDAL, and its null mask."""
    values = [r.get(key) for r in records]
    null = np.array([v is None for v in values], dtype=bool)
    present = [v for v in values if v is not None]
    if present and all(isinstance(v, bool) for v in present):
        return np.array([bool(v) for v in values]), null
    if present and all(isinstance(v, int) and not isinstance(v, bool) for v in present):
        return np.array([0 if v is None else v for v in values], dtype=np.int64), null
    if present and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in present):
        return np.array([np.nan if v is None else float(v) for v in values]), null
    out = []
    for v in values:
        if isinstance(v, (list, dict)):
            v = json.dumps(v, allow_nan=False)
        out.append(None if v is None else str(v))
    return np.array(out, dtype=object), null


def _write_layer(path, layer, geometries, records, *, append):
    import pyogrio.raw  # optional heavy dependency (GDAL): the ``gis`` extra
    import shapely

    keys = list(dict.fromkeys(k for r in records for k in r))
    data, masks = zip(*(_field_values(records, k) for k in keys), strict=True)
    wkb = shapely.to_wkb(
        np.array([shapely.geometry.shape(g) for g in geometries], dtype=object),
        output_dimension=3,
    )
    pyogrio.raw.write(
        str(path),
        wkb,
        list(data),
        keys,
        field_mask=list(masks),
        layer=layer,
        driver="GPKG",
        geometry_type="MultiLineString Z",
        promote_to_multi=True,
        crs="EPSG:4326",
        append=append,
    )


def _route_geometry(screening):
    from icing.hazards.segments import _geometry

    alt = np.asarray(screening.at_flight.get("altitude_msl_m", screening.samples.altitude_m))
    return _geometry(screening.samples.lon, screening.samples.lat, alt)


def _store_styles(path, qml, sld):
    """Put the QGIS style into the GeoPackage's ``layer_styles`` table (QGIS reads it)."""
    with sqlite3.connect(path) as db:
        db.execute(
            "CREATE TABLE IF NOT EXISTS layer_styles (id INTEGER PRIMARY KEY AUTOINCREMENT, "
            "f_table_catalog TEXT(256), f_table_schema TEXT(256), f_table_name TEXT(256), "
            "f_geometry_column TEXT(256), styleName TEXT(30), styleQML TEXT, styleSLD TEXT, "
            "useAsDefault BOOLEAN, description TEXT, owner TEXT(30), ui TEXT(30), "
            "update_time DATETIME DEFAULT CURRENT_TIMESTAMP)"
        )
        db.execute(
            "INSERT INTO layer_styles (f_table_catalog, f_table_schema, f_table_name, "
            "f_geometry_column, styleName, styleQML, styleSLD, useAsDefault, description, "
            "owner) VALUES ('', '', 'hazards', 'geom', 'icing severity', ?, ?, 1, ?, 'icing')",
            (qml, sld, "icing severity by severity_rank; grey dashed = coverage gap"),
        )
        # register the table as GeoPackage attributes (OGC 12-128r18, gpkg_contents)
        db.execute(
            "INSERT OR IGNORE INTO gpkg_contents (table_name, data_type, identifier) "
            "VALUES ('layer_styles', 'attributes', 'layer_styles')"
        )


def geopackage_writer(screenings, fc):
    """Return ``write(path)`` that writes the hazards and routes layers to a new ``.gpkg``.

    Parameters
    ----------
    screenings : sequence of RouteScreening
    fc : dict
        Their FeatureCollection (:func:`icing.hazards.segments.feature_collection`).
    """
    feats = fc["features"]
    summaries = fc["summaries"]
    qml, sld = qml_text(), sld_text()

    def build(path):
        path = Path(path)
        path.unlink(missing_ok=True)
        if feats:
            records = [dict(f["properties"]) for f in feats]
            _write_layer(path, "hazards", [f["geometry"] for f in feats], records, append=False)
        routes = [_route_geometry(s) for s in screenings]
        records = [dict(s) for s in summaries]
        _write_layer(path, "routes", routes, records, append=bool(feats))
        _store_styles(path, qml, sld)

    return build


def write_geopackage(screenings, fc, path):
    """Write the hazards and routes layers (and the styles beside them); return the paths.

    The three files are written together (:func:`icing.outputs.atomic.write_together`).

    Parameters
    ----------
    screenings : sequence of RouteScreening
    fc : dict
        Their FeatureCollection (:func:`icing.hazards.segments.feature_collection`).
    path : str or pathlib.Path
        The ``.gpkg`` file.

    Returns
    -------
    list of pathlib.Path
        The GeoPackage, ``.qml`` and ``.sld`` files.
    """
    path = Path(path)
    qml, sld = qml_text(), sld_text()
    return write_together(
        [
            (path, geopackage_writer(screenings, fc), "the GeoPackage"),
            (path.with_suffix(".qml"), lambda tmp: tmp.write_text(qml, "utf-8"), "its QGIS style"),
            (path.with_suffix(".sld"), lambda tmp: tmp.write_text(sld, "utf-8"), "its SLD style"),
        ]
    )


# ----------------------------------------------------------------------------- styles


def qml_text() -> str:
    """QGIS layer style (rule-based, by ``severity_rank`` and ``kind``) for ``hazards``."""
    rules, symbols = [], []
    for i, (name, field, value, colour, width, dashed) in enumerate(STYLE_RULES):
        lit = f"'{value}'" if isinstance(value, str) else str(value)
        rules.append(
            f'      <rule key="r{i}" symbol="{i}" label="{escape(name)}" '
            f'filter="{escape(chr(34) + field + chr(34))} = {escape(lit)}"/>'
        )
        r, g, b = _hex_rgb(colour)
        style = "dash" if dashed else "solid"
        symbols.append(
            f'      <symbol type="line" name="{i}" alpha="1" clip_to_extent="1" force_rhr="0">\n'
            '        <layer class="SimpleLine" enabled="1" pass="0" locked="0">\n'
            '          <Option type="Map">\n'
            f'            <Option name="line_color" type="QString" value="{r},{g},{b},255"/>\n'
            f'            <Option name="line_width" type="QString" value="{width:.2f}"/>\n'
            '            <Option name="line_width_unit" type="QString" value="MM"/>\n'
            f'            <Option name="line_style" type="QString" value="{style}"/>\n'
            '            <Option name="capstyle" type="QString" value="flat"/>\n'
            "          </Option>\n"
            "        </layer>\n"
            "      </symbol>"
        )
    return (
        "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n"
        '<qgis version="3.28.0" styleCategories="Symbology">\n'
        '  <renderer-v2 type="RuleRenderer" symbollevels="0" enableorderby="0" '
        'forceraster="0">\n'
        '    <rules key="root">\n' + "\n".join(rules) + "\n    </rules>\n"
        "    <symbols>\n" + "\n".join(symbols) + "\n    </symbols>\n"
        "  </renderer-v2>\n"
        f"  <!-- {escape(CAUTION)} -->\n"
        "</qgis>\n"
    )


def sld_text() -> str:
    """OGC Styled Layer Descriptor 1.1 (Symbology Encoding) for the ``hazards`` layer."""
    rules = []
    for name, field, value, colour, width, dashed in STYLE_RULES:
        dash = (
            '\n            <se:SvgParameter name="stroke-dasharray">6 3</se:SvgParameter>'
            if dashed
            else ""
        )
        px = max(1.0, width * 3.78)  # mm -> pixels at 96 dpi
        rules.append(
            "      <se:Rule>\n"
            f"        <se:Name>{escape(name)}</se:Name>\n"
            "        <ogc:Filter><ogc:PropertyIsEqualTo>"
            f"<ogc:PropertyName>{field}</ogc:PropertyName>"
            f"<ogc:Literal>{escape(str(value))}</ogc:Literal>"
            "</ogc:PropertyIsEqualTo></ogc:Filter>\n"
            "        <se:LineSymbolizer>\n"
            "          <se:Stroke>\n"
            f'            <se:SvgParameter name="stroke">{colour}</se:SvgParameter>\n'
            f'            <se:SvgParameter name="stroke-width">{px:.1f}</se:SvgParameter>'
            f"{dash}\n"
            "          </se:Stroke>\n"
            "        </se:LineSymbolizer>\n"
            "      </se:Rule>"
        )
    return (
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        '<StyledLayerDescriptor version="1.1.0" xmlns="http://www.opengis.net/sld" '
        'xmlns:se="http://www.opengis.net/se" xmlns:ogc="http://www.opengis.net/ogc" '
        'xmlns:xlink="http://www.w3.org/1999/xlink" '
        'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" '
        'xsi:schemaLocation="http://www.opengis.net/sld '
        'http://schemas.opengis.net/sld/1.1.0/StyledLayerDescriptor.xsd">\n'
        "  <NamedLayer>\n"
        "    <se:Name>hazards</se:Name>\n"
        "    <UserStyle>\n"
        "      <se:Name>icing severity</se:Name>\n"
        f"      <se:Description><se:Abstract>{escape(CAUTION)}</se:Abstract></se:Description>\n"
        "      <se:FeatureTypeStyle>\n" + "\n".join(rules) + "\n"
        "      </se:FeatureTypeStyle>\n"
        "    </UserStyle>\n"
        "  </NamedLayer>\n"
        "</StyledLayerDescriptor>\n"
    )


# -------------------------------------------------------------------------------- KML


def _kml_colour(colour, alpha="ff"):
    """KML colours are aabbggrr."""
    r, g, b = _hex_rgb(colour)
    return f"{alpha}{b:02x}{g:02x}{r:02x}"


def _kml_lines(geometry):
    lines = geometry["coordinates"]
    if geometry["type"] == "LineString":
        lines = [lines]
    out = []
    for line in lines:
        coords = " ".join(
            f"{p[0]:.6f},{p[1]:.6f},{(p[2] if len(p) > 2 else 0.0):.1f}" for p in line
        )
        out.append(
            "<LineString><altitudeMode>absolute</altitudeMode><tessellate>0</tessellate>"
            f"<coordinates>{coords}</coordinates></LineString>"
        )
    return "<MultiGeometry>" + "".join(out) + "</MultiGeometry>"


def _kml_style_id(props):
    if props.get("kind") == "coverage-gap":
        return "gap"
    return f"sev{props.get('severity_rank') or 0}"


def kml_text(screenings) -> str:
    """KML document of the segments and routes, at absolute altitudes (metres MSL)."""
    styles = [
        f'<Style id="sev{k}"><LineStyle><color>{_kml_colour(SEVERITY_COLOURS[k])}</color>'
        f"<width>{MAP_STYLE[k][0]:.1f}</width></LineStyle></Style>"
        for k in (1, 2, 3, 4)
    ]
    styles.append(
        f'<Style id="gap"><LineStyle><color>{_kml_colour(GAP_FILL)}</color><width>3</width>'
        "</LineStyle></Style>"
    )
    styles.append(
        '<Style id="sev0"><LineStyle><color>ff7a9a7a</color><width>1</width></LineStyle></Style>'
    )
    styles.append(
        '<Style id="route"><LineStyle><color>ff000000</color><width>1</width></LineStyle></Style>'
    )
    folders = []
    for s in screenings:
        marks = [
            "<Placemark><name>route</name><styleUrl>#route</styleUrl>"
            f"{_kml_lines(_route_geometry(s))}</Placemark>"
        ]
        for f in s.segments:
            p = f["properties"]
            data = "".join(
                f'<Data name="{escape(k)}"><value>{escape(_kml_value(v))}</value></Data>'
                for k, v in p.items()
                if k != "vertical_options"
            )
            name = p["segment_id"] + ": " + (p.get("severity") or "coverage gap")
            marks.append(
                f"<Placemark><name>{escape(name)}</name>"
                f"<styleUrl>#{_kml_style_id(p)}</styleUrl>"
                f"<ExtendedData>{data}</ExtendedData>{_kml_lines(f['geometry'])}</Placemark>"
            )
        folders.append(f"<Folder><name>{escape(s.route_name)}</name>{''.join(marks)}</Folder>")
    made = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    return (
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        '<kml xmlns="http://www.opengis.net/kml/2.2"><Document>'
        f"<name>icing hazards</name><description>{escape(CAUTION)} (written {made}; "
        "altitudes are metres above mean sea level, altitudeMode absolute)</description>"
        + "".join(styles)
        + "".join(folders)
        + "</Document></kml>\n"
    )


def _kml_value(v):
    if v is None:
        return "unknown"
    if isinstance(v, (list, dict)):
        return json.dumps(v)
    return str(v)
