"""Fix plans: for each target too small, the least growth of its touch area that passes the size rules
without taking taps from its neighbours; where there is no room, how much is missing and where to move.

A stage after the checks. Geometry is in screen coordinates on numpy arrays; a plan is kept only once
the screen, re-measured and re-checked in memory with every plan applied, shows that each planned
target passes the rules its plan claims, that no finding appeared that was not there before, and
that no two touch areas overlap that did not overlap before. A plan that fails its own re-check is
withdrawn (and said to need a move), never printed as a fix.

How room is shared: a growing target may reach up to a fixed neighbour (one that does not grow),
keeping the spacing rule's clear gap where that gap is met today; two growing neighbours split the
room between them, each taking at least half and more when the other needs less (so neither plan
starves the other when both can pass). Per axis, growth is spread as evenly over the two sides as
the room allows, which keeps the largest growth on a side as small as it can be.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np

from tapgauge.device import MM_PER_INCH
from tapgauge.measure import MeasuredScreen
from tapgauge.model import Box, RuleSet, Screen, ScreenResult, Target

SIDES = ("left", "top", "right", "bottom")
EPS = 1e-6


@dataclass(frozen=True)
class Plan:
    """What to change for one failing target, in the source's coordinates and the platform unit."""

    kind: str  # "grow": a larger touch area; "move": no room where it is
    bounds: Box  # the planned touch area (grow), or the target's box as it is (move)
    growth: tuple[float, float, float, float]  # left, top, right, bottom, in the platform unit
    rules: tuple[str, ...]  # the size rules the plan passes
    text: str  # the plan in words, for tables
    missing: float = 0.0  # move: room missing, in the platform unit
    move: tuple[float, float] = (0.0, 0.0)  # move: dx, dy in the platform unit that would make room


@dataclass(frozen=True)
class _Need:
    pos: int  # position among the checked targets
    rules: tuple[str, ...]
    side: tuple[float, float]  # the square's side in coordinates, across and down
    overlaps: tuple[str, ...] = ()  # other targets its box overlaps: no growth can pass until they part


def _needs(m: MeasuredScreen, sr: ScreenResult, rulesets: list[RuleSet]) -> list[_Need]:
    """Per failing target whose shortfall is only size (no target drawn over it), the square to reach."""
    rules = {r.id: r for rs in rulesets for r in rs.rules}
    position = {k: pos for pos, k in enumerate(m.checked)}
    k_of = {id(t.target): k for k, t in enumerate(sr.targets)}
    out = []
    d = m.device
    for tr in sr.targets:
        if tr.status != "fail":
            continue
        k = k_of[id(tr.target)]
        pos = position[k]
        if m.covers[pos] or m.maybe_covers and m.maybe_covers[pos]:
            continue  # a target drawn over it is the trouble: growth does not help
        sized = [rules[f.rule_id] for f in tr.findings if not f.waiver and f.rule_id in rules
                 and rules[f.rule_id].kind == "min-size"]
        if not sized:
            continue
        sides = []
        for r in sized:
            size = float(r.param("size"))
            if r.unit == "mm":
                if d.xdpi is None or d.ydpi is None:
                    continue
                sides.append((size / MM_PER_INCH * d.xdpi, size / MM_PER_INCH * d.ydpi))
            else:
                sides.append((size * d.coords_per_unit, size * d.coords_per_unit))
        if sides:
            out.append(_Need(pos, tuple(r.id for r in sized), (max(s[0] for s in sides), max(s[1] for s in sides)),
                             _overlapping(m, pos)))
    return out


def _overlapping(m: MeasuredScreen, pos: int) -> tuple[str, ...]:
    """The checked targets whose boxes overlap this one's (not one holding the other)."""
    boxes = np.asarray(m.boxes_px, dtype=float)
    me = m.screen.targets[m.checked[pos]]
    l, t, r, b = boxes[pos]
    out = []
    for q, other in enumerate(boxes):
        o = m.screen.targets[m.checked[q]]
        if q != pos and not _related(me, o) and min(r, other[2]) - max(l, other[0]) > EPS \
                and min(b, other[3]) - max(t, other[1]) > EPS:
            out.append(f"#{o.number} '{o.name}'")
    return tuple(out)


