"""Which device a screen was captured on: pixels per platform unit and per millimetre.

Sources, most trusted first: command-line flags, a sidecar beside the screen, the
project config. Each field is taken from the first source that gives it; where
none gives a density the screen cannot be measured and that is an error, never a
guess. Without a physical ppi, millimetre rules are skipped with a notice.
"""

from __future__ import annotations

import re
import tomllib
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import TypeVar

from tapgauge.model import Device, DeviceHints, Screen
from tapgauge.ruledata import rules_dir

MM_PER_INCH = 25.4  # definition of the inch
T = TypeVar("T")


@dataclass(frozen=True)
class PlatformUnits:
    unit: str
    source: str
    baseline_dpi: float | None = None  # Android: the density at which 1 dp = 1 px
    buckets: tuple[tuple[str, float], ...] = ()
    scales: tuple[float, ...] = ()  # iOS: the pixel-per-point scales the platform uses


@cache
def platform_units() -> dict[str, PlatformUnits]:
    data = tomllib.loads(rules_dir().joinpath("platforms.toml").read_text("utf-8"))
    return {
        name: PlatformUnits(
            unit=table["unit"],
            source=table["source"],
            baseline_dpi=float(table["baseline_dpi"]) if "baseline_dpi" in table else None,
            buckets=tuple((k, float(v)) for k, v in table.get("buckets", {}).items()),
            scales=tuple(float(v) for v in table.get("scales", ())),
        )
        for name, table in data.items()
    }


# The ranges every source is held to: flags, sidecars and the config all parse through
# these three functions, so a value one accepts the others accept too. No phone or
# tablet comes near the upper bounds (common practice); they catch typos such as 4200.
DPI_MAX = 10_000  # density and ppi, exclusive
SCALE_MAX = 10  # pixels per point, inclusive


def parse_density(text: str) -> float:
    """An Android density as a number of dpi or a bucket name such as 'xxhdpi'."""
    raw = text.strip().lower()
    buckets = dict(platform_units()["android"].buckets)
    if raw in buckets:
        return buckets[raw]
    try:
        value = float(raw)
    except ValueError:
        names = ", ".join(buckets)
        raise ValueError(f"density {text!r} is neither a number of dpi nor a bucket name; expected dpi such as 420, "
                         f"or one of: {names}") from None
    if not 0 < value < DPI_MAX:
        raise ValueError(f"density {text!r} is out of range; expected dpi above 0 and below {DPI_MAX}, such as 420")
    return value


def parse_scale(text: str) -> float:
    """An iOS scale: pixels per point, such as 2 or 3."""
    try:
        value = float(text.strip().lower().removesuffix("x").removeprefix("@"))
    except ValueError:
        raise ValueError(f"scale {text!r} is not a number; expected pixels per point such as 3") from None
    if not 0 < value <= SCALE_MAX:
        raise ValueError(f"scale {text!r} is out of range; expected above 0 and at most {SCALE_MAX} "
                         "(iOS uses 1, 2 or 3)")
    return value


def parse_ppi(text: str) -> tuple[float, float]:
    """Physical pixels per inch: one number, or 'X,Y' for the natural x and y axes."""
    parts = [p.strip() for p in text.replace("x", ",").split(",")]
    try:
        values = [float(p) for p in parts if p]
    except ValueError:
        raise ValueError(f"ppi {text!r} is not a number; expected one number or 'X,Y', such as 403.4,399.7") from None
    if len(values) == 1:
        values *= 2
    if len(values) != 2 or not all(0 < v < DPI_MAX for v in values):
        raise ValueError(f"ppi {text!r}: expected one number or 'X,Y', each above 0 and below {DPI_MAX}, "
                         "such as 403.4,399.7")
    return values[0], values[1]


def parse_size(text: str) -> tuple[int, int]:
    """A `wm size` value: whole pixels, 'WIDTHxHEIGHT'."""
    m = re.fullmatch(r"\s*(\d+)\s*x\s*(\d+)\s*", text)
    if not m or int(m.group(1)) == 0 or int(m.group(2)) == 0:
        raise ValueError(f"size {text!r}: expected width x height in pixels, such as 1080x2400")
    return int(m.group(1)), int(m.group(2))


class DeviceTextError(ValueError):
    """A bad value in device text (a sidecar), with the line it is on, counted from 1."""

    def __init__(self, message: str, line: int) -> None:
        super().__init__(message)
        self.line = line


def _at(parse: Callable[[str], T], value: str, line: int, what: str) -> T:
    """`parse(value)`, its ValueError told as a DeviceTextError on `line`, naming what the line is."""
    try:
        return parse(value)
    except ValueError as exc:
        raise DeviceTextError(f"{what}: {exc}", line) from None


