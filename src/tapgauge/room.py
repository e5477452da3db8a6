"""Room to grow: for each target too small, how far each side of its touch area may reach, and what
stops it there (the screen, its window, a scrolling container, a holder, another window, the nearest
obstacle); the growth spread over the two sides of each axis, or, where the room is too little, how
much is missing. Plain geometry in screen coordinates on numpy arrays: the plan stage (plan.py) decides
which growths to keep once a re-check has tried them.

How room is shared: a growing target may reach up to a fixed neighbour (one that does not grow),
keeping the spacing rule's clear gap where that gap is met today; two growing neighbours split the
room between them, each taking at least half and more when the other needs less (so neither plan
starves the other when both can pass). Per axis, growth is spread as evenly over the two sides as
the room allows, which keeps the largest growth on a side as small as it can be.
"""

from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np

from tapgauge.geometry import candidate_pairs
from tapgauge.measure import MeasuredScreen
from tapgauge.model import Box, Target, Window, new_row

SIDES = ("left", "top", "right", "bottom")
EPS = 1e-6

# What a plan's sentence is made of (plan.Plan.why): ("limits", ((side, who), ...)), ("short", axis,
# missing in coordinates, low Limit, high Limit), ("overlaps",) or ("withdrawn",).
Why = tuple[Any, ...]


class Limit(NamedTuple):
    """What bounds one side of a target's room where there is too little: numbers, named only when a
    sentence is written (limit_name), since the JSON report holds no sentence."""

    code: int  # 0-3: an edge (_LIMITS); 4: a target that holds it; 5: the nearest obstacle
    number: int = 0  # codes 4 and 5: that target's number
    grows: bool = False  # code 5: that target grows too, so the room it opens is shared


def limit_name(limit: Limit) -> str:
    if limit.code < 4:
        return _LIMITS[limit.code]
    return f"#{limit.number} (which holds it)" if limit.code == 4 else f"#{limit.number}"


class Need(NamedTuple):
    """A target too small, and the square its touch area must reach."""

    pos: int  # position among the checked targets
    rules: tuple[str, ...]
    side: tuple[float, float]  # the square's side in coordinates, across and down
    overlaps: tuple[str, ...] = ()  # other targets its box overlaps: no growth can pass until they part




def spread(need: float, low: float, high: float) -> tuple[float, float] | None:
    """`need` spread over two sides with room `low` and `high`, as evenly as the room allows."""
    if need <= EPS:
        return 0.0, 0.0
    if low + high + EPS < need:
        return None
    a = min(low, max(need / 2, need - high))
    return a, need - a


def grown_boxes(m: MeasuredScreen, needs: list[Need], margin: float, keep: set[int]) -> dict[int, tuple[Box, Why]]:
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
    if not growing:
        return {}
    demand = np.zeros((len(all_t), 2))
    at = np.fromiter(growing, dtype=np.intp, count=len(growing))
    mine = boxes[at]  # what each still needs, across and down: the square's side less the box's
    demand[at] = np.maximum(0.0, np.array([n.side for n in growing.values()], dtype=float) - (mine[:, 2:] - mine[:, :2]))
    is_growing = np.zeros(len(all_t), dtype=bool)
    is_growing[at] = True
    every = np.sort(at)
    # Only the obstacles that can limit a growth: one whose room is more than the growth it faces changes
    # no plan (_spread takes as much either way, and no side it bounds is tight), and a room (its free
    # gap, or half of it when shared) is more than any growth here beyond a gap of twice the largest
    # demand and the spacing kept. The pair search finds every obstacle nearer than that.
    i, j = candidate_pairs(obs, 2 * float(demand.max()) + margin + 1.0)
    is_row = np.zeros(len(all_t), dtype=bool)
    is_row[every] = True
    g = np.concatenate((i[is_row[i]], j[is_row[j]]))  # (growing target, obstacle) both ways round
    o = np.concatenate((j[is_row[i]], i[is_row[j]]))
    return _rows(m, every, g, o, all_t, obs, windows, numbers, demand, is_growing, margin)


