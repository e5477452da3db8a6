"""Command line: parse options, run the pipeline, pick a writer, return the exit code.

Exit codes: 0 nothing at or above the fail level; 1 findings at or above it;
2 usage or input error (the other files are still checked and reported).
"""

from __future__ import annotations

import gc
import os
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any, Optional

import typer

from tapgauge import __version__
from tapgauge.report import WRITERS

if TYPE_CHECKING:
    from tapgauge.batch import Scope

# Start-up: besides the standard library, this module imports only typer and the two names above.
# Each command imports what it runs inside its body, so --help and --version load no numpy, readers
# or checks, and `check` loads no other command's modules (measured with `python -X importtime`;
# see bench/bench_startup.py).

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
    help="Check touch targets on mobile app screens: size and spacing in dp/pt and mm.",
    context_settings={"help_option_names": ["-h", "--help"]},
)


# Options several commands share, declared once. The --rules default is rulesets.DEFAULT_RULESETS written
# out (importing that module would load numpy for every --help), as --profiles writes out DEFAULT_PROFILES.
RulesOpt = Annotated[Optional[str], typer.Option(
    "--rules", "-r", help="Comma-separated rule-set ids and/or paths to TOML rule files. "
    "Default: wcag-2.5.8,android-guidance,apple-hig (each applies to its own platform).")]
DensityOpt = Annotated[Optional[str], typer.Option(
    help="Screen density in dpi, or a bucket name (mdpi, hdpi, xhdpi, xxhdpi, xxxhdpi), if no sidecar gives it.")]
ScaleOpt = Annotated[Optional[str], typer.Option(
    help="iOS pixels per point (1, 2 or 3); needed for iOS screenshots, and for mm on iOS trees.")]
PpiOpt = Annotated[Optional[str], typer.Option(
    help="Physical pixels per inch, one number or X,Y for the natural x and y axes; enables mm and miss chances.")]
ProfilesOpt = Annotated[Optional[str], typer.Option(
    help="Comma-separated slope profiles (ids or TOML files). Default: typical-adult,older-adult,reduced-precision.")]
ParamOpt = Annotated[Optional[list[str]], typer.Option(
    help="Override one profile number: PROFILE.KEY=VALUE (KEY: intercept_ms, slope_ms_per_bit, alpha, sigma_a_mm).")]
StartOpt = Annotated[str, typer.Option("--from", help="Where reaches start: centre, thumb-right, thumb-left, or X,Y in dp/pt.")]
WidthModelOpt = Annotated[str, typer.Option(help="Target width for Fitts's law: approach (default), smaller or horizontal.")]
TodayOpt = Annotated[Optional[str], typer.Option(help="Date that waiver expiry is judged on (YYYY-MM-DD); default: today.")]
AllWindowsOpt = Annotated[Optional[bool], typer.Option(
    "--all-windows/--app-windows",
    help="Also check the on-screen keyboard's, the system bars' and other apps' targets (default: the app's only).")]
AppPackageOpt = Annotated[Optional[str], typer.Option(
    "--package",
    help="The app's package, where the largest window of a multi-window dump is not the app's.")]
FocusableOpt = Annotated[Optional[bool], typer.Option(
    "--include-focusable/--clickable-only",
    help="Also take as targets Android nodes that are focusable but not clickable and iOS 'Other' elements with a label.")]
FailLevelOpt = Annotated[Optional[str], typer.Option(
    metavar="LEVEL", help="Lowest severity that fails the run: error, warning or note. Default: error.")]
QuietOpt = Annotated[bool, typer.Option(
    "--quiet", "-q", help="No summary line on stderr (errors are still printed).")]
JobsOpt = Annotated[Optional[int], typer.Option("--jobs", "-j", help="Worker processes (default: the number of cores).")]
# gate, journey and compare write one record, as a table or as JSON.
RecordFormatOpt = Annotated[str, typer.Option("--format", "-f", help="table or json.")]
RecordOutputOpt = Annotated[Optional[Path], typer.Option("--output", "-o", help="Write here (atomically) instead of stdout.")]


def _version(value: bool) -> None:
    if value:
        typer.echo(f"tapgauge {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    version: Annotated[Optional[bool], typer.Option("--version", callback=_version, is_eager=True,
                                                     help="Print the version and exit.")] = None,
) -> None:
    """tapgauge: touch targets measured against published minimums."""


