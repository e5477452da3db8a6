"""What the plan and score stages cost in the batch goal's own measure, as whole processes.

Usage:
  python bench/stage_share.py [--screens 1000] [--targets 100] [--filler 1] [--repeat 5] [--work DIR]

The corpus and commands of `run_bench.py batch` (1,000 dumps of 200 nodes, 100 of them targets;
`tapgauge check DIR -f json -o FILE` with its default jobs), alternating --repeat times with the
floor (floor.py), in three variants:

  whole            tapgauge as installed
  without plans    the plan stage (and its re-check) passed over: no target gets a plan
  without plans    the same, and the score stage passed over too: no target gets a
  or scores        pointing-time prediction

A variant is this script run as `--variant NAME -- ARGS`: it swaps the stage for a pass-through in
its own process, then runs tapgauge's command line in-process with ARGS; the workers fork from it
and inherit the swap. Nothing in tapgauge changes. The reports of the two cut variants are smaller
(no plans, no predictions), so their writing costs less too: the figures say what the stages and
what they add to the report cost together.

Prints a Markdown table: medians, the ratio of each to the floor, and CPU of all processes. No
timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
from pathlib import Path

from run_bench import make_corpus
from timing import installed_env, run_measured

HERE = Path(__file__).resolve().parent
VARIANTS = {"whole": "whole", "noplan": "without plans", "noplan-noscore": "without plans or scores"}


def run_variant(name: str, args: list[str]) -> int:
    """tapgauge's command line in this process, with the variant's stages passed over."""
    from tapgauge import pipeline
    from tapgauge.cli import main
    from tapgauge.score import Scoring

    if name != "whole":
        pipeline.plan_screen = lambda m, sr, rulesets, recheck: sr  # type: ignore[assignment]
    if name == "noplan-noscore":
        Scoring.apply = lambda self, sr: sr  # type: ignore[method-assign]
    return main(args)


def bench(screens: int, targets: int, filler: int, repeat: int, work: Path | None) -> None:
    with tempfile.TemporaryDirectory(dir=work) as tmp:
        folder = Path(tmp) / "corpus"
        make_corpus(folder, screens, targets, filler)
        out = Path(tmp) / "report.json"
        env = installed_env(Path(tmp))
        floor_cmd = [sys.executable, str(HERE / "floor.py"), str(folder)]
        args = ["check", str(folder), "-f", "json", "-o", str(out), "--quiet"]
        cmds = {v: [sys.executable, str(HERE / "stage_share.py"), "--variant", v, "--", *args] for v in VARIANTS}
        floor: list[float] = []
        walls: dict[str, list[float]] = {v: [] for v in VARIANTS}
        cpus: dict[str, list[float]] = {v: [] for v in VARIANTS}
        sizes: dict[str, int] = {}
        for _ in range(repeat):  # alternate, so all see the same machine
            floor.append(run_measured(floor_cmd, env, every=None).wall)
            for v, cmd in cmds.items():
                m = run_measured(cmd, env, every=None)
                walls[v].append(m.wall)
                cpus[v].append(m.cpu)
                sizes[v] = out.stat().st_size
    f = statistics.median(floor)
    print(f"Batch without stages: {screens:,} dumps ({targets} targets and {targets * filler} other nodes each); "
          f"-f json to a file, default jobs; medians of {repeat} alternating runs\n")
    print("| variant | wall s | ratio to floor | each run against its round's floor | CPU s (all processes) "
          "| report MB |")
    print("|---|---:|---:|---:|---:|---:|")
    print(f"| floor: one process parsing with lxml | {f:.2f} | 1.00x | | | |")
    for v, label in VARIANTS.items():
        t = statistics.median(walls[v])
        pairs = sorted(w / fl for fl, w in zip(floor, walls[v]))
        print(f"| {label} | {t:.2f} | {t / f:.2f}x | {pairs[0]:.2f}x to {pairs[-1]:.2f}x "
              f"| {statistics.median(cpus[v]):.2f} | {sizes[v] / 1e6:.1f} |")


def main() -> None:
    if "--variant" in sys.argv:  # one timed run (see run_variant)
        at = sys.argv.index("--variant")
        name, rest = sys.argv[at + 1], sys.argv[at + 2:]
        if name not in VARIANTS or rest[:1] != ["--"]:
            raise SystemExit(f"usage: stage_share.py --variant {{{','.join(VARIANTS)}}} -- ARGS")
        raise SystemExit(run_variant(name, rest[1:]))
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--screens", type=int, default=1000)
    ap.add_argument("--targets", type=int, default=100)
    ap.add_argument("--filler", type=int, default=1)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--work", type=Path, default=None)
    a = ap.parse_args()
    bench(a.screens, a.targets, a.filler, a.repeat, a.work)


if __name__ == "__main__":
    main()
