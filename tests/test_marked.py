"""The marker-box detector against generated screenshots with known boxes.

The oracle is the generator's own geometry (tests/markgen.py): boxes drawn at 4x
and shrunk, over an invented UI, with decoy text and specks in the marker colour.
Acceptance (from the issue): every box found within 2 px, no false boxes, across
colours, line widths and JPEG qualities.
"""

from __future__ import annotations

import random
from pathlib import Path

import pytest
from PIL import Image

from markgen import COLOURS, make_sample, match
from tapgauge.model import InputError
from tapgauge.readers.marked import find_boxes, parse_marker, read_marked


@pytest.mark.parametrize("colour", sorted(COLOURS))
@pytest.mark.parametrize("line", [0, 2, 3, 5])
@pytest.mark.parametrize("quality", [None, 85, 60])
def test_every_box_found_within_2_px_and_nothing_else(colour: str, line: int, quality: int | None) -> None:
    rng = random.Random(f"{colour}-{line}-{quality}")
    sample = make_sample(rng, colour, line, quality)
    found = find_boxes(sample.rgb, parse_marker(colour))
    hits, false, worst = match(found, sample.truth)
    assert (hits, false) == (len(sample.truth), 0), (found, sample.truth)
    assert worst <= 2.0


def test_marker_names_and_hex() -> None:
    assert parse_marker("magenta") == parse_marker("#ff00ff") == 300.0
    with pytest.raises(ValueError, match="too grey"):
        parse_marker("#808080")
    with pytest.raises(ValueError, match="expected a name"):
        parse_marker("chartreuse-ish")


def test_a_screenshot_without_boxes_is_a_clear_error(tmp_path: Path) -> None:
    p = tmp_path / "plain.png"
    Image.new("RGB", (200, 300), (240, 240, 240)).save(p)
    with pytest.raises(InputError, match="no marker boxes"):
        read_marked(p, parse_marker("magenta"), ())


@pytest.mark.parametrize("payload", [b"", b"not an image at all", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR"])
def test_truncated_or_non_images_are_clear_errors(tmp_path: Path, payload: bytes) -> None:
    p = tmp_path / "bad.png"
    p.write_bytes(payload)
    with pytest.raises(InputError) as info:
        read_marked(p, parse_marker("magenta"), ())
    assert info.value.path == str(p)
