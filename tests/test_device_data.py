"""Device data from files is checked like the flags, and the device line says where each value came from.

End to end through the command line, in copies of the demo screens. Sources for the
adb wording the sidecars hold (re-read for this file in the AOSP frameworks/base source):
- `wm density`: WindowManagerShellCommand.printInitialDisplayDensity prints
  "Physical density: N", then "Override density: M" when an override is set.
- `wm size`: WindowManagerShellCommand.printInitialDisplaySize prints
  "Physical size: WxH", then "Override size: WxH" when an override is set.
- `dumpsys display`: DisplayInfo.toString writes "density N (X x Y) dpi";
  DisplayDeviceInfo.toString writes "density N, X x Y dpi".
"""

from __future__ import annotations

import json
import shutil
import struct
import zlib
from importlib import resources
from pathlib import Path

import jsonschema
import pytest
from PIL import Image

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.device import picture_size

DUMPSYS_INFO = 'mBaseDisplayInfo=DisplayInfo{"Built-in Screen", real 1080 x 2340, density D (X x Y) dpi, layerStack 0}'
DUMPSYS_DEVICE = '  mDisplayDeviceInfo=DisplayDeviceInfo{"Built-in Screen": 1080 x 2340, density D, X x Y dpi, type INTERNAL}'


def _dumpsys(template: str, d: str, x: str, y: str) -> str:
    return template.replace(" D", f" {d}", 1).replace("X x Y", f"{x} x {y}")


def _json(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, dict, str]:
    code = main(["check", "-f", "json", *args])
    captured = capsys.readouterr()
    return code, json.loads(captured.out), captured.err


def _android(tmp_path: Path, sidecar: str, folder: str = "a") -> Path:
    where = tmp_path / folder
    where.mkdir()
    shutil.copy(DEMO / "android" / "plots.xml", where / "plots.xml")
    (where / "device.txt").write_text(sidecar, encoding="utf-8")
    return where / "plots.xml"


def _ios(tmp_path: Path, sidecar: str | None = None, picture: tuple[int, int] | None = None) -> Path:
    """seed_tray (390 x 844 pt) with its screenshot, or a plain picture of the given size in its place."""
    shutil.copy(DEMO / "ios" / "seed_tray.xml", tmp_path / "seed_tray.xml")
    if picture is None:
        shutil.copy(DEMO / "ios" / "seed_tray.png", tmp_path / "seed_tray.png")
    else:
        Image.new("RGB", picture, "white").save(tmp_path / "seed_tray.png")
    if sidecar is not None:
        (tmp_path / "device.txt").write_text(sidecar, encoding="utf-8")
    return tmp_path / "seed_tray.xml"


def _one_error(report: dict, name: str) -> dict:
    assert len(report["errors"]) == 1, report["errors"]
    err = report["errors"][0]
    assert Path(err["path"]).name == name
    return err


# --- 1. sidecar values are held to the flags' checks, and errors name the line ---------------

BAD = ["0", "-420", "abc", "99999"]  # zero, negative, not a number, beyond any screen (common practice)


@pytest.mark.parametrize("bad", BAD)
@pytest.mark.parametrize(("template", "line"), [
    ("# the test phone\ndensity: {v}\n", 2),
    ("$ adb shell wm density\nPhysical density: {v}\n", 2),
    ("$ adb shell wm density\nPhysical density: 440\nOverride density: {v}\n", 3),
    ("Physical density: 440\n\nppi: {v}\n", 3),
    ("\n\n" + _dumpsys(DUMPSYS_INFO, "{v}", "409.432", "411.891") + "\n", 3),
    ("Physical density: 440\n" + _dumpsys(DUMPSYS_DEVICE, "440", "{v}", "411.891") + "\n", 2),
])
def test_a_bad_sidecar_value_is_an_input_error_at_its_line(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                           template: str, line: int, bad: str) -> None:
    screen = _android(tmp_path, template.replace("{v}", bad))
    code, report, err = _json([str(screen)], capsys)
    assert code == 2
    e = _one_error(report, "device.txt")
    assert e["line"] == line
    assert "internal error" not in e["message"] and "Traceback" not in err
    assert "expected" in e["message"] and (repr(bad) in e["message"] or f"'{bad}," in e["message"])


