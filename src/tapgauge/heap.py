"""Memory in our processes: the C library's heap in the workers (checking screens, drawing pictures)
and in the tapgauge process that receives their results, and the pages workers share with it.

Each file or picture a worker handles builds its objects and buffers and frees them all; by default
glibc hands the freed top of its heap back to the system, and the next file faults in fresh zeroed
pages for the same work. Measured on the batch bench (1,000 dumps, two workers): 77,000-81,000 page
faults and 10-11 s of CPU, against 19,000 and 9 s with the memory kept.
"""

from __future__ import annotations

import gc
from collections.abc import Callable, Iterator
from contextlib import contextmanager

# mallopt's parameters, as glibc's malloc.h numbers them
M_TRIM_THRESHOLD = -1
M_MMAP_THRESHOLD = -3


def _mallopt() -> Callable[[int, int], int] | None:
    import ctypes

    try:
        return ctypes.CDLL(None).mallopt  # type: ignore[no-any-return]
    except (OSError, AttributeError, TypeError):  # no C library found, or not glibc
        return None


def keep_freed_memory() -> None:
    """In a worker process, have the C library keep the memory it frees for the next file or picture
    instead of handing it back to the system, so each reuses the same pages rather than faulting in
    fresh zeroed ones. glibc only (mallopt; elsewhere nothing changes). The process is ours: it ends
    with the run, and what it keeps is at most what one file needed. (The pools' initializer: it also
    turns the garbage collector back on.)"""
    if (mallopt := _mallopt()) is not None:
        mallopt(M_TRIM_THRESHOLD, 1 << 28)  # keep up to 256 MiB free at the heap's top
        mallopt(M_MMAP_THRESHOLD, 1 << 25)  # up to 32 MiB (glibc's limit) from the heap, not mmap
    gc.enable()  # a worker collects between files whatever its parent was doing when it forked (collector_paused)


def map_large_blocks() -> None:
    """In the process that receives what workers send, give every block larger than 64 KiB its own
    mapping, returned whole when freed, from now on. glibc only, as above. (Called where a pool of
    workers starts: a run without workers, or a caller that starts none, keeps glibc's defaults.)

    A worker's results come through a pipe 64 KiB at a time (multiprocessing reads each piece into
    a buffer of its own), while the report text they carry stays alive until it is written. glibc
    serves such blocks from the heap once a larger one has been freed (its threshold for mapping
    rises), and there the freed pieces, pinned between live text, were not reused: by 19,000 screens
    the heap held 60 free 64 KiB pieces and the process had grown by 5 MB (about 250 bytes a screen,
    22 MB over 100,000); mapped, it stays flat. A mapping costs a few system calls per 64 KiB
    received: 0.05 s of a 1,000-screen batch's 8 s of CPU."""
    if (mallopt := _mallopt()) is not None:
        mallopt(M_MMAP_THRESHOLD, 64 * 1024)  # once set, glibc no longer raises it


@contextmanager
def shared_with_workers() -> Iterator[None]:
    """Fork workers inside this: the objects alive now are frozen, so that no process's garbage
    collections write to their pages (the Python documentation's advice under gc.freeze for a
    process that forks). Workers share the parent's pages until either side writes to one, and a
    collection writes to every object it looks at: without this, over 20,000 screens the three
    processes' proportional memory grew by 8 MB each while their resident memory grew by 3 (peak
    83-86 MB; 75 MB frozen). Unfrozen on leaving, so that an in-process caller can collect them again,
    unless the caller had frozen objects of its own (its freeze is left as it is)."""
    ours = gc.get_freeze_count() == 0
    if ours:
        gc.freeze()
    try:
        yield
    finally:
        if ours:
            gc.unfreeze()


@contextmanager
def collector_paused() -> Iterator[None]:
    """Pause the cyclic garbage collector inside this: where a process makes a great many small objects
    and no reference cycles, the collector rescans the survivors again and again for nothing.

    Per file in a worker: pausing it checks a 10,000-target screen 30% faster and changes nothing on
    small ones (bench/run_bench.py). Over a gate's comparison in the main process, which keeps every
    change it finds until the end: a gate of 1,000 screens with 50,000 changes went from 8.1 to 5.6 s
    (bench/bench_gate.py's two corpora, old and new code side by side).
    Anything cyclic is collected once it runs again; workers forked inside it collect as usual
    (keep_freed_memory)."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()
