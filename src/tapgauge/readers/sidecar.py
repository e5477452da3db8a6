"""Device sidecars: raw `adb shell` output saved beside a screen.

`NAME.device.txt` applies to the screen NAME.*; `device.txt` to every screen in
its folder. Either holds, pasted as printed, any of `wm density`, `wm size` and
`dumpsys display`, and/or `density:`, `scale:` and `ppi:` lines. Every value is held
to the same checks as the --density, --scale and --ppi flags; a bad one is an error
naming the sidecar and its line.
"""

from __future__ import annotations

import functools
from pathlib import Path

from tapgauge.device import DeviceTextError, parse_device_text
from tapgauge.model import DeviceHints, InputError
from tapgauge.textfile import read_bytes

FOLDER_SIDECAR = "device.txt"
SIDECAR_SUFFIX = ".device.txt"


def sidecar_for(screen_path: Path) -> Path | None:
    own = screen_path.with_name(screen_path.stem + SIDECAR_SUFFIX)
    if own.is_file():
        return own
    shared = screen_path.with_name(FOLDER_SIDECAR)
    return shared if shared.is_file() else None


def _decode(data: bytes) -> str:
    """UTF-8, or UTF-16 where a byte-order mark says so: Windows PowerShell's `>` writes UTF-16."""
    utf16 = data.startswith((b"\xff\xfe", b"\xfe\xff"))
    text = data.decode("utf-16" if utf16 else "utf-8", errors="replace").removeprefix("\ufeff")
    return text.replace("\r\n", "\n").replace("\r", "\n")  # lines as the error messages count them


def read_sidecar(path: Path) -> DeviceHints:
    """The hints a sidecar gives. A folder's `device.txt` serves every screen in it: it is read for each,
    but parsed once for as long as it says the same."""
    data = read_bytes(path, "device sidecar")
    # Only a sidecar of a real one's size is remembered (adb's output is a few hundred bytes): a
    # hostile batch of huge ones must not pile up in memory.
    return _remembered(path, data) if len(data) <= _REMEMBERED_UP_TO else _parsed(path, data)


_REMEMBERED_UP_TO = 64 * 1024  # bytes


@functools.lru_cache(maxsize=64)
def _remembered(path: Path, data: bytes) -> DeviceHints:
    return _parsed(path, data)


def _parsed(path: Path, data: bytes) -> DeviceHints:
    text = _decode(data)
    try:
        hints = parse_device_text(text, source=f"sidecar {path.name}")
    except DeviceTextError as exc:
        raise InputError(path, str(exc), exc.line) from None
    except ValueError as exc:
        raise InputError(path, str(exc)) from None
    if hints.density_dpi is None and hints.scale is None and hints.xdpi is None:
        raise InputError(
            path,
            "device sidecar says nothing usable: expected the output of `adb shell wm density` "
            "('Physical density: 420'; optionally `wm size` and `dumpsys display`), "
            "or lines such as 'scale: 3' and 'ppi: 460'",
        )
    return hints
