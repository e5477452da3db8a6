"""Benchmark: reading screenshots against the floor of decoding them, side by side.

Usage: python bench/bench_images.py [--repeat 20]
Uses the demo's 1080x2400 screenshots. Times (median of --repeat, one process):
  floor:        OpenCV decoding the PNG (cv2.imread), and Pillow decoding it;
  annotated:    tapgauge reading the VOC annotation with its picture (header + checksums);
  marked:       tapgauge finding the marker boxes (decode + colour mask + contours);
and the whole check of each. Ratios are to the OpenCV decode. No timing is asserted anywhere.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import cv2
from PIL import Image

from timing import median_seconds

from tapgauge.pipeline import Settings
from tapgauge.profiles import DEFAULT_PROFILES, select_profiles
from tapgauge.score import Scoring
from tapgauge.readers import read_screens
from tapgauge.rulesets import DEFAULT_RULESETS, select_rulesets
from run_bench import tapgauge_report

DEMO = Path(__file__).resolve().parent.parent / "screens_demo"


def settings(rulesets: list) -> Settings:  # type: ignore[type-arg]
    """What `tapgauge check` does by default: the default rule sets and profiles."""
    return Settings(tuple(rulesets), scoring=Scoring(tuple(select_profiles(list(DEFAULT_PROFILES)))))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=20)
    a = ap.parse_args()
    rulesets = select_rulesets(list(DEFAULT_RULESETS))
    voc, voc_png = DEMO / "annotated" / "harvest_log.xml", DEMO / "annotated" / "harvest_log.png"
    marked = DEMO / "marked" / "tool_shed.png"

    def pil_decode(p: Path) -> None:
        with Image.open(p) as im:
            im.load()

    rows = [
        ("OpenCV decode (floor), annotated picture", lambda: cv2.imread(str(voc_png))),
        ("Pillow decode, annotated picture", lambda: pil_decode(voc_png)),
        ("read VOC + picture", lambda: read_screens(voc)),
        ("check VOC screen end to end (JSON report)", lambda: tapgauge_report(voc, settings(rulesets))),
        ("OpenCV decode (floor), marked picture", lambda: cv2.imread(str(marked))),
        ("read marked screenshot (find boxes)", lambda: read_screens(marked)),
        ("check marked screen end to end (JSON report)", lambda: tapgauge_report(marked, settings(rulesets))),
    ]
    results = {name: median_seconds(fn, a.repeat) for name, fn in rows}
    floor = {"annotated": results[rows[0][0]], "marked": results[rows[4][0]]}
    print("| step (1080x2400 PNG) | median ms | ratio to OpenCV decode |")
    print("|---|---:|---:|")
    for name, _ in rows:
        base = floor["marked"] if "marked" in name else floor["annotated"]
        print(f"| {name} | {results[name] * 1000:.1f} | {results[name] / base:.2f}x |")


if __name__ == "__main__":
    main()
