"""Baselines and the release gate: fail a build only on what got worse.

A baseline records, per screen and target, a coordinate-free identity (see identity.py)
with the target's size, status, failing rules and predicted difficulty; no pixel
positions, so moving a control does not look like a change. The gate compares a new
run with it and lists regressions and improvements. Identical targets are matched by
count: a third identical failure where the baseline had two is new.
"""

from __future__ import annotations

import glob
import json
import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any, TextIO

import ijson

from tapgauge import __version__
from tapgauge.config import GateSettings, relative_to_base
from tapgauge.identity import fingerprint
from tapgauge.jsontext import write_streamed
from tapgauge.model import SEVERITY_BY_LABEL, InputError, Severity
from tapgauge.renames import current
from tapgauge.report.records import EXIT_CODES, Report

BASELINE_FORMAT = "tapgauge-baseline"
BASELINE_VERSION = 2
READS_VERSIONS = (1, 2)  # version 1 (tapgauge 0.1) is read with its rule ids under their new names


def _failing(t: dict[str, Any]) -> list[str]:
    """The rules a target fails, open (not waived), at every severity: the gate picks its level later."""
    if t["status"] != "fail":
        return []
    return sorted({f["rule"] for f in t["findings"] if not f["waiver"]})


def baseline_entry(s: dict[str, Any], sid: str) -> dict[str, Any]:
    """One screen's part of a baseline: its checked targets by identity, sorted by key."""
    unit = s["device"]["unit"]
    targets = []
    for t in s["targets"]:
        if t["status"] == "unchecked":
            continue
        targets.append({
            "key": t["key"], "fingerprint": fingerprint(sid, t["key"]), "name": t["name"], "status": t["status"],
            "failing": _failing(t), "why": {f["rule"]: f["message"] for f in t["findings"] if not f["waiver"]},
            "size": [t["size"]["width"], t["size"]["height"]], "unit": unit,
            "size_mm": None if t["size_mm"] is None else [t["size_mm"]["width"], t["size_mm"]["height"]],
            "difficulty": {d["profile"]: {"time_ms": d["time_ms"], "miss": d["miss_probability"]}
                           for d in t["difficulty"]},
            "approach": None if t["approach"] is None else {"distance": t["approach"]["distance"],
                                                            "width": t["approach"]["width"]},
        })
    entry: dict[str, Any] = {"targets": sorted(targets, key=lambda x: x["key"])}
    if s["reach"]:
        entry["reach_unit"] = s["reach"]["approach_unit"]
    entry["path"] = s["path"]  # where the screen was read from in this run (not stored in a baseline)
    return entry


def _entries(report: Report, screen_id: Callable[[dict[str, Any]], str],
             one_root: bool) -> Iterator[tuple[str, dict[str, Any]]]:
    """(screen id, baseline entry) per screen as the report passes; a screen id seen twice is an error.

    With `one_root` (one path given) ids are paths relative to it, in the run's path
    order, so a repeated id can only follow its twin: only the last id is kept, and
    memory does not grow with the number of screens. Several paths keep every id.
    """
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
        yield sid, baseline_entry(s, sid)


def write_baseline(out: TextIO, report: Report, screen_id: Callable[[dict[str, Any]], str], project: str,
                   one_root: bool = False) -> tuple[int, int]:
    """Write the baseline document as the screens pass; returns (screens, targets) written."""
    counts = [0, 0]

    def entries() -> Iterator[tuple[str, dict[str, Any]]]:
        for sid, entry in _entries(report, screen_id, one_root):
            counts[0] += 1
            counts[1] += len(entry["targets"])
            del entry["path"]  # a baseline holds no paths of the run that recorded it, nor its messages
            for t in entry["targets"]:
                del t["why"]
            yield sid, entry

    def document(screens: Any, final: bool) -> dict[str, Any]:
        return {
            "format": BASELINE_FORMAT, "version": BASELINE_VERSION, "project": project,
            "tool": {"name": "tapgauge", "version": __version__},
            "fail_level": report.fail_level,
            "failing_from": Severity.NOTE.label,  # "failing" lists open findings of every severity
            "rulesets": [r["id"] for r in report.rulesets],
            "profiles": [p["id"] for p in report.profiles],
            "screens": screens,
        }

    write_streamed(out, document, entries(), mapping=True)
    return counts[0], counts[1]


