from __future__ import annotations

from typing import TextIO

from tapgauge.jsontext import write_lines_streamed
from tapgauge.report.records import Report


def write_json(report: Report, out: TextIO, width: int | None = None) -> None:
    """The report document as compact JSON, one screen a line, each written as it arrives (see the JSON
    contract in DESIGN; screens as report/document.py makes them)."""
    write_lines_streamed(out, report.document, report.screen_documents)
