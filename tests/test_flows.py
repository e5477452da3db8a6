"""Tap sequences: parsing, target lookup, and totals that add up."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge.cli import main
from tapgauge.flows import parse_flow
from tapgauge.model import InputError

FLOW = DEMO / "book_a_plot.flow"


def test_demo_flow_totals_are_the_sums_of_its_steps(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["flow", str(FLOW), "-f", "json"]) == 0
    record = json.loads(capsys.readouterr().out)
    assert [s["name"] for s in record["steps"]] == [
        "Book this plot", "Member name", "14", "I have read the plot rules", "Confirm booking"]
    for k, total in enumerate(record["totals"]):
        preds = [s["predictions"][k] for s in record["steps"]]
        assert total["time_ms"] == pytest.approx(sum(p["time_ms"] for p in preds), abs=0.5)
        assert total["expected_misses"] == pytest.approx(sum(1 - p["hit_probability"] for p in preds), abs=1e-3)
        assert total["all_taps_hit"] == pytest.approx(math.prod(p["hit_probability"] for p in preds), abs=1e-3)
    # Each step starts where the last one ended: the second reach runs from the first target's centre.
    first, second = record["steps"][0]["predictions"][0], record["steps"][1]["predictions"][0]
    assert first["distance"] > 0 and second["distance"] > 0


def write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "t.flow"
    p.write_text(text.replace("DEMO", str(DEMO)))
    return p


@pytest.mark.parametrize(
    ("text", "expect", "line"),
    [
        ("tap id:book\n", "'screen PATH' line must come before", 1),
        ("screen DEMO/android/plot_detail.xml\ntap id:bok\n", "close matches: 'book'", 2),
        ("screen DEMO/android/plot_detail.xml\ntap label:Boook this plot\n", "expected 'from START'", 2),
        ('screen DEMO/android/plot_detail.xml\ntap label:"Book this plott"\n', "close matches: 'Book this plot'", 2),
        ("screen DEMO/android/plot_detail.xml\ntap #99\n", "there is no #99", 2),
        ("screen DEMO/android/plots.xml\ntap id:plot_row\n", "matches several targets", 2),
        ("screen DEMO/android/nowhere.xml\ntap #1\n", "not found", 2),
        ("from elbow\n", "expected one of", 1),
        ("# nothing\n", "no taps", None),
        ("screen DEMO/android/plot_detail.xml\nwiggle\n", "expected 'from START'", 2),
    ],
)
def test_flow_errors_name_the_line(tmp_path: Path, capsys: pytest.CaptureFixture[str], text: str, expect: str,
                                   line: int | None) -> None:
    p = write(tmp_path, text)
    assert main(["flow", str(p)]) == 2
    err = capsys.readouterr().err
    assert expect in err
    if line:
        assert f"t.flow:{line}:" in err


def test_selectors_parse(tmp_path: Path) -> None:
    flow = parse_flow(write(tmp_path, 'from 10,20\nscreen a.xml\ntap id:x\ntap label:"Two words"\ntap #3\n'))
    assert flow.start_xy == (10.0, 20.0)
    assert [(s.how, s.value, s.line) for s in flow.steps] == [("id", "x", 3), ("label", "Two words", 4), ("index", "3", 5)]
    with pytest.raises(InputError, match="before the first tap"):
        parse_flow(write(tmp_path, "screen a.xml\ntap #1\nfrom centre\n"))
