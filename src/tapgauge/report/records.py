"""Findings as plain records: the one JSON-ready form every writer consumes.

Deterministic: screens in path order (the pipeline hands them over sorted, so they can
be written as they arrive), targets in document order, no clock.
"""

from __future__ import annotations

import tempfile
from collections import Counter
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import orjson

from tapgauge import __version__
from tapgauge.identity import target_keys
from tapgauge.jsontext import dumps
from tapgauge.model import (
    SEVERITY_BY_LABEL,
    STATUSES,
    Finding,
    InputError,
    RuleSet,
    ScreenResult,
    Severity,
    TargetResult,
)
from tapgauge.profiles import Profile
from tapgauge.report.document import screen_text, target_document
from tapgauge.report.verdict import DISCLAIMER
from tapgauge.waivers import Waivers, outcomes, waiver_records

REPORT_FORMAT = "tapgauge-report"
REPORT_VERSION = 2

EXIT_OK = 0
EXIT_FINDINGS = 1
EXIT_ERROR = 2

# The run's one verdict, which every format states, and its exit code.
EXIT_CODES = {"pass": EXIT_OK, "fail": EXIT_FINDINGS, "input-errors": EXIT_ERROR, "nothing-compared": EXIT_ERROR}
COMPARED = ("pass", "fail", "exempt")  # statuses of targets that were measured against the rules


def display_path(path: Path | str) -> str:
    p = Path(path)
    try:
        if p.is_absolute():
            return p.relative_to(Path.cwd()).as_posix()
    except ValueError:
        pass
    return p.as_posix()


def ruleset_record(rs: RuleSet) -> dict[str, Any]:
    return {
        "id": rs.id, "title": rs.title, "source": rs.source, "url": rs.url, "platforms": list(rs.platforms),
        "rules": [
            {"id": r.id, "kind": r.kind, "summary": r.summary, "severity": r.severity.label, "unit": r.unit,
             "params": dict(r.params), "source": r.source, "url": r.url}
            for r in rs.rules
        ],
    }


def profile_record(p: Profile) -> dict[str, Any]:
    return {"id": p.id, "title": p.title, "intercept_ms": p.intercept_ms, "slope_ms_per_bit": p.slope_ms_per_bit,
            "alpha": p.alpha, "sigma_a_mm": p.sigma_a_mm, "timing_source": p.timing_source,
            "spread_source": p.spread_source, "path": p.path}


_LABEL = {s: s.label for s in Severity}  # the enum's property is slow in a per-finding loop


def _finding_record(f: Finding) -> dict[str, Any]:
    return {"rule": f.rule_id, "severity": _LABEL[f.severity], "measured": f.measured, "required": f.required,
            "unit": f.unit, "message": f.message, "other": f.other,
            "waiver": None if f.waiver is None else {"reason": f.waiver[0], "author": f.waiver[1], "expires": f.waiver[2]}}


def target_record(tr: TargetResult, key: str) -> dict[str, Any]:
    t = tr.target
    return {
        "number": t.number,
        "key": key,
        "line": t.line,
        "class": t.cls,
        "label": t.label,
        "resource_id": t.resource_id,
        "name": t.name,
        "bounds": list(t.bounds),
        "size": {"width": tr.size_unit[0], "height": tr.size_unit[1]},
        "size_mm": None if tr.size_mm is None else {"width": tr.size_mm[0], "height": tr.size_mm[1]},
        "status": tr.status,
        "reason": tr.reason,
        "findings": [_finding_record(f) for f in tr.findings],
        "notes": list(tr.notes),
        "approach": None if tr.approach is None else {
            "width": tr.approach.width, "distance": tr.approach.distance, "id_bits": tr.approach.id_bits},
        "difficulty": [{"profile": d.profile, "time_ms": d.time_ms, "miss_probability": d.miss} for d in tr.difficulty],
        "plan": None if tr.plan is None else _plan_record(tr.plan),
    }


def _plan_record(p: Any) -> dict[str, Any]:
    """A fix plan: the touch area in the source's coordinates, growth per side (or the move) in the platform unit."""
    return {"kind": p.kind, "bounds": [round(v, 2) for v in p.bounds],
            "growth": dict(zip(("left", "top", "right", "bottom"), (round(g, 2) for g in p.growth))),
            "move": {"target": p.mover, "dx": round(p.move[0], 2), "dy": round(p.move[1], 2)},
            "missing": round(p.missing, 2),
            "rules": list(p.rules), "text": p.text}


