"""Pictures of a screening (icing.plot): written, non-trivial, labelled, readable in SVG."""

from __future__ import annotations

import dataclasses
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
    plot_cross_section,
    plot_route_map,
)
from icing.outputs.plot.routemap import _near

SMALL = {"figsize": (8.0, 5.0), "dpi": 80}
SVG = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def screening(make_screening):
    return annotate_segments(make_screening())


def _texts(elem):
    return [" ".join("".join(t.itertext()).split()) for t in elem.iter(f"{SVG}text")]


def _by_id(root, gid):
    found = [e for e in root.iter() if e.get("id") == gid]
    assert found, f"no SVG element with id {gid!r}"
    return found[0]


def _rgb(hex_colour):
    return np.array([int(hex_colour[i : i + 2], 16) for i in (1, 3, 5)]) / 255.0


def _assert_nothing_cut_off(img):
    """The outermost rows and columns are blank: no title, label or legend runs off."""
    rgb = img[..., :3]
    for edge in (rgb[:3], rgb[-3:], rgb[:, :3], rgb[:, -3:]):
        assert edge.min() > 0.95, "something is drawn at the picture's edge (cut off)"


def test_cross_section_png_is_written_and_non_trivial(tmp_path, screening):
    out = plot_cross_section(screening, tmp_path / "xs.png", **SMALL)
    assert out == tmp_path / "xs.png" and out.stat().st_size > 20_000
    img = matplotlib.image.imread(out)
    # about 5 x 8 in at 80 dpi: the page is fitted to what is drawn (nothing cut off)
    assert 300 < img.shape[0] < 700 and 500 < img.shape[1] < 900
    _assert_nothing_cut_off(img)
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
    # the flight's own times (not every forecast valid time) and a time axis
    assert "departs 2027-01-14 12:00 UTC" in all_text and "planned time [UTC]" in all_text
    assert "9000 ft" in all_text and "3000 ft" in all_text  # nearest candidates marked
    # (4,000 ft is cloud inside the +2 C margin above freezing: 3,000 ft)


def test_cross_section_pressure_and_warm_nose(tmp_path, make_screening):
    scr = annotate_segments(make_screening(warm_nose=True, altitude_reference="pressure"))
    root = ET.parse(plot_cross_section(scr, tmp_path / "w.svg", **SMALL)).getroot()
    text = " ".join(_texts(root))
    assert "flight level" in text and "FL040" in text
    assert "SLD: freezing rain" in text


def test_cross_section_without_segments_or_provenance(tmp_path, make_screening):
    scr = dataclasses.replace(make_screening(gap=False), segments=[], provenance={}, waypoints=[])
    out = plot_cross_section(scr, tmp_path / "bare.png", title="bare", **SMALL)
    assert out.stat().st_size > 10_000


def test_route_map_png_and_svg(tmp_path, screening, make_screening):
    other = make_screening(warm_nose=True)
    png = plot_route_map([screening, other], tmp_path / "map.png", **SMALL)
    img = matplotlib.image.imread(png)
    assert png.stat().st_size > 20_000
    _assert_nothing_cut_off(img)
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
    from icing.outputs.plot.section import _altitude_top_ft

    rows = np.arange(0.0, 12001.0, 500.0)
    # A drone at 400 ft: three times its height, at least 3,000 ft above it.
    assert _altitude_top_ft(rows, np.array([100.0, 400.0]), []) == 3400.0
    # A nearest candidate higher up stays in view; the curtain top caps the range.
    opts = [{"vertical_options": {"above": {"altitude_ft": 9000}}}]
    assert _altitude_top_ft(rows, np.array([400.0]), opts) == 10000.0
    assert _altitude_top_ft(rows, np.array([9000.0]), []) == 12000.0
    # A path above the curtain is always inside the picture.
    assert _altitude_top_ft(rows, np.array([13000.0]), []) == 13500.0


def test_map_has_coastlines_forecast_area_route_names_and_holds(tmp_path, make_screening):
    # the fixture route lies off the west coast of Scotland (about 56 N, 6-8 W)
    scr = dataclasses.replace(
        make_screening(), provenance={"bounds": [-9.0, 55.5, -4.0, 57.5], "issue_time": "x"}
    )
    root = ET.parse(plot_route_map(scr, tmp_path / "m.svg", **SMALL)).getroot()
    assert _by_id(root, "coastlines") is not None  # the bundled Natural Earth coast
    assert _by_id(root, "forecast-area") is not None
    text = " ".join(_texts(root))
    assert scr.route_name in text and "coast (Natural Earth)" in text


def test_map_labels_never_overlap():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from icing.outputs.plot.routemap import _place_labels

    fig = Figure(figsize=(6, 4))
    FigureCanvasAgg(fig)
    ax = fig.add_axes([0.1, 0.1, 0.8, 0.8])
    ax.set_xlim(0, 10)
    ax.set_ylim(0, 10)
    # twenty labels crowded on three points, as waypoints shared by several routes are
    labels = [(5.0 + (i % 3) * 0.05, 5.0, f"point-{i:02d}", {"fontsize": 7}) for i in range(20)]
    _place_labels(fig, ax, labels)
    renderer = fig.canvas.get_renderer()
    boxes = [t.get_window_extent(renderer) for t in ax.texts]
    assert 3 <= len(boxes) < 20  # some fit, the rest are left out rather than overlapped
    for i, a in enumerate(boxes):
        for b in boxes[i + 1 :]:
            assert not a.overlaps(b)


def test_isotherms_are_not_drawn_through_coverage_gaps(tmp_path, make_screening, monkeypatch):
    from icing.outputs.plot import section

    scr = make_screening()
    temp = np.array(scr.curtain.temperature_c)
    gap = (np.asarray(scr.curtain.severity) == codes.GAP) & ~scr.curtain.below_ground
    temp[gap] = -5.0  # a temperature where the forecast gave nothing usable
    scr = dataclasses.replace(scr, curtain=dataclasses.replace(scr.curtain, temperature_c=temp))
    seen = {}
    original = section._draw_isotherms
    monkeypatch.setattr(
        section, "_draw_isotherms", lambda ax, fr, t: (seen.update(t=t), original(ax, fr, t))
    )
    plot_cross_section(scr, tmp_path / "g.png", **SMALL)
    assert gap.any() and np.isnan(seen["t"][gap]).all()


def test_drones_get_a_close_view_of_their_band():
    from icing.outputs.plot.section import _altitude_top_ft

    rows = np.arange(0.0, 12001.0, 50.0)
    # a drone at 300 ft in a 400 ft band: twice its height, 300 ft above the band's top
    assert _altitude_top_ft(rows, np.array([30.0, 300.0]), [], band_top_ft=400.0) == 700.0
