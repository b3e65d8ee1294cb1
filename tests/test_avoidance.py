"""Candidate altitudes with less icing (icing.avoidance).

Every expected altitude here follows from the invented Skerrow Basin curtain of
``common_results`` (deck top, freezing level, gap and terrain are set there by
hand); none is a physical check value.
"""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pytest

from icing import codes
from icing.constants import FT
from icing.errors import InputError
from icing.hazards.avoidance import CANDIDATE_WORDING, annotate_segments, candidate_altitudes

STEP = 1000.0


def _stretch(cur, a_km, b_km):
    d = cur.distance_km
    return (d >= a_km) & (d <= b_km)


def _first_multiple_above(ft):
    return (np.floor(ft / STEP) + 1) * STEP


def _first_multiple_below(ft):
    return np.floor(ft / STEP) * STEP


@pytest.fixture(scope="module")
def deck(make_screening):
    return make_screening()


def test_clear_altitude_above_a_deck_with_known_top(deck, screening_scenario):
    # Fixture: the deck top is DECK_TOP_FT (8,000 ft) everywhere from km 10 to 150.
    cur = deck.curtain
    out = candidate_altitudes(
        cur, _stretch(cur, 60, 120), flight_altitude_m=6000 * FT, tas_m_s=70.0
    )
    assert (
        out["above"]["altitude_ft"]
        == _first_multiple_above(screening_scenario.DECK_TOP_FT)
        == 9000
    )
    assert out["above"]["clear"] is True
    assert out["above"]["worst_severity"] == "none"
    assert 8000 not in out["ice_free_altitudes_ft"]  # the top row itself is in cloud
    assert CANDIDATE_WORDING in out["basis"]


def test_cloud_just_above_freezing_needs_a_margin_to_be_a_candidate(deck, screening_scenario):
    # Fixture: 0 degC at FREEZING_LEVEL_FT (4,250 ft), 6.5 K/km; ground at most 550 m
    # (1,804 ft), so with the 1,000 ft margin the floor is 3,000 ft. 4,000 ft is cloud
    # at +0.5 C, inside the stated +2 C margin (CLOUD_WARM_MARGIN_C, our choice: forecast
    # temperature errors of 1-2 K near 0 C and local cooling over the wing): not clear.
    # 3,000 ft, cloud base at +2.5 C, is the nearest clear altitude below.
    from icing.hazards.avoidance import CLOUD_WARM_MARGIN_C

    assert CLOUD_WARM_MARGIN_C == 2.0
    cur = deck.curtain
    out = candidate_altitudes(
        cur, _stretch(cur, 60, 120), flight_altitude_m=6000 * FT, tas_m_s=70.0
    )
    below = out["below"]
    assert _first_multiple_below(screening_scenario.FREEZING_LEVEL_FT) == 4000
    assert 4000 not in out["ice_free_altitudes_ft"]
    assert below["altitude_ft"] == 3000
    assert below["clear"] and below["warm_layer"]
    assert not below["freezing_rain_below"]
    assert out["ice_free_altitudes_ft"] == sorted(out["ice_free_altitudes_ft"])
    assert all(v % STEP == 0 for v in out["ice_free_altitudes_ft"])


def test_never_inside_a_full_coverage_gap(deck):
    cur = deck.curtain
    out = candidate_altitudes(
        cur, _stretch(cur, 140, 160), flight_altitude_m=6000 * FT, tas_m_s=70.0
    )
    # The stretch crosses the gap (no data at any altitude): nothing can be proposed.
    assert out["above"] is None and out["below"] is None
    assert out["ice_free_altitudes_ft"] == []
    assert len(out["gap_altitudes_ft"]) > 0


def test_never_inside_a_partial_coverage_gap(deck):
    cur = deck.curtain
    sev = cur.severity.copy()
    alt_ft = cur.altitudes_m / FT
    hole = _stretch(cur, 100, 104)[:, None] & ((alt_ft >= 8500) & (alt_ft <= 12000))[None, :]
    sev[hole] = codes.GAP
    holed = dataclasses.replace(cur, severity=sev)
    out = candidate_altitudes(
        holed, _stretch(cur, 60, 120), flight_altitude_m=6000 * FT, tas_m_s=70.0
    )
    for ft in (9000, 10000, 11000, 12000):
        assert ft not in out["ice_free_altitudes_ft"]
        assert ft in out["gap_altitudes_ft"]
    assert out["above"]["altitude_ft"] == 13000
    # A single gap cell on the candidate row is enough to refuse it.
    sev = cur.severity.copy()
    sev[np.flatnonzero(_stretch(cur, 60, 120))[3], np.flatnonzero(alt_ft == 9000)[0]] = codes.GAP
    out = candidate_altitudes(
        dataclasses.replace(cur, severity=sev),
        _stretch(cur, 60, 120),
        flight_altitude_m=6000 * FT,
        tas_m_s=70.0,
    )
    assert 9000 not in out["ice_free_altitudes_ft"]
    assert out["above"]["altitude_ft"] == 10000


