"""Readers turn input files into Screens. They know nothing of rules.

A screen may be a bundle of files sharing a stem: `home.xml` (a window dump or an
element tree) or `home.json` (page source saved from an automation server),
`home.png` (its screenshot, for overlays) and `home.device.txt`.
"""

from __future__ import annotations

import heapq
import os
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field, replace
from operator import itemgetter
from pathlib import Path

from tapgauge.model import DeviceHints, InputError, Screen
from tapgauge.readers.android import is_android_root, read_android
from tapgauge.readers.annotations import (
    coco_image_names,
    csv_image_names,
    is_voc_root,
    read_coco,
    read_csv,
    read_voc,
    read_yolo,
)
from tapgauge.readers.classes import ClassMap, default_class_map
from tapgauge.readers.images import IMAGE_SUFFIXES, image_size
from tapgauge.readers.ios import is_ios_root, read_ios
from tapgauge.readers.marked import DEFAULT_MARKER, parse_marker, read_marked
from tapgauge.readers.pagesource import (
    HEAD_BYTES,
    KINDS_READ,
    json_kind,
    load_json,
    looks_like_page_source,
    server_error,
    tree_from_json,
)
from tapgauge.readers.sidecar import FOLDER_SIDECAR, SIDECAR_SUFFIX, read_sidecar, sidecar_for
from tapgauge.readers.xmlsafe import Document, parse_documents, status_notice
from tapgauge.textfile import read_bytes

NOT_LABELS = {FOLDER_SIDECAR, "classes.txt"}


@dataclass(frozen=True)
class ReadOptions:
    classes: ClassMap = field(default_factory=default_class_map)
    marker_hue: float = field(default_factory=lambda: parse_marker(DEFAULT_MARKER))
    # Also take as targets what frameworks sometimes write for controls without marking them
    # tappable: Android nodes focusable but not clickable, iOS "Other" elements with a label.
    include_focusable: bool = False


def _hints(path: Path) -> tuple[DeviceHints, ...]:
    side = sidecar_for(path)
    return (read_sidecar(side),) if side is not None else ()


def _picture(path: Path) -> Path | None:
    return next((path.with_suffix(s) for s in IMAGE_SUFFIXES if path.with_suffix(s).is_file()), None)


def read_screens(path: Path, options: ReadOptions | None = None) -> list[Screen]:
    """Read one input file into the screens it holds (COCO and CSV files, and appended dumps, may hold many)."""
    opts = options or ReadOptions()
    suffix = path.suffix.lower()
    if suffix == ".json":
        return _read_json(path, opts)
    if suffix == ".csv":
        return read_csv(path, opts.classes, _hints)
    if suffix == ".txt":
        return [read_yolo(path, opts.classes, _hints)]
    if suffix in IMAGE_SUFFIXES:
        return [read_marked(path, opts.marker_hue, _hints(path))]
    docs = parse_documents(path)
    if len(docs) == 1 and is_voc_root(docs[0].root):
        return [read_voc(path, docs[0].root, opts.classes, _hints)]
    return _dumps(path, docs, opts)


def _dumps(path: Path, docs: list[Document], opts: ReadOptions, notices: tuple[str, ...] = ()) -> list[Screen]:
    """One screen per window dump or element tree; several in one file are named "dump 1", "dump 2", ..."""
    picture = _picture(path)
    if len(docs) == 1:
        screen = _screen_of(path, docs[0], opts, picture)
        said = (*notices, status_notice(docs[0].ignored)) if docs[0].ignored else notices
        return [replace(screen, notices=(*screen.notices, *said))]
    # One screenshot cannot show several dumps: overlay none rather than guess (said once, on the first).
    unused = (f"{picture.name} was not used for this file's {len(docs)} dumps: one screenshot cannot show "
              "them all",) if picture is not None else ()
    digits = len(str(len(docs)))  # "dump 01" .. "dump 12": names sort as their numbers do
    screens = []
    for k, doc in enumerate(docs, start=1):
        screen = _screen_of(path, doc, opts, None)
        said = (*notices, status_notice(doc.ignored)) if doc.ignored else notices
        screens.append(replace(screen, name=f"dump {k:0{digits}d}",
                               notices=(*screen.notices, *said, *(unused if k == 1 else ()))))
    return screens


