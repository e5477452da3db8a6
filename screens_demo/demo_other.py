"""Demo screens of the invented "Fernwick Allotments" app in the other input kinds.

- ios/: an iOS element tree in points with its 3x screenshot and a sidecar giving the ppi;
- annotated/: screenshots with boxes in Pascal VOC and in our CSV, as a QA tester
  would label them in an annotation tool;
- marked/: a screenshot on which a tester drew magenta rectangles around controls.
Run through make_demo.py. All names, sizes and devices are invented.
"""

from __future__ import annotations

from pathlib import Path
from xml.sax.saxutils import quoteattr

from PIL import Image, ImageDraw

from make_demo import INK, LEAF, MIST, PAPER, font  # one palette for the whole demo app

MARKER = (255, 0, 255)


# ---------------------------------------------------------------- iOS

IOS_SIZE = (390, 844)  # points
IOS_SCALE = 3
# (type, x, y, w, h, label, identifier, enabled)
IOS_ELEMENTS = [
    ("NavigationBar", 0, 47, 390, 44, "Seed tray", "", True),
    ("Button", 8, 47, 44, 44, "Back", "back", True),
    ("StaticText", 60, 57, 270, 24, "Seed tray", "", True),
    ("Cell", 0, 100, 390, 60, "Tomato, Red Robin", "tray_tomato", True),
    ("Cell", 0, 160, 390, 60, "Basil, Genovese", "tray_basil", True),
    ("Cell", 0, 220, 390, 60, "Chilli, Apache", "tray_chilli", True),
    ("StaticText", 16, 300, 200, 22, "Seeds per cell", "", True),
    # Two 22 pt stepper buttons 1 pt apart: under 24, centres 23 pt apart, circles overlap (WCAG fails).
    ("Button", 300, 300, 22, 22, "Fewer seeds", "seeds_minus", True),
    ("Button", 323, 300, 22, 22, "More seeds", "seeds_plus", True),
    # A 51 x 31 pt switch: fine for WCAG, short of Apple's 44 pt.
    ("StaticText", 16, 350, 200, 31, "Heat mat", "", True),
    ("Switch", 323, 350, 51, 31, "Heat mat", "heat_mat", True),
    # A text link 17 pt tall, far from anything else: under 24 but passes by spacing.
    ("Link", 16, 420, 150, 17, "How deep to sow?", "sow_depth", True),
    ("Button", 16, 700, 358, 50, "Sow now", "sow", False),
    ("TabBar", 0, 795, 390, 49, "", "", True),
    ("Button", 0, 795, 97.5, 49, "Trays", "tab_trays", True),
    ("Button", 97.5, 795, 97.5, 49, "Plots", "tab_plots", True),
    ("Button", 195, 795, 97.5, 49, "Diary", "tab_diary", True),
    ("Button", 292.5, 795, 97.5, 49, "Me", "tab_me", True),
]


def _ios_xml() -> str:
    w, h = IOS_SIZE
    lines = ['<?xml version="1.0" encoding="UTF-8"?>', "<AppiumAUT>",
             f'  <XCUIElementTypeApplication type="XCUIElementTypeApplication" name="Fernwick" label="Fernwick" '
             f'enabled="true" visible="true" accessible="false" x="0" y="0" width="{w}" height="{h}" index="0">',
             f'    <XCUIElementTypeWindow type="XCUIElementTypeWindow" enabled="true" visible="true" accessible="false" '
             f'x="0" y="0" width="{w}" height="{h}" index="0">']
    for k, (kind, x, y, ew, eh, label, ident, enabled) in enumerate(IOS_ELEMENTS):
        attrs = {"type": f"XCUIElementType{kind}"}
        if ident:
            attrs["name"] = ident
        if label:
            attrs["label"] = label
        attrs.update({"enabled": str(enabled).lower(), "visible": "true", "accessible": "true",
                      "x": f"{x:g}", "y": f"{y:g}", "width": f"{ew:g}", "height": f"{eh:g}", "index": str(k)})
        text = " ".join(f"{key}={quoteattr(v)}" for key, v in attrs.items())
        lines.append(f"      <XCUIElementType{kind} {text}/>")
    lines += ["    </XCUIElementTypeWindow>", "  </XCUIElementTypeApplication>", "</AppiumAUT>"]
    return "\n".join(lines) + "\n"


