"""QA reproduction: a fix plan's "move" advice must open the room it says is missing.

Invented screen of a garden-plot booking app. At 160 dpi one dp is one pixel (Android developer
docs, px = dp x dpi / 160), so sizes read directly. The 48 dp minimum is Android Accessibility
Help, "Touch target size" (from memory). Checked with plain arithmetic.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tapgauge.cli import main

HEAD = "<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>"


def _node(bounds: str, kids: str = "", **attrs: str) -> str:
    base = {"index": "0", "text": "", "resource-id": "", "class": "android.view.View",
            "package": "org.hollowmere.plots", "content-desc": "", "checkable": "false", "checked": "false",
            "clickable": "false", "enabled": "true", "focusable": "false", "focused": "false",
            "scrollable": "false", "long-clickable": "false", "password": "false", "selected": "false"}
    base.update({k.replace("_", "-"): v for k, v in attrs.items()})
    a = " ".join(f'{k}="{v}"' for k, v in base.items())
    return f'<node {a} bounds="{bounds}">{kids}</node>' if kids else f'<node {a} bounds="{bounds}" />'


def test_move_advice_does_not_push_into_the_neighbour(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # A 30 dp icon flush with the screen's left edge, a 100 x 48 dp button 4 dp to its right.
    icon = _node("[0,100][30,130]", clickable="true", content_desc="Water plot A1")
    book = _node("[34,100][134,148]", clickable="true", content_desc="Book plot A1")
    (tmp_path / "s.xml").write_text(
        HEAD + '<hierarchy rotation="0">' + _node("[0,0][400,800]", _node("[0,0][400,800]", icon + book))
        + "</hierarchy>", encoding="utf-8")
    (tmp_path / "device.txt").write_text("density: 160\n")
    main(["check", "--format", "json", str(tmp_path / "s.xml")])
    plan = json.loads(capsys.readouterr().out)["screens"][0]["targets"][0]["plan"]
    assert plan["kind"] == "move"
    # Arithmetic: 48 - 30 = 18 dp needed across; 0 dp left of it (screen edge) + 4 dp to the button = 4 dp,
    # so 14 dp missing. Moving the icon itself cannot open room between the screen's edge and the button;
    # moving the button (#2) 14 dp right can: 4 + 14 = 18 dp.
    assert plan["missing"] == 14.0
    assert plan["move"] == {"target": 2, "dx": 14.0, "dy": 0.0}
    assert "move #2 14 dp right" in plan["text"] and "between the screen's edge and #2" in plan["text"]