def _screen_of(path: Path, doc: Document, opts: ReadOptions, picture: Path | None) -> Screen:
    root = doc.root
    if is_android_root(root):
        return read_android(path, root, _hints(path), image=picture, include_focusable=opts.include_focusable)
    if is_ios_root(root):
        return _with_scale_from_picture(read_ios(path, root, _hints(path), image=picture,
                                                 include_focusable=opts.include_focusable))
    raise InputError(
        path,
        f"root element is <{root.tag}>; expected <hierarchy> (Android window dump), XCUIElementType* "
        "elements (iOS element tree) or <annotation> (Pascal VOC)",
        root.sourceline,
    )


def _read_json(path: Path, opts: ReadOptions) -> list[Screen]:
    """A .json file: COCO annotations, a WebDriver page-source response, or an iOS element tree in JSON."""
    data = load_json(path, read_bytes(path))
    kind, part = json_kind(data)
    if kind == "coco":
        return read_coco(path, opts.classes, _hints, loaded=part)
    if kind == "xml":
        return _dumps(path, _documents_in_value(path, part), opts, (
            "read the page source XML held in the response's 'value'; line numbers are lines of that XML",))
    if kind == "tree":
        where = "value" if part is not data else ""
        screen = read_ios(path, tree_from_json(path, part, where), _hints(path), image=_picture(path),
                          include_focusable=opts.include_focusable)
        return [_with_scale_from_picture(screen)]
    if kind == "error":
        raise server_error(path, part)
    if isinstance(data, dict) and str(data.get("format", "")).startswith("tapgauge-"):
        raise InputError(path, f"is tapgauge's own output ({data['format']}), not a screen; keep reports and "
                               "baselines outside the folders tapgauge checks")
    raise InputError(path, f"JSON of a kind tapgauge does not read; expected {KINDS_READ}")


def _documents_in_value(path: Path, xml: str) -> list[Document]:
    """The XML documents in a WebDriver response's 'value', its errors placed within that XML."""
    try:
        return parse_documents(path, xml.encode("utf-8"))
    except UnicodeEncodeError:
        raise InputError(path, "the page source in 'value' holds characters that are not valid text") from None
    except InputError as exc:
        where = f", its line {exc.line}" if exc.line else ""
        raise InputError(path, f"in the page source XML in 'value'{where}: {exc.message}") from None


def _with_scale_from_picture(screen: Screen) -> Screen:
    """An iOS tree in points beside its screenshot in pixels: the width ratio is the scale."""
    if screen.image is None or screen.width <= 0:
        return screen
    width_px, _ = image_size(screen.image)
    ratio = width_px / screen.width
    if abs(ratio - round(ratio)) > 0.02 or round(ratio) < 1:
        return screen  # not a whole-number scale: do not guess
    seen = DeviceHints(scale=float(round(ratio)), source=f"screenshot {screen.image.name} width")
    return replace(screen, hints=(*screen.hints, seen))


def read_screen(path: Path) -> Screen:
    """Read a file that holds exactly one screen."""
    screens = read_screens(path)
    if len(screens) != 1:
        raise InputError(path, f"holds {len(screens)} screens; expected one")
    return screens[0]


