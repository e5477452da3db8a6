"""Reports written as screens pass: the same text as writing them whole, totals only at the end.

The oracle for the JSON text is Python's standard-library json module (the reference
encoder the report contract was first written with).
"""

from __future__ import annotations

import io
import json
import os
import shutil
from pathlib import Path

import pytest
from conftest import DEMO
from hypothesis import given, settings
from hypothesis import strategies as st

from tapgauge.cli import main
from tapgauge.jsontext import dumps, write_lines_streamed, write_streamed
from tapgauge.model import STATUSES, InputError, Severity
from tapgauge.pipeline import Settings, iter_results
from tapgauge.readers import discover
from tapgauge.report.records import Checked, Report
from tapgauge.rulesets import DEFAULT_RULESETS, select_rulesets

# JSON values as our records hold them: strings (any Unicode), ints, and floats rounded
# to at most 4 decimals (every float in a record is rounded), nested a few levels.
_floats = st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).map(lambda v: round(v, 4))
_scalars = st.none() | st.booleans() | st.integers(-2**53, 2**53) | _floats | st.text(max_size=12)
_values = st.recursive(_scalars, lambda inner: st.lists(inner, max_size=4)
                       | st.dictionaries(st.text(max_size=6), inner, max_size=4), max_leaves=20)


def _stdlib(obj: object) -> str:
    return json.dumps(obj, indent=2, ensure_ascii=False)


@settings(max_examples=200, deadline=None)
@given(_values)
def test_dumps_writes_what_the_standard_library_writes(value: object) -> None:
    assert dumps(value) == _stdlib(value)  # oracle: stdlib json, indent=2, ensure_ascii=False


def test_dumps_falls_back_for_what_orjson_refuses() -> None:
    big = {"n": 2**70, 1: "int key"}
    assert dumps(big) == _stdlib(big)


@settings(max_examples=150, deadline=None)
@given(head=st.dictionaries(st.text(max_size=5), _values, max_size=3), items=st.lists(_values, max_size=5),
       tail=_values, nested=st.booleans(), mapping=st.booleans())
def test_streamed_document_is_the_whole_document(head: dict, items: list, tail: object, nested: bool,
                                                mapping: bool) -> None:
    """Splicing the list in as it arrives gives the same text as dumping the document at once."""
    pairs = [(f"k{n}", v) for n, v in enumerate(items)]
    streamed = dict(pairs) if mapping else items

    def document(marker: object, final: bool) -> dict:
        body = {"list": marker, "tail": tail if final else None}
        inner = {"runs": [{"x": 1, **body}]} if nested else body
        return {**{f"h{k}": v for k, v in head.items()}, **inner}

    out = io.StringIO()
    write_streamed(out, document, pairs if mapping else items, mapping=mapping)
    assert out.getvalue() == _stdlib(document(streamed, True)) + "\n"


@settings(max_examples=150, deadline=None)
@given(head=st.dictionaries(st.text(max_size=5), _values, max_size=3), items=st.lists(_values, max_size=5),
       tail=_values, nested=st.booleans())
def test_one_item_a_line_is_the_whole_document(head: dict, items: list, tail: object, nested: bool) -> None:
    """The JSON report's form: the same JSON value as the document at once (oracle: the standard
    library's parser), each item on a line of its own."""
    def document(marker: object, final: bool) -> dict:
        body = {"list": marker, "tail": tail if final else None}
        inner = {"runs": [{"x": 1, **body}]} if nested else body
        return {**{f"h{k}": v for k, v in head.items()}, **inner}

    out = io.StringIO()
    write_lines_streamed(out, document, (json.dumps(v, ensure_ascii=False) for v in items))
    text = out.getvalue()
    assert json.loads(text) == document(items, True) and text.endswith("\n")
    lines = text.split("\n")[:-1]  # JSON Lines' separator; text may hold U+0085 or U+2028, which splitlines() splits on
    assert len(lines) == (len(items) + 2 if items else 1)
    assert [json.loads(line.rstrip(",")) for line in lines[1:-1]] == items


def _record(path: str, statuses: list[str]) -> dict:
    return {"path": path, "name": None, "targets": [
        {"status": s, "findings": [{"severity": "error", "waiver": None}] if s == "fail" else []} for s in statuses],
        "summary": {"targets": len(statuses), **{s: statuses.count(s) for s in STATUSES}}}


