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
from dataclasses import replace
from typing import Any, NamedTuple

import numpy as np

from tapgauge.checks import reach as rules_reach
from tapgauge.device import MM_PER_INCH
from tapgauge.geometry import as_boxes, candidate_pairs, intersection_areas
from tapgauge.measure import MeasuredScreen
from tapgauge.model import Box, RuleSet, Screen, ScreenResult, Target, TargetResult, Window

SIDES = ("left", "top", "right", "bottom")
EPS = 1e-6


Why = tuple[Any, ...]  # what a plan's sentence is made of: see Plan.why
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


class _Need(NamedTuple):
    pos: int  # position among the checked targets
    rules: tuple[str, ...]
    side: tuple[float, float]  # the square's side in coordinates, across and down
    overlaps: tuple[str, ...] = ()  # other targets its box overlaps: no growth can pass until they part


def _needs(m: MeasuredScreen, sr: ScreenResult, rulesets: list[RuleSet],
           pairs: tuple[np.ndarray, np.ndarray]) -> list[_Need]:
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
            out.append(_Need(pos, sized, side, _overlapping(m, pos, hits[pos]) if pos in hits else ()))
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


def _spread(need: float, low: float, high: float) -> tuple[float, float] | None:
    """`need` spread over two sides with room `low` and `high`, as evenly as the room allows."""
    if need <= EPS:
        return 0.0, 0.0
    if low + high + EPS < need:
        return None
    a = min(low, max(need / 2, need - high))
    return a, need - a


def _plans(m: MeasuredScreen, needs: list[_Need], margin: float, keep: set[int]) -> dict[int, tuple[Box, Why]]:
    """Planned boxes (coordinates) per position for the needs in `keep`; or why there is no room.

    Per growing target, every other target is an obstacle on one axis (the one they are apart on,
    or the wider gap when apart on both), all at once in numpy; a holder (a row round it) bounds
    it instead."""
    screen = m.screen
    checked = set(m.checked)
    order = list(m.checked) + [k for k, t in enumerate(screen.targets) if t.visible and k not in checked]
    all_t = [screen.targets[k] for k in order]
    obs = np.array([t.bounds for t in all_t], dtype=float).reshape(-1, 4)
    windows = np.array([t.window for t in all_t])
    numbers = [t.number for t in all_t]
    boxes = obs[:len(m.checked)]
    growing = {n.pos: n for n in needs if n.pos in keep}
    demand = np.zeros((len(all_t), 2))
    for n in growing.values():
        demand[n.pos] = (max(0.0, n.side[0] - (boxes[n.pos, 2] - boxes[n.pos, 0])),
                         max(0.0, n.side[1] - (boxes[n.pos, 3] - boxes[n.pos, 1])))
    is_growing = np.zeros(len(all_t), dtype=bool)
    is_growing[list(growing)] = True
    every = np.array(sorted(growing), dtype=np.intp)
    if not len(every):
        return {}
    # Only the obstacles that can limit a growth: one whose room is more than the growth it faces changes
    # no plan (_spread takes as much either way, and no side it bounds is tight), and a room (its free
    # gap, or half of it when shared) is more than any growth here beyond a gap of twice the largest
    # demand and the spacing kept. The pair search finds every obstacle nearer than that.
    i, j = candidate_pairs(obs, 2 * float(demand.max()) + margin + 1.0)
    is_row = np.zeros(len(all_t), dtype=bool)
    is_row[every] = True
    g = np.concatenate((i[is_row[i]], j[is_row[j]]))  # (growing target, obstacle) both ways round
    o = np.concatenate((j[is_row[i]], i[is_row[j]]))
    return _plan_rows(m, every, g, o, all_t, obs, windows, numbers, demand, is_growing, margin)


