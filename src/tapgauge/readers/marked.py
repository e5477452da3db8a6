"""Screenshots on which a tester drew boxes in a marker colour, in any image editor.

The boxes are found with OpenCV: pixels near the marker's hue (and saturated and
bright enough) form a mask; a small closing bridges anti-aliasing and JPEG noise;
each outer contour that is close to a rectangle is a box. An outlined box's target
is the pixels inside the outline (its hole); a filled box's is the filled area.
Specks (a side under `min_side` px) and non-rectangular shapes (text, scribbles)
are rejected.
"""

from __future__ import annotations

import colorsys
import re
from pathlib import Path

import numpy as np

from tapgauge.model import DeviceHints, InputError, Screen, Target
from tapgauge.readers.images import load_rgb

# Hue in degrees for the marker names we accept; any '#rrggbb' works too.
MARKER_HUES = {"magenta": 300.0, "red": 0.0, "orange": 30.0, "yellow": 60.0, "green": 120.0,
               "cyan": 180.0, "blue": 240.0, "purple": 275.0}
DEFAULT_MARKER = "magenta"
HUE_TOLERANCE = 16.0  # degrees either side; JPEG shifts hue at edges (tuned on bench/marker_accuracy.py)
MIN_SATURATION = 0.45
MIN_VALUE = 0.40
FAINT_SATURATION = 0.20  # faint pixels count only when joined to strong ones
FAINT_HUE_TOLERANCE = 32.0
CLOSE_PX = 5  # closing bridges gaps of a few pixels; boxes need a few pixels between them
MIN_SIDE = 8  # px: smaller blobs are specks, not boxes
RECTANGULAR = 0.85  # contour area / bounding-box area for a shape to count as a box


def parse_marker(text: str) -> float:
    """A marker colour, by name or '#rrggbb', as a hue in degrees."""
    raw = text.strip().lower()
    if raw in MARKER_HUES:
        return MARKER_HUES[raw]
    m = re.fullmatch(r"#?([0-9a-f]{6})", raw)
    if not m:
        raise ValueError(f"marker colour {text!r}: expected a name ({', '.join(MARKER_HUES)}) or '#rrggbb'")
    r, g, b = (int(m.group(1)[k:k + 2], 16) / 255 for k in (0, 2, 4))
    h, s, v = colorsys.rgb_to_hsv(r, g, b)
    if s < MIN_SATURATION or v < MIN_VALUE:
        raise ValueError(f"marker colour {text!r} is too grey or dark to tell apart from a screenshot")
    return h * 360


def marker_mask(rgb: np.ndarray, hue: float) -> tuple[np.ndarray, np.ndarray]:
    """Pixels of the marker colour, with hysteresis: faint pixels count when they touch strong ones.
    Returns the closed mask (for shapes) and the strong pixels alone (for edges).

    JPEG's halved colour resolution washes a thin coloured line out to half its
    saturation; the faint band keeps such lines whole without letting in pale UI.
    """
    import cv2  # imported here: only marked screenshots need OpenCV

    hsv = cv2.cvtColor(np.ascontiguousarray(rgb), cv2.COLOR_RGB2HSV)  # H in 0..179
    h = hsv[..., 0].astype(np.float32) * 2
    dh = np.abs(h - hue)
    dh = np.minimum(dh, 360 - dh)
    sat, val = hsv[..., 1], hsv[..., 2]
    strong = (dh <= HUE_TOLERANCE) & (sat >= MIN_SATURATION * 255) & (val >= MIN_VALUE * 255)
    faint = (dh <= FAINT_HUE_TOLERANCE) & (sat >= FAINT_SATURATION * 255) & (val >= MIN_VALUE * 255)
    count, labels = cv2.connectedComponents(faint.astype(np.uint8), connectivity=8)
    keep = np.zeros(count, dtype=bool)
    keep[np.unique(labels[strong])] = True
    keep[0] = False
    mask = keep[labels].astype(np.uint8) * 255
    return cv2.morphologyEx(mask, cv2.MORPH_CLOSE, np.ones((CLOSE_PX, CLOSE_PX), np.uint8)), strong