@pytest.mark.parametrize("margin_ft", [0.0, 500.0, 1000.0, 2500.0])
def test_never_below_ground_or_terrain_margin(deck, margin_ft):
    cur = deck.curtain
    sel = _stretch(cur, 80, 120)  # over the hill (450 m above a 100 m plain)
    out = candidate_altitudes(
        cur, sel, flight_altitude_m=6000 * FT, tas_m_s=70.0, terrain_margin_ft=margin_ft
    )
    floor_ft = cur.ground_m[sel].max() / FT + margin_ft
    proposed = list(out["ice_free_altitudes_ft"])
    proposed += [o["altitude_ft"] for o in (out["above"], out["below"]) if o]
    assert proposed and min(proposed) >= floor_ft


def test_floor_and_drone_height_limit(deck):
    cur = deck.curtain
    sel = _stretch(cur, 60, 120)
    out = candidate_altitudes(
        cur, sel, flight_altitude_m=6000 * FT, tas_m_s=20.0, floor_m=5000 * FT, max_agl_m=3000.0
    )
    top_ft = (cur.ground_m[sel].min() + 3000.0) / FT
    assert all(5000 <= v <= top_ft for v in out["ice_free_altitudes_ft"])
    assert out["below"] is None or out["below"]["altitude_ft"] >= 5000


def test_climb_exposure_is_counted(deck):
    cur = deck.curtain
    sel = _stretch(cur, 60, 120)
    slow = candidate_altitudes(
        cur,
        sel,
        flight_altitude_m=6000 * FT,
        tas_m_s=70.0,
        climb_rate_fpm=500.0,
        descent_rate_fpm=500.0,
    )
    fast = candidate_altitudes(
        cur,
        sel,
        flight_altitude_m=6000 * FT,
        tas_m_s=70.0,
        climb_rate_fpm=1500.0,
        descent_rate_fpm=1500.0,
    )
    up = slow["above"]
    # 3,000 ft at 500 ft/min up and down again: 6 + 6 min (arithmetic of the stated rates).
    assert up["transit_min"] == pytest.approx(12.0)
    # The climb leaves a deck of at least light icing: the exposure is reported, not hidden.
    assert codes.severity_code(up["transit_severity"]) >= codes.SEV_LIGHT
    assert 0.0 < up["transit_icing_min"] <= up["transit_min"]
    assert "while changing level" in up["note"]
    # Climbing three times faster spends a third of the time in the deck (sampling of the
    # path: 64 points per leg, so within one point's share of the time).
    assert fast["above"]["transit_icing_min"] == pytest.approx(
        up["transit_icing_min"] / 3.0, abs=12.0 / 64
    )


def test_sld_at_a_candidate_in_freezing_air_is_not_clear(deck):
    cur = deck.curtain
    sld = cur.sld_class.copy()
    alt_ft = cur.altitudes_m / FT
    sld[_stretch(cur, 90, 92)[:, None] & (alt_ft == 9000)[None, :]] = codes.SLD_DRIZZLE
    out = candidate_altitudes(
        dataclasses.replace(cur, sld_class=sld),
        _stretch(cur, 60, 120),
        flight_altitude_m=6000 * FT,
        tas_m_s=70.0,
    )
    assert 9000 not in out["ice_free_altitudes_ft"]
    assert out["above"]["altitude_ft"] == 10000


def test_warm_layer_is_an_option_with_freezing_rain_named(make_screening):
    # Fixture: flown at 3,000 ft in freezing rain under a layer above 0 degC (~3,800-6,800 ft).
    scr = make_screening(warm_nose=True)
    cur = scr.curtain
    out = candidate_altitudes(
        cur, _stretch(cur, 40, 140), flight_altitude_m=3000 * FT, tas_m_s=70.0
    )
    up = out["above"]
    assert up["altitude_ft"] == 4000
    assert up["clear"] and up["warm_layer"] and up["freezing_rain_below"]
    assert "freezing rain" in up["note"]
    assert out["below"] is None  # 3,000 ft is the floor over the hill
    assert {4000, 5000, 6000} <= set(out["ice_free_altitudes_ft"])


