"""Baselines and the release gate: fail a build only on what got worse.

A baseline records, per screen and target, a coordinate-free identity (see identity.py)
with the target's size, status, failing rules and predicted difficulty; no pixel
positions, so moving a control does not look like a change. The gate compares a new
run with it and lists regressions and improvements. Identical targets are matched by
count: a third identical failure where the baseline had two is new.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any, TextIO

import ijson

from tapgauge import __version__
from tapgauge.config import GateSettings
from tapgauge.identity import fingerprint
from tapgauge.jsontext import write_streamed
from tapgauge.model import SEVERITY_BY_LABEL, InputError, Severity
from tapgauge.report.records import Report

BASELINE_FORMAT = "tapgauge-baseline"
BASELINE_VERSION = 1


def _failing(t: dict[str, Any], fail_level: Severity) -> list[str]:
    if t["status"] not in ("fail", "unmeasurable"):
        return []
    return sorted({f["rule"] for f in t["findings"] if not f["waiver"] and SEVERITY_BY_LABEL[f["severity"]] >= fail_level})


def baseline_entry(s: dict[str, Any], sid: str, level: Severity) -> dict[str, Any]:
    """One screen's part of a baseline: its checked targets by identity, sorted by key."""
    unit = s["device"]["unit"]
    targets = []
    for t in s["targets"]:
        if t["status"] == "unchecked":
            continue
        targets.append({
            "key": t["key"], "fingerprint": fingerprint(sid, t["key"]), "name": t["name"], "status": t["status"],
            "failing": _failing(t, level), "size": [t["size"]["width"], t["size"]["height"]], "unit": unit,
            "size_mm": None if t["size_mm"] is None else [t["size_mm"]["width"], t["size_mm"]["height"]],
            "difficulty": {d["profile"]: {"time_ms": d["time_ms"], "miss": d["miss_probability"]}
                           for d in t["difficulty"]},
        })
    return {"targets": sorted(targets, key=lambda x: x["key"])}


def _entries(report: Report, screen_id: Callable[[dict[str, Any]], str],
             one_root: bool) -> Iterator[tuple[str, dict[str, Any]]]:
    """(screen id, baseline entry) per screen as the report passes; a screen id seen twice is an error.

    With `one_root` (one path given) ids are paths relative to it, in the run's path
    order, so a repeated id can only follow its twin: only the last id is kept, and
    memory does not grow with the number of screens. Several paths keep every id.
    """
    level = Severity.parse(report.fail_level)
    seen: set[str] = set()
    last = None
    for s in report.screens:
        sid = screen_id(s)
        if sid == last or sid in seen:
            raise InputError(Path(s["path"]), f"screen id {sid!r} is given twice (the same relative path under two "
                                              "folders, or one picture twice in an annotation file): check those "
                                              "folders in separate runs, or name each picture once")
        if not one_root:
            seen.add(sid)
        last = sid
        yield sid, baseline_entry(s, sid, level)


def write_baseline(out: TextIO, report: Report, screen_id: Callable[[dict[str, Any]], str], project: str,
                   one_root: bool = False) -> tuple[int, int]:
    """Write the baseline document as the screens pass; returns (screens, targets) written."""
    counts = [0, 0]

    def entries() -> Iterator[tuple[str, dict[str, Any]]]:
        for sid, entry in _entries(report, screen_id, one_root):
            counts[0] += 1
            counts[1] += len(entry["targets"])
            yield sid, entry

    def document(screens: Any, final: bool) -> dict[str, Any]:
        return {
            "format": BASELINE_FORMAT, "version": BASELINE_VERSION, "project": project,
            "tool": {"name": "tapgauge", "version": __version__},
            "fail_level": report.fail_level,
            "rulesets": [r["id"] for r in report.rulesets],
            "profiles": [p["id"] for p in report.profiles],
            "screens": screens,
        }

    write_streamed(out, document, entries(), mapping=True)
    return counts[0], counts[1]


def screen_ref(s: dict[str, Any]) -> str:
    return f"{s['path']}::{s['name']}" if s["name"] else s["path"]


_HEADER_KEYS = ("format", "version", "project")


def read_header(path: Path) -> dict[str, Any]:
    """A baseline's format, version and project, read without reading its screens (normally first)."""
    found: dict[str, Any] = {}
    try:
        with path.open("rb") as fh:
            for prefix, event, value in ijson.parse(fh, use_float=True):
                if prefix in _HEADER_KEYS and event in ("string", "number", "integer", "double", "null"):
                    found[prefix] = value
                    if len(found) == len(_HEADER_KEYS):
                        break
                elif prefix == "" and event == "start_map":
                    continue
                elif prefix == "" and event not in ("map_key", "end_map"):
                    break  # not an object at all
    except ijson.JSONError as exc:
        if not found:
            raise InputError(path, f"baseline is not valid JSON ({_json_error(exc)}); re-record it") from None
    except OSError as exc:
        raise InputError(path, f"cannot read the baseline ({exc.strerror or exc})") from None
    return found


