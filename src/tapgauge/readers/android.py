"""Android window dumps (`adb shell uiautomator dump`) into a Screen.

Any element with a `bounds` attribute is a view node, whatever its tag: the stock
dumper writes `<node>`, some automation servers write the class name as the tag,
and multi-window dumps nest several roots under extra container elements.
"""

from __future__ import annotations

import re
from itertools import pairwise
from pathlib import Path

import numpy as np
from lxml import etree

from tapgauge.model import Box, DeviceHints, InputError, Screen, Target, Window, new_row

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


def _scroll_axis(el: etree._Element) -> str:
    cls = el.get("class") or el.tag
    return "x" if any(h in cls for h in _HORIZONTAL_HINTS) else "y"


def _drawing_key(raw: str | None, position: int) -> tuple[int, int]:
    try:
        return (int(raw), position) if raw is not None else (position, position)
    except ValueError:
        return (position, position)


def _paint_order(kids: list[etree._Element]) -> list[etree._Element] | None:
    """Siblings in drawing order when the dump gives one that differs from document order, else None."""
    orders = [k.get("drawing-order") for k in kids]
    if not any(orders):
        return None
    try:  # the usual case: every sibling numbered, already ascending
        numbers = [int(o) for o in orders]  # type: ignore[arg-type]
        if all(a <= b for a, b in pairwise(numbers)):
            return None
    except (TypeError, ValueError):
        pass
    ranked = sorted(range(len(kids)), key=lambda p: _drawing_key(orders[p], p))
    return None if ranked == list(range(len(kids))) else [kids[p] for p in ranked]


# Every bounds value of a well-formed dump, joined by commas, in one C-level match; a file
# that fails it (spaces, a huge number, a typo) is read one node at a time to name the culprit.
_ALL_BOUNDS = re.compile(r"(?:\[-?\d{1,7},-?\d{1,7}\]\[-?\d{1,7},-?\d{1,7}\],)*")
_SEPARATORS = str.maketrans("[],", "   ")


def _boxes(raws: list[str], nodes: list[etree._Element], path: Path) -> list[list[int]]:
    """Every view node's box, [l, t, r, b] in pixels, validated as `_bounds` does, in bulk."""
    joined = ",".join(raws) + ","
    if _ALL_BOUNDS.fullmatch(joined):
        arr = np.fromstring(joined.translate(_SEPARATORS), dtype=np.int64, sep=" ").reshape(-1, 4)
        if not ((arr[:, 2] < arr[:, 0]) | (arr[:, 3] < arr[:, 1]) | (np.abs(arr) > _FAR).any(axis=1)).any():
            return arr.tolist()  # type: ignore[no-any-return]
    return [list(_bounds(el, path)) for el in nodes]  # raises for the first bad node, in paint order


Scrollers = tuple[tuple[Box, str], ...]  # scrolling view nodes above a node: (bounds, axis "x"/"y")
Path_ = tuple[tuple[int, bool], ...]  # Target.path: (place in paint order, numbered by drawing-order) per level
_TEXT_WITHIN = 60  # characters of descendants' text kept to name a target with none of its own


