"""Generate the demo screens of an invented app, "Fernwick Allotments".

A community-garden app where members browse plots, book one, and set reminders.
Every name, package and layout here is invented for the demo. The dumps follow the
`adb shell uiautomator dump` format; the device sidecar holds invented `adb shell`
outputs for a 440 dpi phone. Run from anywhere: `python screens_demo/make_demo.py`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from xml.sax.saxutils import quoteattr

from PIL import Image, ImageDraw, ImageFont

HERE = Path(__file__).resolve().parent
PACKAGE = "org.fernwick.allotments"
DENSITY = 440  # px per dp = 440 / 160 = 2.75
PX = DENSITY / 160
SCREEN_DP = (392.73, 850.91)  # 1080 x 2340 px


@dataclass
class N:
    cls: str
    box: tuple[float, float, float, float]  # dp: left, top, right, bottom
    text: str = ""
    rid: str = ""
    desc: str = ""
    click: bool = False
    check: bool = False
    checked: bool = False
    long: bool = False
    enabled: bool = True
    scroll: bool = False
    visible: bool = True
    focusable: bool | None = None  # None: focusable when clickable or checkable, as views usually are
    pkg: str = PACKAGE
    kids: list[N] = field(default_factory=list)


def _px(v: float) -> int:
    return round(v * PX)


def _write(node: N, index: int, depth: int, out: list[str], modern: bool = False) -> None:
    l, t, r, b = (_px(v) for v in node.box)
    attrs = {
        "index": str(index), "text": node.text, "resource-id": f"{PACKAGE}:id/{node.rid}" if node.rid else "",
        "class": node.cls, "package": node.pkg, "content-desc": node.desc,
        "checkable": str(node.check).lower(), "checked": str(node.checked).lower(),
        "clickable": str(node.click).lower(), "enabled": str(node.enabled).lower(),
        "focusable": str(node.click or node.check if node.focusable is None else node.focusable).lower(),
        "focused": "false",
        "scrollable": str(node.scroll).lower(), "long-clickable": str(node.long).lower(),
        "password": "false", "selected": "false", "visible-to-user": str(node.visible).lower(),
        "bounds": f"[{l},{t}][{r},{b}]",
    }
    if modern:  # newer dumpers also write the order in which the parent draws its children
        attrs["drawing-order"] = str(index + 1)
    text = " ".join(f"{k}={quoteattr(v)}" for k, v in attrs.items())
    pad = "  " * depth
    if not node.kids:
        out.append(f"{pad}<node {text} />")
        return
    out.append(f"{pad}<node {text}>")
    for k, kid in enumerate(node.kids):
        _write(kid, k, depth + 1, out, modern)
    out.append(f"{pad}</node>")


@dataclass
class AndroidScreen:
    root: N
    rotation: int
    size: tuple[float, float]  # dp
    modern: bool = False  # written by a newer dumper, with drawing-order

    def xml(self) -> str:
        out = ["<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>", f'<hierarchy rotation="{self.rotation}">']
        _write(self.root, 0, 1, out, self.modern)
        out.append("</hierarchy>")
        return "\n".join(out) + "\n"

    def png(self) -> Image.Image:
        w, h = self.size
        img = Image.new("RGB", (_px(w), _px(h)), PAPER)
        draw = ImageDraw.Draw(img)
        _paint(draw, self.root)
        return img


def dump(content: list[N], rotation: int = 0, size: tuple[float, float] = SCREEN_DP) -> AndroidScreen:
    w, h = size
    root = N("android.widget.FrameLayout", (0, 0, w, h), kids=[
        N("android.widget.LinearLayout", (0, 0, w, h), rid="root", kids=content),
    ])
    return AndroidScreen(root, rotation, size)


# ---------------------------------------------------------------- pictures
PAPER = (252, 251, 247)
INK = (34, 40, 36)
LEAF = (58, 110, 78)
SOIL = (120, 96, 70)
MIST = (228, 234, 228)


def font(px: float) -> ImageFont.FreeTypeFont | ImageFont.ImageFont:
    return ImageFont.load_default(size=max(8, round(px)))


def _paint(draw: ImageDraw.ImageDraw, node: N) -> None:
    """A plain rendering of a node tree, so overlays have a screenshot to sit on."""
    if not node.visible:
        return
    l, t, r, b = (_px(v) for v in node.box)
    cls = node.cls.rsplit(".", 1)[-1]
    label = node.text or node.desc
    big = (r - l) > _px(100)
    if node.rid == "toolbar":
        draw.rectangle([l, t, r, b], fill=LEAF)
    elif node.rid == "photo":
        draw.rectangle([l, t, r, b], fill=(196, 214, 180))
        draw.polygon([(l, b), (l + (r - l) // 3, t + (b - t) // 2), (l + (r - l) // 2, b)], fill=(150, 180, 130))
    elif cls == "Button":
        draw.rounded_rectangle([l, t, r, b], radius=_px(6), fill=LEAF if node.enabled else (190, 196, 190))
        if label and big:
            draw.text(((l + r) / 2, (t + b) / 2), label, fill=PAPER, font=font(_px(15)), anchor="mm")
        elif label:
            draw.text(((l + r) / 2, (t + b) / 2), label, fill=PAPER, font=font((b - t) * 0.45), anchor="mm")
    elif cls in ("ImageButton", "ImageView", "FloatingActionButton"):
        fill = SOIL if cls == "FloatingActionButton" else (90, 100, 92)
        if node.rid == "star":
            draw.regular_polygon(((l + r) / 2, (t + b) / 2, (r - l) / 2), 5, fill=(222, 170, 40))
        elif node.rid in ("back", "search") or node.rid.startswith("tool") or node.rid in ("help", "clear_name", "day_14_remove"):
            draw.ellipse([l + (r - l) * 0.15, t + (b - t) * 0.15, r - (r - l) * 0.15, b - (b - t) * 0.15], outline=fill,
                         width=max(2, (r - l) // 10))
        else:
            draw.ellipse([l, t, r, b], fill=fill)
    elif cls == "EditText":
        draw.rectangle([l, t, r, b], fill=MIST)
        draw.line([l, b - 3, r, b - 3], fill=LEAF, width=3)
        draw.text((l + _px(12), (t + b) / 2), label, fill=INK, font=font(_px(15)), anchor="lm")
    elif cls == "CheckBox":
        side = b - t
        draw.rectangle([l, t, l + side, b], outline=LEAF, width=3)
        draw.text((l + side + _px(8), (t + b) / 2), label, fill=INK, font=font(_px(14)), anchor="lm")
    elif cls == "Switch":
        draw.text((l + _px(8), (t + b) / 2), label, fill=INK, font=font(_px(16)), anchor="lm")
        draw.rounded_rectangle([r - _px(52), t + _px(16), r - _px(8), b - _px(16)], radius=_px(12),
                               fill=LEAF if node.checked else (200, 200, 196))
    elif cls == "Chip":
        draw.rounded_rectangle([l, t, r, b], radius=(b - t) // 2, outline=LEAF, width=3, fill=MIST)
        draw.text(((l + r) / 2, (t + b) / 2), label, fill=INK, font=font(_px(13)), anchor="mm")
    elif cls == "TextView" and label:
        draw.text((l, (t + b) / 2), label, fill=PAPER if t < _px(80) else INK, font=font(min(_px(18), (b - t) * 0.7)),
                  anchor="lm")
    elif cls == "LinearLayout" and node.click:
        draw.line([l, b - 1, r, b - 1], fill=(210, 214, 208), width=2)
    for kid in node.kids:
        _paint(draw, kid)


def toolbar(title: str, w: float = SCREEN_DP[0], back_rid: str = "back", back_desc: str = "Back") -> N:
    return N("android.view.ViewGroup", (0, 24, w, 80), rid="toolbar", kids=[
        N("android.widget.ImageButton", (4, 28, 52, 76), desc=back_desc, click=True, rid=back_rid),
        N("android.widget.TextView", (68, 36, 300, 68), text=title),
    ])


def plots() -> AndroidScreen:
    """A list of plots: comfortable rows, a small star in each, a row cut off by the list's edge."""
    w = SCREEN_DP[0]
    rows = []
    for k, (name, top) in enumerate([("Plot A3, sunny corner", 136), ("Plot B7, by the shed", 208),
                                      ("Plot C1, raised beds", 280), ("Plot C4, near the tap", 352)]):
        rows.append(N("android.widget.LinearLayout", (0, top, w, top + 72), rid="plot_row", click=True, kids=[
            N("android.widget.TextView", (16, top + 12, 300, top + 60), text=name),
            # 24 x 24 dp star: meets WCAG AA exactly, short of Android's 48 dp.
            N("android.widget.ImageView", (344, top + 24, 368, top + 48), rid="star", desc=f"Star {name}", click=True),
        ]))
    # The last row is scrolled half out of view: 18 dp of it show above the list's bottom edge.
    rows.append(N("android.widget.LinearLayout", (0, 424, w, 442), rid="plot_row", click=True, kids=[
        N("android.widget.TextView", (16, 424, 300, 442), text="Plot D2, wildflower strip"),
    ]))
    return dump([
        toolbar("Plots"),
        N("android.widget.ImageButton", (336, 28, 384, 76), desc="Search plots", click=True, rid="search"),
        N("android.widget.TextView", (16, 88, 300, 128), text="12 plots free this season"),
        N("androidx.recyclerview.widget.RecyclerView", (0, 136, w, 442), rid="plot_list", scroll=True, kids=rows),
        N("com.google.android.material.floatingactionbutton.FloatingActionButton", (320, 760, 376, 816),
          desc="Add plot request", rid="fab", click=True),
    ])


