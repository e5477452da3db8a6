"""A journey file with several problems reports every one, each on the line that caused it.

The expected line numbers come from the files written here (we know which lines we
broke), not from the tool. Each reported problem is read as a GNU-style message,
`FILE:LINE: message` with lines counted from 1 (GNU Coding Standards, section 4.4
"Formatting Error Messages", gnu.org/prep/standards; re-read for this test).
"""

from __future__ import annotations

import pickle
import re
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.journeys import JourneyErrors, parse_journey
from tapgauge.model import InputError

GNU_MESSAGE = re.compile(r"^(?P<file>.+?):(?P<line>\d+): (?P<message>.+)$")  # GNU Coding Standards 4.4


def write(tmp_path: Path, lines: list[str]) -> Path:
    p = tmp_path / "t.journey"
    p.write_text("\n".join(lines).replace("DEMO", str(DEMO)) + "\n")
    return p


def reported(err: str, journey: Path) -> dict[int, str]:
    """Line number -> message, for every stderr line that is a GNU-style message about `journey`."""
    found: dict[int, str] = {}
    for text in err.splitlines():
        m = GNU_MESSAGE.match(text.removeprefix("tapgauge: "))
        if m and m["file"].endswith(journey.name):
            assert int(m["line"]) not in found, f"line {m['line']} reported twice"
            found[int(m["line"])] = m["message"]
    return found


def test_every_bad_line_is_reported_with_its_number(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    journey = write(tmp_path, [
        "start elbow",                                  # 1: no such start
        "screen DEMO/android/plot_detail.xml",          # 2
        "touch id=book",                                # 3: fine
        "wiggle",                                       # 4: no such statement
        'touch "unterminated',                          # 5: a quote never closed
        "touch book",                                   # 6: selector without a kind
        "touch #1",                                     # 7: fine
        "start centre",                                 # 8: 'start' after touches
        "tap id:book",                                  # 9: the earlier syntax
        "touch label:Book",                             # 10: an earlier selector
    ])
    assert main(["journey", str(journey)]) == 2
    got = reported(capsys.readouterr().err, journey)
    assert sorted(got) == [1, 4, 5, 6, 8, 9, 10]
    assert "elbow" in got[1] and "wiggle" in got[4] and "before the first 'touch' line" in got[8]
    assert got[9].startswith("'tap' lines are now 'touch' lines") and "write: touch label=Book" in got[10]


def test_every_unmatched_touch_and_missing_screen_is_reported(tmp_path: Path,
                                                              capsys: pytest.CaptureFixture[str]) -> None:
    journey = write(tmp_path, [
        "screen DEMO/android/plot_detail.xml",          # 1
        "touch id=bok",                                 # 2: no such id (a typo of 'book')
        'touch label="Book this plot"',                 # 3: fine
        "screen DEMO/android/nowhere.xml",              # 4: no such file
        "touch #1",                                     # 5: first touch on it: reported here
        "touch #2",                                     # 6: same screen: not reported again
        "screen DEMO/android/plots.xml",                # 7
        "touch id=plot_row",                            # 8: one id on every row of the list
        "touch #999",                                   # 9: no such number
        "screen DEMO/android/also_missing.xml",         # 10: a second missing screen
        "touch #0",                                     # 11
    ])
    assert main(["journey", str(journey)]) == 2
    got = reported(capsys.readouterr().err, journey)
    assert sorted(got) == [2, 5, 8, 9, 11]
    assert "'book'" in got[2]  # the close match is offered
    assert "nowhere.xml not found" in got[5] and "line 4" in got[5]
    assert "several targets" in got[8] and "#999" in got[9]
    assert "also_missing.xml not found" in got[11] and "line 10" in got[11]


def test_one_problem_is_a_plain_input_error(tmp_path: Path) -> None:
    with pytest.raises(InputError) as caught:
        parse_journey(write(tmp_path, ["screen a.xml", "touch nothing"]))
    assert not isinstance(caught.value, JourneyErrors) and caught.value.line == 2


def test_several_problems_are_one_input_error_listing_them(tmp_path: Path) -> None:
    with pytest.raises(JourneyErrors) as caught:
        parse_journey(write(tmp_path, ["touch #1", "screen a.xml", "touch nothing", "jump"]))
    exc = caught.value
    assert isinstance(exc, InputError)  # what every caller already catches
    assert [e.line for e in exc.errors] == [1, 3, 4]
    # str() leads with the count, then one GNU-style line per problem, in line order.
    head, *rest = str(exc).splitlines()
    assert head.endswith("3 problems:")
    assert [int(GNU_MESSAGE.match(r)["line"]) for r in rest] == [1, 3, 4]  # type: ignore[index]
    # It survives pickling (errors cross process boundaries elsewhere in the tool).
    again = pickle.loads(pickle.dumps(exc))
    assert str(again) == str(exc) and [e.line for e in again.errors] == [1, 3, 4]


def test_a_good_journey_still_runs(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["journey", str(DEMO / "book_a_plot.journey"), "-f", "json"]) == 0