def _settle(strong: np.ndarray, box: tuple[int, int, int, int], inward: bool) -> tuple[int, int, int, int]:
    """Move each edge to where the line of pixels just inside it is mostly strong marker colour
    (inward=True, a filled box) or just outside it is (inward=False, an outline's hole).

    The faint band that keeps lines whole also bleeds a pixel or two past the true
    edge; the half-coverage line of the strong colour is the better edge.
    """
    l, t, r, b = box
    h, w = strong.shape
    for _ in range(3):
        moved = False
        if inward:
            if r - l > 2 and strong[t:b, l].mean() < 0.5:
                l, moved = l + 1, True
            if r - l > 2 and strong[t:b, r - 1].mean() < 0.5:
                r, moved = r - 1, True
            if b - t > 2 and strong[t, l:r].mean() < 0.5:
                t, moved = t + 1, True
            if b - t > 2 and strong[b - 1, l:r].mean() < 0.5:
                b, moved = b - 1, True
        else:
            if l > 0 and strong[t:b, l - 1].mean() < 0.5:
                l, moved = l - 1, True
            if r < w and strong[t:b, r].mean() < 0.5:
                r, moved = r + 1, True
            if t > 0 and strong[t - 1, l:r].mean() < 0.5:
                t, moved = t - 1, True
            if b < h and strong[b, l:r].mean() < 0.5:
                b, moved = b + 1, True
        if not moved:
            break
    return l, t, r, b


def find_boxes(rgb: np.ndarray, hue: float) -> list[tuple[int, int, int, int]]:
    """Boxes [l, t, r, b) (right/bottom exclusive) marked in `hue`, top-to-bottom, left-to-right."""
    import cv2

    mask, strong = marker_mask(rgb, hue)
    contours, hierarchy = cv2.findContours(mask, cv2.RETR_CCOMP, cv2.CHAIN_APPROX_SIMPLE)
    boxes: list[tuple[int, int, int, int]] = []
    if hierarchy is None:
        return boxes
    links = hierarchy[0]
    for i, contour in enumerate(contours):
        if links[i][3] != -1:
            continue  # a hole; handled with its outer contour
        x, y, w, h = cv2.boundingRect(contour)
        if min(w, h) < MIN_SIDE:
            continue
        if cv2.contourArea(contour) < RECTANGULAR * (w - 1) * (h - 1):
            continue
        hole, hole_area = None, 0.0
        child = links[i][2]
        while child != -1:
            area = cv2.contourArea(contours[child])
            if area > hole_area:
                hole, hole_area = contours[child], area
            child = links[child][0]
        if hole is not None and hole_area >= 0.25 * w * h:
            hx, hy, hw, hh = cv2.boundingRect(hole)
            if hole_area < RECTANGULAR * (hw - 1) * (hh - 1):
                continue  # an outline around something not rectangular
            # A hole contour runs along the ring's inner pixels: the free inside starts one further in.
            boxes.append(_settle(strong, (hx + 1, hy + 1, hx + hw - 1, hy + hh - 1), inward=False))
        elif np.count_nonzero(mask[y:y + h, x:x + w]) >= RECTANGULAR * w * h:
            boxes.append(_settle(strong, (x, y, x + w, y + h), inward=True))
    return sorted(boxes, key=lambda b: (b[1], b[0]))


def read_marked(path: Path, hue: float, hints: tuple[DeviceHints, ...]) -> Screen:
    rgb = load_rgb(path)
    boxes = find_boxes(rgb, hue)  # type: ignore[arg-type]
    if not boxes:
        raise InputError(path, f"no marker boxes found (looked for rectangles of hue {hue:g} degrees); "
                               "draw outlined or filled rectangles in the marker colour, or pass --marker")
    h, w = rgb.shape[:2]  # type: ignore[attr-defined]
    targets = tuple(
        Target(number=k + 1, bounds=b, cls="marked box", label=f"box {k + 1}", resource_id="", paint_rank=k + 1)
        for k, b in enumerate(boxes)
    )
    return Screen(path=path, platform="", width=w, height=h, rotation=0, targets=targets, hints=hints,
                  coords="px", image=path)
