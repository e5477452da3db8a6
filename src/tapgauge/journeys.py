"""Tap sequences: a task as the targets it touches, in order, with predicted time and misses.

A journey file (our own syntax, suffix `.journey`) is plain text, one statement per line;
`#` at the start of a line or after a space starts a comment, unless a digit follows it
(`#3` names a target):

    start thumb-right             # where the finger starts (default: centre)
    screen android/plot_detail.xml  # the screen the next touches are on (relative to this file)
    touch id=book                 # by resource id (Android: the part after ':id/'; iOS: name)
    screen android/booking_form.xml
    touch label="Member name"     # by visible label or accessibility description
    touch #3                      # by the target's number on the screen (as in reports)

The finger moves from the start to the first target, then from each target's centre to
the next; a new screen keeps the finger where it was on the glass.

A bad file is reported whole, each problem on the line that caused it: first every line
that does not parse; once all parse, every screen that cannot be opened and every touch
that finds no target or several, before anything is predicted. Lines in the earlier
syntax ('from', 'tap', 'id:' and 'label:') are errors that name the new word, never
read some other way.
"""

from __future__ import annotations

import difflib
import math
import re
import shlex
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from tapgauge.config import DeviceDefaults
from tapgauge.device import resolve_device
from tapgauge.difficulty import predict
from tapgauge.geometry import as_boxes
from tapgauge.measure import to_unit
from tapgauge.model import Device, DeviceHints, InputError, Screen, Target
from tapgauge.profiles import Profile, parse_start, start_points
from tapgauge.readers import ReadOptions, read_screens
from tapgauge.textfile import read_text

JOURNEY_FORMAT = "tapgauge-journey"
JOURNEY_VERSION = 1
SELECTORS = "selectors are id=NAME, label=TEXT, #N"
_OLD_SELECTOR = re.compile(r"(id|label):(.+)", re.DOTALL)  # the earlier syntax, kept only to name the fix
_BARE = re.compile(r"[\w.:/@+-]+")  # a value that needs no quotes in a selector


@dataclass(frozen=True)
class Step:
    line: int
    screen: Path
    how: str  # "id", "label" or "index"
    value: str
    screen_line: int = 0  # the 'screen' line it follows, named when that screen cannot be used


def selector_text(how: str, value: str) -> str:
    """The selector as a journey file writes it, quoted where shlex would split or drop it."""
    if how == "index":
        return f"#{value}"
    if _BARE.fullmatch(value):
        return f"{how}={value}"
    escaped = value.replace("\\", "\\\\").replace('"', '\\"')  # POSIX shell double quotes
    return f'{how}="{escaped}"'


class JourneyErrors(InputError):
    """Every problem found in one journey file, each with its line; str() gives one per line.

    An InputError, so every caller that reports one error reports all of them unchanged.
    """

    def __init__(self, path: Path | str, errors: tuple[InputError, ...]) -> None:
        self.errors = errors
        listed = "\n".join(str(e) for e in errors)
        super().__init__(path, f"{len(errors)} problems:\n{listed}")

    def __reduce__(self) -> tuple[type, tuple[str, tuple[InputError, ...]]]:  # type: ignore[override]
        return (JourneyErrors, (self.path, self.errors))


def _raise_all(path: Path, errors: list[InputError]) -> None:
    """Raise the one error as it is, several as one JourneyErrors in line order; nothing if none."""
    if len(errors) == 1:
        raise errors[0]
    if errors:
        raise JourneyErrors(path, tuple(sorted(errors, key=lambda e: e.line or 0)))


@dataclass(frozen=True)
class Journey:
    path: Path
    start: str
    start_xy: tuple[float, float] | None
    steps: tuple[Step, ...]


def _strip_comment(line: str) -> str:
    """Drop a '#' comment: a '#' outside quotes, at the start or after a space, not a target number.

    Backslash escapes are skipped as shlex reads them (not inside single quotes), so a label
    written with an escaped quote keeps a ' #' that follows it.
    """
    quote = ""
    escaped = False
    for k, ch in enumerate(line):
        if escaped:
            escaped = False
        elif ch == "\\" and quote != "'":
            escaped = True
        elif quote:
            quote = "" if ch == quote else quote
        elif ch in "\"'":
            quote = ch
        elif ch == "#" and (k == 0 or line[k - 1].isspace()) and not line[k + 1:k + 2].isdigit():
            return line[:k]
    return line


