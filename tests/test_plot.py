"""Pictures of a screening (icing.plot): written, non-trivial, labelled, readable in SVG."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import matplotlib.image
import numpy as np
import pytest

from icing import codes
from icing.caution import CAUTION_SHORT
from icing.errors import InputError
from icing.hazards.avoidance import annotate_segments
from icing.outputs.atomic import replace_atomically
from icing.outputs.plot import (
    GAP_LABEL,
    SEVERITY_COLOURS,
    _near,
    plot_cross_section,
    plot_route_map,
)

SMALL = {"figsize": (8.0, 5.0), "dpi": 80}
SVG = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def screening(make_screening):
    scr = make_screening()
    annotate_segments(scr)
    return scr


def _texts(elem):
    return [" ".join("".join(t.itertext()).split()) for t in elem.iter(f"{SVG}text")]


def _by_id(root, gid):
    found = [e for e in root.iter() if e.get("id") == gid]
    assert found, f"no SVG element with id {gid!r}"
    return found[0]


def _rgb(hex_colour):
    return np.array([int(hex_colour[i : i + 2], 16) for i in (1, 3, 5)]) / 255.0


def test_cross_section_png_is_written_and_non_trivial(tmp_path, screening):
    out = plot_cross_section(screening, tmp_path / "xs.png", **SMALL)
    assert out == tmp_path / "xs.png" and out.stat().st_size > 20_000
    img = matplotlib.image.imread(out)
    assert img.shape[:2] == (400, 640)  # 5 x 8 in at 80 dpi, no tight cropping
    rgb = img[..., :3].reshape(-1, 3)
    assert len(np.unique(np.round(rgb * 255).astype(int), axis=0)) > 50
    # Every severity the fixture holds is painted in its own colour (pcolormesh cells are
    # flat; 2/255 allows for the PNG's 8-bit rounding).
    for k in (codes.SEV_LIGHT, codes.SEV_MODERATE, codes.SEV_SEVERE):
        assert (np.abs(rgb - _rgb(SEVERITY_COLOURS[k])).max(axis=1) < 2 / 255).any()
    assert not list(tmp_path.glob(".*.part"))


def test_cross_section_svg_has_caution_legend_and_gap_label(tmp_path, screening):
    out = plot_cross_section(screening, tmp_path / "xs.svg", **SMALL)
    root = ET.parse(out).getroot()
    caution = " ".join(_texts(_by_id(root, "caution")))
    assert caution == " ".join(CAUTION_SHORT.split())
    legend = _texts(_by_id(root, "legend"))
    for word in ("trace", "light", "moderate", "severe"):
        assert word in legend
    assert GAP_LABEL in legend
    assert any("freezing drizzle" in t for t in legend)
    assert any("official advisories" in t for t in legend)
    gap_labels = [" ".join(_texts(e)) for e in root.iter() if e.get("id") == "gap-label"]
    assert gap_labels and all(GAP_LABEL in t for t in gap_labels)
    all_text = " ".join(_texts(root))
    for label in ("0 \u00b0C", "-10 \u00b0C", "-20 \u00b0C", "SKERROW", "TORRISH"):
        assert label in all_text
    title = " ".join(_texts(_by_id(root, "title")))
    assert screening.route_name in title and screening.airframe_name in title
    assert "2027-01-14T12:00:00Z" in all_text  # the valid times from the provenance
    # nearest candidates marked (4,000 ft is cloud inside the +2 C margin: 3,000 ft)
    assert "9000 ft" in all_text and "3000 ft" in all_text


def test_cross_section_pressure_and_warm_nose(tmp_path, make_screening):
    scr = make_screening(warm_nose=True, altitude_reference="pressure")
    annotate_segments(scr)
    root = ET.parse(plot_cross_section(scr, tmp_path / "w.svg", **SMALL)).getroot()
    text = " ".join(_texts(root))
    assert "flight level" in text and "FL040" in text
    assert "SLD: freezing rain" in text


def test_cross_section_without_segments_or_provenance(tmp_path, make_screening):
    scr = make_screening(gap=False)
    scr.segments, scr.provenance, scr.waypoints = [], {}, []
    out = plot_cross_section(scr, tmp_path / "bare.png", title="bare", **SMALL)
    assert out.stat().st_size > 10_000


def test_route_map_png_and_svg(tmp_path, screening, make_screening):
    other = make_screening(warm_nose=True)
    png = plot_route_map([screening, other], tmp_path / "map.png", **SMALL)
    img = matplotlib.image.imread(png)
    assert img.shape[:2] == (400, 640) and png.stat().st_size > 20_000
    root = ET.parse(plot_route_map(screening, tmp_path / "map.svg", **SMALL)).getroot()
    assert " ".join(_texts(_by_id(root, "caution"))) == " ".join(CAUTION_SHORT.split())
    legend = _texts(_by_id(root, "legend"))
    for word in ("trace", "light", "moderate", "severe", GAP_LABEL, "waypoint"):
        assert word in legend
    assert " ".join(_texts(_by_id(root, "scale-bar"))).endswith("km")
    text = " ".join(_texts(root))
    assert "VANNOCH" in text and "\u00b0W" in text and "\u00b0N" in text


def test_route_map_across_the_antimeridian(tmp_path, make_screening):
    scr = make_screening(antimeridian=True)
    root = ET.parse(plot_route_map(scr, tmp_path / "am.svg", **SMALL)).getroot()
    text = " ".join(_texts(root))
    assert "\u00b0E" in text and "\u00b0W" in text  # both sides of 180 deg on one view
    lon = _near(scr.samples.lon, 180.0)
    assert np.ptp(lon) < 3.0 and np.all(np.diff(lon) > 0)  # one continuous track


def test_bad_picture_paths(tmp_path, screening):
    with pytest.raises(InputError, match=r"\.png or \*\.svg"):
        plot_cross_section(screening, tmp_path / "xs.jpg", **SMALL)
    with pytest.raises(InputError, match="does not exist"):
        plot_route_map(screening, tmp_path / "missing" / "map.png", **SMALL)


def test_nothing_half_written(tmp_path):
    target = tmp_path / "keep.png"
    target.write_bytes(b"old")

    def broken(tmp):
        tmp.write_bytes(b"partial")
        raise RuntimeError("disk full")

    with pytest.raises(RuntimeError):
        replace_atomically(target, broken)
    assert target.read_bytes() == b"old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.png"]


def test_low_flights_get_a_closer_altitude_range():
    from icing.outputs.plot import _altitude_top_ft

    rows = np.arange(0.0, 12001.0, 500.0)
    # A drone at 400 ft: three times its height, at least 3,000 ft above it.
    assert _altitude_top_ft(rows, np.array([100.0, 400.0]), []) == 3400.0
    # A nearest candidate higher up stays in view; the curtain top caps the range.
    opts = [{"vertical_options": {"above": {"altitude_ft": 9000}}}]
    assert _altitude_top_ft(rows, np.array([400.0]), opts) == 10000.0
    assert _altitude_top_ft(rows, np.array([9000.0]), []) == 12000.0
    # A path above the curtain is always inside the picture.
    assert _altitude_top_ft(rows, np.array([13000.0]), []) == 13500.0
