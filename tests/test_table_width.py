"""The terminal table wraps and pads by display width, so wide (East Asian) text and combining
marks keep its columns in line and its lines inside the width asked for.

The screens are an invented community-garden app ("Hollyhock Plots"), with labels in Japanese,
Chinese, Korean, fullwidth Latin and accented Latin written with combining marks.
"""

from __future__ import annotations

import io
import unicodedata
from pathlib import Path
from typing import Any

import pytest

from tapgauge.cli import main
from tapgauge.model import Severity
from tapgauge.report.records import Checked, Report
from tapgauge.report.table import _wrap, write_table


def cells(text: str) -> int:
    """Terminal cells, measured without rich (an independent oracle).

    Unicode Standard Annex #11, East Asian Width: Wide (W) and Fullwidth (F) characters take two
    cells; everything else one, Ambiguous (A) included, as outside East Asian legacy contexts.
    Combining marks (general categories Mn and Me) take none: they sit on the character before
    (common practice of terminals, and what POSIX wcwidth returns for them). Both from memory.
    """
    total = 0
    for c in text:
        if unicodedata.category(c) in ("Mn", "Me"):
            continue
        total += 2 if unicodedata.east_asian_width(c) in ("W", "F") else 1
    return total


LABELS = [
    "区画12の水やり当番表を開いて今週の担当者を確認する",  # Japanese: no spaces at all
    "堆肥箱二号的翻堆记录与温度",  # Chinese
    "텃밭 물주기 일정 보기 및 알림 설정",  # Korean: spaces between words
    "ＡＢＣ区画 ｔｏｏｌ ｓｈｅｄ",  # fullwidth Latin
    "Cre\u0301me de\u0301lice\u0301 plot — re\u0301server l’arrosoir du jardin partage\u0301",  # combining accents
    "Seed swap",  # plain and short: must come out as before
]


def _record(labels: list[str], message: str) -> dict[str, Any]:
    targets = []
    for k, label in enumerate(labels):
        finding = {"rule": "material/min-size", "severity": "warning", "measured": 32.0, "required": 48,
                   "unit": "dp", "message": message.format(label=label), "waiver": None}
        targets.append({
            "number": k, "key": f"k{k}", "line": k + 2, "class": "android.widget.Button", "label": label,
            "resource_id": "", "name": label, "bounds": [0, 100 * k, 88, 100 * k + 88],
            "size": {"width": 32.0, "height": 32.0}, "size_mm": None, "status": "fail", "reason": "",
            "findings": [finding], "notes": [], "difficulty": []})
    return {
        "path": "plots/水やり.xml", "name": "", "platform": "android", "coordinates": "px", "width": 1080,
        "height": 2340, "rotation": 0, "image": None,
        "device": {"unit": "dp", "coords_per_unit": 2.75, "unit_source": "test", "density_dpi": 440, "scale": None,
                   "xdpi": None, "ydpi": None, "ppi_source": None},
        "rulesets": [], "reach": None, "notices": ["区画の境界線が二重に記録されています。最初のものを使いました。"],
        "targets": targets,
        "summary": {"targets": len(targets), "pass": 0, "fail": len(targets), "exempt": 0, "partial": 0,
                    "unchecked": 0},
    }


def _table(record: dict[str, Any], width: int) -> list[str]:
    report = Report([Checked.of(record)], [], Severity.ERROR)
    out = io.StringIO()
    write_table(report, out, width=width)
    return out.getvalue().splitlines()


def _block(lines: list[str]) -> list[tuple[str, str]]:
    """The findings block's rows, as (left cell, right cell) with the padding kept."""
    return [tuple(line.split(" │ ", 1)) for line in lines if " │ " in line]  # type: ignore[misc]


MESSAGE = "「{label}」は 32 x 32 dp です。指で押すには 48 x 48 dp 以上が必要です。"


@pytest.mark.parametrize("width", [50, 64, 80, 100])
def test_every_line_fits_and_the_columns_line_up(width: int) -> None:
    lines = _table(_record(LABELS, MESSAGE), width)
    assert any(cells(line) > len(line) for line in lines)  # wide text is really there
    assert max(cells(line) for line in lines) <= width
    header = next(line for line in lines if "┃" in line)
    column = cells(header.split("┃")[0])
    rule = next(line for line in lines if "╇" in line)
    assert cells(rule.split("╇")[0]) == column
    rows = _block(lines)
    assert len(rows) > 2 * len(LABELS)  # labels and messages wrapped over several lines
    for left, _ in rows:
        assert cells(left) + 1 == column  # the divider sits in the same cell on every row


