"""Overlay boxes land on the screenshot's own pixels, or the overlay says why they cannot.

The screens are an invented bakery app ("Crumbwell Bakery"), its dumps and screenshots made here:
each screenshot is one flat colour, so any outline colour read back was drawn by the overlay.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from PIL import Image, ImageDraw

from tapgauge.cli import main
from tapgauge.model import Severity
from tapgauge.report.overlay import MARKS, align, overlay_name, render
from tapgauge.report.records import Report

FAIL = MARKS["fail"].colour
SHOT = (60, 60, 60)  # the screenshots' flat colour; blended with white under the overlay
WIREFRAME = (244, 244, 242)  # the overlay's background when no screenshot is used

# Android bounds are screen coordinates, "[left,top][right,bottom]" in pixels (Android's
# AccessibilityNodeInfo.getBoundsInScreen, which uiautomator dumps write as `bounds`; from memory).
# 88 x 88 px at 440 dpi is 32 dp, under Material's 48 dp minimum, so these targets fail.
# Both sit low enough that the old height stretch (2340 / 2220) moved them by more than their height.
SMALL = [(40, 1700, 128, 1788), (300, 1800, 388, 1888)]


def _android_dump(folder: Path, boxes: list[tuple[int, int, int, int]], window: tuple[int, int] | None,
                  picture: tuple[int, int] | None, name: str = "oven_timer") -> Path:
    size = f' width="{window[0]}" height="{window[1]}"' if window else ""
    nodes = "".join(
        f'<node index="{k}" text="Tray {k + 1}" resource-id="com.crumbwell.bakery:id/tray{k}" '
        f'class="android.widget.Button" package="com.crumbwell.bakery" content-desc="" clickable="true" '
        f'enabled="true" focusable="true" visible-to-user="true" bounds="[{l},{t}][{r},{b}]"/>'
        for k, (l, t, r, b) in enumerate(boxes))
    w, h = window or (1080, 2340)
    xml = (f"<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>\n<hierarchy rotation=\"0\"{size}>"
           f'<node index="0" text="" class="android.widget.FrameLayout" package="com.crumbwell.bakery" '
           f'clickable="false" enabled="true" visible-to-user="true" bounds="[0,0][{w},{h}]">{nodes}</node></hierarchy>')
    path = folder / f"{name}.xml"
    path.write_text(xml, encoding="utf-8")
    (folder / "device.txt").write_text("Physical density: 440\n", encoding="utf-8")
    if picture:
        Image.new("RGB", picture, SHOT).save(folder / f"{name}.png")
    return path


def _check(path: Path, out: Path, capsys: pytest.CaptureFixture[str]) -> tuple[dict[str, Any], Image.Image, str]:
    main(["check", str(path), "-f", "json", "--overlay", str(out), "--quiet"])
    captured = capsys.readouterr()
    screen = json.loads(captured.out)["screens"][0]
    return screen, Image.open(out / overlay_name(screen)).convert("RGB"), captured.err


def _edge(pic: Image.Image, x: float, y: float) -> tuple[int, int, int]:
    """FAIL when the fail colour shows just inside the point, as inside a failing box's top-left
    corner: the corner bracket's colour lies inside its dark edge (1-2 px), a few pixels in;
    else the colour just inside the point."""
    for k in range(1, 8):
        if pic.getpixel((round(x) + k, round(y) + k)) == FAIL:
            return FAIL
    return pic.getpixel((round(x) + 1, round(y) + 1))


def test_window_smaller_than_screenshot_draws_screen_pixels_unstretched(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # The root states the app window (1080 x 2220, the navigation bar left out); the screenshot
    # shows the whole 1080 x 2340 screen. Boxes are screen pixels: drawn where they are.
    dump = _android_dump(tmp_path, SMALL, (1080, 2220), (1080, 2340))
    screen, pic, err = _check(dump, tmp_path / "ov", capsys)
    assert (screen["width"], screen["height"]) == (1080, 2220)
    assert pic.width == 1080 and pic.height > 2340  # the screenshot's size, the legend below
    for l, t, _, _ in SMALL:
        assert _edge(pic, l, t) == FAIL
        stretched = t * 2340 / 2220  # where the old height ratio put the box: over 90 px lower
        assert _edge(pic, l, stretched) != FAIL
    assert pic.getpixel((1000, 100)) != WIREFRAME  # the screenshot is under the boxes
    assert "cannot align" not in err


def test_half_size_screenshot_is_scaled_uniformly(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    dump = _android_dump(tmp_path, SMALL, None, (540, 1170))
    screen, pic, err = _check(dump, tmp_path / "ov", capsys)
    assert (screen["width"], screen["height"]) == (1080, 2340) and pic.width == 540
    for l, t, _, _ in SMALL:
        assert _edge(pic, l / 2, t / 2) == FAIL
        assert _edge(pic, l / 2 + 12, t / 2 + 12) != FAIL  # inside the halved 44 px box: not a 2x corner
    assert err == ""


def test_screenshot_with_disagreeing_axes_is_refused_and_said(tmp_path: Path,
                                                               capsys: pytest.CaptureFixture[str]) -> None:
    dump = _android_dump(tmp_path, SMALL, None, (700, 1400))
    screen, pic, err = _check(dump, tmp_path / "ov", capsys)
    notice = ("cannot align the overlay with oven_timer.png: screen 1080x2340 px, picture 700x1400 px "
              "(scaled 0.648x across but 0.598x down); wireframe drawn instead")
    assert f"tapgauge: {screen['path']}: {notice}" in " ".join(err.split())
    # The wireframe, at the screen's own size, with the boxes 1:1 on it.
    assert pic.width == 1080 and pic.getpixel((1000, 100)) == WIREFRAME
    for l, t, _, _ in SMALL:
        assert _edge(pic, l, t) == FAIL


def test_box_outside_a_larger_screenshot_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # A window of 1080 x 2000 in a 1080 x 2340 picture, but a box reaches down to 2400: the
    # bounds cannot be screen pixels of this picture, and the axes' ratios (1.0, 1.17) disagree.
    boxes = [*SMALL, (500, 2312, 588, 2400)]
    dump = _android_dump(tmp_path, boxes, (1080, 2000), (1080, 2340))
    _, pic, err = _check(dump, tmp_path / "ov", capsys)
    assert "cannot align the overlay with oven_timer.png: screen 1080x2000 px, picture 1080x2340 px " \
           "(target #3 reaches outside the picture)" in " ".join(err.split())
    assert pic.getpixel((1000, 100)) == WIREFRAME


def _ios_tree(folder: Path, picture: tuple[int, int]) -> Path:
    # Frames are points; the picture is points x scale (Apple's Human Interface Guidelines,
    # "Layout": a 3x display has three pixels per point along each axis; from memory).
    xml = ('<?xml version="1.0" encoding="UTF-8"?><AppiumAUT>'
           '<XCUIElementTypeApplication type="XCUIElementTypeApplication" name="Crumbwell" label="Crumbwell" '
           'enabled="true" visible="true" x="0" y="0" width="390" height="844">'
           '<XCUIElementTypeButton type="XCUIElementTypeButton" name="proof" label="Proof" enabled="true" '
           'visible="true" x="20" y="500" width="30" height="30"/>'
           '</XCUIElementTypeApplication></AppiumAUT>')
    path = folder / "proving_drawer.xml"
    path.write_text(xml, encoding="utf-8")
    Image.new("RGB", picture, SHOT).save(folder / "proving_drawer.png")
    return path


def test_ios_picture_is_points_times_scale(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    screen, pic, err = _check(_ios_tree(tmp_path, (1170, 2532)), tmp_path / "ov", capsys)
    assert screen["coordinates"] == "pt" and pic.width == 1170
    (button,) = [t for t in screen["targets"] if t["name"].startswith("Proof")]
    assert button["status"] == "fail"  # 30 pt is under the 44 pt the iOS rule set asks for
    assert _edge(pic, 20 * 3, 500 * 3) == FAIL
    assert err == ""


def test_ios_picture_whose_axes_disagree_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 1170 / 390 = 3.0 across but 2400 / 844 = 2.84 down: 5% apart, more than the 1% allowed.
    _, pic, err = _check(_ios_tree(tmp_path, (1170, 2400)), tmp_path / "ov", capsys)
    assert "cannot align the overlay with proving_drawer.png: screen 390x844 pt, picture 1170x2400 px " \
           "(scaled 3x across but 2.84x down); wireframe drawn instead" in " ".join(err.split())
    assert pic.width == 780 and pic.getpixel((700, 100)) == WIREFRAME  # the 2x wireframe of points
    assert _edge(pic, 20 * 2, 500 * 2) == FAIL


def test_annotated_screenshot_boxes_are_its_own_pixels(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    Image.new("RGB", (720, 1280), SHOT).save(tmp_path / "cake_order.png")
    (tmp_path / "boxes.csv").write_text("image,left,top,right,bottom,class,label\n"
                                        "cake_order.png,100,900,150,950,button,Add candles\n", encoding="utf-8")
    main(["check", str(tmp_path / "boxes.csv"), "--density", "320", "-f", "json", "--overlay", str(tmp_path / "ov"), "--quiet"])
    captured = capsys.readouterr()
    screen = json.loads(captured.out)["screens"][0]
    pic = Image.open(tmp_path / "ov" / overlay_name(screen)).convert("RGB")
    assert pic.width == 720 and _edge(pic, 100, 900) == FAIL and captured.err == ""


# ----------------------------------------------------------------- align() and render() directly


def _record(coords: str, size: tuple[float, float], boxes: list[tuple[float, float, float, float]],
            path: str = "garden/shed.xml", image: str | None = "garden/shed.png") -> dict[str, Any]:
    targets = [{"number": k, "bounds": list(b), "status": "fail", "findings": [], "notes": []}
               for k, b in enumerate(boxes)]
    return {"path": path, "name": "", "coordinates": coords, "width": size[0], "height": size[1], "image": image,
            "targets": targets, "device": {"coords_per_unit": 2.75, "xdpi": None, "ydpi": None},
            "summary": {"pass": 0, "fail": len(targets), "partial": 0, "unchecked": 0, "exempt": 0}}


@pytest.mark.parametrize(("coords", "screen", "picture", "expected"), [
    ("px", (1080, 2340), (1080, 2340), (1.0, 1.0)),
    ("px", (1080, 2220), (1080, 2340), (1.0, 1.0)),  # a window inside the screenshot
    ("px", (2220, 1080), (2340, 1080), (1.0, 1.0)),  # landscape: the bar at the side
    ("px", (1080, 2340), (540, 1170), (0.5, 0.5)),
    ("px", (1080, 2341), (540, 1170), (0.49989, 0.49989)),  # 0.04% apart: one rounding step
    ("pt", (390, 844), (1170, 2532), (3.0, 3.0)),
    ("pt", (375, 667), (750, 1334), (2.0, 2.0)),
])
def test_align_scales(coords: str, screen: tuple[float, float], picture: tuple[int, int],
                      expected: tuple[float, float]) -> None:
    fit = align(_record(coords, screen, [(10, 10, 100, 100)]), picture)
    assert fit.on_picture and fit.refusal == ""
    assert fit.fx == pytest.approx(expected[0], rel=1e-4) and fit.fy == pytest.approx(expected[1], rel=1e-4)


def test_align_words() -> None:
    inset = align(_record("px", (1080, 2220), [(0, 0, 1080, 2220)]), (1080, 2340))
    assert inset.note == ("window in the dump: 1080x2220 px, inside a 1080x2340 px screenshot; "
                          "boxes drawn 1:1 in screen pixels")
    # Wider but shorter: 1.02x across, 0.983x down, 3.5% apart, over the 1% allowed (common
    # practice: the 1% is rounding slack, not a tolerance for a different picture).
    skew = align(_record("px", (1080, 2340), [(0, 0, 100, 100)]), (1100, 2300))
    assert not skew.on_picture
    assert skew.refusal == ("cannot align the overlay with shed.png: screen 1080x2340 px, picture 1100x2300 px "
                            "(scaled 1.02x across but 0.983x down); wireframe drawn instead")
    # Wider only, every box inside: the larger-picture rule, 1:1.
    wider = align(_record("px", (1060, 2340), [(0, 0, 1060, 100)]), (1080, 2340))
    assert wider.on_picture and (wider.fx, wider.fy) == (1.0, 1.0) and wider.note
    # A marked screenshot's boxes were found in the picture itself: 1:1 whatever the sizes say.
    marked = align(_record("px", (1080, 2400), [(0, 0, 50, 50)], "garden/tool.png", "garden/tool.png"), (500, 500))
    assert marked.on_picture and (marked.fx, marked.fy) == (1.0, 1.0)


def test_refusal_is_in_the_legend_and_a_window_note_too(monkeypatch: pytest.MonkeyPatch) -> None:
    report = Report([], [], fail_level=Severity.ERROR)
    drawn: list[str] = []
    real = ImageDraw.ImageDraw.text
    monkeypatch.setattr(ImageDraw.ImageDraw, "text",
                        lambda self, xy, text, *a, **k: (drawn.append(text), real(self, xy, text, *a, **k))[1])
    shot = Image.new("RGB", (300, 700), SHOT)
    _, fit = render(_record("px", (1080, 2340), [(300, 1800, 388, 1888)]), report, shot)
    assert fit is not None and fit.refusal
    legend = " ".join(drawn)  # wrapped to the picture's width: words joined back
    assert fit.refusal in legend
    drawn.clear()
    pic, fit = render(_record("px", (1080, 2220), [(300, 1800, 388, 1888)]), report,
                      Image.new("RGB", (1080, 2340), SHOT), max_width=400)
    assert fit is not None and fit.note and fit.note in " ".join(drawn)
    # At the HTML report's 400 px the boxes shrink by one factor for both axes: 400 / 1080.
    k = 400 / 1080
    assert pic.width == 400 and _edge(pic, 300 * k, 1800 * k) == FAIL
    assert _edge(pic, 300 * k, 1800 * k * 2340 / 2220) != FAIL
