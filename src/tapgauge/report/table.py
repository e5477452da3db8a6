"""The terminal findings table: one block per screen, a summary line at the end.

Readable at 80 columns; colour is a help, never the only signal (severity and
status are words).
"""

from __future__ import annotations

import io
import unicodedata
from collections import Counter
from typing import Any, TextIO

from rich.cells import cell_len
from rich.console import Console
from rich.table import Table
from rich.text import Text

from tapgauge.model import SEVERITY_BY_LABEL
from tapgauge.report.records import Report
from tapgauge.report.verdict import DISCLAIMER, summary_line

_SEVERITY_STYLE = {"error": "bold red", "warning": "yellow", "note": "cyan"}


def _num(v: float) -> str:
    return f"{v:.1f}"


def _device_line(s: dict[str, Any]) -> str:
    d = s["device"]
    unit = d["unit"]
    coords = s["coordinates"]
    parts = [f"{s['platform']}, {s['width']:g}x{s['height']:g} {coords}"]
    scale_source = d.get("scale_source") or d["unit_source"]  # records from before scale_source: the unit's
    if d["density_dpi"] is not None:
        parts.append(f"{d['density_dpi']:g} dpi = {d['coords_per_unit']:g} px/{unit} ({d['unit_source']})")
    elif coords == "px":
        parts.append(f"scale {d['scale']:g} = {d['coords_per_unit']:g} px/{unit} ({scale_source})")
    elif d["scale"] is not None:
        parts.append(f"scale {d['scale']:g} ({scale_source})")
    if d["xdpi"] is not None:
        # The ppi as the user gave it: pixels (not points) per inch, along the natural axes.
        k = d["scale"] if coords == "pt" else 1.0
        x, y = d["xdpi"] * k, d["ydpi"] * k
        if s["rotation"] % 2:
            x, y = y, x
        ppi = f"{x:g}" if f"{x:g}" == f"{y:g}" else f"{x:g} x {y:g}"
        parts.append(f"{ppi} ppi ({d['ppi_source']})")
    elif coords == "pt" and d["scale"] is None:
        parts.append("no scale (pixels per point): no mm")
    else:
        parts.append("no physical ppi: no mm")
    return "; ".join(parts)


# ANSI styles for the findings block, written directly: rendering it through rich's Table
# cost 26 ms a screen (8x the checks) on batches with many failing targets.
_ANSI = {"bold red": "1;31", "yellow": "33", "cyan": "36", "dim": "2", "magenta": "35", "bold": "1"}
_LEFT_MAX = 26  # the target column, as wide as its longest line up to this


def _paint(text: str, style: str, color: bool) -> str:
    return f"\x1b[{_ANSI[style]}m{text}\x1b[0m" if color and text and style else text


_SPACES = str.maketrans("\t\n\r\v\f", "     ")
# Punctuation that keeps to its neighbour: closing marks (、。！」) never start a line, opening
# marks (「（) never end one. Unicode Standard Annex #14, Line Breaking: classes CL, CP, EX, IS,
# NS and QU keep a break out before them, OP and QU after them (the categories approximate them;
# from memory).
_NO_BREAK_BEFORE = frozenset({"Pe", "Pf", "Po"})
_NO_BREAK_AFTER = frozenset({"Ps", "Pi"})


def _clean(text: str) -> str:
    """Whitespace controls as spaces, other control characters shown, so a label from a dump
    cannot break the table's rows or send escapes to the terminal."""
    text = text.translate(_SPACES)
    return "".join("\ufffd" if unicodedata.category(c) == "Cc" else c for c in text) if not text.isprintable() else text


def _clusters(text: str) -> list[str]:
    """Each character with the zero-width marks after it (combining accents, joiners): never split."""
    out: list[str] = []
    for ch in text:
        if out and cell_len(ch) == 0:
            out[-1] += ch
        else:
            out.append(ch)
    return out


def _tokens(text: str) -> list[tuple[bool, str]]:
    """(space before, unbreakable piece): words at spaces, and each wide character on its own,
    since East Asian text may break between any two ideographs (UAX #14, class ID)."""
    tokens: list[tuple[bool, str]] = []
    space, prev = False, ""
    for c in _clusters(text):
        if c == " ":
            space, prev = True, ""
            continue
        breakable = bool(prev) and (cell_len(prev) > 1 or cell_len(c) > 1) \
            and unicodedata.category(c[0]) not in _NO_BREAK_BEFORE \
            and unicodedata.category(prev[0]) not in _NO_BREAK_AFTER
        if space or not prev or breakable:
            tokens.append((space, c))
        else:
            tokens[-1] = (tokens[-1][0], tokens[-1][1] + c)
        space, prev = False, c
    return tokens


