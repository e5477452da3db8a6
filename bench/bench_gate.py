"""Benchmark: the release gate over many screens, beside the parsing floor and a check of the same screens.

Usage: python bench/bench_gate.py [--screens 1000] [--targets 50] [--filler 0] [--repeat 3] [--work DIR]

Generates two corpora with the same file names (bench/make_corpus.py, seeds 1 and 2: the second
build moves and resizes every target a little, so its gate finds changes on every screen), records
a baseline of the first, then runs as whole processes, alternating --repeat times so that all see
the same machine:

  floor               one process parsing every file of the first corpus with lxml (floor.py)
  check               tapgauge check FIRST -f json -o FILE   (for scale)
  baseline            tapgauge baseline FIRST -o FILE --force
  gate, unchanged     tapgauge gate FIRST -b BASELINE -f json -o FILE --quiet
  gate, next build    tapgauge gate SECOND -b BASELINE -f json -o FILE --quiet

Prints each one's median wall time, its ratio to the floor and its CPU time (all processes), then
the peak memory of the baseline and of each gate (sampled in separate runs, so that sampling does
not slow the timed ones). No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
from timing import installed_env, run_measured


def corpus(folder: Path, screens: int, targets: int, filler: int, seed: int) -> None:
    subprocess.run([sys.executable, str(HERE / "make_corpus.py"), str(folder), "--screens", str(screens),
                    "--targets", str(targets), "--filler", str(filler), "--seed", str(seed)], check=True)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--screens", type=int, default=1000)
    ap.add_argument("--targets", type=int, default=50)
    ap.add_argument("--filler", type=int, default=0)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--work", type=Path, default=None)
    a = ap.parse_args()
    with tempfile.TemporaryDirectory(dir=a.work) as tmp:
        t = Path(tmp)
        first, second, base = t / "first", t / "second", t / "baseline.json"
        corpus(first, a.screens, a.targets, a.filler, 1)
        corpus(second, a.screens, a.targets, a.filler, 2)
        env = installed_env(t)
        exe = [sys.executable, "-m", "tapgauge"]
        subprocess.run([*exe, "baseline", str(first), "-o", str(base)], check=True, env=env, stdout=subprocess.DEVNULL)
        commands = {
            "floor: one process parsing with lxml": [sys.executable, str(HERE / "floor.py"), str(first)],
            "check, JSON to a file": [*exe, "check", str(first), "-f", "json", "-o", str(t / "check.json"), "--quiet"],
            "baseline": [*exe, "baseline", str(first), "-o", str(t / "again.json"), "--force"],
            "gate, unchanged": [*exe, "gate", str(first), "-b", str(base), "-f", "json", "-o", str(t / "g1.json"), "--quiet"],
            "gate, next build": [*exe, "gate", str(second), "-b", str(base), "-f", "json", "-o", str(t / "g2.json"), "--quiet"],
        }
        walls: dict[str, list[float]] = {k: [] for k in commands}
        cpus: dict[str, list[float]] = {k: [] for k in commands}
        for _ in range(a.repeat):
            for name, cmd in commands.items():
                m = run_measured(cmd, env, every=None)
                walls[name].append(m.wall)
                cpus[name].append(m.cpu)
        peaks = {name: run_measured(cmd, env, every=0.1).peak for name, cmd in commands.items()
                 if name.startswith(("baseline", "gate"))}
        size = base.stat().st_size / 1e6
    floor = statistics.median(walls["floor: one process parsing with lxml"])
    print(f"Release gate: {a.screens:,} dumps of {a.targets} targets ({a.targets * a.filler} other nodes each); "
          f"baseline file {size:.1f} MB; medians of {a.repeat} alternating runs\n")
    print("| command | wall s | ratio to floor | CPU s (all processes) | peak memory MB |")
    print("|---|---:|---:|---:|---:|")
    for name in commands:
        w = statistics.median(walls[name])
        peak = f"{peaks[name] / 1024:.0f}" if name in peaks else ""
        print(f"| {name} | {w:.2f} | {w / floor:.2f}x | {statistics.median(cpus[name]):.2f} | {peak} |")


if __name__ == "__main__":
    main()
