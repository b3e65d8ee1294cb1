"""Outputs under failure and misuse; usage errors; the limits that size the work.

A run's outputs are written together or not at all: a writer that fails, or a rename
that fails half-way, leaves no new file and every old one as it was. No output may be
an input or another output. Usage mistakes are one line with the fix; ``--help`` stays
whole.
"""

import json
import os
from pathlib import Path

import pytest

from icing.cli import main
from icing.errors import InputError, RouteError
from icing.outputs import atomic
from icing.outputs.atomic import write_together
from icing.route import Route, load_route, sample_route

ROOT = Path(__file__).resolve().parents[1]
ROUTE = str(ROOT / "routes" / "regional-dispatch.geojson")
FORECAST = str(ROOT / "fixtures" / "skerrow-profiles.json")


def _text(s):
    return lambda tmp: tmp.write_text(s)


def test_write_together_writes_all_or_nothing(tmp_path):
    old = tmp_path / "a.txt"
    old.write_text("old")

    def fail(tmp):
        tmp.write_text("half")
        raise OSError(28, "No space left on device")

    files = [(old, _text("new"), "-o"), (tmp_path / "b.txt", fail, "--samples")]
    with pytest.raises(OSError):
        write_together(files)
    assert old.read_text() == "old"  # the old output is kept whole
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt"]  # and no temporary file


def test_a_failed_rename_rolls_back_the_renames_done(tmp_path, monkeypatch):
    a, b = tmp_path / "a.txt", tmp_path / "b.txt"
    a.write_text("old a")
    real = os.replace

    def replace(src, dst):
        if Path(dst) == b:
            raise PermissionError(13, "Permission denied")
        return real(src, dst)

    monkeypatch.setattr(atomic.os, "replace", replace)
    with pytest.raises(PermissionError):
        write_together([(a, _text("new a"), "-o"), (b, _text("new b"), "--samples")])
    monkeypatch.undo()
    assert a.read_text() == "old a"  # renamed, then rolled back
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt"]


def test_folders_made_for_a_failed_run_are_removed(tmp_path):
    deep = tmp_path / "x" / "y" / "out.txt"

    def fail(tmp):
        raise RuntimeError("drawing failed")

    with pytest.raises(RuntimeError):
        write_together([(deep, fail, "--plot")])
    assert list(tmp_path.iterdir()) == []


def test_outputs_never_equal_an_input_or_each_other(tmp_path):
    inp = tmp_path / "route.geojson"
    inp.write_text("{}")
    with pytest.raises(InputError, match="-o would overwrite the route file"):
        write_together([(inp, _text("x"), "-o")], inputs=[(inp, "route file")])
    link = tmp_path / "link.geojson"
    os.link(inp, link)  # another name for the same file
    with pytest.raises(InputError, match="would overwrite the route file"):
        write_together([(link, _text("x"), "-o")], inputs=[(inp, "route file")])
    out = tmp_path / "o.json"
    with pytest.raises(InputError, match="--samples and -o are the same file"):
        write_together(
            [(out, _text("a"), "-o"), (tmp_path / "." / "o.json", _text("b"), "--samples")]
        )
    assert inp.read_text() == "{}" and not out.exists()


def test_a_failing_report_leaves_no_geojson_summary_or_samples(tmp_path, monkeypatch, capsys):
    import icing.outputs.report as report

    def broken(*args, **kwargs):
        raise OSError(28, "No space left on device", str(tmp_path / "r.html"))

    monkeypatch.setattr(report, "write_report", broken)
    old = tmp_path / "h.geojson"
    old.write_text('{"old": true}')
    code = main(
        [
            "screen",
            ROUTE,
            "-f",
            FORECAST,
            "-o",
            str(old),
            "--samples",
            str(tmp_path / "s.csv"),
            "--report",
            str(tmp_path / "r.html"),
        ]
    )
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1 and "r.html" in err
    assert json.loads(old.read_text()) == {"old": True}
    assert sorted(p.name for p in tmp_path.iterdir()) == ["h.geojson"]


