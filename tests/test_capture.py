"""`tapgauge capture` against a stand-in adb that prints recorded real-format outputs.

The recordings follow AOSP's own wording: WindowManagerShellCommand's `Physical density: N` /
`Override density: N` (re-read; `wm size` lines from memory) and DisplayDeviceInfo.toString's
`density N, X x Y dpi` in `dumpsys display` (re-read); their values are our demo device's.
"""

from __future__ import annotations

import json
import os
import stat
import sys
from pathlib import Path

import pytest
from PIL import Image

from conftest import DEMO
from tapgauge.cli import main

FAKE_ADB = r'''#!{python}
import os, sys
args = sys.argv[1:]
if args[:1] == ["-s"]:
    if args[1] != "SER123":
        sys.stderr.write("error: device 'NOPE' not found\n"); sys.exit(1)
    args = args[2:]
mode = os.environ.get("FAKE_ADB_MODE", "ok")
data = os.environ["FAKE_ADB_DATA"]
out = sys.stdout.buffer
if args == ["get-state"]:
    if mode == "offline":
        sys.stderr.write("error: device offline\n"); sys.exit(1)
    out.write(b"unauthorized\n" if mode == "unauthorized" else b"device\n")
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
    out.write(b"DISPLAY MANAGER (dumpsys display)\n  mDisplayDeviceInfo=DisplayDeviceInfo{\"Built-in Screen\": uniqueId=\"local:0\", 1080 x 2340, modeId 1, density 440, 409.432 x 411.891 dpi, type INTERNAL}\n  mBaseDisplayInfo=DisplayInfo{\"Built-in Screen\", displayId 0, real 1080 x 2340, rotation 0, density 440 (409.432 x 411.891) dpi}\n  mScreenState=ON\n")
else:
    sys.stderr.write("unexpected: %r\n" % args); sys.exit(2)
'''


@pytest.fixture
def fake_adb(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    bin_dir, data = tmp_path / "bin", tmp_path / "data"
    bin_dir.mkdir()
    data.mkdir()
    exe = bin_dir / "adb"
    exe.write_text(FAKE_ADB.replace("{python}", sys.executable))
    exe.chmod(exe.stat().st_mode | stat.S_IEXEC)
    (data / "dump.xml").write_bytes((DEMO / "android" / "plots.xml").read_bytes())
    Image.new("RGB", (1080, 2340), (250, 250, 250)).save(data / "screen.png")
    monkeypatch.setenv("PATH", f"{bin_dir}{os.pathsep}{os.environ['PATH']}")
    monkeypatch.setenv("FAKE_ADB_DATA", str(data))
    return tmp_path


def test_capture_writes_a_bundle_check_reads_without_flags(fake_adb: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = fake_adb / "caps"
    assert main(["capture", "plots", "--out", str(out), "--serial", "SER123"]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["plots.device.txt", "plots.png", "plots.xml"]
    capsys.readouterr()
    assert main(["check", str(out / "plots.xml"), "-f", "json"]) == 0  # warnings only on this screen
    report = json.loads(capsys.readouterr().out)
    device = report["screens"][0]["device"]
    assert (device["density_dpi"], device["xdpi"], device["unit_source"]) == (440.0, 409.432, "sidecar plots.device.txt")
    assert report["screens"][0]["image"].endswith("plots.png")


def test_existing_bundle_is_not_overwritten(fake_adb: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (fake_adb / "plots.xml").write_text("mine")
    assert main(["capture", "plots", "--out", str(fake_adb)]) == 2
    assert "--force" in capsys.readouterr().err and (fake_adb / "plots.xml").read_text() == "mine"


@pytest.mark.parametrize(("mode", "expect"), [("offline", "device offline"), ("unauthorized", "unauthorized")])
def test_offline_or_unauthorized_device_is_said_plainly(fake_adb: Path, monkeypatch: pytest.MonkeyPatch,
                                                        capsys: pytest.CaptureFixture[str], mode: str, expect: str) -> None:
    monkeypatch.setenv("FAKE_ADB_MODE", mode)
    assert main(["capture", "x", "--out", str(fake_adb / "o")]) == 2
    assert expect in capsys.readouterr().err
    assert not (fake_adb / "o").exists()


def test_unknown_serial(fake_adb: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["capture", "x", "--serial", "NOPE", "--out", str(fake_adb)]) == 2
    assert "not found" in capsys.readouterr().err


def test_missing_adb(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.setenv("PATH", str(tmp_path))
    assert main(["capture", "x", "--out", str(tmp_path)]) == 2
    assert "adb was not found" in capsys.readouterr().err
