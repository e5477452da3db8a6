"""What the benchmark scripts share: the median of repeated runs after a warm-up, a whole-process
meter (wall time, CPU time and peak memory of a command's process tree), and the environment an
installed tapgauge runs in."""

from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path
from typing import NamedTuple


def median_seconds(fn: Callable[[], object], repeat: int, warmup: int = 1) -> float:
    for _ in range(warmup):
        fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def installed_env(tmp: Path, src: str | None = None) -> dict[str, str]:
    """The environment of an installed tapgauge (the one importable here, or the one in `src`): its bytecode
    compiled first, as pip does at install time, into a folder of the run's own, so the source tree is left
    alone and a PYTHONDONTWRITEBYTECODE in the caller's environment does not make every run compile it."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPYCACHEPREFIX"] = str(tmp / "pycache")
    if src is not None:
        env["PYTHONPATH"] = src
    found = subprocess.run([sys.executable, "-c", "import tapgauge; print(tapgauge.__file__)"], env=env, check=True,
                           capture_output=True, text=True).stdout.strip()
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(Path(found).parent)], env=env, check=True,
                   stdout=subprocess.DEVNULL)
    return env


def _tree_pss_kb(root: int) -> int:
    """Memory of a process and all its descendants (Linux /proc), as proportional set size.

    Workers are forked and share pages with their parent; PSS counts each shared page
    once across them, where summing RSS would count it in every process.
    """
    parents: dict[int, int] = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as fh:
                    parents[int(entry)] = int(fh.read().rsplit(")", 1)[1].split()[1])
            except (OSError, IndexError, ValueError):
                continue
    tree, grew = {root}, True
    while grew:
        more = {p for p, pp in parents.items() if pp in tree} - tree
        grew = bool(more)
        tree |= more
    total = 0
    for pid in tree:
        try:
            with open(f"/proc/{pid}/smaps_rollup") as fh:
                total += next((int(line.split()[1]) for line in fh if line.startswith("Pss:")), 0)
        except OSError:
            continue
    return total


class Measured(NamedTuple):
    wall: float  # seconds
    peak: int  # KB of PSS of the whole process tree, sampled every `every` seconds (0 when not sampled)
    cpu: float  # seconds of user + system time of the process and every process it waited for (its workers)


def run_measured(cmd: list[str], env: dict[str, str] | None = None, every: float | None = 0.05) -> Measured:
    """Wall seconds, peak memory and CPU seconds of a command's process tree. CPU wanders less than wall
    time when other work shares the machine (a busy machine stretches the wait, not the work).

    Memory is sampled every `every` seconds (every 50 ms in the first second), or not at all with None.
    A sample walks /proc and costs about 3 ms of a core: every 50 ms that took a core's 5% from a
    command that keeps both cores of a 2-core machine busy (a one-process floor beside it keeps a
    core free), so runs timed for speed alone are not sampled."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, env=env)
    peak = [0]

    def sample(every: float) -> None:
        while proc.poll() is None:
            peak[0] = max(peak[0], _tree_pss_kb(proc.pid))
            # Every 50 ms for the first second, so that a short run's peak is seen too; then `every`.
            time.sleep(every if time.perf_counter() - t0 > 1.0 else min(every, 0.05))

    watcher = None if every is None else threading.Thread(target=sample, args=(every,), daemon=True)
    if watcher is not None:
        watcher.start()
    proc.wait()
    elapsed = time.perf_counter() - t0
    if watcher is not None:
        watcher.join()
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(cmd)} failed with exit {proc.returncode}")
    cpu = after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime
    return Measured(elapsed, peak[0], cpu)
