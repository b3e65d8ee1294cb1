"""Property-based tests: readers and sampling raise only InputError; physics invariants hold.

Every route reader (GeoJSON, CSV, GPX through ``load_routes``), route sampling, and the
profile JSON and CSV forecast readers (through ``load_forecast``) are given generated
documents, most of them broken on purpose; whatever they are given, they return a
result or raise :class:`icing.errors.InputError` (one line naming the file), never
anything else. Each property runs a bounded number of examples (a few seconds each).

The physics invariants (``icing.calc``): 0 <= E <= 1; LWC >= 0; no liquid below the
homogeneous freezing of cloud drops (-38 C, Pruppacher & Klett 1997; DESIGN "about
-40 C"); severity never falls when only the LWC rises (the catch grows with the LWC at
fixed drops, speed and temperature: Messinger 1953's catch term is linear in LWC).
"""

import json
import math
import tempfile
import warnings
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, event, given, settings
from hypothesis import strategies as st

from icing.errors import InputError, PlausibilityWarning
from icing.route import Route, Waypoint, load_routes, sample_route
from icing.route.sampling import MAX_SAMPLES

FAST = settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
SLOW = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
WORK = Path(tempfile.mkdtemp(prefix="icing-hostile-"))

# --------------------------------------------------------------------------- values

numbers = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False),
    st.floats(-200, 200),
    st.integers(-(10**6), 10**6),
    st.sampled_from([0, -0.0, 1e-300, 1e300, 5e-324, 90.0000001, -180.0000001, 10**25]),
)
scalars = st.one_of(
    st.none(),
    st.booleans(),
    numbers,
    st.text(max_size=12),
    st.sampled_from(["NaN", "inf", "2027-01-14T09:00:00Z", "2027-01-14T09:00:00", "agl"]),
)
json_values = st.recursive(
    scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=8), inner, max_size=4)
    ),
    max_leaves=12,
)


def _write(name, data):
    path = WORK / name
    path.write_bytes(data if isinstance(data, bytes) else data.encode("utf-8", "surrogatepass"))
    return path


