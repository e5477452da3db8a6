"""Independent oracles for three behaviours that only tapgauge's own golden files used to guard.

Each expected value is computed here, outside tapgauge (shapely, or hand arithmetic from a
published definition), with its source named beside the check:

1. the target width along the approach (MacKenzie & Buxton 1992), not the smaller side;
2. millimetres per axis from that axis's physical ppi (xdpi across, ydpi down), swapped by a
   quarter turn;
3. the 8 dp gap of Android's guidance, on both sides of the boundary.

The dumps are written here in the shape `adb shell uiautomator dump` writes (AOSP
AccessibilityNodeInfoDumper: a `hierarchy` root with `rotation`, nested `node` elements,
`bounds="[left,top][right,bottom]"` in screen pixels), for an invented allotment-booking app.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from shapely.geometry import LineString
from shapely.geometry import box as rectangle

from tapgauge.cli import main
from tapgauge.difficulty import predict

PACKAGE = "org.fernwick.allotments"
MM_PER_INCH = 25.4  # the inch is 25.4 mm exactly (international yard and pound agreement, 1959; from memory)

Box = tuple[int, int, int, int]


def _node(index: int, label: str, bounds: Box) -> str:
    l, t, r, b = bounds
    return (f'<node index="{index}" text="{label}" resource-id="{PACKAGE}:id/b{index}" class="android.widget.Button" '
            f'package="{PACKAGE}" content-desc="" checkable="false" checked="false" clickable="true" enabled="true" '
            'focusable="true" focused="false" scrollable="false" long-clickable="false" password="false" '
            f'selected="false" visible-to-user="true" bounds="[{l},{t}][{r},{b}]" />')


def write_dump(path: Path, screen: tuple[int, int], buttons: list[tuple[str, Box]], rotation: int = 0) -> Path:
    """A one-window dump: a plain frame the size of the screen holding the given buttons."""
    kids = "\n    ".join(_node(k, label, bounds) for k, (label, bounds) in enumerate(buttons))
    w, h = screen
    path.write_text(
        "<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>\n"
        f'<hierarchy rotation="{rotation}">\n'
        f'  <node index="0" text="" resource-id="" class="android.widget.FrameLayout" package="{PACKAGE}" '
        'content-desc="" checkable="false" checked="false" clickable="false" enabled="true" focusable="false" '
        'focused="false" scrollable="false" long-clickable="false" password="false" selected="false" '
        f'visible-to-user="true" bounds="[0,0][{w},{h}]">\n'
        f"    {kids}\n"
        "  </node>\n"
        "</hierarchy>\n",
        encoding="utf-8",
    )
    return path


def run_check(capsys: pytest.CaptureFixture[str], path: Path, *flags: str) -> dict[str, Any]:
    code = main(["check", str(path), "-f", "json", "--quiet", *flags])
    out = capsys.readouterr().out
    assert code in (0, 1), f"exit {code}: the screen was not read"
    report: dict[str, Any] = json.loads(out)
    assert not report.get("errors"), report.get("errors")
    return report


def targets(report: dict[str, Any]) -> dict[str, dict[str, Any]]:
    (screen,) = report["screens"]
    return {t["label"]: t for t in screen["targets"]}


def approach(target: dict[str, Any], key: str = "width") -> float:
    """The reported approach `width` (or `distance`), whichever report shape is in use.

    Report v1 repeats the approach in every profile's record (`difficulty[k].width`); v2 states
    it once per target (`approach.width`, or an approach record inside `difficulty`).
    """
    for holder in (target, target.get("difficulty")):
        if isinstance(holder, dict):
            for name in ("approach", "reach", "geometry"):
                if isinstance(holder.get(name), dict) and key in holder[name]:
                    return float(holder[name][key])
    per_profile = target.get("difficulty")
    if isinstance(per_profile, dict) and key in per_profile:
        return float(per_profile[key])
    if isinstance(per_profile, list):
        values = {float(p[key]) for p in per_profile if isinstance(p, dict) and key in p}
        assert len(values) == 1, f"profiles disagree on the approach {key}: {sorted(values)}"
        return values.pop()
    raise AssertionError(f"no approach {key} in the target record (keys: {sorted(target)})")


def approach_unit(screen: dict[str, Any]) -> str:
    """Unit of the approach width and distance: v2 says `reach.approach_unit`, v1 `reach.unit`."""
    reach = screen.get("reach") or {}
    return str(reach.get("approach_unit", reach.get("unit")))


def size_mm(target: dict[str, Any]) -> tuple[float, float]:
    mm = target["size_mm"]
    assert mm is not None, "no millimetres although a physical ppi was given"
    if isinstance(mm, dict):
        return float(mm["width"]), float(mm["height"])
    return float(mm[0]), float(mm[1])


# --- 1. Width along the approach ------------------------------------------------------------
# Source: MacKenzie, I. S. & Buxton, W., "Extending Fitts' law to two-dimensional tasks",
# Proc. CHI '92, ACM, pp. 219-226 (abstract and introduction re-read: two alternative readings of
# "target width" for 2D tasks; the body from memory): the width along the line of approach (their
# W'), and the smaller of width and height, a different model. The chord
# definition (a line through the start and the centre, cut by the rectangle) is plain geometry;
# shapely computes it here, independently of tapgauge's min(W/|cos|, H/|sin|).


def shapely_chord(bounds: tuple[float, float, float, float], start: tuple[float, float]) -> float:
    """Length of the target's chord on the line from `start` through its centre."""
    l, t, r, b = bounds
    cx, cy = (l + r) / 2, (t + b) / 2
    far = (cx + 10 * (cx - start[0]), cy + 10 * (cy - start[1]))  # well past the far edge
    return float(LineString([start, far]).intersection(rectangle(l, t, r, b)).length)


