"""Pure geometry on numpy arrays of boxes.

A box array has shape (n, 4): left, top, right, bottom, with right/bottom exclusive
(so width = right - left). Nothing here does I/O or knows about rules; callers scale
boxes into the unit they care about (dp, pt, mm) before asking.

The pair search is a uniform-grid broad phase, so spacing and overlap work on
thousands of targets without building an n x n matrix.
"""

from __future__ import annotations

import bisect
import functools

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

# Comparisons of lengths in dp/pt/mm allow this much rounding noise, so circles
# whose centres are exactly one diameter apart count as touching (WCAG: they pass).
EPS = 1e-7
# Up to SMALL boxes, testing every pair costs less than building the grid (measured on 50-target screens);
# up to SWEEP, sorting by top edge and pairing the boxes whose rows overlap does (bench corpora of 100 and
# 300 targets); beyond, on dense screens, the grid is fastest.
SMALL = 64
SWEEP = 200


def as_boxes(boxes: object) -> FloatArray:
    arr = np.asarray(boxes, dtype=np.float64)
    if arr.size == 0:
        return arr.reshape(0, 4)
    if arr.ndim != 2 or arr.shape[1] != 4:
        raise ValueError(f"boxes must have shape (n, 4), got {arr.shape}")
    return arr


def scale_boxes(boxes: FloatArray, sx: float, sy: float) -> FloatArray:
    """Boxes in pixels to boxes in a unit with sx, sy units per pixel."""
    return boxes * np.array([sx, sy, sx, sy])


def sizes(boxes: FloatArray) -> tuple[FloatArray, FloatArray]:
    return boxes[:, 2] - boxes[:, 0], boxes[:, 3] - boxes[:, 1]


def centres(boxes: FloatArray) -> FloatArray:
    return np.column_stack(((boxes[:, 0] + boxes[:, 2]) / 2, (boxes[:, 1] + boxes[:, 3]) / 2))


Pairs = tuple[IntArray, IntArray]


