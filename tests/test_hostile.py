"""Hostile and broken input: every reader gives a clear error for that file, the batch goes on,
nothing half-written is left, and inputs are never changed. Fuzzing is bounded for CI."""

from __future__ import annotations

import errno
import hashlib
import json
import os
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from PIL import Image

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.model import InputError
from tapgauge.pipeline import Settings, check_one
from tapgauge.readers import discover, read_screens
from tapgauge.textfile import MAX_BYTES
from tapgauge.rulesets import select_rulesets

FUZZ = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
ANDROID = (DEMO / "android" / "plot_detail.xml").read_bytes()
IOS = (DEMO / "ios" / "seed_tray.xml").read_bytes()
SETTINGS = Settings(tuple(select_rulesets(["wcag-2.5.8", "android-guidance"])))


def _outcome(path: Path) -> str:
    """A file must give screens or an InputError; anything else is a crash."""
    try:
        read_screens(path)
        return "ok"
    except InputError:
        return "error"


def _mutate(data: bytes, cuts: list[tuple[int, bytes]]) -> bytes:
    out = bytearray(data)
    for pos, junk in cuts:
        p = pos % (len(out) + 1)
        out[p:p + len(junk)] = junk
    return bytes(out)


mutations = st.lists(st.tuples(st.integers(0, 10**6), st.binary(min_size=1, max_size=12)), min_size=1, max_size=6)


@FUZZ
@given(mutations)
def test_fuzzed_android_dumps_never_crash(tmp_path: Path, cuts: list[tuple[int, bytes]]) -> None:
    p = tmp_path / "f.xml"
    p.write_bytes(_mutate(ANDROID, cuts))
    (tmp_path / "device.txt").write_text("density: 440\n")
    assert _outcome(p) in ("ok", "error")
    results = check_one(p, SETTINGS)  # the whole pipeline, not just the reader
    assert all(isinstance(r, InputError) or r.screen.path == p for r in results)


@FUZZ
@given(mutations)
def test_fuzzed_ios_trees_never_crash(tmp_path: Path, cuts: list[tuple[int, bytes]]) -> None:
    p = tmp_path / "t.xml"
    p.write_bytes(_mutate(IOS, cuts))
    assert _outcome(p) in ("ok", "error")


@FUZZ
@given(st.text(max_size=300), st.sampled_from(["boxes.csv", "boxes.json", "shot.txt", "shot.xml"]))
def test_fuzzed_annotations_never_crash(tmp_path: Path, text: str, name: str) -> None:
    Image.new("RGB", (50, 40)).save(tmp_path / "shot.png")
    (tmp_path / "classes.txt").write_text("button\n")
    p = tmp_path / name
    p.write_text(text)
    assert _outcome(p) in ("ok", "error")


@FUZZ
@given(st.lists(st.tuples(st.sampled_from(["image", "left", "top", "right", "bottom", "class"]),
                          st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(str),
                                    st.sampled_from(["shot.png", "button", "", "-1", "1e308", "nan"]))),
                max_size=8))
def test_fuzzed_csv_rows_never_crash(tmp_path: Path, cells: list[tuple[str, str]]) -> None:
    Image.new("RGB", (50, 40)).save(tmp_path / "shot.png")
    row = {"image": "shot.png", "left": "1", "top": "1", "right": "5", "bottom": "5", "class": "button"}
    row.update(dict(cells))
    p = tmp_path / "boxes.csv"
    p.write_text(",".join(row) + "\n" + ",".join(row.values()) + "\n")
    assert _outcome(p) in ("ok", "error")


