"""Rule sets are data: TOML files naming each rule's kind, thresholds, unit and source.

Built-in sets are the files in rules/rulesets/ (shipped inside the package); users may pass
their own file. Every key is checked: an unknown or ill-typed key is an error that
names the file, the line and the key.
"""

from __future__ import annotations

import re
from functools import cache
from typing import Any

from tapgauge.checks import KINDS
from tapgauge.choose import choose
from tapgauge.model import InputError, Rule, RuleSet, Severity
from tapgauge.ruledata import rules_dir
from tapgauge.textfile import load_toml

DEFAULT_RULESETS = ("wcag-2.5.8", "android-guidance", "apple-hig")
UNITS = ("dp", "pt", "mm")
_ID = re.compile(r"^[a-z0-9][a-z0-9.-]*$")
_SET_KEYS = {"id": str, "title": str, "source": str, "url": str, "platforms": list}
_RULE_KEYS = {"id": str, "kind": str, "summary": str, "severity": str, "unit": str, "source": str, "url": str}
_PLATFORMS = ("android", "ios")


def _line_of(text: str, key: str, after: int = 0) -> int | None:
    pattern = re.compile(rf"^\s*{re.escape(key)}\s*=", re.MULTILINE)
    m = pattern.search(text, after)
    return text.count("\n", 0, m.start()) + 1 if m else None


def _rule_offsets(text: str) -> list[int]:
    return [m.start() for m in re.finditer(r"^\s*\[\[rules\]\]", text, re.MULTILINE)]


def parse_ruleset(text: str, origin: str) -> RuleSet:
    """Parse and validate one rule-set document; `origin` names it in errors."""
    data = load_toml(text, origin)

    def fail(msg: str, key: str | None = None, after: int = 0) -> InputError:
        return InputError(origin, msg, _line_of(text, key, after) if key else None)

    unknown = set(data) - {"ruleset", "rules"}
    if unknown:
        key = sorted(unknown)[0]
        raise fail(f"unknown top-level key '{key}'; expected [ruleset] and [[rules]]", key)
    head = data.get("ruleset")
    if not isinstance(head, dict):
        raise fail("missing [ruleset] table with id, title, source, url, platforms")
    for key, value in head.items():
        if key not in _SET_KEYS:
            raise fail(f"unknown key 'ruleset.{key}'; expected one of {', '.join(_SET_KEYS)}", key)
        if not isinstance(value, _SET_KEYS[key]):
            raise fail(f"'ruleset.{key}' must be a {_SET_KEYS[key].__name__}", key)
    for key in _SET_KEYS:
        if key not in head:
            raise fail(f"missing key 'ruleset.{key}'")
    set_id = head["id"]
    if not _ID.match(set_id):
        raise fail(f"ruleset.id {set_id!r} must be lower-case letters, digits, '-' or '.'", "id")
    platforms = head["platforms"]
    if not platforms or any(p not in _PLATFORMS for p in platforms):
        raise fail(f"ruleset.platforms must list some of {', '.join(_PLATFORMS)}", "platforms")
    raw_rules = data.get("rules")
    if not isinstance(raw_rules, list) or not raw_rules:
        raise fail("no [[rules]] entries; a rule set needs at least one rule")
    offsets = _rule_offsets(text) or [0] * len(raw_rules)
    rules: list[Rule] = []
    seen: set[str] = set()
    for n, raw in enumerate(raw_rules):
        at = offsets[n] if n < len(offsets) else 0
        rules.append(_parse_rule(raw, set_id, head, fail, at, seen))
    return RuleSet(
        id=set_id, title=head["title"], source=head["source"], url=head["url"],
        platforms=tuple(platforms), rules=tuple(rules), path=origin,
    )


def _parse_rule(raw: dict[str, Any], set_id: str, head: dict[str, Any], fail: Any, at: int, seen: set[str]) -> Rule:
    if not isinstance(raw, dict):
        raise fail("each [[rules]] entry must be a table of keys", "kind", at)
    kind_name = raw.get("kind")
    if not isinstance(kind_name, str) or kind_name not in KINDS:
        raise fail(f"rule kind {kind_name!r} is not one of: {', '.join(KINDS)}", "kind", at)
    kind = KINDS[kind_name]
    params: list[tuple[str, float | bool | str]] = []
    for key, value in raw.items():
        if key in _RULE_KEYS:
            if not isinstance(value, _RULE_KEYS[key]):
                raise fail(f"rule key '{key}' must be a string", key, at)
        elif key in kind.params:
            want, _ = kind.params[key]
            if want is bool and not isinstance(value, bool):
                raise fail(f"'{key}' must be true or false", key, at)
            if want is float:
                if isinstance(value, bool) or not isinstance(value, (int, float)) or not value > 0:
                    raise fail(f"'{key}' must be a positive number", key, at)
                value = float(value)
            if want is str and not isinstance(value, str):
                raise fail(f"'{key}' must be a string", key, at)
            params.append((key, value))
        else:
            allowed = ", ".join([*_RULE_KEYS, *kind.params])
            raise fail(f"unknown key '{key}' for a {kind_name} rule; expected one of {allowed}", key, at)
    for key in ("id", "summary", "severity", "unit"):
        if key not in raw:
            raise fail(f"rule is missing '{key}'", "kind", at)
    for key, (_, required) in kind.params.items():
        if required and key not in raw:
            raise fail(f"a {kind_name} rule needs '{key}'", "kind", at)
    if not _ID.match(raw["id"]):
        raise fail(f"rule id {raw['id']!r} must be lower-case letters, digits, '-' or '.'", "id", at)
    if raw["id"] in seen:
        raise fail(f"rule id {raw['id']!r} appears twice in this rule set", "id", at)
    seen.add(raw["id"])
    if raw["unit"] not in UNITS:
        raise fail(f"unit {raw['unit']!r} is not one of: {', '.join(UNITS)}", "unit", at)
    try:
        severity = Severity.parse(raw["severity"])
    except ValueError as exc:
        raise fail(str(exc), "severity", at) from None
    problem = kind.validate(dict(params), raw["unit"])
    if problem:
        raise fail(problem, "kind", at)
    return Rule(
        id=f"{set_id}/{raw['id']}", kind=kind_name, summary=raw["summary"], severity=severity,
        unit=raw["unit"], params=tuple(params), source=raw.get("source", head["source"]),
        url=raw.get("url", head["url"]),
    )


def _builtin_dir() -> Any:
    return rules_dir().joinpath("rulesets")


@cache
def builtin_rulesets() -> dict[str, RuleSet]:
    found: dict[str, RuleSet] = {}
    for entry in sorted(_builtin_dir().iterdir(), key=lambda e: e.name):
        if entry.name.endswith(".toml"):
            rs = parse_ruleset(entry.read_text("utf-8"), f"rules/rulesets/{entry.name}")
            found[rs.id] = rs
    return found


def select_rulesets(spec: list[str]) -> list[RuleSet]:
    """Rule sets from ids of built-in sets and/or paths to TOML files, in the order given."""
    return choose(spec, builtin_rulesets(), parse_ruleset, lambda rs: rs.id, "rule set")
