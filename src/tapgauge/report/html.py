"""A self-contained HTML report for auditors: one file, no network, no external assets.

Summary by screen and by rule; per screen its overlay picture beside one row per target
(the target, a crop, its findings stacked with their severity, fix or waiver, and its
predicted misses with their caveat); a chart of predicted miss against size in mm per
profile with the rule minimums; filters (rule set, status, screen) that work from the
file alone; and the published source of every rule. Nothing scrolls sideways at 1024 px
and up; printed, each screen starts an A4 page and its picture is never split. Headings,
table headers, alt text, labelled controls and high-contrast text: it passes its own basics.
"""

from __future__ import annotations

import base64
import io
import zlib
from collections import Counter, deque
from collections.abc import Iterator
from concurrent.futures import Future
from dataclasses import dataclass
from html import escape
from itertools import chain
from pathlib import Path
from typing import Any, NamedTuple, TextIO

import orjson

from tapgauge.device import MM_PER_INCH
from tapgauge.heap import keep_freed_memory, map_large_blocks, shared_with_workers
from tapgauge.report.findings import first_profile, rule_index, screen_rows
from tapgauge.report.records import Report
from tapgauge.report.verdict import DISCLAIMER, summary_line

OVERLAY_WIDTH = 720  # px drawn; shown at half that (OVERLAY_SHOWN) with text drawn twice as large, so
OVERLAY_SHOWN = 360  # tags read at about 12 px; "Enlarge" shows the picture at its drawn size
CROP_SIZE = 96  # px: the longer side of a target's crop
CROP_GAP = 2.0  # Image.resize's reducing_gap for the crops (Pillow's thumbnail default)
STATUS_WORDS = {"pass": "pass", "fail": "fail", "partial": "partial", "exempt": "exempt (waived)",
                "unchecked": "unchecked"}
MISS_CAVEAT = ("Predicted misses are model estimates for comparing designs and people, not a promise of how a "
               "person will do; the figure in brackets is relative to the typical adult.")

