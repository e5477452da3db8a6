"""Parse untrusted XML: no DTDs, no entities, no network, bounded size.

Window dumps and element trees never carry a DOCTYPE, so one is refused outright
rather than half-trusted; this also shuts out entity-expansion bombs.

Files as testers save them are not always one clean document: adb's status line
sits before or after the XML, Windows shells write UTF-16, several dumps get
appended to one file, a copy is cut short. A clean file takes one parse (the fast
path); anything else goes through `_Splitter`, which reads each document in turn,
keeps the file's real line numbers, and says what it ignored or why it stopped.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import NamedTuple

import numpy as np
from lxml import etree

from tapgauge.model import InputError
from tapgauge.textfile import read_bytes

_DOCTYPE = re.compile(rb"<!DOCTYPE|<!ENTITY", re.IGNORECASE)
_SAFE = dict(resolve_entities=False, no_network=True, load_dtd=False, remove_comments=True, remove_pis=True)
# One parser per process, reused (each process reads one file at a time). No table of xml:id values:
# dumps use none, and nothing here looks one up.
_PARSER = etree.XMLParser(dtd_validation=False, huge_tree=False, collect_ids=False, **_SAFE)  # type: ignore[arg-type]

# What `uiautomator dump` prints when done ("hierchary" is how the tool spells it; AOSP
# uiautomator DumpCommand). It ends at the line's end, or where XML glued to it begins.
_STATUS = re.compile(rb"UI hier(?:chary|archy) dumped to:[^\r\n<]*")
# What it prints instead of a dump when the device could not give one (AOSP DumpCommand;
# "could not get idle state" from memory).
_FAILURE = re.compile(rb"ERROR:[^\r\n<]*")
# The XML declaration; blanked in files that hold more than a clean document, so that each
# document parses from wherever it starts and is read as the UTF-8 we hand the parser.
_DECLARATION = re.compile(rb"<\?xml[ \t\r\n][^<>]{0,300}\?>")
_BOMS = ((b"\xff\xfe", "utf-16-le", "UTF-16"), (b"\xfe\xff", "utf-16-be", "UTF-16"))
_UTF8_BOM = b"\xef\xbb\xbf"
_EXTRA_CONTENT = 5  # libxml2's XML_ERR_DOCUMENT_END: "Extra content at the end of the document"
_TAG_START = re.compile(rb"<([A-Za-z_][\w.:-]*)[ \t\r\n]")


class Document(NamedTuple):
    """One XML document of a file, and the adb status lines ignored around it: (line, text)."""

    root: etree._Element
    ignored: tuple[tuple[int, str], ...] = ()


def status_notice(ignored: tuple[tuple[int, str], ...]) -> str:
    """The notice for status lines left out of a screen, naming each line and what it said."""
    return f"ignored {_status_lines(ignored)} outside the XML"


def _status_lines(ignored: tuple[tuple[int, str], ...]) -> str:
    parts = [f"{line} ({text!r})" for line, text in ignored]
    listed = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]
    return f"the dump tool's status line{'s' if len(parts) > 1 else ''} {listed}"


def parse_documents(path: Path, data: bytes | None = None) -> list[Document]:
    """Every XML document in a file, in order, or an InputError naming file, line and what was expected."""
    if data is None:
        data = read_bytes(path)
    # No copies of the file's bytes on the fast path: strip() and a 64 KiB slice each copied the dump.
    if not data or data.isspace():
        raise InputError(path, "file is empty; expected an XML document")
    _refuse_doctype(path, data)
    if not data.startswith((b"\xff\xfe", b"\xfe\xff")):  # UTF-16 is checked for a DOCTYPE once decoded
        edges = _status_at_edges(data)
        try:
            root = etree.fromstring(edges[0] if edges else data, parser=_PARSER)
        except etree.XMLSyntaxError:
            pass  # the splitter reads what is there and says what is wrong
        else:
            _refuse_dtd(path, root)
            return [Document(plain_tags(root) if b"xmlns" in data else root, edges[1] if edges else ())]
    return _Splitter(path, _as_utf8(path, data)).documents()


def _refuse_doctype(path: Path, data: bytes) -> None:
    m = _DOCTYPE.search(data) if b"<!" in data else None  # a plain search first: most files have no "<!"
    if m:
        line = data.count(b"\n", 0, m.start()) + 1
        raise InputError(path, "a DOCTYPE or entity declaration is not allowed in a screen file", line)


def _refuse_dtd(path: Path, root: etree._Element) -> None:
    # A DOCTYPE in an encoding the byte search cannot see (the parser sniffs a few): still refused.
    if root.getroottree().docinfo.internalDTD is not None:
        raise InputError(path, "a DOCTYPE or entity declaration is not allowed in a screen file")


def _status_at_edges(data: bytes) -> tuple[bytes, tuple[tuple[int, str], ...]] | None:
    """The common adb cases in one parse: a status line only before the first '<' or after the last '>'.

    Returns the bytes with those lines blanked to spaces (so lines and columns stay put)
    and the lines ignored, or None when there is none (and nothing is copied).
    """
    first, last = data.find(b"<"), data.rfind(b">")
    if first < 0 or last < first:
        return None
    spans = [m.span() for m in (_full_status(data, 0, first), _full_status(data, last + 1, len(data))) if m]
    if not spans:
        return None
    out = bytearray(data)
    ignored = []
    for start, end in spans:
        out[start:end] = b" " * (end - start)
        ignored.append((data.count(b"\n", 0, start) + 1, data[start:end].decode("utf-8", "replace").strip()))
    return bytes(out), tuple(ignored)


def _full_status(data: bytes, start: int, end: int) -> re.Match[bytes] | None:
    """A status line that is all the text in data[start:end] but whitespace, or None."""
    piece = data[start:end]
    if not piece.strip():
        return None
    m = _STATUS.search(data, start, end)
    if m is None or data[start:m.start()].strip() or data[m.end():end].strip():
        return None
    return m


def _as_utf8(path: Path, data: bytes) -> bytes:
    """The file's text as UTF-8, decoded by its byte-order mark (PowerShell's `>` writes UTF-16)."""
    if data.startswith(_UTF8_BOM):
        return data[len(_UTF8_BOM):]
    for bom, codec, name in _BOMS:
        if data.startswith(bom):
            try:
                return data[len(bom):].decode(codec).encode("utf-8")
            except UnicodeError as exc:
                start = getattr(exc, "start", 0)
                head = data[len(bom):len(bom) + start].decode(codec, "replace")
                raise InputError(path, f"starts with a {name} byte-order mark but is not valid {name} text "
                                       f"(byte {start + len(bom)})", head.count("\n") + 1) from None
    return data


def plain_tags(root: etree._Element) -> etree._Element:
    """Drop XML namespaces from tags and attribute names, so readers see <hierarchy>, bounds=..."""
    for el in root.iter():
        tag = el.tag
        if isinstance(tag, str) and tag.startswith("{"):
            el.tag = tag.split("}", 1)[1]
        qualified = [k for k in el.attrib if k.startswith("{")]
        for key in qualified:
            value = el.attrib.pop(key)
            local = key.split("}", 1)[1]
            if local not in el.attrib:  # a plain attribute of the same name wins
                el.set(local, value)
    etree.cleanup_namespaces(root)
    return root


class _Splitter:
    """Reads a file that is more than one clean document: each document, and the text between them.

    Declarations are blanked first (each document then parses as the UTF-8 it now is,
    and a second declaration is no error); each document is parsed from where it
    starts, padded with newlines and spaces so the parser's lines and columns are the
    file's; where it reports extra content, the document ended and the rest is read again.
    """

    def __init__(self, path: Path, data: bytes) -> None:
        self.path = path
        _refuse_doctype(path, data)
        declarations = [m.span() for m in _DECLARATION.finditer(data)]
        buf = bytearray(data)
        for start, end in declarations:
            buf[start:end] = b" " * (end - start)
        self.buf = bytes(buf)
        self.segment_ends = [start for start, _ in declarations if start > 0] + [len(self.buf)]
        self.newlines = np.flatnonzero(np.frombuffer(self.buf, dtype=np.uint8) == 10)
        self.roots: list[etree._Element] = []
        self.ignored: list[list[tuple[int, str]]] = []  # per document: status lines before or after it
        self.pending: list[tuple[int, str]] = []  # status lines seen before the first document

    def documents(self) -> list[Document]:
        pos, n = 0, len(self.buf)
        while True:
            pos = self._outside(pos)
            if pos >= n:
                break
            pos = self._document(pos)
        if not self.roots and not self.pending:  # a byte-order mark and blank lines, nothing more
            raise InputError(self.path, "file is empty; expected an XML document")
        if not self.roots:
            raise InputError(self.path, f"holds no XML, only {_status_lines(tuple(self.pending))}; expected a "
                                        "window dump (was it written to a file on the device instead?)",
                             self.pending[0][0])
        return [Document(root, tuple(ignored)) for root, ignored in zip(self.roots, self.ignored)]

    # -- positions: lines as the file counts them, columns in characters as the parser does

    def _line_of(self, offset: int) -> int:
        return int(np.searchsorted(self.newlines, offset)) + 1

    def _line_start(self, line: int) -> int:
        return 0 if line <= 1 else int(self.newlines[line - 2]) + 1

    def _column_of(self, offset: int) -> int:
        return len(self.buf[self._line_start(self._line_of(offset)):offset].decode("utf-8", "replace")) + 1

    def _offset_of(self, line: int, column: int) -> int:
        start = self._line_start(line)
        end = int(self.newlines[line - 1]) if line - 1 < len(self.newlines) else len(self.buf)
        chars = self.buf[start:end].decode("utf-8", "replace")[:max(column - 1, 0)]
        return start + len(chars.encode("utf-8", "replace"))

    # -- between documents

    def _outside(self, pos: int) -> int:
        """Skip blank text and status lines from pos; the offset of the next '<' (or the end)."""
        buf, n = self.buf, len(self.buf)
        while pos < n:
            if buf[pos] in b" \t\r\n":
                pos += 1
                continue
            if buf[pos] == ord("<"):
                return pos
            line = self._line_of(pos)
            status = _STATUS.match(buf, pos)
            if status:
                text = status.group().decode("utf-8", "replace").strip()
                (self.ignored[-1] if self.roots else self.pending).append((line, text))
                pos = status.end()
                continue
            failure = _FAILURE.match(buf, pos)
            if failure:
                said = failure.group().decode("utf-8", "replace").strip()
                raise InputError(self.path, f"the dump failed on the device, which said {said!r} instead of "
                                            "writing the screen; try the dump again (with the screen on and "
                                            "still)", line)
            end = buf.find(b"\n", pos, pos + 60)
            snippet = buf[pos:end if end >= 0 else pos + 40].decode("utf-8", "backslashreplace").strip()
            raise InputError(self.path, f"malformed XML: unexpected text {snippet!r} at line {line}, column "
                                        f"{self._column_of(pos)}, outside the XML document; expected only the XML, "
                                        "blank lines, or the dump tool's status line ('UI hierchary dumped to: ...')",
                             line)
        return pos

    # -- one document

    def _padded(self, start: int, end: int) -> bytes:
        line = self._line_of(start)
        return b"\n" * (line - 1) + b" " * (self._column_of(start) - 1) + self.buf[start:end]

    def _document(self, start: int) -> int:
        """Parse the document that starts at `start`; the offset where it ends."""
        end = next(e for e in self.segment_ends if e > start)
        try:
            root = etree.fromstring(self._padded(start, end), parser=_PARSER)
        except etree.XMLSyntaxError as exc:
            if exc.code != _EXTRA_CONTENT or not exc.position:
                raise self._broken(start, end, exc) from None
            end = self._offset_of(*exc.position)
            if end <= start:  # cannot happen for a parser that read something first; never loop on it
                raise self._broken(start, end, exc) from None
            try:
                root = etree.fromstring(self._padded(start, end), parser=_PARSER)
            except etree.XMLSyntaxError as again:
                raise self._broken(start, end, again) from None
        _refuse_dtd(self.path, root)
        if b"xmlns" in self.buf[start:end]:
            root = plain_tags(root)
        self.roots.append(root)
        self.ignored.append(self.pending if len(self.roots) == 1 else [])
        return end

    def _broken(self, start: int, end: int, exc: etree.XMLSyntaxError) -> InputError:
        """The error for a document that does not parse: cut short, or malformed where the parser says."""
        open_tags = self._open_at_end(start, end)
        if open_tags is None:
            line = exc.lineno if exc.lineno else None
            msg = (exc.msg or str(exc)).split(", line ")[0]
            return InputError(self.path, f"malformed XML: {msg}", line)
        stop = len(self.buf[start:end].rstrip()) + start
        line, column = self._line_of(stop), self._column_of(stop)
        inside = f"inside <{open_tags[-1]}> (depth {len(open_tags)})" if open_tags else "before its first element"
        if end == len(self.buf):
            return InputError(self.path, f"the file ends early at line {line}, column {column}, {inside}; "
                                         "was the dump cut off?", line)
        return InputError(self.path, f"dump {len(self.roots) + 1} ends early at line {line}, column {column}, "
                                     f"{inside}, before the next dump's XML declaration; was it cut off?", line)

    def _open_at_end(self, start: int, end: int) -> list[str] | None:
        """The elements still open where the text ends, if the document is only cut short; else None.

        Cut short means the text is well-formed as far as it goes: fed to an incremental
        parser it raises nothing until told the input is over, and then only at its very end.
        """
        parser = etree.XMLPullParser(events=("start", "end"), **_SAFE)  # type: ignore[call-overload]
        stack: list[str] = []
        try:
            parser.feed(self._padded(start, end))
        except etree.XMLSyntaxError:
            return None  # wrong before the end
        for event, el in parser.read_events():
            if event == "start":
                stack.append(str(el.tag).rsplit("}", 1)[-1])
            else:
                stack.pop()
        try:
            parser.close()
        except etree.XMLSyntaxError as exc:
            if exc.position != (self._line_of(end), self._column_of(end)):
                return None  # wrong at the last characters, not merely short of more
            tail = self.buf[self.buf.rfind(b">", start, end) + 1:end]
            being_written = _TAG_START.search(tail)
            return stack + [being_written.group(1).decode("utf-8", "replace")] if being_written else stack
        return None
