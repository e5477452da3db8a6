"""Which device a screen was captured on: pixels per platform unit and per millimetre.

Sources, most trusted first: command-line flags, a sidecar beside the screen, the
project config. Each field is taken from the first source that gives it; where
none gives a density the screen cannot be measured and that is an error, never a
guess. Without a physical ppi, millimetre rules are skipped with a notice.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from functools import cache
from importlib import resources

from tapgauge.model import Device, DeviceHints, Screen

MM_PER_INCH = 25.4  # definition of the inch


@dataclass(frozen=True)
class PlatformUnits:
    unit: str
    source: str
    baseline_dpi: float | None = None  # Android: the density at which 1 dp = 1 px
    buckets: tuple[tuple[str, float], ...] = ()
    scales: tuple[float, ...] = ()  # iOS: the pixel-per-point scales the platform uses


@cache
def platform_units() -> dict[str, PlatformUnits]:
    data = tomllib.loads(resources.files("tapgauge").joinpath("rules/platforms.toml").read_text("utf-8"))
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
        raise ValueError(f"density {text!r} is neither a number of dpi nor one of: {names}") from None
    if not 0 < value < 10_000:
        raise ValueError(f"density {text!r} is out of range; expected dpi such as 420")
    return value


def parse_scale(text: str) -> float:
    """An iOS scale: pixels per point, such as 2 or 3."""
    try:
        value = float(text.strip().lower().removesuffix("x").removeprefix("@"))
    except ValueError:
        raise ValueError(f"scale {text!r} is not a number; expected pixels per point such as 3") from None
    if not 0 < value <= 10:
        raise ValueError(f"scale {text!r} is out of range; iOS uses 1, 2 or 3")
    return value


def parse_ppi(text: str) -> tuple[float, float]:
    """Physical pixels per inch: one number, or 'X,Y' for the natural x and y axes."""
    parts = [p.strip() for p in text.replace("x", ",").split(",")]
    try:
        values = [float(p) for p in parts if p]
    except ValueError:
        raise ValueError(f"ppi {text!r} is not a number or a pair 'X,Y' of numbers") from None
    if len(values) == 1:
        values *= 2
    if len(values) != 2 or not all(0 < v < 10_000 for v in values):
        raise ValueError(f"ppi {text!r}: expected one positive number or 'X,Y', such as 403.4,399.7")
    return values[0], values[1]


_WM_DENSITY = re.compile(r"^\s*(Physical|Override) density:\s*(\d+(?:\.\d+)?)\s*$", re.MULTILINE)
_WM_SIZE = re.compile(r"^\s*(Physical|Override) size:\s*(\d+)\s*x\s*(\d+)\s*$", re.MULTILINE)
# DisplayInfo:       "density 420 (403.411 x 399.737) dpi"
# DisplayDeviceInfo: "density 420, 403.411 x 399.737 dpi"
_DUMPSYS = re.compile(
    r"density (\d+(?:\.\d+)?)(?: \(|, )(\d+(?:\.\d+)?) x (\d+(?:\.\d+)?)\)? dpi"
)


_KEYED = re.compile(r"^\s*(density|scale|ppi)\s*[:=]\s*(\S[^#\n]*?)\s*(?:#.*)?$", re.MULTILINE | re.IGNORECASE)


def parse_device_text(text: str, source: str) -> DeviceHints:
    """A device sidecar: raw adb output (see parse_adb_text) and/or `key: value` lines.

    Keyed lines (`density: 420`, `scale: 3`, `ppi: 460` or `ppi: 403.4,399.7`) are for
    devices with no adb, such as iPhones; they win over adb output in the same file.
    Raises ValueError for a keyed line with a bad value.
    """
    hints = parse_adb_text(text, source)
    keyed = {k.lower(): v for k, v in _KEYED.findall(text)}
    density = parse_density(keyed["density"]) if "density" in keyed else hints.density_dpi
    scale = parse_scale(keyed["scale"]) if "scale" in keyed else None
    xdpi, ydpi = parse_ppi(keyed["ppi"]) if "ppi" in keyed else (hints.xdpi, hints.ydpi)
    return DeviceHints(density_dpi=density, scale=scale, xdpi=xdpi, ydpi=ydpi, source=source)


def parse_adb_text(text: str, source: str) -> DeviceHints:
    """Read the raw output of `wm density`, `wm size` and/or `dumpsys display`.

    Any of them may be missing; field names vary across releases, so each is found
    by its own pattern. An override density is what apps render at. An override
    size rescales pixels against the panel, so the physical ppi is scaled with it.
    """
    wm_density = {kind: float(v) for kind, v in _WM_DENSITY.findall(text)}
    wm_size = {kind: (int(w), int(h)) for kind, w, h in _WM_SIZE.findall(text)}
    matches = [(line, m) for line in text.splitlines() if (m := _DUMPSYS.search(line))]
    xdpi = ydpi = None
    if matches:
        xdpi, ydpi = float(matches[0][1].group(2)), float(matches[0][1].group(3))
    density = wm_density.get("Override", wm_density.get("Physical"))
    if density is None and matches:
        # The override display info is what apps see; the first match otherwise.
        chosen = next((m for line, m in matches if "mOverrideDisplayInfo" in line), matches[0][1])
        density = float(chosen.group(1))
    if xdpi is not None and ydpi is not None and "Physical" in wm_size and "Override" in wm_size:
        (pw, ph), (ow, oh) = wm_size["Physical"], wm_size["Override"]
        xdpi, ydpi = xdpi * ow / pw, ydpi * oh / ph
    return DeviceHints(density_dpi=density, xdpi=xdpi, ydpi=ydpi, source=source)


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
        return Device(
            platform=platform, unit=units.unit, coords_per_unit=1.0, unit_source="element tree in points",
            scale=k, xdpi=xdpi, ydpi=ydpi, ppi_source=ppi.source if (ppi and xdpi is not None) else None,
            no_mm_because=why,
        )
    if k is None:
        raise ValueError(
            "an iOS screenshot needs its scale (pixels per point): pass --scale 3, or put "
            f"'scale: 3' in a sidecar ('{screen.path.stem}.device.txt' or 'device.txt')"
        )
    return Device(
        platform=platform, unit=units.unit, coords_per_unit=k, unit_source=scale.source, scale=k,
        xdpi=xdpi, ydpi=ydpi, ppi_source=ppi.source if ppi else None, no_mm_because="" if ppi else no_ppi,
    )
