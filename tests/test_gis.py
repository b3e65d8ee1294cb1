"""GIS kit: GeoPackage layers (read back through GDAL), styles, KML, severity_rank.

Contract tests (OGC GeoPackage 1.3, OGC SLD 1.1 / Symbology Encoding 1.1, OGC KML 2.2)
on the invented demo scenario; no physics value is checked.
"""

from __future__ import annotations

import json
import sqlite3
import xml.etree.ElementTree as ET
from pathlib import Path

import jsonschema
import pyogrio
import pyogrio.raw
import pytest

from icing import codes
from icing.cli import main
from icing.outputs.gis import STYLE_RULES, qml_text, sld_text
from icing.outputs.plot import SEVERITY_COLOURS

ROOT = Path(__file__).resolve().parents[1]
FORECAST = ROOT / "fixtures" / "skerrow-latlon.nc"
ROUTES = [ROOT / "routes" / "regional-dispatch.geojson", ROOT / "routes" / "drone-inspection.gpx"]
SCHEMA = json.loads((ROOT / "icing" / "data" / "schemas" / "hazards-v1.json").read_text())
KML = "{http://www.opengis.net/kml/2.2}"


@pytest.fixture(scope="module")
def gpkg(tmp_path_factory):
    out = tmp_path_factory.mktemp("gis") / "hazards.gpkg"
    args = ["screen", *map(str, ROUTES), "-f", str(FORECAST), "-o", str(out), "--all-segments"]
    assert main(args) == 0
    return out


def test_geopackage_has_hazards_and_routes_layers(gpkg):
    layers = {name: kind for name, kind in pyogrio.list_layers(gpkg)}
    assert layers["hazards"] == "MultiLineString Z" and layers["routes"] == "MultiLineString Z"
    meta, _, geom, fields = pyogrio.raw.read(gpkg, layer="hazards")
    names = list(meta["fields"])
    assert meta["crs"] == "EPSG:4326" and len(geom) > 5
    rank = fields[names.index("severity_rank")]
    kind = fields[names.index("kind")]
    sev = fields[names.index("severity")]
    assert meta["dtypes"][names.index("severity_rank")] in ("int64", "int32")
    for k, r, s in zip(kind, rank, sev, strict=True):
        if k == "icing":
            assert 1 <= r <= 4 and s == codes.SEVERITY[r]
        if k == "no-icing":
            assert r == 0 and s == "none"
    meta, _, geom, fields = pyogrio.raw.read(gpkg, layer="routes")
    names = list(meta["fields"])
    assert len(geom) == 2
    assert set(fields[names.index("airframe")]) == {"twin-turboprop", "small-multirotor"}
    assert {"outcome", "outcome_reason", "worst_severity_rank", "accretion_mm"} <= set(names)


def test_geopackage_carries_its_style_and_styles_sit_beside_it(gpkg):
    with sqlite3.connect(gpkg) as db:
        rows = db.execute(
            "SELECT f_table_name, styleQML, useAsDefault FROM layer_styles"
        ).fetchall()
        kinds = dict(db.execute("SELECT table_name, data_type FROM gpkg_contents").fetchall())
    assert rows and rows[0][0] == "hazards" and rows[0][2] == 1 and "RuleRenderer" in rows[0][1]
    assert kinds["layer_styles"] == "attributes" and kinds["hazards"] == "features"
    assert gpkg.with_suffix(".qml").read_text() == qml_text()
    assert gpkg.with_suffix(".sld").read_text() == sld_text()
    assert json.loads(gpkg.with_name("hazards.summary.json").read_text())["summaries"]


def test_qml_and_sld_colour_every_severity_with_our_colours():
    qml = ET.fromstring(qml_text().split("\n", 1)[1])  # after the DOCTYPE line
    rules = qml.findall(".//rule")
    assert len(rules) == len(STYLE_RULES)
    filters = [r.get("filter") for r in rules]
    for k in (1, 2, 3, 4):
        assert f'"severity_rank" = {k}' in filters
    assert "\"kind\" = 'coverage-gap'" in filters
    colours = [o.get("value") for o in qml.iter("Option") if o.get("name") == "line_color"]
    for k, hexc in SEVERITY_COLOURS.items():
        rgb = ",".join(str(int(hexc[i : i + 2], 16)) for i in (1, 3, 5))
        assert f"{rgb},255" in colours, codes.SEVERITY[k]
    sld = ET.fromstring(sld_text())
    ns = {"se": "http://www.opengis.net/se", "ogc": "http://www.opengis.net/ogc"}
    assert sld.tag == "{http://www.opengis.net/sld}StyledLayerDescriptor"
    assert sld.get("version") == "1.1.0"
    srules = sld.findall(".//se:Rule", ns)
    assert len(srules) == len(STYLE_RULES)
    strokes = {p.text for p in sld.findall(".//se:SvgParameter[@name='stroke']", ns)}
    assert set(SEVERITY_COLOURS.values()) <= strokes
    literals = [e.text for e in sld.findall(".//ogc:Literal", ns)]
    assert {"1", "2", "3", "4", "coverage-gap"} <= set(literals)


def test_kml_altitudes_are_absolute_msl(tmp_path):
    out = tmp_path / "h.kml"
    assert main(["screen", str(ROUTES[1]), "-f", str(FORECAST), "-o", str(out)]) == 0
    root = ET.parse(out).getroot()
    modes = {e.text for e in root.iter(f"{KML}altitudeMode")}
    assert modes == {"absolute"}  # never clamped to the ground
    fc = json.loads(out.with_name("h.summary.json").read_text())
    assert fc["summaries"][0]["route_altitude_reference"] == "agl"
    heights = [
        float(c.split(",")[2]) for e in root.iter(f"{KML}coordinates") for c in e.text.split()
    ]
    # the drone flies 120-400 ft above the sea surface: 36-122 m MSL, never 0
    assert heights and min(heights) >= 36.0 and max(heights) <= 122.0
    assert "CAUTION" in root.find(f"{KML}Document/{KML}description").text


def test_no_icing_features_say_none_and_validate(tmp_path):
    out = tmp_path / "h.geojson"
    assert main(["screen", str(ROUTES[0]), "-f", str(FORECAST), "-o", str(out),
                 "--all-segments"]) == 0  # fmt: skip
    fc = json.loads(out.read_text())
    jsonschema.validate(fc, SCHEMA)
    clear = [f["properties"] for f in fc["features"] if f["properties"]["kind"] == "no-icing"]
    assert clear and all(p["severity"] == "none" and p["severity_rank"] == 0 for p in clear)
    for f in fc["features"]:
        p = f["properties"]
        if p["kind"] == "icing":
            assert p["severity_rank"] == codes.severity_code(p["severity"])
            # the deprecated name carries the same values for one release
            assert p["ice_free_altitudes_ft"] == p["candidate_altitudes_ft"]