def _folder_inputs(folder: Path, files: list[str]) -> list[Path]:
    """The primary inputs of one folder: screens, annotations, and pictures nothing else claims (any order)."""
    names = set(files)
    stems_claimed: set[str] = set()
    inputs: list[Path] = []
    referenced: set[str] = set()
    for name in files:
        p = folder / name
        low = name.lower()
        if low.endswith(SIDECAR_SUFFIX) or name in NOT_LABELS:
            continue
        if low.endswith(".xml"):
            inputs.append(p)
            stems_claimed.add(p.stem)
        elif low.endswith(".json"):
            head = _head(p)
            if OWN_OUTPUT.search(head):
                continue  # a report or baseline tapgauge wrote beside the screens is not a screen
            inputs.append(p)
            if looks_like_page_source(head):
                stems_claimed.add(p.stem)  # home.json + home.png is one screen, like home.xml + home.png
            else:
                referenced |= coco_image_names(p)
        elif low.endswith(".csv"):
            inputs.append(p)
            referenced |= csv_image_names(p)
        elif low.endswith(".txt") and any(p.stem + s in names for s in IMAGE_SUFFIXES):
            inputs.append(p)  # YOLO labels beside their image
            stems_claimed.add(p.stem)
    for name in files:
        p = folder / name
        if p.suffix.lower() in IMAGE_SUFFIXES and p.stem not in stems_claimed and name not in referenced:
            inputs.append(p)  # a lone screenshot: boxes marked on it
    return inputs


# What tapgauge's own JSON outputs (report, baseline, gate record) start with.
OWN_OUTPUT = re.compile(rb'^\s*\{\s*"format"\s*:\s*"tapgauge-')


def _head(path: Path) -> bytes:
    """A .json file's first few KiB, to tell page source from boxes cheaply (never raises)."""
    try:
        with open(path, "rb") as fh:
            return fh.read(HEAD_BYTES)
    except OSError:
        return b""  # the read reports it


_DEEPEST = 200  # folders below a given folder; far past any export, well within Python's recursion limit


def _sorted_walk(folder: Path, depth: int = 0) -> Iterator[Path | InputError]:
    """A folder's inputs, recursively, in the string order of their paths, one folder read at a time.

    Siblings are sorted with a folder's name followed by "/", as it appears inside every
    path below it, so the walk comes out in exactly the order a sorted list of full paths
    would have, without the list. Symbolic links to folders are not followed (a link
    loop cannot trap the walk); a folder that cannot be read is an error, not a silent gap.
    """
    if depth > _DEEPEST:
        yield InputError(folder, f"more than {_DEEPEST} folders deep; nothing below it was searched")
        return
    try:
        with os.scandir(folder) as it:
            entries = [(e.name, e.is_dir(), e.is_symlink()) for e in it]
    except OSError as exc:
        yield InputError(folder, f"cannot read this folder ({exc.strerror or exc}); its screens were not checked")
        return
    files = [name for name, is_dir, _ in entries if not is_dir]
    order: list[tuple[str, Path]] = [(p.name, p) for p in _folder_inputs(folder, files)]
    order += [(name + "/", folder / name) for name, is_dir, link in entries if is_dir and not link]
    for name, path in sorted(order, key=itemgetter(0)):
        if name.endswith("/"):
            yield from _sorted_walk(path, depth + 1)
        else:
            yield path


def iter_inputs(paths: list[Path], key: Callable[[Path], str]) -> Iterator[Path | InputError]:
    """Input files under `paths` (files named directly are always taken), each once, in `key` order.

    Paths that do not exist come first, as errors. Folders are walked lazily and the
    walks merged, so no list of every file found is kept: memory stays flat however
    many screens a run checks (it grows only with the largest single folder).
    """
    streams: list[Iterator[Path | InputError]] = []
    for given in paths:
        if given.is_file():
            streams.append(iter([given]))
        elif given.is_dir():
            streams.append(_sorted_walk(given))
        else:
            yield InputError(given, "no such file or folder")

    def order(item: Path | InputError) -> str:
        return key(Path(item.path)) if isinstance(item, InputError) else key(item)

    last = None
    for item in heapq.merge(*streams, key=order):
        k = order(item)
        if k != last:  # the same file reached twice (a folder and a file in it, or nested folders)
            yield item
            last = k


def discover(paths: list[Path]) -> tuple[list[Path], list[InputError]]:
    """Every input file under `paths`, as a list, in path order; and the errors met on the way."""
    found: list[Path] = []
    errors: list[InputError] = []
    for item in iter_inputs(paths, lambda p: p.as_posix()):
        (errors if isinstance(item, InputError) else found).append(item)  # type: ignore[arg-type]
    return found, errors
