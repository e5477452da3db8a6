"""The one-way pipeline over a batch: read -> device -> measure -> check.

One bad file never stops the batch: its error is kept and the rest go on.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

from tapgauge.checks import check_screen
from tapgauge.device import resolve_device
from tapgauge.measure import measure
from tapgauge.model import DeviceHints, InputError, RuleSet, ScreenResult
from tapgauge.readers import ReadOptions, discover, read_screens


@dataclass(frozen=True)
class RunResult:
    screens: tuple[ScreenResult, ...]
    errors: tuple[InputError, ...]
    rulesets: tuple[RuleSet, ...]


def check_file(path: Path, rulesets: list[RuleSet], flags: DeviceHints, config: DeviceHints, announce_skips: bool,
               options: ReadOptions | None = None) -> list[ScreenResult]:
    results: list[ScreenResult] = []
    for screen in read_screens(path, options):
        try:
            device = resolve_device(screen, flags, *screen.hints, config)
        except ValueError as exc:
            where = f" (image {screen.name})" if screen.name else ""
            raise InputError(path, f"{exc}{where}") from None
        results.append(check_screen(measure(screen, device), rulesets, announce_skips))
    return results


def iter_results(paths: list[Path], rulesets: list[RuleSet], flags: DeviceHints, config: DeviceHints,
                 announce_skips: bool = False, options: ReadOptions | None = None) -> Iterator[ScreenResult | InputError]:
    files, missing = discover(paths)
    yield from missing
    for path in files:
        try:
            yield from check_file(path, rulesets, flags, config, announce_skips, options)
        except InputError as exc:
            yield exc
        except Exception as exc:  # noqa: BLE001 - a bug must not stop the batch or pose as findings
            yield InputError(path, f"internal error while checking this file ({type(exc).__name__}: {exc}); please report it")


def run_check(paths: list[Path], rulesets: list[RuleSet], flags: DeviceHints, config: DeviceHints,
              announce_skips: bool = False, options: ReadOptions | None = None) -> RunResult:
    screens: list[ScreenResult] = []
    errors: list[InputError] = []
    for item in iter_results(paths, rulesets, flags, config, announce_skips, options):
        (errors if isinstance(item, InputError) else screens).append(item)  # type: ignore[arg-type]
    return RunResult(tuple(screens), tuple(errors), tuple(rulesets))
