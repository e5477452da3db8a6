"""Rule kinds: the few checks that every rule set is built from.

A rule set (TOML) names a kind and its thresholds; the kind is a plain function
here, registered in KINDS. An unknown kind is an error when the rule set loads.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from enum import IntEnum
from typing import Any

import numpy as np

from tapgauge.device import MM_PER_INCH
from tapgauge.geometry import EPS, intersection_areas, nearest_gaps, sizes, spacing_conflicts
from tapgauge.measure import MeasuredScreen, coords_per
from tapgauge.difficulty import hit_probability
from tapgauge.model import Device, Finding, InputError, Rule, RuleSet, ScreenResult, TargetResult, new_row, rows_of
from tapgauge.profiles import find_profile

PLATFORM_UNITS = ("dp", "pt")  # both mean "the platform's density-independent unit"


class Detail(IntEnum):
    """How much a rule kind writes besides which targets fail it."""

    FAILS = 0  # which targets fail, nothing more (each finding names only its rule): the fix plans' re-check
    NOTES = 1  # and the notes, with no sentences in the findings: the JSON report holds none
    WORDS = 2  # and every finding's sentence


@dataclass(frozen=True)
class KindResult:
    findings: tuple[tuple[int, Finding], ...]  # (position among checked targets, finding)
    notes: tuple[tuple[int, str], ...] = ()


@dataclass(frozen=True)
class Kind:
    run: Callable[[MeasuredScreen, Rule, Detail], KindResult]  # (screen, rule, how much it writes)
    params: dict[str, tuple[type, bool]]  # name -> (type, required)
    doc: str
    validate: Callable[[dict[str, object], str], str | None] = lambda params, unit: None  # -> error or None
    # How far from a target, in the rule's unit, another target can change this rule's finding on it
    # (the fix plans' re-check looks no farther); None: not known, look at the whole screen.
    reach: Callable[[dict[str, Any]], float] | None = None


def _fmt(v: float) -> str:
    """One decimal, dropped when it is zero: 24 dp, 23.5 dp.

    Callers pass the figure as the report stores it (sizes to 2 decimals, measured values
    to 3), so a message and the table's columns show one figure: 27.048 dp is stored as
    27.05 and both say 27.1, not 27.0 beside 27.1.
    """
    return f"{v:.1f}".removesuffix(".0")


def _who(m: MeasuredScreen, pos: int) -> str:
    return m.labels[pos]


def display_unit(m: MeasuredScreen, rule: Rule) -> str:
    return m.device.unit if rule.unit in PLATFORM_UNITS else rule.unit


def _unit(rule: Rule) -> str:
    return "mm" if rule.unit == "mm" else "platform"


def check_min_size(m: MeasuredScreen, rule: Rule, detail: Detail = Detail.WORDS) -> KindResult:
    words = detail >= Detail.WORDS
    size = float(rule.param("size"))
    spacing = bool(dict(rule.params).get("spacing_exception", False))
    unit = display_unit(m, rule)
    boxes = m.boxes(_unit(rule))
    side = m.free_squares(_unit(rule))
    under = side < size - EPS
    conflicts = (spacing_conflicts(boxes, under, size, m.pairs(_unit(rule), size)) if spacing and under.any()
                 else np.full(len(side), -1))
    if detail == Detail.FAILS:
        return _fails(rule, np.flatnonzero(under & (conflicts >= 0) if spacing else under))
    findings: list[tuple[int, Finding]] = []
    notes: list[tuple[int, str]] = []
    # Plain Python numbers from here on: formatting numpy scalars one by one is slow.
    w, h = (np.round(a, 2).tolist() for a in sizes(boxes)) if words else ([], [])  # as the report stores sizes
    measured, conflict = np.round(side, 3).tolist(), conflicts.tolist()
    need = f"{_fmt(size)} {unit}"
    passes_note = f"{rule.id}: under {need}, passes by spacing (its {need} circle clears all other targets)"
    if detail >= Detail.NOTES and any(m.maybe_covers):
        notes += _presumed_cover_notes(m, rule, side, size, unit)
    for pos in np.flatnonzero(under).tolist():
        if spacing and conflict[pos] < 0:
            if detail >= Detail.NOTES:
                notes.append((pos, passes_note))
            continue
        other = m.screen.targets[m.checked[conflict[pos]]].number if spacing else None
        message = ""
        if words:
            message = f"{_fmt(w[pos])} x {_fmt(h[pos])} {unit}, needs a {need} square"
            if m.covers[pos]:
                names = ", ".join(_who(m, o) for o in m.covers[pos][:3])
                message += f"; {_fmt(measured[pos])} {unit} left beside {names} drawn over it"
            if spacing:
                message += f"; its {need} circle intersects {_who(m, conflict[pos])}"
        findings.append((pos, new_row(Finding, (rule.id, rule.severity, measured[pos], size, unit, message, None, other))))
    return KindResult(tuple(findings), tuple(notes))


def _fails(rule: Rule, positions: np.ndarray) -> KindResult:
    """Detail.FAILS: the failing positions, each with one finding that names the rule and nothing measured."""
    failed = Finding(rule.id, rule.severity, 0.0, 0.0, "", "")
    return KindResult(tuple((pos, failed) for pos in positions.tolist()))


def _presumed_cover_notes(m: MeasuredScreen, rule: Rule, side: np.ndarray, size: float,
                          unit: str) -> list[tuple[int, str]]:
    """Targets that pass only if what the file merely suggests is on top of them is not: a note, not a fail."""
    presumed = m.free_squares_presumed(_unit(rule))
    notes = []
    for pos in np.flatnonzero((side >= size - EPS) & (presumed < size - EPS)).tolist():
        names = ", ".join(_who(m, o) for o in m.maybe_covers[pos][:3])
        more = f" and {len(m.maybe_covers[pos]) - 3} more" if len(m.maybe_covers[pos]) > 3 else ""
        verb = "is" if len(m.maybe_covers[pos]) == 1 else "are"
        notes.append((pos, f"{rule.id}: if {names}{more} {verb} drawn over it, only {_fmt(presumed[pos])} {unit} is left "
                           f"of a needed {_fmt(size)} {unit} square; the file does not say which is on top "
                           "(no drawing-order), so it is not failed for this"))
    return notes


def check_min_gap(m: MeasuredScreen, rule: Rule, detail: Detail = Detail.WORDS) -> KindResult:
    words = detail >= Detail.WORDS
    gap = float(rule.param("gap"))
    unit = display_unit(m, rule)
    boxes = m.boxes(_unit(rule))
    nearest, who = nearest_gaps(boxes, gap, m.pairs(_unit(rule), gap))
    failing = nearest < gap - EPS
    exempt_at = dict(rule.params).get("exempt_at_size")
    if exempt_at is not None:
        failing &= m.free_squares(_unit(rule)) < float(exempt_at) - EPS
    if detail == Detail.FAILS:
        return _fails(rule, np.flatnonzero(failing))
    findings: list[tuple[int, Finding]] = []
    gaps, others = nearest.tolist(), who.tolist()
    positions = np.flatnonzero(failing)
    # Among failing targets at zero gap, which overlap their neighbour (rather than touch it): all at once.
    # The sentences are all that need it and the names (made per screen), so a run without them makes neither.
    overlapping = np.zeros(len(boxes), dtype=bool)
    if words and len(positions):
        overlapping[positions] = intersection_areas(boxes[positions], boxes[who[positions]]) > 0
    measured, labels = np.round(nearest, 3).tolist(), m.labels if words else []
    need = f"; needs {_fmt(gap)} {unit} clear" if words else ""
    for pos in positions.tolist():
        d, other = gaps[pos], others[pos]
        if not words:
            where = ""
        elif d > EPS:
            where = f"{_fmt(d)} {unit} from {labels[other]}"
        elif overlapping[pos]:
            where = f"overlaps {labels[other]}"
        else:
            where = f"touches {labels[other]}"
        findings.append((pos, new_row(Finding, (rule.id, rule.severity, measured[pos], gap, unit, where + need, None,
                                        m.screen.targets[m.checked[other]].number))))
    return KindResult(tuple(findings))


def check_max_miss(m: MeasuredScreen, rule: Rule, detail: Detail = Detail.WORDS) -> KindResult:
    words = detail >= Detail.WORDS
    profile = find_profile(str(rule.param("profile")))
    limit = float(rule.param("max_miss"))
    boxes = m.boxes("mm")
    w, h = sizes(boxes)
    miss = 1.0 - hit_probability(w, h, profile.alpha, profile.sigma_a_mm)
    misses, wl, hl = miss.tolist(), w.tolist(), h.tolist()
    findings = [
        (pos, new_row(Finding, (rule.id, rule.severity, round(misses[pos] * 100, 1), round(limit * 100, 1), "%",
                        f"predicted miss {misses[pos]:.0%} for {profile.id} on {_fmt(wl[pos])} x {_fmt(hl[pos])} mm; "
                        f"limit {limit:.0%}" if words else "", None, None)))
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
        reach=lambda params: float(params["size"]) if params.get("spacing_exception") else 0.0,  # circles' diameter
    ),
    "min-gap": Kind(
        check_min_gap,
        {"gap": (float, True), "exempt_at_size": (float, False)},
        "The edge-to-edge distance to the nearest other target (not nested in it) must be at least `gap`. "
        "With exempt_at_size, a target in which a square of that size fits is not failed.",
        reach=lambda params: float(params["gap"]),
    ),
    "max-miss": Kind(
        check_max_miss,
        {"profile": (str, True), "max_miss": (float, True)},
        "The predicted probability of missing the target (dual-Gaussian endpoint model, centred aim, "
        "the named slope profile) must not exceed `max_miss`. Needs the physical ppi.",
        _validate_max_miss,
        reach=lambda params: 0.0,  # the target's own size
    ),
}


def reach(rulesets: list[RuleSet], device: Device) -> float:
    """How far, in coordinates, the rules look from a target for the neighbours that bear on its
    findings: the most any rule's kind says (Kind.reach); infinite where a kind does not say."""
    far = 0.0
    for rs in rulesets:
        for r in rs.rules:
            kind_reach = KINDS[r.kind].reach
            if kind_reach is None:
                return float("inf")
            far = max(far, kind_reach(dict(r.params)) * coords_per(device, r.unit))
    return far


