"""Fix plans: for each target too small, the least growth of its touch area that passes the size rules
without taking taps from its neighbours; where there is no room, how much is missing and where to move.

A stage after the checks. The room each target has to grow is worked out in room.py; a plan is kept
only once the screen, re-measured and re-checked in memory with every plan applied, shows that each
planned target passes the rules its plan claims, that no finding appeared that was not there before,
and that no two touch areas overlap that did not overlap before. A plan that fails its own re-check
is withdrawn (and said to need a move), never printed as a fix.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from typing import NamedTuple

import numpy as np

from tapgauge.checks import reach as rules_reach
from tapgauge.device import MM_PER_INCH
from tapgauge.geometry import as_boxes, intersection_areas
from tapgauge.measure import MeasuredScreen
from tapgauge.model import Box, RuleSet, Screen, ScreenResult, Target, TargetResult, new_row
from tapgauge.room import EPS, SIDES, Need, Why, grown_boxes, limit_name

WITHDRAWN: Why = ("withdrawn",)


class Plan(NamedTuple):
    """What to change for one failing target, in the source's coordinates and the platform unit."""

    kind: str  # "grow": a larger touch area; "move": no room where it is
    bounds: Box  # the planned touch area (grow), or the target's box as it is (move)
    growth: tuple[float, float, float, float]  # left, top, right, bottom, in the platform unit
    rules: tuple[str, ...]  # the size rules the plan passes
    missing: float = 0.0  # move: room missing, in the platform unit
    move: tuple[float, float] = (0.0, 0.0)  # move: dx, dy in the platform unit that would make room
    mover: int | None = None  # move: the number of the neighbour to move (None: no move of one helps)
    # What the sentence is made of. It is written only when a report shows it: the JSON report holds
    # none, and writing every plan's sentence cost a tenth of checking a batch to JSON.
    unit: str = ""
    k_unit: float = 1.0  # coordinates per unit
    # ("limits", ((side, who), ...)), ("short", axis, missing in coordinates, low limit, high limit),
    # ("overlaps",) or ("withdrawn",)
    why: Why = ("withdrawn",)
    overlaps: tuple[str, ...] = ()  # the targets it overlaps, named

    @property
    def text(self) -> str:
        """The plan in words, for tables."""
        return _sentence(self)


def _needs(m: MeasuredScreen, sr: ScreenResult, rulesets: list[RuleSet],
           pairs: tuple[np.ndarray, np.ndarray]) -> list[Need]:
    """Per failing target whose shortfall is only size (no target drawn over it), the square to reach."""
    d = m.device
    # Each size rule's square in coordinates, across and down, worked out once for the screen.
    square: dict[str, tuple[float, float]] = {}
    for rs in rulesets:
        for r in rs.rules:
            if r.kind != "min-size":
                continue
            size = float(r.param("size"))
            if r.unit != "mm":
                square[r.id] = (size * d.coords_per_unit, size * d.coords_per_unit)
            elif d.xdpi is not None and d.ydpi is not None:
                square[r.id] = (size / MM_PER_INCH * d.xdpi, size / MM_PER_INCH * d.ydpi)
    position = {k: pos for pos, k in enumerate(m.checked)}
    out = []
    hits = _overlap_positions(pairs)
    for k, tr in enumerate(sr.targets):
        if tr.status != "fail":
            continue
        pos = position[k]
        if m.covers[pos] or m.maybe_covers and m.maybe_covers[pos]:
            continue  # a target drawn over it is the trouble: growth does not help
        sized = tuple(f.rule_id for f in tr.findings if not f.waiver and f.rule_id in square)
        if sized:
            side = square[sized[0]] if len(sized) == 1 else (max(square[r][0] for r in sized),
                                                            max(square[r][1] for r in sized))
            out.append(new_row(Need, (pos, sized, side, _overlapping(m, pos, hits[pos]) if pos in hits else ())))
    return out


def _overlapping(m: MeasuredScreen, pos: int, hits: list[int]) -> tuple[str, ...]:
    """Of the checked targets whose boxes overlap this one's (`hits`), those not holding it nor held by it."""
    me = m.screen.targets[m.checked[pos]]
    out = []
    for q in hits:
        o = m.screen.targets[m.checked[q]]
        if not _related(me, o):
            out.append(f"#{o.number} '{o.name}'")
    return tuple(out)


