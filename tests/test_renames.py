"""Names of our own (tapgauge 0.2): old rule ids and the old severity word are still read, with a
notice, for one version; nothing is written with them; `tapgauge rules` prints every id whole."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.renames import RULE_SETS, RULES, current

SCREEN = DEMO / "android" / "plot_detail.xml"


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    (tmp_path / "screens").mkdir()
    for name in ("plot_detail.xml", "device.txt"):
        shutil.copy(DEMO / "android" / name, tmp_path / "screens" / name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _report(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, dict, str]:
    code = main(["check", "screens", "-f", "json", "--quiet", *args])
    captured = capsys.readouterr()
    return code, json.loads(captured.out), captured.err


def test_every_old_id_maps_to_a_rule_that_exists(capsys: pytest.CaptureFixture[str]) -> None:
    main(["rules", "--width", "80"])
    listed = capsys.readouterr().out
    for old, new in {**RULE_SETS, **RULES}.items():
        assert current(old) == new and new in listed and old not in listed


def test_old_rule_set_ids_on_the_command_line_still_work(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, new, _ = _report(capsys, "--rules", "wcag-2.5.8,android-guidance")
    again, old, err = _report(capsys, "--rules", "wcag22-aa,android-guideline")
    assert (code, old["summary"]) == (again, new["summary"])
    assert "'wcag22-aa' is now 'wcag-2.5.8'" in err and "'android-guideline' is now 'android-guidance'" in err
    rules = {f["rule"] for s in old["screens"] for t in s["targets"] for f in t["findings"]}
    assert rules and all(not r.startswith(("wcag22-aa", "android-guideline")) for r in rules)  # never written


def test_an_old_waiver_rule_still_waives(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (project / "tapgauge.toml").write_text(
        '[[waivers]]\nscreen = "screens/plot_detail.xml"\ntarget = "id:help"\nrule = "wcag22-aa/*"\n'
        'reason = "Equivalent control in the plot menu"\nauthor = "Review 2026-11"\n')
    _, report, err = _report(capsys)
    waived = [f for s in report["screens"] for t in s["targets"] for f in t["findings"] if f["waiver"]]
    assert [f["rule"] for f in waived] == ["wcag-2.5.8/size-24"]
    assert "tapgauge.toml:4: waiver rule: 'wcag22-aa/*' is now 'wcag-2.5.8/*'" in err


def test_the_old_severity_word_is_read_with_a_notice(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, report, err = _report(capsys, "--fail-level", "info")
    assert report["fail_level"] == "note" and "now called 'note'" in err
    assert code == 1


def test_rule_ids_are_printed_whole_at_any_width(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    for width in (40, 80):
        main(["rules", "--width", str(width)])
        out = capsys.readouterr().out
        ids = [line.strip() for line in out.splitlines() if line.startswith("  ") and "/" in line
               and not line.startswith("   ") and "http" not in line]
        assert "wcag-2.5.8/size-24" in ids and "android-guidance/gap-8" in ids
