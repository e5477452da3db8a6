"""The one-way pipeline over a batch: read -> device -> measure -> check -> score.

One bad file never stops the batch: its error is kept and the rest go on.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

from tapgauge.checks import check_screen
from tapgauge.config import DeviceDefaults
from tapgauge.device import resolve_device
from tapgauge.measure import measure
from tapgauge.model import DeviceHints, InputError, RuleSet, ScreenResult
from tapgauge.readers import ReadOptions, discover, read_screens
from tapgauge.score import Scoring


@dataclass(frozen=True)
class Settings:
    rulesets: tuple[RuleSet, ...]
    flags: DeviceHints = DeviceHints()  # from the command line: wins over everything
    config: DeviceDefaults = DeviceDefaults()  # from the project config: loses to the screen's own files
    announce_skips: bool = False  # say when a chosen rule set does not fit a screen's platform
    read: ReadOptions = field(default_factory=ReadOptions)
    scoring: Scoring = Scoring()


@dataclass(frozen=True)
class RunResult:
    screens: tuple[ScreenResult, ...]
    errors: tuple[InputError, ...]
    rulesets: tuple[RuleSet, ...]


def check_file(path: Path, settings: Settings) -> list[ScreenResult]:
    results: list[ScreenResult] = []
    for screen in read_screens(path, settings.read):
        try:
            device = resolve_device(screen, settings.flags, *screen.hints, settings.config.for_path(screen.path))
        except ValueError as exc:
            where = f" (image {screen.name})" if screen.name else ""
            raise InputError(path, f"{exc}{where}") from None
        checked = check_screen(measure(screen, device), list(settings.rulesets), settings.announce_skips)
        results.append(settings.scoring.apply(checked))
    return results


def iter_results(paths: list[Path], settings: Settings) -> Iterator[ScreenResult | InputError]:
    files, missing = discover(paths)
    yield from missing
    for path in files:
        try:
            yield from check_file(path, settings)
        except InputError as exc:
            yield exc
        except Exception as exc:  # noqa: BLE001 - a bug must not stop the batch or pose as findings
            yield InputError(path, f"internal error while checking this file ({type(exc).__name__}: {exc}); please report it")


def run_check(paths: list[Path], settings: Settings) -> RunResult:
    screens: list[ScreenResult] = []
    errors: list[InputError] = []
    for item in iter_results(paths, settings):
        if isinstance(item, InputError):
            errors.append(item)
        else:
            screens.append(item)
    return RunResult(tuple(screens), tuple(errors), settings.rulesets)
