"""Benchmark: tapgauge against the parsing floor, side by side in one run.

Usage:
  python bench/run_bench.py targets [--sizes 100 200 1000 10000] [--screens 20] [--repeat 3] [--filler 0] [--tall] [--modern]
  python bench/run_bench.py screens [--counts 100 1000 10000 100000] [--targets 50] [--jobs 2] [--work DIR]
  python bench/run_bench.py batch [--screens 1000] [--targets 100] [--filler 1] [--repeat 5] [--format json]

targets: one process, one core. For each size a corpus is generated, then the floor
  (lxml parsing the same files and nothing else) and tapgauge (the whole pipeline and
  the JSON report, written to a null stream) are timed alternately, best of
  --repeat (this shared machine's timings are noisy; the minimum is the steadiest).
  With --tall the density of targets stays the same as they grow, which isolates
  how the checks scale (n log n) from how many neighbours each target has. The checks alone (measure + rules, on screens already read) show how the
  geometry grows with targets per screen.
screens: whole processes, as a pipeline runs them. For each count, the floor (bench/floor.py: lxml
  parsing every file in --jobs processes, importing nothing else) and `tapgauge check DIR -f json -o FILE
  --jobs N` run one after the other on the same corpus; wall time, and peak memory
  of the whole process tree (the parent plus its workers: proportional set size,
  so pages a forked worker shares with its parent count once; sampled from /proc).

batch: the speed goal's own measure. One corpus (by default 1,000 dumps of 200 nodes, 100 of
  them targets), then, alternating --repeat times: the floor (bench/floor.py), one whole process that
  parses every file with lxml and imports nothing else, and `tapgauge check DIR -f json -o FILE` with its default jobs; medians, their
  ratio, and the report's bytes per byte of dumps.

Whole processes run as an installed tool would: with its bytecode compiled first (into the run's
temporary folder).

Prints Markdown tables. No timing is asserted anywhere; speed is a ratio to the floor.
"""

from __future__ import annotations

import argparse
import io
import math
import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

from lxml import etree
from timing import installed_env, median_seconds, run_measured

from tapgauge.checks import check_screen
from tapgauge.device import resolve_device
from tapgauge.measure import measure
from tapgauge.model import Severity
from tapgauge.pipeline import Settings, iter_results, record_one
from tapgauge.profiles import DEFAULT_PROFILES, select_profiles
from tapgauge.readers import discover, read_screens
from tapgauge.report.json_writer import write_json
from tapgauge.report.records import Report
from tapgauge.rulesets import DEFAULT_RULESETS, select_rulesets
from tapgauge.score import Scoring

HERE = Path(__file__).resolve().parent


def settings() -> Settings:
    """What `tapgauge check` does by default: the default rule sets and profiles."""
    return Settings(tuple(select_rulesets(list(DEFAULT_RULESETS))),
                    scoring=Scoring(tuple(select_profiles(list(DEFAULT_PROFILES)))))


def make_corpus(folder: Path, screens: int, targets: int, filler: int = 0, tall: bool = False,
                modern: bool = False) -> list[Path]:
    subprocess.run([sys.executable, str(HERE / "make_corpus.py"), str(folder), "--screens", str(screens),
                    "--targets", str(targets), "--filler", str(filler), *(["--tall"] if tall else []),
                    *(["--modern"] if modern else [])], check=True)
    return discover([folder])[0]


def parse_all(files: list[Path]) -> None:
    for f in files:
        etree.fromstring(f.read_bytes())


def tapgauge_report(folder: Path, st: Settings) -> None:
    report = Report(iter_results([folder], st, 1, work=record_one), list(st.rulesets), Severity.ERROR,
                    list(st.scoring.profiles))
    write_json(report, io.StringIO())


def checks_only(screens: list, st: Settings) -> None:  # type: ignore[type-arg]
    for screen, device in screens:
        check_screen(measure(screen, device), list(st.rulesets), False)


