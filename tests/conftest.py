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


def pytest_configure(config: pytest.Config) -> None:
    config.addinivalue_line("markers", "document: reads the JSON report as users get it (report/document.py)")


@pytest.fixture(autouse=True)
def whole_records(request: pytest.FixtureRequest, monkeypatch: pytest.MonkeyPatch) -> None:
    """Most tests read results through the CLI's JSON report, and there they read the whole record:
    with the sentences, names and millimetres that the table, Markdown, HTML, SARIF and JUnit
    writers print from it. The JSON report itself leaves those out (report/document.py); tests
    marked `document` read it as users get it (its shape, schema and size are tested there).
    Worker processes are forked, so they see the same."""
    if request.node.get_closest_marker("document") is None:
        from tapgauge.batch import Run

        whole = Run.report  # a run for the JSON report alone makes no sentences: here it makes the whole record
        monkeypatch.setattr(Run, "report", lambda self, paths, tick, document_only=False, plans=True:
                            whole(self, paths, tick, plans=plans))
        monkeypatch.setattr("tapgauge.report.document.screen_document", lambda rec: rec)


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


APP = "org.fernwick.allotments"  # the demo's invented app


def dump_node(index: int, bounds: tuple[int, int, int, int], *, text: str = "", rid: str = "", desc: str = "",
              cls: str = "android.widget.Button", clickable: bool = True, enabled: bool = True,
              inner: str = "", pkg: str = APP) -> str:
    """One <node> as `uiautomator dump` writes it: every attribute, in its order, on one line (compare
    screens_demo/android/*.xml)."""
    def flag(on: bool) -> str:
        return "true" if on else "false"

    l, t, r, b = bounds
    head = (f'<node index="{index}" text="{text}" resource-id="{rid}" class="{cls}" package="{pkg}" '
            f'content-desc="{desc}" checkable="false" checked="false" clickable="{flag(clickable)}" '
            f'enabled="{flag(enabled)}" focusable="{flag(clickable)}" focused="false" scrollable="false" '
            f'long-clickable="false" password="false" selected="false" bounds="[{l},{t}][{r},{b}]"')
    return f"{head}>{inner}</node>" if inner else f"{head} />"


def dump_xml(*nodes: str, size: tuple[int, int] = (1080, 2340)) -> str:
    """A one-window dump: a full-screen FrameLayout holding `nodes`."""
    root = dump_node(0, (0, 0, *size), cls="android.widget.FrameLayout", clickable=False, inner="".join(nodes))
    return f"<?xml version='1.0' encoding='UTF-8' standalone='yes' ?><hierarchy rotation=\"0\">{root}</hierarchy>"


TagLayout = tuple[list[tuple[float, float, float, float]], list[tuple[float, float]], tuple[int, int],
                  tuple[float, float]]


def tag_layouts(seed: int, count: int, crowds: tuple[int, ...]) -> list[TagLayout]:
    """Seeded random screens for place_tags: (boxes, tag sizes, picture size, (gap, clear)). Boxes on a
    grid and anywhere (some off the picture's edge), `crowds` of them a screen, one holding others."""
    import random

    rng = random.Random(seed)
    layouts = []
    for _ in range(count):
        width, height = rng.choice([(360, 640), (720, 1500), (200, 300)])
        boxes = []
        for _ in range(rng.choice(crowds)):
            if rng.random() < 0.5:
                x, y, w, h = rng.randrange(0, width, 10), rng.randrange(0, height, 10), rng.choice([10, 40]), 20
            else:
                x, y, w, h = rng.uniform(-20, width), rng.uniform(-20, height), rng.uniform(0, width / 3), rng.uniform(0, 60)
            boxes.append((float(x), float(y), float(x + w), float(y + h)))
        boxes.append((0.0, 0.0, width / 2, height / 2))
        sizes = [(rng.choice([20.0, 33.5]), rng.choice([12.0, 18.0])) for _ in boxes]
        layouts.append((boxes, sizes, (width, height), rng.choice([(2.0, 0.0), (4.0, 2.0)])))
    return layouts
