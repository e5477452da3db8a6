"""The overlay's own marks: corner brackets for failing targets, tags that cover nothing, a whole
legend, exact colours in the HTML's palette PNG, and a tester's marker strokes greyed out.

Geometry is checked with shapely, colour with the standard library's colorsys (and colorspacious
for colour-vision deficiencies, where installed), never with the module's own helpers alone.
The screens are the invented allotment-booking demo (screens_demo) and boxes made up here.
"""

from __future__ import annotations

import colorsys
import io
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from conftest import DEMO, REPO
from PIL import Image, ImageDraw
from shapely.geometry import LineString, Point, box

from tapgauge.batch import prepare
from tapgauge.cli import main
from tapgauge.model import Severity
from tapgauge.readers.marked import MARKER_HUES, find_boxes
from tapgauge.report.markers import knock_back_markers
from tapgauge.report.overlay import (
    CIRCLE,
    INK,
    MARK_COLOURS,
    MARKS,
    PAPER,
    SQUARE,
    _key_block,
    draw_overlay,
    overlay_name,
    picture_scale,
    png_bytes,
    render,
    tag_size,
    tag_text,
)
from tapgauge.report.records import Report
from tapgauge.report.tags import place_tags

FAIL = MARKS["fail"].colour


def _records(monkeypatch: pytest.MonkeyPatch, *names: str) -> tuple[Report, list[dict[str, Any]]]:
    """The demo screens' records and their report (its rule sets give the squares and circles)."""
    monkeypatch.chdir(REPO)
    run = prepare(None, None, None, None, None, None, None, None, [], "centre", "approach", None, jobs=1)
    assert not isinstance(run, int)
    report = run.report([DEMO / n for n in names], None)
    return report, list(report.screens)


def _scaled(screen: dict[str, Any], k: float) -> list[tuple[float, float, float, float]]:
    return [tuple(v * k for v in t["bounds"]) for t in screen["targets"]]  # type: ignore[misc]


def _check_spots(boxes: list[tuple[float, float, float, float]], spots: list[Any], area: tuple[float, float],
                 gap: float, clean_leaders: bool = True) -> None:
    """No tag on another tag or on any target's box, every tag inside the picture, and a tag set
    away from its box (further than `gap`) joined to it by a leader that runs from the tag's edge
    to the box's edge (and, with `clean_leaders`, through no other tag)."""
    picture = box(0, 0, *area)
    tags = [box(*s.rect) for s in spots]
    targets = [box(*b) for b in boxes]
    for i, (tag, spot) in enumerate(zip(tags, spots)):
        assert picture.contains(tag), spot
        for j, other in enumerate(tags):
            if j != i:
                assert tag.intersection(other).area == 0, (i, j)
        for target in targets:
            assert tag.intersection(target).area == 0, (i, spot)
        if tag.distance(targets[i]) > gap + 0.5:
            assert spot.leader is not None, i
        if spot.leader is not None:
            a, z = spot.leader
            assert tag.exterior.distance(Point(a)) < 1e-6 and targets[i].exterior.distance(Point(z)) < 1e-6
            line = LineString([a, z])
            if clean_leaders:
                assert all(line.intersection(other).length == 0 for j, other in enumerate(tags) if j != i)


# ----------------------------------------------------------------------------- tag placement


def test_tags_around_the_tight_icon_row(monkeypatch: pytest.MonkeyPatch) -> None:
    # plot_detail's icon row: four 20 dp icons 4 dp apart (55 px and 11 px at 440 dpi), under a
    # heading, above a 16 dp icon beside the booking button. At the HTML's 720 px with text
    # twice as large, their tags cannot all sit beside their icons: some move aside, with leaders.
    _, (screen,) = _records(monkeypatch, "android/plot_detail.xml")
    for width, text_scale in ((1080, 1.0), (720, 2.0), (540, 1.0), (360, 1.0)):
        k = width / screen["width"]
        sc = picture_scale(width, text_scale)
        boxes = _scaled(screen, k)
        sizes = [tag_size(tag_text(t["number"], t["status"]), sc) for t in screen["targets"]]
        spots = place_tags(boxes, sizes, (width, screen["height"] * k), gap=sc.px(2), clear=sc.px(1))
        _check_spots(boxes, spots, (width, screen["height"] * k), sc.px(2) + sc.px(1))
        if (width, text_scale) == (720, 2.0):
            assert any(s.leader for s in spots)


