"""Overlay pictures: each screen's screenshot (or a plain wireframe) with every target marked.

The marks speak one language: corners mean a finding, frames mean none.

- fail: heavy orange corners edged in black, the sides left open so the control stays readable;
- partial: lighter yellow corners, edged in black, on a dashed yellow frame;
- pass: a thin solid blue frame; exempt: a dash-dot green frame; unchecked: a dotted grey frame.

Status is never told by colour alone: each mark has its own shape or line style, and each
target's tag carries its number, a swatch of its colour and a status sign ('!', '?', '=', '-').
The colours are Okabe-Ito's (chosen to stay apart under the common colour-vision
deficiencies); none is near the magenta or red of a tester's marker pen. Failing and partial
targets also get the minimum square their worst size rule asks for, dashed black on white and
centred on them; targets the WCAG spacing rule looked at get their sky-blue spacing circle.

Tags are ink on white, sized for the picture as it will be shown (`text_scale`), and placed by
`place_tags` so that they cover neither each other nor any target: beside their box where
there is room, else moved aside with a thin leader line. A legend under the picture, wrapped
to its width, explains it all.

On a marked screenshot (boxes found by their marker colour in the picture itself) the tester's
marker strokes are greyed out first (`knock_back_markers`), so they cannot hide or pass for ours.

Boxes go onto the screenshot only where its pixels can be told from the dump (see `align`);
otherwise the overlay is a wireframe and says why, rather than stretching boxes to fit.
`png_bytes` makes a small palette PNG of an overlay that keeps every mark colour exact (and every
pixel, when the picture has at most 256 colours).
"""

from __future__ import annotations

import functools
import io
import math
import struct
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Any, NamedTuple, Protocol

import numpy as np
from PIL import Image, ImageDraw, ImageFont

try:  # zlib-ng writes the same deflate format as zlib, three to four times faster at the same level
    from zlib_ng import zlib_ng as deflate
except ImportError:  # an install without it (it has wheels for the common platforms) still works
    import zlib as deflate

from tapgauge.device import MM_PER_INCH
from tapgauge.report.markers import knock_back_markers
from tapgauge.report.output import write_atomic
from tapgauge.report.tags import Point, Rect, place_tags

RGB = tuple[int, int, int]

INK = (20, 20, 20)
PAPER = (255, 255, 255)
WIREFRAME = (244, 244, 242)  # the background when no screenshot is used


@dataclass(frozen=True)
class Mark:
    colour: RGB  # Okabe-Ito
    width: int  # side line width at 1x; 0 = no sides, the corners alone
    dash: tuple[int, ...]  # on/off lengths of the sides at 1x; () = solid
    glyph: str  # the status sign in the tag
    words: str  # the legend's line
    corner: int = 0  # corner bracket thickness at 1x; 0 = no corners (no finding)
    edge: RGB | None = None  # a dark edge around light colours, so they show on pale screens


# Okabe and Ito, "Color Universal Design (CUD): how to make figures and presentations that are
# friendly to colorblind people" (2002; from memory): orange #E69F00, yellow #F0E442, blue #0072B2,
# bluish green #009E73, sky blue #56B4E9. Their vermilion and reddish purple are left out: they sit
# near a red or magenta marker pen's hue, and the purple drifts towards the vermilion in a small
# palette. The grey is darker than the usual mid grey, to stay apart from the green for deuteranopes.
MARKS = {
    "pass": Mark((0, 114, 178), 2, (), "", "pass: thin solid blue frame"),
    "fail": Mark((230, 159, 0), 0, (), "!", "fail: heavy orange corners edged in black, sides open; sign\u00a0'!'",
                 corner=4, edge=INK),
    "partial": Mark((240, 228, 66), 1, (8, 5), "?", "partial: yellow corners on a dashed yellow frame; sign\u00a0'?'",
                    corner=2, edge=INK),
    "unchecked": Mark((90, 90, 90), 2, (2, 4), "-", "unchecked: dotted grey frame; sign\u00a0'-'"),
    "exempt": Mark((0, 158, 115), 2, (12, 4, 3, 4), "=", "exempt: dash-dot green frame; sign\u00a0'='"),
}
SQUARE = INK  # the minimum square: ink dashes on a white line, seen on dark and light screens alike
CIRCLE = (86, 180, 233)  # Okabe-Ito sky blue
# Every colour a mark is drawn in: `png_bytes` keeps these exact.
MARK_COLOURS: tuple[RGB, ...] = tuple(dict.fromkeys(
    [m.colour for m in MARKS.values()] + [m.edge for m in MARKS.values() if m.edge]
    + [SQUARE, CIRCLE, INK, PAPER, WIREFRAME]))


class RuleHead(Protocol):
    """What an overlay needs of its report: the rule sets' records (a Report has them; so does the
    small head the HTML report's drawing processes are given)."""

    @property
    def rulesets(self) -> list[dict[str, Any]]: ...


DRAW_ORDER = ("unchecked", "pass", "exempt", "partial", "fail")  # the most telling on top
TAG_ORDER = ("fail", "partial", "exempt", "pass", "unchecked")  # the most telling get the best spots


