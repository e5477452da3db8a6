"""`tapgauge capture` without --serial: none, one, or several devices as `adb devices` lists them.

The stand-in adb prints `adb devices` as real adb does. Sources for that format:
- Android developer guide, "Android Debug Bridge", section "Querying for emulator/device
  instances": a heading, then one `[serialNumber] [state]` line per instance; states
  `offline` and `device` (re-read, in an archived copy of the guide);
- AOSP system/core commits "adb: Add ability to specify device path" and "adb: Generalizing
  -s to take qualifiers" (Scott Anderson): plain `adb devices` is tab-delimited, `-l`
  is column-oriented (re-read);
- AOSP system/core commit "adb: add help text for USB permission errors": a state may be
  several words, "no permissions (verify udev rules); see [...]" (re-read);
- the `unauthorized` state, shown until the USB debugging prompt is accepted: from memory.
Serials and devices are invented.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from fakeadb import install_adb

from tapgauge.capture import Listed, choose_device, parse_devices
from tapgauge.cli import main

# Answers like adb: `devices` prints $FAKE_ADB_DEVICES; `-s SERIAL` must name a listed, ready device.
FAKE_ADB = r'''#!{python}
import os, sys
args = sys.argv[1:]
listing = os.environ.get("FAKE_ADB_DEVICES", "List of devices attached\n\n")
ready = [ln.split("\t")[0] for ln in listing.splitlines() if ln.endswith("\tdevice")]
with open(os.environ["FAKE_ADB_LOG"], "a") as log:
    log.write(" ".join(args) + "\n")
out = sys.stdout.buffer
if args == ["devices"]:
    out.write(listing.encode()); sys.exit(0)
if args[:1] != ["-s"]:
    sys.stderr.write("error: more than one device/emulator\n"); sys.exit(1)
if args[1] not in ready:
    sys.stderr.write("error: device '%s' not found\n" % args[1]); sys.exit(1)
args = args[2:]
data = os.environ["FAKE_ADB_DATA"]
if args == ["get-state"]:
    out.write(b"device\n")'''
DISPLAY = ("  mBaseDisplayInfo=DisplayInfo{\"Built-in Screen\", displayId 0, real 1080 x 2340, rotation 0, "
           "density 440 (409.432 x 411.891) dpi}\n")

HEAD = "List of devices attached\n"


@pytest.fixture
def adb(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A stand-in adb on PATH; returns the log of the commands it was given."""
    install_adb(tmp_path, monkeypatch, FAKE_ADB, DISPLAY)
    monkeypatch.setenv("FAKE_ADB_LOG", str(tmp_path / "adb.log"))
    return tmp_path / "adb.log"


def devices(monkeypatch: pytest.MonkeyPatch, *rows: tuple[str, str]) -> None:
    monkeypatch.setenv("FAKE_ADB_DEVICES", HEAD + "".join(f"{s}\t{state}\n" for s, state in rows) + "\n")


def test_several_devices_are_listed_by_serial_with_the_option_to_choose(
        adb: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    devices(monkeypatch, ("emulator-5554", "device"), ("FW0PLOT7731", "device"),
            ("FW0SEED2210", "unauthorized"), ("FW0SHED4102", "offline"))
    out = tmp_path / "o"
    assert main(["capture", "plots", "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "--serial SERIAL" in err
    assert "--serial emulator-5554" in err and "--serial FW0PLOT7731" in err
    # Devices that are not ready are not offered as choices, but their state is said.
    assert "--serial FW0SEED2210" not in err and "--serial FW0SHED4102" not in err
    assert "FW0SEED2210 (unauthorized" in err and "FW0SHED4102 (offline" in err
    assert not out.exists()  # nothing written
    assert adb.read_text().splitlines() == ["devices"]  # asked adb nothing else


def test_no_device_is_a_clear_message(adb: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                      capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.setenv("FAKE_ADB_DEVICES", HEAD + "\n")  # what adb prints with nothing attached
    assert main(["capture", "plots", "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "no Android device is connected" in err and "Traceback" not in err


def test_one_ready_device_is_used_by_its_serial(adb: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    devices(monkeypatch, ("FW0PLOT7731", "device"))
    out = tmp_path / "o"
    assert main(["capture", "plots", "--out", str(out)]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["plots.device.txt", "plots.png", "plots.xml"]
    # Every command after the listing names the device, so a second one plugged in meanwhile is never used.
    calls = adb.read_text().splitlines()
    assert calls[0] == "devices" and all(c.startswith("-s FW0PLOT7731 ") for c in calls[1:])


def test_one_device_not_ready_says_its_state(adb: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    devices(monkeypatch, ("FW0SEED2210", "unauthorized"))
    assert main(["capture", "plots", "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "FW0SEED2210" in err and "unauthorized" in err and "USB debugging prompt" in err


def test_several_devices_none_ready(adb: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                    capsys: pytest.CaptureFixture[str]) -> None:
    devices(monkeypatch, ("FW0SEED2210", "unauthorized"), ("FW0SHED4102", "offline"))
    assert main(["capture", "plots", "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "--serial SERIAL" in err and "none is" in err and "--serial FW0" not in err
    assert "FW0SEED2210 (unauthorized" in err and "FW0SHED4102 (offline" in err


def test_an_explicit_serial_skips_the_listing(adb: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    devices(monkeypatch, ("emulator-5554", "device"), ("FW0PLOT7731", "device"))
    assert main(["capture", "plots", "--out", str(tmp_path / "o"), "--serial", "FW0PLOT7731"]) == 0
    assert "devices" not in adb.read_text().splitlines()


def test_parse_devices_reads_the_published_format() -> None:
    text = ("* daemon not running; starting now at tcp:5037\n* daemon started successfully\n" + HEAD
            + "emulator-5554\tdevice\nFW0SHED4102\toffline\n"
            + "FW0ROTA0001\tno permissions (verify udev rules); see [developer.android.com/tools/device.html]\n\n")
    assert parse_devices(text) == [
        Listed("emulator-5554", "device"), Listed("FW0SHED4102", "offline"),
        Listed("FW0ROTA0001", "no permissions (verify udev rules); see [developer.android.com/tools/device.html]")]
    assert parse_devices(HEAD + "\n") == []
    assert choose_device([Listed("emulator-5554", "device")]) == "emulator-5554"