def screen_ref(s: dict[str, Any]) -> str:
    return f"{s['path']}::{s['name']}" if s["name"] else s["path"]


_HEADER_KEYS = ("format", "version", "project", "fail_level", "failing_from")


def read_header(path: Path) -> dict[str, Any]:
    """A baseline's format, version and project, read without reading its screens (normally first)."""
    found: dict[str, Any] = {}
    try:
        with path.open("rb") as fh:
            for prefix, event, value in ijson.parse(fh, use_float=True):
                if prefix in _HEADER_KEYS and event in ("string", "number", "integer", "double", "null"):
                    found[prefix] = value
                elif prefix == "screens":
                    break  # the header comes before the screens
                elif prefix == "" and event == "start_map":
                    continue
                elif prefix == "" and event not in ("map_key", "end_map"):
                    break  # not an object at all
    except (ijson.JSONError, UnicodeDecodeError) as exc:
        if not found:
            raise InputError(path, f"baseline is not valid JSON ({_json_error(exc)}); re-record it") from None
    except OSError as exc:
        raise InputError(path, f"cannot read the baseline ({exc.strerror or exc})") from None
    return found


def _json_error(exc: Exception) -> str:
    if isinstance(exc, UnicodeDecodeError):  # its position counts from the chunk the parser read, not the file
        return f"bytes that are not UTF-8 text: {exc.reason}"
    return str(exc).splitlines()[0][:120] or type(exc).__name__


def check_baseline(path: Path) -> dict[str, Any]:
    """A baseline's header, checked before a run: missing, corrupt or another version is an error."""
    if not path.exists():
        raise InputError(path, "baseline not found; record one with `tapgauge baseline SCREENS -o FILE`")
    header = read_header(path)
    if header.get("format") != BASELINE_FORMAT:
        raise InputError(path, f"not a tapgauge baseline (expected \"format\": \"{BASELINE_FORMAT}\")")
    if header.get("version") not in READS_VERSIONS:
        raise InputError(path, f"baseline version {header.get('version')!r}; this tapgauge reads versions "
                               f"{', '.join(map(str, READS_VERSIONS))}: re-record it with `tapgauge baseline`")
    if not isinstance(header.get("project"), str):
        raise InputError(path, "baseline is damaged: it names no project; re-record it")
    return header


_NEEDED = frozenset({"key", "status", "failing", "size", "difficulty"})
_NUMBER = (int, float)  # exact types, as the JSON reader makes them: true and false are not numbers here


def _target_problem(t: Any) -> str:
    """What is wrong with one baseline target entry, or "" (every field the gate reads is checked).

    Run on every target of a baseline before the gate compares it (100,000 on 1,000 crowded screens),
    so with exact type tests and plain loops: under cProfile, generators and a helper call a value were
    a third of gate()'s time."""
    if type(t) is not dict or not _NEEDED <= t.keys():
        return "lacks key, status, failing, size or difficulty"
    if type(t["key"]) is not str or type(t["status"]) is not str or type(t.get("name", "")) is not str:
        return "has a key, status or name that is not text"
    failing = t["failing"]
    if type(failing) is not list:
        return "has 'failing' that is not a list of rule ids"
    for r in failing:
        if type(r) is not str:
            return "has 'failing' that is not a list of rule ids"
    size = t["size"]
    if type(size) is not list or len(size) != 2 or type(size[0]) not in _NUMBER or type(size[1]) not in _NUMBER:
        return "has 'size' that is not [width, height]"
    diff = t["difficulty"]
    if type(diff) is not dict:
        return "has 'difficulty' that is not profile -> {time_ms, miss}"
    for d in diff.values():
        if type(d) is not dict or type(d.get("time_ms")) not in _NUMBER or "miss" not in d \
                or (d["miss"] is not None and type(d["miss"]) not in _NUMBER):
            return "has 'difficulty' that is not profile -> {time_ms, miss}"
    approach = t.get("approach")
    if approach is not None and (type(approach) is not dict or type(approach.get("distance")) not in _NUMBER
                                 or type(approach.get("width")) not in _NUMBER):
        return "has 'approach' that is not {distance, width}"
    return ""


def _from_version_1(t: dict[str, Any]) -> dict[str, Any]:
    """A version-1 target entry as version 2 has it: rule ids renamed, no approach recorded."""
    return {**t, "failing": [current(r) for r in t["failing"]], "approach": None}