def _ios_png() -> Image.Image:
    k = IOS_SCALE
    img = Image.new("RGB", (IOS_SIZE[0] * k, IOS_SIZE[1] * k), PAPER)
    d = ImageDraw.Draw(img)
    for kind, x, y, w, h, label, ident, enabled in IOS_ELEMENTS:
        box = [x * k, y * k, (x + w) * k - 1, (y + h) * k - 1]
        mid = ((x + w / 2) * k, (y + h / 2) * k)
        if kind in ("NavigationBar", "TabBar"):
            d.rectangle(box, fill=MIST)
        elif kind == "Cell":
            d.line([box[0] + 16 * k, box[3], box[2], box[3]], fill=(210, 214, 208), width=k)
            d.text((box[0] + 16 * k, mid[1]), label, fill=INK, font=font(17 * k), anchor="lm")
        elif kind == "StaticText":
            d.text((box[0], mid[1]), label, fill=INK, font=font(17 * k), anchor="lm")
        elif kind == "Switch":
            d.rounded_rectangle(box, radius=h * k / 2, fill=LEAF)
            d.ellipse([box[2] - h * k + 4, box[1] + 4, box[2] - 4, box[3] - 4], fill=PAPER)
        elif kind == "Link":
            d.text((box[0], mid[1]), label, fill=(20, 90, 160), font=font(15 * k), anchor="lm")
        elif kind == "Button" and w < 30:
            d.ellipse(box, outline=LEAF, width=k)
            d.text(mid, "-" if "Fewer" in label else "+", fill=LEAF, font=font(16 * k), anchor="mm")
        elif kind == "Button":
            if ident.startswith("tab_") or ident == "back":
                d.text(mid, label, fill=LEAF, font=font(12 * k), anchor="mm")
            else:
                d.rounded_rectangle(box, radius=10 * k, fill=LEAF if enabled else (190, 196, 190))
                d.text(mid, label, fill=PAPER, font=font(17 * k), anchor="mm")
    return img


def write_ios(out: Path) -> None:
    out.mkdir(exist_ok=True)
    (out / "seed_tray.xml").write_text(_ios_xml(), encoding="utf-8")
    _ios_png().save(out / "seed_tray.png", optimize=True)
    # iOS reports no physical ppi; the tester looked up the (invented) model's: 460 ppi.
    (out / "device.txt").write_text("# an invented 3x phone; the scale comes from the screenshot's width\nppi: 460\n",
                                    encoding="utf-8")


# ---------------------------------------------------------------- annotated screenshots

SHOT = (1080, 2400)  # px, an invented 420 dpi phone
# (class, left, top, right, bottom, label) in pixels, right/bottom exclusive
HARVEST = [
    ("text", 48, 150, 700, 230, "Harvest log"),
    ("button", 48, 280, 1032, 420, "Add a harvest"),
    ("text", 48, 480, 700, 560, "Runner beans, 2.1 kg"),
    ("icon-button", 880, 490, 940, 550, "Edit"),      # 60 px = 22.9 dp at 420 dpi
    ("icon-button", 942, 490, 1002, 550, "Delete"),   # centres 62 px = 23.6 dp apart: circles overlap
    ("text", 48, 600, 700, 680, "Courgettes, 3.4 kg"),
    ("icon-button", 880, 610, 940, 670, "Edit"),
    ("icon-button", 990, 610, 1050, 670, "Delete"),  # 50 px apart: passes by spacing
    ("checkbox", 48, 760, 1032, 900, "Share with the plot committee"),
]
COMPOST = [
    ("button", 48, 300, 520, 440, "Previous week"),
    ("button", 560, 300, 1032, 440, "Next week"),
    ("listitem", 0, 520, 1080, 700, "Tuesday: turn bay 2"),
    ("listitem", 0, 700, 1080, 880, "Saturday: sieve bay 1"),
    ("switch", 860, 960, 1032, 1040, "Remind me"),
]


