"""Ids and words renamed in tapgauge 0.2, read under their new names for one version.

0.1 named rule sets after WCAG's conformance levels and rules after phrases other tools
use; 0.2 names them after the success criterion or the size they ask for. A config,
waiver or option that still says an old id keeps working, with a notice naming the new
one. Nothing is ever written with an old id.
"""

from __future__ import annotations

RULE_SETS = {
    "wcag22-aa": "wcag-2.5.8",
    "wcag22-aaa": "wcag-2.5.5",
    "android-guideline": "android-guidance",
    "apple-guideline": "apple-hig",
}
RULES = {
    "wcag22-aa/target-size": "wcag-2.5.8/size-24",
    "wcag22-aaa/target-size-enhanced": "wcag-2.5.5/size-44",
    "android-guideline/touch-size": "android-guidance/size-48",
    "android-guideline/touch-spacing": "android-guidance/gap-8",
    "apple-guideline/hit-size": "apple-hig/size-44",
}


def current(old: str) -> str:
    """A rule-set id, rule id or rule pattern ('wcag22-aa/*') under its current name."""
    if old in RULES:
        return RULES[old]
    head, sep, rest = old.partition("/")
    return RULE_SETS.get(head, head) + sep + rest


def notice(old: str, where: str) -> str | None:
    new = current(old)
    if new == old:
        return None
    return f"{where}: {old!r} is now {new!r}; the old id is read in this version only, so write the new one"
