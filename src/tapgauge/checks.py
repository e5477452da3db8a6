"""Rule kinds: the few checks that every rule set is built from.

A rule set (TOML) names a kind and its thresholds; the kind is a plain function
here, registered in KINDS. An unknown kind is an error when the rule set loads.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from tapgauge.device import MM_PER_INCH
from tapgauge.geometry import EPS, intersection_areas, nearest_gaps, sizes, spacing_conflicts
from tapgauge.measure import MeasuredScreen
from tapgauge.difficulty import hit_probability
from tapgauge.model import Finding, InputError, Rule, RuleSet, ScreenResult, TargetResult
from tapgauge.profiles import find_profile

PLATFORM_UNITS = ("dp", "pt")  # both mean "the platform's density-independent unit"


@dataclass(frozen=True)
class KindResult:
    findings: tuple[tuple[int, Finding], ...]  # (position among checked targets, finding)
    notes: tuple[tuple[int, str], ...] = ()


@dataclass(frozen=True)
class Kind:
    run: Callable[[MeasuredScreen, Rule], KindResult]
    params: dict[str, tuple[type, bool]]  # name -> (type, required)
    doc: str
    validate: Callable[[dict[str, object], str], str | None] = lambda params, unit: None  # -> error or None


def _fmt(v: float) -> str:
    return f"{v:.1f}".rstrip("0").rstrip(".") if abs(v - round(v)) < 0.05 else f"{v:.1f}"


def _who(m: MeasuredScreen, pos: int) -> str:
    t = m.target(pos)
    return f"#{t.ordinal} '{t.name}'"


def display_unit(m: MeasuredScreen, rule: Rule) -> str:
    return m.device.unit if rule.unit in PLATFORM_UNITS else rule.unit


def _unit(rule: Rule) -> str:
    return "mm" if rule.unit == "mm" else "platform"


def check_min_size(m: MeasuredScreen, rule: Rule) -> KindResult:
    size = float(rule.param("size"))
    spacing = bool(dict(rule.params).get("spacing_exception", False))
    unit = display_unit(m, rule)
    boxes = m.boxes(_unit(rule))
    side = m.free_squares(_unit(rule))
    under = side < size - EPS
    conflicts = spacing_conflicts(boxes, under, size) if spacing else np.full(len(side), -1)
    findings: list[tuple[int, Finding]] = []
    notes: list[tuple[int, str]] = []
    w, h = sizes(boxes)
    for pos in np.flatnonzero(under).tolist():
        if spacing and conflicts[pos] < 0:
            notes.append((pos, f"{rule.id}: under {_fmt(size)} {unit}, passes by spacing "
                               f"(its {_fmt(size)} {unit} circle clears all other targets)"))
            continue
        parts = [f"{_fmt(w[pos])} x {_fmt(h[pos])} {unit}, needs a {_fmt(size)} {unit} square"]
        if m.covers[pos]:
            names = ", ".join(_who(m, o) for o in m.covers[pos][:3])
            parts.append(f"{_fmt(side[pos])} {unit} left beside {names} drawn over it")
        if spacing:
            parts.append(f"its {_fmt(size)} {unit} circle intersects {_who(m, int(conflicts[pos]))}")
        findings.append((pos, Finding(rule.id, rule.severity, round(float(side[pos]), 3), size, unit, "; ".join(parts))))
    return KindResult(tuple(findings), tuple(notes))


def check_min_gap(m: MeasuredScreen, rule: Rule) -> KindResult:
    gap = float(rule.param("gap"))
    unit = display_unit(m, rule)
    boxes = m.boxes(_unit(rule))
    nearest, who = nearest_gaps(boxes, gap)
    failing = nearest < gap - EPS
    exempt_at = dict(rule.params).get("exempt_at_size")
    if exempt_at is not None:
        failing &= m.free_squares(_unit(rule)) < float(exempt_at) - EPS
    findings: list[tuple[int, Finding]] = []
    for pos in np.flatnonzero(failing).tolist():
        d, other = float(nearest[pos]), int(who[pos])
        if d > EPS:
            where = f"{_fmt(d)} {unit} from {_who(m, other)}"
        elif intersection_areas(boxes[[pos]], boxes[[other]])[0] > 0:
            where = f"overlaps {_who(m, other)}"
        else:
            where = f"touches {_who(m, other)}"
        findings.append((pos, Finding(rule.id, rule.severity, round(d, 3), gap, unit, f"{where}; needs {_fmt(gap)} {unit} clear")))
    return KindResult(tuple(findings))


def check_max_miss(m: MeasuredScreen, rule: Rule) -> KindResult:
    profile = find_profile(str(rule.param("profile")))
    limit = float(rule.param("max_miss"))
    boxes = m.boxes("mm")
    w, h = sizes(boxes)
    miss = 1.0 - hit_probability(w, h, profile.alpha, profile.sigma_a_mm)
    findings = [
        (pos, Finding(rule.id, rule.severity, round(float(miss[pos]) * 100, 1), round(limit * 100, 1), "%",
                      f"predicted miss {miss[pos]:.0%} for {profile.id} on {_fmt(w[pos])} x {_fmt(h[pos])} mm; "
                      f"limit {limit:.0%}"))
        for pos in np.flatnonzero(miss > limit + EPS).tolist()
    ]
    return KindResult(tuple(findings))


def _validate_max_miss(params: dict[str, object], unit: str) -> str | None:
    if unit != "mm":
        return "a max-miss rule needs unit = \"mm\": the endpoint model works on the glass"
    limit = params.get("max_miss")
    if not isinstance(limit, float) or not 0 < limit < 1:
        return "'max_miss' must be a probability between 0 and 1, such as 0.1"
    try:
        find_profile(str(params.get("profile")))
    except InputError as exc:
        return f"profile {params.get('profile')!r}: {exc.message}"
    return None


KINDS: dict[str, Kind] = {
    "min-size": Kind(
        check_min_size,
        {"size": (float, True), "spacing_exception": (bool, False)},
        "A size x size square must fit in the part of the target not covered by targets drawn over it. "
        "With spacing_exception, an undersized target still passes when a circle of diameter `size` on "
        "its centre intersects no other target and no other undersized target's circle (WCAG 2.2 SC 2.5.8).",
    ),
    "min-gap": Kind(
        check_min_gap,
        {"gap": (float, True), "exempt_at_size": (float, False)},
        "The edge-to-edge distance to the nearest other target (not nested in it) must be at least `gap`. "
        "With exempt_at_size, a target in which a square of that size fits is not failed.",
    ),
    "max-miss": Kind(
        check_max_miss,
        {"profile": (str, True), "max_miss": (float, True)},
        "The predicted probability of missing the target (dual-Gaussian endpoint model, centred aim, "
        "the named slope profile) must not exceed `max_miss`. Needs the physical ppi.",
        _validate_max_miss,
    ),
}


def _size(m: MeasuredScreen, k: int) -> tuple[tuple[float, float], tuple[float, float] | None]:
    l, t, r, b = m.screen.targets[k].bounds
    w, h = r - l, b - t
    dev = m.device
    in_unit = (round(w / dev.coords_per_unit, 2), round(h / dev.coords_per_unit, 2))
    if dev.xdpi is None or dev.ydpi is None:
        return in_unit, None
    return in_unit, (round(w / dev.xdpi * MM_PER_INCH, 2), round(h / dev.ydpi * MM_PER_INCH, 2))


def check_screen(m: MeasuredScreen, rulesets: list[RuleSet], announce_skips: bool) -> ScreenResult:
    notices: list[str] = []
    applied: list[str] = []
    findings: dict[int, list[Finding]] = {}
    notes: dict[int, list[str]] = {}
    platform = m.device.platform
    for rs in rulesets:
        if platform not in rs.platforms:
            if announce_skips:
                notices.append(f"rule set {rs.id} is for {', '.join(rs.platforms)} screens; not applied to this {platform} screen")
            continue
        applied.append(rs.id)
        skipped_mm = [r.id for r in rs.rules if r.unit == "mm" and not m.device.has_mm]
        if skipped_mm:
            notices.append(f"{m.device.no_mm_because}; skipped: {', '.join(skipped_mm)}")
        for rule in rs.rules:
            if rule.id in skipped_mm:
                continue
            result = KINDS[rule.kind].run(m, rule)
            for pos, f in result.findings:
                findings.setdefault(pos, []).append(f)
            for pos, note in result.notes:
                notes.setdefault(pos, []).append(note)
    position = {k: pos for pos, k in enumerate(m.checked)}
    unchecked = dict(m.unchecked)
    results: list[TargetResult] = []
    for k, target in enumerate(m.screen.targets):
        size_unit, size_mm = _size(m, k)
        if k in unchecked:
            results.append(TargetResult(target, "unchecked", unchecked[k], size_unit, size_mm, ()))
            continue
        pos = position[k]
        fs = tuple(sorted(findings.get(pos, []), key=lambda f: (-f.severity, f.rule_id)))
        status, reason = "pass", ""
        if fs:
            status = "unmeasurable" if m.clipped_by[pos] else "fail"
            reason = m.clipped_by[pos] and f"{m.clipped_by[pos]}: its full size is unknown"
        results.append(TargetResult(target, status, reason, size_unit, size_mm, fs, tuple(notes.get(pos, []))))
    return ScreenResult(m.screen, m.device, tuple(results), tuple(notices), tuple(applied))
