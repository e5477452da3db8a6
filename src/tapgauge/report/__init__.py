"""Writers: one small function per format, all over the same plain records."""

from __future__ import annotations

from collections.abc import Callable
from tapgauge.report.json_writer import write_json
from tapgauge.report.junit import write_junit
from tapgauge.report.sarif import write_sarif
from tapgauge.report.table import write_table

Writer = Callable[..., str]

WRITERS: dict[str, Writer] = {
    "table": write_table,
    "json": write_json,
    "sarif": write_sarif,
    "junit": write_junit,
}


def writer_for(name: str) -> Writer:
    try:
        return WRITERS[name]
    except KeyError:
        raise ValueError(f"unknown format {name!r}; expected one of: {', '.join(WRITERS)}") from None


__all__ = ["WRITERS", "writer_for"]
