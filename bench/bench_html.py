"""Benchmark: how big a 500-screen HTML report gets and how long it takes to make and to open.

Usage: python bench/bench_html.py [--screens 500] [--targets 30]
Generates a corpus (no screenshots, so every overlay is a wireframe), writes the HTML
report, and opens it in headless Chromium (when one is installed) to time a full
load with its script run (`--dump-dom`). No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--screens", type=int, default=500)
    ap.add_argument("--targets", type=int, default=30)
    a = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        corpus, out = Path(tmp) / "screens", Path(tmp) / "report.html"
        subprocess.run([sys.executable, str(HERE / "make_corpus.py"), str(corpus), "--screens", str(a.screens),
                        "--targets", str(a.targets)], check=True)
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "tapgauge", "check", str(corpus), "-f", "html", "-o", str(out)],
                       stdout=subprocess.DEVNULL)
        make = time.perf_counter() - t0
        size = out.stat().st_size
        exe = shutil.which("chromium")
        load = None
        if exe:
            t0 = time.perf_counter()
            subprocess.run([exe, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                            "--disable-background-networking", "--disable-component-update", "--disable-sync",
                            f"--user-data-dir={tmp}/profile", "--dump-dom", out.as_uri()],
                           stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, timeout=600)
            load = time.perf_counter() - t0
    print("| screens | targets/screen | report MB | KB per screen | make s | open in Chromium s |")
    print("|---:|---:|---:|---:|---:|---:|")
    opened = f"{load:.1f}" if load is not None else "no Chromium"
    print(f"| {a.screens} | {a.targets} | {size / 1e6:.1f} | {size / a.screens / 1e3:.0f} | {make:.1f} | {opened} |")


if __name__ == "__main__":
    main()