def test_a_bad_ios_scale_line_names_the_line_and_the_range(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, report, _ = _json([str(_ios(tmp_path, "ppi: 460\nscale: 0\n"))], capsys)
    e = _one_error(report, "device.txt")
    assert code == 2 and e["line"] == 2
    assert "scale '0'" in e["message"] and "at most 10" in e["message"]


def test_an_empty_keyed_value_is_reported_not_skipped(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, report, _ = _json([str(_android(tmp_path, "density:\nppi: 400\n"))], capsys)
    assert code == 2 and _one_error(report, "device.txt")["line"] == 1


def test_a_zero_wm_size_is_refused_before_it_divides(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # An override size rescales the ppi by override / physical; a physical size of 0 would divide by zero.
    sidecar = ("Physical size: 0x0\nOverride size: 720x1560\nPhysical density: 440\n"
               + _dumpsys(DUMPSYS_DEVICE, "440", "409.432", "411.891") + "\n")
    code, report, _ = _json([str(_android(tmp_path, sidecar))], capsys)
    e = _one_error(report, "device.txt")
    assert code == 2 and e["line"] == 1 and "1080x2400" in e["message"]


@pytest.mark.parametrize("value", ["0", "-1", "1", "72", "420", "9999.5", "10000", "99999", "xxhdpi", "abc",
                                   "nan", "inf"])
def test_flag_sidecar_and_config_accept_the_same_densities(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                          capsys: pytest.CaptureFixture[str], value: str) -> None:
    """One check for every source: a density the flag refuses, the sidecar and the config refuse too."""
    monkeypatch.chdir(tmp_path)
    bare = tmp_path / "bare"
    bare.mkdir()
    shutil.copy(DEMO / "android" / "plots.xml", bare / "plots.xml")
    flag = main(["check", "-f", "json", str(bare / "plots.xml"), "--density", value])
    capsys.readouterr()
    side, _, _ = _json([str(_android(tmp_path, f"density: {value}\n", "side"))], capsys)
    (tmp_path / "tapgauge.toml").write_text(f'[device]\ndensity = "{value}"\n', encoding="utf-8")
    conf = main(["check", "-f", "json", str(bare / "plots.xml")])
    capsys.readouterr()
    accepted = [code != 2 for code in (flag, side, conf)]
    assert accepted in ([True] * 3, [False] * 3), (value, flag, side, conf)


def test_one_bad_sidecar_does_not_stop_the_batch(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    good = _android(tmp_path, (DEMO / "android" / "device.txt").read_text(), "good")
    _android(tmp_path, "Physical density: 0\n", "bad")
    code, report, _ = _json([str(tmp_path)], capsys)
    assert code == 2
    assert [Path(s["path"]).parent.name for s in report["screens"]] == [good.parent.name]
    assert _one_error(report, "device.txt")["line"] == 1


def test_a_utf16_sidecar_as_powershell_writes_it_is_read(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Windows PowerShell 5's `>` writes UTF-16 LE with a byte-order mark (Microsoft docs,
    # about_Redirection; from memory).
    screen = _android(tmp_path, "")
    (tmp_path / "a" / "device.txt").write_bytes("Physical density: 440\r\n".encode("utf-16"))
    _, report, _ = _json([str(screen), "--rules", "android-guidance"], capsys)
    assert not report["errors"] and report["screens"][0]["device"]["density_dpi"] == 440


def test_config_device_values_name_their_own_table_line(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                       capsys: pytest.CaptureFixture[str]) -> None:
    """[device] after [[devices]]: the error points at [device]'s line, not the first 'density ='."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "tapgauge.toml").write_text(
        '[[devices]]\nmatch = "tablet/*"\ndensity = 320\n\n[device]\ndensity = 0\n', encoding="utf-8")
    assert main(["check", str(DEMO / "android" / "plots.xml")]) == 2
    err = capsys.readouterr().err
    assert "tapgauge.toml:6:" in err and "density '0'" in err and "below 10000" in err


def test_config_second_devices_entry_is_named_by_its_line(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                         capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "tapgauge.toml").write_text(
        '[device]\nscale = 3\n[[devices]]\nmatch = "a/*"\nscale = 2\n[[devices]]\nmatch = "b/*"\nscale = 0\n',
        encoding="utf-8")
    assert main(["check", str(DEMO / "android" / "plots.xml")]) == 2
    assert "tapgauge.toml:8:" in capsys.readouterr().err


# --- 2. an iOS scale the screenshot contradicts is said -----------------------------------------
# Arithmetic: an iOS screen of W points at scale k is k x W pixels wide (Apple, UIScreen.scale:
# "the natural scale factor ... pixels per point"; from memory). seed_tray is 390 pt wide.

def _notices(report: dict) -> list[str]:
    return [n for n in report["screens"][0]["notices"] if "disagrees with the screenshot" in n]


def test_a_sidecar_scale_the_screenshot_contradicts_is_a_notice(tmp_path: Path,
                                                               capsys: pytest.CaptureFixture[str]) -> None:
    code, report, _ = _json([str(_ios(tmp_path, "scale: 2\nppi: 460\n"))], capsys)
    [notice] = _notices(report)
    assert "scale 2 (sidecar device.txt)" in notice and "seed_tray.png" in notice and "1170 px wide" in notice
    assert "780 px" in notice  # 390 pt x 2
    assert code != 2 and not report["errors"]  # a warning: the screen is still checked


def test_a_flag_scale_the_screenshot_contradicts_names_the_command_line(tmp_path: Path,
                                                                        capsys: pytest.CaptureFixture[str]) -> None:
    _, report, _ = _json([str(_ios(tmp_path)), "--scale", "2"], capsys)
    [notice] = _notices(report)
    assert "scale 2 (command line)" in notice


def test_a_config_scale_is_checked_against_a_picture_of_no_whole_scale(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    # 1000 / 390 is no whole scale, so the picture gives none and the config's is used.
    monkeypatch.chdir(tmp_path)
    (tmp_path / "tapgauge.toml").write_text("[device]\nscale = 3\n", encoding="utf-8")
    _, report, _ = _json([str(_ios(tmp_path, picture=(1000, 2164)))], capsys)
    [notice] = _notices(report)
    assert "scale 3 (config tapgauge.toml)" in notice and "1000 px wide" in notice


@pytest.mark.parametrize(("picture", "says"), [
    ((1170, 2532), False),  # 390 x 844 pt at 3: fits
    ((1171, 2532), False),  # one pixel over: rounding (common practice)
    ((1172, 2532), True),  # two pixels over: no longer rounding
    ((2532, 1170), False),  # saved a quarter turn from the tree: the scale still fits
])
def test_scale_slack_is_one_pixel_over_the_width(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                 picture: tuple[int, int], says: bool) -> None:
    _, report, _ = _json([str(_ios(tmp_path, "scale: 3\n", picture=picture))], capsys)
    assert bool(_notices(report)) is says


def test_a_scale_read_off_the_screenshot_is_not_checked_against_it(tmp_path: Path,
                                                                   capsys: pytest.CaptureFixture[str]) -> None:
    _, report, _ = _json([str(_ios(tmp_path, "ppi: 460\n"))], capsys)
    assert report["screens"][0]["device"]["scale_source"] == "screenshot seed_tray.png width"
    assert not _notices(report)


def _cut_png(width: int, height: int) -> bytes:
    """A PNG signature, its IHDR chunk, and an IDAT chunk that says 1 MB of pixels follow but stops
    after ten bytes (chunk layout and IHDR fields: W3C PNG specification, 5.3 and 11.2.2)."""
    ihdr = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)
    head = b"\x89PNG\r\n\x1a\n" + struct.pack(">I", 13) + b"IHDR" + ihdr + struct.pack(">I", zlib.crc32(b"IHDR" + ihdr))
    return head + struct.pack(">I", 1 << 20) + b"IDAT" + bytes(10)


def test_the_screenshot_size_comes_from_its_header_alone(tmp_path: Path) -> None:
    # Pixels that are not there are never missed: the check reads the header only.
    (tmp_path / "cut.png").write_bytes(_cut_png(1170, 2532))
    assert picture_size(tmp_path / "cut.png") == (1170, 2532)
    (tmp_path / "junk.png").write_bytes(b"not a picture")
    assert picture_size(tmp_path / "junk.png") is None


# --- 3. the device line says where each value came from ----------------------------------------

def _device_line(args: list[str], capsys: pytest.CaptureFixture[str]) -> str:
    main(["check", "--width", "200", *args])
    out = capsys.readouterr().out
    return next(line for line in out.splitlines() if line.startswith(("ios,", "android,")))


def test_ios_device_line_gives_scale_and_ppi_with_their_sources(tmp_path: Path,
                                                                capsys: pytest.CaptureFixture[str]) -> None:
    line = _device_line([str(_ios(tmp_path, "ppi: 460\n"))], capsys)
    assert line == "ios, 390x844 pt; scale 3 (screenshot seed_tray.png width); 460 ppi (sidecar device.txt)"
    line = _device_line([str(tmp_path / "seed_tray.xml"), "--scale", "3"], capsys)
    assert "scale 3 (command line)" in line and "460 ppi (sidecar device.txt)" in line


@pytest.mark.document
def test_ios_record_keeps_points_per_inch_and_the_scale_source(tmp_path: Path,
                                                               capsys: pytest.CaptureFixture[str]) -> None:
    # 460 pixels per inch at 3 pixels per point is 460 / 3 points per inch (arithmetic).
    _, report, _ = _json([str(_ios(tmp_path, "ppi: 460\n"))], capsys)
    schema = json.loads(resources.files("tapgauge").joinpath("schema/report-v2.schema.json").read_text())
    jsonschema.validate(report, schema)
    device = report["screens"][0]["device"]
    assert device["xdpi"] == pytest.approx(460 / 3) and device["scale"] == 3
    assert device["scale_source"] == "screenshot seed_tray.png width" and device["ppi_source"] == "sidecar device.txt"


def test_ios_device_line_without_a_scale_says_why_there_are_no_mm(tmp_path: Path,
                                                                  capsys: pytest.CaptureFixture[str]) -> None:
    line = _device_line([str(_ios(tmp_path, "ppi: 460\n", picture=(1000, 2164)))], capsys)
    assert line.endswith("no scale (pixels per point): no mm")


def test_android_device_line_gives_ppi_as_given_even_turned(tmp_path: Path,
                                                           capsys: pytest.CaptureFixture[str]) -> None:
    # DisplayMetrics.xdpi/ydpi are for the natural orientation (Android API reference);
    # the landscape screen's line shows them as the sidecar gives them, not swapped.
    shutil.copy(DEMO / "android" / "settings_landscape.xml", tmp_path / "settings_landscape.xml")
    shutil.copy(DEMO / "android" / "device.txt", tmp_path / "device.txt")
    line = _device_line([str(tmp_path / "settings_landscape.xml")], capsys)
    assert line == ("android, 2340x1080 px; 440 dpi = 2.75 px/dp (sidecar device.txt); "
                    "409.432 x 411.891 ppi (sidecar device.txt)")
    line = _device_line([str(tmp_path / "settings_landscape.xml"), "--ppi", "400"], capsys)
    assert line.endswith("; 400 ppi (command line)")


def test_a_sidecar_rewritten_in_place_is_read_anew(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A folder's sidecar is parsed once for all its screens: a rewrite of the same length, in the same
    clock tick, must still be read as it now says (`wm density` wording as in the module docstring)."""
    screen = _android(tmp_path, "Physical density: 440\n")
    _, first, _ = _json([str(screen), "--rules", "android-guidance"], capsys)
    (tmp_path / "a" / "device.txt").write_text("Physical density: 480\n", encoding="utf-8")
    _, second, _ = _json([str(screen), "--rules", "android-guidance"], capsys)
    assert [r["screens"][0]["device"]["density_dpi"] for r in (first, second)] == [440, 480]


def test_a_sidecar_far_larger_than_adb_writes_is_still_read(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Sidecars above the size kept in memory (real ones are a few hundred bytes) are parsed each time
    (`wm density` wording as in the module docstring); blank lines are allowed anywhere."""
    screen = _android(tmp_path, "\n" * 100_000 + "Physical density: 440\n")
    _, first, _ = _json([str(screen), "--rules", "android-guidance"], capsys)
    (tmp_path / "a" / "device.txt").write_text("\n" * 100_000 + "Physical density: 480\n", encoding="utf-8")
    _, second, _ = _json([str(screen), "--rules", "android-guidance"], capsys)
    assert [r["screens"][0]["device"]["density_dpi"] for r in (first, second)] == [440, 480]