# Wording from AOSP WindowManagerShellCommand (printInitialDisplayDensity / ...Size):
# "Physical density: 420", "Override density: 480", "Physical size: 1080x2400".
# Values are taken loosely (anything up to the line's end) so a bad one is reported, not skipped.
_WM_DENSITY = re.compile(r"^\s*(Physical|Override) density:\s*(.*?)\s*$")
_WM_SIZE = re.compile(r"^\s*(Physical|Override) size:\s*(.*?)\s*$")
# DisplayInfo:       "density 420 (403.411 x 399.737) dpi"
# DisplayDeviceInfo: "density 420, 403.411 x 399.737 dpi"
_DUMPSYS = re.compile(r"density (\S+?)(?: \(|, )(\S+?) x (\S+?)\)? dpi")
_KEYED = re.compile(r"^\s*(density|scale|ppi)\s*[:=]\s*([^#]*?)\s*(?:#.*)?$", re.IGNORECASE)


def parse_device_text(text: str, source: str) -> DeviceHints:
    """A device sidecar: raw adb output (see parse_adb_text) and/or `key: value` lines.

    Keyed lines (`density: 420`, `scale: 3`, `ppi: 460` or `ppi: 403.4,399.7`) are for
    devices with no adb, such as iPhones; they win over adb output in the same file.
    Raises DeviceTextError, naming the line, for a bad value: the same checks as the flags.
    """
    hints = parse_adb_text(text, source)
    density, scale, ppi = hints.density_dpi, None, (hints.xdpi, hints.ydpi)
    for n, line in enumerate(text.split("\n"), start=1):
        m = _KEYED.match(line)
        if not m:
            continue
        key, value = m.group(1).lower(), m.group(2)
        what = f"'{key}:' line"
        if key == "density":
            density = _at(parse_density, value, n, what)
        elif key == "scale":
            scale = _at(parse_scale, value, n, what)
        else:
            ppi = _at(parse_ppi, value, n, what)
    return DeviceHints(density_dpi=density, scale=scale, xdpi=ppi[0], ydpi=ppi[1], source=source)


def parse_adb_text(text: str, source: str) -> DeviceHints:
    """Read the raw output of `wm density`, `wm size` and/or `dumpsys display`.

    Any of them may be missing; field names vary across releases, so each is found
    by its own pattern. An override density is what apps render at. An override
    size rescales pixels against the panel, so the physical ppi is scaled with it.
    Raises DeviceTextError, naming the line, for a value the flags would refuse.
    """
    wm_density: dict[str, float] = {}
    wm_size: dict[str, tuple[int, int]] = {}
    matches: list[tuple[int, str, re.Match[str]]] = []
    for n, line in enumerate(text.split("\n"), start=1):
        if m := _WM_DENSITY.match(line):
            wm_density[m.group(1)] = _at(parse_density, m.group(2), n, f"'{m.group(1)} density:' line")
        elif m := _WM_SIZE.match(line):
            wm_size[m.group(1)] = _at(parse_size, m.group(2), n, f"'{m.group(1)} size:' line")
        elif m := _DUMPSYS.search(line):
            matches.append((n, line, m))
    xdpi = ydpi = None
    if matches:  # the first display listed is the built-in one
        n, _, m = matches[0]
        xdpi, ydpi = _at(parse_ppi, f"{m.group(2)},{m.group(3)}", n, "dumpsys display line (its x and y dpi)")
    density = wm_density.get("Override", wm_density.get("Physical"))
    if density is None and matches:
        # The override display info is what apps see; the first match otherwise.
        n, _, m = next((c for c in matches if "mOverrideDisplayInfo" in c[1]), matches[0])
        density = _at(parse_density, m.group(1), n, "dumpsys display line (its density)")
    if xdpi is not None and ydpi is not None and "Physical" in wm_size and "Override" in wm_size:
        (pw, ph), (ow, oh) = wm_size["Physical"], wm_size["Override"]
        xdpi, ydpi = xdpi * ow / pw, ydpi * oh / ph
    return DeviceHints(density_dpi=density, xdpi=xdpi, ydpi=ydpi, source=source)


# How the readers name a scale they read off the screenshot's width (readers/__init__.py).
SCREENSHOT_SOURCE = "screenshot "
# A screenshot may be a pixel wider or narrower than scale x points where the width in
# points is not whole (common practice: rounding at one edge).
SCALE_SLACK_PX = 1.0


def picture_size(path: Path) -> tuple[int, int] | None:
    """Width and height from a picture's header alone (Pillow reads pixels only when asked); None if unreadable."""
    import warnings

    from PIL import Image  # here, so a run with no pictures never loads Pillow

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # a huge picture is the reader's error to report, not this check's
            with Image.open(path) as img:
                return img.size
    except Exception:  # noqa: BLE001 - a broken picture is reported by the reader; this check only warns
        return None