def _plan_summary(sr: ScreenResult) -> dict[str, Any]:
    """How many failures the plans fix by touch area alone, how many need a move, and the area added."""
    grow = [t for t in sr.targets if t.plan is not None and t.plan.kind == "grow"]
    added = 0.0
    for t in grow:
        w0, h0 = t.size_unit
        left, top, right, bottom = (round(g, 2) for g in t.plan.growth)  # as the record states them
        added += (w0 + left + right) * (h0 + top + bottom) - w0 * h0
    return {"grow": len(grow), "move": sum(1 for t in sr.targets if t.plan is not None and t.plan.kind == "move"),
            "area_added": round(added, 1), "unit": f"{sr.device.unit}2"}


def screen_record(sr: ScreenResult, document: bool = False) -> dict[str, Any]:
    """The screen's whole record; with `document`, as the JSON report holds it (report/document.py)."""
    d = sr.device
    keys = target_keys([t.target for t in sr.targets])
    make = target_document if document else target_record
    targets = [make(t, k) for t, k in zip(sr.targets, keys)]
    return {
        "path": display_path(sr.screen.path),
        "name": sr.screen.name,
        "platform": d.platform,
        "coordinates": sr.screen.coords,
        "width": sr.screen.width,
        "height": sr.screen.height,
        "rotation": sr.screen.rotation,
        "image": display_path(sr.screen.image) if sr.screen.image else None,
        "device": {
            "unit": d.unit, "coords_per_unit": d.coords_per_unit, "unit_source": d.unit_source,
            "density_dpi": d.density_dpi, "scale": d.scale, "scale_source": d.scale_source,
            "xdpi": d.xdpi, "ydpi": d.ydpi, "ppi_source": d.ppi_source,
        },
        "rulesets": list(sr.rulesets),
        "reach": None if sr.start is None else {
            "from": sr.start[0], "x": sr.start[1], "y": sr.start[2], "unit": d.unit, "approach_unit": sr.reach_unit,
        },
        "notices": list(sr.notices),
        "targets": targets,
        "summary": _status_counts(targets),
        "plans": _plan_summary(sr),
    }


def _status_counts(targets: list[dict[str, Any]]) -> dict[str, int]:
    counts = Counter(t["status"] for t in targets)
    return {"targets": len(targets), **{s: counts.get(s, 0) for s in STATUSES}}


def error_record(err: InputError) -> dict[str, Any]:
    return {"path": display_path(err.path), "line": err.line, "message": err.message}


@dataclass(frozen=True)
class Totals:
    """What the report counts of one screen, so it need not read the record again."""

    statuses: tuple[tuple[str, int], ...]  # (status, targets), every status
    open_findings: tuple[tuple[str, int], ...]  # (severity, unwaived findings on failing targets)
    worst_per_target: tuple[tuple[int, int], ...]  # (worst open severity value, failing targets with it)


def screen_totals(rec: dict[str, Any]) -> Totals:
    counts: Counter[str] = Counter()
    worst: Counter[int] = Counter()
    for t in rec["targets"]:
        if t["status"] == "fail":
            levels = [SEVERITY_BY_LABEL[f["severity"]] for f in t["findings"] if not f["waiver"]]
            for f in t["findings"]:
                if not f["waiver"]:
                    counts[f["severity"]] += 1
            if levels:
                worst[int(max(levels))] += 1
    return Totals(tuple((s, rec["summary"][s]) for s in STATUSES), tuple(sorted(counts.items())),
                  tuple(sorted(worst.items())))


def result_totals(sr: ScreenResult) -> Totals:
    """`screen_totals(screen_record(sr))`, without making the record."""
    counts: dict[str, int] = {}
    worst: dict[int, int] = {}
    statuses: dict[str, int] = {}
    for t in sr.targets:
        status = t.status
        statuses[status] = statuses.get(status, 0) + 1
        if status == "fail":
            w = 0
            for f in t.findings:
                if not f.waiver:
                    label = _LABEL[f.severity]
                    counts[label] = counts.get(label, 0) + 1
                    w = max(w, f.severity)
            if w:
                w = int(w)
                worst[w] = worst.get(w, 0) + 1
    return Totals(tuple((s, statuses.get(s, 0)) for s in STATUSES), tuple(sorted(counts.items())),
                  tuple(sorted(worst.items())))


