"""A target's findings come most severe first, then by rule id: the overlay draws the square of the
first size finding, and tables and reports list them in this order. The checks gather them rule by
rule in that order instead of sorting each target's; this holds them to the order a sort gives.
"""

from __future__ import annotations

import random

from conftest import screen_of

from tapgauge.device import resolve_device
from tapgauge.model import DeviceHints
from tapgauge.pipeline import Settings, check_one_screen
from tapgauge.rulesets import select_rulesets


def test_findings_come_most_severe_first_then_by_rule_id() -> None:
    # The reference is Python's own sort on (most severe first, rule id), the order tapgauge's reports
    # promise (our own order, no published source: common practice for checkers listing findings).
    # Three rule sets of three severities (an error, warnings, a note), seeded layouts of small and
    # crowded boxes at two densities, so that most failing targets break rules of more than one severity.
    settings = Settings(tuple(select_rulesets(["motor-mm", "android-guidance", "wcag-2.5.8"])))
    rng = random.Random(29)
    mixed = 0
    for _ in range(60):
        boxes = []
        for _ in range(rng.randint(2, 40)):
            x, y, w, h = rng.randint(0, 1000), rng.randint(0, 2200), rng.randint(8, 160), rng.randint(8, 160)
            boxes.append((x, y, min(1080, x + w), min(2340, y + h)))
        screen = screen_of(boxes)
        for density in (160, 420):
            device = resolve_device(screen, DeviceHints(density_dpi=density, xdpi=400.0, ydpi=400.0, source="test"))
            for t in check_one_screen(screen, device, settings).targets:
                keys = [(-f.severity, f.rule_id) for f in t.findings]
                assert keys == sorted(keys), (boxes, t.target.number, keys)
                mixed += len({f.severity for f in t.findings}) > 1
    assert mixed > 200, mixed
