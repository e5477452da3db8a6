"""Findings as plain records: the one JSON-ready form every writer consumes.

Deterministic: screens sorted by path, targets in document order, no clock.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path
from typing import Any

from tapgauge import __version__
from tapgauge.identity import target_keys
from tapgauge.profiles import Profile
from tapgauge.model import STATUSES, InputError, RuleSet, ScreenResult, Severity, TargetResult

REPORT_FORMAT = "tapgauge-report"
REPORT_VERSION = 1

EXIT_OK = 0
EXIT_FINDINGS = 1
EXIT_ERROR = 2


def display_path(path: Path | str) -> str:
    p = Path(path)
    try:
        if p.is_absolute():
            return p.relative_to(Path.cwd()).as_posix()
    except ValueError:
        pass
    return p.as_posix()


def ruleset_record(rs: RuleSet) -> dict[str, Any]:
    return {
        "id": rs.id, "title": rs.title, "source": rs.source, "url": rs.url, "platforms": list(rs.platforms),
        "rules": [
            {"id": r.id, "kind": r.kind, "summary": r.summary, "severity": r.severity.label, "unit": r.unit,
             "params": dict(r.params), "source": r.source, "url": r.url}
            for r in rs.rules
        ],
    }


def profile_record(p: Profile) -> dict[str, Any]:
    return {"id": p.id, "title": p.title, "intercept_ms": p.intercept_ms, "slope_ms_per_bit": p.slope_ms_per_bit,
            "alpha": p.alpha, "sigma_a_mm": p.sigma_a_mm, "timing_source": p.timing_source,
            "spread_source": p.spread_source, "path": p.path}


def target_record(tr: TargetResult, key: str) -> dict[str, Any]:
    t = tr.target
    return {
        "ordinal": t.ordinal,
        "key": key,
        "line": t.line,
        "class": t.cls,
        "label": t.label,
        "resource_id": t.resource_id,
        "name": t.name,
        "bounds": list(t.bounds),
        "size": {"width": tr.size_unit[0], "height": tr.size_unit[1]},
        "size_mm": None if tr.size_mm is None else {"width": tr.size_mm[0], "height": tr.size_mm[1]},
        "status": tr.status,
        "reason": tr.reason,
        "findings": [
            {"rule": f.rule_id, "severity": f.severity.label, "measured": f.measured, "required": f.required,
             "unit": f.unit, "message": f.message,
             "waiver": None if f.waiver is None else {"reason": f.waiver[0], "author": f.waiver[1], "expires": f.waiver[2]}}
            for f in tr.findings
        ],
        "notes": list(tr.notes),
        "difficulty": [
            {"profile": d.profile, "width": d.width, "distance": d.distance, "id_bits": d.id_bits,
             "time_ms": d.time_ms, "hit_probability": d.hit,
             "miss_probability": None if d.hit is None else round(1 - d.hit, 4)}
            for d in tr.difficulty
        ],
    }


def screen_record(sr: ScreenResult) -> dict[str, Any]:
    d = sr.device
    keys = target_keys([t.target for t in sr.targets])
    targets = [target_record(t, k) for t, k in zip(sr.targets, keys)]
    return {
        "path": display_path(sr.screen.path),
        "name": sr.screen.name,
        "platform": d.platform,
        "coordinates": sr.screen.coords,
        "width": sr.screen.width,
        "height": sr.screen.height,
        "rotation": sr.screen.rotation,
        "image": display_path(sr.screen.image) if sr.screen.image else None,
        "device": {
            "unit": d.unit, "coords_per_unit": d.coords_per_unit, "unit_source": d.unit_source,
            "density_dpi": d.density_dpi, "scale": d.scale, "xdpi": d.xdpi, "ydpi": d.ydpi,
            "ppi_source": d.ppi_source,
        },
        "rulesets": list(sr.rulesets),
        "reach": None if sr.start is None else {
            "from": sr.start[0], "x": sr.start[1], "y": sr.start[2], "unit": sr.reach_unit,
        },
        "notices": list(sr.notices),
        "targets": targets,
        "summary": _status_counts(targets),
    }


def _status_counts(targets: list[dict[str, Any]]) -> dict[str, int]:
    counts = Counter(t["status"] for t in targets)
    return {"targets": len(targets), **{s: counts.get(s, 0) for s in STATUSES}}


def error_record(err: InputError) -> dict[str, Any]:
    return {"path": display_path(err.path), "line": err.line, "message": err.message}


def exit_code(screens: list[dict[str, Any]], errors: list[dict[str, Any]], fail_level: Severity) -> int:
    """2 for any input error; else 1 when a failing target has a finding at or above the fail level."""
    if errors:
        return EXIT_ERROR
    for s in screens:
        for t in s["targets"]:
            if t["status"] == "fail" and any(Severity.parse(f["severity"]) >= fail_level and not f["waiver"]
                                             for f in t["findings"]):
                return EXIT_FINDINGS
    return EXIT_OK


def build_report(screens: list[ScreenResult], errors: list[InputError], rulesets: list[RuleSet],
                 fail_level: Severity, profiles: list[Profile] | None = None,
                 waivers: list[dict[str, Any]] | None = None) -> dict[str, Any]:
    screen_recs = sorted((screen_record(s) for s in screens), key=lambda r: (r["path"], r["name"]))
    error_recs = sorted((error_record(e) for e in errors), key=lambda r: (r["path"], r["line"] or 0))
    all_targets = [t for s in screen_recs for t in s["targets"]]
    severities = Counter(f["severity"] for t in all_targets if t["status"] == "fail" for f in t["findings"]
                         if not f["waiver"])
    summary = {
        "screens": len(screen_recs),
        "errors": len(error_recs),
        **_status_counts(all_targets),
        "findings": {s.label: severities.get(s.label, 0) for s in sorted(Severity, reverse=True)},
        "exit_code": exit_code(screen_recs, error_recs, fail_level),
    }
    return {
        "format": REPORT_FORMAT,
        "version": REPORT_VERSION,
        "tool": {"name": "tapgauge", "version": __version__},
        "fail_level": fail_level.label,
        "rulesets": [ruleset_record(rs) for rs in rulesets],
        "profiles": [profile_record(p) for p in profiles or []],
        "screens": screen_recs,
        "waivers": waivers or [],
        "errors": error_recs,
        "summary": summary,
    }
