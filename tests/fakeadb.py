"""A stand-in `adb` on PATH for the capture tests: a Python script whose answers to the device
commands `tapgauge capture` runs are recordings in the real formats (sources in the test modules
that use it). Each test module writes the script's head: how it lists and picks devices."""

from __future__ import annotations

import os
import stat
import sys
from pathlib import Path

import pytest
from conftest import DEMO
from PIL import Image

# After the head has set `args` (the command without -s SERIAL), `data` and `out`.
DEVICE_COMMANDS = r'''
elif args[:3] == ["shell", "uiautomator", "dump"]:
    out.write(("UI hierchary dumped to: " + args[3] + "\n").encode())
elif args[:2] == ["exec-out", "cat"]:
    out.write(open(os.path.join(data, "dump.xml"), "rb").read())
elif args == ["exec-out", "screencap", "-p"]:
    out.write(open(os.path.join(data, "screen.png"), "rb").read())
elif args == ["shell", "wm", "density"]:
    out.write(b"Physical density: 440\n")
elif args == ["shell", "wm", "size"]:
    out.write(b"Physical size: 1080x2340\n")
elif args == ["shell", "dumpsys", "display"]:
    out.write(os.environ["FAKE_ADB_DISPLAY"].encode())
else:
    sys.stderr.write("unexpected: %r\n" % args); sys.exit(2)
'''


def install_adb(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, head: str, display: str) -> Path:
    """Put `head` + DEVICE_COMMANDS on PATH as `adb`, with the demo's dump, a plain screenshot and
    `display` as what `dumpsys display` prints; returns the folder holding those answers."""
    bin_dir, data = tmp_path / "bin", tmp_path / "data"
    bin_dir.mkdir()
    data.mkdir()
    exe = bin_dir / "adb"
    exe.write_text(head.replace("{python}", sys.executable) + DEVICE_COMMANDS)
    exe.chmod(exe.stat().st_mode | stat.S_IEXEC)
    (data / "dump.xml").write_bytes((DEMO / "android" / "plots.xml").read_bytes())
    Image.new("RGB", (1080, 2340), (250, 250, 250)).save(data / "screen.png")
    monkeypatch.setenv("PATH", f"{bin_dir}{os.pathsep}{os.environ['PATH']}")
    monkeypatch.setenv("FAKE_ADB_DATA", str(data))
    monkeypatch.setenv("FAKE_ADB_DISPLAY", display)
    return data
