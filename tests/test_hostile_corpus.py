"""The corpus of bad and hostile inputs (``tests/data/hostile``, from make_hostile_corpus.py).

Each case runs ``icing screen`` in-process with one bad file (route, forecast or airframe)
or one bad option beside good ones. ``refused``: exit 2, exactly one line on stderr that
starts ``icing`` and names the file or option at fault with the fix, and nothing written
(the output folder stays empty, every input unchanged). ``gap``: exit 0 and the part the
input cannot cover reported as a coverage gap (``gap_km`` > 0), never as "no icing".
"""

import hashlib
import json
import warnings
from pathlib import Path

import pytest

from icing.cli import main
from icing.errors import PlausibilityWarning

HERE = Path(__file__).resolve().parent
CORPUS = HERE / "data" / "hostile"
ROOT = HERE.parent
ROUTE = ROOT / "routes" / "regional-dispatch.geojson"
FORECAST = ROOT / "fixtures" / "skerrow-profiles.json"
CASES = json.loads((CORPUS / "manifest.json").read_text())


def _digest(path):
    p = Path(path)
    return hashlib.sha256(p.read_bytes()).hexdigest() if p.is_file() else None


def _argv(c, out):
    """The command line of a case; its own file takes the place of the good one."""
    route, forecast, airframe = str(ROUTE), str(FORECAST), "twin-turboprop"
    bad = None if c["file"] is None else str(CORPUS / c["file"])
    if c["kind"] == "route":
        route = bad
    elif c["kind"] == "forecast":
        forecast = bad
    elif c["kind"] == "airframe":
        airframe = bad
    fill = {"route": route, "forecast": forecast, "out": str(out), "corpus": str(CORPUS)}
    given = [a.format(**fill) for a in c["args"]]
    extra = given
    if extra[:1] == ["--route"]:
        route, extra = extra[1], extra[2:]
    argv = ["screen", route, "--forecast", forecast]
    if not (c["kind"] == "route" and "airframe" in c["file"]):  # else the route's own
        argv += ["--airframe", airframe]
    if "-o" not in extra:
        argv += ["-o", str(out / "hazards.geojson"), "--samples", str(out / "samples.csv")]
    return argv + extra, [route, forecast], given


def test_the_corpus_is_large_and_current():
    assert len(CASES) >= 150
    for c in CASES:
        assert c["file"] is None or (CORPUS / c["file"]).is_file(), c["file"]


@pytest.mark.parametrize("c", CASES, ids=[c["file"] or c["why"] for c in CASES])
def test_corpus_case(c, tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "folder.geojson").mkdir()  # for the case that names a folder as output
    argv, inputs, extra = _argv(c, out)
    before = {p: _digest(p) for p in inputs}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PlausibilityWarning)
        try:
            code = main(argv)
        except SystemExit as exit_:  # usage errors leave through argparse
            code = exit_.code
    err = capsys.readouterr().err
    assert {p: _digest(p) for p in inputs} == before  # no input is ever touched
    if c["expect"] == "refused":
        lines = [line for line in err.splitlines() if line.strip()]
        assert code == 2, err
        assert len(lines) == 1 and lines[0].startswith("icing"), err
        assert "fix:" in lines[0], err
        named = [Path(c["file"]).name] if c["file"] else []
        named += [a.split("=")[0] for a in extra if a.startswith("-")]
        named += [Path(a).name for a in extra if not a.startswith("-")]
        assert any(n and n in lines[0] for n in named), (lines[0], named)
        assert sorted(p.name for p in out.iterdir()) == ["folder.geojson"]  # nothing written
    else:
        assert code == 0, err
        summary = json.loads((out / "hazards.summary.json").read_text())["summaries"][0]
        assert summary["gap_km"] > 0  # what is not covered is a gap, never "no icing"
