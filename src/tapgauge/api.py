"""Check touch targets from Python: one screen in, a typed result out.

`check_source` takes what a UI test already holds (a path, the page source as text or
bytes, or an iOS element tree already parsed from JSON) and runs the CLI's own
pipeline over it: the same readers, device resolution, checks, scoring, waivers and
JSON record, with the project's config (tapgauge.toml or [tool.tapgauge] in
pyproject.toml, found from the current folder up) unless arguments override it.
`assert_touch_targets` does the same and raises AssertionError with the findings table
of what failed.

Stable from 0.1: the two functions, their keyword arguments, and the fields and methods
of ScreenCheck, TargetCheck, FindingCheck and WaiverNote. New keywords and fields may
be added in minor versions; none is removed or renamed before a major one.

Imported lazily by `tapgauge` (module `__getattr__`), never by the CLI.
"""

from __future__ import annotations

import datetime as dt
import io
import os
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, TypeAlias, TypedDict, Unpack

import orjson

from tapgauge.batch import Scope, make_scoring, measure_options, read_options
from tapgauge.config import Config, load_config
from tapgauge.device import parse_density, parse_ppi, parse_scale, resolve_device
from tapgauge.jsontext import dumps
from tapgauge.model import (
    OLD_SEVERITY_WORDS,
    DeviceHints,
    InputError,
    RuleSet,
    Screen,
    ScreenResult,
    Severity,
)
from tapgauge.pipeline import Settings, check_file, check_one_screen
from tapgauge.profiles import Profile
from tapgauge.readers import ReadOptions, _documents_in_value
from tapgauge.readers.android import is_android_root, read_android
from tapgauge.readers.annotations import is_voc_root
from tapgauge.readers.ios import is_ios_root, read_ios
from tapgauge.readers.pagesource import json_kind, load_json, server_error, tree_from_json
from tapgauge.readers.xmlsafe import Document, parse_documents, status_notice
from tapgauge.renames import current, notice
from tapgauge.report.document import screen_text
from tapgauge.report.records import COMPARED, Checked, Report, open_at, screen_record, screen_totals
from tapgauge.rulesets import DEFAULT_RULESETS, select_rulesets
from tapgauge.textfile import MAX_BYTES
from tapgauge.waivers import Waivers, waive_screen

__all__ = ["CheckOptions", "FindingCheck", "ScreenCheck", "Source", "TargetCheck", "WaiverNote",
           "assert_touch_targets", "check_source"]

Source: TypeAlias = str | bytes | bytearray | memoryview | os.PathLike[str] | Mapping[str, Any]
"""A path (str or os.PathLike), the XML or JSON text (str or bytes), or a parsed iOS element tree."""


class CheckOptions(TypedDict, total=False):
    """check_source's keywords, for the functions that pass them on (a test checks they match)."""

    name: str | None
    density: str | float | None
    scale: str | float | None
    ppi: str | float | tuple[float, float] | None
    rules: str | Sequence[str] | None
    profiles: str | Sequence[str] | None
    fail_level: str | Severity | None
    all_windows: bool | None
    app_package: str | None
    include_focusable: bool | None
    params: Sequence[str]
    start: str
    width_model: str
    today: dt.date | str | None
    config_dir: str | os.PathLike[str] | None


UNNAMED = "<source>"  # what a str or bytes source is called in messages and records when not named
_TEXT_STARTS = ("<", "{", "[", "\ufeff")  # a str starting so (after blanks) is content, not a path
# The note the CLI's reader adds for a WebDriver response holding XML (readers/__init__.py).
_VALUE_NOTE = "read the page source XML held in the response's 'value'; line numbers are lines of that XML"


@dataclass(frozen=True)
class WaiverNote:
    """The project's waiver that covers a finding: who accepted it, why, and until when."""

    reason: str
    author: str
    expires: str | None  # ISO date, or None for no expiry


@dataclass(frozen=True)
class FindingCheck:
    """One rule a target misses, as the JSON report's finding has it."""

    rule_id: str  # "rule-set/rule", e.g. "wcag-2.5.8/size-24"
    severity: str  # "error", "warning" or "note"
    measured: float
    required: float
    unit: str  # "dp", "pt" or "mm"
    message: str
    waiver: WaiverNote | None = None


