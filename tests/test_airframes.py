"""Airframe presets and user airframe files (icing.airframes).

Check values: the NACA 4-digit leading-edge radius r_LE = 1.1019 t^2 c (Abbott & von
Doenhoff 1959, Theory of Wing Sections, sec. 6.4, from memory); unit conversions by
definition (international knot and foot). Preset numbers are our own invented
classes (regression of the preset file, not physics checks).
"""

from __future__ import annotations

import json
import math

import pytest

from icing.airframes import (
    PROTECTIONS,
    Airframe,
    Collector,
    airframes_to_json,
    format_airframes,
    list_airframes,
    load_airframe,
)
from icing.errors import AirframeError, InputError

PRESETS = {
    # name: (true airspeed kt, protection, reference collector) -- the preset file
    "small-multirotor": (25, "none", "propeller"),
    "fixed-wing-uas": (55, "none", "wing"),
    "light-piston": (120, "none", "outer-wing"),
    "twin-turboprop": (270, "de-ice", "outer-wing"),
    "regional-jet": (440, "anti-ice", "outer-wing"),
    "light-helicopter": (110, "none", "main-rotor"),
}


def test_presets_present_with_their_key_numbers():
    frames = {a.name: a for a in list_airframes()}
    assert set(PRESETS) <= set(frames)
    for name, (tas, prot, ref) in PRESETS.items():
        a = frames[name]
        assert a.true_airspeed_kt == tas and a.ice_protection == prot and a.reference == ref
        assert a.source == "preset"
        assert a.collector(ref).critical
        assert a.ice_tolerance_mm > 0


def test_units_by_definition():
    a = load_airframe("light-piston")
    assert a.cruise_tas == pytest.approx(120 * 1852 / 3600, rel=1e-12)  # international knot
    assert a.ceiling_m == pytest.approx(14000 * 0.3048, rel=1e-12)  # international foot
    assert load_airframe("small-multirotor").max_altitude_agl_ft == 400


def test_airfoil_equivalent_cylinder():
    # D = 2 r_LE, r_LE = 1.1019 t^2 c (NACA 4-digit; Abbott & von Doenhoff, from memory)
    c = Collector(name="w", shape="airfoil", chord_m=1.4, thickness_ratio=0.12)
    assert c.diameter == pytest.approx(2 * 1.1019 * 0.12**2 * 1.4, rel=1e-12)
    assert float(c.speed(60.0)) == 60.0


def test_rotor_relative_speed():
    # sqrt((omega r)^2 + V^2), omega = 2 pi rpm / 60 (definition)
    c = Collector(
        name="r", shape="rotor", chord_m=0.3, thickness_ratio=0.12, section_radius_m=3.6, rpm=400
    )
    w = 2 * math.pi * 400 / 60 * 3.6
    assert c.rotation_speed == pytest.approx(w, rel=1e-12)
    assert float(c.speed(50.0)) == pytest.approx(math.hypot(w, 50.0), rel=1e-12)
    assert float(c.speed(0.0)) == pytest.approx(w)  # hover


def test_cylinder_is_itself():
    c = Collector(name="strut", shape="cylinder", diameter_m=0.08)
    assert c.diameter == 0.08 and c.rotation_speed == 0.0


def test_describe_is_json_and_complete():
    for a in list_airframes():
        d = a.describe()
        json.dumps(d)
        assert d["name"] == a.name and d["ice_protection"] in PROTECTIONS
        assert [c["name"] for c in d["collectors"]] == [c.name for c in a.collectors]
        assert all(c["equivalent_diameter_m"] > 0 for c in d["collectors"])
    assert json.loads(json.dumps(airframes_to_json(list_airframes())))[0]["collectors"]


def test_format_airframes_lists_every_preset_and_collector():
    text = format_airframes(list_airframes())
    for a in list_airframes():
        assert a.name in text
        for c in a.collectors:
            assert c.name in text


def test_dataclasses_are_frozen():
    a = load_airframe("light-piston")
    with pytest.raises(AttributeError):
        a.name = "x"
    with pytest.raises(AttributeError):
        a.collectors[0].chord_m = 2.0
    assert isinstance(a, Airframe)


def test_load_returns_airframe_unchanged():
    a = load_airframe("regional-jet")
    assert load_airframe(a) is a


GOOD = """\
name = "survey-drone"
true_airspeed_kt = 30
ice_tolerance_mm = 1.5
ceiling_ft = 12000
ice_protection = "none"
reference = "prop"

[[collectors]]
name = "prop"
shape = "rotor"
chord_m = 0.03
thickness_ratio = 0.1
section_radius_m = 0.12
rpm = 5000

[[collectors]]
name = "boom"
shape = "cylinder"
diameter_m = 0.025
critical = false
"""


def test_user_file_speed_schedule_loads(tmp_path):
    # the [speeds] table (DEVELOPERS.md, "How to add an airframe"); without it the
    # cruise true airspeed in every phase and no indicated-speed limit
    p = tmp_path / "drone.toml"
    p.write_text(
        GOOD.replace(
            'reference = "prop"\n',
            'reference = "prop"\n[speeds]\nclimb_ias_kt = 20\nholding_ias_kt = 0\n',
        )
    )
    a = load_airframe(p)
    assert a.schedule.climb_ias_kt == 20.0 and a.schedule.holding_ias_kt == 0.0
    assert a.schedule.speed_limit == "none" and a.schedule.cruise_tas_kt == 30.0
    plain = tmp_path / "plain.toml"
    plain.write_text(GOOD)
    s = load_airframe(plain).schedule
    assert s.cruise_tas_kt == 30.0 and s.climb_ias_kt is None and s.speed_limit == "none"


