"""Labels come from the app under test, so a report must not let them act: no formula in a CSV a
spreadsheet opens, no markup in Markdown or HTML. Checked on an invented notice-board screen of the
garden-plot app whose buttons carry hostile labels, through `check` and through `gate`."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from xml.sax.saxutils import escape

import lxml.html
import pytest
from markdown_it import MarkdownIt

from tapgauge.cli import main

PKG = "org.fernwick.allotments"

# OWASP, "CSV Injection" (https://owasp.org/www-community/attacks/CSV_Injection; from memory): a
# cell that starts with one of these is run as a formula; prefix such a cell with a single quote.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")

FORMULAS = [
    '=HYPERLINK("http://plots.example/pay","Pay rent")',
    "+1 plot credit",
    "-5 kg compost",
    "@shed rota",
    "\t=1+2 seed trays",  # the readers strip surrounding white space: the '=' then leads
    "\r+SUM(1,2) watering cans",
]
MARKUP = [
    "**Bold** offer",
    "[Pay now](http://plots.example/pay)",
    "Beds | Paths",
    "<script>alert('plot')</script>",
    "<img src=x onerror=alert('plot')>",
    "_compost_ & `lime`",
]
LABELS = FORMULAS + MARKUP


def _attr(text: str) -> str:
    """XML attribute text as a dump carries it: markup escaped, and tab and CR as character
    references, which survive attribute-value normalisation (XML 1.0, section 3.3.3)."""
    return escape(text, {'"': "&quot;", "\t": "&#9;", "\r": "&#13;"})


def _button(index: int, label: str, box: tuple[int, int, int, int]) -> str:
    """A clickable node as `uiautomator dump` writes it (attribute order from memory); even-numbered
    buttons carry their label as text, odd ones as content-desc, as icon buttons do."""
    text, desc = (label, "") if index % 2 == 0 else ("", label)
    l, t, r, b = box
    return (f'<node index="{index}" text="{_attr(text)}" resource-id="" class="android.widget.Button" '
            f'package="{PKG}" content-desc="{_attr(desc)}" checkable="false" checked="false" clickable="true" '
            'enabled="true" focusable="true" focused="false" scrollable="false" long-clickable="false" '
            f'password="false" selected="false" bounds="[{l},{t}][{r},{b}]" />')


def _board(side: int) -> str:
    """The notice board: one button per label, `side` px square, in a column 20 px apart."""
    buttons = "".join(_button(k, label, (40, 200 + k * (side + 20), 40 + side, 200 + k * (side + 20) + side))
                      for k, label in enumerate(LABELS))
    return ("<?xml version='1.0' encoding='UTF-8' standalone='yes' ?><hierarchy rotation=\"0\">"
            '<node index="0" text="" resource-id="" class="android.widget.FrameLayout" '
            f'package="{PKG}" content-desc="" checkable="false" checked="false" clickable="false" '
            'enabled="true" focusable="false" focused="false" scrollable="false" long-clickable="false" '
            f'password="false" selected="false" bounds="[0,0][1080,3000]">{buttons}</node></hierarchy>')


@pytest.fixture
def board(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """At 420 dpi (2.625 px per dp) a 42 px button is 16 dp: under WCAG 2.5.8's 24 and, 20 px
    (7.6 dp) from its neighbours, too close for its 24-wide circle; each label gets findings."""
    folder = tmp_path / "screens"
    folder.mkdir()
    (folder / "device.txt").write_text("density: 420\n")
    (folder / "notice_board.xml").write_text(_board(42))
    monkeypatch.chdir(tmp_path)
    return folder


def _read_labels(capsys: pytest.CaptureFixture[str]) -> list[str]:
    """The labels as the report's JSON gives them: the text the other formats must carry literally."""
    main(["check", "screens", "-f", "json", "-q"])
    return [t["label"] for s in json.loads(capsys.readouterr().out)["screens"] for t in s["targets"]]


def test_labels_are_read_whole(board: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert _read_labels(capsys) == [label.strip() for label in LABELS]


def test_csv_cells_never_start_a_formula(board: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens", "-f", "csv"]) == 1
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))  # Python's csv reads RFC 4180
    assert rows
    assert not [cell for row in rows for cell in row.values() if cell.startswith(FORMULA_START)]
    # The quote is all that is added: the label is there, whole, after it.
    shown = {row["label"] for row in rows}
    for label in FORMULAS:
        assert "'" + label.strip() in shown, label
    for label in MARKUP:  # text that starts no formula is left as it is
        assert label in shown, label


