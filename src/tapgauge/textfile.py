"""Reading an input file whole, bounded: one place for the size limit and the read errors.

Every reader, rule, profile, config, journey and trial file goes through here, so a huge
file is refused before it is read and a read failure is an InputError naming the file.
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path
from typing import Any

from tapgauge.model import InputError

MAX_BYTES = 64 * 1024 * 1024  # far above any real screen, annotation or config file; guards memory


def read_bytes(path: Path, what: str = "file") -> bytes:
    try:
        size = path.stat().st_size
        if size > MAX_BYTES:
            raise InputError(path, f"{what} is {size} bytes; inputs are limited to {MAX_BYTES}")
        return path.read_bytes()
    except FileNotFoundError:
        raise InputError(path, f"{what} not found") from None
    except OSError as exc:
        raise InputError(path, f"cannot read {what}: {exc.strerror or exc}") from None


def read_text(path: Path, what: str = "file", encoding: str = "utf-8", errors: str = "strict") -> str:
    data = read_bytes(path, what)
    try:
        # Universal newlines, as text-mode open() gives: '\r\n' and a lone '\r' end a line.
        return data.decode(encoding, errors).replace("\r\n", "\n").replace("\r", "\n")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise InputError(path, f"{what} is not UTF-8 text (byte {exc.start})", line) from None


def load_toml(text: str, origin: Path | str) -> dict[str, Any]:
    """A TOML document, or an InputError naming `origin` and the line TOML complained about."""
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise InputError(origin, f"not valid TOML: {exc}", int(m.group(1)) if m else None) from None
