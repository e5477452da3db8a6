"""Slope profiles (TOML): Fitts's-law timing and endpoint spread for a group of people.

Built-in profiles are the files in rules/profiles/; users pass their own file (for
example one written by `tapgauge calibrate`) or override single numbers with
`--param PROFILE.KEY=VALUE`. Start points for reaches live in rules/start-points.toml.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, replace
from functools import cache
from typing import Any

from tapgauge.choose import choose
from tapgauge.model import InputError
from tapgauge.ruledata import rules_dir
from tapgauge.textfile import load_toml

NUMBERS = ("intercept_ms", "slope_ms_per_bit", "alpha", "sigma_a_mm")
# Plausibility limits, not published figures: far beyond any study, they keep a typing
# slip (1e308 mm) from overflowing the arithmetic. Common practice for input checks.
LIMITS = {"intercept_ms": (-10_000.0, 10_000.0), "slope_ms_per_bit": (0.0, 10_000.0),
          "alpha": (0.0, 1.0), "sigma_a_mm": (0.0, 100.0)}


def implausible(key: str, value: float) -> str:
    """Why a profile number is out of range, or "" when it is fine."""
    low, high = LIMITS[key]
    if not low <= value <= high:
        return f"'{key}' = {value:g} is outside {low:g} to {high:g}"
    return ""
_ID = re.compile(r"^[a-z0-9][a-z0-9.-]*$")


@dataclass(frozen=True)
class Profile:
    id: str
    title: str
    intercept_ms: float
    slope_ms_per_bit: float
    alpha: float
    sigma_a_mm: float
    timing_source: str
    spread_source: str
    path: str


def parse_profile(text: str, origin: str) -> Profile:
    data = load_toml(text, origin)
    shape = {"profile": {"id", "title"}, "timing": {"intercept_ms", "slope_ms_per_bit", "source"},
             "spread": {"alpha", "sigma_a_mm", "source"}}
    for table, keys in shape.items():
        got = data.get(table)
        if not isinstance(got, dict):
            raise InputError(origin, f"missing [{table}] table with {', '.join(sorted(keys))}")
        for key in got:
            if key not in keys:
                raise InputError(origin, f"unknown key '{table}.{key}'; expected {', '.join(sorted(keys))}")
        for key in keys:
            if key not in got:
                raise InputError(origin, f"missing key '{table}.{key}'")
    extra = set(data) - set(shape)
    if extra:
        raise InputError(origin, f"unknown table [{sorted(extra)[0]}]; expected [profile], [timing], [spread]")
    values: dict[str, Any] = {**data["timing"], **data["spread"]}
    for key in NUMBERS:
        v = values[key]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or v != v:
            raise InputError(origin, f"'{key}' must be a number")
    if values["slope_ms_per_bit"] <= 0 or values["sigma_a_mm"] < 0 or values["alpha"] < 0:
        raise InputError(origin, "slope_ms_per_bit must be > 0; alpha and sigma_a_mm must be >= 0")
    for key in NUMBERS:
        if why := implausible(key, values[key]):
            raise InputError(origin, why)
    if values["sigma_a_mm"] == 0 and values["alpha"] == 0:
        raise InputError(origin, "alpha and sigma_a_mm cannot both be 0: every touch would land exactly")
    pid = str(data["profile"]["id"])
    if not _ID.match(pid):
        raise InputError(origin, f"profile id {pid!r} must be lower-case letters, digits, '-' or '.'")
    return Profile(
        id=pid, title=str(data["profile"]["title"]), intercept_ms=float(values["intercept_ms"]),
        slope_ms_per_bit=float(values["slope_ms_per_bit"]), alpha=float(values["alpha"]),
        sigma_a_mm=float(values["sigma_a_mm"]), timing_source=str(data["timing"]["source"]),
        spread_source=str(data["spread"]["source"]), path=origin,
    )


@cache
def builtin_profiles() -> dict[str, Profile]:
    folder = rules_dir().joinpath("profiles")
    found = {}
    for entry in sorted(folder.iterdir(), key=lambda e: e.name):
        if entry.name.endswith(".toml"):
            p = parse_profile(entry.read_text("utf-8"), f"rules/profiles/{entry.name}")
            found[p.id] = p
    return found


DEFAULT_PROFILES = ("typical-adult", "older-adult", "reduced-precision")


def find_profile(item: str) -> Profile:
    """One profile by built-in id or TOML path."""
    return select_profiles([item])[0]


def select_profiles(spec: list[str]) -> list[Profile]:
    return choose(spec, builtin_profiles(), parse_profile, lambda p: p.id, "profile")


def apply_params(profiles: list[Profile], params: list[str]) -> list[Profile]:
    """Apply overrides of the form PROFILE.KEY=VALUE (PROFILE may be '*' for all)."""
    out = list(profiles)
    for raw in params:
        m = re.fullmatch(r"\s*([a-z0-9.*-]+?)\.([a-z_]+)\s*=\s*(\S+)\s*", raw)
        if not m or m.group(2) not in NUMBERS:
            raise ValueError(f"--param {raw!r}: expected PROFILE.KEY=NUMBER with KEY one of {', '.join(NUMBERS)}")
        who, key, text = m.groups()
        try:
            value = float(text)
        except ValueError:
            raise ValueError(f"--param {raw!r}: {text!r} is not a number") from None
        if value < 0 or value != value or (key == "slope_ms_per_bit" and value == 0):
            raise ValueError(f"--param {raw!r}: must be a non-negative number (slope above 0)")
        if why := implausible(key, value):
            raise ValueError(f"--param {raw!r}: {why}")
        hit = [k for k, p in enumerate(out) if who in ("*", p.id)]
        if not hit:
            raise ValueError(f"--param {raw!r}: no chosen profile is called {who!r}")
        for k in hit:
            out[k] = replace(out[k], **{key: value}, path=f"{out[k].path} (with {key}={value:g})")
    return out


@cache
def start_points() -> dict[str, tuple[float, float]]:
    data = tomllib.loads(rules_dir().joinpath("start-points.toml").read_text("utf-8"))
    return {name: (float(t["x"]), float(t["y"])) for name, t in data.items()}


def parse_start(text: str) -> tuple[str, tuple[float, float] | None]:
    """A named start point (fractions of the screen) or 'X,Y' in the platform unit (dp or pt).

    Returns (name, None) for a named point, ("X,Y", (x, y)) for coordinates.
    """
    raw = text.strip().lower()
    if raw in start_points():
        return raw, None
    parts = raw.split(",")
    try:
        x, y = (float(p) for p in parts)
    except ValueError:
        raise ValueError(f"start {text!r}: expected one of {', '.join(start_points())} or X,Y in dp/pt") from None
    return f"{x:g},{y:g}", (x, y)