CSS = """
:root { --ink: #1a1a1a; --muted: #4a4a4a; --line: #c9c9c9; --paper: #ffffff; --band: #f2f4f1; --accent: #0b5394; }
* { box-sizing: border-box; }
body { font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; color: var(--ink);
       background: var(--paper); margin: 0; }
header, main { max-width: 1180px; margin: 0 auto; padding: 0 20px; }
header { border-bottom: 3px solid var(--ink); padding-top: 18px; padding-bottom: 10px; }
h1 { font-size: 1.7rem; margin: 0 0 6px; }
h2 { font-size: 1.3rem; margin: 28px 0 10px; border-bottom: 1px solid var(--line); padding-bottom: 4px; }
h3 { font-size: 1.1rem; margin: 0 0 6px; overflow-wrap: anywhere; }
a { color: var(--accent); }
a:focus, input:focus, select:focus, button:focus { outline: 3px solid #e69f00; outline-offset: 2px; }
.skip { position: absolute; left: -999px; } .skip:focus { left: 10px; top: 10px; background: var(--paper); padding: 6px; }
.note { background: var(--band); border-left: 4px solid var(--ink); padding: 8px 12px; }
.totals { display: flex; flex-wrap: wrap; gap: 8px 18px; padding: 0; list-style: none; }
.totals li { font-weight: 600; }
table { border-collapse: collapse; width: 100%; margin: 6px 0 14px; table-layout: fixed; }
caption { text-align: left; font-weight: 600; padding: 4px 0; }
th, td { border: 1px solid var(--line); padding: 4px 6px; text-align: left; vertical-align: top;
         overflow-wrap: anywhere; }
thead th { background: var(--band); font-size: 0.88rem; overflow-wrap: normal; hyphens: manual; }
.id { display: inline-block; max-width: 100%; overflow-wrap: anywhere; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.nowrap, .badge { white-space: nowrap; }
.badge { display: inline-block; padding: 0 6px; border-radius: 3px; font-weight: 600; border: 1px solid currentColor; }
.s-fail { color: #a23c00; } .s-pass { color: #005a8c; } .s-exempt { color: #00684c; }
.s-partial { color: #8a3466; } .s-unchecked { color: var(--muted); }
.v-error { color: #a3000b; } .v-warning { color: #6b4e00; } .v-note { color: #4a4a4a; }
.badge.v-error { font-weight: 700; } .badge.v-note { font-weight: 500; border-style: dashed; }
#filters fieldset { display: inline-block; border: 1px solid var(--line); margin: 0 12px 8px 0; padding: 6px 10px; }
#filters label { margin-right: 10px; white-space: nowrap; }
article.screen { border-top: 2px solid var(--ink); padding-top: 12px; margin-top: 22px; }
.device { color: var(--muted); margin: 0 0 8px; }
.pair { display: grid; grid-template-columns: 360px minmax(0, 1fr); gap: 16px; align-items: start; }
.pair figure { margin: 0; min-width: 0; }
.pair > div { min-width: 0; }
.pair img.overlay { width: 100%; height: auto; border: 1px solid var(--line); }
.pair .side { min-width: 0; }
.pair .side.zoomed { grid-column: 1 / -1; }
.pair .side.zoomed img.overlay { width: auto; max-width: 100%; }
button.zoom { font: inherit; margin-top: 4px; }
figcaption { color: var(--muted); font-size: 0.9rem; }
img.crop { max-width: 96px; max-height: 96px; height: auto; border: 1px solid var(--line); display: block; margin-top: 4px; }
table.targets col.t { width: 28%; } table.targets col.f { width: 48%; } table.targets col.m { width: 24%; }
ul.findings, ul.misses { list-style: none; margin: 0; padding: 0; }
ul.findings li { margin: 0 0 8px; } ul.findings li:last-child { margin-bottom: 0; }
ul.findings .what { display: block; }
ul.findings .how { display: block; color: var(--muted); font-size: 0.92rem; }
.caveat { color: var(--muted); font-size: 0.9rem; }
.charts { display: flex; flex-wrap: wrap; gap: 12px; margin-top: 10px; }
.charts figure { margin: 0; flex: 1 1 250px; max-width: 360px; }
.charts svg { width: 100%; height: auto; }
.chart-key { font-size: 0.9rem; color: var(--muted); margin: 4px 0 0; }
.empty { color: var(--muted); font-style: italic; }
dl.sources dt { font-weight: 700; margin-top: 8px; }
dl.sources dd { margin: 0 0 0 16px; overflow-wrap: anywhere; }
@media (max-width: 760px) { .pair { grid-template-columns: minmax(0, 1fr); } }
@media print {
  @page { size: A4; margin: 10mm; }
  #filters, .skip, button.zoom, img.crop, .caveat { display: none !important; }
  body { font-size: 8pt; line-height: 1.3; } header, main { max-width: none; padding: 0; }
  h2, h3, caption { break-after: avoid-page; }
  h3 { font-size: 10.5pt; }
  #screens { break-before: page; }
  #screens > h2 { margin-top: 0; }
  article.screen + article.screen { break-before: page; }
  article.screen { border-top: none; margin-top: 0; padding-top: 0; }
  /* Picture and charts in a narrow left column, the findings beside them: a screen fits one page. */
  article.screen { display: grid; grid-template-columns: 50mm minmax(0, 1fr); column-gap: 4mm; align-items: start; }
  article.screen > h3, article.screen > .device { grid-column: 1 / -1; }
  .pair { display: contents; }
  .pair .side { grid-column: 1; grid-row: 3; }
  .pair .list { grid-column: 2; grid-row: 3 / span 2; }
  article.screen > .charts { grid-column: 1; grid-row: 4; flex-direction: column; flex-wrap: nowrap; }
  .pair figure, .charts figure, img { break-inside: avoid; }
  .pair img.overlay { width: auto; max-width: 100%; max-height: 125mm; }
  ul.findings li { margin-bottom: 3px; } ul.findings .how { font-size: 7.5pt; }
  th, td { padding: 2px 4px; }
  .charts { gap: 1mm; margin-top: 2mm; } .charts figure { flex: none; max-width: none; }
  .charts svg { max-height: 30mm; }
  article.screen > .chart-key { grid-column: 1 / -1; grid-row: 5; }
  ul.findings .what, ul.findings .how { display: inline; } ul.findings .how::before { content: " / "; }
  table.targets { font-size: 7.5pt; } table.targets col.t { width: 22%; } table.targets col.f { width: 60%; }
  table.targets col.m { width: 18%; }
  .chart-key { font-size: 7pt; }
  tr { break-inside: avoid; }
  a { color: var(--ink); text-decoration: none; }
  dl.sources a[href^="http"]::after { content: " (" attr(href) ")"; font-size: 0.85em; }
  [hidden] { display: revert !important; }
}
"""