def test_report_counts_as_screens_pass_and_keeps_none() -> None:
    items = iter([Checked.of(_record("a.xml", ["pass", "fail"])), InputError(Path("b.xml"), "broken", 3),
                  Checked.of(_record("c.xml", ["pass", "unchecked"]))])
    seen: list[str] = []
    report = Report(items, [], Severity.ERROR, on_error=lambda e: seen.append(e["path"]))
    with pytest.raises(RuntimeError):
        _ = report.summary  # totals are not known before the screens have passed
    assert [s["path"] for s in report.screens] == ["a.xml", "c.xml"]
    assert seen == ["b.xml"]  # errors are announced as they happen
    summary = report.summary
    assert (summary["screens"], summary["targets"], summary["pass"], summary["fail"], summary["unchecked"]) == (2, 4, 2, 1, 1)
    assert summary["findings"]["error"] == 1 and report.exit_code == 2  # an unreadable file outranks findings
    with pytest.raises(RuntimeError):
        list(report.screens)  # a live report is read once


def test_spooled_report_reads_its_screens_again() -> None:
    items = iter([Checked.of(_record(f"s{k}.xml", ["fail"])) for k in range(3)])
    with Report(items, [], Severity.ERROR).spooled() as report:
        first = [s["path"] for s in report.screens]
        assert first == [s["path"] for s in report.screens] == ["s0.xml", "s1.xml", "s2.xml"]
        assert report.summary["fail"] == 3 and report.exit_code == 1