def _plan_rows(m: MeasuredScreen, rows: np.ndarray, g: np.ndarray, o: np.ndarray, all_t: list[Target],
               obs: np.ndarray, windows: np.ndarray, numbers: list[int], demand: np.ndarray, is_growing: np.ndarray,
               margin: float) -> dict[int, tuple[Box, Why]]:
    """The plans of the growing targets `rows`, from their (growing target g, obstacle o) pairs."""
    out: dict[int, tuple[Box, Why]] = {}
    screen = m.screen
    box, ob = obs[g], obs[o]
    same = windows[g] == windows[o]
    holds = same & (ob[:, 0] <= box[:, 0]) & (ob[:, 1] <= box[:, 1]) & (ob[:, 2] >= box[:, 2]) & (ob[:, 3] >= box[:, 3])
    inside = same & (ob[:, 0] >= box[:, 0]) & (ob[:, 1] >= box[:, 1]) & (ob[:, 2] <= box[:, 2]) \
        & (ob[:, 3] <= box[:, 3])
    gx = np.maximum(ob[:, 0] - box[:, 2], box[:, 0] - ob[:, 2])
    gy = np.maximum(ob[:, 1] - box[:, 3], box[:, 1] - ob[:, 3])
    # An ancestor holds its child's box or overlaps it, and overlapping pairs stay as they are: no obstacle.
    use = same & ~holds & ~inside & ~((gx < 0) & (gy < 0))
    axis = np.where((gy < 0) | ((gx >= 0) & (gx >= gy)), 0, 1)
    gap = np.where(axis == 0, gx, gy)
    free = np.maximum(0.0, gap - np.where(gap >= margin - EPS, margin, 0.0))  # keep a spacing that passes today
    theirs = np.where(axis == 0, demand[o, 0], demand[o, 1])
    # Room between two growing targets is shared: at least half each, more where the other needs less.
    free = np.where(is_growing[o], np.maximum(free / 2, free - theirs), free)
    side = np.where(axis == 0, np.where(ob[:, 0] < box[:, 0], 0, 2), np.where(ob[:, 1] < box[:, 1], 1, 3))
    # Per growing target and side, the nearest obstacle's room and which one it is (the first by number
    # among equals): the first of each (row, side) once sorted by room.
    row_of = np.zeros(len(all_t), dtype=np.intp)
    row_of[rows] = np.arange(len(rows))
    u = np.flatnonzero(use)
    slot = row_of[g[u]] * 4 + side[u]  # (row, side) as one number
    order = np.lexsort((o[u], free[u], slot))
    u, slot = u[order], slot[order]
    first = np.ones(len(u), dtype=bool)
    first[1:] = slot[1:] != slot[:-1]
    r, k = np.divmod(slot, 4)
    nearest_room = np.full((len(rows), 4), np.inf)
    nearest = np.zeros((len(rows), 4), dtype=np.intp)
    nearest_room[r[first], k[first]] = free[u[first]]
    nearest[r[first], k[first]] = o[u[first]]
    # Per row and side, the room to grow and what bounds it (_LIMITS: a code, and the target's index for
    # a holder or an obstacle): the screen, its window, its scrolling ancestors, a holder, another
    # window, the nearest obstacle, each taking over where it is tighter, in that order.
    n = len(rows)
    here, obs_list = obs[rows], obs.tolist()
    lim = np.tile([0.0, 0.0, float(screen.width), float(screen.height)], (n, 1))
    code = np.zeros((n, 4), dtype=np.intp)  # 0: the screen's edge
    who = np.zeros((n, 4), dtype=np.intp)
    win = windows[rows]
    own = (win >= 0) & (win < len(screen.windows))
    if own.any():  # its window, kept one coordinate inside an edge the box does not touch
        wb = np.array([w.bounds for w in screen.windows], dtype=float).reshape(-1, 4)[np.where(own, win, 0)]
        inner = np.concatenate((np.minimum(wb[:, :2] + 1, here[:, :2]), np.maximum(wb[:, 2:] - 1, here[:, 2:])), axis=1)
        tighter = own[:, None] & np.concatenate((inner[:, :2] > lim[:, :2], inner[:, 2:] < lim[:, 2:]), axis=1)
        lim, code = np.where(tighter, inner, lim), np.where(tighter, 1, code)
    room = np.concatenate((here[:, :2] - lim[:, :2], lim[:, 2:] - here[:, 2:]), axis=1)
    holders: dict[int, list[int]] = {}  # per row, the targets that hold it
    h = np.flatnonzero(holds)
    for row, q in zip(row_of[g[h]].tolist(), o[h].tolist()):
        holders.setdefault(row, []).append(q)
    others = screen.windows if len(screen.windows) > 1 else ()
    scrolled = [i for i, pos in enumerate(rows.tolist()) if all_t[pos].scroll_ancestors]
    if scrolled or holders or others:  # the rarer limits, row by row in plain numbers
        room_l, code_l, who_l, lim_l = room.tolist(), code.tolist(), who.tolist(), lim.tolist()
        for i in sorted({*scrolled, *holders, *(range(n) if others else ())}):
            _rare_limits(all_t[rows[i]], obs_list[rows[i]], lim_l[i], room_l[i], code_l[i], who_l[i],
                         sorted(holders.get(i, ())), obs_list, others)
        room, code, who = np.array(room_l), np.array(code_l, dtype=np.intp), np.array(who_l, dtype=np.intp)
    closer = nearest_room < room
    room = np.where(closer, np.maximum(0.0, nearest_room), room)
    code, who = np.where(closer, 5, code), np.where(closer, nearest, who)
    # Each axis's need spread over its two sides as evenly as the room allows (_spread, all rows at once).
    need = demand[rows]
    low, high = room[:, :2], room[:, 2:]
    none = need <= EPS
    fits = none | ~(low + high + EPS < need)
    first = np.where(none, 0.0, np.minimum(low, np.maximum(need / 2, need - high)))
    second = np.where(none, 0.0, need - first)
    growth = np.concatenate((first, second), axis=1)  # left, top, right, bottom
    tight = (code >= 4) & (growth > EPS) & (growth >= room - EPS)
    short_axis = np.where(fits[:, 0], 1, 0)
    short = need[np.arange(n), short_axis] - low[np.arange(n), short_axis] - high[np.arange(n), short_axis]
    rows_l, fits_l, growth_l, tight_l = rows.tolist(), fits.all(axis=1).tolist(), growth.tolist(), tight.tolist()
    code_l, who_l, axis_l, short_l = code.tolist(), who.tolist(), short_axis.tolist(), short.tolist()
    grows = is_growing.tolist()

    def name(i: int, k: int) -> str:
        c, q = code_l[i][k], who_l[i][k]
        if c < 4:
            return _LIMITS[c]
        return f"#{numbers[q]} (which holds it)" if c == 4 else f"#{numbers[q]}" + ("*" if grows[q] else "")

    for i, pos in enumerate(rows_l):
        hl, ht, hr, hb = obs_list[pos]
        if not fits_l[i]:
            ax = axis_l[i]
            out[pos] = ((hl, ht, hr, hb), ("short", ax, short_l[i], name(i, ax), name(i, ax + 2)))
            continue
        gl, gt, gr, gb = growth_l[i]
        # A side whose growth used all its room, up to a neighbour: said, so a developer knows why it is uneven.
        limits = tuple((side, name(i, k).rstrip("*")) for k, side in enumerate(SIDES) if tight_l[i][k])
        out[pos] = ((hl - gl, ht - gt, hr + gr, hb + gb), ("limits", limits))
    return out


