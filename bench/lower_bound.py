"""The least any Python program built on lxml can spend on tapgauge's job, against the floor.

Usage: python bench/lower_bound.py [--targets 200] [--screens 20] [--filler 2] [--modern] [--repeat 7]

Per screen, one core, best of --repeat, each as a ratio to the floor (lxml parsing the file):
  parse       the floor itself: read the file and build lxml's tree
  attributes  the attribute reads a reader cannot skip: for every view node its bounds, the three
              target flags and visible-to-user; for every target its class, text, description,
              resource id, enabled flag and line. No parsing of numbers, no checks, nothing kept.
  report      writing tapgauge's JSON report for the screen from records already made (orjson,
              the fastest serializer on PyPI we know of), nothing else
  tapgauge    the whole pipeline and the JSON report, as `run_bench.py targets` times it
The sum of the first three is a lower bound for this job in Python with lxml: it does
none of the measuring, checking or scoring. When it is already past a goal, that goal
needs a compiled core (or a smaller report), not tuning.
"""

from __future__ import annotations

import argparse
import io
import tempfile
from pathlib import Path

import orjson
from lxml import etree
from run_bench import make_corpus, settings, tapgauge_report
from timing import median_seconds

from tapgauge.pipeline import check_file
from tapgauge.report.records import screen_record

_TRUE = "true"


def attribute_reads(roots: list[etree._Element]) -> int:
    n = 0
    for root in roots:
        for el in root.iter():
            get = el.get
            get("bounds")
            get("visible-to-user")
            if get("clickable") == _TRUE or get("long-clickable") == _TRUE or get("checkable") == _TRUE:
                get("class"), get("text"), get("content-desc"), get("resource-id"), get("enabled")
                n += el.sourceline or 0
    return n


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--targets", type=int, default=200)
    ap.add_argument("--screens", type=int, default=20)
    ap.add_argument("--filler", type=int, default=2)
    ap.add_argument("--modern", action="store_true")
    ap.add_argument("--repeat", type=int, default=7)
    a = ap.parse_args()
    st = settings()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        files = make_corpus(folder, a.screens, a.targets, a.filler, modern=a.modern)
        datas = [f.read_bytes() for f in files]
        roots = [etree.fromstring(d) for d in datas]
        records = [screen_record(sr) for f in files for sr in check_file(f, st)]
        timings: dict[str, list[float]] = {"parse": [], "attributes": [], "report": [], "tapgauge": []}
        tapgauge_report(folder, st)  # warm caches
        for _ in range(a.repeat):  # alternate, so all see the same machine
            timings["parse"].append(median_seconds(lambda: [etree.fromstring(f.read_bytes()) for f in files], 1, 0))
            timings["attributes"].append(median_seconds(lambda: attribute_reads(roots), 1, 0))
            timings["report"].append(median_seconds(
                lambda: [io.StringIO().write(orjson.dumps(r, option=orjson.OPT_INDENT_2).decode()) for r in records],
                1, 0))
            timings["tapgauge"].append(median_seconds(lambda: tapgauge_report(folder, st), 1, 0))
    best = {k: min(v) / a.screens for k, v in timings.items()}
    floor = best["parse"]
    bound = best["parse"] + best["attributes"] + best["report"]
    print(f"{a.targets} targets a screen, {a.filler} filler nodes per target"
          f"{', newer dumpers attributes' if a.modern else ''}; ms a screen and ratio to the floor\n")
    print("| parse (floor) | attributes | report | lower bound | tapgauge |")
    print("|---:|---:|---:|---:|---:|")
    cells = [best["parse"], best["attributes"], best["report"], bound, best["tapgauge"]]
    print("| " + " | ".join(f"{v * 1e3:.2f} ms, {v / floor:.2f}x" for v in cells) + " |")


if __name__ == "__main__":
    main()
