"""Comparing design alternatives on the demo's two designs of the plot page."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge.cli import main

ALT = DEMO / "alternatives"


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, dict]:
    code = main(["compare", *args, "-f", "json"])
    out = capsys.readouterr().out
    return code, (json.loads(out) if out else {})


def test_roomy_design_wins_for_every_profile(capsys: pytest.CaptureFixture[str]) -> None:
    code, rec = run([str(ALT / "compact"), str(ALT / "roomy")], capsys)
    assert code == 0 and rec["screens"] == ["plot_detail.xml"]
    assert [r["better"] for r in rec["ranking"]] == ["B", "B", "B"]
    for r in rec["ranking"]:
        assert r["B"]["mean_miss"] < r["A"]["mean_miss"] and r["B"]["mean_time_ms"] < r["A"]["mean_time_ms"]
    top = rec["differences"][0]
    assert top["A"] == "fail" and top["B"] == "pass"  # the undersized help icon decides it
    assert top["name"] == "What does booking include?"


def test_swapping_sides_swaps_the_verdict(capsys: pytest.CaptureFixture[str]) -> None:
    _, rec = run([str(ALT / "roomy"), str(ALT / "compact")], capsys)
    assert [r["better"] for r in rec["ranking"]] == ["A", "A", "A"]


def test_two_files_and_unpaired_screens(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    a, b = tmp_path / "a", tmp_path / "b"
    shutil.copytree(ALT / "compact", a)
    shutil.copytree(ALT / "roomy", b)
    shutil.copy(DEMO / "android" / "plots.xml", a / "plots.xml")
    _, rec = run([str(a), str(b)], capsys)
    assert rec["only_in_A"] == ["plots.xml"] and rec["only_in_B"] == []
    code, rec = run([str(a / "plot_detail.xml"), str(b / "plot_detail.xml")], capsys)
    assert code == 0 and len(rec["ranking"]) == 3


def test_a_file_against_a_folder_is_an_error(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["compare", str(ALT / "compact" / "plot_detail.xml"), str(ALT / "roomy")]) == 2
    assert "two screen files, or two folders" in capsys.readouterr().err