def test_tags_round_a_block_of_keys_and_at_the_edges() -> None:
    # Two rows of eight 20 px keys 4 px apart, and boxes touching the picture's corners: tags
    # wider than a key, so most move aside; none may leave the picture or hide a key.
    keys = [(100 + x * 24.0, 200 + y * 24.0, 120 + x * 24.0, 220 + y * 24.0) for y in range(2) for x in range(8)]
    edges = [(380.0, 0.0, 400.0, 20.0), (0.0, 580.0, 30.0, 600.0), (370.0, 570.0, 400.0, 600.0)]
    boxes = keys + edges
    spots = place_tags(boxes, [(46.0, 16.0)] * len(boxes), (400, 600), gap=2)
    _check_spots(boxes, spots, (400, 600), 2)
    assert sum(1 for s in spots if s.leader) >= 8


def test_tags_round_keys_hemmed_in_on_every_side() -> None:
    # A 4 x 4 block: the middle keys' leaders must pass their neighbours. Tags still cover no
    # tag and no key and stay in the picture; a leader may pass another tag when nothing near
    # is clear (the search looks 8 tag heights round the box, then anywhere for a free spot).
    keys = [(x * 24.0, y * 24.0, x * 24.0 + 20, y * 24.0 + 20) for y in range(4) for x in range(4)]
    spots = place_tags(keys, [(46.0, 16.0)] * len(keys), (400, 300), gap=2)
    _check_spots(keys, spots, (400, 300), 2, clean_leaders=False)


def test_tag_of_a_box_between_two_others_sits_inside_its_own_corner() -> None:
    # Three full-width rows stacked edge to edge (a list): the middle row's tag can go nowhere
    # beside it without covering a neighbour or leading across one; it takes its own right corner.
    rows = [(0.0, 100.0, 400.0, 160.0), (0.0, 160.0, 400.0, 220.0), (0.0, 220.0, 400.0, 280.0)]
    spots = place_tags(rows, [(40.0, 16.0)] * 3, (400, 600), gap=2)
    middle = box(*spots[1].rect)
    assert box(*rows[1]).contains(middle) and spots[1].leader is None
    assert middle.bounds[0] > 200  # the right-hand end: a row's words mostly start on the left
    assert all(middle.intersection(box(*r)).area == 0 for r in (rows[0], rows[2]))


@pytest.mark.parametrize("seed", range(4))
def test_quick_tag_paths_choose_as_the_arrays_do(monkeypatch: pytest.MonkeyPatch, seed: int) -> None:
    # place_tags takes two short cuts: a free spot beside the box found with plain numbers, and a
    # grid's covered spots found by rows and columns. Both must choose exactly the spots that the
    # arrays of areas choose (shapely checks those spots in the tests above). Seeded random layouts,
    # on a grid and anywhere, some boxes held by a larger one, some off the picture's edge.
    from conftest import tag_layouts

    from tapgauge.report import tags

    layouts = tag_layouts(seed, 12, (3, 12, 40))
    quick = [place_tags(b, s, a, gap=g, clear=c) for b, s, a, (g, c) in layouts]
    monkeypatch.setattr(tags, "_free_beside", lambda *args: None)
    monkeypatch.setattr(tags, "_touching", lambda xs, ys, *args: np.ones((len(ys), len(xs)), dtype=bool))
    assert quick == [place_tags(b, s, a, gap=g, clear=c) for b, s, a, (g, c) in layouts]


# ----------------------------------------------------------------------------- the failing mark


def _flat_record(boxes: list[tuple[float, float, float, float]], status: str = "fail") -> dict[str, Any]:
    targets = [{"number": k + 1, "bounds": list(b), "status": status, "findings": [], "notes": []}
               for k, b in enumerate(boxes)]
    counts = {"pass": 0, "fail": 0, "partial": 0, "unchecked": 0, "exempt": 0}
    counts[status] = len(targets)
    return {"path": "garden/gate.xml", "name": "", "coordinates": "px", "width": 1080, "height": 1200,
            "image": "garden/gate.png", "targets": targets,
            "device": {"coords_per_unit": 2.75, "xdpi": None, "ydpi": None}, "summary": counts}


def _band(pic: Image.Image, x0: float, y0: float, x1: float, y1: float) -> set[tuple[int, int, int]]:
    return {pic.getpixel((x, y)) for x in range(round(x0), round(x1)) for y in range(round(y0), round(y1))}


