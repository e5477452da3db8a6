"""Device sidecars: raw `adb shell` output saved beside a screen.

`NAME.device.txt` applies to the screen NAME.xml; `device.txt` to every screen in
its folder. Either holds, pasted as printed, any of `wm density`, `wm size` and
`dumpsys display`.
"""

from __future__ import annotations

from pathlib import Path

from tapgauge.device import parse_adb_text
from tapgauge.model import DeviceHints, InputError

FOLDER_SIDECAR = "device.txt"
SIDECAR_SUFFIX = ".device.txt"


def sidecar_for(screen_path: Path) -> Path | None:
    own = screen_path.with_name(screen_path.stem + SIDECAR_SUFFIX)
    if own.is_file():
        return own
    shared = screen_path.with_name(FOLDER_SIDECAR)
    return shared if shared.is_file() else None


def read_sidecar(path: Path) -> DeviceHints:
    try:
        text = path.read_text("utf-8", errors="replace")
    except OSError as exc:
        raise InputError(path, f"cannot read device sidecar: {exc.strerror or exc}") from None
    hints = parse_adb_text(text, source=f"sidecar {path.name}")
    if hints.density_dpi is None and hints.xdpi is None:
        raise InputError(
            path,
            "device sidecar holds no density: expected the output of `adb shell wm density` "
            "('Physical density: 420'), and optionally `wm size` and `dumpsys display`",
        )
    return hints
