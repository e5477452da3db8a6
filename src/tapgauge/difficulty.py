"""Pointing difficulty: Fitts's law (Shannon form) and the dual-Gaussian endpoint model.

Pure functions over numpy arrays; no I/O. Distances and widths share one unit
(mm when the screen's ppi is known); the endpoint spread is always in mm.

- ID = log2(D / W + 1) bits (MacKenzie's Shannon form), with W the target's width
  along the line of approach: the chord of its rectangle through the centre in the
  direction of travel, W' = min(W / |cos t|, H / |sin t|) (MacKenzie & Buxton 1992).
- MT = a + b * ID.
- Endpoints: sigma^2 = alpha * S^2 + sigma_a^2 per axis, S the target's size on that
  axis (Bi & Zhai's dual Gaussian); with centred aim and independent axes the hit
  probability of a W x H rectangle is erf(W / (2 sqrt2 sx)) * erf(H / (2 sqrt2 sy)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]


def erf(x: FloatArray) -> FloatArray:
    """math.erf on each value (numpy has none; scipy would cost a heavy import at start-up). Mapped over
    plain floats: a third cheaper than np.frompyfunc's object arrays, the same values."""
    a = np.asarray(x, dtype=np.float64)
    return np.fromiter(map(math.erf, a.ravel().tolist()), dtype=np.float64, count=a.size).reshape(a.shape)


WIDTH_MODELS = ("approach", "smaller", "horizontal")


def width_along(w: FloatArray, h: FloatArray, theta: FloatArray) -> FloatArray:
    """Chord of a w x h rectangle through its centre at angle theta from the x axis."""
    c, s = np.abs(np.cos(theta)), np.abs(np.sin(theta))
    with np.errstate(divide="ignore"):
        along_x = np.where(c > 1e-12, w / np.where(c > 1e-12, c, 1.0), np.inf)
        along_y = np.where(s > 1e-12, h / np.where(s > 1e-12, s, 1.0), np.inf)
    return np.minimum(along_x, along_y)


def effective_width(w: FloatArray, h: FloatArray, theta: FloatArray, model: str) -> FloatArray:
    if model == "approach":
        return width_along(w, h, theta)
    if model == "smaller":
        return np.minimum(w, h)
    if model == "horizontal":
        return np.asarray(w, dtype=np.float64)
    raise ValueError(f"width model {model!r}: expected one of {', '.join(WIDTH_MODELS)}")


def shannon_id(distance: FloatArray, width: FloatArray) -> FloatArray:
    """log2(D / W + 1) in bits; a zero width gives +inf (an impossible target)."""
    with np.errstate(divide="ignore"):
        return np.log2(np.asarray(distance, dtype=np.float64) / np.asarray(width, dtype=np.float64) + 1.0)


def fitts_id(distance: FloatArray, width: FloatArray) -> FloatArray:
    """Fitts's original form log2(2D / W), for comparison with older data."""
    with np.errstate(divide="ignore"):
        return np.log2(2.0 * np.asarray(distance, dtype=np.float64) / np.asarray(width, dtype=np.float64))


def movement_time(id_bits: FloatArray, intercept_ms: float, slope_ms_per_bit: float) -> FloatArray:
    return intercept_ms + slope_ms_per_bit * np.asarray(id_bits, dtype=np.float64)


def endpoint_sigma(size_mm: FloatArray, alpha: float, sigma_a_mm: float) -> FloatArray:
    """Spread of touch points on one axis: sqrt(alpha * S^2 + sigma_a^2), in mm."""
    return np.sqrt(alpha * np.square(np.asarray(size_mm, dtype=np.float64)) + sigma_a_mm**2)


def hit_probability(w_mm: FloatArray, h_mm: FloatArray, alpha: float, sigma_a_mm: float) -> FloatArray:
    """Probability that a touch aimed at the centre lands inside a w x h mm rectangle."""
    sx = endpoint_sigma(w_mm, alpha, sigma_a_mm)
    sy = endpoint_sigma(h_mm, alpha, sigma_a_mm)
    root2 = math.sqrt(2.0)
    return erf(np.asarray(w_mm) / (2 * root2 * sx)) * erf(np.asarray(h_mm) / (2 * root2 * sy))


@dataclass(frozen=True)
class Prediction:
    """Per target: approach width, index of difficulty, time and hit probability."""

    width: FloatArray  # along the approach (or as the width model says), same unit as distance
    distance: FloatArray
    id_bits: FloatArray
    time_ms: FloatArray
    hit: FloatArray  # NaN where the physical size is unknown


def predict(boxes: FloatArray, start: tuple[float, float], intercept_ms: float, slope_ms_per_bit: float,
            boxes_mm: FloatArray | None, alpha: float, sigma_a_mm: float, width_model: str = "approach") -> Prediction:
    """Predictions for every box (n x 4, any unit) reached from `start` (same unit).

    Hit probability needs the boxes in mm; without them it is NaN.
    """
    boxes = np.asarray(boxes, dtype=np.float64).reshape(-1, 4)
    w, h = boxes[:, 2] - boxes[:, 0], boxes[:, 3] - boxes[:, 1]
    cx, cy = (boxes[:, 0] + boxes[:, 2]) / 2, (boxes[:, 1] + boxes[:, 3]) / 2
    dx, dy = cx - start[0], cy - start[1]
    distance = np.hypot(dx, dy)
    width = effective_width(w, h, np.arctan2(dy, dx), width_model)
    ids = shannon_id(distance, width)
    time = movement_time(ids, intercept_ms, slope_ms_per_bit)
    if boxes_mm is None:
        hit = np.full(len(boxes), np.nan)
    else:
        bm = np.asarray(boxes_mm, dtype=np.float64).reshape(-1, 4)
        hit = hit_probability(bm[:, 2] - bm[:, 0], bm[:, 3] - bm[:, 1], alpha, sigma_a_mm)
    return Prediction(width, distance, ids, time, hit)
