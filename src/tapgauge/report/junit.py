"""JUnit XML for CI test dashboards: a test suite per screen, a test case per target and rule set.

A case fails when the target has findings of that rule set that are not waived;
it is skipped when the target was not checked or every finding was waived. The root
element carries the totals, so this writer reads a spooled report twice.
"""

from __future__ import annotations

from typing import Any, TextIO

from lxml import etree

from tapgauge.report.records import Report


def _outcome(t: dict[str, Any], rs: str) -> tuple[str, Any]:
    """One test case's result: ("skipped", why), ("failure", its open findings) or ("passed", None)."""
    mine = [f for f in t["findings"] if f["rule"].split("/", 1)[0] == rs]
    open_ = [f for f in mine if not f["waiver"]]
    if t["status"] == "unchecked":
        return "skipped", f"not checked: {t['reason']}"
    if mine and not open_:
        return "skipped", f"waived: {mine[0]['waiver']['reason']}"
    if open_:
        return "failure", open_
    return "passed", None


def _counts(s: dict[str, Any]) -> tuple[int, int, int]:
    """A screen's tests, failures and skipped, without building its XML."""
    kinds = [_outcome(t, rs)[0] for t in s["targets"] for rs in s["rulesets"]]
    return len(kinds), kinds.count("failure"), kinds.count("skipped")


def _suite(s: dict[str, Any]) -> etree._Element:
    """A screen's test suite: a case per target and rule set."""
    title = f"{s['path']} :: {s['name']}" if s["name"] else s["path"]
    suite = etree.Element("testsuite", name=title)
    for t in s["targets"]:
        for rs in s["rulesets"]:
            case = etree.SubElement(suite, "testcase", name=f"#{t['ordinal']} {t['name']} [{rs}]",
                                    classname=title.replace("/", "."))
            kind, detail = _outcome(t, rs)
            if kind == "skipped":
                etree.SubElement(case, "skipped", message=detail)
            elif kind == "failure":
                worst = detail[0]
                size = f"{t['size']['width']:g} x {t['size']['height']:g} {s['device']['unit']}"
                if t["size_mm"]:
                    size += f" ({t['size_mm']['width']:g} x {t['size_mm']['height']:g} mm)"
                failure = etree.SubElement(
                    case, "failure", type=worst["severity"],
                    message=f"{worst['rule']}: found {worst['measured']:g}, needs {worst['required']:g} {worst['unit']}",
                )
                failure.text = "\n".join(
                    [f"target {size}, status {t['status']}"]
                    + [f"{f['severity']} {f['rule']}: found {f['measured']:g}, needs {f['required']:g} {f['unit']}: "
                       f"{f['message']}" for f in detail]
                )
    tests, failures, skipped = _counts(s)
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
    total = failures = skipped = 0
    for s in report.screens:  # first pass: the totals the root element carries
        n, f, k = _counts(s)
        total, failures, skipped = total + n, failures + f, skipped + k
    errors = report.errors
    attrs = {"name": "tapgauge", "tests": str(total + len(errors)), "failures": str(failures),
             "errors": str(len(errors)), "skipped": str(skipped)}
    out.write("<?xml version='1.0' encoding='UTF-8'?>\n<testsuites"
              + "".join(f" {k}={_attr(v)}" for k, v in attrs.items()) + ">\n")
    for s in report.screens:
        out.write(_text(_suite(s)))
    if errors:
        suite = etree.Element("testsuite", name="unreadable inputs", tests=str(len(errors)),
                              failures="0", errors=str(len(errors)), skipped="0")
        for e in errors:
            case = etree.SubElement(suite, "testcase", name=e["path"], classname="inputs")
            err = etree.SubElement(case, "error", message=e["message"])
            err.text = f"{e['path']}:{e['line']}: {e['message']}" if e["line"] else f"{e['path']}: {e['message']}"
        out.write(_text(suite))
    out.write("</testsuites>\n")
