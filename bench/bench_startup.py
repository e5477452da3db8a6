"""Benchmark: one screen checked from the shell, against Python starting and parsing it with lxml.

Usage: python bench/bench_startup.py [--repeat 11] [--targets 100] [--filler 1] [--imports] [--no-bytecode]

Generates one screen (bench/make_corpus.py), then runs as whole processes, alternating
so that every command sees the same machine, --repeat rounds of:
  floor      python -c "import lxml.etree as e; e.parse(SCREEN)"
  check      tapgauge check SCREEN -f json -o OUT   (the installed console script)
  --version  tapgauge --version
  --help     tapgauge --help
  python     python -c pass                         (the interpreter alone, for scale)
Prints each command's median wall time, its median CPU time (user + system, steadier on a
busy machine) and the ratio of wall times to the floor (the goal: check within 5x). With
--imports, also the slowest imports of the check under `python -X importtime`.

Compiled bytecode is cached as an installed tool's is (pip compiles on install), in a temporary
folder (PYTHONPYCACHEPREFIX) so the source tree is left alone, even where PYTHONDONTWRITEBYTECODE
is set; --no-bytecode compiles every module on every run instead, as a run with that variable
set does from a source checkout. To time another checkout, run with PYTHONPATH=ITS/src.
No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import os
import resource
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


def timed(cmd: list[str], env: dict[str, str]) -> tuple[float, float]:
    """Wall and CPU (user + system) seconds of one run of a command."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    done = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env, check=False)
    elapsed = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode not in (0, 1):  # 1: the screen has findings, as the generated one does
        raise SystemExit(f"{' '.join(cmd)} failed with exit {done.returncode}")
    return elapsed, after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime


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
    ap.add_argument("--no-bytecode", action="store_true", help="compile every module on every run")
    a = ap.parse_args()
    tap = console_script()
    with tempfile.TemporaryDirectory() as tmp:
        env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
        env["CI"] = "1"  # no progress bar, whatever the terminal
        if a.no_bytecode:
            env["PYTHONDONTWRITEBYTECODE"] = "1"
        else:
            env["PYTHONPYCACHEPREFIX"] = str(Path(tmp) / "pycache")
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
        times: dict[str, list[tuple[float, float]]] = {name: [] for name in commands}
        for cmd in commands.values():  # warm the file cache and the bytecode cache
            timed(cmd, env)
        for _ in range(a.repeat):
            for name, cmd in commands.items():
                times[name].append(timed(cmd, env))
        check_args = ["check", str(screen), "-f", "json", "-o", str(out)]
        imports = slowest_imports(["-m", "tapgauge", *check_args], env, 12) if a.imports else []
    floor = statistics.median(w for w, _ in times["floor: python -c lxml parse"])
    print(f"One screen ({a.targets} targets, filler {a.filler}); whole processes, median of {a.repeat} "
          f"alternating runs; bytecode {'compiled every run' if a.no_bytecode else 'cached'}; {' '.join(tap)}\n")
    print("| command | median ms | min ms | CPU ms | ratio to floor |")
    print("|---|---:|---:|---:|---:|")
    for name, ts in times.items():
        m = statistics.median(w for w, _ in ts)
        cpu = statistics.median(c for _, c in ts)
        print(f"| {name} | {m * 1e3:.0f} | {min(w for w, _ in ts) * 1e3:.0f} | {cpu * 1e3:.0f} | {m / floor:.1f}x |")
    if imports:
        print("\nSlowest top-level imports of the check (python -X importtime, cumulative):\n")
        print("| module | ms |")
        print("|---|---:|")
        for us, name in imports:
            print(f"| {name} | {us / 1e3:.1f} |")


if __name__ == "__main__":
    main()
