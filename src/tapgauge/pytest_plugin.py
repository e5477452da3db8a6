"""pytest plugin: the `touch_targets` fixture, `--touch-rules` / `--touch-fail-level`, and a summary.

pytest loads this module (entry point `pytest11`) in every run of every project where
tapgauge is installed, so it imports nothing of tapgauge until a test uses the fixture
or the options are given; tapgauge.api comes in on the fixture's first call.

Each screen a test checks is kept in the test's `user_properties` (a small JSON text),
so the summary also sees screens checked in worker processes (pytest-xdist sends
reports, with their properties, to the main process), and JUnit XML reports list them.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import pytest

if TYPE_CHECKING:
    from typing import Unpack

    from _pytest.terminal import TerminalReporter

    from tapgauge.api import CheckOptions, ScreenCheck, Source

PROPERTY = "tapgauge-screen"  # the user_properties key of each checked screen
LEVELS = ("error", "warning", "note")
_NAMES_SHOWN = 5  # failing targets named per screen in the summary; the rest are counted


def pytest_addoption(parser: pytest.Parser) -> None:
    group = parser.getgroup("tapgauge", "touch-target checks (tapgauge)")
    group.addoption("--touch-rules", dest="touch_rules", default=None, metavar="IDS",
                    help="Rule sets the touch_targets fixture checks against: comma-separated ids or TOML "
                         "paths (default: the project's tapgauge config, else tapgauge's defaults).")
    group.addoption("--touch-fail-level", dest="touch_fail_level", default=None, choices=LEVELS,
                    help="Lowest severity that fails a screen checked by touch_targets: error, warning or "
                         "note (default: the project's tapgauge config, else error).")


def pytest_configure(config: pytest.Config) -> None:
    rules = config.getoption("touch_rules", None)
    if rules:  # asked for: say a wrong id now, not once per test
        from tapgauge.model import InputError
        from tapgauge.renames import current
        from tapgauge.rulesets import select_rulesets

        try:
            select_rulesets([current(x.strip()) for x in rules.split(",")])
        except InputError as exc:
            raise pytest.UsageError(f"--touch-rules: {exc}") from None
    config.pluginmanager.register(_Summary(), "tapgauge-summary")


def _defaults(config: pytest.Config) -> dict[str, Any]:
    given = {"rules": config.getoption("touch_rules", None), "fail_level": config.getoption("touch_fail_level", None)}
    return {k: v for k, v in given.items() if v is not None}


def _entry(result: ScreenCheck) -> str:
    """What the summary needs of one checked screen, as the JSON text kept in user_properties."""
    import json

    title = f"{result.path} :: {result.name}" if result.name else result.path
    return json.dumps({"screen": title, "verdict": result.verdict, "fail_level": result.fail_level,
                       "targets": len(result.targets), "failing": [f"#{t.number} {t.name}" for t in result.failing]},
                      ensure_ascii=False)


class TouchTargets:
    """What the `touch_targets` fixture gives a test: call it with a page source.

    `touch_targets(source, **options)` is `tapgauge.check_source` with the pytest options as
    defaults (keywords given here win; None means "not given"); it records the screen for
    the run's summary and returns the result. `assert_passes` also raises AssertionError
    with the findings table of what failed. `checked` lists this test's results so far.
    """

    def __init__(self, defaults: Mapping[str, Any], properties: list[tuple[str, object]]) -> None:
        self._defaults = dict(defaults)
        self._properties = properties
        self.checked: list[ScreenCheck] = []

    def __call__(self, source: Source, **options: Unpack[CheckOptions]) -> ScreenCheck:
        # Imported here: the first call pays for the checks, not every pytest start-up.
        from tapgauge.api import check_source

        result = check_source(source, **{**self._defaults, **{k: v for k, v in options.items() if v is not None}})
        self.checked.append(result)
        self._properties.append((PROPERTY, _entry(result)))
        return result

    def assert_passes(self, source: Source, **options: Unpack[CheckOptions]) -> ScreenCheck:
        __tracebackhide__ = True  # the failure points at the test's line
        return self(source, **options).assert_passed()


@pytest.fixture
def touch_targets(request: pytest.FixtureRequest) -> TouchTargets:
    """Check a screen's touch targets (tapgauge.check_source) and list it in the run's summary."""
    return TouchTargets(_defaults(request.config), request.node.user_properties)


class _Summary:
    """Collects the screens each test checked; lists the failing ones at the end of the run."""

    def __init__(self) -> None:
        self.by_test: dict[str, list[dict[str, Any]]] = {}

    def pytest_runtest_logreport(self, report: pytest.TestReport) -> None:
        if report.when != "teardown":  # every phase carries the test's properties; teardown has them all
            return
        import json

        found = [json.loads(str(value)) for key, value in report.user_properties if key == PROPERTY]
        if found:
            self.by_test.setdefault(report.nodeid, []).extend(found)

    def pytest_terminal_summary(self, terminalreporter: TerminalReporter) -> None:
        if not self.by_test:
            return
        tr = terminalreporter
        screens = [s for found in self.by_test.values() for s in found]
        counts = {v: sum(1 for s in screens if s["verdict"] == v) for v in ("pass", "fail", "nothing-compared")}
        tr.write_sep("=", "touch targets (tapgauge)")
        line = (f"{len(screens)} screen{'s' if len(screens) != 1 else ''} checked in {len(self.by_test)} "
                f"test{'s' if len(self.by_test) != 1 else ''}: {counts['pass']} pass, {counts['fail']} fail")
        if counts["nothing-compared"]:
            line += f", {counts['nothing-compared']} with nothing compared"
        tr.write_line(line, bold=True, red=bool(counts["fail"] or counts["nothing-compared"]))
        for test_id, found in self.by_test.items():
            bad = [s for s in found if s["verdict"] != "pass"]
            if not bad:
                continue
            tr.write_line(test_id)
            for s in bad:
                tr.write_line(f"  {s['screen']}: {_said(s)}")


def _said(s: dict[str, Any]) -> str:
    if s["verdict"] == "nothing-compared":
        return f"nothing compared (none of its {s['targets']} targets was measured against the rules)"
    names = s["failing"]
    at = s["fail_level"] + ("" if s["fail_level"] == "error" else " or above")
    listed = ", ".join(names[:_NAMES_SHOWN]) + (f" and {len(names) - _NAMES_SHOWN} more" if len(names) > _NAMES_SHOWN else "")
    return f"{len(names)} target{'s' if len(names) != 1 else ''} fail at {at}: {listed}"