def test_csv_screen_names_are_neutralised_too(board: Path, capsys: pytest.CaptureFixture[str],
                                             monkeypatch: pytest.MonkeyPatch) -> None:
    (board / "=plots.xml").write_text(_board(42))  # a file name is text from outside, like a label
    monkeypatch.chdir(board)
    assert main(["check", "=plots.xml", "-f", "csv", "--density", "420"]) == 1
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert {row["screen"] for row in rows} == {"'=plots.xml"}


def _rendered(markdown: str) -> lxml.html.HtmlElement:
    """Markdown as a CommonMark renderer shows it, with the GFM table extension (markdown-it-py, which
    comes with rich; used only in tests), parsed as HTML."""
    return lxml.html.fromstring(f"<div>{MarkdownIt('commonmark').enable('table').render(markdown)}</div>")


def test_markdown_cells_show_labels_as_literal_text(board: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens", "-f", "md"]) == 1
    text = capsys.readouterr().out
    # CommonMark 0.31.2, 2.4 "Backslash escapes": an escaped punctuation character is literal, so
    # \*\*Bold\*\* is no emphasis and \[Pay now\](...) no link; 2.5 "Entity and numeric character
    # references": &lt; is a literal '<', so no raw HTML (6.6) can start. GFM "Tables (extension)":
    # \| keeps a pipe inside its cell.
    assert r"\*\*Bold\*\* offer" in text and r"\[Pay now\](http://plots.example/pay)" in text
    assert r"Beds \| Paths" in text and "&lt;script>" in text and r"\_compost\_ &amp; \`lime\`" in text
    page = _rendered(text)
    (table,) = page.iter("table")
    header = [th.text_content() for th in table.iter("th")]
    column = header.index("label")
    rows = table.xpath(".//tbody/tr")
    assert rows and all(len(tr.findall("td")) == len(header) for tr in rows)  # no pipe split a row
    shown = {tr.findall("td")[column].text_content() for tr in rows}
    assert {label.strip() for label in LABELS} <= shown
    body = table.find("tbody")
    assert not [el.tag for el in body.iter() if el.tag in ("strong", "em", "a", "code", "script", "img")]


def test_html_report_shows_labels_and_runs_none(board: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "screens", "-f", "html", "-o", "report.html"]) == 1
    page = lxml.html.parse(str(board.parent / "report.html")).getroot()
    # The report's own scripts may exist; none may come from a label, and no element from one either.
    assert not [s for s in page.iter("script") if "alert('plot')" in (s.text or "")]
    assert not [el for el in page.iter() if el.get("onerror") is not None]
    assert not [a for a in page.iter("a") if a.get("href") == "http://plots.example/pay"]
    text = page.text_content()
    assert all(label.strip() in text for label in LABELS)


# ---- the same through the gate ---------------------------------------------------------------------

@pytest.fixture
def gated(board: Path, capsys: pytest.CaptureFixture[str]) -> Path:
    """A baseline of the board with 150 px (57 dp) buttons, then the release that shrank them to 42 px."""
    (board / "notice_board.xml").write_text(_board(150))
    assert main(["baseline", "screens", "-o", "b.json"]) == 0
    (board / "notice_board.xml").write_text(_board(42))
    capsys.readouterr()
    return board


def test_gate_csv_cells_never_start_a_formula(gated: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["gate", "screens", "-b", "b.json", "-f", "csv"]) == 1
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert rows
    assert not [cell for row in rows for cell in row.values() if cell.startswith(FORMULA_START)]
    names = {row["name"] for row in rows}
    assert all("'" + label.strip() in names for label in FORMULAS)


def test_gate_markdown_shows_names_as_literal_text(gated: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["gate", "screens", "-b", "b.json", "-f", "md"]) == 1
    page = _rendered(capsys.readouterr().out)
    # Each target is a list item that starts with its name in bold: the name is the whole <strong>.
    names = [li.find("strong").text_content() for li in page.iter("li") if li.find("strong") is not None]
    assert {label.strip() for label in LABELS} <= set(names)
    for li in page.iter("li"):
        assert not [el.tag for el in li.iter() if el.tag in ("em", "a", "script", "img")]
        assert len(li.findall("strong")) <= 1  # '**Bold**' in a name opened no second one
    assert not list(page.iter("script"))


def test_gate_html_shows_names_and_runs_none(gated: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["gate", "screens", "-b", "b.json", "-f", "html"]) == 1
    page = lxml.html.fromstring(capsys.readouterr().out)
    assert not list(page.iter("script")) and not [el for el in page.iter() if el.get("onerror") is not None]
    strong = {s.text_content() for s in page.iter("strong")}
    assert all(f"notice_board.xml: {label.strip()}" in strong for label in LABELS)
