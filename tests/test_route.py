"""Sampling along a route: geodesics, steps, times, holds, wind, antimeridian.

Geodesic distances are checked against ``pyproj.Geod`` (reference library,
WGS 84, Karney's algorithm) computed independently of the sampler; times
against closed-form distance / speed. Routes are invented (tests/common.py).
"""

from __future__ import annotations

from dataclasses import replace
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pyproj import Geod

from icing.calc.thermo import standard_atmosphere_pressure
from icing.constants import FT, KT
from icing.errors import PlausibilityWarning, RouteError
from icing.route import GROUND_SPEED_FLOOR, Route, RouteSamples, Waypoint, sample_route

GEOD = Geod(ellps="WGS84")


def seconds(samples):
    """Sample times as float seconds after the first sample."""
    return (samples.time - samples.time[0]).astype("timedelta64[ms]").astype(float) / 1000.0


def geod_length(route):
    lat = [w.lat for w in route.waypoints]
    lon = [w.lon for w in route.waypoints]
    return GEOD.line_length(lon, lat)


# --------------------------------------------------------------------------- geometry


def test_straight_route_distance_matches_pyproj(canonical_routes):
    s = sample_route(canonical_routes.STRAIGHT_ROUTE)
    # reference library: pyproj Geod (Karney 2013), 1 mm: floating-point sum of parts
    assert s.distance_m[-1] == pytest.approx(
        geod_length(canonical_routes.STRAIGHT_ROUTE), abs=1e-3
    )
    assert s.waypoint_distance_m.tolist() == pytest.approx([0.0, s.distance_m[-1]])
    assert np.all(np.diff(s.distance_m) > 0)
    # every sample lies on the geodesic: distance from the start equals distance_m
    _, _, d = GEOD.inv(np.full(len(s), -25.0), np.full(len(s), 57.0), s.lon, s.lat)
    assert d == pytest.approx(s.distance_m, abs=1e-3)  # mm: geodesic round trip


def test_step_km_bounds_spacing(canonical_routes):
    s = sample_route(canonical_routes.STRAIGHT_ROUTE, step_km=1.0)
    assert np.diff(s.distance_m).max() <= 1000.0 + 1e-6
    assert len(s) == int(np.ceil(s.distance_m[-1] / 1000.0)) + 1
    coarse = sample_route(canonical_routes.STRAIGHT_ROUTE, step_km=10.0, max_step_s=1e6)
    assert np.diff(coarse.distance_m).max() <= 10_000.0 + 1e-6
    assert len(coarse) == 12  # 100.3 km in 11 parts


def test_time_step_bounds_spacing_for_a_slow_drone(canonical_routes):
    slow = replace(canonical_routes.STRAIGHT_ROUTE, true_airspeed_kt=30.0)  # ~15 m/s: 20 s ~ 309 m
    s = sample_route(slow, step_km=1.0, max_step_s=20.0)
    assert np.diff(seconds(s)).max() <= 20.0 + 1e-3  # ms rounding of times
    assert np.diff(s.distance_m).max() < 1000.0


def test_altitude_step_bounds_spacing_and_is_linear_in_distance(canonical_routes):
    climb = Route(
        "climb",
        [Waypoint("KARVO", 57.0, -25.0, 1000 * FT), Waypoint("PENTU", 57.0, -24.7, 9000 * FT)],
        departure_time=canonical_routes.DEPARTURE,
        true_airspeed_kt=150.0,
    )
    s = sample_route(climb, step_km=50.0, max_step_s=1e6, max_step_ft=100.0)
    assert np.abs(np.diff(s.altitude_m)).max() <= 100 * FT + 1e-9
    assert len(s) == 81  # 8,000 ft in 100 ft steps
    expected = 1000 * FT + 8000 * FT * s.distance_m / s.distance_m[-1]
    assert s.altitude_m == pytest.approx(expected, abs=1e-6)


