"""Write the corpus of bad and hostile inputs of ``tests/test_hostile_corpus.py``.

    python tests/make_hostile_corpus.py        # rewrites tests/data/hostile/

Each case is a file (a route, forecast or airframe file, or none for a bad option) and
what ``icing screen`` must do with it: ``refused`` (exit 2, one line on stderr naming
the file or option at fault, nothing written) or ``gap`` (exit 0; the part the input
cannot cover is a coverage gap, never "no icing"). ``manifest.json`` lists the cases;
the files are deterministic, so the corpus only changes when this script does.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

HERE = Path(__file__).resolve().parent
OUT = HERE / "data" / "hostile"
ROOT = HERE.parent
ROUTE = json.loads((ROOT / "routes" / "regional-dispatch.geojson").read_text())
PROFILES = json.loads((ROOT / "fixtures" / "skerrow-profiles.json").read_text())

CASES = []


def case(name, content, expect, why, *, kind=None, args=None):
    """Add a case: ``content`` (str or bytes) goes to ``name`` unless it is None."""
    kind = kind or {
        ".geojson": "route",
        ".csv": "route",
        ".gpx": "route",
        ".json": "forecast",
        ".pcsv": "forecast",
        ".toml": "airframe",
    }.get(Path(name).suffix, "args")
    if name.endswith(".pcsv"):
        name = name[: -len(".pcsv")] + ".csv"
    CASES.append(
        {
            "file": name if content is not None else None,
            "kind": kind,
            "expect": expect,
            "why": why,
            "args": args or [],
            "content": content,
        }
    )


def route(**changes):
    doc = json.loads(json.dumps(ROUTE))
    if "coordinates" in changes:  # the names belong to the seven positions of the seed
        doc["properties"].pop("waypoint_names")
    doc["properties"].update(changes.pop("properties", {}))
    for key, value in changes.items():
        doc["geometry"][key] = value
    return doc


def dumps(doc):
    return json.dumps(doc, indent=1, allow_nan=True)


def coords(*points):
    return [list(p) for p in points]


LINE = coords([-26.0, 56.5, 914.4], [-24.9, 56.95, 2743.2], [-23.7, 57.45, 3657.6])


def geojson_cases():
    good = dumps(route())
    for i, cut in enumerate((1, 40, 200, len(good) // 2, len(good) - 2)):
        case(f"route-truncated-{i}.geojson", good[:cut], "refused", "cut short")
    literals = ("NaN", "Infinity", "-Infinity", "1e999", "1" * 5000, "-" + "9" * 400)
    for i, lit in enumerate(literals):
        case(f"route-literal-{i}.geojson", good.replace("914.4", lit, 1), "refused", f"{lit[:12]}")
    case("route-deep-arrays.geojson", "[" * 100000 + "]" * 100000, "refused", "deep nesting")
    deep = '{"a":' * 3000 + "1" + "}" * 3000
    case("route-deep-objects.geojson", deep, "refused", "deep nesting")
    case(
        "route-deep-in-properties.geojson",
        good.replace('"name":', '"x-deep": ' + "[" * 500 + "]" * 500 + ', "name":', 1),
        "refused",
        "deep nesting inside a route",
    )
    case(
        "route-duplicate-key.geojson",
        good.replace('"type": "Feature",', '"type": "Feature", "type": "Feature",', 1),
        "refused",
        "duplicate key",
    )
    for i, text in enumerate(("42", '"a string"', "[]", "{}", "null", "true", "   ", "")):
        case(f"route-not-geojson-{i}.geojson", text, "refused", "no GeoJSON object")
    case("route-bom-garbage.geojson", b"\xef\xbb\xbf\x00\x01garbage", "refused", "binary")
    case(
        "route-latin1.geojson",
        good.replace("Skerrow", "Sk\xe9rrow").encode("latin-1"),
        "refused",
        "not UTF-8",
    )
    case("route-utf16-odd.geojson", b"\xff\xfe{\x00\x00", "refused", "broken UTF-16")
    case("route-binary.geojson", bytes(range(256)) * 8, "refused", "binary junk")
    bad_positions = {
        "objects": [{"lon": -26, "lat": 56.5, "alt": 900}, {"lon": -25, "lat": 57, "alt": 900}],
        "short": [[-26.0], [-25.0]],
        "strings": [["-26", "56.5", "900"], ["-25", "57", "900"]],
        "bools": [[True, False, 1], [-25.0, 57.0, 900]],
        "nested": [[[-26.0, 56.5, 900]], [[-25.0, 57.0, 900]]],
        "nulls": [[None, None, None], [-25.0, 57.0, 900]],
        "lat91": [[-26.0, 91.0, 900], [-25.0, 57.0, 900]],
        "lat-91": [[-26.0, -91.0, 900], [-25.0, 57.0, 900]],
        "lon181": [[181.0, 56.5, 900], [-25.0, 57.0, 900]],
        "swapped": [[56.5, -126.0, 900], [57.0, -125.0, 900]],
        "feet-as-metres": [[-26.0, 56.5, 30000], [-25.0, 57.0, 35000]],
        "below-sea": [[-26.0, 56.5, -5000], [-25.0, 57.0, 900]],
        "empty": [],
        "single": [[-26.0, 56.5, 900]],
        "not-a-list": "LINESTRING(-26 56.5, -25 57)",
    }
    for name, c in bad_positions.items():
        case(
            f"route-positions-{name}.geojson",
            dumps(route(coordinates=c)),
            "refused",
            f"positions: {name}",
        )
    bad_props = {
        "tas-zero": {"true_airspeed_kt": 0},
        "tas-tiny": {"true_airspeed_kt": 1e-300},
        "tas-kmh": {"true_airspeed_kt": 4600},
        "tas-text": {"true_airspeed_kt": "fast"},
        "tas-huge-int": {"true_airspeed_kt": 10**19},
        "departure-no-zone": {"departure_time": "2027-01-14T09:00:00"},
        "departure-garbage": {"departure_time": "tomorrow"},
        "departure-object": {"departure_time": {"h": 9}},
        "reference-unknown": {"altitude_reference": "agl-ish"},
        "reference-agl-negative": {"altitude_reference": "agl", "ground_elevation_m": 0},
        "ground-huge": {"ground_elevation_m": 1e6},
        "airframe-number": {"airframe": 737},
        "airframe-unknown": {"airframe": "no-such-airframe"},
        "times-decreasing": {"times": ["2027-01-14T09:00:00Z", "2027-01-14T08:00:00Z", None]},
        "times-no-zone": {"times": ["2027-01-14T09:00:00", None, None]},
        "times-too-fast": {"times": ["2027-01-14T09:00:00Z", "2027-01-14T09:01:00Z", None]},
        "times-year-slip": {"times": ["2027-01-14T09:00:00Z", None, "2028-01-14T09:00:00Z"]},
        "times-wrong-length": {"times": ["2027-01-14T09:00:00Z"]},
        "times-not-list": {"times": "2027-01-14T09:00:00Z"},
        "hold-negative": {"hold_min": [0, -5, 0]},
        "hold-year": {"hold_min": [0, 525600, 0]},
        "names-wrong-length": {"waypoint_names": ["a"]},
        "flight-level-feet": {"flight_level": 10000},
        "flight-level-and-feet": {"flight_level": 100, "altitude_ft": 10000},
        "flight-level-agl": {"flight_level": 100, "altitude_reference": "agl"},
        "altitude-ft-huge": {"altitude_ft": 1e9},
    }
    for name, props in bad_props.items():
        doc = route(properties=props, coordinates=LINE)
        if name.startswith(("flight-level", "altitude-ft")):
            doc["geometry"]["coordinates"] = [p[:2] for p in LINE]
        if name.startswith("reference-agl"):
            doc["geometry"]["coordinates"] = [p[:2] + [-100.0] for p in LINE]
        case(f"route-props-{name}.geojson", dumps(doc), "refused", f"property: {name}")
    poly = route()
    poly["geometry"] = {"type": "Polygon", "coordinates": [LINE + LINE[:1]]}
    case("route-polygon.geojson", dumps(poly), "refused", "not a route geometry")
    mixed = {
        "type": "FeatureCollection",
        "features": [
            route(),
            {
                "type": "Feature",
                "properties": {},
                "geometry": {"type": "Point", "coordinates": [-25, 57, 900]},
            },
        ],
    }
    case("route-mixed.geojson", dumps(mixed), "refused", "Points and LineStrings mixed")
    case(
        "route-no-features.geojson",
        dumps({"type": "FeatureCollection", "features": []}),
        "refused",
        "empty",
    )
    case(
        "route-feature-list-props.geojson",
        dumps(
            {
                "type": "Feature",
                "properties": [1],
                "geometry": {"type": "Point", "coordinates": [-25, 57, 900]},
            }
        ),
        "refused",
        "properties a list",
    )
    many = route(coordinates=[[-26.0 + i * 1e-4, 56.5, 900.0] for i in range(20001)])
    case("route-too-many-points.geojson", json.dumps(many), "refused", "20,001 points")
    lone = {
        "type": "Feature",
        "properties": {
            "name": "hover",
            "departure_time": "2027-01-14T09:00:00Z",
            "hold_min": 0,
            "tas_kt": 30,
        },
        "geometry": {"type": "Point", "coordinates": [-24.5, 57.0, 100]},
    }
    case("route-lone-point-no-hold.geojson", dumps(lone), "refused", "one point, no hold")


CSV_HEAD = "name,lat,lon,altitude_ft,time\n"
CSV_ROWS = "A,56.5,-26.0,3000,2027-01-14T09:00:00Z\nB,57.45,-23.7,12000,2027-01-14T09:40:00Z\n"


def csv_cases():
    bad = {
        "no-header": CSV_ROWS,
        "semicolons": CSV_HEAD.replace(",", ";") + CSV_ROWS.replace(",", ";"),
        "no-lat": "name,lon,altitude_ft\nA,-26,3000\nB,-23,3000\n",
        "duplicate-column": "name,lat,lat,lon,altitude_ft\nA,56,56,-26,3000\nB,57,57,-23,3000\n",
        "too-many-fields": CSV_HEAD + "A,56.5,-26.0,3000,2027-01-14T09:00:00Z,extra\n",
        "open-quote": CSV_HEAD + 'A,"56.5,-26.0,3000,2027-01-14T09:00:00Z\nB,57,-23,3000,\n',
        "nan-lat": CSV_HEAD + CSV_ROWS.replace("56.5", "nan"),
        "inf-lon": CSV_HEAD + CSV_ROWS.replace("-26.0", "-inf"),
        "huge-lat": CSV_HEAD + CSV_ROWS.replace("56.5", "1e999"),
        "no-altitude": "name,lat,lon\nA,56.5,-26\nB,57.45,-23.7\n",
        "blank-altitude": CSV_HEAD + CSV_ROWS.replace("3000", ""),
        "unknown-setting": "# altitude_ref: agl\n" + CSV_HEAD + CSV_ROWS,
        "setting-twice": "# name: a\n# name: b\n" + CSV_HEAD + CSV_ROWS,
        "fl-as-feet": "name,lat,lon,flight_level\nA,56.5,-26,10000\nB,57,-24,10000\n",
        "tas-tiny": "name,lat,lon,altitude_ft,tas_kt\nA,56.5,-26,3000,0.0001\nB,57,-24,3000,100\n",
        "tas-huge": "name,lat,lon,altitude_ft,tas_kt\nA,56.5,-26,3000,99999\nB,57,-24,3000,100\n",
        "time-no-zone": CSV_HEAD + CSV_ROWS.replace("09:00:00Z", "09:00:00"),
        "times-backwards": CSV_HEAD + CSV_ROWS.replace("09:40", "08:40"),
        "times-hour-slip": CSV_HEAD + CSV_ROWS.replace("09:40", "09:01"),
        "hold-negative": "name,lat,lon,altitude_ft,hold_min\n"
        "A,56.5,-26,3000,-5\nB,57,-24,3000,0\n",
        "reference-mixed": "name,lat,lon,altitude_ft,altitude_reference\n"
        "A,56.5,-26,3000,msl\nB,57,-24,300,agl\n",
        "only-comments": "# just a comment\n# another\n",
        "header-only": CSV_HEAD,
        "one-row": CSV_HEAD + "A,56.5,-26.0,3000,2027-01-14T09:00:00Z\n",
        "feet-too-high": CSV_HEAD + CSV_ROWS.replace("12000", "120000"),
        "departure-garbage": "# departure_time: soon\n" + CSV_HEAD + CSV_ROWS,
        "airframe-setting-bad": "# true_airspeed_kt: 0\n" + CSV_HEAD + CSV_ROWS,
    }
    for name, text in bad.items():
        case(f"route-csv-{name}.csv", text, "refused", f"CSV: {name}")
    case("route-csv-binary.csv", b"\x00\x81\xfe" * 100, "refused", "binary")
    case("route-csv-nul.csv", (CSV_HEAD + CSV_ROWS).replace("A,", "A\x00,"), "refused", "NUL byte")


def gpx(body, head=""):
    ns = "http://www.topografix.com/GPX/1/1"
    decl = '<?xml version="1.0" encoding="UTF-8"?>\n'
    return f'{decl}{head}<gpx xmlns="{ns}" version="1.1">{body}</gpx>\n'


PT = '<rtept lat="{lat}" lon="{lon}"><ele>{ele}</ele><time>{t}</time></rtept>'
RTE = (
    "<rte><name>r</name>"
    + PT.format(lat=56.5, lon=-26, ele=900, t="2027-01-14T09:00:00Z")
    + PT.format(lat=57.45, lon=-23.7, ele=3600, t="2027-01-14T09:40:00Z")
    + "</rte>"
)


EXT = '<name>r</name><extensions><i:{key} xmlns:i="urn:icing:gpx:1">{value}</i:{key}></extensions>'


def gpx_cases():
    comment = "<!-- " + "x" * 6000 + " -->\n"
    entity = '<!DOCTYPE gpx [<!ENTITY nm "Injected">]>\n'
    bad = {
        "doctype": gpx(RTE, "<!DOCTYPE gpx>\n"),
        "entity-behind-comment": gpx(
            RTE.replace("<name>r</name>", "<name>&nm;</name>"), comment + entity
        ),
        "bomb": gpx(
            RTE.replace("<name>r</name>", "<name>&l9;</name>"),
            "<!DOCTYPE gpx ["
            + '<!ENTITY l0 "ha">'
            + "".join(f'<!ENTITY l{i} "' + f"&l{i - 1};" * 10 + '">' for i in range(1, 10))
            + "]>\n",
        ),
        "external-entity": gpx(
            RTE.replace("<name>r</name>", "<name>&ext;</name>"),
            '<!DOCTYPE gpx [<!ENTITY ext SYSTEM "file:///etc/passwd">]>\n',
        ),
        "parameter-entity": gpx(
            RTE, '<!DOCTYPE gpx [<!ENTITY % p SYSTEM "http://example.invalid/x.dtd"> %p;]>\n'
        ),
        "external-dtd": gpx(RTE, '<!DOCTYPE gpx SYSTEM "http://example.invalid/gpx.dtd">\n'),
        "doctype-at-end": gpx(RTE) + "<!DOCTYPE gpx>",
        "not-gpx-root": '<?xml version="1.0"?><kml><Document/></kml>',
        "malformed": gpx(RTE).replace("</rte>", "</rt>"),
        "truncated": gpx(RTE)[:150],
        "no-route": gpx('<wpt lat="56.5" lon="-26"><ele>900</ele></wpt>'),
        "empty-rte": gpx("<rte></rte>"),
        "missing-ele": gpx(RTE.replace("<ele>900</ele>", "")),
        "ele-feet": gpx(RTE.replace(">900<", ">30000<").replace(">3600<", ">35000<")),
        "lat-missing": gpx(RTE.replace('lat="56.5" ', "")),
        "lat-text": gpx(RTE.replace('lat="56.5"', 'lat="north"')),
        "lat-nan": gpx(RTE.replace('lat="56.5"', 'lat="NaN"')),
        "time-no-zone": gpx(RTE.replace("09:00:00Z", "09:00:00")),
        "times-backwards": gpx(RTE.replace("09:40", "08:40")),
        "ext-tas-tiny": gpx(
            RTE.replace(
                "<name>r</name>",
                EXT.format(key="true_airspeed_kt", value="1e-300"),
            )
        ),
        "ext-reference-bogus": gpx(
            RTE.replace(
                "<name>r</name>",
                EXT.format(key="altitude_reference", value="above-ground"),
            )
        ),
        "cdata-lat": gpx(RTE.replace("<ele>900</ele>", "<ele><![CDATA[nine hundred]]></ele>")),
    }
    for name, text in bad.items():
        case(f"route-gpx-{name}.gpx", text, "refused", f"GPX: {name}")
    case(
        "route-gpx-latin1-bytes.gpx",
        gpx(RTE.replace(">r<", ">caf\xe9<")).encode("latin-1"),
        "refused",
        "latin-1 bytes",
    )
    case("route-gpx-empty.gpx", "", "refused", "empty")


def profiles(**changes):
    doc = json.loads(json.dumps(PROFILES))
    doc.update(changes)
    return doc


def forecast_cases():
    good = dumps(PROFILES)
    case("forecast-truncated.json", good[: len(good) // 3], "refused", "cut short")
    t0 = PROFILES["profiles"][0]["levels"]["temperature_c"][0]
    for i, lit in enumerate(("NaN", "Infinity", "1e999", "7" * 5000)):
        text = good.replace(f'"lat": {PROFILES["profiles"][0]["lat"]}', f'"lat": {lit}', 1)
        case(f"forecast-lat-literal-{i}.json", text, "refused", f"lat {lit[:10]}")
    case(
        "forecast-temperature-nan.json",
        good.replace(f"{t0}", "NaN", 1),
        "refused",
        "NaN temperature",
    )
    case(
        "forecast-deep.json",
        '{"format": "icing-profiles", "x-deep": ' + "[" * 50000 + "]" * 50000 + "}",
        "refused",
        "deep",
    )
    case(
        "forecast-duplicate-key.json",
        good.replace('"version": 1', '"version": 1, "version": 1', 1),
        "refused",
        "duplicate key",
    )

    def edit(name, why, fn):
        doc = profiles()
        fn(doc)
        case(f"forecast-{name}.json", dumps(doc), "refused", why)

    first = lambda d: d["profiles"][0]  # noqa: E731
    edit("format", "unknown format", lambda d: d.update(format="grib"))
    edit("version", "unknown version", lambda d: d.update(version=9))
    edit("no-profiles", "no profiles", lambda d: d.update(profiles=[]))
    edit(
        "kelvin",
        "kelvin in a Celsius field",
        lambda d: first(d)["levels"].update(
            temperature_c=[v + 273.15 for v in first(d)["levels"]["temperature_c"]]
        ),
    )
    edit(
        "pascal",
        "Pa in an hPa field",
        lambda d: first(d)["levels"].update(
            pressure_hpa=[v * 100 for v in first(d)["levels"]["pressure_hpa"]]
        ),
    )
    edit(
        "rh-500",
        "RH far above 100 %",
        lambda d: first(d)["levels"].update(
            relative_humidity_pct=[500.0] * len(first(d)["levels"]["pressure_hpa"])
        ),
    )
    edit(
        "ragged",
        "ragged levels",
        lambda d: first(d)["levels"].update(
            temperature_c=first(d)["levels"]["temperature_c"][:-3]
        ),
    )
    edit(
        "pressure-zigzag",
        "pressure not monotonic",
        lambda d: first(d)["levels"]["pressure_hpa"].__setitem__(2, 1010.0),
    )
    edit(
        "time-no-zone",
        "time without zone",
        lambda d: first(d).update(valid_time="2027-01-14T06:00:00"),
    )
    edit("lat-95", "latitude out of range", lambda d: first(d).update(lat=95.0))
    edit("lat-string", "latitude a string", lambda d: first(d).update(lat="57N"))
    edit("no-humidity", "no humidity", lambda d: first(d)["levels"].pop("relative_humidity_pct"))
    edit("unknown-key", "unknown key", lambda d: first(d).update(temperature=5))
    edit("levels-list", "levels a list", lambda d: first(d).update(levels=[1, 2]))
    edit(
        "pressure-null",
        "missing pressure",
        lambda d: first(d)["levels"]["pressure_hpa"].__setitem__(0, None),
    )
    case("forecast-binary.json", b"\x89HDF\r\n\x1a\n" + bytes(200), "refused", "not a forecast")
    case(
        "forecast-latin1.json",
        good.replace("Skerrow", "Sk\xe9rrow").encode("latin-1"),
        "refused",
        "not UTF-8",
    )
    csv = (ROOT / "fixtures" / "skerrow-profiles.csv").read_text().splitlines()
    head, rows = csv[0], csv[1:22]
    pc = {
        "missing-column": [head.replace("temperature_c", "temp")] + rows,
        "nan-lat": [head] + [r.replace("57.0", "nan", 1) for r in rows],
        "text-pressure": [head] + [rows[0].replace("1000.0", "lots", 1)] + rows[1:],
        "kelvin": [head] + [r.replace(",0.42,", ",273.57,") for r in rows],
        "header-only": [head],
    }
    for name, lines in pc.items():
        case(
            f"forecast-csv-{name}.pcsv", "\n".join(lines) + "\n", "refused", f"profile CSV: {name}"
        )


def gap_cases():
    far = profiles()
    for p in far["profiles"]:
        p["lat"], p["lon"] = p["lat"] - 30.0, p["lon"] + 100.0
    case("forecast-gap-far-away.json", dumps(far), "gap", "every profile far from the route")
    late = profiles()
    for p in late["profiles"]:
        p["valid_time"] = "2027-03-14T06:00:00Z"
    case("forecast-gap-other-day.json", dumps(late), "gap", "valid two months later")
    nosurf = profiles()
    for p in nosurf["profiles"]:
        p.pop("surface_elevation_m", None)
        p.pop("surface_pressure_hpa", None)
    case(
        "forecast-gap-no-surface.json",
        dumps(nosurf),
        "gap",
        "AGL route, no surface height",
        args=["--route", "{corpus}/_agl-route.geojson"],
    )
    case(
        "route-gap-pole.geojson",
        dumps(route(coordinates=coords([0.0, 89.0, 3000], [90.0, 89.5, 3000]))),
        "gap",
        "across the pole",
    )
    case(
        "route-gap-antimeridian.geojson",
        dumps(route(coordinates=coords([179.5, 56.5, 3000], [-179.5, 57.0, 3000]))),
        "gap",
        "across 180 degrees",
    )
    case(
        "route-gap-above-top.geojson",
        dumps(route(coordinates=coords([-25.0, 57.0, 19000], [-24.0, 57.2, 19000]))),
        "gap",
        "above the profiles' top",
    )
    case(
        "route-gap-south.geojson",
        dumps(route(coordinates=coords([-24.0, -57.0, 3000], [-23.0, -57.2, 3000]))),
        "gap",
        "other hemisphere",
    )
    partly = route(
        coordinates=coords([-26.0, 56.5, 900], [-24.9, 56.95, 2700], [-10.0, 62.0, 3000])
    )
    case("route-gap-partly-out.geojson", dumps(partly), "gap", "leaves the profiles' coverage")


def airframe_cases():
    good = (
        'name = "case"\ntrue_airspeed_kt = 150\nice_tolerance_mm = 5\n'
        '[[collectors]]\nname = "wing"\nshape = "airfoil"\nchord_m = 1.4\nthickness_ratio = 0.12\n'
    )
    rotor = (
        '[[collectors]]\nname = "prop"\nshape = "rotor"\nchord_m = 0.1\nthickness_ratio = 0.1\n'
        "section_radius_m = 0.7\nrpm = 2400\ncritical = false\n"
    )
    bad = {
        "chord-mm": good.replace("chord_m = 1.4", "chord_m = 1400"),
        "chord-1e6": good.replace("chord_m = 1.4", "chord_m = 1e6"),
        "diameter-50": good.replace(
            'shape = "airfoil"\nchord_m = 1.4\nthickness_ratio = 0.12',
            'shape = "cylinder"\ndiameter_m = 50',
        ),
        "tolerance-1e6": good.replace("ice_tolerance_mm = 5", "ice_tolerance_mm = 1e6"),
        "tas-zero": good.replace("true_airspeed_kt = 150", "true_airspeed_kt = 0"),
        "tas-kmh": good.replace("true_airspeed_kt = 150", "true_airspeed_kt = 5000"),
        "tas-nan": good.replace("true_airspeed_kt = 150", "true_airspeed_kt = nan"),
        "tas-inf": good.replace("true_airspeed_kt = 150", "true_airspeed_kt = inf"),
        "thickness-percent": good.replace("thickness_ratio = 0.12", "thickness_ratio = 12"),
        "rotor-supersonic": good + rotor.replace("rpm = 2400", "rpm = 24000"),
        "rpm-huge": good + rotor.replace("rpm = 2400", "rpm = 1e7"),
        "ceiling-metres": good + "ceiling_ft = 1e6\n".replace("\n", "") + "\n",
        "malformed": good.replace('"case"', '"case'),
        "unknown-key": good + "colour = 3\n",
        "no-collectors": good.split("[[collectors]]")[0],
        "empty": "",
    }
    bad["ceiling-metres"] = good.replace(
        "ice_tolerance_mm = 5\n", "ice_tolerance_mm = 5\nceiling_ft = 1e6\n"
    )
    for name, text in bad.items():
        case(f"airframe-{name}.toml", text, "refused", f"airframe: {name}")
    case(
        "airframe-latin1.toml",
        good.replace('"case"', '"caf\xe9"').encode("latin-1"),
        "refused",
        "not UTF-8",
    )
    case("airframe-binary.toml", bytes(range(256)), "refused", "binary")


def args_cases():
    """Bad options with good files: ``{route}``, ``{forecast}``, ``{out}`` are filled in."""
    for name, args in {
        "tas-tiny": ["--tas-kt", "1e-300"],
        "tas-nan": ["--tas-kt", "nan"],
        "tas-inf": ["--tas-kt", "inf"],
        "tas-text": ["--tas-kt", "fast"],
        "step-zero": ["--step-km", "0"],
        "step-negative": ["--step-km=-1"],
        "step-tiny": ["--step-km", "1e-9"],
        "radius-huge": ["--radius-km", "1e9"],
        "tolerance-negative": ["--time-tolerance=-1"],
        "depart-garbage": ["--depart", "soon"],
        "depart-no-zone": ["--depart", "2027-01-14T09:00:00"],
        "window-huge": ["--depart-window", "2027-01-01T00:00Z/2027-12-31T00:00Z/1h"],
        "unknown-option": ["--bogus"],
        "fail-on-bad": ["--fail-on", "awful"],
        "output-is-route": ["-o", "{route}"],
        "output-is-forecast": ["-o", "{forecast}"],
        "samples-is-output": ["-o", "{out}/a.geojson", "--samples", "{out}/a.geojson"],
        "samples-is-summary": ["-o", "{out}/a.geojson", "--samples", "{out}/a.summary.json"],
        "samples-is-route": ["--samples", "{route}"],
        "report-is-forecast": ["--report", "{forecast}"],
        "output-is-folder": ["-o", "{out}/folder.geojson"],
        "output-bad-suffix": ["-o", "{out}/a.txt"],
        "gpkg-style-is-samples": ["-o", "{out}/a.gpkg", "--samples", "{out}/a.qml"],
        "map-is-plot": ["--plot", "{out}/a.png", "--map", "{out}/a.png"],
        "airframe-missing": ["--airframe", "{out}/none.toml"],
        "forecast-missing": ["--forecast", "{out}/none.json"],
        "forecast-folder": ["--forecast", "{out}"],
        "forecast-device": ["--forecast", "/dev/zero"],
    }.items():
        case(f"args-{name}", None, "refused", f"option: {name}", kind="args", args=args)
    case(
        "args-route-device",
        None,
        "refused",
        "route /dev/zero",
        kind="args",
        args=["--route", "/dev/zero"],
    )
    case(
        "args-route-folder",
        None,
        "refused",
        "route a folder",
        kind="args",
        args=["--route", "{out}"],
    )


def main():
    for make in (
        geojson_cases,
        csv_cases,
        gpx_cases,
        forecast_cases,
        gap_cases,
        airframe_cases,
        args_cases,
    ):
        make()
    if OUT.exists():
        shutil.rmtree(OUT)
    OUT.mkdir(parents=True)
    manifest = []
    for c in CASES:
        content = c.pop("content")
        if c["file"] is not None:
            data = (
                content if isinstance(content, bytes) else content.encode("utf-8", "surrogatepass")
            )
            (OUT / c["file"]).write_bytes(data)
        manifest.append(c)
    agl = route(
        properties={"altitude_reference": "agl"}, coordinates=[p[:2] + [300.0] for p in LINE]
    )
    (OUT / "_agl-route.geojson").write_text(dumps(agl))  # a helper, not a case
    (OUT / "manifest.json").write_text(json.dumps(manifest, indent=1) + "\n")
    n_gap = sum(c["expect"] == "gap" for c in manifest)
    print(f"wrote {len(manifest)} cases ({len(manifest) - n_gap} refused, {n_gap} gaps) to {OUT}")


if __name__ == "__main__":
    main()
