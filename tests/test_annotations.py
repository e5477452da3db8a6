"""Box annotations: every format lands on the same hand-worked pixel box.

The hand-worked box: pixels 10..39 across and 20..49 down on a 100 x 80 image, that
is [10, 20, 40, 50) right/bottom exclusive. Each format's convention: VOC 1-based inclusive
indices (Everingham & Winn, "The PASCAL Visual Object Classes Challenge 2012 Development Kit",
annotation section; from memory); COCO [x, y, w, h] (cocodataset.org, "Data format", object
detection: structure re-read, the bbox order from memory); YOLO normalised centre and size,
`class x_center y_center width height` (Ultralytics YOLOv5 wiki, "Train Custom Data", section
"Create labels"; re-read as its maintainers quote it).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from PIL import Image

from tapgauge.model import InputError
from tapgauge.readers import discover, read_screens
from tapgauge.readers.classes import default_class_map, load_class_map
from tapgauge.readers import ReadOptions

BOX = (10, 20, 40, 50)


def picture(folder: Path, name: str = "shot.png", size: tuple[int, int] = (100, 80)) -> Path:
    p = folder / name
    Image.new("RGB", size, (250, 250, 250)).save(p)
    return p


def voc(folder: Path, size: tuple[int, int] = (100, 80), cls: str = "button", box: tuple[int, ...] = (11, 21, 40, 50)) -> Path:
    p = folder / "shot.xml"
    p.write_text(f"""<annotation>
  <filename>shot.png</filename>
  <size><width>{size[0]}</width><height>{size[1]}</height><depth>3</depth></size>
  <object><name>{cls}</name><bndbox><xmin>{box[0]}</xmin><ymin>{box[1]}</ymin><xmax>{box[2]}</xmax><ymax>{box[3]}</ymax></bndbox></object>
  <object><name>Text</name><bndbox><xmin>50</xmin><ymin>50</ymin><xmax>60</xmax><ymax>60</ymax></bndbox></object>