@dataclass(frozen=True)
class TargetCheck:
    """One touch target and what the rules found."""

    number: int  # as every report numbers it: 1, 2, ... in document order
    status: str  # pass | fail | exempt | partial | unchecked
    bounds: tuple[float, float, float, float]  # left, top, right, bottom in the source's coordinates (px or pt)
    label: str  # its text or accessibility label, may be ""
    name: str  # a short human name: label, else text within, else resource id or class
    resource_id: str
    class_name: str
    line: int | None  # line in the source's XML, where there is one
    size: tuple[float, float]  # width, height in the platform unit (dp or pt)
    size_mm: tuple[float, float] | None  # None without a physical ppi
    reason: str  # why unchecked, partial or exempt; "" otherwise
    findings: tuple[FindingCheck, ...]
    failing: bool  # an open (unwaived) finding at or above the fail level: what fails the screen


@dataclass(frozen=True)
class _Context:
    """What rendering the screen as a one-screen report needs besides its record."""

    rulesets: tuple[RuleSet, ...]
    profiles: tuple[Profile, ...]


@dataclass(frozen=True)
class ScreenCheck:
    """One checked screen. Its `record` is exactly the screen's entry in `tapgauge check -f json`."""

    path: str  # the screen's path as the CLI's report shows it; for str/bytes sources the name given
    name: str  # which screen of a multi-screen file; "" for one-screen sources
    platform: str  # "android" or "ios"
    unit: str  # "dp" or "pt"
    fail_level: str  # "error", "warning" or "note"
    targets: tuple[TargetCheck, ...]
    notices: tuple[str, ...]
    json_text: str = field(repr=False)  # the screen's entry in the JSON report (compact JSON)
    _context: _Context = field(repr=False, compare=False)
    _full: str = field(repr=False, compare=False, default="")  # the whole record (with sentences), for tables

    @property
    def failing(self) -> tuple[TargetCheck, ...]:
        """Targets with an open finding at or above the fail level."""
        return tuple(t for t in self.targets if t.failing)

    @property
    def passed(self) -> bool:
        """Something was compared and no target has an open finding at or above the fail level (the CLI's
        rule: a screen on which nothing was measured is never a pass)."""
        return self.verdict == "pass"

    @property
    def compared(self) -> int:
        """Targets measured against the rules (pass, fail or exempt)."""
        return sum(1 for t in self.targets if t.status in COMPARED)

    @property
    def verdict(self) -> str:
        """"pass", "fail", or "nothing-compared" (no target was measured: never a success), as the CLI says."""
        if self.failing:
            return "fail"
        return "pass" if self.compared else "nothing-compared"

    @property
    def record(self) -> dict[str, Any]:
        """The JSON record, a fresh copy on every call (the result itself never changes)."""
        return orjson.loads(self.json_text)  # type: ignore[no-any-return]

    def to_json(self) -> str:
        """The screen's record as compact JSON, as the CLI's JSON report holds it."""
        return self.json_text

    @property
    def _whole(self) -> dict[str, Any]:
        return orjson.loads(self._full)  # type: ignore[no-any-return]

    def report_json(self) -> str:
        """A whole JSON report holding this one screen, as `tapgauge check -f json` writes it."""
        from tapgauge.report.json_writer import write_json

        buf = io.StringIO()
        write_json(self._report(self._whole), buf)
        return buf.getvalue()

    def table(self, width: int = 80, color: bool = False) -> str:
        """The terminal findings table for this screen, as `tapgauge check` prints it."""
        return self._table(self._whole, width, color, None)

    def failure_table(self, width: int = 80) -> str:
        """The findings table of what fails: failing targets and their open findings at or above the
        fail level only. The totals and the verdict still count the whole screen."""
        level = Severity.parse(self.fail_level)
        whole = self._whole
        # Every target stays (the per-screen counts and reasons need them); only open findings at the level show.
        kept = [{**t, "findings": open_at(t, level)} for t in whole["targets"]]
        return self._table({**whole, "targets": kept}, width, False, self.fail_level, screen_totals(whole))

    def assert_passed(self) -> ScreenCheck:
        """This result, or AssertionError with the failure table when a target fails at the fail level or
        no target was compared at all (a check that measured nothing is never a pass, as in the CLI)."""
        __tracebackhide__ = True  # pytest shows the caller's line, not this one
        if self.verdict == "fail":
            n = len(self.failing)
            raise AssertionError(f"touch targets: {n} target{'s' if n != 1 else ''} on {self._title} fail at "
                                 f"{self.fail_level}{' or above' if self.fail_level != 'error' else ''}\n"
                                 + self.failure_table())
        if self.verdict == "nothing-compared":
            raise AssertionError(f"touch targets: nothing compared on {self._title}: no target was measured "
                                 "against the rules\n" + self.table())
        return self

    @property
    def _title(self) -> str:
        return f"{self.path} :: {self.name}" if self.name else self.path

    def _report(self, record: dict[str, Any], totals: Any = None) -> Report:
        # Waivers are already in the record; a one-screen report lists none (others would look stale).
        item = Checked(None, totals or screen_totals(record), (), record)
        return Report([item], list(self._context.rulesets), Severity.parse(self.fail_level),
                      list(self._context.profiles))

    def _table(self, record: dict[str, Any], width: int, color: bool, show: str | None, totals: Any = None) -> str:
        from tapgauge.report.table import write_table

        buf = io.StringIO()
        write_table(self._report(record, totals), buf, width=width, color=color, show=show)
        return buf.getvalue()


