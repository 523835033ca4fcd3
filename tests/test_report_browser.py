"""The study's report.html in a real browser (Debian's Chromium, headless): it loads without an
error, every figure renders with a size, the ranked table shows the CSV's numbers, and the page
is not blank on a phone (390 px) or a laptop (1280 px).

`.ci/run` installs Chromium when it is missing and sets TANDEM_REQUIRE_BROWSER=1, so there the
test cannot be skipped; on a machine without a browser (the README's quick start on a fresh
machine) it is skipped with the reason.
"""

import csv
import json
import re
import os
import shutil
import subprocess

import numpy as np
import pytest

from tandem.study.folders import write_study
from tandem.study.run import run_study
from tandem.study.sources import load_scenario
from tandem.study.tables import columns

BROWSER = shutil.which("chromium") or shutil.which("chromium-browser")
if BROWSER is None and os.environ.get("TANDEM_REQUIRE_BROWSER"):
    raise RuntimeError("TANDEM_REQUIRE_BROWSER is set but no chromium is on PATH")
pytestmark = pytest.mark.skipif(BROWSER is None, reason="no chromium on PATH (.ci/run installs it)")

#: appended to a copy of the report (the report itself has no script): measures what rendered
PROBE = """<script>
window.__errors = [];
window.addEventListener('error', e => window.__errors.push(String(e.message)));
window.addEventListener('load', () => {
  const figures = [...document.querySelectorAll('figure svg')].map(s => {
    const r = s.getBoundingClientRect(); return [r.width, r.height]; });
  const rows = [...document.querySelectorAll('#design-table tbody tr')].map(tr =>
    Object.fromEntries([...tr.querySelectorAll('td')].map(td => [td.dataset.key, td.textContent])));
  const out = document.createElement('pre');
  out.id = 'probe';
  out.textContent = JSON.stringify({figures, rows, errors: window.__errors});
  document.body.appendChild(out);
});
</script>"""


def chromium(*args, width=1280):
    return subprocess.run([BROWSER, "--headless", "--no-sandbox", "--disable-gpu",
                           "--hide-scrollbars", f"--window-size={width},2000",
                           "--enable-logging=stderr", "--v=0", *args],
                          capture_output=True, text=True, timeout=120)


@pytest.fixture(scope="module")
def study_folder(tmp_path_factory):
    root = tmp_path_factory.mktemp("report")
    scenario = load_scenario("thin-film-silicon-pair")
    return write_study(run_study(scenario), root / "study")


def test_the_report_renders_its_figures_and_the_csvs_numbers(study_folder, tmp_path):
    page = (study_folder / "report.html").read_text(encoding="utf-8")
    # self-contained: no script, no external resource (xmlns URIs are names, not fetched)
    assert "<script" not in page and "@import" not in page
    assert not re.search(r'(src|href)="(https?:|//)|url\((https?:|//)', page)
    probe = tmp_path / "probe.html"
    probe.write_text(page.replace("</body>", PROBE + "</body>"), encoding="utf-8")
    done = chromium("--virtual-time-budget=5000", "--dump-dom", probe.as_uri())
    assert done.returncode == 0, done.stderr[-2000:]
    console = [line for line in done.stderr.splitlines()
               if "CONSOLE" in line and ("ERROR" in line or "error" in line)]
    assert not console, console
    dom = done.stdout
    result = json.loads(dom.split('<pre id="probe">', 1)[1].split("</pre>", 1)[0]
                        .replace("&quot;", '"').replace("&amp;", "&").replace("&lt;", "<")
                        .replace("&gt;", ">"))
    assert result["errors"] == []
    figures = sorted((study_folder / "figures").glob("*.png"))
    assert len(result["figures"]) == len(figures) >= 2
    assert all(w > 100 and h > 100 for w, h in result["figures"])
    # the ranked table shows each number of design-table.csv in the column's own format
    with open(study_folder / "design-table.csv", newline="", encoding="utf-8") as fh:
        table = list(csv.DictReader(fh))
    assert len(result["rows"]) == len(table)
    study = run_study(load_scenario("thin-film-silicon-pair"))
    fmts = {c.key: c.fmt for c in columns(study)}
    checked = 0
    for shown, row in zip(result["rows"], table):
        for key, text in row.items():
            if key not in shown or text == "":
                continue
            try:
                value = float(text)
            except ValueError:
                assert shown[key] == text
                continue
            assert shown[key] == fmts[key].format(int(value) if fmts[key] == "{}" else value), key
            checked += 1
    assert checked >= 10


@pytest.mark.parametrize("width", [390, 1280])
def test_the_report_is_not_blank_on_a_phone_or_a_laptop(study_folder, tmp_path, width):
    from matplotlib.image import imread

    shot = tmp_path / f"report-{width}.png"
    done = chromium(f"--screenshot={shot}", (study_folder / "report.html").as_uri(), width=width)
    assert done.returncode == 0 and shot.is_file(), done.stderr[-2000:]
    pixels = imread(shot)[..., :3]
    assert pixels.shape[1] == width
    ink = np.mean(np.any(pixels < 0.9, axis=-1))  # share of pixels that are not near white
    assert 0.02 < ink < 0.9 and float(pixels.std()) > 0.05
