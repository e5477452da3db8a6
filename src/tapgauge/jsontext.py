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
        text = dumps(value)
        if mapping:
            text = dumps(str(item[0])) + ": " + text
        out.write((opening if n == 0 else ",") + pad + text.replace("\n", pad))
        n += 1
    out.write(opening + closing if n == 0 else pad[:-2] + closing)
    last = dumps(document(_MARK, True))
    out.write(last[last.index(mark) + len(mark):] + "\n")


def write_lines_streamed(out: TextIO, document: Callable[[Any, bool], dict[str, Any]], items: Iterable[str]) -> None:
    """Write `document` as compact JSON with one list in it written item by item, one item a line.

    `document` is called as for `write_streamed`; `items` are compact JSON texts. The text is
    one JSON document (RFC 8259) whose list items each sit on a line of their own, so a large
    report can be read with `grep` or `head` as well as with a JSON parser.
    """
    mark = orjson.dumps(_MARK).decode("utf-8")
    first = orjson.dumps(document(_MARK, False)).decode("utf-8")
    out.write(first[:first.index(mark)] + "[")
    n = 0
    for text in items:
        out.write(("\n" if n == 0 else ",\n") + text)
        n += 1
    last = orjson.dumps(document(_MARK, True)).decode("utf-8")
    out.write(("\n]" if n else "]") + last[last.index(mark) + len(mark):] + "\n")
