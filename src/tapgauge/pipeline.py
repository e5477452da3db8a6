"""The one-way pipeline over a batch: read -> device -> measure -> check -> score -> waive -> record.

One bad file never stops the batch: its error is kept and the rest go on. Workers
hand back each screen's finished record, so the parent only writes and counts.
"""

from __future__ import annotations

import os
from collections import deque
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from itertools import chain, islice
from pathlib import Path
from typing import TYPE_CHECKING, TypeVar

from tapgauge.checks import check_screen, failing, reach
from tapgauge.config import DeviceDefaults
from tapgauge.device import resolve_device
from tapgauge.heap import collector_paused, keep_freed_memory, map_large_blocks, shared_with_workers
from tapgauge.measure import MeasuredScreen, MeasureOptions, measure
from tapgauge.model import Device, DeviceHints, InputError, RuleSet, Screen, ScreenResult
from tapgauge.plan import plan_screen
from tapgauge.readers import ReadOptions, iter_inputs, read_screens
from tapgauge.report.records import Checked, display_path, screen_record
from tapgauge.score import Scoring
from tapgauge.waivers import Waivers, waive_screen

if TYPE_CHECKING:  # the pool and its futures load logging: 12 ms a one-screen run never needs
    from concurrent.futures import Future

T = TypeVar("T")


@dataclass(frozen=True)
class Settings:
    rulesets: tuple[RuleSet, ...]
    flags: DeviceHints = DeviceHints()  # from the command line: wins over everything
    config: DeviceDefaults = DeviceDefaults()  # from the project config: loses to the screen's own files
    announce_skips: bool = False  # say when a chosen rule set does not fit a screen's platform
    read: ReadOptions = field(default_factory=ReadOptions)
    measure: MeasureOptions = MeasureOptions()
    scoring: Scoring = Scoring()
    waivers: Waivers = Waivers()
    document_only: bool = False  # hand back only each screen's JSON report text: all the JSON writers need
    plans: bool = True  # make fix plans, the dearest stage: the baseline and the gate read none


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
            where = f" ({screen.name})" if screen.name.startswith("dump ") else f" (image {screen.name})" if screen.name else ""
            raise InputError(path, f"{exc}{where}") from None
        results.append(check_one_screen(screen, device, settings))
    return results


def check_one_screen(screen: Screen, device: Device, settings: Settings) -> ScreenResult:
    """One screen's stages after reading: measure, check, score, plan (the plan re-checks in memory; without
    `settings.plans`, the targets have no plan)."""
    rulesets = list(settings.rulesets)
    near = reach(rulesets, device)  # one pair search per screen, as wide as the rules look
    measured = measure(screen, device, settings.measure, near)
    # The JSON report holds no sentences: a run that writes only it makes none.
    words = not settings.document_only
    scored = settings.scoring.apply(check_screen(measured, rulesets, settings.announce_skips, words))
    if not settings.plans:
        return scored

    def recheck(trial: Screen, part: Callable[[MeasuredScreen], MeasuredScreen]) -> tuple[MeasuredScreen, set[tuple[int, str]]]:
        again = measure(trial, device, settings.measure, near)
        return again, failing(part(again), rulesets)  # which rules fail is all it asks

    return plan_screen(measured, scored, rulesets, recheck)


def _guarded(path: Path, work: Callable[[], list[T]]) -> list[T | InputError]:
    try:
        with collector_paused():
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
            done.append(Checked.document_of(waived, counts) if settings.document_only
                        else Checked.of(screen_record(waived), counts))
        return done

    return _guarded(path, work)


def default_jobs() -> int:
    return max(1, os.cpu_count() or 1)