def test_a_1000_km_route_gives_about_1000_samples(canonical_routes):
    long = Route(
        "long",
        [Waypoint("KARVO", 57.0, -30.0, 3000.0), Waypoint("PENTU", 57.0, -13.5, 3000.0)],
        departure_time=canonical_routes.DEPARTURE,
        true_airspeed_kt=250.0,
    )
    s = sample_route(long)
    assert 995 <= len(s) <= 1010


def test_antimeridian_crossing_stays_on_the_short_geodesic(canonical_routes):
    s = sample_route(canonical_routes.ANTIMERIDIAN_ROUTE)
    assert np.all((s.lon >= -180.0) & (s.lon < 180.0))
    assert np.all(np.abs(s.lon) > 178.9)  # never wraps the long way round
    # reference library: pyproj Geod, the short way across 180 degrees
    _, _, d = GEOD.inv(-179.0, 52.0, 179.0, 52.0)
    assert s.distance_m[-1] == pytest.approx(d, abs=1e-3)
    assert d == pytest.approx(137e3, rel=0.01)  # 2 deg x 111.3 km x cos 52, 1 %: sphere


def test_longitude_180_is_normalised(canonical_routes):
    r = Route(
        "east",
        [Waypoint("VEKTU", 10.0, 179.5, 3000.0), Waypoint("SOLRI", 10.0, 180.0, 3000.0)],
        departure_time=canonical_routes.DEPARTURE,
        true_airspeed_kt=200.0,
    )
    s = sample_route(r)
    assert s.lon[-1] == -180.0
    assert np.all((s.lon >= -180.0) & (s.lon < 180.0))


# --------------------------------------------------------------------------- times


def test_times_from_departure_and_tas(canonical_routes):
    s = sample_route(canonical_routes.STRAIGHT_ROUTE)
    assert s.time.dtype == np.dtype("datetime64[ms]")
    assert s.time[0] == np.datetime64("2027-01-14T09:00:00.000")
    flight = s.distance_m[-1] / (200.0 * KT)
    assert seconds(s)[-1] == pytest.approx(flight, abs=1e-3)  # ms rounding of times
    assert s.dt_s.sum() == pytest.approx(flight, abs=1e-3)
    assert s.tas == pytest.approx(200.0 * KT)
    assert np.all(np.diff(seconds(s)) > 0)


def test_dt_s_counts_each_instant_once(canonical_routes):
    s = sample_route(canonical_routes.STRAIGHT_ROUTE)
    t = seconds(s)
    assert s.dt_s[0] == pytest.approx(0.5 * (t[1] - t[0]), abs=1e-3)
    assert s.dt_s[1:-1] == pytest.approx(0.5 * (t[2:] - t[:-2]), abs=1e-3)
    assert s.dt_s.sum() == pytest.approx(t[-1] - t[0], abs=1e-3)


def test_tas_argument_overrides_the_route(canonical_routes):
    s = sample_route(canonical_routes.STRAIGHT_ROUTE, tas_kt=100.0)
    assert s.dt_s.sum() == pytest.approx(s.distance_m[-1] / (100.0 * KT), rel=1e-9)
    assert s.tas == pytest.approx(100.0 * KT)


def test_per_waypoint_tas_beats_the_route_speed(canonical_routes):
    wps = list(canonical_routes.STRAIGHT_ROUTE.waypoints)
    wps[0] = replace(wps[0], tas_kt=100.0)
    s = sample_route(replace(canonical_routes.STRAIGHT_ROUTE, waypoints=wps))
    assert s.tas == pytest.approx(100.0 * KT)


def test_default_tas_only_where_nothing_else_is_given(canonical_routes):
    bare = replace(canonical_routes.STRAIGHT_ROUTE, true_airspeed_kt=None)
    assert sample_route(bare, default_tas_kt=120.0).tas == pytest.approx(120.0 * KT)
    assert sample_route(
        canonical_routes.STRAIGHT_ROUTE, default_tas_kt=120.0
    ).tas == pytest.approx(200.0 * KT)