def test_least_severe_when_nothing_is_clear(deck):
    cur = deck.curtain
    sev = np.where(cur.severity == codes.GAP, codes.GAP, np.maximum(cur.severity, 1))
    sev[:, (cur.altitudes_m / FT) >= 12000] = codes.SEV_LIGHT
    out = candidate_altitudes(
        dataclasses.replace(cur, severity=sev),
        _stretch(cur, 60, 120),
        flight_altitude_m=6000 * FT,
        tas_m_s=70.0,
    )
    assert out["ice_free_altitudes_ft"] == []
    assert out["above"]["clear"] is False
    assert out["above"]["worst_severity"] == "trace"
    assert "least severe" in out["above"]["note"]


def test_flight_levels_on_pressure_altitude(make_screening):
    scr = make_screening(altitude_reference="pressure")
    cur = scr.curtain
    out = candidate_altitudes(
        cur, _stretch(cur, 60, 120), flight_altitude_m=6000 * FT, tas_m_s=70.0
    )
    assert out["above"]["flight_level"] == 90
    assert out["ice_free_flight_levels"] == [v // 100 for v in out["ice_free_altitudes_ft"]]
    msl = candidate_altitudes(
        make_screening().curtain, _stretch(cur, 60, 120), flight_altitude_m=6000 * FT, tas_m_s=70.0
    )
    assert msl["above"]["flight_level"] is None and msl["ice_free_flight_levels"] is None


def test_annotate_segments_fills_properties_and_summary(make_screening, screening_scenario):
    before = make_screening()
    scr = annotate_segments(before)
    results = list(scr.candidates)
    # the screening given is left as it was: a new one is returned
    assert all("vertical_options" not in f["properties"] for f in before.segments)
    assert "candidate_altitudes" not in before.summary
    json.dumps(results, allow_nan=False)  # goes into GeoJSON and the sibling JSON as is
    assert results[0]["text"].startswith(results[0]["segment_id"])
    assert "above: 9000 ft" in results[0]["text"] and "not advice to fly" in results[0]["text"]
    icing = [f["properties"] for f in scr.segments if f["properties"]["kind"] == "icing"]
    assert len(results) == len(icing) > 0
    for p in icing:
        alts = p["ice_free_altitudes_ft"]
        assert isinstance(alts, list) and alts == sorted(alts) and alts
        assert p["vertical_options"]["above"]["altitude_ft"] == 9000
        # 4,000 ft is cloud at +0.5 C, inside the +2 C margin: 3,000 ft is proposed
        assert p["vertical_options"]["below"]["altitude_ft"] == 3000
        assert "official advisories" in p["vertical_options"]["basis"]
    gaps = [f["properties"] for f in scr.segments if f["properties"]["kind"] == "coverage-gap"]
    assert gaps and all(p["ice_free_altitudes_ft"] == [] for p in gaps)
    assert all("vertical_options" not in p for p in gaps)
    assert len(scr.summary["candidate_altitudes"]) == len(icing)
    assert "not advice to fly" in scr.summary["candidate_altitudes_wording"]
    # The ceiling from the assumptions (25,000 ft) is above the curtain: capped at its top.
    assert max(results[0]["ice_free_altitudes_ft"]) == 20000
    assert screening_scenario.GAP_KM[0] not in [r["stretch_km"][0] for r in results]


def test_bad_input_is_one_clear_line(deck, make_screening):
    cur = deck.curtain
    with pytest.raises(InputError, match="selects no curtain samples") as err:
        candidate_altitudes(
            cur, np.zeros(cur.distance_km.size, bool), flight_altitude_m=1000.0, tas_m_s=70.0
        )
    assert "\n" not in str(err.value) and "fix:" in str(err.value)
    with pytest.raises(InputError, match="climb_rate_fpm"):
        candidate_altitudes(
            cur, slice(0, 5), flight_altitude_m=1000.0, tas_m_s=70.0, climb_rate_fpm=0.0
        )
    with pytest.raises(InputError, match="mask has shape"):
        candidate_altitudes(cur, np.ones(3, bool), flight_altitude_m=1000.0, tas_m_s=70.0)
    scr = make_screening()
    del scr.samples.tas
    with pytest.raises(InputError, match="true airspeed"):
        annotate_segments(scr)


def test_unknown_terrain_proposes_nothing_below(deck):
    # Safety rule (ours): with no terrain height under the stretch, no altitude below the
    # planned one is proposed (a clear row there may be inside a hill).
    cur = dataclasses.replace(
        deck.curtain,
        ground_m=np.full(deck.curtain.ground_m.shape, np.nan),
        below_ground=np.zeros(deck.curtain.below_ground.shape, bool),
    )
    out = candidate_altitudes(
        cur, _stretch(cur, 60, 120), flight_altitude_m=6000 * FT, tas_m_s=70.0
    )
    assert out["below"] is None
    assert (
        out["terrain_known"] is False and "terrain under this stretch is unknown" in out["basis"]
    )
    assert out["above"] is not None
