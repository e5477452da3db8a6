"""Write a report file atomically: a temporary file beside it, then one rename."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_atomic(path: Path, content: str | bytes) -> None:
    folder = path.parent if str(path.parent) else Path(".")
    data = content.encode("utf-8") if isinstance(content, str) else content
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        mask = os.umask(0)  # mkstemp makes files private; give the report the usual permissions
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
