"""The terminal table as a CI log shows it: where the summary line goes, `--show LEVEL`, the
"findings by rule" overview, and waived findings marked with their reason."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from conftest import dump_node, dump_xml

from tapgauge.cli import main

PKG = "org.fernwick.allotments"
SUMMARY = re.compile(r"\d+ screens?, \d+ targets?: .*\(exit \d\)")


def _node(index: int, bounds: tuple[int, int, int, int], *, rid: str = "", cls: str = "android.widget.ImageButton",
          **kw: object) -> str:
    """A node of the shared dump shape, its resource id given short (`save` for PKG:id/save)."""
    return dump_node(index, bounds, rid=rid and f"{PKG}:id/{rid}", cls=cls, **kw)  # type: ignore[arg-type]


def _dump(*nodes: str) -> str:
    return dump_xml(*nodes)


@pytest.fixture
def screens(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """Two screens of the garden-plot app at 420 dpi (2.625 px per dp), sized so that the expected
    findings follow from the published thresholds alone:

    - WCAG 2.2 SC 2.5.8 (W3C): 24 x 24 CSS px, read as dp for native apps (W3C WCAG2ICT), unless a
      24-wide circle on each undersized target meets no other target nor another's circle;
    - Android Accessibility Help, "Touch target size": 48 x 48 dp, 8 dp apart (from memory).

    plot_notes.xml: a 30 dp button (79 px; 48 > 30 >= 24, alone): one Android size warning only.
    plot_tools.xml: the same 30 dp button; two 16 dp buttons (42 px) side by side, touching (WCAG
    error each, Android size and spacing warnings each); a 56 dp button (147 px), far away: passes.
    """
    folder = tmp_path / "screens"
    folder.mkdir()
    (folder / "device.txt").write_text("density: 420\n")
    (folder / "plot_notes.xml").write_text(_dump(
        _node(1, (60, 300, 139, 379), desc="Add note", rid="add_note"),
        _node(2, (400, 1500, 547, 1647), text="Save", rid="save", cls="android.widget.Button"),
    ))
    (folder / "plot_tools.xml").write_text(_dump(
        _node(1, (60, 300, 139, 379), desc="Water can", rid="water"),
        _node(2, (60, 800, 102, 842), desc="Fewer seeds", rid="minus"),
        _node(3, (102, 800, 144, 842), desc="More seeds", rid="plus"),
        _node(4, (400, 1500, 547, 1647), text="Sow", rid="sow", cls="android.widget.Button"),
    ))
    monkeypatch.chdir(tmp_path)
    return tmp_path


# Open findings per rule that the thresholds above give, and the totals the summary must count.
EXPECTED = {"wcag-2.5.8/size-24": 2, "android-guidance/size-48": 4, "android-guidance/gap-8": 2}


def _by_rule(table: str) -> dict[str, tuple[str, int, int]]:
    """The "findings by rule" block as {rule id: (severity, open, waived)}."""
    block = table.split("findings by rule", 1)[1]
    rows = re.findall(r"^\s*(\d+)\s+(\d+)\s+(error|warning|note)\s+(\S+/\S+)\s*$", block, re.MULTILINE)
    return {r: (sev, int(o), int(w)) for o, w, sev, r in rows}


def _right(table: str) -> str:
    """The findings column's text, its wrapped lines joined: what a reader reads down the column."""
    return " ".join(line.split("│", 1)[1].strip() for line in table.splitlines() if "│" in line)


def _titles(table: str) -> list[str]:
    return re.findall(r"^screens/(plot_\w+\.xml)$", table, re.MULTILINE)


