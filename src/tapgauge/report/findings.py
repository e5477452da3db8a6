"""The auditor's findings table: one row per finding, with a plain-language fix hint.

CSV and Markdown writers share these rows; the column order is part of the contract
(README, "Findings tables") and only ever grows at the end.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Iterator
from typing import Any, TextIO

from tapgauge.difficulty import hit_probability
from tapgauge.report.records import Report
from tapgauge.report.verdict import DISCLAIMER, summary_line

COLUMNS = (
    "screen", "target", "label", "resource_id", "class", "rule_set", "rule", "severity", "status",
    "measured", "required", "unit", "width", "height", "size_unit", "width_mm", "height_mm",
    "miss_probability", "profile", "waiver", "fix",
)


def _num(v: float | None, digits: int = 1) -> str:
    return "" if v is None else f"{v:.{digits}f}".rstrip("0").rstrip(".")


def rule_index(report: Report) -> dict[str, dict[str, Any]]:
    return {r["id"]: r for rs in report.rulesets for r in rs["rules"]}


def first_profile(report: Report) -> str:
    return report.profiles[0]["id"] if report.profiles else ""


def _size_for_miss(limit: float, alpha: float, sigma_a: float) -> float:
    """Smallest square side (mm) whose predicted miss is at most `limit` (bisection)."""
    lo, hi = 0.0, 200.0
    for _ in range(60):
        mid = (lo + hi) / 2
        if 1 - hit_probability([mid], [mid], alpha, sigma_a)[0] > limit:  # type: ignore[arg-type]
            lo = mid
        else:
            hi = mid
    return hi


def fix_hint(finding: dict[str, Any], target: dict[str, Any], rule: dict[str, Any] | None, unit: str) -> str:
    """What would make the finding go away, in the finding's own unit."""
    if rule is None:
        return ""
    need, got, u = finding["required"], finding["measured"], finding["unit"]
    if rule["kind"] == "min-size":
        w, h = (target["size_mm"]["width"], target["size_mm"]["height"]) if u == "mm" and target["size_mm"] else (
            target["size"]["width"], target["size"]["height"])
        if min(w, h) + 1e-9 >= need:
            return (f"targets drawn over it leave only a {_num(got)} {u} square: move them off it, "
                    f"or make it {_num(need - got)} {u} larger")
        x, y = max(0.0, need - w) / 2, max(0.0, need - h) / 2
        goal = f"to reach {_num(need)} x {_num(need)} {u}"
        if x and y and abs(x - y) < 0.05:
            hint = f"add {_num(x)} {u} of touchable padding on every side {goal}"
        elif x and y:
            hint = f"add {_num(x)} {u} on the left and right and {_num(y)} {u} above and below, as touchable padding, {goal}"
        elif x:
            hint = f"add {_num(x)} {u} of touchable padding on the left and right {goal}"
        else:
            hint = f"add {_num(y)} {u} of touchable padding above and below {goal}"
        if rule["params"].get("spacing_exception"):
            hint += f", or clear a {_num(need)} {u} circle around it"
        return hint
    if rule["kind"] == "min-gap":
        return f"move it {_num(need - got)} {u} further from its nearest neighbour ({_num(need)} {u} clear)"
    if rule["kind"] == "max-miss":
        from tapgauge.profiles import find_profile

        p = find_profile(str(rule["params"]["profile"]))
        side = _size_for_miss(float(rule["params"]["max_miss"]), p.alpha, p.sigma_a_mm)
        return f"enlarge it to about {_num(side)} x {_num(side)} mm to bring {p.id}'s predicted misses within the limit"
    return ""


def _fix(finding: dict[str, Any], target: dict[str, Any], rule: dict[str, Any] | None, unit: str) -> str:
    """A size finding's fix is the target's plan where it has one (proved by re-checking the screen with
    it); other findings keep their hint."""
    plan = target.get("plan")
    if plan and rule is not None and rule["kind"] == "min-size" and finding["rule"] in plan["rules"]:
        return plan["text"]
    return fix_hint(finding, target, rule, unit)


