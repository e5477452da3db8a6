"""iOS element trees (the XML page source of UI-test automation servers) into a Screen.

Element names are the element types (XCUIElementTypeButton, ...); frames are x, y,
width, height in points, possibly fractional; attributes that are nil are left out;
the tree may sit inside an extra wrapper element. Frames are the elements' full
frames, not clipped to their scroll view, so a half-scrolled cell still has its true
size: nothing here is "partial" for clipping.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from lxml import etree

from tapgauge.model import DeviceHints, InputError, Screen, Target, Window

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


_TEXT_WITHIN = 60  # characters of descendants' text kept to name a target with none of its own


class _Walk:
    """One pass over the tree: targets with their tree path, keyboards, texts, skipped labelled elements."""

    def __init__(self, path: Path, loose: bool) -> None:
        self.path = path
        self.loose = loose  # take accessible "Other" elements with a label as targets
        self.found: list[dict[str, Any]] = []
        self.texts: list[str] = []  # labels and values in walk order, to name targets that have none
        self.windows: list[Window] = []  # the app's (index 0, once its frame is known), then each keyboard
        self.others: list[etree._Element] = []  # accessible labelled "Other" elements: controls in disguise?
        self.extent = [0.0, 0.0]
        self.app_frame: tuple[float, float, float, float] | None = None
        self.framed = 0
        self.order = 0

    def visit(self, elements: Iterable[etree._Element], tree: tuple[tuple[int, bool], ...], window: int,
              hidden: bool) -> None:
        place = 0
        for child in elements:
            if not isinstance(child.tag, str):
                continue
            if not child.tag.startswith(PREFIX) and child.get("type") is None:
                self.visit(child, tree, window, hidden)  # a wrapper element
                continue
            self.order += 1
            here = (*tree, (place, False))  # element order is not a stacking order iOS promises
            place += 1
            kind = element_type(child)
            frame = _frame(child, self.path)
            shown = not hidden and child.get("visible", "true") != "false"
            mine = window
            if frame is not None:
                self.framed += 1
                if kind == "Application" and self.app_frame is None:
                    self.app_frame = frame
                self.extent[0], self.extent[1] = max(self.extent[0], frame[2]), max(self.extent[1], frame[3])
                if kind == "Keyboard":
                    mine = len(self.windows) + 1  # index 0 is kept for the app's window
                    self.windows.append(Window(frame, "", "keyboard", child.sourceline))
            label = (child.get("label") or child.get("value") or "").strip()
            target = frame is not None and kind in INTERACTIVE
            if (frame is not None and kind == "Other" and label and child.get("accessible") == "true"
                    and not any(element_type(d) in INTERACTIVE for d in child.iterdescendants())):
                self.others.append(child)
                target = target or self.loose
            if label and not target:  # a nested target's text names that target, not the one around it
                self.texts.append(label)
            start = len(self.texts)
            entry: dict[str, Any] | None = None
            if target:
                ident = child.get("name") or ""
                entry = {
                    "bounds": frame, "cls": PREFIX + kind, "label": label, "resource_id": "" if ident == label else ident,
                    "enabled": child.get("enabled", "true") == "true", "visible": shown, "paint_rank": self.order,
                    "line": child.sourceline, "path": here, "window": mine,
                }
                self.found.append(entry)
            if len(child):
                self.visit(child, here, mine, not shown)
            if entry is not None and not label:
                entry["text_within"] = " ".join(self.texts[start:])[:_TEXT_WITHIN].strip()


def read_ios(path: Path, root: etree._Element, hints: tuple[DeviceHints, ...], image: Path | None = None,
             include_focusable: bool = False) -> Screen:
    walk = _Walk(path, include_focusable)
    # The tree's top: the root itself when it is an element type, else what the wrapper holds.
    walk.visit([root] if root.tag.startswith(PREFIX) or root.get("type") is not None else root, (), 0, False)
    if walk.framed == 0:
        raise InputError(path, "iOS element tree has no frames; expected x, y, width and height attributes "
                               "(in points) on the XCUIElementType* elements", root.sourceline)
    frame = walk.app_frame or (0.0, 0.0, walk.extent[0], walk.extent[1])
    targets = tuple(Target(number=k, **fields) for k, fields in enumerate(walk.found, start=1))
    return Screen(path=path, platform="ios", width=frame[2], height=frame[3], rotation=0, targets=targets,
                  hints=hints, coords="pt", image=image, windows=(Window(frame, "", "", None), *walk.windows),
                  notices=_others_notice(walk.others, include_focusable))


def _others_notice(others: list[etree._Element], taken: bool) -> tuple[str, ...]:
    if not others:
        return ()
    first = others[0]
    example = f"first at line {first.sourceline}, '{(first.get('label') or first.get('value') or '').strip()}'"
    if taken:
        return (f"took {len(others)} accessible 'Other' element(s) with a label as targets ({example}), "
                "as --include-focusable asks",)
    return (f"{len(others)} accessible 'Other' element(s) carry a label but no control type ({example}); "
            "custom controls are often written this way: --include-focusable checks them as targets",)