def test_failing_mark_is_corner_brackets_not_an_outline() -> None:
    # On a flat grey screenshot, so every colour read back was drawn by the overlay: the fail
    # colour fills each corner's first pixels, and is absent from the middle of every side.
    l, t, r, b = 300.0, 400.0, 600.0, 520.0
    report = Report([], [], fail_level=Severity.ERROR)
    pic = draw_overlay(_flat_record([(l, t, r, b)]), report, Image.new("RGB", (1080, 1200), (60, 60, 60)))
    depth = 12  # px in from the edge: the bracket's whole band (edge + colour) at this size
    for cx, cy in ((l, t), (r - depth, t), (l, b - depth), (r - depth, b - depth)):
        assert FAIL in _band(pic, cx, cy, cx + depth, cy + depth)
    mx, my = (l + r) / 2, (t + b) / 2
    for x0, y0, x1, y1 in ((mx - 10, t, mx + 10, t + depth), (mx - 10, b - depth, mx + 10, b),
                           (l, my - 10, l + depth, my + 10), (r - depth, my - 10, r, my + 10)):
        assert FAIL not in _band(pic, x0, y0, x1, y1)
    # Along the top edge the fail colour covers the corners only: at most 2 x 30% of the side.
    row = [pic.getpixel((x, int(t) + 4)) for x in range(int(l), int(r))]
    assert sum(c == FAIL for c in row) <= 0.6 * len(row)
    # An edge of ink round the colour, so the light orange shows on a pale screen too.
    assert INK in _band(pic, l, t, l + depth, t + depth)


def _overlay_of(screen: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                capsys: pytest.CaptureFixture[str]) -> tuple[dict, Image.Image]:
    """A demo screen's record and the overlay `check --overlay` draws for it."""
    monkeypatch.chdir(REPO)
    out = tmp_path / "ov"
    main(["check", str(screen), "-f", "json", "--overlay", str(out), "--quiet"])
    record = json.loads(capsys.readouterr().out)["screens"][0]
    return record, Image.open(out / overlay_name(record))