def _container(t: Target, m: MeasuredScreen) -> np.ndarray:
    """Where a target's touch area may reach: the screen, its window and its scrolling ancestors,
    kept one coordinate inside any edge the box does not already touch (a target flush with a
    scroller's edge reads as cut off)."""
    s = m.screen
    box = np.array(t.bounds, dtype=float)
    lim = np.array([0.0, 0.0, float(s.width), float(s.height)])
    edges = []
    if 0 <= t.window < len(s.windows):
        edges.append(np.array(s.windows[t.window].bounds, dtype=float))
    edges += [np.array(b, dtype=float) for b, _ in t.scroll_ancestors]
    for e in edges:
        inner = e + np.array([1, 1, -1, -1])
        inner = np.array([min(inner[0], box[0]), min(inner[1], box[1]), max(inner[2], box[2]), max(inner[3], box[3])])
        lim = np.array([max(lim[0], inner[0]), max(lim[1], inner[1]), min(lim[2], inner[2]), min(lim[3], inner[3])])
    return lim


def _related(a: Target, b: Target) -> bool:
    """One encloses the other (a row round its buttons): neither is in the other's way."""
    if a.is_ancestor_of(b) or b.is_ancestor_of(a):
        return True
    (al, at, ar, ab), (bl, bt, br, bb) = a.bounds, b.bounds
    return (al <= bl and at <= bt and ar >= br and ab >= bb) or (bl <= al and bt <= at and br >= ar and bb >= ab)


def _holds(outer: np.ndarray, inner: np.ndarray) -> bool:
    return bool(outer[0] <= inner[0] and outer[1] <= inner[1] and outer[2] >= inner[2] and outer[3] >= inner[3])


def _split(gap: float, mine: float, theirs: float) -> float:
    """My share of the room between two growing neighbours: at least half, more when they need less."""
    return max(gap / 2, gap - theirs) if gap > 0 else 0.0


def _spread(need: float, low: float, high: float) -> tuple[float, float] | None:
    """`need` spread over two sides with room `low` and `high`, as evenly as the room allows."""
    if need <= EPS:
        return 0.0, 0.0
    if low + high + EPS < need:
        return None
    a = min(low, max(need / 2, need - high))
    return a, need - a


def _plans(m: MeasuredScreen, needs: list[_Need], margin: float, keep: set[int]) -> dict[int, tuple[np.ndarray, str]]:
    """Planned boxes (coordinates) per position for the needs in `keep`; or why there is no room."""
    targets = [m.screen.targets[k] for k in m.checked]
    boxes = np.asarray(m.boxes_px, dtype=float)
    others = [k for k, t in enumerate(m.screen.targets) if t.visible and k not in set(m.checked)]
    growing = {n.pos: n for n in needs if n.pos in keep}
    demand = {n.pos: (max(0.0, n.side[0] - (boxes[n.pos, 2] - boxes[n.pos, 0])),
                      max(0.0, n.side[1] - (boxes[n.pos, 3] - boxes[n.pos, 1]))) for n in growing.values()}
    out: dict[int, tuple[np.ndarray, str]] = {}
    for pos, need in growing.items():
        t, box = targets[pos], boxes[pos]
        lim = _container(t, m)
        room = [box[0] - lim[0], box[1] - lim[1], lim[2] - box[2], lim[3] - box[3]]
        limiter = ["the container's edge"] * 4
        obstacles = [(q, boxes[q], targets[q]) for q in range(len(targets)) if q != pos]
        obstacles += [(None, np.array(m.screen.targets[k].bounds, dtype=float), m.screen.targets[k]) for k in others]
        for q, ob, other in obstacles:
            if other.window != t.window:
                continue
            if _related(t, other):
                if other.is_ancestor_of(t) or _holds(ob, box):  # a row round this button: grow within it
                    room = [min(room[0], box[0] - ob[0]), min(room[1], box[1] - ob[1]),
                            min(room[2], ob[2] - box[2]), min(room[3], ob[3] - box[3])]
                continue
            gx = max(ob[0] - box[2], box[0] - ob[2])
            gy = max(ob[1] - box[3], box[1] - ob[3])
            if gx < 0 and gy < 0:
                continue  # already overlapping: growth neither causes nor cures it
            axis = 0 if gy < 0 or (gx >= 0 and gx >= gy) else 1
            gap = gx if axis == 0 else gy
            clear = margin if gap >= margin - EPS else 0.0  # keep a spacing that passes today
            free = max(0.0, gap - clear)
            if q is not None and q in growing:
                free = _split(free, demand[pos][axis], demand[q][axis])
            side = (0 if ob[0] < box[0] else 2) if axis == 0 else (1 if ob[1] < box[1] else 3)
            if free < room[side]:
                room[side] = max(0.0, free)
                limiter[side] = f"#{other.number}"
        across = _spread(demand[pos][0], room[0], room[2])
        down = _spread(demand[pos][1], room[1], room[3])
        if across is None or down is None:
            axis = 0 if across is None else 1
            short = demand[pos][axis] - room[axis] - room[axis + 2]
            out[pos] = (box, f"short:{axis}:{short}:{limiter[axis]}:{limiter[axis + 2]}:{room[axis]}:{room[axis + 2]}")
            continue
        growth = (across[0], down[0], across[1], down[1])
        # A side whose growth used all its room, up to a neighbour: said, so a developer knows why it is uneven.
        tight = [f"{name}={limiter[k]}" for k, name in enumerate(SIDES)
                 if limiter[k].startswith("#") and growth[k] > EPS and growth[k] >= room[k] - EPS]
        out[pos] = (box + np.array([-across[0], -down[0], across[1], down[1]]), "limits:" + ";".join(tight))
    return out


