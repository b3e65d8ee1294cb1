"""The ``icing`` command: exit codes, outputs, bad input (docs/contracts.md, section 1).

Contract tests on the demo scenario (invented data; no physics value is checked here).
"""

import json
import subprocess
import sys
from pathlib import Path

import geojson
import jsonschema
import pytest

from icing.caution import CAUTION
from icing.cli import main

ROOT = Path(__file__).resolve().parents[1]
ROUTE = ROOT / "routes" / "regional-dispatch.geojson"
FORECAST = ROOT / "fixtures" / "skerrow-latlon.nc"
PROFILES = ROOT / "fixtures" / "skerrow-profiles.json"
SCHEMA = json.loads((ROOT / "icing" / "data" / "schemas" / "hazards-v1.json").read_text())


def run(*args):
    return main([str(a) for a in args])


def test_version_and_help(capsys):
    with pytest.raises(SystemExit) as e:
        run("--version")
    assert e.value.code == 0
    assert "icing" in capsys.readouterr().out
    for sub in ("screen", "profile", "demo", "airframes"):
        with pytest.raises(SystemExit) as e:
            run(sub, "--help")
        assert e.value.code == 0


def test_python_dash_m_runs():
    r = subprocess.run(
        [sys.executable, "-m", "icing", "--version"], capture_output=True, text=True
    )
    assert r.returncode == 0 and "icing" in r.stdout


def test_usage_error_exits_2(capsys):
    with pytest.raises(SystemExit) as e:
        run("screen")
    assert e.value.code == 2


def test_screen_writes_valid_geojson_and_sibling_json(tmp_path, capsys):
    out = tmp_path / "h.geojson"
    code = run(
        "screen",
        ROUTE,
        "--forecast",
        FORECAST,
        "--airframe",
        "twin-turboprop",
        "-o",
        out,
        "--samples",
        tmp_path / "s.csv",
    )
    text = capsys.readouterr().out
    assert code == 0
    assert "CAUTION" in text
    fc = json.loads(out.read_text())
    assert geojson.loads(out.read_text()).is_valid
    jsonschema.validate(fc, SCHEMA)
    assert all(f["properties"]["caution"] == CAUTION for f in fc["features"])
    side = json.loads((tmp_path / "h.summary.json").read_text())
    assert side["summaries"] == fc["summaries"] and side["caution"] == CAUTION
    assert (tmp_path / "s.csv").read_text().startswith("route,index,lat,lon")


def test_json_summary_and_fail_on(tmp_path, capsys):
    code = run(
        "screen",
        ROUTE,
        "--forecast",
        FORECAST,
        "--airframe",
        "twin-turboprop",
        "--json",
        "--fail-on",
        "trace",
    )
    out = json.loads(capsys.readouterr().out)
    assert out["caution"] == CAUTION
    worst = out["summaries"][0]["worst_severity"]
    assert code == (3 if worst not in (None, "none") else 0)


def test_route_outside_forecast_is_gap_and_fail_on_gap(tmp_path, capsys):
    route = tmp_path / "far.csv"
    route.write_text(
        "name,lat,lon,altitude_ft,time\nFARAA,10.0,100.0,5000,2027-01-14T09:00:00Z\n"
        "FARBB,10.2,100.3,5000,2027-01-14T09:10:00Z\n"
    )
    code = run(
        "screen", route, "--forecast", FORECAST, "-a", "light-piston", "--json", "--fail-on-gap"
    )
    out = json.loads(capsys.readouterr().out)
    s = out["summaries"][0]
    assert s["worst_severity"] is None  # unknown, never "none"
    assert s["gap_km"] > 0
    assert code == 3


@pytest.mark.parametrize(
    "content, suffix",
    [
        ("{not json", ".geojson"),
        ('{"type": "Feature", "geometry": {"type": "Polygon", "coordinates": []}}', ".geojson"),
        ("name,lat,lon,altitude_ft\nAAAAA,95,0,1000\nBBBBB,50,0,1000\n", ".csv"),
        ("<gpx><rte>", ".gpx"),
    ],
)
def test_bad_route_exits_2_one_line_nothing_written(tmp_path, capsys, content, suffix):
    bad = tmp_path / f"bad{suffix}"
    bad.write_text(content)
    out = tmp_path / "out.geojson"
    code = run("screen", bad, "--forecast", FORECAST, "-o", out)
    err = capsys.readouterr().err.strip()
    assert code == 2
    assert len(err.splitlines()) == 1 and str(bad) in err and "Traceback" not in err
    assert not out.exists() and not list(tmp_path.glob("*.part"))


def test_missing_forecast_file_exits_2(tmp_path, capsys):
    code = run("screen", ROUTE, "--forecast", tmp_path / "nope.nc")
    err = capsys.readouterr().err
    assert code == 2 and "nope.nc" in err and len(err.strip().splitlines()) == 1


def test_unknown_airframe_exits_2(capsys):
    code = run("screen", ROUTE, "--forecast", FORECAST, "--airframe", "no-such-airframe")
    err = capsys.readouterr().err
    assert code == 2 and "no-such-airframe" in err


def test_depart_without_zone_exits_2(capsys):
    code = run("screen", ROUTE, "--forecast", FORECAST, "--depart", "2027-01-14T09:00:00")
    assert code == 2 and "zone" in capsys.readouterr().err


def test_profile_json(capsys):
    code = run(
        "profile",
        "--forecast",
        PROFILES,
        "--at=57.0,-24.5",
        "--airframe",
        "light-piston",
        "--json",
    )
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    assert out["caution"] == CAUTION
    if out["covered"]:
        keys = {
            "pressure_hpa",
            "height_m",
            "temperature_c",
            "relative_humidity_pct",
            "cloud",
            "lwc_g_m3",
            "mvd_um",
            "sld",
            "collection_efficiency",
            "accretion_rate_mm_h",
            "ice_type",
            "severity",
        }
        assert keys <= set(out["levels"][0])


def test_airframes_lists_presets(capsys):
    assert run("airframes") == 0
    assert capsys.readouterr().out.strip()
    assert run("airframes", "--json") == 0
    frames = json.loads(capsys.readouterr().out)
    assert len(frames) >= 5


def test_demo_writes_everything(tmp_path, capsys):
    out = tmp_path / "demo"
    assert run("demo", "--out", out) == 0
    text = capsys.readouterr().out
    assert "CAUTION" in text
    fc = json.loads((out / "demo.geojson").read_text())
    jsonschema.validate(fc, SCHEMA)
    assert len(fc["summaries"]) >= 3
    assert list(out.glob("cross-section-*.png")) and (out / "map.png").exists()
    assert (out / "report.html").exists()


def test_unreadable_route_exits_2_one_line(tmp_path, capsys):
    import os

    if os.geteuid() == 0:
        pytest.skip("root reads any file")
    bad = tmp_path / "locked.csv"
    bad.write_text("name,lat,lon,altitude_ft\n")
    bad.chmod(0)
    assert run("screen", bad, "--forecast", FORECAST) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "locked.csv" in err


def test_unwritable_output_exits_2_one_line(tmp_path, capsys):
    blocker = tmp_path / "file"
    blocker.write_text("")
    code = run(
        "screen",
        ROUTE,
        "--forecast",
        FORECAST,
        "--airframe",
        "twin-turboprop",
        "-o",
        blocker / "sub" / "out.geojson",
    )
    err = capsys.readouterr().err.strip()
    assert code == 2 and len(err.splitlines()) == 1 and "Traceback" not in err