@pytest.mark.parametrize(("body", "expect"), [
    (b'<?xml version="1.0"?><!DOCTYPE h [<!ENTITY x SYSTEM "http://127.0.0.1:9/x">]><hierarchy>&x;</hierarchy>', "DOCTYPE"),
    (b'<?xml version="1.0"?><!DOCTYPE h SYSTEM "file:///etc/passwd"><hierarchy/>', "DOCTYPE"),
    (b"<hierarchy>" + b"<node bounds='[0,0][1,1]'>" * 5000 + b"</node>" * 5000 + b"</hierarchy>", "malformed XML"),
    (b"<hierarchy><node text='\xff\xfe' bounds='[0,0][1,1]'/></hierarchy>", "malformed XML"),
    (b"<hierarchy><node clickable='true' bounds='[0,0][99999999999999999999,1]'/></hierarchy>", "outside any plausible"),
    (b"\x89PNG\r\n\x1a\n", "malformed XML"),
])
def test_hostile_xml_is_refused_with_a_clear_error(tmp_path: Path, body: bytes, expect: str) -> None:
    p = tmp_path / "h.xml"
    p.write_bytes(body)
    with pytest.raises(InputError, match=expect):
        read_screens(p)


def test_huge_files_are_refused_before_reading(tmp_path: Path) -> None:
    p = tmp_path / "huge.xml"
    with open(p, "wb") as fh:  # sparse: costs no disk
        fh.truncate(MAX_BYTES + 1)
    with pytest.raises(InputError, match="limited to"):
        read_screens(p)


def test_unreadable_file_is_an_error_for_that_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                  capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "device.txt").write_text("density: 440\n")
    (tmp_path / "good.xml").write_bytes(ANDROID)
    (tmp_path / "locked.xml").write_bytes(ANDROID)
    real = Path.read_bytes

    def read_bytes(self: Path) -> bytes:  # root ignores file modes, so refuse the way the OS would
        if self.name == "locked.xml":
            raise PermissionError(errno.EACCES, "Permission denied", str(self))
        return real(self)

    monkeypatch.setattr(Path, "read_bytes", read_bytes)
    assert main(["check", str(tmp_path), "-f", "json", "-j", "1"]) == 2
    rep = json.loads(capsys.readouterr().out)
    assert [s["path"].rsplit("/", 1)[-1] for s in rep["screens"]] == ["good.xml"]
    assert "Permission denied" in rep["errors"][0]["message"]


@pytest.mark.parametrize("fmt", ["json", "md", "junit", "table"])  # streamed, and spooled (totals first)
def test_a_full_disk_leaves_nothing_half_written(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                 capsys: pytest.CaptureFixture[str], fmt: str) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "report.json").write_text("previous report")
    import os as _os

    def no_space(fd: int) -> None:
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(_os, "fsync", no_space)
    code = main(["check", str(DEMO / "android"), "-f", fmt, "-o", str(out / "report.json")])
    assert code == 2 and "No space left" in capsys.readouterr().err
    assert [p.name for p in out.iterdir()] == ["report.json"]  # no temporary file left behind
    assert (out / "report.json").read_text() == "previous report"  # the old report is intact


def test_output_into_a_file_instead_of_a_folder_is_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "afile").write_text("x")
    assert main(["check", str(DEMO / "android"), "-o", str(tmp_path / "afile" / "r.json")]) == 2
    assert main(["check", str(DEMO / "android"), "--overlay", str(tmp_path / "afile")]) == 2


