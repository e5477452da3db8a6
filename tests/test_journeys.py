"""Journeys (tap sequences): parsing, target lookup, totals that add up, and the earlier syntax refused."""

from __future__ import annotations

import json
import math
import shlex
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.journeys import parse_journey, selector_text
from tapgauge.model import InputError

JOURNEY = DEMO / "book_a_plot.journey"
NEW_WORDS = "selectors are id=NAME, label=TEXT, #N"


def test_demo_journey_totals_are_the_sums_of_its_steps(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["journey", str(JOURNEY), "-f", "json"]) == 0
    record = json.loads(capsys.readouterr().out)
    assert record["format"] == "tapgauge-journey" and record["version"] == 1
    assert record["journey"].endswith("book_a_plot.journey") and record["start"] == "thumb-right"
    assert [s["name"] for s in record["steps"]] == [
        "Book this plot", "Member name", "14", "I have read the plot rules", "Confirm booking"]
    # Selectors are echoed as the file writes them (the demo file's own lines).
    assert [s["selector"] for s in record["steps"]] == [
        "id=book", "id=name", "label=14", 'label="I have read the plot rules"', "id=confirm"]
    # Totals: a sum of times, a sum of per-touch miss chances (expected value of a sum of
    # Bernoulli variables), a product of hit chances (independent touches): probability basics.
    for k, total in enumerate(record["totals"]):
        preds = [s["predictions"][k] for s in record["steps"]]
        assert total["time_ms"] == pytest.approx(sum(p["time_ms"] for p in preds), abs=0.5)
        assert total["expected_misses"] == pytest.approx(sum(1 - p["hit_probability"] for p in preds), abs=1e-3)
        assert total["all_taps_hit"] == pytest.approx(math.prod(p["hit_probability"] for p in preds), abs=1e-3)
    # Each step starts where the last one ended: the second reach runs from the first target's centre.
    first, second = record["steps"][0]["predictions"][0], record["steps"][1]["predictions"][0]
    assert first["distance"] > 0 and second["distance"] > 0


def test_demo_table_speaks_of_touches(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["journey", str(JOURNEY)]) == 0
    flat = " ".join(capsys.readouterr().out.split())  # the heading wraps where the path is long
    assert "book_a_plot.journey: 5 touches, starting at thumb-right" in flat


def write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "t.journey"
    p.write_text(text.replace("DEMO", str(DEMO)))
    return p


@pytest.mark.parametrize(
    ("text", "expect", "line"),
    [
        ("touch id=book\n", "'screen PATH' line must come before", 1),
        ("screen DEMO/android/plot_detail.xml\ntouch id=bok\n", "close matches: 'book'", 2),
        ("screen DEMO/android/plot_detail.xml\ntouch label=Boook this plot\n", "expected 'start START'", 2),
        ('screen DEMO/android/plot_detail.xml\ntouch label="Book this plott"\n', "close matches: 'Book this plot'", 2),
        ("screen DEMO/android/plot_detail.xml\ntouch #99\n", "there is no #99", 2),
        ("screen DEMO/android/plots.xml\ntouch id=plot_row\n", "matches several targets", 2),
        ("screen DEMO/android/nowhere.xml\ntouch #1\n", "not found", 2),
        ("screen DEMO/android/plot_detail.xml\ntouch book\n", NEW_WORDS, 2),
        ("screen DEMO/android/plot_detail.xml\ntouch id=\n", NEW_WORDS, 2),
        ("start elbow\n", "expected one of", 1),
        ("# nothing\n", "no 'touch' lines", None),
        ("screen DEMO/android/plot_detail.xml\nwiggle\n", "expected 'start START'", 2),
    ],
)
def test_journey_errors_name_the_line(tmp_path: Path, capsys: pytest.CaptureFixture[str], text: str, expect: str,
                                      line: int | None) -> None:
    p = write(tmp_path, text)
    assert main(["journey", str(p)]) == 2
    err = capsys.readouterr().err
    assert expect in err
    if line:
        assert f"t.journey:{line}:" in err


def test_selectors_parse(tmp_path: Path) -> None:
    journey = parse_journey(write(tmp_path, 'start 10,20\nscreen a.xml\ntouch id=x\ntouch label="Two words"\n'
                                            "touch #3\ntouch label=a=b\n"))
    assert journey.start_xy == (10.0, 20.0)
    assert [(s.how, s.value, s.line) for s in journey.steps] == [
        ("id", "x", 3), ("label", "Two words", 4), ("index", "3", 5), ("label", "a=b", 6)]
    with pytest.raises(InputError, match="before the first 'touch' line"):
        parse_journey(write(tmp_path, "screen a.xml\ntouch #1\nstart centre\n"))


