"""JUnit XML for CI test dashboards: a test suite per screen, a test case per target.

A case fails when the target has open (unwaived) findings at or above the run's fail
level, so the failure count is the summary's count of failing targets and agrees with
the exit code. Findings below the level leave the case passed and are listed in its
output. A case is skipped when its target was not compared: unchecked, partial,
or every finding waived. Unreadable inputs, and a run that compared nothing, are
errors. The root element carries the totals, so this writer reads a spooled report twice.
"""

from __future__ import annotations

from typing import Any, TextIO

from lxml import etree

from tapgauge.model import SEVERITY_BY_LABEL, Severity
from tapgauge.report.records import Report, open_at
from tapgauge.report.verdict import verdict_text


def _outcome(t: dict[str, Any], level: Severity) -> tuple[str, Any]:
    """One test case's result: ("skipped", why), ("failure", findings at the level) or ("passed", findings below)."""
    if t["status"] == "unchecked":
        return "skipped", f"unchecked: {t['reason']}"
    if t["status"] == "partial":
        return "skipped", f"partial: {t['reason']}"
    if t["status"] == "exempt":
        return "skipped", f"exempt: waived: {t['findings'][0]['waiver']['reason']}"
    failing = open_at(t, level)
    if failing:
        return "failure", failing
    return "passed", [f for f in t["findings"] if not f["waiver"]]


def _counts(s: dict[str, Any], level: Severity) -> tuple[int, int, int]:
    """A screen's tests, failures and skipped, without building its XML."""
    kinds = [_outcome(t, level)[0] for t in s["targets"]]
    return len(kinds), kinds.count("failure"), kinds.count("skipped")


def _finding_line(f: dict[str, Any]) -> str:
    return f"{f['severity']} {f['rule']}: found {f['measured']:g}, needs {f['required']:g} {f['unit']}: {f['message']}"


def _suite(s: dict[str, Any], level: Severity) -> etree._Element:
    """A screen's test suite: a case per target."""
    title = f"{s['path']} :: {s['name']}" if s["name"] else s["path"]
    suite = etree.Element("testsuite", name=title)
    for t in s["targets"]:
        case = etree.SubElement(suite, "testcase", name=f"#{t['number']} {t['name']}",
                                classname=title.replace("/", "."))
        kind, detail = _outcome(t, level)
        if kind == "skipped":
            etree.SubElement(case, "skipped", message=detail)
            continue
        if kind == "failure":
            worst = detail[0]
            size = f"{t['size']['width']:g} x {t['size']['height']:g} {s['device']['unit']}"
            if t["size_mm"]:
                size += f" ({t['size_mm']['width']:g} x {t['size_mm']['height']:g} mm)"
            failure = etree.SubElement(
                case, "failure", type=worst["severity"],
                message=f"{worst['rule']}: found {worst['measured']:g}, needs {worst['required']:g} {worst['unit']}",
            )
            failure.text = "\n".join([f"target {size}, status {t['status']}"] + [_finding_line(f) for f in detail])
        below = [f for f in t["findings"] if not f["waiver"] and f not in (detail if kind == "failure" else [])]
        if below:  # findings under the fail level: reported, not failed
            out = etree.SubElement(case, "system-out")
            out.text = "below the fail level:\n" + "\n".join(_finding_line(f) for f in below)
    tests, failures, skipped = _counts(s, level)
    suite.set("tests", str(tests))
    suite.set("failures", str(failures))
    suite.set("errors", "0")
    suite.set("skipped", str(skipped))
    return suite


_ATTR_ESCAPES = str.maketrans({"&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;",
                               "\n": "&#10;", "\r": "&#13;", "\t": "&#9;"})


def _attr(value: str) -> str:
    """An XML attribute value in double quotes (xml.sax.saxutils would pull in urllib at start-up)."""
    return '"' + value.translate(_ATTR_ESCAPES) + '"'


def _text(el: etree._Element) -> str:
    return etree.tostring(el, pretty_print=True, encoding="unicode")


def write_junit(report: Report, out: TextIO, width: int | None = None) -> None:
    level = SEVERITY_BY_LABEL[report.fail_level]
    total = failures = skipped = 0
    for s in report.screens:  # first pass: the totals the root element carries
        n, f, k = _counts(s, level)
        total, failures, skipped = total + n, failures + f, skipped + k
    errors = [(e["path"], e["message"], f"{e['path']}:{e['line']}: {e['message']}" if e["line"] else
               f"{e['path']}: {e['message']}") for e in report.errors]
    summary = report.summary
    if summary["verdict"] == "nothing-compared":  # an empty report must not read as a clean one
        text = verdict_text(summary, report.fail_level)
        errors.append(("nothing compared", text, text))
    attrs = {"name": "tapgauge", "tests": str(total + len(errors)), "failures": str(failures),
             "errors": str(len(errors)), "skipped": str(skipped)}
    out.write("<?xml version='1.0' encoding='UTF-8'?>\n<testsuites"
              + "".join(f" {k}={_attr(v)}" for k, v in attrs.items()) + ">\n")
    for s in report.screens:
        out.write(_text(_suite(s, level)))
    if errors:
        suite = etree.Element("testsuite", name="inputs", tests=str(len(errors)),
                              failures="0", errors=str(len(errors)), skipped="0")
        for name, message, detail in errors:
            case = etree.SubElement(suite, "testcase", name=name, classname="inputs")
            err = etree.SubElement(case, "error", message=message)
            err.text = detail
        out.write(_text(suite))
    out.write("</testsuites>\n")