SCRIPT = """
(function () {
  var panel = document.getElementById('filters');
  panel.hidden = false;
  var screenSelect = document.getElementById('f-screen');
  var count = document.getElementById('f-count');
  function checked(name) {
    var out = {};
    document.querySelectorAll('input[name="' + name + '"]:checked').forEach(function (e) { out[e.value] = true; });
    return out;
  }
  function apply() {
    var sets = checked('ruleset'), states = checked('status'), screen = screenSelect.value, shown = 0;
    document.querySelectorAll('article.screen').forEach(function (a) {
      var on = !screen || a.getAttribute('data-screen') === screen;
      a.hidden = !on;
      a.querySelectorAll('tr.target').forEach(function (row) {
        var any = false;
        row.querySelectorAll('li[data-ruleset]').forEach(function (item) {
          var visible = on && sets[item.getAttribute('data-ruleset')] && states[item.getAttribute('data-status')];
          item.hidden = !visible;
          if (visible) { shown += 1; any = true; }
        });
        row.hidden = !any;
      });
    });
    count.textContent = shown + (shown === 1 ? ' finding shown' : ' findings shown');
  }
  panel.querySelectorAll('input, select').forEach(function (e) { e.addEventListener('change', apply); });
  document.querySelectorAll('button.zoom').forEach(function (b) {
    b.hidden = false;
    b.addEventListener('click', function () {
      var fig = b.closest('.side');
      var on = fig.classList.toggle('zoomed');
      b.setAttribute('aria-pressed', on ? 'true' : 'false');
      b.textContent = on ? 'Show smaller' : 'Enlarge the picture';
    });
  });
  apply();
})();
"""


def _data_uri(img: Any, fmt: str = "JPEG", quality: int = 72) -> str:
    buf = io.BytesIO()
    if fmt == "JPEG":
        img.convert("RGB").save(buf, "JPEG", quality=quality, optimize=True)
        mime = "image/jpeg"
    else:
        # Overlays are flat colour and line art: 64 colours keep them sharp at a third of a JPEG's size,
        # with every mark's colour kept exact (a status must not drift towards another's colour).
        from tapgauge.report.overlay import png_bytes

        buf.write(png_bytes(img, 64))
        mime = "image/png"
    return f"data:{mime};base64,{base64.b64encode(buf.getvalue()).decode('ascii')}"


@dataclass(frozen=True)
class Head:
    """What each screen's article needs of the report: small, so each drawing process gets it once."""

    rulesets: list[dict[str, Any]]
    profiles: list[dict[str, Any]]
    rules: dict[str, dict[str, Any]]  # rule id -> its record
    profile: str  # the first profile: the one the fixes' advice is worked out for

    @classmethod
    def of(cls, report: Report) -> Head:
        return cls(report.rulesets, report.profiles, rule_index(report), first_profile(report))


def _pictures(screen: dict[str, Any], report: Head) -> tuple[str, dict[int, str]]:
    """The scaled overlay as a data URI, and a crop per failing target (by number)."""
    from PIL import Image

    from tapgauge.report.overlay import align, draw_overlay

    shot = None
    if screen["image"]:
        try:
            shot = Image.open(screen["image"])
            shot.load()
        except OSError:
            shot = None
    small = draw_overlay(screen, report, shot, max_width=OVERLAY_WIDTH, text_scale=OVERLAY_WIDTH / OVERLAY_SHOWN)
    fit = align(screen, shot.size) if shot is not None else None
    if shot is not None and fit is not None and fit.on_picture:  # crops sit where the overlay puts the boxes
        source, fx, fy = shot.convert("RGB"), fit.fx, fit.fy
        if screen["image"] == screen["path"]:  # a marked screenshot: crops without the tester's strokes too
            import numpy as np

            from tapgauge.report.markers import knock_back_markers

            rgb, _ = knock_back_markers(np.asarray(source), [tuple(t["bounds"]) for t in screen["targets"]])
            source = Image.fromarray(rgb)
    else:  # no screenshot, or one the boxes cannot be placed on: crop the wireframe
        source = small
        fx = fy = small.width / screen["width"] if screen["width"] else 1.0
    crops: dict[int, str] = {}
    for t in screen["targets"]:
        if t["status"] not in ("fail", "partial"):
            continue
        l, top, r, b = t["bounds"][0] * fx, t["bounds"][1] * fy, t["bounds"][2] * fx, t["bounds"][3] * fy
        pad = max(12.0, 0.3 * max(r - l, b - top))
        box = (max(0, int(l - pad)), max(0, int(top - pad)), min(source.width, int(r + pad)),
               min(source.height, int(b + pad)))
        if box[2] <= box[0] or box[3] <= box[1]:
            continue
        crops[t["number"]] = _data_uri(_thumbnail(source.crop(box)), "JPEG", quality=80)
    return _data_uri(small, "PNG"), crops


def _thumbnail(crop: Any) -> Any:
    """A crop at most CROP_SIZE on its longer side. Where it is four or more times too big, a box filter
    takes it down by a whole factor first and Lanczos goes the rest of the way (Image.resize's
    reducing_gap; Pillow's own default for thumbnails): on the bench's crops 30% quicker, a third of
    a level from Lanczos all the way on average, far under the JPEG's own error (about 6)."""
    from PIL import Image

    k = CROP_SIZE / max(crop.width, crop.height)
    if k >= 1:
        return crop
    return crop.resize((max(1, round(crop.width * k)), max(1, round(crop.height * k))), Image.Resampling.LANCZOS,
                       reducing_gap=CROP_GAP)