def test_cli_reports_the_chord_along_a_30_degree_approach(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                          monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)  # no project config from the caller's folder
    # xhdpi (320 dpi): 2 px per dp (px = dp x dpi / 160). A wide, short "Book plot" button,
    # 120 x 30 dp = 240 x 60 px, centre (260, 315) dp.
    dump = write_dump(tmp_path / "book.xml", (800, 1600), [("Book plot", (400, 600, 640, 660))])
    # Start 200 dp from the centre, 30 degrees above the horizontal (up and to the left).
    theta = math.radians(30)
    start = (round(260 - 200 * math.cos(theta), 4), round(315 - 200 * math.sin(theta), 4))
    report = run_check(capsys, dump, "--density", "320", "--from", f"{start[0]},{start[1]}",
                       "--rules", "android-guidance", "--width-model", "approach")
    (screen,) = report["screens"]
    assert approach_unit(screen) == "dp"  # no ppi given: reaches stay in dp
    got = approach(targets(report)["Book plot"])
    expected = shapely_chord((200, 300, 320, 330), start)  # the same button in dp
    assert got == pytest.approx(expected, abs=1e-3)
    # Hand check: H / sin 30 = 30 / 0.5 = 60 dp is shorter than W / cos 30 = 138.6 dp.
    assert got == pytest.approx(60.0, abs=0.01)
    assert abs(got - min(120, 30)) > 1  # the smaller side (30 dp) would be the wrong answer


@pytest.mark.parametrize("degrees", [10, 30, 60, 150, 210, 300])
def test_predict_width_is_the_shapely_chord(degrees: float) -> None:
    # Directions on every side, some leaving through the long edges and some through the short.
    bounds = (200.0, 300.0, 320.0, 330.0)  # 120 x 30, centre (260, 315)
    theta = math.radians(degrees)
    start = (260 - 200 * math.cos(theta), 315 - 200 * math.sin(theta))
    pred = predict(np.array([bounds]), start, 0.0, 100.0, None, 0.0, 1.0)
    assert pred.width[0] == pytest.approx(shapely_chord(bounds, start), rel=1e-9)
    assert pred.distance[0] == pytest.approx(200.0)
    if degrees % 90:
        assert abs(pred.width[0] - 30.0) > 1  # never the smaller side at an oblique angle


