"""Which targets are checked, and how clipping and duplicates are treated."""

from __future__ import annotations

from pathlib import Path

from tapgauge.checks import check_screen
from tapgauge.device import resolve_device
from tapgauge.measure import measure
from tapgauge.model import DeviceHints, Screen, Target
from tapgauge.rulesets import builtin_rulesets

LIST = ((0, 100, 400, 500), "y")  # a vertically scrolling container


def _run(targets: list[Target]) -> list[tuple[str, str]]:
    screen = Screen(Path("m.xml"), "android", 400, 800, 0, tuple(targets))
    device = resolve_device(screen, DeviceHints(density_dpi=160, source="t"))
    result = check_screen(measure(screen, device), [builtin_rulesets()["wcag-2.5.8"]], announce_skips=False)
    return [(t.status, t.reason) for t in result.targets]


def _t(k: int, bounds: tuple[int, int, int, int], rank: int, scroll: tuple = ()) -> Target:
    return Target(number=k, bounds=bounds, cls="Button", label=f"t{k}", resource_id="", paint_rank=rank,
                  scroll_ancestors=scroll)


def test_identical_bounds_keep_only_the_target_on_top() -> None:
    # Common practice: a clickable container and a clickable child filling it are one control to a finger.
    got = _run([_t(0, (0, 0, 100, 100), 1), _t(1, (0, 0, 100, 100), 2)])
    assert got[1] == ("pass", "")
    assert got[0][0] == "unchecked" and got[0][1].startswith("same bounds as #1")


def test_a_failing_row_flush_with_the_list_edge_is_partial() -> None:
    # Its visible part is 10 px tall, but the list may be hiding the rest.
    got = _run([_t(0, (0, 490, 400, 500), 1, (LIST,)), _t(1, (0, 400, 400, 490), 2, (LIST,))])
    assert got[0][0] == "partial" and "scrolling container" in got[0][1]


def test_a_clipped_row_that_already_passes_is_a_pass() -> None:
    # Clipping can only hide size, never add it: if the visible part passes, the target passes.
    got = _run([_t(0, (0, 450, 400, 500), 1, (LIST,))])
    assert got == [("pass", "")]


def test_a_row_flush_with_the_side_of_a_vertical_list_is_not_clipped() -> None:
    got = _run([_t(0, (0, 200, 20, 220), 1, (LIST,)), _t(1, (0, 220, 400, 300), 2, (LIST,))])
    assert got[0] == ("fail", "")
