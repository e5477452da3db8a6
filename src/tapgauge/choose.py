"""Picking rule sets or profiles from a spec: built-in ids and paths to the user's TOML files."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TypeVar

from tapgauge.model import InputError
from tapgauge.textfile import read_text

T = TypeVar("T")


def choose(spec: list[str], builtins: dict[str, T], parse: Callable[[str, str], T], ident: Callable[[T], str],
           what: str) -> list[T]:
    """Items in the order given; a TOML path is read and parsed, an id looked up; each at most once."""
    chosen: list[T] = []
    for item in (s.strip() for s in spec):
        if not item:
            continue
        path = Path(item)
        if item.endswith(".toml") or path.is_file():
            chosen.append(parse(read_text(path, f"{what} file"), str(path)))
        elif item in builtins:
            chosen.append(builtins[item])
        else:
            raise InputError(item, f"no such {what}; built-in ids are: {', '.join(builtins)}")
    ids = [ident(x) for x in chosen]
    dup = next((i for i in ids if ids.count(i) > 1), None)
    if dup:
        raise InputError(dup, f"{what} chosen twice")
    return chosen
