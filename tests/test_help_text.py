"""--help reads plainly: values named in words (no Python types), nothing cut, at 80 columns."""

from __future__ import annotations

import re

import pytest

from tapgauge.cli import main

COMMANDS = ("check", "baseline", "gate", "journey", "compare", "calibrate", "config", "capture", "rules")


@pytest.mark.parametrize("command", COMMANDS)
def test_help_names_values_in_plain_words(command: str, capsys: pytest.CaptureFixture[str],
                                          monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("COLUMNS", "80")
    assert main([command, "--help"]) == 0
    text = capsys.readouterr().out
    assert not re.search(r"<[a-z][^>]*>", text), "a type placeholder such as <str> or <list[Path]>"
    assert "…" not in text and "..." not in text.replace("PATHS}...", "")  # nothing cut short
    assert all(len(line) <= 80 for line in text.splitlines())
    for line in text.splitlines():  # every option that takes a value names it in capitals or as choices
        m = re.match(r"\s+(?:-\w, )?(--[\w-]+)(?: / --[\w-]+)? ?(\S*)", line)
        if m and m.group(2) and not m.group(2)[0].isupper():
            assert "|" in m.group(2), line


def test_command_list_is_not_cut(capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("COLUMNS", "80")
    main(["--help"])
    text = capsys.readouterr().out
    assert "..." not in text.replace("[ARGS]...", "")
    assert "bundle that check reads." in " ".join(text.split())
