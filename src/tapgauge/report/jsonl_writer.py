"""JSON Lines: the report for streaming large batches into other tools.

One screen a line (as the JSON report holds it: report/document.py), in report order, as each is checked; then one closing line with what
is known only at the end (summary, errors, waivers) and the report's head (format, version, tool,
rule sets, profiles, fail level, disclaimer). The closing line is the only one with "format".
Each line is compact JSON (RFC 8259 text with no line breaks inside), so `head`, `grep` and
line-by-line readers work on it. Schema: src/tapgauge/schema/report-lines-v2.schema.json.
"""

from __future__ import annotations

from typing import TextIO

import orjson

from tapgauge.report.records import Report

LINES_FORMAT = "tapgauge-report-lines"


def write_jsonl(report: Report, out: TextIO, width: int | None = None) -> None:
    for text in report.screen_documents:
        out.write(text + "\n")
    head = report.head()
    out.write(orjson.dumps({**head, "format": LINES_FORMAT, "waivers": report.waivers, "errors": report.errors,
                            "summary": report.summary}).decode("utf-8") + "\n")