def plot_detail(release: int = 0) -> AndroidScreen:
    """Icon row with the WCAG spacing exception, an icon jammed against a button, a disabled button.

    release 1 and 2 are two versions for the release gate: the back button has no id (so its
    label identifies it); version 2 drops that label and adds an undersized favourite icon.
    """
    w = SCREEN_DP[0]
    icons = []
    # Four 20 x 20 dp icons, 4 dp apart: undersized, but their 24 dp circles only touch (WCAG passes).
    for k, label in enumerate(["Share plot", "Print map", "Report a problem", "Add to calendar"]):
        left = 16 + k * 24
        icons.append(N("android.widget.ImageButton", (left, 360, left + 20, 380), desc=label, click=True, rid=f"tool_{k}"))
    if release == 2:  # a new 18 dp icon 2 dp after the row: its circle hits its neighbour's
        icons.append(N("android.widget.ImageButton", (110, 361, 128, 379), desc="Favourite", click=True, rid="favourite"))
    bar = toolbar("Plot B7") if not release else toolbar("Plot B7", back_rid="", back_desc="Back" if release == 1 else "")
    return dump([
        bar,
        N("android.widget.ImageView", (0, 80, w, 320), rid="photo"),
        N("android.widget.TextView", (16, 328, 376, 352), text="Plot B7, by the shed: 25 square metres"),
        *icons,
        # A 16 x 16 dp help icon touching the big button: too small, and its circle hits the button.
        N("android.widget.ImageButton", (16, 400, 32, 416), desc="What does booking include?", click=True, rid="help"),
        N("android.widget.Button", (32, 400, 376, 456), text="Book this plot", click=True, rid="book"),
        N("android.widget.Button", (16, 472, 376, 520), text="Cancel booking", click=True, enabled=False, rid="cancel"),
        # A tooltip target that the dump reports as not visible to the user.
        N("android.widget.Button", (16, 536, 120, 560), text="Got it", click=True, visible=False, rid="tip_dismiss"),
        # Two tag chips 28 dp tall with 2 dp between them: fine for WCAG, too close for Android.
        N("com.google.android.material.chip.Chip", (16, 580, 120, 608), text="Sunny", click=True, check=True, rid="chip_sun"),
        N("com.google.android.material.chip.Chip", (122, 580, 226, 608), text="Water tap", click=True, check=True, rid="chip_tap"),
    ])


