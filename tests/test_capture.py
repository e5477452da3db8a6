"""`tapgauge capture` against a stand-in adb that prints recorded real-format outputs.

The recordings follow AOSP's own wording: WindowManagerShellCommand's `Physical density: N` /
`Override density: N` (re-read; `wm size` lines from memory) and DisplayDeviceInfo.toString's
`density N, X x Y dpi` in `dumpsys display` (re-read); their values are our demo device's.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from fakeadb import install_adb

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
    out.write(b"unauthorized\n" if mode == "unauthorized" else b"device\n")'''
DISPLAY = ("DISPLAY MANAGER (dumpsys display)\n  mDisplayDeviceInfo=DisplayDeviceInfo{\"Built-in Screen\": "
           "uniqueId=\"local:0\", 1080 x 2340, modeId 1, density 440, 409.432 x 411.891 dpi, type INTERNAL}\n"
           "  mBaseDisplayInfo=DisplayInfo{\"Built-in Screen\", displayId 0, real 1080 x 2340, rotation 0, "
           "density 440 (409.432 x 411.891) dpi}\n  mScreenState=ON\n")


@pytest.fixture
def fake_adb(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    install_adb(tmp_path, monkeypatch, FAKE_ADB, DISPLAY)
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
