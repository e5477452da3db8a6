"""Capture one screen from a live W3C WebDriver session, as the bundle `check` reads.

Three standard commands of the session (W3C WebDriver editor's draft, re-read):
- "Get Page Source", GET /session/{session id}/source: the data is the source as a string;
- "Take Screenshot", GET /session/{session id}/screenshot: the data is a PNG, Base64-encoded
  (the part of a data: URL after the comma, "encode a canvas as Base64");
- "Get Window Rect", GET /session/{session id}/window/rect: the data is {x, y, width, height},
  the window's screenX, screenY, outerWidth and outerHeight ("Resizing and positioning
  windows"), which in a browser are CSS pixels.
They are written as NAME.xml, NAME.png and, where anything usable is known, NAME.device.txt.

The standard speaks of browsers; what a native app session's window rect is measured in,
it does not say. We assume an iOS session gives points, as its element tree does, and test
that assumption: the rect must be as wide as the tree's application element, or no scale
is recorded. The scale is then the screenshot's width in pixels over the window's width in
points. An Android session gives pixels everywhere; nothing standard tells its density,
so none is written (a sidecar that says nothing usable is refused by `check`) and the
caller is told how to give it. Neither platform reports a physical ppi.
"""

from __future__ import annotations

import base64
import binascii
import math
import struct
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from tapgauge.capture import PNG_SIGNATURE, CaptureError, bundle_paths
from tapgauge.device import SCALE_SLACK_PX, parse_scale, platform_units
from tapgauge.model import InputError
from tapgauge.readers.android import is_android_root
from tapgauge.readers.ios import PREFIX, is_ios_root
from tapgauge.readers.xmlsafe import parse_documents
from tapgauge.report.output import write_atomic
from tapgauge.webdriver import DEFAULT_TIMEOUT_S, Session, get_value, parse_session_url


@dataclass(frozen=True)
class Rect:
    x: float
    y: float
    width: float
    height: float


@dataclass(frozen=True)
class Captured:
    written: tuple[Path, ...]
    platform: str  # "android" or "ios"
    notes: tuple[str, ...]  # what the caller should know or do next, in plain words
    check_flags: str = ""  # what `check` needs besides the file, such as " --density DPI"


def png_size(data: bytes) -> tuple[int, int] | None:
    """Width and height from a PNG's IHDR chunk, which the PNG specification puts first; None if not a PNG."""
    if not data.startswith(PNG_SIGNATURE) or len(data) < 24 or data[12:16] != b"IHDR":
        return None
    width, height = struct.unpack(">II", data[16:24])
    return (width, height) if width and height else None


def _platform(session: Session, xml: bytes, name: str) -> tuple[str, float | None]:
    """'android' or 'ios' from the page source's root, and an iOS tree's application width in points."""
    url = f"{session.url}/source"
    try:
        root = parse_documents(Path(f"{name}.xml"), xml)[0].root
    except InputError as exc:
        where = f" (its line {exc.line})" if exc.line else ""
        raise CaptureError(f"GET {url}: the page source is not XML that check reads{where}: {exc.message}") from None
    if is_android_root(root):
        return "android", None
    if is_ios_root(root):
        app = next((el for el in root.iter() if isinstance(el.tag, str) and el.tag.startswith(PREFIX)
                    and el.get("width") is not None), None)
        try:
            width = float(app.get("width", "")) if app is not None else None
        except ValueError:
            width = None
        return "ios", width if width is not None and math.isfinite(width) and width > 0 else None
    raise CaptureError(f"GET {url}: the page source's root is <{root.tag}>, not an app screen; expected <hierarchy> "
                       "(Android) or XCUIElementType* elements (iOS). Is the session in a web view context?")


def _screenshot(session: Session, timeout: float) -> tuple[bytes, tuple[int, int]]:
    url = f"{session.url}/screenshot"
    value = get_value(session, "screenshot", timeout)
    if not isinstance(value, str):
        raise CaptureError(f"GET {url}: expected the screenshot as a Base64 string in \"value\", found {_kind(value)}")
    try:  # some servers wrap their Base64 in lines; the standard's has none
        png = base64.b64decode("".join(value.split()), validate=True)
    except (binascii.Error, ValueError):
        raise CaptureError(f"GET {url}: the screenshot in \"value\" is not Base64") from None
    size = png_size(png)
    if size is None:
        raise CaptureError(f"GET {url}: the screenshot is not a PNG")
    return png, size


def _rect(session: Session, timeout: float) -> Rect:
    url = f"{session.url}/window/rect"
    value = get_value(session, "window/rect", timeout)
    fields = [value.get(k) if isinstance(value, dict) else None for k in ("x", "y", "width", "height")]
    if not all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in fields) \
            or fields[2] <= 0 or fields[3] <= 0:
        raise CaptureError(f"GET {url}: expected \"value\" to be a window rect, an object with numbers x, y, "
                           f"width and height (width and height above 0); found {json_preview(value)}")
    return Rect(*(float(v) for v in fields))