def open_at(t: dict[str, Any], level: Severity) -> list[dict[str, Any]]:
    """A target's open findings at or above the fail level: what fails a run, and a JUnit case.

    Only a failing target has them: a partial one (only partly in view) was not measured reliably
    enough to fail, and an exempt one has every finding waived.
    """
    if t["status"] != "fail":
        return []
    return [f for f in t["findings"] if not f["waiver"] and SEVERITY_BY_LABEL[f["severity"]] >= level]


class Checked:
    """What the pipeline hands on per screen: its record, its totals, and how many findings
    each waiver matched.

    Between processes it travels as JSON text, not as nested dicts: text crosses far more
    cheaply, and the JSON writers write it as it is. `document_of` makes the report document's
    text at once, straight from the results, and sends only that (the JSON and JSON Lines reports need
    nothing else), so the worker, not the parent, pays for it. Each other form is made from
    the record only when asked for, so a run that never needs one never pays for it.
    """

    __slots__ = ("_doc", "_record", "_text", "totals", "waived")

    def __init__(self, text: str | None, totals: Totals, waived: tuple[int, ...] = (),
                 record: dict[str, Any] | None = None, doc: str | None = None) -> None:
        if text is None and record is None and doc is None:
            raise ValueError("a checked screen needs its record or its text")
        self._text = text
        self.totals = totals
        self.waived = waived
        self._record = record
        self._doc = doc

    @classmethod
    def of(cls, record: dict[str, Any], waived: tuple[int, ...] = ()) -> Checked:
        return cls(None, screen_totals(record), waived, record)

    @classmethod
    def document_of(cls, sr: ScreenResult, waived: tuple[int, ...] = ()) -> Checked:
        """The screen as its JSON report text only, made straight from its results (no record)."""
        return cls(None, result_totals(sr), waived, None, orjson.dumps(screen_record(sr, document=True)).decode("utf-8"))

    @property
    def _doc_only(self) -> bool:  # made by document_of: the text of the JSON report and nothing else
        return self._text is None and self._record is None

    @property
    def text(self) -> str:
        if self._text is None:
            self._text = dumps(self.record)
        return self._text

    @property
    def record(self) -> dict[str, Any]:
        if self._record is None:
            if self._doc_only:
                raise RuntimeError("this screen was handed over as its report document only")
            self._record = orjson.loads(self.text)
        return self._record

    @property
    def document(self) -> str:
        """The screen's entry in the JSON report, as compact JSON text."""
        if self._doc is None:
            self._doc = screen_text(self.record)
        return self._doc

    def __reduce__(self) -> tuple[type, tuple[Any, ...]]:
        if self._doc_only:
            return (Checked, (None, self.totals, self.waived, None, self._doc))
        return (Checked, (self.text, self.totals, self.waived))  # the dict stays behind