def plot_detail_roomy() -> AndroidScreen:
    """The redesign of plot_detail proposed by the committee: the same controls, roomier."""
    w = SCREEN_DP[0]
    icons = [N("android.widget.ImageButton", (16 + k * 56, 352, 16 + k * 56 + 48, 400), desc=label, click=True,
               rid=f"tool_{k}")
             for k, label in enumerate(["Share plot", "Print map", "Report a problem", "Add to calendar"])]
    return dump([
        toolbar("Plot B7"),
        N("android.widget.ImageView", (0, 80, w, 300), rid="photo"),
        N("android.widget.TextView", (16, 312, 376, 336), text="Plot B7, by the shed: 25 square metres"),
        *icons,
        N("android.widget.ImageButton", (16, 416, 64, 464), desc="What does booking include?", click=True, rid="help"),
        N("android.widget.Button", (72, 416, 376, 472), text="Book this plot", click=True, rid="book"),
        N("android.widget.Button", (16, 488, 376, 536), text="Cancel booking", click=True, enabled=False, rid="cancel"),
        N("com.google.android.material.chip.Chip", (16, 560, 136, 608), text="Sunny", click=True, check=True, rid="chip_sun"),
        N("com.google.android.material.chip.Chip", (144, 560, 264, 608), text="Water tap", click=True, check=True, rid="chip_tap"),
    ])


