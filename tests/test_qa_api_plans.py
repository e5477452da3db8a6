"""QA reproduction: check_source on content (XML text) must give the same record as on a path,
fix plans included (README "From Python tests": `record` is the screen's record exactly as
`tapgauge check -f json` holds it).

Invented garden-plot booking screen. At 160 dpi one dp is one pixel (Android developer docs,
px = dp x dpi / 160). A 30 x 30 dp icon alone on the screen fails Android's 48 dp guidance
(Android Accessibility Help, "Touch target size", from memory) and has room all round to grow.
"""

from __future__ import annotations

from pathlib import Path

import pytest

import tapgauge

DUMP = """<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>
<hierarchy rotation="0">
<node index="0" text="" resource-id="" class="android.widget.FrameLayout" package="org.hollowmere.plots" content-desc="" checkable="false" checked="false" clickable="false" enabled="true" focusable="false" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[0,0][400,800]">
<node index="0" text="" resource-id="" class="android.widget.ImageButton" package="org.hollowmere.plots" content-desc="Water plot A1" checkable="false" checked="false" clickable="true" enabled="true" focusable="true" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[185,385][215,415]" />
</node>
</hierarchy>
"""


def test_content_source_gets_the_same_plan_as_a_path(tmp_path: Path) -> None:
    path = tmp_path / "water.xml"
    path.write_text(DUMP, encoding="utf-8")
    from_path = tapgauge.check_source(path, density=160)
    from_text = tapgauge.check_source(DUMP, density=160)
    plan_path = from_path.record["targets"][0]["plan"]
    assert plan_path is not None and plan_path["kind"] == "grow"  # sanity: the path source is planned
    # 48 - 30 = 18 dp to add across and down, 9 dp a side with 185 dp of room each way (arithmetic).
    assert plan_path["bounds"] == [176.0, 376.0, 224.0, 424.0]
    assert from_text.record["targets"][0]["plan"] == plan_path