def _selector(sel: str) -> tuple[str, str] | str:
    """(how, value) for a selector, or the message saying what was expected."""
    if sel.startswith("#") and sel[1:].isdigit():
        return "index", sel[1:]
    kind, eq, value = sel.partition("=")
    if eq and kind in ("id", "label") and value:
        return kind, value
    old = _OLD_SELECTOR.fullmatch(sel)
    if old:
        new = selector_text(old[1], old[2])
        was = new.replace("=", ":", 1)  # as it was written, quotes and all
        return f"selector {was!r} is in the earlier syntax; {SELECTORS} (write: touch {new})"
    return f"selector {sel!r}: {SELECTORS}"


def _old_line(verb: str, args: list[str]) -> str:
    """The message for a line in the earlier syntax: the new word and, when it parses, the line to write."""
    if verb == "from":
        fix = f" (write: start {args[0]})" if len(args) == 1 else ""
        return f"'from' lines are now 'start' lines{fix}"
    fix = ""
    if len(args) == 1:
        old = _OLD_SELECTOR.fullmatch(args[0])
        sel = (old[1], old[2]) if old else _selector(args[0])
        fix = f" (write: touch {selector_text(*sel)})" if isinstance(sel, tuple) else ""
    return f"'tap' lines are now 'touch' lines; {SELECTORS}{fix}"


def parse_journey(path: Path) -> Journey:
    """The journey's steps; raises every bad line at once (JourneyErrors when there are several)."""
    text = read_text(path, "journey file")
    start, xy = "centre", None
    screen: Path | None = None
    screen_line = 0
    steps: list[Step] = []
    errors: list[InputError] = []
    for n, raw in enumerate(text.splitlines(), start=1):
        try:
            words = shlex.split(_strip_comment(raw))
        except ValueError as exc:
            errors.append(InputError(path, f"cannot split this line: {exc}", n))
            continue
        if not words:
            continue
        verb, args = words[0].lower(), words[1:]
        if verb in ("from", "tap"):
            errors.append(InputError(path, _old_line(verb, args), n))
        elif verb == "start" and len(args) == 1:
            if steps:
                errors.append(InputError(path, "the 'start' line must come before the first 'touch' line", n))
                continue
            try:
                start, xy = parse_start(args[0])
            except ValueError as exc:
                errors.append(InputError(path, str(exc), n))
        elif verb == "screen" and len(args) == 1:
            screen, screen_line = path.parent / args[0], n
        elif verb == "touch" and len(args) == 1:
            sel = _selector(args[0])
            if isinstance(sel, str):
                errors.append(InputError(path, sel, n))
            elif screen is None:
                errors.append(InputError(path, "a 'screen PATH' line must come before the first 'touch' line", n))
            else:
                steps.append(Step(n, screen, sel[0], sel[1], screen_line))
        else:
            errors.append(InputError(
                path, f"expected 'start START', 'screen PATH' or 'touch SELECTOR', found {raw.strip()!r}", n))
    _raise_all(path, errors)
    if not steps:
        raise InputError(path, "the journey has no 'touch' lines")
    return Journey(path, start, xy, tuple(steps))


def _short_id(t: Target) -> str:
    return t.resource_id.split(":id/", 1)[-1]


def find_target(screen: Screen, step: Step, journey: Path) -> int:
    """Index of the one checked-or-not target the step names; errors list close matches."""
    targets = screen.targets
    if step.how == "index":
        n = int(step.value)  # numbers as reports show them, from 1
        if 1 <= n <= len(targets):
            return n - 1
        raise InputError(journey, f"{screen.path.name} has targets #1 to #{len(targets)}; there is no #{n}",
                         step.line)
    if step.how == "id":
        names = [_short_id(t) for t in targets]
        hits = [k for k, t in enumerate(targets) if step.value in (t.resource_id, _short_id(t))]
    else:
        names = [t.label for t in targets]
        hits = [k for k, t in enumerate(targets) if t.label.casefold() == step.value.casefold()]
    if len(hits) == 1:
        return hits[0]
    if len(hits) > 1:
        which = ", ".join(f"#{targets[k].number}" for k in hits)
        raise InputError(journey, f"{step.how} {step.value!r} matches several targets on {screen.path.name} "
                                  f"({which}); name one by number", step.line)
    close = difflib.get_close_matches(step.value, [n for n in names if n], n=4, cutoff=0.5)
    hint = f"; close matches: {', '.join(repr(c) for c in close)}" if close else ""
    raise InputError(journey, f"no target with {step.how} {step.value!r} on {screen.path.name}{hint}", step.line)


@dataclass(frozen=True)
class Loaded:
    screen: Screen
    device: Device