def _checked_entry(path: Path, sid: str, entry: Any) -> dict[str, Any]:
    if not isinstance(entry, dict) or not isinstance(entry.get("targets"), list):
        raise InputError(path, "baseline is damaged: 'screens' must map screen ids to their targets; re-record it")
    for t in entry["targets"]:
        problem = _target_problem(t)
        if problem:
            raise InputError(path, f"baseline is damaged: a target on {sid} {problem}; re-record it")
    return entry


def baseline_screens(path: Path, fh: IO[bytes], version: int = BASELINE_VERSION) -> Iterator[tuple[str, dict[str, Any]]]:
    """(screen id, entry) from a baseline file, one at a time, each checked (and brought up to date)."""
    try:
        for sid, entry in ijson.kvitems(fh, "screens", use_float=True):
            entry = _checked_entry(path, sid, entry)
            if version == 1:
                entry = {**entry, "targets": [_from_version_1(t) for t in entry["targets"]]}
            yield sid, entry
    except (ijson.JSONError, UnicodeDecodeError) as exc:
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
    kind: str  # new-failure, shrank, harder, gone-screen, gone-target | fixed, grew, easier | moved
    screen: str
    target: str  # key ('' for a whole screen)
    name: str
    message: str  # what changed, without the target's name (writers put it first)
    fingerprint: str
    rules: tuple[str, ...] = ()  # new-failure and fixed: the rules
    path: str = ""  # the screen file in this run ('' for a screen that is gone)


@dataclass(frozen=True)
class Verdict:
    """What the gate found: changes by kind, and how many screens were compared at all."""

    worse: list[Change]
    better: list[Change]
    gone: list[Change]
    moved: list[Change]
    compared: int  # run screens that had a baseline entry


@dataclass(frozen=True)
class Scale:
    """What compare_screen needs of the run: its fail level, its rules' severities and its profiles' lines."""

    level: Severity
    severity: dict[str, Severity]  # rule id -> severity
    lines: dict[str, tuple[float, float]]  # profile id -> (intercept ms, slope ms per bit)

    @classmethod
    def of(cls, report: Report, level: Severity) -> Scale:
        return cls(level, {r["id"]: SEVERITY_BY_LABEL[r["severity"]] for rs in report.rulesets for r in rs["rules"]},
                   {p["id"]: (p["intercept_ms"], p["slope_ms_per_bit"]) for p in report.profiles})

    def at_level(self, rules: list[str]) -> set[str]:
        # A rule no longer in the run's rule sets cannot fail it.
        return {r for r in rules if r in self.severity and self.severity[r] >= self.level}


# A time recomputed from a baseline's rounded distance and width can differ from its rounded time by
# a few hundredths of a millisecond; this much is not taken for a change.
REROUNDING_MS = 0.5
LOOKAHEAD = 256  # baseline screens read ahead when looking for a screen that is not next


def check_level(header: dict[str, Any], path: Path, level: Severity) -> None:
    """A baseline records failures from some severity up; gating below it would take old findings for new."""
    recorded = header.get("failing_from") or header.get("fail_level") or "error"
    if recorded in SEVERITY_BY_LABEL and level < SEVERITY_BY_LABEL[recorded]:
        raise InputError(path, f"records failures at {recorded} and above only, so it cannot gate at fail level "
                               f"{level.label}: re-record it with `tapgauge baseline`")


def gate(report: Report, screen_id: Callable[[dict[str, Any]], str], path: Path,
         settings: GateSettings, level: Severity, one_root: bool = False, version: int = BASELINE_VERSION) -> Verdict:
    """The changes of a report against the baseline at `path`, screen by screen, at fail level `level`.

    The run and the baseline are read side by side: a baseline is written in run
    order, so each screen is normally the next one in the file and memory stays
    small. Screens out of order are held until their partner turns up (a run over
    other folders holds more); a run screen not found within LOOKAHEAD entries is
    held until the end. Screens and targets that disappeared are regressions when
    settings.missing is "fail"; time that rose only because a target moved farther
    from the start point is one when settings.moved is "fail"; otherwise both are
    only reported.
    """
    worse: list[Change] = []
    better: list[Change] = []
    gone: list[Change] = []
    moved: list[Change] = []
    compared = 0
    waiting_run: dict[str, dict[str, Any]] = {}  # run screens whose baseline entry has not turned up yet
    waiting_base: dict[str, dict[str, Any]] = {}  # baseline screens read ahead, not yet matched
    scale = Scale.of(report, level)

    def compare(sid: str, new: dict[str, Any], old: dict[str, Any]) -> None:
        nonlocal compared
        compared += 1
        w, b, g, m = compare_screen(sid, new, old, settings, scale)
        worse.extend(w)
        better.extend(b)
        gone.extend(g)
        moved.extend(m)

    with path.open("rb") as fh:
        stored = baseline_screens(path, fh, version)
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
        worse.extend(compare_screen(sid, entry, {"targets": []}, settings, scale)[0])
    if settings.missing == "fail":
        worse, gone = worse + gone, []
    if settings.moved == "fail":
        worse, moved = worse + moved, []
    return Verdict(worse, better, gone, moved, compared)