def test_no_airspeed_is_an_error_naming_the_fix(canonical_routes):
    bare = replace(canonical_routes.STRAIGHT_ROUTE, true_airspeed_kt=None)
    with pytest.raises(RouteError, match="--tas-kt"):
        sample_route(bare)


def test_no_time_at_all_is_an_error_naming_the_fix(canonical_routes):
    untimed = replace(canonical_routes.STRAIGHT_ROUTE, departure_time=None)
    with pytest.raises(RouteError, match="--depart"):
        sample_route(untimed)
    s = sample_route(untimed, departure="2027-01-14T10:00:00Z")
    assert s.time[0] == np.datetime64("2027-01-14T10:00:00.000")


def test_departure_argument_overrides_and_shifts_waypoint_times(canonical_routes):
    t0 = canonical_routes.DEPARTURE
    r = Route(
        "timed",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0, time=t0),
            Waypoint("LEMBA", 57.0, -24.0, 2500.0, time=t0 + timedelta(minutes=10)),
            Waypoint("PENTU", 57.0, -23.0, 2500.0, time=t0 + timedelta(minutes=30)),
        ],
    )
    base = sample_route(r)
    shifted = sample_route(r, departure=datetime(2027, 1, 14, 12, 0, tzinfo=UTC))
    assert shifted.time[0] == np.datetime64("2027-01-14T12:00:00.000")
    assert np.all(shifted.time - base.time == np.timedelta64(3, "h"))
    naive = datetime(2027, 1, 14, 12, 0)
    with pytest.raises(RouteError, match="no time zone"):
        sample_route(r, departure=naive)
    with pytest.raises(RouteError, match="not an ISO 8601"):
        sample_route(r, departure="noon")


def test_waypoint_times_interpolate_linearly_in_distance(canonical_routes):
    t0 = canonical_routes.DEPARTURE
    r = Route(
        "timed",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0, time=t0),
            Waypoint("LEMBA", 57.0, -24.0, 2500.0),
            Waypoint("PENTU", 57.0, -23.0, 2500.0, time=t0 + timedelta(hours=1)),
        ],
    )
    s = sample_route(r)
    frac = s.distance_m / s.distance_m[-1]
    assert seconds(s) == pytest.approx(3600.0 * frac, abs=1e-3)  # ms rounding
    # no airspeed given: the speed implied by the times
    assert s.tas == pytest.approx(s.distance_m[-1] / 3600.0, rel=1e-9)
    assert np.diff(seconds(s)).max() <= 20.0 + 1e-3


def test_times_before_the_first_timed_waypoint_use_the_airspeed(canonical_routes):
    t1 = canonical_routes.DEPARTURE + timedelta(hours=1)
    r = Route(
        "late",
        [Waypoint("KARVO", 57.0, -25.0, 2500.0), Waypoint("PENTU", 57.0, -24.0, 2500.0, time=t1)],
        true_airspeed_kt=200.0,
    )
    s = sample_route(r)
    assert s.time[-1] == np.datetime64("2027-01-14T10:00:00.000")
    assert s.dt_s.sum() == pytest.approx(s.distance_m[-1] / (200.0 * KT), abs=1e-3)


def test_times_that_do_not_increase_are_refused(canonical_routes):
    t0 = canonical_routes.DEPARTURE
    r = Route(
        "back",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0, time=t0),
            Waypoint("PENTU", 57.0, -24.0, 2500.0, time=t0),
        ],
    )
    with pytest.raises(RouteError, match="not after"):
        sample_route(r)


def test_naive_waypoint_time_is_refused():
    r = Route(
        "naive",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0, time=datetime(2027, 1, 14, 9)),
            Waypoint("PENTU", 57.0, -24.0, 2500.0),
        ],
        true_airspeed_kt=100.0,
    )
    with pytest.raises(RouteError, match="no time zone"):
        sample_route(r)


