"""Outcomes a dispatcher can script and a drone operator can trust (the ``screen`` contract).

Contract tests on the invented Skerrow Basin scenario (synthetic forecast, invented
routes); no physics value is checked here. Each item of the output contract has its
test: fail closed, per-route outcome, named airframe, MSL altitudes with the route's
own reference, drone units, CSV settings, holds, the candidate step, 2-D routes,
departure windows and stable segment ids.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest

from icing.cli import departure_window, main
from icing.constants import FT
from icing.errors import RouteError
from icing.route import load_routes

ROOT = Path(__file__).resolve().parents[1]
FORECAST = ROOT / "fixtures" / "skerrow-latlon.nc"
DISPATCH = ROOT / "routes" / "regional-dispatch.geojson"
PLAN = ROOT / "routes" / "flight-plan.csv"
DRONE = ROOT / "routes" / "drone-inspection.gpx"
LEVELS = ROOT / "routes" / "flight-levels.geojson"


def run(capsys, *args):
    code = main([str(a) for a in args])
    out = capsys.readouterr()
    return code, out.out, out.err


def _csv(text):
    return list(csv.DictReader(io.StringIO(text)))


@pytest.fixture
def outside(write_text, tmp_path):
    """A route entirely outside the forecast (the demo forecast covers 53.5-60.5 N)."""
    return write_text(
        tmp_path,
        "far.csv",
        "# airframe: light-piston\nname,lat,lon,altitude_ft,time\n"
        "far-1,10.0,100.0,5000,2027-01-14T09:00:00Z\nfar-2,10.2,100.3,5000,2027-01-14T09:10:00Z\n",
    )


@pytest.fixture
def partly_outside(write_text, tmp_path):
    """About 60 % of this route lies west of the forecast (which ends at 31 W)."""
    return write_text(
        tmp_path,
        "half.csv",
        "# airframe: light-piston\nname,lat,lon,altitude_ft,time\n"
        "half-1,57.0,-38.0,5000,2027-01-14T09:00:00Z\n"
        "half-2,57.0,-26.0,5000,2027-01-14T10:40:00Z\n",
    )


# ------------------------------------------------------------------------- fail closed


def test_no_coverage_fails_closed_and_names_the_route(capsys, outside):
    code, out, err = run(capsys, "screen", outside, "-f", FORECAST, "--fail-on", "light", "--json")
    s = json.loads(out)["summaries"][0]
    assert code == 3
    assert (
        s["outcome"] == "met" and "no part of the route could be screened" in s["outcome_reason"]
    )
    assert "far" in err and "condition met for 1 of 1" in err
    # what was not computed is null, never 0 or "none"
    for key in ("worst_severity", "minutes_in_icing", "accretion_mm", "sld", "tolerance_reached"):
        assert s[key] is None, key


def test_no_coverage_reads_unknown_in_the_table(capsys, outside):
    code, out, _ = run(capsys, "screen", outside, "-f", FORECAST)
    row = next(line for line in out.splitlines() if line.startswith("far"))
    assert code == 0 and "unknown" in row
    assert " 0.00 " not in row and " none " not in row


def test_accept_gaps_gives_incomplete_and_exit_0(capsys, outside):
    code, out, _ = run(
        capsys, "screen", outside, "-f", FORECAST, "--fail-on", "light", "--accept-gaps", "--json"
    )
    s = json.loads(out)["summaries"][0]
    assert code == 0 and s["outcome"] == "incomplete" and "gaps accepted" in s["outcome_reason"]


def test_partly_outside_fails_on_trace(capsys, partly_outside):
    code, out, err = run(
        capsys, "screen", partly_outside, "-f", FORECAST, "--fail-on", "trace", "--json"
    )
    s = json.loads(out)["summaries"][0]
    assert s["gap_km"] > 0.5 * s["distance_km"]
    assert code == 3 and s["outcome"] == "met" and "half" in err


def test_samples_outside_the_forecast_have_no_values(capsys, partly_outside, tmp_path):
    """An uncovered sample's forecast and physics cells are empty: the sampled state there
    held values read at the grid's edge (temperature, 0.28 g/m3 of liquid, SLD 0.0)."""
    samples = tmp_path / "s.csv"
    code, _, _ = run(capsys, "screen", partly_outside, "-f", FORECAST, "--samples", samples)
    assert code == 0
    rows = _csv("".join(ln for ln in samples.read_text().splitlines(True) if ln[0] != "#"))
    gaps = [r for r in rows if r["covered"] == "False"]
    assert gaps and len(gaps) < len(rows)
    physics = ("pressure_hpa", "temperature_c", "relative_humidity_pct", "lwc_g_m3",
               "sld_lwc_g_m3", "glaciation", "mvd_um", "accretion_mm")  # fmt: skip
    for r in gaps:
        assert r["severity"] == "coverage-gap" and r["gap_reason"]
        assert all(r[k] == "" for k in physics), {k: r[k] for k in physics}
        assert r["lat"] and r["altitude_m"] and r["tas_m_s"]  # what the route says stays


