"""The auditor's report in a real browser at the widths auditors use, and printed: nothing hidden behind a
horizontal scrollbar at 1024 and 1400 px, and the demo on at most 20 A4 pages with every screen on a page of
its own. Headless Chromium, as tests/test_html.py; skipped, saying why, only where none can be installed."""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from lxml import html as lxml_html

from conftest import DEMO
from tapgauge.cli import main

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]

# Every element that scrolls sideways, or reaches past the page's right edge: none may.
PROBE = """<script>
window.addEventListener('load', function () {
  var bad = [];
  var width = document.documentElement.clientWidth;
  if (document.documentElement.scrollWidth > width + 1) { bad.push('page ' + document.documentElement.scrollWidth); }
  document.querySelectorAll('body *').forEach(function (e) {
    var style = getComputedStyle(e);
    if (style.display === 'none' || e.closest('[hidden]')) { return; }
    var scrolls = (style.overflowX === 'auto' || style.overflowX === 'scroll') && e.scrollWidth > e.clientWidth + 1;
    var r = e.getBoundingClientRect();
    if (scrolls || r.right > width + 1) { bad.push(e.tagName + '.' + e.className + ' ' + Math.round(r.right)); }
  });
  var out = document.createElement('pre');
  out.id = 'probe';
  out.textContent = JSON.stringify(bad.slice(0, 20));
  document.body.appendChild(out);
});
</script>"""


def _chromium() -> str:
    exe = shutil.which("chromium") or shutil.which("chromium-browser") or shutil.which("google-chrome")
    if exe is None:
        pytest.skip("no Chromium on this machine (.ci/run installs Debian's chromium; here it could not be installed)")
    return exe


@pytest.fixture(scope="module")
def report(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("print")
    cwd = os.getcwd()
    os.chdir(DEMO.parent)
    try:
        main(["check", "screens_demo", "-f", "html", "-o", str(out / "report.html"), "--quiet"])
    finally:
        os.chdir(cwd)
    return out / "report.html"


@pytest.mark.parametrize("width", [1024, 1400])
def test_no_column_hides_behind_a_scrollbar(report: Path, tmp_path: Path, width: int) -> None:
    exe = _chromium()
    probe = tmp_path / "probe.html"
    probe.write_text(report.read_text(encoding="utf-8").replace("</body>", PROBE + "</body>"), encoding="utf-8")
    dom = subprocess.run([exe, *FLAGS, f"--user-data-dir={tmp_path / 'profile'}", f"--window-size={width},900",
                          "--virtual-time-budget=5000", "--dump-dom", probe.as_uri()],
                         capture_output=True, text=True, timeout=180)
    found = lxml_html.fromstring(dom.stdout).xpath("string(//pre[@id='probe'])")
    assert found == "[]", found


def test_the_demo_prints_to_at_most_20_a4_pages(report: Path, tmp_path: Path) -> None:
    exe = _chromium()
    pdf = tmp_path / "report.pdf"
    subprocess.run([exe, *FLAGS, f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer",
                    f"--print-to-pdf={pdf}", report.as_uri()], capture_output=True, text=True, timeout=180)
    data = pdf.read_bytes()
    # A PDF's page objects carry "/Type /Page" (ISO 32000-1, 7.7.3.3); the page tree's root says "/Pages".
    pages = len(re.findall(rb"/Type\s*/Page(?![s\w])", data))
    screens = len(lxml_html.fromstring(report.read_bytes()).xpath("//article[contains(@class, 'screen')]"))
    assert screens == 15
    assert screens < pages <= 20, pages  # each screen starts a page; summary and sources take a few more