@functools.lru_cache(maxsize=32)
def _font(size: int) -> ImageFont.ImageFont | ImageFont.FreeTypeFont:
    return ImageFont.load_default(size=size)


# ----------------------------------------------------------------------------- drawing


def _fill(draw: ImageDraw.ImageDraw, rect: Rect, colour: RGB) -> None:
    l, t, r, b = (round(v) for v in rect)
    if r > l and b > t:
        draw.rectangle([l, t, r - 1, b - 1], fill=colour)


def _segments(a: Point, b: Point, dash: tuple[int, ...]) -> list[tuple[Point, Point]]:
    if not dash:
        return [(a, b)]
    length = math.dist(a, b)
    if length == 0:
        return []
    ux, uy = (b[0] - a[0]) / length, (b[1] - a[1]) / length
    out = []
    pos, k, on = 0.0, 0, True
    while pos < length:
        end = min(pos + dash[k % len(dash)], length)
        if on:
            out.append(((a[0] + ux * pos, a[1] + uy * pos), (a[0] + ux * end, a[1] + uy * end)))
        pos, k, on = end, k + 1, not on
    return out


def _line(draw: ImageDraw.ImageDraw, a: Point, b: Point, colour: RGB, width: int, dash: tuple[int, ...] = (),
          edge: RGB | None = None, edge_width: int = 0) -> None:
    """A line, dashed or not, with an optional edge of `edge_width` either side of each dash."""
    parts = _segments(a, b, dash)
    if edge is not None:
        for p, q in parts:
            draw.line([p, q], fill=edge, width=width + 2 * edge_width)
    for p, q in parts:
        draw.line([p, q], fill=colour, width=width)


def _frame(draw: ImageDraw.ImageDraw, box: Rect, colour: RGB, width: int, dash: tuple[int, ...],
           edge: RGB | None = None, edge_width: int = 0) -> None:
    """A frame just inside `box`, so neighbouring boxes' frames never merge."""
    l, t, r, b = box
    if not dash and edge is None:
        draw.rectangle([l, t, max(l, r - 1), max(t, b - 1)], outline=colour, width=width)
        return
    k = width / 2 + edge_width  # the line's middle, so the whole line (and its edge) is inside
    l, t, r, b = l + k, t + k, max(l + k, r - k), max(t + k, b - k)
    for a, z in (((l, t), (r, t)), ((r, t), (r, b)), ((r, b), (l, b)), ((l, b), (l, t))):
        _line(draw, a, z, colour, width, dash, edge, edge_width)


def corner_arms(box: Rect, thickness: float, scale: float) -> tuple[float, float]:
    """How far each corner bracket reaches along the top and the side: at most 30% of the side,
    so every side's middle stays open, and on long sides no further than a short side needs."""
    w, h = box[2] - box[0], box[3] - box[1]
    cap = max(0.35 * min(w, h), 14 * scale, 3 * thickness)
    return min(0.3 * w, cap), min(0.3 * h, cap)


def _corners(draw: ImageDraw.ImageDraw, box: Rect, colour: RGB, thickness: int, edge: RGB | None,
             edge_width: int, scale: float) -> None:
    """Four L-shaped brackets inside the box's corners, each edged, the sides between left open."""
    l, t, r, b = box
    e = edge_width if edge is not None else 0
    ax, ay = corner_arms(box, thickness, scale)
    thick = max(1.0, min(float(thickness), min(ax, ay) / 2.5 - e))  # an L, not a blob, on a small box
    arms = []
    for cx, sx in ((l, 1), (r, -1)):
        for cy, sy in ((t, 1), (b, -1)):
            x0, y0 = cx + sx * e, cy + sy * e
            across = (x0, y0, x0 + sx * (ax - e), y0 + sy * thick)
            down = (x0, y0, x0 + sx * thick, y0 + sy * (ay - e))
            arms += [across, down]
    arms = [(min(a, c), min(b_, d), max(a, c), max(b_, d)) for a, b_, c, d in arms]
    if edge is not None:
        for a in arms:
            _fill(draw, (a[0] - e, a[1] - e, a[2] + e, a[3] + e), edge)
    for a in arms:
        _fill(draw, a, colour)


def _mark(draw: ImageDraw.ImageDraw, box: Rect, mark: Mark, px: Any, scale: float) -> None:
    edge_width = px(1) if mark.edge is not None else 0
    if mark.width:
        _frame(draw, box, mark.colour, px(mark.width), tuple(px(d) for d in mark.dash), mark.edge, edge_width)
    if mark.corner:
        _corners(draw, box, mark.colour, px(mark.corner), mark.edge, edge_width, scale)


def _square(draw: ImageDraw.ImageDraw, box: Rect, px: Any) -> None:
    """The minimum square: ink dashes on a white line (a rule's tick marks, seen on any screen)."""
    l, t, r, b = box
    for a, z in (((l, t), (r, t)), ((r, t), (r, b)), ((r, b), (l, b)), ((l, b), (l, t))):
        _line(draw, a, z, PAPER, px(1))
        _line(draw, a, z, SQUARE, px(1), (px(6), px(4)))


