"""Benchmark: one screen checked from the shell, against Python starting and parsing it with lxml.

Usage: python bench/bench_startup.py [--repeat 11] [--targets 100] [--filler 1] [--imports]

Generates one screen (bench/make_corpus.py), then runs as whole processes, alternating
so that every command sees the same machine, --repeat rounds of:
  floor      python -c "import lxml.etree as e; e.parse(SCREEN)"
  check      tapgauge check SCREEN -f json -o OUT   (the installed console script)
  --version  tapgauge --version
  --help     tapgauge --help
  python     python -c pass                         (the interpreter alone, for scale)
Prints each command's median wall time and its ratio to the floor (the goal: check
within 5x). With --imports, also the slowest imports of the check under
`python -X importtime`. No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent


def console_script() -> list[str]:
    """The `tapgauge` command beside this interpreter (as a shell runs it), else `python -m tapgauge`."""
    beside = Path(sys.executable).with_name("tapgauge")
    found = str(beside) if beside.exists() else shutil.which("tapgauge")
    return [found] if found else [sys.executable, "-m", "tapgauge"]


def wall(cmd: list[str], env: dict[str, str]) -> float:
    t0 = time.perf_counter()
    done = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env, check=False)
    elapsed = time.perf_counter() - t0
    if done.returncode not in (0, 1):  # 1: the screen has findings, as the generated one does
        raise SystemExit(f"{' '.join(cmd)} failed with exit {done.returncode}")
    return elapsed


def slowest_imports(cmd: list[str], env: dict[str, str], top: int) -> list[tuple[int, str]]:
    """(cumulative microseconds, module) of the top-level imports of one run, slowest first."""
    done = subprocess.run([sys.executable, "-X", "importtime", *cmd], stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, text=True, env=env, check=False)
    rows = []
    for line in done.stderr.splitlines():
        if line.startswith("import time:") and not line.endswith("| imported package"):
            _, cumulative, name = line[len("import time:"):].split("|")
            if cumulative.strip().isdigit() and not name.startswith("  "):  # a top-level import
                rows.append((int(cumulative), name.strip()))
    return sorted(rows, reverse=True)[:top]


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=11)
    ap.add_argument("--targets", type=int, default=100)
    ap.add_argument("--filler", type=int, default=1)
    ap.add_argument("--imports", action="store_true", help="also list the check's slowest top-level imports")
    a = ap.parse_args()
    env = {**os.environ, "CI": "1"}  # no progress bar, whatever the terminal
    tap = console_script()
    with tempfile.TemporaryDirectory() as tmp:
        folder, out = Path(tmp) / "one", Path(tmp) / "out.json"
        subprocess.run([sys.executable, str(HERE / "make_corpus.py"), str(folder), "--screens", "1",
                        "--targets", str(a.targets), "--filler", str(a.filler)], check=True)
        screen = next(folder.glob("*.xml"))
        commands = {
            "floor: python -c lxml parse": [sys.executable, "-c", f"import lxml.etree as e; e.parse({str(screen)!r})"],
            "tapgauge check -f json -o": [*tap, "check", str(screen), "-f", "json", "-o", str(out)],
            "tapgauge --version": [*tap, "--version"],
            "tapgauge --help": [*tap, "--help"],
            "python -c pass": [sys.executable, "-c", "pass"],
        }
        times: dict[str, list[float]] = {name: [] for name in commands}
        for cmd in commands.values():  # warm the file cache and .pyc files
            wall(cmd, env)
        for _ in range(a.repeat):
            for name, cmd in commands.items():
                times[name].append(wall(cmd, env))
        check_args = ["check", str(screen), "-f", "json", "-o", str(out)]
        imports = slowest_imports(["-m", "tapgauge", *check_args], env, 12) if a.imports else []
    floor = statistics.median(times["floor: python -c lxml parse"])
    print(f"One screen ({a.targets} targets, filler {a.filler}); whole processes, median of {a.repeat} "
          f"alternating runs; {' '.join(tap)}\n")
    print("| command | median ms | min ms | ratio to floor |")
    print("|---|---:|---:|---:|")
    for name, ts in times.items():
        m = statistics.median(ts)
        print(f"| {name} | {m * 1e3:.0f} | {min(ts) * 1e3:.0f} | {m / floor:.1f}x |")
    if imports:
        print("\nSlowest top-level imports of the check (python -X importtime, cumulative):\n")
        print("| module | ms |")
        print("|---|---:|")
        for us, name in imports:
            print(f"| {name} | {us / 1e3:.1f} |")


if __name__ == "__main__":
    main()
