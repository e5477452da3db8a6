"""A batch run from command-line options: settings, the progress bar, streaming writes.

What check, baseline and gate share (and the option parsing the other commands
reuse), kept out of cli.py so that it stays a list of commands.
"""

from __future__ import annotations

import datetime as dt
import os
import shutil
import sys
from collections import Counter
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TextIO

from tapgauge.config import Config, load_config
from tapgauge.device import parse_density, parse_ppi, parse_scale
from tapgauge.difficulty import WIDTH_MODELS
from tapgauge.jsontext import dumps
from tapgauge.measure import MeasureOptions
from tapgauge.model import OLD_SEVERITY_WORDS, DeviceHints, InputError, Severity
from tapgauge.pipeline import Settings, default_jobs, iter_results, record_one
from tapgauge.profiles import DEFAULT_PROFILES, apply_params, parse_start, select_profiles
from tapgauge.readers import ReadOptions
from tapgauge.readers.classes import default_class_map, load_class_map
from tapgauge.readers.marked import DEFAULT_MARKER, parse_marker
from tapgauge.renames import current, notice
from tapgauge.report.output import atomic_text, write_atomic
from tapgauge.report.records import EXIT_ERROR, Report
from tapgauge.rulesets import DEFAULT_RULESETS, select_rulesets
from tapgauge.score import Scoring
from tapgauge.waivers import Waivers


def say(message: str) -> None:
    """A message on stderr, prefixed with the tool's name."""
    # Plain text: no markup, emoji codes or wrapping to interpret in what may quote a screen's labels.
    sys.stderr.write(f"tapgauge: {message}\n")
    sys.stderr.flush()


def terminal_width() -> int:
    """Columns of the terminal, or of $COLUMNS; 80 when the output is not a terminal."""
    return shutil.get_terminal_size((80, 24)).columns


INTERRUPTED = 130  # the shell's code for a run stopped by Ctrl-C
PIPE_CLOSED = 141  # the shell's code for a writer whose reader went away (SIGPIPE)


@contextmanager
def interruptible() -> Iterator[None]:
    """Ctrl-C ends a run with 130 and a word on stderr, never as "findings" (1) or a traceback."""
    try:
        yield
    except KeyboardInterrupt:
        say("interrupted; no report file was written (one is replaced only when complete)")
        raise SystemExit(INTERRUPTED) from None


def overlay_observer(report: Report, folder: Path, failed: list[str]) -> Callable[[dict], None]:
    """Draw each screen's overlay as it passes, saying what its picture could not show; after the first
    failure to write, say it once and stop drawing."""
    from tapgauge.report.overlay import write_overlay  # Pillow drawing only when asked

    def draw(screen: dict) -> None:
        if failed:
            return
        try:
            written = write_overlay(screen, report, folder)
        except OSError as exc:
            failed.append(str(exc.strerror or exc))
            return
        if written.notice:  # e.g. a screenshot the boxes cannot be aligned with: said, not only drawn
            say(f"{screen['path']}" + (f" :: {screen['name']}" if screen["name"] else "") + f": {written.notice}")

    return draw


def write_report(report: Report, output: Path | None, write: Callable[[Report, TextIO], None],
                 totals_first: bool = False) -> int:
    """Write the report as it streams, to stdout or atomically to a file; 2 if the file cannot be written."""
    def run(out: TextIO) -> None:
        if totals_first:
            with report.spooled(None if output is None else output.parent) as spool:
                write(spool, out)
        else:
            write(report, out)

    if output is None:
        try:
            run(sys.stdout)
            sys.stdout.flush()
        except BrokenPipeError:  # `tapgauge check ... | head`: the reader left; stop quietly
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())  # no second error at exit
            return PIPE_CLOSED
        return 0
    try:
        with atomic_text(output) as fh:
            run(fh)
    except OSError as exc:
        say(f"{output}: cannot write report: {exc.strerror or exc}")
        return EXIT_ERROR
    return 0


