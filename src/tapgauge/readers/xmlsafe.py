"""Parse untrusted XML: no DTDs, no entities, no network, bounded size.

Window dumps and element trees never carry a DOCTYPE, so one is refused outright
rather than half-trusted; this also shuts out entity-expansion bombs.
"""

from __future__ import annotations

import re
from pathlib import Path

from lxml import etree

from tapgauge.model import InputError
from tapgauge.textfile import read_bytes

_DOCTYPE = re.compile(rb"<!DOCTYPE|<!ENTITY", re.IGNORECASE)
# One parser per process, reused (each process reads one file at a time).
_PARSER = etree.XMLParser(
    resolve_entities=False, no_network=True, load_dtd=False, dtd_validation=False, huge_tree=False,
    remove_comments=True, remove_pis=True,
)


def parse_xml(path: Path, data: bytes | None = None) -> etree._Element:
    """Parse a file into its root element or raise InputError naming file and line."""
    if data is None:
        data = read_bytes(path)
    # No copies of the file's bytes: strip() and a 64 KiB slice each copied the dump.
    if not data or data.isspace():
        raise InputError(path, "file is empty; expected an XML document")
    m = _DOCTYPE.search(data)
    if m:
        line = data.count(b"\n", 0, m.start()) + 1
        raise InputError(path, "a DOCTYPE or entity declaration is not allowed in a screen file", line)
    try:
        return etree.fromstring(data, parser=_PARSER)
    except etree.XMLSyntaxError as exc:
        line = exc.lineno if exc.lineno else None
        msg = (exc.msg or str(exc)).split(", line ")[0]
        raise InputError(path, f"malformed XML: {msg}", line) from None