# -- building the result from the record: one source of truth, the JSON the CLI writes


def _finding(f: dict[str, Any]) -> FindingCheck:
    w = f["waiver"]
    return FindingCheck(f["rule"], f["severity"], f["measured"], f["required"], f["unit"], f["message"],
                        None if w is None else WaiverNote(w["reason"], w["author"], w["expires"]))


def _target(t: dict[str, Any], level: Severity) -> TargetCheck:
    mm = t["size_mm"]
    return TargetCheck(
        number=t["number"], status=t["status"], bounds=tuple(t["bounds"]),
        label=t["label"], name=t["name"], resource_id=t["resource_id"], class_name=t["class"], line=t["line"],
        size=(t["size"]["width"], t["size"]["height"]), size_mm=None if mm is None else (mm["width"], mm["height"]),
        reason=t["reason"], findings=tuple(_finding(f) for f in t["findings"]), failing=bool(open_at(t, level)),
    )


def _screen_check(record: dict[str, Any], level: Severity, context: _Context) -> ScreenCheck:
    return ScreenCheck(
        path=record["path"], name=record["name"], platform=record["platform"], unit=record["device"]["unit"],
        fail_level=level.label, targets=tuple(_target(t, level) for t in record["targets"]),
        notices=tuple(record["notices"]), json_text=screen_text(record), _context=context, _full=dumps(record),
    )


# -- settings: the CLI's merge (batch.prepare) of arguments over the config over the defaults


def _ids(value: str | Sequence[str] | None) -> list[str] | None:
    if value is None:
        return None
    items = value.split(",") if isinstance(value, str) else [str(v) for v in value]
    return [x.strip() for x in items if x.strip()]


def _argument(name: str, value: object, parse: Callable[[str], Any]) -> Any:
    try:
        return parse(",".join(map(str, value)) if isinstance(value, (tuple, list)) else str(value))
    except ValueError as exc:
        raise ValueError(f"{name}={value!r}: {exc}") from None


def _device(density: str | float | None, scale: str | float | None,
            ppi: str | float | tuple[float, float] | None) -> DeviceHints:
    xy = _argument("ppi", ppi, parse_ppi) if ppi is not None else (None, None)
    return DeviceHints(
        density_dpi=_argument("density", density, parse_density) if density is not None else None,
        scale=_argument("scale", scale, parse_scale) if scale is not None else None,
        xdpi=xy[0], ydpi=xy[1], source="argument",
    )


def _level(fail_level: str | Severity | None, config: Config) -> Severity:
    if fail_level is None:
        return config.fail_level or Severity.ERROR
    if isinstance(fail_level, Severity):
        return fail_level
    if fail_level.strip().lower() in OLD_SEVERITY_WORDS:
        warnings.warn(f"fail_level={fail_level!r}: the severity is now called "
                      f"{Severity.parse(fail_level).label!r}; the old word is read in this version only",
                      FutureWarning, stacklevel=4)
    return _argument("fail_level", fail_level, Severity.parse)  # type: ignore[no-any-return]


@dataclass(frozen=True)
class _Setup:
    settings: Settings
    level: Severity


def _setup(config_dir: str | os.PathLike[str] | None, rules: str | Sequence[str] | None,
           profiles: str | Sequence[str] | None, fail_level: str | Severity | None, flags: DeviceHints,
           scope: Scope, params: Sequence[str], start: str, width_model: str, today: dt.date | str | None) -> _Setup:
    config = load_config(Path(config_dir) if config_dir is not None else Path.cwd())
    level = _level(fail_level, config)
    asked = _ids(rules) or None  # none named: the config's, else the defaults (as an empty --rules does)
    for old in asked or []:
        if said := notice(old, "rules"):
            warnings.warn(said, FutureWarning, stacklevel=3)
    for said in config.notices:
        warnings.warn(said, FutureWarning, stacklevel=3)
    chosen = select_rulesets([current(x) for x in asked] if asked is not None else list(config.rules or DEFAULT_RULESETS))
    wanted = _ids(profiles)
    scoring = make_scoring(config, ",".join(wanted) if wanted else None, list(params), start, width_model)
    day = _argument("today", today, dt.date.fromisoformat) if isinstance(today, str) else today or dt.date.today()
    settings = Settings(tuple(chosen), flags, config.devices, announce_skips=asked is not None,
                        read=read_options(config, None, None, scope), measure=measure_options(config, scope),
                        scoring=scoring, waivers=Waivers(config.waivers, config.base, day))
    return _Setup(settings, level)