def test_failing_corners_on_the_demo_cluster(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    record, picture = _overlay_of(DEMO / "android" / "plot_detail.xml", tmp_path, monkeypatch, capsys)
    pic = picture.convert("RGB")
    failing = [t for t in record["targets"] if t["status"] == "fail"]
    assert len(failing) >= 5
    for t in failing:
        l, top, r, b = t["bounds"]
        assert FAIL in _band(pic, l, top, l + 10, top + 10), t["number"]
        if min(r - l, b - top) >= 40:  # the 20 dp icons (55 px) and the chips: their sides' middles are open
            mx = (l + r) / 2
            assert FAIL not in _band(pic, mx - 3, top, mx + 3, top + 8), t["number"]


# ----------------------------------------------------------------------------- colours


def _hue_gap(a: float, b: float) -> float:
    return abs((a - b + 180) % 360 - 180)


def test_mark_colours_are_far_from_marker_pens_and_from_each_other() -> None:
    # A red or magenta marker box (the reader's default is magenta) must not pass for one of
    # ours: every saturated mark colour sits more than 32 degrees of hue away (twice the marked
    # reader's 16-degree tolerance, common practice), by colorsys's HSV (Smith 1978, "Color
    # gamut transform pairs", SIGGRAPH; the hexcone model, from memory).
    for colour in (*MARK_COLOURS, CIRCLE, SQUARE):
        h, s, _ = colorsys.rgb_to_hsv(*(c / 255 for c in colour))
        if s < 0.2:
            continue  # grey, ink, paper: no hue a marker pen has
        for pen in ("magenta", "red"):
            assert _hue_gap(h * 360, MARKER_HUES[pen]) > 32, (colour, pen)
    # Each status keeps its own look besides colour: line style, corner weight, and sign.
    assert len({(m.width, m.dash, m.corner, m.glyph) for m in MARKS.values()}) == len(MARKS)
    assert len({m.glyph for m in MARKS.values()}) == len(MARKS)


def test_status_colours_stay_apart_under_colour_vision_deficiencies() -> None:
    cs = pytest.importorskip("colorspacious")
    # Machado, Oliveira and Fernandes, "A physiologically-based model for simulation of color vision
    # deficiency", IEEE TVCG 15(6), 2009 (as colorspacious implements it, severity 100 = dichromacy);
    # distances in CAM02-UCS (Luo, Cui and Li, Color Research & Application 31(4), 2006). 10 units
    # apart is plainly different side by side (common practice; 1 unit is about a just-noticeable step).
    colours = {k: np.array(m.colour) / 255 for k, m in MARKS.items()}
    for cvd in (None, "deuteranomaly", "protanomaly", "tritanomaly"):
        seen = {k: c if cvd is None else np.clip(cs.cspace_convert(
            c, {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}, "sRGB1"), 0, 1) for k, c in colours.items()}
        keys = list(seen)
        for i, a in enumerate(keys):
            for b in keys[i + 1:]:
                assert cs.deltaE(seen[a], seen[b], input_space="sRGB1") >= 10, (cvd, a, b)


def _present(pic: Image.Image) -> dict[tuple[int, int, int], np.ndarray]:
    arr = np.asarray(pic.convert("RGB"))
    return {c: np.all(arr == c, axis=-1) for c in MARK_COLOURS if np.all(arr == c, axis=-1).any()}


@pytest.mark.parametrize("name", ["android/plot_detail.xml", "android/plots.xml", "marked/tool_shed.png",
                                  "ios/seed_tray.xml"])
def test_png_bytes_keeps_every_mark_colour_exact(monkeypatch: pytest.MonkeyPatch, name: str) -> None:
    report, (screen,) = _records(monkeypatch, name)
    shot = Image.open(screen["image"]) if screen["image"] else None
    pic = draw_overlay(screen, report, shot, max_width=720, text_scale=2.0)
    drawn = _present(pic)
    assert MARKS["fail"].colour in drawn and INK in drawn and PAPER in drawn
    data = png_bytes(pic, 64)
    decoded = Image.open(io.BytesIO(data))
    assert decoded.format == "PNG" and decoded.mode == "P"  # PNG spec: colour type 3, a palette image
    back = np.asarray(decoded.convert("RGB"))
    assert len(decoded.convert("RGB").getcolors(256) or range(257)) <= 64
    for colour, where in drawn.items():
        # Every pixel drawn in a mark colour decodes to exactly that colour.
        assert np.all(back[where] == colour), colour


def test_png_bytes_keeps_a_wireframe_of_few_colours_pixel_for_pixel(monkeypatch: pytest.MonkeyPatch) -> None:
    # Without its screenshot the overlay is flat colours and their anti-aliased edges: few enough for a
    # palette (PNG spec, colour type 3: at most 256 entries), so every pixel comes back as drawn.
    report, (screen,) = _records(monkeypatch, "android/plots.xml")
    pic = draw_overlay(screen, report, None, max_width=720, text_scale=2.0)
    drawn = pic.getcolors(256)
    assert drawn is not None and len(drawn) > 64  # more than the quantized path's palette would keep
    decoded = Image.open(io.BytesIO(png_bytes(pic)))
    assert decoded.format == "PNG" and decoded.mode == "P"
    assert np.array_equal(np.asarray(decoded.convert("RGB")), np.asarray(pic))
    # One colour more than a palette holds: quantized again, the marks still exact.
    rich = np.array(pic)
    rich[0, :300] = [(k, 255 - k, 7) for k in range(300 - 44)] + [(1, 2, 3)] * 44
    back = np.asarray(Image.open(io.BytesIO(png_bytes(Image.fromarray(rich)))).convert("RGB"))
    assert len(np.unique(back.reshape(-1, 3), axis=0)) <= 64
    fail = np.all(rich == MARKS["fail"].colour, axis=-1)
    assert fail.any() and np.all(back[fail] == MARKS["fail"].colour)


@pytest.mark.parametrize("deflater", ["zlib-ng", "zlib"])
@pytest.mark.parametrize(("name", "shot"), [("android/plots.xml", False), ("android/plots.xml", True),
                                            ("marked/tool_shed.png", True), ("ios/seed_tray.xml", False)])
def test_png_bytes_decode_the_same_in_another_decoder(monkeypatch: pytest.MonkeyPatch, name: str, shot: bool,
                                                      deflater: str) -> None:
    # png_bytes writes its PNG itself (filtered rows, its own chunks): libpng, inside OpenCV, reads it
    # as Pillow does (it checks every chunk's CRC and undoes the filters; PNG spec, sections 5.3, 9.2).
    # Deflated by zlib-ng, as installed, and by the standard library's zlib, where zlib-ng is missing.
    cv2 = pytest.importorskip("cv2")
    if deflater == "zlib":
        import zlib

        import tapgauge.report.overlay as overlay_module
        monkeypatch.setattr(overlay_module, "deflate", zlib)
    else:
        import zlib_ng.zlib_ng

        import tapgauge.report.overlay as overlay_module
        assert overlay_module.deflate is zlib_ng.zlib_ng
    report, (screen,) = _records(monkeypatch, name)
    picture = Image.open(screen["image"]) if shot else None
    pic = draw_overlay(screen, report, picture, max_width=720, text_scale=2.0)
    data = png_bytes(pic, 64)
    theirs = cv2.imdecode(np.frombuffer(data, dtype=np.uint8), cv2.IMREAD_COLOR)[..., ::-1]  # BGR to RGB
    ours = np.asarray(Image.open(io.BytesIO(data)).convert("RGB"))
    assert theirs.shape == ours.shape == (pic.height, pic.width, 3)
    assert np.array_equal(theirs, ours)
    if not shot:  # a wireframe: every pixel as drawn
        assert np.array_equal(theirs, np.asarray(pic))


def test_partial_yellow_survives_where_a_plain_quantize_may_not(monkeypatch: pytest.MonkeyPatch) -> None:
    # plots.xml has a partial target: its yellow must come back exactly through png_bytes.
    report, (screen,) = _records(monkeypatch, "android/plots.xml")
    pic = draw_overlay(screen, report, Image.open(screen["image"]), max_width=720, text_scale=2.0)
    assert any(t["status"] == "partial" for t in screen["targets"])
    back = Image.open(io.BytesIO(png_bytes(pic))).convert("RGB")
    assert MARKS["partial"].colour in {c for _, c in back.getcolors(1 << 16) or []}


# ----------------------------------------------------------------------------- marked screenshots


def _saturated_near(arr: np.ndarray, hue: float) -> np.ndarray:
    """Pixels within 32 degrees of `hue`, saturation >= 0.2 and value >= 0.4 (colorsys's HSV)."""
    colours, where = np.unique(arr.reshape(-1, 3), axis=0, return_inverse=True)
    hsv = np.array([colorsys.rgb_to_hsv(*(c / 255)) for c in colours])  # each distinct colour once
    gap = np.abs((hsv[:, 0] * 360 - hue + 180) % 360 - 180)
    near = (gap <= 32) & (hsv[:, 1] >= 0.2) & (hsv[:, 2] >= 0.4)
    return near[where.reshape(-1)].reshape(arr.shape[:2])


def test_marker_strokes_are_knocked_back(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                         capsys: pytest.CaptureFixture[str]) -> None:
    # tool_shed.png: a screenshot with the tester's boxes drawn in magenta (the default marker).
    screen, picture = _overlay_of(DEMO / "marked" / "tool_shed.png", tmp_path, monkeypatch, capsys)
    source = np.asarray(Image.open(DEMO / "marked" / "tool_shed.png").convert("RGB"))
    pic = np.asarray(picture.convert("RGB"))[:source.shape[0]]
    stroke = _saturated_near(source[::2, ::2], MARKER_HUES["magenta"])
    assert stroke.sum() > 1000  # the pen's strokes are there to begin with
    assert not _saturated_near(pic[::2, ::2], MARKER_HUES["magenta"]).any()  # and gone from the overlay
    # Where a stroke was and no mark of ours is drawn, a pale grey remains: a ghost of the box.
    ys, xs = np.nonzero(stroke)
    ghosts = pic[::2, ::2][ys, xs]
    grey = (ghosts.max(axis=1) - ghosts.min(axis=1) <= 8) & (ghosts.min(axis=1) >= 170)
    assert grey.mean() > 0.8
    # The marked-box reader finds nothing in the overlay: neither the tester's boxes nor ours.
    for pen in ("magenta", "red"):
        assert find_boxes(np.ascontiguousarray(pic), MARKER_HUES[pen]) == []
    legend = picture.height - source.shape[0]
    assert legend > 0


def test_knock_back_leaves_other_colours_and_the_input_alone() -> None:
    # A cyan-marked box (the reader accepts any named hue) on a picture that also holds a
    # saturated green button: the cyan goes grey, the green stays, the input array is not changed.
    arr = np.full((200, 300, 3), 250, dtype=np.uint8)
    arr[20:60, 200:280] = (40, 170, 60)  # the app's own green button
    arr[98:142, 48:152] = (0, 230, 230)  # the cyan ring ...
    arr[102:138, 52:148] = 250  # ... round a 96 x 36 hole
    before = arr.copy()
    boxes = find_boxes(arr, MARKER_HUES["cyan"])
    assert boxes == [(52, 102, 148, 138)]
    out, changed = knock_back_markers(arr, boxes)
    assert np.array_equal(arr, before)
    assert changed == 104 * 44 - 96 * 36
    assert not _saturated_near(out[90:150, 40:160], MARKER_HUES["cyan"]).any()
    assert np.array_equal(out[20:60, 200:280], before[20:60, 200:280])


def test_no_knock_back_on_an_ordinary_screenshot(monkeypatch: pytest.MonkeyPatch) -> None:
    # A dump's screenshot is the app as it is: its colours are never touched, magenta or not.
    report = Report([], [], fail_level=Severity.ERROR)
    shot = Image.new("RGB", (1080, 1200), (255, 0, 255))
    record = _flat_record([(300, 400, 600, 520)], "pass")
    pic = draw_overlay(record, report, shot)
    blended = tuple(round(c * 0.65 + 255 * 0.35) for c in (255, 0, 255))
    assert pic.getpixel((50, 50)) == blended


# ----------------------------------------------------------------------------- legend and text


def _spy(monkeypatch: pytest.MonkeyPatch) -> list[tuple[tuple[float, float], str, Any, str | None]]:
    drawn: list[tuple[tuple[float, float], str, Any, str | None]] = []
    real = ImageDraw.ImageDraw.text

    def text(self: ImageDraw.ImageDraw, xy: Any, text: str, *a: Any, **k: Any) -> Any:
        drawn.append((xy, text, k.get("font"), k.get("anchor")))
        return real(self, xy, text, *a, **k)

    monkeypatch.setattr(ImageDraw.ImageDraw, "text", text)
    _key_block.cache_clear()  # the legend's key is drawn once per width and scale: draw it again here
    return drawn


def _wireframe(width: int, path: str) -> dict[str, Any]:
    record = _flat_record([(10, 10, 60, 40)])
    record.update(width=width, height=600, image=None, path=path)
    return record


@pytest.mark.parametrize(("width", "text_scale"), [(360, 1.0), (400, 1.0), (720, 1.0), (720, 2.0), (1080, 1.0),
                                                   (360, 2.0)])
def test_every_legend_line_fits_the_picture(monkeypatch: pytest.MonkeyPatch, width: int, text_scale: float) -> None:
    drawn = _spy(monkeypatch)
    report = Report([], [], fail_level=Severity.ERROR)
    path = "allotments/north_field/" + "very_long_folder_name_for_a_plot_screen/" * 3 + "booking.xml"
    # A refused screenshot: its long reason goes into the legend too.
    shot = Image.new("RGB", (round(width * 0.7), 540), (60, 60, 60))  # 0.7x across, 0.9x down
    record = _wireframe(width, path)
    record["image"] = "allotments/booking.png"
    pic, fit = render(record, report, shot, text_scale=text_scale)
    assert fit is not None and fit.refusal and pic.width == width
    probe = ImageDraw.Draw(Image.new("RGB", (1, 1)))
    for xy, text, font, anchor in drawn:
        # Measured with the very font it was drawn in (Pillow's textbbox).
        l, _, r, b = probe.textbbox(xy, text, font=font, anchor=anchor)
        assert l >= 0 and r <= width and b <= pic.height, (text, r, width)
    # The legend's lines are drawn from their top left (no anchor), the tags from their left middle; the
    # key rows are drawn on a block of their own (pasted under the screen's lines), so y says nothing.
    legend = " ".join(text for xy, text, _, anchor in drawn if anchor is None)
    for words in [m.words.replace("\u00a0", " ") for m in MARKS.values()] + [fit.refusal]:
        assert " ".join(words.split()) in " ".join(legend.split()) or all(w in legend for w in words.split())
    assert "".join(path.split()) in "".join(t for xy, t, _, a in drawn if a is None and xy[1] >= 600)  # whole


def test_text_scale_doubles_text_and_lines(monkeypatch: pytest.MonkeyPatch) -> None:
    # The HTML report draws 720 px and shows 360: text_scale 2 makes the 12 px text 24 px drawn.
    drawn = _spy(monkeypatch)
    report = Report([], [], fail_level=Severity.ERROR)
    record = _wireframe(720, "garden/gate.xml")
    draw_overlay(record, report, None, text_scale=2.0)
    sizes = {font.size for _, text, font, _ in drawn if text.startswith("#1")}
    assert sizes == {24}
    drawn.clear()
    draw_overlay(record, report, None)
    assert {font.size for _, text, font, _ in drawn if text.startswith("#1")} == {12}
