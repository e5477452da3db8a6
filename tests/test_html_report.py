"""What the auditor's report says, checked against the JSON report and arithmetic done here: the miss charts
(every profile, every target, the rule minimums in mm), severity on every badge, the misses' caveat and
ratios, and the Markdown and CSV columns as the README lists them."""

from __future__ import annotations

import json
import os
import re
from pathlib import Path

import pytest
from lxml import html as lxml_html

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.report.findings import COLUMNS

README = Path(__file__).resolve().parents[1] / "README.md"
MM_PER_INCH = 25.4  # the inch, by definition


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> tuple[lxml_html.HtmlElement, dict, str]:
    out = tmp_path_factory.mktemp("report")
    cwd = os.getcwd()
    os.chdir(DEMO.parent)
    try:
        for fmt in ("html", "json", "md"):
            main(["check", "screens_demo", "-f", fmt, "-o", str(out / f"r.{fmt}"), "--quiet"])
    finally:
        os.chdir(cwd)
    return (lxml_html.fromstring((out / "r.html").read_bytes()), json.loads((out / "r.json").read_text()),
            (out / "r.md").read_text())


def _article(doc: lxml_html.HtmlElement, screen: dict) -> lxml_html.HtmlElement:
    title = f"{screen['path']} :: {screen['name']}" if screen["name"] else screen["path"]
    (art,) = [a for a in doc.xpath("//article[@data-screen]") if a.get("data-screen") == title]
    return art


def test_a_miss_chart_per_profile_with_every_target_and_the_rule_minimums(demo: tuple) -> None:
    doc, report, _ = demo
    seen = 0
    for s in report["screens"]:
        art = _article(doc, s)
        charts = art.xpath(".//div[@class='charts']//svg")
        # The JSON report gives mm through the device's ppi (report schema v2) and misses per profile.
        scored = [t for t in s["targets"] if s["device"]["xdpi"] and t["status"] != "unchecked"
                  and any(m is not None for m in t["miss_probability"])]
        if not scored:
            assert not charts  # no ppi, no miss: no chart pretending otherwise
            continue
        seen += 1
        assert [c.xpath("string(./text[1])") for c in charts] == [p["id"] for p in report["profiles"]]  # whole names
        for chart in charts:
            tips = chart.xpath(".//polygon/title/text() | .//circle/title/text() | .//rect/title/text()")
            assert sorted(int(t.split()[0][1:]) for t in tips) == sorted(t["number"] for t in scored)
            lines = chart.xpath(".//line/title/text()")
            device = s["device"]
            expected = []
            for rs in report["rulesets"]:
                for r in rs["rules"]:
                    if rs["id"] in s["rulesets"] and r["kind"] == "min-size":
                        size = r["params"]["size"]
                        # dp (or pt) to pixels, pixels to inches by the physical ppi, inches to mm.
                        mm = size if r["unit"] == "mm" else size * device["coords_per_unit"] / device["xdpi"] * MM_PER_INCH
                        expected.append(f"{r['id']}: {mm:.1f} mm")
            assert sorted(lines) == sorted(expected)
        key = art.xpath("string(.//p[@class='chart-key'])")
        assert "model estimates for comparing designs" in key
    assert seen >= 10


def test_badges_say_the_severity(demo: tuple) -> None:
    doc, report, _ = demo
    severity = {r["id"]: r["severity"] for rs in report["rulesets"] for r in rs["rules"]}  # a finding's is its rule's
    for s in report["screens"]:
        art = _article(doc, s)
        rows = {int(re.match(r"#(\d+)", r.xpath("string(./th)").strip()).group(1)): r
                for r in art.xpath(".//tr[contains(@class, 'target')]")}
        for t in s["targets"]:
            if not t["findings"]:
                continue
            row = rows[t["number"]]
            words = [b.text for b in row.xpath(".//ul[@class='findings']//span[contains(@class, 'badge')]")]
            assert words == [severity[f["rule"]] for f in t["findings"]]
            if t["status"] == "fail":
                worst = max((severity[f["rule"]] for f in t["findings"] if "waiver" not in f),
                            key=["note", "warning", "error"].index)
                assert row.xpath("string(./th//span[contains(@class, 's-fail')])") == f"fail ({worst})"


def test_misses_come_with_their_caveat_and_relative_to_the_typical_adult(demo: tuple) -> None:
    doc, report, _ = demo
    s = next(x for x in report["screens"] if x["path"].endswith("android/plot_detail.xml"))
    art = _article(doc, s)
    assert "model estimates for comparing designs" in art.xpath("string(.//p[@class='caveat'])")
    t = next(x for x in s["targets"] if x["findings"] and x["status"] == "fail")
    row = next(r for r in art.xpath(".//tr[contains(@class, 'target')]")
               if r.xpath("string(./th)").strip().startswith(f"#{t['number']} "))
    text = " ".join(row.xpath("string(./td[2])").split())
    miss = dict(zip((p["id"] for p in report["profiles"]), t["miss_probability"]))  # in the profiles' order
    base = miss["typical-adult"]
    for profile, m in miss.items():
        ratio = "" if profile == "typical-adult" else f" ({m / base:.1f}x)"
        assert f"{profile} {m:.0%}{ratio}" in text


def test_markdown_names_the_profile_of_its_miss_column(demo: tuple) -> None:
    _, report, md = demo
    header = next(line for line in md.splitlines() if line.startswith("| screen |"))
    assert f"miss_probability ({report['profiles'][0]['id']})" in header


def test_the_readme_lists_the_csv_columns_in_their_order() -> None:
    text = README.read_text(encoding="utf-8")
    section = text[text.index("`--format csv` and `--format md` write a findings table"):]
    rows = re.findall(r"^\| ([a-z_, ]+) \|", section[:section.index("\n\n", section.index("| column |"))], re.MULTILINE)
    listed = [c.strip() for row in rows if row != "column" for c in row.split(",")]
    assert tuple(listed) == COLUMNS


def test_the_report_is_the_same_every_run(tmp_path: Path) -> None:
    # Deterministic output (no clock, no per-process hash seed): two processes, two hash seeds.
    import subprocess
    import sys

    texts = []
    for seed in ("1", "2"):
        out = tmp_path / f"r{seed}.html"
        subprocess.run([sys.executable, "-m", "tapgauge", "check", str(DEMO / "android"), "-f", "html", "-o", str(out),
                        "--quiet"], env={**os.environ, "PYTHONHASHSEED": seed}, timeout=300)
        texts.append(out.read_bytes())
    assert texts[0] == texts[1]


def test_one_job_draws_the_pictures_in_the_process_itself(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # --jobs 1 is one process for everything, pictures included: no pool may start.
    import concurrent.futures

    class NoPool:
        def __init__(self, *args: object, **kwargs: object) -> None:
            raise AssertionError("a process pool was started with --jobs 1")

    monkeypatch.setattr(concurrent.futures, "ProcessPoolExecutor", NoPool)
    out = tmp_path / "r.html"
    assert main(["check", str(DEMO / "android"), "-f", "html", "-o", str(out), "-j", "1", "--quiet"]) == 1
    assert out.read_text(encoding="utf-8").count("<article") >= 2
