"""Which annotation classes are touch targets: a small table the user can override."""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

from tapgauge.model import InputError
from tapgauge.ruledata import rules_dir
from tapgauge.textfile import load_toml, read_text


def normalise(name: str) -> str:
    return re.sub(r"[\s_\-]+", "", name).lower()


@dataclass(frozen=True)
class ClassMap:
    target: frozenset[str]
    ignore: frozenset[str]
    source: str

    def is_target(self, name: str, path: Path, line: int | None) -> bool:
        key = normalise(name)
        if key in self.target:
            return True
        if key in self.ignore:
            return False
        raise InputError(
            path,
            f"annotation class {name!r} is neither a target nor ignored in {self.source}; add it to "
            "'target' or 'ignore' in a classes file (--classes FILE) or in [classes] of tapgauge.toml",
            line,
        )


def class_map_from(table: dict[str, object], source: str) -> ClassMap:
    unknown = set(table) - {"target", "ignore"}
    if unknown:
        raise InputError(source, f"unknown key '{sorted(unknown)[0]}' in a classes table; expected target and ignore")
    lists: dict[str, frozenset[str]] = {}
    for key in ("target", "ignore"):
        value = table.get(key, [])
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise InputError(source, f"'{key}' must be a list of class names")
        lists[key] = frozenset(normalise(v) for v in value)
    both = lists["target"] & lists["ignore"]
    if both:
        raise InputError(source, f"class '{sorted(both)[0]}' is listed as both target and ignore")
    return ClassMap(lists["target"], lists["ignore"], source)


def default_class_map() -> ClassMap:
    text = rules_dir().joinpath("annotation-classes.toml").read_text("utf-8")
    return class_map_from(tomllib.loads(text), "the built-in class table")


def load_class_map(path: Path) -> ClassMap:
    table = load_toml(read_text(path, "classes file"), path)
    return class_map_from(table, str(path))
