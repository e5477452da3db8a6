"""Accuracy of the marker-box detector on generated screenshots (no timing).

Usage: python bench/marker_accuracy.py [--seeds 10]
For each colour, outline width (0 = filled) and format (PNG, JPEG 85, JPEG 60) it
generates --seeds screenshots of 480x800 px with up to five boxes each plus decoys,
and prints: boxes, found within 2 px, missed, false boxes, worst edge error (px).
"""

from __future__ import annotations

import argparse
import random
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from markgen import COLOURS, make_sample, match  # noqa: E402

from tapgauge.readers.marked import find_boxes, parse_marker  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seeds", type=int, default=10)
    a = ap.parse_args()
    print("| colour | line px | format | boxes | within 2 px | missed | false | worst edge px |")
    print("|---|---:|---|---:|---:|---:|---:|---:|")
    totals = [0, 0, 0, 0]
    for colour in COLOURS:
        for line in (0, 2, 3, 5):
            for quality in (None, 85, 60):
                boxes = hits = false = 0
                worst = 0.0
                for seed in range(a.seeds):
                    s = make_sample(random.Random(f"bench-{seed}-{colour}-{line}-{quality}"), colour, line, quality)
                    h, f, w = match(find_boxes(s.rgb, parse_marker(colour)), s.truth)
                    boxes, hits, false, worst = boxes + len(s.truth), hits + h, false + f, max(worst, w)
                fmt = "PNG" if quality is None else f"JPEG {quality}"
                print(f"| {colour} | {line or 'filled'} | {fmt} | {boxes} | {hits} | {boxes - hits} | {false} | {worst:.2f} |")
                totals = [totals[0] + boxes, totals[1] + hits, totals[2] + boxes - hits, totals[3] + false]
    print(f"| all | | | {totals[0]} | {totals[1]} | {totals[2]} | {totals[3]} | |")


if __name__ == "__main__":
    main()
