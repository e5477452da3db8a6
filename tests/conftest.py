from __future__ import annotations

from pathlib import Path

import pytest

from tapgauge.checks import check_screen
from tapgauge.device import resolve_device
from tapgauge.measure import measure
from tapgauge.model import DeviceHints, Screen, ScreenResult, Target
from tapgauge.rulesets import builtin_rulesets

REPO = Path(__file__).resolve().parent.parent
DEMO = REPO / "screens_demo"
DATA = Path(__file__).resolve().parent / "data"


def screen_of(boxes: list[tuple[int, int, int, int]], platform: str = "android") -> Screen:
    """A screen whose targets are the given pixel boxes, later ones drawn on top.

    They are siblings numbered in drawing order, as a dump with drawing-order says, so
    which one is on top is known, not presumed.
    """
    targets = tuple(
        Target(number=k, bounds=b, cls="android.widget.Button", label=f"t{k}", resource_id="", paint_rank=k + 1,
               path=((k, True),))
        for k, b in enumerate(boxes)
    )
    w = max([b[2] for b in boxes] + [1])
    h = max([b[3] for b in boxes] + [1])
    return Screen(path=Path("mem.xml"), platform=platform, width=w, height=h, rotation=0, targets=targets)


def check_boxes(boxes: list[tuple[int, int, int, int]], rulesets: list[str], density: float = 160,
                ppi: float | None = None) -> ScreenResult:
    """Run measure + check on boxes. At 160 dpi one dp is one pixel, so CSS-px examples carry over."""
    screen = screen_of(boxes)
    hints = DeviceHints(density_dpi=density, xdpi=ppi, ydpi=ppi, source="test")
    device = resolve_device(screen, hints)
    sets = [builtin_rulesets()[r] for r in rulesets]
    return check_screen(measure(screen, device), sets, announce_skips=True)


@pytest.fixture
def demo() -> Path:
    return DEMO