def tell_verdict(report: Report, paths: list[Path], quiet: bool, in_stdout: bool) -> None:
    """The summary line on stderr, so a CI log tells the story when the report went to a file or is a
    machine format (the table on stdout has it already); and, whatever `quiet` says, why a run
    that compared nothing failed."""
    from tapgauge.report.verdict import summary_line

    summary = report.summary
    if summary["screens"] == 0 and not report.errors:
        say(nothing_found(paths))
    elif summary["verdict"] == "nothing-compared" and (quiet or in_stdout):
        say(summary_line(summary, report.fail_level))  # an error: said even when quiet
    if not quiet and not in_stdout:
        say(summary_line(summary, report.fail_level))


def nothing_found(paths: list[Path]) -> str:
    """What the given paths hold, when none of it is a screen (walked again only in that case)."""
    files: Counter[str] = Counter()
    for given in paths:
        found = [given] if given.is_file() else [Path(d) / f for d, _, fs in os.walk(given) for f in fs]
        files.update(p.suffix.lower() or "(no extension)" for p in found)
    where = ", ".join(p.as_posix() for p in paths)
    if not files:
        return f"no screens to check: {where} holds no files"
    kinds = ", ".join(f"{n} {ext}" for ext, n in files.most_common(5))
    return (f"no screens to check: {where} holds {sum(files.values())} file(s) ({kinds}) and none is a screen "
            "export (a window dump or element tree .xml, a page source .json, a screenshot with its boxes)")


@dataclass(frozen=True)
class Run:
    """A checked-and-ready run: settings from options and config; `report()` starts it."""

    settings: Settings
    config: Config
    level: Severity
    jobs: int

    def report(self, paths: list[Path], tick: Callable[[int, int], None] | None, document_only: bool = False,
               plans: bool = True) -> Report:
        """The run's report; with `document_only` its screens are the JSON report's text and nothing else
        (for the JSON writers when no overlay is drawn), made in the workers; without `plans`, no target has a
        fix plan (for the baseline and the gate, which read none)."""
        settings = replace(self.settings, document_only=document_only or self.settings.document_only, plans=plans)
        items = iter_results(paths, settings, self.jobs, tick, work=record_one)
        return Report(items, list(self.settings.rulesets), self.level, list(self.settings.scoring.profiles),
                      self.settings.waivers, on_error=print_input_error)


def print_input_error(e: dict) -> None:
    """Input errors always go to stderr as they happen, whatever the format; reports carry them too."""
    where = f"{e['path']}:{e['line']}" if e["line"] else e["path"]
    say(f"{where}: {e['message']}")


def prepare(rules: str | None, density: str | None, scale: str | None, ppi: str | None,
            classes: Path | None, marker: str | None, fail_level: str | None, profiles: str | None,
            params: list[str], start: str, width_model: str, today: str | None,
            jobs: int | None = None, scope: Scope | None = None) -> Run | int:
    """Options and config made into a run; an exit code (after saying why) when they are bad."""
    try:
        if jobs is not None and jobs < 1:
            raise ValueError(f"--jobs {jobs}: expected 1 or more worker processes")
        config = load_config(Path.cwd())
        level = Severity.parse(fail_level) if fail_level else (config.fail_level or Severity.ERROR)
        if fail_level and fail_level.strip().lower() in OLD_SEVERITY_WORDS:
            say(f"--fail-level {fail_level}: the severity is now called {Severity.parse(fail_level).label!r}; "
                "the old word is read in this version only")
        ids = [x.strip() for x in rules.split(",")] if rules else list(config.rules or DEFAULT_RULESETS)
        for old in ids:
            said = notice(old, "--rules: rule set")
            if said:
                say(said)
        chosen = select_rulesets([current(x) for x in ids])
        read = read_options(config, classes, marker, scope)
        scoring = make_scoring(config, profiles, params, start, width_model)
        waivers = Waivers(config.waivers, config.base, parse_day(today))
        settings = Settings(tuple(chosen), common_device(density, scale, ppi), config.devices,
                            announce_skips=rules is not None, read=read, measure=measure_options(config, scope),
                            scoring=scoring, waivers=waivers)
    except (InputError, ValueError) as exc:
        say(str(exc))
        return EXIT_ERROR
    for said in config.notices:
        say(said)
    return Run(settings, config, level, jobs or default_jobs())


