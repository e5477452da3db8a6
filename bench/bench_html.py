"""Benchmark: how long a 500-screen HTML report takes to make against the floor, how big it gets, and
how long it takes to open.

Usage: python bench/bench_html.py [--screens 500] [--targets 30] [--repeat 3] [--jobs N] [--no-open]
                                  [--against SRC]
Generates a corpus (no screenshots, so every overlay is a wireframe). Then, alternately, --repeat
times each, as whole processes the way a user runs them:
  floor   `tapgauge check DIR -f json -o FILE`: the same reading, checks and records, no pictures
  html    `tapgauge check DIR -f html -o FILE`: all that, plus each screen's overlay and crops
With --against SRC (the src folder of another checkout, e.g. one made by `git worktree add` at an
older commit), the HTML report is also made with that code, in turn with the others, so that two
versions are compared side by side on the same machine at the same time.
Best of the runs (this shared machine's timings are noisy; the minimum is the steadiest), in
seconds and as a ratio to the floor; what the HTML report costs beyond the checks is html - floor.
Also the best CPU time (user + system) of each run's whole process tree: when other work shares
the machine it stretches wall times far more than the work each run does.
Then the report is opened in headless Chromium (when one is installed) to time a full load with
its script run (`--dump-dom`). No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
from timing import installed_env, run_measured


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--screens", type=int, default=500)
    ap.add_argument("--targets", type=int, default=30)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--jobs", type=int, default=None, help="passed to tapgauge check (default: its own)")
    ap.add_argument("--no-open", action="store_true", help="skip opening the report in Chromium")
    ap.add_argument("--against", metavar="SRC", help="also time the HTML report with the tapgauge in SRC")
    a = ap.parse_args()
    against = str(Path(a.against).resolve()) if a.against else None
    if against and not (Path(against) / "tapgauge" / "__init__.py").is_file():
        sys.exit(f"--against {a.against}: expected a src folder holding tapgauge/__init__.py")
    with tempfile.TemporaryDirectory() as tmp:
        corpus, out, floor_out = Path(tmp) / "screens", Path(tmp) / "report.html", Path(tmp) / "report.json"
        subprocess.run([sys.executable, str(HERE / "make_corpus.py"), str(corpus), "--screens", str(a.screens),
                        "--targets", str(a.targets)], check=True)
        jobs = ["--jobs", str(a.jobs)] if a.jobs else []
        check = [sys.executable, "-m", "tapgauge", "check", str(corpus), "--quiet", *jobs]
        floors, makes, others = [], [], []
        other_out = Path(tmp) / "other.html"
        env = installed_env(Path(tmp) / "here")
        env_against = installed_env(Path(tmp) / "against", against) if against else env
        for _ in range(a.repeat):  # alternate, so all see the same machine
            floors.append(run_measured([*check, "-f", "json", "-o", str(floor_out)], env, every=None))
            makes.append(run_measured([*check, "-f", "html", "-o", str(out)], env, every=None))
            if against:
                others.append(run_measured([*check, "-f", "html", "-o", str(other_out)], env_against, every=None))
        for made, code in ((floor_out, "this code's JSON"), (out, "this code's HTML"), (other_out, f"{against}'s HTML")):
            if not made.is_file() and (made is not other_out or against):
                sys.exit(f"bench_html: {code} report was not written; run the same check by hand to see why")
        floor, make = min(r.wall for r in floors), min(r.wall for r in makes)
        floor_cpu, make_cpu = min(r.cpu for r in floors), min(r.cpu for r in makes)
        size = out.stat().st_size
        other_size = other_out.stat().st_size if against else 0
        exe = None if a.no_open else shutil.which("chromium")
        load = None
        if exe:
            t0 = time.perf_counter()
            subprocess.run([exe, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                            "--disable-background-networking", "--disable-component-update", "--disable-sync",
                            f"--user-data-dir={tmp}/profile", "--dump-dom", out.as_uri()],
                           check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, timeout=600)
            load = time.perf_counter() - t0
    print(f"{a.screens} screens of {a.targets} targets, {os.cpu_count()} cores, best of {a.repeat}\n")
    print("| floor: JSON report s | HTML report s | ratio to the floor | HTML beyond the floor, ms a screen "
          "| CPU s: floor, HTML | report MB | KB per screen | open in Chromium s |")
    print("|---:|---:|---:|---:|---:|---:|---:|---:|")
    opened = f"{load:.1f}" if load is not None else "not opened"
    print(f"| {floor:.1f} | {make:.1f} | {make / floor:.1f}x | {(make - floor) / a.screens * 1e3:.0f} "
          f"| {floor_cpu:.1f}, {make_cpu:.1f} | {size / 1e6:.1f} | {size / a.screens / 1e3:.0f} | {opened} |")
    if against:
        wall, cpu = min(r.wall for r in others), min(r.cpu for r in others)
        print(f"\nThe same with {against}, side by side:\n")
        print("| HTML report s | ratio to the floor | CPU s | report MB |")
        print("|---:|---:|---:|---:|")
        print(f"| {wall:.1f} | {wall / floor:.1f}x | {cpu:.1f} | {other_size / 1e6:.1f} |")


if __name__ == "__main__":
    main()
