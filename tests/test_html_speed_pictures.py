"""Short cuts taken to draw the HTML report's pictures faster must give the same pixels as the
plain way. Each is checked on seeded random inputs against a reference outside the module:
Pillow's and libpng's (OpenCV's) PNG decoders, and Pillow's own getcolors and resize.
"""

from __future__ import annotations

import io
import random

import numpy as np
import pytest
from PIL import Image

from tapgauge.report.overlay import png_bytes


def _flat_picture(rng: random.Random, width: int, height: int, colours: int) -> np.ndarray:
    """A picture like an overlay: rows of long runs, many rows repeating the one above, `colours`
    colours in all (each used at least once)."""
    palette = np.array(rng.sample(range(1 << 24), colours), dtype=np.uint32)
    rgb = np.stack([palette & 0xFF, (palette >> 8) & 0xFF, palette >> 16], axis=1).astype(np.uint8)
    out = np.empty((height, width, 3), dtype=np.uint8)
    for y in range(height):
        if y and rng.random() < 0.5:
            out[y] = out[y - 1]
            continue
        x = 0
        while x < width:
            run = rng.choice([1, 1, 2, 5, 40, width])
            out[y, x:x + run] = rgb[rng.randrange(colours)]
            x += run
    flat = out.reshape(-1, 3)
    flat[rng.sample(range(len(flat)), min(colours, len(flat)))] = rgb[:min(colours, len(flat))]
    return out


@pytest.mark.parametrize("seed", range(6))
def test_a_flat_picture_decodes_pixel_for_pixel(seed: int) -> None:
    # PNG spec (2nd edition, W3C), section 9.2: a palette image's rows filtered with Up decode to the
    # picture given; Pillow's decoder undoes the filter. Every colour of a picture of at most 256 is
    # kept (11.2.3: PLTE holds up to 256 entries), so the decoded pixels are the picture's own.
    rng = random.Random(seed)
    for width, height, colours in [(1, 1, 1), (1, 9, 2), (9, 1, 3), (37, 23, 5), (200, 150, 200), (64, 64, 256),
                                   (300, 120, rng.randrange(1, 257))]:
        pic = _flat_picture(rng, width, height, min(colours, width * height))
        data = png_bytes(Image.fromarray(pic))
        decoded = Image.open(io.BytesIO(data))
        assert decoded.format == "PNG" and decoded.mode == "P"
        assert np.array_equal(np.asarray(decoded.convert("RGB")), pic), (seed, width, height, colours)
        # The palette holds exactly the picture's colours, as Pillow counts them.
        found = Image.fromarray(pic).getcolors(256)
        assert found is not None
        palette = decoded.getpalette() or []
        entries = {tuple(palette[k:k + 3]) for k in range(0, len(palette), 3)}
        assert entries == {c for _, c in found}


def test_a_flat_picture_decodes_the_same_in_libpng() -> None:
    # libpng (inside OpenCV) checks each chunk's CRC and undoes the filters on its own (PNG spec 5.3, 9.2).
    cv2 = pytest.importorskip("cv2")
    pic = _flat_picture(random.Random(7), 240, 180, 120)
    data = png_bytes(Image.fromarray(pic))
    theirs = cv2.imdecode(np.frombuffer(data, dtype=np.uint8), cv2.IMREAD_COLOR)[..., ::-1]
    assert np.array_equal(theirs, pic)


def test_one_colour_more_than_a_palette_holds_is_quantized() -> None:
    # 257 colours cannot all have an entry (PNG spec 11.2.3): the picture goes into 64 colours instead.
    pic = _flat_picture(random.Random(3), 120, 90, 257)
    assert Image.fromarray(pic).getcolors(256) is None
    decoded = Image.open(io.BytesIO(png_bytes(Image.fromarray(pic), 64)))
    assert decoded.mode == "P" and len(decoded.convert("RGB").getcolors(256) or range(65)) <= 64


