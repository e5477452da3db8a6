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
    baseline_dpi: float
    buckets: dict[str, float]
    source: str


@cache
def platform_units() -> dict[str, PlatformUnits]:
    data = tomllib.loads(resources.files("tapgauge").joinpath("rules/platforms.toml").read_text("utf-8"))
    return {
        name: PlatformUnits(
            unit=table["unit"],
            baseline_dpi=float(table["baseline_dpi"]),
            buckets={k: float(v) for k, v in table.get("buckets", {}).items()},
            source=table["source"],
        )
        for name, table in data.items()
    }


def parse_density(text: str, platform: str = "android") -> float:
    """A density as a number of dpi or a bucket name such as 'xxhdpi'."""
    raw = text.strip().lower()
    buckets = platform_units()[platform].buckets
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


def resolve_device(screen: Screen, *sources: DeviceHints) -> Device:
    """Merge device hints, first source first, into a Device for this screen.

    Raises ValueError when no source gives a density.
    """
    units = platform_units()[screen.platform]
    density = next((s for s in sources if s.density_dpi is not None), None)
    if density is None or density.density_dpi is None:
        raise ValueError(
            "no screen density: pass --density (e.g. --density 420 or --density xxhdpi), "
            "put the output of `adb shell wm density` in a sidecar file "
            f"('{screen.path.stem}.device.txt' or 'device.txt' beside the screen), "
            "or set [device] density in tapgauge.toml"
        )
    ppi = next((s for s in sources if s.xdpi is not None and s.ydpi is not None), None)
    xdpi = ydpi = None
    if ppi is not None and ppi.xdpi is not None and ppi.ydpi is not None:
        # Physical dpi is given for the natural orientation; a quarter turn swaps the axes.
        xdpi, ydpi = (ppi.ydpi, ppi.xdpi) if screen.rotation % 2 else (ppi.xdpi, ppi.ydpi)
    return Device(
        density_dpi=density.density_dpi,
        density_source=density.source,
        unit=units.unit,
        px_per_unit=density.density_dpi / units.baseline_dpi,
        xdpi=xdpi,
        ydpi=ydpi,
        ppi_source=ppi.source if ppi is not None else None,
    )
