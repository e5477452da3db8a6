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
from tapgauge.model import DeviceHints, InputError, Screen
from tapgauge.pipeline import Settings, check_file
from tapgauge.readers import read_screen, read_screens
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
    code = main(["check", "--format", "json", "--density", "420", "--rules", "android-guideline", str(dump)])
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
    settings = Settings(tuple(select_rulesets(["android-guideline"])), flags=DeviceHints(density_dpi=420, source="test"))
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