@pytest.mark.parametrize("seed", range(4))
def test_tags_set_aside_go_where_judging_every_spot_puts_them(monkeypatch: pytest.MonkeyPatch, seed: int) -> None:
    # A tag set aside looks first at the spots nearest its box for one whose tag and leader cross
    # nothing. The spot chosen must be the one the full lexicographic judging of every spot chooses
    # (the order of costs in tags._Spot), whether the first few hold a clear spot or not.
    from conftest import tag_layouts

    from tapgauge.report import tags
    from tapgauge.report.tags import place_tags

    # Sparse to crowded, so that many tags are set aside, some where every spot near crosses something.
    layouts = tag_layouts(seed, 10, (3, 20, 60))
    found = {"clear": 0, "none": 0}
    first = tags._Look._clear_first

    def counted(*args: object) -> object:
        out = first(*args)  # type: ignore[arg-type]
        found["none" if out is None else "clear"] += 1
        return out

    monkeypatch.setattr(tags._Look, "_clear_first", counted)
    quick = [place_tags(b, s, a, gap=g, clear=c) for b, s, a, (g, c) in layouts]
    assert found["clear"] and found["none"]  # both ways were taken
    monkeypatch.setattr(tags, "_NEAREST", 1)
    assert quick == [place_tags(b, s, a, gap=g, clear=c) for b, s, a, (g, c) in layouts]
    monkeypatch.setattr(tags, "_NEAREST", 1 << 30)  # every spot judged
    assert quick == [place_tags(b, s, a, gap=g, clear=c) for b, s, a, (g, c) in layouts]


@pytest.mark.parametrize("seed", range(3))
def test_colours_are_counted_exactly_or_given_up_past_the_most(seed: int) -> None:
    # png_bytes counts a picture's colours a slice at a time and stops past 256. Against Python's
    # own set of the same numbers: the same colours, sorted, or None exactly when there are more.
    from tapgauge.report.overlay import _colours

    rng = random.Random(seed)
    for n, distinct in [(1, 1), (4096, 256), (5000, 257), (100_000, 200), (100_000, 256), (100_000, 257),
                        (300_000, 5000), (70_000, rng.randrange(1, 300))]:
        pool = rng.sample(range(1 << 24), distinct)
        values = np.array(pool + [rng.choice(pool) for _ in range(n - distinct)], dtype=np.uint32)
        rng.shuffle(values)  # type: ignore[arg-type]
        want = sorted(set(values.tolist()))
        got = _colours(values, 256)
        if len(want) > 256:
            assert got is None, (n, distinct)
        else:
            assert got is not None and got.tolist() == want, (n, distinct)


