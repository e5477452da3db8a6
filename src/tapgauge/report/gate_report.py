"""The gate's record in every format `check` has: what got worse, per target, cause first, and what to do.

One block per target: its changes that decide (a new failure, a shrink, a target that
disappeared) first, then its difficulty changes on one line, then the closing next step
(record a new baseline, or the waivers to add once a person has judged the failures).
Every writer takes the same record (gate.gate_record) and returns text.
"""

from __future__ import annotations

import csv
import io
import json
from collections import Counter
from collections.abc import Callable
from html import escape
from typing import Any, NamedTuple

from rich.console import Console
from rich.text import Text

from tapgauge import __version__
from tapgauge.report.findings import csv_safe, md_text
from tapgauge.report.table import _wrap as wrap_cells  # wraps by display width, wide characters too
from tapgauge.report.verdict import DISCLAIMER

CAUSES = ("new-failure", "shrank", "gone-target", "gone-screen", "moved", "fixed", "grew")  # in this order
DIFFICULTY = ("harder", "easier")
SECTIONS = (("regressions", "worse"), ("gone", "gone"), ("moved", "moved"), ("improvements", "better"))
WORDS = {"pass": "gate passed", "fail": "gate failed", "input-errors": "incomplete: inputs could not be read",
         "nothing-compared": "nothing compared"}


class Block(NamedTuple):
    """One target's (or a vanished screen's) changes, as a reader takes them in."""

    verdict: str  # worse, gone, moved or better: the most serious of its changes
    screen: str
    name: str  # the target's name ('' for a whole screen)
    causes: tuple[str, ...]
    difficulty: str  # its difficulty changes on one line, '' if none


def blocks(record: dict[str, Any]) -> list[Block]:
    """Changes grouped per target, the targets that got worse first, then by screen and name."""
    grouped: dict[tuple[str, str], list[tuple[str, dict[str, Any]]]] = {}
    for key, verdict in SECTIONS:
        for c in record[key]:
            grouped.setdefault((c["screen"], c["target"]), []).append((verdict, c))
    rank = {verdict: k for k, (_, verdict) in enumerate(SECTIONS)}
    out = []
    for (screen, _), changes in grouped.items():
        verdict = min((v for v, _ in changes), key=rank.__getitem__)
        causes = [c for _, c in changes if c["kind"] in CAUSES]
        causes.sort(key=lambda c: CAUSES.index(c["kind"]))
        name = changes[0][1]["name"] or changes[0][1]["target"]
        diff = _per_profile([c["message"] for _, c in changes if c["kind"] in DIFFICULTY])
        out.append(Block(verdict, screen, name, tuple(c["message"] for c in causes), diff))
    return sorted(out, key=lambda b: (rank[b.verdict], b.screen, b.name))


def _per_profile(messages: list[str]) -> str:
    """'p: miss 1% -> 3%' and 'p: time 300 -> 340 ms' as 'p: miss 1% -> 3%, time 300 -> 340 ms'."""
    by: dict[str, list[str]] = {}
    for m in messages:
        profile, _, what = m.partition(": ")
        by.setdefault(profile, []).append(what)
    return "; ".join(f"{p}: {', '.join(whats)}" for p, whats in by.items())


def gate_summary(record: dict[str, Any]) -> str:
    """The gate's one line: targets by what happened to them, and the verdict."""
    s = record["summary"]
    n = Counter(b.verdict for b in blocks(record))
    screens = f"{s['screens']} screen" + ("" if s["screens"] == 1 else "s")
    return (f"against {record['baseline']}: {screens} compared; changed: {n['worse']} worse, "
            f"{n['gone']} gone, {n['moved']} only moved, {n['better']} better; {s['errors']} unreadable; "
            f"{WORDS[s['verdict']]} at fail level {record['fail_level']} (exit {s['exit_code']})")


def _next_steps(record: dict[str, Any]) -> list[str]:
    steps = record["next_steps"]
    if not steps["rerecord"]:
        return []
    lines = ["If these changes are intended, record a new baseline:", f"    {steps['rerecord']}"]
    if steps["waivers"]:
        lines += ["or, once a person has judged a new failure acceptable, waive it in tapgauge.toml"
                  + ("" if steps["waivers_suffice"] else " (this answers the new failures only; what shrank or "
                     "got harder needs the change undone or a new baseline)") + ":", ""]
        lines += [f"    {line}".rstrip() for w in steps["waivers"] for line in (*w.splitlines(), "")]
    return lines


_STYLE = {"worse": "bold red", "gone": "yellow", "moved": "cyan", "better": "green"}


