"""The HTML report in a real browser (headless Chromium): nothing overflows a 1,400 px screen.

The report is laid out by Chromium at 1,400 x 1,000 CSS pixels with every collapsed
detail opened; a small script (added to a copy of the report, never to the report
itself) measures every element and writes what sticks out past the window into the
page, which ``--dump-dom`` returns. Wide tables may scroll inside their own box
(class ``scroll``); nothing else may be wider than the window.

Chromium comes from Debian (``.ci/run`` installs it in CI); the test skips only on a
developer machine without it.
"""

from __future__ import annotations

import html
import json
import os
import re
import shutil
import subprocess

import pytest

from icing.hazards.avoidance import annotate_segments
from icing.outputs.plot import SEVERITY_COLOURS
from icing.outputs.report import write_report

WIDTH = 1400

_PROBE = """<script>
window.addEventListener('load', () => {
  document.querySelectorAll('details').forEach(d => { d.open = true; });
  const w = document.documentElement.clientWidth;
  const bad = [];
  for (const el of document.body.querySelectorAll('*')) {
    if (el.parentElement && el.parentElement.closest('.scroll')) continue;
    const r = el.getBoundingClientRect();
    if (r.width === 0 && r.height === 0) continue;
    if (r.right > w + 0.5 || r.left < -0.5) {
      bad.push(el.tagName + (el.id ? '#' + el.id : '') + ' right=' + Math.round(r.right));
    }
  }
  const summary = document.getElementById('summary').getBoundingClientRect();
  const heads = [...document.querySelectorAll('#summary th')].map(th => th.textContent);
  const sev = [...document.querySelectorAll('#summary td[class*=sev-]')]
    .map(td => getComputedStyle(td).backgroundColor);
  const out = document.createElement('pre');
  out.id = 'probe';
  out.textContent = JSON.stringify({
    clientWidth: w, scrollWidth: document.documentElement.scrollWidth,
    summaryRight: summary.right, bad: bad.slice(0, 20), heads: heads, sev: sev,
  });
  document.body.appendChild(out);
});
</script>"""


def _chromium():
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        if os.environ.get("CI") == "true":
            pytest.fail("chromium is missing in CI (.ci/run installs Debian's chromium)")
        pytest.skip("chromium is not installed (apt-get install chromium)")
    return exe


def _layout(exe, html_path, tmp_path):
    probe = tmp_path / "probe.html"
    probe.write_text(
        html_path.read_text(encoding="utf-8").replace("</body>", _PROBE + "</body>"),
        encoding="utf-8",
    )
    cmd = [
        exe,
        "--headless",
        "--no-sandbox",  # CI runs as root
        "--disable-gpu",
        "--hide-scrollbars",
        f"--window-size={WIDTH},1000",
        "--virtual-time-budget=10000",
        f"--user-data-dir={tmp_path / 'profile'}",
        "--dump-dom",
        probe.as_uri(),
    ]
    # 120 s: a cold Chromium start on a loaded two-core machine takes a few seconds
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    found = re.search(r'<pre id="probe">(.*?)</pre>', done.stdout, re.S)
    assert found, f"no layout measured; chromium said: {done.stderr[-500:]}"
    return json.loads(html.unescape(found.group(1)))


@pytest.fixture(scope="module")
def report(tmp_path_factory, make_screening):
    routes = [
        annotate_segments(make_screening()),
        annotate_segments(make_screening(warm_nose=True, altitude_reference="pressure")),
        annotate_segments(make_screening(route_name="a rather long route name " * 4, gap=False)),
    ]
    return write_report(routes, tmp_path_factory.mktemp("browser") / "report.html", dpi=60)


def test_report_fits_a_1400_px_screen_in_chromium(report, tmp_path):
    page = _layout(_chromium(), report, tmp_path)
    assert page["clientWidth"] == WIDTH
    assert page["scrollWidth"] <= WIDTH, page  # no horizontal scrolling of the page
    assert page["summaryRight"] <= WIDTH
    assert page["bad"] == [], page["bad"]
    # readable headers (labels, not JSON keys) and colour-coded severity cells
    assert "worst icing" in page["heads"] and not any("_" in h for h in page["heads"])
    palette = {
        "rgb({}, {}, {})".format(*(int(c[i : i + 2], 16) for i in (1, 3, 5)))
        for c in SEVERITY_COLOURS.values()
    }
    assert page["sev"] and set(page["sev"]) <= palette