def _findings(sr: ScreenResult) -> set[tuple[int, str]]:
    return {(tr.target.number, f.rule_id) for tr in sr.targets for f in tr.findings if not f.waiver}


def _overlaps(m: MeasuredScreen) -> set[tuple[int, int]]:
    """Pairs of checked targets (by number) whose boxes overlap."""
    boxes = np.asarray(m.boxes_px, dtype=float).reshape(-1, 4)
    numbers = [m.screen.targets[k].number for k in m.checked]
    l, t, r, b = (boxes[:, i] for i in range(4))
    ow = np.minimum(r[:, None], r[None, :]) - np.maximum(l[:, None], l[None, :])
    oh = np.minimum(b[:, None], b[None, :]) - np.maximum(t[:, None], t[None, :])
    hit = np.triu((ow > EPS) & (oh > EPS), 1)
    return {(numbers[i], numbers[j]) for i, j in zip(*np.nonzero(hit))}


Recheck = Callable[[Screen], tuple[MeasuredScreen, ScreenResult]]


def plan_screen(m: MeasuredScreen, sr: ScreenResult, rulesets: list[RuleSet], recheck: Recheck) -> ScreenResult:
    """The screen's results with a plan on each target too small; `recheck` measures and checks a screen
    whose targets have their planned bounds, as the pipeline did the original."""
    needs = _needs(m, sr, rulesets)
    if not needs:
        return sr
    applied = [rs for rs in rulesets if rs.id in sr.rulesets]
    gaps = [float(r.param("gap")) for rs in applied for r in rs.rules if r.kind == "min-gap"]
    margin = max(gaps, default=0.0) * m.device.coords_per_unit
    before, overlapping = _findings(sr), _overlaps(m)
    number = {n.pos: m.screen.targets[m.checked[n.pos]].number for n in needs}
    keep = {n.pos for n in needs if not n.overlaps}
    planned: dict[int, tuple[np.ndarray, str]] = {}
    while keep:
        planned = _plans(m, needs, margin, keep)
        grown = {pos: box for pos, (box, why) in planned.items() if why.startswith("limits:")}
        if not grown:
            break
        m2, sr2 = recheck(_apply(m.screen, m, grown))
        after = _findings(sr2)
        failed = {pos for pos in grown if any((number[pos], r) in after for r in _need(needs, pos).rules)}
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
    return _attach(sr, m, {n.pos: (None, "overlaps") if n.overlaps else planned.get(n.pos, (None, "withdrawn"))
                           if n.pos in keep else (None, "withdrawn") for n in needs}, {n.pos: n for n in needs})


def _need(needs: list[_Need], pos: int) -> _Need:
    return next(n for n in needs if n.pos == pos)