def test_clear_of_the_condition_is_not_met(capsys):
    code, out, _ = run(capsys, "screen", DISPATCH, "-f", FORECAST, "--fail-on", "severe", "--json")
    s = json.loads(out)["summaries"][0]
    assert s["worst_severity"] == "moderate" and s["gap_km"] == 0
    assert code == 0 and s["outcome"] == "not-met"


def test_outcome_in_table_json_geojson_and_report(capsys, tmp_path):
    out = tmp_path / "h.geojson"
    code, text, _ = run(
        capsys, "screen", DISPATCH, "-f", FORECAST, "--fail-on", "moderate", "-o", out,
        "--report", tmp_path / "r.html",
    )  # fmt: skip
    assert code == 3
    assert "outcome" in text.splitlines()[0] and "met" in text.splitlines()[2]
    s = json.loads(out.read_text())["summaries"][0]
    assert s["outcome"] == "met" and s["condition"].startswith("moderate icing or worse")
    html = (tmp_path / "r.html").read_text()
    assert 'class="outcome outcome-met"' in html and "Condition met: moderate icing" in html


def test_fail_on_tolerance(capsys):
    # light-piston carries 6 mm (preset); the flight plan gathers about 20 mm on it
    code, out, err = run(capsys, "screen", PLAN, "-f", FORECAST, "--fail-on-tolerance", "--json")
    s = json.loads(out)["summaries"][0]
    assert s["tolerance_reached"] is True and s["accretion_mm"] >= s["ice_tolerance_mm"]
    assert code == 3 and "ice tolerance" in s["outcome_reason"] and "flight-plan" in err
    # --fail-on severe alone passes nothing the tolerance would catch on a moderate route
    code, out, _ = run(capsys, "screen", DISPATCH, "-f", FORECAST, "--fail-on", "severe")
    assert code == 0


def test_accept_gaps_needs_a_condition(capsys):
    code, _, err = run(capsys, "screen", DISPATCH, "-f", FORECAST, "--accept-gaps")
    assert code == 2 and "--fail-on" in err


# ----------------------------------------------------------------------------- airframe


def test_airframe_must_be_named(capsys, write_text, tmp_path):
    route = write_text(
        tmp_path,
        "anon.csv",
        "name,lat,lon,altitude_ft,time\nanon-1,57.0,-25.0,5000,2027-01-14T09:00:00Z\n"
        "anon-2,57.0,-24.0,5000,2027-01-14T09:20:00Z\n",
    )
    code, out, err = run(capsys, "screen", route, "-f", FORECAST)
    assert code == 2 and out == ""
    assert "no airframe" in err and "light-piston" in err and "twin-turboprop" in err
    assert len(err.strip().splitlines()) == 1


def test_the_routes_own_airframe_is_used_and_shown_everywhere(capsys, tmp_path):
    out = tmp_path / "h.geojson"
    code, text, _ = run(capsys, "screen", DISPATCH, "-f", FORECAST, "-o", out, "--samples",
                        tmp_path / "s.csv")  # fmt: skip
    assert code == 0 and "twin-turboprop" in text.splitlines()[2]
    fc = json.loads(out.read_text())
    assert fc["summaries"][0]["airframe"] == "twin-turboprop"
    assert {f["properties"]["airframe"] for f in fc["features"]} == {"twin-turboprop"}
    rows = _csv((tmp_path / "s.csv").read_text())
    assert {r["airframe"] for r in rows} == {"twin-turboprop"}


# ---------------------------------------------------------------------- altitudes, units


