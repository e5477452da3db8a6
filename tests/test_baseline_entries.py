"""Each way a baseline target entry can be damaged is named, and a sound entry passes.

The gate trusts nothing it reads from a baseline file (a person may have edited it, a copy may be
cut short). These cases pin what the checker of one target entry says for each field the gate
reads; the gate turns a non-empty answer into an input error (tests/test_hostile.py fuzzes whole
files). Numbers are JSON numbers (RFC 8259, section 6); true and false are literal names, not numbers
(section 3; both from memory).
"""

from __future__ import annotations

import copy
from typing import Any

import pytest

from tapgauge.gate import _target_problem

SOUND: dict[str, Any] = {
    "key": "id:plot_save", "fingerprint": "0f3a", "name": "Save plot", "status": "fail",
    "failing": ["wcag-2.5.8-size"], "size": [40, 36.5], "unit": "dp", "size_mm": [6.4, 5.8],
    "difficulty": {"adult": {"time_ms": 512.3, "miss": 0.04}, "tremor": {"time_ms": 830, "miss": None}},
    "approach": {"distance": 412.0, "width": 36.5},
}
_DROP = object()  # _with: remove the field instead of setting it


def _with(path: tuple[str, ...], value: Any) -> dict[str, Any]:
    t = copy.deepcopy(SOUND)
    at = t
    for k in path[:-1]:
        at = at[k]
    if value is _DROP:
        del at[path[-1]]
    else:
        at[path[-1]] = value
    return t


LACKS = "lacks key, status, failing, size or difficulty"
TEXT = "has a key, status or name that is not text"
FAILING = "has 'failing' that is not a list of rule ids"
SIZE = "has 'size' that is not [width, height]"
DIFF = "has 'difficulty' that is not profile -> {time_ms, miss}"
APPROACH = "has 'approach' that is not {distance, width}"


def test_a_sound_entry_passes_with_or_without_its_optional_fields() -> None:
    assert _target_problem(SOUND) == ""
    assert _target_problem(_with(("approach",), None)) == ""  # version 2 entries of unmeasured reaches
    assert _target_problem(_with(("approach",), _DROP)) == ""  # version 1 entries carry none
    assert _target_problem(_with(("name",), _DROP)) == ""
    assert _target_problem(_with(("difficulty",), {})) == ""  # no profile chosen
    assert _target_problem(_with(("failing",), [])) == ""


@pytest.mark.parametrize(("path", "value", "problem"), [
    ((), None, LACKS),
    (("key",), _DROP, LACKS), (("status",), _DROP, LACKS), (("failing",), _DROP, LACKS),
    (("size",), _DROP, LACKS), (("difficulty",), _DROP, LACKS),
    (("key",), 7, TEXT), (("status",), None, TEXT), (("name",), ["Save"], TEXT),
    (("failing",), "wcag-2.5.8-size", FAILING), (("failing",), ["wcag-2.5.8-size", 3], FAILING),
    (("size",), [40], SIZE), (("size",), [40, 36, 1], SIZE), (("size",), [40, "36"], SIZE),
    (("size",), [True, 36], SIZE), (("size",), {"width": 40, "height": 36}, SIZE),
    (("difficulty",), [], DIFF), (("difficulty", "adult"), 512.3, DIFF),
    (("difficulty", "adult", "time_ms"), _DROP, DIFF), (("difficulty", "adult", "time_ms"), "512", DIFF),
    (("difficulty", "adult", "time_ms"), False, DIFF), (("difficulty", "adult", "miss"), _DROP, DIFF),
    (("difficulty", "tremor", "miss"), "4%", DIFF), (("difficulty", "tremor", "miss"), True, DIFF),
    (("approach",), [412.0, 36.5], APPROACH), (("approach", "distance"), _DROP, APPROACH),
    (("approach", "width"), None, APPROACH), (("approach", "width"), True, APPROACH),
])
def test_each_damage_is_named(path: tuple[str, ...], value: Any, problem: str) -> None:
    entry = value if not path else _with(path, value)
    assert _target_problem(entry) == problem