def _json_error(exc: Exception) -> str:
    return str(exc).splitlines()[0][:120] or type(exc).__name__


def check_baseline(path: Path) -> dict[str, Any]:
    """A baseline's header, checked before a run: missing, corrupt or another version is an error."""
    if not path.exists():
        raise InputError(path, "baseline not found; record one with `tapgauge baseline SCREENS -o FILE`")
    header = read_header(path)
    if header.get("format") != BASELINE_FORMAT:
        raise InputError(path, f"not a tapgauge baseline (expected \"format\": \"{BASELINE_FORMAT}\")")
    if header.get("version") != BASELINE_VERSION:
        raise InputError(path, f"baseline version {header.get('version')!r}; this tapgauge reads version "
                               f"{BASELINE_VERSION}: re-record it")
    return header


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _target_problem(t: Any) -> str:
    """What is wrong with one baseline target entry, or "" (every field the gate reads is checked)."""
    if not isinstance(t, dict) or not {"key", "status", "failing", "size", "difficulty"} <= set(t):
        return "lacks key, status, failing, size or difficulty"
    if not isinstance(t["key"], str) or not isinstance(t["status"], str) or not isinstance(t.get("name", ""), str):
        return "has a key, status or name that is not text"
    if not isinstance(t["failing"], list) or not all(isinstance(r, str) for r in t["failing"]):
        return "has 'failing' that is not a list of rule ids"
    size = t["size"]
    if not isinstance(size, list) or len(size) != 2 or not all(_is_number(v) for v in size):
        return "has 'size' that is not [width, height]"
    diff = t["difficulty"]
    if not isinstance(diff, dict) or not all(
            isinstance(d, dict) and _is_number(d.get("time_ms")) and (d.get("miss") is None or _is_number(d["miss"]))
            for d in diff.values()):
        return "has 'difficulty' that is not profile -> {time_ms, miss}"
    return ""


def _checked_entry(path: Path, sid: str, entry: Any) -> dict[str, Any]:
    if not isinstance(entry, dict) or not isinstance(entry.get("targets"), list):
        raise InputError(path, "baseline is damaged: 'screens' must map screen ids to their targets; re-record it")
    for t in entry["targets"]:
        problem = _target_problem(t)
        if problem:
            raise InputError(path, f"baseline is damaged: a target on {sid} {problem}; re-record it")
    return entry


def baseline_screens(path: Path, fh: IO[bytes]) -> Iterator[tuple[str, dict[str, Any]]]:
    """(screen id, entry) from a baseline file, one at a time, each checked."""
    try:
        for sid, entry in ijson.kvitems(fh, "screens", use_float=True):
            yield sid, _checked_entry(path, sid, entry)
    except ijson.JSONError as exc:
        raise InputError(path, f"baseline is not valid JSON ({_json_error(exc)}); re-record it") from None


def check_overwrite(path: Path, project: str) -> None:
    """Refuse to replace a file that is not this project's baseline."""
    if not path.exists():
        return
    try:
        old = read_header(path)
    except InputError:
        raise InputError(path, "exists and is not a tapgauge baseline; pass --force to replace it") from None
    if old.get("format") != BASELINE_FORMAT:
        raise InputError(path, "exists and is not a tapgauge baseline; pass --force to replace it")
    if old.get("project") != project:
        raise InputError(path, f"is the baseline of project {old.get('project')!r}, not {project!r}; "
                               "pass --force to replace it")


@dataclass(frozen=True)
class Change:
    kind: str  # new-failure, shrank, harder, gone-screen, gone-target | fixed, grew, easier
    screen: str
    target: str  # key ('' for a whole screen)
    name: str
    message: str
    fingerprint: str


LOOKAHEAD = 256  # baseline screens read ahead when looking for a screen that is not next


