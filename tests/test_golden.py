"""Golden scenarios: whole screenings through the canonical columns of fixtures/.

The columns are synthetic (fixtures/make_fixtures.py, the invented Skerrow Basin);
what is checked is the qualitative outcome that the published work cited beside
each test says such an atmosphere produces. These are regression-style checks of
the whole chain, not check values of any single formula.
"""

import json
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pytest

import icing
from icing import codes
from icing.constants import FT
from icing.route import Route, Waypoint
from icing.runs import diagnose_point

ROOT = Path(__file__).resolve().parents[1]
GOLDEN = ROOT / "fixtures" / "golden-columns.json"
DEPART = datetime(2027, 1, 14, 12, 0, tzinfo=UTC)
# the position of each golden column, read from the fixture itself
WHERE = {p["id"]: (p["lat"], p["lon"]) for p in json.loads(GOLDEN.read_text())["profiles"]}


@pytest.fixture(scope="module")
def forecast():
    return icing.load_forecast(GOLDEN)


def _level_route(case, feet, name="GOLDEN"):
    """A 10 km north-south leg through the column at a constant altitude (MSL)."""
    lat, lon = WHERE[case]
    wps = (
        Waypoint("GLDAA", lat - 0.045, lon, feet * FT, "msl"),
        Waypoint("GLDBB", lat + 0.045, lon, feet * FT, "msl"),
    )
    return Route(name, wps, departure_time=DEPART)


def _screen(forecast, case, feet, airframe):
    return icing.screen_route(_level_route(case, feet), forecast, airframe=airframe)


@pytest.mark.parametrize("feet", [3000, 5000])
def test_supercooled_stratiform_deck_light_aircraft(forecast, feet):
    # Supercooled stratiform cloud at -5 to -10 C with LWC 0.1-0.4 g/m3 and MVD 15-25 um
    # accretes rime or mixed ice at light-to-moderate rates on an unprotected light
    # aircraft (FAA AIM 7-1-22 severity definitions; REFERENCES.md rate anchors).
    s = _screen(forecast, "stratiform-deck", feet, "light-piston")
    assert s.summary["worst_severity"] in ("light", "moderate")
    types = {codes.ICE_TYPES[i] for i in s.at_flight["ice_type"] if i}
    assert types and types <= {"rime", "mixed"}
    assert s.summary["sld"] == ["none"]


def test_stratiform_deck_bases_and_tops(forecast):
    # Below the cloud base and above the top of the deck there is no cloud icing.
    for feet in (1000, 12000):
        s = _screen(forecast, "stratiform-deck", feet, "light-piston")
        assert s.summary["worst_severity"] == "none"
        assert s.summary["gap_km"] == 0.0


def test_warm_topped_low_number_deck_gives_freezing_drizzle(forecast):
    # Warm-topped (> -12 C), low droplet number deck with no ice aloft: freezing
    # drizzle by the warm-rain process (Huffman & Norman 1988; Rasmussen et al. 2002).
    s = _screen(forecast, "drizzle-deck", 3000, "light-piston")
    assert "freezing-drizzle" in s.summary["sld"]
    seg = [f["properties"] for f in s.segments if f["properties"]["kind"] == "icing"]
    assert any(p["sld"] == "freezing-drizzle" and p["sld_mvd_um_max"] > 40 for p in seg)


def test_warm_nose_over_shallow_cold_layer_gives_freezing_rain(forecast):
    # Melting layer aloft over a shallow sub-freezing layer: rain that does not refreeze
    # (Bourgouin 2000 areas) reaches the cold layer as freezing rain.
    col = diagnose_point(forecast, *WHERE["warm-nose"], np.datetime64("2027-01-14T12:00"))
    assert col["precip_type"] == "freezing-rain"
    low = [lv for lv in col["levels"] if lv["temperature_c"] < 0 and lv["height_m"] < 500]
    assert low and all(lv["sld"] == "freezing-rain" for lv in low)


@pytest.mark.parametrize("airframe", ["light-piston", "twin-turboprop"])
def test_freezing_rain_is_severe_for_unprotected_and_boots(forecast, airframe):
    # Freezing rain forms ice aft of protected areas: the AIM's "severe" (FAA AIM 7-1-22);
    # kinetic heating at cruise speed must not hide it (common practice, no source).
    s = _screen(forecast, "warm-nose", 1000, airframe)
    assert s.summary["worst_severity"] == "severe"
    assert "freezing-rain" in s.summary["sld"]


def test_warm_nose_over_deep_cold_layer_gives_ice_pellets(forecast):
    # The same melting layer over a deep cold layer refreezes the drops: ice pellets at
    # the ground, not freezing rain (Bourgouin 2000).
    col = diagnose_point(
        forecast, *WHERE["ice-pellets-deep-cold"], np.datetime64("2027-01-14T12:00")
    )
    assert col["precip_type"] == "ice-pellets"
    lowest = [lv for lv in col["levels"] if not lv["below_ground"]][:2]
    assert all(lv["sld"] != "freezing-rain" for lv in lowest)


def test_deep_cold_deck_with_ice_falling_in_reads_glaciated(forecast):
    # A deep -20 to -30 C deck with ice falling into it glaciates readily (Korolev &
    # Mazin 2003; Fletcher 1962 ice nuclei rise steeply with supercooling).
    col = diagnose_point(
        forecast, *WHERE["glaciating-deep-cold-deck"], np.datetime64("2027-01-14T12:00")
    )
    cloudy = [lv for lv in col["levels"] if lv["cloud"]]
    assert cloudy and min(lv["glaciation"] for lv in cloudy) > 0.6
    # reported beside the LWC, never thinning it (Korolev et al. 2003: bimodal phase)
    assert max(lv["lwc_g_m3"] for lv in cloudy) > 0.05


def test_dry_column_is_no_icing_not_a_gap(forecast):
    s = _screen(forecast, "dry", 5000, "light-piston")
    assert s.summary["worst_severity"] == "none" and s.summary["gap_km"] == 0.0


def test_route_outside_the_forecast_is_a_gap(forecast):
    wps = (
        Waypoint("FARAA", 10.0, 100.0, 1500.0, "msl"),
        Waypoint("FARBB", 10.1, 100.1, 1500.0, "msl"),
    )
    s = icing.screen_route(
        Route("far", wps, departure_time=DEPART), forecast, airframe="light-piston"
    )
    assert s.summary["worst_severity"] is None
    assert s.summary["gap_km"] > 0
    assert all(f["properties"]["kind"] == "coverage-gap" for f in s.segments)
    assert (s.curtain.severity == codes.GAP).all()


def test_outside_the_time_window_is_a_gap(forecast):
    lat, lon = WHERE["stratiform-deck"]
    late = datetime(2027, 1, 20, 12, 0, tzinfo=UTC)
    wps = (
        Waypoint("GLDAA", lat, lon, 5000 * FT, "msl"),
        Waypoint("GLDBB", lat + 0.05, lon, 5000 * FT, "msl"),
    )
    s = icing.screen_route(
        Route("late", wps, departure_time=late), forecast, airframe="light-piston"
    )
    assert s.summary["worst_severity"] is None
    assert s.summary["status"].startswith("not-screened")