def scale_disagrees(screen: Screen, k: float, source: str, size: tuple[int, int] | None) -> str:
    """A notice when the screenshot beside a screen in points is not scale x points wide; "" when it fits.

    A picture turned a quarter from the tree (width and height swapped) fits too: the
    scale is about pixels per point, not about which way the picture was saved.
    """
    if size is None or screen.image is None or screen.width <= 0 or screen.height <= 0:
        return ""
    w, h = size
    wide = abs(w - k * screen.width) <= SCALE_SLACK_PX
    turned = abs(w - k * screen.height) <= SCALE_SLACK_PX and abs(h - k * screen.width) <= SCALE_SLACK_PX
    if wide or turned:  # the height alone is not the scale's concern (a cut or padded picture)
        return ""
    return (f"scale {k:g} ({source}) disagrees with the screenshot {screen.image.name}: it is {w} px wide, "
            f"{w / screen.width:.4g} px per pt across this {screen.width:g} pt screen, where scale {k:g} would make it "
            f"{k * screen.width:g} px; sizes in mm and pictures drawn on the screenshot use the scale")


def _first(sources: tuple[DeviceHints, ...], field: str) -> DeviceHints | None:
    return next((s for s in sources if getattr(s, field) is not None), None)


def resolve_device(screen: Screen, *sources: DeviceHints) -> Device:
    """Merge device hints, first source first, into a Device for this screen.

    A screen whose source does not name its platform (a screenshot) takes it from the
    hints: a density means Android, a scale means iOS. Raises ValueError when the
    screen cannot be put in platform units.
    """
    density = _first(sources, "density_dpi")
    scale = _first(sources, "scale")
    platform = screen.platform or ("android" if density else "ios" if scale else "")
    if not platform:
        raise ValueError(
            "a screenshot does not say which platform or density it has: pass --density "
            "(Android, e.g. --density 420) or --scale (iOS, e.g. --scale 3), or put them in a "
            f"sidecar ('{screen.path.stem}.device.txt' or 'device.txt' beside the screen)"
        )
    units = platform_units()[platform]
    ppi = next((s for s in sources if s.xdpi is not None and s.ydpi is not None), None)
    xdpi = ydpi = None
    if ppi is not None and ppi.xdpi is not None and ppi.ydpi is not None:
        # Physical dpi is given for the natural orientation; a quarter turn swaps the axes.
        xdpi, ydpi = (ppi.ydpi, ppi.xdpi) if screen.rotation % 2 else (ppi.xdpi, ppi.ydpi)
    if platform == "android":
        if density is None or density.density_dpi is None or units.baseline_dpi is None:
            raise ValueError(
                "no screen density: pass --density (e.g. --density 420 or --density xxhdpi), "
                "put the output of `adb shell wm density` in a sidecar file "
                f"('{screen.path.stem}.device.txt' or 'device.txt' beside the screen), "
                "or set [device] density in tapgauge.toml"
            )
        return Device(
            platform=platform, unit=units.unit, coords_per_unit=density.density_dpi / units.baseline_dpi,
            unit_source=density.source, density_dpi=density.density_dpi, xdpi=xdpi, ydpi=ydpi,
            ppi_source=ppi.source if ppi else None,
            no_mm_because="" if ppi else "no physical ppi (give --ppi, or `adb shell dumpsys display` output in the device sidecar)",
        )
    k = scale.scale if scale is not None else None
    no_ppi = "no physical ppi: iOS does not report one; give the model's published ppi with --ppi"
    if screen.coords == "pt":
        # Points are the unit already; millimetres need pixels per point to use a pixel ppi.
        why = "" if ppi else no_ppi
        if k is None:
            why = why or "a ppi but no scale (pixels per point) to apply it to points: give --scale"
            xdpi = ydpi = None
        elif xdpi is not None and ydpi is not None:
            xdpi, ydpi = xdpi / k, ydpi / k
        notice = ""
        if scale is not None and k is not None and screen.image is not None \
                and not scale.source.startswith(SCREENSHOT_SOURCE):  # a scale read off the picture fits it
            notice = scale_disagrees(screen, k, scale.source, picture_size(screen.image))
        return Device(
            platform=platform, unit=units.unit, coords_per_unit=1.0, unit_source="element tree in points",
            scale=k, xdpi=xdpi, ydpi=ydpi, ppi_source=ppi.source if (ppi and xdpi is not None) else None,
            no_mm_because=why, scale_source=scale.source if scale is not None else None,
            notices=(notice,) if notice else (),
        )
    if k is None:
        raise ValueError(
            "an iOS screenshot needs its scale (pixels per point): pass --scale 3, or put "
            f"'scale: 3' in a sidecar ('{screen.path.stem}.device.txt' or 'device.txt')"
        )
    return Device(
        platform=platform, unit=units.unit, coords_per_unit=k, unit_source=scale.source, scale=k,
        xdpi=xdpi, ydpi=ydpi, ppi_source=ppi.source if ppi else None, no_mm_because="" if ppi else no_ppi,
        scale_source=scale.source,
    )

