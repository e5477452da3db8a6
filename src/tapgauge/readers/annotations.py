"""Screenshots with box annotations: Pascal VOC, COCO, YOLO, and our own CSV.

Every format becomes boxes in image pixels, 0-based, right/bottom exclusive:
- VOC: xmin..xmax are 1-based inclusive pixel indices, so left = xmin - 1, right = xmax.
- COCO: bbox = [x, y, width, height] in continuous 0-based pixel coordinates.
- YOLO: `class cx cy w h` per line, each normalised to 0..1 by the image size.
- CSV (ours): header `image,left,top,right,bottom,class` plus an optional `label`
  column; 0-based pixels, right/bottom exclusive, one row per box, any number of images.
Annotation classes map to target / not a target through readers.classes.
"""

from __future__ import annotations

import csv
import io
import json
import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

from lxml import etree

from tapgauge.model import DeviceHints, InputError, Screen, Target
from tapgauge.readers.classes import ClassMap
from tapgauge.readers.images import IMAGE_SUFFIXES, image_size
from tapgauge.textfile import read_text

HintsFor = Callable[[Path], tuple[DeviceHints, ...]]  # the device hints (sidecar) for an image
Raw = tuple[float, float, float, float, str, str, int | None]  # l, t, r, b, class, label, line


def _screen(path: Path, image: Path, size: tuple[int, int], raws: list[Raw], classes: ClassMap,
            hints: tuple[DeviceHints, ...], name: str = "") -> Screen:
    w, h = size
    targets: list[Target] = []
    for l, t, r, b, cls, label, line in raws:
        where = f" (image {image.name})" if name else ""
        if not all(math.isfinite(v) for v in (l, t, r, b)):
            raise InputError(path, f"box for {cls!r}{where} has a non-finite coordinate", line)
        if r < l or b < t:
            raise InputError(path, f"box for {cls!r}{where} has a negative width or height: [{l:g},{t:g}][{r:g},{b:g}]", line)
        if l < -0.5 or t < -0.5 or r > w + 0.5 or b > h + 0.5:
            raise InputError(path, f"box for {cls!r}{where} [{l:g},{t:g}][{r:g},{b:g}] lies outside the "
                                   f"{w}x{h} image", line)
        if not classes.is_target(cls, path, line):
            continue
        targets.append(Target(number=len(targets) + 1, bounds=(l, t, r, b), cls=cls, label=label, resource_id="",
                              paint_rank=len(targets) + 1, line=line))
    return Screen(path=path, platform="", width=w, height=h, rotation=0, targets=tuple(targets), hints=hints,
                  coords="px", image=image, name=name)


def _check_size(path: Path, image: Path, declared: tuple[int, int], actual: tuple[int, int], line: int | None) -> None:
    if declared != actual:
        raise InputError(path, f"annotation says the image {image.name} is {declared[0]}x{declared[1]}, but the "
                               f"picture is {actual[0]}x{actual[1]}; were the boxes drawn on another export?", line)


def _num(text: str | None, what: str, path: Path, line: int | None) -> float:
    try:
        value = float(text) if text is not None else math.nan
    except ValueError:
        value = math.nan
    if not math.isfinite(value):
        raise InputError(path, f"{what} is {text!r}; expected a number", line)
    return value


# ---------------------------------------------------------------- Pascal VOC


def is_voc_root(root: etree._Element) -> bool:
    return root.tag == "annotation"