def _rows(m: MeasuredScreen, rows: np.ndarray, g: np.ndarray, o: np.ndarray, all_t: list[Target],
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
    # Per growing target and side, the nearest obstacle's room and which one it is (the first in the
    # obstacles' order among equals): the first of each (row, side) once sorted by room.
    row_of = np.zeros(len(all_t), dtype=np.intp)
    row_of[rows] = np.arange(len(rows))
    u = np.flatnonzero(use)
    slot = row_of[g[u]] * 4 + side[u]  # (row, side) as one number
    # Grouped by slot, each group's least room, then the first obstacle with it (a sort on one integer
    # key and two reductions: a three-key lexsort cost more than the rest of this block).
    order = np.argsort(slot, kind="stable")
    u, slot = u[order], slot[order]
    nearest_room = np.full((len(rows), 4), np.inf)
    nearest = np.zeros((len(rows), 4), dtype=np.intp)
    if len(u):
        starts = np.flatnonzero(np.concatenate(([True], slot[1:] != slot[:-1])))
        room_u, o_u = free[u], o[u]
        least = np.minimum.reduceat(room_u, starts)
        at_least = room_u == np.repeat(least, np.diff(np.append(starts, len(u))))
        r, k = np.divmod(slot[starts], 4)
        nearest_room[r, k] = least
        nearest[r, k] = np.minimum.reduceat(np.where(at_least, o_u, len(all_t)), starts)
    # Per row and side, the room to grow and what bounds it (_LIMITS: a code, and the target's index for
    # a holder or an obstacle): the screen, its window, its scrolling ancestors, a holder, another
    # window, the nearest obstacle, each taking over where it is tighter, in that order.
    n = len(rows)
    here = obs[rows]
    lim = np.empty((n, 4))
    lim[:] = (0.0, 0.0, float(screen.width), float(screen.height))  # np.tile costs nearly four times more
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
        obs_list = obs.tolist()
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
    fits_all = fits.all(axis=1)
    grows = is_growing.tolist()

    def limit(c: int, q: int) -> Limit:
        return _EDGES[c] if c < 4 else new_row(Limit, (c, numbers[q], c == 5 and grows[q]))

    # No room: the tight axis's two limits, picked out for all such rows at once.
    s = np.flatnonzero(~fits_all)
    if len(s):
        ax = short_axis[s]
        for pos, box, a, missing, cl, ql, ch, qh in zip(rows[s].tolist(), here[s].tolist(), ax.tolist(), short[s].tolist(),
                                                         code[s, ax].tolist(), who[s, ax].tolist(),
                                                         code[s, ax + 2].tolist(), who[s, ax + 2].tolist()):
            out[pos] = (tuple(box), ("short", a, missing, limit(cl, ql), limit(ch, qh)))
    g = np.flatnonzero(fits_all)
    for i, pos, (hl, ht, hr, hb), (gl, gt, gr, gb), tight_i in zip(g.tolist(), rows[g].tolist(), here[g].tolist(),
                                                                   growth[g].tolist(), tight[g].tolist()):
        # A side whose growth used all its room, up to a neighbour: said, so a developer knows why it is uneven.
        limits = tuple((side, limit_name(limit(int(code[i, k]), int(who[i, k])))) for k, side in enumerate(SIDES)
                       if tight_i[k])
        out[pos] = ((hl - gl, ht - gt, hr + gr, hb + gb), ("limits", limits))
    return out


# What bounds a side of a growing target's room, by code (4: a holder, 5: the nearest obstacle, by number).
_LIMITS = ("the screen's edge", "its window's edge", "its scrolling container's edge", "another window's edge")
_EDGES = tuple(Limit(c) for c in range(len(_LIMITS)))


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
