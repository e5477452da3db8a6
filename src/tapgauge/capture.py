"""Capture one screen from a connected Android device with adb, as a bundle `check` reads.

Writes NAME.xml (the window dump), NAME.png (a screenshot) and NAME.device.txt (the
raw `wm density`, `wm size` and `dumpsys display` lines), each atomically.

Without --serial the device is the one `adb devices` lists; none, or several, is an
error that lists what adb sees (each serial with its state) and how to choose.
"""

from __future__ import annotations

import shutil
import subprocess
from dataclasses import dataclass
from pathlib import Path

from lxml import etree

from tapgauge.readers.android import is_android_root
from tapgauge.report.output import write_atomic

DEVICE_DUMP = "/sdcard/tapgauge_window.xml"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
TIMEOUT_S = 60


class CaptureError(Exception):
    """A plain-language reason the capture could not be made."""


@dataclass(frozen=True)
class Adb:
    exe: str
    serial: str | None

    def run(self, *args: str) -> bytes:
        cmd = [self.exe, *(["-s", self.serial] if self.serial else []), *args]
        try:
            proc = subprocess.run(cmd, capture_output=True, timeout=TIMEOUT_S, check=False)
        except subprocess.TimeoutExpired:
            raise CaptureError(f"`adb {' '.join(args)}` did not answer within {TIMEOUT_S} s; is the device awake?") from None
        except OSError as exc:
            raise CaptureError(f"could not run adb: {exc}") from None
        if proc.returncode != 0:
            said = (proc.stderr or proc.stdout).decode("utf-8", "replace").strip() or f"exit {proc.returncode}"
            raise CaptureError(f"`adb {' '.join(args)}` failed: {said}")
        return proc.stdout

    def text(self, *args: str) -> str:
        return self.run(*args).decode("utf-8", "replace")


def find_adb(serial: str | None) -> Adb:
    exe = shutil.which("adb")
    if exe is None:
        raise CaptureError("adb was not found on PATH; install Android SDK Platform-Tools and connect a device")
    return Adb(exe, serial)


# What to do about a device adb lists but cannot use yet, by its state.
STATE_ADVICE = {
    "offline": "reconnect it, or restart adb with `adb kill-server`",
    "unauthorized": "unlock it and accept the USB debugging prompt",
}


@dataclass(frozen=True)
class Listed:
    serial: str
    state: str  # "device" when ready; else offline, unauthorized, "no permissions (...)", ...

    def said(self) -> str:
        advice = STATE_ADVICE.get(self.state)
        return f"{self.serial} ({self.state}{': ' + advice if advice else ''})"


def parse_devices(text: str) -> list[Listed]:
    """The devices in `adb devices` output: one `SERIAL<tab>STATE` line each after the heading.

    Lines that are not a serial and a state (the heading, the server's '* daemon ...'
    notices) are skipped; a state may hold spaces ("no permissions (...)").
    """
    found = []
    for line in text.splitlines():
        parts = line.strip().split("\t", 1) if "\t" in line else line.split()
        if len(parts) == 2 and not line.startswith("*"):
            found.append(Listed(parts[0].strip(), parts[1].strip()))
    return found


def choose_device(listed: list[Listed]) -> str:
    """The serial of the one device adb lists, ready; else a CaptureError saying what adb sees."""
    if not listed:
        raise CaptureError("no Android device is connected (`adb devices` lists none); connect one by USB "
                           "with USB debugging on, or start an emulator")
    if len(listed) == 1:
        one = listed[0]
        if one.state != "device":
            raise CaptureError(f"the only device, {one.said()}, is not ready")
        return one.serial
    ready = [d.serial for d in listed if d.state == "device"]
    waiting = [d.said() for d in listed if d.state != "device"]
    lines = [f"{len(listed)} devices are connected; choose one with --serial SERIAL"]
    if ready:
        lines[0] += ":"
        lines += [f"  --serial {serial}" for serial in ready]
    else:
        lines[0] += ", once one is ready (none is now)"
    if waiting:
        lines += ["not ready:", *(f"  {w}" for w in waiting)]
    raise CaptureError("\n".join(lines))


def _pick(adb: Adb) -> Adb:
    """`adb` aimed at the one connected device when no serial was given."""
    if adb.serial is not None:
        return adb
    try:
        listing = adb.text("devices")
    except CaptureError:
        return adb  # an adb without a usable `devices`: get-state will say what is wrong
    return Adb(adb.exe, choose_device(parse_devices(listing)))


def _check_device(adb: Adb) -> None:
    try:
        state = adb.text("get-state").strip()
    except CaptureError as exc:
        who = f"device {adb.serial}" if adb.serial else "a device"
        raise CaptureError(f"no usable connection to {who}: {exc}") from None
    if state != "device":
        who = f"device {adb.serial}" if adb.serial else "the device"
        raise CaptureError(f"{who} is '{state}', not ready; unlock it and accept the USB debugging prompt")


def _display_lines(dumpsys: str) -> str:
    """Only the display-info lines that carry densities: the full dump is long and personal."""
    keep = [ln for ln in dumpsys.splitlines() if "DisplayInfo{" in ln or "DisplayDeviceInfo{" in ln]
    return "\n".join(keep)


def bundle_paths(name: str, out: Path, force: bool) -> list[Path]:
    """NAME.xml, NAME.png and NAME.device.txt in `out`; an error if the name is not a plain file
    name, or if one of them exists and `force` is not given (checked before any device is asked)."""
    if not name or "/" in name or "\\" in name or name.startswith("."):
        raise CaptureError(f"screen name {name!r} must be a plain file name such as 'checkout'")
    targets = [out / f"{name}.xml", out / f"{name}.png", out / f"{name}.device.txt"]
    existing = [p for p in targets if p.exists()]
    if existing and not force:
        raise CaptureError(f"{existing[0]} exists; choose another name or pass --force to replace it")
    return targets


def capture(name: str, out: Path, serial: str | None = None, force: bool = False) -> list[Path]:
    targets = bundle_paths(name, out, force)
    adb = _pick(find_adb(serial))
    _check_device(adb)
    said = adb.text("shell", "uiautomator", "dump", DEVICE_DUMP)
    if "ERROR" in said.upper():
        raise CaptureError(f"uiautomator could not dump the window: {said.strip()}")
    dump = adb.run("exec-out", "cat", DEVICE_DUMP)
    try:
        root = etree.fromstring(dump, etree.XMLParser(resolve_entities=False, no_network=True))
    except etree.XMLSyntaxError as exc:
        raise CaptureError(f"the device returned a window dump that is not XML ({exc})") from None
    if not is_android_root(root):
        raise CaptureError(f"the device returned <{root.tag}>, not a window dump")
    png = adb.run("exec-out", "screencap", "-p")
    if not png.startswith(PNG_SIGNATURE):
        raise CaptureError("the device's screenshot is not a PNG (is the screen secure or off?)")
    sidecar = "\n".join([
        "$ adb shell wm density", adb.text("shell", "wm", "density").strip(),
        "$ adb shell wm size", adb.text("shell", "wm", "size").strip(),
        "$ adb shell dumpsys display (display-info lines)", _display_lines(adb.text("shell", "dumpsys", "display")),
    ]) + "\n"
    out.mkdir(parents=True, exist_ok=True)
    for path, content in zip(targets, (dump, png, sidecar)):
        write_atomic(path, content)
    return targets
