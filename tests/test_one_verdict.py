"""One verdict in every format: the demo written as table, JSON, CSV, Markdown, HTML, SARIF and JUnit
tells the same totals, the same verdict and the same exit code, at each fail level."""

from __future__ import annotations

import csv
import json
import re
import xml.etree.ElementTree as ET
from collections import Counter
from pathlib import Path

import pytest
from conftest import DEMO

from tapgauge.cli import main

FORMATS = ("table", "json", "csv", "md", "html", "sarif", "junit")
# SARIF 2.1.0 (OASIS), section 3.27.10 "level": error, warning, note, none; our severities use its words.
SARIF_LEVEL = {"error": "error", "warning": "warning", "note": "note"}
RANK = {"note": 1, "warning": 2, "error": 3}


def _write_all(tmp_path: Path, capsys: pytest.CaptureFixture[str], *extra: str) -> tuple[dict[str, str], set[int], set[str]]:
    texts, codes, logs = {}, set(), set()
    for fmt in FORMATS:
        out = tmp_path / f"report.{fmt}"
        codes.add(main(["check", str(DEMO), "-f", fmt, "-o", str(out), *extra]))
        logs.add(capsys.readouterr().err.strip().splitlines()[-1])  # the summary line, on stderr
        texts[fmt] = out.read_text(encoding="utf-8")
    return texts, codes, logs


def _sentence(text: str) -> str:
    """The summary sentence in a text that may wrap or mark it up."""
    flat = " ".join(re.sub(r"<[^>]+>", " ", text).split())
    m = re.search(r"\d+ screens?, \d+ targets?: .*?\(exit \d\)", flat)
    assert m, "no summary sentence"
    return m.group(0)


@pytest.mark.parametrize("level", ["error", "warning"])
def test_every_format_tells_the_same_totals_and_verdict(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                        level: str) -> None:
    texts, codes, logs = _write_all(tmp_path, capsys, "--fail-level", level)
    summary = json.loads(texts["json"])["summary"]
    assert codes == {summary["exit_code"]} == {1}
    assert summary["verdict"] == "fail"

    # The same sentence in the log, the table, Markdown and HTML.
    assert len(logs) == 1
    log = logs.pop().removeprefix("tapgauge: ")
    for fmt in ("table", "md", "html"):
        assert _sentence(texts[fmt]) == log, fmt
    assert f"{summary['screens']} screens, {summary['targets']} targets: {summary['pass']} pass, {summary['fail']} fail" in log

    # Targets that were not compared have one name everywhere: the status word "unchecked".
    for fmt, text in texts.items():
        assert "not checked" not in text.lower(), fmt
    assert all("unchecked" in texts[fmt] for fmt in ("table", "json", "md", "html", "junit"))

    # CSV: one row per finding; open ones on failing targets are the summary's findings.
    rows = list(csv.DictReader(texts["csv"].splitlines()))
    open_rows = [r for r in rows if r["status"] == "fail" and not r["waiver"]]
    assert Counter(r["severity"] for r in open_rows) == +Counter(summary["findings"])
    failing = {(r["screen"], r["target"]) for r in open_rows if RANK[r["severity"]] >= RANK[level]}
    assert len(failing) == summary["failing"]

    # SARIF: failures by level, the partial target as a review item that fails nothing.
    run = json.loads(texts["sarif"])["runs"][0]
    fails = [r for r in run["results"] if r["kind"] == "fail" and "suppressions" not in r]
    assert Counter(r["level"] for r in fails) == +Counter({SARIF_LEVEL[k]: v for k, v in summary["findings"].items()})
    reviews = [r for r in run["results"] if r["kind"] == "review"]
    assert reviews and {r["level"] for r in reviews} == {"none"}  # SARIF 2.1.0, 3.27.9: kind other than fail
    assert {r["properties"]["status"] for r in reviews} == {"partial"}
    invocation = run["invocations"][0]
    assert invocation["exitCode"] == summary["exit_code"]
    assert invocation["properties"]["verdict"] == summary["verdict"]
    assert invocation["properties"]["failLevel"] == level

    # JUnit: a case per target; failures are the targets failing at the fail level.
    root = ET.fromstring(texts["junit"].encode("utf-8"))
    assert int(root.get("tests")) == summary["targets"]
    assert int(root.get("failures")) == summary["failing"]
    assert int(root.get("skipped")) == summary["unchecked"] + summary["partial"] + summary["exempt"]
    assert int(root.get("errors")) == summary["errors"] == 0


def test_warnings_fail_only_at_the_warning_level(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "strict").mkdir()
    (tmp_path / "lenient").mkdir()
    strict, _, _ = _write_all(tmp_path / "strict", capsys, "--fail-level", "warning")
    lenient, _, _ = _write_all(tmp_path / "lenient", capsys, "--fail-level", "error")
    s_strict = json.loads(strict["json"])["summary"]
    s_lenient = json.loads(lenient["json"])["summary"]
    assert s_strict["fail"] == s_lenient["fail"]  # the targets' statuses do not depend on the level
    assert s_lenient["failing"] < s_strict["failing"] <= s_strict["fail"]
    # At the lowest level every failing target fails the run (a finding of any severity is open).
    assert main(["check", str(DEMO), "-f", "json", "-o", str(tmp_path / "all.json"), "--fail-level", "note"]) == 1
    s_all = json.loads((tmp_path / "all.json").read_text())["summary"]
    assert s_all["failing"] == s_all["fail"]
    # A finding below the fail level is not a JUnit failure: the case passes and lists it.
    root = ET.fromstring(lenient["junit"].encode("utf-8"))
    warned = [c for c in root.iter("testcase") if c.find("failure") is None and c.find("system-out") is not None]
    assert warned and all("below the fail level" in c.find("system-out").text for c in warned)


def test_a_pass_says_so_everywhere(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    roomy = DEMO / "alternatives" / "roomy"
    for fmt in ("json", "sarif", "junit", "md"):
        assert main(["check", str(roomy), "-f", fmt, "-o", str(tmp_path / fmt)]) == 0
        assert "passed: no target has an open finding at error (exit 0)" in capsys.readouterr().err
    assert json.loads((tmp_path / "sarif").read_text())["runs"][0]["invocations"][0]["exitCode"] == 0
    assert ET.fromstring((tmp_path / "junit").read_bytes()).get("failures") == "0"


def test_quiet_keeps_the_log_to_errors(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(DEMO / "android"), "-f", "json", "-o", str(tmp_path / "r.json"), "--quiet"]) == 1
    assert capsys.readouterr().err == ""
    assert main(["check", str(DEMO / "android"), "-f", "sarif", "--quiet"]) == 1
    captured = capsys.readouterr()
    assert captured.err == "" and json.loads(captured.out)["version"] == "2.1.0"
