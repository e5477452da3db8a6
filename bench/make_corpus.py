"""Generate synthetic Android window dumps for benchmarks (invented content only).

Usage: python bench/make_corpus.py OUT_DIR --screens N --targets T [--filler F] [--seed S]
Each screen is a grid of small clickable cells with some jitter, so spacing and
overlap checks have real work to do, plus a device sidecar for the folder. By
default every node is a target (the worst case for the ratio to the parse); with
--filler F each cell also holds F non-clickable children (an icon and a label, say),
as real window dumps do. With --tall the cells keep one size and the screen grows
instead, so the density of targets (and neighbours per target) stays the same.
With --modern every node also carries the attributes newer dumpers add (visible-to-user,
drawing-order, hint; from memory of such dumps), so the reader's paint-order path runs.
"""

from __future__ import annotations

import argparse
import random
from pathlib import Path

DEVICE = "Physical density: 440\nPhysical size: 1080x2340\ndensity 440, 409.4 x 411.9 dpi\n"


def dump(targets: int, rng: random.Random, filler: int = 0, tall: bool = False, modern: bool = False) -> str:
    if tall:  # cells of one size whatever the count: the screen grows (a long scrolling capture)
        cols = 10
        rows = -(-targets // cols)
        cw, ch = 108.0, 117.0
    else:  # one phone screen: more targets means smaller, denser cells
        cols = max(1, int(targets ** 0.5))
        rows = -(-targets // cols)
        cw, ch = 1080 / cols, 2340 * max(1, rows / cols) / rows
    lines = ["<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>", '<hierarchy rotation="0">',
             f'<node index="0" class="android.widget.FrameLayout" clickable="false" bounds="[0,0][1080,{int(ch * rows) + 1}]">']
    def extra(order: int) -> str:
        return f' visible-to-user="true" drawing-order="{order}" hint=""' if modern else ""

    for k in range(targets):
        r, c = divmod(k, cols)
        x0 = int(c * cw + rng.uniform(0, cw * 0.2))
        y0 = int(r * ch + rng.uniform(0, ch * 0.2))
        w = max(2, int(cw * rng.uniform(0.5, 1.05)))
        h = max(2, int(ch * rng.uniform(0.5, 1.05)))
        cell = (f'<node index="{k}" text="Item {k}" resource-id="demo:id/cell" class="android.widget.Button" '
                f'package="demo" content-desc="" checkable="false" checked="false" clickable="true" enabled="true" '
                f'focusable="true" focused="false" scrollable="false" long-clickable="false" password="false" '
                f'selected="false" bounds="[{x0},{y0}][{x0 + w},{y0 + h}]"{extra(k + 1)}')
        if not filler:
            lines.append(cell + " />")
            continue
        lines.append(cell + ">")
        for f in range(filler):
            lines.append(
                f'<node index="{f}" text="" resource-id="demo:id/part{f}" class="android.widget.TextView" '
                f'package="demo" content-desc="" checkable="false" checked="false" clickable="false" enabled="true" '
                f'focusable="false" focused="false" scrollable="false" long-clickable="false" password="false" '
                f'selected="false" bounds="[{x0 + 2},{y0 + 2}][{x0 + w - 2},{y0 + h - 2}]"{extra(f + 1)} />')
        lines.append("</node>")
    lines += ["</node>", "</hierarchy>"]
    return "\n".join(lines) + "\n"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("out", type=Path)
    ap.add_argument("--screens", type=int, default=1)
    ap.add_argument("--targets", type=int, default=200)
    ap.add_argument("--filler", type=int, default=0, help="non-clickable children per target")
    ap.add_argument("--tall", action="store_true", help="keep cell size and density; let the screen grow")
    ap.add_argument("--modern", action="store_true", help="add visible-to-user, drawing-order and hint")
    ap.add_argument("--seed", type=int, default=1)
    a = ap.parse_args()
    a.out.mkdir(parents=True, exist_ok=True)
    rng = random.Random(a.seed)
    (a.out / "device.txt").write_text(DEVICE)
    for s in range(a.screens):
        sub = a.out / f"part_{s // 1000:03d}" if a.screens > 1000 else a.out  # folders of 1,000, as exports come
        if not (sub / "device.txt").exists():
            sub.mkdir(exist_ok=True)
            (sub / "device.txt").write_text(DEVICE)
        (sub / f"screen_{s:06d}.xml").write_text(dump(a.targets, rng, a.filler, a.tall, a.modern))


if __name__ == "__main__":
    main()
