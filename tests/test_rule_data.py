"""Rule data lives once, in the top-level rules/ folder, and the wheel carries it into the package."""

from __future__ import annotations

import importlib.metadata
import json
from pathlib import Path

import pytest

from tapgauge.ruledata import rules_dir

ROOT = Path(__file__).resolve().parents[1]
RULES = ROOT / "rules"


def _repo_files() -> set[str]:
    return {p.relative_to(RULES).as_posix() for p in RULES.rglob("*") if p.is_file()}


def test_rule_data_is_at_the_top_level_only() -> None:
    assert {"platforms.toml", "start-points.toml", "annotation-classes.toml"} <= _repo_files()
    assert any(f.startswith("rulesets/") for f in _repo_files()) and any(f.startswith("profiles/") for f in _repo_files())
    assert not (ROOT / "src" / "tapgauge" / "rules").exists()  # no second copy under src/


def test_the_running_tapgauge_reads_every_rule_file() -> None:
    found = set()
    stack = [(rules_dir(), "")]
    while stack:
        folder, prefix = stack.pop()
        for entry in folder.iterdir():
            if entry.is_dir():
                stack.append((entry, f"{prefix}{entry.name}/"))
            elif entry.name.endswith(".toml"):
                found.add(prefix + entry.name)
    assert found == {f for f in _repo_files() if f.endswith(".toml")}


def test_the_installed_wheel_lists_the_rules_files() -> None:
    # What a fresh, non-editable install holds (CI installs this way): the distribution's RECORD
    # (PEP 376 / the wheel spec's RECORD file) names every file of rules/ under tapgauge/rules/.
    dist = importlib.metadata.distribution("tapgauge")
    direct = dist.read_text("direct_url.json")
    if direct and json.loads(direct).get("dir_info", {}).get("editable"):
        pytest.skip("an editable install reads rules/ from the source tree; CI installs the wheel")
    shipped = {str(f).removeprefix("tapgauge/rules/") for f in dist.files or []
               if str(f).startswith("tapgauge/rules/") and "__pycache__" not in str(f)}
    assert shipped == _repo_files()