def test_user_file_loads(tmp_path):
    p = tmp_path / "drone.toml"
    p.write_text(GOOD)
    a = load_airframe(p)
    assert a.name == "survey-drone" and a.source == str(p)
    assert a.reference == "prop" and a.ceiling_ft == 12000
    assert [c.name for c in a.collectors] == ["prop", "boom"]
    assert not a.collector("boom").critical
    assert load_airframe(str(p)) == a


def _replace(old, new):
    assert old in GOOD
    return GOOD.replace(old, new)


BAD = [
    # (content, words the one-line message must contain)
    ("name = [unclosed", ["not valid TOML"]),
    (_replace('name = "survey-drone"\n', ""), ["'name'", "fix"]),
    (_replace("true_airspeed_kt = 30\n", ""), ["'true_airspeed_kt'", "add true_airspeed_kt"]),
    (_replace("ice_tolerance_mm = 1.5\n", ""), ["'ice_tolerance_mm'", "add ice_tolerance_mm"]),
    (_replace("true_airspeed_kt = 30", 'true_airspeed_kt = "fast"'), ["must be a number"]),
    (_replace("ice_tolerance_mm = 1.5", "ice_tolerance_mm = -1"), ["must be positive"]),
    (
        _replace('ice_protection = "none"', 'ice_protection = "heated"'),
        ["'ice_protection'", "none, de-ice"],
    ),
    (_replace("ceiling_ft = 12000", "ceilng_ft = 12000"), ["unknown key 'ceilng_ft'"]),
    (
        _replace('shape = "cylinder"', 'shape = "sphere"'),
        ["unknown shape 'sphere'", "cylinder, airfoil, rotor"],
    ),
    (_replace('shape = "cylinder"\n', ""), ["missing key 'shape'", "collectors[1]"]),
    (_replace("diameter_m = 0.025", "width_m = 0.025"), ["unknown key 'width_m'"]),
    (
        _replace("section_radius_m = 0.12\n", ""),
        ["missing key 'section_radius_m'", "collectors[0] (prop)"],
    ),
    (_replace("thickness_ratio = 0.1", "thickness_ratio = 12"), ["'thickness_ratio'", "fraction"]),
    (_replace('name = "boom"', 'name = "prop"'), ["duplicate collector name 'prop'"]),
    (_replace('reference = "prop"', 'reference = "wing"'), ["'reference' names no collector"]),
    (_replace('reference = "prop"', 'reference = "boom"'), ["not critical"]),
    (_replace("critical = false", 'critical = "no"'), ["'critical' must be true or false"]),
    (GOOD.split("[[collectors]]")[0], ["missing key 'collectors'"]),
    (
        'name = "x"\ntrue_airspeed_kt = 1\nice_tolerance_mm = 1\ncollectors = 3\n',
        ["'collectors' must be an array of tables"],
    ),
    (_replace('reference = "prop"\n', 'reference = "prop"\nspeeds = 3\n'), ["'speeds'"]),
    (
        _replace('reference = "prop"\n', 'reference = "prop"\n[speeds]\nclimb_kt = 20\n'),
        ["unknown key 'climb_kt'", "climb_ias_kt"],
    ),
    (
        _replace('reference = "prop"\n', 'reference = "prop"\n[speeds]\nspeed_limit = "fast"\n'),
        ["'speed_limit'", "14 CFR 91.117(a)"],
    ),
    (
        _replace('reference = "prop"\n', 'reference = "prop"\n[speeds]\nholding_ias_kt = -5\n'),
        ["'holding_ias_kt' must be >= 0"],
    ),
]


@pytest.mark.parametrize("content, words", BAD)
def test_bad_user_file_one_line_error(tmp_path, content, words):
    p = tmp_path / "bad.toml"
    p.write_text(content)
    with pytest.raises(AirframeError) as info:
        load_airframe(p)
    msg = str(info.value)
    assert "\n" not in msg  # one line
    assert str(p) in msg  # names the file
    assert "(fix:" in msg  # and the fix
    for w in words:
        assert w in msg
    assert isinstance(info.value, InputError) and isinstance(info.value, ValueError)


def test_unknown_preset_names_the_presets():
    with pytest.raises(AirframeError) as info:
        load_airframe("jumbo-jet")
    msg = str(info.value)
    assert "unknown airframe 'jumbo-jet'" in msg and "light-piston" in msg and "\n" not in msg


def test_missing_file(tmp_path):
    with pytest.raises(AirframeError, match="cannot read the file"):
        load_airframe(tmp_path / "nope.toml")


def test_file_in_the_preset_layout(tmp_path):
    # one [[airframes]] table, as in the preset file, loads; several are refused
    one = tmp_path / "one.toml"
    body = GOOD.replace("[[collectors]]", "[[airframes.collectors]]")
    one.write_text("[[airframes]]\n" + body)
    assert load_airframe(one).name == "survey-drone"
    two = tmp_path / "two.toml"
    two.write_text(
        "[[airframes]]\n" + body + "\n[[airframes]]\n" + body.replace("survey-drone", "other")
    )
    with pytest.raises(AirframeError, match=r"2 \[\[airframes\]\] tables \(survey-drone, other\)"):
        load_airframe(two)
