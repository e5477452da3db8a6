"""One screen checked from the shell loads only what that check needs: no pydantic (typer would import it
to convert options), no rich, no other writers, no worker pool; and the defaults the help writes out
(so that --help loads no numpy) are the ones the code uses."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

from conftest import DEMO

from tapgauge.cli import main
from tapgauge.profiles import DEFAULT_PROFILES
from tapgauge.rulesets import DEFAULT_RULESETS


def _imported(*argv: str) -> set[str]:
    # `python -X importtime` lists every module imported, one line each, on stderr (CPython docs, "-X importtime",
    # from memory).
    out = subprocess.run([sys.executable, "-X", "importtime", "-m", "tapgauge", *argv], capture_output=True, check=False,
                         text=True, timeout=120)
    return {m.group(1).strip() for m in re.finditer(r"^import time:.*\|\s*(\S+)\s*$", out.stderr, re.MULTILINE)}


def test_one_screen_to_json_loads_no_more_than_it_needs(tmp_path: Path) -> None:
    modules = _imported("check", str(DEMO / "android" / "plots.xml"), "-f", "json", "-o", str(tmp_path / "r.json"))
    assert "tapgauge.pipeline" in modules and "numpy" in modules  # the check itself did run
    for unwanted in ("pydantic", "rich", "concurrent.futures", "tapgauge.report.html", "tapgauge.report.sarif",
                     "tapgauge.report.table", "tapgauge.gate", "tapgauge.journeys", "numpy.ma",
                     "importlib.resources"):  # the rule data is a folder beside the code (ruledata.py)
        assert unwanted not in modules, unwanted


def test_version_loads_no_numpy() -> None:
    modules = _imported("--version")
    assert "typer" in modules and "numpy" not in modules and "lxml" not in modules


def test_the_help_writes_out_the_defaults_the_code_uses(capsys) -> None:  # type: ignore[no-untyped-def]
    try:
        main(["check", "--help"])
    except SystemExit:
        pass
    text = "".join(capsys.readouterr().out.split())  # the help wraps lines, also after a hyphen
    assert f"Default:{','.join(DEFAULT_RULESETS)}(" in text
    assert f"Default:{','.join(DEFAULT_PROFILES)}." in text