# Status marks in the chart: shape and fill as well as colour (the colours are the page's status colours).
POINTS = {"fail": ("#a23c00", "triangle", True), "partial": ("#8a3466", "diamond", False),
          "exempt": ("#00684c", "square", True), "pass": ("#005a8c", "circle", False)}


def _miss_curve(sides_mm: list[float], alpha: float, sigma_a: float) -> list[float]:
    """The predicted miss of a square target of each side (one call for the whole curve)."""
    from tapgauge.difficulty import hit_probability

    return [1.0 - float(h) for h in hit_probability(sides_mm, sides_mm, alpha, sigma_a)]  # type: ignore[arg-type]


def _minimums_mm(screen: dict[str, Any], report: Head) -> list[tuple[str, float]]:
    """The screen's size rules as a side in mm: (rule id, mm)."""
    d = screen["device"]
    out = []
    for rs in report.rulesets:
        if rs["id"] not in screen["rulesets"]:
            continue
        for r in rs["rules"]:
            if r["kind"] != "min-size":
                continue
            size = float(r["params"]["size"])
            mm = size if r["unit"] == "mm" else size * d["coords_per_unit"] / d["xdpi"] * MM_PER_INCH
            out.append((r["id"], mm))
    return sorted(out, key=lambda x: x[1])


def _charts(screen: dict[str, Any], report: Head) -> str:
    """Per profile, predicted miss against the target's smaller side in mm: each target a point marked by
    status, the model's curve for square targets, and the screen's size minimums as vertical lines."""
    if not screen["device"]["xdpi"]:
        return ""
    points: dict[str, list[tuple[float, float, str, int]]] = {}
    for t in screen["targets"]:
        if t["size_mm"] is None:
            continue
        side = min(t["size_mm"]["width"], t["size_mm"]["height"])
        for d in t["difficulty"]:
            if d["miss_probability"] is not None and t["status"] in POINTS:
                points.setdefault(d["profile"], []).append((side, d["miss_probability"], t["status"], t["number"]))
    if not points:
        return ""
    minimums = _minimums_mm(screen, report)
    xmax = max([p[0] for pts in points.values() for p in pts] + [m for _, m in minimums] + [5.0]) * 1.12
    w, h, left, bottom, top, right = 320, 230, 44, 38, 26, 10
    figures = []
    for k, profile in enumerate(p for p in report.profiles if p["id"] in points):
        key = "|".join((screen["path"], screen["name"], profile["id"]))
        uid = f"c{zlib.crc32(key.encode()):08x}"  # stable across runs (hash() is not)

        def X(v: float) -> float:
            return left + v / xmax * (w - left - right)

        def Y(v: float) -> float:
            return h - bottom - v * (h - top - bottom)

        pts = points[profile["id"]]
        out = [f'<svg viewBox="0 0 {w} {h}" role="img" aria-labelledby="{uid}-t {uid}-d" xmlns="http://www.w3.org/2000/svg">',
               f'<title id="{uid}-t">Predicted miss against target size, {escape(profile["id"])}</title>',
               f'<desc id="{uid}-d">{len(pts)} targets of this screen: the smaller side in mm across, the predicted '
               f'chance of missing for the profile {escape(profile["title"])} up; the curve is the model for square '
               f'targets; vertical lines are the size minimums of the rules applied.</desc>',
               f'<text x="{left}" y="16" font-size="12" font-weight="600">{escape(profile["id"])}</text>']
        for v in (0.0, 0.25, 0.5, 0.75, 1.0):
            out.append(f'<line x1="{left}" y1="{Y(v):.1f}" x2="{w - right}" y2="{Y(v):.1f}" stroke="#e3e3e3"/>')
            out.append(f'<text x="{left - 5}" y="{Y(v) + 4:.1f}" font-size="10" text-anchor="end">{v:.0%}</text>')
        step = 5 if xmax > 15 else 2 if xmax > 6 else 1
        for v in range(0, int(xmax) + 1, step):
            out.append(f'<text x="{X(v):.1f}" y="{h - bottom + 14}" font-size="10" text-anchor="middle">{v}</text>')
        out.append(f'<text x="{(left + w - right) / 2:.0f}" y="{h - 6}" font-size="11" text-anchor="middle">'
                   "smaller side (mm)</text>")
        out.append(f'<line x1="{left}" y1="{Y(0):.1f}" x2="{w - right}" y2="{Y(0):.1f}" stroke="#1a1a1a"/>')
        out.append(f'<line x1="{left}" y1="{Y(0):.1f}" x2="{left}" y2="{Y(1):.1f}" stroke="#1a1a1a"/>')
        for n, (rule, mm) in enumerate(minimums):
            out.append(f'<line x1="{X(mm):.1f}" y1="{Y(0):.1f}" x2="{X(mm):.1f}" y2="{Y(1):.1f}" stroke="#6b6b6b" '
                       f'stroke-dasharray="4 3"><title>{escape(rule)}: {mm:.1f} mm</title></line>')
            out.append(f'<text x="{X(mm) + 3:.1f}" y="{Y(1) + 10 + 11 * n:.1f}" font-size="9" fill="#4a4a4a">'
                       f"{n + 1}</text>")
        sides = [xmax * q / 60 for q in range(1, 61)]
        curve = " ".join(f"{X(v):.1f},{Y(m):.1f}"
                         for v, m in zip(sides, _miss_curve(sides, profile["alpha"], profile["sigma_a_mm"])))
        out.append(f'<polyline points="{curve}" fill="none" stroke="#7a7a7a" stroke-width="1"/>')
        for side, miss, status, number in pts:
            colour, shape, filled = POINTS[status]
            out.append(_mark(shape, X(side), Y(miss), colour, filled, f"#{number} {status}: {miss:.0%} at {side:.1f} mm"))
        out.append("</svg>")
        figures.append(f'<figure>{"".join(out)}</figure>')
    key = "; ".join(f"{n + 1}: {escape(rule)} ({mm:.1f} mm)" for n, (rule, mm) in enumerate(minimums))
    shapes = ", ".join(f"{STATUS_WORDS[st]} {word}" for st, word in
                       (("fail", "filled triangle"), ("partial", "open diamond"), ("exempt", "filled square"),
                        ("pass", "open circle")))
    return (f'<div class="charts">{"".join(figures)}</div>'
            f'<p class="chart-key">Predicted miss against the target\'s smaller side, per profile. Targets: {shapes}. '
            f"Grey curve: the model for a square target. Dashed lines, the size minimums: {key}. {escape(MISS_CAVEAT)}</p>")


