"""Benchmark: the release gate over many screens, and how fast the command line starts.

Usage: python bench/bench_gate.py [--screens 1000] [--targets 50]
Generates a corpus (bench/make_corpus.py), records a baseline, then times, as whole
processes (median of 3): `tapgauge gate` over the corpus, `tapgauge baseline`, and the
start-up of `tapgauge --version` against a bare `python -c pass`; and the peak memory of
the baseline and gate runs. No timing is asserted.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
from timing import run_measured  # noqa: E402 - the shared whole-process meter


def wall(cmd: list[str], runs: int = 3) -> float:
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--screens", type=int, default=1000)
    ap.add_argument("--targets", type=int, default=50)
    a = ap.parse_args()
    exe = [sys.executable, "-m", "tapgauge"]
    with tempfile.TemporaryDirectory() as tmp:
        corpus, base = Path(tmp) / "screens", Path(tmp) / "baseline.json"
        subprocess.run([sys.executable, str(HERE / "make_corpus.py"), str(corpus), "--screens", str(a.screens),
                        "--targets", str(a.targets)], check=True)
        subprocess.run([*exe, "baseline", str(corpus), "-o", str(base), "--force"], check=True, stdout=subprocess.DEVNULL)
        t_base = wall([*exe, "baseline", str(corpus), "-o", str(base), "--force"])
        t_gate = wall([*exe, "gate", str(corpus), "-b", str(base)])
        m_base = run_measured([*exe, "baseline", str(corpus), "-o", str(base), "--force"]).peak
        m_gate = run_measured([*exe, "gate", str(corpus), "-b", str(base)]).peak
        size = base.stat().st_size / 1e6
        t_start = wall([*exe, "--version"], runs=5)
        t_py = wall([sys.executable, "-c", "pass"], runs=5)
    print(f"Baseline file: {size:.1f} MB. Peak memory is the whole process tree (parent and workers).\n")
    print("| step | screens | targets/screen | median s | per screen ms | peak memory MB |")
    print("|---|---:|---:|---:|---:|---:|")
    print(f"| tapgauge baseline | {a.screens} | {a.targets} | {t_base:.2f} | {t_base / a.screens * 1000:.1f} "
          f"| {m_base / 1024:.0f} |")
    print(f"| tapgauge gate | {a.screens} | {a.targets} | {t_gate:.2f} | {t_gate / a.screens * 1000:.1f} "
          f"| {m_gate / 1024:.0f} |")
    print(f"| tapgauge --version (start-up) | | | {t_start:.3f} | ratio to bare python: {t_start / t_py:.1f}x | |")


if __name__ == "__main__":
    main()
