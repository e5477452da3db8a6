"""CSV and Markdown findings tables: golden files for the demo and a stable column order."""

from __future__ import annotations

import csv
import io
import os
from pathlib import Path

import pytest

from conftest import DATA, DEMO
from tapgauge.cli import main
from tapgauge.report.findings import COLUMNS


@pytest.fixture
def in_repo(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(DEMO.parent)


def _golden(path: Path, text: str) -> None:
    if os.environ.get("TAPGAUGE_UPDATE_GOLDEN"):
        path.write_text(text)
    assert text == path.read_text()


def test_csv_golden_and_columns(in_repo: None, capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", "screens_demo", "-f", "csv"])
    text = capsys.readouterr().out
    _golden(DATA / "demo_findings.csv", text)
    rows = list(csv.DictReader(io.StringIO(text)))
    assert tuple(rows[0].keys()) == COLUMNS  # the documented order
    overlap = next(r for r in rows if r["label"] == "14" and r["rule"] == "wcag-2.5.8/size-24")
    assert "drawn over it" in overlap["fix"]
    # The close button drawn over the date chip: no touch area passes while they overlap, so no growth.
    apart = next(r for r in rows if r["label"] == "Remove date" and r["rule"] == "wcag-2.5.8/size-24")
    assert apart["fix"].startswith("it overlaps #4 '14'")
    # The consent row, 360 x 18.2 dp against a 48 dp square: (48 - 18.2) / 2 = 14.9 dp above and below
    # (arithmetic), with room to spare on this screen.
    row = next(r for r in rows if r["label"] == "I have read the plot rules" and r["screen"].endswith("android/booking_form.xml"))
    assert row["fix"] == "grow the touch area 14.9 dp top, 14.9 dp bottom (to 360 x 48 dp)"


def test_markdown_golden(in_repo: None, capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", "screens_demo", "-f", "md"])
    text = capsys.readouterr().out
    _golden(DATA / "demo_findings.md", text)
    assert "do not replace, an accessibility audit" in text
    header = next(line for line in text.splitlines() if line.startswith("| screen"))
    assert header.count("|") == 15