def _digest(folder: Path) -> dict[str, str]:
    return {p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def test_inputs_are_never_changed(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    before = _digest(DEMO)
    for args in (["check", str(DEMO), "-f", "html", "-o", str(tmp_path / "r.html"), "--overlay", str(tmp_path / "o")],
                 ["baseline", str(DEMO / "releases" / "v1"), "-o", str(tmp_path / "b.json")],
                 ["gate", str(DEMO / "releases" / "v2"), "-b", str(tmp_path / "b.json")]):
        main(args)
    capsys.readouterr()
    assert _digest(DEMO) == before


def test_results_do_not_depend_on_the_number_of_workers(capsys: pytest.CaptureFixture[str]) -> None:
    outs = []
    for jobs in ("1", "2"):
        main(["check", str(DEMO), "-f", "json", "-j", jobs])
        outs.append(capsys.readouterr().out)
    assert outs[0] == outs[1]


# Regression tests for crashes the fuzzers found.

def test_regression_csv_row_with_an_empty_image_name(tmp_path: Path) -> None:
    # Found by test_fuzzed_csv_rows_never_crash: Path.with_name("") raised ValueError.
    p = tmp_path / "boxes.csv"
    p.write_text("image,left,top,right,bottom,class\n,1,1,5,5,button\n")
    with pytest.raises(InputError, match="is not beside the CSV"):
        read_screens(p)


def test_regression_coco_image_with_an_empty_file_name(tmp_path: Path) -> None:
    # The same ValueError, reached through a COCO file with "file_name": "".
    p = tmp_path / "boxes.json"
    p.write_text(json.dumps({"images": [{"id": 1, "file_name": "", "width": 5, "height": 5}],
                             "annotations": [], "categories": []}))
    with pytest.raises(InputError, match="not beside the COCO file"):
        read_screens(p)


def test_huge_sidecars_and_bad_text_files_are_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Every text input goes through one bounded reader: huge is refused unread, non-UTF-8 names the line.
    (tmp_path / "s.xml").write_bytes(ANDROID)
    with open(tmp_path / "device.txt", "wb") as fh:
        fh.truncate(MAX_BYTES + 1)
    with pytest.raises(InputError, match="device sidecar is .* bytes"):
        read_screens(tmp_path / "s.xml")
    journey = tmp_path / "t.journey"
    journey.write_bytes(b"start centre\n\xff\xfe touch #1\n")
    assert main(["journey", str(journey)]) == 2
    assert "t.journey:2: journey file is not UTF-8" in capsys.readouterr().err


def test_regression_csv_with_a_bare_carriage_return(tmp_path: Path) -> None:
    # Found by test_fuzzed_annotations_never_crash: a lone '\r' in a CSV raised csv.Error.
    Image.new("RGB", (50, 40)).save(tmp_path / "shot.png")
    p = tmp_path / "boxes.csv"
    p.write_bytes(b'image,left,top,right,bottom,class\r"shot.png",1,1,5,5,button\r')  # old Mac line ends
    assert [t.bounds for t in read_screens(p)[0].targets] == [(1.0, 1.0, 5.0, 5.0)]
    p.write_bytes(b"\r0")
    with pytest.raises(InputError):
        read_screens(p)


def test_ctrl_c_is_exit_130_and_leaves_no_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                               capsys: pytest.CaptureFixture[str]) -> None:
    """An interrupted run must not look like findings (exit 1), print a traceback or leave a file."""
    import tapgauge.pipeline as pipeline

    calls = []

    def stop_on_second(path: Path, settings: object) -> list:
        calls.append(path)
        if len(calls) == 2:
            raise KeyboardInterrupt
        return []

    monkeypatch.setattr(pipeline, "record_one", stop_on_second)
    monkeypatch.setattr("tapgauge.batch.record_one", stop_on_second)
    code = main(["check", str(DEMO / "android"), "-j", "1", "-f", "json", "-o", str(tmp_path / "r.json")])
    assert code == 130 and "interrupted" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def _dies_on_crash_files(path: Path, settings: object) -> list:
    """Stands in for a native library crashing on one input: the worker process dies outright."""
    if "crash" in path.name:
        os._exit(11)
    return [path.name]


def test_a_worker_that_dies_costs_only_its_own_file(tmp_path: Path) -> None:
    from tapgauge.pipeline import iter_results

    names = [f"s{k:02d}{'_crash' if k in (3, 17) else ''}.xml" for k in range(24)]
    for name in names:
        (tmp_path / name).write_text("<hierarchy/>")
    out = list(iter_results([tmp_path], SETTINGS, jobs=2, work=_dies_on_crash_files))
    assert len(out) == len(names)  # one result per file, in path order
    for name, item in zip(sorted(names), out):
        if "crash" in name:
            assert isinstance(item, InputError) and item.path.endswith(name) and "stopped abruptly" in item.message
        else:
            assert item == name


_BASELINE: list[bytes] = []


def _baseline_bytes(tmp: Path) -> bytes:
    """A real baseline of the demo's first release, recorded once."""
    if not _BASELINE:
        out = tmp / "recorded.json"
        assert main(["baseline", str(DEMO / "releases" / "v1"), "-o", str(out), "--force"]) == 0
        _BASELINE.append(out.read_bytes())
    return _BASELINE[0]


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(mutations, st.integers(0, 10**6))
def test_fuzzed_baselines_never_crash_the_gate(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                               cuts: list[tuple[int, bytes]], keep: int) -> None:
    """The gate reads baselines as a stream: damaged or truncated ones are input errors, never a crash."""
    data = _mutate(_baseline_bytes(tmp_path), cuts)
    path = tmp_path / "b.json"
    path.write_bytes(data[: max(1, keep % (len(data) + 1))])
    code = main(["gate", str(DEMO / "releases" / "v1"), "-b", str(path), "-f", "json"])
    err = capsys.readouterr().err
    assert code in (0, 1, 2)
    if code == 2:
        assert "baseline" in err or str(path) in err
    assert "Traceback" not in err and "internal error" not in err


def test_regression_baseline_difficulty_without_time(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Found by the baseline fuzzer: a damaged difficulty entry raised KeyError inside the gate."""
    doc = json.loads(_baseline_bytes(tmp_path))
    sid = next(iter(doc["screens"]))
    target = doc["screens"][sid]["targets"][0]
    target["difficulty"] = {name: {"tim_ms": 1.0, "miss": None} for name in target["difficulty"]}
    (tmp_path / "b.json").write_text(json.dumps(doc))
    assert main(["gate", str(DEMO / "releases" / "v1"), "-b", str(tmp_path / "b.json")]) == 2
    assert "baseline is damaged" in capsys.readouterr().err


def test_regression_baseline_difficulty_without_miss(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Found by the baseline fuzzer: a difficulty entry without its miss raised KeyError inside the gate."""
    doc = json.loads(_baseline_bytes(tmp_path))
    sid = next(iter(doc["screens"]))
    target = doc["screens"][sid]["targets"][0]
    target["difficulty"] = {name: {"time_ms": 1.0} for name in target["difficulty"]}
    (tmp_path / "b.json").write_text(json.dumps(doc))
    assert main(["gate", str(DEMO / "releases" / "v1"), "-b", str(tmp_path / "b.json")]) == 2
    assert "baseline is damaged" in capsys.readouterr().err


def test_regression_baseline_bytes_not_utf8(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Found by the baseline fuzzer: bytes that are not UTF-8 (here an overlong 0xC0 0x80) inside a screen
    entry raised UnicodeDecodeError from the streaming parser instead of naming the damaged baseline."""
    data = _baseline_bytes(tmp_path)
    at = data.index(b'"targets"') + 2  # inside a string, where the parser decodes text
    (tmp_path / "b.json").write_bytes(data[:at] + b"\xc0\x80" + data[at:])
    assert main(["gate", str(DEMO / "releases" / "v1"), "-b", str(tmp_path / "b.json")]) == 2
    err = capsys.readouterr().err
    assert "not valid JSON" in err and "not UTF-8" in err and "Traceback" not in err


# The project's own text inputs, fuzzed the same way: rule sets, profiles, configs, journeys, trial logs.
RULESET = (Path(__file__).resolve().parent.parent / "rules" / "rulesets" / "wcag-2.5.8.toml").read_bytes()
PROFILE = (Path(__file__).resolve().parent.parent / "rules" / "profiles" / "typical-adult.toml").read_bytes()
JOURNEY = (DEMO / "book_a_plot.journey").read_text().replace("screen android/", f"screen {DEMO}/android/").encode()
TRIALS = (Path(__file__).resolve().parent / "data" / "fitts1954_summary.csv").read_bytes()
CONFIG = b"""project = "fernwick-allotments"
rules = ["wcag-2.5.8", "android-guidance"]
fail_level = "warning"
[device]
density = 440
[[waivers]]
screen = "*.xml"
target = "label:Share plot"
rule = "android-guidance/*"
reason = "Equivalent control in the menu"
author = "Review board"
expires = 2027-03-31
[gate]
size_tolerance = 1.5
"""


def _no_crash(args: list[str], capsys: pytest.CaptureFixture[str], allowed: tuple[int, ...]) -> None:
    code = main(args)  # an exception escaping main fails the test: that is the crash we look for
    err = capsys.readouterr().err
    assert code in allowed and "internal error" not in err


@FUZZ
@given(mutations)
def test_fuzzed_rule_and_profile_files_never_crash(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                   cuts: list[tuple[int, bytes]]) -> None:
    (tmp_path / "r.toml").write_bytes(_mutate(RULESET, cuts))
    (tmp_path / "p.toml").write_bytes(_mutate(PROFILE, cuts))
    screen = str(DEMO / "android" / "plot_detail.xml")
    _no_crash(["check", screen, "--rules", str(tmp_path / "r.toml"), "-f", "json"], capsys, (0, 1, 2))
    _no_crash(["check", screen, "--profiles", str(tmp_path / "p.toml"), "-f", "json"], capsys, (0, 1, 2))


@FUZZ
@given(mutations)
def test_fuzzed_configs_never_crash(tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
                                    cuts: list[tuple[int, bytes]]) -> None:
    (tmp_path / "tapgauge.toml").write_bytes(_mutate(CONFIG, cuts))
    monkeypatch.chdir(tmp_path)
    _no_crash(["config"], capsys, (0, 2))
    _no_crash(["check", str(DEMO / "android" / "plot_detail.xml"), "-f", "json"], capsys, (0, 1, 2))


@FUZZ
@given(mutations)
def test_fuzzed_journeys_and_trial_logs_never_crash(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                    cuts: list[tuple[int, bytes]]) -> None:
    (tmp_path / "f.journey").write_bytes(_mutate(JOURNEY, cuts))
    (tmp_path / "t.csv").write_bytes(_mutate(TRIALS, cuts))
    _no_crash(["journey", str(tmp_path / "f.journey"), "-f", "json"], capsys, (0, 2))
    _no_crash(["calibrate", str(tmp_path / "t.csv"), "-f", "json"], capsys, (0, 2))


# Well-formed TOML with the right keys and values of any type: type confusion, not syntax.
_scalar = (st.text(max_size=12) | st.integers(-10**6, 10**6) | st.booleans()
           | st.floats(allow_nan=False, allow_infinity=False, width=32))
_value = st.recursive(_scalar, lambda inner: st.lists(inner, max_size=3)
                      | st.dictionaries(st.sampled_from(["match", "density", "x", "id"]), inner, max_size=2), max_leaves=6)


def _toml(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml(x) for x in v) + "]"
    assert isinstance(v, dict)
    return "{" + ", ".join(f"{json.dumps(k)} = {_toml(x)}" for k, x in v.items()) + "}"


_CONFIG_KEYS = {
    "": ["project", "rules", "fail_level", "profiles", "marker", "classes"],
    "device": ["density", "scale", "ppi", "xdpi", "ydpi"],
    "gate": ["size_tolerance", "miss_tolerance", "time_tolerance_ms", "missing"],
    "waivers": ["screen", "target", "rule", "reason", "author", "expires"],
    "devices": ["match", "density", "scale", "ppi"],
}


@st.composite
def typed_configs(draw: st.DrawFn) -> str:
    lines = [f"{k} = {_toml(draw(_value))}" for k in draw(st.lists(st.sampled_from(_CONFIG_KEYS['']), unique=True))]
    for table in ("device", "gate"):
        if draw(st.booleans()):
            lines.append(f"[{table}]")
            lines += [f"{k} = {_toml(draw(_value))}" for k in draw(st.lists(st.sampled_from(_CONFIG_KEYS[table]), unique=True))]
    for array in ("waivers", "devices"):
        for _ in range(draw(st.integers(0, 2))):
            lines.append(f"[[{array}]]")
            keys = draw(st.lists(st.sampled_from(_CONFIG_KEYS[array]), unique=True))
            lines += [f"{k} = {_toml(draw(_value | st.sampled_from(['id:book', 'label:x', '*.xml', 'wcag-2.5.8/*'])))}"
                      for k in keys]
    return "\n".join(lines) + "\n"


@FUZZ
@given(typed_configs())
def test_configs_with_values_of_the_wrong_type_never_crash(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                            monkeypatch: pytest.MonkeyPatch, text: str) -> None:
    (tmp_path / "tapgauge.toml").write_text(text)
    monkeypatch.chdir(tmp_path)
    _no_crash(["config"], capsys, (0, 2))
    _no_crash(["check", str(DEMO / "android" / "plot_detail.xml"), "-f", "json"], capsys, (0, 1, 2))


_RULE_KEYS = ["id", "kind", "summary", "severity", "unit", "size", "gap", "spacing_exception", "exempt_at_size",
              "profile", "max_miss", "source", "url"]
_GOOD_RULE_VALUES = st.sampled_from(["min-size", "min-gap", "max-miss", "dp", "pt", "mm", "error", "warning",
                                     "typical-adult", "r1", 24, 0.1, -3, 0, True, 1e9])


@st.composite
def typed_rule_sets(draw: st.DrawFn) -> str:
    head = {"id": "fuzz", "title": "t", "source": "s", "url": "https://example.invalid", "platforms": ["android"]}
    for k in draw(st.lists(st.sampled_from(list(head)), unique=True)):
        head[k] = draw(_value)
    lines = ["[ruleset]"] + [f"{k} = {_toml(v)}" for k, v in head.items()]
    for _ in range(draw(st.integers(0, 3))):
        lines.append("[[rules]]")
        keys = draw(st.lists(st.sampled_from(_RULE_KEYS), unique=True))
        lines += [f"{k} = {_toml(draw(_GOOD_RULE_VALUES | _value))}" for k in keys]
    return "\n".join(lines) + "\n"


@FUZZ
@given(typed_rule_sets())
def test_rule_sets_with_values_of_the_wrong_type_never_crash(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                              text: str) -> None:
    (tmp_path / "r.toml").write_text(text)
    _no_crash(["check", str(DEMO / "android" / "plot_detail.xml"), "--rules", str(tmp_path / "r.toml"), "-f", "json"],
              capsys, (0, 1, 2))


def test_regression_rule_kind_that_is_a_list(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Found by the typed rule-set fuzzer: a non-text rule kind raised TypeError (unhashable list)."""
    (tmp_path / "r.toml").write_text('[ruleset]\nid = "x"\ntitle = "t"\nsource = "s"\nurl = "u"\nplatforms = ["android"]\n'
                                     '[[rules]]\nkind = ["min-size"]\n')
    assert main(["check", str(DEMO / "android" / "plot_detail.xml"), "--rules", str(tmp_path / "r.toml")]) == 2
    assert "rule kind" in capsys.readouterr().err


@st.composite
def typed_profiles(draw: st.DrawFn) -> str:
    tables = {"profile": {"id": "fuzz", "title": "t"},
              "timing": {"intercept_ms": 27.7, "slope_ms_per_bit": 111.5, "source": "s"},
              "spread": {"alpha": 0.0, "sigma_a_mm": 1.53, "source": "s"}}
    lines = []
    for name, keys in tables.items():
        for k in draw(st.lists(st.sampled_from(list(keys)), unique=True)):
            keys[k] = draw(_value | st.sampled_from([0, -1, 1e308, 0.5, "", "fuzz"]))
        lines.append(f"[{name}]")
        lines += [f"{k} = {_toml(v)}" for k, v in keys.items() if draw(st.integers(0, 9))]  # sometimes a key is left out
    return "\n".join(lines) + "\n"


@FUZZ
@given(typed_profiles())
def test_profiles_with_values_of_the_wrong_type_never_crash(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                             text: str) -> None:
    (tmp_path / "p.toml").write_text(text)
    _no_crash(["check", str(DEMO / "android" / "plot_detail.xml"), "--profiles", str(tmp_path / "p.toml"), "-f", "json"],
              capsys, (0, 1, 2))
    _no_crash(["journey", str(tmp_path / "missing.journey"), "--profiles", str(tmp_path / "p.toml")], capsys, (2,))


@pytest.mark.parametrize("args", [
    ["--param", "typical-adult.sigma_a_mm=inf"],
    ["--param", "*.slope_ms_per_bit=1e308"],
])
def test_regression_profile_numbers_that_overflow(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                  args: list[str]) -> None:
    """Found by the typed profile fuzzer: sigma_a_mm = 1e308 overflowed the spread arithmetic (internal error)."""
    text = (Path(__file__).resolve().parent.parent / "rules" / "profiles" / "typical-adult.toml"
            ).read_text().replace("sigma_a_mm = 1.53", "sigma_a_mm = 1e308")
    (tmp_path / "p.toml").write_text(text)
    screen = str(DEMO / "android" / "plot_detail.xml")
    assert main(["check", screen, "--profiles", str(tmp_path / "p.toml")]) == 2
    assert "outside" in capsys.readouterr().err
    assert main(["check", screen, *args]) == 2
    assert "outside" in capsys.readouterr().err


SIDECAR = (DEMO / "android" / "device.txt").read_bytes()
CLASSES = b'target = ["button", "icon", "checkbox"]\nignore = ["text", "image"]\n'


@FUZZ
@given(mutations)
def test_fuzzed_device_sidecars_and_class_lists_never_crash(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                            cuts: list[tuple[int, bytes]]) -> None:
    (tmp_path / "s.xml").write_bytes(ANDROID)
    (tmp_path / "s.device.txt").write_bytes(_mutate(SIDECAR, cuts))
    (tmp_path / "classes.toml").write_bytes(_mutate(CLASSES, cuts))
    _no_crash(["check", str(tmp_path / "s.xml"), "-f", "json"], capsys, (0, 1, 2))
    _no_crash(["check", str(DEMO / "annotated"), "--classes", str(tmp_path / "classes.toml"), "-f", "json"],
              capsys, (0, 1, 2))


def test_a_reader_that_stops_early_gets_exit_141_and_no_traceback() -> None:
    """`tapgauge check ... | head`: the report streams to stdout, so a closed pipe must end it quietly."""
    import subprocess
    import sys

    proc = subprocess.Popen([sys.executable, "-m", "tapgauge", "check", str(DEMO), "-f", "json", "-j", "1"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    assert proc.stdout is not None and proc.stderr is not None
    proc.stdout.read(100)
    proc.stdout.close()
    err = proc.stderr.read().decode()
    assert proc.wait(timeout=120) == 141  # the shell's code for SIGPIPE, never 1 ("findings")
    assert "Traceback" not in err


def test_folders_nested_past_any_export_are_an_error_not_a_crash(tmp_path: Path) -> None:
    # common practice: no device export nests folders hundreds deep; the walk must stop, not overflow
    deep = tmp_path / "d"
    deep.mkdir()
    (deep / "top.xml").write_text("<hierarchy/>")
    where = deep
    for _ in range(260):
        where = where / "n"
    where.mkdir(parents=True)
    (where / "bottom.xml").write_text("<hierarchy/>")
    found, errors = discover([deep])
    assert [p.name for p in found] == ["top.xml"]
    assert len(errors) == 1 and "folders deep" in errors[0].message