class _Walk:
    """One pass over a dump in paint order that only reads attributes.

    Every box is parsed and checked in bulk afterwards (`_boxes`), sparing a regex
    match and four int() calls per node. A class rather than a recursive closure:
    a closure that calls itself is a reference cycle, which kept each file's whole
    tree alive until the garbage collector came round.

    A view node met outside any other view node is a window's root: stock dumps put
    one per window straight under <hierarchy>, in no particular order (the dumper
    collects them in a hash set), so windows are stacked later by what they are.
    """

    __slots__ = ("focusable", "found", "loose", "nodes", "path", "raws", "reordered", "texts", "window_boxes",
                 "windows")

    def __init__(self, path: Path, focusable: bool) -> None:
        self.path = path
        self.loose = focusable  # take focusable-but-not-clickable nodes as targets
        self.nodes: list[etree._Element] = []  # view nodes in paint order; paint rank = place + 1
        self.raws: list[str] = []  # their bounds, unparsed
        # targets: node, rank, visible, scrollers, tree path, window, [start, end] of its descendants' texts
        self.found: list[tuple[etree._Element, int, bool, Scrollers, Path_, int, list[int]]] = []
        self.focusable: list[etree._Element] = []  # focusable, not clickable: maybe a control in disguise
        self.texts: list[str] = []  # visible texts in walk order, to name targets that have none
        self.windows: list[etree._Element] = []  # the root node of each window (its box: `window_boxes`)
        self.window_boxes: list[int] = []  # where each window root's bounds stand in `raws`
        self.reordered = False

    def children(self, el: etree._Element, scrollers: Scrollers, shown: bool, tree: Path_, window: int) -> None:
        kids = list(el)  # the parser drops comments and PIs; a stray one has no bounds and no children
        numbered = False
        if len(kids) > 1:  # children paint in drawing order when the dump gives it, else document order
            numbered = kids[0].get("drawing-order") is not None
            painted = _paint_order(kids)
            if painted is not None:
                kids, self.reordered = painted, True
        nodes, raws, found, texts = self.nodes, self.raws, self.found, self.texts
        for place, child in enumerate(kids):
            get = child.get
            raw = get("bounds")
            if raw is None:
                if child.tag == "node":
                    raise InputError(self.path, "<node> has no bounds attribute; expected bounds=\"[l,t][r,b]\"",
                                     child.sourceline)
                if len(child):  # a container such as <window> or <display>
                    self.children(child, scrollers, shown, tree, window)
                continue
            if window < 0:  # a window's root
                mine = len(self.windows)
                self.windows.append(child)
                self.window_boxes.append(len(raws))
            else:
                mine = window
            nodes.append(child)
            raws.append(raw)
            # a target is anything that takes a tap, a long press or a check
            tappable = get("clickable") == _TRUE or get("long-clickable") == _TRUE or get("checkable") == _TRUE
            if not tappable and get("focusable") == _TRUE and get("scrollable") != _TRUE:
                self.focusable.append(child)
                tappable = self.loose
            own = None if tappable else get("text") or get("content-desc")
            if own:  # a nested target's text names that target, not the one around it
                texts.append(own.strip())
            has_kids = len(child)
            if not (tappable or has_kids):
                continue  # a plain leaf: its box and text are all it gives
            visible = shown and get("visible-to-user", _TRUE) == _TRUE
            here = ((0, False),) if window < 0 else (*tree, (place, numbered))
            if tappable:
                span = [len(texts), len(texts)]
                found.append((child, len(raws), visible, scrollers, here, mine, span))
            if has_kids:
                if get("scrollable") == _TRUE:
                    self.children(child, (*scrollers, (_bounds(child, self.path), _scroll_axis(child))), visible,
                                  here, mine)
                else:
                    self.children(child, scrollers, visible, here, mine)
                if tappable:
                    span[1] = len(texts)


def _text_within(texts: list[str], start: int, stop: int) -> str:
    return " ".join(texts[start:stop])[:_TEXT_WITHIN].strip()


def read_android(path: Path, root: etree._Element, hints: tuple[DeviceHints, ...], image: Path | None = None,
                 include_focusable: bool = False) -> Screen:
    rotation_raw = root.get("rotation", "0")
    if rotation_raw.strip() not in ("0", "1", "2", "3"):
        raise InputError(path, f"rotation={rotation_raw!r}; expected 0, 1, 2 or 3", root.sourceline)
    rotation = int(rotation_raw)

    walk = _Walk(path, include_focusable)
    walk.children(root, (), True, (), -1)
    nodes, raws, found = walk.nodes, walk.raws, walk.found
    if not nodes:
        raise InputError(path, "no view nodes found; expected <node bounds=...> elements under <hierarchy>", root.sourceline)
    boxes = _boxes(raws, nodes, path)
    if walk.reordered:  # document order gives stable numbers whatever the paint order was
        doc_index = {el: k for k, el in enumerate(root.iter())}
        found.sort(key=lambda item: doc_index[item[0]])
    targets = []
    for k, (el, rank, visible, scrollers, tree, window, (start, stop)) in enumerate(found, start=1):
        get = el.get
        label = (get("text") or get("content-desc") or "").strip()
        targets.append(new_row(Target, (
            k, tuple(boxes[rank - 1]), get("class") or el.tag, label,
            get("resource-id") or "", get("enabled", _TRUE) == _TRUE, visible, rank, scrollers, el.sourceline,
            tree, window, "" if label else _text_within(walk.texts, start, stop),
        )))
    width = _int_attr(root, "width", path) or max(0, max(b[2] for b in boxes))
    height = _int_attr(root, "height", path) or max(0, max(b[3] for b in boxes))
    windows = tuple(Window(tuple(boxes[at]), el.get("package") or "", "", el.sourceline)
                    for el, at in zip(walk.windows, walk.window_boxes))
    return Screen(
        path=path, platform="android", width=width, height=height, rotation=rotation,
        targets=tuple(targets), hints=hints, image=image, windows=windows,
        notices=_focusable_notice(walk.focusable, include_focusable),
    )


def _focusable_notice(nodes: list[etree._Element], taken: bool) -> tuple[str, ...]:
    if not nodes:
        return ()
    first = nodes[0]
    name = (first.get("text") or first.get("content-desc") or first.get("resource-id") or "").strip()
    example = f"first at line {first.sourceline}" + (f", '{name}'" if name else "")
    if taken:
        return (f"took {len(nodes)} focusable but not clickable node(s) as targets ({example}), "
                "as --include-focusable asks",)
    return (f"{len(nodes)} node(s) are focusable but not marked clickable ({example}); some frameworks write "
            "their buttons this way: --include-focusable checks them as targets",)
