"""Every format says that the figures support, and do not replace, an audit under local law by a qualified
person: the terminal summary, the JSON report, Markdown, HTML, SARIF and the gate's comment."""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge.cli import main

WORDS = "support, and do not replace, an accessibility audit under the law that applies and by a qualified person"


class _Text(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.parts: list[str] = []
        self.skip = 0

    def handle_starttag(self, tag: str, attrs: list) -> None:  # type: ignore[type-arg]
        self.skip += tag in ("script", "style")

    def handle_endtag(self, tag: str) -> None:
        self.skip -= tag in ("script", "style")

    def handle_data(self, data: str) -> None:
        if not self.skip:
            self.parts.append(data)


def _flat(text: str) -> str:
    return " ".join(text.split())


@pytest.mark.parametrize("fmt", ["table", "json", "md", "html", "sarif"])
def test_every_report_carries_the_disclaimer(fmt: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / f"report.{fmt}"
    main(["check", str(DEMO / "android"), "-f", fmt, "-o", str(out), "--quiet"])
    text = out.read_text(encoding="utf-8")
    if fmt == "json":
        assert WORDS in json.loads(text)["disclaimer"]
    elif fmt == "html":  # visible text, not a comment or an attribute
        parser = _Text()
        parser.feed(text)
        assert WORDS in _flat(" ".join(parser.parts))
    else:
        assert WORDS in _flat(text)


def test_the_gate_comment_carries_it(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                     monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    assert main(["baseline", str(DEMO / "releases" / "v1"), "-o", "b.json"]) == 0
    main(["gate", str(DEMO / "releases" / "v2"), "-b", "b.json", "-f", "md", "-o", "gate.md", "--quiet"])
    assert WORDS in _flat(re.sub(r"\\(.)", r"\1", (tmp_path / "gate.md").read_text()))  # Markdown escapes undone