def _circle(draw: ImageDraw.ImageDraw, cx: float, cy: float, rx: float, ry: float, colour: RGB, width: int,
            dashed: bool) -> None:
    if not dashed:
        draw.ellipse([cx - rx, cy - ry, cx + rx, cy + ry], outline=colour, width=width)
        return
    for k in range(0, 360, 20):
        draw.arc([cx - rx, cy - ry, cx + rx, cy + ry], k, k + 12, fill=colour, width=width)


def _size_rules(report: RuleHead) -> set[str]:
    return {r["id"] for rs in report.rulesets for r in rs["rules"] if r["kind"] == "min-size"}


def _spacing_rules(report: RuleHead) -> dict[str, float]:
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


def _is_marked(screen: dict[str, Any]) -> bool:
    return screen["image"] is not None and screen["image"] == screen["path"]


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
    if _is_marked(screen):
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


def draw_overlay(screen: dict[str, Any], report: RuleHead, image: Image.Image | None,
                 max_width: int | None = None, text_scale: float = 1.0) -> Image.Image:
    """The overlay of one screen record as a new picture (the screenshot is not changed)."""
    return render(screen, report, image, max_width, text_scale)[0]


@dataclass(frozen=True)
class Scale:
    """Sizes on one picture: `unit` grows with the picture's width, `text_scale` with how small
    it will be shown; text and line widths take both."""

    unit: int
    text_scale: float

    @property
    def k(self) -> float:
        return self.unit * self.text_scale

    def px(self, v: float) -> int:
        return max(1, round(v * self.k))


def picture_scale(width: int, text_scale: float = 1.0) -> Scale:
    return Scale(max(1, round(width / 540)), text_scale)


TAG_TEXT = 12  # px at 1x: the tags' and legend's text


def tag_text(number: int, status: str) -> str:
    glyph = MARKS[status].glyph
    return f"#{number}" + (f" {glyph}" if glyph else "")


def tag_size(text: str, sc: Scale) -> tuple[float, float]:
    """A tag's width and height: a colour swatch, then the text, inside a margin."""
    font = _font(sc.px(TAG_TEXT))
    pad = sc.px(3)
    swatch = sc.px(8)
    return pad + swatch + pad + _length(font, text) + pad, float(sc.px(TAG_TEXT) + 2 * pad)


@functools.lru_cache(maxsize=4096)
def _length(font: ImageFont.ImageFont | ImageFont.FreeTypeFont, text: str) -> float:
    """`font.getlength(text)`, kept: the same tags ('#1 !', ...) come back on every picture."""
    return font.getlength(text)


def _tag(draw: ImageDraw.ImageDraw, rect: Rect, text: str, mark: Mark, sc: Scale) -> None:
    l, t, r, b = rect
    font = _font(sc.px(TAG_TEXT))
    pad, swatch, line = sc.px(3), sc.px(8), sc.px(1)
    _fill(draw, rect, INK)
    _fill(draw, (l + line, t + line, r - line, b - line), PAPER)
    mid = (t + b) / 2
    sw = (l + pad, mid - swatch / 2, l + pad + swatch, mid + swatch / 2)
    _fill(draw, (sw[0] - line, sw[1] - line, sw[2] + line, sw[3] + line), INK)
    _fill(draw, sw, mark.colour)
    draw.text((l + pad + swatch + pad, mid), text, fill=INK, font=font, anchor="lm")


def _leader(draw: ImageDraw.ImageDraw, line: tuple[Point, Point], sc: Scale) -> None:
    a, b = line
    draw.line([a, b], fill=PAPER, width=sc.px(3))  # a white halo: the ink line shows on dark screens
    draw.line([a, b], fill=INK, width=sc.px(1))
    d = sc.px(2)
    draw.ellipse([b[0] - d, b[1] - d, b[0] + d, b[1] + d], fill=INK)


