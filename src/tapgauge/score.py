"""Score stage: pointing difficulty for every checked target, per profile.

Reaches are measured in millimetres when the screen's ppi is known (so the endpoint
model can give hit probabilities), else in the platform unit (ID and time only).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from itertools import repeat

import numpy as np

from tapgauge.difficulty import predict
from tapgauge.geometry import as_boxes
from tapgauge.measure import to_unit
from tapgauge.model import Difficulty, ScreenResult, TargetResult
from tapgauge.profiles import Profile, start_points


def start_in_coords(sr: ScreenResult, start: str, xy: tuple[float, float] | None) -> tuple[float, float]:
    if xy is None:
        fx, fy = start_points()[start]
        return fx * sr.screen.width, fy * sr.screen.height
    k = sr.device.coords_per_unit
    return xy[0] * k, xy[1] * k


def _hit_and_miss(hit: np.ndarray) -> tuple[list[float | None], list[float | None]]:
    """Hit and miss probabilities rounded to 4 decimals; None where unknown (no physical size)."""
    h = np.round(hit, 4)
    if np.isnan(h).all():
        return [None] * len(h), [None] * len(h)
    known = ~np.isnan(h)
    hits, misses = h.tolist(), np.round(1 - h, 4).tolist()
    return ([v if k else None for v, k in zip(hits, known.tolist())],
            [v if k else None for v, k in zip(misses, known.tolist())])


def score_screen(sr: ScreenResult, profiles: list[Profile], start: str, xy: tuple[float, float] | None,
                 width_model: str = "approach") -> ScreenResult:
    if not profiles:
        return sr
    device = sr.device
    unit = "mm" if device.has_mm else "platform"
    sx, sy = start_in_coords(sr, start, xy)
    start_unit = to_unit(as_boxes([(sx, sy, sx, sy)]), device, "platform")[0]
    start_reach = to_unit(as_boxes([(sx, sy, sx, sy)]), device, unit)[0]
    scored = [k for k, t in enumerate(sr.targets) if t.status != "unchecked"]
    boxes = as_boxes([sr.targets[k].target.bounds for k in scored])
    reach = to_unit(boxes, device, unit)
    mm = reach if unit == "mm" else None
    per_profile = [
        predict(reach, (float(start_reach[0]), float(start_reach[1])), p.intercept_ms, p.slope_ms_per_bit,
                mm, p.alpha, p.sigma_a_mm, width_model)
        for p in profiles
    ]
    # Round whole arrays once: per-element round() dominated this stage on large batches.
    columns = [
        (np.round(pred.width, 4).tolist(), np.round(pred.distance, 4).tolist(), np.round(pred.id_bits, 4).tolist(),
         np.round(pred.time_ms, 2).tolist(), *_hit_and_miss(pred.hit))
        for pred in per_profile
    ]
    # Every profile's Difficulty records built column-wise, then dealt out per target by zip.
    per_target = zip(*(map(Difficulty, repeat(p.id), *column) for p, column in zip(profiles, columns)))
    targets = list(sr.targets)
    for k, difficulty in zip(scored, per_target):
        t = targets[k]  # built directly: _replace costs more than the rest of this loop
        targets[k] = TargetResult(t.target, t.status, t.reason, t.size_unit, t.size_mm, t.findings, t.notes,
                                  difficulty)
    return replace(sr, targets=tuple(targets), start=(start, round(float(start_unit[0]), 2), round(float(start_unit[1]), 2)),
                   reach_unit="mm" if unit == "mm" else device.unit)


@dataclass(frozen=True)
class Scoring:
    """What the score stage needs: which profiles, where reaches start, which width."""

    profiles: tuple[Profile, ...] = ()
    start: str = "centre"
    xy: tuple[float, float] | None = None
    width_model: str = "approach"

    def apply(self, sr: ScreenResult) -> ScreenResult:
        return score_screen(sr, list(self.profiles), self.start, self.xy, self.width_model)