def _overlap_pairs(m: MeasuredScreen) -> tuple[np.ndarray, np.ndarray]:
    """Positions (i < j) of checked boxes that overlap by some area: the checks' own pair search,
    so a screen of thousands of targets never builds an n x n matrix."""
    boxes = as_boxes(m.boxes_px)
    i, j = m.pairs("px", 0.0)
    keep = intersection_areas(boxes[i], boxes[j]) > EPS
    return i[keep], j[keep]


def _overlap_positions(pairs: tuple[np.ndarray, np.ndarray]) -> dict[int, list[int]]:
    out: dict[int, list[int]] = {}
    for i, j in zip(*(p.tolist() for p in pairs)):
        out.setdefault(i, []).append(j)
        out.setdefault(j, []).append(i)
    return out


def _related(a: Target, b: Target) -> bool:
    """One encloses the other (a row round its buttons): neither is in the other's way."""
    if a.is_ancestor_of(b) or b.is_ancestor_of(a):
        return True
    (al, at, ar, ab), (bl, bt, br, bb) = a.bounds, b.bounds
    return (al <= bl and at <= bt and ar >= br and ab >= bb) or (bl <= al and bt <= at and br >= ar and bb >= ab)


def _findings(sr: ScreenResult) -> set[tuple[int, str]]:
    return {(tr.target.number, f.rule_id) for tr in sr.targets for f in tr.findings if not f.waiver}


def _overlaps(m: MeasuredScreen, pairs: tuple[np.ndarray, np.ndarray] | None = None) -> set[tuple[int, int]]:
    """Pairs of checked targets (by number) whose boxes overlap."""
    numbers = [m.screen.targets[k].number for k in m.checked]
    i, j = pairs if pairs is not None else _overlap_pairs(m)
    return {(numbers[a], numbers[b]) for a, b in zip(i.tolist(), j.tolist())}


# Measures a trial screen whole and checks the part of it that `part` keeps: (the measured screen, the
# (target number, rule id) of every finding: checks.failing).
Recheck = Callable[[Screen, Callable[[MeasuredScreen], MeasuredScreen]], tuple[MeasuredScreen, set[tuple[int, str]]]]


def _reach(rulesets: list[RuleSet], m: MeasuredScreen) -> float:
    """How far, in coordinates, a target's growth can change another target's findings (checks.reach),
    and a coordinate more."""
    return rules_reach(rulesets, m.device) + 1.0


def _near_part(again: MeasuredScreen, grown: list[Box], reach: float) -> MeasuredScreen:
    """The re-measured screen with only the targets a growth can change checked: those within `reach`
    of a grown box, and every target drawn over them; the rest are set aside.

    What the re-check asks is which findings are new. Only a target near a growth can gain one, and
    it keeps every neighbour that bears on it (all within `reach`, and what covers it); a target
    left out can only lose findings (a nearest gap grows, a circle clears, a square frees up),
    never gain one. So the new findings are the whole screen's, for a fraction of the checking. Where
    most targets are near a growth, the screen is checked whole: setting the rest aside costs more
    than checking them."""
    if not np.isfinite(reach) or not len(again.checked):
        return again
    boxes = np.asarray(again.boxes_px, dtype=float)
    g = np.array(grown, dtype=float).reshape(-1, 4)
    dx = np.maximum(boxes[:, None, 0] - g[None, :, 2], g[None, :, 0] - boxes[:, None, 2])
    dy = np.maximum(boxes[:, None, 1] - g[None, :, 3], g[None, :, 1] - boxes[:, None, 3])
    near = np.flatnonzero(((dx <= reach) & (dy <= reach)).any(axis=1)).tolist()
    if 2 * len(near) > len(again.checked):  # checking the rest too costs less than setting it aside
        return again
    keep = set(near)
    for p in near:
        keep.update(again.covers[p])
        if again.maybe_covers:
            keep.update(again.maybe_covers[p])
    if 2 * len(keep) > len(again.checked):
        return again
    kept = sorted(keep)
    index = {p: i for i, p in enumerate(kept)}

    def within(ps: tuple[int, ...]) -> tuple[int, ...]:
        return tuple(index[q] for q in ps if q in index)

    aside = [(k, "set aside in the plans' re-check") for p, k in enumerate(again.checked) if p not in index]
    near = None
    if again.near is not None:  # the pair search, kept to the pairs within the part, renumbered
        far, (i, j) = again.near
        renumber = np.full(len(again.checked), -1, dtype=np.intp)
        renumber[kept] = np.arange(len(kept))
        a, b = renumber[i], renumber[j]
        both = (a >= 0) & (b >= 0)
        near = (far, (a[both], b[both]))
    return MeasuredScreen(
        screen=again.screen, device=again.device, checked=tuple(again.checked[p] for p in kept),
        unchecked=tuple(sorted((*again.unchecked, *aside))), boxes_px=again.boxes_px[kept],
        covers=tuple(within(again.covers[p]) for p in kept), clipped_by=tuple(again.clipped_by[p] for p in kept),
        notices=again.notices,
        maybe_covers=tuple(within(again.maybe_covers[p]) for p in kept) if again.maybe_covers else (),
        near=near,
    )


