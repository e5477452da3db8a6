"""iOS element trees (the XML page source of UI-test automation servers) into a Screen.

Element names are the element types (XCUIElementTypeButton, ...); frames are x, y,
width, height in points, possibly fractional; attributes that are nil are left out;
the tree may sit inside an extra wrapper element. Frames are the elements' full
frames, not clipped to their scroll view, so a half-scrolled cell still has its true
size: nothing here is "unmeasurable" for clipping.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from lxml import etree

from tapgauge.model import DeviceHints, InputError, Screen, Target

PREFIX = "XCUIElementType"
# Types a person taps or drags to act. Static text, images and containers report
# accessible="true" routinely, so that attribute alone does not make a target.
INTERACTIVE = frozenset({
    "Button", "Link", "Cell", "Switch", "Toggle", "TextField", "SecureTextField", "SearchField",
    "Slider", "Stepper", "PickerWheel", "Tab", "Key", "MenuItem", "MenuBarItem", "CheckBox",
    "RadioButton", "PopUpButton", "ComboBox", "ColorWell", "Incrementor", "Icon", "PageIndicator",
    "DisclosureTriangle", "SegmentedControl", "TabBarButton",
})


def element_type(el: etree._Element) -> str:
    tag = el.tag if isinstance(el.tag, str) else ""
    raw = el.get("type") or tag
    return raw.removeprefix(PREFIX)


def is_ios_root(root: etree._Element) -> bool:
    tags = [root.tag, *(c.tag for c in root if isinstance(c.tag, str))]
    return any(isinstance(t, str) and t.startswith(PREFIX) for t in tags)


def _frame(el: etree._Element, path: Path) -> tuple[float, float, float, float] | None:
    raw = [el.get(k) for k in ("x", "y", "width", "height")]
    if all(v is None for v in raw):
        return None
    if any(v is None for v in raw):
        missing = [k for k, v in zip(("x", "y", "width", "height"), raw) if v is None]
        raise InputError(path, f"<{el.tag}> has a partial frame: missing {', '.join(missing)}", el.sourceline)
    try:
        x, y, w, h = (float(v) for v in raw)  # type: ignore[arg-type]
    except ValueError:
        raise InputError(path, f"<{el.tag}> frame {raw} is not numeric; expected x, y, width, height in points",
                         el.sourceline) from None
    if not all(math.isfinite(v) and abs(v) < 1e6 for v in (x, y, w, h)):
        raise InputError(path, f"<{el.tag}> frame {raw} has a non-finite or implausible number", el.sourceline)
    if w < 0 or h < 0:
        raise InputError(path, f"<{el.tag}> frame has a negative width or height", el.sourceline)
    return (x, y, x + w, y + h)


def read_ios(path: Path, root: etree._Element, hints: tuple[DeviceHints, ...], image: Path | None = None,
             include_focusable: bool = False) -> Screen:
    found: list[dict[str, Any]] = []
    extent = [0.0, 0.0]
    app_frame: tuple[float, float, float, float] | None = None
    framed = 0
    for order, el in enumerate(root.iter()):
        if not isinstance(el.tag, str):
            continue
        kind = element_type(el)
        if not el.tag.startswith(PREFIX) and el.get("type") is None:
            continue  # a wrapper element
        frame = _frame(el, path)
        if frame is None:
            continue
        framed += 1
        if kind == "Application" and app_frame is None:
            app_frame = frame
        extent[0], extent[1] = max(extent[0], frame[2]), max(extent[1], frame[3])
        if kind not in INTERACTIVE:
            continue
        label = el.get("label") or el.get("value") or ""
        ident = el.get("name") or ""
        found.append({
            "bounds": frame,
            "cls": PREFIX + kind,
            "label": label.strip(),
            "resource_id": "" if ident == label else ident,
            "enabled": el.get("enabled", "true") == "true",
            "visible": el.get("visible", "true") == "true" and not _hidden_ancestor(el),
            "paint_rank": order,
            "line": el.sourceline,
        })
    if framed == 0:
        raise InputError(path, "iOS element tree has no frames; expected x, y, width and height attributes "
                               "(in points) on the XCUIElementType* elements", root.sourceline)
    width, height = (app_frame[2], app_frame[3]) if app_frame else (extent[0], extent[1])
    targets = tuple(Target(ordinal=k, **fields) for k, fields in enumerate(found))
    return Screen(path=path, platform="ios", width=width, height=height, rotation=0, targets=targets,
                  hints=hints, coords="pt", image=image)


def _hidden_ancestor(el: etree._Element) -> bool:
    return any(a.get("visible") == "false" for a in el.iterancestors())