def render(screen: dict[str, Any], report: RuleHead, image: Image.Image | None,
           max_width: int | None = None, text_scale: float = 1.0) -> tuple[Image.Image, Alignment | None]:
    """The overlay of one screen record, and how it sits on the screenshot (None without one).

    With max_width the picture is drawn at most that wide (cheaper than drawing big and shrinking).
    `text_scale` multiplies text and line widths, for a picture shown smaller than it is drawn
    (drawn 720 px wide and shown at 360: 2). A refused alignment is drawn as a wireframe, its
    reason in the legend.
    """
    w, h = float(screen["width"]), float(screen["height"])
    fit = None if image is None else align(screen, image.size)
    knocked = 0
    if image is not None and fit is not None and fit.on_picture:
        picture = image.convert("RGB")
        if _is_marked(screen):
            rgb, knocked = knock_back_markers(np.asarray(picture), [tuple(t["bounds"]) for t in screen["targets"]])
            picture = Image.fromarray(rgb)
        fx, fy = fit.fx, fit.fy
        if max_width and picture.width > max_width:
            full = picture.size
            picture = picture.resize((max_width, max(1, round(picture.height * max_width / picture.width))),
                                     Image.Resampling.BILINEAR)
            fx, fy = fx * picture.width / full[0], fy * picture.height / full[1]
        shot: Image.Image | None = Image.blend(picture, Image.new("RGB", picture.size, PAPER), 0.35)
        extent = picture.size
    else:
        k = 2.0 if screen["coordinates"] == "pt" else 1.0
        if max_width:
            k = min(k, max_width / max(w, 1.0))
        shot, extent = None, (max(1, round(w * k)), max(1, round(h * k)))
        fx = fy = k
    notes = (fit.note or fit.refusal,) if fit is not None and (fit.note or fit.refusal) else ()
    if knocked:
        notes += ("the marker boxes drawn on this screenshot are greyed out, so they cannot be taken for these marks",)
    sc = picture_scale(extent[0], text_scale)
    # Drawn straight onto the whole picture, legend's room included (no second picture to paste the
    # overlay into); what reaches past the overlay's bottom is cleared before the legend is drawn.
    legend = _Legend.of(screen, extent, sc, notes)
    base = Image.new("RGB", (extent[0], legend.height), WIREFRAME if shot is None else PAPER)
    if shot is not None:
        base.paste(shot, (0, 0))
    draw = ImageDraw.Draw(base)
    spacing = _spacing_rules(report)
    size_rules = _size_rules(report)
    device = screen["device"]
    boxes = {t["number"]: (t["bounds"][0] * fx, t["bounds"][1] * fy, t["bounds"][2] * fx, t["bounds"][3] * fy)
             for t in screen["targets"]}
    order = sorted(screen["targets"], key=lambda t: DRAW_ORDER.index(t["status"]))
    for t in order:  # the guides first, so no mark is hidden under another target's guide
        box = boxes[t["number"]]
        cx, cy = (box[0] + box[2]) / 2, (box[1] + box[3]) / 2
        for rule_id, size in spacing.items():
            failed = any(f["rule"] == rule_id for f in t["findings"])
            if failed or any(n.startswith(rule_id) for n in t["notes"]):
                dx, dy = _to_coords(size, "dp", device)
                _circle(draw, cx, cy, dx / 2 * fx, dy / 2 * fy, CIRCLE, sc.px(1), dashed=failed)
        if t["status"] in ("fail", "partial"):
            sized = [f for f in t["findings"] if f["rule"] in size_rules and (f["unit"] != "mm" or device["xdpi"])]
            if sized:
                # The square of the most severe finding (findings come sorted most severe first).
                worst = sized[0]
                sx, sy = _to_coords(worst["required"], worst["unit"], device)
                _square(draw, (cx - sx * fx / 2, cy - sy * fy / 2, cx + sx * fx / 2, cy + sy * fy / 2), sc.px)
    for t in order:  # fix plans under the marks: the area each too-small target would grow into
        plan = t.get("plan")
        if plan and plan["kind"] == "grow":
            l, top, r, b = plan["bounds"]
            _planned(base, (l * fx, top * fy, r * fx, b * fy), boxes[t["number"]], sc, extent)
    draw = ImageDraw.Draw(base)
    for t in order:
        _mark(draw, boxes[t["number"]], MARKS[t["status"]], sc.px, sc.k)
    tagged = sorted(screen["targets"], key=lambda t: (TAG_ORDER.index(t["status"]), t["number"]))
    texts = [tag_text(t["number"], t["status"]) for t in tagged]
    spots = place_tags([boxes[t["number"]] for t in tagged], [tag_size(x, sc) for x in texts], extent,
                       gap=sc.px(2), clear=sc.px(1))
    for spot in spots:
        if spot.leader:
            _leader(draw, spot.leader, sc)
    for t, text, spot in zip(tagged, texts, spots):
        _tag(draw, spot.rect, text, MARKS[t["status"]], sc)
    legend.draw(base, extent[1], sc)
    return base, fit


# ----------------------------------------------------------------------------- legend


NBSP = "\u00a0"


def _split_word(word: str, font: ImageFont.ImageFont | ImageFont.FreeTypeFont, width: float) -> list[str]:
    """A word too long for a line, broken after a '/' where it can be, else between letters."""
    out: list[str] = []
    while word and font.getlength(word) > width:
        cut = max(1, max((k + 1 for k in range(len(word)) if word[k] in "/\\_-" and font.getlength(word[:k + 1])
                          <= width), default=0))
        if cut == 1 or font.getlength(word[:cut]) > width:
            cut = 1
            while cut < len(word) and font.getlength(word[:cut + 1]) <= width:
                cut += 1
        out.append(word[:cut])
        word = word[cut:]
    return out + ([word] if word else [])


def fit_text(text: str, font: ImageFont.ImageFont | ImageFont.FreeTypeFont, width: float) -> list[str]:
    """`text` in lines no wider than `width` pixels, broken at spaces (a longer word broken too)."""
    lines: list[str] = []
    for word in text.split(" "):
        word = word.replace(NBSP, " ")  # a no-break space holds words together; drawn as a space
        if lines and font.getlength(lines[-1] + " " + word) <= width:
            lines[-1] += " " + word
            continue
        lines += _split_word(word, font, width)
    return lines or [""]