def plan_screen(m: MeasuredScreen, sr: ScreenResult, rulesets: list[RuleSet], recheck: Recheck) -> ScreenResult:
    """The screen's results with a plan on each target too small; `recheck` measures and checks a screen
    whose targets have their planned bounds, as the pipeline did the original."""
    pairs = _overlap_pairs(m)
    needs = _needs(m, sr, rulesets, pairs)
    if not needs:
        return sr
    applied = [rs for rs in rulesets if rs.id in sr.rulesets]
    gaps = [float(r.param("gap")) for rs in applied for r in rs.rules if r.kind == "min-gap"]
    margin = max(gaps, default=0.0) * m.device.coords_per_unit
    before, overlapping = _findings(sr), _overlaps(m, pairs)
    reach = _reach(applied, m)
    number = {n.pos: m.screen.targets[m.checked[n.pos]].number for n in needs}
    need_of = {n.pos: n for n in needs}
    keep = {n.pos for n in needs if not n.overlaps}
    planned: dict[int, tuple[Box, Why]] = {}
    while keep:
        planned = grown_boxes(m, needs, margin, keep)
        grown = {pos: box for pos, (box, why) in planned.items() if why[0] == "limits"}
        if not grown:
            break
        boxes = list(grown.values())
        m2, after = recheck(_apply(m.screen, m, grown), lambda again, boxes=boxes: _near_part(again, boxes, reach))
        failed = {pos for pos in grown if any((number[pos], r) in after for r in need_of[pos].rules)}
        new = after - before
        blamed = {n for n, _ in new}
        failed |= {pos for pos in grown if number[pos] in blamed}
        others = blamed - {number[pos] for pos in grown}
        if others:  # a neighbour that did not grow now fails: the plans reaching near it go
            near = {pos for pos in grown if _near(m, grown[pos], others, margin + 1)}
            failed |= near or set(grown)
        fresh = _overlaps(m2) - overlapping
        failed |= {pos for pos in grown for pair in fresh if number[pos] in pair}
        if not failed:
            break
        keep -= failed
    return _attach(sr, m, {n.pos: (None, ("overlaps",)) if n.overlaps else planned.get(n.pos, (None, WITHDRAWN))
                           if n.pos in keep else (None, WITHDRAWN) for n in needs}, need_of)


def _near(m: MeasuredScreen, box: Box, numbers: set[int], reach: float) -> bool:
    """Whether a planned box comes within `reach` of any of these targets."""
    for t in m.screen.targets:
        if t.number in numbers:
            l, top, r, b = t.bounds
            if box[0] <= r + reach and box[2] >= l - reach and box[1] <= b + reach and box[3] >= top - reach:
                return True
    return False


def _apply(screen: Screen, m: MeasuredScreen, grown: dict[int, Box]) -> Screen:
    targets = list(screen.targets)
    for pos, (l, t, r, b) in grown.items():
        k = m.checked[pos]
        targets[k] = new_row(Target, (targets[k][0], (float(l), float(t), float(r), float(b)), *targets[k][2:]))
    return replace(screen, targets=tuple(targets))


def _fmt(v: float) -> str:
    return f"{round(v, 1):g}"