def test_baseline_refuses_a_screen_id_given_twice(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    """Two folders holding the same relative file would overwrite each other in the baseline."""
    for name in ("one", "two"):
        (tmp_path / name).mkdir()
        shutil.copy(DEMO / "releases" / "v1" / "plot_detail.xml", tmp_path / name / "plot_detail.xml")
        shutil.copy(DEMO / "releases" / "v1" / "device.txt", tmp_path / name / "device.txt")
    monkeypatch.chdir(tmp_path)
    assert main(["baseline", "one", "two", "-o", "b.json"]) == 2
    assert "given twice" in capsys.readouterr().err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["one", "two"]  # nothing half-written left behind


# --- Files found as the run goes, in the report's order, with no list of them kept ---

_NAMES = st.sampled_from(["a", "a.xml", "a-b.xml", "ab.xml", "a b.xml", "A.xml", "b", "b.xml", "_x.xml", "0.xml"])


@settings(max_examples=40, deadline=None)
@given(st.lists(st.lists(_NAMES, min_size=1, max_size=3), min_size=1, max_size=12))
def test_lazy_walk_comes_out_as_a_sorted_list_of_paths(tmp_path_factory: pytest.TempPathFactory,
                                                      chains: list[list[str]]) -> None:
    root = tmp_path_factory.mktemp("walk")
    for chain in chains:  # folders along the chain, a screen file at its end
        *folders, leaf = chain
        where = root.joinpath(*folders)
        if any(p.is_file() for p in [where, *where.parents] if p != root and root in p.parents):
            continue  # a name already taken by a file
        where.mkdir(parents=True, exist_ok=True)
        if not (where / leaf).is_dir():
            (where / leaf).write_text("<hierarchy/>")
    found, errors = discover([root])
    expected = [Path(d, f) for d, _, fs in os.walk(root) for f in fs if f.endswith(".xml")]
    # oracle: Python's own sort of the full path strings, over what os.walk lists
    assert [p.as_posix() for p in found] == sorted(p.as_posix() for p in expected)
    assert not errors


def test_a_folder_that_cannot_be_read_is_an_error_and_the_rest_are_checked(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    shutil.copytree(DEMO, tmp_path / "demo")
    main(["check", str(tmp_path / "demo"), "-f", "json", "-o", str(tmp_path / "all.json")])
    locked = tmp_path / "demo" / "zz-locked"
    locked.mkdir()
    shutil.copytree(DEMO / "android", locked / "android")
    real = os.scandir

    def scandir(path: object) -> object:
        if Path(str(path)) == locked:
            raise PermissionError(13, "Permission denied")
        return real(path)  # type: ignore[arg-type]

    monkeypatch.setattr(os, "scandir", scandir)  # running as root, chmod would not stop the walk
    code = main(["check", str(tmp_path / "demo"), "-f", "json", "-o", str(tmp_path / "r.json")])
    report = json.loads((tmp_path / "r.json").read_text())
    assert code == 2  # an input error, not findings alone
    assert [e["path"].endswith("zz-locked") for e in report["errors"]] == [True]
    assert "cannot read this folder" in report["errors"][0]["message"]
    everything = json.loads((tmp_path / "all.json").read_text())
    assert [s["path"] for s in report["screens"]] == [s["path"] for s in everything["screens"]]


def test_a_file_reached_twice_is_checked_once(tmp_path: Path) -> None:
    shutil.copytree(DEMO, tmp_path / "demo")
    one = min((tmp_path / "demo").rglob("*.xml"))
    st_ = Settings(tuple(select_rulesets(list(DEFAULT_RULESETS))))
    twice = [r for r in iter_results([tmp_path / "demo", one], st_) if not isinstance(r, InputError)]
    once = [r for r in iter_results([tmp_path / "demo"], st_) if not isinstance(r, InputError)]
    assert [r.screen.path for r in twice] == [r.screen.path for r in once]


def test_progress_counts_every_file_and_ends_at_its_total(tmp_path: Path) -> None:
    shutil.copytree(DEMO, tmp_path / "demo")
    ticks: list[tuple[int, int]] = []
    settings_ = Settings(tuple(select_rulesets(list(DEFAULT_RULESETS))))
    list(iter_results([tmp_path / "demo", tmp_path / "nope"], settings_, 2, lambda d, t: ticks.append((d, t))))
    files, errors = discover([tmp_path / "demo", tmp_path / "nope"])
    assert ticks[-1] == (len(files) + len(errors), len(files) + len(errors))
    assert [d for d, _ in ticks] == list(range(1, len(ticks) + 1))


def test_a_run_with_workers_leaves_the_collector_as_it_found_it(tmp_path: Path) -> None:
    """Workers fork from a frozen parent (the Python documentation's advice for fork, under
    gc.freeze), and an in-process caller gets its collector back: nothing stays frozen, so a
    cycle made before the run can still be collected after it; a caller's own freeze is kept."""
    import gc
    import weakref

    shutil.copytree(DEMO, tmp_path / "demo")
    settings_ = Settings(tuple(select_rulesets(list(DEFAULT_RULESETS))))

    class Node:
        pass

    cycle = Node()
    cycle.me = cycle  # type: ignore[attr-defined]
    alive = weakref.ref(cycle)
    assert gc.get_freeze_count() == 0
    out = list(iter_results([tmp_path / "demo"], settings_, 2))
    assert out and gc.get_freeze_count() == 0
    main(["check", str(tmp_path / "demo"), "-f", "html", "-o", str(tmp_path / "r.html"), "-j", "2", "-q"])
    assert (tmp_path / "r.html").is_file() and gc.get_freeze_count() == 0  # the drawing processes' too
    del cycle
    gc.collect()
    assert alive() is None  # collected: it was not left in the permanent generation

    mine = Node()  # a caller that froze its own objects (a pre-fork server) keeps them frozen
    gc.freeze()
    try:
        list(iter_results([tmp_path / "demo"], settings_, 2))
        assert gc.get_freeze_count() > 0
        assert not any(o is mine for o in gc.get_objects())  # still in the permanent generation
    finally:
        gc.unfreeze()
    assert any(o is mine for o in gc.get_objects())  # (and gc.get_objects does list it once unfrozen)


def _collector_state(path: Path, settings: Settings) -> list[bool]:
    """A worker's `work`: whether its garbage collector runs (module level, so that a pool can call it)."""
    import gc

    return [gc.isenabled()]


def test_workers_collect_though_they_fork_while_the_parent_pauses_its_collector(tmp_path: Path) -> None:
    """The gate pauses the main process's collector over its comparison (heap.collector_paused), and its
    workers fork inside that pause: they turn theirs back on (a forked child inherits the parent's
    collector state), and the caller gets its own back when the pause ends."""
    import gc

    from tapgauge.heap import collector_paused

    shutil.copytree(DEMO, tmp_path / "demo")
    settings_ = Settings(tuple(select_rulesets(list(DEFAULT_RULESETS))))
    with collector_paused():
        assert not gc.isenabled()
        states = list(iter_results([tmp_path / "demo"], settings_, 2, work=_collector_state))
    assert gc.isenabled()
    assert len(states) > 2 and all(states)


def test_the_receiving_process_maps_large_blocks_and_starts_without_mallopt(monkeypatch: pytest.MonkeyPatch) -> None:
    """The tapgauge process fixes glibc's mmap threshold at 64 KiB, so the pieces a worker's results
    arrive in (64 KiB of data and a bytes object's header) are mapped and returned whole. The GNU C
    Library manual, "Malloc Tunable Parameters" (3.2.3.7): chunks larger than M_MMAP_THRESHOLD (-3
    in malloc.h) are mapped, and setting it disables the threshold's dynamic adjustment. Where the
    C library has no mallopt (macOS, Windows), it starts all the same."""
    import ctypes

    from tapgauge.heap import map_large_blocks

    calls: list[tuple[int, int]] = []

    class Libc:
        def __init__(self, name: object) -> None:
            self.mallopt = lambda param, value: calls.append((param, value)) or 1

    monkeypatch.setattr(ctypes, "CDLL", Libc)
    map_large_blocks()
    assert calls == [(-3, 65536)]

    class NoMallopt:
        def __init__(self, name: object) -> None:
            pass

    monkeypatch.setattr(ctypes, "CDLL", NoMallopt)
    map_large_blocks()  # no AttributeError
