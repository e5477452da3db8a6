"""The JSON report holds each screen without what a reader can derive (report/document.py), and every
field it leaves out comes back exactly as its schema says; it is smaller than the dumps it describes."""

from __future__ import annotations

import json
import math
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import DEMO, REPO

from tapgauge.cli import main
from tapgauge.report.document import (
    screen_document as to_document,  # bound before any test patches it
)

MM_PER_INCH = 25.4  # the inch, by definition (international yard and pound agreement, 1959; from memory)


def _json(argv: list[str], capsys: pytest.CaptureFixture[str]) -> dict:
    main(["check", *argv, "-f", "json", "--quiet"])
    return json.loads(capsys.readouterr().out)


@pytest.fixture
def both(capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> tuple[dict, dict]:
    """The demo's whole records (what the tables print from), then its JSON report as users get it."""
    whole = _json([str(DEMO)], capsys)
    monkeypatch.undo()  # the suite's stand-in for the document (conftest) goes: the real one writes
    return whole, _json([str(DEMO)], capsys)


def test_the_report_holds_each_record_as_the_document_makes_it(both: tuple[dict, dict]) -> None:
    whole, doc = both
    assert doc["screens"] == [to_document(s) for s in whole["screens"]]
    assert {k: v for k, v in doc.items() if k != "screens"} == {k: v for k, v in whole.items() if k != "screens"}


def test_what_is_left_out_comes_back_as_the_schema_says(both: tuple[dict, dict]) -> None:
    whole, doc = both
    rules = {r["id"]: r for rs in doc["rulesets"] for r in rs["rules"]}
    profiles = [p["id"] for p in doc["profiles"]]
    seen = {"mm": 0, "severity": 0, "growth": 0, "other": 0, "name": 0}
    for full_s, s in zip(whole["screens"], doc["screens"], strict=True):
        device = s["device"]
        for full, t in zip(full_s["targets"], s["targets"], strict=True):
            assert t.get("name", t["label"]) == full["name"]
            seen["name"] += "name" in t
            assert t["size"] == [full["size"]["width"], full["size"]["height"]]
            if full["size_mm"] is None:
                assert device["xdpi"] is None or full["status"] == "unchecked"
            else:  # pixels over pixels per inch, in mm; the record rounds to 0.01 mm
                left, top, right, bottom = t["bounds"]
                assert math.isclose((right - left) / device["xdpi"] * MM_PER_INCH, full["size_mm"]["width"], abs_tol=0.006)
                assert math.isclose((bottom - top) / device["ydpi"] * MM_PER_INCH, full["size_mm"]["height"], abs_tol=0.006)
                seen["mm"] += 1
            assert t.get("reason", "") == full["reason"] and t.get("notes", []) == full["notes"]
            for f_full, f in zip(full["findings"], t["findings"], strict=True):
                rule = rules[f["rule"]]
                assert f_full["severity"] == rule["severity"]
                unit = "%" if rule["kind"] == "max-miss" else "mm" if rule["unit"] == "mm" else device["unit"]
                assert f_full["unit"] == unit
                assert (f["measured"], f["required"]) == (f_full["measured"], f_full["required"])
                assert f.get("waiver") == f_full["waiver"] and f.get("other") == f_full["other"]
                if "other" in f:  # the sentence names the same target by its number
                    assert f"#{f['other']} " in f_full["message"]
                    seen["other"] += 1
                seen["severity"] += 1
            assert dict(zip(profiles, t.get("time_ms", []))) == {d["profile"]: d["time_ms"] for d in full["difficulty"]}
            assert t.get("miss_probability", []) == [d["miss_probability"] for d in full["difficulty"]]
            plan = full["plan"]
            if plan is None:
                assert "plan" not in t
            elif plan["kind"] == "grow":  # growth per side: the planned area less the box, in the platform unit
                (l0, t0, r0, b0), (l1, t1, r1, b1), k = t["bounds"], t["plan"]["bounds"], device["coords_per_unit"]
                growth = {"left": (l0 - l1) / k, "top": (t0 - t1) / k, "right": (r1 - r0) / k, "bottom": (b1 - b0) / k}
                assert growth == pytest.approx(plan["growth"], abs=0.01)
                seen["growth"] += 1
            else:
                assert t["plan"]["missing"] == plan["missing"]
                assert t["plan"].get("move", plan["move"]) == plan["move"]
    assert all(seen.values()), seen  # the demo has every case


@pytest.mark.document
def test_one_screen_a_line_in_one_json_document(capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", str(DEMO), "-f", "json", "--quiet"])
    text = capsys.readouterr().out
    lines = text.split("\n")[:-1]
    report = json.loads(text)
    assert len(lines) == len(report["screens"]) + 2  # the head, a line per screen, the tail
    assert [json.loads(line.rstrip(",")) for line in lines[1:-1]] == report["screens"]


@pytest.mark.document
def test_workers_and_one_process_write_the_same_report(tmp_path: Path) -> None:
    # Workers hand back the document's text only; with an overlay the parent makes it from the record.
    one, two = tmp_path / "one.json", tmp_path / "two.json"
    assert main(["check", str(DEMO), "-f", "json", "-o", str(one), "-j", "1", "--overlay", str(tmp_path / "o"),
                 "--quiet"]) == 1
    assert main(["check", str(DEMO), "-f", "json", "-o", str(two), "-j", "2", "--quiet"]) == 1
    assert one.read_bytes() == two.read_bytes()


@pytest.mark.document
def test_the_report_is_smaller_than_the_dumps(tmp_path: Path) -> None:
    # The speed issue's corpus in small: uiautomator-shaped dumps of 200 nodes, 100 of them targets,
    # two thirds failing (the costliest case for a report).
    corpus = tmp_path / "corpus"
    subprocess.run([sys.executable, str(REPO / "bench" / "make_corpus.py"), str(corpus), "--screens", "4",
                    "--targets", "100", "--filler", "1"], check=True, capture_output=True)
    out = tmp_path / "r.json"
    assert main(["check", str(corpus), "-f", "json", "-o", str(out), "--quiet"]) == 1
    dumps = sum(p.stat().st_size for p in corpus.glob("*.xml"))
    report = json.loads(out.read_text())
    assert report["summary"]["targets"] == 400 and report["summary"]["fail"] > 200
    assert out.stat().st_size <= dumps


@pytest.mark.document
def test_waived_findings_keep_their_waiver_on_both_paths(tmp_path: Path) -> None:
    # A project waiver (README "Waivers") on the demo's star buttons: workers writing the JSON text
    # straight from the results and the whole-record path (taken when an overlay is drawn) agree,
    # and each waived finding carries its reason, author and expiry.
    screens = tmp_path / "screens"
    screens.mkdir()
    shutil.copy(DEMO / "android" / "plots.xml", screens / "plots.xml")
    shutil.copy(DEMO / "android" / "plots.xml", screens / "plots2.xml")  # two files: the workers run
    shutil.copy(DEMO / "android" / "device.txt", screens / "device.txt")
    (screens / "tapgauge.toml").write_text(
        '[[waivers]]\nscreen = "plots.xml"\ntarget = "id:org.fernwick.allotments:id/star"\n'
        'rule = "android-guidance/*"\nreason = "Rating stars repeat the row\'s own tap target"\n'
        'author = "Review, 2026-12"\nexpires = 2027-06-30\n', encoding="utf-8")
    one, two = tmp_path / "one.json", tmp_path / "two.json"
    cwd = os.getcwd()
    os.chdir(screens)
    try:
        main(["check", ".", "-f", "json", "-o", str(one), "-j", "1", "--overlay", str(tmp_path / "o"), "--quiet",
              "--today", "2026-12-02"])
        main(["check", ".", "-f", "json", "-o", str(two), "-j", "2", "--quiet", "--today", "2026-12-02"])
    finally:
        os.chdir(cwd)
    assert one.read_bytes() == two.read_bytes()
    report = json.loads(two.read_text())
    waived = [f["waiver"] for s in report["screens"] for t in s["targets"] for f in t["findings"] if "waiver" in f]
    assert len(waived) == 4 and waived[0] == {"reason": "Rating stars repeat the row's own tap target",
                                              "author": "Review, 2026-12", "expires": "2027-06-30"}
    assert report["summary"]["exempt"] == 4  # the four stars of plots.xml; plots2.xml is not waived