def screen_rows(s: dict[str, Any], rules: dict[str, dict[str, Any]], profile: str) -> list[dict[str, str]]:
    """One screen's findings as table rows (the column contract in COLUMNS)."""
    screen = f"{s['path']} :: {s['name']}" if s["name"] else s["path"]
    unit = s["device"]["unit"]
    rows: list[dict[str, str]] = []
    for t in s["targets"]:
        if not t["findings"]:
            continue
        miss = next((d["miss_probability"] for d in t["difficulty"] if d["profile"] == profile), None)
        for f in t["findings"]:
            w = f["waiver"]
            rows.append({
                "screen": screen, "target": f"#{t['number']}", "label": t["label"],
                "resource_id": t["resource_id"], "class": t["class"],
                "rule_set": f["rule"].split("/", 1)[0], "rule": f["rule"], "severity": f["severity"],
                "status": t["status"], "measured": _num(f["measured"], 2), "required": _num(f["required"], 2),
                "unit": f["unit"], "width": _num(t["size"]["width"], 2), "height": _num(t["size"]["height"], 2),
                "size_unit": unit,
                "width_mm": _num(t["size_mm"]["width"], 2) if t["size_mm"] else "",
                "height_mm": _num(t["size_mm"]["height"], 2) if t["size_mm"] else "",
                "miss_probability": "" if miss is None or (isinstance(miss, float) and math.isnan(miss)) else f"{miss:.2f}",
                "profile": profile if miss is not None else "",
                "waiver": "" if not w else f"{w['reason']} ({w['author']}{', until ' + w['expires'] if w['expires'] else ''})",
                "fix": "" if w else _fix(f, t, rules.get(f["rule"]), unit),
            })
    return rows


def finding_rows(report: Report) -> Iterator[dict[str, str]]:
    rules, profile = rule_index(report), first_profile(report)
    for s in report.screens:
        yield from screen_rows(s, rules, profile)


NUMBER_COLUMNS = frozenset({"measured", "required", "width", "height", "width_mm", "height_mm", "miss_probability"})
# A cell a spreadsheet would run as a formula starts with one of these (OWASP, "CSV Injection").
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def csv_safe(text: str) -> str:
    """A text cell a spreadsheet shows as text: a leading single quote before a formula's first
    character, as OWASP's CSV Injection page advises (labels come from the app under test)."""
    return "'" + text if text.startswith(FORMULA_START) else text


def write_csv(report: Report, out: TextIO, width: int | None = None) -> None:
    writer = csv.DictWriter(out, fieldnames=list(COLUMNS), lineterminator="\n")
    writer.writeheader()
    for row in finding_rows(report):
        writer.writerow({k: v if k in NUMBER_COLUMNS else csv_safe(v) for k, v in row.items()})


_MD_ESCAPES = str.maketrans({c: "\\" + c for c in "\\`*_[]|~"} | {"<": "&lt;", "&": "&amp;",
                                                                  "\n": " ", "\r": " "})


def md_text(text: str) -> str:
    """Text from a screen (a label, an id) as literal Markdown in a table cell: no markup, links or HTML
    tags of its own (CommonMark 0.31, "Backslash escapes" and "Entity and numeric character references";
    a tag needs its "<", and a ">" inside a line starts nothing)."""
    return text.translate(_MD_ESCAPES)


def _md_cell(text: str) -> str:
    return md_text(text)


MD_COLUMNS = ("screen", "target", "label", "rule", "severity", "status", "measured", "required", "unit",
              "width_mm", "height_mm", "miss_probability", "waiver", "fix")


def _md_heading(column: str, profile: str) -> str:
    """A column's heading; the miss column names the profile its predictions are for."""
    return f"miss_probability ({md_text(profile)})" if column == "miss_probability" and profile else column


def write_markdown(report: Report, out: TextIO, width: int | None = None) -> None:
    """Totals first, so it is given a spooled report (its screens are read twice)."""
    out.write("\n".join([
        "# Touch target findings", "",
        md_text(summary_line(report.summary, report.fail_level)) + ".", "",
        f"Measured by tapgauge. {DISCLAIMER}", "",
        "| " + " | ".join(_md_heading(c, first_profile(report)) for c in MD_COLUMNS) + " |",
        "|" + "|".join("---" for _ in MD_COLUMNS) + "|",
    ]) + "\n")
    for row in finding_rows(report):
        out.write("| " + " | ".join(_md_cell(row[c]) for c in MD_COLUMNS) + " |\n")
    lines = ["", "## Sources", ""]
    for rs in report.rulesets:
        lines.append(f"- **{rs['id']}**: {rs['title']}. {rs['source']}. <{rs['url']}>")
    out.write("\n".join(lines) + "\n")
