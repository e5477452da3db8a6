"""Page source saved as JSON: a WebDriver response holding XML, or an iOS element tree in JSON.

Two shapes reach us from UI-test automation servers:
- the raw response of `GET /session/{id}/source` (W3C WebDriver, Get Page Source):
  `{"value": "<?xml ...>", "sessionId": "..."}`, the page source as a string;
- the JSON form of an iOS element tree: nested objects with `type`, `name`, `label`,
  `value`, `rect` {x, y, width, height} and/or `frame` "{{x, y}, {w, h}}", `isEnabled`,
  `isVisible`, `isAccessible` ("1"/"0") and `children` (WebDriverAgent's
  dictionaryForElement; `type` is the short name, "Button"), maybe inside `{"value": ...}`.
The tree is rebuilt as the XCUIElementType* elements the XML form has, so the iOS
reader treats both forms alike. JSON that is neither (nor COCO) is an error that says
what tapgauge reads.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path
from typing import Any

from lxml import etree

from tapgauge.model import InputError
from tapgauge.readers.ios import PREFIX

KINDS_READ = ("COCO annotations (lists 'images', 'annotations' and 'categories'); a WebDriver page-source "
              "response ({\"value\": \"<?xml ...\"}); or an iOS element tree in JSON (objects with 'type', "
              "'rect' or 'frame', and 'children')")
_WRAPPER_KEYS = frozenset({"value", "sessionId", "status"})  # a WebDriver response around its value
_TREE_KEYS = ("rect", "frame", "children", "isEnabled", "isVisible")
_FRAME = re.compile(r"^\{\{\s*([^,{}]+),\s*([^,{}]+)\},\s*\{\s*([^,{}]+),\s*([^,{}]+)\}\}$")  # NSStringFromCGRect
_TYPE = re.compile(r"^[A-Za-z][A-Za-z0-9]*$")
_FLAGS = (("isEnabled", "enabled"), ("isVisible", "visible"), ("isAccessible", "accessible"))
_TEXTS = ("name", "label", "value")
_FAR = 1e6  # points: beyond this the numbers are corrupt (as the iOS reader says for the XML form)

# Discovery reads only a file's head: these say "page source" without parsing the file.
_HEAD_SIGNS = re.compile(
    r'"sessionId"\s*:|"value"\s*:\s*"\s*(?:<|\\u003[cC])|"isEnabled"\s*:|"rect"\s*:\s*\{|"frame"\s*:\s*"\{\{'
)
HEAD_BYTES = 4096
_BOMS = ((b"\xef\xbb\xbf", "utf-8", "UTF-8"), (b"\xff\xfe", "utf-16-le", "UTF-16"), (b"\xfe\xff", "utf-16-be", "UTF-16"))


def looks_like_page_source(head: bytes) -> bool:
    """Whether the first bytes of a .json file look like page source (for discovery; never raises)."""
    text = head.decode("utf-8", "replace")
    for bom, codec, _ in _BOMS:
        if head.startswith(bom):
            text = head[len(bom):].decode(codec, "replace")  # a character cut at the end is replaced
            break
    return _HEAD_SIGNS.search(text) is not None


def load_json(path: Path, data: bytes) -> Any:
    """The parsed JSON, decoded by its byte-order mark; errors name the line and column."""
    encoding, name = "utf-8", "UTF-8"
    for bom, codec, called in _BOMS:
        if data.startswith(bom):
            data, encoding, name = data[len(bom):], codec, called
            break
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError as exc:
        line = data[:exc.start].decode(encoding, "replace").count("\n") + 1
        raise InputError(path, f"not valid {name} text (byte {exc.start}); expected JSON", line) from None
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(path, f"not valid JSON: {exc.msg} at line {exc.lineno}, column {exc.colno}", exc.lineno) from None
    except RecursionError:
        raise InputError(path, "JSON nested too deeply to read") from None


def json_kind(data: Any) -> tuple[str, Any]:
    """What a parsed .json file holds: ("coco" | "xml" | "tree" | "error" | "unknown", the part to read)."""
    if not isinstance(data, dict):
        return "unknown", data
    if "images" in data or "annotations" in data:
        return "coco", data
    if "value" in data and set(data) <= _WRAPPER_KEYS:
        inner = data["value"]
        if isinstance(inner, str):
            return "xml", inner
        if isinstance(inner, dict) and "error" in inner and "type" not in inner:
            return "error", inner  # W3C WebDriver error response: {"value": {"error", "message", ...}}
        if isinstance(inner, dict) and _is_tree(inner):
            return "tree", inner
        return "unknown", data
    return ("tree", data) if _is_tree(data) else ("unknown", data)


def _is_tree(node: dict[str, Any]) -> bool:
    return isinstance(node.get("type"), str) and any(k in node for k in _TREE_KEYS)


def server_error(path: Path, inner: dict[str, Any]) -> InputError:
    said = f"{inner.get('error')!s}: {inner.get('message', '')!s}".strip(": ")[:300]
    return InputError(path, f"the automation server answered with an error, not a page source ({said!r}); "
                            "save the source again once the session is running")


def tree_from_json(path: Path, top: dict[str, Any], prefix: str = "") -> etree._Element:
    """The XCUIElementType* element tree that the XML page source would have, built from the JSON form.

    Built without recursion (an explicit stack), so a deep tree cannot exhaust Python's stack.
    Every problem names its place as a path of keys, e.g. `children[2].rect.width`.
    """
    root = _element(path, top, prefix)
    stack = [(top, root, prefix)]
    while stack:
        node, el, where = stack.pop()
        kids = node.get("children")
        if kids is None:
            continue
        if not isinstance(kids, list):
            raise InputError(path, f"{_at(where, 'children')}: expected a list of elements, found {_kind(kids)}")
        built = []
        for k, kid in enumerate(kids):
            kid_where = _at(where, f"children[{k}]")
            if not isinstance(kid, dict):
                raise InputError(path, f"{kid_where}: expected an element object, found {_kind(kid)}")
            child = _element(path, kid, kid_where)
            el.append(child)
            built.append((kid, child, kid_where))
        stack.extend(reversed(built))
    return root


def _element(path: Path, node: dict[str, Any], where: str) -> etree._Element:
    kind = node.get("type")
    if not isinstance(kind, str) or not _TYPE.match(kind.removeprefix(PREFIX)):
        raise InputError(path, f"{_at(where, 'type')}: expected an element type such as \"Button\", found "
                               f"{_kind(kind) if not isinstance(kind, str) else repr(kind[:60])}")
    el = etree.Element(PREFIX + kind.removeprefix(PREFIX))
    el.set("type", PREFIX + kind.removeprefix(PREFIX))
    for key in _TEXTS:
        _set_text(path, el, key, node.get(key), _at(where, key))
    for key, attr in _FLAGS:
        if node.get(key) is not None:
            el.set(attr, _flag(path, node[key], _at(where, key)))
    frame = _frame(path, node, where)
    if frame is not None:
        for attr, value in zip(("x", "y", "width", "height"), frame):
            el.set(attr, repr(value))
    return el


def _set_text(path: Path, el: etree._Element, key: str, value: Any, where: str) -> None:
    if value is None:
        return  # WebDriverAgent writes null for an empty name, label or value
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise InputError(path, f"{where}: expected text, found {_kind(value)}")
    try:
        el.set(key, str(value))
    except ValueError:
        raise InputError(path, f"{where}: holds characters XML cannot carry") from None


def _flag(path: Path, value: Any, where: str) -> str:
    if value is True or value in ("1", "true", 1):
        return "true"
    if value is False or value in ("0", "false", 0):
        return "false"
    raise InputError(path, f"{where}: expected \"1\" or \"0\" (or true/false), found {value!r:.60}")


def _frame(path: Path, node: dict[str, Any], where: str) -> tuple[float, float, float, float] | None:
    """x, y, width, height in points from `rect`, else from `frame`; None when the element has neither."""
    rect, frame = node.get("rect"), node.get("frame")
    if rect is not None:
        if not isinstance(rect, dict):
            raise InputError(path, f"{_at(where, 'rect')}: expected {{x, y, width, height}}, found {_kind(rect)}")
        values = tuple(_number(path, rect.get(k), _at(where, f"rect.{k}")) for k in ("x", "y", "width", "height"))
    elif frame is not None:
        m = _FRAME.match(frame.strip()) if isinstance(frame, str) else None
        if m is None:
            raise InputError(path, f"{_at(where, 'frame')}: expected \"{{{{x, y}}, {{width, height}}}}\", found "
                                   f"{frame!r:.60}")
        values = tuple(_number(path, v.strip(), _at(where, "frame")) for v in m.groups())
    else:
        return None
    if values[2] < 0 or values[3] < 0:
        raise InputError(path, f"{_at(where, 'rect' if rect is not None else 'frame')}: negative width or height")
    return values  # type: ignore[return-value]


def _number(path: Path, raw: Any, where: str) -> float:
    try:
        value = float(raw) if not isinstance(raw, bool) and raw is not None else math.nan
    except (TypeError, ValueError, OverflowError):
        value = math.nan
    if not math.isfinite(value) or abs(value) >= _FAR:
        raise InputError(path, f"{where}: expected a number of points, found {raw!r:.60}")
    return value


def _at(where: str, key: str) -> str:
    if not where:
        return key
    return f"{where}{key}" if key.startswith("[") else f"{where}.{key}"


def _kind(value: Any) -> str:
    return {dict: "an object", list: "a list", str: "text", bool: "true/false", type(None): "null"}.get(
        type(value), "a number")
