"""The pytest plugin, run by pytest itself (its `pytester` fixture): fixture, options, summary.

The plugin is found through the `pytest11` entry point of the installed package, as it is
in a user's project; nothing here passes `-p`. Expected findings follow WCAG 2.2 SC 2.5.8
(24 CSS px, error) and Apple's HIG (28 pt at the least, warning) on the demo's seed tray,
whose two 22 pt steppers touch.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from importlib.metadata import entry_points

import pytest
from conftest import DEMO

pytest_plugins = ["pytester"]

SEED_TRAY = DEMO / "ios" / "seed_tray.xml"
PLOTS = DEMO / "android" / "plots.xml"
SECTION = "touch targets (tapgauge)"

TESTS = f"""
from pathlib import Path

TRAY = Path({str(SEED_TRAY)!r}).read_text("utf-8")  # as a WebDriver client's page_source gives it
PLOTS = Path({str(PLOTS)!r})

def test_plot_list(touch_targets):
    assert touch_targets(PLOTS, fail_level="error").passed  # its Android 48 dp warnings do not count

def test_seed_tray(touch_targets):
    result = touch_targets(TRAY, name="seed tray", scale=3)
    assert [t.number for t in result.failing] == EXPECTED

def test_seed_tray_asserted(touch_targets):
    touch_targets.assert_passes(TRAY, name="seed tray again", scale=3)

def test_no_screens():
    pass
"""


def write_tests(pytester: pytest.Pytester, expected: list[int]) -> None:
    pytester.makepyfile(test_screens=TESTS.replace("EXPECTED", repr(expected)))


def test_the_entry_point_names_the_plugin() -> None:
    found = [ep for ep in entry_points(group="pytest11") if ep.name == "tapgauge"]
    assert [ep.value for ep in found] == ["tapgauge.pytest_plugin"]


def test_summary_lists_failing_screens_per_test(pytester: pytest.Pytester) -> None:
    write_tests(pytester, [5, 6])
    result = pytester.runpytest()
    result.assert_outcomes(passed=3, failed=1)
    out = result.stdout.str()
    section = out.split(f" {SECTION} ")[1]
    assert "3 screens checked in 3 tests: 1 pass, 2 fail" in section
    result.stdout.fnmatch_lines([
        f"*= {SECTION} =*",
        "test_screens.py::test_seed_tray",
        "  seed tray: 2 targets fail at error: #5 Fewer seeds, #6 More seeds",
        "test_screens.py::test_seed_tray_asserted",
        "  seed tray again: 2 targets fail at error: #5 Fewer seeds, #6 More seeds",
    ])
    assert "test_plot_list" not in section.split("short test summary")[0]  # it passed: not listed
    # The failed assertion shows the findings table of what failed, at the test's line.
    result.stdout.fnmatch_lines(["*AssertionError: touch targets: 2 targets on seed tray again fail at error",
                                 "*#5 Fewer seeds*error wcag-2.5.8/size-24: 22.0 / 24 pt*"])
    assert "How deep to sow?" not in out.split(f" {SECTION} ")[0]


def test_fail_level_option_applies_as_default(pytester: pytest.Pytester) -> None:
    # At warning, #8 (17 pt high, under Apple's 28 pt) fails too.
    write_tests(pytester, [5, 6, 8])
    result = pytester.runpytest("--touch-fail-level", "warning")
    result.assert_outcomes(passed=3, failed=1)
    said = "  seed tray: 3 targets fail at warning or above: #5 Fewer seeds, #6 More seeds, #8 How deep to sow?"
    result.stdout.fnmatch_lines([said])


def test_rules_option_applies_and_keywords_win(pytester: pytest.Pytester) -> None:
    pytester.makepyfile(test_rules=f"""
        from pathlib import Path
        TRAY = Path({str(SEED_TRAY)!r}).read_text("utf-8")

        def test_rules(touch_targets):
            assert touch_targets(TRAY, scale=3).record["rulesets"] == ["apple-hig"]
            assert touch_targets(TRAY, scale=3, rules="wcag-2.5.8").record["rulesets"] == ["wcag-2.5.8"]
            assert touch_targets(TRAY, scale=3, fail_level=None).fail_level == "warning"
            assert touch_targets(TRAY, scale=3, fail_level="error").fail_level == "error"
            assert len(touch_targets.checked) == 4
    """)
    result = pytester.runpytest("--touch-rules", "apple-hig", "--touch-fail-level", "warning")
    result.assert_outcomes(passed=1)
    result.stdout.fnmatch_lines(["4 screens checked in 1 test: 1 pass, 3 fail"])


def test_config_applies_and_options_override_it(pytester: pytest.Pytester) -> None:
    pytester.makefile(".toml", tapgauge='fail_level = "warning"\n[device]\nscale = 3\n')
    pytester.makepyfile(test_config=f"""
        from pathlib import Path
        TRAY = Path({str(SEED_TRAY)!r}).read_text("utf-8")

        def test_level(touch_targets, request):
            result = touch_targets(TRAY)
            assert result.fail_level == (request.config.getoption("touch_fail_level") or "warning")
            assert result.record["device"]["scale_source"] == "config tapgauge.toml"
    """)
    pytester.runpytest().assert_outcomes(passed=1)
    pytester.runpytest("--touch-fail-level", "error").assert_outcomes(passed=1)


def test_no_section_when_no_screen_was_checked(pytester: pytest.Pytester) -> None:
    pytester.makepyfile(test_plain="def test_one():\n    assert True\n")
    result = pytester.runpytest()
    result.assert_outcomes(passed=1)
    assert SECTION not in result.stdout.str()


def test_bad_options_are_usage_errors(pytester: pytest.Pytester) -> None:
    pytester.makepyfile(test_plain="def test_one():\n    assert True\n")
    bad_rules = pytester.runpytest("--touch-rules", "wcag-2.5.8,shiny")
    assert bad_rules.ret == pytest.ExitCode.USAGE_ERROR
    bad_rules.stderr.fnmatch_lines(["*--touch-rules: shiny: no such rule set; built-in ids are:*"])
    bad_level = pytester.runpytest("--touch-fail-level", "loud")
    assert bad_level.ret == pytest.ExitCode.USAGE_ERROR
    bad_level.stderr.fnmatch_lines(["*--touch-fail-level: invalid choice: 'loud'*"])


def test_junit_xml_lists_the_checked_screens(pytester: pytest.Pytester) -> None:
    write_tests(pytester, [5, 6])
    pytester.runpytest("--junitxml=out.xml")
    xml = (pytester.path / "out.xml").read_text("utf-8")
    assert xml.count('name="tapgauge-screen"') == 3
    assert "seed tray again" in xml


def test_the_plugin_loads_nothing_heavy() -> None:
    # pytest imports the plugin in every run of every project with tapgauge installed.
    probe = ("import sys, pytest; before = set(sys.modules); import tapgauge.pytest_plugin; "
             "print(sorted(m for m in set(sys.modules) - before if not m.startswith('_pytest')))")
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, check=True).stdout
    assert ast.literal_eval(out) == ["tapgauge", "tapgauge.pytest_plugin"]
