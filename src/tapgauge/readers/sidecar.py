"""Device sidecars: raw `adb shell` output saved beside a screen.

`NAME.device.txt` applies to the screen NAME.*; `device.txt` to every screen in
its folder. Either holds, pasted as printed, any of `wm density`, `wm size` and
`dumpsys display`, and/or `density:`, `scale:` and `ppi:` lines.
"""

from __future__ import annotations

from pathlib import Path

from tapgauge.device import parse_device_text
from tapgauge.model import DeviceHints, InputError
from tapgauge.textfile import read_text

FOLDER_SIDECAR = "device.txt"
SIDECAR_SUFFIX = ".device.txt"


def sidecar_for(screen_path: Path) -> Path | None:
    own = screen_path.with_name(screen_path.stem + SIDECAR_SUFFIX)
    if own.is_file():
        return own
    shared = screen_path.with_name(FOLDER_SIDECAR)
    return shared if shared.is_file() else None


def read_sidecar(path: Path) -> DeviceHints:
    text = read_text(path, "device sidecar", errors="replace")
    try:
        hints = parse_device_text(text, source=f"sidecar {path.name}")
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