def read_voc(path: Path, root: etree._Element, classes: ClassMap, hints_for: HintsFor) -> Screen:
    filename = (root.findtext("filename") or "").strip()
    image = _find_image(path, filename)
    actual = image_size(image)
    size = root.find("size")
    if size is not None and size.findtext("width") is not None:
        declared = (int(_num(size.findtext("width"), "size/width", path, size.sourceline)),
                    int(_num(size.findtext("height"), "size/height", path, size.sourceline)))
        _check_size(path, image, declared, actual, size.sourceline)
    raws: list[Raw] = []
    for obj in root.iter("object"):
        line = obj.sourceline
        cls = (obj.findtext("name") or "").strip()
        box = obj.find("bndbox")
        if not cls or box is None:
            raise InputError(path, "<object> needs <name> and <bndbox>", line)
        xmin, ymin, xmax, ymax = (_num(box.findtext(k), f"bndbox/{k}", path, box.sourceline)
                                  for k in ("xmin", "ymin", "xmax", "ymax"))
        raws.append((xmin - 1, ymin - 1, xmax, ymax, cls, cls, line))
    return _screen(path, image, actual, raws, classes, hints_for(image))


def _find_image(annotation: Path, filename: str) -> Path:
    candidates = [annotation.with_name(Path(filename).name)] if filename else []
    candidates += [annotation.with_suffix(s) for s in IMAGE_SUFFIXES]
    for c in candidates:
        if c.is_file():
            return c
    named = f"'{filename}'" if filename else f"'{annotation.stem}.png' or '.jpg'"
    raise InputError(annotation, f"the annotated image {named} was not found beside the annotation")


# ---------------------------------------------------------------- COCO


def read_coco(path: Path, classes: ClassMap, hints_for: HintsFor, loaded: Any = None) -> list[Screen]:
    """A COCO file's screens; `loaded` is its JSON when the caller has parsed it already (to sniff its kind)."""
    data = loaded
    if data is None:
        try:
            data = json.loads(read_text(path, "COCO file"))
        except json.JSONDecodeError as exc:
            raise InputError(path, f"not valid JSON: {exc.msg}", exc.lineno) from None
    if not isinstance(data, dict) or not all(isinstance(data.get(k), list) for k in ("images", "annotations", "categories")):
        raise InputError(path, "COCO annotations need lists 'images', 'annotations' and 'categories'")
    try:
        names = {int(c["id"]): str(c["name"]) for c in data["categories"]}
        images = {int(i["id"]): i for i in data["images"]}
    except (KeyError, TypeError, ValueError):
        raise InputError(path, "COCO categories need id and name; images need id, file_name, width and height") from None
    per_image: dict[int, list[Raw]] = {k: [] for k in images}
    for n, ann in enumerate(data["annotations"]):
        try:
            image_id, cat = int(ann["image_id"]), int(ann["category_id"])
            x, y, w, h = (float(v) for v in ann["bbox"])
        except (KeyError, TypeError, ValueError):
            raise InputError(path, f"annotations[{n}] needs image_id, category_id and bbox [x, y, w, h]") from None
        if image_id not in images:
            raise InputError(path, f"annotations[{n}] names image_id {image_id}, which is not in 'images'")
        if cat not in names:
            raise InputError(path, f"annotations[{n}] names category_id {cat}, which is not in 'categories'")
        per_image[image_id].append((x, y, x + w, y + h, names[cat], names[cat], None))
    screens: list[Screen] = []
    for image_id, info in sorted(images.items(), key=lambda kv: str(kv[1].get("file_name"))):
        filename = str(info.get("file_name", ""))
        image = path.with_name(Path(filename).name) if Path(filename).name else path
        if not Path(filename).name or not image.is_file():
            raise InputError(path, f"images id {image_id} names '{filename}', which is not beside the COCO file")
        actual = image_size(image)
        try:
            declared = (int(info["width"]), int(info["height"]))
        except (KeyError, TypeError, ValueError):
            raise InputError(path, f"images id {image_id} needs whole-number width and height") from None
        _check_size(path, image, declared, actual, None)
        screens.append(_screen(path, image, actual, per_image[image_id], classes, hints_for(image), name=image.name))
    return screens


def coco_image_names(path: Path) -> set[str]:
    """Images a COCO file describes (best effort, for discovery; errors surface on reading)."""
    try:
        data = json.loads(read_text(path))
        return {Path(str(i["file_name"])).name for i in data["images"]}
    except Exception:  # noqa: BLE001 - the real read reports what is wrong
        return set()