def _kind(value: Any) -> str:
    return "null" if value is None else type(value).__name__


def json_preview(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 120 else text[:117] + "..."


def ios_scale(rect: Rect, png: tuple[int, int], tree_width: float | None) -> tuple[float | None, str]:
    """Pixels per point from the screenshot and the window rect (assumed in points), and why, or why not.

    A screenshot turned a quarter from the rect fits too. A width within SCALE_SLACK_PX of a
    scale iOS uses is taken as that scale; the height may be off by up to one point's pixels
    (common practice: rounding at the edges).
    """
    if tree_width is not None and abs(tree_width - rect.width) > 0.5 and abs(tree_width - rect.height) > 0.5:
        return None, (f"the window rect is {rect.width:g} wide but the element tree's application {tree_width:g} pt, "
                      "so the rect is not in points")
    w, h = png
    for across, down in ((rect.width, rect.height), (rect.height, rect.width)):
        k = w / across
        if abs(h - k * down) <= max(k, SCALE_SLACK_PX):
            known = [s for s in platform_units()["ios"].scales if abs(w - s * across) <= SCALE_SLACK_PX]
            scale = known[0] if known else float(f"{k:.4g}")
            try:
                parse_scale(f"{scale:g}")  # the range check a sidecar's 'scale:' line gets
            except ValueError as exc:
                return None, str(exc)
            return scale, f"screenshot {w} px wide / window {across:g} pt"
    return None, (f"the screenshot ({w} x {h} px) is not the window ({rect.width:g} x {rect.height:g}) "
                  "times one scale")


def ios_sidecar(session: Session, rect: Rect, png: tuple[int, int], scale: float, why: str) -> str:
    """A sidecar `check` reads: one 'scale:' line, and comments saying where it came from."""
    return "\n".join([
        "# Captured by tapgauge from a W3C WebDriver session",
        f"# session: {session.url}",
        "# page source: iOS element tree, in points",
        f"# Get Window Rect: {rect.width:g} x {rect.height:g} at ({rect.x:g}, {rect.y:g}), taken as points",
        f"# Take Screenshot: {png[0]} x {png[1]} px",
        f"scale: {scale:g}  # {why}",
        "# iOS reports no physical pixels per inch: add a 'ppi:' line (the model's published figure) for mm",
    ]) + "\n"


def capture_session(name: str, out: Path, session_url: str, *, force: bool = False,
                    timeout: float = DEFAULT_TIMEOUT_S) -> Captured:
    """Read the session's page source, screenshot and window rect, and write the bundle."""
    session = parse_session_url(session_url)
    if not (math.isfinite(timeout) and timeout > 0):
        raise CaptureError(f"--timeout {timeout:g}: expected seconds above 0, such as {DEFAULT_TIMEOUT_S:g}")
    xml_path, png_path, side_path = bundle_paths(name, out, force)  # before any request: nothing to undo
    source = get_value(session, "source", timeout)
    if not isinstance(source, str) or not source.strip():
        raise CaptureError(f"GET {session.url}/source: expected the page source as a string in \"value\", "
                           f"found {_kind(source) if not isinstance(source, str) else 'an empty string'}")
    xml = source.encode("utf-8")
    platform, tree_width = _platform(session, xml, name)
    png, size = _screenshot(session, timeout)  # right after the source, so both show one moment
    rect = _rect(session, timeout)
    sidecar, notes = None, []
    if platform == "ios":
        scale, why = ios_scale(rect, size, tree_width)
        if scale is not None:
            sidecar = ios_sidecar(session, rect, size, scale, why)
            notes.append(f"scale {scale:g} ({why}); iOS reports no ppi: add 'ppi: N' to {side_path} for sizes in mm")
        else:
            notes.append(f"no scale recorded: {why}; check takes it from the screenshot's width where that is a "
                         f"whole number of pixels per point, or give --scale")
    else:
        notes.append(f"the screen density is not known: WebDriver does not report it, and tapgauge does not guess. "
                     f"Give it when checking: tapgauge check {xml_path} --density DPI (`adb shell wm density` "
                     f"prints it), or write 'density: DPI' in {side_path}")
    out.mkdir(parents=True, exist_ok=True)
    written = [xml_path, png_path]
    write_atomic(xml_path, xml)
    write_atomic(png_path, png)
    if sidecar is not None:
        write_atomic(side_path, sidecar)
        written.append(side_path)
    elif side_path.exists():  # only with --force: what it says still applies, so say so
        notes.append(f"kept the existing {side_path}: what it says applies to this screen; delete it if it came "
                     "from another device")
    needs_density = platform == "android" and not side_path.exists()
    return Captured(tuple(written), platform, tuple(notes), " --density DPI" if needs_density else "")
