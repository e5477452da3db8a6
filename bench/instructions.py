"""Instructions per screen (Valgrind's cachegrind), tapgauge against the lxml parse: a ratio that does
not wander with the machine's load, for comparing two versions of the code.

Usage: python bench/instructions.py [--screens 20] [--targets 100] [--filler 1]

Generates a corpus (bench/make_corpus.py), then counts the instructions of three runs of one process
over it: importing everything and finding the files (the start-up, subtracted from the others),
parsing each file with lxml (the floor), and `record_one` on each file as a worker does for
`tapgauge check -f json` (read, measure, check, score, plan, the JSON text). Bytecode is compiled
first, hash seeds are fixed, numpy's BLAS keeps to one thread (its spinning threads made counts
wander by 3%), and address-space randomisation is off where `setarch` is found: counts repeat to
about 0.1%. Instructions are not time (C code runs more of them a cycle than the interpreter), so
the wall-time ratios of run_bench.py remain the goal's measure; this one tells whether a change
removed work. Needs `valgrind`; no timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent


def inner(mode: str, folder: str) -> None:
    """One counted run: imports and file list always; then nothing, the parse, or record_one per file."""
    import gc
    from dataclasses import replace

    from lxml import etree

    sys.path.insert(0, str(HERE))
    from run_bench import settings

    from tapgauge.pipeline import record_one
    from tapgauge.readers import discover

    files = discover([Path(folder)])[0]
    st = replace(settings(), document_only=True)
    gc.collect()
    gc.freeze()  # no full collections over the imports: they land wherever the counts happen to fall
    if mode == "parse":
        for f in files:
            etree.fromstring(f.read_bytes())
    elif mode == "record":
        for f in files:
            record_one(f, st)


def count(mode: str, folder: Path, env: dict[str, str]) -> int:
    cmd = ["valgrind", "--tool=cachegrind", "--cache-sim=no", "--cachegrind-out-file=/dev/null",
           sys.executable, __file__, "--inner", mode, str(folder)]
    if shutil.which("setarch"):
        cmd = ["setarch", os.uname().machine, "-R", *cmd]
    out = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True).stderr
    m = re.search(r"I\s+refs:\s+([\d,]+)", out)
    if m is None:
        raise SystemExit(f"no instruction count in valgrind's output:\n{out}")
    return int(m.group(1).replace(",", ""))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--screens", type=int, default=20)
    ap.add_argument("--targets", type=int, default=100)
    ap.add_argument("--filler", type=int, default=1)
    ap.add_argument("--inner", nargs=2, metavar=("MODE", "FOLDER"), help=argparse.SUPPRESS)
    a = ap.parse_args()
    if a.inner:
        inner(*a.inner)
        return
    if not shutil.which("valgrind"):
        raise SystemExit("valgrind is not installed (apt install valgrind)")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "corpus"
        subprocess.run([sys.executable, str(HERE / "make_corpus.py"), str(folder), "--screens", str(a.screens),
                        "--targets", str(a.targets), "--filler", str(a.filler)], check=True, stdout=subprocess.DEVNULL)
        env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
        env.update(PYTHONPYCACHEPREFIX=str(Path(tmp) / "pycache"), PYTHONHASHSEED="0", OPENBLAS_NUM_THREADS="1",
                   OMP_NUM_THREADS="1")
        subprocess.run([sys.executable, __file__, "--inner", "record", str(folder)], env=env, check=True)  # compiles
        base = count("none", folder, env)
        parse, record = ((count(m, folder, env) - base) / a.screens for m in ("parse", "record"))
    print(f"Instructions per screen ({a.screens} dumps of {a.targets} targets and {a.targets * a.filler} other "
          f"nodes; cachegrind)\n")
    print("| lxml parse (the floor) | tapgauge record_one | ratio |")
    print("|---:|---:|---:|")
    print(f"| {parse / 1e6:.2f} M | {record / 1e6:.2f} M | {record / parse:.2f}x |")


if __name__ == "__main__":
    main()