@contextmanager
def progress() -> Iterator[Callable[[int, int], None] | None]:
    """A progress bar on stderr when a person is watching; silent in CI and when piped."""
    if not sys.stderr.isatty() or os.environ.get("CI"):
        yield None
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeRemainingColumn

    with Progress("checking", BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                  console=Console(stderr=True), transient=True) as bar:
        task = bar.add_task("screens", total=None)

        def tick(done: int, total: int) -> None:
            bar.update(task, completed=done, total=total)

        yield tick


def screen_namer(roots: list[Path]) -> Callable[[dict], str]:
    """Stable screen ids for baselines: each screen's path relative to the folder it was found in."""
    resolved = [(r.resolve(), r.is_dir()) for r in roots]

    def screen_id(s: dict) -> str:
        p = Path(s["path"]).resolve()
        sid = p.name
        for root, is_dir in resolved:
            if is_dir and (root == p or root in p.parents):
                sid = p.relative_to(root).as_posix()
                break
        return f"{sid}::{s['name']}" if s["name"] else sid

    return screen_id


class Discard(Exception):
    """Raised inside an atomic write to leave no file behind."""


def common_device(density: str | None, scale: str | None, ppi: str | None) -> DeviceHints:
    return DeviceHints(
        density_dpi=parse_density(density) if density else None,
        scale=parse_scale(scale) if scale else None,
        xdpi=parse_ppi(ppi)[0] if ppi else None,
        ydpi=parse_ppi(ppi)[1] if ppi else None,
        source="command line",
    )


@dataclass(frozen=True)
class Scope:
    """Which nodes and windows count, as the command line says; None leaves it to the config."""

    all_windows: bool | None = None
    app_package: str | None = None
    include_focusable: bool | None = None


def _first(*values: object) -> object:
    return next((v for v in values if v is not None), None)


def read_options(config: Config, classes: Path | None = None, marker: str | None = None,
                 scope: Scope | None = None) -> ReadOptions:
    """Reader options from flags, else the config, else the built-in defaults."""
    flags = scope or Scope()
    return ReadOptions(
        classes=load_class_map(classes) if classes else (config.classes or default_class_map()),
        marker_hue=parse_marker(marker or config.marker or DEFAULT_MARKER),
        include_focusable=bool(_first(flags.include_focusable, config.include_focusable)),
    )


def measure_options(config: Config, scope: Scope | None = None) -> MeasureOptions:
    flags = scope or Scope()
    package = _first(flags.app_package, config.app_package)
    return MeasureOptions(all_windows=bool(_first(flags.all_windows, config.all_windows)),
                          app_package=str(package) if package else None)


def table_or_json(fmt: str) -> None:
    if fmt not in ("table", "json"):
        raise ValueError(f"unknown format {fmt!r}; expected table or json")


def emit_record(record: dict, fmt: str, output: Path | None, table: Callable[..., str]) -> int:
    """A command's record as JSON or through its table writer, to stdout or a file."""
    if fmt == "json":
        text = dumps(record) + "\n"
    else:
        text = table(record, width=terminal_width() if output is None else 80,
                     color=output is None and sys.stdout.isatty())
    return emit(text, output)


def emit(text: str, output: Path | None) -> int:
    if output is None:
        sys.stdout.write(text)
        return 0
    try:
        write_atomic(output, text)
    except OSError as exc:
        say(f"{output}: cannot write report: {exc.strerror or exc}")
        return EXIT_ERROR
    return 0


def parse_day(text: str | None) -> dt.date:
    if text is None:
        return dt.date.today()
    try:
        return dt.date.fromisoformat(text)
    except ValueError:
        raise ValueError(f"--today {text!r}: expected a date such as 2027-01-31") from None


def make_scoring(config: Config, profiles: str | None, params: list[str], start: str, width_model: str) -> Scoring:
    """Profiles (the option, else the config, else the defaults), overrides, start point and width
    model; ValueError/InputError if bad."""
    ids = profiles.split(",") if profiles else list(config.profiles or DEFAULT_PROFILES)
    chosen = apply_params(select_profiles(ids), params)
    name, xy = parse_start(start)
    if width_model not in WIDTH_MODELS:
        raise ValueError(f"width model {width_model!r}: expected one of {', '.join(WIDTH_MODELS)}")
    return Scoring(tuple(chosen), name, xy, width_model)