# What bounds a side of a growing target's room, by code (4: a holder, 5: the nearest obstacle, by number).
_LIMITS = ("the screen's edge", "its window's edge", "its scrolling container's edge", "another window's edge")


def _rare_limits(t: Target, box: list[float], lim: list[float], room: list[float], code: list[int], who: list[int],
                 holders: list[int], obs: list[list[float]], others: tuple[Window, ...]) -> None:
    """A row's scrolling ancestors (kept one coordinate inside an edge the box does not touch), holders
    (a row round the button: it grows within the row) and other windows (the keyboard, a system bar: a
    touch area stops at them), each where tighter, in place."""
    hl, ht, hr, hb = box
    for el, et, er, eb in (b for b, _ in t.scroll_ancestors):
        inner = (min(el + 1, hl), min(et + 1, ht), max(er - 1, hr), max(eb - 1, hb))
        for k in range(4):
            if inner[k] > lim[k] if k < 2 else inner[k] < lim[k]:
                lim[k], code[k] = float(inner[k]), 2
                room[k] = box[k] - lim[k] if k < 2 else lim[k] - box[k]
    for q in holders:
        ql, qt, qr, qb = obs[q]
        within = (hl - ql, ht - qt, qr - hr, qb - hb)
        for k in range(4):
            if within[k] < room[k]:
                room[k], code[k], who[k] = within[k], 4, q
    for w, window in enumerate(others):
        wl, wt, wr, wb = window.bounds
        if w == t.window or not (wl >= hr or wr <= hl or wt >= hb or wb <= ht):
            continue  # its own window, or one that holds or overlaps it
        wgx = max(wl - hr, hl - wr)
        wgy = max(wt - hb, ht - wb)
        ax = 0 if wgy < 0 or (wgx >= 0 and wgx >= wgy) else 1
        k = (0 if wl < hl else 2) if ax == 0 else (1 if wt < ht else 3)
        gap = max(0.0, (wgx if ax == 0 else wgy) - 1.0)  # a coordinate clear of it, as of a window's edge
        if gap < room[k]:
            room[k], code[k] = gap, 3


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
    never gain one. So the new findings are the whole screen's, for a fraction of the checking."""
    if not np.isfinite(reach) or not len(again.checked):
        return again
    boxes = np.asarray(again.boxes_px, dtype=float)
    g = np.array(grown, dtype=float).reshape(-1, 4)
    dx = np.maximum(boxes[:, None, 0] - g[None, :, 2], g[None, :, 0] - boxes[:, None, 2])
    dy = np.maximum(boxes[:, None, 1] - g[None, :, 3], g[None, :, 1] - boxes[:, None, 3])
    near = np.flatnonzero(((dx <= reach) & (dy <= reach)).any(axis=1)).tolist()
    keep = set(near)
    for p in near:
        keep.update(again.covers[p])
        if again.maybe_covers:
            keep.update(again.maybe_covers[p])
    if len(keep) == len(again.checked):
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
        planned = _plans(m, needs, margin, keep)
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
    for pos, box in grown.items():
        k = m.checked[pos]
        targets[k] = targets[k]._replace(bounds=tuple(float(v) for v in box))
    return replace(screen, targets=tuple(targets))