def test_agl_route_is_written_in_msl_with_its_own_reference(capsys, write_text, tmp_path):
    route = write_text(
        tmp_path,
        "hill.geojson",
        json.dumps(
            {
                "type": "Feature",
                "properties": {
                    "name": "hill survey",
                    "altitude_reference": "agl",
                    "ground_elevation_m": 200,
                    "airframe": "small-multirotor",
                    "departure_time": "2027-01-14T10:30:00Z",
                    "true_airspeed_kt": 29,
                },
                "geometry": {
                    "type": "LineString",
                    "coordinates": [[-20.0, 59.3, 60.0], [-19.95, 59.315, 100.0]],
                },
            }
        ),
    )
    out = tmp_path / "h.geojson"
    code, _, _ = run(capsys, "screen", route, "-f", FORECAST, "-o", out, "--all-segments",
                     "--samples", tmp_path / "s.csv")  # fmt: skip
    assert code == 0
    feats = json.loads(out.read_text())["features"]
    for f in feats:
        p = f["properties"]
        assert p["altitude_reference"] == "msl" and p["route_altitude_reference"] == "agl"
        # 60-100 m above ground at 200 m: 260-300 m MSL, in feet and metres
        assert 259 <= p["altitude_m_min"] <= p["altitude_m_max"] <= 301
        assert p["altitude_ft_min"] == pytest.approx(p["altitude_m_min"] / FT, abs=1)
        assert 59 <= p["altitude_agl_m_min"] <= p["altitude_agl_m_max"] <= 101
        assert p["ground_elevation_m_min"] == 200 and p["tas_m_s"] == pytest.approx(14.9, abs=0.1)
        assert all(259 <= z <= 301 for *_, z in f["geometry"]["coordinates"])
    rows = _csv((tmp_path / "s.csv").read_text())
    for r in rows:
        assert float(r["altitude_m"]) == pytest.approx(float(r["altitude_agl_m"]) + 200, abs=0.01)
        assert float(r["ground_elevation_m"]) == 200 and float(r["tas_m_s"]) > 14
        assert r["route_altitude_reference"] == "agl"
        assert float(r["altitude_ft"]) == pytest.approx(float(r["altitude_m"]) / FT, abs=0.01)


def test_flight_levels_keep_their_level_beside_the_msl_altitude(capsys, tmp_path):
    out = tmp_path / "h.geojson"
    assert run(capsys, "screen", LEVELS, "-f", FORECAST, "-o", out)[0] == 0
    feats = json.loads(out.read_text())["features"]
    assert feats
    for f in feats:
        p = f["properties"]
        assert p["altitude_reference"] == "msl" and p["route_altitude_reference"] == "pressure"
        assert 110 <= p["flight_level_min"] <= p["flight_level_max"] <= 150
        assert p["altitude_ft_min"] is not None  # the forecast's height of that pressure


def test_cross_section_draws_agl_routes_above_the_ground(make_screening, tmp_path):
    from icing.outputs.plot import plot_cross_section
    from icing.outputs.plot.section import _flight_path
    from icing.route import sample_route
    from icing.runs.screen import screen_route

    route = load_routes(DRONE)[0]
    scr = screen_route(route, str(FORECAST))
    x, y = _flight_path(scr)
    ground_ft = np.asarray(scr.curtain.ground_m) / FT
    own_ft = np.asarray(sample_route(route, default_tas_kt=29).altitude_m) / FT
    assert np.all(y >= ground_ft - 1e-6)
    assert np.allclose(y, own_ft + ground_ft)  # drawn at true height over the drawn ground
    png = plot_cross_section(scr, tmp_path / "agl.svg", axis="agl", dpi=50)
    assert "height above the ground [ft]" in png.read_text()


# ------------------------------------------------------------------------- CSV settings


def test_csv_comment_settings_are_honoured(write_text, tmp_path):
    path = write_text(
        tmp_path,
        "mission.csv",
        "# a survey near the mast\n# altitude_reference: agl\n# airframe: small-multirotor\n"
        "# ground_elevation_m = 12\nname,lat,lon,altitude_ft\np-1,59.3,-20.0,120\n"
        "p-2,59.31,-19.99,200\n",
    )
    r = load_routes(path)[0]
    assert r.altitude_reference == "agl" and r.airframe == "small-multirotor"
    assert r.ground_elevation_m == 12.0


@pytest.mark.parametrize(
    "line", ["# alt_ref: agl", "# altitude reference = feet", "# note: draft plan"]
)
def test_csv_comment_that_reads_like_an_unknown_setting_is_refused(write_text, tmp_path, line):
    path = write_text(tmp_path, "m.csv", f"{line}\nname,lat,lon,altitude_ft\na-1,57,-25,100\n"
                      "a-2,57.1,-25,100\n")  # fmt: skip
    if line == "# altitude reference = feet":
        with pytest.raises(RouteError, match="altitude_reference 'feet'"):
            load_routes(path)
        return
    with pytest.raises(RouteError, match="reads like a setting") as err:
        load_routes(path)
    assert "line 1" in str(err.value) and "altitude_reference" in str(err.value)


# ---------------------------------------------------------------------------- 2-D routes


