"""Pictures: their size (cheaply, from the header) and their pixels (for marker boxes).

Pillow's decompression-bomb limit is honoured: an image with more pixels than it
allows is an input error, not a memory blow-up.
"""

from __future__ import annotations

import warnings
from pathlib import Path
from typing import TYPE_CHECKING

from tapgauge.model import InputError

if TYPE_CHECKING:
    from PIL import Image

IMAGE_SUFFIXES = (".png", ".jpg", ".jpeg")


def _open(path: Path) -> Image.Image:
    from PIL import Image, UnidentifiedImageError  # here, so a run with no pictures never loads Pillow

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", Image.DecompressionBombWarning)
            return Image.open(path)
    except (Image.DecompressionBombError, Image.DecompressionBombWarning) as exc:
        raise InputError(path, f"image is too large to open safely ({exc})") from None
    except UnidentifiedImageError:
        raise InputError(path, "not a readable image; expected a PNG or JPEG file") from None
    except OSError as exc:
        raise InputError(path, f"cannot read image: {exc}") from None


def image_size(path: Path) -> tuple[int, int]:
    """Width and height from the image header, after checking the file is whole."""
    img = _open(path)
    try:
        size = img.size
        img.verify()  # structure and checksums, without decoding every pixel
    except Exception as exc:  # noqa: BLE001 - Pillow raises many types for broken files
        raise InputError(path, f"image is damaged or truncated ({type(exc).__name__}: {exc})") from None
    finally:
        img.close()
    return size


def load_rgb(path: Path) -> "object":
    """Decode an image into an RGB numpy array (height x width x 3)."""
    import numpy as np

    img = _open(path)
    try:
        img.load()
        return np.asarray(img.convert("RGB"))
    except Exception as exc:  # noqa: BLE001
        raise InputError(path, f"image is damaged or truncated ({type(exc).__name__}: {exc})") from None
    finally:
        img.close()