def _mark(shape: str, x: float, y: float, colour: str, filled: bool = True, label: str = "") -> str:
    fill = colour if filled else "#ffffff"
    paint = f'fill="{fill}" stroke="{colour}" stroke-width="1.5"'
    tip = f"<title>{escape(label)}</title>" if label else ""
    if shape == "square":
        return f'<rect x="{x - 3.5:.1f}" y="{y - 3.5:.1f}" width="7" height="7" {paint}>{tip}</rect>'
    if shape == "diamond":
        return f'<polygon points="{x:.1f},{y - 5:.1f} {x + 5:.1f},{y:.1f} {x:.1f},{y + 5:.1f} {x - 5:.1f},{y:.1f}" {paint}>{tip}</polygon>'
    if shape == "triangle":
        return f'<polygon points="{x:.1f},{y - 5:.1f} {x + 5:.1f},{y + 4:.1f} {x - 5:.1f},{y + 4:.1f}" {paint}>{tip}</polygon>'
    return f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3.8" {paint}>{tip}</circle>'


def _badge(status: str, worst: str = "") -> str:
    """A target's status; a failing one says how severe its worst open finding is."""
    word = STATUS_WORDS[status] + (f" ({worst})" if worst else "")
    return f'<span class="badge s-{status}">{escape(word)}</span>'


def _severity(severity: str) -> str:
    return f'<span class="badge v-{severity}">{escape(severity)}</span>'


class _Listed(NamedTuple):
    """What the page's top says of one screen: its title, its counts by status, its findings."""

    title: str
    counts: dict[str, int]
    findings: int


def _count_findings(report: Report) -> tuple[int, Counter[str], Counter[str], list[_Listed]]:
    """Findings in all, open ones per rule and waived ones per rule, and each screen's line in the
    summary: one pass over the screens, before any is drawn."""
    total, open_, waived = 0, Counter[str](), Counter[str]()
    listed = []
    for scr in report.screens:
        mine = 0
        for t in scr["targets"]:
            for f in t["findings"]:
                mine += 1
                if f["waiver"]:
                    waived[f["rule"]] += 1
                elif t["status"] in ("fail", "partial"):
                    open_[f["rule"]] += 1
        total += mine
        listed.append(_Listed(f"{scr['path']} :: {scr['name']}" if scr["name"] else scr["path"], scr["summary"], mine))
    return total, open_, waived, listed