def _shot(items: list[tuple[str, int, int, int, int, str]], title: str) -> Image.Image:
    img = Image.new("RGB", SHOT, PAPER)
    d = ImageDraw.Draw(img)
    d.rectangle([0, 0, SHOT[0], 120], fill=LEAF)
    d.text((48, 60), title, fill=PAPER, font=font(48), anchor="lm")
    for cls, l, t, r, b, label in items:
        mid = ((l + r) / 2, (t + b) / 2)
        if cls == "text":
            d.text((l, mid[1]), label, fill=INK, font=font(44), anchor="lm")
        elif cls == "button":
            d.rounded_rectangle([l, t, r - 1, b - 1], radius=24, fill=LEAF)
            d.text(mid, label, fill=PAPER, font=font(44), anchor="mm")
        elif cls == "icon-button":
            d.ellipse([l + 8, t + 8, r - 9, b - 9], outline=LEAF, width=5)
        elif cls == "checkbox":
            d.rectangle([l, t + 35, l + 70, t + 105], outline=LEAF, width=6)
            d.text((l + 100, mid[1]), label, fill=INK, font=font(40), anchor="lm")
        elif cls == "listitem":
            d.line([l, b - 2, r, b - 2], fill=(210, 214, 208), width=3)
            d.text((l + 48, mid[1]), label, fill=INK, font=font(42), anchor="lm")
        elif cls == "switch":
            d.rounded_rectangle([l, t, r - 1, b - 1], radius=(b - t) // 2, fill=LEAF)
            d.ellipse([r - (b - t) + 6, t + 6, r - 7, b - 7], fill=PAPER)
    return img


def _voc(name: str, items: list[tuple[str, int, int, int, int, str]]) -> str:
    lines = ["<annotation>", f"  <filename>{name}.png</filename>",
             f"  <size><width>{SHOT[0]}</width><height>{SHOT[1]}</height><depth>3</depth></size>"]
    for cls, l, t, r, b, _ in items:
        # VOC pixel indices are 1-based and inclusive.
        lines.append(f"  <object><name>{cls}</name><bndbox><xmin>{l + 1}</xmin><ymin>{t + 1}</ymin>"
                     f"<xmax>{r}</xmax><ymax>{b}</ymax></bndbox></object>")
    return "\n".join(lines + ["</annotation>"]) + "\n"


def write_annotated(out: Path) -> None:
    out.mkdir(exist_ok=True)
    _shot(HARVEST, "Harvest log").save(out / "harvest_log.png", optimize=True)
    (out / "harvest_log.xml").write_text(_voc("harvest_log", HARVEST), encoding="utf-8")
    _shot(COMPOST, "Compost rota").save(out / "compost_rota.png", optimize=True)
    rows = ["image,left,top,right,bottom,class,label"]
    rows += [f"compost_rota.png,{l},{t},{r},{b},{cls},{label}" for cls, l, t, r, b, label in COMPOST]
    (out / "boxes.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (out / "device.txt").write_text("# the phone the screenshots came from (invented)\ndensity: 420\nppi: 403.4,399.7\n",
                                    encoding="utf-8")


# ---------------------------------------------------------------- marked screenshot

TOOLS = [  # controls on the screen, and whether the tester marked them
    ("button", 48, 1900, 1032, 2040, "Borrow 1 spade", True),
    ("icon-button", 700, 600, 764, 664, "-", True),    # 64 px = 24.4 dp: passes WCAG, short of 48 dp
    ("icon-button", 780, 600, 844, 664, "+", True),
    ("chip", 48, 760, 400, 850, "Back by Sunday", True),
    ("icon-button", 960, 30, 1020, 90, "?", True),     # 60 px = 22.9 dp, alone: passes by spacing
]


def write_marked(out: Path) -> None:
    out.mkdir(exist_ok=True)
    img = Image.new("RGB", SHOT, PAPER)
    d = ImageDraw.Draw(img)
    d.rectangle([0, 0, SHOT[0], 120], fill=LEAF)
    d.text((48, 60), "Tool shed", fill=PAPER, font=font(48), anchor="lm")
    d.text((48, 632), "Spades to borrow", fill=INK, font=font(44), anchor="lm")
    for cls, l, t, r, b, label, _ in TOOLS:
        mid = ((l + r) / 2, (t + b) / 2)
        if cls == "button":
            d.rounded_rectangle([l, t, r - 1, b - 1], radius=24, fill=LEAF)
            d.text(mid, label, fill=PAPER, font=font(44), anchor="mm")
        elif cls == "icon-button":
            d.ellipse([l + 6, t + 6, r - 7, b - 7], outline=LEAF if t > 120 else PAPER, width=5)
            d.text(mid, label, fill=LEAF if t > 120 else PAPER, font=font(40), anchor="mm")
        elif cls == "chip":
            d.rounded_rectangle([l, t, r - 1, b - 1], radius=45, outline=LEAF, width=4, fill=MIST)
            d.text(mid, label, fill=INK, font=font(38), anchor="mm")
    # The tester's marks: 5 px magenta outlines just outside each control.
    for _, l, t, r, b, _, marked in TOOLS:
        if marked:
            d.rectangle([l - 5, t - 5, r + 4, b + 4], outline=MARKER, width=5)
    img.save(out / "tool_shed.png", optimize=True)
    (out / "device.txt").write_text("# the phone the screenshot came from (invented)\ndensity: 420\n", encoding="utf-8")
