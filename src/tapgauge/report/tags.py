"""Where each target's tag goes on an overlay: beside its box where there is room, else moved
aside with a leader line, never over another tag or any target, never past the picture's edge.

Pure geometry on numpy arrays (boxes in, tag rectangles out), so it is tested without drawing.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

Rect = tuple[float, float, float, float]  # left, top, right, bottom (right and bottom exclusive)
Point = tuple[float, float]


class TagSpot(NamedTuple):
    rect: Rect
    leader: tuple[Point, Point] | None  # tag end, box end; None when the tag sits beside its box


def _overlap_areas(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Overlap area of every rectangle in `a` (n, 4) with every one in `b` (m, 4): (n, m)."""
    w = np.minimum(a[:, None, 2], b[None, :, 2]) - np.maximum(a[:, None, 0], b[None, :, 0])
    h = np.minimum(a[:, None, 3], b[None, :, 3]) - np.maximum(a[:, None, 1], b[None, :, 1])
    return np.maximum(w, 0.0) * np.maximum(h, 0.0)  # (np.clip's wrapper costs more than the work here)


def _gaps(rects: np.ndarray, box: Rect) -> np.ndarray:
    """Distance from each rectangle (n, 4) to `box` (0 where they touch or overlap)."""
    dx = np.maximum(0.0, np.maximum(box[0] - rects[:, 2], rects[:, 0] - box[2]))
    dy = np.maximum(0.0, np.maximum(box[1] - rects[:, 3], rects[:, 1] - box[3]))
    return np.hypot(dx, dy)


