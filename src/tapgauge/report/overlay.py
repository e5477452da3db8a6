"""Overlay pictures: each screen's screenshot (or a plain wireframe) with every target marked.

Status is shown three ways at once, so no one depends on colour: a colour from the
Okabe-Ito palette (chosen to stay distinct for common colour-vision deficiencies),
a line style, and a glyph in the target's tag. Failing targets also get the
minimum square they must hold, dashed and centred on them; targets the WCAG
spacing rule looked at get their spacing circle. A legend band explains it all.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from PIL import Image, ImageDraw, ImageFont

from tapgauge.device import MM_PER_INCH
from tapgauge.report.output import write_atomic
from tapgauge.report.records import Report

RGB = tuple[int, int, int]


@dataclass(frozen=True)
class Mark:
    colour: RGB
    width: int  # line width at 1x
    dash: tuple[int, ...]  # on/off lengths at 1x; () = solid
    glyph: str
    words: str


MARKS = {
    "pass": Mark((0, 114, 178), 2, (), "", "pass: solid blue"),
    "fail": Mark((213, 94, 0), 5, (), "!", "fail: thick solid vermilion, tag '!'"),
    "unmeasurable": Mark((204, 121, 167), 3, (10, 6), "?", "unmeasurable: dashed pink, tag '?'"),
    "unchecked": Mark((110, 110, 110), 2, (3, 5), "-", "not checked: dotted grey, tag '-'"),
    "exempt": Mark((0, 158, 115), 3, (12, 4, 3, 4), "=", "exempt: dash-dot green, tag '='"),
}
SQUARE = (213, 94, 0)
CIRCLE = (86, 180, 233)
INK = (20, 20, 20)
PAPER = (255, 255, 255)


def _font(size: int) -> ImageFont.ImageFont | ImageFont.FreeTypeFont:
    return ImageFont.load_default(size=size)


def _dashed_line(draw: ImageDraw.ImageDraw, a: tuple[float, float], b: tuple[float, float], colour: RGB,
                 width: int, dash: tuple[int, ...]) -> None:
    if not dash:
        draw.line([a, b], fill=colour, width=width)
        return
    length = math.dist(a, b)
    if length == 0:
        return
    ux, uy = (b[0] - a[0]) / length, (b[1] - a[1]) / length
    pos, k, on = 0.0, 0, True
    while pos < length:
        step = dash[k % len(dash)]
        end = min(pos + step, length)
        if on:
            draw.line([(a[0] + ux * pos, a[1] + uy * pos), (a[0] + ux * end, a[1] + uy * end)], fill=colour, width=width)
        pos, k, on = end, k + 1, not on


def _rect(draw: ImageDraw.ImageDraw, box: tuple[float, float, float, float], colour: RGB, width: int,
          dash: tuple[int, ...]) -> None:
    l, t, r, b = box
    if not dash:
        draw.rectangle([l, t, max(l, r - 1), max(t, b - 1)], outline=colour, width=width)
        return
    for a, z in (((l, t), (r, t)), ((r, t), (r, b)), ((r, b), (l, b)), ((l, b), (l, t))):
        _dashed_line(draw, a, z, colour, width, dash)


def _circle(draw: ImageDraw.ImageDraw, cx: float, cy: float, rx: float, ry: float, colour: RGB, width: int,
            dashed: bool) -> None:
    if not dashed:
        draw.ellipse([cx - rx, cy - ry, cx + rx, cy + ry], outline=colour, width=width)
        return
    for k in range(0, 360, 20):
        draw.arc([cx - rx, cy - ry, cx + rx, cy + ry], k, k + 12, fill=colour, width=width)


def _size_rules(report: Report) -> set[str]:
    return {r["id"] for rs in report.rulesets for r in rs["rules"] if r["kind"] == "min-size"}


def _spacing_rules(report: Report) -> dict[str, float]:
    return {r["id"]: r["params"]["size"] for rs in report.rulesets for r in rs["rules"]
            if r["params"].get("spacing_exception")}


def _to_coords(size: float, unit: str, device: dict[str, Any]) -> tuple[float, float]:
    if unit == "mm":
        return size / MM_PER_INCH * device["xdpi"], size / MM_PER_INCH * device["ydpi"]
    return size * device["coords_per_unit"], size * device["coords_per_unit"]


def draw_overlay(screen: dict[str, Any], report: Report, image: Image.Image | None,
                 max_width: int | None = None) -> Image.Image:
    """The overlay of one screen record as a new picture (the screenshot is not changed).

    With max_width the picture is drawn at most that wide (cheaper than drawing big and shrinking).
    """
    w, h = float(screen["width"]), float(screen["height"])
    if image is not None:
        picture = image.convert("RGB")
        if max_width and picture.width > max_width:
            picture = picture.resize((max_width, max(1, round(picture.height * max_width / picture.width))),
                                     Image.Resampling.BILINEAR)
        base = Image.blend(picture, Image.new("RGB", picture.size, PAPER), 0.35)
        fx, fy = base.width / w, base.height / h
    else:
        k = 2.0 if screen["coordinates"] == "pt" else 1.0
        if max_width:
            k = min(k, max_width / w)
        base = Image.new("RGB", (max(1, round(w * k)), max(1, round(h * k))), (244, 244, 242))
        fx = fy = k
    s = max(1, round(base.width / 540))  # line widths and text grow with the picture
    draw = ImageDraw.Draw(base)
    font = _font(11 * s)
    spacing = _spacing_rules(report)
    size_rules = _size_rules(report)
    device = screen["device"]
    order = sorted(screen["targets"], key=lambda t: ["unchecked", "pass", "exempt", "unmeasurable", "fail"].index(t["status"]))
    for t in order:
        l, top, r, b = t["bounds"]
        box = (l * fx, top * fy, r * fx, b * fy)
        cx, cy = (box[0] + box[2]) / 2, (box[1] + box[3]) / 2
        for rule_id, size in spacing.items():
            failed = any(f["rule"] == rule_id for f in t["findings"])
            if failed or any(n.startswith(rule_id) for n in t["notes"]):
                dx, dy = _to_coords(size, "dp", device)
                _circle(draw, cx, cy, dx / 2 * fx, dy / 2 * fy, CIRCLE, s, dashed=failed)
        if t["status"] in ("fail", "unmeasurable"):
            sized = [f for f in t["findings"] if f["rule"] in size_rules and (f["unit"] != "mm" or device["xdpi"])]
            if sized:
                # The square of the most severe finding (findings come sorted most severe first).
                worst = sized[0]
                sx, sy = _to_coords(worst["required"], worst["unit"], device)
                _rect(draw, (cx - sx * fx / 2, cy - sy * fy / 2, cx + sx * fx / 2, cy + sy * fy / 2), SQUARE, s, (6 * s, 4 * s))
        mark = MARKS[t["status"]]
        _rect(draw, box, mark.colour, mark.width * s, tuple(d * s for d in mark.dash))
        tag = f"#{t['ordinal']}{(' ' + mark.glyph) if mark.glyph else ''}"
        tw = draw.textlength(tag, font=font)
        ty = box[1] - 13 * s if box[1] >= 13 * s else box[3]
        draw.rectangle([box[0], ty, box[0] + tw + 4 * s, ty + 13 * s], fill=mark.colour)
        draw.text((box[0] + 2 * s, ty + 1 * s), tag, fill=PAPER, font=font)
    return _with_legend(base, screen, s)


def _with_legend(base: Image.Image, screen: dict[str, Any], s: int) -> Image.Image:
    font = _font(12 * s)
    rows = [f"{screen['path']}" + (f" :: {screen['name']}" if screen["name"] else "")]
    counts = screen["summary"]
    rows.append(", ".join(f"{counts[k]} {k}" for k in ("pass", "fail", "unmeasurable", "unchecked", "exempt") if counts[k]))
    line_h = 18 * s
    height = line_h * (len(rows) + len(MARKS) + 2) + 8 * s
    out = Image.new("RGB", (base.width, base.height + height), PAPER)
    out.paste(base, (0, 0))
    draw = ImageDraw.Draw(out)
    y = base.height + 6 * s
    for text in rows:
        draw.text((8 * s, y), text, fill=INK, font=font)
        y += line_h
    for mark in MARKS.values():
        _rect(draw, (8 * s, y + 3 * s, 44 * s, y + 14 * s), mark.colour, mark.width * s, tuple(d * s for d in mark.dash))
        draw.text((52 * s, y), mark.words, fill=INK, font=font)
        y += line_h
    _rect(draw, (8 * s, y + 3 * s, 44 * s, y + 14 * s), SQUARE, s, (6 * s, 4 * s))
    draw.text((52 * s, y), "dashed square: the minimum size the target must hold", fill=INK, font=font)
    y += line_h
    _circle(draw, 26 * s, y + 8 * s, 8 * s, 6 * s, CIRCLE, s, dashed=False)
    draw.text((52 * s, y), "circle: WCAG 2.5.8 spacing circle (dashed where it hits another target)", fill=INK, font=font)
    return out


def overlay_name(screen: dict[str, Any]) -> Path:
    """A file name for a screen's overlay that mirrors its path and cannot escape the folder."""
    parts = [p if p not in ("..", ".") else "_" for p in Path(screen["path"]).parts if p not in ("/", "")]
    stem = Path(*parts).with_suffix("") if parts else Path("screen")
    if screen["name"]:
        stem = stem / Path(screen["name"]).stem
    return stem.with_name(stem.name + ".overlay.png")


def write_overlay(screen: dict[str, Any], report: Report, folder: Path) -> Path:
    """A screen's overlay under `folder`, written atomically; the screenshot is let go at once."""
    image = None
    if screen["image"]:
        try:
            image = Image.open(screen["image"])
            image.load()
        except (OSError, Image.DecompressionBombError):
            image = None  # the reader already vetted it; a vanished file falls back to wireframe
    picture = draw_overlay(screen, report, image)
    path = folder / overlay_name(screen)
    path.parent.mkdir(parents=True, exist_ok=True)
    buf = io.BytesIO()
    picture.save(buf, "PNG", optimize=False)
    write_atomic(path, buf.getvalue())
    return path