def test_continued_lines_keep_their_hanging_indent() -> None:
    lines = _table(_record(LABELS, MESSAGE), 64)
    messages: list[str] = []
    in_message = False
    for _, r in _block(lines):
        if r.startswith("warning "):
            in_message = False  # a finding line (it may continue unindented) ...
        elif r.startswith("  "):
            in_message = True  # ... then its message, two cells in
        if in_message and r:
            messages.append(r)
    # Every line of a message, continued ones too, starts two cells in: no more, no less.
    assert len(messages) > len(LABELS)
    assert all(r.startswith("  ") and not r.startswith("   ") for r in messages)
    # Nothing lost or doubled: the message lines, joined, are the messages.
    joined = "".join(r[2:].rstrip() for r in messages)
    assert joined.replace(" ", "") == "".join(MESSAGE.format(label=lb) for lb in LABELS).replace(" ", "")
    # A label that wraps continues under its name, past the "#n " number.
    left = [lt.rstrip() for lt, _ in _block(lines) if lt.strip()]
    first = next(k for k, t in enumerate(left) if t.startswith("#0 "))
    assert left[first + 1].startswith("   ") and not left[first + 1].startswith("    ")
    assert "".join(t.strip() for t in left[first:first + 3]).startswith("#0 " + LABELS[0][:20])
    # A reader's notice continues under its text, past "note: ".
    note = next(k for k, line in enumerate(lines) if line.startswith("note: "))
    assert lines[note + 1].startswith("      ") and lines[note + 1].strip()


def test_breaks_fall_between_ideographs_not_inside_clusters_or_before_closing_marks() -> None:
    text = "  " + "水やり、植え付け。" * 6
    for line in _wrap(text, 21, "  "):
        assert cells(line) <= 21 and line.startswith("  ")
        assert line[2] not in "、。"  # closing marks stay at the end of the line they close (UAX #14, class CL; from memory)
    accented = "re\u0301server " * 8
    for line in _wrap(accented, 17):
        assert cells(line) <= 17
        assert not unicodedata.combining(line.lstrip()[0])  # an accent never starts a line
    assert "".join(_wrap(accented, 17, "")).replace(" ", "") == accented.replace(" ", "")


def test_a_word_longer_than_the_line_is_cut_by_cells() -> None:
    lines = _wrap("ＡＢＣＤＥＦＧＨＩＪＫＬＭＮＯＰ", 9, "  ")
    # 16 wide letters: 4 on the first line (8 cells), then 3 after each 2-cell indent (a fourth makes 10).
    assert [cells(x) for x in lines] == [8, 8, 8, 8, 8]
    assert lines[0] == "ＡＢＣＤ" and all(x.startswith("  ") for x in lines[1:])


def test_control_characters_in_labels_cannot_break_rows() -> None:
    lines = _table(_record(["Gate\ncode\x1b[2J", "Shed\tkey"], "{label} is small."), 60)
    assert not any("\x1b" in line for line in lines)
    assert any("Gate code\ufffd[2J" in line for line in lines) and any("Shed key" in line for line in lines)


def test_wide_labels_through_the_command(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    nodes = "".join(
        f'<node index="{k}" text="{label}" resource-id="org.hollyhock.plots:id/b{k}" class="android.widget.Button" '
        f'package="org.hollyhock.plots" content-desc="" clickable="true" enabled="true" focusable="true" '
        f'visible-to-user="true" bounds="[40,{300 + 200 * k}][128,{388 + 200 * k}]"/>'
        for k, label in enumerate(LABELS))
    (tmp_path / "plots.xml").write_text(
        "<?xml version='1.0' encoding='UTF-8'?><hierarchy rotation=\"0\">"
        '<node index="0" text="" class="android.widget.FrameLayout" package="org.hollyhock.plots" clickable="false" '
        f'enabled="true" visible-to-user="true" bounds="[0,0][1080,2340]">{nodes}</node></hierarchy>', encoding="utf-8")
    main(["check", str(tmp_path / "plots.xml"), "--density", "440", "--width", "56"])
    lines = capsys.readouterr().out.splitlines()
    rows = _block(lines)
    assert any(cells(left) > len(left) for left, _ in rows)  # the wide labels reached the block
    assert max(cells(line) for line in lines) <= 56
    assert len({cells(left) for left, _ in rows}) == 1
