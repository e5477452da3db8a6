"""WCAG 2.2 SC 2.5.8 worked examples, run through the whole measure + check path.

Source: W3C WAI, "Understanding SC 2.5.8: Target Size (Minimum)" (WCAG 2.2 Understanding
documents), its figures and text (published; the criterion and its spacing rule re-read, the
worked figures from memory). At 160 dpi one dp is one pixel, so the
CSS-pixel examples apply unchanged (W3C, WCAG2ICT Group Note, maps the CSS px to dp: from memory).
"""

from __future__ import annotations

from conftest import check_boxes

AA = ["wcag-2.5.8"]


def statuses(boxes: list[tuple[int, int, int, int]]) -> list[str]:
    return [t.status for t in check_boxes(boxes, AA).targets]


def test_24_px_icons_in_a_row_pass() -> None:
    # Understanding 2.5.8: 24 x 24 targets pass the size requirement.
    assert statuses([(0, 0, 24, 24), (24, 0, 48, 24), (48, 0, 72, 24)]) == ["pass"] * 3


def test_20_px_icons_4_px_apart_pass_by_spacing() -> None:
    # Understanding 2.5.8: 20 x 20 with 4 px gaps: centres 24 apart, circles touch: pass.
    boxes = [(k * 24, 0, k * 24 + 20, 20) for k in range(4)]
    result = check_boxes(boxes, AA)
    assert [t.status for t in result.targets] == ["pass"] * 4
    assert all(any("passes by spacing" in n for n in t.notes) for t in result.targets)


def test_20_px_icons_without_gaps_fail() -> None:
    # Understanding 2.5.8: 20 x 20 icons with no gap: circles overlap: fail.
    boxes = [(k * 20, 0, k * 20 + 20, 20) for k in range(4)]
    assert statuses(boxes) == ["fail"] * 4


def test_16_px_icon_touching_a_large_target_fails() -> None:
    # Understanding 2.5.8: a 16 x 16 target against a large one fails ...
    assert statuses([(0, 0, 16, 16), (16, 0, 200, 44)]) == ["fail", "pass"]


def test_16_px_icon_needs_a_4_px_gap() -> None:
    # ... and passes once 4 px apart (the 24 circle then just touches the large target).
    assert statuses([(0, 0, 16, 16), (20, 0, 200, 44)]) == ["pass", "pass"]
    assert statuses([(0, 0, 16, 16), (19, 0, 200, 44)]) == ["fail", "pass"]


def test_circle_must_not_intersect_another_undersized_circle() -> None:
    # Understanding 2.5.8: circles of two undersized targets may not intersect. Two 10 x 10
    # targets 13 px apart edge to edge: no circle reaches the other box (distance from
    # centre to box 18 > 12) but the circles intersect (centres 23 apart < 24).
    assert statuses([(0, 0, 10, 10), (23, 0, 33, 10)]) == ["fail", "fail"]
    # Centres exactly 24 apart: circles touch, which passes.
    assert statuses([(0, 0, 10, 10), (24, 0, 34, 10)]) == ["pass", "pass"]


def test_size_test_is_a_square_not_a_circle() -> None:
    # Understanding 2.5.8: the square must fit; a circle of diameter 24 is undersized
    # (its bounding box is 24 x 24, but a 24 square does not fit in the circle).
    # Here: a 24 x 23 target fails the size test; alone on screen it passes by spacing.
    result = check_boxes([(0, 0, 24, 23)], AA)
    assert result.targets[0].status == "pass" and result.targets[0].notes
    result = check_boxes([(0, 0, 24, 23), (0, 23, 24, 47)], AA)
    assert [t.status for t in result.targets] == ["fail", "pass"]


def test_overlap_removes_the_covered_part() -> None:
    # WCAG 2.2 "target" definition: where targets overlap, the overlapped part does not
    # count toward the size of the one underneath. A 32 x 32 chip with a 20 x 20 badge
    # covering 12 x 12 of its corner keeps only a 20 px square: both fail.
    chip, badge = check_boxes([(0, 12, 32, 44), (20, 4, 40, 24)], AA).targets
    assert chip.status == "fail" and chip.findings[0].measured == 20.0
    assert badge.status == "fail"
    # Covering 12 x 8 leaves a 24 px square (the strip below the badge): the chip passes.
    chip, _ = check_boxes([(0, 12, 32, 44), (20, 0, 40, 20)], AA).targets
    assert chip.status == "pass"


def test_the_target_drawn_on_top_keeps_the_shared_part() -> None:
    # WCAG 2.2 "target" definition, applied with paint order: the later (upper) target
    # keeps the overlap. Swap the order and the badge loses its corner instead.
    badge, chip = check_boxes([(20, 4, 40, 24), (0, 12, 32, 44)], AA).targets
    assert chip.status == "pass"  # nothing covers it now: a 32 px square fits
    # 20 x 20 minus a 12 x 12 corner leaves two 8 px wide strips.
    assert badge.findings[0].measured == 8.0