def write_html(report: Report, out: TextIO, width: int | None = None, jobs: int | None = None) -> None:
    """Totals and summaries first, so it reads a spooled report's screens several times. The screens'
    pictures are drawn in `jobs` processes (default: one per core)."""
    s = report.summary
    n_findings, rule_counts, waived, listed = _count_findings(report)
    rulesets = [rs["id"] for rs in report.rulesets]
    statuses = ("fail", "partial", "exempt")
    h: list[str] = [
        "<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        "<title>Touch target report</title>", f"<style>{CSS}</style>", "</head>", "<body>",
        '<a class="skip" href="#screens">Skip to the screens</a>',
        "<header>", "<h1>Touch target report</h1>",
        '<ul class="totals">'
        f"<li>{s['screens']} screens</li><li>{s['targets']} targets</li><li>{s['pass']} pass</li>"
        f"<li>{s['fail']} fail</li><li>{s['partial']} partial</li><li>{s['exempt']} exempt</li>"
        f"<li>{s['unchecked']} unchecked</li><li>{n_findings} findings</li></ul>",
        f'<p class="verdict"><strong>{escape(summary_line(s, report.fail_level))}.</strong></p>',
        f'<p class="note">Measured by tapgauge from the screens listed below. {escape(DISCLAIMER)} Some WCAG '
        "exceptions (equivalent control, inline, platform-set size, essential) need a person's judgement; "
        "they appear here as waivers with their reason.</p>",
        "</header>", "<main>",
    ]
    # Summary by screen and by rule.
    h += ['<section aria-labelledby="h-summary">', '<h2 id="h-summary">Summary</h2>',
          '<table><caption>By screen</caption><colgroup><col style="width:30%"></colgroup><thead><tr>'
          + "".join(f'<th scope="col">{c}</th>' for c in ("Screen", "Targets", "Pass", "Fail", "Partial",
                                                           "Exempt", "Unchecked", "Findings"))
          + "</tr></thead><tbody>"]
    out.write("\n".join(h) + "\n")
    for k, (title, c, found) in enumerate(listed):
        out.write(f'<tr><th scope="row"><a href="#s-{k}">{escape(title)}</a></th>'
                  + "".join(f'<td class="num">{c[x]}</td>' for x in ("targets", "pass", "fail", "partial",
                                                                    "exempt", "unchecked"))
                  + f'<td class="num">{found}</td></tr>\n')
    h = ["</tbody></table>"]
    h.append('<table><caption>By rule</caption><colgroup><col style="width:26%"><col style="width:12%">'
             '<col style="width:10%"><col style="width:10%"></colgroup><thead><tr>'
             + "".join(f'<th scope="col">{c}</th>' for c in ("Rule", "Severity", "Open findings", "Waived", "Summary"))
             + "</tr></thead><tbody>")
    for rs in report.rulesets:
        for r in rs["rules"]:
            h.append(f'<tr><th scope="row"><a class="id" href="#src-{escape(rs["id"])}">{escape(r["id"])}</a></th>'
                     f'<td>{_severity(r["severity"])}</td><td class="num">{rule_counts[r["id"]]}</td>'
                     f'<td class="num">{waived[r["id"]]}</td><td>{escape(r["summary"])}</td></tr>')
    h += ["</tbody></table>", "</section>"]
    # Filters (shown only when the script runs; without it every finding stays visible).
    h += ['<section id="filters" aria-labelledby="h-filters" hidden>', '<h2 id="h-filters">Filter the findings</h2>',
          "<fieldset><legend>Rule set</legend>"]
    for rid in rulesets:
        h.append(f'<label><input type="checkbox" name="ruleset" value="{escape(rid)}" checked> {escape(rid)}</label>')
    h.append("</fieldset><fieldset><legend>Status</legend>")
    for st in statuses:
        h.append(f'<label><input type="checkbox" name="status" value="{st}" checked> {escape(STATUS_WORDS[st])}</label>')
    h.append('</fieldset><label for="f-screen">Screen</label> <select id="f-screen"><option value="">All screens</option>')
    out.write("\n".join(h) + "\n")
    for title, _, _ in listed:
        out.write(f'<option value="{escape(title)}">{escape(title)}</option>\n')
    h = ['</select> <p id="f-count" role="status" aria-live="polite"></p>', "</section>"]
    # One article per screen.
    h += ['<section id="screens" aria-labelledby="h-screens">', '<h2 id="h-screens">Screens</h2>']
    out.write("\n".join(h) + "\n")
    for article in _articles(report, Head.of(report), jobs):
        out.write(article + "\n")
    h = ["</section>"]
    # Sources.
    h += ['<section aria-labelledby="h-sources">', '<h2 id="h-sources">Rule sources</h2>', '<dl class="sources">']
    for rs in report.rulesets:
        h.append(f'<dt id="src-{escape(rs["id"])}">{escape(rs["id"])}: {escape(rs["title"])}</dt>'
                 f'<dd>{escape(rs["source"])}. <a href="{escape(rs["url"])}">{escape(rs["url"])}</a></dd>')
        for r in rs["rules"]:
            if r["source"] != rs["source"] or r["url"] != rs["url"]:
                h.append(f'<dd>{escape(r["id"])}: {escape(r["source"])}. <a href="{escape(r["url"])}">{escape(r["url"])}</a></dd>')
    for p in report.profiles:
        h.append(f'<dt>profile {escape(p["id"])}: {escape(p["title"])}</dt><dd>Timing: {escape(p["timing_source"])}. '
                 f'Spread: {escape(p["spread_source"])}.</dd>')
    h += ["</dl>", "</section>"]
    if report.errors:
        h += ['<section aria-labelledby="h-errors">', '<h2 id="h-errors">Files that could not be read</h2>', "<ul>"]
        for e in report.errors:
            where = f"{e['path']}:{e['line']}" if e["line"] else e["path"]
            h.append(f"<li>{escape(where)}: {escape(e['message'])}</li>")
        h += ["</ul>", "</section>"]
    h += ["</main>", f"<script>{SCRIPT}</script>", "</body>", "</html>"]
    out.write("\n".join(h) + "\n")