def bench_targets(sizes: list[int], n_screens: int, repeat: int, filler: int, tall: bool,
                  modern: bool = False) -> None:
    st = settings()
    layout = "a growing screen, same density" if tall else "one 1080x2340 screen, denser as targets grow"
    print(f"Targets per screen ({n_screens} screens each, one core; {layout}; filler nodes per target: {filler}"
          f"{'; with newer dumpers attributes' if modern else ''})\n")
    print("| targets/screen | lxml floor ms/screen | tapgauge ms/screen | screens/s | ratio to floor "
          "| checks ms/screen | checks per target / log2 n, us |")
    print("|---:|---:|---:|---:|---:|---:|---:|")
    for n in sizes:
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            files = make_corpus(folder, n_screens, n, filler, tall, modern)
            read = [s for f in files for s in read_screens(f, st.read)]
            devices = [(s, resolve_device(s, st.flags, *s.hints, st.config.for_path(s.path))) for s in read]
            floor, full, checks = [], [], []
            tapgauge_report(folder, st)  # warm caches
            for _ in range(repeat):  # alternate, so both see the same machine
                floor.append(median_seconds(lambda: parse_all(files), 1, warmup=0))
                full.append(median_seconds(lambda: tapgauge_report(folder, st), 1, warmup=0))
                checks.append(median_seconds(lambda: checks_only(devices, st), 1, warmup=0))
            f, t, c = (min(v) / n_screens for v in (floor, full, checks))  # the least-disturbed run
            print(f"| {n} | {f * 1e3:.2f} | {t * 1e3:.2f} | {1 / t:.0f} | {t / f:.1f}x | {c * 1e3:.2f} "
                  f"| {c / n / math.log2(n) * 1e6:.2f} |")


def bench_screens(counts: list[int], targets: int, jobs: int, work: Path | None) -> None:
    print(f"Screens ({targets} targets each, {jobs} processes, whole processes, JSON report to a file)\n")
    print("| screens | lxml floor s | tapgauge s | screens/s | ratio to floor | CPU s: floor, tapgauge | peak memory MB "
          "| floor peak MB | report MB |")
    print("|---:|---:|---:|---:|---:|---:|---:|---:|---:|")
    with tempfile.TemporaryDirectory(dir=work) as tmp:
        for count in counts:
            folder = Path(tmp) / f"c{count}"
            files = make_corpus(folder, count, targets)
            out = Path(tmp) / "report.json"
            floor_cmd = [sys.executable, str(HERE / "floor.py"), str(folder), "--jobs", str(jobs)]
            tap_cmd = [sys.executable, "-m", "tapgauge", "check", str(folder), "-f", "json", "-o", str(out), "--quiet",
                       "-j", str(jobs)]
            env = installed_env(Path(tmp))
            # Memory is this mode's second figure; sampled twice a second, it costs a core well under 1%.
            floor, tap = run_measured(floor_cmd, env, every=0.5), run_measured(tap_cmd, env, every=0.5)
            f, t = floor.wall, tap.wall
            size = out.stat().st_size / 1e6
            out.unlink()
            print(f"| {count:,} | {f:.2f} | {t:.2f} | {len(files) / t:.0f} | {t / f:.1f}x | {floor.cpu:.1f}, {tap.cpu:.1f} "
                  f"| {tap.peak / 1024:.0f} | {floor.peak / 1024:.0f} | {size:,.0f} |", flush=True)
            subprocess.run(["rm", "-rf", str(folder)], check=True)


