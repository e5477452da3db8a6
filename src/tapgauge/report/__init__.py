"""Writers: one small function per format, all over the same plain records.

Each writer takes a Report and a text stream and writes as the screens pass. The
formats that put totals first (Markdown, HTML, JUnit) are handed a spooled report,
whose screens are kept in a temporary file and can be read more than once.
"""

from __future__ import annotations

from collections.abc import Callable

from tapgauge.report.findings import write_csv, write_markdown
from tapgauge.report.json_writer import write_json
from tapgauge.report.junit import write_junit
from tapgauge.report.sarif import write_sarif
from tapgauge.report.table import write_table

Writer = Callable[..., None]


def write_html(report, out, width: int | None = None) -> None:  # type: ignore[no-untyped-def]
    from tapgauge.report.html import write_html as html  # Pillow drawing only when asked

    html(report, out, width)


WRITERS: dict[str, Writer] = {
    "table": write_table,
    "json": write_json,
    "sarif": write_sarif,
    "junit": write_junit,
    "csv": write_csv,
    "md": write_markdown,
    "html": write_html,
}
TOTALS_FIRST = frozenset({"junit", "md", "html"})


def writer_for(name: str) -> Writer:
    try:
        return WRITERS[name]
    except KeyError:
        raise ValueError(f"unknown format {name!r}; expected one of: {', '.join(WRITERS)}") from None


__all__ = ["TOTALS_FIRST", "WRITERS", "writer_for"]
