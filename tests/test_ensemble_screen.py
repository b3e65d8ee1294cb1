"""Screening ensembles and parametric spreads: member axes, --ensemble files, --spread.

The ensembles are built from the real NCEP GFS file of tests/data/real (a winter case
over the Great Lakes, 2011-01-15) by the ``gfs_ensemble`` fixture: the control member
is the real forecast unchanged, the other members are dried (relative humidity 5 %, no
cloud water), an invented perturbation of our own, never a check value. The checks
compare the members' arithmetic with a screening of the real file itself (a
regression of this code, not an independent physics value): where the real forecast
ices at some word, exactly the control member does, so a quarter of four members (a
half of two) is at that word or worse.
"""

from __future__ import annotations

import json
import shutil

import jsonschema
import numpy as np
import pytest

from icing import codes
from icing.cli import main
from icing.forecast import load_forecast
from icing.outputs.schema import SCHEMA_PATH
from icing.runs.screen import ScreenOptions, screen_route

SCHEMA = json.loads(SCHEMA_PATH.read_text())


@pytest.fixture(scope="module")
def real_screening(gfs_ensemble):
    """The lakes route screened against the real GFS file (the control member alone)."""
    return screen_route(
        gfs_ensemble.route, load_forecast(gfs_ensemble.gfs), airframe="light-piston"
    )


@pytest.fixture(scope="module")
def grib_screening(gfs_ensemble):
    fc = load_forecast(gfs_ensemble.grib)
    return fc, screen_route(gfs_ensemble.route, fc, airframe="light-piston")


def _check_quarter(ens, real, members=4):
    """Fractions of ``members`` members, one of which (the control) is the real forecast."""
    real_sev = np.asarray(real.curtain.severity)
    known = real_sev != codes.GAP
    frac = ens.curtain.member_fraction
    for word in ("trace", "light", "moderate", "severe"):
        expected = np.where(real_sev >= codes.severity_code(word), 1.0 / members, 0.0)
        assert np.array_equal(frac[word][known], expected[known]), word
        assert np.isnan(frac[word][~known]).all()  # no member has data: unknown, never 0
    assert np.array_equal(ens.curtain.severity_worst_member, real_sev)
    return known


def test_grib_number_axis_one_icing_member_of_four_gives_a_quarter(grib_screening, real_screening):
    fc, ens = grib_screening
    assert fc.labels == (
        "number 0 (control)",
        "number 1 (perturbed)",
        "number 2 (perturbed)",
        "number 3 (perturbed)",
    )
    known = _check_quarter(ens, real_screening)
    # the real forecast ices on this route: the check is not vacuous
    assert (np.asarray(real_screening.curtain.severity)[known] >= codes.SEV_LIGHT).sum() > 100
    # the median of four (one icing) is "none" wherever a member has data
    assert (np.asarray(ens.curtain.severity)[known] == codes.SEV_NONE).all()
    assert ens.curtain.members == 4 and ens.curtain.member_statistic == "median"


def test_grib_ensemble_segments_and_summary(grib_screening, real_screening):
    _, ens = grib_screening
    props = [f["properties"] for f in ens.segments]
    # the median says none, yet the control's icing is shown as no-icing segments with the
    # worst member's word and the fractions beside it: never hidden
    assert props and all(p["kind"] == "no-icing" and p["severity"] == "none" for p in props)
    real_words = {f["properties"]["severity"] for f in real_screening.segments}
    assert {p["severity_worst_member"] for p in props} == real_words
    for p in props:
        assert p["members"] == 4 and p["members_covering"] == 4
        assert p["member_statistic"] == "median"
        worst = codes.severity_code(p["severity_worst_member"])
        assert p["member_fraction"] == {
            w: (0.25 if worst >= codes.severity_code(w) else 0.0)
            for w in ("trace", "light", "moderate", "severe")
        }
    s = ens.summary
    assert s["members"] == 4 and s["worst_severity"] == "none"
    assert s["severity_worst_member"] == real_screening.summary["worst_severity"]
    assert s["member_fraction"]["light"] == 0.25 and s["member_gap_km"] == 0.0
    assert [m["member"] for m in s["member_coverage"]][0] == "number 0 (control)"
    assert s["member_coverage"][0]["worst_severity"] == real_screening.summary["worst_severity"]
    assert all(m["worst_severity"] == "none" for m in s["member_coverage"][1:])
    assert "1 of 4 members put" in s["member_fraction_words"]
    assert ens.assumptions["members"]["statistic"] == "median"


def test_netcdf_realization_axis_gives_the_same_members(gfs_ensemble, real_screening):
    fc = load_forecast(gfs_ensemble.netcdf)
    assert fc.labels == tuple(f"realization {i}" for i in range(4))
    ens = screen_route(gfs_ensemble.route, fc, airframe="light-piston")
    _check_quarter(ens, real_screening)
    ds = fc.dataset  # the internal structure keeps the member axis
    assert ds["relative_humidity"].dims[0] == "member" and ds.sizes["member"] == 4
    rh = ds["relative_humidity"].isel(time=0, level=-1, y=20, x=100).values
    assert rh[1:] == pytest.approx(0.05) and rh[0] != pytest.approx(0.05)


