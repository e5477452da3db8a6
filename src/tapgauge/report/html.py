"""A self-contained HTML report for auditors: one file, no network, no external assets.

Summary by screen and by rule, each screen's overlay picture beside its findings, a
small crop of each failing target, filters (rule set, status, screen) that work from
the file alone, a chart of predicted time against index of difficulty, and the
published source of every rule. Print-friendly; headings, table headers, alt text,
labelled controls and high-contrast text, so the report passes its own basics.
"""

from __future__ import annotations

import base64
import io
import math
from collections import Counter
from html import escape
from pathlib import Path
from typing import Any, TextIO

from tapgauge.report.findings import first_profile, rule_index, screen_rows
from tapgauge.report.records import Report
from tapgauge.report.verdict import DISCLAIMER, summary_line

OVERLAY_WIDTH = 400  # px: pictures are drawn small so a report of hundreds of screens stays light
CROP_SIZE = 96  # px: the longer side of a target's crop
PROFILE_MARKS = (("#0072B2", "circle"), ("#D55E00", "square"), ("#009E73", "diamond"), ("#CC79A7", "triangle"))
STATUS_WORDS = {"pass": "pass", "fail": "fail", "partial": "partial", "exempt": "exempt (waived)",
                "unchecked": "unchecked"}

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
table { border-collapse: collapse; width: 100%; margin: 6px 0 14px; }
caption { text-align: left; font-weight: 600; padding: 4px 0; }
th, td { border: 1px solid var(--line); padding: 4px 6px; text-align: left; vertical-align: top; }
thead th { background: var(--band); }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
.badge { display: inline-block; padding: 0 6px; border-radius: 3px; font-weight: 600; border: 1px solid currentColor; }
.s-fail { color: #a23c00; } .s-pass { color: #005a8c; } .s-exempt { color: #00684c; }
.s-partial { color: #8a3466; } .s-unchecked { color: var(--muted); }
.sev-error { font-weight: 700; } .sev-note { color: var(--muted); }
#filters fieldset { display: inline-block; border: 1px solid var(--line); margin: 0 12px 8px 0; padding: 6px 10px; }
#filters label { margin-right: 10px; white-space: nowrap; }
article.screen { border-top: 2px solid var(--ink); padding-top: 12px; margin-top: 22px; }
.device { color: var(--muted); margin: 0 0 8px; }
.pair { display: grid; grid-template-columns: minmax(220px, 340px) 1fr; gap: 16px; align-items: start; }
.pair figure { margin: 0; }
.pair > div { min-width: 0; overflow-x: auto; }
td, th { overflow-wrap: break-word; }
td.num, .badge, thead th { white-space: nowrap; }
.pair img.overlay { width: 100%; height: auto; border: 1px solid var(--line); }
figcaption { color: var(--muted); font-size: 0.9rem; }
img.crop { max-width: 96px; height: auto; border: 1px solid var(--line); display: block; }
.chart svg { max-width: 100%; height: auto; }
.empty { color: var(--muted); font-style: italic; }
dl.sources dt { font-weight: 700; margin-top: 8px; }
dl.sources dd { margin: 0 0 0 16px; }
@media (max-width: 760px) { .pair { grid-template-columns: 1fr; } }
@media print {
  #filters, .skip { display: none !important; }
  body { font-size: 10.5pt; } header, main { max-width: none; padding: 0; }
  article.screen { break-inside: avoid-page; } tr { break-inside: avoid; }
  a { color: var(--ink); } a[href^="http"]::after { content: " (" attr(href) ")"; font-size: 0.85em; }
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
      a.querySelectorAll('tr[data-ruleset]').forEach(function (row) {
        var visible = on && sets[row.getAttribute('data-ruleset')] && states[row.getAttribute('data-status')];
        row.hidden = !visible;
        if (visible) { shown += 1; }
      });
    });
    count.textContent = shown + (shown === 1 ? ' finding shown' : ' findings shown');
  }
  panel.querySelectorAll('input, select').forEach(function (e) { e.addEventListener('change', apply); });
  apply();
})();
"""


def _data_uri(img: Any, fmt: str = "JPEG", quality: int = 72) -> str:
    buf = io.BytesIO()
    if fmt == "JPEG":
        img.convert("RGB").save(buf, "JPEG", quality=quality, optimize=True)
        mime = "image/jpeg"
    else:
        # Overlays are flat colour and line art: 64 colours keep them sharp at a third of a JPEG's size.
        img.convert("RGB").quantize(64).save(buf, "PNG", optimize=True)
        mime = "image/png"
    return f"data:{mime};base64,{base64.b64encode(buf.getvalue()).decode('ascii')}"


def _pictures(screen: dict[str, Any], report: Report) -> tuple[str, dict[int, str]]:
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
    small = draw_overlay(screen, report, shot, max_width=OVERLAY_WIDTH)
    fit = align(screen, shot.size) if shot is not None else None
    if shot is not None and fit is not None and fit.on_picture:  # crops sit where the overlay puts the boxes
        source, fx, fy = shot.convert("RGB"), fit.fx, fit.fy
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
        crop = source.crop(box)
        k = CROP_SIZE / max(crop.width, crop.height)
        if k < 1:
            crop = crop.resize((max(1, round(crop.width * k)), max(1, round(crop.height * k))), Image.Resampling.LANCZOS)
        crops[t["number"]] = _data_uri(crop, "JPEG", quality=80)
    return _data_uri(small, "PNG"), crops


def _chart(screen: dict[str, Any], report: Report) -> str:
    """Inline SVG: predicted time against ID for this screen's targets, with each profile's line."""
    profiles = report.profiles
    points = [(p["id"], t["approach"]["id_bits"], d["time_ms"]) for t in screen["targets"] for d in t["difficulty"]
              for p in profiles if p["id"] == d["profile"]]
    if not points:
        return ""
    w, h, left, bottom, top, right = 460, 250, 52, 40, 14, 120
    xmax = max(1.0, max(x for _, x, _ in points)) * 1.1
    ymax = max(1.0, max(y for _, _, y in points), *(p["intercept_ms"] + p["slope_ms_per_bit"] * xmax for p in profiles)) * 1.05

    def X(v: float) -> float:
        return left + v / xmax * (w - left - right)

    def Y(v: float) -> float:
        return h - bottom - v / ymax * (h - top - bottom)

    out = [f'<svg viewBox="0 0 {w} {h}" role="img" aria-labelledby="c-{id(screen)}-t c-{id(screen)}-d" '
           f'xmlns="http://www.w3.org/2000/svg">',
           f'<title id="c-{id(screen)}-t">Predicted pointing time against index of difficulty</title>',
           f'<desc id="c-{id(screen)}-d">One mark per target and profile, from the screen\'s start point '
           f'({escape(str((screen["reach"] or {}).get("from", "")))}); lines are each profile\'s Fitts\'s-law fit.</desc>',
           f'<line x1="{left}" y1="{Y(0)}" x2="{w - right}" y2="{Y(0)}" stroke="#1a1a1a"/>',
           f'<line x1="{left}" y1="{Y(0)}" x2="{left}" y2="{top}" stroke="#1a1a1a"/>']
    step = max(1, math.ceil(xmax / 6))
    for v in range(0, int(xmax) + 1, step):
        out.append(f'<text x="{X(v):.1f}" y="{h - bottom + 16}" font-size="11" text-anchor="middle">{v}</text>')
    ystep = 10 ** math.floor(math.log10(ymax / 4)) if ymax > 4 else 1
    ystep *= 5 if ymax / ystep > 20 else 2 if ymax / ystep > 10 else 1
    v = 0.0
    while v <= ymax:
        out.append(f'<text x="{left - 6}" y="{Y(v) + 4:.1f}" font-size="11" text-anchor="end">{v:g}</text>')
        out.append(f'<line x1="{left}" y1="{Y(v):.1f}" x2="{w - right}" y2="{Y(v):.1f}" stroke="#e3e3e3"/>')
        v += ystep
    out.append(f'<text x="{(left + w - right) / 2}" y="{h - 6}" font-size="12" text-anchor="middle">index of difficulty (bits)</text>')
    out.append(f'<text x="12" y="{top + 4}" font-size="12">ms</text>')
    for k, p in enumerate(profiles):
        colour, shape = PROFILE_MARKS[k % len(PROFILE_MARKS)]
        out.append(f'<line x1="{X(0):.1f}" y1="{Y(p["intercept_ms"]):.1f}" x2="{X(xmax):.1f}" '
                   f'y2="{Y(p["intercept_ms"] + p["slope_ms_per_bit"] * xmax):.1f}" stroke="{colour}" stroke-width="1.5"/>')
        for pid, x, y in points:
            if pid == p["id"]:
                out.append(_mark(shape, X(x), Y(y), colour))
        ly = top + 14 + k * 18
        out.append(_mark(shape, w - right + 14, ly - 4, colour))
        out.append(f'<text x="{w - right + 24}" y="{ly}" font-size="11">{escape(p["id"])}</text>')
    out.append("</svg>")
    return "".join(out)


def _mark(shape: str, x: float, y: float, colour: str) -> str:
    if shape == "square":
        return f'<rect x="{x - 3.5:.1f}" y="{y - 3.5:.1f}" width="7" height="7" fill="{colour}"/>'
    if shape == "diamond":
        return f'<polygon points="{x:.1f},{y - 4.5:.1f} {x + 4.5:.1f},{y:.1f} {x:.1f},{y + 4.5:.1f} {x - 4.5:.1f},{y:.1f}" fill="{colour}"/>'
    if shape == "triangle":
        return f'<polygon points="{x:.1f},{y - 4.5:.1f} {x + 4.5:.1f},{y + 4:.1f} {x - 4.5:.1f},{y + 4:.1f}" fill="{colour}"/>'
    return f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3.5" fill="{colour}"/>'


def _badge(status: str) -> str:
    return f'<span class="badge s-{status}">{escape(STATUS_WORDS[status])}</span>'


def _count_findings(report: Report) -> tuple[int, Counter[str], Counter[str]]:
    """Findings in all, open ones per rule and waived ones per rule (one pass over the screens)."""
    total, open_, waived = 0, Counter[str](), Counter[str]()
    for scr in report.screens:
        for t in scr["targets"]:
            for f in t["findings"]:
                total += 1
                if f["waiver"]:
                    waived[f["rule"]] += 1
                elif t["status"] in ("fail", "partial"):
                    open_[f["rule"]] += 1
    return total, open_, waived


def write_html(report: Report, out: TextIO, width: int | None = None) -> None:
    """Totals and summaries first, so it reads a spooled report's screens several times."""
    s = report.summary
    n_findings, rule_counts, waived = _count_findings(report)
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
          "<table><caption>By screen</caption><thead><tr>"
          + "".join(f'<th scope="col">{c}</th>' for c in ("Screen", "Targets", "Pass", "Fail", "Partial",
                                                           "Exempt", "Unchecked", "Findings"))
          + "</tr></thead><tbody>"]
    out.write("\n".join(h) + "\n")
    for k, scr in enumerate(report.screens):
        title = f"{scr['path']} :: {scr['name']}" if scr["name"] else scr["path"]
        c = scr["summary"]
        out.write(f'<tr><th scope="row"><a href="#s-{k}">{escape(title)}</a></th>'
                  + "".join(f'<td class="num">{c[x]}</td>' for x in ("targets", "pass", "fail", "partial",
                                                                    "exempt", "unchecked"))
                  + f'<td class="num">{sum(len(t["findings"]) for t in scr["targets"])}</td></tr>\n')
    h = ["</tbody></table>"]
    h.append("<table><caption>By rule</caption><thead><tr>"
             + "".join(f'<th scope="col">{c}</th>' for c in ("Rule", "Severity", "Open findings", "Waived", "Summary"))
             + "</tr></thead><tbody>")
    for rs in report.rulesets:
        for r in rs["rules"]:
            h.append(f'<tr><th scope="row"><a href="#src-{escape(rs["id"])}">{escape(r["id"])}</a></th>'
                     f'<td class="sev-{r["severity"]}">{r["severity"]}</td><td class="num">{rule_counts[r["id"]]}</td>'
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
    for scr in report.screens:
        title = f"{scr['path']} :: {scr['name']}" if scr["name"] else scr["path"]
        out.write(f'<option value="{escape(title)}">{escape(title)}</option>\n')
    h = ['</select> <p id="f-count" role="status" aria-live="polite"></p>', "</section>"]
    # One article per screen.
    h += ['<section id="screens" aria-labelledby="h-screens">', '<h2 id="h-screens">Screens</h2>']
    out.write("\n".join(h) + "\n")
    rules, profile = rule_index(report), first_profile(report)
    for k, scr in enumerate(report.screens):
        out.write(_screen_html(k, scr, report, screen_rows(scr, rules, profile)) + "\n")
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


def _screen_html(k: int, scr: dict[str, Any], report: Report, rows: list[dict[str, str]]) -> str:
    title = f"{scr['path']} :: {scr['name']}" if scr["name"] else scr["path"]
    d = scr["device"]
    failing = [t for t in scr["targets"] if t["status"] in ("fail", "partial")]
    overlay, crops = _pictures(scr, report)
    device = f"{scr['platform']}, {scr['width']:g} x {scr['height']:g} {scr['coordinates']}, " + (
        f"{d['density_dpi']:g} dpi" if d["density_dpi"] else f"scale {d['scale']:g}" if d["scale"] else "points")
    if d["xdpi"]:
        device += ", physical size known"
    alt = (f"Screen {Path(scr['path']).name} with its {len(scr['targets'])} targets outlined: "
           f"{len(failing)} failing or partial, marked in thick vermilion with '!' or dashed pink with '?'; "
           "passing targets in thin blue; minimum squares dashed; spacing circles in light blue.")
    out = [f'<article class="screen" id="s-{k}" data-screen="{escape(title)}">', f"<h3>{escape(title)}</h3>",
           f'<p class="device">{escape(device)}</p>', '<div class="pair">',
           f'<figure><img class="overlay" loading="lazy" decoding="async" src="{overlay}" alt="{escape(alt)}"><figcaption>Overlay: '
           f"targets numbered as in the table.</figcaption></figure>", "<div>"]
    if not rows:
        out.append('<p class="empty">No findings on this screen.</p>')
    else:
        out.append(f"<table><caption>Findings on {escape(Path(scr['path']).name)}</caption><thead><tr>"
                   + "".join(f'<th scope="col">{c}</th>' for c in ("Target", "Crop", "Rule", "Found", "Needed",
                                                                    "Status", "Predicted miss", "Fix or waiver"))
                   + "</tr></thead><tbody>")
        for row in rows:
            number = int(row["target"].lstrip("#"))
            crop = crops.get(number)
            crop_html = (f'<img class="crop" loading="lazy" decoding="async" src="{crop}" alt="Close-up of target {escape(row["target"])} '
                         f'{escape(row["label"] or row["class"])}">' if crop else "")
            status = "exempt" if row["waiver"] else row["status"]
            miss = f"{float(row['miss_probability']):.0%} ({escape(row['profile'])})" if row["miss_probability"] else "-"
            size = f"{row['width']} x {row['height']} {row['size_unit']}"
            if row["width_mm"]:
                size += f"<br>{row['width_mm']} x {row['height_mm']} mm"
            out.append(
                f'<tr data-ruleset="{escape(row["rule_set"])}" data-status="{status}">'
                f'<th scope="row">{escape(row["target"])} {escape(row["label"] or row["resource_id"] or row["class"])}'
                f"<br><small>{size}</small></th><td>{crop_html}</td>"
                f'<td class="sev-{row["severity"]}"><a href="#src-{escape(row["rule_set"])}">{escape(row["rule"])}</a>'
                f"<br><small>{row['severity']}</small></td>"
                f'<td class="num">{row["measured"]} {escape(row["unit"])}</td><td class="num">{row["required"]} '
                f'{escape(row["unit"])}</td><td>{_badge(status)}</td><td>{miss}</td>'
                f"<td>{escape(row['waiver'] or row['fix'])}</td></tr>")
        out.append("</tbody></table>")
    chart = _chart(scr, report)
    if chart:
        out.append(f'<figure class="chart">{chart}<figcaption>Predicted pointing time against index of difficulty '
                   "for this screen's targets, per profile.</figcaption></figure>")
    out += ["</div>", "</div>", "</article>"]
    return "\n".join(out)
