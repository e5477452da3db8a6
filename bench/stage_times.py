"""Where a screen's time goes: each pipeline stage timed on its own, as a ratio to parsing the file.

Usage:
  python bench/stage_times.py DIR [--repeat 5]

DIR holds dumps (make one with bench/make_corpus.py). One process, one core, the default rule
sets and profiles, as `tapgauge check DIR -f json` runs each file in a worker. Each stage is run
over every file in turn, on the previous stage's results (kept in memory), best of --repeat.
Prints a Markdown table: milliseconds per screen and the ratio to the lxml parse of the same file.
The stages keep every result in memory, so their sum leaves out freeing each file's objects and
the cost of running every stage on one file before the next; the last row, `record_one` file by
file as a worker runs it, has both, and is the one to quote. No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import gc
import pickle
import sys
import time
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path
from typing import Any

from lxml import etree

sys.path.insert(0, str(Path(__file__).resolve().parent))
from run_bench import settings

from tapgauge.checks import check_screen
from tapgauge.device import resolve_device
from tapgauge.measure import measure
from tapgauge.pipeline import Settings, check_one_screen, record_one
from tapgauge.readers import discover, read_screens
from tapgauge.report.records import Checked, screen_record
from tapgauge.waivers import waive_screen


def best(fn: Callable[[], Any], repeat: int) -> tuple[float, Any]:
    """Best of `repeat` runs, with the cyclic garbage collector paused as the pipeline pauses it per file."""
    times, out = [], None
    for _ in range(repeat):
        gc.disable()
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
        gc.enable()
    return min(times), out


def stages(files: list[Path], st: Settings, repeat: int) -> list[tuple[str, float]]:
    rulesets = list(st.rulesets)
    rows: list[tuple[str, float]] = []

    def stage(name: str, fn: Callable[[], Any]) -> Any:
        t, out = best(fn, repeat)
        rows.append((name, t / len(files)))
        return out

    stage("parse (lxml, the floor)", lambda: [etree.fromstring(f.read_bytes()) for f in files])
    screens = stage("read (parse + targets)", lambda: [s for f in files for s in read_screens(f, st.read)])
    devices = stage("device", lambda: [resolve_device(s, st.flags, *s.hints, st.config.for_path(s.path))
                                       for s in screens])
    measured = stage("measure", lambda: [measure(s, d, st.measure) for s, d in zip(screens, devices)])
    checked = stage("check", lambda: [check_screen(m, rulesets, False, words=False) for m in measured])
    scored = stage("score", lambda: [st.scoring.apply(c) for c in checked])
    whole = stage("check + score + plan", lambda: [check_one_screen(s, d, st) for s, d in zip(screens, devices)])
    rows[-1] = ("plan (with its re-check)", rows[-1][1] - sum(t for n, t in rows if n in ("measure", "check", "score")))
    waived = stage("waive", lambda: [waive_screen(r, st.waivers) for r in whole])
    done = stage("the screen's JSON report text and totals", lambda: [Checked.document_of(w, c) for w, c in waived])
    stage("to the parent (pickle both ways)", lambda: [pickle.loads(pickle.dumps(c)) for c in done])
    # As a worker runs it: one file through every stage, its objects freed before the next.
    stage(WHOLE, lambda: [record_one(f, st) for f in files] and None)
    # Not on the JSON path: what the other formats start from.
    stage(OFF_PATH + "whole record (other formats)", lambda: [screen_record(w) for w, _ in waived])
    del scored
    return rows


OFF_PATH = "(not in the sum) "
WHOLE = "**each file through every stage in turn (`record_one`, as a worker runs it)**"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("folder", type=Path)
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args()
    files = discover([args.folder])[0]
    rows = stages(files, replace(settings(), document_only=True), args.repeat)  # as -f json runs
    floor = rows[0][1]
    print(f"Stages per screen ({len(files)} files in {args.folder}, one core, best of {args.repeat})\n")
    print("| stage | ms/screen | ratio to parse |")
    print("|---|---:|---:|")
    total = 0.0
    for name, t in rows:
        if name.startswith("parse"):
            print(f"| {name} | {t * 1e3:.2f} | 1.0x |")
            continue
        if name == WHOLE:
            whole = t
            continue
        total += 0 if name.startswith(OFF_PATH) else t
        print(f"| {name} | {t * 1e3:.2f} | {t / floor:.1f}x |")
    print(f"| sum of the stages above | {total * 1e3:.2f} | {total / floor:.1f}x |")
    print(f"| {WHOLE} | {whole * 1e3:.2f} | {whole / floor:.1f}x |")


if __name__ == "__main__":
    main()