def _sizes(m: MeasuredScreen) -> tuple[list[tuple[float, float]], list[tuple[float, float]] | None]:
    """Every target's (width, height) in the platform unit and, with a ppi, in mm (2 decimals)."""
    dev = m.device
    bounds = np.array([t.bounds for t in m.screen.targets], dtype=float).reshape(-1, 4)
    w, h = bounds[:, 2] - bounds[:, 0], bounds[:, 3] - bounds[:, 1]
    in_unit = list(zip(*np.round(np.stack([w, h]) / dev.coords_per_unit, 2).tolist()))  # zip: pairs made in C
    if dev.xdpi is None or dev.ydpi is None:
        return in_unit, None
    return in_unit, list(zip(*np.round(np.stack([w / dev.xdpi, h / dev.ydpi]) * MM_PER_INCH, 2).tolist()))


def _applied(m: MeasuredScreen, rulesets: list[RuleSet], announce_skips: bool,
             notices: list[str]) -> Iterator[tuple[str, list[Rule]]]:
    """The rule sets that apply to the screen, each with the rules it can run there; what is skipped, said."""
    platform = m.device.platform
    for rs in rulesets:
        if platform not in rs.platforms:
            if announce_skips:
                notices.append(f"rule set {rs.id} is for {', '.join(rs.platforms)} screens; not applied to this {platform} screen")
            continue
        skipped_mm = [r.id for r in rs.rules if r.unit == "mm" and not m.device.has_mm]
        if skipped_mm:
            notices.append(f"{m.device.no_mm_because}; skipped: {', '.join(skipped_mm)}")
        yield rs.id, [rule for rule in rs.rules if rule.id not in skipped_mm]