</annotation>""")
    return p


def coco(folder: Path, bbox: list[float] = [10, 20, 30, 30], width: int = 100) -> Path:
    p = folder / "boxes.json"
    p.write_text(json.dumps({
        "images": [{"id": 7, "file_name": "shot.png", "width": width, "height": 80}],
        "categories": [{"id": 1, "name": "icon-button"}, {"id": 2, "name": "label"}],
        "annotations": [{"id": 1, "image_id": 7, "category_id": 1, "bbox": bbox},
                        {"id": 2, "image_id": 7, "category_id": 2, "bbox": [50, 50, 10, 10]}],
    }))
    return p


def test_voc_is_one_based_inclusive(tmp_path: Path) -> None:
    picture(tmp_path)
    (screen,) = read_screens(voc(tmp_path))
    assert [t.bounds for t in screen.targets] == [BOX]  # 'Text' is ignored
    assert screen.image == tmp_path / "shot.png" and (screen.width, screen.height) == (100, 80)
    assert screen.targets[0].line == 4


def test_coco_is_x_y_w_h(tmp_path: Path) -> None:
    picture(tmp_path)
    (screen,) = read_screens(coco(tmp_path))
    assert [t.bounds for t in screen.targets] == [BOX] and screen.name == "shot.png"


def test_yolo_is_normalised_centres(tmp_path: Path) -> None:
    picture(tmp_path)
    (tmp_path / "classes.txt").write_text("button\ntext\n")
    (tmp_path / "shot.txt").write_text("0 0.25 0.4375 0.3 0.375\n1 0.5 0.5 0.1 0.1\n")
    (screen,) = read_screens(tmp_path / "shot.txt")
    assert [tuple(round(v, 9) for v in t.bounds) for t in screen.targets] == [BOX]


def test_our_csv(tmp_path: Path) -> None:
    picture(tmp_path)
    p = tmp_path / "boxes.csv"
    p.write_text("image,left,top,right,bottom,class,label\nshot.png,10,20,40,50,button,Sow\nshot.png,50,50,60,60,text,\n")
    (screen,) = read_screens(p)
    assert [(t.bounds, t.label) for t in screen.targets] == [(BOX, "Sow")]


def test_discovery_pairs_pictures_with_annotations(tmp_path: Path) -> None:
    picture(tmp_path)
    voc(tmp_path)
    picture(tmp_path, "marked.png")  # a lone screenshot: read for marker boxes
    sub = tmp_path / "coco"
    sub.mkdir()
    picture(sub)
    coco(sub)
    found, _ = discover([tmp_path])
    # in the report's order: paths sorted as strings
    assert [p.relative_to(tmp_path).as_posix() for p in found] == ["coco/boxes.json", "marked.png", "shot.xml"]


@pytest.mark.parametrize(
    ("make", "expect"),
    [
        (lambda d: (picture(d), voc(d, size=(200, 80))), "picture is 100x80"),
        (lambda d: (picture(d), coco(d, width=90)), "picture is 100x80"),
        (lambda d: voc(d), "was not found"),
        (lambda d: (picture(d), voc(d, box=(11, 21, 140, 50))), "outside the 100x80 image"),
        (lambda d: (picture(d), voc(d, box=(40, 21, 11, 50))), "negative width"),
        (lambda d: (picture(d), voc(d, cls="doohickey")), "neither a target nor ignored"),
        (lambda d: (picture(d), coco(d, bbox=[10, 20, -5, 30])), "negative width"),
    ],
)
def test_bad_annotations_are_clear_errors(tmp_path: Path, make, expect: str) -> None:  # type: ignore[no-untyped-def]
    make(tmp_path)
    target = next(p for p in sorted(tmp_path.iterdir()) if p.suffix in (".xml", ".json"))
    with pytest.raises(InputError, match=expect):
        read_screens(target)


def test_a_truncated_picture_is_a_clear_error(tmp_path: Path) -> None:
    p = picture(tmp_path)
    p.write_bytes(p.read_bytes()[:40])
    voc(tmp_path)
    with pytest.raises(InputError, match="damaged or truncated|not a readable image"):
        read_screens(tmp_path / "shot.xml")


def test_class_table_can_be_overridden(tmp_path: Path) -> None:
    picture(tmp_path)
    voc(tmp_path, cls="doohickey")
    table = tmp_path / "classes.toml"
    table.write_text('target = ["doohickey"]\nignore = ["text"]\n')
    (screen,) = read_screens(tmp_path / "shot.xml", ReadOptions(classes=load_class_map(table)))
    assert [t.cls for t in screen.targets] == ["doohickey"]
    assert default_class_map().target != load_class_map(table).target


def test_decompression_bomb_limit_is_honoured(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # Pillow's own limit (Image.MAX_IMAGE_PIXELS) decides; here it is lowered so a small picture trips it.
    picture(tmp_path)
    voc(tmp_path)
    monkeypatch.setattr(Image, "MAX_IMAGE_PIXELS", 1000)
    with pytest.raises(InputError, match="too large to open safely"):
        read_screens(tmp_path / "shot.xml")


def test_bad_screenshot_input_does_not_stop_the_batch(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    from tapgauge.cli import main

    good, bad = tmp_path / "good", tmp_path / "bad"
    for d, cls in ((good, "button"), (bad, "doohickey")):
        d.mkdir()
        picture(d)
        voc(d, cls=cls)
        (d / "device.txt").write_text("density: 160\n")
    (tmp_path / "broken.png").write_bytes(b"\x89PNG\r\n\x1a\nnope")
    assert main(["check", str(tmp_path), "-f", "json"]) == 2
    report = json.loads(capsys.readouterr().out)
    assert [s["path"].rsplit("/", 2)[-2] for s in report["screens"]] == ["good"]
    assert sorted(e["path"].rsplit("/", 1)[-1] for e in report["errors"]) == ["broken.png", "shot.xml"]
