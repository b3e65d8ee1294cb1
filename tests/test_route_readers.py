"""Route readers: GeoJSON, CSV and GPX, the example routes, and bad input.

Every bad-input case is checked for every reader: one line naming the file,
the place and the fix. Routes and names are invented (routes/README.md).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from pyproj import Geod

from icing.constants import FT
from icing.errors import PlausibilityWarning, RouteError
from icing.route import load_route, load_routes, sample_route

ROUTES = Path(__file__).resolve().parent.parent / "routes"
GEOD = Geod(ellps="WGS84")
GPX_HEAD = (
    '<?xml version="1.0"?>\n<gpx version="1.1" creator="test" '
    'xmlns="http://www.topografix.com/GPX/1/1" xmlns:icing="urn:icing:gpx:1">\n'
)


def line_feature(coords, **props):
    return {
        "type": "Feature",
        "properties": props,
        "geometry": {"type": "LineString", "coordinates": coords},
    }


def point_feature(lon, lat, *alt, **props):
    return {
        "type": "Feature",
        "properties": props,
        "geometry": {"type": "Point", "coordinates": [lon, lat, *alt]},
    }


def dump(tmp_path, obj, name="r.geojson"):
    path = tmp_path / name
    path.write_text(json.dumps(obj), encoding="utf-8")
    return path


def gpx(body):
    return GPX_HEAD + body + "\n</gpx>\n"


def rtept(lat, lon, ele="1000", time=None, name=None, ext=""):
    parts = [f'<rtept lat="{lat}" lon="{lon}">']
    if ele is not None:
        parts.append(f"<ele>{ele}</ele>")
    if time is not None:
        parts.append(f"<time>{time}</time>")
    if name is not None:
        parts.append(f"<name>{name}</name>")
    if ext:
        parts.append(f"<extensions>{ext}</extensions>")
    return "".join(parts) + "</rtept>"


# --------------------------------------------------------------------------- examples

EXAMPLES = {
    # file: (routes, waypoints, reference, km range, has times)
    "regional-dispatch.geojson": (1, 7, "msl", (400, 500)),
    "drone-inspection.gpx": (1, 5, "agl", (10, 15)),
    "flight-plan.csv": (1, 5, "msl", (180, 230)),
    "flight-levels.geojson": (1, 6, "pressure", (600, 700)),
}


@pytest.mark.parametrize("name", sorted(EXAMPLES))
def test_example_routes_load_and_sample_inside_the_demo_forecast(name):
    n_routes, n_wp, ref, (lo, hi) = EXAMPLES[name]
    routes = load_routes(ROUTES / name)
    assert len(routes) == n_routes
    r = routes[0]
    assert len(r.waypoints) == n_wp and r.altitude_reference == ref
    s = sample_route(r)
    assert lo <= s.distance_m[-1] / 1000 <= hi
    # the demo forecast covers lat 53.5..60.5, lon -31..-17, 2027-01-14 06..18Z
    assert np.all((s.lat > 53.5) & (s.lat < 60.5) & (s.lon > -31) & (s.lon < -17))
    assert s.time[0] >= np.datetime64("2027-01-14T06:00")
    assert s.time[-1] <= np.datetime64("2027-01-14T18:00")
    # invented names that no published five-letter fix could have (lower case, digits)
    assert not any(len(w.name) == 5 and w.name.isalpha() and w.name.isupper() for w in r.waypoints)
    assert all(any(c.isdigit() or c == "-" for c in w.name) for w in r.waypoints)


def test_regional_dispatch_climbs_and_descends_within_its_band():
    r = load_route(ROUTES / "regional-dispatch.geojson")
    ft = np.array([w.altitude_m for w in r.waypoints]) / FT
    assert ft.max() == pytest.approx(14000) and 8000 <= ft[1:-1].min()
    assert ft[0] < ft[3] > ft[-1]
    assert r.true_airspeed_kt == 250
    assert r.departure_time.isoformat() == "2027-01-14T09:00:00+00:00"


def test_drone_inspection_has_agl_altitudes_times_and_a_hover():
    r = load_route(ROUTES / "drone-inspection.gpx")
    ft = np.array([w.altitude_m for w in r.waypoints]) / FT
    assert 119 <= ft.min() and ft.max() <= 401
    assert r.ground_elevation_m == 0.0
    assert [w.hold_min for w in r.waypoints] == [0, 0, 6, 0, 0]
    assert all(w.time is not None for w in r.waypoints)
    s = sample_route(r)
    assert s.hold.sum() > 0 and np.diff(s.time).max() <= np.timedelta64(20, "s")


def test_flight_levels_are_pressure_altitudes():
    r = load_route(ROUTES / "flight-levels.geojson")
    assert r.waypoints[0].altitude_m == pytest.approx(11000 * FT)
    assert r.waypoints[2].hold_min == 8


# --------------------------------------------------------------------------- GeoJSON


def test_geojson_linestring_with_times_and_names(tmp_path):
    f = line_feature(
        [[-25.0, 57.0, 2000], [-24.5, 57.1, 2500], [-24.0, 57.2, 3000]],
        name="Skerrow test",
        times=["2027-01-14T09:00:00Z", None, "2027-01-14T11:00:00+01:00"],
        waypoint_names=["KARVO", "LEMBA", "PENTU"],
        hold_min=[0, 2, 0],
    )
    r = load_route(dump(tmp_path, f))
    assert r.name == "Skerrow test" and [w.name for w in r.waypoints] == [
        "KARVO",
        "LEMBA",
        "PENTU",
    ]
    assert r.waypoints[2].time.isoformat() == "2027-01-14T10:00:00+00:00"
    assert r.waypoints[1].time is None and r.waypoints[1].hold_min == 2
    assert r.altitude_reference == "msl" and r.source == str(tmp_path / "r.geojson")


def test_geojson_altitude_reference_and_2d_positions(tmp_path):
    f = line_feature([[-25.0, 57.0], [-24.0, 57.0]], flight_level=100)
    r = load_route(dump(tmp_path, f))
    assert r.altitude_reference == "pressure"
    assert r.waypoints[0].altitude_m == pytest.approx(3048.0)  # FL100 = 10,000 ft
    f = line_feature([[-25.0, 57.0], [-24.0, 57.0]], altitude_ft=[1000, 2000])
    assert load_route(dump(tmp_path, f)).waypoints[1].altitude_m == pytest.approx(609.6)
    f = line_feature([[-25.0, 57.0, 100], [-24.0, 57.0, 120]], altitude_reference="agl")
    r = load_route(dump(tmp_path, f))
    assert r.altitude_reference == "agl" and r.waypoints[0].altitude_m == 100


def test_geojson_point_collection_in_order(tmp_path):
    fc = {
        "type": "FeatureCollection",
        "properties": {
            "name": "points",
            "departure_time": "2027-01-14T09:00:00Z",
            "true_airspeed_kt": 200,
        },
        "features": [
            point_feature(-25.0, 57.0, 0, name="KARVO", altitude_ft=5000),
            point_feature(-24.0, 57.0, name="LEMBA", altitude_ft=6000, hold_min=3, tas_kt=150),
            point_feature(-23.0, 57.0, 1800.0, name="PENTU"),
        ],
    }
    r = load_route(dump(tmp_path, fc))
    assert [w.name for w in r.waypoints] == ["KARVO", "LEMBA", "PENTU"]
    # properties win over the third coordinate
    assert [w.altitude_m for w in r.waypoints] == pytest.approx([1524.0, 1828.8, 1800.0])
    assert r.waypoints[1].hold_min == 3 and r.waypoints[1].tas_kt == 150
    assert r.true_airspeed_kt == 200


def test_geojson_foreign_members_give_route_properties(tmp_path):
    fc = {
        "type": "FeatureCollection",
        "name": "foreign",
        "altitude_reference": "pressure",
        "features": [
            point_feature(-25.0, 57.0, flight_level=90),
            point_feature(-24.0, 57.0, flight_level=110),
        ],
    }
    r = load_route(dump(tmp_path, fc))
    assert r.name == "foreign" and r.altitude_reference == "pressure"
    assert [w.name for w in r.waypoints] == ["WP1", "WP2"]


def test_geojson_several_routes_and_load_route_refuses_them(tmp_path):
    fc = {
        "type": "FeatureCollection",
        "properties": {"true_airspeed_kt": 180},
        "features": [
            line_feature([[-25, 57, 2000], [-24, 57, 2000]], name="west"),
            line_feature([[-22, 58, 2000], [-21, 58, 2000]], name="east"),
        ],
    }
    path = dump(tmp_path, fc)
    routes = load_routes(path)
    assert [r.name for r in routes] == ["west", "east"]
    assert all(r.true_airspeed_kt == 180 for r in routes)
    with pytest.raises(RouteError, match=r"2 routes \('west', 'east'\).*load_routes"):
        load_route(path)


def test_geojson_unnamed_routes_are_named_after_the_file(tmp_path):
    fc = {
        "type": "FeatureCollection",
        "features": [
            line_feature([[-25, 57, 2000], [-24, 57, 2000]]),
            line_feature([[-22, 58, 2000], [-21, 58, 2000]]),
        ],
    }
    assert [r.name for r in load_routes(dump(tmp_path, fc, "pair.geojson"))] == [
        "pair-1",
        "pair-2",
    ]


def test_geojson_multilinestring_cut_at_the_antimeridian_is_joined(tmp_path):
    geom = {
        "type": "MultiLineString",
        "coordinates": [
            [[179.0, 52.0, 3000], [180.0, 52.0, 3000]],
            [[-180.0, 52.0, 3000], [-179.0, 52.0, 3000]],
        ],
    }
    r = load_route(dump(tmp_path, geom))
    assert len(r.waypoints) == 3
    s = sample_route(r, departure="2027-01-14T09:00:00Z", tas_kt=300)
    d = GEOD.line_length([179.0, 180.0, -179.0], [52.0, 52.0, 52.0])
    assert s.distance_m[-1] == pytest.approx(d, abs=1e-3)  # reference library: pyproj Geod


def test_geojson_single_point_hover(tmp_path):
    f = point_feature(
        -24.5,
        57.2,
        90.0,
        name="HOVRA",
        hold_min=10,
        time="2027-01-14T10:00:00Z",
        altitude_reference="agl",
    )
    r = load_route(dump(tmp_path, f))
    assert len(r.waypoints) == 1 and r.waypoints[0].hold_min == 10
    assert sample_route(r).dt_s.sum() == pytest.approx(600.0)


def test_geojson_feet_as_metres_is_refused_and_agl_ones_warn_at_the_caller(tmp_path):
    # 25,000 m MSL is above any icing-relevant flight: feet given as metres, refused
    f = line_feature([[-25.0, 57.0, 9000], [-24.0, 57.0, 25000]])
    with pytest.raises(RouteError, match="25000 m MSL is above 20000 m.*feet given as metres"):
        load_route(dump(tmp_path, f))
    # 2,000 m AGL is possible but unlikely for a drone: a warning at the caller
    drone = line_feature([[-25.0, 57.0, 120], [-24.99, 57.0, 2000]], altitude_reference="agl")
    with pytest.warns(PlausibilityWarning, match="AGL") as record:
        load_route(dump(tmp_path, drone))
    assert record[0].filename == __file__


# --------------------------------------------------------------------------- CSV


def test_csv_tolerates_bom_whitespace_and_comments(tmp_path, write_text):
    text = (
        "\ufeff# Skerrow test plan\n\n NAME , Lat , Lon , Altitude_ft , Time \n"
        "# a comment between rows\n"
        "KARVO, 57.0, -25.0, 6000, 2027-01-14T09:00:00Z\n"
        "  LEMBA ,57.1,-24.5,7000,\n"
        "PENTU,57.2,-24.0,8000,2027-01-14T09:40:00Z\n"
    )
    r = load_route(write_text(tmp_path, "plan.csv", text))
    assert r.name == "plan" and [w.name for w in r.waypoints] == ["KARVO", "LEMBA", "PENTU"]
    assert r.waypoints[1].time is None and r.waypoints[2].altitude_m == pytest.approx(2438.4)


def test_csv_optional_columns(tmp_path, write_text):
    text = (
        "name,lat,lon,altitude_ft,flight_level,altitude_reference,tas_kt,hold_min\n"
        "KARVO,57.0,-25.0,,90,pressure,150,\n"
        "LEMBA,57.1,-24.5,,100,pressure,160,4\n"
        "PENTU,57.2,-24.0,,110,,,\n"
    )
    r = load_route(write_text(tmp_path, "fl.csv", text))
    assert r.altitude_reference == "pressure"
    assert [w.altitude_m for w in r.waypoints] == pytest.approx([2743.2, 3048.0, 3352.8])
    assert [w.tas_kt for w in r.waypoints] == [150, 160, None]
    assert r.waypoints[1].hold_min == 4
    agl = "name,lat,lon,altitude_ft,altitude_reference\nA,57,-25,300,agl\nB,57,-24.9,400,agl\n"
    assert load_route(write_text(tmp_path, "agl.csv", agl)).altitude_reference == "agl"


def test_csv_route_column_gives_several_routes(tmp_path, write_text):
    text = (
        "route,name,lat,lon,altitude_ft\nnorth,A,58,-25,5000\nnorth,B,58,-24,5000\n"
        "south,C,55,-25,5000\nsouth,D,55,-24,5000\n"
    )
    assert [r.name for r in load_routes(write_text(tmp_path, "two.csv", text))] == [
        "north",
        "south",
    ]


def test_csv_in_utf16_as_spreadsheets_write_it(tmp_path, write_text):
    text = "name,lat,lon,altitude_ft\nA,57,-25,5000\nB,57,-24,5000\n"
    path = write_text(tmp_path, "excel.csv", text, encoding="utf-16")
    assert [w.name for w in load_route(path).waypoints] == ["A", "B"]


def test_csv_with_semicolons_gets_a_hint(tmp_path, write_text):
    text = "name;lat;lon;altitude_ft\nA;57;-25;5000\nB;57;-24;5000\n"
    with pytest.raises(RouteError, match="commas, not semicolons"):
        load_routes(write_text(tmp_path, "semi.csv", text))


def test_csv_content_without_known_extension(tmp_path, write_text):
    text = "name,lat,lon,altitude_ft\nA,57,-25,5000\nB,57,-24,5000\n"
    assert len(load_route(write_text(tmp_path, "plan.route", text)).waypoints) == 2


# --------------------------------------------------------------------------- GPX


def test_gpx_route_with_extensions(tmp_path, write_text):
    body = (
        "<rte><name>Skerrow drone</name><extensions>"
        "<icing:altitude_reference>agl</icing:altitude_reference>"
        "<icing:true_airspeed_kt>30</icing:true_airspeed_kt>"
        "<icing:ground_elevation_m>12</icing:ground_elevation_m></extensions>"
        + rtept(57.2, -24.5, "40", "2027-01-14T10:00:00Z", "JISKO")
        + rtept(
            57.21,
            -24.48,
            "90",
            None,
            "LOMFE",
            "<icing:hold_min>3</icing:hold_min><icing:tas_kt>20</icing:tas_kt>",
        )
        + rtept(57.22, -24.5, "60")
        + "</rte>"
    )
    r = load_route(write_text(tmp_path, "d.gpx", gpx(body)))
    assert r.name == "Skerrow drone" and r.altitude_reference == "agl"
    assert r.true_airspeed_kt == 30 and r.ground_elevation_m == 12
    assert r.waypoints[1].hold_min == 3 and r.waypoints[1].tas_kt == 20
    assert r.waypoints[2].name == "WP3" and r.waypoints[0].time.hour == 10


def test_gpx_track_segments_join_and_several_routes(tmp_path, write_text):
    seg = (
        '<trkseg><trkpt lat="57.0" lon="-25.0"><ele>900</ele></trkpt>'
        '<trkpt lat="57.0" lon="-24.9"><ele>950</ele></trkpt></trkseg>'
    )
    body = (
        "<rte>"
        + rtept(56, -25)
        + rtept(56, -24)
        + "</rte>"
        + "<trk><name>track</name>"
        + seg
        + seg.replace("-25.0", "-24.8").replace("-24.9", "-24.7")
        + "</trk>"
    )
    routes = load_routes(write_text(tmp_path, "two.gpx", gpx(body)))
    assert [len(r.waypoints) for r in routes] == [2, 4]
    assert routes[0].name == "two-1" and routes[1].name == "track"


def test_gpx_1_0_and_no_namespace_are_read(tmp_path, write_text):
    body = "<rte>" + rtept(56, -25) + rtept(56, -24) + "</rte>"
    v10 = gpx(body).replace("GPX/1/1", "GPX/1/0")
    assert len(load_route(write_text(tmp_path, "v10.gpx", v10)).waypoints) == 2
    bare = '<gpx version="1.1">' + body + "</gpx>"
    assert len(load_route(write_text(tmp_path, "bare.gpx", bare)).waypoints) == 2


def test_gpx_ele_is_metres_with_the_feet_check(tmp_path, write_text):
    body = "<rte>" + rtept(56, -25, "30000") + rtept(56, -24, "30000") + "</rte>"
    with pytest.raises(RouteError, match="feet.gpx: rte 1 rtept 1: altitude 30000 m.*feet"):
        load_route(write_text(tmp_path, "feet.gpx", gpx(body)))


# --------------------------------------------------------------------------- bad input

T1, T2 = "2027-01-14T09:00:00Z", "2027-01-14T09:30:00Z"


def geojson_case(coords=None, times=None, geometry_type="LineString", text=None):
    if text is not None:
        return text
    coords = coords if coords is not None else [[-25, 57, 1000], [-24, 57, 1000]]
    f = {
        "type": "Feature",
        "properties": {} if times is None else {"times": times},
        "geometry": {"type": geometry_type, "coordinates": coords},
    }
    return json.dumps(f)


def csv_case(rows=None, header="name,lat,lon,altitude_ft,time", text=None):
    if text is not None:
        return text
    rows = rows if rows is not None else [f"A,57,-25,3000,{T1}", f"B,57,-24,3000,{T2}"]
    return header + "\n" + "\n".join(rows) + "\n"


def gpx_case(points=None, text=None, element="rte"):
    if text is not None:
        return text
    points = (
        points if points is not None else [rtept(57, -25, "900", T1), rtept(57, -24, "900", T2)]
    )
    return gpx(f"<{element}>" + "".join(points) + f"</{element}>")


# (case, expected message fragment, expected place fragment)
BAD = {
    "geojson": {
        "malformed": (geojson_case(text='{"type": "Feature", '), "malformed JSON", "line 1"),
        "wrong geometry": (
            geojson_case(
                coords=[[[-25, 57], [-24, 57], [-24, 58], [-25, 57]]], geometry_type="Polygon"
            ),
            "'Polygon' is not a route",
            "geometry",
        ),
        "one waypoint": (
            geojson_case(coords=[[-25, 57, 1000]]),
            "single waypoint",
            "coordinates[0]",
        ),
        "latitude": (
            geojson_case(coords=[[-25, 95, 1000], [-24, 57, 1000]]),
            "latitude 95",
            "coordinates[0]",
        ),
        "longitude": (
            geojson_case(coords=[[-250, 57, 1000], [-24, 57, 1000]]),
            "longitude -250",
            "coordinates[0]",
        ),
        "missing altitude": (
            geojson_case(coords=[[-25, 57], [-24, 57]]),
            "missing altitude",
            "coordinates[0]",
        ),
        "time not ISO": (geojson_case(times=["yesterday", T2]), "not an ISO 8601", "times[0]"),
        "times not increasing": (geojson_case(times=[T2, T1]), "not after", "coordinates[1]"),
        "time without zone": (
            geojson_case(times=["2027-01-14T09:00:00", T2]),
            "no time zone",
            "times[0]",
        ),
        "empty": (geojson_case(text="   \n"), "empty", ""),
    },
    "csv": {
        "malformed": (
            csv_case(text='name,lat,lon,altitude_ft\n"A,57,-25,3000\n'),
            "malformed CSV",
            "line 2",
        ),
        "wrong header": (csv_case(header="waypoint,x,y,z"), "not a route header", "line 1"),
        "one waypoint": (csv_case(rows=[f"A,57,-25,3000,{T1}"]), "single waypoint", "line 2"),
        "latitude": (
            csv_case(rows=[f"A,-91,-25,3000,{T1}", f"B,57,-24,3000,{T2}"]),
            "latitude -91",
            "line 2",
        ),
        "longitude": (
            csv_case(rows=[f"A,57,181,3000,{T1}", f"B,57,-24,3000,{T2}"]),
            "longitude 181",
            "line 2",
        ),
        "missing altitude": (
            csv_case(rows=[f"A,57,-25,,{T1}", f"B,57,-24,3000,{T2}"]),
            "missing altitude",
            "line 2",
        ),
        "time not ISO": (
            csv_case(rows=["A,57,-25,3000,9am", f"B,57,-24,3000,{T2}"]),
            "not an ISO 8601",
            "line 2",
        ),
        "times not increasing": (
            csv_case(rows=[f"A,57,-25,3000,{T2}", f"B,57,-24,3000,{T1}"]),
            "not after",
            "line 3",
        ),
        "time without zone": (
            csv_case(rows=["A,57,-25,3000,2027-01-14T09:00", f"B,57,-24,3000,{T2}"]),
            "no time zone",
            "line 2",
        ),
        "empty": (csv_case(text=""), "empty", ""),
    },
    "gpx": {
        "malformed": (
            gpx_case(text=GPX_HEAD + "<rte><rtept lat='1' lon='2'></rte>"),
            "malformed XML",
            "line 3",
        ),
        "wrong geometry": (
            gpx_case(text=GPX_HEAD + '<wpt lat="57" lon="-25"/></gpx>'),
            "no rte or trk (only wpt",
            "",
        ),
        "one waypoint": (
            gpx_case(points=[rtept(57, -25, "900", T1)]),
            "single waypoint",
            "rtept 1",
        ),
        "latitude": (gpx_case(points=[rtept(91, -25), rtept(57, -24)]), "latitude 91", "rtept 1"),
        "longitude": (
            gpx_case(points=[rtept(57, -25), rtept(57, 200)]),
            "longitude 200",
            "rtept 2",
        ),
        "missing altitude": (
            gpx_case(points=[rtept(57, -25, None), rtept(57, -24)]),
            "missing altitude",
            "rtept 1",
        ),
        "time not ISO": (
            gpx_case(points=[rtept(57, -25, "9", "soon"), rtept(57, -24)]),
            "not an ISO 8601",
            "rtept 1",
        ),
        "times not increasing": (
            gpx_case(points=[rtept(57, -25, "9", T2), rtept(57, -24, "9", T1)]),
            "not after",
            "rtept 2",
        ),
        "time without zone": (
            gpx_case(points=[rtept(57, -25, "9", "2027-01-14T09:00:00"), rtept(57, -24, "9", T2)]),
            "no time zone",
            "rtept 1",
        ),
        "empty": (gpx_case(text=""), "empty", ""),
    },
}
SUFFIX = {"geojson": ".geojson", "csv": ".csv", "gpx": ".gpx"}
CASES = [(fmt, case) for fmt in BAD for case in BAD[fmt]]


@pytest.mark.parametrize(("fmt", "case"), CASES, ids=[f"{f}-{c}" for f, c in CASES])
def test_bad_input_gives_one_line_naming_file_place_and_fix(tmp_path, fmt, case, write_text):
    text, message, place = BAD[fmt][case]
    path = write_text(tmp_path, "bad" + SUFFIX[fmt], text)
    with pytest.raises(RouteError) as info:
        load_routes(path)
    line = str(info.value)
    assert "\n" not in line
    assert line.startswith(str(path))
    assert message in line
    assert place in (info.value.where or "")
    assert info.value.fix and "(fix: " in line


@pytest.mark.parametrize("suffix", [".geojson", ".csv", ".gpx", ".route"])
def test_missing_file(tmp_path, suffix):
    with pytest.raises(RouteError, match="file not found.*check the path"):
        load_routes(tmp_path / f"nowhere{suffix}")


def test_unknown_extension_with_unrecognisable_content(tmp_path, write_text):
    with pytest.raises(RouteError, match="unknown extension '.route'"):
        load_routes(write_text(tmp_path, "x.route", "just some words\n"))
    with pytest.raises(RouteError, match="not a UTF-8"):
        p = tmp_path / "x.bin"
        p.write_bytes(b"\x81\xff garbage")
        load_routes(p)
    with pytest.raises(RouteError, match="directory"):
        load_routes(tmp_path)


def test_content_wins_over_a_wrong_extension(tmp_path, write_text):
    text = json.dumps(line_feature([[-25, 57, 1000], [-24, 57, 1000]]))
    assert len(load_route(write_text(tmp_path, "mislabelled.csv", text)).waypoints) == 2


@pytest.mark.parametrize(
    "obj, message",
    [
        ([1, 2], "not a GeoJSON object"),
        ({"type": "FeatureCollection", "features": []}, "no features"),
        (
            {
                "type": "FeatureCollection",
                "features": [
                    line_feature([[-25, 57, 1], [-24, 57, 1]]),
                    point_feature(-25, 57, 1),
                ],
            },
            "mixes",
        ),
        ({"type": "FeatureCollection", "features": [{"type": "Point"}]}, "not a GeoJSON Feature"),
        ({"type": "Feature", "geometry": None, "properties": {}}, "no geometry"),
        (line_feature([[-25, 57, 1], ["a", 57, 1]]), r"is not \[lon, lat"),
        (line_feature([[-25, 57, 1], [-24, 57, 1]], times=[T1]), "1 entries for 2"),
        (line_feature([[-25, 57, 1], [-24, 57, 1]], hold_min=5), "is not a list"),
        (line_feature([[-25, 57, 1], [-24, 57, 1]], altitude_reference="qnh"), "'qnh' is not one"),
        (line_feature([[-25, 57], [-24, 57]], altitude_ft=100, flight_level=10), "both"),
        (line_feature([[-25, 57], [-24, 57]], flight_level=10000), "flight_level 10000"),
        (line_feature([[-25, 57, -2000], [-24, 57, 1]]), "below"),
        (
            line_feature([[-25, 57, 1], [-24, 57, 1]], departure_time="2027-01-14 09:00"),
            "no time zone",
        ),
        (
            line_feature([[-25, 57, 1], [-24, 57, 1]], times=[T1, None], departure_time=T2),
            "differs",
        ),
        (
            {
                "type": "FeatureCollection",
                "features": [
                    point_feature(-25, 57, flight_level=90),
                    point_feature(-24, 57, altitude_ft=9000),
                ],
            },
            "one altitude reference",
        ),
        ({"type": "GeometryCollection", "geometries": []}, "'GeometryCollection' is not a route"),
    ],
)
def test_more_geojson_mistakes(tmp_path, obj, message):
    with pytest.raises(RouteError, match=message) as info:
        load_routes(dump(tmp_path, obj))
    assert "\n" not in str(info.value)


@pytest.mark.parametrize(
    "text, message",
    [
        ("name,lat,lon\nA,57,-25\nB,57,-24\n", "no altitude_ft or flight_level column"),
        ("name,lat,lon,altitude_ft\n", "no waypoint rows"),
        ("# only a comment\n\n", "no header"),
        ("name,lat,lon,altitude_ft\nA,57,-25,100,extra\nB,57,-24,100\n", "5 fields for 4"),
        ("name,lat,lon,altitude_ft\nA,north,-25,100\nB,57,-24,100\n", "latitude 'north'"),
        ("name,lat,lon,altitude_ft,flight_level\nA,57,-25,100,10\nB,57,-24,100,\n", "both"),
        ("name,lat,lon,altitude_ft,hold_min\nA,57,-25,100,-1\nB,57,-24,100,\n", "hold_min -1"),
        ("name,lat,lon,lat,altitude_ft\nA,57,-25,57,100\n", "unique column names"),
    ],
)
def test_more_csv_mistakes(tmp_path, text, message, write_text):
    with pytest.raises(RouteError, match=message) as info:
        load_routes(write_text(tmp_path, "bad.csv", text))
    assert "\n" not in str(info.value)


@pytest.mark.parametrize(
    "text, message",
    [
        ('<?xml version="1.0"?><kml xmlns="http://www.opengis.net/kml/2.2"/>', "<kml> is not GPX"),
        ('<?xml version="1.0"?><!DOCTYPE gpx [<!ENTITY a "b">]><gpx/>', "DOCTYPE"),
        (gpx("<rte></rte>"), "no waypoints"),
        (gpx("<rte>" + rtept(57, -25, "abc") + rtept(57, -24) + "</rte>"), "altitude 'abc'"),
        (
            gpx(
                "<rte><extensions><icing:altitude_reference>feet</icing:altitude_reference>"
                "</extensions>" + rtept(57, -25) + rtept(57, -24) + "</rte>"
            ),
            "'feet' is not one",
        ),
        (
            gpx(
                "<rte>"
                + rtept(57, -25, ext="<icing:hold_min>x</icing:hold_min>")
                + rtept(57, -24)
                + "</rte>"
            ),
            "hold_min 'x'",
        ),
        (
            gpx('<rte><rtept lon="-25"><ele>1</ele></rtept>' + rtept(57, -24) + "</rte>"),
            "latitude None",
        ),
    ],
)
def test_more_gpx_mistakes(tmp_path, text, message, write_text):
    with pytest.raises(RouteError, match=message) as info:
        load_routes(write_text(tmp_path, "bad.gpx", text))
    assert "\n" not in str(info.value)