def _num(v: float) -> str:
    return f"{round(v, 1):g}"


def _misses(t: dict[str, Any]) -> str:
    """A target's predicted miss per profile, and how many times the typical adult's each one is."""
    base = next((d["miss_probability"] for d in t["difficulty"] if d["profile"] == "typical-adult"), None)
    items = []
    for d in t["difficulty"]:
        miss = d["miss_probability"]
        if miss is None:
            continue
        ratio = f" ({miss / base:.1f}x)" if base and d["profile"] != "typical-adult" else ""
        items.append(f'<li><span class="id">{escape(d["profile"])}</span> '
                     f'<span class="nowrap">{miss:.0%}{ratio}</span></li>')
    return f'<ul class="misses">{"".join(items)}</ul>' if items else '<span class="empty">no ppi: unknown</span>'


def _target_row(t: dict[str, Any], unit: str, rows: dict[tuple[int, str], dict[str, str]], crop: str | None) -> str:
    """One row per target: who it is (name, size, crop, status), its findings stacked, its misses."""
    open_ = [f["severity"] for f in t["findings"] if not f["waiver"]]
    worst = next((v for v in ("error", "warning", "note") if v in open_), "") if t["status"] == "fail" else ""
    size = f'{t["size"]["width"]:g} x {t["size"]["height"]:g} {escape(unit)}'
    if t["size_mm"]:
        size += f'<br>{t["size_mm"]["width"]:.1f} x {t["size_mm"]["height"]:.1f} mm'
    name = escape(t["name"] or t["class"])
    crop_html = (f'<img class="crop" loading="lazy" decoding="async" src="{crop}" alt="Close-up of target '
                 f'#{t["number"]} {name}">' if crop else "")
    items = []
    for f in t["findings"]:
        row = rows.get((t["number"], f["rule"]), {})
        status = "exempt" if f["waiver"] else t["status"]
        rule_set = f["rule"].split("/", 1)[0]
        how = escape(row.get("waiver") or "") if f["waiver"] else escape(row.get("fix", ""))
        items.append(
            f'<li data-ruleset="{escape(rule_set)}" data-status="{status}">'
            f'<span class="what">{_severity(f["severity"])} <a class="id" href="#src-{escape(rule_set)}">{escape(f["rule"])}:</a> '
            f'<span class="nowrap">found {_num(f["measured"])} {escape(f["unit"])}</span>, '
            f'<span class="nowrap">needs {_num(f["required"])} {escape(f["unit"])}</span>'
            + (" <strong>waived</strong>" if f["waiver"] else "") + "</span>"
            # The message adds to "found, needs" where it names another target (a neighbour, a cover).
            + (f'<span class="how">{escape(f["message"])}</span>' if "#" in f["message"] else "")
            + (f'<span class="how">{"Waiver" if f["waiver"] else "Fix"}: {how}</span>' if how else "") + "</li>")
    return (f'<tr class="target"><th scope="row">#{t["number"]} {name}<br><small>{size}</small>{crop_html}'
            f'<br>{_badge(t["status"], worst)}</th><td><ul class="findings">{"".join(items)}</ul></td>'
            f"<td>{_misses(t)}</td></tr>")


