"""`--format jsonl`: JSON Lines (one screen a line, then a closing line), valid against its schema and
holding the same records as the JSON report."""

from __future__ import annotations

import json
from importlib import resources
from pathlib import Path

import jsonschema
import pytest
from conftest import DEMO
from referencing import Registry, Resource

from tapgauge.cli import main


def _schemas() -> tuple[dict, Registry]:
    folder = resources.files("tapgauge").joinpath("schema")
    report = json.loads(folder.joinpath("report-v2.schema.json").read_text())
    lines = json.loads(folder.joinpath("report-lines-v2.schema.json").read_text())
    # The lines schema refers to the report schema's screen record by its file name.
    registry = Registry().with_resources([(name, Resource.from_contents(doc)) for name, doc in (
        ("https://tapgauge.invalid/schema/report-v2.schema.json", report),
        ("https://tapgauge.invalid/schema/report-lines-v2.schema.json", lines))])
    return lines, registry


@pytest.mark.document
def test_json_lines_match_the_json_report_and_their_schema(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(DEMO), "-f", "jsonl", "-o", str(tmp_path / "r.jsonl"), "--quiet"]) == 1
    assert main(["check", str(DEMO), "-f", "json", "-o", str(tmp_path / "r.json"), "--quiet"]) == 1
    text = (tmp_path / "r.jsonl").read_text(encoding="utf-8")
    lines = text.splitlines()
    assert text.endswith("\n") and all(line.strip() for line in lines)  # JSON Lines: one value a line
    values = [json.loads(line) for line in lines]
    report = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))
    *screens, closing = values
    assert screens == report["screens"]
    assert {k: v for k, v in closing.items() if k != "format"} == {k: v for k, v in report.items()
                                                                    if k not in ("format", "screens")}
    assert closing["format"] == "tapgauge-report-lines" and all("format" not in s for s in screens)
    schema, registry = _schemas()
    validator = jsonschema.Draft202012Validator(schema, registry=registry)
    for value in values:
        validator.validate(value)


@pytest.mark.document
def test_json_lines_stream_even_when_nothing_was_read(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "empty").mkdir()
    assert main(["check", str(tmp_path / "empty"), "-f", "jsonl"]) == 2
    (line,) = capsys.readouterr().out.splitlines()
    closing = json.loads(line)
    assert closing["summary"]["verdict"] == "nothing-compared"


@pytest.mark.document
def test_a_label_holding_line_separators_stays_on_its_line(tmp_path: Path) -> None:
    # Labels come from apps: U+2028 and U+0085 are valid in XML and in JSON strings (RFC 8259 leaves
    # them unescaped: only U+0000-U+001F, quote and backslash must be escaped), and a line-by-line reader
    # splits JSON Lines on "\n" only (jsonlines.org); both from memory.
    from conftest import dump_node, dump_xml

    screens = tmp_path / "screens"
    screens.mkdir()
    for k in range(2):
        (screens / f"s{k}.xml").write_text(dump_xml(dump_node(1, (0, 0, 300, 300), text="Plot\u2028B7\u0085 north")),
                                           encoding="utf-8")
    out = tmp_path / "r.jsonl"
    main(["check", str(screens), "-f", "jsonl", "-o", str(out), "--density", "420", "--quiet"])
    lines = out.read_text(encoding="utf-8").split("\n")
    assert lines[-1] == "" and len(lines) == 4  # two screens, the closing line, the final newline
    labels = [t["label"] for line in lines[:2] for t in json.loads(line)["targets"]]
    assert labels == ["Plot\u2028B7\u0085 north"] * 2
