"""Density and physical size: the Android formulas and real `adb shell` output formats.

Sources (published; re-read unless marked): Android Developers "Support different
pixel densities" (px = dp * densityDpi / 160); android.util.DisplayMetrics (buckets,
xdpi/ydpi, "the exact physical pixels per inch" per axis); AOSP WindowManagerShellCommand
(`wm density` wording re-read, `wm size` from memory); AOSP DisplayDeviceInfo.toString
(`density N, X x Y dpi` in `dumpsys display`; DisplayInfo.toString from memory).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tapgauge.device import parse_adb_text, parse_density, parse_ppi, resolve_device
from tapgauge.model import DeviceHints, Screen


def _screen(rotation: int = 0) -> Screen:
    return Screen(path=Path("s.xml"), platform="android", width=1080, height=2400, rotation=rotation, targets=())


@pytest.mark.parametrize(
    ("density", "dp", "px"),
    [
        # Android Developers, screen densities: 1 dp = 1 px at 160 dpi; xxhdpi is 3x, xhdpi 2x, hdpi 1.5x.
        ("mdpi", 48, 48),
        ("hdpi", 48, 72),
        ("xhdpi", 48, 96),
        ("xxhdpi", 48, 144),
        ("xxxhdpi", 48, 192),
        ("420", 48, 126),  # in-between density listed by DisplayMetrics (DENSITY_420)
    ],
)
def test_dp_to_px(density: str, dp: float, px: float) -> None:
    device = resolve_device(_screen(), DeviceHints(density_dpi=parse_density(density), source="t"))
    assert dp * device.coords_per_unit == pytest.approx(px)


def test_bad_density_and_ppi_are_explained() -> None:
    with pytest.raises(ValueError, match="bucket|dpi"):
        parse_density("retina")
    with pytest.raises(ValueError, match="X,Y"):
        parse_ppi("a,b")
    assert parse_ppi("403.4,399.7") == (403.4, 399.7)
    assert parse_ppi("400") == (400.0, 400.0)


def test_wm_density_override_wins() -> None:
    # AOSP WindowManagerShellCommand: the override is what apps render at.
    hints = parse_adb_text("Physical density: 420\nOverride density: 480\n", "s")
    assert hints.density_dpi == 480


def test_dumpsys_display_info_line() -> None:
    # AOSP DisplayInfo.toString: "density 420 (403.411 x 399.737) dpi".
    text = 'mBaseDisplayInfo=DisplayInfo{"Built-in Screen", displayId 0, real 1080 x 2400, rotation 0, density 420 (403.411 x 399.737) dpi, layerStack 0}'
    hints = parse_adb_text(text, "s")
    assert (hints.density_dpi, hints.xdpi, hints.ydpi) == (420, 403.411, 399.737)


def test_dumpsys_display_device_info_line() -> None:
    # AOSP DisplayDeviceInfo.toString: "density 420, 403.411 x 399.737 dpi".
    text = '  mDisplayDeviceInfo=DisplayDeviceInfo{"Built-in Screen": uniqueId="local:0", 1080 x 2400, modeId 1, density 420, 403.411 x 399.737 dpi, type INTERNAL}'
    hints = parse_adb_text(text, "s")
    assert (hints.density_dpi, hints.xdpi, hints.ydpi) == (420, 403.411, 399.737)


def test_override_display_info_density_is_used_without_wm() -> None:
    text = (
        "mBaseDisplayInfo=DisplayInfo{real 1080 x 2400, density 420 (403.411 x 399.737) dpi}\n"
        "mOverrideDisplayInfo=DisplayInfo{real 1080 x 2400, density 480 (403.411 x 399.737) dpi}\n"
    )
    assert parse_adb_text(text, "s").density_dpi == 480


def test_override_size_rescales_physical_ppi() -> None:
    # With `wm size` overridden to 720x1600 on a 1080x2400 panel, one app pixel spans 1.5
    # panel pixels, so the ppi seen by app pixels is 2/3 of the panel's (arithmetic).
    text = (
        "Physical size: 1080x2400\nOverride size: 720x1600\nPhysical density: 420\n"
        "density 420, 405.0 x 402.0 dpi\n"
    )
    hints = parse_adb_text(text, "s")
    assert hints.xdpi == pytest.approx(270.0) and hints.ydpi == pytest.approx(268.0)


def test_rotation_swaps_physical_axes() -> None:
    # xdpi/ydpi are for the natural orientation (DisplayMetrics); a quarter turn swaps them.
    hints = DeviceHints(density_dpi=420, xdpi=403.0, ydpi=399.0, source="t")
    assert (resolve_device(_screen(0), hints).xdpi, resolve_device(_screen(0), hints).ydpi) == (403.0, 399.0)
    assert (resolve_device(_screen(1), hints).xdpi, resolve_device(_screen(1), hints).ydpi) == (399.0, 403.0)


def test_sources_merge_field_by_field_in_order() -> None:
    flags = DeviceHints(density_dpi=480, source="command line")
    sidecar = DeviceHints(density_dpi=420, xdpi=400, ydpi=400, source="sidecar")
    device = resolve_device(_screen(), flags, sidecar)
    assert device.unit_source == "command line" and device.density_dpi == 480
    assert device.ppi_source == "sidecar" and device.xdpi == 400


def test_no_density_anywhere_says_how_to_give_one() -> None:
    with pytest.raises(ValueError, match="--density"):
        resolve_device(_screen(), DeviceHints(), DeviceHints(xdpi=400, ydpi=400))