def _near(m: MeasuredScreen, box: np.ndarray, numbers: set[int], reach: float) -> bool:
    """Whether a planned box comes within `reach` of any of these targets."""
    for t in m.screen.targets:
        if t.number in numbers:
            l, top, r, b = t.bounds
            if box[0] <= r + reach and box[2] >= l - reach and box[1] <= b + reach and box[3] >= top - reach:
                return True
    return False


def _apply(screen: Screen, m: MeasuredScreen, grown: dict[int, np.ndarray]) -> Screen:
    targets = list(screen.targets)
    for pos, box in grown.items():
        k = m.checked[pos]
        targets[k] = targets[k]._replace(bounds=tuple(float(v) for v in box))
    return replace(screen, targets=tuple(targets))


def _fmt(v: float) -> str:
    return f"{round(v, 1):g}"


def _attach(sr: ScreenResult, m: MeasuredScreen, planned: dict[int, tuple[np.ndarray | None, str]],
            needs: dict[int, _Need]) -> ScreenResult:
    k_unit = m.device.coords_per_unit
    unit = m.device.unit
    boxes = np.asarray(m.boxes_px, dtype=float)
    by_k = {m.checked[pos]: pos for pos in planned}
    targets = list(sr.targets)
    for k, tr in enumerate(sr.targets):
        pos = by_k.get(k)
        if pos is None:
            continue
        box, why = planned[pos]
        old = boxes[pos]
        rules = needs[pos].rules
        if box is not None and why.startswith("limits:"):
            growth = tuple(float(v) / k_unit for v in (old[0] - box[0], old[1] - box[1], box[2] - old[2], box[3] - old[3]))
            parts = [f"{_fmt(g)} {unit} {name}" for g, name in zip(growth, SIDES) if g > 0.05]
            text = ("grow the touch area " + ", ".join(parts) + f" (to {_fmt((box[2] - box[0]) / k_unit)} x "
                    f"{_fmt((box[3] - box[1]) / k_unit)} {unit})") if parts else "no growth needed"
            limits = [part.split("=") for part in why.removeprefix("limits:").split(";") if part]
            if limits:
                text += "; " + "; ".join(f"the {side} side is limited by {who}" for side, who in limits)
            plan = Plan("grow", tuple(float(v) for v in box), growth, rules, text)  # type: ignore[arg-type]
        elif why == "overlaps":
            plan = Plan("move", tuple(float(v) for v in old), (0.0, 0.0, 0.0, 0.0), rules,  # type: ignore[arg-type]
                        f"it overlaps {', '.join(needs[pos].overlaps)}: part them first; no touch area passes while "
                        "they overlap")
        else:
            plan = _move(old, why, rules, k_unit, unit)
        targets[k] = tr._replace(plan=plan)
    return replace(sr, targets=tuple(targets))


def _move(box: np.ndarray, why: str, rules: tuple[str, ...], k_unit: float, unit: str) -> Plan:
    if not why.startswith("short:"):
        return Plan("move", tuple(float(v) for v in box), (0.0, 0.0, 0.0, 0.0), rules,  # type: ignore[arg-type]
                    "no touch area that passes fits here without crowding a neighbour: move it apart from its "
                    "neighbours, or make room around it")
    _, axis_s, short_s, low_lim, high_lim, low_room, high_room = why.split(":", 6)
    axis, short = int(axis_s), float(short_s) / k_unit
    # Away from the tighter side: the move that opens the room that is missing.
    towards_high = float(high_room) >= float(low_room)
    word = ("right" if towards_high else "left") if axis == 0 else ("down" if towards_high else "up")
    away = low_lim if towards_high else high_lim
    dx, dy = ((short if towards_high else -short), 0.0) if axis == 0 else (0.0, (short if towards_high else -short))
    what = "across" if axis == 0 else "down"
    text = (f"no room to grow: {_fmt(short)} {unit} missing {what}; move it {_fmt(short)} {unit} {word}, away from "
            f"{away}, or make that room around it")
    return Plan("move", tuple(float(v) for v in box), (0.0, 0.0, 0.0, 0.0), rules, text, short, (dx, dy))  # type: ignore[arg-type]
