"""The one timing helper the benchmark scripts share: median of repeated runs after a warm-up."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable


def median_seconds(fn: Callable[[], object], repeat: int, warmup: int = 1) -> float:
    for _ in range(warmup):
        fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)