def _fmt(v: float) -> str:
    return f"{round(v, 1):g}"


def _attach(sr: ScreenResult, m: MeasuredScreen, planned: dict[int, tuple[Box | None, Why]],
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
        old = boxes[pos].tolist()
        rules = needs[pos].rules
        if box is not None and why[0] == "limits":
            new = box
            growth = ((old[0] - new[0]) / k_unit, (old[1] - new[1]) / k_unit, (new[2] - old[2]) / k_unit,
                      (new[3] - old[3]) / k_unit)
            plan = Plan("grow", tuple(new), growth, rules, unit=unit, k_unit=k_unit, why=why)  # type: ignore[arg-type]
        elif why[0] == "overlaps":
            plan = Plan("move", tuple(old), (0.0, 0.0, 0.0, 0.0), rules, unit=unit, k_unit=k_unit,  # type: ignore[arg-type]
                        why=why, overlaps=needs[pos].overlaps)
        else:
            plan = _move(tuple(old), why, rules, k_unit, unit)
        targets[k] = TargetResult(tr.target, tr.status, tr.reason, tr.size_unit, tr.size_mm, tr.findings, tr.notes,
                                  tr.difficulty, tr.approach, plan)  # built directly: _replace costs more
    return replace(sr, targets=tuple(targets))


def _move(box: Box, why: Why, rules: tuple[str, ...], k_unit: float, unit: str) -> Plan:
    """No room: how much is missing between the two limits on the tight axis, and the smallest move of a
    neighbour that opens it (moving the target itself between two fixed limits opens nothing)."""
    if why[0] != "short":
        return Plan("move", box, (0.0, 0.0, 0.0, 0.0), rules, unit=unit, k_unit=k_unit, why=why)
    _, axis, missing, low, high = why
    short = missing / k_unit
    # A neighbour that also grows shares the room it opens: it must move twice as far.
    if high.startswith("#"):
        who, sign = high, +1
    elif low.startswith("#"):
        who, sign = low, -1
    else:
        return Plan("move", box, (0.0, 0.0, 0.0, 0.0), rules, short, unit=unit, k_unit=k_unit, why=why)
    distance = short * (2 if who.endswith("*") else 1)
    number = int(who.lstrip("#").split()[0].rstrip("*"))
    dx, dy = (sign * distance, 0.0) if axis == 0 else (0.0, sign * distance)
    return Plan("move", box, (0.0, 0.0, 0.0, 0.0), rules, short, (dx, dy), number, unit=unit, k_unit=k_unit, why=why)


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
    between = f"between {low.rstrip('*')} and {high.rstrip('*')}"
    if p.mover is None:
        return (f"no room to grow: {_fmt(p.missing)} {unit} missing {what} {between}; it cannot reach the minimum "
                "there: give it a larger container or another place")
    dx, dy = p.move
    word = ("right" if dx > 0 else "left") if axis == 0 else ("down" if dy > 0 else "up")
    return (f"no room to grow: {_fmt(p.missing)} {unit} missing {what} {between}; move #{p.mover} "
            f"{_fmt(abs(dx) + abs(dy))} {unit} {word}, away from it, to make that room")
