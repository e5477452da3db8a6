"""Project configuration: `tapgauge.toml`, or `[tool.tapgauge]` in `pyproject.toml`.

Found by walking up from the current folder. Every key is checked; unknown keys and
wrong types are errors naming the file, line and key. Paths and patterns in the
config are relative to the config file's folder.
"""

from __future__ import annotations

import datetime as dt
import fnmatch
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from tapgauge.device import parse_density, parse_ppi, parse_scale
from tapgauge.model import DeviceHints, InputError, Severity
from tapgauge.readers.classes import ClassMap, class_map_from
from tapgauge.readers.marked import parse_marker
from tapgauge.renames import current, notice
from tapgauge.textfile import load_toml, read_text

CONFIG_NAME = "tapgauge.toml"
TOP_KEYS = ("project", "rules", "fail_level", "profiles", "marker", "device", "devices", "classes", "waivers", "gate",
            "all_windows", "package", "include_focusable")


def relative_to_base(path: Path, base: Path) -> str:
    """A screen path as config patterns see it: POSIX, relative to the config folder when inside it."""
    try:
        return path.resolve().relative_to(base.resolve()).as_posix()
    except ValueError:
        return path.as_posix()


@dataclass(frozen=True)
class DevicePattern:
    pattern: str  # '*' matches any characters, '/' included
    hints: DeviceHints


@dataclass(frozen=True)
class DeviceDefaults:
    """The config's say on devices: the first matching pattern, else the [device] table."""

    base: Path = Path(".")
    patterns: tuple[DevicePattern, ...] = ()
    fallback: DeviceHints = DeviceHints()

    def for_path(self, path: Path) -> DeviceHints:
        if not self.patterns:
            return self.fallback
        rel = relative_to_base(path, self.base)
        return next((p.hints for p in self.patterns if fnmatch.fnmatchcase(rel, p.pattern)), self.fallback)


@dataclass(frozen=True)
class Waiver:
    """A human decision that a finding is acceptable, with who, why and until when."""

    screen: str  # glob on the screen path relative to the config folder
    target: str  # "id:...", "label:..." or "class:..."
    rule: str  # glob on rule ids, e.g. "wcag-2.5.8/size-24" or "wcag-2.5.8/*"
    reason: str
    author: str
    expires: dt.date | None
    line: int | None = None


@dataclass(frozen=True)
class GateSettings:
    size_tolerance: float = 1.0  # dp/pt a target may shrink before it counts (common practice)
    miss_tolerance: float = 0.02  # rise in predicted miss probability (common practice)
    time_tolerance_ms: float = 25.0  # rise in predicted time (common practice)
    missing: str = "report"  # or "fail": a screen or target that disappeared
    moved: str = "report"  # or "fail": predicted time rose only because a target is farther from the start


@dataclass(frozen=True)
class Config:
    path: Path | None = None
    project: str | None = None
    rules: tuple[str, ...] | None = None
    fail_level: Severity | None = None
    profiles: tuple[str, ...] | None = None
    marker: str | None = None
    all_windows: bool | None = None  # also check the keyboard's, system bars' and other apps' targets
    app_package: str | None = None  # the app's package, where the largest window is not the app's
    include_focusable: bool | None = None  # also take focusable-only (Android) and labelled Other (iOS) as targets
    classes: ClassMap | None = None
    devices: DeviceDefaults = DeviceDefaults()
    waivers: tuple[Waiver, ...] = ()
    gate: GateSettings = GateSettings()
    raw: dict[str, Any] = field(default_factory=dict)
    notices: tuple[str, ...] = ()  # old ids it used, read under their new names

    @property
    def base(self) -> Path:
        return self.path.parent if self.path else Path.cwd()

    @property
    def project_name(self) -> tuple[str, str]:
        """The project's name as baselines record it, and where it comes from: the config's
        `project`, else the name of the folder the config is in (or the current folder)."""
        if self.project:
            return self.project, f"{self.path}"
        return self.base.resolve().name, "name of the folder " + ("holding the config" if self.path else "run in")

    @property
    def device(self) -> DeviceHints:
        return self.devices.fallback


def find_config(start: Path) -> tuple[Path, dict[str, Any], str] | None:
    """The nearest config at or above `start`: (path, table, text)."""
    for folder in [start, *start.parents]:
        own = folder / CONFIG_NAME
        if own.is_file():
            text = _read(own)
            return own, load_toml(text, own), text
        py = folder / "pyproject.toml"
        if py.is_file():
            text = _read(py)
            table = load_toml(text, py).get("tool", {}).get("tapgauge")
            if isinstance(table, dict):
                return py, table, text
    return None


def _read(path: Path) -> str:
    return read_text(path, "config")