def test_departure_time_disagreeing_with_first_waypoint_is_refused(canonical_routes):
    r = Route(
        "two-starts",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0, time=canonical_routes.DEPARTURE),
            Waypoint("PENTU", 57.0, -24.0, 2500.0),
        ],
        departure_time=canonical_routes.DEPARTURE + timedelta(minutes=5),
        true_airspeed_kt=100.0,
    )
    with pytest.raises(RouteError, match="differs"):
        sample_route(r)


# --------------------------------------------------------------------------- holds


def test_single_point_hover_spreads_samples_over_the_hold(canonical_routes):
    s = sample_route(canonical_routes.SINGLE_POINT_ROUTE)
    assert s.hold.all()
    assert s.dt_s.sum() == pytest.approx(600.0)
    assert np.diff(seconds(s)).max() <= 20.0 + 1e-3
    assert np.all(s.distance_m == 0.0)
    assert set(s.from_waypoint) == set(s.to_waypoint) == {"HOVRA"}
    assert s.altitude_reference == "agl" and s.ground_elevation_m == 0.0


def test_hold_inside_a_route_adds_its_time_at_the_waypoint(canonical_routes):
    wps = [
        Waypoint("KARVO", 57.0, -25.0, 2500.0),
        Waypoint("LEMBA", 57.0, -24.0, 2500.0, hold_min=5.0),
        Waypoint("PENTU", 57.0, -23.0, 2500.0),
    ]
    r = Route("hold", wps, departure_time=canonical_routes.DEPARTURE, true_airspeed_kt=200.0)
    s = sample_route(r)
    flight = s.distance_m[-1] / (200.0 * KT)
    assert s.dt_s.sum() == pytest.approx(flight + 300.0, abs=1e-3)
    held = s.hold
    assert np.all(s.distance_m[held] == pytest.approx(s.waypoint_distance_m[1]))
    assert np.all(s.from_waypoint[held] == "LEMBA") and np.all(s.to_waypoint[held] == "LEMBA")
    t = seconds(s)[held]
    assert t[-1] - t[0] == pytest.approx(300.0, abs=1e-3)
    assert np.diff(t).max() <= 20.0 + 1e-3


def test_timed_hold_leaves_its_time_out_of_the_moving_part(canonical_routes):
    t0 = canonical_routes.DEPARTURE
    wps = [
        Waypoint("KARVO", 57.0, -25.0, 2500.0, time=t0),
        Waypoint("LEMBA", 57.0, -24.0, 2500.0, hold_min=10.0),
        Waypoint("PENTU", 57.0, -23.0, 2500.0, time=t0 + timedelta(minutes=40)),
    ]
    s = sample_route(Route("timed-hold", wps))
    assert s.dt_s.sum() == pytest.approx(2400.0, abs=1e-3)
    t = seconds(s)
    moving = ~s.hold
    frac = s.distance_m / s.distance_m[-1]
    # 30 min of flying, linear in distance, the 10 min hold inserted at LEMBA
    expected = 1800.0 * frac + np.where(frac > 0.5, 600.0, 0.0)
    assert t[moving] == pytest.approx(expected[moving], abs=1.0)  # 1 s: LEMBA is ~mid-way
    with pytest.raises(RouteError, match="hold"):
        sample_route(Route("no-room", [wps[0], replace(wps[1], hold_min=45.0), wps[2]]))


# --------------------------------------------------------------------------- wind