# --- 2. Millimetres per axis ----------------------------------------------------------------
# Source: android.util.DisplayMetrics (Android API reference): xdpi and ydpi are "the exact
# physical pixels per inch of the screen" in the X and in the Y dimension, so
# mm = px / ppi x 25.4 on each axis with that axis's ppi. A quarter turn (dump rotation 1 or 3;
# the rotation attribute is AccessibilityNodeInfoDumper's) lays the panel's natural y axis
# across the screen, so the natural ydpi then applies to widths (README, "Telling tapgauge
# about the device": --ppi is along the phone's natural axes).
# Two paths turn pixels into mm: the target's reported size, and the reach (approach width and
# distance, in mm once a ppi is known). Both are checked. At 420 dpi, px = dp x 420 / 160, so
# multiples of 21 px are whole dp: the button's centre (378, 567) px is (144, 216) dp.

SIDE_PX = 120
BUTTON = (318, 507, 318 + SIDE_PX, 507 + SIDE_PX)  # centre (378, 567) px


@pytest.mark.parametrize("given", ["flag", "sidecar keyed", "sidecar dumpsys"])
@pytest.mark.parametrize(("rotation", "ppi_across", "ppi_down"), [
    (0, 400, 300),  # portrait: across the screen is the natural x axis (xdpi 400)
    (1, 300, 400),  # a quarter turn: across is the natural y axis (ydpi 300)
])
def test_millimetres_use_each_axis_own_ppi(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                           monkeypatch: pytest.MonkeyPatch, given: str, rotation: int,
                                           ppi_across: int, ppi_down: int) -> None:
    monkeypatch.chdir(tmp_path)
    width_mm, height_mm = SIDE_PX / ppi_across * MM_PER_INCH, SIDE_PX / ppi_down * MM_PER_INCH
    # By hand: 120 / 400 x 25.4 = 7.62 mm; 120 / 300 x 25.4 = 10.16 mm.
    assert (width_mm, height_mm) == pytest.approx((7.62, 10.16) if rotation == 0 else (10.16, 7.62))
    screen = (1080, 2400) if rotation == 0 else (2400, 1080)
    dump = write_dump(tmp_path / "plot_map.xml", screen, [("Plot map", BUTTON)], rotation=rotation)
    flags = ["--rules", "android-guidance"]
    if given == "flag":
        flags += ["--density", "420", "--ppi", "400,300"]
    elif given == "sidecar keyed":
        (tmp_path / "plot_map.device.txt").write_text("density: 420\nppi: 400,300\n")
    else:
        # The display-info wording of `adb shell dumpsys display` (AOSP DisplayDeviceInfo.toString):
        # logical density, then the physical x and y dpi.
        (tmp_path / "plot_map.device.txt").write_text(
            '  mDisplayDeviceInfo=DisplayDeviceInfo{"Built-in Screen": uniqueId="local:0", 1080 x 2400, '
            "modeId 1, defaultModeId 1, density 420, 400.0 x 300.0 dpi, appVsyncOffset 0, type INTERNAL}\n")

    # From straight above the centre, (144, 0) dp: the approach crosses the button top to bottom.
    report = run_check(capsys, dump, *flags, "--from", "144,0")
    (shown,) = report["screens"]
    assert approach_unit(shown) == "mm"  # a ppi is known: reaches in mm
    button = targets(report)["Plot map"]
    assert size_mm(button) == (pytest.approx(width_mm, abs=0.01), pytest.approx(height_mm, abs=0.01))
    assert approach(button) == pytest.approx(height_mm, abs=0.01)
    assert approach(button, "distance") == pytest.approx(567 / ppi_down * MM_PER_INCH, abs=0.01)

    # From straight left of the centre, (0, 216) dp: the approach crosses it left to right.
    button = targets(run_check(capsys, dump, *flags, "--from", "0,216"))["Plot map"]
    assert approach(button) == pytest.approx(width_mm, abs=0.01)
    assert approach(button, "distance") == pytest.approx(378 / ppi_across * MM_PER_INCH, abs=0.01)