def _attach(sr: ScreenResult, m: MeasuredScreen, planned: dict[int, tuple[Box | None, Why]],
            needs: dict[int, Need]) -> ScreenResult:
    k_unit = m.device.coords_per_unit
    unit = m.device.unit
    boxes = np.asarray(m.boxes_px, dtype=float).tolist()
    targets = list(sr.targets)
    for pos, (box, why) in planned.items():
        k = m.checked[pos]
        tr = targets[k]
        old = boxes[pos]
        rules = needs[pos].rules
        if box is not None and why[0] == "limits":
            growth = ((old[0] - box[0]) / k_unit, (old[1] - box[1]) / k_unit, (box[2] - old[2]) / k_unit,
                      (box[3] - old[3]) / k_unit)
            plan = new_row(Plan, ("grow", tuple(box), growth, rules, 0.0, _STILL, None, unit, k_unit, why, ()))
        elif why[0] == "overlaps":
            plan = new_row(Plan, ("move", tuple(old), _NONE, rules, 0.0, _STILL, None, unit, k_unit, why,
                              needs[pos].overlaps))
        else:
            plan = _move(tuple(old), why, rules, k_unit, unit)
        targets[k] = new_row(TargetResult, (tr.target, tr.status, tr.reason, tr.size_unit, tr.size_mm, tr.findings,
                                        tr.notes, tr.difficulty, tr.approach, plan))
    return replace(sr, targets=tuple(targets))


_NONE = (0.0, 0.0, 0.0, 0.0)  # no growth
_STILL = (0.0, 0.0)  # no move


def _move(box: Box, why: Why, rules: tuple[str, ...], k_unit: float, unit: str) -> Plan:
    """No room: how much is missing between the two limits on the tight axis, and the smallest move of a
    neighbour that opens it (moving the target itself between two fixed limits opens nothing)."""
    if why[0] != "short":
        return new_row(Plan, ("move", box, _NONE, rules, 0.0, _STILL, None, unit, k_unit, why, ()))
    _, axis, missing, low, high = why
    short = missing / k_unit
    # A neighbour (or a holder) is what can move: the high side's first, else the low side's.
    if high.code >= 4:
        who, sign = high, +1
    elif low.code >= 4:
        who, sign = low, -1
    else:
        return new_row(Plan, ("move", box, _NONE, rules, short, _STILL, None, unit, k_unit, why, ()))
    distance = short * (2 if who.grows else 1)  # a neighbour that also grows shares the room it opens
    move = (sign * distance, 0.0) if axis == 0 else (0.0, sign * distance)
    return new_row(Plan, ("move", box, _NONE, rules, short, move, who.number, unit, k_unit, why, ()))


def _sentence(p: Plan) -> str:
    unit = p.unit
    if p.kind == "grow":
        box = p.bounds
        parts = [f"{_fmt(g)} {unit} {name}" for g, name in zip(p.growth, SIDES) if g > 0.05]
        text = ("grow the touch area " + ", ".join(parts) + f" (to {_fmt((box[2] - box[0]) / p.k_unit)} x "
                f"{_fmt((box[3] - box[1]) / p.k_unit)} {unit})") if parts else "no growth needed"
        limits = p.why[1]
        if limits:
            text += "; " + "; ".join(f"the {side} side is limited by {who}" for side, who in limits)
        return text
    if p.why[0] == "overlaps":
        return f"it overlaps {', '.join(p.overlaps)}: part them first; no touch area passes while they overlap"
    if p.why[0] != "short":
        return ("no touch area that passes fits here without crowding a neighbour: move it apart from its "
                "neighbours, or make room around it")
    _, axis, _, low, high = p.why
    what = "across" if axis == 0 else "down"
    between = f"between {limit_name(low)} and {limit_name(high)}"
    if p.mover is None:
        return (f"no room to grow: {_fmt(p.missing)} {unit} missing {what} {between}; it cannot reach the minimum "
                "there: give it a larger container or another place")
    dx, dy = p.move
    word = ("right" if dx > 0 else "left") if axis == 0 else ("down" if dy > 0 else "up")
    return (f"no room to grow: {_fmt(p.missing)} {unit} missing {what} {between}; move #{p.mover} "
            f"{_fmt(abs(dx) + abs(dy))} {unit} {word}, away from it, to make that room")