def write_gate_table(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    """One block per target, cause first; then the next step and the summary line."""
    buf = io.StringIO()
    console = Console(file=buf, width=width or 80, force_terminal=color, no_color=not color, highlight=False)
    for b in blocks(record):
        head = Text()
        head.append(f"{b.verdict:<7}", style=_STYLE[b.verdict])
        head.append(f"{b.screen}" + (f": {b.name}" if b.name and b.causes != (b.name,) else ""), style="bold")
        console.print(head)
        for line in b.causes:
            for part in wrap_cells(f"       {line}", width or 80, " " * 9):
                console.print(Text(part))
        if b.difficulty:
            for part in wrap_cells(f"       difficulty: {b.difficulty}", width or 80, " " * 9):
                console.print(Text(part, style="dim"))
    steps = _next_steps(record)
    if steps:
        console.print()
        for line in steps:
            console.print(Text(line), soft_wrap=True)
    console.print(Text(gate_summary(record), style="bold"))
    return buf.getvalue()


def write_gate_json(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    from tapgauge.jsontext import dumps

    return dumps(record) + "\n"


def write_gate_markdown(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    """Fit to paste into a pull-request comment: per screen, what got worse with before and after, what got better."""
    s = record["summary"]
    lines = [f"## Touch targets against the baseline: {WORDS[s['verdict']]}", "",
             md_text(gate_summary(record)) + ".", ""]
    by_screen: dict[str, list[Block]] = {}
    for b in blocks(record):
        by_screen.setdefault(b.screen, []).append(b)
    for screen in sorted(by_screen):
        lines += [f"### {md_text(screen)}", ""]
        for verdict in ("worse", "gone", "moved", "better"):
            mine = [b for b in by_screen[screen] if b.verdict == verdict]
            if not mine:
                continue
            lines += [f"**{verdict.capitalize()}**", ""]
            for b in mine:
                what = "; ".join(md_text(c) for c in b.causes)
                lines.append(f"- **{md_text(b.name or screen)}**" + (f": {what}" if what else ""))
                if b.difficulty:
                    lines.append(f"  - difficulty: {md_text(b.difficulty)}")
            lines.append("")
    steps = record["next_steps"]
    if steps["rerecord"]:
        lines += ["### Next step", "", "If these changes are intended, record a new baseline:", "",
                  "```sh", steps["rerecord"], "```", ""]
        if steps["waivers"]:
            lines += ["Or, once a person has judged a new failure acceptable, waive it in `tapgauge.toml`"
                      + ("" if steps["waivers_suffice"] else " (this answers the new failures only; what shrank "
                         "or got harder needs the change undone or a new baseline)") + ":", "",
                      "```toml", "\n\n".join(steps["waivers"]), "```", ""]
    lines += [DISCLAIMER, ""]
    return "\n".join(lines)


GATE_COLUMNS = ("verdict", "kind", "screen", "target", "name", "change", "fingerprint")


def write_gate_csv(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(GATE_COLUMNS)
    for key, verdict in SECTIONS:
        for c in record[key]:
            writer.writerow([csv_safe(v) for v in (verdict, c["kind"], c["screen"], c["target"], c["name"],
                                                    c["message"], c["fingerprint"])])
    return buf.getvalue()


def write_gate_sarif(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    """Regressions as failures at level error (they fail the gate); vanished targets and moves as
    informational results, level none (SARIF 2.1.0, 3.27.9); improvements are not results."""
    from tapgauge.report.sarif import SARIF_SCHEMA

    kinds = sorted({c["kind"] for key, _ in SECTIONS[:3] for c in record[key]})
    results = []
    for key, _ in SECTIONS[:3]:
        for c in record[key]:
            fails = key == "regressions"
            loc: dict[str, Any] = {"logicalLocations": [{"name": c["name"] or c["screen"], "kind": "element"}]}
            if c["path"]:
                loc["physicalLocation"] = {"artifactLocation": {"uri": c["path"]}}
            results.append({"ruleId": f"gate/{c['kind']}", "ruleIndex": kinds.index(c["kind"]),
                            "kind": "fail" if fails else "informational", "level": "error" if fails else "none",
                            "message": {"text": f"{c['name'] or c['screen']}: {c['message']}"}, "locations": [loc],
                            "partialFingerprints": {"tapgaugeTarget/v1": c["fingerprint"]}})
    s = record["summary"]
    doc = {"$schema": SARIF_SCHEMA, "version": "2.1.0", "runs": [{
        "tool": {"driver": {"name": "tapgauge", "version": __version__, "rules": [
            {"id": f"gate/{k}", "shortDescription": {"text": f"release gate: {k.replace('-', ' ')}"}} for k in kinds]}},
        "results": results,
        "invocations": [{"executionSuccessful": s["exit_code"] != 2, "exitCode": s["exit_code"],
                         "properties": {"failLevel": record["fail_level"], "verdict": s["verdict"],
                                        "summary": gate_summary(record)}}],
    }]}
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def write_gate_junit(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    """A test case per changed target: a failure where it got worse, skipped where it is gone or only
    moved, passed where it got better. Nothing compared is an error case."""
    from lxml import etree

    root = etree.Element("testsuites", name="tapgauge gate")
    suites: dict[str, Any] = {}
    counts = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    for b in blocks(record):
        suite = suites.get(b.screen)
        if suite is None:
            suite = suites[b.screen] = etree.SubElement(root, "testsuite", name=b.screen)
        case = etree.SubElement(suite, "testcase", name=b.name or b.screen, classname=b.screen.replace("/", "."))
        text = "\n".join([*b.causes, *([f"difficulty: {b.difficulty}"] if b.difficulty else [])])
        counts["tests"] += 1
        if b.verdict == "worse":
            etree.SubElement(case, "failure", message=text.splitlines()[0] if text else "worse").text = text
            counts["failures"] += 1
        elif b.verdict in ("gone", "moved"):
            etree.SubElement(case, "skipped", message=text.splitlines()[0] if text else b.verdict)
            counts["skipped"] += 1
        else:
            etree.SubElement(case, "system-out").text = text
    s = record["summary"]
    if s["exit_code"] == 2:
        suite = etree.SubElement(root, "testsuite", name="inputs")
        case = etree.SubElement(suite, "testcase", name=s["verdict"], classname="inputs")
        etree.SubElement(case, "error", message=gate_summary(record))
        counts["tests"] += 1
        counts["errors"] += 1
    for k, v in counts.items():
        root.set(k, str(v))
    for suite in root:
        cases = list(suite)
        suite.set("tests", str(len(cases)))
        for tag, attr in (("failure", "failures"), ("error", "errors"), ("skipped", "skipped")):
            suite.set(attr, str(sum(1 for c in cases if c.find(tag) is not None)))
    return etree.tostring(root, pretty_print=True, encoding="unicode", doctype="<?xml version='1.0' encoding='UTF-8'?>")


GATE_CSS = ("body{font:16px/1.5 system-ui,sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#1a1a1a}"
            "h3{margin-bottom:.2rem}.verdict{font-weight:700}ul{padding-left:1.2rem}"
            "pre{background:#f2f4f1;padding:.6rem;overflow-x:auto}")


def write_gate_html(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    """A page for a build's artifacts: the same blocks and next step as the table."""
    s = record["summary"]
    h = ["<!DOCTYPE html>", '<html lang="en">', '<head><meta charset="utf-8">',
         '<meta name="viewport" content="width=device-width, initial-scale=1">',
         "<title>Touch targets against the baseline</title>",
         f"<style>{GATE_CSS}</style>", "</head>", "<body>", "<main>",
         f"<h1>Touch targets against the baseline: {escape(WORDS[s['verdict']])}</h1>",
         f'<p class="verdict">{escape(gate_summary(record))}.</p>']
    for verdict in ("worse", "gone", "moved", "better"):
        mine = [b for b in blocks(record) if b.verdict == verdict]
        if not mine:
            continue
        h += [f"<h2>{verdict.capitalize()}</h2>", "<ul>"]
        for b in mine:
            parts = [f"<strong>{escape(b.screen)}{': ' + escape(b.name) if b.name else ''}</strong>"]
            parts += [escape(c) for c in b.causes]
            if b.difficulty:
                parts.append(f"difficulty: {escape(b.difficulty)}")
            h.append("<li>" + "<br>".join(parts) + "</li>")
        h.append("</ul>")
    steps = _next_steps(record)
    if steps:
        h += ["<h2>Next step</h2>", f"<pre>{escape(chr(10).join(steps))}</pre>"]
    h += [f"<p>{escape(DISCLAIMER)}</p>", "</main>", "</body>", "</html>", ""]
    return "\n".join(h)


GATE_WRITERS: dict[str, Callable[..., str]] = {
    "table": write_gate_table, "json": write_gate_json, "sarif": write_gate_sarif, "junit": write_gate_junit,
    "csv": write_gate_csv, "md": write_gate_markdown, "html": write_gate_html,
}
