"""Writers: one small function per format, all over the same plain records.

Each writer takes a Report and a text stream and writes as the screens pass. The
formats that put totals first (Markdown, HTML, JUnit) are handed a spooled report,
whose screens are kept in a temporary file and can be read more than once. A writer's
module is imported only when its format is asked for, to keep start-up short.
"""

from __future__ import annotations

from collections.abc import Callable
from importlib import import_module

Writer = Callable[..., None]

# format -> (module, function)
WRITERS: dict[str, tuple[str, str]] = {
    "table": ("tapgauge.report.table", "write_table"),
    "json": ("tapgauge.report.json_writer", "write_json"),
    "jsonl": ("tapgauge.report.jsonl_writer", "write_jsonl"),
    "sarif": ("tapgauge.report.sarif", "write_sarif"),
    "junit": ("tapgauge.report.junit", "write_junit"),
    "csv": ("tapgauge.report.findings", "write_csv"),
    "md": ("tapgauge.report.findings", "write_markdown"),
    "html": ("tapgauge.report.html", "write_html"),
}
TOTALS_FIRST = frozenset({"junit", "md", "html"})
DOCUMENT_ONLY = frozenset({"json", "jsonl"})  # need nothing but each screen's JSON report text


def writer_for(name: str) -> Writer:
    try:
        module, function = WRITERS[name]
    except KeyError:
        raise ValueError(f"unknown format {name!r}; expected one of: {', '.join(WRITERS)}") from None
    writer: Writer = getattr(import_module(module), function)
    return writer


__all__ = ["DOCUMENT_ONLY", "TOTALS_FIRST", "WRITERS", "writer_for"]
