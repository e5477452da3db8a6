"""The one-way pipeline over a batch: read -> device -> measure -> check -> score.

One bad file never stops the batch: its error is kept and the rest go on.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator
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


def check_one(path: Path, settings: Settings) -> list[ScreenResult | InputError]:
    """Everything one input file gives: its screens' results, or the error that stopped it."""
    try:
        return list(check_file(path, settings))
    except InputError as exc:
        return [exc]
    except RecursionError:
        return [InputError(path, "nested too deeply to read (more than the reader's depth limit)")]
    except MemoryError:
        return [InputError(path, "too large to check in the memory available")]
    except Exception as exc:  # noqa: BLE001 - a bug must not stop the batch or pose as findings
        return [InputError(path, f"internal error while checking this file ({type(exc).__name__}: {exc}); please report it")]


def default_jobs() -> int:
    return max(1, os.cpu_count() or 1)


def iter_results(paths: list[Path], settings: Settings, jobs: int = 1,
                 progress: Callable[[int, int], None] | None = None) -> Iterator[ScreenResult | InputError]:
    """Results in input order, whatever the number of worker processes.

    Files are handed to workers a chunk at a time and results come back in order, so
    nothing but the results themselves is held; `progress(done, total)` is called as
    files finish.
    """
    files, missing = discover(paths)
    yield from missing
    total = len(files)
    if jobs <= 1 or total < 2:
        for done, path in enumerate(files, start=1):
            yield from check_one(path, settings)
            if progress:
                progress(done, total)
        return
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(max_workers=min(jobs, total)) as pool:
        chunk = max(1, min(64, total // (jobs * 8) or 1))
        for done, items in enumerate(pool.map(check_one, files, [settings] * total, chunksize=chunk), start=1):
            yield from items
            if progress:
                progress(done, total)


def run_check(paths: list[Path], settings: Settings, jobs: int = 1,
              progress: Callable[[int, int], None] | None = None) -> RunResult:
    screens: list[ScreenResult] = []
    errors: list[InputError] = []
    for item in iter_results(paths, settings, jobs, progress):
        if isinstance(item, InputError):
            errors.append(item)
        else:
            screens.append(item)
    return RunResult(tuple(screens), tuple(errors), settings.rulesets)