def _articles(report: Report, head: Head, jobs: int | None = None) -> Iterator[str]:
    """Each screen's article, in the report's order. With several screens and cores they are made in
    worker processes, a few screens ahead: the pictures are most of an HTML report's work, and
    each screen's are its own. A worker is sent the screen's record as its JSON text, which it reads
    itself: the main process neither reads nor pickles the dict. Should a worker die (a crash in a
    picture library, or the kernel out of memory), the screens not yet made are made here, one after
    another, as before."""
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    from tapgauge.pipeline import default_jobs

    numbered: Iterator[tuple[int, str | bytes]] = enumerate(report.screen_texts)
    jobs = min(jobs or default_jobs(), report.summary["screens"])
    if jobs < 2:
        yield from (_screen_html(k, orjson.loads(text), head) for k, text in numbered)
        return
    map_large_blocks()  # the drawn pages arrive 64 KiB at a time (heap.py)
    pool = ProcessPoolExecutor(max_workers=jobs, initializer=_given, initargs=(head,))
    pending: deque[tuple[tuple[int, str | bytes], Future[str]]] = deque()
    with shared_with_workers():  # the drawing processes fork at the first submit
        try:
            while True:
                while len(pending) < 4 * jobs and (item := next(numbered, None)) is not None:
                    pending.append((item, pool.submit(_drawn, *item)))
                if not pending:
                    return
                item, future = pending.popleft()
                try:
                    article = future.result()
                except BrokenProcessPool:
                    numbered = chain([item], [i for i, _ in pending], numbered)
                    pending.clear()
                    break
                yield article
        finally:  # done, or stopped early (a failed write): wait for no work nobody will read
            pool.shutdown(wait=False, cancel_futures=True)
    yield from (_screen_html(k, orjson.loads(text), head) for k, text in numbered)


_HEAD: list[Head] = []  # a drawing process's report head, set once as it starts


def _given(head: Head) -> None:
    _HEAD[:] = [head]
    keep_freed_memory()


def _drawn(k: int, text: str | bytes) -> str:
    return _screen_html(k, orjson.loads(text), _HEAD[0])


def _screen_html(k: int, scr: dict[str, Any], report: Head) -> str:
    rows = screen_rows(scr, report.rules, report.profile)
    title = f"{scr['path']} :: {scr['name']}" if scr["name"] else scr["path"]
    d = scr["device"]
    listed = [t for t in scr["targets"] if t["findings"]]
    failing = [t for t in scr["targets"] if t["status"] in ("fail", "partial")]
    overlay, crops = _pictures(scr, report)
    device = f"{scr['platform']}, {scr['width']:g} x {scr['height']:g} {scr['coordinates']}, " + (
        f"{d['density_dpi']:g} dpi" if d["density_dpi"] else f"scale {d['scale']:g}" if d["scale"] else "points")
    if d["xdpi"]:
        device += ", physical size known"
    plans = scr.get("plans")
    if plans and (plans["grow"] or plans["move"]):
        device += (f"; fix plans: {plans['grow']} by touch area alone (adding {plans['area_added']:g} "
                   f"{plans['unit'][:-1]}²), {plans['move']} need a move")
    alt = (f"Screen {Path(scr['path']).name} with its {len(scr['targets'])} targets marked and numbered as in the "
           f"table: {len(failing)} failing or partial. The legend below the picture explains each mark.")
    by_target = {(int(r["target"].lstrip("#")), r["rule"]): r for r in rows}
    out = [f'<article class="screen" id="s-{k}" data-screen="{escape(title)}">', f"<h3>{escape(title)}</h3>",
           f'<p class="device">{escape(device)}</p>', '<div class="pair">', '<div class="side">',
           f'<figure><img class="overlay" decoding="async" src="{overlay}" alt="{escape(alt)}">'
           "<figcaption>Targets numbered as in the table. "
           '<button type="button" class="zoom" aria-pressed="false" hidden>Enlarge the picture</button>'
           "</figcaption></figure>", "</div>", '<div class="list">']
    if not listed:
        out.append('<p class="empty">No findings on this screen.</p>')
    else:
        out.append(f"<table class=\"targets\"><caption>Findings on {escape(Path(scr['path']).name)}, one row per target"
                   '</caption><colgroup><col class="t"><col class="f"><col class="m"></colgroup><thead><tr>'
                   '<th scope="col">Target</th><th scope="col">Findings, and the fix or waiver</th>'
                   '<th scope="col">Predicted miss</th></tr></thead><tbody>')
        unit = d["unit"]
        out += [_target_row(t, unit, by_target, crops.get(t["number"])) for t in listed]
        out.append("</tbody></table>")
        if any(dd["miss_probability"] is not None for t in listed for dd in t["difficulty"]):
            out.append(f'<p class="caveat">{escape(MISS_CAVEAT)}</p>')
    out += ["</div>", "</div>", _charts(scr, report), "</article>"]
    return "\n".join(out)
