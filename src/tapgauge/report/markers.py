"""A tester's marker strokes on a marked screenshot, found again and greyed out, so that on the
overlay they can neither hide our marks nor pass for them.

The record does not say which marker colour found the boxes: the hue is the one with which the
marked-box reader finds exactly the recorded boxes again.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from tapgauge.readers.marked import FAINT_HUE_TOLERANCE, FAINT_SATURATION, MIN_SATURATION, MIN_VALUE

Rect = tuple[float, float, float, float]  # left, top, right, bottom (right and bottom exclusive)


def _hsv(rgb: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Hue in degrees, saturation and value in 0..1 (the usual hexcone model, as colorsys)."""
    c = rgb.astype(np.float32) / 255
    mx, mn = c.max(axis=-1), c.min(axis=-1)
    d = mx - mn
    safe = np.where(d == 0, 1, d)
    r, g, b = c[..., 0], c[..., 1], c[..., 2]
    h = np.where(mx == r, (g - b) / safe % 6, np.where(mx == g, (b - r) / safe + 2, (r - g) / safe + 4)) * 60
    h = np.where(d == 0, 0, h)
    s = np.where(mx == 0, 0, d / np.where(mx == 0, 1, mx))
    return h, s, mx


def _regions(boxes: Sequence[Rect], reach: int, shape: tuple[int, ...]) -> list[tuple[slice, slice]]:
    h, w = shape[:2]
    out = []
    for l, t, r, b in boxes:
        x0, y0 = max(0, math.floor(l) - reach), max(0, math.floor(t) - reach)
        x1, y1 = min(w, math.ceil(r) + reach), min(h, math.ceil(b) + reach)
        if x1 > x0 and y1 > y0:
            out.append((slice(y0, y1), slice(x0, x1)))
    return out


def _hue_peaks(rgb: np.ndarray, boxes: Sequence[Rect], reach: int, count: int = 3) -> list[float]:
    """The commonest 10-degree bands (their middles) of the strongly coloured pixels around the boxes."""
    hues = []
    for rows, cols in _regions(boxes, reach, rgb.shape):
        h, s, v = _hsv(rgb[rows, cols])
        hues.append(h[(s >= MIN_SATURATION) & (v >= MIN_VALUE)])
    found = np.concatenate(hues) if hues else np.zeros(0)
    counts = np.bincount((found // 10).astype(int) % 36, minlength=36)
    return [(int(k) + 0.5) * 10 for k in np.argsort(-counts, kind="stable")[:count] if counts[k]]


def marker_hue(rgb: np.ndarray, boxes: Sequence[Rect], reach: int = 12) -> float | None:
    """The marker hue (degrees) with which the marked-box reader finds exactly `boxes` in the
    picture; None when none does. The screen record does not say which marker colour was used,
    so the named colours are tried (the default first), then the commonest strong hues around
    the boxes (for a '#rrggbb' marker)."""
    from tapgauge.readers.marked import DEFAULT_MARKER, MARKER_HUES, find_boxes

    wanted = sorted(tuple(round(v) for v in b) for b in boxes)
    tried = [MARKER_HUES[DEFAULT_MARKER], *MARKER_HUES.values(), *_hue_peaks(rgb, boxes, reach)]
    for hue in dict.fromkeys(tried):
        if sorted(find_boxes(rgb, hue)) == wanted:
            return hue
    return None


def knock_back_markers(rgb: np.ndarray, boxes: Sequence[Rect], reach: int = 12) -> tuple[np.ndarray, int]:
    """The picture with the tester's marker strokes around and inside `boxes` turned pale grey,
    and how many pixels changed. Pixels near the strokes' hue and saturated (as the marked-box
    reader's faint band counts them) keep their lightness order but lose their colour."""
    hue = marker_hue(rgb, boxes, reach)
    out = rgb.copy()
    if hue is None:
        return out, 0
    changed = 0
    for rows, cols in _regions(boxes, reach, rgb.shape):
        part = out[rows, cols]
        h, s, v = _hsv(part)
        dh = np.abs((h - hue + 180) % 360 - 180)
        mask = (dh <= FAINT_HUE_TOLERANCE) & (s >= FAINT_SATURATION) & (v >= MIN_VALUE)
        if not mask.any():
            continue
        grey = part[mask].astype(np.float32) @ np.array([0.299, 0.587, 0.114], dtype=np.float32)
        part[mask] = np.round(255 - (255 - grey) * 0.3)[:, None].astype(np.uint8)  # pale grey: a ghost of the pen
        changed += int(mask.sum())
    return out, changed