def gate(report: Report, screen_id: Callable[[dict[str, Any]], str], path: Path,
         settings: GateSettings, one_root: bool = False) -> tuple[list[Change], list[Change], list[Change]]:
    """(regressions, improvements, gone) of a report against the baseline at `path`, screen by screen.

    The run and the baseline are read side by side: a baseline is written in run
    order, so each screen is normally the next one in the file and memory stays
    small. Screens out of order are held until their partner turns up (a run over
    other folders holds more); a run screen not found within LOOKAHEAD entries is
    held until the end. Screens and targets that disappeared are regressions when
    settings.missing is "fail"; otherwise they are only reported.
    """
    worse: list[Change] = []
    better: list[Change] = []
    gone: list[Change] = []
    waiting_run: dict[str, dict[str, Any]] = {}  # run screens whose baseline entry has not turned up yet
    waiting_base: dict[str, dict[str, Any]] = {}  # baseline screens read ahead, not yet matched

    def compare(sid: str, new: dict[str, Any], old: dict[str, Any]) -> None:
        w, b, g = compare_screen(sid, new, old, settings)
        worse.extend(w)
        better.extend(b)
        gone.extend(g)

    with path.open("rb") as fh:
        stored = baseline_screens(path, fh)
        for sid, entry in _entries(report, screen_id, one_root):
            if sid in waiting_base:
                compare(sid, entry, waiting_base.pop(sid))
                continue
            for _, (key, old) in zip(range(LOOKAHEAD), stored):
                if key == sid:
                    compare(sid, entry, old)
                    break
                if key in waiting_run:
                    compare(key, waiting_run.pop(key), old)
                else:
                    waiting_base[key] = old
            else:
                waiting_run[sid] = entry
        unmatched = list(waiting_base)
        for key, old in stored:  # the rest of the baseline
            if key in waiting_run:
                compare(key, waiting_run.pop(key), old)
            else:
                unmatched.append(key)
    for sid in unmatched:
        gone.append(Change("gone-screen", sid, "", "", f"screen {sid} is in the baseline but was not checked",
                           fingerprint(sid, "")))
    for sid, entry in waiting_run.items():  # new screens: every failure is new
        compare(sid, entry, {"targets": []})
    if settings.missing == "fail":
        return worse + gone, better, []
    return worse, better, gone


def compare_screen(sid: str, new_screen: dict[str, Any], old_screen: dict[str, Any],
                   settings: GateSettings) -> tuple[list[Change], list[Change], list[Change]]:
    """One screen's regressions, improvements and vanished targets against its baseline entry."""
    worse: list[Change] = []
    better: list[Change] = []
    gone: list[Change] = []
    old = {t["key"]: t for t in old_screen["targets"]}
    new = {t["key"]: t for t in new_screen["targets"]}
    for key, t in new.items():
        fp = fingerprint(sid, key)
        b = old.get(key)
        fresh = sorted(set(t["failing"]) - set(b["failing"] if b else []))
        if fresh:
            how = "new target" if b is None else "now"
            worse.append(Change("new-failure", sid, key, t["name"], f"{t['name']} ({how}) fails {', '.join(fresh)}", fp))
        if b is None:
            continue
        fixed = sorted(set(b["failing"]) - set(t["failing"]))
        if fixed:
            better.append(Change("fixed", sid, key, t["name"], f"{t['name']} no longer fails {', '.join(fixed)}", fp))
        unit = t["unit"]
        (ow, oh), (nw, nh) = b["size"], t["size"]
        if nw < ow - settings.size_tolerance or nh < oh - settings.size_tolerance:
            worse.append(Change("shrank", sid, key, t["name"],
                                f"{t['name']} shrank from {ow:g} x {oh:g} to {nw:g} x {nh:g} {unit}", fp))
        elif nw > ow + settings.size_tolerance or nh > oh + settings.size_tolerance:
            better.append(Change("grew", sid, key, t["name"],
                                 f"{t['name']} grew from {ow:g} x {oh:g} to {nw:g} x {nh:g} {unit}", fp))
        for profile, d in t["difficulty"].items():
            o = b["difficulty"].get(profile)
            if o is None:
                continue
            if d["miss"] is not None and o["miss"] is not None:
                if d["miss"] > o["miss"] + settings.miss_tolerance:
                    worse.append(Change("harder", sid, key, t["name"], f"{t['name']}: predicted miss for {profile} "
                                        f"rose from {o['miss']:.0%} to {d['miss']:.0%}", fp))
                elif d["miss"] < o["miss"] - settings.miss_tolerance:
                    better.append(Change("easier", sid, key, t["name"], f"{t['name']}: predicted miss for {profile} "
                                         f"fell from {o['miss']:.0%} to {d['miss']:.0%}", fp))
            if d["time_ms"] > o["time_ms"] + settings.time_tolerance_ms:
                worse.append(Change("harder", sid, key, t["name"], f"{t['name']}: predicted time for {profile} "
                                    f"rose from {o['time_ms']:.0f} to {d['time_ms']:.0f} ms", fp))
    for key, b in old.items():
        if key not in new:
            gone.append(Change("gone-target", sid, key, b.get("name", ""),
                               f"{b.get('name') or key} is in the baseline but not on the screen now "
                               "(removed, or its id, label or class changed)", fingerprint(sid, key)))
    return worse, better, gone


def gate_record(worse: list[Change], better: list[Change], gone: list[Change], baseline_path: str,
                errors: int) -> dict[str, Any]:
    def rows(changes: list[Change]) -> list[dict[str, Any]]:
        return [dict(c.__dict__) for c in sorted(changes, key=lambda c: (c.screen, c.target, c.kind, c.message))]

    code = 2 if errors else 1 if worse else 0
    return {"format": "tapgauge-gate", "version": 1, "baseline": baseline_path, "regressions": rows(worse),
            "improvements": rows(better), "gone": rows(gone),
            "summary": {"regressions": len(worse), "improvements": len(better), "gone": len(gone),
                        "errors": errors, "exit_code": code}}
