"""SARIF 2.1.0 (OASIS) for code-scanning dashboards.

One result per finding on a failing, partial or exempt target. Levels are the
rule's severity, whose words are SARIF's own (error, warning, note; SARIF 2.1.0 section
3.27.10). A finding on a target that could not be
measured reliably is `kind: "review"` with level "none" (section 3.27.9: a result that is
not a failure has no other level): a person must look, but it fails nothing. Waived
findings carry an external suppression with the waiver's reason. The invocation
carries the exit code, the fail level and the run's verdict, as every format does. Locations point at the
screen file and the target's line; where the screen has a screenshot, the result
attaches it with the target's rectangle in image pixels. partialFingerprints use
the coordinate-free target identity, so moving a control does not reopen a result.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Any, TextIO

from tapgauge import __version__
from tapgauge.identity import fingerprint
from tapgauge.jsontext import write_streamed
from tapgauge.report.records import Report
from tapgauge.report.verdict import DISCLAIMER, verdict_text

LEVELS = {"error": "error", "warning": "warning", "note": "note"}  # the same words, by design
SARIF_SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"


def _image_scale(screen: dict[str, Any]) -> float:
    """Screen coordinates to screenshot pixels: points times the scale, pixels as they are."""
    if screen["coordinates"] == "pt":
        return float(screen["device"]["scale"] or 1.0)
    return 1.0


def _results(report: Report, index: dict[str, int], artifact: Callable[[str], int]) -> Iterator[dict[str, Any]]:
    for s in report.screens:
        sid = f"{s['path']}::{s['name']}" if s["name"] else s["path"]
        k = _image_scale(s)
        for t in s["targets"]:
            if t["status"] not in ("fail", "partial", "exempt"):
                continue
            for f in t["findings"]:
                region: dict[str, Any] = {"startLine": t["line"]} if t["line"] else {}
                location = {"physicalLocation": {"artifactLocation": {"uri": s["path"], "index": artifact(s["path"])},
                                                 **({"region": region} if region else {})},
                            "logicalLocations": [{"name": f"#{t['number']} {t['name']}", "kind": "element"}]}
                review = t["status"] == "partial"
                result: dict[str, Any] = {
                    "ruleId": f["rule"],
                    "ruleIndex": index[f["rule"]],
                    "kind": "review" if review else "fail",
                    "level": "none" if review else LEVELS[f["severity"]],
                    "message": {"text": f"#{t['number']} {t['name']}: {f['message']} "
                                        f"(found {f['measured']:g}, needs {f['required']:g} {f['unit']})"},
                    "locations": [location],
                    "partialFingerprints": {"tapgaugeTarget/v1": fingerprint(sid, t["key"] + "/" + f["rule"])},
                    "properties": {"status": t["status"], "measured": f["measured"], "required": f["required"],
                                   "unit": f["unit"]},
                }
                if f["waiver"]:
                    w = f["waiver"]
                    until = f" until {w['expires']}" if w["expires"] else ""
                    result["suppressions"] = [{"kind": "external", "status": "accepted",
                                               "justification": f"{w['reason']} ({w['author']}{until})"}]
                if s["image"]:
                    left, top, right, bottom = (v * k for v in t["bounds"])
                    result["attachments"] = [{
                        "description": {"text": "screenshot with the target's rectangle"},
                        "artifactLocation": {"uri": s["image"], "index": artifact(s["image"])},
                        "rectangles": [{"left": left, "top": top, "right": right, "bottom": bottom,
                                        "message": {"text": f"#{t['number']} {t['name']}"}}],
                    }]
                yield result


def _driver(rules: list[dict[str, Any]]) -> dict[str, Any]:
    return {
        "name": "tapgauge",
        "version": __version__,
        "rules": [
            {"id": r["id"], "name": r["id"].replace("/", "-"),
             "shortDescription": {"text": r["summary"]},
             "fullDescription": {"text": f"{r['summary']}. Source: {r['source']}."},
             "help": {"text": f"{r['summary']}. Source: {r['source']} ({r['url']}). {DISCLAIMER}"},
             "helpUri": r["url"],
             "defaultConfiguration": {"level": LEVELS[r["severity"]]},
             "properties": {"kind": r["kind"], "unit": r["unit"], "params": r["params"]}}
            for r in rules
        ],
    }


def _invocation(report: Report, final: bool) -> dict[str, Any]:
    if not final:
        return {"executionSuccessful": True, "toolExecutionNotifications": []}
    errors, summary = report.errors, report.summary
    notes = [{"level": "error", "message": {"text": e["message"]},
              "locations": [{"physicalLocation": {"artifactLocation": {"uri": e["path"]},
                                                  **({"region": {"startLine": e["line"]}} if e["line"] else {})}}]}
             for e in errors]
    if summary["verdict"] == "nothing-compared":
        notes.append({"level": "error", "message": {"text": verdict_text(summary, report.fail_level)}})
    return {"executionSuccessful": summary["exit_code"] != 2, "exitCode": summary["exit_code"],
            "toolExecutionNotifications": notes,
            "properties": {"failLevel": report.fail_level, "verdict": summary["verdict"],
                           "summary": verdict_text(summary, report.fail_level), "totals": summary}}


def write_sarif(report: Report, out: TextIO, width: int | None = None) -> None:
    """One SARIF run; results are written as screens pass, artifacts and the invocation after them."""
    rules = [r for rs in report.rulesets for r in rs["rules"]]
    index = {r["id"]: k for k, r in enumerate(rules)}
    artifacts: dict[str, int] = {}

    def artifact(uri: str) -> int:
        return artifacts.setdefault(uri, len(artifacts))

    def document(results: Any, final: bool) -> dict[str, Any]:
        return {
            "$schema": SARIF_SCHEMA,
            "version": "2.1.0",
            "runs": [{
                "tool": {"driver": _driver(rules)},
                "results": results,
                "artifacts": [{"location": {"uri": uri}} for uri in artifacts] if final else [],
                "invocations": [_invocation(report, final)],
            }],
        }

    write_streamed(out, document, _results(report, index, artifact))
