"""Measure a screen on a device: which targets are checked, their boxes, overlaps, clipping.

Targets that cannot or need not be checked (disabled, not visible, zero area, or a
duplicate of a target drawn on top of it) are set aside with the reason, never
dropped. Overlap and clipping are found here once, for every rule to use.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from tapgauge.device import MM_PER_INCH
from tapgauge.geometry import (
    FloatArray,
    Pairs,
    as_boxes,
    candidate_pairs,
    largest_free_square,
    one_cover_squares,
    scale_boxes,
    sizes,
)
from tapgauge.model import Box, Device, Screen, Target
from tapgauge.stacking import CHECKED_ROLES, WindowRole, blocking_window, cover_pairs, fmt_box, window_roles


class MeasureOptions(NamedTuple):
    """What the user says about which windows count (see stacking.py)."""

    all_windows: bool = False  # also check the keyboard's, the system bars' and other apps' targets
    app_package: str | None = None  # the app's package, where the largest window is not the app's


# Where a clickable container's own targets leave less than this (in dp/pt) uncovered, it is
# not a target of its own: thin dividers between tabs or rows do not make one (common practice).
COVERED_BELOW = 1.0


@dataclass(frozen=True, eq=False)
class MeasuredScreen:
    screen: Screen
    device: Device
    checked: tuple[int, ...]  # indices into screen.targets
    unchecked: tuple[tuple[int, str], ...]  # (index, reason)
    boxes_px: FloatArray  # boxes of the checked targets, in screen coordinates
    covers: tuple[tuple[int, ...], ...]  # per checked target: positions in `checked` known to be drawn over it
    clipped_by: tuple[str, ...]  # per checked target: "" or a description of the clipping container
    notices: tuple[str, ...] = ()  # what measuring found worth saying of the whole screen
    # per checked target: positions presumed drawn over it (document order only, no drawing-order)
    maybe_covers: tuple[tuple[int, ...], ...] = ()
    # The screen's one pair search (geometry.candidate_pairs), as far as the rules reach: (reach in
    # coordinates, pairs). Every later search within that reach picks its pairs from it.
    near: tuple[float, Pairs] | None = None
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
        """Per checked target, the side of the largest square left once targets known to be drawn over it are removed."""
        key = ("free", unit)
        if key not in self._derived:
            self._derived[key] = free_sides(self.boxes(unit), self.covers)
        return self._derived[key]

    def free_squares_presumed(self, unit: str) -> FloatArray:
        """The same, counting also the targets only presumed to be drawn over it."""
        key = ("presumed", unit)
        if key not in self._derived:
            side = self.free_squares(unit)
            redo = [pos for pos, maybe in enumerate(self.maybe_covers) if maybe]  # the rest are as known
            if redo:
                both: list[tuple[int, ...]] = [()] * len(side)
                for pos in redo:
                    both[pos] = tuple(sorted({*self.covers[pos], *self.maybe_covers[pos]}))
                side = side.copy()
                side[redo] = free_sides(self.boxes(unit), tuple(both))[redo]
            self._derived[key] = side
        return self._derived[key]

    def pairs(self, unit: str, reach: float) -> Pairs:
        """candidate_pairs of the checked boxes in `unit` ("px": coordinates) within `reach` of that unit."""
        boxes = self.boxes_px if unit == "px" else self.boxes(unit)
        if self.near is not None:
            far, among = self.near
            if reach * coords_per(self.device, unit) <= far:
                return candidate_pairs(boxes, reach, among)
        return candidate_pairs(boxes, reach)

    @property
    def labels(self) -> list[str]:
        """How messages name each checked target ("#3 'Save'"), made once: findings name neighbours often."""
        if len(self._labels) != len(self.checked):
            self._labels[:] = [f"#{t.number} '{t.name}'" for t in map(self.screen.targets.__getitem__, self.checked)]
        return self._labels


def free_sides(boxes: FloatArray, covers: tuple[tuple[int, ...], ...]) -> FloatArray:
    """Per box, the side of the largest square left once the boxes listed as covering it are removed."""
    w, h = sizes(boxes)
    side = np.minimum(w, h)
    single = [(pos, over[0]) for pos, over in enumerate(covers) if len(over) == 1]
    if single:
        pos, over = np.array(single).T
        side[pos] = one_cover_squares(boxes[pos], boxes[over])
    for pos, over in enumerate(covers):
        if len(over) > 1:
            side[pos] = largest_free_square(boxes[pos], boxes[list(over)])[0]
    return side


def coords_per(device: Device, unit: str) -> float:
    """Screen coordinates in one `unit` ("px": 1; "mm": along the axis with more of them; else the
    platform unit): how far a reach in that unit goes, at most, in coordinates."""
    if unit == "px":
        return 1.0
    if unit == "mm":
        return max(device.xdpi or 0.0, device.ydpi or 0.0) / MM_PER_INCH
    return device.coords_per_unit


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


def _window_edge(t: Target, window: Box, width: float, height: float) -> str:
    """A target flush with an edge of its window that lies inside the screen may be cut by it."""
    l, top, r, b = t.bounds
    wl, wt, wr, wb = window
    if (0 < wl and l <= wl) or (0 < wt and top <= wt) or (wr < width and r >= wr) or (wb < height and b >= wb):
        return f"cut by the edge of its window at {fmt_box(window)}"
    return ""


def _off_screen(t: Target, width: float, height: float) -> str:
    """Wholly outside the screen: "off"; partly: "part"; else ""."""
    l, top, r, b = t.bounds
    if width <= 0 or height <= 0:
        return ""
    if r <= 0 or b <= 0 or l >= width or top >= height:
        return "off"
    return "part" if l < 0 or top < 0 or r > width or b > height else ""


def _role_reason(role: str, package: str) -> str:
    if role == "keyboard":
        return "a key of the on-screen keyboard, not the app's target (--all-windows checks it)"
    if role == "system bar":
        return "in a system bar, not the app's target (--all-windows checks it)"
    return f"in another app's window (package {package or 'unknown'}), not this app's target (--all-windows checks it)"


def measure(screen: Screen, device: Device, options: MeasureOptions = MeasureOptions(),
            reach: float = 0.0) -> MeasuredScreen:
    """`reach`: how far (in coordinates) the rules to come look for neighbours (checks.reach): the one
    pair search is made that wide, for every rule to pick from."""
    targets = screen.targets
    unchecked: dict[int, str] = {}
    clipped: dict[int, str] = {}
    roles = window_roles(screen, options.app_package) if screen.windows else ()
    with_targets = {t.window for t in targets}
    notices: list[str] = [] if targets else ["no touch targets on this screen: nothing on it was checked"]
    stacked = len(roles) > 1  # only another window can block or cut a target
    # Identical boxes are one control as far as a finger can tell: check the one on top.
    top_by_box: dict[tuple[int, int, int, int], int] = {}
    twins = False
    for k, t in enumerate(targets):
        why = _exclusion(t)
        if not why and roles:
            role = roles[t.window]
            if role.role not in CHECKED_ROLES and not options.all_windows:
                why = _role_reason(role.role, role.package)
            elif stacked:
                why, cut = blocking_window(t, roles, with_targets)
                if cut:
                    clipped[k] = cut
        if not why and screen.platform == "ios":  # Android bounds are clipped to the display already, and
            where = _off_screen(t, screen.width, screen.height)  # a root's size may be a window's, not the screen's
            if where == "off":
                why = f"off-screen (wholly outside the {screen.width:g} x {screen.height:g} screen)"
            elif where == "part":
                clipped.setdefault(k, "partly off-screen")
        if why:
            unchecked[k] = why
            continue
        other = top_by_box.get(t.bounds)
        if other is None:
            top_by_box[t.bounds] = k
        else:
            twins = True
            if targets[other].paint_rank < t.paint_rank:
                top_by_box[t.bounds] = k
    if twins:  # rare: most screens have no two targets with the same box
        for k, t in enumerate(targets):
            if k not in unchecked and top_by_box[t.bounds] != k:
                on_top = targets[top_by_box[t.bounds]]
                unchecked[k] = f"same bounds as #{on_top.number} '{on_top.name}', which is drawn over it"
    candidates = [k for k in range(len(targets)) if k not in unchecked]
    unchecked.update(_covered_containers(targets, candidates, device))
    checked = tuple(k for k in candidates if k not in unchecked)
    if targets and not checked:  # say so: a screen where every target was set aside compared nothing
        reasons = sorted({why.split(" (")[0].split(" at [")[0] for why in unchecked.values()})
        notices.append(f"none of the {len(targets)} targets on this screen was checked ({'; '.join(reasons[:3])}"
                       f"{'; ...' if len(reasons) > 3 else ''}): nothing on it was compared")
    boxes = as_boxes([targets[k].bounds for k in checked])
    # Searched a hair wider than `reach`, so a rule's search in its unit's (rounded) boxes falls within it.
    near = (reach, candidate_pairs(boxes, reach * (1 + 1e-6) + 1e-6)) if np.isfinite(reach) else None
    pairs = cover_pairs(boxes, [targets[k] for k in checked], roles, near[1] if near else None)
    covers: list[list[int]] = [[] for _ in checked]
    maybe: list[list[int]] = [[] for _ in checked]
    for u, o, known in zip(pairs.under.tolist(), pairs.over.tolist(), pairs.known.tolist()):
        (covers if known else maybe)[u].append(o)
    return MeasuredScreen(
        screen=screen,
        device=device,
        checked=checked,
        unchecked=tuple(sorted(unchecked.items())),
        boxes_px=boxes,
        covers=tuple(tuple(sorted(c)) if c else () for c in covers),  # most have none
        clipped_by=_clipped_by(targets, checked, clipped, roles, screen),
        notices=tuple(notices),
        maybe_covers=tuple(tuple(sorted(c)) if c else () for c in maybe),
        near=near,
    )


def _clipped_by(targets: tuple[Target, ...], checked: tuple[int, ...], clipped: dict[int, str],
                roles: tuple[WindowRole, ...], screen: Screen) -> tuple[str, ...]:
    """Per checked target, what may cut it off, or "": found while measuring (`clipped`), else a scrolling
    ancestor's edge, else its window's. Only a window with an edge inside the screen can cut (a screen-wide
    app window has none), and only a target under a scroller can meet a scroller's edge: the rest are ""
    without a look."""
    w, h = screen.width, screen.height
    inner = [0 < wl or 0 < wt or wr < w or wb < h for wl, wt, wr, wb in (r.bounds for r in roles)]
    out = []
    for k in checked:
        t = targets[k]
        why = clipped.get(k, "")
        if not why and t.scroll_ancestors:
            why = _clipping(t)
        if not why and t.window >= 0 and roles and inner[t.window]:
            why = _window_edge(t, roles[t.window].bounds, w, h)
        out.append(why)
    return tuple(out)


def _covered_containers(targets: tuple[Target, ...], candidates: list[int], device: Device) -> dict[int, str]:
    """Clickable containers whose own clickable descendants leave no room to tap them: not targets."""
    nested = [k for k in candidates if targets[k].path]
    if len(nested) < 2:
        return {}
    # Each target's target ancestors, from the prefixes of its path: n x depth look-ups, not n x n.
    by_path = {(targets[k].window, targets[k].path): k for k in nested}
    inside: dict[int, list[int]] = {}
    for d in nested:
        t = targets[d]
        for n in range(1, len(t.path)):
            a = by_path.get((t.window, t.path[:n]))
            if a is not None:
                inside.setdefault(a, []).append(d)
    out: dict[int, str] = {}
    for k, inner in inside.items():
        container = targets[k]
        side, _ = largest_free_square(np.array(container.bounds, dtype=float),
                                      as_boxes([targets[d].bounds for d in inner]))
        if side / device.coords_per_unit < COVERED_BELOW:
            names = ", ".join(f"#{targets[d].number}" for d in inner[:4]) + (" ..." if len(inner) > 4 else "")
            out[k] = f"covered by its own targets ({names}): not a target of its own"
    return out