def test_a_target_number_is_not_a_comment(tmp_path: Path) -> None:
    # '#' starts a comment at a line's start or after a space; '#' and a digit names a target.
    journey = parse_journey(write(tmp_path, "# booking, one-handed\nscreen a.xml  # the form\n"
                                            "touch #3   # the third target\n#not a number, a comment\n"
                                            "touch #12 # then #3, later\n"))
    assert [(s.how, s.value) for s in journey.steps] == [("index", "3"), ("index", "12")]
    with pytest.raises(InputError, match="expected 'start START'") as caught:
        parse_journey(write(tmp_path, "screen a.xml\ntouch #1\n#4 is not a comment\n"))
    assert caught.value.line == 3


# Labels a designer might write, round-tripped through the file: selector_text quotes them for
# POSIX shell word splitting (POSIX.1-2017 Shell Command Language 2.2.3 "Double-Quotes": inside
# double quotes a backslash escapes '"' and '\'; from memory), which shlex.split implements in its
# POSIX mode (Python standard library documentation, shlex; from memory).
AWKWARD = ["Member name", 'Say "hello"', "back\\slash", "Plot #3", "Plot # 3", 'a" #b', "it's", "x=y", "14"]


@pytest.mark.parametrize("label", AWKWARD)
def test_a_written_selector_reads_back_as_the_same_label(tmp_path: Path, label: str) -> None:
    sel = selector_text("label", label)
    assert shlex.split(sel) == [f"label={label}"]  # the reference splitter agrees
    journey = parse_journey(write(tmp_path, f"screen a.xml\ntouch {sel}   # trailing comment\n"))
    assert [(s.how, s.value) for s in journey.steps] == [("label", label)]


# The earlier syntax is refused line by line, naming the new word, never read some other way.
@pytest.mark.parametrize(
    ("line", "expect"),
    [
        ("from thumb-right", "'from' lines are now 'start' lines (write: start thumb-right)"),
        ("tap #1", f"'tap' lines are now 'touch' lines; {NEW_WORDS} (write: touch #1)"),
        ("tap id:book", f"'tap' lines are now 'touch' lines; {NEW_WORDS} (write: touch id=book)"),
        ('tap label:"Member name"', f"'tap' lines are now 'touch' lines; {NEW_WORDS} (write: touch label=\"Member name\")"),
        ("touch id:book", f"selector 'id:book' is in the earlier syntax; {NEW_WORDS} (write: touch id=book)"),
        ('touch label:"Member name"',
         f"selector 'label:\"Member name\"' is in the earlier syntax; {NEW_WORDS} (write: touch label=\"Member name\")"),
    ],
)
def test_old_lines_name_the_new_word(tmp_path: Path, capsys: pytest.CaptureFixture[str], line: str,
                                     expect: str) -> None:
    p = write(tmp_path, f"screen DEMO/android/booking_form.xml\n{line}\ntouch id=name\n")
    assert main(["journey", str(p), "-f", "json"]) == 2
    out, err = capsys.readouterr()
    assert out == ""  # nothing predicted from a half-read file
    assert f"t.journey:2: {expect}" in err


def test_a_whole_old_file_is_refused_on_every_old_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    old = ["# Booking plot B7", "from thumb-right", "screen DEMO/android/plot_detail.xml", "tap id:book",
           "screen DEMO/android/booking_form.xml", 'tap label:"I have read the plot rules"', "tap #3"]
    p = write(tmp_path, "\n".join(old) + "\n")
    assert main(["journey", str(p)]) == 2
    err = capsys.readouterr().err
    assert "3 problems" not in err and "4 problems:" in err
    for n in (2, 4, 6, 7):
        assert f"t.journey:{n}: '" in err


def test_the_old_command_names_the_new_one(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["flow", str(JOURNEY), "-f", "json"]) == 2
    out, err = capsys.readouterr()
    assert out == "" and "renamed to `tapgauge journey`" in err
    main(["--help"])
    listing = capsys.readouterr().out
    assert "journey" in listing and " flow " not in listing  # hidden: it only points to the new name