def _cut(piece: str, room: int) -> tuple[str, str]:
    """The most of `piece` that fits `room` cells (at least one character, so wrapping ends), and the rest."""
    clusters = _clusters(piece)
    used, k = 0, 0
    while k < len(clusters) and used + cell_len(clusters[k]) <= room:
        used += cell_len(clusters[k])
        k += 1
    k = max(k, 1)
    return "".join(clusters[:k]), "".join(clusters[k:])


def _wrap(text: str, width: int, indent: str = "") -> list[str]:
    """Lines of at most `width` terminal cells: wide (East Asian) characters count two, combining
    marks none. The first line keeps the text's own leading spaces, later lines start with `indent`."""
    text = _clean(text)
    if cell_len(text) <= width:
        return [text]  # most lines fit: skip the wrapper
    body = text.lstrip(" ")
    lines: list[str] = []
    line, filled = text[:len(text) - len(body)], False
    for space, piece in _tokens(body):
        sep = " " if space and filled else ""
        if cell_len(line) + len(sep) + cell_len(piece) <= width:
            line, filled = line + sep + piece, True
            continue
        if filled:
            lines.append(line)
            line, filled = indent, False
        while cell_len(line) + cell_len(piece) > width:  # longer than a whole line: cut where it must
            head, piece = _cut(piece, width - cell_len(line))
            lines.append(line + head)
            line = indent
            if not piece:
                break
        if piece:
            line, filled = line + piece, True
    if filled:
        lines.append(line)
    return lines or [""]


def _shown(f: dict[str, Any], show: int) -> bool:
    return SEVERITY_BY_LABEL[f["severity"]] >= show


