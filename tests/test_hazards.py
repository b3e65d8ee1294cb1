"""Segment merging, RFC 7946 geometry and summaries (icing.hazards).

These are contract tests (docs/contracts.md, section 4, RFC 7946), not physics checks: the
per-sample values are made up for the test.
"""

from types import SimpleNamespace

import geojson
import numpy as np
import pytest

from icing import codes
from icing.caution import CAUTION
from icing.hazards.segments import (
    _geometry,
    build_segments,
    feature_collection,
    route_summary,
    segment_samples,
)


def _samples(n, lon0=10.0, dlon=0.01, lat=50.0):
    t0 = np.datetime64("2027-01-14T09:00:00", "ms")
    return SimpleNamespace(
        lat=np.full(n, lat),
        lon=((lon0 + dlon * np.arange(n) + 180.0) % 360.0) - 180.0,
        altitude_m=np.full(n, 3000.0),
        altitude_reference="msl",
        distance_m=np.arange(n) * 1000.0,
        time=t0 + (np.arange(n) * 10_000).astype("timedelta64[ms]"),
        dt_s=np.full(n, 10.0),
        from_waypoint=np.array(["AAAAA"] * n, dtype=object),
        to_waypoint=np.array(["BBBBB"] * n, dtype=object),
    )


def _at(sev, sld=None, ice=None):
    sev = np.asarray(sev)
    n = sev.size
    return {
        "severity": sev,
        "covered": sev != codes.GAP,
        "gap_reason": np.where(sev == codes.GAP, "outside-grid", ""),
        "sld_class": np.zeros(n, int) if sld is None else np.asarray(sld),
        "ice_type": np.where(sev > 0, 1, 0) if ice is None else np.asarray(ice),
        "basis": np.where(sev > 0, codes.BASIS_DIAGNOSED, 0),
        "temperature_c": np.full(n, -8.0),
        "lwc_g_m3": np.where(sev > 0, 0.3, 0.0),
        "mvd_um": np.full(n, 18.0),
        "glaciation": np.full(n, 0.1),
        "sld_lwc_g_m3": np.zeros(n),
        "sld_mvd_um": np.full(n, np.nan),
        "altitude_msl_m": np.full(n, 3000.0),
        "accretion_rate_mm_h": np.where(sev > 0, 10.0, 0.0),
        "collection_efficiency": np.where(sev > 0, 0.5, 0.0),
        "reference_collector": "wing",
        "per_collector": {
            "wing": {
                "accretion_rate_mm_h": np.where(sev > 0, 10.0, 0.0),
                "collection_efficiency": np.where(sev > 0, 0.5, 0.0),
            },
        },
    }


def _screening(severity):
    """A screening-like object over made-up per-sample severities."""
    s = _samples(len(severity))
    at = _at(severity)
    return SimpleNamespace(
        route_name="r",
        airframe_name="af",
        samples=s,
        at_flight=at,
        segments=build_segments("r", "af", s, at),
        summary={},
        provenance={},
        assumptions={},
    )


def test_short_severe_stretch_is_not_hidden():
    # docs/contracts.md, section 4: a change of severity starts a new segment
    at = _at([2, 2, 2, 4, 2, 2])
    assert segment_samples(at) == [(0, 3), (3, 4), (4, 6)]


def test_sld_and_ice_type_changes_split():
    at = _at([2, 2, 2, 2], sld=[0, 0, 1, 1], ice=[1, 3, 3, 3])
    assert segment_samples(at) == [(0, 1), (1, 2), (2, 4)]


def test_gap_is_its_own_kind_never_no_icing():
    s = _samples(6)
    at = _at([0, 0, -1, -1, 0, 0])
    feats = build_segments("r", "af", s, at)
    kinds = [f["properties"]["kind"] for f in feats]
    assert kinds == ["coverage-gap"]
    p = feats[0]["properties"]
    assert p["severity"] is None and p["lwc_g_m3_max"] is None and p["accretion_mm"] is None
    assert "not absent" in p["note"]
    allf = build_segments("r", "af", s, at, all_segments=True)
    assert [f["properties"]["kind"] for f in allf] == ["no-icing", "coverage-gap", "no-icing"]


def test_time_counted_once_and_accretion_adds_up():
    s = _samples(10)
    at = _at([0, 2, 2, 3, 3, 3, 2, 0, 0, 0])
    feats = build_segments("r", "af", s, at, all_segments=True)
    total = sum(f["properties"]["duration_min"] for f in feats)
    assert total == pytest.approx(10 * 10 / 60.0, abs=0.01 * len(feats))  # 2-decimal rounding
    icing_mm = sum(
        f["properties"]["accretion_mm"] for f in feats if f["properties"]["kind"] == "icing"
    )
    assert icing_mm == pytest.approx(
        6 * 10.0 * 10 / 3600.0, abs=1e-3 * len(feats)
    )  # 3-decimal rounding


def test_every_feature_carries_the_caution_and_validates():
    scr = _screening([0, 1, 2, 2, -1, 3, 3, 0])
    scr.summary = route_summary(scr)
    fc = feature_collection([scr])
    obj = geojson.loads(geojson.dumps(fc))
    assert obj.is_valid, obj.errors()
    assert all(f["properties"]["caution"] == CAUTION for f in fc["features"])
    assert "crs" not in fc
    assert fc["caution"] == CAUTION
    assert scr.summary["worst_severity"] == "moderate"
    assert scr.summary["gap_km"] > 0
    assert scr.summary["status"].startswith("partly")


def test_all_gap_route_is_not_screened_and_has_no_worst():
    summ = route_summary(_screening([-1, -1, -1, -1]))
    assert summ["worst_severity"] is None  # unknown, not "none"
    # nothing was screened: time in icing, ice and SLD are unknown (None), never 0 or "none"
    assert summ["minutes_in_icing"] is None
    assert summ["accretion_mm"] is None and summ["sld"] is None
    assert summ["status"].startswith("not-screened")


def test_antimeridian_split_into_multilinestring():
    # RFC 7946 section 3.1.9: cut at the antimeridian
    g = _geometry([179.8, 179.9, -179.9, -179.8], [10, 10, 10, 10], [0, 0, 0, 0])
    assert g["type"] == "MultiLineString"
    west, east = g["coordinates"]
    assert west[-1][0] == 180.0 and east[0][0] == -180.0
    assert all(abs(c[0]) <= 180 for part in g["coordinates"] for c in part)


def test_positions_have_at_most_six_decimals():
    g = _geometry([10.123456789, 10.2], [50.987654321, 50.9], [1000.123, 1000.0])
    lon, lat, _ = g["coordinates"][0]
    assert lon == 10.123457 and lat == 50.987654


def test_single_sample_segment_is_a_valid_linestring():
    g = _geometry([10.0], [50.0], [100.0])
    assert g["type"] == "LineString" and len(g["coordinates"]) == 2