def test_one_member_with_member_n_is_the_single_forecast(gfs_ensemble, real_screening):
    fc = load_forecast(gfs_ensemble.grib, member=0)
    one = screen_route(gfs_ensemble.route, fc, airframe="light-piston")
    assert np.array_equal(one.curtain.severity, real_screening.curtain.severity)
    assert "members" not in one.summary and one.curtain.members == 1


def test_identical_members_reproduce_the_single_forecast(gfs_ensemble, tmp_path, real_screening):
    copy = tmp_path / "control-copy.nc"
    shutil.copy(gfs_ensemble.control, copy)
    fc = load_forecast([gfs_ensemble.control, copy], ensemble=True)
    ens = screen_route(gfs_ensemble.route, fc, airframe="light-piston")
    assert np.array_equal(ens.curtain.severity, real_screening.curtain.severity)
    words = [(f["properties"]["kind"], f["properties"]["severity"]) for f in ens.segments]
    assert words == [
        (f["properties"]["kind"], f["properties"]["severity"]) for f in real_screening.segments
    ]
    for key in ("lwc_g_m3", "accretion_rate_mm_h", "temperature_c"):
        assert np.allclose(ens.at_flight[key], real_screening.at_flight[key], equal_nan=True)


def test_ensemble_files_two_members_median_is_the_upper_one(gfs_ensemble, real_screening):
    fc = load_forecast([gfs_ensemble.control, gfs_ensemble.dried], ensemble=True)
    assert fc.labels == ("gfs-control.nc", "gfs-dried.nc")
    ens = screen_route(gfs_ensemble.route, fc, airframe="light-piston")
    _check_quarter(ens, real_screening, members=2)
    # with two members the median is the worse one: at least half of them reach it
    assert np.array_equal(ens.curtain.severity, real_screening.curtain.severity)


def test_a_gap_in_one_member_is_reported_and_fails_closed(gfs_ensemble, screen_cli):
    route = [[-88.0, 43.0, 3000.0], [-84.0, 43.0, 3000.0]]
    files = [gfs_ensemble.control, gfs_ensemble.cropped, gfs_ensemble.dried]
    code, fc, rows = screen_cli(
        route, files, departure="2011-01-15T11:30:00Z", extra=("--ensemble", "--fail-on", "severe")
    )
    assert code == 3  # met: part of the route is unknown to one member
    s = fc["summaries"][0]
    assert s["outcome"] == "met" and "at least one member has no data" in s["outcome_reason"]
    cropped = next(m for m in s["member_coverage"] if m["member"] == "gfs-cropped.nc")
    assert cropped["gap_km"] > 50 and cropped["gaps"][0]["reason"] == "outside-grid"
    assert cropped["gaps"][-1]["end_km"] == pytest.approx(s["distance_km"], abs=0.5)
    assert s["member_gap_km"] == pytest.approx(cropped["gap_km"]) and s["gap_km"] == 0.0
    assert s["members_covering_min"] == 2
    east = [f["properties"] for f in fc["features"] if f["properties"]["members_covering"] == 2]
    assert east and all("gfs-cropped.nc (outside-grid)" in p["member_gap_reason"] for p in east)
    # where two of three members have data the fractions are of those two
    assert all(p["member_fraction"]["trace"] in (0.0, 0.5) for p in east)
    assert {r["members_covering"] for r in rows} == {"2", "3"}
    jsonschema.validate(fc, SCHEMA)
    code, fc, _ = screen_cli(
        route,
        files,
        departure="2011-01-15T11:30:00Z",
        extra=("--ensemble", "--fail-on", "severe", "--accept-gaps"),
    )
    assert code == 0 and fc["summaries"][0]["outcome"] == "incomplete"


def test_fail_on_with_a_fraction_of_the_members(gfs_ensemble, screen_cli):
    route = [[-88.0, 43.0, 3000.0], [-84.0, 43.0, 3000.0]]
    run = lambda *extra: screen_cli(  # noqa: E731
        route, gfs_ensemble.grib, departure="2011-01-15T11:30:00Z", extra=extra
    )
    code, fc, rows = run("--fail-on", "light")
    assert code == 0 and fc["summaries"][0]["outcome"] == "not-met"  # the median: none
    code, fc, _ = run("--fail-on", "light", "--fail-on-fraction", "0.25")
    assert code == 3 and "0.25 of the members" in fc["summaries"][0]["outcome_reason"]
    code, fc, _ = run("--fail-on", "light", "--member-statistic", "worst")
    assert code == 3 and "worst of 4 members" in fc["summaries"][0]["outcome_reason"]
    jsonschema.validate(fc, SCHEMA)
    assert rows[0]["member_fraction_light"] in ("0.0", "0.25")


