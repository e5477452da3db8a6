"""The Android window dump reader: the format of `adb shell uiautomator dump`.

Format facts from AOSP's AccessibilityNodeInfoDumper (platform/frameworks/base,
cmds/uiautomator/library/core-src/com/android/uiautomator/core/; re-read): a `hierarchy` root
with `rotation`, nested `node` elements with string attributes, `NAF` on clickable nodes with
no text or description, `bounds` from Rect.toShortString. The newer dumpers' visible-to-user
and drawing-order attributes: from memory.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from lxml import etree

from tapgauge.model import InputError
from tapgauge.readers import discover, read_screen

HEAD = "<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>"


def write(tmp_path: Path, name: str, body: str) -> Path:
    p = tmp_path / name
    p.write_text(body, encoding="utf-8")
    return p


def node(bounds: str, **attrs: str) -> str:
    base = {"class": "android.widget.Button", "text": "", "resource-id": "", "content-desc": "",
            "clickable": "false", "enabled": "true"}
    base.update({k.replace("_", "-"): v for k, v in attrs.items()})
    a = " ".join(f'{k}="{v}"' for k, v in base.items())
    return f'<node {a} bounds="{bounds}"/>'


def test_stock_dump_targets_flags_and_lines(tmp_path: Path) -> None:
    body = "\n".join([
        HEAD, '<hierarchy rotation="0">',
        '<node class="android.widget.FrameLayout" bounds="[0,0][1080,2400]" clickable="false">',
        node("[0,0][100,100]", clickable="true", text="OK"),
        node("[0,100][100,200]", long_clickable="true", content_desc="Hold me"),
        node("[0,200][100,300]", checkable="true", resource_id="app:id/agree"),
        node("[0,300][100,400]", text="plain label"),
        node("[0,400][100,500]", clickable="true", enabled="false"),
        node("[0,500][100,600]", clickable="true", visible_to_user="false"),
        node("[0,0][0,0]", clickable="true", text="offscreen"),
        "</node>", "</hierarchy>",
    ])
    screen = read_screen(write(tmp_path, "s.xml", body))
    assert screen.platform == "android" and (screen.width, screen.height) == (1080, 2400)
    names = [t.name for t in screen.targets]
    assert names == ["OK", "Hold me", "agree", "Button", "Button", "offscreen"]
    assert [t.line for t in screen.targets] == [4, 5, 6, 8, 9, 10]
    assert [t.enabled for t in screen.targets][3] is False
    assert [t.visible for t in screen.targets][4] is False


def test_class_name_as_tag_and_multi_window(tmp_path: Path) -> None:
    # Some automation servers write the class as the tag; multi-window dumps nest roots.
    body = "\n".join([
        HEAD, '<hierarchy rotation="0">', "<window>",
        '<android.widget.FrameLayout class="android.widget.FrameLayout" bounds="[0,0][1080,2400]">',
        '<android.widget.Button class="android.widget.Button" clickable="true" text="Under" bounds="[0,0][200,200]"/>',
        "</android.widget.FrameLayout>", "</window>", "<window>",
        '<android.widget.ImageButton class="android.widget.ImageButton" clickable="true" text="Dialog" bounds="[100,100][300,300]"/>',
        "</window>", "</hierarchy>",
    ])
    screen = read_screen(write(tmp_path, "w.xml", body))
    under, dialog = screen.targets
    assert (under.name, dialog.name) == ("Under", "Dialog")
    assert dialog.paint_rank > under.paint_rank  # later window drawn on top


def test_drawing_order_sets_paint_order(tmp_path: Path) -> None:
    body = "\n".join([
        HEAD, '<hierarchy rotation="0">', '<node class="F" bounds="[0,0][500,500]">',
        node("[0,0][100,100]", clickable="true", text="A", drawing_order="2"),
        node("[50,50][150,150]", clickable="true", text="B", drawing_order="1"),
        "</node>", "</hierarchy>",
    ])
    a, b = read_screen(write(tmp_path, "d.xml", body)).targets
    assert a.paint_rank > b.paint_rank


def test_scroll_ancestors_are_recorded(tmp_path: Path) -> None:
    body = "\n".join([
        HEAD, '<hierarchy rotation="0">',
        '<node class="androidx.recyclerview.widget.RecyclerView" scrollable="true" bounds="[0,100][1080,900]">',
        node("[0,850][1080,900]", clickable="true", text="row"), "</node>",
        '<node class="android.widget.HorizontalScrollView" scrollable="true" bounds="[0,900][1080,1000]">',
        node("[1000,900][1080,1000]", clickable="true", text="chip"), "</node>",
        "</hierarchy>",
    ])
    row, chip = read_screen(write(tmp_path, "c.xml", body)).targets
    assert row.scroll_ancestors == (((0, 100, 1080, 900), "y"),)
    assert chip.scroll_ancestors == (((0, 900, 1080, 1000), "x"),)


@pytest.mark.parametrize(
    ("body", "expect", "line"),
    [
        (HEAD + '\n<hierarchy rotation="0">\n<node clickable="true" bounds="[0,0][10,10]">\n</hierarchy>', "malformed XML", 4),
        (HEAD + '\n<hierarchy rotation="0">\n<node clickable="true"/>\n</hierarchy>', "no bounds attribute", 3),
        (HEAD + '\n<hierarchy rotation="0">\n<node clickable="true" bounds="[0,0,10,10]"/>\n</hierarchy>', "is not of the form", 3),
        (HEAD + '\n<hierarchy rotation="0">\n<node clickable="true" bounds="[10,0][0,10]"/>\n</hierarchy>', "right < left", 3),
        (HEAD + '\n<hierarchy rotation="7">\n<node bounds="[0,0][1,1]"/>\n</hierarchy>', "rotation", 2),
        (HEAD + '\n<!DOCTYPE h [<!ENTITY x "boom">]>\n<hierarchy>&x;</hierarchy>', "DOCTYPE", 2),
        (HEAD + "\n<svg/>", "expected <hierarchy>", 2),
        (HEAD + '\n<hierarchy rotation="0"></hierarchy>', "no view nodes", 2),
        ("", "empty", None),
    ],
)
def test_bad_input_names_file_line_and_expectation(tmp_path: Path, body: str, expect: str, line: int | None) -> None:
    path = write(tmp_path, "bad.xml", body)
    with pytest.raises(InputError) as info:
        read_screen(path)
    assert expect in info.value.message
    assert info.value.path == str(path)
    assert info.value.line == line


def test_billion_laughs_is_refused_without_expansion(tmp_path: Path) -> None:
    lol = "".join(f'<!ENTITY l{k} "{"&l%d;" % (k - 1) * 10 if k else "lol"}">' for k in range(10))
    path = write(tmp_path, "lol.xml", f'<?xml version="1.0"?><!DOCTYPE h [{lol}]><hierarchy>&l9;</hierarchy>')
    with pytest.raises(InputError, match="DOCTYPE"):
        read_screen(path)


def test_discover_walks_folders_in_order_and_skips_sidecars(tmp_path: Path) -> None:
    (tmp_path / "b").mkdir()
    for name in ["b/z.xml", "a.xml", "a.device.txt", "notes.md"]:
        (tmp_path / name).write_text("x")
    (tmp_path / "b" / "loop").symlink_to(tmp_path, target_is_directory=True)
    found, missing = discover([tmp_path, tmp_path / "nope"])
    assert [p.relative_to(tmp_path).as_posix() for p in found] == ["a.xml", "b/z.xml"]
    assert len(missing) == 1 and "no such file" in missing[0].message


# --- The one-pass reader against the plain definition of paint order, visibility and scrolling ---
# The definitions (AOSP AccessibilityNodeInfoDumper, as above; drawing-order is AccessibilityNodeInfo's
# getDrawingOrder, from memory): children paint in ascending drawing-order, ties and
# unnumbered children in document order; a node is visible when it and every view node
# above it are visible to the user; scroll ancestors are the scrollable view nodes above.

_ORDERS = st.one_of(st.none(), st.integers(0, 4).map(str), st.just("x"))


@st.composite
def _trees(draw: st.DrawFn, depth: int = 0) -> str:
    kids = draw(st.lists(st.deferred(lambda: _trees(depth + 1)), max_size=0 if depth > 3 else 4))
    if depth and draw(st.integers(0, 9)) == 0:  # a container without bounds, as multi-window dumps have
        return "<window>" + "".join(kids) + "</window>"
    l, t = draw(st.integers(0, 900)), draw(st.integers(0, 2000))
    attrs = {"class": draw(st.sampled_from(["android.widget.Button", "android.widget.HorizontalScrollView"])),
             "text": f"n{draw(st.integers(0, 99))}",
             "clickable": draw(st.sampled_from(["true", "false"])),
             "long-clickable": draw(st.sampled_from(["true", "false"])),
             "scrollable": draw(st.sampled_from(["true", "false"])),
             "visible-to-user": draw(st.sampled_from(["true", "true", "false"])),
             "drawing-order": draw(_ORDERS),
             "bounds": f"[{l},{t}][{l + draw(st.integers(0, 200))},{t + draw(st.integers(0, 200))}]"}
    a = " ".join(f'{k}="{v}"' for k, v in attrs.items() if v is not None)
    return f"<node {a}>" + "".join(kids) + "</node>"


def _reference(root: etree._Element) -> list[tuple[object, ...]]:
    """Targets by walking the tree recursively and sorting every sibling list: the definition."""
    out: list[tuple[int, tuple[object, ...]]] = []
    doc = {el: k for k, el in enumerate(root.iter())}
    paint = 0

    def key(el: etree._Element, pos: int) -> tuple[int, int]:
        raw = el.get("drawing-order")
        return (int(raw), pos) if raw is not None and raw.isdigit() else (pos, pos)

    def walk(el: etree._Element, scrollers: tuple[object, ...], shown: bool) -> None:
        nonlocal paint
        kids = sorted(enumerate(el), key=lambda pk: key(pk[1], pk[0]))
        for _, child in kids:
            if child.get("bounds") is None:
                walk(child, scrollers, shown)
                continue
            paint += 1
            box = tuple(int(v) for v in child.get("bounds").replace("][", ",").strip("[]").split(","))
            visible = shown and child.get("visible-to-user") == "true"
            if child.get("clickable") == "true" or child.get("long-clickable") == "true":
                out.append((doc[child], (box, child.get("text"), visible, paint, scrollers)))
            axis = "x" if "Horizontal" in child.get("class") else "y"
            walk(child, scrollers + ((box, axis),) if child.get("scrollable") == "true" else scrollers, visible)

    walk(root, (), True)
    return [fields for _, fields in sorted(out, key=lambda pair: pair[0])]


@settings(max_examples=60, deadline=None)
@given(st.lists(_trees(), min_size=1, max_size=3))
def test_one_pass_reader_matches_the_definition(tmp_path_factory: pytest.TempPathFactory, roots: list[str]) -> None:
    body = f'{HEAD}<hierarchy rotation="0">{"".join(roots)}</hierarchy>'
    path = write(tmp_path_factory.mktemp("walk"), "w.xml", body)
    expected = _reference(etree.fromstring(body.encode()))
    got = [(t.bounds, t.label, t.visible, t.paint_rank, t.scroll_ancestors) for t in read_screen(path).targets]
    assert got == expected