class _Reader:
    """Checks one config table, naming file, line and key in every error."""

    def __init__(self, path: Path, text: str) -> None:
        self.path, self.text = path, text
        self.notices: list[str] = []  # old ids read under their new names

    def line(self, key: str, nth: int = 0) -> int | None:
        hits = list(re.finditer(rf"^\s*{re.escape(key)}\s*=", self.text, re.MULTILINE))
        m = hits[min(nth, len(hits) - 1)] if hits else None
        return self.text.count("\n", 0, m.start()) + 1 if m else None

    def bad(self, key: str, msg: str, nth: int = 0) -> InputError:
        return InputError(self.path, f"config key '{key}': {msg}", self.line(key.split(".")[-1].split("]")[-1], nth))

    def in_table(self, table: str, key: str, nth: int = 0) -> int | None:
        """The line of `key` within the nth [table] or [[table]] (the first of the file's
        keys so named may belong to another table); the table's own line for an inline table."""
        head = re.compile(rf"^\s*\[\[?\s*(?:tool\.tapgauge\.)?{re.escape(table)}\s*\]\]?\s*(?:#.*)?$")
        starts = [k for k, text in enumerate(self.text.split("\n")) if head.match(text)]
        if nth < len(starts):
            lines = self.text.split("\n")
            for k in range(starts[nth] + 1, len(lines)):
                if lines[k].lstrip().startswith("["):
                    break
                if re.match(rf"^\s*{re.escape(key)}\s*=", lines[k]):
                    return k + 1
        inline = self.line(table)
        return inline if inline is not None else self.line(key, nth)

    def strings(self, table: dict[str, Any], key: str) -> tuple[str, ...] | None:
        value = table.get(key)
        if value is None:
            return None
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.bad(key, "must be a list of strings")
        return tuple(value)

    def device(self, table: Any, where: str, allowed: tuple[str, ...] = ("density", "scale", "ppi"),
               nth: int = 0) -> DeviceHints:
        if not isinstance(table, dict):
            raise self.bad(where, "must be a table with density, scale and/or ppi")
        density = scale = ppi = None
        for key, value in table.items():
            if key not in allowed:
                raise self.bad(f"{where}.{key}", f"unknown key; expected {', '.join(allowed)}", nth)
            try:
                if key == "density":
                    density = parse_density(str(value))
                elif key == "scale":
                    scale = parse_scale(str(value))
                elif key == "ppi":
                    ppi = parse_ppi(str(value))
            except ValueError as exc:  # the flags' own checks and ranges, with this file's line
                raise InputError(self.path, f"config key '{where}.{key}': {exc}", self.in_table(where, key, nth)) from None
        return DeviceHints(density_dpi=density, scale=scale, xdpi=ppi[0] if ppi else None,
                           ydpi=ppi[1] if ppi else None, source=f"config {self.path.name}")


def load_config(start: Path) -> Config:
    found = find_config(start)
    if found is None:
        return Config()
    path, table, text = found
    r = _Reader(path, text)
    for key in table:
        if key not in TOP_KEYS:
            raise r.bad(key, f"unknown key; expected one of {', '.join(TOP_KEYS)}")
    project = table.get("project")
    if project is not None and not (isinstance(project, str) and project.strip()):
        raise r.bad("project", "must be a non-empty string naming the project (baselines carry it)")
    rules = r.strings(table, "rules")
    if rules is not None:
        r.notices += [n for x in rules if (n := notice(x, f"{path}:{r.line('rules') or '?'}: rule set"))]
        rules = tuple(str(path.parent / x) if x.endswith(".toml") else current(x) for x in rules)
    profiles = r.strings(table, "profiles")
    if profiles is not None:
        profiles = tuple(str(path.parent / x) if x.endswith(".toml") else x for x in profiles)
    marker = table.get("marker")
    if marker is not None:
        try:
            parse_marker(str(marker))
        except ValueError as exc:
            raise r.bad("marker", str(exc)) from None
    for flag in ("all_windows", "include_focusable"):
        if flag in table and not isinstance(table[flag], bool):
            raise r.bad(flag, "must be true or false")
    app_package = table.get("package")
    if app_package is not None and not (isinstance(app_package, str) and app_package.strip()):
        raise r.bad("package", "must be the app's package name, such as \"org.example.app\"")
    fail_level = None
    if "fail_level" in table:
        try:
            fail_level = Severity.parse(str(table["fail_level"]))
        except ValueError as exc:
            raise r.bad("fail_level", str(exc)) from None
    classes = None
    if "classes" in table:
        if not isinstance(table["classes"], dict):
            raise r.bad("classes", "must be a table with 'target' and 'ignore' lists")
        classes = class_map_from(table["classes"], f"{path.name} [classes]")
    fallback = r.device(table.get("device", {}), "device")
    patterns = []
    raw_devices = table.get("devices", [])
    if not isinstance(raw_devices, list):
        raise r.bad("devices", "must be an array of tables: [[devices]] with match and density/scale/ppi")
    for n, entry in enumerate(raw_devices):
        if not isinstance(entry, dict) or not isinstance(entry.get("match"), str):
            raise r.bad("match", "each [[devices]] needs match = \"PATTERN\" (relative to this file)", n)
        hints = r.device({k: v for k, v in entry.items() if k != "match"}, "devices", nth=n)
        patterns.append(DevicePattern(entry["match"], hints))
    waivers = _waivers(r, table.get("waivers", []))  # before the notices are taken: it adds to them
    return Config(
        path=path, project=project, rules=rules, fail_level=fail_level, profiles=profiles,
        marker=str(marker) if marker is not None else None, classes=classes,
        all_windows=table.get("all_windows"), app_package=app_package, include_focusable=table.get("include_focusable"),
        devices=DeviceDefaults(path.parent, tuple(patterns), fallback),
        waivers=waivers, gate=_gate(r, table.get("gate", {})), raw=table, notices=tuple(r.notices),
    )