def test_head_and_tail_wind_change_the_ground_speed(canonical_routes):
    tas = 200.0 * KT

    def westerly(lat, lon, alt, time):  # from the west: a tail wind on an eastbound leg
        return np.full(np.shape(lat), 20.0), np.zeros(np.shape(lat))

    def easterly(lat, lon, alt, time):
        return np.full(np.shape(lat), -20.0), np.zeros(np.shape(lat))

    d = sample_route(canonical_routes.STRAIGHT_ROUTE).distance_m[-1]
    tail = sample_route(canonical_routes.STRAIGHT_ROUTE, wind=westerly)
    head = sample_route(canonical_routes.STRAIGHT_ROUTE, wind=easterly)
    # closed form: t = d / (TAS + along-track wind); 0.5 %: the track azimuth turns by
    # ~1.4 deg along this geodesic (cos 1.4 deg = 0.9997) and the wind is read per part
    assert tail.dt_s.sum() == pytest.approx(d / (tas + 20.0), rel=5e-3)
    assert head.dt_s.sum() == pytest.approx(d / (tas - 20.0), rel=5e-3)
    assert np.all(head.tas == pytest.approx(tas))
    assert head.ground_speed[0] == pytest.approx(tas - 20.0, rel=5e-3)


def test_wind_is_called_once_with_arrays_and_nan_counts_as_calm(canonical_routes):
    calls = []

    def nan_wind(lat, lon, alt, time):
        calls.append((np.shape(lat), time.dtype))
        return np.full(np.shape(lat), np.nan), np.full(np.shape(lat), np.nan)

    calm = sample_route(canonical_routes.STRAIGHT_ROUTE)
    s = sample_route(canonical_routes.STRAIGHT_ROUTE, wind=nan_wind)
    assert len(calls) == 1 and calls[0][1] == np.dtype("datetime64[ms]")
    assert s.dt_s.sum() == pytest.approx(calm.dt_s.sum(), rel=1e-12)


def test_wind_stronger_than_the_airspeed_is_floored_with_a_warning(canonical_routes):
    slow = replace(canonical_routes.STRAIGHT_ROUTE, true_airspeed_kt=30.0)

    def gale(lat, lon, alt, time):
        return np.full(np.shape(lat), -30.0), np.zeros(np.shape(lat))

    with pytest.warns(PlausibilityWarning, match="floored") as record:
        s = sample_route(slow, wind=gale)
    assert record[0].filename == __file__  # points at the caller
    d = s.distance_m[-1]
    assert s.dt_s.sum() == pytest.approx(d / (GROUND_SPEED_FLOOR * 30.0 * KT), rel=1e-6)


def test_wind_does_not_change_times_between_timed_waypoints(canonical_routes):
    t0 = canonical_routes.DEPARTURE
    r = Route(
        "timed",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0, time=t0),
            Waypoint("PENTU", 57.0, -24.0, 2500.0, time=t0 + timedelta(hours=1)),
        ],
    )

    def strong(lat, lon, alt, time):
        return np.full(np.shape(lat), 30.0), np.zeros(np.shape(lat))

    assert np.all(sample_route(r, wind=strong).time == sample_route(r).time)


# --------------------------------------------------------------------------- bookkeeping


def test_sample_attributes_and_legs(canonical_routes):
    t0 = canonical_routes.DEPARTURE
    r = Route(
        "three",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0),
            Waypoint("LEMBA", 57.1, -24.5, 2600.0),
            Waypoint("PENTU", 57.2, -24.0, 2700.0),
        ],
        departure_time=t0,
        true_airspeed_kt=180.0,
    )
    s = sample_route(r)
    assert isinstance(s, RouteSamples)
    n = len(s)
    for name in (
        "lat",
        "lon",
        "altitude_m",
        "distance_m",
        "time",
        "tas",
        "leg",
        "from_waypoint",
        "to_waypoint",
        "hold",
        "dt_s",
        "ground_speed",
    ):
        assert getattr(s, name).shape == (n,), name
    assert s.route_name == "three" and s.waypoint_names == ["KARVO", "LEMBA", "PENTU"]
    assert s.leg[0] == 0 and s.leg[-1] == 1 and set(s.leg) == {0, 1}
    assert np.all(np.diff(s.leg) >= 0)
    assert s.from_waypoint.dtype == object
    first = s.leg == 0
    assert set(s.from_waypoint[first]) == {"KARVO"} and set(s.to_waypoint[first]) == {"LEMBA"}
    at = np.isin(s.distance_m, s.waypoint_distance_m)
    assert s.lat[at] == pytest.approx([57.0, 57.1, 57.2])
    assert not s.hold.any()