class LegendRow(NamedTuple):
    swatch: str  # a status, "square", "circle", "tag" or "" for plain text
    text: str


def legend_rows(screen: dict[str, Any], notes: tuple[str, ...] = ()) -> list[LegendRow]:
    counts = screen["summary"]
    rows = [LegendRow("", f"{screen['path']}" + (f" :: {screen['name']}" if screen["name"] else "")),
            LegendRow("", ", ".join(f"{counts[k]} {k}" for k in ("pass", "fail", "partial", "unchecked", "exempt")
                                    if counts[k]))]
    rows += [LegendRow("", note) for note in notes]
    return rows + list(KEY_ROWS)


# The key: the same rows under every overlay, so they are drawn once per picture width and scale.
KEY_ROWS = tuple([LegendRow(status, mark.words) for status, mark in MARKS.items()] + [
    LegendRow("square", "dashed black-and-white square: the minimum size the target must hold"),
    LegendRow("circle", "sky-blue circle: WCAG 2.5.8 spacing circle (dashed where it hits another target)"),
    LegendRow("plan", "sky-blue hatching: the touch area a fix plan grows the target into"),
    LegendRow("tag", "tag: target number, status colour and sign; a line leads to a tag set aside")])


class _Legend(NamedTuple):
    """The legend under an overlay: this screen's own rows, then the key (the same rows under every
    overlay of a width and scale, drawn once)."""

    laid: list[tuple[str, list[str]]]  # this screen's own rows: swatch and wrapped lines
    heights: list[int]
    top: int  # where the key starts
    key: Image.Image
    height: int  # of the whole picture, overlay and legend

    @classmethod
    def of(cls, screen: dict[str, Any], size: tuple[int, int], sc: Scale, notes: tuple[str, ...] = ()) -> _Legend:
        rows = legend_rows(screen, notes)
        own = rows[:len(rows) - len(KEY_ROWS)]  # this screen's own lines; the key follows them
        margin = sc.px(8)
        laid, heights = _lay_out(own, size[0], sc)
        top = size[1] + margin + sum(heights)
        key = _key_block(size[0], sc, top % 2)
        return cls(laid, heights, top, key, top + key.height + margin)

    def draw(self, picture: Image.Image, bottom: int, sc: Scale) -> None:
        """The legend on white below row `bottom` of `picture` (whatever was drawn there is cleared)."""
        picture.paste(PAPER, (0, bottom, picture.width, picture.height))
        _draw_rows(ImageDraw.Draw(picture), self.laid, self.heights, bottom + sc.px(8), sc)
        picture.paste(self.key, (0, self.top))
        picture.info[KEY_AT] = (self.top, picture.width, sc, self.top % 2)


KEY_AT = "tapgauge legend key"  # Image.info: where the key's rows lie (top, width, scale, parity), for png_bytes


@functools.lru_cache(maxsize=16)
def _key_block(width: int, sc: Scale, parity: int) -> Image.Image:
    """The legend's key rows on white, `width` wide, drawn as they would be at a top of `parity`
    (0 or 1): rounding halves to even makes odd and even tops differ by a pixel now and then."""
    laid, heights = _lay_out(list(KEY_ROWS), width, sc)
    block = Image.new("RGB", (width, parity + sum(heights)), PAPER)
    _draw_rows(ImageDraw.Draw(block), laid, heights, parity, sc)
    return block.crop((0, parity, width, block.height))


def _lay_out(rows: list[LegendRow], width: int, sc: Scale) -> tuple[list[tuple[str, list[str]]], list[int]]:
    """Each row's swatch and wrapped lines, and its height."""
    font = _font(sc.px(TAG_TEXT))
    margin, indent, line_h = sc.px(8), sc.px(52), sc.px(17)
    laid: list[tuple[str, list[str]]] = []
    for row in rows:
        x = indent if row.swatch else margin
        laid.append((row.swatch, fit_text(row.text, font, max(1, width - x - margin))))
    swatch_h = sc.px(22)  # a row with a sample mark is taller than a line of text: the mark must read
    return laid, [max(len(lines) * line_h, swatch_h if swatch else 0) for swatch, lines in laid]


def _draw_rows(draw: ImageDraw.ImageDraw, laid: list[tuple[str, list[str]]], heights: list[int], y: int,
               sc: Scale) -> None:
    font = _font(sc.px(TAG_TEXT))
    margin, indent, line_h, swatch_h = sc.px(8), sc.px(52), sc.px(17), sc.px(22)
    for (swatch, lines), row_h in zip(laid, heights):
        if swatch:
            _legend_swatch(draw, swatch, (margin, y + sc.px(1), indent - sc.px(8), y + swatch_h - sc.px(3)), sc)
        top = y + (swatch_h - len(lines) * line_h) / 2 if swatch and len(lines) * line_h < swatch_h else y
        for k, text in enumerate(lines):
            draw.text((indent if swatch else margin, top + k * line_h), text, fill=INK, font=font)
        y += row_h