def _waivers(r: _Reader, raw: Any) -> tuple[Waiver, ...]:
    if not isinstance(raw, list):
        raise r.bad("waivers", "must be an array of tables: [[waivers]]")
    out = []
    required = ("screen", "target", "rule", "reason", "author")
    for n, w in enumerate(raw):
        if not isinstance(w, dict):
            raise r.bad("waivers", "each [[waivers]] must be a table")
        for key in w:
            if key not in (*required, "expires"):
                raise r.bad(key, f"unknown key in [[waivers]]; expected {', '.join(required)} and expires", n)
        for key in required:
            if not isinstance(w.get(key), str) or not w[key].strip():
                raise r.bad(f"waivers.{key}", f"every waiver needs a non-empty '{key}'", n)
        if not re.match(r"^(id|label|class):.+", w["target"]):
            raise r.bad("target", "must be id:RESOURCE_ID, label:TEXT or class:CLASS", n)
        expires = w.get("expires")
        if expires is not None and not (isinstance(expires, dt.date) and not isinstance(expires, dt.datetime)):
            raise r.bad("expires", "must be a TOML date such as 2027-03-31 (no quotes)", n)
        said = notice(w["rule"], f"{r.path}:{r.line('rule', n) or '?'}: waiver rule")
        if said:
            r.notices.append(said)
        out.append(Waiver(w["screen"], w["target"], current(w["rule"]), w["reason"].strip(), w["author"].strip(),
                          expires, r.line("screen", n)))
    return tuple(out)


def _gate(r: _Reader, raw: Any) -> GateSettings:
    if not isinstance(raw, dict):
        raise r.bad("gate", "must be a table")
    numbers = ("size_tolerance", "miss_tolerance", "time_tolerance_ms")
    for key, value in raw.items():
        if key in numbers:
            if isinstance(value, bool) or not isinstance(value, (int, float)) or value < 0:
                raise r.bad(f"gate.{key}", "must be a number of 0 or more")
        elif key in ("missing", "moved"):
            if value not in ("report", "fail"):
                raise r.bad(f"gate.{key}", "must be \"report\" or \"fail\"")
        else:
            raise r.bad(f"gate.{key}", f"unknown key; expected {', '.join(numbers)}, missing or moved")
    return GateSettings(**{k: (float(v) if k in numbers else v) for k, v in raw.items()})


def effective_settings(config: Config, defaults: dict[str, Any]) -> list[tuple[str, str, str]]:
    """(key, value, where it came from) for every setting, for `tapgauge config`."""
    where = f"{config.path}" if config.path else ""

    def origin(key: str) -> str:
        return where if key in config.raw else "built-in default"

    def device_text(h: DeviceHints) -> str:
        parts = [f"density {h.density_dpi:g}" if h.density_dpi else "", f"scale {h.scale:g}" if h.scale else "",
                 f"ppi {h.xdpi:g},{h.ydpi:g}" if h.xdpi else ""]
        return ", ".join(p for p in parts if p) or "(none: from flags or sidecars only)"

    rows = [
        ("config file", str(config.path) if config.path else "(none found from here up)", ""),
        ("project", *config.project_name),
        ("rules", ", ".join(config.rules or defaults["rules"]), origin("rules")),
        ("fail_level", (config.fail_level.label if config.fail_level else defaults["fail_level"]), origin("fail_level")),
        ("profiles", ", ".join(config.profiles or defaults["profiles"]), origin("profiles")),
        ("marker", config.marker or defaults["marker"], origin("marker")),
        ("classes", "custom table" if config.classes else "built-in table", origin("classes")),
        ("all_windows", str(bool(config.all_windows)).lower(), origin("all_windows")),
        ("package", config.app_package or "(the package of the largest window)", origin("package")),
        ("include_focusable", str(bool(config.include_focusable)).lower(), origin("include_focusable")),
        ("device", device_text(config.devices.fallback), origin("device")),
    ]
    for p in config.devices.patterns:
        rows.append((f"device for {p.pattern}", device_text(p.hints), where))
    g = config.gate
    rows += [
        ("gate.size_tolerance", f"{g.size_tolerance:g} dp/pt", origin("gate")),
        ("gate.miss_tolerance", f"{g.miss_tolerance:g}", origin("gate")),
        ("gate.time_tolerance_ms", f"{g.time_tolerance_ms:g} ms", origin("gate")),
        ("gate.missing", g.missing, origin("gate")),
        ("gate.moved", g.moved, origin("gate")),
    ]
    for w in config.waivers:
        until = f" until {w.expires}" if w.expires else ""
        rows.append((f"waiver (line {w.line})", f"{w.screen} {w.target} {w.rule}{until}: {w.reason} ({w.author})", where))
    return rows