# -- reading: a path goes through the CLI's readers as it is; text is read in memory, without
# looking beside it for sidecars or screenshots (nothing is beside it)


Content: TypeAlias = str | bytes | Mapping[str, Any]


def _as_content(source: Source) -> Content | None:
    """The source's content, or None when it names a file."""
    if isinstance(source, (bytes, bytearray, memoryview)):
        return bytes(source)
    if isinstance(source, Mapping):
        return source
    if isinstance(source, str) and (not source.strip() or source.lstrip().startswith(_TEXT_STARTS) or "\n" in source):
        return source
    if isinstance(source, (str, os.PathLike)):
        return None
    raise TypeError(f"source: expected a path, str, bytes or a parsed element tree, not {type(source).__name__}")


def _is_json(data: bytes) -> bool:
    head = data[:64]
    for bom, codec in ((b"\xef\xbb\xbf", "utf-8"), (b"\xff\xfe", "utf-16-le"), (b"\xfe\xff", "utf-16-be")):
        if head.startswith(bom):
            return head[len(bom):].decode(codec, "replace").lstrip().startswith(("{", "["))
    return head.lstrip().startswith((b"{", b"["))


def _screen_of_docs(path: Path, docs: list[Document], opts: ReadOptions, notes: tuple[str, ...] = ()) -> Screen:
    """The one screen in a source's XML documents, read as the CLI's readers read a file's (readers._dumps)."""
    if len(docs) != 1:
        raise InputError(path, f"holds {len(docs)} XML documents (dumps appended one after another); "
                               "check_source checks one screen: pass each document on its own")
    root, ignored = docs[0]
    if is_android_root(root):
        screen = read_android(path, root, (), include_focusable=opts.include_focusable)
    elif is_ios_root(root):
        screen = read_ios(path, root, (), include_focusable=opts.include_focusable)
    elif is_voc_root(root):
        raise InputError(path, "is a Pascal VOC annotation, which needs its screenshot beside it: pass the "
                               "file's path instead", root.sourceline)
    else:
        raise InputError(path, f"root element is <{root.tag}>; expected <hierarchy> (Android window dump) or "
                               "XCUIElementType* elements (iOS element tree or page source)", root.sourceline)
    said = (*notes, status_notice(ignored)) if ignored else notes
    return replace(screen, notices=(*screen.notices, *said))


def _screen_of_json(path: Path, data: Any, opts: ReadOptions) -> Screen:
    kind, part = json_kind(data)
    if kind == "xml":  # errors placed within the XML in 'value', as the CLI says them
        return _screen_of_docs(path, _documents_in_value(path, part), opts, (_VALUE_NOTE,))
    if kind == "tree":
        where = "value" if part is not data else ""
        return read_ios(path, tree_from_json(path, part, where), (), include_focusable=opts.include_focusable)
    if kind == "error":
        raise server_error(path, part)
    if kind == "coco":
        raise InputError(path, "holds COCO annotations, which need their screenshots beside them: pass the "
                               "file's path instead")
    raise InputError(path, "JSON of a kind check_source does not read; expected a WebDriver page-source "
                           "response ({\"value\": \"<?xml ...\"}) or an iOS element tree in JSON (objects with "
                           "'type', 'rect' or 'frame', and 'children')")


def _read_content(path: Path, content: Content, opts: ReadOptions) -> Screen:
    if isinstance(content, Mapping):
        return _screen_of_json(path, dict(content), opts)
    data = _encoded(path, content) if isinstance(content, str) else content
    if len(data) > MAX_BYTES:
        raise InputError(path, f"is {len(data)} bytes; inputs are limited to {MAX_BYTES}")
    if _is_json(data):
        return _screen_of_json(path, load_json(path, data), opts)
    return _screen_of_docs(path, parse_documents(path, data), opts)


def _encoded(path: Path, text: str) -> bytes:
    try:
        return text.encode("utf-8")
    except UnicodeEncodeError as exc:  # a lone surrogate, which no XML or JSON text can hold
        raise InputError(path, f"holds a character that is not valid text (a lone surrogate, character "
                               f"{exc.start + 1})", text.count("\n", 0, exc.start) + 1) from None