def candidate_pairs(boxes: FloatArray, reach: float, among: Pairs | None = None) -> Pairs:
    """All pairs (i < j) whose boxes are no more than `reach` apart along each axis, in (i, j) order.

    A superset of the pairs within Euclidean distance `reach`, found by hashing each
    box (grown by reach/2 on every side) into a uniform grid and pairing the boxes
    that share a cell. Touching counts as within reach. With `among` (a superset, as an
    earlier search at a wider reach gives), the pairs are picked from it instead: the same
    pairs in the same order, for a few array operations rather than a search.
    """
    boxes = as_boxes(boxes)
    n = len(boxes)
    empty = np.empty(0, dtype=np.intp)
    if n < 2:
        return empty, empty
    half = max(float(reach), 0.0) / 2
    grown = boxes + np.array([-half, -half, half, half])
    if among is not None:
        return _overlapping(grown, *among)
    if n <= SMALL:
        return _overlapping(grown, *_all_pairs(n))
    if n <= SWEEP:
        return _overlapping(grown, *_sweep(grown))
    extent = np.maximum(grown[:, 2] - grown[:, 0], grown[:, 3] - grown[:, 1])
    # The middle extent as the cell (any cell finds every pair; this one keeps cells few and short).
    # np.partition, not np.median: the median costs ten times more here and imports numpy.ma at first use.
    cell = max(float(np.partition(extent, n // 2)[n // 2]), 1e-6)
    g = np.floor(grown / cell).astype(np.int64)
    nx = g[:, 2] - g[:, 0] + 1
    ny = g[:, 3] - g[:, 1] + 1
    counts = nx * ny
    owner = np.repeat(np.arange(n), counts)
    k = np.arange(int(counts.sum())) - np.repeat(np.cumsum(counts) - counts, counts)
    cx = g[owner, 0] + k % nx[owner]
    cy = g[owner, 1] + k // nx[owner]
    order = np.lexsort((owner, cy, cx))
    owner, cx, cy = owner[order], cx[order], cy[order]
    new_group = np.ones(len(owner), dtype=bool)
    new_group[1:] = (cx[1:] != cx[:-1]) | (cy[1:] != cy[:-1])
    starts = np.flatnonzero(new_group)
    ends = np.append(starts[1:], len(owner))
    group_end = np.repeat(ends, ends - starts)
    later = group_end - np.arange(len(owner)) - 1  # entries after this one in its cell
    if not later.any():
        return empty, empty
    first, second = _each_with_the_next(later)
    a, b = owner[first], owner[second]
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    keys = np.sort(lo.astype(np.int64) * n + hi)  # sort + diff: faster here than np.unique
    keys = keys[np.concatenate(([True], keys[1:] != keys[:-1]))]
    i, j = (keys // n).astype(np.intp), (keys % n).astype(np.intp)
    return _overlapping(grown, i, j)


def _sweep(grown: FloatArray) -> Pairs:
    """Pairs (i < j) whose boxes overlap top to bottom, in (i, j) order: sorted by top edge, each box
    pairs with the later ones whose top is not below its bottom (each pair once, from its upper box)."""
    n = len(grown)
    order = np.argsort(grown[:, 1], kind="stable")
    ends = np.searchsorted(grown[order, 1], grown[order, 3], side="right")
    first, second = _each_with_the_next(ends - np.arange(1, n + 1))
    a, b = order[first], order[second]
    keys = np.sort(np.minimum(a, b).astype(np.int64) * n + np.maximum(a, b))
    return (keys // n).astype(np.intp), (keys % n).astype(np.intp)


def _each_with_the_next(counts: IntArray) -> Pairs:
    """Each position p paired with the `counts[p]` positions right after it: (p, p + 1) ... (p, p + counts[p])."""
    first = np.repeat(np.arange(len(counts)), counts)
    return first, first + np.arange(len(first)) - np.repeat(np.cumsum(counts) - counts, counts) + 1


@functools.lru_cache(maxsize=SMALL + 1)
def _all_pairs(n: int) -> Pairs:
    """Every pair (i < j) of n boxes, made once per n (read-only: callers index with them)."""
    i, j = np.triu_indices(n, 1)
    i.flags.writeable = j.flags.writeable = False
    return i, j


def _overlapping(grown: FloatArray, i: IntArray, j: IntArray) -> tuple[IntArray, IntArray]:
    a, b = grown[i], grown[j]  # two gathers of whole rows: cheaper than eight of single columns
    keep = (a[:, 0] <= b[:, 2]) & (b[:, 0] <= a[:, 2]) & (a[:, 1] <= b[:, 3]) & (b[:, 1] <= a[:, 3])
    return i[keep], j[keep]


def rect_gaps(a: FloatArray, b: FloatArray) -> FloatArray:
    """Euclidean edge-to-edge distance between paired boxes (0 where they meet or overlap)."""
    dx = np.maximum(0.0, np.maximum(a[:, 0] - b[:, 2], b[:, 0] - a[:, 2]))
    dy = np.maximum(0.0, np.maximum(a[:, 1] - b[:, 3], b[:, 1] - a[:, 3]))
    return np.hypot(dx, dy)


def intersection_areas(a: FloatArray, b: FloatArray) -> FloatArray:
    w = np.minimum(a[:, 2], b[:, 2]) - np.maximum(a[:, 0], b[:, 0])
    h = np.minimum(a[:, 3], b[:, 3]) - np.maximum(a[:, 1], b[:, 1])
    return np.where((w > 0) & (h > 0), w * h, 0.0)


def contains(a: FloatArray, b: FloatArray) -> NDArray[np.bool_]:
    """Whether each box in a contains its paired box in b (edges may coincide)."""
    return (a[:, 0] <= b[:, 0]) & (a[:, 1] <= b[:, 1]) & (a[:, 2] >= b[:, 2]) & (a[:, 3] >= b[:, 3])


def point_rect_distances(points: FloatArray, rects: FloatArray) -> FloatArray:
    """Distance from each point to its paired rectangle (0 inside)."""
    dx = np.maximum(0.0, np.maximum(rects[:, 0] - points[:, 0], points[:, 0] - rects[:, 2]))
    dy = np.maximum(0.0, np.maximum(rects[:, 1] - points[:, 1], points[:, 1] - rects[:, 3]))
    return np.hypot(dx, dy)


def spacing_conflicts(boxes: FloatArray, undersized: NDArray[np.bool_], diameter: float,
                      among: Pairs | None = None) -> IntArray:
    """The WCAG 2.2 spacing test for undersized targets.

    A circle of `diameter`, centred on each undersized target's bounding box, must not
    intersect any other target nor the circle of another undersized target. Touching
    is not intersecting. Returns, per box, the index of one box it conflicts with
    (the nearest), or -1 when it has none or is not undersized. `among`: as in candidate_pairs.
    """
    boxes = as_boxes(boxes)
    n = len(boxes)
    result = np.full(n, -1, dtype=np.intp)
    if n < 2 or not undersized.any():
        return result
    r = diameter / 2
    c = centres(boxes)
    i, j = candidate_pairs(boxes, diameter, among)
    both = np.concatenate((i, j)), np.concatenate((j, i))  # each pair from both sides
    me, other = both
    mine = undersized[me]
    me, other = me[mine], other[mine]
    d_rect = point_rect_distances(c[me], boxes[other])
    d_centres = np.hypot(*(c[me] - c[other]).T)
    hit_rect = d_rect < r - EPS
    hit_circle = undersized[other] & (d_centres < diameter - EPS)
    hit = hit_rect | hit_circle
    # Report the nearest offender: smallest of the two distances, normalised by what it must exceed.
    slack = np.minimum(np.where(hit_rect, d_rect / r, np.inf), np.where(hit_circle, d_centres / diameter, np.inf))
    me, other, slack = me[hit], other[hit], slack[hit]
    order = np.lexsort((other, slack, me))
    me, other = me[order], other[order]
    firsts = np.ones(len(me), dtype=bool)
    firsts[1:] = me[1:] != me[:-1]
    result[me[firsts]] = other[firsts]
    return result


def nearest_gaps(boxes: FloatArray, reach: float, among: Pairs | None = None) -> tuple[FloatArray, IntArray]:
    """Per box, the smallest edge-to-edge gap to another box within `reach`, and that box.

    Boxes nested inside one another are not neighbours (the overlap rule handles
    them). Boxes with no neighbour within reach get +inf and -1. `among`: as in candidate_pairs.
    """
    boxes = as_boxes(boxes)
    n = len(boxes)
    best = np.full(n, np.inf)
    who = np.full(n, -1, dtype=np.intp)
    i, j = candidate_pairs(boxes, reach, among)
    if len(i) == 0:
        return best, who
    nested = contains(boxes[i], boxes[j]) | contains(boxes[j], boxes[i])
    i, j = i[~nested], j[~nested]
    gaps = rect_gaps(boxes[i], boxes[j])
    me = np.concatenate((i, j))
    other = np.concatenate((j, i))
    g = np.concatenate((gaps, gaps))
    order = np.lexsort((other, g, me))
    me, other, g = me[order], other[order], g[order]
    firsts = np.ones(len(me), dtype=bool)
    firsts[1:] = me[1:] != me[:-1]
    best[me[firsts]] = g[firsts]
    who[me[firsts]] = other[firsts]
    return best, who


def covering_pairs(boxes: FloatArray, paint_rank: NDArray[np.int64]) -> tuple[IntArray, IntArray]:
    """Pairs (under, over): boxes that overlap with positive area, `over` drawn later."""
    boxes = as_boxes(boxes)
    i, j = candidate_pairs(boxes, 0.0)
    if len(i) == 0:
        return i, j
    overlap = intersection_areas(boxes[i], boxes[j]) > 0
    i, j = i[overlap], j[overlap]
    j_on_top = paint_rank[j] > paint_rank[i]
    return np.where(j_on_top, i, j), np.where(j_on_top, j, i)


def one_cover_squares(boxes: FloatArray, covers: FloatArray) -> FloatArray:
    """largest_free_square for many boxes at once, each with exactly one overlapping cover.

    A box minus one rectangle leaves (at most) four maximal strips: left, right, above
    and below the cover; the largest square is the best of them.
    """
    w, h = sizes(boxes)
    left = np.minimum(np.clip(covers[:, 0] - boxes[:, 0], 0, None), h)
    right = np.minimum(np.clip(boxes[:, 2] - covers[:, 2], 0, None), h)
    above = np.minimum(np.clip(covers[:, 1] - boxes[:, 1], 0, None), w)
    below = np.minimum(np.clip(boxes[:, 3] - covers[:, 3], 0, None), w)
    return np.maximum.reduce([left, right, above, below])


def largest_free_square(box: FloatArray, covers: FloatArray) -> tuple[float, FloatArray]:
    """Side and placement of the largest axis-aligned square inside `box` minus `covers`.

    Every free square lies inside some maximal empty rectangle, whose edges are box or
    cover edges; so searching the rectangles of the compressed grid those edges make
    is exact. Returns (side, square as [l, t, r, b]). In plain Python numbers: a target has
    a handful of covers, where numpy's cost per call outweighs the arithmetic.
    """
    l, t, r, b = (float(v) for v in box)
    if r - l <= 0 or b - t <= 0:
        return 0.0, np.array([l, t, l, t])
    clipped = []
    for cl, ct, cr, cb in as_boxes(covers).tolist():
        cl, ct, cr, cb = min(max(cl, l), r), min(max(ct, t), b), min(max(cr, l), r), min(max(cb, t), b)
        if cr > cl and cb > ct:
            clipped.append((cl, ct, cr, cb))
    if not clipped:
        side = min(r - l, b - t)
        return side, np.array([l, t, l + side, t + side])
    xs = sorted({l, r, *(c[0] for c in clipped), *(c[2] for c in clipped)})
    ys = sorted({t, b, *(c[1] for c in clipped), *(c[3] for c in clipped)})
    nx, ny = len(xs) - 1, len(ys) - 1
    free = [[True] * nx for _ in range(ny)]  # free[row][column] of the compressed grid
    for cl, ct, cr, cb in clipped:
        x0, x1 = bisect.bisect_left(xs, cl), bisect.bisect_left(xs, cr)
        for y in range(bisect.bisect_left(ys, ct), bisect.bisect_left(ys, cb)):
            free[y][x0:x1] = [False] * (x1 - x0)
    columns = list(zip(*free))
    heights = [ys[k + 1] - ys[k] for k in range(ny)]
    best, where = 0.0, (l, t, l, t)
    for a in range(nx):
        open_rows = [True] * ny
        for c in range(a, nx):
            open_rows = [o and f for o, f in zip(open_rows, columns[c])]
            if not any(open_rows):
                break
            width = xs[c + 1] - xs[a]
            if width <= best:
                continue
            run, run_top = 0.0, 0
            for row in range(ny):
                if open_rows[row]:
                    if run == 0.0:
                        run_top = row
                    run += heights[row]
                    side = min(width, run)
                    if side > best:
                        best = side
                        where = (xs[a], ys[run_top], xs[a] + side, ys[run_top] + side)
                else:
                    run = 0.0
    return best, np.array(where)