def booking_form(release: int = 0) -> AndroidScreen:
    """A date chip partly covered by a badge drawn over it: the overlap leaves too little.

    In release 2 the confirm button shrinks from 56 to 40 dp tall.
    """
    confirm_top = 776 if release == 2 else 760
    screen = dump([
        toolbar("Book plot B7"),
        N("android.widget.EditText", (16, 96, 376, 152), text="Member name", click=True, long=True, rid="name"),
        # The clear button sits inside the field, drawn over it; the field keeps plenty of room.
        N("android.widget.ImageButton", (328, 100, 376, 148), desc="Clear name", click=True, rid="clear_name"),
        N("android.widget.TextView", (16, 168, 376, 192), text="Start date"),
        # 32 x 32 dp date chip; a 20 x 20 dp badge overlaps its top-right corner by 12 x 12 dp.
        N("android.widget.Button", (16, 200, 48, 232), text="14", click=True, rid="day_14"),
        N("android.widget.ImageButton", (36, 192, 56, 212), desc="Remove date", click=True, rid="day_14_remove"),
        N("android.widget.Button", (96, 200, 144, 248), text="15", click=True, rid="day_15"),
        N("android.widget.CheckBox", (16, 272, 376, 290), text="I have read the plot rules", check=True, click=True, rid="rules_ok"),
        N("android.widget.Button", (16, confirm_top, 376, 816), text="Confirm booking", click=True, rid="confirm"),
    ])
    # Dumped by a newer dumper: drawing-order says the badge is drawn over the chip, so the overlap is known.
    return AndroidScreen(screen.root, screen.rotation, screen.size, modern=True)


KEYBOARD_PACKAGE = "net.quillkeys.inputmethod"  # an invented keyboard app
SYSTEM_PACKAGE = "com.android.systemui"  # the platform's status and navigation bars (AOSP)
ADB_TRAILER = "UI hierchary dumped to: /dev/tty"  # what adb prints after a dump sent to /dev/tty (its spelling)


@dataclass
class MultiWindowScreen:
    """A dump of several windows, as the stock dumper writes them: each window's root straight
    under <hierarchy>, in no set order (the dumper collects them in a hash set)."""

    windows: list[N]  # in the order the file lists them
    size: tuple[float, float] = SCREEN_DP
    trailer: str = ""  # text the capture left after the XML

    def xml(self) -> str:
        out = ["<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>", '<hierarchy rotation="0">']
        for root in self.windows:
            _write(root, 0, 1, out)
        out.append("</hierarchy>" + self.trailer)
        return "\n".join(out) + "\n"

    def png(self) -> Image.Image:
        w, h = self.size
        img = Image.new("RGB", (_px(w), _px(h)), PAPER)
        draw = ImageDraw.Draw(img)
        app, *others = sorted(self.windows, key=lambda n: n.pkg != PACKAGE)  # the app first, the rest over it
        for root in (app, *others):
            if root.pkg != PACKAGE:
                l, t, r, b = (_px(v) for v in root.box)
                draw.rectangle([l, t, r, b], fill=(40, 44, 42) if root.pkg == SYSTEM_PACKAGE else (214, 218, 214))
            _paint(draw, root)
        return img


