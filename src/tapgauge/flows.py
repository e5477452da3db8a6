"""Tap sequences: a task as the targets it taps, in order, with predicted time and misses.

A flow file (our own syntax) is plain text, one statement per line, `#` starts a comment:

    from thumb-right              # where the finger starts (default: centre)
    screen android/plot_detail.xml  # the screen the next taps are on (relative to this file)
    tap id:book                   # by resource id (Android: the part after ':id/'; iOS: name)
    screen android/booking_form.xml
    tap label:"Member name"       # by visible label or accessibility description
    tap #3                        # by the target's number on the screen (as in reports)

The finger moves from the start to the first target, then from each target's centre to
the next; a new screen keeps the finger where it was on the glass.

A bad file is reported whole, each problem on the line that caused it: first every line
that does not parse; once all parse, every screen that cannot be opened and every tap
that finds no target or several, before anything is predicted.
"""

from __future__ import annotations

import difflib
import math
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


@dataclass(frozen=True)
class Step:
    line: int
    screen: Path
    how: str  # "id", "label" or "index"
    value: str
    screen_line: int = 0  # the 'screen' line it follows, named when that screen cannot be used


class FlowErrors(InputError):
    """Every problem found in one flow file, each with its line; str() gives one per line.

    An InputError, so every caller that reports one error reports all of them unchanged.
    """

    def __init__(self, path: Path | str, errors: tuple[InputError, ...]) -> None:
        self.errors = errors
        listed = "\n".join(str(e) for e in errors)
        super().__init__(path, f"{len(errors)} problems:\n{listed}")

    def __reduce__(self) -> tuple[type, tuple[str, tuple[InputError, ...]]]:  # type: ignore[override]
        return (FlowErrors, (self.path, self.errors))


def _raise_all(path: Path, errors: list[InputError]) -> None:
    """Raise the one error as it is, several as one FlowErrors in line order; nothing if none."""
    if len(errors) == 1:
        raise errors[0]
    if errors:
        raise FlowErrors(path, tuple(sorted(errors, key=lambda e: e.line or 0)))


@dataclass(frozen=True)
class Flow:
    path: Path
    start: str
    start_xy: tuple[float, float] | None
    steps: tuple[Step, ...]


def _strip_comment(line: str) -> str:
    """Drop a '#' comment: a '#' outside quotes, at the start or after a space, not a target number."""
    quote = ""
    for k, ch in enumerate(line):
        if quote:
            quote = "" if ch == quote else quote
        elif ch in "\"'":
            quote = ch
        elif ch == "#" and (k == 0 or line[k - 1].isspace()) and not line[k + 1:k + 2].isdigit():
            return line[:k]
    return line


def parse_flow(path: Path) -> Flow:
    """The flow's steps; raises every bad line at once (FlowErrors when there are several)."""
    text = read_text(path, "flow file")
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
        if verb == "from" and len(args) == 1:
            if steps:
                errors.append(InputError(path, "'from' must come before the first tap", n))
                continue
            try:
                start, xy = parse_start(args[0])
            except ValueError as exc:
                errors.append(InputError(path, str(exc), n))
        elif verb == "screen" and len(args) == 1:
            screen, screen_line = path.parent / args[0], n
        elif verb == "tap" and len(args) == 1:
            sel = args[0]
            if screen is None:
                errors.append(InputError(path, "a 'screen PATH' line must come before the first tap", n))
            elif sel.startswith("#") and sel[1:].isdigit():
                steps.append(Step(n, screen, "index", sel[1:], screen_line))
            elif sel.startswith("id:") and len(sel) > 3:
                steps.append(Step(n, screen, "id", sel[3:], screen_line))
            elif sel.startswith("label:") and len(sel) > 6:
                steps.append(Step(n, screen, "label", sel[6:], screen_line))
            else:
                errors.append(InputError(path, f"tap {sel!r}: expected id:RESOURCE_ID, label:TEXT or #NUMBER", n))
        else:
            errors.append(InputError(
                path, f"expected 'from START', 'screen PATH' or 'tap SELECTOR', found {raw.strip()!r}", n))
    _raise_all(path, errors)
    if not steps:
        raise InputError(path, "the flow has no taps")
    return Flow(path, start, xy, tuple(steps))


def _short_id(t: Target) -> str:
    return t.resource_id.split(":id/", 1)[-1]


