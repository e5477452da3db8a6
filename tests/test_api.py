"""The Python API (tapgauge.check_source, assert_touch_targets): the CLI's results, from Python.

The API is checked against the CLI's own JSON report and table for the same screens
(one pipeline, two doors), and against published figures where the numbers come
from outside the project: WCAG 2.2 SC 2.5.8 (24 CSS px, with its spacing exception),
Android's dp (px * 160 / dpi) and its 48 dp guidance, Apple's 44/28 pt. All from memory (not
re-read for these tests); the severities are our rule data's (rules/*.toml), not the sources'.
"""

from __future__ import annotations

import inspect
import json
import subprocess
import sys
import warnings
from importlib import resources
from pathlib import Path
from typing import get_type_hints

import jsonschema
import pytest
from conftest import DEMO, REPO

import tapgauge
from tapgauge.api import CheckOptions, ScreenCheck, assert_touch_targets, check_source
from tapgauge.cli import main
from tapgauge.model import InputError

PLOTS = DEMO / "android" / "plots.xml"
SEED_TRAY = DEMO / "ios" / "seed_tray.xml"
# What the sidecars beside them say (screens_demo/android/device.txt: `wm density` 440 and
# dumpsys's 409.432 x 411.891 dpi; screens_demo/ios/device.txt: ppi 460, scale 3 from the
# 1170 px screenshot of a 390 pt wide tree), for sources that have no sidecar beside them.
ANDROID_DEVICE = {"density": 440, "ppi": (409.432, 411.891)}
IOS_DEVICE = {"scale": 3, "ppi": 460}