@app.command()
def check(
    paths: Annotated[list[Path], typer.Argument(help="Screen files or folders (searched recursively).")],
    rules: RulesOpt = None,
    density: DensityOpt = None,
    scale: ScaleOpt = None,
    ppi: PpiOpt = None,
    classes: Annotated[Optional[Path], typer.Option(
        help="TOML file with 'target' and 'ignore' lists of annotation class names.")] = None,
    marker: Annotated[Optional[str], typer.Option(
        help="Colour of boxes drawn on screenshots: magenta (default), red, orange, yellow, green, cyan, blue, purple or #rrggbb.")] = None,
    overlay: Annotated[Optional[Path], typer.Option(
        help="Write an overlay picture per screen into this folder: targets marked by status.")] = None,
    fmt: Annotated[str, typer.Option("--format", "-f", help=f"Output format: {', '.join(WRITERS)}.")] = "table",
    output: Annotated[Optional[Path], typer.Option("--output", "-o", help="Write the report here (atomically) instead of stdout.")] = None,
    fail_level: FailLevelOpt = None,
    width: Annotated[Optional[int], typer.Option(help="Table width in columns (default: the terminal's, or 80).")] = None,
    profiles: ProfilesOpt = None,
    param: ParamOpt = None,
    start: StartOpt = "centre",
    width_model: WidthModelOpt = "approach",
    difficulty: Annotated[bool, typer.Option("--difficulty", help="Add predicted time and miss probability to the table.")] = False,
    today: TodayOpt = None,
    jobs: JobsOpt = None,
    all_windows: AllWindowsOpt = None,
    app_package: AppPackageOpt = None,
    include_focusable: FocusableOpt = None,
    show: Annotated[Optional[str], typer.Option(
        metavar="LEVEL", help="List in the table only findings at or above this severity (error, warning, note); "
        "screens with none are left out. Totals still count everything.")] = None,
    quiet: QuietOpt = False,
) -> None:
    """Check screens and report every touch target that is too small or too close."""
    from tapgauge.batch import Scope

    raise typer.Exit(_check(paths, rules, density, scale, ppi, classes, marker, overlay, fmt, output, fail_level, width,
                            profiles, param or [], start, width_model, difficulty, today, jobs,
                            Scope(all_windows, app_package, include_focusable), show, quiet))


def _check(paths: list[Path], rules: str | None, density: str | None, scale: str | None, ppi: str | None,
           classes: Path | None, marker: str | None, overlay: Path | None, fmt: str, output: Path | None,
           fail_level: str | None, width: int | None, profiles: str | None, params: list[str], start: str,
           width_model: str, difficulty: bool, today: str | None, jobs: int | None = None,
           scope: Scope | None = None, show: str | None = None, quiet: bool = False) -> int:
    from tapgauge.batch import (
        interruptible,
        overlay_observer,
        prepare,
        progress,
        say,
        tell_verdict,
        terminal_width,
        write_report,
    )
    from tapgauge.model import Severity
    from tapgauge.report import DOCUMENT_ONLY, TOTALS_FIRST, writer_for
    from tapgauge.report.records import EXIT_ERROR

    try:
        writer = writer_for(fmt)
        if show is not None:
            try:
                show = Severity.parse(show).label
            except ValueError as exc:
                raise ValueError(f"--show: {exc}") from None
            if fmt != "table":
                say(f"--show lists findings in the table only; the {fmt} report holds every finding")
    except ValueError as exc:
        say(str(exc))
        return EXIT_ERROR
    run = prepare(rules, density, scale, ppi, classes, marker, fail_level, profiles, params, start, width_model,
                   today, jobs, scope)
    if isinstance(run, int):
        return run
    overlay_failed: list[str] = []
    with interruptible(), progress() as tick:
        report = run.report(paths, tick, document_only=fmt in DOCUMENT_ONLY and overlay is None)
        if overlay is not None:
            report.observe(overlay_observer(report, overlay, overlay_failed))
        if fmt == "table":
            code = write_report(report, output, lambda r, out: writer(
                r, out, width=width or (terminal_width() if output is None else 80),
                color=output is None and sys.stdout.isatty(), difficulty=difficulty, show=show))
        else:
            extra = {"jobs": run.jobs} if fmt == "html" else {}  # its pictures are drawn in as many processes
            code = write_report(report, output, lambda r, out: writer(r, out, width=width, **extra), fmt in TOTALS_FIRST)
    if overlay_failed:
        say(f"{overlay}: cannot write overlay pictures: {overlay_failed[0]}")
        return EXIT_ERROR
    if not code:
        tell_verdict(report, paths, quiet=quiet, in_stdout=fmt == "table" and output is None)
    return code or report.exit_code


