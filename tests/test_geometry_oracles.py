"""Our geometry against independent oracles over random layouts.

Oracles: shapely (a general-purpose geometry library, used only in tests) for
distances, circles and areas; a plain pixel bitmap with the classic
largest-square dynamic programme for the overlap test.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from shapely.geometry import Point, box
from shapely.ops import unary_union

from tapgauge.geometry import (
    SMALL,
    SWEEP,
    candidate_pairs,
    covering_pairs,
    largest_free_square,
    nearest_gaps,
    one_cover_squares,
    spacing_conflicts,
)

coord = st.integers(min_value=0, max_value=120)
size = st.integers(min_value=1, max_value=40)


@st.composite
def layouts(draw: st.DrawFn, max_boxes: int = 12, min_boxes: int = 2) -> np.ndarray:
    n = draw(st.integers(min_value=min_boxes, max_value=max_boxes))
    rows = []
    for _ in range(n):
        x, y, w, h = draw(coord), draw(coord), draw(size), draw(size)
        rows.append((x, y, x + w, y + h))
    return np.array(rows, dtype=float)


@settings(max_examples=200, deadline=None)
@given(layouts(), st.integers(min_value=0, max_value=30))
def test_candidate_pairs_find_every_pair_within_reach(boxes: np.ndarray, reach: int) -> None:
    # Oracle: shapely's rectangle-to-rectangle distance, every pair checked.
    i, j = candidate_pairs(boxes, reach)
    found = set(zip(i.tolist(), j.tolist()))
    polys = [box(*b) for b in boxes]
    for a in range(len(boxes)):
        for b in range(a + 1, len(boxes)):
            if polys[a].distance(polys[b]) <= reach - 1e-9:
                assert (a, b) in found


@settings(max_examples=150, deadline=None)
@given(layouts(max_boxes=140), st.integers(min_value=0, max_value=30), st.integers(min_value=0, max_value=30),
       st.sampled_from([(1.0, 1.0), (2.625, 2.625), (3.0, 3.0), (17.2, 16.9)]))
def test_pairs_picked_from_a_wider_search_match_a_search_of_their_own(
        boxes: np.ndarray, reach: int, wider: int, per: tuple[float, float]) -> None:
    """A screen's one pair search is made in coordinates as wide as its widest rule; each rule picks its pairs
    from it in its own unit (dp: the same scale both ways; mm: xdpi and ydpi differ). The pick must be the
    pairs a search of its own finds, in the same order, and those hold every pair shapely puts within reach."""
    kx, ky = per
    in_unit = boxes / np.array([kx, ky, kx, ky])
    among = candidate_pairs(boxes, (reach + wider) * max(kx, ky) * (1 + 1e-6) + 1e-6)
    own, picked = candidate_pairs(in_unit, reach), candidate_pairs(in_unit, reach, among)
    assert np.array_equal(own[0], picked[0]) and np.array_equal(own[1], picked[1])
    found = set(zip(picked[0].tolist(), picked[1].tolist()))
    polys = [box(*b) for b in in_unit]
    for a in range(len(in_unit)):
        for b in range(a + 1, len(in_unit)):
            if polys[a].distance(polys[b]) <= reach - 1e-9:
                assert (a, b) in found


@settings(max_examples=25, deadline=None)
@given(layouts(max_boxes=140, min_boxes=SMALL + 1), st.integers(min_value=0, max_value=30))
def test_sweep_broad_phase_matches_shapely_on_larger_screens(boxes: np.ndarray, reach: int) -> None:
    """Above SMALL boxes a sweep down the screen takes over from testing every pair: same oracle, and the
    pairs come once each in (i, j) order, as the rules that break ties by order expect."""
    _matches_shapely(boxes, reach)


@settings(max_examples=10, deadline=None)
@given(layouts(max_boxes=SWEEP + 40, min_boxes=SWEEP + 1), st.integers(min_value=0, max_value=30))
def test_grid_broad_phase_matches_shapely_on_crowded_screens(boxes: np.ndarray, reach: int) -> None:
    """Above SWEEP boxes the uniform grid takes over: same oracle."""
    _matches_shapely(boxes, reach)


def _matches_shapely(boxes: np.ndarray, reach: int) -> None:
    i, j = candidate_pairs(boxes, reach)
    pairs = list(zip(i.tolist(), j.tolist()))
    assert pairs == sorted(set(pairs)) and all(a < b for a, b in pairs)
    polys = [box(*b) for b in boxes]
    near = {(a, b) for a in range(len(boxes)) for b in range(a + 1, len(boxes))
            if polys[a].distance(polys[b]) <= reach - 1e-9}  # oracle: shapely distance
    assert near <= set(pairs)


@settings(max_examples=200, deadline=None)
@given(layouts(), st.integers(min_value=4, max_value=40))
def test_spacing_circles_match_shapely(boxes: np.ndarray, diameter: int) -> None:
    # Oracle: shapely distances from each undersized centre to every other box and centre.
    # WCAG 2.2 SC 2.5.8 (Understanding, "spacing"): intersecting fails, touching passes.
    w, h = boxes[:, 2] - boxes[:, 0], boxes[:, 3] - boxes[:, 1]
    under = np.minimum(w, h) < diameter
    got = spacing_conflicts(boxes, under, float(diameter))
    r = diameter / 2
    centres = [Point((b[0] + b[2]) / 2, (b[1] + b[3]) / 2) for b in boxes]
    polys = [box(*b) for b in boxes]
    for a in range(len(boxes)):
        hits = False
        if under[a]:
            for b in range(len(boxes)):
                if a == b:
                    continue
                d_rect = centres[a].distance(polys[b])
                d_circ = centres[a].distance(centres[b])
                assume(abs(d_rect - r) > 1e-6 and abs(d_circ - diameter) > 1e-6)  # no exact ties
                hits |= d_rect < r or (bool(under[b]) and d_circ < diameter)
        assert (got[a] >= 0) == hits


@settings(max_examples=200, deadline=None)
@given(layouts(), st.integers(min_value=0, max_value=30))
def test_nearest_gaps_match_shapely(boxes: np.ndarray, reach: int) -> None:
    # Oracle: shapely distance; nested boxes are not neighbours (they are overlap's business).
    best, who = nearest_gaps(boxes, reach)
    polys = [box(*b) for b in boxes]
    for a in range(len(boxes)):
        ds = [
            polys[a].distance(polys[b]) for b in range(len(boxes))
            if b != a and not polys[a].covers(polys[b]) and not polys[b].covers(polys[a])
        ]
        within = [d for d in ds if d <= reach + 1e-9]
        if within:
            assert best[a] == pytest.approx(min(within), abs=1e-9)
            assert polys[a].distance(polys[who[a]]) == pytest.approx(best[a], abs=1e-9)
        else:
            assert best[a] == np.inf or best[a] > reach - 1e-9


def _bitmap_largest_square(target: tuple[int, ...], covers: np.ndarray) -> int:
    """Independent oracle: rasterise to unit pixels, then the textbook DP for the largest all-free square."""
    l, t, r, b = target
    free = np.ones((b - t, r - l), dtype=bool)
    for c in covers.astype(int):
        free[max(c[1] - t, 0):max(c[3] - t, 0), max(c[0] - l, 0):max(c[2] - l, 0)] = False
    dp = np.zeros((free.shape[0] + 1, free.shape[1] + 1), dtype=int)
    for y in range(free.shape[0]):
        for x in range(free.shape[1]):
            if free[y, x]:
                dp[y + 1, x + 1] = 1 + min(dp[y, x + 1], dp[y + 1, x], dp[y, x])
    return int(dp.max())


@settings(max_examples=150, deadline=None)
@given(
    st.tuples(st.integers(0, 10), st.integers(0, 10), st.integers(1, 30), st.integers(1, 30)),
    st.lists(st.tuples(coord.map(lambda v: v % 45), coord.map(lambda v: v % 45), size, size), max_size=5),
)
def test_largest_free_square_matches_bitmap_and_fits(target: tuple[int, ...], raw: list[tuple[int, ...]]) -> None:
    x, y, w, h = target
    tbox = (x, y, x + w, y + h)
    covers = np.array([(a, b, a + cw, b + ch) for a, b, cw, ch in raw], dtype=float).reshape(-1, 4)
    side, where = largest_free_square(np.array(tbox, dtype=float), covers)
    assert side == _bitmap_largest_square(tbox, covers)
    # Oracle 2: shapely confirms the reported square lies in the target minus the covers.
    free = box(*tbox).difference(unary_union([box(*c) for c in covers])) if len(covers) else box(*tbox)
    if side > 0:
        assert free.buffer(1e-9).contains(box(*where))


@settings(max_examples=150, deadline=None)
@given(layouts(max_boxes=6), layouts(max_boxes=6))
def test_one_cover_fast_path_agrees_with_the_general_search(targets: np.ndarray, covers: np.ndarray) -> None:
    # Oracle: the bitmap DP above; the vectorised one-cover formula must agree for every
    # target/cover pair that overlaps.
    n = min(len(targets), len(covers))
    targets, covers = targets[:n], covers[:n]
    got = one_cover_squares(targets, covers)
    for k in range(n):
        if box(*targets[k]).intersection(box(*covers[k])).area > 0:
            assert got[k] == _bitmap_largest_square(tuple(int(v) for v in targets[k]), covers[[k]])


def test_covering_pairs_follow_paint_order() -> None:
    # Overlap with positive area only; the later-painted box is "over". Edge contact is no overlap.
    boxes = np.array([(0, 0, 10, 10), (5, 5, 15, 15), (10, 0, 20, 5)], dtype=float)
    under, over = covering_pairs(boxes, np.array([2, 1, 3]))
    assert sorted(zip(under.tolist(), over.tolist())) == [(1, 0)]
