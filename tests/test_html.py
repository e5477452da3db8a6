"""The auditor's HTML report: parsed with lxml, checked for its own accessibility basics,
and rendered in a real headless Chromium (skipped, saying why, only where none can be installed)."""

from __future__ import annotations

import base64
import io
import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from lxml import html as lxml_html
from PIL import Image

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.report.html import CSS


@pytest.fixture(scope="module")
def demo_html(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    out = tmp_path_factory.mktemp("html")
    cwd = os.getcwd()
    os.chdir(DEMO.parent)
    try:
        main(["check", "screens_demo", "-f", "html", "-o", str(out / "report.html")])
        main(["check", "screens_demo", "-f", "json", "-o", str(out / "report.json")])
    finally:
        os.chdir(cwd)
    return out / "report.html", json.loads((out / "report.json").read_text())


def test_every_picture_decodes_and_nothing_is_fetched(demo_html: tuple[Path, dict]) -> None:
    path, _ = demo_html
    doc = lxml_html.fromstring(path.read_bytes())
    imgs = doc.xpath("//img")
    assert imgs
    for img in imgs:
        src = img.get("src")
        assert src.startswith("data:image/"), src[:40]
        Image.open(io.BytesIO(base64.b64decode(src.split(",", 1)[1]))).load()
    assert not doc.xpath("//script[@src] | //link[@rel='stylesheet'] | //iframe | //object")
    assert "url(" not in CSS  # no fonts or pictures fetched by the style sheet


def test_every_finding_appears_once_and_links_resolve(demo_html: tuple[Path, dict]) -> None:
    path, report = demo_html
    doc = lxml_html.fromstring(path.read_bytes())
    findings = sum(len(t["findings"]) for s in report["screens"] for t in s["targets"])
    assert len(doc.xpath("//li[@data-ruleset]")) == findings
    # One row per target with its findings stacked inside it (no finding repeats its target).
    with_findings = sum(1 for s in report["screens"] for t in s["targets"] if t["findings"])
    assert len(doc.xpath("//tr[contains(@class, 'target')]")) == with_findings
    ids = set(doc.xpath("//@id"))
    for href in doc.xpath("//a/@href"):
        if href.startswith("#"):
            assert href[1:] in ids, href
        else:
            assert href.startswith("http"), href


def _luminance(hex_colour: str) -> float:
    rgb = [int(hex_colour[k:k + 2], 16) / 255 for k in (1, 3, 5)]
    lin = [c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def _contrast(a: str, b: str) -> float:
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_the_report_passes_its_own_basics(demo_html: tuple[Path, dict]) -> None:
    path, _ = demo_html
    doc = lxml_html.fromstring(path.read_bytes())
    assert doc.get("lang") == "en"
    assert len(doc.xpath("//h1")) == 1
    levels = [int(h.tag[1]) for h in doc.xpath("//h1|//h2|//h3|//h4")]
    assert all(b - a <= 1 for a, b in zip(levels, levels[1:]))  # no skipped heading levels
    for th in doc.xpath("//table//th"):
        assert th.get("scope") in ("col", "row"), lxml_html.tostring(th)[:80]
    assert all(img.get("alt", "").strip() for img in doc.xpath("//img"))
    for control in doc.xpath("//input | //select"):
        cid = control.get("id")
        assert control.xpath("ancestor::label") or (cid and doc.xpath(f"//label[@for='{cid}']"))
    # WCAG 2.x SC 1.4.3 contrast (4.5:1 for text; formula from WCAG's relative-luminance definition).
    colours = dict(re.findall(r"--([a-z]+): (#[0-9a-f]{6})", CSS))
    for name in ("ink", "muted", "accent"):
        assert _contrast(colours[name], colours["paper"]) >= 4.5, name
        assert _contrast(colours[name], colours["band"]) >= 4.5, name
    found = re.findall(r"\.[sv]-[a-z]+ \{ color: (#[0-9a-f]{6}); \}", CSS)
    assert len(found) >= 7  # four status colours (unchecked is the muted ink) and three severities
    for status_colour in found:
        assert _contrast(status_colour, colours["paper"]) >= 4.5


CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--enable-logging=stderr", "--v=0"]


def _chromium() -> str | None:
    return shutil.which("chromium") or shutil.which("chromium-browser") or shutil.which("google-chrome")


def test_renders_in_a_real_browser_without_console_errors(demo_html: tuple[Path, dict], tmp_path: Path) -> None:
    exe = _chromium()
    if exe is None:
        pytest.skip("no Chromium on this machine (.ci/run installs Debian's chromium; here it could not be installed)")
    path, report = demo_html
    shot = tmp_path / "report.png"
    common = [exe, *CHROMIUM_FLAGS, f"--user-data-dir={tmp_path / 'profile'}"]
    proc = subprocess.run([*common, "--window-size=1280,2400", f"--screenshot={shot}", path.as_uri()],
                          capture_output=True, text=True, timeout=120)
    console = [ln for ln in proc.stderr.splitlines() if ":CONSOLE" in ln]
    assert not console, console
    assert Image.open(shot).size == (1280, 2400)
    dom = subprocess.run([*common, "--dump-dom", path.as_uri()], capture_output=True, text=True, timeout=120)
    assert not [ln for ln in dom.stderr.splitlines() if ":CONSOLE" in ln]
    rendered = lxml_html.fromstring(dom.stdout)
    # The filter script ran: the panel is shown and counts every finding.
    assert rendered.xpath("//section[@id='filters']/@hidden") == []
    findings = sum(len(t["findings"]) for s in report["screens"] for t in s["targets"])
    assert rendered.xpath("string(//p[@id='f-count'])") == f"{findings} findings shown"
    keep = os.environ.get("TAPGAUGE_KEEP_SCREENSHOT")
    if keep:
        shutil.copy(shot, keep)


def test_filters_work_in_the_browser(demo_html: tuple[Path, dict], tmp_path: Path) -> None:
    exe = _chromium()
    if exe is None:
        pytest.skip("no Chromium on this machine (.ci/run installs Debian's chromium; here it could not be installed)")
    path, report = demo_html
    # A copy of the report that unticks one rule set and picks one screen, as a keyboard user would.
    page = path.read_text().replace(
        "</body>",
        "<script>document.querySelector('input[value=\"android-guidance\"]').click();"
        "var s = document.getElementById('f-screen'); s.value = s.options[3].value;"
        "s.dispatchEvent(new Event('change'));</script></body>")
    probe = tmp_path / "probe.html"
    probe.write_text(page)
    dom = subprocess.run([exe, *CHROMIUM_FLAGS, f"--user-data-dir={tmp_path / 'profile'}", "--dump-dom",
                          probe.as_uri()], capture_output=True, text=True, timeout=120)
    rendered = lxml_html.fromstring(dom.stdout)
    chosen = rendered.xpath("string(//select[@id='f-screen']/option[4]/@value)")
    screen = next(s for s in report["screens"] if (f"{s['path']} :: {s['name']}" if s["name"] else s["path"]) == chosen)
    expected = sum(1 for t in screen["targets"] for f in t["findings"]
                   if not f["rule"].startswith("android-guidance/") and t["status"] in ("fail", "partial", "exempt"))
    assert rendered.xpath("string(//p[@id='f-count'])").startswith(f"{expected} finding")
    visible = [a for a in rendered.xpath("//article[@data-screen]") if a.get("hidden") is None]
    assert [a.get("data-screen") for a in visible] == [chosen]


def test_pictures_drawn_in_worker_processes_give_the_same_report(monkeypatch: pytest.MonkeyPatch) -> None:
    # Common practice for parallel output: the same bytes in the same order, whatever the number of
    # processes drawing (each screen's article is made apart and written in the report's order).
    from tapgauge.batch import prepare
    from tapgauge.report.html import write_html

    monkeypatch.chdir(DEMO.parent)
    written = []
    for jobs in (1, 2):
        run = prepare(None, None, None, None, None, None, None, None, [], "centre", "approach", "2027-01-31", jobs=1)
        assert not isinstance(run, int)
        with run.report([DEMO / "android", DEMO / "marked"], None).spooled() as report:
            out = io.StringIO()
            write_html(report, out, jobs=jobs)
            written.append(out.getvalue())
    assert written[0] == written[1] and written[0].count('<article class="screen"') == 6


def test_drawing_processes_start_where_the_c_library_has_no_mallopt(monkeypatch: pytest.MonkeyPatch) -> None:
    # The drawing processes ask glibc to keep freed memory (mallopt); macOS's and Windows' C
    # libraries have no such call, and there the processes must start all the same.
    import ctypes

    from tapgauge.heap import keep_freed_memory

    class NoMallopt:
        def __init__(self, name: object) -> None:
            pass

    monkeypatch.setattr(ctypes, "CDLL", NoMallopt)
    keep_freed_memory()  # no AttributeError

    def missing(name: object) -> None:
        raise OSError("no C library")

    monkeypatch.setattr(ctypes, "CDLL", missing)
    keep_freed_memory()
