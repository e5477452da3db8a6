"""Screens as testers really capture them: layers, covered containers, several windows, keyboards,
off-screen cells, and controls written without the usual flags.

Every dump here is invented (a community-garden app, "Fernwick Allotments", and an invented
keyboard app) and written the way the platform writes it. Format facts:
- AOSP/androidx uiautomator `AccessibilityNodeInfoDumper` (published source): one `<node>`
  per view with string attributes; bounds `[l,t][r,b]` in screen pixels; every window's root
  node straight under `<hierarchy>`, collected by `UiDevice.getWindowRoots` in a hash set, so
  their order in the file says nothing of stacking; newer dumpers add `drawing-order`.
- Android `View.draw` (published AOSP source and View reference): a view draws its own
  content, then its children (`dispatchDraw`), so descendants are drawn over ancestors.
- The status and navigation bars belong to the platform's SystemUI package,
  `com.android.systemui` (published AOSP source). The input method window is stacked above
  application windows (WindowManager window types, from memory).
- WCAG 2.2, definition of "target" and Understanding SC 2.5.8: the part of a target
  covered by another target does not count toward its size.
At 160 dpi one dp is one pixel (Android developer docs, px = dp x dpi / 160), so sizes read directly.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tapgauge.cli import main

HEAD = "<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>"
APP = "org.fernwick.allotments"
KEYS = "net.quillkeys.inputmethod"  # an invented keyboard app
SYSTEM = "com.android.systemui"


def node(bounds: str, kids: str = "", pkg: str = APP, **attrs: str) -> str:
    """A node with the attribute set the stock dumper writes, in its order."""
    base = {"index": "0", "text": "", "resource-id": "", "class": "android.view.View", "package": pkg,
            "content-desc": "", "checkable": "false", "checked": "false", "clickable": "false", "enabled": "true",
            "focusable": "false", "focused": "false", "scrollable": "false", "long-clickable": "false",
            "password": "false", "selected": "false"}
    base.update({k.rstrip("_").replace("_", "-"): v for k, v in attrs.items()})
    a = " ".join(f'{k}="{v}"' for k, v in base.items())
    return f'<node {a} bounds="{bounds}">{kids}</node>' if kids else f'<node {a} bounds="{bounds}" />'


def dump(*roots: str) -> str:
    return "\n".join([HEAD, '<hierarchy rotation="0">', *roots, "</hierarchy>"])


def check(tmp_path: Path, body: str, capsys: pytest.CaptureFixture[str], *flags: str,
          name: str = "s.xml") -> tuple[int, dict]:
    (tmp_path / name).write_text(body, encoding="utf-8")
    (tmp_path / "device.txt").write_text("density: 160\n")
    code = main(["check", "--format", "json", *flags, str(tmp_path / name)])
    return code, json.loads(capsys.readouterr().out)


def by_name(report: dict) -> dict[str, dict]:
    return {t["name"]: t for s in report["screens"] for t in s["targets"]}


# ---------------------------------------------------------------- paint order

def _map_screen(order: tuple[str, str] | None = None) -> str:
    """Zoom buttons first in the file, a full-screen clickable map surface last (a common real layout)."""
    extra = {} if order is None else {"drawing_order": order[0]}
    over = {} if order is None else {"drawing_order": order[1]}
    zoom_in = node("[960,400][1040,480]", clickable="true", content_desc="Zoom in", **extra)
    zoom_out = node("[960,500][1040,580]", clickable="true", content_desc="Zoom out", **extra)
    surface = node("[0,0][1080,2000]", clickable="true", content_desc="Plot map", resource_id=f"{APP}:id/map",
                   **over)
    return dump(node("[0,0][1080,2000]", node("[0,0][1080,2000]", zoom_in + zoom_out + surface)))


def test_a_surface_later_in_the_file_is_presumed_beneath_the_controls_it_contains(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # No drawing-order: document order is weak evidence; a target wholly containing another
    # is presumed beneath it. The 80 dp zoom buttons keep their whole size.
    _, report = check(tmp_path, _map_screen(), capsys)
    t = by_name(report)
    assert t["Zoom in"]["status"] == "pass" and t["Zoom out"]["status"] == "pass"
    assert not t["Zoom in"]["findings"]
    assert t["Plot map"]["status"] == "pass"


def test_drawing_order_still_decides(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # With drawing-order saying the surface is drawn last (on top), the buttons are covered:
    # nothing of them is left (WCAG 2.2 "target": the covered part does not count).
    code, report = check(tmp_path, _map_screen(order=("1", "2")), capsys)
    t = by_name(report)
    assert code == 1
    assert t["Zoom in"]["status"] == "fail"
    wcag = [f for f in t["Zoom in"]["findings"] if f["rule"].startswith("wcag-2.5.8/")]
    assert wcag and wcag[0]["measured"] == 0 and "drawn over it" in wcag[0]["message"]


def _chip_and_badge(order: tuple[str, str] | None) -> str:
    chip_attrs = {} if order is None else {"drawing_order": order[0]}
    badge_attrs = {} if order is None else {"drawing_order": order[1]}
    # A 32 x 32 chip and a 20 x 20 badge overlapping its corner by 12 x 12: siblings, neither inside the other.
    chip = node("[100,100][132,132]", clickable="true", text="14", **chip_attrs)
    badge = node("[120,92][140,112]", clickable="true", content_desc="Remove date", **badge_attrs)
    return dump(node("[0,0][1080,2000]", chip + badge))


def test_a_partial_overlap_without_drawing_order_is_a_note_not_a_failure(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _, report = check(tmp_path, _chip_and_badge(None), capsys)
    chip = by_name(report)["14"]
    assert not [f for f in chip["findings"] if f["rule"] == "wcag-2.5.8/size-24"]
    # 32 x 32 minus a 12 x 12 corner leaves a 20 dp square (arithmetic): said, not failed.
    assert any("only 20 dp is left" in n and "no drawing-order" in n for n in chip["notes"])


def test_the_same_overlap_with_drawing_order_fails(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _, report = check(tmp_path, _chip_and_badge(("1", "2")), capsys)
    wcag = [f for f in by_name(report)["14"]["findings"] if f["rule"] == "wcag-2.5.8/size-24"]
    assert wcag and wcag[0]["measured"] == 20.0 and wcag[0]["severity"] == "error"


# ---------------------------------------------------------------- covered containers

def test_a_tab_bar_covered_by_its_own_tabs_is_not_a_target(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    tabs = "".join(node(f"[{k * 360},1900][{k * 360 + 360},2000]", clickable="true", text=label, index=str(k))
                   for k, label in enumerate(["Plots", "Bookings", "Profile"]))
    # A clickable wrapper row with room of its own beside its inner button stays a target.
    row = node("[0,300][1080,420]", node("[900,320][1060,400]", clickable="true", text="Book"),
               clickable="true", resource_id=f"{APP}:id/plot_row")
    body = dump(node("[0,0][1080,2000]", node("[0,1900][1080,2000]", tabs, clickable="true",
                                               resource_id=f"{APP}:id/tab_bar") + row))
    _, report = check(tmp_path, body, capsys)
    t = by_name(report)
    assert t["tab_bar"]["status"] == "unchecked"
    assert t["tab_bar"]["reason"].startswith("covered by its own targets (#2, #3, #4)")
    assert {t[n]["status"] for n in ("Plots", "Bookings", "Profile")} == {"pass"}
    assert t["plot_row"]["status"] == "pass"


# ---------------------------------------------------------------- windows

def _keyboard_screen() -> str:
    field = node("[40,1200][1040,1320]", clickable="true", text="Member name", class_="android.widget.EditText",
                 resource_id=f"{APP}:id/name")
    under = node("[40,1700][1040,1840]", clickable="true", text="Confirm booking", resource_id=f"{APP}:id/confirm")
    edge = node("[40,1380][300,1410]", clickable="true", text="Rules", resource_id=f"{APP}:id/rules")  # 30 dp tall, half under
    app = node("[0,0][1080,2000]", node("[0,0][1080,2000]", field + under + edge))
    keys = "".join(node(f"[{k * 108},1500][{k * 108 + 108},1620]", pkg=KEYS, clickable="true", content_desc=c)
                   for k, c in enumerate("qwertyuiop"))
    keyboard = node("[0,1400][1080,2000]", keys, pkg=KEYS)
    bars = node("[0,0][1080,60]", node("[960,0][1040,60]", pkg=SYSTEM, clickable="true", content_desc="Wi-Fi"),
                pkg=SYSTEM)
    # The dumper's window order is a hash set's: put the keyboard first to prove order does not matter.
    return dump(keyboard, app, bars)


def test_keyboard_and_system_bar_targets_are_not_the_apps(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, report = check(tmp_path, _keyboard_screen(), capsys)
    t = by_name(report)
    assert t["q"]["status"] == "unchecked" and "on-screen keyboard" in t["q"]["reason"]
    assert t["Wi-Fi"]["status"] == "unchecked" and "system bar" in t["Wi-Fi"]["reason"]
    assert t["Member name"]["status"] == "pass"
    assert t["Confirm booking"]["status"] == "unchecked"
    assert t["Confirm booking"]["reason"].startswith("hidden under the on-screen keyboard")
    # Partly under the keyboard and too small: its hidden part may be bigger, so not a fail.
    assert t["Rules"]["status"] == "partial" and "partly under the on-screen keyboard" in t["Rules"]["reason"]
    assert code == 0


def test_all_windows_checks_the_keyboard_too(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 108 x 120 px keys at 160 dpi are 108 x 120 dp: they pass the 48 dp guideline (Android accessibility help).
    _, report = check(tmp_path, _keyboard_screen(), capsys, "--all-windows")
    t = by_name(report)
    assert t["q"]["status"] == "pass" and t["Wi-Fi"]["status"] == "pass"


def test_app_package_names_the_app_when_the_guess_is_wrong(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Two full-screen windows: the app's and another app's permission prompt. The guess (largest
    # window, then the one with more targets) takes the prompt for the app; --package corrects it.
    prompt_pkg = "org.example.permissions"
    prompt = node("[0,0][1080,2000]", node("[100,1500][500,1600]", pkg=prompt_pkg, clickable="true", text="Allow")
                  + node("[580,1500][980,1600]", pkg=prompt_pkg, clickable="true", text="Deny"), pkg=prompt_pkg)
    app = node("[0,0][1080,2000]", node("[100,300][400,400]", clickable="true", text="Book"))
    _, report = check(tmp_path, dump(prompt, app), capsys)
    assert by_name(report)["Book"]["reason"].startswith(f"in another app's window (package {APP})")
    _, report = check(tmp_path, dump(prompt, app), capsys, "--package", APP)
    t = by_name(report)
    assert t["Book"]["status"] == "unchecked" and t["Book"]["reason"].startswith("behind a dialog window")
    assert t["Allow"]["status"] == "unchecked" and "another app's window" in t["Allow"]["reason"]


def test_targets_behind_a_dialog_are_not_checked(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    behind = node("[0,0][1080,2000]", node("[40,40][60,60]", clickable="true", text="Tiny help"))
    dialog = node("[100,800][980,1200]", node("[600,1100][960,1180]", clickable="true", text="Cancel booking")
                  + node("[140,1100][580,1180]", clickable="true", text="Keep booking"))
    toast = node("[300,1700][780,1800]", node("[320,1720][760,1780]", text="Saved"))  # holds no target
    _, report = check(tmp_path, dump(dialog, toast, behind), capsys)
    t = by_name(report)
    assert t["Tiny help"]["status"] == "unchecked" and t["Tiny help"]["reason"].startswith("behind a dialog window")
    assert t["Cancel booking"]["status"] == "pass" and t["Keep booking"]["status"] == "pass"


def test_a_target_cut_by_its_window_edge_is_treated_like_one_cut_by_a_scroller(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # A sheet window (the app's) ending mid-screen over the app's main window; a 16 dp tall row
    # flush with the sheet's bottom edge may be cut by it.
    main_window = node("[0,0][1080,2000]", node("[0,0][1080,2000]", text="Plots"))
    sheet = node("[0,1000][1080,1400]", node("[0,1384][1080,1400]", clickable="true", text="More plots"))
    _, report = check(tmp_path, dump(main_window, sheet), capsys)
    row = by_name(report)["More plots"]
    assert row["status"] == "partial" and row["reason"].startswith("cut by the edge of its window")


# ---------------------------------------------------------------- names and silent misses

def test_rows_are_named_by_their_text_and_nested_targets_by_their_own(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    row = node("[0,300][1080,420]",
               node("[40,320][800,400]", text="Plot A3, sunny corner")
               + node("[900,320][1060,400]", clickable="true", content_desc="Star Plot A3"),
               clickable="true", resource_id=f"{APP}:id/plot_row")
    bare = node("[0,600][200,700]", clickable="true", resource_id=f"{APP}:id/plot_photo")
    classless = node("[0,800][200,900]", clickable="true", class_="android.widget.ImageButton")
    _, report = check(tmp_path, dump(node("[0,0][1080,2000]", row + bare + classless)), capsys)
    names = [t["name"] for t in report["screens"][0]["targets"]]
    assert names == ["Plot A3, sunny corner", "Star Plot A3", "plot_photo", "ImageButton"]
    # The label (which the release gate keys on) is still the node's own: empty for the row.
    assert report["screens"][0]["targets"][0]["label"] == ""


def test_a_screen_with_no_targets_says_so(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _, report = check(tmp_path, dump(node("[0,0][1080,2000]", node("[0,0][500,100]", text="Welcome"))), capsys)
    assert any(n.startswith("no touch targets on this screen") for n in report["screens"][0]["notices"])


def test_a_screen_whose_every_target_is_set_aside_says_nothing_was_compared(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Only the keyboard's window: every target is a key, none is the app's.
    keys = "".join(node(f"[{k * 108},1500][{k * 108 + 108},1620]", pkg=KEYS, clickable="true", content_desc=c)
                   for k, c in enumerate("qwe"))
    _, report = check(tmp_path, dump(node("[0,1400][1080,2000]", keys, pkg=KEYS)), capsys)
    notices = report["screens"][0]["notices"]
    assert any(n.startswith("none of the 3 targets on this screen was checked (a key of the on-screen keyboard")
               and n.endswith("nothing on it was compared") for n in notices)


def test_focusable_nodes_that_are_not_clickable_are_counted_and_can_be_taken(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Some cross-platform frameworks write controls as focusable but not clickable.
    body = dump(node("[0,0][1080,2000]", node("[40,300][400,330]", focusable="true", text="Send")
                     + node("[0,400][1080,1800]", focusable="true", scrollable="true")))
    _, report = check(tmp_path, body, capsys)
    screen = report["screens"][0]
    assert not screen["targets"]
    assert any(n.startswith("1 node(s) are focusable but not marked clickable (first at line 3, 'Send')")
               for n in screen["notices"])
    code, report = check(tmp_path, body, capsys, "--include-focusable")
    (send,) = report["screens"][0]["targets"]
    assert send["name"] == "Send" and send["status"] == "fail" and code == 0  # 30 dp tall: warnings only


def test_size_and_findings_show_one_figure(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 119 px at 440 dpi is 43.2727... dp (px x 160 / dpi, Android developer docs); the size
    # stored as 43.27 and the message must both say 43.3.
    (tmp_path / "s.xml").write_text(dump(node("[0,0][1080,2000]", node("[0,0][119,119]", clickable="true",
                                                                        text="Water"))))
    (tmp_path / "device.txt").write_text("density: 440\n")
    main(["check", "--format", "json", "--rules", "android-guidance", str(tmp_path / "s.xml")])
    (water,) = json.loads(capsys.readouterr().out)["screens"][0]["targets"]
    assert f"{water['size']['width']:.1f}" == "43.3"
    assert water["findings"][0]["message"].startswith("43.3 x 43.3 dp")


# ---------------------------------------------------------------- iOS

IOS_HEAD = '<?xml version="1.0" encoding="UTF-8"?>\n<AppiumAUT>'


def ios(*elements: str) -> str:
    return "\n".join([
        IOS_HEAD,
        '<XCUIElementTypeApplication type="XCUIElementTypeApplication" name="Seedling" label="Seedling" '
        'enabled="true" accessible="false" x="0" y="0" width="390" height="844" index="0">',
        '<XCUIElementTypeWindow type="XCUIElementTypeWindow" enabled="true" accessible="false" '
        'x="0" y="0" width="390" height="844" index="0">', *elements,
        "</XCUIElementTypeWindow>", "</XCUIElementTypeApplication>", "</AppiumAUT>"])


def el(kind: str, x: float, y: float, w: float, h: float, kids: str = "", **attrs: str) -> str:
    a = " ".join(f'{k}="{v}"' for k, v in attrs.items())
    head = (f'<XCUIElementType{kind} type="XCUIElementType{kind}" {a} enabled="true" '
            f'x="{x:g}" y="{y:g}" width="{w:g}" height="{h:g}"')
    return f"{head}>{kids}</XCUIElementType{kind}>" if kids else f"{head}/>"


def ios_check(tmp_path: Path, body: str, capsys: pytest.CaptureFixture[str], *flags: str) -> tuple[int, dict]:
    (tmp_path / "t.xml").write_text(body, encoding="utf-8")
    (tmp_path / "device.txt").write_text("scale: 3\n")
    code = main(["check", "--format", "json", *flags, str(tmp_path / "t.xml")])
    return code, json.loads(capsys.readouterr().out)


def test_ios_cells_below_the_screen_are_off_screen_and_cut_ones_are_not_failed(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Sources without `visible` attributes list every cell of a table, on screen or not.
    cells = "".join(el("Cell", 0, y, 390, 30, el("StaticText", 16, y + 5, 200, 20, label=f"Tray {n}"))
                    for n, y in enumerate([100, 830, 900, 1400]))
    _, report = ios_check(tmp_path, ios(cells), capsys)
    t = by_name(report)
    assert t["Tray 0"]["status"] == "fail"  # 30 pt tall, whole on screen: a real failure
    assert t["Tray 1"]["status"] == "partial" and t["Tray 1"]["reason"].startswith("partly off-screen")
    assert t["Tray 2"]["status"] == "unchecked" and t["Tray 2"]["reason"].startswith("off-screen")
    assert t["Tray 3"]["status"] == "unchecked"


def test_ios_keyboard_keys_are_not_the_apps_and_hide_what_is_under_them(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    keys = "".join(el("Key", 3 + k * 39, 600, 33, 42, label=c, name=c) for k, c in enumerate("qwertyuiop"))
    keyboard = el("Keyboard", 0, 560, 390, 284, keys)
    body = ios(el("Button", 20, 700, 350, 50, label="Save tray", name="save"),
               el("Button", 20, 100, 30, 30, name="info"), keyboard)
    _, report = ios_check(tmp_path, body, capsys)
    t = by_name(report)
    assert t["q"]["status"] == "unchecked" and "on-screen keyboard" in t["q"]["reason"]
    assert t["Save tray"]["status"] == "unchecked" and t["Save tray"]["reason"].startswith("hidden under")
    # A button with no label is named by its identifier, never by the bare element type.
    assert t["info"]["status"] == "fail"


def test_ios_labelled_other_elements_are_counted_and_can_be_taken(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    body = ios(el("Other", 20, 100, 120, 30, label="Water now", accessible="true"),
               el("Button", 20, 300, 350, 50))
    _, report = ios_check(tmp_path, body, capsys)
    screen = report["screens"][0]
    assert [t["name"] for t in screen["targets"]] == ["Button"]
    assert any("1 accessible 'Other' element(s) carry a label" in n for n in screen["notices"])
    _, report = ios_check(tmp_path, body, capsys, "--include-focusable")
    assert [t["name"] for t in report["screens"][0]["targets"]] == ["Water now", "Button"]