def plot_map() -> MultiWindowScreen:
    """The plot map while a member types a search, as the adb one-liner captured it.

    Three windows: the app, the on-screen keyboard of an invented keyboard app, the system bars.
    The map is a clickable surface that the file lists after the zoom buttons; this dump has no
    drawing-order, so which is on top is presumed (the buttons, inside it), not known. The tab
    bar is clickable but wholly covered by its own tabs. The "Show key" link is written as
    focusable but not clickable, as some cross-platform frameworks write their controls.
    """
    w, h = SCREEN_DP
    tabs = [N("android.widget.FrameLayout", (k * w / 3, 794, (k + 1) * w / 3, 850.91), desc=label, click=True,
              rid=f"tab_{k}") for k, label in enumerate(["Plots", "Map", "Bookings"])]
    app = N("android.widget.FrameLayout", (0, 0, w, h), kids=[
        N("android.widget.FrameLayout", (0, 24, w, 794), rid="map_frame", kids=[
            N("android.widget.EditText", (16, 32, 376, 80), text="Search plots", click=True, long=True, rid="map_search"),
            N("android.widget.ImageButton", (336, 320, 376, 360), desc="Zoom in", click=True, rid="zoom_in"),
            N("android.widget.ImageButton", (336, 368, 376, 408), desc="Zoom out", click=True, rid="zoom_out"),
            N("android.widget.TextView", (16, 300, 120, 318), text="Show key", rid="map_key", focusable=True),
            # Under the keyboard while it is open: hidden, so not checked.
            N("android.widget.Button", (16, 700, 376, 756), text="Book the plot you picked", click=True, rid="map_book"),
            N("android.view.View", (0, 24, w, 794), desc="Plot map", click=True, rid="map"),
        ]),
        N("android.widget.LinearLayout", (0, 794, w, 850.91), rid="tab_bar", click=True, kids=tabs),
    ])
    keys = [N("android.widget.FrameLayout", (k * w / 10, 560, (k + 1) * w / 10, 616), desc=c, click=True, pkg=KEYBOARD_PACKAGE)
            for k, c in enumerate("qwertyuiop")]
    keyboard = N("android.widget.FrameLayout", (0, 520, w, 794), pkg=KEYBOARD_PACKAGE, kids=keys)
    bars = N("android.widget.FrameLayout", (0, 0, w, 24), pkg=SYSTEM_PACKAGE, kids=[
        N("android.widget.ImageView", (340, 0, 364, 24), desc="Battery", click=True, pkg=SYSTEM_PACKAGE)])
    return MultiWindowScreen([keyboard, app, bars], trailer=ADB_TRAILER)


def settings_landscape() -> AndroidScreen:
    """Reminder settings in landscape (rotation 1): every target comfortable."""
    w, h = SCREEN_DP[1], SCREEN_DP[0]
    rows = []
    for k, label in enumerate(["Watering reminders", "Harvest reminders", "Work-party invites"]):
        top = 96 + k * 64
        rows.append(N("android.widget.Switch", (24, top, w - 24, top + 56), text=label, click=True, check=True,
                      checked=k == 0, rid=f"switch_{k}"))
    return dump([toolbar("Reminders", w), *rows], rotation=1, size=(w, h))


DEVICE_TXT = """$ adb shell wm density
Physical density: 440
$ adb shell wm size
Physical size: 1080x2340
$ adb shell dumpsys display | grep -m1 DisplayDeviceInfo
  mDisplayDeviceInfo=DisplayDeviceInfo{"Built-in Screen": uniqueId="local:0", 1080 x 2340, modeId 1, defaultModeId 1, density 440, 409.432 x 411.891 dpi, appVsyncOffset 0, type INTERNAL}
"""


def write_android(out: Path) -> None:
    out.mkdir(exist_ok=True)
    screens = {"plots": plots(), "plot_detail": plot_detail(), "booking_form": booking_form(),
               "settings_landscape": settings_landscape(), "plot_map": plot_map()}
    for name, screen in screens.items():  # type: ignore[assignment]
        (out / f"{name}.xml").write_text(screen.xml(), encoding="utf-8")
        screen.png().save(out / f"{name}.png", optimize=True)
    (out / "device.txt").write_text(DEVICE_TXT, encoding="utf-8")


def write_alternatives(out: Path) -> None:
    """Two designs of one screen, for `tapgauge compare`."""
    for name, screen in (("compact", plot_detail()), ("roomy", plot_detail_roomy())):
        folder = out / name
        folder.mkdir(parents=True, exist_ok=True)
        (folder / "plot_detail.xml").write_text(screen.xml(), encoding="utf-8")
        screen.png().save(folder / "plot_detail.png", optimize=True)
        (folder / "device.txt").write_text(DEVICE_TXT, encoding="utf-8")


def write_releases(out: Path) -> None:
    """Two versions of the app, for `tapgauge baseline` and `tapgauge gate`."""
    for release in (1, 2):
        folder = out / f"v{release}"
        folder.mkdir(parents=True, exist_ok=True)
        for name, screen in (("plot_detail", plot_detail(release)), ("booking_form", booking_form(release))):
            (folder / f"{name}.xml").write_text(screen.xml(), encoding="utf-8")
            screen.png().save(folder / f"{name}.png", optimize=True)
        (folder / "device.txt").write_text(DEVICE_TXT, encoding="utf-8")


def main() -> None:
    from demo_other import write_annotated, write_ios, write_marked  # the other input kinds

    write_android(HERE / "android")
    write_alternatives(HERE / "alternatives")
    write_releases(HERE / "releases")
    write_ios(HERE / "ios")
    write_annotated(HERE / "annotated")
    write_marked(HERE / "marked")


if __name__ == "__main__":
    main()