def _planned(picture: Image.Image, area: Rect, box: Rect, sc: Scale, within: tuple[int, int] | None = None) -> None:
    """A fix plan's touch area: the ring it adds around the target, hatched in sky blue, and its outline;
    the hatching only inside the picture's first `within` (width, height) pixels (default: all)."""
    l, t, r, b = (round(v) for v in area)
    if r <= l or b <= t:
        return
    # The masks cover only the part of the area inside the picture (not the whole picture): the
    # same pixels, drawn in that window's coordinates (whole-pixel shifts), at a fraction of the cost.
    width, height = within or picture.size
    x0, y0, x1, y1 = max(l, 0), max(t, 0), min(r, width), min(b, height)
    if x1 > x0 and y1 > y0:
        hatch = Image.new("L", (x1 - x0, y1 - y0), 0)
        lines = ImageDraw.Draw(hatch)
        step = sc.px(6)
        for x in range(l - (b - t), r, step):  # lines at 45 degrees across the planned area
            lines.line([(x - x0, b - y0), (x + (b - t) - x0, t - y0)], fill=255, width=sc.px(1))
        # Only the ring: the target's own box cleared (the window lies inside the area, so this is the
        # hatch cut by a mask of the area less the box, without drawing that mask).
        lines.rectangle([round(box[0]) - x0, round(box[1]) - y0, round(box[2]) - 1 - x0, round(box[3]) - 1 - y0],
                        fill=0)
        picture.paste(CIRCLE, (x0, y0, x1, y1), hatch)
    ImageDraw.Draw(picture).rectangle([l, t, r - 1, b - 1], outline=CIRCLE, width=sc.px(1))


def _legend_swatch(draw: ImageDraw.ImageDraw, kind: str, box: Rect, sc: Scale) -> None:
    if kind in MARKS:
        _mark(draw, box, MARKS[kind], sc.px, sc.k / 3)
    elif kind == "square":
        _square(draw, box, sc.px)
    elif kind == "circle":
        cy, ry = (box[1] + box[3]) / 2, (box[3] - box[1]) / 2
        _circle(draw, (box[0] + box[2]) / 2, cy, ry * 1.4, ry, CIRCLE, sc.px(1), dashed=False)
    elif kind == "plan":
        inner = (box[0] + (box[2] - box[0]) * 0.3, box[1] + (box[3] - box[1]) * 0.3,
                 box[2] - (box[2] - box[0]) * 0.3, box[3] - (box[3] - box[1]) * 0.3)
        _planned(draw._image, box, inner, sc)  # type: ignore[attr-defined]
    elif kind == "tag":
        text = "#n"
        tw, th = tag_size(text, sc)
        _tag(draw, (box[0], (box[1] + box[3] - th) / 2, box[0] + tw, (box[1] + box[3] + th) / 2), text,
             MARKS["pass"], sc)


# ----------------------------------------------------------------------------- files


def png_bytes(img: Image.Image, colours: int = 64) -> bytes:
    """A palette PNG of `img` that keeps every mark colour exact.

    A picture of at most 256 colours (a wireframe, a flat screen: marks, text and their
    anti-aliased edges) is kept exactly, every pixel its own colour. A richer one (a screenshot)
    goes into at most `colours` colours: the picture's colours share the palette's places but the
    marks' (Pillow's fast octree, no dithering); then every pixel that is exactly a mark's colour
    takes that mark's own entry, so a mark can never drift to a neighbour's colour (a status must
    not read as another).
    """
    rgb = img if img.mode == "RGB" else img.convert("RGB")
    pixels = _stored(rgb)
    with_key = _png_with_key(pixels, img.info.get(KEY_AT))
    if with_key is not None:
        return with_key
    flat = _flat_rows(pixels)
    if flat is not None:  # every colour gets its own entry: nothing to choose, nothing lost
        rows, palette = flat
        return _png(rows, palette, 4)
    packed = pixels & 0xFFFFFF  # each pixel as one number: red + green * 256 + blue * 65536
    marks = list(dict.fromkeys(MARK_COLOURS))
    rest = max(1, colours - len(marks))
    quantized = rgb.quantize(rest, method=Image.Quantize.FASTOCTREE, dither=Image.Dither.NONE)
    palette = (quantized.getpalette() or [])[:3 * rest]
    palette += [0] * (3 * rest - len(palette))
    index = np.array(quantized, dtype=np.uint8)
    for k, (r, g, b) in enumerate(marks):
        index[packed == (r | (g << 8) | (b << 16))] = rest + k
    # Unfiltered rows at level 6, as Pillow wrote them: on a screenshot, Up makes the file a fifth larger.
    rows = np.empty((rgb.height, rgb.width + 1), dtype=np.uint8)
    rows[:, 0] = 0
    rows[:, 1:] = index
    return _png(rows, bytes(palette + [v for c in marks for v in c]), 6)


