"""Readers turn input files into Screens. They know nothing of rules."""

from __future__ import annotations

import os
from pathlib import Path

from tapgauge.model import DeviceHints, InputError, Screen
from tapgauge.readers.android import is_android_root, read_android
from tapgauge.readers.sidecar import SIDECAR_SUFFIX, read_sidecar, sidecar_for
from tapgauge.readers.xmlsafe import parse_xml

SCREEN_SUFFIXES = (".xml",)


def read_screen(path: Path) -> Screen:
    root = parse_xml(path)
    if not is_android_root(root):
        raise InputError(
            path,
            f"root element is <{root.tag}>; expected <hierarchy> (an Android window dump "
            "from `adb shell uiautomator dump`)",
            root.sourceline,
        )
    side = sidecar_for(path)
    hints = read_sidecar(side) if side is not None else DeviceHints()
    return read_android(path, root, hints)


def discover(paths: list[Path]) -> tuple[list[Path], list[InputError]]:
    """Expand files and folders (recursively) into screen files, in a stable order.

    Files named directly are always taken; in folders, files with a screen suffix.
    Symbolic links to folders are not followed, so a link loop cannot trap the walk.
    """
    found: list[Path] = []
    errors: list[InputError] = []
    for given in paths:
        if given.is_file():
            found.append(given)
        elif given.is_dir():
            for folder, dirs, files in os.walk(given):
                dirs.sort()
                for name in sorted(files):
                    if name.lower().endswith(SCREEN_SUFFIXES) and not name.endswith(SIDECAR_SUFFIX):
                        found.append(Path(folder) / name)
        else:
            errors.append(InputError(given, "no such file or folder"))
    unique = list(dict.fromkeys(found))
    return unique, errors