def _size(v: list[float]) -> str:
    return f"{v[0]:g} x {v[1]:g}"


def _own_time(old: dict[str, Any] | None, shrink: float, line: tuple[float, float] | None) -> float | None:
    """Predicted time with the target where it was, reached the way it was (the baseline's distance and
    approach), at its size now: what the target itself lost, with a move taken out. The width along
    the old approach scales with the target's size; `shrink` is the smaller of its width and height
    ratios (new / old), so a target narrowed on either axis is never let off."""
    if line is None or old is None or old["width"] * shrink <= 0:
        return None
    a, b = line
    return a + b * math.log2(old["distance"] / (old["width"] * shrink) + 1)


def compare_screen(sid: str, new_screen: dict[str, Any], old_screen: dict[str, Any], settings: GateSettings,
                   scale: Scale) -> tuple[list[Change], list[Change], list[Change], list[Change]]:
    """One screen's regressions, improvements, vanished targets and moves against its baseline entry."""
    worse: list[Change] = []
    better: list[Change] = []
    gone: list[Change] = []
    moved: list[Change] = []
    old = {t["key"]: t for t in old_screen["targets"]}
    new = {t["key"]: t for t in new_screen["targets"]}
    path = new_screen.get("path", "")
    reach = new_screen.get("reach_unit", "")
    for key, t in new.items():
        b = old.get(key)

        def change(kind: str, message: str, rules: tuple[str, ...] = (), key: str = key, t: dict[str, Any] = t) -> Change:
            return Change(kind, sid, key, t["name"], message, t["fingerprint"], rules, path)

        # Failing lists are sorted rule ids: where they are equal nothing was fixed or newly failed, at any level.
        same = b is not None and t["failing"] == b["failing"]
        fresh = [] if same else sorted(scale.at_level(t["failing"]) - scale.at_level(b["failing"] if b else []))
        if fresh:
            whys = [(r, t["why"][r]) for r in fresh if t.get("why", {}).get(r)]
            why = whys[0][1] if len(fresh) == 1 and whys else "; ".join(f"{r}: {m}" for r, m in whys)
            worse.append(change("new-failure", ("new target, fails " if b is None else "now fails ") + ", ".join(fresh)
                                + (f" ({why})" if why else ""), tuple(fresh)))
        if b is None:
            continue
        fixed = [] if same else sorted(scale.at_level(b["failing"]) - scale.at_level(t["failing"]))
        if fixed:
            better.append(change("fixed", f"no longer fails {', '.join(fixed)}", tuple(fixed)))
        unit = t["unit"]
        (ow, oh), (nw, nh) = b["size"], t["size"]
        if nw < ow - settings.size_tolerance or nh < oh - settings.size_tolerance:
            worse.append(change("shrank", f"shrank from {_size(b['size'])} to {_size(t['size'])} {unit}"))
        elif nw > ow + settings.size_tolerance or nh > oh + settings.size_tolerance:
            better.append(change("grew", f"grew from {_size(b['size'])} to {_size(t['size'])} {unit}"))
        slower = []  # (profile, old ms, new ms, ms at the old distance): time lost only to a move
        shrink = min(nw / ow if ow > 0 else 1.0, nh / oh if oh > 0 else 1.0)
        for profile, d in t["difficulty"].items():
            o = b["difficulty"].get(profile)
            if o is None:
                continue
            if d["miss"] is not None and o["miss"] is not None:
                if d["miss"] > o["miss"] + settings.miss_tolerance:
                    worse.append(change("harder", f"{profile}: miss {o['miss']:.0%} -> {d['miss']:.0%}"))
                elif d["miss"] < o["miss"] - settings.miss_tolerance:
                    better.append(change("easier", f"{profile}: miss {o['miss']:.0%} -> {d['miss']:.0%}"))
            if d["time_ms"] > o["time_ms"] + settings.time_tolerance_ms:
                own = _own_time(b.get("approach"), shrink, scale.lines.get(profile))
                if own is not None and own <= o["time_ms"] + settings.time_tolerance_ms + REROUNDING_MS:
                    slower.append((profile, o["time_ms"], d["time_ms"], own))
                else:
                    worse.append(change("harder", f"{profile}: time {o['time_ms']:.0f} -> {d['time_ms']:.0f} ms"
                                        + (f" ({own:.0f} ms at its old distance)" if own is not None else "")))
        if slower:
            o, d = b["approach"], t["approach"]
            times = "; ".join(f"{p} {old:.0f} -> {now:.0f} ms ({own:.0f} at its old distance)"
                              for p, old, now, own in slower)
            moved.append(change("moved", f"moved farther from the start point ({o['distance']:.1f} -> "
                                         f"{d['distance']:.1f} {reach}), and predicted time rose for that alone: {times}"))
    for key, b in old.items():
        if key not in new:
            gone.append(Change("gone-target", sid, key, b.get("name", ""),
                               "is in the baseline but not on the screen now (removed, or its id, label or class "
                               "changed)", fingerprint(sid, key), (), path))
    return worse, better, gone, moved