def _nearest(a: np.ndarray, b: np.ndarray, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """On one axis, the closest pair of points between each [a, b] and [lo, hi]."""
    mid = (np.maximum(a, lo) + np.minimum(b, hi)) / 2
    near = np.where(b <= lo, b, np.where(a >= hi, a, mid))
    far = np.where(b <= lo, lo, np.where(a >= hi, hi, mid))
    return near, far


def _leaders(rects: np.ndarray, box: Rect) -> tuple[np.ndarray, np.ndarray]:
    """The shortest line from each rectangle's edge (n, 4) to the box's edge: start and end points (n, 2)."""
    tx, bx = _nearest(rects[:, 0], rects[:, 2], box[0], box[2])
    ty, by = _nearest(rects[:, 1], rects[:, 3], box[1], box[3])
    return np.column_stack([tx, ty]), np.column_stack([bx, by])


def leader_line(tag: Rect, box: Rect) -> tuple[Point, Point]:
    """The shortest straight line from a tag's edge to its box's edge."""
    a, b = _leaders(np.array([tag], dtype=float), box)
    return (float(a[0, 0]), float(a[0, 1])), (float(b[0, 0]), float(b[0, 1]))


def _crossings(p0: np.ndarray, p1: np.ndarray, rects: np.ndarray) -> np.ndarray:
    """Whether each segment p0->p1 (n, 2) passes through the inside of each rectangle (m, 4): (n, m).
    Liang and Barsky's clipping: the part of the segment inside is t in [t0, t1]."""
    if not len(p0) or not len(rects):
        return np.zeros((len(p0), len(rects)), dtype=bool)
    d = (p1 - p0)[:, None, :]
    o = p0[:, None, :]
    lo, hi = rects[None, :, :2], rects[None, :, 2:]
    with np.errstate(divide="ignore", invalid="ignore"):
        ta, tb = (lo - o) / d, (hi - o) / d
    enter = np.where(d == 0, np.where((o > lo) & (o < hi), -np.inf, np.inf), np.minimum(ta, tb))
    leave = np.where(d == 0, np.where((o > lo) & (o < hi), np.inf, -np.inf), np.maximum(ta, tb))
    t0 = np.maximum(enter.max(axis=2), 0.0)
    t1 = np.minimum(leave.min(axis=2), 1.0)
    return t1 - t0 > 1e-9


def _segments_cross(p0: np.ndarray, p1: np.ndarray, lines: np.ndarray) -> np.ndarray:
    """Whether each segment p0->p1 (n, 2) properly crosses each line (m, 4: x0, y0, x1, y1): (n, m)."""
    if not len(p0) or not len(lines):
        return np.zeros((len(p0), len(lines)), dtype=bool)
    q0, q1 = lines[None, :, :2], lines[None, :, 2:]
    a, b = p0[:, None, :], p1[:, None, :]

    def side(o: np.ndarray, u: np.ndarray, v: np.ndarray) -> np.ndarray:
        return np.sign((u[..., 0] - o[..., 0]) * (v[..., 1] - o[..., 1])
                       - (u[..., 1] - o[..., 1]) * (v[..., 0] - o[..., 0]))

    return (side(a, b, q0) * side(a, b, q1) < 0) & (side(q0, q1, a) * side(q0, q1, b) < 0)


def place_tags(boxes: Sequence[Rect], sizes: Sequence[tuple[float, float]], area: tuple[float, float],
               gap: float = 2.0, clear: float = 0.0) -> list[TagSpot]:
    """Where each box's tag goes, boxes taken in the order given (put the most telling first).

    A tag of sizes[i] (width, height) goes just above, below, left or right of boxes[i]
    where that spot covers no target's box (each grown by `clear`, the marks' reach), no tag
    placed before it (kept `gap` apart) and no leader line drawn before it. Else it goes to the
    nearest such spot within 8 tag heights, with a leader line from tag to box that, where it
    can, crosses no tag, no earlier leader and no other box; a box four times the tag's size
    may instead hold its tag in its own right-hand corner. Only when nothing near is free of
    tags and boxes is the whole picture searched. Every tag lies inside `area` (width, height).
    A box that holds another (a row round its buttons) is no obstacle to the inner box's tag.
    """
    width, height = area
    obstacles = np.array([(l - clear, t - clear, r + clear, b + clear) for l, t, r, b in boxes],
                         dtype=float).reshape(-1, 4)
    # Tags and leaders placed so far, as plain numbers: most tags end beside their box, found
    # without arrays; the arrays are made only for a tag that needs them.
    obstacle_list = [tuple(float(v) for v in row) for row in obstacles.tolist()]
    placed_list: list[Rect] = []
    line_list: list[tuple[float, float, float, float]] = []  # leaders drawn so far: x0, y0, x1, y1
    spots: list[TagSpot] = []
    for i, (box, (tw, th)) in enumerate(zip(boxes, sizes)):
        tw, th = min(tw, width), min(th, height)
        l, t, r, b = box
        g = gap + clear
        beside = [(l, t - g - th), (r - tw, t - g - th), (l, b + g), (r - tw, b + g),
                  (l - g - tw, t), (r + g, t), (l - g - tw, b - th), (r + g, b - th)]
        free = _free_beside(box, beside, tw, th, g, gap, area, obstacle_list, i, placed_list, line_list)
        if isinstance(free, tuple):  # what _Look.best would choose among `beside`, found without arrays
            spots.append(TagSpot(free, None))
            placed_list.append(free)
            continue
        # A box holding this one (a list row round its buttons) is no obstacle: the tag may sit on
        # it, beside its own box, as the box itself does.
        holds = ((obstacles[:, 0] <= l) & (obstacles[:, 1] <= t) & (obstacles[:, 2] >= r) & (obstacles[:, 3] >= b))
        holds[i] = True
        others = obstacles[~holds]
        # Inside its own box's right-hand corners: the last resort before covering or crossing
        # another box, for a box four times the tag or more (rows stacked edge to edge); a row's
        # words mostly start on the left.
        roomy = 4 * tw * th <= (r - l) * (b - t) and tw + 2 * g <= r - l and th + 2 * g <= b - t
        inside = [(r - g - tw, t + g), (r - g - tw, b - g - th), (l + g, t + g), (l + g, b - g - th)] if roomy else []
        placed = np.array(placed_list, dtype=float).reshape(-1, 4)
        lines = np.array(line_list, dtype=float).reshape(-1, 4)
        look = _Look(box, tw, th, g, obstacles[i], others, placed, lines, gap, area, roomy)
        if free is _BUSY:
            # Every spot beside the box covers something: the nearest free spot around it. Where that
            # one covers and crosses nothing, nor its own box, it beats all of them (their costs are
            # not all zero in the first seven places, its are), so they need not be judged.
            corners, columns = _grid(box, tw, th, 8 * th, max(th / 2, 1.0))
            best = look.best(corners, rank=1, columns=columns)
            if best.cost[:7] != (0,) * 7:
                best = min(best, look.best(np.array(beside, dtype=float)))
        else:
            best = look.best(np.array(beside, dtype=float))
            if best.cost[:7] != (0,) * 7:  # not beside the box: the nearest free spot around it
                corners, columns = _grid(box, tw, th, 8 * th, max(th / 2, 1.0))
                best = min(best, look.best(corners, rank=1, columns=columns))
        if inside and best.cost[:7] != (0,) * 7:  # (before a spot pushed inside by the picture's edge)
            best = min(best, look.best(np.array(inside, dtype=float), rank=-1))
        if best.cost[:3] != (0,) * 3:  # every spot near covers a tag or a box: anywhere in the picture
            whole = (0.0, 0.0, float(width), float(height))
            corners, columns = _grid(whole, tw, th, 0.0, max(th / 2, 1.0))
            best = min(best, look.best(corners, rank=1, columns=columns))
        spots.append(TagSpot(best.rect, best.leader))
        placed_list.append(best.rect)
        if best.leader:
            line_list.append((*best.leader[0], *best.leader[1]))
    return spots


def _free_beside(box: Rect, corners: list[Point], tw: float, th: float, g: float, gap: float,
                 area: tuple[float, float], obstacles: list[Rect], own: int, placed: list[Rect],
                 lines: list[tuple[float, float, float, float]]) -> Rect | _Busy | None:
    """The spot `_Look.best` chooses among `corners` when one of them costs nothing (covers no tag,
    leader, box or its own box, and sits by its box with no leader): the nearest such, the first
    listed of equals. Else `_BUSY` when every spot was looked at and none is free (each costs
    something in `_Spot.cost`'s first seven places), or None when a spot that needs a leader came
    first: then the arrays decide.

    The same sums in the same floating point as `_Look.best`, one spot at a time, nearest first, so
    the usual tag (free beside its box) costs a few comparisons instead of some forty array steps.
    """
    l, t, r, b = (float(v) for v in box)
    xmax, ymax = max(0.0, area[0] - tw), max(0.0, area[1] - th)
    spots = []
    for k, (cx, cy) in enumerate(corners):
        x, y = min(max(float(cx), 0.0), xmax), min(max(float(cy), 0.0), ymax)
        rect = (x, y, x + tw, y + th)
        dx = max(0.0, max(l - rect[2], rect[0] - r))
        dy = max(0.0, max(t - rect[3], rect[1] - b))
        # hypot(x, 0) is |x| exactly (C99 F.9.4.3); a corner gap goes through numpy's, as _gaps does.
        dist = dx if dy == 0.0 else dy if dx == 0.0 else float(np.hypot(dx, dy))
        spots.append((dist, k, rect))
    spots.sort()
    # Only what reaches into the spots' window (grown by the gap) can be covered by one of them.
    x0 = min(s[2][0] for s in spots) - gap
    y0 = min(s[2][1] for s in spots) - gap
    x1 = max(s[2][2] for s in spots) + gap
    y1 = max(s[2][3] for s in spots) + gap
    near = [(k, o) for k, o in enumerate(obstacles) if o[0] < x1 and o[2] > x0 and o[1] < y1 and o[3] > y0]
    # Boxes holding this one are no obstacle (as in place_tags); its own box is one.
    boxes = [o for k, o in near if k == own or not (o[0] <= l and o[1] <= t and o[2] >= r and o[3] >= b)]
    tags = [p for p in placed if p[0] < x1 and p[2] > x0 and p[1] < y1 and p[3] > y0]
    for dist, _, rect in spots:
        if dist > g + 0.5:  # it needs a leader: leave it to the arrays
            return None
        if any(_overlaps(rect, o) for o in boxes):
            continue
        grown = (rect[0] - gap, rect[1] - gap, rect[2] + gap, rect[3] + gap)
        if any(_overlaps(grown, p) for p in tags) or any(_crosses(seg, grown) for seg in lines):
            continue
        return rect
    return _BUSY


class _Busy:
    """_free_beside's answer when every spot beside the box covers something."""


_BUSY = _Busy()


def _overlaps(a: Rect, b: Rect) -> bool:
    """Whether `_overlap_areas` gives the two rectangles an area above zero."""
    return min(a[2], b[2]) - max(a[0], b[0]) > 0.0 and min(a[3], b[3]) - max(a[1], b[1]) > 0.0


def _crosses(seg: tuple[float, float, float, float], rect: Rect) -> bool:
    """`_crossings` for one segment and one rectangle, in the same steps."""
    t0, t1 = 0.0, 1.0
    for o, d, lo, hi in ((seg[0], seg[2] - seg[0], rect[0], rect[2]), (seg[1], seg[3] - seg[1], rect[1], rect[3])):
        if d == 0:
            inside = lo < o < hi
            enter, leave = (-math.inf, math.inf) if inside else (math.inf, -math.inf)
        else:
            ta, tb = (lo - o) / d, (hi - o) / d
            enter, leave = min(ta, tb), max(ta, tb)
        t0, t1 = max(t0, enter), min(t1, leave)
    return t1 - t0 > 1e-9


class _Spot(NamedTuple):
    # other tags' area covered, other boxes' area covered, its own box's area covered unless the
    # box is roomy, tags crossed (this tag over an earlier leader, its leader through an earlier
    # tag), earlier leaders its leader crosses, other boxes its leader crosses, its own box's
    # area covered, distance from the box, then the kind of spot: inside the own box's corners
    # (-1), listed beside it (0), searched for (1)
    cost: tuple[float, ...]
    rect: Rect
    leader: tuple[Point, Point] | None


@dataclass(frozen=True)
class _Look:
    """What one tag's spots are judged against."""

    box: Rect
    tw: float
    th: float
    g: float  # a tag this close to its box needs no leader
    own: np.ndarray  # this tag's box, grown by the marks' reach
    others: np.ndarray  # every other box, grown alike
    placed: np.ndarray
    lines: np.ndarray
    gap: float
    area: tuple[float, float]
    roomy: bool  # a tag may cover a corner of its own box, rather than lead across another

    def best(self, corners: np.ndarray, rank: int = 0, columns: int = 0) -> _Spot:
        """The best of `corners` (top-left points, clamped into the picture), by `_Spot.cost`. With
        `columns`, the corners are a grid of that many columns, row by row (as `_grid` makes them)."""
        x = np.minimum(np.maximum(corners[:, 0], 0.0), max(0.0, self.area[0] - self.tw))
        y = np.minimum(np.maximum(corners[:, 1], 0.0), max(0.0, self.area[1] - self.th))
        rects = np.column_stack([x, y, x + self.tw, y + self.th])
        n = len(rects)
        grown = rects + np.array([-self.gap, -self.gap, self.gap, self.gap])
        # Only what lies in the window of these spots and their box can touch them or their
        # leaders (which run from spot to box): the rest is left out, so a dense screen stays quick.
        window = (min(rects[:, 0].min(), self.box[0]) - self.gap, min(rects[:, 1].min(), self.box[1]) - self.gap,
                  max(rects[:, 2].max(), self.box[2]) + self.gap, max(rects[:, 3].max(), self.box[3]) + self.gap)
        wide = (window[0] - self.gap, window[1] - self.gap, window[2] + self.gap, window[3] + self.gap)
        placed = _near(self.placed, wide)  # tags are judged grown by the gap
        others, seg = _near(self.others, window), _near_lines(self.lines, window)
        # The costs are compared in order (as a lexicographic sort would), each worked out only for
        # the spots that tie on every cost before it: most spots drop out at the first, cheap ones.
        keep = np.arange(n)
        least: list[float] = []

        def narrow(values: np.ndarray) -> np.ndarray:
            nonlocal keep
            low = values.min()
            least.append(float(low))
            tied = values == low
            keep = keep[tied]
            return tied

        if columns and len(placed) and (free := ~_touching(x[:columns], y[::columns], self.tw, self.th, self.gap,
                                                           placed).ravel()).any():
            narrow(~free)  # the same tie as the areas' sums: exactly the spots covering nothing
        else:
            narrow(_overlap_areas(grown, placed).sum(axis=1) if len(placed) else np.zeros(n))  # other tags covered
        if columns and len(others) and (free := ~_touching(x[:columns], y[::columns], self.tw, self.th, 0.0,
                                                           others).ravel()[keep]).any():
            narrow(~free)
        else:
            narrow(_overlap_areas(rects[keep], others).sum(axis=1) if len(others) else np.zeros(len(keep)))  # boxes
        on_own = _overlap_areas(rects[keep], self.own[None, :])[:, 0]
        on_own = on_own[narrow(on_own * (not self.roomy))]
        dist = _gaps(rects[keep], self.box)
        if len(keep) > _NEAREST and (clear := self._clear_first(rects[keep], grown[keep], on_own, dist, placed,
                                                                   others, seg)) is not None:
            k, leader = clear
            least += [0.0, 0.0, 0.0, float(on_own[k]), float(dist[k])]
            return _Spot((*least, rank), tuple(float(v) for v in rects[keep[k]]), leader)  # type: ignore[arg-type]
        moved = dist > self.g + 0.5  # set away from its box: it needs a leader
        a, z = _leaders(rects[keep], self.box)
        # A tag over an earlier leader hides it; a leader through an earlier tag is lost under it.
        over_lines = (_crossings(seg[:, :2], seg[:, 2:], grown[keep]).sum(axis=0) if len(seg)
                      else np.zeros(len(keep)))
        tied = narrow(over_lines + _led(moved, a, z, lambda p, q: _crossings(p, q, _grown(placed, self.gap))))
        for cost in (lambda p, q: _segments_cross(p, q, seg), lambda p, q: _crossings(p, q, others)):
            on_own, dist, moved, a, z = on_own[tied], dist[tied], moved[tied], a[tied], z[tied]
            tied = narrow(_led(moved, a, z, cost))  # earlier leaders, then other boxes, its leader crosses
        on_own, dist, moved, a, z = on_own[tied], dist[tied], moved[tied], a[tied], z[tied]
        tied = narrow(on_own)
        dist, moved, a, z = dist[tied], moved[tied], a[tied], z[tied]
        tied = narrow(dist)
        moved, a, z = moved[tied], a[tied], z[tied]
        rect = tuple(float(v) for v in rects[keep[0]])  # ties go to the spot listed first
        leader = ((float(a[0, 0]), float(a[0, 1])), (float(z[0, 0]), float(z[0, 1]))) if moved[0] else None
        return _Spot((*least, rank), rect, leader)  # type: ignore[arg-type]

    def _clear_first(self, rects: np.ndarray, grown: np.ndarray, on_own: np.ndarray, dist: np.ndarray,
                     placed: np.ndarray, others: np.ndarray, seg: np.ndarray) -> tuple[int, tuple[Point, Point] | None] | None:
        """The costs left after the areas are what a spot's leader crosses, then its own box's area
        covered, then its distance. A spot whose tag and leader cross nothing beats every spot that
        crosses something, so the first such spot in order of (own box covered, distance, listed
        order) is the best of all: look for it among the `_NEAREST` first in that order, and give
        its place among `rects` and its leader; None when none of them is clear (then every spot is
        judged). Each cost is worked out in the same steps as in `best`, on fewer spots."""
        first = np.lexsort((np.arange(len(rects)), dist, on_own))[:_NEAREST]
        rects, moved = rects[first], dist[first] > self.g + 0.5
        a, z = _leaders(rects, self.box)
        crossed = _led(moved, a, z, lambda p, q: _crossings(p, q, _grown(placed, self.gap)))
        if len(seg):
            crossed += _crossings(seg[:, :2], seg[:, 2:], grown[first]).sum(axis=0)
        crossed += _led(moved, a, z, lambda p, q: _segments_cross(p, q, seg))
        crossed += _led(moved, a, z, lambda p, q: _crossings(p, q, others))
        clear = np.flatnonzero(crossed == 0)
        if not len(clear):
            return None
        k = clear[0]
        leader = ((float(a[k, 0]), float(a[k, 1])), (float(z[k, 0]), float(z[k, 1]))) if moved[k] else None
        return int(first[k]), leader


_NEAREST = 16  # spots looked at first for one that crosses nothing (any number gives the same choice)


def _led(moved: np.ndarray, a: np.ndarray, z: np.ndarray,
         crossed: Callable[[np.ndarray, np.ndarray], np.ndarray]) -> np.ndarray:
    """How many things each spot's leader (a -> z) crosses, counted only for spots set away from their box."""
    out = np.zeros(len(moved))
    if moved.any():
        out[moved] = crossed(a[moved], z[moved]).sum(axis=1)
    return out


def _near(rects: np.ndarray, window: Rect) -> np.ndarray:
    """The rectangles (m, 4) that reach into `window`."""
    if not len(rects):
        return rects
    l, t, r, b = window
    return rects[(rects[:, 0] < r) & (rects[:, 2] > l) & (rects[:, 1] < b) & (rects[:, 3] > t)]


def _near_lines(lines: np.ndarray, window: Rect) -> np.ndarray:
    """The segments (m, 4: x0, y0, x1, y1) whose bounding boxes reach into `window`."""
    if not len(lines):
        return lines
    box = np.column_stack([np.minimum(lines[:, 0], lines[:, 2]), np.minimum(lines[:, 1], lines[:, 3]),
                           np.maximum(lines[:, 0], lines[:, 2]), np.maximum(lines[:, 1], lines[:, 3])])
    l, t, r, b = window
    return lines[(box[:, 0] <= r) & (box[:, 2] >= l) & (box[:, 1] <= b) & (box[:, 3] >= t)]


def _grown(placed: np.ndarray, gap: float) -> np.ndarray:
    return placed + np.array([-gap, -gap, gap, gap]) if len(placed) else placed


def _touching(xs: np.ndarray, ys: np.ndarray, tw: float, th: float, grow: float, rects: np.ndarray) -> np.ndarray:
    """For a grid of tags (top-left corners xs across, ys down; each grown by `grow`), whether each
    covers any of `rects` (m, 4) by an area above zero: (len(ys), len(xs)).

    An overlap has an area exactly when it has a width and a height, and on a grid the width
    depends on the column alone and the height on the row: two small tables and one product of
    counts instead of an area for every spot and rectangle. The sides are worked out in the same
    steps as `_overlap_areas` on grown spots, so the answers are the same."""
    across = (np.minimum((xs + tw)[:, None] + grow, rects[None, :, 2])
              - np.maximum((xs - grow)[:, None], rects[None, :, 0])) > 0.0
    down = (np.minimum((ys + th)[:, None] + grow, rects[None, :, 3])
            - np.maximum((ys - grow)[:, None], rects[None, :, 1])) > 0.0
    return down.astype(np.int32) @ across.T.astype(np.int32) > 0


def _grid(box: Rect, tw: float, th: float, reach: float, step: float) -> tuple[np.ndarray, int]:
    """Top-left corners on a grid around `box`, row by row, and how many columns the grid has."""
    xs = np.arange(box[0] - reach - tw, box[2] + reach + step / 2, step)
    ys = np.arange(box[1] - reach - th, box[3] + reach + step / 2, step)
    gx, gy = np.meshgrid(xs, ys)
    return np.column_stack([gx.ravel(), gy.ravel()]), len(xs)
