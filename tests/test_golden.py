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


@pytest.mark.parametrize(
    "feet, words",
    [
        # 3,000 ft lies in the deck's 98 % humidity base, just below where its air
        # saturates (Bolton 1980 condensation level): no liquid yet. The humidity
        # threshold flags cloud there; the liquid starts at saturation
        (3000, ("none",)),
        # mid-deck, 0.1-0.4 g/m3: light to moderate
        (5000, ("light", "moderate")),
    ],
)
def test_supercooled_stratiform_deck_light_aircraft(forecast, feet, words):
    # Supercooled stratiform cloud at -5 to -10 C with LWC 0.1-0.4 g/m3 and MVD 15-25 um
    # accretes rime or mixed ice at light-to-moderate rates on an unprotected light
    # aircraft (FAA AIM 7-1-22 severity definitions; docs/references.md rate anchors); the
    # liquid starts at the saturated base (Bolton 1980 condensation level), so the
    # lowest few hundred feet of the deck hold little of it.
    s = _screen(forecast, "stratiform-deck", feet, "light-piston")
    assert s.summary["worst_severity"] in words
    types = {codes.ICE_TYPES[i] for i in s.at_flight["ice_type"] if i}
    assert types <= {"rime", "mixed"} and (bool(types) == (words != ("none",)))
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


# ------------------------------------------------------------- flight conditions
def test_jet_at_low_altitude_flies_its_schedule_not_its_cruise_speed(forecast):
    # 14 CFR 91.117(a): 250 kt indicated below 10,000 ft (~265 kt true at 5,000 ft in
    # this -7 C deck), not the 440 kt true of cruise: the ram rise no longer hides the
    # ice, and the word follows the unprotected-surface rate the anti-ice copes with
    s = _screen(forecast, "stratiform-deck", 5000, "regional-jet")
    tas = np.asarray(s.at_flight["tas_kt"])
    assert np.all((tas > 255.0) & (tas < 275.0))
    assert s.summary["worst_severity"] == "moderate"


def test_supercooled_liquid_reads_trace_with_the_reason_at_any_speed(forecast):
    # kinetic heating at 440 kt (+25 K, T_r = T + V^2 / 2 c_p) keeps the stagnation
    # line above 0 C in -7 C cloud, but supercooled liquid is never "no icing": at least
    # trace (0.01 g/m3 in-cloud threshold, Korolev et al. 2003), with the reason
    s = icing.screen_route(
        _level_route("stratiform-deck", 5000), forecast, airframe="regional-jet", tas_kt=440.0
    )
    assert s.summary["worst_severity"] == "trace"
    seg = [f["properties"] for f in s.segments if f["properties"]["kind"] == "icing"]
    assert seg and all(
        "liquid present; kinetic heating keeps the stagnation line above 0 C at 440 kt"
        in p["severity_reasons"]
        for p in seg
    )


def test_profile_levels_use_the_given_airspeed_or_the_schedule(forecast):
    # icing profile --tas-kt N: N at every level; otherwise the level-flight schedule
    # (250 kt indicated below 10,000 ft for the jet: 14 CFR 91.117(a))
    at = WHERE["stratiform-deck"]
    t = np.datetime64("2027-01-14T12:00")
    given = diagnose_point(forecast, *at, t, airframe="regional-jet", tas_kt=300.0)
    assert {lv["tas_kt"] for lv in given["levels"] if lv["tas_kt"] is not None} == {300.0}
    sched = diagnose_point(forecast, *at, t, airframe="regional-jet")
    low = [lv for lv in sched["levels"] if lv["height_m"] < 3000.0 and lv["tas_kt"]]
    # 250 kt indicated is 250-290 kt true from the ground to 3 km (ICAO atmosphere)
    assert low and all(245.0 < lv["tas_kt"] < 290.0 for lv in low)
    assert [lv["tas_kt"] for lv in low] == sorted(lv["tas_kt"] for lv in low)


def test_freezing_rain_segment_shows_the_ice_it_accretes(forecast):
    # the accretion counts the whole catch: runback and freezing rain striking aft
    # (where the AIM's severe ice forms) freeze even where the stagnation line stays
    # wet; a severe freezing-rain segment never shows 0 mm
    s = _screen(forecast, "warm-nose", 1000, "twin-turboprop")
    seg = [f["properties"] for f in s.segments if f["properties"]["sld"] == "freezing-rain"]
    assert seg and all(p["severity"] == "severe" for p in seg)
    assert all(p["accretion_rate_mm_h_max"] > 0 and p["accretion_mm"] > 0 for p in seg)


def test_glaciated_deck_reads_one_step_lower_with_the_reason(forecast):
    # ice and snow falling into a -20 to -30 C deck glaciate it (glaciation likelihood
    # 1.0; Korolev & Mazin 2003); the diagnosed liquid is kept (bimodal phase, Korolev
    # et al. 2003) but the word is one step lower, never below trace, with the reason
    col = diagnose_point(
        forecast,
        *WHERE["glaciating-deep-cold-deck"],
        np.datetime64("2027-01-14T12:00"),
        airframe="twin-turboprop",
    )
    cloudy = [lv for lv in col["levels"] if lv["cloud"] and lv["lwc_g_m3"] >= 0.01]
    assert cloudy and all(lv["severity"] in ("trace", "light") for lv in cloudy)
    assert all(any(r.startswith("lowered one step") for r in lv["reasons"]) for lv in cloudy)


def test_warm_topped_deck_gives_freezing_drizzle_without_model_rain(tmp_path):
    # the warm-rain process itself (Khairoutdinov & Kogan 2000 autoconversion and
    # accretion over the drizzle's residence time in the deck) makes the drizzle: a
    # sounding or model file without a rain field still shows it (Huffman & Norman
    # 1988: warm top, dry above; Rasmussen et al. 2002: few droplets)
    doc = json.loads(GOLDEN.read_text())
    for prof in doc["profiles"]:
        prof["levels"].pop("rain_g_kg", None)
    path = tmp_path / "no-rain.json"
    path.write_text(json.dumps(doc))
    f = icing.load_forecast(path)
    s = _screen(f, "drizzle-deck", 3000, "light-piston")
    assert "freezing-drizzle" in s.summary["sld"]
    col = diagnose_point(f, *WHERE["drizzle-deck"], np.datetime64("2027-01-14T12:00"))
    assert any(lv["sld"] == "freezing-drizzle" for lv in col["levels"])
