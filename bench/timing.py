"""What the benchmark scripts share: the median of repeated runs after a warm-up, and the environment
an installed tapgauge runs in."""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path


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
