"""png_bytes reads an overlay's pixels in place (Pillow's Arrow export) instead of copying them out: the
numbers must be the ones Pillow's own `tobytes("raw", "RGBX")` gives, whichever way they were read.
"""

from __future__ import annotations

import gc
import io
import random

import numpy as np
import pytest
from PIL import Image, ImageDraw

from tapgauge.report import overlay
from tapgauge.report.overlay import _pixels


def _drawn(rng: random.Random, width: int, height: int) -> Image.Image:
    pic = Image.new("RGB", (width, height), tuple(rng.randrange(256) for _ in range(3)))
    draw = ImageDraw.Draw(pic)
    for _ in range(20):
        x0, y0 = rng.uniform(-10, width), rng.uniform(-10, height)
        draw.line([(x0, y0), (rng.uniform(0, width), rng.uniform(0, height))],
                  fill=tuple(rng.randrange(256) for _ in range(3)), width=rng.randrange(1, 6))
        draw.text((x0, y0), "#12 !", fill=(20, 20, 20))
    return pic


def _reference(pic: Image.Image) -> np.ndarray:
    """Pillow's own copy of its stored pixels, 4 bytes each (red, green, blue, padding)."""
    return np.frombuffer(pic.tobytes("raw", "RGBX"), dtype="<u4").reshape(pic.height, pic.width)


@pytest.mark.parametrize("seed", range(3))
def test_pixels_read_in_place_are_pillows_own(seed: int) -> None:
    rng = random.Random(seed)
    # 5000 x 4000 (80 MB) is more than Pillow keeps in one block of memory: its rows are not handed
    # out in one piece, and they are copied instead.
    sizes = [(1, 1), (1, 7), (9, 1), (37, 23), (720, 2500), (rng.randrange(100, 1500), rng.randrange(100, 3000))]
    if seed == 0:
        sizes.append((5000, 4000))
    for width, height in sizes:
        pic = _drawn(rng, width, height)
        ours = _pixels(pic)
        assert ours.shape == (height, width) and ours.dtype == np.dtype("<u4")
        assert np.array_equal(ours, _reference(pic)), (width, height)
        assert not ours.flags.writeable


def test_pixels_read_in_place_outlive_their_picture() -> None:
    pic = _drawn(random.Random(9), 720, 1500)
    want = _reference(pic).copy()
    ours = _pixels(pic)
    del pic
    gc.collect()
    _drawn(random.Random(10), 720, 1500)  # memory freed by the picture would be taken again here
    assert np.array_equal(ours, want)


def test_pixels_are_copied_where_pillow_hands_out_no_arrow_array(monkeypatch: pytest.MonkeyPatch) -> None:
    pic = _drawn(random.Random(4), 300, 200)

    def no_export(self: Image.Image, requested_schema: object | None = None) -> tuple[object, object]:
        raise AttributeError("__arrow_c_array__")

    monkeypatch.setattr(Image.Image, "__arrow_c_array__", no_export)
    assert np.array_equal(_pixels(pic), _reference(pic))
    decoded = Image.open(io.BytesIO(overlay.png_bytes(pic))).convert("RGB")  # Pillow's PNG decoder
    assert np.array_equal(np.asarray(decoded), np.asarray(pic))
