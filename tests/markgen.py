"""Generate screenshots with marker boxes drawn on them, with known true boxes.

Used by the detector's accuracy test and by bench/marker_accuracy.py. Boxes are drawn
at 4x and shrunk (anti-aliased edges at sub-pixel positions), optionally saved as
JPEG, over a busy invented UI with decoys: text and specks in the marker colour.
"""

from __future__ import annotations

import io
import random
from dataclasses import dataclass

import numpy as np
from PIL import Image, ImageDraw, ImageFont

COLOURS = {"magenta": (255, 0, 255), "red": (230, 20, 20), "green": (20, 200, 40), "blue": (30, 60, 255)}
SS = 4  # supersampling factor


@dataclass(frozen=True)
class Sample:
    rgb: np.ndarray
    truth: list[tuple[float, float, float, float]]  # inner area, image pixels, right/bottom exclusive
    colour: str
    line: int  # outline width in px; 0 = filled
    quality: int | None  # JPEG quality, None = PNG


def _ui(draw: ImageDraw.ImageDraw, w: int, h: int, rng: random.Random) -> None:
    """An invented app screen in greys and a muted teal that no marker colour is near."""
    draw.rectangle([0, 0, w * SS, h * SS], fill=(246, 246, 244))
    draw.rectangle([0, 0, w * SS, 56 * SS], fill=(40, 90, 96))
    font = ImageFont.load_default(size=14 * SS)
    for k in range(12):
        y = (70 + k * 60) * SS
        draw.rectangle([12 * SS, y, (w - 12) * SS, y + 48 * SS], fill=(232, 232, 228), outline=(200, 200, 196), width=SS)
        draw.text((24 * SS, y + 14 * SS), f"Seed tray {rng.randint(1, 99)}", fill=(30, 30, 30), font=font)


def make_sample(rng: random.Random, colour: str, line: int, quality: int | None,
                size: tuple[int, int] = (480, 800), boxes: int = 5) -> Sample:
    w, h = size
    big = Image.new("RGB", (w * SS, h * SS))
    draw = ImageDraw.Draw(big)
    _ui(draw, w, h, rng)
    rgb = COLOURS[colour]
    truth: list[tuple[float, float, float, float]] = []
    placed: list[tuple[int, int, int, int]] = []
    tries = 0
    while len(truth) < boxes and tries < 500:
        tries += 1
        bw, bh = rng.randint(24, 160) * SS + rng.randint(0, 3), rng.randint(24, 120) * SS + rng.randint(0, 3)
        x0 = rng.randint(20 * SS, (w - 20) * SS - bw)
        y0 = rng.randint(20 * SS, (h - 20) * SS - bh)
        pad = (2 * line + 10) * SS  # at least 10 px between the outer edges of two boxes (README)
        if any(x0 - pad < px1 and px0 < x0 + bw + pad and y0 - pad < py1 and py0 < y0 + bh + pad
               for px0, py0, px1, py1 in placed):
            continue
        placed.append((x0, y0, x0 + bw, y0 + bh))
        if line:
            lw = line * SS
            draw.rectangle([x0 - lw, y0 - lw, x0 + bw + lw - 1, y0 + bh + lw - 1], outline=rgb, width=lw)
        else:
            draw.rectangle([x0, y0, x0 + bw - 1, y0 + bh - 1], fill=rgb)
        truth.append((x0 / SS, y0 / SS, (x0 + bw) / SS, (y0 + bh) / SS))
    # Decoys the detector must not report: a word and two specks in the marker colour.
    font = ImageFont.load_default(size=16 * SS)
    m = (line + 10) * SS  # keep decoys clear of every box and its outline
    spot = next(((x, y) for x, y in [(300, 20), (20, 760), (300, 760)]
                 if not any(px0 - m <= (x + 60) * SS and x * SS <= px1 + m and py0 - m <= (y + 20) * SS
                            and y * SS <= py1 + m for px0, py0, px1, py1 in placed)), None)
    if spot:
        draw.text((spot[0] * SS, spot[1] * SS), "note", fill=rgb, font=font)
    for sx, sy in [(8, 400), (470, 300)]:
        draw.ellipse([sx * SS, sy * SS, (sx + 3) * SS, (sy + 3) * SS], fill=rgb)
    small = big.resize((w, h), Image.Resampling.BOX)
    if quality is not None:
        buf = io.BytesIO()
        small.save(buf, "JPEG", quality=quality)
        small = Image.open(io.BytesIO(buf.getvalue())).convert("RGB")
    return Sample(np.asarray(small), truth, colour, line, quality)


def match(found: list[tuple[int, int, int, int]], truth: list[tuple[float, float, float, float]],
          tol: float = 2.0) -> tuple[int, int, float]:
    """(true boxes found within tol on every edge, false boxes, worst edge error of the matches)."""
    unmatched = list(found)
    hits, worst = 0, 0.0
    for t in truth:
        best = min(unmatched, key=lambda f: max(abs(a - b) for a, b in zip(f, t)), default=None)
        if best is not None:
            err = max(abs(a - b) for a, b in zip(best, t))
            if err <= tol:
                hits += 1
                worst = max(worst, err)
                unmatched.remove(best)
    return hits, len(unmatched), worst
