"""Score stage: pointing difficulty for every checked target, per profile.

Reaches are measured in millimetres when the screen's ppi is known (so the endpoint
model can give hit probabilities), else in the platform unit (ID and time only).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from itertools import repeat
from operator import add

import numpy as np

from tapgauge.difficulty import hit_probability, movement_time, predict
from tapgauge.geometry import as_boxes
from tapgauge.measure import to_unit
from tapgauge.model import Approach, Difficulty, ScreenResult, TargetResult, rows_of
from tapgauge.profiles import Profile, start_points


def start_in_coords(sr: ScreenResult, start: str, xy: tuple[float, float] | None) -> tuple[float, float]:
    if xy is None:
        fx, fy = start_points()[start]
        return fx * sr.screen.width, fy * sr.screen.height
    k = sr.device.coords_per_unit
    return xy[0] * k, xy[1] * k


def _misses(hit: np.ndarray) -> list[float | None]:
    """Miss probabilities rounded to 4 decimals; None where unknown (no physical size)."""
    miss = np.round(1 - hit, 4)
    unknown = np.isnan(miss)
    if not unknown.any():
        return miss.tolist()  # type: ignore[no-any-return]
    if unknown.all():
        return [None] * len(miss)
    return [None if math.isnan(v) else v for v in miss.tolist()]


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
    origin = (float(start_reach[0]), float(start_reach[1]))
    # The approach (width, distance, ID) is the profiles' common ground: computed once; a profile
    # adds only its line (time) and its spread (miss).
    geometry = predict(reach, origin, 0.0, 0.0, None, 0.0, 0.0, width_model)
    approaches = rows_of(Approach, zip(np.round(geometry.width, 4).tolist(), np.round(geometry.distance, 4).tolist(),
                                       np.round(geometry.id_bits, 4).tolist()))
    # Every profile at once, a row each (the same arithmetic per value as one profile at a time).
    column = np.array([[p.intercept_ms, p.slope_ms_per_bit, p.alpha, p.sigma_a_mm] for p in profiles]).T[:, :, None]
    times = np.round(movement_time(geometry.id_bits[None, :], column[0], column[1]), 2).tolist()  # type: ignore[arg-type]
    if mm is None:
        misses: list[list[float | None]] = [[None] * len(scored)] * len(profiles)
    else:
        widths, heights = mm[None, :, 2] - mm[None, :, 0], mm[None, :, 3] - mm[None, :, 1]
        misses = [_misses(row) for row in hit_probability(widths, heights, column[2], column[3])]  # type: ignore[arg-type]
    per_target = zip(*(rows_of(Difficulty, zip(repeat(p.id), time, miss)) for p, time, miss in zip(profiles, times, misses)))
    targets = list(sr.targets)
    # Each scored result again with its difficulty and approach (the first seven fields as they were).
    scored_results = rows_of(TargetResult, map(add, [targets[k][:7] for k in scored],
                                                zip(per_target, approaches, repeat(None))))
    for k, result in zip(scored, scored_results):
        targets[k] = result
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
