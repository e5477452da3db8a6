"""Measure a screen on a device: which targets are checked, their boxes, overlaps, clipping.

Targets that cannot or need not be checked (disabled, not visible, zero area, or a
duplicate of a target drawn on top of it) are set aside with the reason, never
dropped. Overlap and clipping are found here once, for every rule to use.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from tapgauge.device import MM_PER_INCH
from tapgauge.geometry import (
    FloatArray,
    as_boxes,
    covering_pairs,
    largest_free_square,
    one_cover_squares,
    scale_boxes,
    sizes,
)
from tapgauge.model import Device, Screen, Target


@dataclass(frozen=True, eq=False)
class MeasuredScreen:
    screen: Screen
    device: Device
    checked: tuple[int, ...]  # indices into screen.targets
    unchecked: tuple[tuple[int, str], ...]  # (index, reason)
    boxes_px: FloatArray  # boxes of the checked targets, in screen coordinates
    covers: tuple[tuple[int, ...], ...]  # per checked target: positions in `checked` drawn over it
    clipped_by: tuple[str, ...]  # per checked target: "" or a description of the clipping container
    notices: tuple[str, ...] = ()  # what measuring found worth saying of the whole screen
    # Derived arrays, computed once per unit: several rules ask for the same ones.
    _derived: dict[tuple[str, str], FloatArray] = field(default_factory=dict, repr=False)
    _labels: list[str] = field(default_factory=list, repr=False)

    def boxes(self, unit: str) -> FloatArray:
        """The checked boxes in the platform unit, or in millimetres with unit="mm"."""
        key = ("boxes", unit)
        if key not in self._derived:
            self._derived[key] = to_unit(self.boxes_px, self.device, unit)
        return self._derived[key]

    def free_squares(self, unit: str) -> FloatArray:
        """Per checked target, the side of the largest square left once targets drawn over it are removed."""
        key = ("free", unit)
        if key not in self._derived:
            boxes = self.boxes(unit)
            w, h = sizes(boxes)
            side = np.minimum(w, h)
            single = [(pos, over[0]) for pos, over in enumerate(self.covers) if len(over) == 1]
            if single:
                pos, over = np.array(single).T
                side[pos] = one_cover_squares(boxes[pos], boxes[over])
            for pos, over in enumerate(self.covers):
                if len(over) > 1:
                    side[pos] = largest_free_square(boxes[pos], boxes[list(over)])[0]
            self._derived[key] = side
        return self._derived[key]

    @property
    def labels(self) -> list[str]:
        """How messages name each checked target ("#3 'Save'"), made once: findings name neighbours often."""
        if len(self._labels) != len(self.checked):
            self._labels[:] = [f"#{t.ordinal} '{t.name}'" for t in map(self.screen.targets.__getitem__, self.checked)]
        return self._labels


def to_unit(boxes: FloatArray, device: Device, unit: str) -> FloatArray:
    """Boxes in screen coordinates to the platform unit, or to millimetres with unit="mm"."""
    if unit == "mm":
        if device.xdpi is None or device.ydpi is None:
            raise ValueError("millimetres need the physical ppi")
        return scale_boxes(boxes, MM_PER_INCH / device.xdpi, MM_PER_INCH / device.ydpi)
    k = 1.0 / device.coords_per_unit
    return scale_boxes(boxes, k, k)


def _exclusion(t: Target) -> str:
    if not t.enabled:
        return "disabled"
    if not t.visible:
        return "not visible to the user"
    l, top, r, b = t.bounds
    if r <= l or b <= top:
        return "zero area (collapsed or off screen)"
    return ""


def _clipping(t: Target) -> str:
    """A target flush with the edge of a scrolling ancestor, on its scroll axis, may be cut off."""
    l, top, r, b = t.bounds
    for (al, at, ar, ab), axis in t.scroll_ancestors:
        if axis == "y" and (top <= at or b >= ab):
            return f"cut by the edge of a vertically scrolling container at [{al},{at}][{ar},{ab}]"
        if axis == "x" and (l <= al or r >= ar):
            return f"cut by the edge of a horizontally scrolling container at [{al},{at}][{ar},{ab}]"
    return ""


def measure(screen: Screen, device: Device) -> MeasuredScreen:
    targets = screen.targets
    unchecked: dict[int, str] = {}
    for k, t in enumerate(targets):
        why = _exclusion(t)
        if why:
            unchecked[k] = why
    # Identical boxes are one control as far as a finger can tell: check the one on top.
    top_by_box: dict[tuple[int, int, int, int], int] = {}
    for k, t in enumerate(targets):
        if k in unchecked:
            continue
        other = top_by_box.get(t.bounds)
        if other is None or targets[other].paint_rank < t.paint_rank:
            top_by_box[t.bounds] = k
    for k, t in enumerate(targets):
        if k not in unchecked and top_by_box[t.bounds] != k:
            on_top = targets[top_by_box[t.bounds]]
            unchecked[k] = f"same bounds as #{on_top.ordinal} '{on_top.name}', which is drawn over it"
    checked = tuple(k for k in range(len(targets)) if k not in unchecked)
    boxes = as_boxes([targets[k].bounds for k in checked])
    ranks = np.array([targets[k].paint_rank for k in checked], dtype=np.int64)
    under, over = covering_pairs(boxes, ranks)
    covers: list[list[int]] = [[] for _ in checked]
    for u, o in zip(under.tolist(), over.tolist()):
        covers[u].append(o)
    return MeasuredScreen(
        screen=screen,
        device=device,
        checked=checked,
        unchecked=tuple(sorted(unchecked.items())),
        boxes_px=boxes,
        covers=tuple(tuple(sorted(c)) for c in covers),
        clipped_by=tuple(_clipping(targets[k]) for k in checked),
    )