@pytest.fixture
def in_repo(monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.chdir(REPO)
    return REPO


def cli_screen(path: Path, capsys: pytest.CaptureFixture[str], *args: str) -> dict:
    main(["check", str(path), "-f", "json", "--quiet", *args])
    report = json.loads(capsys.readouterr().out)
    assert len(report["screens"]) == 1
    return report["screens"][0]


def essentials(result: ScreenCheck) -> list[tuple]:
    """What a test would assert on: the targets' statuses, places, sizes and findings."""
    return [(t.number, t.status, t.bounds, t.label, t.name, t.size, t.size_mm, t.findings) for t in result.targets]


# -- the same results as the CLI


@pytest.mark.parametrize("screen", [PLOTS, SEED_TRAY], ids=["android", "ios"])
def test_path_source_gives_the_cli_json_record(screen: Path, in_repo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    cli = cli_screen(screen, capsys)
    result = check_source(screen)
    assert result.record == cli
    assert json.loads(result.to_json()) == cli
    assert [t.status for t in result.targets] == [t["status"] for t in cli["targets"]]
    for ours, theirs in zip(result.targets, cli["targets"]):
        assert ours.bounds == tuple(theirs["bounds"])
        assert [(f.rule_id, f.severity, f.measured, f.required, f.unit, f.message) for f in ours.findings] == [
            (f["rule"], f["severity"], f["measured"], f["required"], f["unit"], f["message"]) for f in theirs["findings"]]


@pytest.mark.parametrize("screen", [PLOTS, SEED_TRAY], ids=["android", "ios"])
def test_table_is_the_cli_table(screen: Path, in_repo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", str(screen), "--width", "80"])
    assert check_source(screen).table(width=80) == capsys.readouterr().out


@pytest.mark.document
def test_report_json_is_a_valid_report_and_the_cli_one(in_repo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", str(SEED_TRAY), "-f", "json", "--quiet"])
    cli = json.loads(capsys.readouterr().out)
    ours = json.loads(check_source(SEED_TRAY).report_json())
    schema = json.loads(resources.files("tapgauge").joinpath("schema/report-v2.schema.json").read_text())
    jsonschema.validate(ours, schema)
    assert ours == cli


@pytest.mark.parametrize(("screen", "device"), [(PLOTS, ANDROID_DEVICE), (SEED_TRAY, IOS_DEVICE)],
                         ids=["android", "ios"])
def test_bytes_str_and_path_sources_agree(screen: Path, device: dict, in_repo: Path) -> None:
    by_path = check_source(screen)
    by_str_path = check_source(str(screen))
    by_bytes = check_source(screen.read_bytes(), **device)
    by_text = check_source(screen.read_text("utf-8"), **device)
    assert essentials(by_path) == essentials(by_str_path) == essentials(by_bytes) == essentials(by_text)
    assert by_bytes.path == by_text.path == "<source>"
    assert by_path.passed == by_bytes.passed and by_path.verdict == by_bytes.verdict
    # The device's numbers are the sidecar's; only where they came from differs.
    sources = by_bytes.record["device"]
    assert "argument" in (sources["unit_source"], sources["scale_source"])
    assert {k: v for k, v in by_bytes.record["device"].items() if not k.endswith("source")} == \
        {k: v for k, v in by_path.record["device"].items() if not k.endswith("source")}


def test_webdriver_json_response_and_parsed_tree_read_as_the_xml(in_repo: Path) -> None:
    xml = SEED_TRAY.read_text("utf-8")
    # W3C WebDriver, Get Page Source: the response body is {"value": <the page source string>}.
    response = json.dumps({"value": xml, "sessionId": "s-1"})
    from_xml = check_source(xml, **IOS_DEVICE)
    from_response = check_source(response, **IOS_DEVICE)
    assert essentials(from_response) == essentials(from_xml)
    assert any("'value'" in n for n in from_response.notices)  # says where the XML was read from
    tree = {"type": "Application", "rect": {"x": 0, "y": 0, "width": 390, "height": 844}, "children": [
        {"type": "Button", "label": "Water", "isEnabled": "1", "isVisible": "1",
         "rect": {"x": 10, "y": 10, "width": 20, "height": 20}},
        {"type": "Button", "label": "Weed", "isEnabled": "1", "isVisible": "1",
         "rect": {"x": 30, "y": 10, "width": 20, "height": 20}},
    ]}
    result = check_source(tree, name="watering")
    assert [t.label for t in result.targets] == ["Water", "Weed"]
    # WCAG 2.2 SC 2.5.8: under 24 x 24 and the 24-diameter circles of the two (centres 20 apart)
    # overlap, so the spacing exception cannot save them.
    assert [t.status for t in result.targets] == ["fail", "fail"]
    assert all(t.findings[0].rule_id == "wcag-2.5.8/size-24" for t in result.targets)


# -- published figures, on a dump written here

TWO_SMALL_ONE_LARGE = """<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>
<hierarchy rotation="0">
  <node class="android.widget.FrameLayout" package="org.example.plots" bounds="[0,0][1440,3040]">
    <node class="android.widget.ImageButton" content-desc="Less water" clickable="true" bounds="[100,100][160,160]"/>
    <node class="android.widget.ImageButton" content-desc="More water" clickable="true" bounds="[160,100][220,160]"/>
    <node class="android.widget.Button" text="Book plot" clickable="true" bounds="[600,1000][744,1144]"/>
  </node>
</hierarchy>
"""


def test_dp_and_published_minimums_on_an_android_dump(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    # Android Developers, "Support different pixel densities": dp = px * 160 / dpi; xxxhdpi is 640 dpi
    # (from memory).
    result = check_source(TWO_SMALL_ONE_LARGE, density="xxxhdpi", rules="wcag-2.5.8,android-guidance")
    less, more, book = result.targets
    assert less.size == more.size == (15.0, 15.0)  # 60 px at 640 dpi
    assert book.size == (36.0, 36.0)  # 144 px
    # WCAG 2.2 SC 2.5.8 (24 CSS px; WCAG2ICT: the platform unit; from memory): the two 15 dp buttons touch, so
    # their 24 circles overlap: both fail, an error. 36 dp passes it.
    for t in (less, more):
        assert t.failing and t.status == "fail"
        assert ("wcag-2.5.8/size-24", "error", 15.0, 24.0, "dp") in [
            (f.rule_id, f.severity, f.measured, f.required, f.unit) for f in t.findings]
    assert not book.failing
    # Android Accessibility Help, "Touch target size": 48 dp (from memory; a warning in our rule data).
    assert [(f.rule_id, f.required) for f in book.findings] == [("android-guidance/size-48", 48.0)]
    assert not result.passed and result.verdict == "fail"
    assert [t.number for t in result.failing] == [1, 2]
    assert check_source(TWO_SMALL_ONE_LARGE, density="xxxhdpi", fail_level="warning").failing[-1].number == 3


def test_bounds_stay_in_the_source_coordinates(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    result = check_source(TWO_SMALL_ONE_LARGE, density=640)
    assert [t.bounds for t in result.targets] == [(100, 100, 160, 160), (160, 100, 220, 160), (600, 1000, 744, 1144)]


# -- the assertion helper


def test_assert_message_lists_the_failing_targets_only(in_repo: Path) -> None:
    with pytest.raises(AssertionError) as caught:
        assert_touch_targets(SEED_TRAY.read_bytes(), name="seed tray", **IOS_DEVICE)
    message = str(caught.value)
    # #5 and #6 are 22 pt, under WCAG 2.5.8's 24 and touching (error); #7 has only a note (Apple
    # HIG's 44 pt) and #8 only a warning (Apple HIG's 28 pt minimum): below the fail level.
    assert message.startswith("touch targets: 2 targets on seed tray fail at error")
    assert "#5 Fewer seeds" in message and "#6 More seeds" in message
    assert "#7 Heat mat" not in message and "#8 How deep to sow?" not in message
    assert "apple-hig" not in message.split("findings by rule")[0]  # only findings at the fail level
    assert "failed: 2 targets with open findings at error" in " ".join(message.split())  # the screen's totals
    assert len(message.splitlines()) < 30  # short enough to read in a pytest failure (common practice)


def test_assert_at_warning_adds_the_warnings(in_repo: Path) -> None:
    with pytest.raises(AssertionError) as caught:
        assert_touch_targets(SEED_TRAY, fail_level="warning")
    message = str(caught.value)
    assert "#8 How deep to sow?" in message and "apple-hig/size-28" in message
    assert "#7 Heat mat" not in message


def test_assert_returns_the_result_when_it_passes(in_repo: Path) -> None:
    result = assert_touch_targets(PLOTS)  # nothing at error on the plot list
    assert result.passed and result.verdict == "pass"


def test_assert_fails_when_nothing_was_compared(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    disabled = TWO_SMALL_ONE_LARGE.replace('clickable="true"', 'clickable="true" enabled="false"')
    result = check_source(disabled, density=640)
    assert not result.passed and result.verdict == "nothing-compared"  # nothing measured is never a pass
    with pytest.raises(AssertionError, match="nothing compared"):
        result.assert_passed()


# -- config, and arguments over it


def test_config_applies_and_arguments_override_it(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "tapgauge.toml").write_text(
        'rules = ["apple-hig"]\nfail_level = "warning"\n\n[device]\nscale = 3\nppi = 460\n', "utf-8")
    monkeypatch.chdir(tmp_path)
    xml = SEED_TRAY.read_text("utf-8")
    by_config = check_source(xml)
    assert by_config.record["rulesets"] == ["apple-hig"]
    assert by_config.fail_level == "warning"
    assert by_config.targets[4].size_mm == (3.64, 3.64)  # 22 pt x 3 px/pt / 460 ppi x 25.4 mm/in
    # Apple HIG, Accessibility: 28 pt at the least (from memory; a warning in our rule data): #5, #6 and #8.
    assert [t.number for t in by_config.failing] == [5, 6, 8]
    by_args = check_source(xml, rules=["wcag-2.5.8"], fail_level="error", ppi=326)
    assert by_args.record["rulesets"] == ["wcag-2.5.8"]
    assert [t.number for t in by_args.failing] == [5, 6]
    assert by_args.targets[4].size_mm == (5.14, 5.14)  # 22 x 3 / 326 x 25.4
    assert by_args.record["device"]["scale_source"] == "config tapgauge.toml"


def test_config_in_pyproject_gives_the_density(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "pyproject.toml").write_text('[project]\nname = "x"\n\n[tool.tapgauge.device]\ndensity = 320\n', "utf-8")
    sub = tmp_path / "tests" / "ui"
    sub.mkdir(parents=True)
    monkeypatch.chdir(sub)  # found from the current folder up
    result = check_source(TWO_SMALL_ONE_LARGE)
    assert result.targets[0].size == (30.0, 30.0)  # 60 px * 160 / 320
    assert check_source(TWO_SMALL_ONE_LARGE, density=480).targets[0].size == (20.0, 20.0)
    assert check_source(TWO_SMALL_ONE_LARGE, config_dir=tmp_path.parent, density=160).targets[0].size == (60.0, 60.0)


def test_config_waivers_match_the_given_name(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "tapgauge.toml").write_text(
        '[[waivers]]\nscreen = "ios/*"\ntarget = "label:Fewer seeds"\nrule = "wcag-2.5.8/*"\n'
        'reason = "an equivalent control sits in the tray menu"\nauthor = "Ada Plotter"\n', "utf-8")
    monkeypatch.chdir(tmp_path)
    result = check_source(SEED_TRAY.read_bytes(), name="ios/seed_tray.xml", **IOS_DEVICE)
    fewer = result.targets[4]
    assert fewer.findings[0].waiver is not None and fewer.findings[0].waiver.author == "Ada Plotter"
    assert not fewer.failing and fewer.status == "fail"  # its Apple HIG findings stay open
    assert [t.number for t in result.failing] == [6]
    elsewhere = check_source(SEED_TRAY.read_bytes(), name="other/seed_tray.xml", **IOS_DEVICE)
    assert [t.number for t in elsewhere.failing] == [5, 6]


def test_bad_config_is_an_input_error_naming_it(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "tapgauge.toml").write_text('fail_level = "loud"\n', "utf-8")
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError) as caught:
        check_source(SEED_TRAY.read_text("utf-8"))
    assert caught.value.path.endswith("tapgauge.toml") and caught.value.line == 1
    assert "fail_level" in caught.value.message


# -- bad input


@pytest.mark.parametrize(("source", "name", "said", "line"), [
    ("<hierarchy><node bounds='[0,0][9,9]'></hierarchy>", None, "malformed XML", 1),
    ("<screen>\n  <button/>\n</screen>", "home", "root element is <screen>", 1),
    ("", None, "empty", None),
    (b"\n\n<hierarchy>\n<node bounds='[9,9][0,0]' clickable='true'/>\n</hierarchy>", None, "right < left", 4),
    ('{"value": {"error": "no such window", "message": "the window is gone"}}', "tray", "answered with an error", None),
    ('{"value": 42}', None, "does not read", None),
    ('{"images": [], "annotations": []}', None, "COCO", None),
])
def test_bad_content_names_the_source_and_the_problem(source: str | bytes, name: str | None, said: str,
                                                      line: int | None, tmp_path: Path,
                                                      monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError) as caught:
        check_source(source, name=name, density=420)
    assert caught.value.path == (name or "<source>")
    assert said in caught.value.message
    assert caught.value.line == line
    assert str(caught.value).startswith(name or "<source>")


def test_android_content_without_density_says_how_to_give_it(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError, match=r"density= \(dpi such as 420"):
        check_source(TWO_SMALL_ONE_LARGE)


def test_several_dumps_in_one_source_are_refused(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError, match="holds 2 XML documents"):
        check_source(TWO_SMALL_ONE_LARGE + TWO_SMALL_ONE_LARGE, density=640)


def test_missing_file_and_bad_arguments(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError, match="not found") as caught:
        check_source(tmp_path / "gone.xml")
    assert caught.value.path.endswith("gone.xml")
    with pytest.raises(ValueError, match=r"^density='lots': "):
        check_source(TWO_SMALL_ONE_LARGE, density="lots")
    with pytest.raises(ValueError, match=r"^fail_level='loud': "):
        check_source(TWO_SMALL_ONE_LARGE, density=640, fail_level="loud")
    with pytest.raises(InputError, match="no such rule set"):
        check_source(TWO_SMALL_ONE_LARGE, density=640, rules="shiny")
    with pytest.raises(TypeError, match="name="):
        check_source(SEED_TRAY, name="tray")
    with pytest.raises(TypeError, match="source"):
        check_source(42)  # type: ignore[arg-type]


def test_an_old_rule_set_id_still_works_with_a_warning(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    with pytest.warns(FutureWarning, match="'wcag22-aa' is now 'wcag-2.5.8'"):
        result = check_source(TWO_SMALL_ONE_LARGE, density=640, rules="wcag22-aa")
    assert result.record["rulesets"] == ["wcag-2.5.8"]


# -- the result is a value


def test_results_are_frozen_and_records_are_copies(in_repo: Path) -> None:
    result = check_source(SEED_TRAY)
    with pytest.raises(AttributeError):
        result.fail_level = "note"  # type: ignore[misc]
    result.record["targets"].clear()
    assert len(result.record["targets"]) == len(result.targets) == 13
    assert result == check_source(SEED_TRAY)


# -- packaging: typed, and loaded only when used


def test_package_exports_the_api_lazily() -> None:
    assert tapgauge.check_source is check_source
    assert tapgauge.ScreenCheck is ScreenCheck
    assert tapgauge.InputError is InputError
    assert {"check_source", "assert_touch_targets", "ScreenCheck", "TargetCheck", "FindingCheck"} <= set(dir(tapgauge))
    with pytest.raises(AttributeError):
        tapgauge.nothing_here  # noqa: B018
    assert resources.files("tapgauge").joinpath("py.typed").is_file()  # PEP 561: the package ships its types


def test_check_options_are_check_source_keywords() -> None:
    # The TypedDict that types assert_touch_targets and the fixture's keywords, kept in step.
    keywords = inspect.signature(check_source).parameters
    hints = get_type_hints(check_source)
    assert get_type_hints(CheckOptions) == {k: hints[k] for k, p in keywords.items() if p.kind is p.KEYWORD_ONLY}


def test_import_and_cli_start_up_do_not_load_the_api() -> None:
    probe = ("import sys, tapgauge; light = 'tapgauge.api' not in sys.modules and 'lxml' not in sys.modules; "
             "import tapgauge.cli; print(light, 'tapgauge.api' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["True", "False"]


def test_no_warning_on_a_plain_check(in_repo: Path) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        check_source(SEED_TRAY)
