"""Benchmark: tapgauge against the parsing floor, side by side in one process.

Usage: python bench/run_bench.py [--targets 200 1000 5000] [--screens 20] [--repeat 5]
For each size it generates a corpus, then times (median of --repeat runs):
  floor:    lxml parsing the same files and doing nothing else;
  tapgauge: the whole pipeline (read, device, measure, check, JSON report records).
It prints screens per second and the ratio to the floor. No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import tempfile
from pathlib import Path
from subprocess import run
import sys

from lxml import etree

from timing import median_seconds

from tapgauge.pipeline import Settings, run_check
from tapgauge.profiles import DEFAULT_PROFILES, select_profiles
from tapgauge.score import Scoring
from tapgauge.report.records import build_report
from tapgauge.model import Severity
from tapgauge.rulesets import DEFAULT_RULESETS, select_rulesets

HERE = Path(__file__).resolve().parent


def floor(files: list[Path]) -> None:
    for f in files:
        etree.fromstring(f.read_bytes())


def pipeline(folder: Path, rulesets: list) -> None:
    result = run_check([folder], settings(rulesets))
    build_report(list(result.screens), list(result.errors), rulesets, Severity.ERROR)


def settings(rulesets: list) -> Settings:  # type: ignore[type-arg]
    """What `tapgauge check` does by default: the default rule sets and profiles."""
    return Settings(tuple(rulesets), scoring=Scoring(tuple(select_profiles(list(DEFAULT_PROFILES)))))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--targets", type=int, nargs="+", default=[200, 1000, 5000])
    ap.add_argument("--screens", type=int, default=20)
    ap.add_argument("--repeat", type=int, default=5)
    a = ap.parse_args()
    rulesets = select_rulesets(list(DEFAULT_RULESETS))
    print("| targets/screen | screens | lxml floor s | tapgauge s | screens/s | ratio to floor |")
    print("|---:|---:|---:|---:|---:|---:|")
    for n in a.targets:
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            run([sys.executable, str(HERE / "make_corpus.py"), tmp, "--screens", str(a.screens), "--targets", str(n)], check=True)
            files = sorted(folder.glob("*.xml"))
            pipeline(folder, rulesets)  # warm caches
            f = median_seconds(lambda: floor(files), a.repeat)
            t = median_seconds(lambda: pipeline(folder, rulesets), a.repeat)
            print(f"| {n} | {a.screens} | {f:.4f} | {t:.4f} | {a.screens / t:.1f} | {t / f:.1f}x |")


if __name__ == "__main__":
    main()
