"""Write report files atomically: a temporary file beside the target, then one rename.

A failed or interrupted write leaves the old file (or none) and no temporary file.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TextIO


@contextmanager
def _atomic(path: Path) -> Iterator[int]:
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        mask = os.umask(0)  # mkstemp makes files private; give the report the usual permissions
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        yield fd
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def write_atomic(path: Path, content: str | bytes) -> None:
    data = content.encode("utf-8") if isinstance(content, str) else content
    with _atomic(path) as fd, os.fdopen(fd, "wb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())


@contextmanager
def atomic_text(path: Path) -> Iterator[TextIO]:
    """A UTF-8 text stream that becomes `path` only when the block ends without an error."""
    with _atomic(path) as fd, os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
        yield fh
        fh.flush()
        os.fsync(fh.fileno())
