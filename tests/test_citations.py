"""Sources are cited where a reader can follow them: the published work, never a private notes file.

A comment pointing at a references file outside this repository (a sibling "shared" folder)
cannot be followed by anyone who has only the repository, so such pointers are refused here.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from conftest import REPO

SCANNED = ("tests", "src", "rules", "bench")
TOP_LEVEL = ("README.md", "DEVELOPERS.md", "pyproject.toml")

# Built from pieces so that this file does not match itself.
_REFS = "REFER" "ENCES"
_SHARED = "shar" "ed"
FORBIDDEN = {
    "a references file": re.compile(rb"\b" + _REFS.encode() + rb"(\.md)?\b"),
    "a mention of the notes file by name": re.compile(rb"the " + _REFS.lower().encode() + rb" file", re.IGNORECASE),
    "a path to a sibling notes folder": re.compile(rf"(\.\./)+{_SHARED}\b|/work/{_SHARED}\b".encode()),
    "a notes file in a sibling notes folder": re.compile(rf"\b{_SHARED}/[A-Z][A-Z_-]*(\.md)?\b".encode()),
}


def _files() -> list[Path]:
    found = [REPO / name for name in TOP_LEVEL if (REPO / name).is_file()]
    for top in SCANNED:
        found += sorted(p for p in (REPO / top).rglob("*")
                        if p.is_file() and "__pycache__" not in p.parts and p.suffix != ".pyc")
    return found


def test_the_scan_sees_the_tree() -> None:
    names = {p.relative_to(REPO).as_posix() for p in _files()}
    assert "tests/test_citations.py" in names and "src/tapgauge/cli.py" in names
    assert any(n.startswith("rules/") for n in names) and any(n.startswith("bench/") for n in names)


@pytest.mark.parametrize("what", sorted(FORBIDDEN))
def test_no_file_cites_a_source_outside_the_repository(what: str) -> None:
    pattern = FORBIDDEN[what]
    hits = []
    for path in _files():
        data = path.read_bytes()  # bytes: pictures and UTF-16 fixtures are scanned without decoding
        for m in pattern.finditer(data):
            line = data.count(b"\n", 0, m.start()) + 1
            hits.append(f"{path.relative_to(REPO).as_posix()}:{line}: {m.group().decode(errors='replace')}")
    assert not hits, (f"{what} is cited; cite the published source itself (author, title, venue, year, "
                      "section), marked 'from memory' or 'common practice' where that applies:\n" + "\n".join(hits))


@pytest.mark.parametrize(("text", "caught"), [
    ("(" + _REFS + ".md section 4, published)", True),
    ("see " + _REFS + " section 2", True),
    ("as the " + _REFS.lower() + " file says", True),
    ("../" + _SHARED + "/" + _REFS + ".md", True),
    (_SHARED + "/DESIGN.md", True),
    ("entity and numeric character " + _REFS.lower(), False),  # CommonMark's own words
    ('overlay_name({"path": "../../etc/x.xml"})', False),  # a hostile path in a test, not a citation
    ("shared memory", False),
])
def test_the_patterns_catch_citations_and_spare_ordinary_words(text: str, caught: bool) -> None:
    assert any(p.search(text.encode()) for p in FORBIDDEN.values()) is caught
