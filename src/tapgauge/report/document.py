"""The JSON report's screen entry: the full record less what a reader can derive from the rest.

Writers for people (table, Markdown, HTML, SARIF, JUnit) read the full record; the JSON and
JSON Lines reports hold this form, which keeps a report smaller than the dumps it describes
(a report that repeated derivable fields was three times their size). Left out, and how a reader
gets each back (the schema says the same):

- a target's `name` when it is its label (tables show the name);
- `size_mm`: the bounds' width / device.xdpi * 25.4, height / ydpi * 25.4 (absent without a ppi);
- a finding's severity and unit: its rule's, in the report's rule sets (the unit there is "dp"
  or "pt" as the screen's device.unit says; miss rules measure in %);
- the sentences written for people: a finding's message and a plan's text (a finding names the
  target it is measured against by number, `other`, and everything else a sentence says is in
  its numbers);
- a plan's growth per side ((plan bounds - bounds) / device.coords_per_unit);
- empty reasons and notes, and a null waiver, approach or plan.

Difficulty is two lists, `time_ms` and `miss_probability`, in the order of the report's profiles.
The text is compact JSON (RFC 8259, no insignificant whitespace).
"""

from __future__ import annotations

from typing import Any

import orjson

from tapgauge.model import TargetResult


def screen_document(rec: dict[str, Any]) -> dict[str, Any]:
    """A screen's record as the JSON report holds it. (Workers build the same straight from the
    results, `target_document`, when nothing else needs the record: a test holds the two equal.)"""
    return {**rec, "targets": [_target(t) for t in rec["targets"]]}


def screen_text(rec: dict[str, Any]) -> str:
    """`screen_document(rec)` as compact JSON text."""
    return orjson.dumps(screen_document(rec)).decode("utf-8")


def _finding(f: dict[str, Any]) -> dict[str, Any]:
    out = {"rule": f["rule"], "measured": f["measured"], "required": f["required"]}
    if f["other"] is not None:
        out["other"] = f["other"]
    if f["waiver"] is not None:
        out["waiver"] = f["waiver"]
    return out


def _plan(p: dict[str, Any]) -> dict[str, Any]:
    if p["kind"] == "grow":
        return {"kind": "grow", "bounds": p["bounds"], "rules": p["rules"]}
    out: dict[str, Any] = {"kind": p["kind"], "missing": p["missing"], "rules": p["rules"]}
    if p["move"]["target"] is not None:
        out["move"] = p["move"]
    return out


def _target(t: dict[str, Any]) -> dict[str, Any]:
    out: dict[str, Any] = {
        "number": t["number"], "key": t["key"], "line": t["line"], "class": t["class"], "label": t["label"],
        "resource_id": t["resource_id"],
    }
    if t["name"] != t["label"]:
        out["name"] = t["name"]
    out["bounds"] = t["bounds"]
    out["size"] = [t["size"]["width"], t["size"]["height"]]
    out["status"] = t["status"]
    if t["reason"]:
        out["reason"] = t["reason"]
    out["findings"] = [_finding(f) for f in t["findings"]]
    if t["notes"]:
        out["notes"] = t["notes"]
    if t["approach"] is not None:
        out["approach"] = t["approach"]
    if t["difficulty"]:
        out["time_ms"] = [d["time_ms"] for d in t["difficulty"]]
        out["miss_probability"] = [d["miss_probability"] for d in t["difficulty"]]
    if t["plan"] is not None:
        out["plan"] = _plan(t["plan"])
    return out


def _round_all(values: Any) -> list[float]:
    return [round(v, 2) for v in values]


def target_document(tr: TargetResult, key: str) -> dict[str, Any]:
    """`_target(target_record(tr, key))`, without making the record first."""
    t = tr.target
    out: dict[str, Any] = {"number": t.number, "key": key, "line": t.line, "class": t.cls, "label": t.label,
                           "resource_id": t.resource_id}
    if not t.label:  # else the name is the label
        name = t.name
        if name:
            out["name"] = name
    out["bounds"] = t.bounds  # tuples: orjson writes them as arrays, with no list made
    out["size"] = tr.size_unit
    out["status"] = tr.status
    if tr.reason:
        out["reason"] = tr.reason
    findings = []
    for f in tr.findings:
        if f.other is None and f.waiver is None:  # the usual case: one literal
            findings.append({"rule": f.rule_id, "measured": f.measured, "required": f.required})
            continue
        fd: dict[str, Any] = {"rule": f.rule_id, "measured": f.measured, "required": f.required}
        if f.other is not None:
            fd["other"] = f.other
        if f.waiver is not None:
            fd["waiver"] = {"reason": f.waiver[0], "author": f.waiver[1], "expires": f.waiver[2]}
        findings.append(fd)
    out["findings"] = findings
    if tr.notes:
        out["notes"] = tr.notes
    if tr.approach is not None:
        a = tr.approach
        out["approach"] = {"width": a.width, "distance": a.distance, "id_bits": a.id_bits}
    if tr.difficulty:  # (profile, time, miss) per profile, turned into a column each in one step
        _, out["time_ms"], out["miss_probability"] = zip(*tr.difficulty)
    p = tr.plan
    if p is not None:
        if p.kind == "grow":
            out["plan"] = {"kind": "grow", "bounds": _round_all(p.bounds), "rules": p.rules}
        elif p.mover is not None:
            out["plan"] = {"kind": p.kind, "missing": round(p.missing, 2), "rules": p.rules,
                           "move": {"target": p.mover, "dx": round(p.move[0], 2), "dy": round(p.move[1], 2)}}
        else:
            out["plan"] = {"kind": p.kind, "missing": round(p.missing, 2), "rules": p.rules}
    return out
