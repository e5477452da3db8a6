"""The files testers really have: adb status lines, UTF-16 from Windows shells, namespaces,
appended dumps, cut-off copies, and page source saved as JSON.

Every screen here is invented (a neighbourhood bakery's ordering app, a community
garden's watering app). Format facts are named beside the checks that rely on them.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from PIL import Image

from tapgauge.cli import main
from tapgauge.model import DeviceHints, InputError, Screen, Target
from tapgauge.pipeline import Settings, check_file
from tapgauge.readers import discover, read_screen, read_screens
from tapgauge.rulesets import select_rulesets

# The stock dumper's first line (AOSP uiautomator: XmlSerializer with standalone=true writes
# single quotes and a space before '?>').
DECLARATION = "<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>"
# What `uiautomator dump` prints when it is done; "hierchary" is the tool's own spelling
# (AOSP uiautomator DumpCommand).
TTY_STATUS = "UI hierchary dumped to: /dev/tty"
FILE_STATUS = "UI hierchary dumped to: /sdcard/window_dump.xml"
PKG = "org.example.crumbandcrust"


def node(bounds: str, cls: str, *, text: str = "", rid: str = "", desc: str = "", clickable: bool = False,
         index: int = 0, children: str = "") -> str:
    """One <node> with the attributes in the order the stock dumper writes them (AOSP AccessibilityNodeInfoDumper)."""
    flag = "true" if clickable else "false"
    head = (f'<node index="{index}" text="{text}" resource-id="{rid}" class="{cls}" package="{PKG}" '
            f'content-desc="{desc}" checkable="false" checked="false" clickable="{flag}" enabled="true" '
            f'focusable="{flag}" focused="false" scrollable="false" long-clickable="false" password="false" '
            f'selected="false" bounds="{bounds}"')
    return f"{head}>{children}</node>" if children else f"{head} />"


def bakery_dump(sep: str = "") -> str:
    """The bakery's order screen: two buttons in a frame. sep="" is one line, as the stock dumper writes it."""
    order = node("[48,1900][1032,2044]", "android.widget.Button", text="Order sourdough", rid=f"{PKG}:id/order",
                 clickable=True)
    fav = node("[960,180][1020,240]", "android.widget.ImageButton", desc="Save to favourites",
               rid=f"{PKG}:id/fav", clickable=True, index=1)
    frame = node("[0,0][1080,2400]", "android.widget.FrameLayout", children=sep + order + sep + fav + sep)
    return DECLARATION + sep + '<hierarchy rotation="0">' + sep + frame + sep + "</hierarchy>"


def write(tmp_path: Path, name: str, body: str | bytes) -> Path:
    p = tmp_path / name
    p.write_bytes(body if isinstance(body, bytes) else body.encode("utf-8"))
    return p


def labels(screen: Screen) -> list[str]:
    return [t.label for t in screen.targets]


def error_of(path: Path) -> InputError:
    with pytest.raises(InputError) as info:
        read_screens(path)
    assert info.value.path == str(path)
    return info.value


# ---------------------------------------------------------------- adb status lines


