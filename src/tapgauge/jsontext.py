"""Indented JSON text, fast, and JSON documents whose long list is written as it arrives.

orjson writes the same text as `json.dumps(obj, indent=2, ensure_ascii=False)` for the
records we make (checked by a test), about 30 times faster: the standard library falls
back to its pure-Python encoder whenever `indent` is set. What orjson refuses (integers
beyond 64 bits, non-string keys) goes to the standard library instead.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterable
from typing import Any, TextIO

import orjson

_OPTIONS = orjson.OPT_INDENT_2


def dumps(obj: Any) -> str:
    """`obj` as JSON indented by two spaces, without a final newline."""
    try:
        return orjson.dumps(obj, option=_OPTIONS).decode("utf-8")
    except (orjson.JSONEncodeError, TypeError):
        return json.dumps(obj, indent=2, ensure_ascii=False)


class Raw(str):
    """Text that is already indented JSON: written as it is, not dumped again."""


_MARK = "\x00tapgauge: streamed list\x00"


def write_streamed(out: TextIO, document: Callable[[Any, bool], dict[str, Any]], items: Iterable[Any],
                   mapping: bool = False) -> None:
    """Write `document` as indented JSON, with one list in it written item by item.

    `document(marker, final)` returns the document with `marker` standing for the
    list. It is called before the items (final=False: only the part before the list
    is used, so values known only at the end may be placeholders) and after them
    (final=True: only the part after the list is used). The text is the same as
    dumping the whole document at once. With `mapping`, items are (key, value) pairs
    and `marker` stands for an object.
    """
    first = dumps(document(_MARK, False))
    mark = dumps(_MARK)
    at = first.index(mark)
    line = first.rfind("\n", 0, at) + 1
    pad = "\n" + " " * (len(first[line:at]) - len(first[line:at].lstrip(" ")) + 2)
    out.write(first[:at])
    n = 0
    opening, closing = "{}" if mapping else "[]"
    for item in items:
        value = item[1] if mapping else item
        text = value if isinstance(value, Raw) else dumps(value)
        if mapping:
            text = dumps(str(item[0])) + ": " + text
        out.write((opening if n == 0 else ",") + pad + text.replace("\n", pad))
        n += 1
    out.write(opening + closing if n == 0 else pad[:-2] + closing)
    last = dumps(document(_MARK, True))
    out.write(last[last.index(mark) + len(mark):] + "\n")