def test_flight_level_is_pressure_altitude(canonical_routes):
    s = sample_route(canonical_routes.ANTIMERIDIAN_ROUTE)
    assert s.altitude_reference == "pressure"
    assert s.altitude_m == pytest.approx(12000 * FT)
    # ICAO standard atmosphere (from memory): FL100 is the 696.8 hPa surface
    assert standard_atmosphere_pressure(100 * 100 * FT) / 100 == pytest.approx(696.8, abs=0.05)


def test_empty_and_single_waypoint_routes_are_refused(canonical_routes):
    with pytest.raises(RouteError, match="no waypoints"):
        sample_route(canonical_routes.EMPTY_ROUTE)
    lone = replace(
        canonical_routes.SINGLE_POINT_ROUTE,
        waypoints=(replace(canonical_routes.SINGLE_POINT_ROUTE.waypoints[0], hold_min=0.0),),
    )
    with pytest.raises(RouteError, match="single waypoint.*hold_min"):
        sample_route(lone)


def test_mixed_altitude_references_are_refused(canonical_routes):
    r = Route(
        "mixed",
        [
            Waypoint("KARVO", 57.0, -25.0, 2500.0, "msl"),
            Waypoint("PENTU", 57.0, -24.0, 3048.0, "pressure"),
        ],
        departure_time=canonical_routes.DEPARTURE,
        true_airspeed_kt=200.0,
    )
    with pytest.raises(RouteError, match="one altitude reference"):
        sample_route(r)


@pytest.mark.parametrize(
    "kwargs",
    [{"step_km": 0.0}, {"max_step_s": -1.0}, {"max_step_ft": float("nan")}, {"tas_kt": "fast"}],
)
def test_bad_sampling_arguments_are_refused(kwargs, canonical_routes):
    with pytest.raises(RouteError):
        sample_route(canonical_routes.STRAIGHT_ROUTE, **kwargs)


def test_too_many_samples_is_refused(canonical_routes):
    # 100 km at 1 kt every second: 194,000 samples, above the stated limit
    with pytest.raises(RouteError, match="check the true airspeed.*larger step"):
        sample_route(canonical_routes.STRAIGHT_ROUTE, tas_kt=1.0, max_step_s=1.0)
    with pytest.raises(RouteError, match="step_km 1e-05 is outside"):
        sample_route(canonical_routes.STRAIGHT_ROUTE, step_km=1e-5)


def test_zero_length_leg_and_vertical_leg(canonical_routes):
    r = Route(
        "hop",
        [
            Waypoint("KARVO", 57.0, -25.0, 30.0, "agl"),
            Waypoint("KARVO", 57.0, -25.0, 120.0, "agl"),
            Waypoint("KARVO", 57.0, -25.0, 120.0, "agl"),
            Waypoint("PENTU", 57.0, -24.99, 120.0, "agl"),
        ],
        departure_time=canonical_routes.DEPARTURE,
        true_airspeed_kt=20.0,
    )
    s = sample_route(r)
    assert np.all(np.diff(seconds(s)) >= 0)
    # the vertical leg takes its climb over the airspeed (3-D path length)
    climb = np.flatnonzero(s.leg == 0)
    assert seconds(s)[climb[-1] + 1] == pytest.approx(90.0 / (20.0 * KT), abs=1e-3)


def test_route_geo_interface(canonical_routes):
    f = canonical_routes.STRAIGHT_ROUTE.__geo_interface__
    assert f["geometry"]["type"] == "LineString"
    assert f["geometry"]["coordinates"][0] == [-25.0, 57.0, pytest.approx(2438.4)]
    assert f["properties"]["altitude_reference"] == "msl"


