"""Overlay pictures: each screen's screenshot (or a plain wireframe) with every target marked.

Status is shown three ways at once, so no one depends on colour: a colour from the
Okabe-Ito palette (chosen to stay distinct for common colour-vision deficiencies),
a line style, and a glyph in the target's tag. Failing targets also get the
minimum square they must hold, dashed and centred on them; targets the WCAG
spacing rule looked at get their spacing circle. A legend band explains it all.

Boxes go onto the screenshot only where its pixels can be told from the dump (see `align`);
otherwise the overlay is a wireframe and says why, rather than stretching boxes to fit.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, NamedTuple

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
    "partial": Mark((204, 121, 167), 3, (10, 6), "?", "partial: dashed pink, tag '?'"),
    "unchecked": Mark((110, 110, 110), 2, (3, 5), "-", "unchecked: dotted grey, tag '-'"),
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


AGREE = 0.01  # two axes' scales count as one uniform scale within 1% (common practice: rounding slack)


@dataclass(frozen=True)
class Alignment:
    """How a screen's coordinates land on its screenshot's pixels (picture = coordinate x f)."""

    fx: float
    fy: float
    note: str = ""  # a legend line for a sound but unusual fit
    refusal: str = ""  # why the screenshot was left out; "" when the boxes sit on it

    @property
    def on_picture(self) -> bool:
        return not self.refusal


def _size(v: float) -> str:
    return f"{v:g}"


def align(screen: dict[str, Any], picture: tuple[int, int]) -> Alignment:
    """Where a screen record's boxes fall on a picture of `picture` (width, height) pixels.

    Android bounds are screen pixels, whatever window size the dump's root states; iOS
    frames are points, the picture points x scale; annotated and marked screenshots use
    the picture's own pixels (their readers insist the sizes match). A picture that fits
    none of these is refused, never stretched: the boxes would land on the wrong controls.
    """
    w, h = float(screen["width"]), float(screen["height"])
    pw, ph = picture
    unit = screen["coordinates"]
    shot = Path(screen["image"]).name if screen["image"] else "screenshot"
    sizes = f"screen {_size(w)}x{_size(h)} {unit}, picture {pw}x{ph} px"
    if screen["image"] is not None and screen["image"] == screen["path"]:
        return Alignment(1.0, 1.0)  # a marked screenshot: the boxes were found in this very picture
    if w <= 0 or h <= 0:
        return Alignment(1.0, 1.0, refusal=f"cannot align the overlay with {shot}: {sizes} "
                                          "(the screen has no size); wireframe drawn instead")
    if unit == "px" and (pw, ph) == (w, h):
        return Alignment(1.0, 1.0)
    if unit == "px" and pw >= w and ph >= h:
        outside = [t for t in screen["targets"] if not _inside(t["bounds"], pw, ph)]
        if not outside:
            # Bounds are screen pixels; the dump's root gave the app window, smaller than the
            # screen the screenshot shows (system bars): draw 1:1 from the picture's corner.
            return Alignment(1.0, 1.0, note=f"window in the dump: {_size(w)}x{_size(h)} px, inside a {pw}x{ph} px "
                                            "screenshot; boxes drawn 1:1 in screen pixels")
    else:
        outside = []
    rx, ry = pw / w, ph / h
    if abs(rx - ry) <= AGREE * max(rx, ry):
        k = (rx + ry) / 2
        return Alignment(k, k)
    why = (f"target #{outside[0]['number']} reaches outside the picture" if outside
           else f"scaled {rx:.3g}x across but {ry:.3g}x down")
    return Alignment(1.0, 1.0, refusal=f"cannot align the overlay with {shot}: {sizes} ({why}); "
                                       "wireframe drawn instead")


def _inside(bounds: list[float], pw: int, ph: int) -> bool:
    l, t, r, b = bounds
    return l >= 0 and t >= 0 and r <= pw and b <= ph


def draw_overlay(screen: dict[str, Any], report: Report, image: Image.Image | None,
                 max_width: int | None = None) -> Image.Image:
    """The overlay of one screen record as a new picture (the screenshot is not changed)."""
    return render(screen, report, image, max_width)[0]


def render(screen: dict[str, Any], report: Report, image: Image.Image | None,
           max_width: int | None = None) -> tuple[Image.Image, Alignment | None]:
    """The overlay of one screen record, and how it sits on the screenshot (None without one).

    With max_width the picture is drawn at most that wide (cheaper than drawing big and shrinking).
    A refused alignment is drawn as a wireframe, its reason in the legend.
    """
    w, h = float(screen["width"]), float(screen["height"])
    fit = None if image is None else align(screen, image.size)
    if image is not None and fit is not None and fit.on_picture:
        picture = image.convert("RGB")
        fx, fy = fit.fx, fit.fy
        if max_width and picture.width > max_width:
            full = picture.size
            picture = picture.resize((max_width, max(1, round(picture.height * max_width / picture.width))),
                                     Image.Resampling.BILINEAR)
            fx, fy = fx * picture.width / full[0], fy * picture.height / full[1]
        base = Image.blend(picture, Image.new("RGB", picture.size, PAPER), 0.35)
    else:
        k = 2.0 if screen["coordinates"] == "pt" else 1.0
        if max_width:
            k = min(k, max_width / max(w, 1.0))
        base = Image.new("RGB", (max(1, round(w * k)), max(1, round(h * k))), (244, 244, 242))
        fx = fy = k
    s = max(1, round(base.width / 540))  # line widths and text grow with the picture
    draw = ImageDraw.Draw(base)
    font = _font(11 * s)
    spacing = _spacing_rules(report)
    size_rules = _size_rules(report)
    device = screen["device"]
    order = sorted(screen["targets"], key=lambda t: ["unchecked", "pass", "exempt", "partial", "fail"].index(t["status"]))
    for t in order:
        l, top, r, b = t["bounds"]
        box = (l * fx, top * fy, r * fx, b * fy)
        cx, cy = (box[0] + box[2]) / 2, (box[1] + box[3]) / 2
        for rule_id, size in spacing.items():
            failed = any(f["rule"] == rule_id for f in t["findings"])
            if failed or any(n.startswith(rule_id) for n in t["notes"]):
                dx, dy = _to_coords(size, "dp", device)
                _circle(draw, cx, cy, dx / 2 * fx, dy / 2 * fy, CIRCLE, s, dashed=failed)
        if t["status"] in ("fail", "partial"):
            sized = [f for f in t["findings"] if f["rule"] in size_rules and (f["unit"] != "mm" or device["xdpi"])]
            if sized:
                # The square of the most severe finding (findings come sorted most severe first).
                worst = sized[0]
                sx, sy = _to_coords(worst["required"], worst["unit"], device)
                _rect(draw, (cx - sx * fx / 2, cy - sy * fy / 2, cx + sx * fx / 2, cy + sy * fy / 2), SQUARE, s, (6 * s, 4 * s))
        mark = MARKS[t["status"]]
        _rect(draw, box, mark.colour, mark.width * s, tuple(d * s for d in mark.dash))
        tag = f"#{t['number']}{(' ' + mark.glyph) if mark.glyph else ''}"
        tw = draw.textlength(tag, font=font)
        ty = box[1] - 13 * s if box[1] >= 13 * s else box[3]
        draw.rectangle([box[0], ty, box[0] + tw + 4 * s, ty + 13 * s], fill=mark.colour)
        draw.text((box[0] + 2 * s, ty + 1 * s), tag, fill=PAPER, font=font)
    notes = (fit.note or fit.refusal,) if fit is not None and (fit.note or fit.refusal) else ()
    return _with_legend(base, screen, s, notes), fit


def _fit_text(text: str, font: ImageFont.ImageFont | ImageFont.FreeTypeFont, width: float) -> list[str]:
    """`text` in lines no wider than `width` pixels, broken at spaces (a long word stays whole)."""
    lines: list[str] = []
    for word in text.split(" "):
        if lines and font.getlength(lines[-1] + " " + word) <= width:
            lines[-1] += " " + word
        else:
            lines.append(word)
    return lines


def _with_legend(base: Image.Image, screen: dict[str, Any], s: int, notes: tuple[str, ...] = ()) -> Image.Image:
    font = _font(12 * s)
    rows = [f"{screen['path']}" + (f" :: {screen['name']}" if screen["name"] else "")]
    counts = screen["summary"]
    rows.append(", ".join(f"{counts[k]} {k}" for k in ("pass", "fail", "partial", "unchecked", "exempt") if counts[k]))
    for note in notes:  # alignment notes are long and matter: wrapped to the picture, never cut off
        rows += _fit_text(note, font, base.width - 16 * s)
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


class Written(NamedTuple):
    path: Path
    notice: str  # what the user should hear about this picture (on stderr); "" when all went well


def write_overlay(screen: dict[str, Any], report: Report, folder: Path) -> Written:
    """A screen's overlay under `folder`, written atomically; the screenshot is let go at once."""
    image = None
    notice = ""
    if screen["image"]:
        try:
            image = Image.open(screen["image"])
            image.load()
        except (OSError, Image.DecompressionBombError) as exc:
            # The reader already vetted it; a file that vanished or changed since falls back to wireframe.
            image = None
            notice = f"cannot read the screenshot {screen['image']} ({exc}); wireframe drawn instead"
    picture, fit = render(screen, report, image)
    if fit is not None and fit.refusal:
        notice = fit.refusal
    path = folder / overlay_name(screen)
    path.parent.mkdir(parents=True, exist_ok=True)
    buf = io.BytesIO()
    picture.save(buf, "PNG", optimize=False)
    write_atomic(path, buf.getvalue())
    return Written(path, notice)
