"""Android window dumps (`adb shell uiautomator dump`) into a Screen.

Any element with a `bounds` attribute is a view node, whatever its tag: the stock
dumper writes `<node>`, some automation servers write the class name as the tag,
and multi-window dumps nest several roots under extra container elements.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from lxml import etree

from tapgauge.model import Box, DeviceHints, InputError, Screen, Target

_BOUNDS = re.compile(r"^\s*\[(-?\d+),(-?\d+)\]\[(-?\d+),(-?\d+)\]\s*$")
_TRUE = "true"
# Scrolling containers that move sideways; every other scrollable scrolls vertically.
_HORIZONTAL_HINTS = ("HorizontalScrollView", "ViewPager", "TabLayout", "HorizontalGridView")
_FAR = 1_000_000  # pixels: no screen is this large; beyond it the numbers are corrupt


def _int_attr(el: etree._Element, name: str, path: Path) -> int:
    raw = el.get(name)
    if raw is None:
        return 0
    try:
        return int(raw)
    except ValueError:
        raise InputError(path, f"{name}={raw!r}; expected a whole number of pixels", el.sourceline) from None


def is_android_root(root: etree._Element) -> bool:
    return root.tag == "hierarchy"


def _bounds(el: etree._Element, path: Path) -> Box:
    raw = el.get("bounds")
    if raw is None:
        raise InputError(path, f"<{el.tag}> has no bounds attribute; expected bounds=\"[l,t][r,b]\"", el.sourceline)
    m = _BOUNDS.match(raw)
    if not m:
        raise InputError(path, f"bounds={raw!r} is not of the form \"[left,top][right,bottom]\"", el.sourceline)
    l, t, r, b = map(int, m.groups())
    if r < l or b < t:
        raise InputError(path, f"bounds={raw!r} has right < left or bottom < top", el.sourceline)
    if not (-_FAR <= l <= _FAR and -_FAR <= t <= _FAR and -_FAR <= r <= _FAR and -_FAR <= b <= _FAR):
        raise InputError(path, f"bounds={raw!r} is outside any plausible screen", el.sourceline)
    return (l, t, r, b)


def _is_node(el: etree._Element) -> bool:
    return isinstance(el.tag, str) and (el.tag == "node" or el.get("bounds") is not None)


def _scroll_axis(el: etree._Element) -> str:
    cls = el.get("class") or el.tag
    return "x" if any(h in cls for h in _HORIZONTAL_HINTS) else "y"


def _drawing_key(el: etree._Element, position: int) -> tuple[int, int]:
    raw = el.get("drawing-order")
    try:
        return (int(raw), position) if raw is not None else (position, position)
    except ValueError:
        return (position, position)


def read_android(path: Path, root: etree._Element, hints: tuple[DeviceHints, ...], image: Path | None = None) -> Screen:
    rotation_raw = root.get("rotation", "0")
    if rotation_raw.strip() not in ("0", "1", "2", "3"):
        raise InputError(path, f"rotation={rotation_raw!r}; expected 0, 1, 2 or 3", root.sourceline)
    rotation = int(rotation_raw)

    targets: list[tuple[int, tuple[Any, ...]]] = []
    doc_index = {el: k for k, el in enumerate(root.iter())}
    extent = [0, 0]
    paint = 0

    def walk(el: etree._Element, scrollers: tuple[tuple[Box, str], ...], shown: bool) -> None:
        nonlocal paint
        if not len(el):
            return
        kids = [k for k in el if isinstance(k.tag, str)]
        if len(kids) > 1:  # children paint in drawing order when the dump gives it, else document order
            kids = [kids[p] for p in sorted(range(len(kids)), key=lambda p: _drawing_key(kids[p], p))]
        for child in kids:
            if not _is_node(child):
                walk(child, scrollers, shown)  # a container such as <window> or <display>
                continue
            box = _bounds(child, path)
            extent[0], extent[1] = max(extent[0], box[2]), max(extent[1], box[3])
            paint += 1
            visible = shown and child.get("visible-to-user", _TRUE) == _TRUE
            get = child.get  # a target is anything that takes a tap, a long press or a check
            if get("clickable") == _TRUE or get("long-clickable") == _TRUE or get("checkable") == _TRUE:
                # Target's fields after the ordinal, in order: bounds, cls, label, resource_id,
                # enabled, visible, paint_rank, scroll_ancestors, line.
                targets.append((doc_index[child], (
                    box,
                    get("class") or child.tag,
                    (get("text") or get("content-desc") or "").strip(),
                    get("resource-id") or "",
                    get("enabled", _TRUE) == _TRUE,
                    visible,
                    paint,
                    scrollers,
                    child.sourceline,
                )))
            inner = scrollers + ((box, _scroll_axis(child)),) if child.get("scrollable") == _TRUE else scrollers
            walk(child, inner, visible)

    walk(root, (), True)
    if paint == 0:
        raise InputError(path, "no view nodes found; expected <node bounds=...> elements under <hierarchy>", root.sourceline)
    # Document order gives stable ordinals whatever the paint order was.
    targets.sort(key=lambda pair: pair[0])
    numbered = tuple(Target(k, *fields) for k, (_, fields) in enumerate(targets))
    width = _int_attr(root, "width", path) or extent[0]
    height = _int_attr(root, "height", path) or extent[1]
    return Screen(
        path=path, platform="android", width=width, height=height, rotation=rotation,
        targets=numbered, hints=hints, image=image,
    )