def waiver_target(key: str) -> str | None:
    """A waiver's target selector for a baseline key ('id:save|Button#0' -> 'id:save'); None for a
    target known only by its position, which a waiver cannot name."""
    base = key.rsplit("#", 1)[0]
    kind, _, rest = base.partition(":")
    if kind in ("id", "label"):
        return f"{kind}:{rest.rsplit('|', 1)[0]}"
    if kind == "class":
        return f"class:{rest}"
    return None


def _toml_string(text: str) -> str:
    # JSON's escapes are all valid in a TOML basic string; TOML 1.0 also forbids a raw DEL (U+007F).
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


def waiver_snippets(changes: list[Change], base: Path) -> list[str]:
    """TOML waivers for the new failures, to paste into tapgauge.toml once a person has judged them."""
    out = []
    for c in changes:
        target = waiver_target(c.target)
        if c.kind != "new-failure" or target is None or not c.path:
            continue
        for rule in c.rules:
            out.append("\n".join([
                "[[waivers]]",
                f"screen = {_toml_string(glob.escape(relative_to_base(Path(c.path), base)))}",  # a pattern
                f"target = {_toml_string(target)}",
                f"rule = {_toml_string(rule)}",
                'reason = "WHY THIS IS ACCEPTABLE (for instance a WCAG 2.5.8 exception)"',
                'author = "WHO DECIDED"',
                "# expires = 2027-06-30",
            ]))
    return out


def gate_record(verdict: Verdict, baseline_path: str, errors: int, level: Severity, rerecord: str,
                waivers: list[str], checked: int) -> dict[str, Any]:
    """The gate's record; `checked` is how many of the run's targets were measured against the rules."""
    def rows(changes: list[Change]) -> list[dict[str, Any]]:
        return [{**c.__dict__, "rules": list(c.rules)}
                for c in sorted(changes, key=lambda c: (c.screen, c.target, c.kind, c.message))]

    nothing = not verdict.compared or not checked
    word = ("input-errors" if errors else "nothing-compared" if nothing else "fail" if verdict.worse else "pass")
    code = EXIT_CODES[word]  # the verdicts and their codes are the check's
    return {"format": "tapgauge-gate", "version": 1, "baseline": baseline_path, "fail_level": level.label,
            "regressions": rows(verdict.worse), "improvements": rows(verdict.better), "gone": rows(verdict.gone),
            "moved": rows(verdict.moved),
            "next_steps": {"rerecord": rerecord if verdict.worse and code == 1 else "",
                           "waivers": waivers if code == 1 else [],
                           # waivers answer new failures only; a shrink or a harder reach needs the baseline
                           "waivers_suffice": code == 1 and all(c.kind == "new-failure" for c in verdict.worse)},
            "summary": {"screens": verdict.compared, "regressions": len(verdict.worse),
                        "improvements": len(verdict.better), "gone": len(verdict.gone), "moved": len(verdict.moved),
                        "errors": errors, "verdict": word, "exit_code": code}}