def find_target(screen: Screen, step: Step, flow: Path) -> int:
    """Index of the one checked-or-not target the step names; errors list close matches."""
    targets = screen.targets
    if step.how == "index":
        k = int(step.value)
        if k < len(targets):
            return k
        raise InputError(flow, f"{screen.path.name} has targets #0 to #{len(targets) - 1}; there is no #{k}", step.line)
    if step.how == "id":
        names = [_short_id(t) for t in targets]
        hits = [k for k, t in enumerate(targets) if step.value in (t.resource_id, _short_id(t))]
    else:
        names = [t.label for t in targets]
        hits = [k for k, t in enumerate(targets) if t.label.casefold() == step.value.casefold()]
    if len(hits) == 1:
        return hits[0]
    if len(hits) > 1:
        which = ", ".join(f"#{targets[k].ordinal}" for k in hits)
        raise InputError(flow, f"{step.how} {step.value!r} matches several targets on {screen.path.name} "
                               f"({which}); name one by number", step.line)
    close = difflib.get_close_matches(step.value, [n for n in names if n], n=4, cutoff=0.5)
    hint = f"; close matches: {', '.join(repr(c) for c in close)}" if close else ""
    raise InputError(flow, f"no target with {step.how} {step.value!r} on {screen.path.name}{hint}", step.line)


@dataclass(frozen=True)
class Loaded:
    screen: Screen
    device: Device


def _load(step: Step, flow: Path, flags: DeviceHints, config: DeviceDefaults, read: ReadOptions) -> Loaded:
    """A step's screen and device; every failure an InputError at the first tap that needs it."""
    path, line = step.screen, step.line
    named = f" (named on line {step.screen_line})" if step.screen_line else ""
    if not path.is_file():
        raise InputError(flow, f"screen {path} not found{named}", line)
    try:
        screens = read_screens(path, read)
    except InputError as exc:
        raise InputError(flow, f"screen {path.name}{named} cannot be read: {exc}", line) from None
    if len(screens) != 1:
        raise InputError(flow, f"{path.name}{named} holds {len(screens)} screens; a flow needs one per file", line)
    try:
        device = resolve_device(screens[0], flags, *screens[0].hints, config.for_path(path))
    except ValueError as exc:
        raise InputError(flow, f"screen {path.name}{named}: {exc}", line) from None
    return Loaded(screens[0], device)


def _resolve(flow: Flow, flags: DeviceHints, config: DeviceDefaults,
             read: ReadOptions) -> list[tuple[Loaded, int]]:
    """Each step's screen and target index. Raises together every screen that cannot be used
    (once each, at the first tap on it) and every tap that finds no target or several."""
    loaded: dict[Path, Loaded] = {}
    failed: set[Path] = set()
    errors: list[InputError] = []
    found: list[tuple[Loaded, int]] = []
    for step in flow.steps:
        if step.screen in failed:
            continue
        if step.screen not in loaded:
            try:
                loaded[step.screen] = _load(step, flow.path, flags, config, read)
            except InputError as exc:
                failed.add(step.screen)
                errors.append(exc)
                continue
        entry = loaded[step.screen]
        try:
            found.append((entry, find_target(entry.screen, step, flow.path)))
        except InputError as exc:
            errors.append(exc)
    _raise_all(flow.path, errors)
    return found


def run_flow(flow: Flow, profiles: list[Profile], flags: DeviceHints, config: DeviceDefaults,
             read: ReadOptions, width_model: str = "approach") -> dict[str, Any]:
    """Predict every step and the totals, per profile, as a plain record for the writers."""
    resolved = _resolve(flow, flags, config, read)
    entries = [entry for entry, _ in resolved]
    mm = all(entry.device.has_mm for entry in entries)
    unit = "mm" if mm else "platform"
    first = entries[0]
    if flow.start_xy is None:
        fx, fy = start_points()[flow.start]
        sx, sy = fx * first.screen.width, fy * first.screen.height
    else:
        sx, sy = (v * first.device.coords_per_unit for v in flow.start_xy)
    here = to_unit(as_boxes([(sx, sy, sx, sy)]), first.device, unit)[0][:2]
    steps: list[dict[str, Any]] = []
    totals = {p.id: {"time_ms": 0.0, "expected_misses": 0.0, "all_hit": 1.0} for p in profiles}
    for step, (entry, k) in zip(flow.steps, resolved):
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
        steps.append({"line": step.line, "screen": entry.screen.path.as_posix(), "target": target.ordinal,
                      "name": target.name, "selector": f"{step.how}:{step.value}", "predictions": per})
        here = np.array([(box[0, 0] + box[0, 2]) / 2, (box[0, 1] + box[0, 3]) / 2])
    return {
        "flow": flow.path.as_posix(),
        "from": flow.start,
        "unit": "mm" if mm else first.device.unit,
        "steps": steps,
        "totals": [
            {"profile": p.id, "time_ms": round(totals[p.id]["time_ms"], 1),
             "expected_misses": round(totals[p.id]["expected_misses"], 4) if mm else None,
             "all_taps_hit": round(totals[p.id]["all_hit"], 4) if mm else None}
            for p in profiles
        ],
    }
