"""The records that flow down the pipeline: read -> measure -> check -> write.

Every record is immutable (a frozen dataclass, or a NamedTuple for the per-target
leaves) so a stage can never change what an earlier stage produced. Boxes are
(left, top, right, bottom), right/bottom exclusive, in the screen's own coordinates:
pixels for Android dumps and screenshots, points for iOS element trees (Screen.coords
says which).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from enum import IntEnum
from itertools import repeat
from pathlib import Path
from typing import Any, NamedTuple, TypeVar

R = TypeVar("R", bound=tuple[Any, ...])


# A NamedTuple from every one of its fields, in order: `new_row(Finding, (rule_id, severity, ...))`. Made
# in C, where a NamedTuple's own __new__ (defaults, keywords) is a Python call per object: the stages
# make several per target, hundreds a screen.
new_row = tuple.__new__


def rows_of(cls: type[R], rows: Iterable[tuple[Any, ...]]) -> list[R]:
    """One `cls` (a NamedTuple) per row, as `new_row` makes it."""
    return list(map(new_row, repeat(cls), rows))  # type: ignore[call-overload]

Box = tuple[float, float, float, float]


class InputError(Exception):
    """Bad input: names the file, the line where there is one, and what was expected."""

    def __init__(self, path: Path | str, message: str, line: int | None = None) -> None:
        self.path = str(path)
        self.line = line
        self.message = message
        where = f"{self.path}:{line}" if line else self.path
        super().__init__(f"{where}: {message}")

    def __reduce__(self) -> tuple[type, tuple[str, str, int | None]]:
        # Rebuilt from its parts, so it survives the trip back from a worker process.
        return (InputError, (self.path, self.message, self.line))


OLD_SEVERITY_WORDS = {"info": "note"}  # read for one version after the rename (0.2); never written


class Severity(IntEnum):
    """SARIF 2.1.0's open vocabulary for how much a finding matters (section 3.27.10)."""

    NOTE = 1
    WARNING = 2
    ERROR = 3

    @property
    def label(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> Severity:
        word = text.strip().lower()
        try:
            return cls[OLD_SEVERITY_WORDS.get(word, word).upper()]
        except KeyError:
            names = ", ".join(s.label for s in cls)
            raise ValueError(f"unknown severity {text!r} (expected one of: {names})") from None


SEVERITY_BY_LABEL = {s.label: s for s in Severity}  # records carry labels; parsing each one is slow


class Target(NamedTuple):
    """One node a user can tap, as the source describes it. Readers know no rules.

    A NamedTuple, like the other per-target records below: one is built per target.
    """

    number: int  # the target's number as every report shows it: 1, 2, ... in document order
    bounds: Box  # in the screen's coordinates
    cls: str
    label: str  # visible text or accessibility description, may be ""
    resource_id: str
    enabled: bool = True
    visible: bool = True
    paint_rank: int = 0  # larger is drawn later, on top
    scroll_ancestors: tuple[tuple[Box, str], ...] = ()  # (bounds, axis "x"/"y")
    line: int | None = None  # line in the source file
    # Where the node sits in the source's tree, for stacking: per level from the window's
    # root down, (place among its siblings in paint order, whether the source numbered
    # that order itself, as Android's drawing-order does). Empty where the source has no tree.
    path: tuple[tuple[int, bool], ...] = ()
    window: int = -1  # index into Screen.windows; -1 where the source has no windows
    text_within: str = ""  # visible text of its descendants, to name a target that has none of its own

    @property
    def name(self) -> str:
        """A short human name: label, else its descendants' text, else resource id tail, else class tail."""
        if self.label:
            return self.label
        if self.text_within:
            return self.text_within
        if self.resource_id:
            return self.resource_id.rsplit("/", 1)[-1]
        return self.cls.rsplit(".", 1)[-1].removeprefix("XCUIElementType") or "target"

    def is_ancestor_of(self, other: Target) -> bool:
        """Whether this node encloses `other` in the source's tree (same window, a proper prefix of its path)."""
        n = len(self.path)
        return 0 < n < len(other.path) and self.window == other.window and other.path[:n] == self.path


class Window(NamedTuple):
    """A window in a dump that holds several: the app's, the keyboard's, the system bars', a dialog's."""

    bounds: Box
    package: str  # Android: the package of the window's root node; "" where the source has none
    kind: str = ""  # what the source itself says it is ("keyboard" for an iOS keyboard); "" when it does not
    line: int | None = None


@dataclass(frozen=True)
class DeviceHints:
    """What one source (flags, sidecar, config) says about the device; None = silent."""

    density_dpi: float | None = None  # Android: dp = px * 160 / density
    scale: float | None = None  # iOS: pixels per point
    xdpi: float | None = None  # physical pixels per inch, natural orientation
    ydpi: float | None = None
    source: str = ""


@dataclass(frozen=True)
class Screen:
    path: Path
    platform: str  # "android", "ios", or "" when the source does not say (a screenshot)
    width: float  # in `coords`
    height: float
    rotation: int  # quarter turns from the natural orientation, 0..3
    targets: tuple[Target, ...]
    hints: tuple[DeviceHints, ...] = ()  # what the screen's own files say: sidecar, then picture
    coords: str = "px"  # "px" or "pt"
    image: Path | None = None  # the screenshot that shows this screen, if there is one
    name: str = ""  # which screen in a multi-screen file (COCO, CSV); "" for one-screen files
    notices: tuple[str, ...] = ()  # what the reader wants the user to know (lines it ignored, nodes it skipped)
    windows: tuple[Window, ...] = ()  # in document order; targets point into it


@dataclass(frozen=True)
class Device:
    """How the screen's coordinates relate to the platform unit and, when known, to mm.

    xdpi/ydpi are screen coordinates per physical inch along the screen's x and y axes
    as captured (already swapped for rotation, already divided by the scale for points):
    what measuring needs. The ppi as given follows from them, the rotation and the scale.
    """

    platform: str  # "android" or "ios"
    unit: str  # "dp" on Android, "pt" on iOS
    coords_per_unit: float
    unit_source: str  # where the density or scale came from
    density_dpi: float | None = None
    scale: float | None = None
    xdpi: float | None = None
    ydpi: float | None = None
    ppi_source: str | None = None
    no_mm_because: str = ""  # why millimetres are unknown, when they are
    scale_source: str | None = None  # where the scale came from, when there is one
    notices: tuple[str, ...] = ()  # what resolving the device found worth saying (a scale the screenshot contradicts)

    @property
    def has_mm(self) -> bool:
        return self.xdpi is not None and self.ydpi is not None


@dataclass(frozen=True)
class Rule:
    id: str  # "ruleset/rule"
    kind: str
    summary: str
    severity: Severity
    unit: str  # "dp", "pt" (both the platform unit) or "mm"
    params: tuple[tuple[str, float | bool | str], ...]
    source: str
    url: str

    def param(self, name: str) -> float | bool | str:
        return dict(self.params)[name]


@dataclass(frozen=True)
class RuleSet:
    id: str
    title: str
    source: str
    url: str
    platforms: tuple[str, ...]
    rules: tuple[Rule, ...]
    path: str  # where it was loaded from


# Target, Finding, Difficulty and TargetResult are built once or twice per target, hundreds
# of times per screen: immutable NamedTuples, which build about five times faster than
# frozen dataclasses (measured: 0.3 against 1.6 us) and are just as unchangeable.
class Finding(NamedTuple):
    rule_id: str
    severity: Severity
    measured: float
    required: float
    unit: str
    message: str
    waiver: tuple[str, str, str | None] | None = None  # (reason, author, expires) when waived
    other: int | None = None  # number of the target it is measured against (gap: the nearest; spacing: the one hit)


class Approach(NamedTuple):
    """How a target is reached from the screen's start point: the same for every profile."""

    width: float  # along the approach (or as the width model says), in ScreenResult.reach_unit
    distance: float  # start to the target's centre, same unit
    id_bits: float  # log2(distance / width + 1)


class Difficulty(NamedTuple):
    """A target's predicted pointing time and miss chance for one profile."""

    profile: str
    time_ms: float
    miss: float | None  # probability a centred aim lands outside; None without physical size


class TargetResult(NamedTuple):
    target: Target
    status: str  # pass | fail | exempt | partial | unchecked
    reason: str  # why unchecked/partial, "" otherwise
    size_unit: tuple[float, float]  # width, height in the platform unit
    size_mm: tuple[float, float] | None
    findings: tuple[Finding, ...]
    notes: tuple[str, ...] = ()  # e.g. passed by the spacing exception
    difficulty: tuple[Difficulty, ...] = ()
    approach: Approach | None = None
    plan: Any = None  # a plan.Plan where the target is too small: the touch area that passes, or a move


@dataclass(frozen=True)
class ScreenResult:
    screen: Screen
    device: Device
    targets: tuple[TargetResult, ...]
    notices: tuple[str, ...]
    rulesets: tuple[str, ...]  # ids of the rule sets applied to this screen
    start: tuple[str, float, float] | None = None  # reach start: name, x, y in the platform unit
    reach_unit: str = ""  # unit of Approach.width and .distance: "mm", or dp/pt without a ppi


STATUSES = ("pass", "fail", "exempt", "partial", "unchecked")
