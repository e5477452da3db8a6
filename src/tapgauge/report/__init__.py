"""Writers: one small function per format, all over the same plain records."""

from __future__ import annotations

from collections.abc import Callable
from tapgauge.report.json_writer import write_json
from tapgauge.report.table import write_table

Writer = Callable[..., str]

WRITERS: dict[str, Writer] = {
    "table": write_table,
    "json": write_json,
}


def writer_for(name: str) -> Writer:
    try:
        return WRITERS[name]
    except KeyError:
        raise ValueError(f"unknown format {name!r}; expected one of: {', '.join(WRITERS)}") from None


__all__ = ["WRITERS", "writer_for"]
