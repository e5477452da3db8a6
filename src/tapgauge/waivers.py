"""Waivers: human decisions that a finding is acceptable, applied after the checks.

A waived finding stays in every report, marked with its waiver; a target whose every
finding is waived becomes `exempt`. An expired waiver stops waiving and says so; a
waiver that matches nothing is reported as stale. This is where the WCAG exceptions
that geometry cannot decide (equivalent control, inline, platform-set size,
essential) are recorded.
"""

from __future__ import annotations

import datetime as dt
import fnmatch
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from tapgauge.config import Waiver, relative_to_base
from tapgauge.model import Finding, ScreenResult, Target, TargetResult


@dataclass(frozen=True)
class WaiverOutcome:
    waiver: Waiver
    state: str  # "active", "expired" or "stale"
    matched: int  # findings it matched (waived when active)


def _target_matches(selector: str, t: Target) -> bool:
    how, _, value = selector.partition(":")
    if how == "id":
        return value in (t.resource_id, t.resource_id.split(":id/", 1)[-1]) and bool(t.resource_id)
    if how == "label":
        return t.label.casefold() == value.casefold()
    return value in (t.cls, t.cls.rsplit(".", 1)[-1])


@dataclass(frozen=True)
class Waivers:
    """The project's waivers and the day their expiry is judged on (pickled to workers)."""

    waivers: tuple[Waiver, ...] = ()
    base: Path = Path(".")
    today: dt.date = dt.date(1970, 1, 1)


def waive_screen(sr: ScreenResult, ws: Waivers) -> tuple[ScreenResult, tuple[int, ...]]:
    """One screen with its waived findings marked, and how many findings each waiver matched."""
    counts = [0] * len(ws.waivers)
    if not ws.waivers:
        return sr, ()
    rel = relative_to_base(sr.screen.path, ws.base)
    mine = [(k, w) for k, w in enumerate(ws.waivers) if fnmatch.fnmatchcase(rel, w.screen)]
    if not mine:
        return sr, tuple(counts)
    notices = list(sr.notices)
    targets: list[TargetResult] = []
    for tr in sr.targets:
        findings: list[Finding] = []
        for f in tr.findings:
            hit = next(((k, w) for k, w in mine
                        if _target_matches(w.target, tr.target) and fnmatch.fnmatchcase(f.rule_id, w.rule)), None)
            if hit is None:
                findings.append(f)
                continue
            k, w = hit
            counts[k] += 1
            if w.expires is not None and w.expires < ws.today:
                notices.append(f"waiver for {w.target} ({w.rule}) by {w.author} expired on {w.expires}; "
                               f"{f.rule_id} counts again")
                findings.append(f)
            else:
                findings.append(f._replace(waiver=(w.reason, w.author, w.expires.isoformat() if w.expires else None)))
        status, reason = tr.status, tr.reason
        if tr.findings and all(f.waiver for f in findings):
            status = "exempt"
            reason = "; ".join(dict.fromkeys(f.waiver[0] for f in findings if f.waiver))
        targets.append(tr._replace(findings=tuple(findings), status=status, reason=reason))
    return replace(sr, targets=tuple(targets), notices=tuple(dict.fromkeys(notices))), tuple(counts)


def outcomes(ws: Waivers, counts: list[int]) -> list[WaiverOutcome]:
    """Each waiver's state once every screen has been seen: active, expired or stale."""
    out = []
    for k, w in enumerate(ws.waivers):
        state = "stale" if counts[k] == 0 else "expired" if (w.expires and w.expires < ws.today) else "active"
        out.append(WaiverOutcome(w, state, counts[k]))
    return out


def waiver_records(outcomes: list[WaiverOutcome]) -> list[dict[str, Any]]:
    return [
        {"screen": o.waiver.screen, "target": o.waiver.target, "rule": o.waiver.rule, "reason": o.waiver.reason,
         "author": o.waiver.author, "expires": o.waiver.expires.isoformat() if o.waiver.expires else None,
         "line": o.waiver.line, "state": o.state, "matched": o.matched}
        for o in outcomes
    ]
