"""iOS element trees: points, scales, and which element types are targets.

Format facts: element names are Apple's XCUIElementType values (Apple Developer
documentation, XCUIAutomation, "XCUIElement.ElementType"; re-read); the tree is the page source
of W3C WebDriver "Get Page Source" with type, name, label, value, enabled, visible, accessible,
x, y, width, height attributes in points (attribute set from memory). Points to pixels: Apple's
UIScreen.scale documentation, pixels = points x scale, scale 1, 2 or 3 (published; re-read).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from PIL import Image

from tapgauge.device import resolve_device
from tapgauge.measure import to_unit
from tapgauge.geometry import as_boxes
from tapgauge.model import DeviceHints, InputError
from tapgauge.readers import read_screen

TREE = """<?xml version="1.0" encoding="UTF-8"?>
<AppiumAUT>
  <XCUIElementTypeApplication type="XCUIElementTypeApplication" name="Seedling" label="Seedling" enabled="true" visible="true" accessible="false" x="0" y="0" width="390" height="844" index="0">
    <XCUIElementTypeWindow type="XCUIElementTypeWindow" enabled="true" visible="true" accessible="false" x="0" y="0" width="390" height="844" index="0">
      <XCUIElementTypeButton type="XCUIElementTypeButton" name="close" label="Close" enabled="true" visible="true" accessible="true" x="16" y="50" width="44" height="44" index="0"/>
      <XCUIElementTypeStaticText type="XCUIElementTypeStaticText" value="Trays" name="Trays" label="Trays" enabled="true" visible="true" accessible="true" x="70" y="60" width="200" height="24" index="1"/>
      <XCUIElementTypeImage type="XCUIElementTypeImage" name="logo" enabled="true" visible="true" accessible="true" x="300" y="50" width="20" height="20" index="2"/>
      <XCUIElementTypeButton type="XCUIElementTypeButton" name="info" label="More info" enabled="true" visible="true" accessible="true" x="10.5" y="100.25" width="20.5" height="20" index="3"/>
      <XCUIElementTypeSwitch type="XCUIElementTypeSwitch" name="water" label="Watering" value="1" enabled="false" visible="true" accessible="true" x="300" y="200" width="51" height="31" index="4"/>
      <XCUIElementTypeCell type="XCUIElementTypeCell" enabled="true" visible="false" accessible="false" x="0" y="900" width="390" height="44" index="5"/>
    </XCUIElementTypeWindow>
  </XCUIElementTypeApplication>
</AppiumAUT>
"""


def test_types_labels_and_points(tmp_path: Path) -> None:
    p = tmp_path / "trays.xml"
    p.write_text(TREE)
    s = read_screen(p)
    assert (s.platform, s.coords, s.width, s.height) == ("ios", "pt", 390.0, 844.0)
    assert [t.cls.removeprefix("XCUIElementType") for t in s.targets] == ["Button", "Button", "Switch", "Cell"]
    close, info, switch, cell = s.targets
    assert (close.label, close.resource_id) == ("Close", "close")
    assert info.bounds == (10.5, 100.25, 31.0, 120.25)  # fractional points kept
    assert not switch.enabled and not cell.visible
    assert close.line == 5


@pytest.mark.parametrize("scale", [1, 2, 3])
def test_points_to_pixels_and_mm_for_each_scale(tmp_path: Path, scale: int) -> None:
    # Apple, UIScreen.scale: pixels = points x scale. A 44 pt button is 44*scale px; with a
    # physical ppi P its width is 44*scale/P inches (arithmetic).
    p = tmp_path / "trays.xml"
    p.write_text(TREE)
    s = read_screen(p)
    ppi = 160.0 * scale + 1  # any physical ppi
    device = resolve_device(s, DeviceHints(scale=scale, xdpi=ppi, ydpi=ppi, source="t"))
    close = as_boxes([s.targets[0].bounds])
    assert to_unit(close, device, "pt")[0].tolist() == [16, 50, 60, 94]
    mm = to_unit(close, device, "mm")[0]
    assert mm[2] - mm[0] == pytest.approx(44 * scale / ppi * 25.4)


def test_scale_is_read_from_the_screenshot_beside_the_tree(tmp_path: Path) -> None:
    (tmp_path / "trays.xml").write_text(TREE)
    Image.new("RGB", (1170, 2532)).save(tmp_path / "trays.png")  # 390 pt x 3
    s = read_screen(tmp_path / "trays.xml")
    assert s.image == tmp_path / "trays.png"
    device = resolve_device(s, *s.hints)
    assert device.scale == 3 and device.unit_source == "element tree in points"
    assert device.no_mm_because.startswith("no physical ppi")


def test_mm_without_scale_is_explained(tmp_path: Path) -> None:
    p = tmp_path / "t.xml"
    p.write_text(TREE)
    device = resolve_device(read_screen(p), DeviceHints(xdpi=460, ydpi=460, source="t"))
    assert device.xdpi is None and "--scale" in device.no_mm_because


@pytest.mark.parametrize(
    ("body", "expect"),
    [
        ('<XCUIElementTypeApplication type="XCUIElementTypeApplication"><XCUIElementTypeButton name="a"/></XCUIElementTypeApplication>', "no frames"),
        ('<XCUIElementTypeApplication x="0" y="0" width="1" height="1"><XCUIElementTypeButton x="1" y="2"/></XCUIElementTypeApplication>', "partial frame"),
        ('<XCUIElementTypeApplication x="0" y="0" width="1" height="1"><XCUIElementTypeButton x="a" y="2" width="1" height="1"/></XCUIElementTypeApplication>', "not numeric"),
        ('<XCUIElementTypeApplication x="0" y="0" width="1" height="1"><XCUIElementTypeButton x="nan" y="2" width="1" height="1"/></XCUIElementTypeApplication>', "non-finite"),
        ('<XCUIElementTypeApplication x="0" y="0" width="1" height="1"><XCUIElementTypeButton x="0" y="2" width="-1" height="1"/></XCUIElementTypeApplication>', "negative"),
    ],
)
def test_bad_trees_are_clear_errors(tmp_path: Path, body: str, expect: str) -> None:
    p = tmp_path / "bad.xml"
    p.write_text(body)
    with pytest.raises(InputError, match=expect):
        read_screen(p)