def _screen_rows(s: dict[str, Any], width: int, color: bool, show: int = 0) -> list[str]:
    """Failing, partial and waived targets as a two-column block: the target, then its findings
    (only those at or above `show`, a Severity value; 0 shows all)."""
    unit = s["device"]["unit"]
    rows = [t for t in s["targets"] if t["status"] in ("fail", "partial", "exempt")
            and any(_shown(f, show) for f in t["findings"])]
    if not rows:
        return []
    cells: list[tuple[list[tuple[str, str]], list[tuple[str, str]]]] = []
    for t in rows:
        left = [(f"#{t['number']} {t['name']}", ""),
                (f"{_num(t['size']['width'])} x {_num(t['size']['height'])} {unit}", "dim")]
        if t["size_mm"] is not None:
            left.append((f"{_num(t['size_mm']['width'])} x {_num(t['size_mm']['height'])} mm", "dim"))
        if t["status"] == "partial":
            left.append(("partial: may reach out of view", "magenta"))
        right = []
        for f in t["findings"]:
            if not _shown(f, show):
                continue
            w = f["waiver"]
            word, style = ("waived", "dim") if w else (f["severity"], _SEVERITY_STYLE[f["severity"]])
            right.append((f"{word} {f['rule']}: {_num(f['measured'])} / {f['required']:g} {f['unit']}"
                          + (f" ({f['severity']})" if w else ""), style))
            right.append((f"  {f['message']}", "dim"))
            if w:
                until = f", until {w['expires']}" if w["expires"] else ""
                right.append((f"  waived: {w['reason']} ({w['author']}{until})", "dim"))
        if t.get("plan") and any(_shown(f, show) for f in t["findings"] if f["rule"] in t["plan"]["rules"]):
            right.append((f"  fix: {t['plan']['text']}", "dim"))
        cells.append((left, right))
    heading = "finding: found / needed"
    # The target column gives way on narrow terminals, so the heading on the right still fits.
    lw = min(_LEFT_MAX, max(cell_len(text) for left, _ in cells for text, _ in left), width - 3 - len(heading))
    lw = max(lw, len("target"))
    rw = max(20, width - lw - 3)
    out = [_paint("target".ljust(lw), "bold", color) + " ┃ " + _paint(heading, "bold", color),
           "━" * lw + "━╇━" + "━" * rw]
    for n, (left, right) in enumerate(cells):
        if n:
            out.append("─" * lw + "─┼─" + "─" * rw)
        hang = " " * min(lw // 3, cell_len(f"#{rows[n]['number']} "))  # a long name continues under itself
        lines_l = [(line, style) for text, style in left for line in _wrap(text, lw, hang)]
        lines_r: list[tuple[str, str]] = []
        for text, style in right:
            if text.startswith("  "):  # a message: wrapped under its finding, indented
                lines_r += [(line, style) for line in _wrap(text, rw, "  ")]
            else:  # the finding line: its severity word coloured, the rest plain
                word = text.partition(" ")[0]
                wrapped = _wrap(text, rw)
                first = wrapped[0]
                head = _paint(word, style, color) + first[len(word):] if first.startswith(word) else first
                lines_r.append((head, ""))
                lines_r += [(line, "") for line in wrapped[1:]]
        for k in range(max(len(lines_l), len(lines_r))):
            lt, ls = lines_l[k] if k < len(lines_l) else ("", "")
            rt, rs = lines_r[k] if k < len(lines_r) else ("", "")
            out.append(_paint(lt, ls, color) + " " * (lw - cell_len(lt)) + " │ " + _paint(rt, rs, color))
    return out


HARDEST = 8  # rows in a screen's difficulty block


def _difficulty_table(s: dict[str, Any], profiles: list[str]) -> Table | None:
    scored = [t for t in s["targets"] if t["difficulty"]]
    if not scored or not profiles:
        return None

    def hardness(t: dict[str, Any]) -> tuple[float, float]:
        d = t["difficulty"][0]
        return (d["miss_probability"] if d["miss_probability"] is not None else 0.0, d["time_ms"])  # first profile

    reach = s["reach"]
    table = Table(title=f"hardest to hit from {reach['from']} (time ms / miss %)", title_justify="left",
                  header_style="bold", pad_edge=False, show_edge=False)
    table.add_column("target", overflow="fold", max_width=24)
    table.add_column("ID bits", justify="right")
    for p in profiles:
        table.add_column(p, justify="right", overflow="fold")
    for t in sorted(scored, key=hardness, reverse=True)[:HARDEST]:
        cells = []
        for d in t["difficulty"]:
            miss = "-" if d["miss_probability"] is None else f"{d['miss_probability'] * 100:.0f}%"
            cells.append(f"{d['time_ms']:.0f} / {miss}")
        table.add_row(f"#{t['number']} {t['name']}", f"{t['approach']['id_bits']:.2f}", *cells)
    return table


def _rule_counts(s: dict[str, Any], opened: Counter[str], waived: Counter[str]) -> None:
    for t in s["targets"]:
        if t["status"] in ("fail", "exempt"):
            for f in t["findings"]:
                (waived if f["waiver"] else opened)[f["rule"]] += 1


def _rule_lines(report: Report, opened: Counter[str], waived: Counter[str], show: int) -> list[str]:
    """Open and waived findings per rule, so a long batch ends with the overview. The id comes last and
    whole, whatever its length (ids are copied into waivers)."""
    rows = [(r["id"], r["severity"]) for rs in report.rulesets for r in rs["rules"]
            if (opened[r["id"]] or waived[r["id"]]) and SEVERITY_BY_LABEL[r["severity"]] >= show]
    if not rows:
        return []
    lines = ["findings by rule", f"{'open':>6}  {'waived':>6}  {'severity':<8}  rule id"]
    lines += [f"{opened[rule]:>6}  {waived[rule]:>6}  {severity:<8}  {rule}" for rule, severity in rows]
    return lines


def write_table(report: Report, out: TextIO, width: int | None = None, color: bool = False,
                difficulty: bool = False, show: str | None = None) -> None:
    """Each screen's findings, then the count per rule and the summary line. With `show` (a severity),
    only findings at or above it are listed, and screens with none are left out of the listing."""
    console = Console(file=out, width=width or 80, force_terminal=color, no_color=not color,
                      highlight=False, soft_wrap=False)
    profiles = [p["id"] for p in report.profiles]
    least = SEVERITY_BY_LABEL[show] if show else 0
    opened: Counter[str] = Counter()
    waived: Counter[str] = Counter()
    for s in report.screens:
        _rule_counts(s, opened, waived)
        block = _screen_rows(s, width or 80, color, least)
        if show and not block:
            continue
        title = f"{s['path']} :: {s['name']}" if s["name"] else s["path"]
        console.print(Text(title, style="bold underline"))
        console.print(Text(_device_line(s), style="dim"))
        for notice in s["notices"]:  # wrapped here so that continued lines hang under the text
            for line in _wrap(f"note: {notice}", width or 80, "      "):
                console.print(Text(line, style="yellow"))
        if block:
            console.file.write("\n".join(block) + "\n")
        if difficulty:
            hard = _difficulty_table(s, profiles)
            if hard is not None:
                console.print(hard)
        counts = s["summary"]
        reasons = Counter(t["reason"].split(" as #")[0] for t in s["targets"] if t["status"] == "unchecked")
        line = f"{counts['pass']} pass, {counts['fail']} fail, {counts['partial']} partial"
        if counts["exempt"]:
            line += f", {counts['exempt']} exempt (waived)"
        if counts["unchecked"]:
            why = ", ".join(f"{n} {r}" for r, n in sorted(reasons.items()))
            line += f", {counts['unchecked']} unchecked ({why})"
        plans = s.get("plans")
        if plans and (plans["grow"] or plans["move"]):
            line += (f"; fix plans: {plans['grow']} by touch area alone (+{plans['area_added']:g} "
                     f"{plans['unit'][:-1]}²), {plans['move']} need a move")
        console.print(line)
        console.print()
    if report.errors and not color:  # in a terminal they were just printed on stderr
        for e in report.errors:
            where = f"{e['path']}:{e['line']}" if e["line"] else e["path"]
            console.print(Text(f"error: {where}: {e['message']}", style="bold red"))
    for w in report.waivers:
        if w["state"] != "active":
            why = "matches nothing" if w["state"] == "stale" else f"expired on {w['expires']}"
            console.print(Text(f"waiver {w['target']} / {w['rule']} on {w['screen']} {why}", style="yellow"))
    for k, line in enumerate(_rule_lines(report, opened, waived, least)):
        console.print(Text(line, style="bold" if k < 2 else ""), soft_wrap=True)
    console.print(Text(summary_line(report.summary, report.fail_level), style="bold"))
    console.print(Text(DISCLAIMER, style="dim"))


def write_journey_table(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    """A journey: one row per touch, time and hit chance per profile, totals at the end."""
    buf = io.StringIO()
    console = Console(file=buf, width=width or 80, force_terminal=color, no_color=not color, highlight=False)
    profiles = [t["profile"] for t in record["totals"]]
    console.print(Text(f"{record['journey']}: {len(record['steps'])} touches, starting at {record['start']}",
                       style="bold"))
    table = Table(header_style="bold", pad_edge=False, show_edge=False)
    table.add_column("#", justify="right")
    table.add_column("target", overflow="fold", max_width=24)
    table.add_column("ID bits", justify="right")
    for p in profiles:
        table.add_column(f"{p}\nms / hit", justify="right")
    for n, step in enumerate(record["steps"], start=1):
        cells = []
        for pred in step["predictions"]:
            hit = "-" if pred["hit_probability"] is None else f"{pred['hit_probability'] * 100:.0f}%"
            cells.append(f"{pred['time_ms']:.0f} / {hit}")
        table.add_row(str(n), f"{step['screen'].rsplit('/', 1)[-1]} #{step['target']} {step['name']}",
                      f"{step['predictions'][0]['id_bits']:.2f}", *cells)
    console.print(table)
    for t in record["totals"]:
        if t["expected_misses"] is None:
            console.print(f"{t['profile']}: {t['time_ms'] / 1000:.2f} s of pointing (no ppi: misses unknown)")
        else:
            console.print(f"{t['profile']}: {t['time_ms'] / 1000:.2f} s of pointing, {t['expected_misses']:.2f} "
                          f"expected misses, {t['all_taps_hit'] * 100:.0f}% chance every tap lands")
    return buf.getvalue()


def _pct(v: float | None) -> str:
    return "-" if v is None else f"{v * 100:.0f}%"


def write_compare_table(record: dict[str, Any], width: int | None = None, color: bool = False) -> str:
    """Two alternatives side by side per profile, then the targets that make the difference."""
    buf = io.StringIO()
    console = Console(file=buf, width=width or 80, force_terminal=color, no_color=not color, highlight=False)
    console.print(Text(f"A: {record['A']}\nB: {record['B']}", style="bold"))
    console.print(f"{len(record['screens'])} screen(s) paired"
                  + (f"; only in A: {', '.join(record['only_in_A'])}" if record["only_in_A"] else "")
                  + (f"; only in B: {', '.join(record['only_in_B'])}" if record["only_in_B"] else ""))
    table = Table(header_style="bold", pad_edge=False, show_edge=False)
    for col in ("profile", "A miss/tap", "A ms/tap", "B miss/tap", "B ms/tap", "easier"):
        table.add_column(col, justify="left" if col == "profile" else "right")
    for r in record["ranking"]:
        table.add_row(r["profile"], _pct(r["A"]["mean_miss"]), f"{r['A']['mean_time_ms']:.0f}",
                      _pct(r["B"]["mean_miss"]), f"{r['B']['mean_time_ms']:.0f}", r["better"])
    console.print(table)
    if record["differences"]:
        first = record["ranking"][0]["profile"] if record["ranking"] else ""
        diff = Table(title=f"targets that make the difference ({first})", title_justify="left",
                     header_style="bold", pad_edge=False, show_edge=False)
        for col in ("target", "status A -> B", "miss A -> B", "ms A -> B"):
            diff.add_column(col, overflow="fold")
        for row in record["differences"]:
            p = row["by_profile"][0]
            ms = lambda v: "-" if v is None else f"{v:.0f}"
            diff.add_row(f"{row['name']}", f"{row['A'] or 'absent'} -> {row['B'] or 'absent'}",
                         f"{_pct(p['miss_A'])} -> {_pct(p['miss_B'])}", f"{ms(p['time_A'])} -> {ms(p['time_B'])}")
        console.print(diff)
    return buf.getvalue()