# ---------------------------------------------------------------- YOLO


def read_yolo(path: Path, classes: ClassMap, hints_for: HintsFor) -> Screen:
    image = next((path.with_suffix(s) for s in IMAGE_SUFFIXES if path.with_suffix(s).is_file()), None)
    if image is None:
        raise InputError(path, f"YOLO labels need their image beside them: '{path.stem}.png' or '.jpg'")
    names_file = path.with_name("classes.txt")
    if not names_file.is_file():
        raise InputError(path, "YOLO labels need the class names: a 'classes.txt' beside them, one name per line")
    names = [n.strip() for n in read_text(names_file, "class list", errors="replace").splitlines() if n.strip()]
    w, h = image_size(image)
    raws: list[Raw] = []
    for n, line in enumerate(read_text(path, "YOLO labels", errors="replace").splitlines(), start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        parts = line.split()
        if len(parts) != 5:
            raise InputError(path, f"expected 'class cx cy w h' (5 fields), found {len(parts)}", n)
        try:
            k = int(parts[0])
        except ValueError:
            raise InputError(path, f"class {parts[0]!r} is not a whole number", n) from None
        if not 0 <= k < len(names):
            raise InputError(path, f"class {k} is not in classes.txt ({len(names)} names)", n)
        cx, cy, bw, bh = (_num(v, "a YOLO coordinate", path, n) for v in parts[1:])
        raws.append(((cx - bw / 2) * w, (cy - bh / 2) * h, (cx + bw / 2) * w, (cy + bh / 2) * h, names[k], names[k], n))
    return _screen(path, image, (w, h), raws, classes, hints_for(image))


# ---------------------------------------------------------------- CSV (ours)

CSV_COLUMNS = ("image", "left", "top", "right", "bottom", "class")


def _csv_rows(path: Path) -> tuple[list[str], list[tuple[int, dict[str, str]]]]:
    text = read_text(path, "CSV file", encoding="utf-8-sig")
    reader = csv.DictReader(io.StringIO(text))
    try:
        header = [h.strip() for h in (reader.fieldnames or [])]
    except csv.Error as exc:
        raise InputError(path, f"not a readable CSV header: {exc}", 1) from None
    missing = [c for c in CSV_COLUMNS if c not in header]
    if missing:
        raise InputError(path, f"CSV header lacks {', '.join(missing)}; expected columns "
                               f"{','.join(CSV_COLUMNS)} and optionally label", 1)
    try:
        rows = [(reader.line_num, {k.strip(): (v or "").strip() for k, v in row.items() if k}) for row in reader]
    except csv.Error as exc:
        raise InputError(path, f"not readable as CSV: {exc}", reader.line_num) from None
    return header, rows


def read_csv(path: Path, classes: ClassMap, hints_for: HintsFor) -> list[Screen]:
    _, rows = _csv_rows(path)
    per_image: dict[str, list[Raw]] = {}
    for line, row in rows:
        l, t, r, b = (_num(row.get(k), k, path, line) for k in ("left", "top", "right", "bottom"))
        cls = row.get("class", "")
        per_image.setdefault(row.get("image", ""), []).append((l, t, r, b, cls, row.get("label") or cls, line))
    screens: list[Screen] = []
    for name, raws in sorted(per_image.items()):
        image = path.with_name(Path(name).name) if Path(name).name else path
        if not Path(name).name or not image.is_file():
            raise InputError(path, f"image '{name}' is not beside the CSV file", raws[0][6])
        screens.append(_screen(path, image, image_size(image), raws, classes, hints_for(image), name=image.name))
    return screens


def csv_image_names(path: Path) -> set[str]:
    try:
        _, rows = _csv_rows(path)
        return {Path(row["image"]).name for _, row in rows if row.get("image")}
    except Exception:  # noqa: BLE001 - the real read reports what is wrong
        return set()