def test_screen_refuses_outputs_over_inputs_before_any_work(tmp_path, capsys):
    route = tmp_path / "r.geojson"
    route.write_text(Path(ROUTE).read_text())
    before = route.read_bytes()
    assert main(["screen", str(route), "-f", FORECAST, "-o", str(route)]) == 2
    assert "-o would overwrite the route file" in capsys.readouterr().err
    assert route.read_bytes() == before


# --------------------------------------------------------------------------- usage


@pytest.mark.parametrize(
    "argv, words",
    [
        ([], ["required", "COMMAND"]),
        (["screen"], ["required", "ROUTE", "--forecast", "e.g. `icing screen"]),
        (["scren"], ["invalid choice", "did you mean screen?"]),
        (["screen", ROUTE, "-f", FORECAST, "--fail-of", "severe"], ["did you mean --fail-on?"]),
        (["screen", ROUTE, "-f", FORECAST, "--tas-kt"], ["expected one argument"]),
        (["screen", ROUTE, "-f", FORECAST, "--tas-kt", "1e-300"], ["1..700 kt"]),
        (["profile", "-f", FORECAST, "--lat", "nan", "--lon", "0"], ["--lat", "-90..90"]),
    ],
)
def test_usage_errors_are_one_line_with_the_fix(argv, words, capsys):
    with pytest.raises(SystemExit) as info:
        main(argv)
    err = capsys.readouterr().err
    assert info.value.code == 2
    assert len(err.strip().splitlines()) == 1 and "(fix: " in err
    for w in words:
        assert w in err


def test_help_stays_whole(capsys):
    with pytest.raises(SystemExit) as info:
        main(["screen", "--help"])
    out = capsys.readouterr().out
    assert info.value.code == 0
    assert out.startswith("usage: icing screen") and "--fail-on-tolerance" in out
    assert len(out.splitlines()) > 40


# --------------------------------------------------------------------------- limits


def test_a_tiny_airspeed_is_refused_not_overflowed():
    route = load_route(ROUTE)
    with pytest.raises(RouteError, match="tas_kt 1e-300 kt is below 1 kt"):
        sample_route(route, tas_kt=1e-300)
    # a zero cruise speed from code (not a file) is named as the airframe's, not the route's
    no_speed = Route("r", route.waypoints, departure_time=route.departure_time)
    with pytest.raises(RouteError, match="the airframe's true_airspeed_kt: default_tas_kt 0"):
        sample_route(no_speed, default_tas_kt=0.0)


def test_a_lone_point_feature_keeps_its_own_name_time_and_speed(tmp_path):
    doc = {
        "type": "Feature",
        "properties": {
            "name": "mast inspection",
            "departure_time": "2027-01-14T09:00:00Z",
            "true_airspeed_kt": 30,
            "airframe": "small-multirotor",
            "altitude_reference": "agl",
            "ground_elevation_m": 20.0,
            "hold_min": 12,
        },
        "geometry": {"type": "Point", "coordinates": [-24.5, 57.0, 60.0]},
    }
    path = tmp_path / "hover.geojson"
    path.write_text(json.dumps(doc))
    r = load_route(path)
    assert (r.name, r.true_airspeed_kt, r.airframe) == (
        "mast inspection",
        30.0,
        "small-multirotor",
    )
    assert r.departure_time.isoformat() == "2027-01-14T09:00:00+00:00"
    assert r.ground_elevation_m == 20.0 and r.waypoints[0].hold_min == 12.0
    s = sample_route(r)
    assert s.dt_s.sum() == pytest.approx(12 * 60.0)  # the hover, timed from its departure


def test_an_agl_route_over_profiles_without_ground_is_a_named_gap(tmp_path, capsys):
    corpus = ROOT / "tests" / "data" / "hostile"
    out = tmp_path / "h.geojson"
    route = corpus / "_agl-route.geojson"
    code = main(["screen", str(route), "-f", str(corpus / "forecast-gap-no-surface.json"),
                 "-a", "small-multirotor", "-o", str(out)])  # fmt: skip
    assert code == 0, capsys.readouterr().err
    feats = json.loads(out.read_text())["features"]
    assert feats and all(f["properties"]["kind"] == "coverage-gap" for f in feats)
    assert any("surface-height-unknown" in f["properties"]["gap_reason"] for f in feats)