def _chunks(items: Iterator[Path | InputError], jobs: int) -> Iterator[list[Path | InputError]]:
    """Files in chunks that start at one file and grow to 16 as the batch proves long.

    A short batch is spread over every worker; a long one pays less for each
    trip to a worker. The batch's length is not known in advance (discovery streams).
    """
    sent = 0
    while chunk := list(islice(items, max(1, min(16, sent // (jobs * 16))))):
        sent += len(chunk)
        yield chunk


def _ordered(work: Callable[[Path, Settings], list[T]], items: Iterator[Path | InputError], settings: Settings,
             jobs: int) -> Iterator[list[T | InputError]]:
    """`work` over files in worker processes, results in file order, few files in flight.

    At most a few chunks per worker are pending at once, so a slow reader of the
    results (writing a large report) holds back the workers instead of piling up
    finished results in memory. A worker that dies (a crash inside a picture or XML
    library, or the kernel's out-of-memory killer) costs only its own file: that
    chunk is redone one file per process, and the rest go to a fresh pool.
    """
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    batches = _chunks(items, jobs)
    window = jobs * 3
    map_large_blocks()  # the results arrive 64 KiB at a time: each piece mapped, so memory stays flat
    pool = ProcessPoolExecutor(max_workers=jobs, initializer=keep_freed_memory)
    pending: deque[tuple[list[Path | InputError], Future[list[list[T | InputError]]] | None]] = deque()

    def submit(batch: list[Path | InputError]) -> Future[list[list[T | InputError]]] | None:
        try:
            return pool.submit(_work_batch, work, batch, settings)
        except BrokenProcessPool:
            return None  # a worker has died; the batch is sent again once the pool is renewed

    def top_up() -> None:
        while len(pending) < window and (batch := next(batches, None)) is not None:
            pending.append((batch, submit(batch)))

    with shared_with_workers():  # the workers fork at the first submit
        try:
            top_up()
            while pending:
                batch, future = pending.popleft()
                try:
                    if future is None:
                        raise BrokenProcessPool
                    results: list[list[T | InputError]] = list(future.result())
                except BrokenProcessPool:
                    results = _one_by_one(work, batch, settings)
                    again = [b for b, _ in pending]  # the broken pool took these down too
                    pending.clear()
                    pool.shutdown(wait=False, cancel_futures=True)
                    pool = ProcessPoolExecutor(max_workers=jobs, initializer=keep_freed_memory)
                    pending.extend((b, submit(b)) for b in again)
                yield from results
                top_up()
            pool.shutdown(wait=True)
        finally:  # interrupted (Ctrl-C, a failed write): do not wait for work nobody will read
            pool.shutdown(wait=False, cancel_futures=True)


def _do(work: Callable[[Path, Settings], list[T]], item: Path | InputError, settings: Settings) -> list[T | InputError]:
    return [item] if isinstance(item, InputError) else list(work(item, settings))  # met while finding files


def _work_batch(work: Callable[[Path, Settings], list[T]], batch: list[Path | InputError],
                settings: Settings) -> list[list[T | InputError]]:
    return [_do(work, item, settings) for item in batch]


def _one_by_one(work: Callable[[Path, Settings], list[T]], batch: list[Path | InputError],
                settings: Settings) -> list[list[T | InputError]]:
    """A chunk whose worker died, redone one file per fresh process, so only the culprit is lost."""
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    out: list[list[T | InputError]] = []
    for item in batch:
        if isinstance(item, InputError):
            out.append([item])
            continue
        with ProcessPoolExecutor(max_workers=1, initializer=keep_freed_memory) as solo:
            try:
                out.append(list(solo.submit(work, item, settings).result()))
            except BrokenProcessPool:
                out.append([InputError(item, "the process checking this file stopped abruptly (a crash in a "
                                             "picture or XML library, or out of memory); the other files were checked")])
    return out


def count_inputs(paths: list[Path]) -> int:
    """How many items `iter_results` will go through: a second walk of the folders, keeping nothing."""
    return sum(1 for _ in iter_inputs(paths, display_path))


def iter_results(paths: list[Path], settings: Settings, jobs: int = 1,
                 progress: Callable[[int, int], None] | None = None,
                 work: Callable[[Path, Settings], list[T]] = check_one) -> Iterator[T | InputError]:  # type: ignore[assignment]
    """`work`'s results for every input file, in display-path order, whatever the number of workers.

    That order is the report's order, so records can be written as they come. Files
    are found as the run goes (no list of them is kept); `progress(done, total)` is
    called as files finish, with the total from a first, cheap walk. With workers, this process
    maps its blocks larger than 64 KiB from then on (heap.map_large_blocks).
    """
    items = iter_inputs(paths, display_path)  # paths that do not exist come first, as errors
    total = count_inputs(paths) if progress else 0
    head = list(islice(items, jobs))
    items = chain(head, items)
    if jobs <= 1 or len(head) < 2:
        results: Iterator[list[T | InputError]] = (_do(work, item, settings) for item in items)
    else:
        results = _ordered(work, items, settings, min(jobs, len(head)))
    for done, found in enumerate(results, start=1):
        yield from found
        if progress:
            progress(done, max(done, total))


def run_check(paths: list[Path], settings: Settings, jobs: int = 1,
              progress: Callable[[int, int], None] | None = None) -> RunResult:
    """Whole results in memory: for small runs that need the objects (compare, journeys)."""
    screens: list[ScreenResult] = []
    errors: list[InputError] = []
    for item in iter_results(paths, settings, jobs, progress):
        if isinstance(item, InputError):
            errors.append(item)
        else:
            screens.append(item)
    return RunResult(tuple(screens), tuple(errors), settings.rulesets)