def _stored(rgb: Image.Image) -> np.ndarray:
    """An RGB picture's pixels (height, width) as Pillow stores them, 4 bytes each, read as one number:
    copied out as they are (cheaper than packing them in another order); the fourth byte is padding,
    masked off where a pixel's colour is wanted."""
    return np.frombuffer(rgb.tobytes("raw", "RGBX"), dtype="<u4").reshape(rgb.height, rgb.width)


def _flat_rows(pixels: np.ndarray) -> tuple[np.ndarray, bytes] | None:
    """A picture of at most 256 colours as PNG rows, each filtered as its difference from the row
    above (PNG spec, section 9.2: filter type 2, Up), and its palette; None when it has more colours.

    `pixels` (height, width) are Pillow's 4-byte pixels. Up makes the rows the background, a
    frame's sides and the legend's margins repeat all zeros, and zlib at level 4 packs them smaller
    than unfiltered rows at level 6 in half the time. A row the same as the one above is all zeros
    whatever its colours (about half an overlay's rows), so only the others are looked at, and in
    them only the pixels where the colour changes: a flat picture's rows are long runs of one
    colour. The palette is the colours in order of their number (any order decodes the same).
    """
    if _rich(pixels):
        return None
    runs = _Runs.of(pixels)
    exact = _colours(runs.values, 256)
    if exact is None:
        return None
    table = _colour_table()
    table[exact] = np.arange(len(exact), dtype=np.uint8)
    return runs.filtered(table, None), _palette(exact)


