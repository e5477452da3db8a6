"""Project configuration: `tapgauge.toml`, or `[tool.tapgauge]` in `pyproject.toml`.

Found by walking up from the current folder. Every key is checked; unknown keys and
wrong types are errors naming the file and key.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from tapgauge.device import parse_density, parse_ppi, parse_scale
from tapgauge.model import DeviceHints, InputError, Severity
from tapgauge.readers.classes import ClassMap, class_map_from
from tapgauge.readers.marked import parse_marker

CONFIG_NAME = "tapgauge.toml"


@dataclass(frozen=True)
class Config:
    path: Path | None = None
    rules: tuple[str, ...] | None = None
    fail_level: Severity | None = None
    device: DeviceHints = DeviceHints()
    classes: ClassMap | None = None
    marker: str | None = None


def find_config(start: Path) -> tuple[Path, dict[str, Any], str] | None:
    """The nearest config at or above `start`: (path, table, text)."""
    for folder in [start, *start.parents]:
        own = folder / CONFIG_NAME
        if own.is_file():
            text = _read(own)
            return own, _loads(own, text), text
        py = folder / "pyproject.toml"
        if py.is_file():
            text = _read(py)
            table = _loads(py, text).get("tool", {}).get("tapgauge")
            if isinstance(table, dict):
                return py, table, text
    return None


def _read(path: Path) -> str:
    try:
        return path.read_text("utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(path, f"cannot read config: {exc}") from None


def _loads(path: Path, text: str) -> dict[str, Any]:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise InputError(path, f"not valid TOML: {exc}", int(m.group(1)) if m else None) from None


def _line(text: str, key: str) -> int | None:
    m = re.search(rf"^\s*{re.escape(key)}\s*=", text, re.MULTILINE)
    return text.count("\n", 0, m.start()) + 1 if m else None


def load_config(start: Path) -> Config:
    found = find_config(start)
    if found is None:
        return Config()
    path, table, text = found

    def bad(key: str, msg: str) -> InputError:
        return InputError(path, f"config key '{key}': {msg}", _line(text, key.split(".")[-1]))

    allowed = {"rules", "fail_level", "device", "classes", "marker"}
    for key in table:
        if key not in allowed:
            raise bad(key, f"unknown key; expected one of {', '.join(sorted(allowed))}")
    rules = table.get("rules")
    if rules is not None and not (isinstance(rules, list) and all(isinstance(r, str) for r in rules)):
        raise bad("rules", "must be a list of rule-set ids or file paths")
    if rules is not None:
        # Paths in the config are relative to the config file, not the current folder.
        rules = [str(path.parent / r) if r.endswith(".toml") else r for r in rules]
    classes = None
    if "classes" in table:
        if not isinstance(table["classes"], dict):
            raise bad("classes", "must be a table with 'target' and 'ignore' lists")
        classes = class_map_from(table["classes"], f"{path.name} [classes]")
    marker = table.get("marker")
    if marker is not None:
        try:
            parse_marker(str(marker))
        except ValueError as exc:
            raise bad("marker", str(exc)) from None
        marker = str(marker)
    fail_level = None
    if "fail_level" in table:
        try:
            fail_level = Severity.parse(str(table["fail_level"]))
        except ValueError as exc:
            raise bad("fail_level", str(exc)) from None
    device = table.get("device", {})
    if not isinstance(device, dict):
        raise bad("device", "must be a table with density and/or ppi")
    density = ppi = scale = None
    for key, value in device.items():
        if key == "density":
            try:
                density = parse_density(str(value))
            except ValueError as exc:
                raise bad("device.density", str(exc)) from None
        elif key == "scale":
            try:
                scale = parse_scale(str(value))
            except ValueError as exc:
                raise bad("device.scale", str(exc)) from None
        elif key == "ppi":
            try:
                ppi = parse_ppi(str(value))
            except ValueError as exc:
                raise bad("device.ppi", str(exc)) from None
        else:
            raise bad(f"device.{key}", "unknown key; expected density, scale or ppi")
    hints = DeviceHints(
        density_dpi=density, scale=scale, xdpi=ppi[0] if ppi else None, ydpi=ppi[1] if ppi else None,
        source=f"config {path.name}",
    )
    return Config(path=path, rules=tuple(rules) if rules is not None else None, fail_level=fail_level, device=hints,
                  classes=classes, marker=marker)