def test_adb_one_liner_end_to_end(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # `adb exec-out uiautomator dump /dev/tty > screen.xml`: the dump, then the status line glued
    # right after </hierarchy> on the same line (AOSP DumpCommand prints it after writing the file;
    # common practice to use /dev/tty to get the dump on stdout).
    dump = write(tmp_path, "order.xml", bakery_dump() + TTY_STATUS + "\n")
    before = dump.read_bytes()
    code = main(["check", "--format", "json", "--density", "420", "--rules", "android-guidance", str(dump)])
    report = json.loads(capsys.readouterr().out)
    # Read, not refused (an unreadable file would be exit 2): the favourite button, 60 px = 22.9 dp
    # at 420 dpi, fails the 48 dp guideline, which is a warning, so the run passes at the default level.
    assert code == 0 and report["errors"] == []
    (screen,) = report["screens"]
    assert screen["notices"][0] == (
        "ignored the dump tool's status line 1 ('UI hierchary dumped to: /dev/tty') outside the XML")
    assert [t["name"] for t in screen["targets"]] == ["Order sourdough", "Save to favourites"]
    assert [t["status"] for t in screen["targets"]] == ["pass", "fail"]
    assert dump.read_bytes() == before  # read, never changed


def test_status_line_on_the_next_line_with_crlf(tmp_path: Path) -> None:
    # `adb shell` through a pty turns \n into \r\n (common practice: use exec-out to avoid it).
    body = bakery_dump("\n").replace("\n", "\r\n") + "\r\n" + TTY_STATUS + "\r\n\r\n"
    s = read_screen(write(tmp_path, "pty.xml", body))
    assert labels(s) == ["Order sourdough", "Save to favourites"]
    assert [t.line for t in s.targets] == [4, 5]  # the file's own lines
    assert s.notices == ("ignored the dump tool's status line 8 ('UI hierchary dumped to: /dev/tty') outside the XML",)


def test_status_line_before_the_xml_from_dump_then_cat(tmp_path: Path) -> None:
    # `adb shell 'uiautomator dump && cat /sdcard/window_dump.xml'`: the status comes first
    # (AOSP DumpCommand's default path is /sdcard/window_dump.xml, from memory).
    body = "\n" + FILE_STATUS + "\n" + bakery_dump("\n") + "\n"
    s = read_screen(write(tmp_path, "cat.xml", body))
    assert [t.line for t in s.targets] == [6, 7]
    assert s.notices == (
        "ignored the dump tool's status line 2 ('UI hierchary dumped to: /sdcard/window_dump.xml') outside the XML",)


def test_correct_spelling_is_accepted_too(tmp_path: Path) -> None:
    s = read_screen(write(tmp_path, "fixed.xml", bakery_dump() + "\nUI hierarchy dumped to: /dev/tty\n"))
    assert s.notices == ("ignored the dump tool's status line 2 ('UI hierarchy dumped to: /dev/tty') outside the XML",)


def test_status_lines_on_both_sides_are_listed_in_one_notice(tmp_path: Path) -> None:
    body = FILE_STATUS + "\n" + bakery_dump() + TTY_STATUS + "\n"
    s = read_screen(write(tmp_path, "both.xml", body))
    assert s.notices == ("ignored the dump tool's status lines 1 ('UI hierchary dumped to: /sdcard/window_dump.xml') "
                         "and 2 ('UI hierchary dumped to: /dev/tty') outside the XML",)


@pytest.mark.parametrize(("body", "line", "column", "snippet"), [
    (bakery_dump("\n") + "\nadb: device offline\n", 8, 1, "adb: device offline"),
    ("Warning: screen may be locked\n" + bakery_dump(), 1, 1, "Warning: screen may be locked"),
    (bakery_dump() + "Killed\n", 1, len(bakery_dump()) + 1, "Killed"),
])
def test_other_text_outside_the_xml_is_an_error_with_line_and_column(tmp_path: Path, body: str, line: int,
                                                                    column: int, snippet: str) -> None:
    err = error_of(write(tmp_path, "noisy.xml", body))
    assert err.line == line
    assert err.message == (f"malformed XML: unexpected text {snippet!r} at line {line}, column {column}, outside the "
                           "XML document; expected only the XML, blank lines, or the dump tool's status line "
                           "('UI hierchary dumped to: ...')")


@pytest.mark.parametrize("said", [
    # What uiautomator prints instead of a dump (AOSP DumpCommand for the first; the second from memory).
    "ERROR: null root node returned by UiTestAutomationBridge.",
    "ERROR: could not get idle state.",
])
def test_a_device_side_failure_is_quoted_with_advice(tmp_path: Path, said: str) -> None:
    err = error_of(write(tmp_path, "failed.xml", said + "\r\n"))
    assert err.line == 1
    assert err.message == (f"the dump failed on the device, which said {said!r} instead of writing the screen; "
                           "try the dump again (with the screen on and still)")


def test_a_file_with_only_the_status_line_says_there_is_no_xml(tmp_path: Path) -> None:
    err = error_of(write(tmp_path, "lost.xml", "\n" + FILE_STATUS + "\n"))
    assert err.line == 2
    assert err.message.startswith("holds no XML, only the dump tool's status line 2 (")


# ---------------------------------------------------------------- encodings and namespaces


@pytest.mark.parametrize("codec", ["utf-16", "utf-16-be", "utf-8-sig"])
def test_byte_order_marks_decide_the_encoding(tmp_path: Path, codec: str) -> None:
    # PowerShell's `>` writes UTF-16 LE with a BOM and CRLF, whatever the XML declaration says
    # (Windows PowerShell 5.1 Out-File default, from memory); "utf-16" in Python writes the
    # platform's order with a BOM, "utf-16-be" is given its BOM by hand.
    text = (bakery_dump("\n") + "\n" + TTY_STATUS + "\n").replace("\n", "\r\n")
    data = text.encode(codec)
    if codec == "utf-16-be":
        data = b"\xfe\xff" + data
    s = read_screen(write(tmp_path, "ps.xml", data))
    assert labels(s) == ["Order sourdough", "Save to favourites"]
    assert [t.line for t in s.targets] == [4, 5]
    assert s.notices == ("ignored the dump tool's status line 8 ('UI hierchary dumped to: /dev/tty') outside the XML",)


def test_clean_utf16_file_takes_the_one_parse_path(tmp_path: Path) -> None:
    s = read_screen(write(tmp_path, "u16.xml", bakery_dump().encode("utf-16")))
    assert labels(s) == ["Order sourdough", "Save to favourites"] and s.notices == ()


def test_a_doctype_in_utf16_is_still_refused(tmp_path: Path) -> None:
    body = DECLARATION + '\n<!DOCTYPE h [<!ENTITY x "crumb">]>\n<hierarchy rotation="0">&x;</hierarchy>'
    err = error_of(write(tmp_path, "evil16.xml", body.encode("utf-16")))
    assert "DOCTYPE" in err.message and err.line == 2


@pytest.mark.parametrize("wrap", [
    lambda d: d.replace("<hierarchy ", '<hierarchy xmlns="urn:example:crumb" '),
    lambda d: d.replace("<hierarchy ", '<d:hierarchy xmlns:d="urn:example:crumb" ').replace("</hierarchy>", "</d:hierarchy>")
    .replace("<node ", "<d:node ").replace("</node>", "</d:node>").replace(' bounds="', ' d:bounds="'),
])
def test_namespaced_dumps_read_like_plain_ones(tmp_path: Path, wrap: Callable[[str], str]) -> None:
    plain = read_screen(write(tmp_path, "plain.xml", bakery_dump("\n")))
    spaced = read_screen(write(tmp_path, "spaced.xml", wrap(bakery_dump("\n"))))
    assert spaced.targets == plain.targets
    assert (spaced.width, spaced.height, spaced.platform) == (1080, 2400, "android")


# ---------------------------------------------------------------- several dumps in one file


def test_appended_dumps_are_screens_named_in_order(tmp_path: Path) -> None:
    # Running the one-liner twice with `>>`: dump, status, dump, status.
    second = bakery_dump("\n").replace("Order sourdough", "Order rye")
    body = bakery_dump("\n") + TTY_STATUS + "\n" + second + TTY_STATUS + "\n"
    Image.new("RGB", (1080, 2400)).save(tmp_path / "twice.png")
    one, two = read_screens(write(tmp_path, "twice.xml", body))
    assert (one.name, two.name) == ("dump 1", "dump 2")
    assert labels(one)[0] == "Order sourdough" and labels(two)[0] == "Order rye"
    assert [t.line for t in one.targets] == [4, 5]
    assert [t.line for t in two.targets] == [11, 12]  # real lines, not restarted at 1
    assert one.notices[0] == "ignored the dump tool's status line 7 ('UI hierchary dumped to: /dev/tty') outside the XML"
    assert two.notices == ("ignored the dump tool's status line 14 ('UI hierchary dumped to: /dev/tty') outside the XML",)
    assert one.image is None and two.image is None  # one screenshot cannot show both
    assert one.notices[1] == "twice.png was not used for this file's 2 dumps: one screenshot cannot show them all"


def test_twelve_dumps_sort_in_number_order_through_the_pipeline(tmp_path: Path) -> None:
    body = "".join(bakery_dump().replace("Order sourdough", f"Order loaf {k}") + TTY_STATUS + "\n" for k in range(1, 13))
    path = write(tmp_path, "dozen.xml", body)
    settings = Settings(tuple(select_rulesets(["android-guidance"])), flags=DeviceHints(density_dpi=420, source="test"))
    results = check_file(path, settings)
    assert [r.screen.name for r in results] == [f"dump {k:02d}" for k in range(1, 13)]
    assert [r.screen.targets[0].label for r in results] == [f"Order loaf {k}" for k in range(1, 13)]
    assert [r.screen.targets[0].line for r in results] == list(range(1, 13))


def test_dumps_glued_without_a_newline_still_split(tmp_path: Path) -> None:
    one, two = read_screens(write(tmp_path, "glued.xml", bakery_dump() + bakery_dump()))
    assert labels(one) == labels(two) and one.notices == () and two.name == "dump 2"


def test_an_error_in_the_second_dump_names_its_real_line(tmp_path: Path) -> None:
    broken = bakery_dump("\n").replace('bounds="[960,180][1020,240]"', 'bounds="[960,180 1020,240]"')
    err = error_of(write(tmp_path, "second.xml", bakery_dump("\n") + "\n" + TTY_STATUS + "\n" + broken))
    assert err.line == 13 and "is not of the form" in err.message


def test_a_doctype_in_a_later_dump_is_refused(tmp_path: Path) -> None:
    evil = DECLARATION + '\n<!DOCTYPE h [<!ENTITY x "crumb">]>\n<hierarchy rotation="0">&x;</hierarchy>'
    err = error_of(write(tmp_path, "later.xml", bakery_dump() + TTY_STATUS + "\n" + evil))
    assert "DOCTYPE" in err.message and err.line == 3


# ---------------------------------------------------------------- cut-off files


def test_a_dump_cut_mid_node_says_where_it_ends(tmp_path: Path) -> None:
    text = bakery_dump("\n")
    cut = text[:text.index('class="android.widget.ImageButton"') + len('class="android.wid')]
    err = error_of(write(tmp_path, "cut.xml", cut))
    last = cut.splitlines()[-1]
    assert err.line == 5
    assert err.message == (f"the file ends early at line 5, column {len(last) + 1}, inside <node> (depth 3); "
                           "was the dump cut off?")


def test_a_dump_cut_between_nodes_names_the_open_element(tmp_path: Path) -> None:
    text = bakery_dump("\n")
    cut = text[:text.index("</node>")]  # after both buttons, before the frame closes
    err = error_of(write(tmp_path, "cut2.xml", cut + "\n"))
    assert err.message == "the file ends early at line 5, column " + str(len(cut.splitlines()[-1]) + 1) + \
        ", inside <node> (depth 2); was the dump cut off?"


def test_a_cut_dump_followed_by_a_whole_one(tmp_path: Path) -> None:
    text = bakery_dump()
    cut = text[:text.index('bounds="[960,180]') + len('bounds="[96')]
    err = error_of(write(tmp_path, "cutfirst.xml", cut + "\n" + bakery_dump()))
    assert err.message == (f"dump 1 ends early at line 1, column {len(cut) + 1}, inside <node> (depth 3), before "
                           "the next dump's XML declaration; was it cut off?")


def test_a_mismatched_tag_at_the_very_end_is_malformed_not_cut(tmp_path: Path) -> None:
    # Ends exactly where the parser complains, yet nothing is missing: a wrong end tag.
    body = DECLARATION + '\n<hierarchy rotation="0">\n<node bounds="[0,0][1,1]">\n</hierarchy>'
    err = error_of(write(tmp_path, "wrong.xml", FILE_STATUS + "\n" + body))
    assert err.message.startswith("malformed XML: Opening and ending tag mismatch") and err.line == 5


# ---------------------------------------------------------------- page source saved as JSON


GARDEN_TREE = {  # the JSON form of an iOS element tree (WebDriverAgent dictionaryForElement: short type
    # names, "1"/"0" flags, rect as an object and frame as NSStringFromCGRect text, null for no text)
    "type": "Application", "rawIdentifier": None, "name": "Plotwise", "label": "Plotwise", "value": None,
    "rect": {"x": 0, "y": 0, "width": 390, "height": 844}, "frame": "{{0, 0}, {390, 844}}",
    "isEnabled": "1", "isVisible": "1", "isAccessible": "0", "isFocused": "0",
    "children": [{
        "type": "Window", "name": None, "label": None, "value": None,
        "rect": {"x": 0, "y": 0, "width": 390, "height": 844}, "frame": "{{0, 0}, {390, 844}}",
        "isEnabled": "1", "isVisible": "1", "isAccessible": "0",
        "children": [
            {"type": "Button", "name": "water_bed_3", "label": "Water bed 3", "value": None,
             "rect": {"x": 16, "y": 120, "width": 140, "height": 30}, "frame": "{{16, 120}, {140, 30}}",
             "isEnabled": "1", "isVisible": "1", "isAccessible": "1"},
            {"type": "Switch", "name": "frost_alerts", "label": "Frost alerts", "value": "1",
             "frame": "{{323.5, 200}, {51, 31}}", "isEnabled": "0", "isVisible": "1", "isAccessible": "1"},
            {"type": "Cell", "name": "bed_list_row", "label": "Bed 7, tomatoes", "value": None,
             "rect": {"x": 0, "y": 900, "width": 390, "height": 44}, "isEnabled": True, "isVisible": False,
             "isAccessible": False},
        ],
    }],
}

GARDEN_XML = """<?xml version="1.0" encoding="UTF-8"?>
<XCUIElementTypeApplication type="XCUIElementTypeApplication" name="Plotwise" label="Plotwise" enabled="true" visible="true" accessible="false" x="0" y="0" width="390" height="844">
  <XCUIElementTypeWindow type="XCUIElementTypeWindow" enabled="true" visible="true" accessible="false" x="0" y="0" width="390" height="844">
    <XCUIElementTypeButton type="XCUIElementTypeButton" name="water_bed_3" label="Water bed 3" enabled="true" visible="true" accessible="true" x="16" y="120" width="140" height="30"/>
    <XCUIElementTypeSwitch type="XCUIElementTypeSwitch" name="frost_alerts" label="Frost alerts" value="1" enabled="false" visible="true" accessible="true" x="323.5" y="200" width="51" height="31"/>
    <XCUIElementTypeCell type="XCUIElementTypeCell" name="bed_list_row" label="Bed 7, tomatoes" enabled="true" visible="false" accessible="false" x="0" y="900" width="390" height="44"/>
  </XCUIElementTypeWindow>
</XCUIElementTypeApplication>
"""


def _without_lines(screen: Screen) -> list[Target]:
    return [t._replace(line=None) for t in screen.targets]


@pytest.mark.parametrize("wrapped", [False, True])
def test_ios_json_tree_reads_exactly_like_the_xml_tree(tmp_path: Path, wrapped: bool) -> None:
    # {"value": ..., "sessionId": ...} is the W3C WebDriver response envelope (W3C WebDriver, Commands).
    doc = {"value": GARDEN_TREE, "sessionId": "5e3d-garden"} if wrapped else GARDEN_TREE
    from_json = read_screen(write(tmp_path, "beds.json", json.dumps(doc, indent=2)))
    from_xml = read_screen(write(tmp_path, "beds.xml", GARDEN_XML))
    assert _without_lines(from_json) == _without_lines(from_xml)
    assert [t.line for t in from_json.targets] == [None, None, None]  # no XML lines to point at
    assert (from_json.platform, from_json.coords, from_json.width, from_json.height) == ("ios", "pt", 390, 844)
    assert [(t.label, t.enabled, t.visible) for t in from_json.targets] == [
        ("Water bed 3", True, True), ("Frost alerts", False, True), ("Bed 7, tomatoes", True, False)]
    assert from_json.targets[1].bounds == (323.5, 200.0, 374.5, 231.0)  # from the frame text alone


@pytest.mark.parametrize("xml", [bakery_dump(), GARDEN_XML])
def test_webdriver_source_response_reads_its_xml(tmp_path: Path, xml: str) -> None:
    # W3C WebDriver, Get Page Source: the response's "value" is the page source as a string.
    path = write(tmp_path, "resp.json", json.dumps({"value": xml, "sessionId": "77aa"}))
    from_json = read_screen(path)
    from_xml = read_screen(write(tmp_path, "same.xml", xml))
    assert from_json.targets == from_xml.targets
    assert from_json.notices == (
        "read the page source XML held in the response's 'value'; line numbers are lines of that XML",)


def test_page_source_json_claims_its_screenshot(tmp_path: Path) -> None:
    write(tmp_path, "beds.json", json.dumps({"value": GARDEN_TREE, "sessionId": "x"}))
    Image.new("RGB", (1170, 2532)).save(tmp_path / "beds.png")  # 390 pt x 3 = 1170 px
    write(tmp_path, "order.json", json.dumps({"value": bakery_dump()}))
    Image.new("RGB", (1080, 2400)).save(tmp_path / "order.png")
    found, errors = discover([tmp_path])
    assert [p.name for p in found] == ["beds.json", "order.json"] and errors == []
    beds = read_screen(tmp_path / "beds.json")
    assert beds.image == tmp_path / "beds.png"
    assert [h.scale for h in beds.hints] == [3.0]  # the iOS scale from the picture, as beside an XML tree
    assert read_screen(tmp_path / "order.json").image == tmp_path / "order.png"


def test_json_saved_by_powershell_is_read_as_utf16(tmp_path: Path) -> None:
    # `curl .../source > beds.json` in Windows PowerShell 5.1 writes UTF-16 LE with a BOM (from memory).
    write(tmp_path, "beds.json", json.dumps({"value": GARDEN_TREE}, indent=2).replace("\n", "\r\n").encode("utf-16"))
    Image.new("RGB", (780, 1688)).save(tmp_path / "beds.png")
    found, _ = discover([tmp_path])
    assert [p.name for p in found] == ["beds.json"]  # the picture is claimed from the UTF-16 head alone
    s = read_screen(tmp_path / "beds.json")
    assert labels(s) == ["Water bed 3", "Frost alerts", "Bed 7, tomatoes"] and [h.scale for h in s.hints] == [2.0]


def test_malformed_json_neither_crashes_discovery_nor_reads_as_coco(tmp_path: Path) -> None:
    write(tmp_path, "half.json", '{"value": "<?xml version=\\"1.0\\"?><hierarchy rotation=\\"0\\"><node')
    write(tmp_path, "empty.json", "")
    found, errors = discover([tmp_path])
    assert [p.name for p in found] == ["empty.json", "half.json"] and errors == []
    half = error_of(tmp_path / "half.json")
    assert half.message.startswith("not valid JSON: Unterminated string") and half.line == 1
    assert "COCO" not in half.message and "COCO" not in error_of(tmp_path / "empty.json").message


def test_json_syntax_errors_name_line_and_column(tmp_path: Path) -> None:
    body = json.dumps({"value": GARDEN_TREE}, indent=1).replace('"Frost alerts",', '"Frost alerts"')
    err = error_of(write(tmp_path, "typo.json", body))
    assert err.line == body.splitlines().index(next(l for l in body.splitlines() if "Frost alerts" in l)) + 2
    assert err.message.startswith("not valid JSON: Expecting ',' delimiter at line")


@pytest.mark.parametrize(("change", "expect"), [
    (lambda t: t["children"][0]["children"][0]["rect"].update(width="wide"),
     "value.children[0].children[0].rect.width: expected a number of points, found 'wide'"),
    (lambda t: t["children"][0]["children"][1].update(frame="{{1, 2}, {3}}"),
     "value.children[0].children[1].frame: expected \"{{x, y}, {width, height}}\", found '{{1, 2}, {3}}'"),
    (lambda t: t["children"][0]["children"].append("Button"),
     "value.children[0].children[3]: expected an element object, found text"),
    (lambda t: t["children"][0]["children"][0].update(isEnabled="maybe"),
     "value.children[0].children[0].isEnabled: expected \"1\" or \"0\" (or true/false), found 'maybe'"),
    (lambda t: t["children"][0]["children"][0]["rect"].update(height=-4),
     "value.children[0].children[0].rect: negative width or height"),
    (lambda t: t["children"][0].update(children={"type": "Button"}),
     "value.children[0].children: expected a list of elements, found an object"),
])
def test_structural_json_errors_name_the_path_of_keys(tmp_path: Path, change: Callable[[dict], None],
                                                      expect: str) -> None:
    tree = json.loads(json.dumps(GARDEN_TREE))
    change(tree)
    err = error_of(write(tmp_path, "bad.json", json.dumps({"value": tree, "sessionId": "s"})))
    assert err.message == expect and err.line is None


def test_json_of_another_kind_lists_what_is_read(tmp_path: Path) -> None:
    err = error_of(write(tmp_path, "prefs.json", '{"theme": "dark", "beds": 12}'))
    assert err.message.startswith("JSON of a kind tapgauge does not read; expected COCO annotations")
    assert "WebDriver page-source response" in err.message and "iOS element tree in JSON" in err.message


def test_a_webdriver_error_response_says_so(tmp_path: Path) -> None:
    # W3C WebDriver, Handling errors: {"value": {"error": ..., "message": ..., "stacktrace": ...}}.
    body = {"value": {"error": "invalid session id", "message": "session deleted", "stacktrace": ""}}
    err = error_of(write(tmp_path, "dead.json", json.dumps(body)))
    assert err.message == ("the automation server answered with an error, not a page source "
                           "('invalid session id: session deleted'); save the source again once the session is running")


def test_errors_in_the_xml_string_are_placed_within_it(tmp_path: Path) -> None:
    cut = bakery_dump("\n")[:-40]  # inside the second button, on the XML's line 5
    err = error_of(write(tmp_path, "cut.json", json.dumps({"value": cut})))
    assert err.message == (f"in the page source XML in 'value', its line 5: the file ends early at line 5, column "
                           f"{len(cut.splitlines()[-1]) + 1}, inside <node> (depth 3); was the dump cut off?")
    assert err.line is None


def test_deeply_nested_json_is_an_error_not_a_crash(tmp_path: Path) -> None:
    body = '{"type": "Other", "rect": {"x": 0, "y": 0, "width": 1, "height": 1}, "children": [' * 5000
    err = error_of(write(tmp_path, "deep.json", body + "]}" * 5000))
    assert "nested too deeply" in err.message


# ---------------------------------------------------------------- never a crash

FUZZ = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
PIECES = [bakery_dump(), bakery_dump("\n"), TTY_STATUS, FILE_STATUS, "\n", "\r\n", "ERROR: could not get idle state.",
          "Killed", "<", "</hierarchy>", '<node bounds="[0,0][1,1]"', DECLARATION, "\ufeff", "\x00", "é"]


@FUZZ
@given(st.lists(st.sampled_from(PIECES), min_size=1, max_size=6), st.integers(0, 4000),
       st.sampled_from(["utf-8", "utf-16"]))
def test_any_mix_of_dumps_status_lines_and_cuts_reads_or_is_an_input_error(
        tmp_path: Path, pieces: list[str], cut: int, codec: str) -> None:
    text = "".join(pieces)
    p = write(tmp_path, "mix.xml", text[:cut].encode(codec, "surrogatepass") or b" ")
    try:
        screens = read_screens(p)
    except InputError as exc:
        assert exc.path == str(p) and exc.message
        return
    for s in screens:  # what was read is what was written: each screen's targets are the bakery's buttons
        assert [t.label for t in s.targets] == ["Order sourdough", "Save to favourites"]


@FUZZ
@given(st.lists(st.tuples(st.integers(0, 10**5), st.text(max_size=8)), min_size=1, max_size=4))
def test_mutated_json_page_sources_read_or_are_input_errors(tmp_path: Path, cuts: list[tuple[int, str]]) -> None:
    text = json.dumps({"value": GARDEN_TREE, "sessionId": "s"})
    for pos, junk in cuts:
        p = pos % (len(text) + 1)
        text = text[:p] + junk + text[p + len(junk):]
    p = write(tmp_path, "m.json", text.encode("utf-8", "surrogatepass"))
    try:
        read_screens(p)
    except InputError as exc:
        assert exc.path == str(p) and "COCO file" not in exc.message
