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
    kids: list[N] = field(default_factory=list)


def _px(v: float) -> int:
    return round(v * PX)


def _write(node: N, index: int, depth: int, out: list[str]) -> None:
    l, t, r, b = (_px(v) for v in node.box)
    attrs = {
        "index": str(index), "text": node.text, "resource-id": f"{PACKAGE}:id/{node.rid}" if node.rid else "",
        "class": node.cls, "package": PACKAGE, "content-desc": node.desc,
        "checkable": str(node.check).lower(), "checked": str(node.checked).lower(),
        "clickable": str(node.click).lower(), "enabled": str(node.enabled).lower(),
        "focusable": str(node.click or node.check).lower(), "focused": "false",
        "scrollable": str(node.scroll).lower(), "long-clickable": str(node.long).lower(),
        "password": "false", "selected": "false", "visible-to-user": str(node.visible).lower(),
        "bounds": f"[{l},{t}][{r},{b}]",
    }
    text = " ".join(f"{k}={quoteattr(v)}" for k, v in attrs.items())
    pad = "  " * depth
    if not node.kids:
        out.append(f"{pad}<node {text} />")
        return
    out.append(f"{pad}<node {text}>")
    for k, kid in enumerate(node.kids):
        _write(kid, k, depth + 1, out)
    out.append(f"{pad}</node>")


def dump(content: list[N], rotation: int = 0, size: tuple[float, float] = SCREEN_DP) -> str:
    w, h = size
    root = N("android.widget.FrameLayout", (0, 0, w, h), kids=[
        N("android.widget.LinearLayout", (0, 0, w, h), rid="root", kids=content),
    ])
    out = ["<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>", f'<hierarchy rotation="{rotation}">']
    _write(root, 0, 1, out)
    out.append("</hierarchy>")
    return "\n".join(out) + "\n"


def toolbar(title: str, w: float = SCREEN_DP[0]) -> N:
    return N("android.view.ViewGroup", (0, 24, w, 80), rid="toolbar", kids=[
        N("android.widget.ImageButton", (4, 28, 52, 76), desc="Back", click=True, rid="back"),
        N("android.widget.TextView", (68, 36, 300, 68), text=title),
    ])


def plots() -> str:
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


def plot_detail() -> str:
    """Icon row with the WCAG spacing exception, an icon jammed against a button, a disabled button."""
    w = SCREEN_DP[0]
    icons = []
    # Four 20 x 20 dp icons, 4 dp apart: undersized, but their 24 dp circles only touch (WCAG passes).
    for k, label in enumerate(["Share plot", "Print map", "Report a problem", "Add to calendar"]):
        left = 16 + k * 24
        icons.append(N("android.widget.ImageButton", (left, 360, left + 20, 380), desc=label, click=True, rid=f"tool_{k}"))
    return dump([
        toolbar("Plot B7"),
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


def booking_form() -> str:
    """A date chip partly covered by a badge drawn over it: the overlap leaves too little."""
    w = SCREEN_DP[0]
    return dump([
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
        N("android.widget.Button", (16, 760, 376, 816), text="Confirm booking", click=True, rid="confirm"),
    ])


def settings_landscape() -> str:
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


def main() -> None:
    out = HERE / "android"
    out.mkdir(exist_ok=True)
    files = {
        "plots.xml": plots(),
        "plot_detail.xml": plot_detail(),
        "booking_form.xml": booking_form(),
        "settings_landscape.xml": settings_landscape(),
        "device.txt": DEVICE_TXT,
    }
    for name, text in files.items():
        (out / name).write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()
