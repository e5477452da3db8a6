"""An overlay is drawn straight onto the whole picture, its legend's room included: whatever a mark
near the bottom reaches past the overlay must not show in the legend, which stays as drawn for a
screen with nothing near its bottom.
"""

from __future__ import annotations

import copy
from typing import Any

import numpy as np
import pytest

from tapgauge.report.overlay import KEY_AT, PAPER, WIREFRAME, draw_overlay


def _demo_report(monkeypatch: pytest.MonkeyPatch) -> Any:
    from conftest import DEMO, REPO

    from tapgauge.batch import prepare

    monkeypatch.chdir(REPO)
    run = prepare(None, None, None, None, None, None, None, None, [], "centre", "approach", None, jobs=1)
    assert not isinstance(run, int)
    return run.report([DEMO / "android/plots.xml"], None)


def test_marks_past_the_overlays_bottom_stay_out_of_the_legend(monkeypatch: pytest.MonkeyPatch) -> None:
    report = _demo_report(monkeypatch)
    screen = next(iter(report.screens))
    failing = [t for t in screen["targets"] if t["status"] == "fail"]
    assert failing
    moved = copy.deepcopy(screen)
    # The reference is the legend as drawn under the same screen left as it was (no published source:
    # common practice for a layout that must not change). Every failing target moved to sit on the
    # screen's bottom edge: its minimum square, corners and spacing circle reach past it.
    for t in moved["targets"]:
        if t["status"] == "fail":
            l, top, r, b = t["bounds"]
            t["bounds"] = [l, screen["height"] - (b - top) / 2, r, screen["height"] + (b - top) / 2]
            t.pop("plan", None)
    plain = draw_overlay(screen, report, None, max_width=720, text_scale=2.0)
    ours = draw_overlay(moved, report, None, max_width=720, text_scale=2.0)
    assert ours.size == plain.size and ours.info[KEY_AT] == plain.info[KEY_AT]
    bottom = round(screen["height"] * 720 / screen["width"])  # the overlay's own height (720 wide)
    a, b = np.asarray(ours), np.asarray(plain)
    # The marks do reach the overlay's last row (else this test could not fail) ...
    last = a[bottom - 1].reshape(-1, 3)
    assert (np.any(last != WIREFRAME, axis=1) & np.any(last != PAPER, axis=1)).any()
    # ... and below it the legend is exactly as drawn under the screen left as it was: white margin,
    # this screen's lines, the key.
    assert np.array_equal(a[bottom:], b[bottom:])
    assert np.all(a[bottom:bottom + 8] == PAPER)
