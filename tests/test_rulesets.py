"""Rule sets are data; malformed rule files are errors naming file, line and key."""

from __future__ import annotations

from pathlib import Path

import pytest

from tapgauge.model import InputError, Severity
from tapgauge.rulesets import DEFAULT_RULESETS, builtin_rulesets, parse_ruleset, select_rulesets

GOOD = """
[ruleset]
id = "team"
title = "Our house rule"
source = "internal design review"
url = "https://example.invalid/rules"
platforms = ["android"]

[[rules]]
id = "big"
kind = "min-size"
summary = "Big enough"
severity = "error"
unit = "mm"
size = 7
"""


def test_builtins_carry_published_thresholds_and_sources() -> None:
    sets = builtin_rulesets()
    assert set(DEFAULT_RULESETS) <= set(sets)
    # WCAG 2.2 SC 2.5.8: 24 CSS px with the spacing exception (W3C, published).
    aa = sets["wcag-2.5.8"].rules[0]
    assert (aa.id, aa.param("size"), aa.param("spacing_exception"), aa.severity) == (
        "wcag-2.5.8/size-24", 24.0, True, Severity.ERROR)
    # WCAG 2.2 SC 2.5.5: 44 CSS px, no spacing exception (W3C, published).
    assert sets["wcag-2.5.5"].rules[0].param("size") == 44.0
    # Android accessibility help: 48 dp targets, 8 dp apart (published).
    android = {r.id: r for r in sets["android-guidance"].rules}
    assert android["android-guidance/size-48"].param("size") == 48.0
    assert android["android-guidance/gap-8"].param("gap") == 8.0
    # Apple Human Interface Guidelines, Accessibility, 2025 edition (read second-hand): iOS controls
    # 44 x 44 pt by default, 28 x 28 pt at the least; the minimum warns, the default is a note.
    apple = {r.id: r for r in sets["apple-hig"].rules}
    assert (apple["apple-hig/size-28"].param("size"), apple["apple-hig/size-28"].severity) == (28.0, Severity.WARNING)
    assert (apple["apple-hig/size-44"].param("size"), apple["apple-hig/size-44"].severity) == (44.0, Severity.NOTE)
    # Parhi et al. 2006: 9.2 mm for discrete one-thumb taps (published).
    assert sets["motor-mm"].rules[0].param("size") == 9.2
    for rs in sets.values():
        assert rs.source and rs.url.startswith("http")
        for rule in rs.rules:
            assert rule.source and rule.url


def test_a_user_rule_file_loads(tmp_path: Path) -> None:
    p = tmp_path / "team.toml"
    p.write_text(GOOD)
    (rs,) = select_rulesets([str(p)])
    assert rs.rules[0].id == "team/big" and rs.rules[0].unit == "mm"


@pytest.mark.parametrize(
    ("old", "new", "expect", "line"),
    [
        ('kind = "min-size"', 'kind = "mini"', "rule kind 'mini'", 11),
        ("size = 7", "size = -7", "'size' must be a positive number", 15),
        ("size = 7", 'size = 7\ncolour = "red"', "unknown key 'colour'", 16),
        ('unit = "mm"', 'unit = "in"', "unit 'in'", 14),
        ('severity = "error"', 'severity = "fatal"', "unknown severity", 13),
        ('platforms = ["android"]', 'platforms = ["symbian"]', "ruleset.platforms", 7),
        ("size = 7", "size = 7 7", "not valid TOML", 15),
    ],
)
def test_malformed_rule_files_name_file_line_and_key(old: str, new: str, expect: str, line: int) -> None:
    with pytest.raises(InputError) as info:
        parse_ruleset(GOOD.replace(old, new), "team.toml")
    assert expect in info.value.message
    assert info.value.path == "team.toml" and info.value.line == line


def test_unknown_ruleset_id_lists_the_builtins() -> None:
    with pytest.raises(InputError, match="wcag-2.5.8"):
        select_rulesets(["wcag3"])