def bench_batch(screens: int, targets: int, filler: int, repeat: int, fmt: str, work: Path | None) -> None:
    with tempfile.TemporaryDirectory(dir=work) as tmp:
        folder = Path(tmp) / "corpus"
        files = make_corpus(folder, screens, targets, filler)
        dumps = sum(f.stat().st_size for f in files)
        out = Path(tmp) / f"report.{fmt}"
        floor_cmd = [sys.executable, str(HERE / "floor.py"), str(folder)]
        tap_cmd = [sys.executable, "-m", "tapgauge", "check", str(folder), "-f", fmt, "-o", str(out), "--quiet"]
        env = installed_env(Path(tmp))
        floor_runs, tap_runs = [], []
        for _ in range(repeat):  # alternate, so both see the same machine
            floor_runs.append(run_measured(floor_cmd, env, every=None))  # timed only: see run_measured
            tap_runs.append(run_measured(tap_cmd, env, every=None))
        size = out.stat().st_size
    floor, tap = [r.wall for r in floor_runs], [r.wall for r in tap_runs]
    f, t = statistics.median(floor), statistics.median(tap)
    f_cpu, t_cpu = statistics.median(r.cpu for r in floor_runs), statistics.median(r.cpu for r in tap_runs)
    print(f"Batch: {screens:,} dumps ({dumps / 1e6:.1f} MB, {targets} targets and {targets * filler} other nodes "
          f"each); tapgauge with its default jobs ({os.cpu_count()} cores), -f {fmt} to a file; "
          f"medians of {repeat} alternating runs\n")
    print("| floor: one process parsing with lxml | tapgauge | ratio to floor | CPU s: floor, tapgauge (all processes) "
          "| report | report bytes per dump byte |")
    print("|---:|---:|---:|---:|---:|---:|")
    print(f"| {f:.2f} s | {t:.2f} s | {t / f:.2f}x | {f_cpu:.2f}, {t_cpu:.2f} | {size / 1e6:.1f} MB "
          f"| {size / dumps:.2f} |")
    print(f"\n(all runs, s: floor {', '.join(f'{v:.2f}' for v in floor)}; tapgauge {', '.join(f'{v:.2f}' for v in tap)})")
    # Each tapgauge run against the floor run just before it: on a shared machine whose speed changes
    # between runs, the spread of these says more than one ratio of medians.
    pairs = sorted(t / f for f, t in zip(floor, tap))
    print(f"(each run against the floor run before it: {pairs[0]:.2f}x to {pairs[-1]:.2f}x, "
          f"median {statistics.median(pairs):.2f}x)")


def main() -> None:
    ap = argparse.ArgumentParser()
    sub = ap.add_subparsers(dest="mode", required=True)
    t = sub.add_parser("targets")
    t.add_argument("--sizes", type=int, nargs="+", default=[100, 200, 1000, 10000])
    t.add_argument("--screens", type=int, default=20)
    t.add_argument("--repeat", type=int, default=5)
    t.add_argument("--filler", type=int, default=0)
    t.add_argument("--modern", action="store_true", help="nodes carry drawing-order etc. (see make_corpus.py)")
    t.add_argument("--tall", action="store_true", help="same density at every size (see make_corpus.py)")
    s = sub.add_parser("screens")
    s.add_argument("--counts", type=int, nargs="+", default=[100, 1000, 10000, 100000])
    s.add_argument("--targets", type=int, default=50)
    s.add_argument("--jobs", type=int, default=2)
    s.add_argument("--work", type=Path, default=None, help="folder for the corpora (needs ~2 GB per 100,000 screens)")
    b = sub.add_parser("batch")
    b.add_argument("--screens", type=int, default=1000)
    b.add_argument("--targets", type=int, default=100)
    b.add_argument("--filler", type=int, default=1)
    b.add_argument("--repeat", type=int, default=5)
    b.add_argument("--format", default="json")
    b.add_argument("--work", type=Path, default=None)
    a = ap.parse_args()
    if a.mode == "targets":
        bench_targets(a.sizes, a.screens, a.repeat, a.filler, a.tall, a.modern)
    elif a.mode == "screens":
        bench_screens(a.counts, a.targets, a.jobs, a.work)
    else:
        bench_batch(a.screens, a.targets, a.filler, a.repeat, a.format, a.work)


if __name__ == "__main__":
    main()
