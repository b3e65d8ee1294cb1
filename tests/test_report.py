"""The HTML report (icing.report): parsed back with html.parser, never string-matched only."""

from __future__ import annotations

import base64
import io
from html.parser import HTMLParser

import matplotlib.image
import pytest

from icing.caution import CAUTION
from icing.errors import InputError
from icing.hazards.avoidance import annotate_segments
from icing.outputs.report import write_report

FAST = {"dpi": 40}


class _Page(HTMLParser):
    """Collects tags, attributes, the text under each id and table rows."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags = []
        self.stack = []  # open elements: (tag, id)
        self.text_by_id = {}
        self.tables = {}  # id -> list of rows (list of cell texts)
        self._table = None
        self._row = None
        self._cell = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag not in ("img", "meta", "br"):
            self.stack.append((tag, a.get("id")))
        if tag == "table":
            self._table = a.get("id") or f"table-{len(self.tables)}"
            self.tables[self._table] = []
        elif tag == "tr" and self._table is not None:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append(" ".join("".join(self._cell).split()))
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.tables[self._table].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None
        while self.stack:
            t, _ = self.stack.pop()
            if t == tag:
                break

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        for _, gid in self.stack:
            if gid:
                self.text_by_id[gid] = self.text_by_id.get(gid, "") + data


def _parse(path):
    page = _Page()
    page.feed(path.read_text(encoding="utf-8"))
    page.close()
    return page


@pytest.fixture(scope="module")
def routes(make_screening):
    a = make_screening()
    b = make_screening(warm_nose=True, altitude_reference="pressure")
    return [annotate_segments(a), annotate_segments(b)]


@pytest.fixture(scope="module")
def page(routes, tmp_path_factory):
    out = write_report(routes, tmp_path_factory.mktemp("rep") / "report.html", **FAST)
    return out, _parse(out)


def test_caution_at_top_and_bottom(page):
    _, p = page
    for gid in ("caution-top", "caution-bottom"):
        assert " ".join(p.text_by_id[gid].split()) == " ".join(CAUTION.split())
    ids = [a.get("id") for _, a in p.tags if a.get("id")]
    assert ids[0] == "caution-top" and ids[-1] == "caution-bottom"


def test_summary_table_has_one_row_per_route(page, routes):
    _, p = page
    rows = p.tables["summary"]
    header, body = rows[0], rows[1:]
    assert header[:2] == ["route", "airframe"] and "worst icing" in header
    assert [r[0] for r in body] == [s.route_name for s in routes]
    col = header.index("worst icing")
    # over the screened part: the fixture's routes have a coverage gap, and say so
    assert [r[col] for r in body] == [s.summary["worst_severity"] + " + gaps" for s in routes]


def test_pictures_are_embedded_and_decode(page, routes):
    out, p = page
    imgs = [a for t, a in p.tags if t == "img"]
    assert len(imgs) == 1 + len(routes)  # one map, one cross-section per route
    for a in imgs:
        src = a["src"]
        assert src.startswith("data:image/png;base64,") and a.get("alt")
        raw = base64.b64decode(src.split(",", 1)[1])
        assert raw[:8] == b"\x89PNG\r\n\x1a\n"
        img = matplotlib.image.imread(io.BytesIO(raw), format="png")
        assert min(img.shape[:2]) > 100
    # No network: nothing refers to a remote resource.
    for _, a in p.tags:
        for key in ("src", "href"):
            assert not str(a.get(key, "")).startswith(("http:", "https:", "//"))
    assert out.stat().st_size > 50_000


def test_segment_list_candidates_assumptions_and_provenance(page, routes):
    _, p = page
    for i, s in enumerate(routes, start=1):
        rows = p.tables[f"segments-{i}"]
        assert len(rows) - 1 == len(s.segments)
        ids = [r[0] for r in rows[1:]]
        assert ids == [f["properties"]["segment_id"] for f in s.segments]
    gap_rows = [r for r in p.tables["segments-1"] if "coverage gap" in " ".join(r)]
    assert gap_rows and "not 'no icing'" in " ".join(gap_rows[0])
    text = " ".join(p.text_by_id["route-1"].split())
    assert "to check against official advisories" in text and "9000" in text
    assert "FL040" in " ".join(p.text_by_id["route-2"].split())
    assumptions = p.text_by_id["assumptions"]
    for word in (
        "air_mass",
        "maritime",
        "sub_adiabatic_factor",
        "coverage_radius_km",
        "finstad88",
    ):
        assert word in assumptions
    assert "2027-01-14T12:00:00Z" in p.text_by_id["provenance"]


def test_text_is_escaped(tmp_path, make_screening):
    scr = make_screening(route_name="<script>alert(1)</script> & co", gap=False)
    out = write_report(
        scr, tmp_path / "esc.html", pictures=False, assumptions={"<b>key</b>": "a < b"}, **FAST
    )
    p = _parse(out)
    assert not [t for t, _ in p.tags if t in ("script", "b")]
    assert "<script>alert(1)</script> & co" in p.tables["summary"][1][0]
    assert "a < b" in p.text_by_id["assumptions"]
    assert not [t for t, _ in p.tags if t == "img"]


def test_svg_pictures_and_argument_provenance(tmp_path, routes):
    out = write_report(
        routes[0],
        tmp_path / "svg.html",
        picture_format="svg",
        provenance={"forecast_files": ["other.nc"]},
        **FAST,
    )
    p = _parse(out)
    srcs = [a["src"] for t, a in p.tags if t == "img"]
    assert srcs and all(s.startswith("data:image/svg+xml;base64,") for s in srcs)
    svg = base64.b64decode(srcs[0].split(",", 1)[1]).decode("utf-8")
    assert 'id="caution"' in svg
    assert "other.nc" in p.text_by_id["provenance"]


def test_bad_report_arguments(tmp_path, routes):
    with pytest.raises(InputError, match=r"\*\.html"):
        write_report(routes, tmp_path / "r.pdf")
    with pytest.raises(InputError, match="does not exist"):
        write_report(routes, tmp_path / "no" / "r.html")
    with pytest.raises(InputError, match="'png' or 'svg'"):
        write_report(routes, tmp_path / "r.html", picture_format="gif")
    assert not list(tmp_path.iterdir())  # nothing written, nothing half-written


def test_outcome_line_holds_and_collapsed_detail(page, routes):
    _, p = page
    for i, s in enumerate(routes, start=1):
        line = " ".join(p.text_by_id[f"outcome-{i}"].split())
        assert line.startswith("Worst icing on the route:") and line.endswith(".")
        assert s.summary["worst_severity"] in line
    # the segment tables sit inside <details> (collapsed until opened)
    opened = []
    for tag, a in p.tags:
        if tag == "details":
            opened.append(a)
        if tag == "table" and str(a.get("id", "")).startswith("segments-"):
            assert opened, "segment table outside a collapsed <details>"


def test_assumptions_are_worded_for_users(page):
    out, p = page
    text = out.read_text(encoding="utf-8")
    assert "What this estimate assumes" in text
    plain = " ".join(p.text_by_id["assumptions-plain"].split())
    assert "Cloud liquid is the larger" in plain and "most exposed part" in plain
    # internal wording is translated for readers, everywhere in the report
    assert "from memory" not in text


def test_unchecked_values_are_said_so_plainly(tmp_path, make_screening):
    scr = make_screening(gap=False)
    out = write_report(
        scr,
        tmp_path / "u.html",
        pictures=False,
        assumptions={"column": {"appendix_c_envelopes": "maxima, values from memory"}},
    )
    plain = " ".join(_parse(out).text_by_id["assumptions-plain"].split())
    assert "Not yet checked against their published source" in plain
    assert "appendix_c_envelopes" in plain and "from memory" not in plain


def test_plain_outcome_lines():
    from icing.outputs.report import plain_outcome

    assert plain_outcome({"outcome": "not-met", "outcome_reason": "x"}) == "Condition not met: x."
    unknown = plain_outcome({"outcome": None, "worst_severity": None, "gap_km": 12.0})
    assert "unknown" in unknown and "12 km could not be screened" in unknown
