"""One name per quantity: keys and labels agree across terminal, JSON, report, GeoJSON and CSV.

The output JSON Schema is generated from ``icing.outputs.names`` and checked in; these
tests keep the file, the outputs and the labels in step.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

from icing._version import SCHEMA_VERSION
from icing.cli import main
from icing.outputs.names import DEPRECATED, LABELS, label
from icing.outputs.report import SUMMARY_COLUMNS as REPORT_COLUMNS
from icing.outputs.schema import SCHEMA_PATH, schema_text
from icing.outputs.table import SAMPLE_COLUMNS, SUMMARY_COLUMNS

ROOT = Path(__file__).resolve().parents[1]
FORECAST = ROOT / "fixtures" / "skerrow-latlon.nc"


@pytest.fixture(scope="module")
def run_outputs(tmp_path_factory):
    d = tmp_path_factory.mktemp("names")
    routes = [ROOT / "routes" / n for n in ("regional-dispatch.geojson", "flight-levels.geojson")]
    args = ["screen", *map(str, routes), "-f", str(FORECAST), "-o", str(d / "h.geojson"),
            "--samples", str(d / "s.csv"), "--all-segments", "--fail-on", "severe"]  # fmt: skip
    assert main(args) in (0, 3)
    fc = json.loads((d / "h.geojson").read_text())
    rows = list(csv.DictReader(io.StringIO((d / "s.csv").read_text())))
    return fc, rows


def test_checked_in_schema_is_the_generated_one():
    assert SCHEMA_PATH.read_text(encoding="utf-8") == schema_text(), (
        "run `python -m icing.outputs.schema` after changing icing/outputs/names.py"
    )
    doc = json.loads(schema_text())
    assert doc["properties"]["schema_version"]["const"] == SCHEMA_VERSION == "1.2"


def test_every_output_key_is_listed_in_the_schema_with_its_label(run_outputs):
    fc, rows = run_outputs
    doc = json.loads(SCHEMA_PATH.read_text())
    summary = doc["properties"]["summaries"]["items"]["properties"]
    segment = doc["properties"]["features"]["items"]["properties"]["properties"]["properties"]
    csv_cols = doc["x-csv-columns"]
    for s in fc["summaries"]:
        for k in s:
            assert k in summary, f"summary key {k!r} missing from the schema"
            assert summary[k]["title"] == label(k).replace(" (deprecated name)", "")
    for f in fc["features"]:
        for k in f["properties"]:
            assert k in segment, f"segment property {k!r} missing from the schema"
    assert list(rows[0]) == SAMPLE_COLUMNS and set(SAMPLE_COLUMNS) == set(csv_cols)
    for old, new in DEPRECATED.items():
        entry = summary.get(old) or segment.get(old) or csv_cols.get(old)
        assert entry["deprecated"] is True and new in entry["description"]


def test_terminal_and_report_use_the_same_labels(run_outputs, capsys):
    main(["screen", str(ROOT / "routes" / "regional-dispatch.geojson"), "-f", str(FORECAST)])
    head = capsys.readouterr().out.splitlines()[0]
    for key in SUMMARY_COLUMNS:
        if key != "freezing_level_ft_min":
            assert LABELS[key] in head
    assert "ice accreted [mm]" in head and "ice mm" not in head
    for key in REPORT_COLUMNS:
        assert key in LABELS


def test_accreted_ice_has_one_name(run_outputs):
    fc, rows = run_outputs
    s = fc["summaries"][0]
    assert s["accretion_mm"] == s["accretion_mm_reference"]  # the old name, deprecated
    assert all("accretion_mm" in f["properties"] for f in fc["features"])
    assert "accretion_mm" in rows[0]
    assert label("accretion_mm") == "ice accreted [mm]"