def _rich(pixels: np.ndarray) -> bool:
    """Whether a few thousand pixels spread over the picture already have more than 256 colours (a
    screenshot has thousands: told at little cost)."""
    return len(np.unique(pixels.ravel()[::max(1, pixels.size // 8192)] & 0xFFFFFF)) > 256


class _Runs(NamedTuple):
    """Rows of pixels as the runs of one colour in the rows that differ from the row above."""

    kept: np.ndarray  # the rows that differ from the row above (the first always)
    starts: np.ndarray  # where each run begins, counted along the kept rows one after another
    values: np.ndarray  # each run's colour as one number: red + green * 256 + blue * 65536
    shape: tuple[int, int]

    @classmethod
    def of(cls, pixels: np.ndarray) -> _Runs:
        height = pixels.shape[0]
        fresh = np.empty(height, dtype=bool)  # padding counts too: a row differing only there is
        fresh[0] = True  # looked at, and its filtered row comes out all zeros
        np.any(pixels[1:] != pixels[:-1], axis=1, out=fresh[1:])
        kept = np.flatnonzero(fresh)
        line = pixels[kept].ravel()
        starts = np.empty(1, dtype=np.intp)
        starts[0] = 0
        starts = np.concatenate([starts, np.flatnonzero(line[1:] != line[:-1]) + 1])
        # A run's colour from its first pixel (runs split by padding alone repeat it).
        return cls(kept, starts, line[starts] & 0xFFFFFF, pixels.shape)

    def filtered(self, table: np.ndarray, above: np.ndarray | None) -> np.ndarray:
        """The rows filtered with Up, each pixel's palette index from `table`; `above` is the index
        row above the first (None at the picture's top, where the spec takes a row of zeros)."""
        height, width = self.shape
        index = np.repeat(table[self.values], np.diff(self.starts, append=len(self.kept) * width))
        index = index.reshape(len(self.kept), width)
        rows = np.zeros((height, width + 1), dtype=np.uint8)
        rows[:, 0] = 2
        rows[0, 1:] = index[0] if above is None else index[0] - above
        # A kept row's row above is the same as the kept row before it (those between repeat it).
        rows[self.kept[1:], 1:] = index[1:] - index[:-1]  # modulo 256, as the spec's filters are
        return rows


def _palette(colours: np.ndarray) -> bytes:
    rgb = np.empty((len(colours), 3), dtype=np.uint8)
    rgb[:, 0], rgb[:, 1], rgb[:, 2] = colours & 0xFF, (colours >> 8) & 0xFF, colours >> 16
    return rgb.tobytes()


class _PackedKey(NamedTuple):
    """The legend's key as png_bytes writes it under every picture: its colours first in the palette,
    in a fixed order, so its rows after the first filter and deflate the same way every time."""

    pixels: np.ndarray  # as stored by Pillow, to check a picture's rows against
    colours: np.ndarray  # palette entries 0, 1, ...
    last: np.ndarray  # the index row of its last row (the row above what follows it)
    rows: bytes  # its rows after the first, filtered with Up
    deflated: bytes  # those rows deflated at level 4 on their own, ending on a byte (sync flush)


@functools.lru_cache(maxsize=16)
def _packed_key(width: int, sc: Scale, parity: int) -> _PackedKey | None:
    key = _key_block(width, sc, parity)
    pixels = _stored(key)
    colours = _colours(pixels.ravel() & 0xFFFFFF, 256)
    if colours is None or key.height < 2:
        return None
    index = np.searchsorted(colours, pixels & 0xFFFFFF).astype(np.uint8)
    rows = np.empty((key.height - 1, width + 1), dtype=np.uint8)
    rows[:, 0] = 2
    np.subtract(index[1:], index[:-1], out=rows[:, 1:])
    packer = deflate.compressobj(4, deflate.DEFLATED, -15)
    deflated = packer.compress(rows) + packer.flush(deflate.Z_SYNC_FLUSH)
    return _PackedKey(pixels, colours, index[-1], rows.tobytes(), deflated)


def _png_with_key(pixels: np.ndarray, where: tuple[int, int, Scale, int] | None) -> bytes | None:
    """The PNG of a flat overlay whose legend ends with the key at `where`, the key's rows taken as
    packed once for all pictures (they are a fifth of a picture and most of its text): the same
    rows, palette entries and pixels as `_flat_rows` would give them, deflated in three parts
    joined into one zlib stream (RFC 1950, 1951). None when the key is not there as packed, or the
    picture has more than 256 colours."""
    if where is None:
        return None
    top, width, sc, parity = where
    key = _packed_key(width, sc, parity)
    height = pixels.shape[0]
    if key is None or pixels.shape[1] != width or top < 1 or top + len(key.pixels) >= height:
        return None
    end = top + len(key.pixels)
    if not np.array_equal(pixels[top:end], key.pixels) or _rich(pixels):
        return None
    upper, lower = _Runs.of(pixels[:top + 1]), _Runs.of(pixels[end:])  # the key's first row in `upper`
    others = _colours(np.concatenate([upper.values, lower.values]), 256)
    if others is None:
        return None
    extra = others[~np.isin(others, key.colours)]
    if len(key.colours) + len(extra) > 256:
        return None
    table = _colour_table()
    table[key.colours] = np.arange(len(key.colours), dtype=np.uint8)
    table[extra] = np.arange(len(key.colours), len(key.colours) + len(extra), dtype=np.uint8)
    head, tail = upper.filtered(table, None), lower.filtered(table, key.last)
    first = deflate.compressobj(4, deflate.DEFLATED, -15)
    last = deflate.compressobj(4, deflate.DEFLATED, -15)
    check = deflate.adler32(tail, deflate.adler32(key.rows, deflate.adler32(head)))
    stream = b"".join([b"\x78\x5e", first.compress(head), first.flush(deflate.Z_SYNC_FLUSH), key.deflated,
                       last.compress(tail), last.flush(), struct.pack(">I", check)])
    return _png_chunks(width, height, _palette(np.concatenate([key.colours, extra])), stream)


def _colours(values: np.ndarray, most: int) -> np.ndarray | None:
    """The distinct numbers among `values`, sorted; None as soon as there are more than `most`
    (looked at a slice at a time, so a picture rich in colours is told without sorting them all)."""
    found = np.unique(values[:4096])
    start, step = 4096, 4096
    while len(found) <= most and start < len(values):
        found = np.unique(np.concatenate([found, values[start:start + step]]))
        start, step = start + step, min(2 * step, 1 << 16)
    return found if len(found) <= most else None


@functools.cache
def _colour_table() -> np.ndarray:
    """A palette index for every 24-bit colour, looked up in one step; reused from picture to picture,
    each setting the entries of its own colours before reading them (16 MB of address space, of which
    only the pages of colours used are ever touched)."""
    return np.zeros(1 << 24, dtype=np.uint8)


def _chunk(kind: bytes, data: bytes) -> bytes:
    """One PNG chunk: length, type, data and the CRC of type and data (PNG spec, section 5.3)."""
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(data, zlib.crc32(kind)))


def _png(rows: np.ndarray, palette: bytes, level: int) -> bytes:
    """An 8-bit palette PNG (colour type 3) of `rows` (height, 1 + width: each row's filter type,
    then its filtered indices), with `palette` (r, g, b, ...), deflated at `level`. Written here
    rather than by Pillow for the filter (PNG spec, section 9.2)."""
    return _png_chunks(rows.shape[1] - 1, rows.shape[0], palette, deflate.compress(rows, level))


def _png_chunks(width: int, height: int, palette: bytes, stream: bytes) -> bytes:
    """The PNG file: signature, header, palette, the zlib stream of the filtered rows, end."""
    header = struct.pack(">IIBBBBB", width, height, 8, 3, 0, 0, 0)  # 8 bits, palette, deflate, no interlace
    return b"".join([b"\x89PNG\r\n\x1a\n", _chunk(b"IHDR", header), _chunk(b"PLTE", palette),
                     _chunk(b"IDAT", stream), _chunk(b"IEND", b"")])


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


def write_overlay(screen: dict[str, Any], report: RuleHead, folder: Path, text_scale: float = 1.0) -> Written:
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
    picture, fit = render(screen, report, image, text_scale=text_scale)
    if fit is not None and fit.refusal:
        notice = fit.refusal
    path = folder / overlay_name(screen)
    path.parent.mkdir(parents=True, exist_ok=True)
    buf = io.BytesIO()
    picture.save(buf, "PNG", optimize=False)
    write_atomic(path, buf.getvalue())
    return Written(path, notice)