def test_a_few_rich_pixels_in_a_flat_picture_send_it_to_the_palette_of_64() -> None:
    # 400 colours in a small patch of an otherwise flat picture: too many for a palette (PNG spec
    # 11.2.3), though a sample of the picture's pixels may miss them. Quantized, marks exact.
    from tapgauge.report.overlay import MARKS

    pic = _flat_picture(random.Random(11), 300, 200, 40)
    pic[10:30, 10:30] = np.array([(k % 256, 7, k // 2) for k in range(400)], dtype=np.uint8).reshape(20, 20, 3)
    pic[100:110, 100:150] = MARKS["fail"].colour
    decoded = Image.open(io.BytesIO(png_bytes(Image.fromarray(pic), 64))).convert("RGB")
    back = np.asarray(decoded)
    assert len(decoded.getcolors(256) or range(65)) <= 64
    assert np.all(back[100:110, 100:150] == MARKS["fail"].colour)


@pytest.mark.parametrize("seed", range(3))
def test_a_plans_hatching_is_the_ring_masked_as_pillow_masks_it(seed: int) -> None:
    # The hatching of a fix plan's ring is drawn as its lines with the target's box cleared. The
    # reference is Pillow's own: the lines masked by the ring (area less box) through ImageChops.darker
    # (the lesser of two masks), pasted in sky blue, on seeded areas, some reaching past the picture.
    from PIL import ImageChops, ImageDraw

    from tapgauge.report.overlay import CIRCLE, _planned, picture_scale

    rng = random.Random(seed)
    for _ in range(20):
        w, h = rng.randrange(50, 300), rng.randrange(50, 300)
        ground = np.array(rng.choices(range(256), k=w * h * 3), dtype=np.uint8).reshape(h, w, 3)
        l, t = rng.uniform(-40, w - 10), rng.uniform(-40, h - 10)
        area = (l, t, l + rng.uniform(12, 200), t + rng.uniform(12, 200))
        inset = rng.uniform(2, 5)
        box = (area[0] + inset, area[1] + inset, area[2] - inset, area[3] - inset)
        sc = picture_scale(rng.choice([360, 720, 1440]), rng.choice([1.0, 2.0]))
        ours = Image.fromarray(ground)
        _planned(ours, area, box, sc)
        want = Image.fromarray(ground)
        al, at, ar, ab = (round(v) for v in area)
        ring, hatch = Image.new("L", want.size, 0), Image.new("L", want.size, 0)
        ImageDraw.Draw(ring).rectangle([al, at, ar - 1, ab - 1], fill=255)
        ImageDraw.Draw(ring).rectangle([round(box[0]), round(box[1]), round(box[2]) - 1, round(box[3]) - 1], fill=0)
        for x in range(al - (ab - at), ar, sc.px(6)):
            ImageDraw.Draw(hatch).line([(x, ab), (x + (ab - at), at)], fill=255, width=sc.px(1))
        want.paste(CIRCLE, (0, 0, w, h), ImageChops.darker(ring, hatch))
        ImageDraw.Draw(want).rectangle([al, at, ar - 1, ab - 1], outline=CIRCLE, width=sc.px(1))
        assert np.array_equal(np.asarray(ours), np.asarray(want)), (seed, area, box)


def _demo_overlays(monkeypatch: pytest.MonkeyPatch) -> list[Image.Image]:
    """Wireframe overlays of the invented demo screens, drawn as the HTML report draws them."""
    from conftest import DEMO, REPO

    from tapgauge.batch import prepare
    from tapgauge.report.overlay import draw_overlay

    monkeypatch.chdir(REPO)
    run = prepare(None, None, None, None, None, None, None, None, [], "centre", "approach", None, jobs=1)
    assert not isinstance(run, int)
    report = run.report([DEMO / "android/plots.xml", DEMO / "android/plot_detail.xml", DEMO / "ios/seed_tray.xml"],
                        None)
    return [draw_overlay(s, report, None, max_width=720, text_scale=2.0) for s in report.screens]


def test_the_legend_key_packed_once_decodes_as_drawn(monkeypatch: pytest.MonkeyPatch) -> None:
    # The key under every overlay is packed once and joined to each picture's own rows in one zlib
    # stream (RFC 1950: header, deflate data, Adler-32 of all the rows; RFC 1951: blocks ending on a
    # byte after a sync flush may be followed by more). Pillow and libpng must read the pixels drawn.
    from tapgauge.report import overlay

    cv2 = pytest.importorskip("cv2")
    pictures = _demo_overlays(monkeypatch)
    for pic in pictures:
        pixels = np.frombuffer(pic.tobytes("raw", "RGBX"), dtype="<u4").reshape(pic.height, pic.width)
        data = overlay._png_with_key(pixels, pic.info.get(overlay.KEY_AT))
        assert data is not None and png_bytes(pic) == data  # the key's way is the one taken
        ours = np.asarray(Image.open(io.BytesIO(data)).convert("RGB"))
        theirs = cv2.imdecode(np.frombuffer(data, dtype=np.uint8), cv2.IMREAD_COLOR)[..., ::-1]
        assert np.array_equal(ours, np.asarray(pic)) and np.array_equal(theirs, ours)
        palette = Image.open(io.BytesIO(data)).getpalette() or []
        assert len(palette) // 3 == len(pic.getcolors(256) or range(257))  # each colour once


def test_a_key_not_as_packed_is_packed_with_the_rest(monkeypatch: pytest.MonkeyPatch) -> None:
    # A picture whose key rows were drawn over, or that says its key lies elsewhere, is packed the
    # plain way: still every pixel as drawn (Pillow's decoder).
    from PIL import ImageDraw

    from tapgauge.report import overlay

    pic = _demo_overlays(monkeypatch)[0]
    top = pic.info[overlay.KEY_AT][0]
    marked = pic.copy()
    ImageDraw.Draw(marked).rectangle([10, top + 40, 60, top + 60], fill=(1, 2, 3))
    moved = pic.copy()
    moved.info[overlay.KEY_AT] = (top - 1, *pic.info[overlay.KEY_AT][1:])
    for odd in (marked, moved):
        pixels = np.frombuffer(odd.tobytes("raw", "RGBX"), dtype="<u4").reshape(odd.height, odd.width)
        assert overlay._png_with_key(pixels, odd.info.get(overlay.KEY_AT)) is None
        decoded = np.asarray(Image.open(io.BytesIO(png_bytes(odd))).convert("RGB"))
        assert np.array_equal(decoded, np.asarray(odd))


def test_tag_widths_kept_are_the_fonts_own() -> None:
    # Tag widths are kept from picture to picture: each must be Pillow's own length of that text in
    # that font, whatever came before (the same texts at two scales, in turn).
    from tapgauge.report.overlay import MARKS, TAG_TEXT, _font, picture_scale, tag_size, tag_text

    for _ in range(2):
        for width, text_scale in [(720, 2.0), (1080, 1.0)]:
            sc = picture_scale(width, text_scale)
            font = _font(sc.px(TAG_TEXT))
            for number in (1, 9, 42, 317):
                for status in MARKS:
                    text = tag_text(number, status)
                    pad, swatch = sc.px(3), sc.px(8)
                    assert tag_size(text, sc)[0] == pad + swatch + pad + font.getlength(text) + pad