def test_table_counts_every_rule_and_ends_with_the_overview(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens", "--width", "80"]) == 1
    out = capsys.readouterr().out
    assert _titles(out) == ["plot_notes.xml", "plot_tools.xml"]
    by_rule = _by_rule(out)
    assert {r: o for r, (_, o, _) in by_rule.items()} == EXPECTED
    assert {r: s for r, (s, _, _) in by_rule.items()} == {
        "wcag-2.5.8/size-24": "error", "android-guidance/size-48": "warning",
        "android-guidance/gap-8": "warning"}
    lines = out.rstrip("\n").splitlines()
    overview = next(k for k, line in enumerate(lines) if line.startswith("findings by rule"))
    assert SUMMARY.search(" ".join(lines[overview + 1 + len(EXPECTED) + 1:]))  # the summary line closes it
    assert "open findings: 2 error, 6 warning, 0 note" in " ".join(out.split())
    assert all(len(line) <= 80 for line in lines)


def test_show_error_lists_only_errors_and_screens_that_have_them(screens: Path,
                                                                 capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens", "--width", "80"]) == 1
    everything = capsys.readouterr().out
    assert main(["check", "screens", "--width", "80", "--show", "error"]) == 1
    shown = capsys.readouterr().out
    assert _titles(shown) == ["plot_tools.xml"]  # the notes screen has warnings only
    assert "error wcag-2.5.8/size-24" in shown and "warning android" not in shown
    assert {r: o for r, (_, o, _) in _by_rule(shown).items()} == {"wcag-2.5.8/size-24": 2}
    # The totals still count everything: the same summary line as without --show.
    assert SUMMARY.search(" ".join(shown.split())).group(0) == SUMMARY.search(" ".join(everything.split())).group(0)
    assert main(["check", "screens", "--width", "80", "--show", "warning"]) == 1
    assert _titles(capsys.readouterr().out) == ["plot_notes.xml", "plot_tools.xml"]


def test_show_warning_hides_notes(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # motor-mm's reduced-precision rule is a note (20 mm, README "Rule sets"); at 420 ppi the 56 dp
    # button is 147 px = 8.9 mm (147 / 420 * 25.4), so it fails it.
    args = ["check", "screens", "--width", "80", "--ppi", "420", "-r", "wcag-2.5.8,android-guidance,motor-mm"]
    assert main(args) == 1
    everything = capsys.readouterr().out
    assert "note motor-mm/reduced-precision" in everything
    assert main([*args, "--show", "warning"]) == 1
    shown = capsys.readouterr().out
    assert "note motor-mm" not in shown and "warning android-guidance" in shown
    assert "motor-mm/reduced-precision" not in _by_rule(shown)


@pytest.mark.parametrize("level", ["fatal", "warn", ""])
def test_show_with_an_unknown_level_is_a_usage_error(screens: Path, capsys: pytest.CaptureFixture[str],
                                                     level: str) -> None:
    assert main(["check", "screens", "--show", level]) == 2
    captured = capsys.readouterr()
    assert "expected one of: note, warning, error" in captured.err and captured.out == ""


# ---- findings by rule: ids whole at 80 columns --------------------------------------------------

def _house_rules(folder: Path, rule_id: str) -> Path:
    """A project's own rule file (the format of rules/rulesets/*.toml)."""
    path = folder / "house.toml"
    path.write_text(f'''[ruleset]
id = "fernwick-allotments-house-style"
title = "Fernwick house style: 56 dp buttons for gloved hands"
source = "Fernwick allotments design notes (invented for this test)"
url = "https://example.org/fernwick/design"
platforms = ["android"]

[[rules]]
id = "{rule_id}"
kind = "min-size"
summary = "A 56 x 56 dp square fits"
severity = "warning"
unit = "dp"
size = 56
''')
    return path


def test_builtin_rule_ids_are_whole_at_80_columns(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", "screens", "--width", "80"])
    out = capsys.readouterr().out
    assert set(_by_rule(out)) == set(EXPECTED)  # the regex takes only whole rows: id, severity, both counts


@pytest.mark.parametrize("rule", ["gloved-thumb-size-wet-weather", "gloved-thumb-minimum-size-in-wet-weather"])
def test_a_long_rule_id_keeps_its_severity_and_counts_at_80_columns(screens: Path, capsys: pytest.CaptureFixture[str],
                                                                    rule: str) -> None:
    _house_rules(screens, rule)
    main(["check", "screens", "--width", "80", "-r", "wcag-2.5.8,house.toml"])
    out = capsys.readouterr().out
    full = f"fernwick-allotments-house-style/{rule}"  # 61 and 72 characters
    assert full in out  # never cut
    # 30, 16, 16 and 30 dp buttons are under 56 dp; the two 56 dp buttons are not.
    assert _by_rule(out).get(full) == ("warning", 4, 0)


# ---- the summary line: stderr when stdout does not carry it ----------------------------------------

def test_summary_goes_to_stderr_when_the_report_goes_to_a_file(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens", "-o", "report.txt"]) == 1
    captured = capsys.readouterr()
    assert captured.out == ""
    log = captured.err.strip().splitlines()
    assert len(log) == 1 and SUMMARY.search(log[0]) and log[0].startswith("tapgauge: ")
    written = " ".join((screens / "report.txt").read_text().split())
    assert SUMMARY.search(written).group(0) == log[0].removeprefix("tapgauge: ")


@pytest.mark.parametrize("fmt", ["json", "csv", "sarif", "junit", "md", "html"])
def test_summary_goes_to_stderr_beside_a_machine_format(screens: Path, capsys: pytest.CaptureFixture[str],
                                                        fmt: str) -> None:
    assert main(["check", "screens", "-f", fmt]) == 1
    captured = capsys.readouterr()
    assert SUMMARY.search(captured.err)
    if fmt == "json":
        json.loads(captured.out)  # stdout stays pure JSON


def test_the_table_on_stdout_keeps_stderr_quiet(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens"]) == 1
    captured = capsys.readouterr()
    assert SUMMARY.search(" ".join(captured.out.split())) and captured.err == ""


def test_quiet_silences_the_summary_but_not_input_errors(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens", "-f", "json", "-q"]) == 1
    assert capsys.readouterr().err == ""
    # A dump cut off mid-write (the device disconnected): named, with its line, even with --quiet.
    (screens / "screens" / "plot_map.xml").write_text(_dump(_node(1, (0, 0, 200, 200), desc="Map"))[:300])
    assert main(["check", "screens", "-f", "json", "-q"]) == 2
    captured = capsys.readouterr()
    assert re.search(r"^tapgauge: screens/plot_map\.xml:\d+: ", captured.err, re.MULTILINE)
    assert not SUMMARY.search(captured.err)
    report = json.loads(captured.out)  # the other screens are still checked and reported
    assert len(report["screens"]) == 2 and report["summary"]["verdict"] == "input-errors"


def test_gate_summary_goes_to_stderr_and_quiet_silences_it(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["baseline", "screens", "-o", "b.json"]) == 0
    capsys.readouterr()
    assert main(["gate", "screens", "-b", "b.json", "-f", "json"]) == 0
    captured = capsys.readouterr()
    assert json.loads(captured.out)["summary"]["verdict"] == "pass"
    assert "gate passed at fail level error (exit 0)" in captured.err
    assert main(["gate", "screens", "-b", "b.json", "-f", "json", "-q"]) == 0
    assert capsys.readouterr().err == ""
    assert main(["gate", "screens", "-b", "b.json"]) == 0  # the table on stdout carries it
    captured = capsys.readouterr()
    assert "gate passed" in captured.out and captured.err == ""


# ---- waived findings in the table ---------------------------------------------------------------

WAIVER = '''project = "fernwick-allotments"

[[waivers]]
screen = "screens/plot_tools.xml"
target = "id:plus"
rule = "wcag-2.5.8/*"
reason = "Equivalent control: seeds per cell can also be typed in"
author = "Accessibility review, 2026-11"
expires = 2027-03-31
'''


def test_waived_findings_are_marked_with_reason_author_and_expiry(screens: Path,
                                                                  capsys: pytest.CaptureFixture[str]) -> None:
    (screens / "tapgauge.toml").write_text(WAIVER)
    assert main(["check", "screens", "--width", "80", "--today", "2026-12-01"]) == 1  # Fewer seeds still fails
    out = capsys.readouterr().out
    flat = " ".join(out.split())
    assert "waived wcag-2.5.8/size-24: 16.0 / 24 dp (error)" in flat
    assert ("waived: Equivalent control: seeds per cell can also be typed in "
            "(Accessibility review, 2026-11, until 2027-03-31)") in " ".join(_right(out).split())
    plus = out[out.index("#3 More seeds"):]
    assert "ERROR" not in plus.split("───")[0]  # its own block: waived, not open
    assert _by_rule(out)["wcag-2.5.8/size-24"] == ("error", 1, 1)
    assert "open findings: 1 error, 6 warning, 0 note" in flat
    # --show error still lists the waived error, so a reviewer sees what was waived and why.
    assert main(["check", "screens", "--width", "80", "--today", "2026-12-01", "--show", "error"]) == 1
    assert "waived wcag-2.5.8/size-24" in capsys.readouterr().out


def test_an_expired_waiver_counts_again_and_says_so(screens: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (screens / "tapgauge.toml").write_text(WAIVER)
    assert main(["check", "screens", "--width", "80", "--today", "2027-04-01"]) == 1
    flat = " ".join(capsys.readouterr().out.split())
    assert "waived wcag" not in flat and "expired on 2027-03-31" in flat
    assert "open findings: 2 error, 6 warning, 0 note" in flat