class Report:
    """A report whose screens pass by once, in order, as they are checked.

    The head (rule sets, profiles, fail level) is known at once; `summary`, `errors`
    and `waivers` only when every screen has passed. Nothing but running totals is
    kept, so memory does not grow with the number of screens. `spooled()` gives a
    report whose screens can be read again (for formats that put totals first).
    """

    def __init__(self, items: Iterable[Checked | InputError], rulesets: list[RuleSet], fail_level: Severity,
                 profiles: list[Profile] | None = None, waivers: Waivers | None = None,
                 on_error: Callable[[dict[str, Any]], None] | None = None) -> None:
        self.fail_level = fail_level.label
        self.rulesets = [ruleset_record(rs) for rs in rulesets]
        self.profiles = [profile_record(p) for p in profiles or []]
        self._level = fail_level
        self._items = items
        self._waivers = waivers or Waivers()
        self._on_error = on_error
        self._observers: list[Callable[[dict[str, Any]], None]] = []
        self._started = False
        self._done = False
        self._screens = 0
        self._statuses: Counter[str] = Counter()
        self._severities: Counter[str] = Counter()
        self._failing = 0  # targets with an open finding at or above the fail level
        self._errors: list[dict[str, Any]] = []
        self._matched = [0] * len(self._waivers.waivers)

    def observe(self, fn: Callable[[dict[str, Any]], None]) -> None:
        """Call `fn` with each screen's record as it passes (overlays are drawn this way)."""
        self._observers.append(fn)

    @property
    def screens(self) -> Iterator[dict[str, Any]]:
        """Each screen's record, as a dict."""
        return (c.record for c in self._checked())

    @property
    def screen_texts(self) -> Iterator[str | bytes]:
        """Each screen's record as JSON text (orjson.loads gives the dict): what crosses to another
        process for less than the dict."""
        return (c.text for c in self._checked())

    @property
    def screen_documents(self) -> Iterator[str]:
        """Each screen's entry in the JSON report, as compact JSON text (report/document.py)."""
        return (c.document for c in self._checked())

    def _checked(self) -> Iterator[Checked]:
        if self._started:
            raise RuntimeError("a live report's screens can be read only once; use spooled()")
        self._started = True
        for item in self._items:
            if isinstance(item, InputError):
                rec = error_record(item)
                self._errors.append(rec)
                if self._on_error:
                    self._on_error(rec)
                continue
            self._screens += 1
            for k, n in enumerate(item.waived):
                self._matched[k] += n
            totals = item.totals
            self._statuses.update(dict(totals.statuses))
            self._severities.update(dict(totals.open_findings))
            self._failing += sum(n for worst, n in totals.worst_per_target if worst >= self._level)
            for fn in self._observers:
                fn(item.record)
            yield item
        self._done = True

    def _final(self) -> None:
        if not self._done:
            raise RuntimeError("report totals read before every screen has passed")

    @property
    def errors(self) -> list[dict[str, Any]]:
        self._final()
        return sorted(self._errors, key=lambda r: (r["path"], r["line"] or 0))

    @property
    def waivers(self) -> list[dict[str, Any]]:
        self._final()
        return waiver_records(outcomes(self._waivers, self._matched))

    @property
    def compared(self) -> int:
        """Targets measured against the rules: nothing compared is never success."""
        self._final()
        return sum(self._statuses.get(s, 0) for s in COMPARED)

    @property
    def verdict(self) -> str:
        self._final()
        if self._errors:
            return "input-errors"
        if not self.compared:
            return "nothing-compared"
        return "fail" if self._failing else "pass"

    @property
    def exit_code(self) -> int:
        return EXIT_CODES[self.verdict]

    @property
    def summary(self) -> dict[str, Any]:
        self._final()
        return {
            "screens": self._screens,
            "errors": len(self._errors),
            "targets": sum(self._statuses.values()),
            **{s: self._statuses.get(s, 0) for s in STATUSES},
            "findings": {s.label: self._severities.get(s.label, 0) for s in sorted(Severity, reverse=True)},
            "failing": self._failing,
            "verdict": self.verdict,
            "exit_code": self.exit_code,
        }

    def head(self) -> dict[str, Any]:
        return {"format": REPORT_FORMAT, "version": REPORT_VERSION, "tool": {"name": "tapgauge", "version": __version__},
                "disclaimer": DISCLAIMER, "fail_level": self.fail_level, "rulesets": self.rulesets, "profiles": self.profiles}

    def document(self, screens: Any, final: bool) -> dict[str, Any]:
        """The report document (JSON contract) with `screens` in place of the screen list."""
        return {**self.head(), "screens": screens, "waivers": self.waivers if final else [],
                "errors": self.errors if final else [], "summary": self.summary if final else {}}

    @contextmanager
    def spooled(self, folder: Path | None = None) -> Iterator[Report]:
        """This report with its screens kept in a temporary file, to be read as often as needed.

        The file goes in `folder` (beside the report being written, on the disk the user
        chose for it) or else in the system's temporary folder; it is removed afterwards.
        """
        with tempfile.TemporaryDirectory(prefix=".tapgauge-", dir=folder) as tmp:
            spool = Path(tmp) / "screens.json-texts"
            with spool.open("wb") as fh:
                for c in self._checked():
                    data = c.text.encode("utf-8")
                    fh.write(len(data).to_bytes(8, "little") + data)
            yield _Spooled(self, spool)


class _Spooled(Report):
    def __init__(self, live: Report, spool: Path) -> None:  # takes the live report's totals
        self.__dict__.update(live.__dict__)
        self._spool = spool

    @property
    def screens(self) -> Iterator[dict[str, Any]]:
        return (orjson.loads(text) for text in self._read())

    @property
    def screen_texts(self) -> Iterator[str | bytes]:
        return self._read()

    def _read(self) -> Iterator[bytes]:
        with self._spool.open("rb") as fh:
            while size := fh.read(8):
                yield fh.read(int.from_bytes(size, "little"))