def _only_input_errors(call):
    """Run ``call``; an InputError must be one line naming the file. Return its result."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PlausibilityWarning)
        try:
            out = call()
        except InputError as err:
            assert "\n" not in err.one_line()
            event("refused")
            return err
    event("accepted")
    return out


def mostly(good, bad):
    """Three good values for one bad: deep paths are reached, and edges are still hit."""
    return st.integers(0, 3).flatmap(lambda i: bad if i == 3 else good)


def _nodes(obj, path=()):
    yield path
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _nodes(v, path + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _nodes(v, path + (i,))


def corrupt(draw, doc):
    """Return ``doc`` whole, or with one node (or key) replaced by a hostile value.

    A valid document with at most one fault reaches every check behind the first.
    """
    if draw(st.booleans()):
        return doc
    nodes = list(_nodes(doc))
    path = nodes[draw(st.integers(0, len(nodes) - 1))]
    value = draw(json_values)
    if not path:
        return value
    parent = doc
    for key in path[:-1]:
        parent = parent[key]
    if isinstance(parent, dict) and draw(st.integers(0, 4)) == 0:
        parent.pop(path[-1])  # a missing member
    else:
        parent[path[-1]] = value
    return doc


good_position = st.tuples(st.floats(56.0, 58.0), st.floats(-26.0, -23.0), st.floats(0, 6000)).map(
    lambda t: [t[1], t[0], t[2]]
)


@st.composite
def geojson_routes(draw):
    props = {
        "name": draw(st.text(max_size=10)),
        "departure_time": draw(
            st.sampled_from(["2027-01-14T09:00:00Z", "2027-01-14T12:00+05:30"])
        ),
        "true_airspeed_kt": draw(st.floats(1.0, 700.0)),
        "altitude_reference": draw(st.sampled_from(["msl", "agl", "pressure"])),
    }
    for key, value in (
        ("ground_elevation_m", st.floats(-400, 4000)),
        ("airframe", st.sampled_from(["light-piston", "x.toml"])),
        ("hold_min", st.floats(0, 60)),
        ("tas_kt", st.floats(0, 700.0)),
    ):
        if draw(st.booleans()):
            props[key] = draw(value)
    coords = draw(st.lists(good_position, min_size=1, max_size=5))
    wrap = draw(st.sampled_from(["feature", "collection", "points", "multi", "bare"]))
    line = {"type": "LineString", "coordinates": coords}
    feature = {"type": "Feature", "properties": props, "geometry": line}
    if wrap == "multi":
        line["type"], line["coordinates"] = "MultiLineString", [coords, coords[-1:] + coords[:1]]
    if wrap == "collection":
        doc = {"type": "FeatureCollection", "features": [feature, json.loads(json.dumps(feature))]}
    elif wrap == "points":
        pts = [
            {
                "type": "Feature",
                "properties": {"name": f"P{i}"},
                "geometry": {"type": "Point", "coordinates": c},
            }
            for i, c in enumerate(coords)
        ]
        doc = {"type": "FeatureCollection", "properties": props, "features": pts}
    else:
        doc = line if wrap == "bare" else feature
    return corrupt(draw, doc)


@FAST
@given(geojson_routes(), st.booleans())
def test_geojson_reader_raises_only_input_errors(doc, with_nan):
    text = json.dumps(doc, allow_nan=True)
    if with_nan:
        text = text.replace("0.5", "NaN", 1)
    path = _write("r.geojson", text)
    out = _only_input_errors(lambda: load_routes(path))
    if isinstance(out, InputError):
        assert str(path) in out.one_line()


cells = st.one_of(
    st.sampled_from(["", "57", "-24.5", "3000", "nan", "inf", "1e999", "agl", "pressure"]),
    st.sampled_from(["2027-01-14T09:00:00Z", "2027-01-14T09:30:00Z", "99999999", '"', "a,b"]),
    st.text(max_size=6),
    numbers.map(str),
)
CSV_EXTRA = ["altitude_reference", "tas_kt", "hold_min", "route", "flight_level", "bogus"]


@st.composite
def csv_routes(draw):
    header = ["name", "lat", "lon", "altitude_ft"] + draw(
        st.lists(st.sampled_from(CSV_EXTRA), max_size=2, unique=True)
    )
    rows = []
    for i in range(draw(st.integers(1, 5))):
        row = [f"W{i}", str(draw(st.floats(56, 58))), str(draw(st.floats(-26, -23)))]
        row.append(str(draw(st.floats(0, 20000))))
        row += [draw(st.sampled_from(["", "msl", "12", "0", "a"])) for _ in header[4:]]
        rows.append(row)
    comments = draw(
        st.lists(
            st.sampled_from(["# departure_time: 2027-01-14T09:00:00Z", "# prose", "# foo: 1"])
        )
    )
    table = [header] + rows
    if not draw(st.booleans()):  # one fault: a cell, or a header name
        r = draw(st.integers(0, len(table) - 1))
        c = draw(st.integers(0, len(table[r]) - 1))
        table[r][c] = draw(cells)
    return "\n".join(comments + [",".join(row) for row in table])


@FAST
@given(csv_routes())
def test_csv_reader_raises_only_input_errors(text):
    path = _write("r.csv", text)
    out = _only_input_errors(lambda: load_routes(path, altitude_ft=None))
    if isinstance(out, InputError):
        assert str(path) in out.one_line()


FAULTS = [
    '<!DOCTYPE gpx [<!ENTITY a "b">]>',
    '<!DOCTYPE gpx SYSTEM "http://example.invalid/x.dtd">',
    "&a;",
    '"',
    "<",
    "<![CDATA[x]]>",
    "<!-- " + "x" * 5000 + " -->",
]


@st.composite
def gpx_documents(draw):
    points = []
    for i in range(draw(st.integers(1, 4))):
        lat, lon, ele = (
            draw(st.floats(56, 58)),
            draw(st.floats(-26, -23)),
            draw(st.floats(0, 5000)),
        )
        time = f"<time>2027-01-14T09:{10 + 5 * i}:00Z</time>" if draw(st.booleans()) else ""
        points.append(f'<rtept lat="{lat}" lon="{lon}"><ele>{ele}</ele>{time}</rtept>')
    tag = draw(st.sampled_from(["rte", "trk"]))
    body = "".join(points)
    if tag == "trk":
        body = "<trkseg>" + body.replace("rtept", "trkpt") + "</trkseg>"
    ns = "http://www.topografix.com/GPX/1/1"
    doc = f'<gpx xmlns="{ns}" version="1.1"><{tag}>{body}</{tag}></gpx>'
    fault = draw(st.integers(0, 3))
    at = draw(st.integers(0, len(doc)))
    if fault == 1:  # a construct inserted anywhere (a DOCTYPE behind a long comment too)
        doc = doc[:at] + draw(st.sampled_from(FAULTS)) + doc[at:]
    elif fault == 2:  # a value replaced
        doc = doc.replace(str(draw(st.floats(56, 58))), draw(cells), 1)
        doc = doc.replace("<ele>", "<ele>" + draw(cells), 1)
    elif fault == 3:  # cut short
        doc = doc[:at]
    return doc


@FAST
@given(gpx_documents())
def test_gpx_reader_raises_only_input_errors(doc):
    path = _write("r.gpx", doc)
    out = _only_input_errors(lambda: load_routes(path))
    if "<!DOCTYPE" in doc or "&a;" in doc:
        assert isinstance(out, InputError)  # wherever a DTD or an entity is, it is refused


# --------------------------------------------------------------------------- sampling

T0 = datetime(2027, 1, 14, 9, tzinfo=UTC)
waypoints = st.tuples(
    mostly(st.floats(56.0, 58.0), st.floats(-89, 89)),
    mostly(st.floats(-26.0, -23.0), st.floats(-180, 180)),
    st.floats(0, 15000),
    st.sampled_from([0.0, 0.0, 0.0, 3.0]),
    st.one_of(st.none(), st.floats(0.0, 700.0)),
    mostly(st.none(), st.integers(1, 600)),
)


@SLOW
@given(
    st.lists(waypoints, min_size=2, max_size=5),
    mostly(
        st.one_of(st.none(), st.floats(1.0, 700.0)),
        st.one_of(st.floats(0.0, 1e4), st.sampled_from([1e-300, 1e9, math.nan])),
    ),
    st.sampled_from([0.005, 0.01, 1.0, 1.0, 1.0, 25.0, 1e6]),
    st.sampled_from(["msl", "agl", "pressure"]),
)
def test_sampling_raises_only_input_errors_and_keeps_its_invariants(points, tas, step, ref):
    wps = []
    elapsed = 0
    for i, (la, lo, z, hold, wtas, minutes) in enumerate(points):
        elapsed += 60 + (minutes or 0)  # increasing times, a leg of an hour or more
        when = None if minutes is None else T0 + timedelta(minutes=elapsed)
        wps.append(Waypoint(f"W{i}", la, lo, abs(z) if ref == "agl" else z, ref, when, hold, wtas))
    dep = None if wps[0].time is not None else T0
    route = Route("prop", wps, departure_time=dep, true_airspeed_kt=120.0, ground_elevation_m=0.0)
    s = _only_input_errors(lambda: sample_route(route, tas_kt=tas, step_km=step))
    if isinstance(s, InputError):
        return
    assert 1 <= len(s) <= MAX_SAMPLES
    assert np.all(np.abs(s.lat) <= 90) and np.all((s.lon >= -180) & (s.lon < 180))
    assert np.all(np.diff(s.time.astype(np.int64)) >= 0)  # time never runs backwards
    assert np.all(s.dt_s >= 0) and np.all(np.isfinite(s.dt_s))
    flight = (s.time[-1] - s.time[0]).astype(np.int64) / 1000.0
    # each instant belongs to one sample: the shares add up to the flight time
    # (to the millisecond rounding of the times)
    assert s.dt_s.sum() == pytest.approx(flight, abs=1e-3 * len(s) + 1e-6)


# --------------------------------------------------------------------------- profiles


@st.composite
def profile_documents(draw):
    n = draw(st.integers(2, 6))
    p = sorted(draw(st.lists(st.floats(150, 1050), min_size=n, max_size=n, unique=True)))[::-1]
    # temperatures of the standard atmosphere at those pressures, give or take 15 K
    t = [15.0 - 6.5 * 44.3308 * (1 - (x / 1013.25) ** 0.190263) for x in p]
    t = [v + draw(st.floats(-15, 15)) for v in t]
    levels = {
        "pressure_hpa": p,
        "temperature_c": t,
        "relative_humidity_pct": draw(st.lists(st.floats(0, 105), min_size=n, max_size=n)),
    }
    if draw(st.booleans()):
        levels["cloud_liquid_g_kg"] = draw(st.lists(st.floats(0, 1), min_size=n, max_size=n))
    profile = {
        "id": draw(st.text(max_size=4)),
        "lat": draw(st.floats(56.0, 58.0)),
        "lon": draw(st.floats(-26.0, -23.0)),
        "valid_time": "2027-01-14T06:00:00Z",
        "levels": levels,
    }
    if draw(st.booleans()):
        profile["surface_elevation_m"] = draw(st.floats(0, 1000))
    doc = {"format": "icing-profiles", "version": 1, "profiles": [profile]}
    return corrupt(draw, doc)


def _load_and_read(path):
    from icing.forecast import load_forecast

    forecast = load_forecast([path])
    lat, lon = np.array([57.0, -90.0]), np.array([-24.5, 180.0])
    t = np.array(["2027-01-14T06:00", "NaT"], dtype="datetime64[ms]")
    return forecast.columns_at(lat, lon, t)


@SLOW
@given(profile_documents())
def test_profile_json_reader_raises_only_input_errors(doc):
    path = _write("p.json", json.dumps(doc, allow_nan=True))
    _only_input_errors(lambda: _load_and_read(path))


@SLOW
@given(profile_documents())
def test_profile_csv_reader_raises_only_input_errors(doc):
    profiles = doc.get("profiles") if isinstance(doc, dict) else None
    assume(isinstance(profiles, list) and profiles and isinstance(profiles[0], dict))
    prof = profiles[0]
    levels = prof.get("levels") if isinstance(prof.get("levels"), dict) else {}
    keys = [k for k, v in levels.items() if isinstance(v, list)]
    n = max((len(levels[k]) for k in keys), default=0)
    head = ["id", "lat", "lon", "valid_time"] + keys
    rows = [",".join(head)]
    for k in range(n):
        cells_ = [str(prof.get(c, "")) for c in head[:4]]
        cells_ += [
            "" if k >= len(levels[c]) or levels[c][k] is None else str(levels[c][k]) for c in keys
        ]
        rows.append(",".join(cells_))
    path = _write("p.csv", "\n".join(rows) + "\n")
    _only_input_errors(lambda: _load_and_read(path))


# --------------------------------------------------------------------------- physics


@FAST
@given(
    st.floats(1e-6, 2e-3),  # drop diameter [m]: cloud drops to drizzle
    st.floats(5e-4, 1.0),  # cylinder diameter [m]: wires to wing leading edges
    st.floats(0.0, 250.0),  # airspeed [m/s]
    st.floats(20000.0, 105000.0),  # pressure [Pa]
    st.floats(230.0, 285.0),  # temperature [K]
)
def test_collision_efficiency_is_a_fraction(d, big_d, v, p, t):
    from icing.calc import cylinder_collision_efficiency

    e = float(cylinder_collision_efficiency(d, big_d, v, pressure=p, temperature=t))
    assert math.isnan(e) or 0.0 <= e <= 1.0  # NaN only outside a fit's stated range


@SLOW
@given(
    st.floats(-60.0, 10.0),  # surface temperature [C]
    st.floats(0.0, 9.0),  # lapse rate [K/km]
    st.floats(0.3, 1.02),  # relative humidity [fraction], uniform through the column
    st.floats(0.0, 2.0),  # cloud liquid in the model [g/kg]
)
def test_liquid_is_never_negative_nor_below_homogeneous_freezing(t_sfc, lapse, rh, ql):
    from icing.calc import diagnose_columns
    from icing.calc.thermo import standard_atmosphere_height

    p = np.linspace(100000.0, 30000.0, 25)
    z = standard_atmosphere_height(p)
    t = t_sfc + 273.15 - lapse * z / 1000.0
    d = diagnose_columns(
        p,
        t,
        relative_humidity=np.full(p.size, rh),
        height=z,
        cloud_liquid=np.full(p.size, ql * 1e-3),
    )
    lwc = np.asarray(d.lwc)
    assert np.all(lwc[np.isfinite(lwc)] >= 0.0)
    cold = np.asarray(d.temperature) < 235.15  # -38 C: homogeneous freezing of cloud drops
    assert np.all(np.nan_to_num(lwc[cold]) == 0.0)


@SLOW
@given(
    st.sampled_from(["light-piston", "twin-turboprop", "regional-jet", "small-multirotor"]),
    st.floats(1e-5, 3e-3),  # LWC [kg/m3]
    st.floats(1.0, 4.0),  # ratio of the larger LWC
    st.floats(8e-6, 50e-6),  # MVD [m]
    st.floats(245.0, 272.0),  # temperature [K]
)
def test_severity_never_falls_when_only_the_liquid_rises(name, lwc, ratio, mvd, t):
    from icing.airframes import load_airframe
    from icing.calc import airframe_icing

    af = load_airframe(name)
    lwcs = np.array([lwc, lwc * ratio])
    res = airframe_icing(af, lwc=lwcs, mvd=mvd, temperature=t, pressure=70000.0)
    sev = np.asarray(res.severity)
    assert sev[1] >= sev[0]
