from __future__ import annotations

from typing import TextIO

from tapgauge.jsontext import write_streamed
from tapgauge.report.records import Report


def write_json(report: Report, out: TextIO, width: int | None = None) -> None:
    """The report document, each screen written as it arrives (see the JSON contract in DESIGN)."""
    write_streamed(out, report.document, report.screen_texts)
