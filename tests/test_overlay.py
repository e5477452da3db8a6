"""Overlay pictures: one per screen, on the screenshot or a wireframe, status by colour and line."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from PIL import Image

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.report.overlay import MARKS, overlay_name


def test_demo_overlays_sit_on_their_screenshots(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                               capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.chdir(DEMO.parent)
    out = tmp_path / "ov"
    main(["check", "screens_demo", "-f", "json", "--overlay", str(out)])
    report = json.loads(capsys.readouterr().out)
    pictures = sorted(out.rglob("*.png"))
    assert len(pictures) == report["summary"]["screens"] == len(report["screens"]) > 0
    for screen in report["screens"]:
        pic = Image.open(out / overlay_name(screen)).convert("RGB")
        if screen["image"]:
            shot = Image.open(screen["image"])
            assert pic.width == shot.width and pic.height > shot.height  # the legend below
            fx = shot.width / screen["width"]
        else:
            fx = 1.0
        # The top-left corner of a failing target carries the fail colour (its corner bracket,
        # inside a dark edge of a pixel or two).
        failing = [t for t in screen["targets"] if t["status"] == "fail"]
        for t in failing[:3]:
            x, y = round(t["bounds"][0] * fx), round(t["bounds"][1] * fx)
            assert MARKS["fail"].colour in {pic.getpixel((x + k, y + k)) for k in range(1, 8)}


def test_screen_without_screenshot_gets_a_wireframe(tmp_path: Path) -> None:
    shutil.copy(DEMO / "android" / "plot_detail.xml", tmp_path / "s.xml")
    shutil.copy(DEMO / "android" / "device.txt", tmp_path / "device.txt")
    assert main(["check", str(tmp_path / "s.xml"), "--overlay", str(tmp_path / "ov")]) == 1
    (pic,) = list((tmp_path / "ov").rglob("*.overlay.png"))
    img = Image.open(pic)
    assert img.width == 1080 and img.height > 2340


def test_overlay_names_stay_inside_the_folder() -> None:
    name = overlay_name({"path": "../../etc/x.xml", "name": ""})
    assert ".." not in name.parts and name.name == "x.overlay.png"
    assert overlay_name({"path": "/abs/dir/boxes.json", "name": "a.png"}).as_posix() == "abs/dir/boxes/a.overlay.png"


def test_statuses_differ_by_more_than_colour() -> None:
    # Each status has its own line style or width and glyph, so colour is never the only cue.
    styles = {(m.width, m.dash, m.glyph) for m in MARKS.values()}
    assert len(styles) == len(MARKS)
