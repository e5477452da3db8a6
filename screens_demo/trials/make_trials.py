"""Generate the demo's invented tap study: a per-trial log for `tapgauge calibrate`.

The study is made up. "Fernwick Allotments" (the demo's invented garden-plot app) tested
its booking buttons with six invented members tapping targets on a phone; no person or
device took part. Every number is drawn from a seeded generator around the model below,
so `tapgauge calibrate` should give back these parameters, within sampling error:

- touch spread per axis, sigma^2 = ALPHA * W^2 + SIGMA_A^2 (mm);
- effective width We = 4.133 * sigma (ISO 9241-9), IDe = log2(A / We + 1);
- time per tap = INTERCEPT + SLOPE * IDe + a participant's offset + noise (ms).

Taps go back and forth along the screen's long axis between two targets A apart, so each
start is the previous target's centre. Run from anywhere: `python screens_demo/trials/make_trials.py`.
The output is named .log, not .csv: `tapgauge check screens_demo` reads every .csv in the
folder as annotation boxes.
"""

from __future__ import annotations

import math
import random
from pathlib import Path

HERE = Path(__file__).resolve().parent
OUT = HERE / "tap_study.log"
SEED = 20240611

INTERCEPT_MS = 200.0  # a
SLOPE_MS_PER_BIT = 150.0  # b
ALPHA = 0.01  # spread growing with target size
SIGMA_A_MM = 1.5  # the finger's own spread
TIME_SD_MS = 80.0  # tap-to-tap scatter
PARTICIPANT_SD_MS = 20.0  # people differ in their constant part
WE_FACTOR = math.sqrt(2 * math.pi * math.e)  # 4.133

AMPLITUDES_MM = (15.0, 40.0, 100.0)
WIDTHS_MM = (4.0, 7.0, 12.0)
PARTICIPANTS = 6
TRIALS_PER_CONDITION = 15
ORIGIN = (35.0, 25.0)  # the upper target's centre, mm from the screen's top-left

HEADER = ("participant", "start_x", "start_y", "target_x", "target_y", "width", "touch_x", "touch_y",
          "time_ms", "hit")


def sigma_mm(width: float) -> float:
    return math.sqrt(ALPHA * width * width + SIGMA_A_MM**2)


def ide_true(amplitude: float, width: float) -> float:
    """The condition's index of difficulty with the population's effective width."""
    return math.log2(amplitude / (WE_FACTOR * sigma_mm(width)) + 1)


def _normal(rng: random.Random, sd: float) -> float:
    """A normal draw from rng.random() alone (Box-Muller): the one stream Python keeps stable."""
    u1, u2 = 1.0 - rng.random(), rng.random()
    return sd * math.sqrt(-2 * math.log(u1)) * math.cos(2 * math.pi * u2)


def trials(seed: int = SEED) -> list[tuple[str, ...]]:
    rng = random.Random(seed)
    rows: list[tuple[str, ...]] = []
    for p in range(1, PARTICIPANTS + 1):
        who, offset = f"P{p:02d}", _normal(rng, PARTICIPANT_SD_MS)
        for amp in AMPLITUDES_MM:
            for width in WIDTHS_MM:
                ends = (ORIGIN, (ORIGIN[0], ORIGIN[1] + amp))
                for k in range(TRIALS_PER_CONDITION):
                    (sx, sy), (tx, ty) = ends[k % 2], ends[1 - k % 2]
                    dx, dy = _normal(rng, sigma_mm(width)), _normal(rng, sigma_mm(width))
                    t = INTERCEPT_MS + SLOPE_MS_PER_BIT * ide_true(amp, width) + offset + _normal(rng, TIME_SD_MS)
                    hit = abs(dx) <= width / 2 and abs(dy) <= width / 2  # square targets
                    rows.append((who, f"{sx:.2f}", f"{sy:.2f}", f"{tx:.2f}", f"{ty:.2f}", f"{width:g}",
                                 f"{tx + dx:.2f}", f"{ty + dy:.2f}", f"{max(t, 1.0):.0f}", "1" if hit else "0"))
    return rows


def text(seed: int = SEED) -> str:
    head = [
        "# INVENTED DATA for the tapgauge demo: no person took part. Written by",
        f"# screens_demo/trials/make_trials.py (seed {seed}): MT = {INTERCEPT_MS:g} + {SLOPE_MS_PER_BIT:g} IDe ms,",
        f"# touch spread sigma^2 = {ALPHA:g} W^2 + {SIGMA_A_MM:g}^2 mm. Lengths in mm, times in ms.",
        ",".join(HEADER),
    ]
    return "\n".join(head + [",".join(r) for r in trials(seed)]) + "\n"


def main() -> None:
    OUT.write_text(text(), encoding="utf-8")


if __name__ == "__main__":
    main()