# --- 3. The 8 dp gap, both sides of the boundary ----------------------------------------------
# Source: Android Accessibility Help, "Touch target size" (support.google.com/accessibility/android,
# answer 7101858): touch targets of at least 48 x 48 dp, "separated by 8dp of space or more".
# So exactly 8 dp passes and anything less fails. Targets of 40 x 40 dp stay below the rule's
# exempt_at_size (48 dp), so the gap rule applies to them. Densities are chosen so the gap in
# dp is exact: px = dp x dpi / 160 (Android Developers, "Support different pixel densities").


@pytest.mark.parametrize(("dpi", "gap_px", "gap_dp"), [
    (160, 8, 8.0), (160, 7, 7.0), (160, 9, 9.0),  # mdpi: 1 px = 1 dp
    (420, 21, 8.0), (420, 20, 160 * 20 / 420), (420, 22, 160 * 22 / 420),  # 7.619 and 8.381 dp
    (640, 32, 8.0), (640, 31, 7.75), (640, 30, 7.5), (640, 34, 8.5),  # xxxhdpi: 4 px = 1 dp
])
def test_gap_of_8_dp_passes_and_less_fails(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                           monkeypatch: pytest.MonkeyPatch, dpi: int, gap_px: int,
                                           gap_dp: float) -> None:
    monkeypatch.chdir(tmp_path)
    assert gap_px * 160 / dpi == pytest.approx(gap_dp)  # the hand arithmetic behind each row
    side = 40 * dpi // 160  # 40 dp in px: 40, 105, 160 (exact at these densities)
    left = (100, 200, 100 + side, 200 + side)
    right = (left[2] + gap_px, 200, left[2] + gap_px + side, 200 + side)
    dump = write_dump(tmp_path / "tools.xml", (2000, 2000), [("Water", left), ("Weed", right)])
    report = run_check(capsys, dump, "--density", str(dpi), "--rules", "android-guidance")
    for t in targets(report).values():
        assert t["size"] == {"width": pytest.approx(40.0), "height": pytest.approx(40.0)}
        gaps = [f for f in t["findings"] if f["rule"] == "android-guidance/gap-8"]
        if gap_dp < 8:
            assert len(gaps) == 1, f"{gap_dp:.3f} dp apart must fail the 8 dp gap"
            assert gaps[0]["measured"] == pytest.approx(gap_dp, abs=0.01)
        else:
            assert gaps == [], f"{gap_dp:.3f} dp apart must pass the 8 dp gap"


# WCAG 2.2 SC 2.5.8 boundary: tests/test_wcag_examples.py covers it at 160 dpi (1 px = 1 dp) on
# boxes in memory. Here only what that leaves out: the same boundary read from a dump at a
# density where a dp is a fraction of a pixel. Source: W3C, "Understanding SC 2.5.8: Target Size
# (Minimum)": an undersized target passes when a 24 CSS px circle centred on it intersects no
# other target and no other undersized target's circle; WCAG2ICT applies the CSS px as the
# platform's dp. At 420 dpi, 16 dp = 42 px and 24 dp = 63 px exactly.


@pytest.mark.parametrize(("centres_px", "status"), [(63, "pass"), (62, "fail")])
def test_wcag_circles_touch_at_24_dp_on_420_dpi(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                monkeypatch: pytest.MonkeyPatch, centres_px: int,
                                                status: str) -> None:
    monkeypatch.chdir(tmp_path)
    # Centres 63 px = 24 dp apart: the circles just touch (passes); 62 px = 23.6 dp: they intersect.
    a = (210, 210, 252, 252)
    b = (a[0] + centres_px, 210, a[2] + centres_px, 252)
    dump = write_dump(tmp_path / "chips.xml", (1080, 2400), [("Sun", a), ("Shade", b)])
    report = run_check(capsys, dump, "--density", "420", "--rules", "wcag-2.5.8")
    assert [t["status"] for t in targets(report).values()] == [status, status]