def _load(step: Step, journey: Path, flags: DeviceHints, config: DeviceDefaults, read: ReadOptions) -> Loaded:
    """A step's screen and device; every failure an InputError at the first touch that needs it."""
    path, line = step.screen, step.line
    named = f" (named on line {step.screen_line})" if step.screen_line else ""
    if not path.is_file():
        raise InputError(journey, f"screen {path} not found{named}", line)
    try:
        screens = read_screens(path, read)
    except InputError as exc:
        raise InputError(journey, f"screen {path.name}{named} cannot be read: {exc}", line) from None
    if len(screens) != 1:
        raise InputError(journey, f"{path.name}{named} holds {len(screens)} screens; a journey needs one per file",
                         line)
    try:
        device = resolve_device(screens[0], flags, *screens[0].hints, config.for_path(path))
    except ValueError as exc:
        raise InputError(journey, f"screen {path.name}{named}: {exc}", line) from None
    return Loaded(screens[0], device)


def _resolve(journey: Journey, flags: DeviceHints, config: DeviceDefaults,
             read: ReadOptions) -> list[tuple[Loaded, int]]:
    """Each step's screen and target index. Raises together every screen that cannot be used
    (once each, at the first touch on it) and every touch that finds no target or several."""
    loaded: dict[Path, Loaded] = {}
    failed: set[Path] = set()
    errors: list[InputError] = []
    found: list[tuple[Loaded, int]] = []
    for step in journey.steps:
        if step.screen in failed:
            continue
        if step.screen not in loaded:
            try:
                loaded[step.screen] = _load(step, journey.path, flags, config, read)
            except InputError as exc:
                failed.add(step.screen)
                errors.append(exc)
                continue
        entry = loaded[step.screen]
        try:
            found.append((entry, find_target(entry.screen, step, journey.path)))
        except InputError as exc:
            errors.append(exc)
    _raise_all(journey.path, errors)
    return found


def run_journey(journey: Journey, profiles: list[Profile], flags: DeviceHints, config: DeviceDefaults,
                read: ReadOptions, width_model: str = "approach") -> dict[str, Any]:
    """Predict every step and the totals, per profile, as a plain record for the writers."""
    resolved = _resolve(journey, flags, config, read)
    entries = [entry for entry, _ in resolved]
    mm = all(entry.device.has_mm for entry in entries)
    unit = "mm" if mm else "platform"
    first = entries[0]
    if journey.start_xy is None:
        fx, fy = start_points()[journey.start]
        sx, sy = fx * first.screen.width, fy * first.screen.height
    else:
        sx, sy = (v * first.device.coords_per_unit for v in journey.start_xy)
    here = to_unit(as_boxes([(sx, sy, sx, sy)]), first.device, unit)[0][:2]
    steps: list[dict[str, Any]] = []
    totals = {p.id: {"time_ms": 0.0, "expected_misses": 0.0, "all_hit": 1.0} for p in profiles}
    for step, (entry, k) in zip(journey.steps, resolved):
        target = entry.screen.targets[k]
        box = to_unit(as_boxes([target.bounds]), entry.device, unit)
        box_mm = box if mm else None
        per: list[dict[str, Any]] = []
        for p in profiles:
            pred = predict(box, (float(here[0]), float(here[1])), p.intercept_ms, p.slope_ms_per_bit,
                           box_mm, p.alpha, p.sigma_a_mm, width_model)
            hit = None if math.isnan(pred.hit[0]) else round(float(pred.hit[0]), 4)
            per.append({"profile": p.id, "distance": round(float(pred.distance[0]), 3),
                        "width": round(float(pred.width[0]), 3), "id_bits": round(float(pred.id_bits[0]), 4),
                        "time_ms": round(float(pred.time_ms[0]), 1), "hit_probability": hit})
            totals[p.id]["time_ms"] += float(pred.time_ms[0])
            if hit is not None:
                totals[p.id]["expected_misses"] += 1 - hit
                totals[p.id]["all_hit"] *= hit
        steps.append({"line": step.line, "screen": entry.screen.path.as_posix(), "target": target.number,
                      "name": target.name, "selector": selector_text(step.how, step.value), "predictions": per})
        here = np.array([(box[0, 0] + box[0, 2]) / 2, (box[0, 1] + box[0, 3]) / 2])
    return {
        "format": JOURNEY_FORMAT,
        "version": JOURNEY_VERSION,
        "journey": journey.path.as_posix(),
        "start": journey.start,
        "unit": "mm" if mm else first.device.unit,
        "steps": steps,
        "totals": [
            {"profile": p.id, "time_ms": round(totals[p.id]["time_ms"], 1),
             "expected_misses": round(totals[p.id]["expected_misses"], 4) if mm else None,
             "all_taps_hit": round(totals[p.id]["all_hit"], 4) if mm else None}
            for p in profiles
        ],
    }