def failing(m: MeasuredScreen, rulesets: list[RuleSet]) -> set[tuple[int, str]]:
    """(target number, rule id) of every finding check_screen makes on this screen, and nothing else: all
    the fix plans' re-check asks, without the notes, the sentences or the results around them."""
    out = set()
    targets, checked = m.screen.targets, m.checked
    for _, rules in _applied(m, rulesets, False, []):
        for rule in rules:
            out.update((targets[checked[pos]].number, rule.id)
                       for pos, _ in KINDS[rule.kind].run(m, rule, Detail.FAILS).findings)
    return out


def check_screen(m: MeasuredScreen, rulesets: list[RuleSet], announce_skips: bool, words: bool = True) -> ScreenResult:
    """Every rule of the rule sets that apply, on one measured screen. With `words` false the findings carry
    no sentence (empty messages): for the JSON report, which holds none."""
    notices: list[str] = [*m.screen.notices, *m.device.notices, *m.notices]
    applied: list[str] = []
    findings: dict[int, list[Finding]] = {}
    notes: dict[int, list[str]] = {}
    detail = Detail.WORDS if words else Detail.NOTES
    results: list[tuple[Rule, KindResult]] = []
    for rs_id, rules in _applied(m, rulesets, announce_skips, notices):
        applied.append(rs_id)
        for rule in rules:
            result = KINDS[rule.kind].run(m, rule, detail)
            results.append((rule, result))
            for pos, note in result.notes:
                notes.setdefault(pos, []).append(note)
    # Each target's findings most severe first, then by rule id: gathered rule by rule in that order (a
    # stable sort of the rules, so ties keep the order they ran in), no sort per target.
    for _, result in sorted(results, key=lambda rr: (-rr[0].severity, rr[0].id)):
        for pos, f in result.findings:
            findings.setdefault(pos, []).append(f)
    position = {k: pos for pos, k in enumerate(m.checked)}
    unchecked = dict(m.unchecked)
    rows: list[tuple[Any, ...]] = []  # TargetResult's fields, made into results at once (model.rows_of)
    in_unit, in_mm = _sizes(m)
    for k, target in enumerate(m.screen.targets):
        size_unit, size_mm = in_unit[k], None if in_mm is None else in_mm[k]
        if k in unchecked:
            rows.append((target, "unchecked", unchecked[k], size_unit, size_mm, (), (), (), None, None))
            continue
        pos = position[k]
        fs = tuple(findings.get(pos, ()))
        status, reason = "pass", ""
        if fs:
            status = "partial" if m.clipped_by[pos] else "fail"
            reason = m.clipped_by[pos] and f"{m.clipped_by[pos]}: its full size is unknown"
        rows.append((target, status, reason, size_unit, size_mm, fs, tuple(notes[pos]) if pos in notes else (), (),
                     None, None))
    return ScreenResult(m.screen, m.device, tuple(rows_of(TargetResult, rows)), tuple(notices), tuple(applied))