@app.command("baseline")
def baseline_cmd(
    paths: Annotated[list[Path], typer.Argument(help="Screen files or folders, as for check.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="Baseline file to write (JSON, atomically).")],
    force: Annotated[bool, typer.Option("--force", help="Replace a file that is not this project's baseline.")] = False,
    rules: RulesOpt = None,
    density: DensityOpt = None,
    scale: ScaleOpt = None,
    ppi: PpiOpt = None,
    profiles: ProfilesOpt = None,
    start: StartOpt = "centre",
    today: TodayOpt = None,
    jobs: JobsOpt = None,
    all_windows: AllWindowsOpt = None,
    app_package: AppPackageOpt = None,
    include_focusable: FocusableOpt = None,
) -> None:
    """Record each target's identity, size, status and predicted difficulty, for the release gate."""
    from tapgauge.batch import (
        Discard,
        Scope,
        interruptible,
        nothing_found,
        prepare,
        progress,
        say,
        screen_namer,
    )
    from tapgauge.gate import check_overwrite, write_baseline
    from tapgauge.model import InputError
    from tapgauge.report.output import atomic_text
    from tapgauge.report.records import EXIT_ERROR

    run = prepare(rules, density, scale, ppi, None, None, None, profiles, [], start, "approach", today, jobs,
                  Scope(all_windows, app_package, include_focusable))
    if isinstance(run, int):
        raise typer.Exit(run)
    project, _ = run.config.project_name
    try:
        if not force:
            check_overwrite(output, project)
        with interruptible(), progress() as tick, atomic_text(output) as fh:
            report = run.report(paths, tick, plans=False)  # a baseline records no plan
            screens, targets = write_baseline(fh, report, screen_namer(paths), project, one_root=len(paths) == 1)
            if report.errors:
                raise Discard("not writing a baseline while screens could not be read (see above)")
            if not screens:
                raise Discard(nothing_found(paths) + "; not writing an empty baseline")
            if not report.compared:
                raise Discard(f"no target on the {screens} screen(s) was checked (see their reasons with "
                              "`tapgauge check`); not writing a baseline that compares nothing")
    except Discard as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    except InputError as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    except OSError as exc:
        say(f"{output}: cannot write baseline: {exc.strerror or exc}")
        raise typer.Exit(EXIT_ERROR) from None
    typer.echo(f"wrote {output}: {screens} screens, {targets} targets, project {project!r}")


@app.command("gate")
def gate_cmd(
    paths: Annotated[list[Path], typer.Argument(help="Screen files or folders, as recorded in the baseline.")],
    baseline: Annotated[Path, typer.Option("--baseline", "-b", help="Baseline file written by `tapgauge baseline`.")],
    fmt: Annotated[str, typer.Option("--format", "-f", help=f"Output format: {', '.join(WRITERS)}.")] = "table",
    output: RecordOutputOpt = None,
    fail_level: FailLevelOpt = None,
    size_tolerance: Annotated[Optional[float], typer.Option(help="dp/pt a target may shrink unnoticed (default 1).")] = None,
    miss_tolerance: Annotated[Optional[float], typer.Option(help="Rise in predicted miss probability allowed (default 0.02).")] = None,
    time_tolerance: Annotated[Optional[float], typer.Option(help="Rise in predicted time allowed, ms (default 25).")] = None,
    missing: Annotated[Optional[str], typer.Option(help="A screen or target that disappeared: report (default) or fail.")] = None,
    moved: Annotated[Optional[str], typer.Option(
        help="Predicted time that rose only because a target is farther from the start point: report (default) or fail.")] = None,
    renamed_from: Annotated[Optional[str], typer.Option(
        metavar="NAME", help="Accept a baseline recorded under this earlier project name.")] = None,
    rules: RulesOpt = None,
    density: DensityOpt = None,
    scale: ScaleOpt = None,
    ppi: PpiOpt = None,
    profiles: ProfilesOpt = None,
    start: StartOpt = "centre",
    today: TodayOpt = None,
    jobs: JobsOpt = None,
    all_windows: AllWindowsOpt = None,
    app_package: AppPackageOpt = None,
    include_focusable: FocusableOpt = None,
    quiet: QuietOpt = False,
) -> None:
    """Fail (exit 1) only on what got worse since the baseline; report what got better."""
    import shlex
    from dataclasses import replace as _replace

    from tapgauge.batch import (
        Scope,
        emit_record,
        interruptible,
        nothing_found,
        prepare,
        progress,
        say,
        screen_namer,
    )
    from tapgauge.gate import check_baseline, check_level, gate, gate_record, waiver_snippets
    from tapgauge.heap import collector_paused
    from tapgauge.model import InputError
    from tapgauge.report.gate_report import GATE_WRITERS as writers
    from tapgauge.report.gate_report import gate_summary
    from tapgauge.report.records import EXIT_ERROR

    try:
        if fmt not in writers:
            raise ValueError(f"unknown format {fmt!r}; expected one of: {', '.join(writers)}")
        for name, value in (("--missing", missing), ("--moved", moved)):
            if value not in (None, "report", "fail"):
                raise ValueError(f"{name} {value!r}: expected report or fail")
        header = check_baseline(baseline)
    except (InputError, ValueError) as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    run = prepare(rules, density, scale, ppi, None, None, fail_level, profiles, [], start, "approach", today, jobs,
                  Scope(all_windows, app_package, include_focusable))
    if isinstance(run, int):
        raise typer.Exit(run)
    project, origin = run.config.project_name
    recorded = header.get("project")
    if recorded != project and recorded != renamed_from:
        say(f"{baseline}: recorded for project {recorded!r}, but this is project {project!r} ({origin}); "
            f"gate against this project's own baseline, or pass --renamed-from {shlex.quote(str(recorded))} "
            "if the project was renamed")
        raise typer.Exit(EXIT_ERROR)
    if header["version"] == 1:
        say(f"{baseline}: written by tapgauge 0.1; read with its rule ids under their new names, and without the "
            "approach that tells a move from a loss (every slower reach counts); re-record it to drop this notice")
    overrides = {k: v for k, v in {"size_tolerance": size_tolerance, "miss_tolerance": miss_tolerance,
                                   "time_tolerance_ms": time_tolerance, "missing": missing,
                                   "moved": moved}.items() if v is not None}
    # The comparison keeps every change it finds until the record is written: the collector would rescan
    # them for nothing (heap.collector_paused says what that cost).
    with collector_paused():
        try:
            check_level(header, baseline, run.level)
            with interruptible(), progress() as tick:
                report = run.report(paths, tick, plans=False)  # the gate compares no plan
                verdict = gate(report, screen_namer(paths), baseline, _replace(run.config.gate, **overrides),
                               run.level, one_root=len(paths) == 1, version=header["version"])
        except InputError as exc:
            say(str(exc))
            raise typer.Exit(EXIT_ERROR) from None
        rerecord = "tapgauge baseline " + " ".join(shlex.quote(p.as_posix()) for p in paths) + \
            f" -o {shlex.quote(baseline.as_posix())}"
        record = gate_record(verdict, baseline.as_posix(), len(report.errors), run.level, rerecord,
                             waiver_snippets(verdict.worse, run.config.base), report.compared)
        if not report.summary["screens"]:
            say(nothing_found(paths))
        elif not verdict.compared:
            say(f"none of the {report.summary['screens']} screen(s) checked is in {baseline}: gate the folders the "
                "baseline was recorded from, or record a new baseline")
        elif not report.compared:
            say(f"no target on the {report.summary['screens']} screen(s) was checked (see their reasons with "
                "`tapgauge check`): nothing to compare with the baseline")
        code = emit_record(record, fmt, output, writers[fmt])
        if not code and not quiet and (output is not None or fmt != "table"):
            say(gate_summary(record))
        raise typer.Exit(code or record["summary"]["exit_code"])


@app.command("journey")
def journey_cmd(
    journey: Annotated[Path, typer.Argument(
        help="A journey file: 'start', 'screen' and 'touch' lines (see README).")],
    profiles: ProfilesOpt = None,
    param: ParamOpt = None,
    density: DensityOpt = None,
    scale: ScaleOpt = None,
    ppi: PpiOpt = None,
    width_model: WidthModelOpt = "approach",
    fmt: RecordFormatOpt = "table",
    output: RecordOutputOpt = None,
) -> None:
    """Predict the pointing time and misses of a task: the targets it touches, in order."""
    from tapgauge.batch import (
        common_device,
        emit_record,
        make_scoring,
        read_options,
        say,
        table_or_json,
    )
    from tapgauge.config import load_config
    from tapgauge.journeys import parse_journey, run_journey
    from tapgauge.model import InputError
    from tapgauge.report.records import EXIT_ERROR
    from tapgauge.report.table import write_journey_table

    try:
        table_or_json(fmt)
        config = load_config(Path.cwd())
        scoring = make_scoring(config, profiles, param or [], "centre", width_model)
        record = run_journey(parse_journey(journey), list(scoring.profiles), common_device(density, scale, ppi),
                             config.devices, read_options(config), width_model)
    except (InputError, ValueError) as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    raise typer.Exit(emit_record(record, fmt, output, write_journey_table))


@app.command("flow", hidden=True, add_help_option=False,
             context_settings={"allow_extra_args": True, "ignore_unknown_options": True})
def renamed_flow_cmd() -> None:
    """Renamed to `tapgauge journey`; kept one version so old scripts fail with the new name."""
    from tapgauge.batch import say
    from tapgauge.report.records import EXIT_ERROR

    say("`tapgauge flow` is renamed to `tapgauge journey`; a .journey file has 'start', 'screen' and "
        "'touch' lines (see README)")
    raise typer.Exit(EXIT_ERROR)


@app.command("compare")
def compare_cmd(
    a: Annotated[Path, typer.Argument(help="Alternative A: a screen file or a folder of screens.")],
    b: Annotated[Path, typer.Argument(help="Alternative B: the same screens, redesigned.")],
    profiles: ProfilesOpt = None,
    param: ParamOpt = None,
    start: StartOpt = "centre",
    width_model: WidthModelOpt = "approach",
    density: DensityOpt = None,
    scale: ScaleOpt = None,
    ppi: PpiOpt = None,
    fmt: RecordFormatOpt = "table",
    output: RecordOutputOpt = None,
) -> None:
    """Rank two design alternatives per profile by predicted misses and time, and show which targets decide it."""
    from tapgauge.batch import (
        common_device,
        emit_record,
        make_scoring,
        measure_options,
        read_options,
        say,
        table_or_json,
    )
    from tapgauge.compare import compare
    from tapgauge.config import load_config
    from tapgauge.model import InputError
    from tapgauge.pipeline import Settings
    from tapgauge.report.records import EXIT_ERROR
    from tapgauge.report.table import write_compare_table
    from tapgauge.rulesets import DEFAULT_RULESETS, select_rulesets

    try:
        table_or_json(fmt)
        config = load_config(Path.cwd())
        settings = Settings(
            tuple(select_rulesets(list(config.rules or DEFAULT_RULESETS))), common_device(density, scale, ppi),
            config.devices, read=read_options(config), measure=measure_options(config),
            scoring=make_scoring(config, profiles, param or [], start, width_model),
        )
        record = compare(a, b, settings)
    except (InputError, ValueError) as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    raise typer.Exit(emit_record(record, fmt, output, write_compare_table))


@app.command("calibrate")
def calibrate_cmd(
    trials: Annotated[Path, typer.Argument(help="CSV of per-condition summaries or per-trial taps (see README).")],
    output: Annotated[Optional[Path], typer.Option("--output", "-o", help="Write the fitted profile (TOML) here.")] = None,
    name: Annotated[str, typer.Option(help="Id of the written profile.")] = "calibrated",
    form: Annotated[str, typer.Option(help="ID form for summaries: shannon (default) or fitts.")] = "shannon",
    chart: Annotated[Optional[Path], typer.Option(help="Write a PNG chart of ID against time with the fitted line.")] = None,
    fmt: Annotated[str, typer.Option("--format", "-f", help="text or json.")] = "text",
) -> None:
    """Fit a slope profile (Fitts's-law line and touch spread) from a study's trial log."""
    import json

    from tapgauge.batch import say
    from tapgauge.calibrate import calibrate, fit_record, profile_toml
    from tapgauge.model import InputError
    from tapgauge.profiles import parse_profile
    from tapgauge.report.output import write_atomic
    from tapgauge.report.records import EXIT_ERROR

    try:
        if fmt not in ("text", "json"):
            raise ValueError(f"unknown format {fmt!r}; expected text or json")
        fit = calibrate(trials, form)
        toml = profile_toml(fit, name, trials.as_posix())
        parse_profile(toml, "the fitted profile")  # what we write must load
    except (InputError, ValueError) as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    record = fit_record(fit, trials)
    if fmt == "json":
        typer.echo(json.dumps(record, indent=2))
    else:
        typer.echo(f"{trials}: {fit.conditions} conditions, {fit.form} ID")
        typer.echo(f"MT = {fit.intercept_ms:.1f} + {fit.slope_ms_per_bit:.1f} ID ms   r = {fit.r:.4f}   r^2 = {fit.r_squared:.4f}")
        if fit.throughput_bits_per_s is not None:
            typer.echo(f"throughput (mean of means) = {fit.throughput_bits_per_s:.2f} bits/s")
        if fit.sigma_a_mm is not None:
            typer.echo(f"touch spread: sigma^2 = {fit.alpha:.5f} W^2 + {fit.sigma_a_mm:.3f}^2 (mm)")
    try:
        if output is not None:
            write_atomic(output, toml)
            typer.echo(f"wrote {output}", err=fmt == "json")
        if chart is not None:
            from tapgauge.report.chart import fit_chart_png

            write_atomic(chart, fit_chart_png(list(fit.points), fit.intercept_ms, fit.slope_ms_per_bit,
                                              f"{trials.name}: MT = {fit.intercept_ms:.1f} + {fit.slope_ms_per_bit:.1f} ID, r = {fit.r:.3f}"))
            typer.echo(f"wrote {chart}", err=fmt == "json")
    except OSError as exc:
        say(f"cannot write: {exc}")
        raise typer.Exit(EXIT_ERROR) from None


@app.command("config")
def config_cmd() -> None:
    """Print the effective settings and where each came from (config file or built-in default)."""
    from tapgauge.batch import say
    from tapgauge.config import effective_settings, load_config
    from tapgauge.model import InputError
    from tapgauge.profiles import DEFAULT_PROFILES
    from tapgauge.readers.marked import DEFAULT_MARKER
    from tapgauge.report.records import EXIT_ERROR
    from tapgauge.rulesets import DEFAULT_RULESETS

    try:
        config = load_config(Path.cwd())
    except InputError as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    defaults = {"rules": DEFAULT_RULESETS, "fail_level": "error", "profiles": DEFAULT_PROFILES, "marker": DEFAULT_MARKER}
    from rich.console import Console
    from rich.table import Table

    table = Table(show_edge=False, pad_edge=False, box=None, padding=(0, 2, 0, 0))
    for col in ("setting", "value", "from"):
        table.add_column(col, overflow="fold")
    for key, value, origin in effective_settings(config, defaults):
        table.add_row(key, value, origin)
    Console(highlight=False).print(table)


@app.command("capture")
def capture_cmd(
    name: Annotated[str, typer.Argument(help="Screen name: writes NAME.xml, NAME.png and NAME.device.txt.")],
    serial: Annotated[Optional[str], typer.Option(help="adb serial of the device, when several are connected.")] = None,
    webdriver: Annotated[Optional[str], typer.Option(
        "--webdriver", metavar="SESSION_URL",
        help="Capture from a live W3C WebDriver session instead of adb (Android or iOS), "
        "e.g. http://127.0.0.1:4723/session/ID. Only that URL's host is contacted.")] = None,
    timeout: Annotated[Optional[float], typer.Option(
        metavar="SECONDS", help="With --webdriver: seconds to wait for each answer (default: 30).")] = None,
    out: Annotated[Path, typer.Option("--out", help="Folder to write the bundle into.")] = Path("."),
    force: Annotated[bool, typer.Option("--force", help="Replace an existing bundle of that name.")] = False,
) -> None:
    """Save the current screen of an Android device (adb) or a WebDriver session as a bundle that check reads."""
    from tapgauge.batch import say
    from tapgauge.capture import CaptureError, capture
    from tapgauge.report.records import EXIT_ERROR

    if webdriver is not None and serial is not None:
        say("--webdriver and --serial cannot be used together: --serial picks an adb device, "
            "--webdriver a session on an automation server")
        raise typer.Exit(EXIT_ERROR)
    if timeout is not None and webdriver is None:
        say("--timeout applies to --webdriver captures only")
        raise typer.Exit(EXIT_ERROR)
    notes: tuple[str, ...] = ()
    flags = ""
    try:
        if webdriver is not None:
            from tapgauge.webcapture import DEFAULT_TIMEOUT_S, capture_session

            done = capture_session(name, out, webdriver, force=force,
                                   timeout=timeout if timeout is not None else DEFAULT_TIMEOUT_S)
            written, notes, flags = list(done.written), done.notes, done.check_flags
        else:
            written = capture(name, out, serial=serial, force=force)
    except CaptureError as exc:
        say(str(exc))
        raise typer.Exit(EXIT_ERROR) from None
    except OSError as exc:
        say(f"cannot write the bundle: {exc}")
        raise typer.Exit(EXIT_ERROR) from None
    for p in written:
        typer.echo(f"wrote {p}")
    for note in notes:
        typer.echo(note)
    typer.echo(f"check it with: tapgauge check {written[0]}{flags}")


@app.command("rules")
def list_rules(
    width: Annotated[Optional[int], typer.Option(help="Width in columns (default: the terminal's, or 80).")] = None,
) -> None:
    """List the built-in rule sets, their rules and published sources."""
    from tapgauge.batch import terminal_width
    from tapgauge.report.table import _wrap as wrap  # wraps by display width, with a hanging indent
    from tapgauge.rulesets import DEFAULT_RULESETS, builtin_rulesets

    cols = width or terminal_width()
    lines: list[str] = []
    for rs in builtin_rulesets().values():
        default = " (default)" if rs.id in DEFAULT_RULESETS else ""
        lines += wrap(f"{rs.id}{default}: {rs.title}", cols, "  ")
        lines += wrap(f"  platforms: {', '.join(rs.platforms)}", cols, "    ")
        lines += wrap(f"  source: {rs.source}", cols, "    ")
        lines += wrap(f"  {rs.url}", cols, "    ")
        for r in rs.rules:
            threshold = ", ".join(
                f"miss <= {v:.0%}" if k == "max_miss" else f"{k} {v}" if isinstance(v, str) else f"{k} {v:g} {r.unit}"
                for k, v in r.params if not isinstance(v, bool))
            extra = " + spacing exception" if dict(r.params).get("spacing_exception") else ""
            lines.append(f"  {r.id}")  # whole on its own line, whatever the width: ids are copied into waivers
            lines += wrap(f"      {r.severity.label}, {r.kind}: {threshold}{extra}", cols, "      ")
        lines.append("")
    typer.echo("\n".join(lines))


# Placeholders in --help: plain words for what a value is (the library's default names the Python type).
METAVARS = {"density": "DPI", "scale": "SCALE", "ppi": "PPI", "rules": "RULES", "classes": "FILE", "marker": "COLOUR",
            "overlay": "FOLDER", "fmt": "FORMAT", "output": "FILE", "width": "COLUMNS", "profiles": "PROFILES",
            "param": "PROFILE.KEY=VALUE", "start": "START", "width_model": "MODEL", "today": "DATE", "jobs": "N",
            "app_package": "PACKAGE", "baseline": "FILE", "size_tolerance": "DP", "miss_tolerance": "P",
            "time_tolerance": "MS", "missing": "report|fail", "moved": "report|fail", "name": "NAME", "form": "FORM",
            "chart": "FILE", "serial": "SERIAL", "out": "FOLDER", "trials": "TRIALS", "journey": "FILE", "a": "A",
            "b": "B", "paths": "PATHS"}


def _plain_metavars(command: Any) -> Any:
    """Every option's value named in plain words, once, for every subcommand."""
    for sub in getattr(command, "commands", {}).values():
        _plain_metavars(sub)
        if sub.help and not sub.short_help:
            sub.short_help = sub.help.strip().splitlines()[0]  # whole, not cut at 45 characters
    for param in command.params:
        if param.metavar is None and not getattr(param, "is_flag", False) and param.name in METAVARS:
            param.metavar = METAVARS[param.name]
        if param.param_type_name == "argument":
            param.display_type_rich = lambda ctx=None: ""  # the name says it; no Python type beside it
    return command


def _no_pydantic(command: Any) -> Any:
    """Convert option values without pydantic, on typer versions that would import it for them.

    typer 0.29 converts every value, even a plain str and even an option left out, through a
    pydantic TypeAdapter; importing pydantic for that was a fifth of a one-screen check's
    start-up (70-90 ms). Our values are str, int, float, bool, Path and lists of them, which need
    no schema: each parameter gets a converter of typer's own kind (its RuntimeParam, paths
    through its own path checks) before typer builds one. The hook is typer's internals, so it
    is guarded: a typer without it (before 0.29, or changed since) keeps converting its own way.
    """
    try:
        from dataclasses import dataclass

        from typer._coercion import RuntimeParam
        from typer._param_types import coerce_cli_path
    except ImportError:
        return command

    def leaf(kind: Any) -> Any:
        if kind in (int, float):
            word = "integer" if kind is int else "number"

            def number(value: Any, param: Any, ctx: Any) -> Any:
                try:
                    return kind(value)
                except (TypeError, ValueError):
                    raise typer.BadParameter(f"{value!r} is not a valid {word}.", ctx=ctx, param=param) from None
            return number
        if kind is str:
            return lambda value, param, ctx: value if isinstance(value, str) else str(value)
        if kind is bool:
            def flag(value: Any, param: Any, ctx: Any) -> bool:
                word = str(value).strip().lower()
                if isinstance(value, bool) or word in FLAG_WORDS:
                    return value if isinstance(value, bool) else FLAG_WORDS[word]
                raise typer.BadParameter(f"{value!r} is not a valid boolean.", ctx=ctx, param=param)
            return flag
        if kind is Path:
            return lambda value, param, ctx: Path(coerce_cli_path(  # its exists/readable checks; str in, str out
                value, param.type_descriptor.parameter_info, path_type=None, param=param, ctx=ctx))
        return None

    @dataclass(frozen=True)
    class Plain(RuntimeParam):  # type: ignore[misc]
        convert: Any
        many: bool

        def _coerce_value(self, value: Any, param: Any, ctx: Any) -> Any:
            if self.many:
                return [self.convert(v, param, ctx) for v in value]
            return self.convert(value, param, ctx)

    def lean(param: Any) -> None:
        desc = getattr(param, "type_descriptor", None)
        if desc is None or desc.file_annotation is not None or getattr(param, "_runtime_param", False) is not None:
            return  # not typer 0.29's kind of parameter, a file, or converted already
        kind = desc.annotation
        many = getattr(kind, "__origin__", None) is list and len(kind.__args__) == 1
        convert = leaf(kind.__args__[0] if many else kind)
        if convert is not None:
            param._runtime_param = Plain(desc.parameter_info, kind, convert, many)

    def walk(cmd: Any) -> None:
        for sub in getattr(cmd, "commands", {}).values():
            walk(sub)
        for param in cmd.params:
            lean(param)
        made = cmd.get_help_option  # typer makes -h/--help per run, when it first needs it

        def help_option(ctx: Any) -> Any:
            option = made(ctx)
            if option is not None:
                lean(option)
            return option

        cmd.get_help_option = help_option

    try:
        Plain(None, str, leaf(str), False)
    except TypeError:  # typer's RuntimeParam changed shape: leave every value to typer
        return command
    walk(command)
    return command


# A flag's value given as text, read as click reads it.
FLAG_WORDS = {**dict.fromkeys(("1", "true", "t", "yes", "y", "on"), True),
              **dict.fromkeys(("0", "false", "f", "no", "n", "off"), False)}


def _app_for(args: list[str]) -> typer.Typer:
    """The app to build for these arguments: with only the command they name, when they name one.

    typer reads every command's signature and types to build the group (about 10 ms for all
    ten); a run needs one. The root takes no option values, so the first word is the command.
    The whole app for the command list and for names it does not know (it suggests the nearest).
    """
    import copy

    word = next((a for a in args if not a.startswith("-")), None)
    chosen = [c for c in app.registered_commands
              if word is not None and word == (c.name or c.callback.__name__.replace("_", "-"))]
    if not chosen:
        return app
    one = copy.copy(app)  # the same settings and root callback
    one.registered_commands = chosen
    return one


def main(argv: list[str] | None = None) -> int:
    """Run the CLI in-process and return its exit code (tests call this)."""
    args = argv if argv is not None else sys.argv[1:]
    command = _no_pydantic(_plain_metavars(typer.main.get_command(_app_for(args))))
    try:
        # Standalone mode prints usage errors itself and always ends in SystemExit.
        command.main(args=args, prog_name="tapgauge")
    except SystemExit as exc:
        code = exc.code
        return code if isinstance(code, int) else (0 if code is None else 2)  # 2: report.records.EXIT_ERROR
    return 0


def run() -> None:
    """The console script: main() with single-threaded BLAS, then exit without the last collections."""
    # Our numpy work is elementwise; BLAS threads only compete with us (and, in workers, with each other):
    # numpy's OpenBLAS starts a spinning thread per core at import, which cost 15-60 ms of a one-screen
    # check on two busy cores. Set before numpy loads; a value the user set wins.
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    code = main()
    # At exit the interpreter collects garbage over every object the imports made (numpy, typer, the
    # rule tables): 30-45 ms of a one-screen check. Frozen objects are skipped, and Python does not
    # promise finalizers at exit anyway; reports are closed and the streams are flushed as usual.
    gc.freeze()
    sys.exit(code)