def test_altitude_for_routes_drawn_in_two_dimensions(capsys, write_text, tmp_path):
    flat = write_text(
        tmp_path,
        "flat.csv",
        "# airframe: light-piston\nname,lat,lon,time\nf-1,57.0,-25.0,2027-01-14T09:00:00Z\n"
        "f-2,57.0,-24.0,2027-01-14T09:20:00Z\n",
    )
    code, _, err = run(capsys, "screen", flat, "-f", FORECAST)
    assert code == 2 and "--altitude-ft" in err
    assert [w.altitude_m for w in load_routes(flat, altitude_ft=5000)[0].waypoints] == [
        pytest.approx(5000 * FT)
    ] * 2
    fl = load_routes(flat, flight_level=120)[0]
    assert fl.altitude_reference == "pressure"
    code, out, _ = run(capsys, "screen", flat, "-f", FORECAST, "--flight-level", "120", "--json")
    assert code == 0 and json.loads(out)["summaries"][0]["route_altitude_reference"] == "pressure"


def test_altitude_option_never_replaces_the_files_altitudes(capsys):
    code, _, err = run(capsys, "screen", PLAN, "-f", FORECAST, "--altitude-ft", "4000")
    assert code == 2 and "gives its own altitude" in err


# --------------------------------------------------------------------- departure window


def test_departure_window_parses():
    times = departure_window("2027-01-14T06:00Z/2027-01-14T09:00Z/90m")
    assert [t.strftime("%H:%M") for t in times] == ["06:00", "07:30", "09:00"]
    assert len(departure_window("2027-01-14T06:00Z/2027-01-14T07:00Z/PT30M")) == 3
    for bad in ("2027-01-14T06:00Z/1h", "2027-01-14T09:00Z/2027-01-14T06:00Z/1h",
                "2027-01-14T06:00Z/2027-01-14T09:00Z/0m"):  # fmt: skip
        with pytest.raises(Exception, match="depart-window"):
            departure_window(bad)


def test_departure_window_tabulates_outcomes(capsys, tmp_path):
    code, out, err = run(
        capsys, "screen", DRONE, "-f", FORECAST, "--fail-on", "light",
        "--depart-window", "2027-01-14T08:00Z/2027-01-14T16:00Z/4h", "-o", tmp_path / "w.geojson",
    )  # fmt: skip
    assert "departures on 2027-01-14" in out
    header = next(line for line in out.splitlines() if "departure [UTC]" in line)
    assert all(t in header for t in ("08:00", "12:00", "16:00"))
    fc = json.loads((tmp_path / "w.geojson").read_text())
    deps = [s["departure_time"] for s in fc["summaries"]]
    assert deps == ["2027-01-14T08:00:00Z", "2027-01-14T12:00:00Z", "2027-01-14T16:00:00Z"]
    ids = [f["properties"]["segment_id"] for f in fc["features"]]
    assert len(ids) == len(set(ids))  # unique across departures
    if all(s["outcome"] == "met" for s in fc["summaries"]):
        assert code == 3 and "no departure in the window" in err
    else:
        assert code == 0


# ------------------------------------------------------------------ holds, drone search


def test_hold_is_shown_in_the_report_map_and_section(tmp_path):
    from icing.outputs.write import write_outputs
    from icing.runs.screen import screen_route

    scr = screen_route(load_routes(DRONE)[0], str(FORECAST))
    write_outputs([scr], plot=tmp_path / "x.svg", map_=tmp_path / "m.svg",
                  report=tmp_path / "r.html")  # fmt: skip
    assert "hold 6 min" in (tmp_path / "x.svg").read_text()
    assert "hold 6 min" in (tmp_path / "m.svg").read_text()
    assert "hold 6 min at mast-top" in (tmp_path / "r.html").read_text()
    assert scr.summary["hold_min"] == pytest.approx(6.3, abs=0.5)


def test_drone_candidates_are_searched_in_a_step_suited_to_the_band():
    from icing.runs.screen import _band_step_ft, screen_route

    assert _band_step_ft((100.0, 400.0)) == 50.0  # eight altitudes in a 400 ft band
    assert _band_step_ft((1000.0, 25000.0)) == 1000.0
    scr = screen_route(load_routes(DRONE)[0], str(FORECAST))
    assert scr.assumptions["screening"]["candidate_altitude_step_ft"] == 50.0
    for c in scr.candidates:
        for side in ("above", "below"):
            o = c[side]
            if o is not None:
                assert o["altitude_ft"] % 50 == 0 and 100 <= o["altitude_ft"] <= 400


# ---------------------------------------------------------------------- stable segment ids


def test_segment_ids_do_not_change_with_route_order():
    from icing.forecast import load_forecast
    from icing.runs.screen import screen_routes

    forecast = load_forecast(FORECAST)
    a, b = load_routes(DISPATCH)[0], load_routes(PLAN)[0]

    def ids(routes):
        return {
            s.route_name: [f["properties"]["segment_id"] for f in s.segments]
            for s in screen_routes(routes, forecast, step_km=5.0)
        }

    first, second = ids([a, b]), ids([b, a])
    assert first == second
    assert all(i.startswith("skerrow-regional-dispatch-") for i in first[a.name])