def _check_content(path: Path, content: Content, settings: Settings) -> ScreenResult:
    """The pipeline's per-screen steps (pipeline.check_file) over a screen read in memory."""
    screen = _read_content(path, content, settings.read)
    own = settings.config.for_path(screen.path)
    if screen.platform == "android" and settings.flags.density_dpi is None and own.density_dpi is None:
        raise InputError(path, "an Android window dump is in pixels and needs the screen's density: pass "
                               "density= (dpi such as 420, or a bucket name such as \"xxhdpi\"), or set [device] "
                               "density in tapgauge.toml")
    try:
        device = resolve_device(screen, settings.flags, own)
    except ValueError as exc:
        raise InputError(path, str(exc)) from None
    return check_one_screen(screen, device, settings)  # the same stages as a file, plans included


def _one_screen(path: Path, content: Content | None, settings: Settings) -> ScreenResult:
    try:
        if content is not None:
            return _check_content(path, content, settings)
        screens = check_file(path, settings)
    except RecursionError:
        raise InputError(path, "nested too deeply to read (more than the reader's depth limit)") from None
    if len(screens) != 1:
        raise InputError(path, f"holds {len(screens)} screens; check_source checks one: run `tapgauge check` "
                               "on a file with several")
    return screens[0]


# -- the public functions


def check_source(
    source: Source,
    *,
    name: str | None = None,
    density: str | float | None = None,
    scale: str | float | None = None,
    ppi: str | float | tuple[float, float] | None = None,
    rules: str | Sequence[str] | None = None,
    profiles: str | Sequence[str] | None = None,
    fail_level: str | Severity | None = None,
    all_windows: bool | None = None,
    app_package: str | None = None,
    include_focusable: bool | None = None,
    params: Sequence[str] = (),
    start: str = "centre",
    width_model: str = "approach",
    today: dt.date | str | None = None,
    config_dir: str | os.PathLike[str] | None = None,
) -> ScreenCheck:
    """Check the touch targets of one screen, as `tapgauge check` does.

    source: a path (str or os.PathLike) to a screen file, which is read as the CLI reads it (with
        its device sidecar and screenshot beside it); or the content itself: an Android window dump
        or an iOS page source as XML (str or bytes), a WebDriver page-source response or an iOS
        element tree as JSON text, or such a tree already parsed (a dict). A str is content when it
        starts with "<" or "{" (after blanks), spans lines or is blank; else it is a path.
    name: what a str/bytes/dict source is called in messages and in the record ("<source>" when not
        given). Config patterns ([[devices]] match, waivers' screen) see it as the screen's path.
    density, scale, ppi: as --density (dpi or a bucket name), --scale (pixels per point) and --ppi
        (one number, "X,Y" or a pair); they win over sidecars and the config. Content sources have no
        sidecar: an Android dump needs density here or in the config; mm need ppi (and scale on iOS).
    rules, profiles: ids or TOML paths, comma-separated or a list, as --rules and --profiles.
    fail_level: "error" (default), "warning" or "note": what `passed` and the assertion count.
    all_windows, app_package, include_focusable, params, start, width_model, today: as the CLI's
        --all-windows, --package, --include-focusable, --param, --from, --width-model and --today.
    config_dir: the folder to look for the config from, and up (default: the current folder).

    Raises InputError (tapgauge.InputError) for a source, config, rule or profile file that cannot be
    read, naming it, the line and what was expected; ValueError for a bad argument value, naming it.
    """
    content = _as_content(source)
    if content is None and name is not None:
        raise TypeError("name= names a str, bytes or dict source; a path is called by its own name")
    setup = _setup(config_dir, rules, profiles, fail_level, _device(density, scale, ppi),
                   Scope(all_windows, app_package, include_focusable), params, start, width_model, today)
    settings = setup.settings
    path = Path(name or UNNAMED) if content is not None else Path(os.fspath(source))  # type: ignore[arg-type]
    waived, _ = waive_screen(_one_screen(path, content, settings), settings.waivers)
    context = _Context(settings.rulesets, settings.scoring.profiles)
    return _screen_check(screen_record(waived), setup.level, context)


def assert_touch_targets(source: Source, **options: Unpack[CheckOptions]) -> ScreenCheck:
    """`check_source(source, **options)`, raising AssertionError when the screen does not pass.

    The message is the findings table of what failed: only the failing targets and their open
    findings at or above the fail level, with the screen's totals. A screen where no target was
    measured at all fails too (the CLI never counts "nothing compared" as a pass).
    Returns the result when it passes.
    """
    __tracebackhide__ = True
    return check_source(source, **options).assert_passed()