# --------------------------------------------------------------------------- invariants

_waypoint = st.tuples(
    st.floats(-80, 80), st.floats(-180, 180), st.floats(0, 12000), st.sampled_from([0.0, 0.0, 0.5])
)


@settings(max_examples=40, deadline=None)
@given(st.lists(_waypoint, min_size=2, max_size=5), st.floats(20, 500))
def test_invariants_on_random_routes(canonical_routes, points, tas):
    wps = [
        Waypoint(f"WP{i}", la, lo, z, "msl", None, h) for i, (la, lo, z, h) in enumerate(points)
    ]
    r = Route("random", wps, departure_time=canonical_routes.DEPARTURE, true_airspeed_kt=tas)
    s = sample_route(r, step_km=200.0, max_step_s=3600.0, max_step_ft=5000.0)
    t = seconds(s)
    assert np.all(np.diff(t) >= 0)
    assert np.all(np.diff(s.distance_m) >= -1e-6)
    assert s.dt_s.sum() == pytest.approx(t[-1], abs=1e-3 * len(s))  # ms rounding per sample
    expected = geod_length(r) / (tas * KT) + 60.0 * sum(p[3] for p in points)
    vertical = sum(abs(b[2] - a[2]) for a, b in zip(points[:-1], points[1:], strict=False))
    assert t[-1] >= expected - 1e-2
    assert t[-1] <= expected + vertical / (tas * KT) + 1e-2  # 3-D path <= horizontal + vertical
    assert np.all((s.lon >= -180.0) & (s.lon < 180.0))
    assert np.all(
        (s.altitude_m >= min(p[2] for p in points) - 1e-6)
        & (s.altitude_m <= max(p[2] for p in points) + 1e-6)
    )


def test_wind_is_read_at_an_msl_height_for_agl_routes(canonical_routes):
    seen = []

    def probe(lat, lon, alt, time):
        seen.append(np.asarray(alt))
        return np.zeros(np.shape(lat)), np.zeros(np.shape(lat))

    drone = Route(
        "agl",
        [
            Waypoint("JORVE", 57.2, -24.5, 100.0, "agl"),
            Waypoint("MAKTI", 57.2, -24.45, 100.0, "agl"),
        ],
        departure_time=canonical_routes.DEPARTURE,
        true_airspeed_kt=30.0,
        ground_elevation_m=250.0,
    )
    sample_route(drone, wind=probe)
    assert seen[0] == pytest.approx(350.0)


def test_times_implying_a_fast_ground_speed_warn_and_impossible_ones_are_refused(
    canonical_routes,
):
    t0 = canonical_routes.DEPARTURE

    def route(minutes):
        return Route(
            "typo",
            [
                Waypoint("KARVO", 57.0, -25.0, 2500.0, time=t0),
                Waypoint("PENTU", 57.0, -15.0, 2500.0, time=t0 + timedelta(minutes=minutes)),
            ],
        )

    # 606 km in 23 min: ~855 kt, beyond a jet with a jet-stream tail wind: a warning
    with pytest.warns(PlausibilityWarning, match="kt over the ground"):
        sample_route(route(23))
    # 606 km in 6 min: ~3,270 kt, an hour slip: refused at the reader's edge
    with pytest.raises(RouteError, match="imply 32.. kt over the ground.*slip"):
        sample_route(route(6))


def test_nat_departure_is_refused(canonical_routes):
    with pytest.raises(RouteError, match="NaT"):
        sample_route(canonical_routes.STRAIGHT_ROUTE, departure=np.datetime64("NaT"))
    s = sample_route(canonical_routes.STRAIGHT_ROUTE, departure=np.datetime64("2027-01-14T07:00"))
    assert s.time[0] == np.datetime64("2027-01-14T07:00:00.000")
