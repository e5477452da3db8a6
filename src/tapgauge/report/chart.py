"""A small chart of index of difficulty against movement time, with the fitted line."""

from __future__ import annotations

import io
import math

from PIL import Image, ImageDraw, ImageFont

INK = (30, 30, 30)
GRID = (225, 225, 225)
POINT = (0, 114, 178)
LINE = (213, 94, 0)


def _ticks(lo: float, hi: float, count: int = 5) -> list[float]:
    span = hi - lo or 1.0
    step = 10 ** math.floor(math.log10(span / count))
    for m in (1, 2, 5, 10):
        if span / (step * m) <= count:
            step *= m
            break
    first = math.ceil(lo / step) * step
    return [first + k * step for k in range(int((hi - first) / step) + 1)]


def fit_chart_png(points: list[tuple[float, float]], intercept: float, slope: float, title: str,
                  size: tuple[int, int] = (720, 480)) -> bytes:
    w, h = size
    left, right, top, bottom = 70, 20, 40, 50
    img = Image.new("RGB", size, (255, 255, 255))
    d = ImageDraw.Draw(img)
    font = ImageFont.load_default(size=13)
    xs, ys = [p[0] for p in points], [p[1] for p in points]
    x0, x1 = min(0.0, min(xs)), max(xs) * 1.05 or 1.0
    fitted = [intercept + slope * x for x in (x0, x1)]
    y0, y1 = min(0.0, min(ys), *fitted), max(max(ys), *fitted) * 1.05 or 1.0

    def px(x: float, y: float) -> tuple[float, float]:
        return (left + (x - x0) / (x1 - x0) * (w - left - right), h - bottom - (y - y0) / (y1 - y0) * (h - top - bottom))

    for t in _ticks(x0, x1):
        a = px(t, y0)
        d.line([a, px(t, y1)], fill=GRID)
        d.text((a[0], h - bottom + 6), f"{t:g}", fill=INK, font=font, anchor="mt")
    for t in _ticks(y0, y1):
        a = px(x0, t)
        d.line([a, px(x1, t)], fill=GRID)
        d.text((left - 6, a[1]), f"{t:g}", fill=INK, font=font, anchor="rm")
    d.line([px(x0, y0), px(x1, y0)], fill=INK)
    d.line([px(x0, y0), px(x0, y1)], fill=INK)
    d.line([px(x0, fitted[0]), px(x1, fitted[1])], fill=LINE, width=2)
    for x, y in points:
        cx, cy = px(x, y)
        d.ellipse([cx - 4, cy - 4, cx + 4, cy + 4], fill=POINT)
    d.text((left, 12), title, fill=INK, font=font)
    d.text(((left + w - right) / 2, h - 18), "index of difficulty (bits)", fill=INK, font=font, anchor="mm")
    d.text((8, top - 22), "time (ms)", fill=INK, font=font)
    buf = io.BytesIO()
    img.save(buf, "PNG")
    return buf.getvalue()
