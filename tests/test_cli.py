"""End-to-end: the command line on dump files, exit codes, golden JSON, bad input."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from importlib import resources
from pathlib import Path

import jsonschema
import pytest

from conftest import DATA, DEMO
from tapgauge.cli import main

GOLDEN = DATA / "demo_report.json"
GOOD_DUMP = DEMO / "android" / "settings_landscape.xml"


@pytest.fixture
def in_repo(monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.chdir(DEMO.parent)
    return DEMO.parent


def _schema() -> dict:
    return json.loads(resources.files("tapgauge").joinpath("schema/report-v2.schema.json").read_text())


def run_json(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, dict]:
    code = main(["check", "--format", "json", *args])
    out = capsys.readouterr().out
    return code, json.loads(out)


@pytest.mark.document
def test_demo_matches_golden_json_and_schema(in_repo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, report = run_json(["screens_demo"], capsys)
    jsonschema.validate(report, _schema())
    if os.environ.get("TAPGAUGE_UPDATE_GOLDEN"):
        GOLDEN.write_text(json.dumps(report, indent=2, ensure_ascii=False) + "\n")
    assert report == json.loads(GOLDEN.read_text())
    assert code == 1 and report["summary"]["exit_code"] == 1


def test_demo_covers_every_case_the_issue_names(in_repo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _, report = run_json(["screens_demo"], capsys)
    by_status: dict[str, set[str]] = {}
    notes = []
    for s in report["screens"]:
        for t in s["targets"]:
            by_status.setdefault(t["status"], set()).add(t["name"])
            notes += t["notes"]
    assert {"pass", "fail", "partial", "unchecked"} <= set(by_status)
    assert any("passes by spacing" in n for n in notes)
    assert "Remove date" in by_status["fail"] and "14" in by_status["fail"]  # the overlap
    screens = report["screens"]
    assert {s["platform"] for s in screens} == {"android", "ios"}
    assert {s["coordinates"] for s in screens} == {"px", "pt"}
    suffixes = {s["path"].rsplit(".", 1)[-1] for s in screens}
    assert {"xml", "csv", "png"} <= suffixes  # dumps/trees/VOC, our CSV, a marked screenshot
    assert sum(1 for s in screens if s["image"]) == len(screens)  # every demo screen has its picture
    kinds = {f["rule"] for s in report["screens"] for t in s["targets"] for f in t["findings"]}
    assert {"wcag-2.5.8/size-24", "android-guidance/size-48", "android-guidance/gap-8"} <= kinds


def test_passing_screen_exits_0_and_table_ends_with_summary(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(GOOD_DUMP)]) == 0
    out = capsys.readouterr().out
    summary, _, last = out.rstrip().rpartition("(exit 0)")
    assert summary and " ".join(last.split()).startswith("These figures support, and do not replace")
    assert max(len(line) for line in out.splitlines()) <= 80


def test_fail_level_warning_fails_on_warnings(capsys: pytest.CaptureFixture[str]) -> None:
    star_screen = DEMO / "android" / "plots.xml"
    code, report = run_json([str(star_screen), "--rules", "android-guidance"], capsys)
    assert code == 0 and report["summary"]["findings"]["warning"] > 0
    code, _ = run_json([str(star_screen), "--rules", "android-guidance", "--fail-level", "warning"], capsys)
    assert code == 1


def test_mm_rules_without_ppi_are_skipped_with_a_notice(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    dump = tmp_path / "s.xml"
    shutil.copy(GOOD_DUMP, dump)
    code, report = run_json([str(dump), "--density", "xxhdpi", "--rules", "motor-mm"], capsys)
    assert code == 0
    (screen,) = report["screens"]
    assert any("no physical ppi" in n for n in screen["notices"])
    assert all(t["size_mm"] is None for t in screen["targets"])
    code, report = run_json([str(dump), "--density", "440", "--ppi", "410", "--rules", "motor-mm"], capsys)
    assert report["screens"][0]["notices"] == []
    assert report["screens"][0]["device"]["ppi_source"] == "command line"


def test_missing_density_is_exit_2_with_advice(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    dump = tmp_path / "s.xml"
    shutil.copy(GOOD_DUMP, dump)
    assert main(["check", str(dump)]) == 2
    err = capsys.readouterr().err
    assert "s.xml" in err and "--density" in err


def test_bad_files_are_reported_and_good_ones_still_checked(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    shutil.copy(GOOD_DUMP, tmp_path / "good.xml")
    (tmp_path / "device.txt").write_text((DEMO / "android" / "device.txt").read_text())
    (tmp_path / "broken.xml").write_text("<hierarchy><node bounds='[0,0][1,1]'>")
    (tmp_path / "nobounds.xml").write_text('<hierarchy>\n<node clickable="true"/>\n</hierarchy>')
    (tmp_path / "entity.xml").write_text('<!DOCTYPE h [<!ENTITY e "x">]>\n<hierarchy>&e;</hierarchy>')
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    code, report = run_json([str(tmp_path)], capsys)
    assert code == 2
    assert [s["path"].rsplit("/", 1)[-1] for s in report["screens"]] == ["good.xml"]
    errors = {e["path"].rsplit("/", 1)[-1]: e for e in report["errors"]}
    assert set(errors) == {"broken.xml", "nobounds.xml", "entity.xml"}
    assert errors["nobounds.xml"]["line"] == 2 and "bounds" in errors["nobounds.xml"]["message"]
    assert "DOCTYPE" in errors["entity.xml"]["message"]
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir()} == before  # inputs untouched


def test_bad_sidecar_is_an_error_for_that_screen(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    shutil.copy(GOOD_DUMP, tmp_path / "s.xml")
    (tmp_path / "s.device.txt").write_text("hello\n")
    code, report = run_json([str(tmp_path)], capsys)
    assert code == 2 and "wm density" in report["errors"][0]["message"]


def test_output_file_is_written_whole(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "report.json"
    assert main(["check", str(GOOD_DUMP), "-f", "json", "-o", str(out)]) == 0
    assert json.loads(out.read_text())["summary"]["screens"] == 1
    assert [p.name for p in tmp_path.iterdir()] == ["report.json"]  # no temporary left behind
    assert capsys.readouterr().out == ""


def test_unwritable_output_is_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(GOOD_DUMP), "-o", str(tmp_path / "no" / "such" / "dir.txt")]) == 2
    assert "cannot write report" in capsys.readouterr().err


@pytest.mark.parametrize(
    ("args", "expect"),
    [
        (["check", "x.xml", "--density", "huge"], "neither a number"),
        (["check", "x.xml", "--rules", "nope"], "no such rule set"),
        (["check", "x.xml", "--format", "pdf"], "unknown format"),
        (["check", "x.xml", "--fail-level", "fatal"], "unknown severity"),
        (["check", "--bogus"], "No such option"),
    ],
)
def test_usage_errors_exit_2(args: list[str], expect: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(args) == 2
    captured = capsys.readouterr()
    assert expect in captured.err + captured.out


def test_malformed_user_rule_file_is_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    rules = tmp_path / "mine.toml"
    rules.write_text('[ruleset]\nid = "x"\n')
    assert main(["check", str(GOOD_DUMP), "--rules", str(rules)]) == 2
    assert "mine.toml" in capsys.readouterr().err


def test_project_config_gives_density_and_rules(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    shutil.copy(GOOD_DUMP, tmp_path / "s.xml")
    (tmp_path / "tapgauge.toml").write_text('rules = ["wcag-2.5.5"]\n[device]\ndensity = "xhdpi"\nppi = 300\n')
    monkeypatch.chdir(tmp_path)
    code, report = run_json(["s.xml"], capsys)
    assert code == 0
    assert report["screens"][0]["device"]["unit_source"] == "config tapgauge.toml"
    assert [r["id"] for r in report["rulesets"]] == ["wcag-2.5.5"]
    (tmp_path / "tapgauge.toml").write_text("[device]\ndensty = 300\n")
    assert main(["check", "s.xml"]) == 2
    assert "densty" in capsys.readouterr().err


def test_rules_command_lists_sources(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["rules"]) == 0
    out = capsys.readouterr().out
    assert "wcag-2.5.8/size-24" in out and "w3.org" in out


def test_installed_command_runs_from_another_folder(tmp_path: Path) -> None:
    # The console script of the installed package, run far from the source tree, finds its rule files.
    exe = shutil.which("tapgauge")
    if exe is None:
        pytest.skip("tapgauge console script is not on PATH (package not installed)")
    for module_form in (False, True):
        cmd = [exe] if not module_form else [str(Path(exe).with_name("python")), "-m", "tapgauge"]
        proc = subprocess.run([*cmd, "check", str(DEMO), "-f", "json"], cwd=tmp_path, capture_output=True,
                              text=True, timeout=120)
        assert proc.returncode == 1, proc.stderr
        golden = json.loads(GOLDEN.read_text())
        assert json.loads(proc.stdout)["summary"] == golden["summary"]


def test_table_in_colour_keeps_its_words_and_width(capsys: pytest.CaptureFixture[str],
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    """Colour is a help, never the only signal: without the escapes the same words remain, within 80 columns."""
    import re
    import sys

    from rich.cells import cell_len

    monkeypatch.setattr(sys.stdout, "isatty", lambda: True)
    main(["check", str(DEMO / "android"), "--width", "80"])
    out = capsys.readouterr().out
    plain = re.sub(r"\x1b\[[0-9;]*m", "", out)
    assert "\x1b[1;31merror\x1b[0m" in out and "error wcag-2.5.8/size-24" in plain
    assert max(cell_len(line) for line in plain.splitlines()) <= 80