def test_spread_reports_the_uncertain_choices_as_members(gfs_ensemble, real_screening):
    fc = load_forecast(gfs_ensemble.gfs)
    opts = ScreenOptions(spread="all")
    s = screen_route(gfs_ensemble.route, fc, airframe="light-piston", options=opts)
    a = s.assumptions["members"]
    assert a["kind"] == "spread" and a["members"] == 9
    labels = [m["member"] for m in a["member_list"]]
    assert labels[:3] == ["as stated", "air-mass=continental", "sub-adiabatic=0.64"]
    assert all(m["source"] for m in a["member_list"])
    assert any("Braun" in m["source"] for m in a["member_list"])
    assert any("our choice" in m["source"] for m in a["member_list"])
    # the stated options' member is the single forecast's screening
    stated = s.summary["member_coverage"][0]
    assert stated["member"] == "as stated"
    assert stated["worst_severity"] == real_screening.summary["worst_severity"]
    f = s.curtain.member_fraction["trace"]
    known = np.isfinite(f)
    assert np.allclose(f[known] * 9, np.round(f[known] * 9))  # fractions of nine members


def test_refusals(gfs_ensemble, capsys, tmp_path):
    route = tmp_path / "r.geojson"
    route.write_text(
        '{"type":"Feature","properties":{"name":"r","departure_time":"2011-01-15T11:30:00Z"},'
        '"geometry":{"type":"LineString","coordinates":[[-88,43,3000],[-84,43,3000]]}}'
    )
    base = ["screen", str(route), "-a", "light-piston", "-f"]
    cases = [
        ([str(gfs_ensemble.grib), "--spread"], "--spread applies to a single forecast"),
        ([str(gfs_ensemble.control), "--fail-on-fraction", "0.5"], "without --fail-on"),
        ([str(gfs_ensemble.control), "--member-statistic", "p30"], "unknown member statistic"),
        ([str(gfs_ensemble.control), "--ensemble"], "--ensemble with 1 member"),
        ([str(gfs_ensemble.control), str(gfs_ensemble.control), "--ensemble"], "given twice"),
    ]
    for extra, words in cases:
        assert main(base + extra) == 2
        err = capsys.readouterr().err.strip()
        assert words in err and "fix:" in err and "\n" not in err
    assert main(["profile", "-f", str(gfs_ensemble.grib), "--at=43,-88"]) == 2
    assert "--member N" in capsys.readouterr().err


def test_ensemble_outputs_write_and_validate(gfs_ensemble, tmp_path, capsys):
    out = tmp_path / "e.geojson"
    args = ["screen", "-a", "light-piston", "-o", str(out), "--plot", str(tmp_path / "x.svg")]
    args += ["--report", str(tmp_path / "r.html"), "--samples", str(tmp_path / "s.csv")]
    route = tmp_path / "r.geojson"
    route.write_text(
        '{"type":"Feature","properties":{"name":"r","departure_time":"2011-01-15T11:30:00Z"},'
        '"geometry":{"type":"LineString","coordinates":[[-88,43,3000],[-84,43,3000]]}}'
    )
    assert main([*args, str(route), "-f", str(gfs_ensemble.netcdf)]) == 0
    table = capsys.readouterr().out
    assert "4 members, severity by the median member" in table
    fc = json.loads(out.read_text())
    jsonschema.validate(fc, SCHEMA)
    assert fc["schema_version"] == "1.2"
    svg = (tmp_path / "x.svg").read_text()
    assert "member-legend" in svg and "fraction of the 4 members at moderate or worse" in svg
    html = (tmp_path / "r.html").read_text()
    assert "Screened with 4 members (forecasts of an ensemble)" in html
    assert "3 of 4 forecasts" in html or "0.75 at moderate means 3 of 4" in html


def test_worst_statistic_is_the_icing_member_with_its_physics(gfs_ensemble, real_screening):
    # the statistic's member is read off again for the outputs: with "worst" it is the
    # control, so every physics value equals the real forecast's own screening
    fc = load_forecast(gfs_ensemble.grib)
    opts = ScreenOptions(member_statistic="worst")
    ens = screen_route(gfs_ensemble.route, fc, airframe="light-piston", options=opts)
    assert np.array_equal(ens.curtain.severity, real_screening.curtain.severity)
    assert np.array_equal(ens.curtain.severity, ens.curtain.severity_worst_member)
    for key in ("lwc_g_m3", "mvd_um", "accretion_rate_mm_h", "collection_efficiency"):
        # 1e-9: the members' columns are interpolated with a member axis (last-bit sums)
        assert np.allclose(
            ens.at_flight[key], real_screening.at_flight[key], rtol=1e-9, equal_nan=True
        )
    kinds = [(f["properties"]["kind"], f["properties"]["severity"]) for f in ens.segments]
    assert kinds == [
        (f["properties"]["kind"], f["properties"]["severity"]) for f in real_screening.segments
    ]
    assert all(f["properties"]["member_statistic"] == "worst" for f in ens.segments)
