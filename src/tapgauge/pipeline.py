"""The one-way pipeline over a batch: read -> device -> measure -> check -> score -> waive -> record.

One bad file never stops the batch: its error is kept and the rest go on. Workers
hand back each screen's finished record, so the parent only writes and counts.
"""

from __future__ import annotations

import gc
import os
from collections import deque
from collections.abc import Callable, Iterator
from concurrent.futures import Future
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import TypeVar

from tapgauge.checks import check_screen
from tapgauge.config import DeviceDefaults
from tapgauge.device import resolve_device
from tapgauge.measure import measure
from tapgauge.model import DeviceHints, InputError, RuleSet, ScreenResult
from tapgauge.readers import ReadOptions, discover, read_screens
from tapgauge.report.records import Checked, display_path, screen_record
from tapgauge.score import Scoring
from tapgauge.waivers import Waivers, waive_screen

T = TypeVar("T")


@dataclass(frozen=True)
class Settings:
    rulesets: tuple[RuleSet, ...]
    flags: DeviceHints = DeviceHints()  # from the command line: wins over everything
    config: DeviceDefaults = DeviceDefaults()  # from the project config: loses to the screen's own files
    announce_skips: bool = False  # say when a chosen rule set does not fit a screen's platform
    read: ReadOptions = field(default_factory=ReadOptions)
    scoring: Scoring = Scoring()
    waivers: Waivers = Waivers()


@dataclass(frozen=True)
class RunResult:
    screens: tuple[ScreenResult, ...]
    errors: tuple[InputError, ...]
    rulesets: tuple[RuleSet, ...]


def check_file(path: Path, settings: Settings) -> list[ScreenResult]:
    """A file's screens, checked and scored, in name order (a COCO or CSV file may hold many)."""
    results: list[ScreenResult] = []
    for screen in sorted(read_screens(path, settings.read), key=lambda s: s.name or ""):
        try:
            device = resolve_device(screen, settings.flags, *screen.hints, settings.config.for_path(screen.path))
        except ValueError as exc:
            where = f" (image {screen.name})" if screen.name else ""
            raise InputError(path, f"{exc}{where}") from None
        checked = check_screen(measure(screen, device), list(settings.rulesets), settings.announce_skips)
        results.append(settings.scoring.apply(checked))
    return results


@contextmanager
def _collector_paused() -> Iterator[None]:
    """Pause the cyclic garbage collector while one file is checked.

    A large screen makes hundreds of thousands of small objects and no reference
    cycles, and the collector kept rescanning them: pausing it per file checks a
    10,000-target screen 30% faster and changes nothing on small ones (measured
    with bench/run_bench.py). Anything cyclic is collected once it runs again.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def _guarded(path: Path, work: Callable[[], list[T]]) -> list[T | InputError]:
    try:
        with _collector_paused():
            return list(work())
    except InputError as exc:
        return [exc]
    except RecursionError:
        return [InputError(path, "nested too deeply to read (more than the reader's depth limit)")]
    except MemoryError:
        return [InputError(path, "too large to check in the memory available")]
    except Exception as exc:  # noqa: BLE001 - a bug must not stop the batch or pose as findings
        return [InputError(path, f"internal error while checking this file ({type(exc).__name__}: {exc}); please report it")]


def check_one(path: Path, settings: Settings) -> list[ScreenResult | InputError]:
    """Everything one input file gives: its screens' results, or the error that stopped it."""
    return _guarded(path, lambda: check_file(path, settings))


def record_one(path: Path, settings: Settings) -> list[Checked | InputError]:
    """One input file's screens as finished report records (waivers applied), or its error."""
    def work() -> list[Checked]:
        done = []
        for sr in check_file(path, settings):
            waived, counts = waive_screen(sr, settings.waivers)
            done.append(Checked(screen_record(waived), counts))
        return done

    return _guarded(path, work)


def default_jobs() -> int:
    return max(1, os.cpu_count() or 1)


def _ordered(work: Callable[[Path, Settings], list[T]], files: list[Path], settings: Settings,
             jobs: int) -> Iterator[list[T]]:
    """`work` over files in worker processes, results in file order, few files in flight.

    At most a few chunks per worker are pending at once, so a slow reader of the
    results (writing a large report) holds back the workers instead of piling up
    finished results in memory.
    """
    from concurrent.futures import ProcessPoolExecutor

    chunk = max(1, min(16, len(files) // (jobs * 16) or 1))
    batches = [files[i:i + chunk] for i in range(0, len(files), chunk)]
    window = jobs * 3
    with ProcessPoolExecutor(max_workers=jobs) as pool:
        pending: deque[Future[list[list[T]]]] = deque()
        for batch in batches:
            pending.append(pool.submit(_work_batch, work, batch, settings))
            if len(pending) >= window:
                yield from pending.popleft().result()
        while pending:
            yield from pending.popleft().result()


def _work_batch(work: Callable[[Path, Settings], list[T]], batch: list[Path], settings: Settings) -> list[list[T]]:
    return [work(path, settings) for path in batch]


def iter_results(paths: list[Path], settings: Settings, jobs: int = 1,
                 progress: Callable[[int, int], None] | None = None,
                 work: Callable[[Path, Settings], list[T]] = check_one) -> Iterator[T | InputError]:  # type: ignore[assignment]
    """`work`'s results for every input file, in display-path order, whatever the number of workers.

    That order is the report's order, so records can be written as they come.
    `progress(done, total)` is called as files finish.
    """
    files, missing = discover(paths)
    yield from missing
    files.sort(key=display_path)
    total = len(files)
    if jobs <= 1 or total < 2:
        results: Iterator[list[T]] = (work(path, settings) for path in files)
    else:
        results = _ordered(work, files, settings, min(jobs, total))
    for done, items in enumerate(results, start=1):
        yield from items
        if progress:
            progress(done, total)


def run_check(paths: list[Path], settings: Settings, jobs: int = 1,
              progress: Callable[[int, int], None] | None = None) -> RunResult:
    """Whole results in memory: for small runs that need the objects (compare, flows)."""
    screens: list[ScreenResult] = []
    errors: list[InputError] = []
    for item in iter_results(paths, settings, jobs, progress):
        if isinstance(item, InputError):
            errors.append(item)
        else:
            screens.append(item)
    return RunResult(tuple(screens), tuple(errors), settings.rulesets)
