"""Fit a slope profile from a study's data: per-condition summaries or per-trial logs.

Summaries (one row per condition): `amplitude,width,time_ms`; amplitude and width in
any one unit. The fit is least squares of time on ID, Shannon form by default, or
Fitts's original form for comparison with older studies.

Trials (one row per tap): `start_x,start_y,target_x,target_y,width,touch_x,touch_y,
time_ms,hit`, optionally `participant` and `height`, lengths in mm. Following
ISO 9241-411 practice, each touch is projected on the task axis: with a = |start -
target|, b = |touch - target|, c = |start - touch|, dx = (c^2 - b^2 - a^2) / (2a);
per condition the effective width We = 4.133 * SD(dx) (n - 1) and the effective
distance De = mean(a + dx), so IDe = log2(De / We + 1). Time is regressed on IDe over
the conditions' means; throughput is IDe / MT averaged per participant over
conditions, then over participants (the "mean of means"). The endpoint spread per
width is fitted as sigma^2 = alpha * W^2 + sigma_a^2.
"""

from __future__ import annotations

import csv
import io
import math
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from tapgauge.model import InputError
from tapgauge.profiles import Profile, builtin_profiles
from tapgauge.textfile import read_text

WE_FACTOR = math.sqrt(2 * math.pi * math.e)  # 4.133: We = 4.133 * SD (ISO 9241-9 effective width)
SUMMARY = ("amplitude", "width", "time_ms")
TRIALS = ("start_x", "start_y", "target_x", "target_y", "width", "touch_x", "touch_y", "time_ms", "hit")


@dataclass(frozen=True)
class Fit:
    intercept_ms: float
    slope_ms_per_bit: float
    r: float
    conditions: int
    form: str  # "shannon", "fitts", or "effective" (IDe from trials)
    points: tuple[tuple[float, float], ...]  # (ID, mean time) per condition
    throughput_bits_per_s: float | None = None
    alpha: float | None = None
    sigma_a_mm: float | None = None
    spread_by_width: tuple[tuple[float, float], ...] = ()  # (width mm, sigma mm)

    @property
    def r_squared(self) -> float:
        return self.r**2


def _rows(path: Path) -> tuple[list[str], list[tuple[int, dict[str, str]]]]:
    text = read_text(path, "trial log", encoding="utf-8-sig")
    lines = [(n, ln) for n, ln in enumerate(text.splitlines(), start=1) if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise InputError(path, "no data: expected a CSV header and rows")
    reader = csv.reader(io.StringIO("\n".join(ln for _, ln in lines)))
    try:
        table = list(reader)
    except csv.Error as exc:
        raise InputError(path, f"not readable as CSV: {exc}") from None
    header = [h.strip().lower() for h in table[0]]
    rows = []
    for (n, _), cells in zip(lines[1:], table[1:]):
        rows.append((n, {h: (cells[k].strip() if k < len(cells) else "") for k, h in enumerate(header)}))
    return header, rows


def _number(path: Path, line: int, row: dict[str, str], key: str, positive: bool = False) -> float:
    raw = row.get(key, "")
    try:
        v = float(raw)
    except ValueError:
        raise InputError(path, f"'{key}' is {raw!r}; expected a number", line) from None
    if not math.isfinite(v):
        raise InputError(path, f"'{key}' is {raw!r}; expected a finite number", line)
    if positive and v <= 0:
        raise InputError(path, f"'{key}' is {raw}; it must be above zero", line)
    return v


def _least_squares(x: np.ndarray, y: np.ndarray, path: Path) -> tuple[float, float, float]:
    if len(x) < 2 or np.ptp(x) == 0:
        raise InputError(path, "needs at least two conditions with different indices of difficulty to fit a line")
    b, a = np.polyfit(x, y, 1)
    r = float(np.corrcoef(x, y)[0, 1]) if np.ptp(y) > 0 else 0.0
    return float(a), float(b), r


def fit_summary(path: Path, header: list[str], rows: list[tuple[int, dict[str, str]]], form: str) -> Fit:
    ids, times = [], []
    for line, row in rows:
        amp = _number(path, line, row, "amplitude", positive=True)
        width = _number(path, line, row, "width", positive=True)
        ids.append(math.log2(2 * amp / width) if form == "fitts" else math.log2(amp / width + 1))
        times.append(_number(path, line, row, "time_ms", positive=True))
    a, b, r = _least_squares(np.array(ids), np.array(times), path)
    return Fit(a, b, r, len(ids), form, tuple(zip(ids, times)))


def fit_trials(path: Path, rows: list[tuple[int, dict[str, str]]]) -> Fit:
    cells: dict[tuple[str, float, float], list[tuple[float, float, float, float, float]]] = defaultdict(list)
    offsets: dict[float, list[tuple[float, float]]] = defaultdict(list)
    for line, row in rows:
        sx, sy, tx, ty = (_number(path, line, row, k) for k in ("start_x", "start_y", "target_x", "target_y"))
        w = _number(path, line, row, "width", positive=True)
        hx, hy = _number(path, line, row, "touch_x"), _number(path, line, row, "touch_y")
        t = _number(path, line, row, "time_ms", positive=True)
        a = math.hypot(tx - sx, ty - sy)
        if a == 0:
            raise InputError(path, "start and target are the same point: no movement to measure", line)
        b, c = math.hypot(hx - tx, hy - ty), math.hypot(hx - sx, hy - sy)
        dx = (c * c - b * b - a * a) / (2 * a)
        who = row.get("participant", "") or "all"
        cells[(who, round(a, 3), w)].append((a, dx, t, hx - tx, hy - ty))
        offsets[w].append((hx - tx, hy - ty))
    per_condition: dict[tuple[float, float], list[tuple[float, float]]] = defaultdict(list)  # (A, W) -> (IDe, MT)
    tp: dict[str, list[float]] = defaultdict(list)
    for (who, amp, w), trials in sorted(cells.items()):
        if len(trials) < 2:
            raise InputError(path, f"participant {who}, amplitude {amp:g}, width {w:g} has {len(trials)} trial; "
                                   "the effective width needs at least 2 per condition")
        dxs = np.array([tr[1] for tr in trials])
        we = WE_FACTOR * float(np.std(dxs, ddof=1))
        if we <= 0:
            raise InputError(path, f"participant {who}, amplitude {amp:g}, width {w:g}: every touch landed at the "
                                   "same spot along the task axis, so the effective width is zero")
        de = float(np.mean([tr[0] + tr[1] for tr in trials]))
        ide = math.log2(de / we + 1)
        mt = float(np.mean([tr[2] for tr in trials]))
        per_condition[(amp, w)].append((ide, mt))
        tp[who].append(ide / (mt / 1000))
    points = [(float(np.mean([p[0] for p in v])), float(np.mean([p[1] for p in v]))) for _, v in sorted(per_condition.items())]
    a, b, r = _least_squares(np.array([p[0] for p in points]), np.array([p[1] for p in points]), path)
    throughput = float(np.mean([np.mean(v) for v in tp.values()]))
    alpha, sigma_a, spread = fit_spread(offsets)
    return Fit(a, b, r, len(points), "effective", tuple(points), throughput, alpha, sigma_a, spread)


def fit_spread(offsets: dict[float, list[tuple[float, float]]]) -> tuple[float, float, tuple[tuple[float, float], ...]]:
    """sigma^2 = alpha * W^2 + sigma_a^2 over widths, by least squares; one width gives alpha = 0."""
    spread = []
    for w, pts in sorted(offsets.items()):
        arr = np.array(pts)
        if len(arr) < 2:
            continue
        sigma = math.sqrt((np.var(arr[:, 0], ddof=1) + np.var(arr[:, 1], ddof=1)) / 2)
        spread.append((w, sigma))
    if not spread:
        return 0.0, 0.0, ()
    if len(spread) == 1:
        return 0.0, spread[0][1], tuple(spread)
    w2 = np.array([w * w for w, _ in spread])
    s2 = np.array([s * s for _, s in spread])
    alpha, sa2 = np.polyfit(w2, s2, 1)
    if alpha < 0:  # spread shrinking with size is noise: fall back to a constant spread
        return 0.0, float(math.sqrt(np.mean(s2))), tuple(spread)
    return float(alpha), float(math.sqrt(max(sa2, 0.0))), tuple(spread)


def calibrate(path: Path, form: str = "shannon") -> Fit:
    if form not in ("shannon", "fitts"):
        raise ValueError(f"ID form {form!r}: expected shannon or fitts")
    header, rows = _rows(path)
    if not rows:
        raise InputError(path, "the header has no rows under it")
    if all(k in header for k in TRIALS):
        return fit_trials(path, rows)
    if all(k in header for k in SUMMARY):
        return fit_summary(path, header, rows, form)
    missing_s = [k for k in SUMMARY if k not in header]
    missing_t = [k for k in TRIALS if k not in header]
    raise InputError(path, f"columns missing: for per-condition summaries {', '.join(missing_s)}; "
                           f"for per-trial logs {', '.join(missing_t)}", 1)


def profile_toml(fit: Fit, name: str, source: str, fallback: Profile | None = None) -> str:
    """A profile file for the fit, with its provenance written beside each number.

    A summary file has no touch points; its spread is copied from `fallback`.
    """
    alpha = fit.alpha if fit.alpha is not None else 0.0
    sigma = fit.sigma_a_mm
    lines = [
        f"# Fitted by tapgauge calibrate from {source}: {fit.conditions} conditions, "
        f"ID form {fit.form}, r = {fit.r:.4f}, r^2 = {fit.r_squared:.4f}.",
        "", "[profile]", f'id = "{name}"', f'title = "Fitted from {Path(source).name}"', "", "[timing]",
        f"intercept_ms = {fit.intercept_ms:.2f}", f"slope_ms_per_bit = {fit.slope_ms_per_bit:.2f}",
        f'source = "least squares of time on {fit.form} ID over {fit.conditions} conditions of {Path(source).name}"',
        "", "[spread]",
    ]
    if sigma is None:
        base = fallback or builtin_profiles()["typical-adult"]
        lines += [f"# A summary file has no touch points: the spread is the {base.id} profile's; edit it.",
                  f"alpha = {base.alpha}", f"sigma_a_mm = {base.sigma_a_mm}",
                  f'source = "{base.id} profile (not fitted): {base.spread_source}"']
    else:
        widths = ", ".join(f"{w:g} mm: {s:.2f}" for w, s in fit.spread_by_width)
        lines += [f"# Touch spread by width (sigma, mm): {widths}.", f"alpha = {alpha:.6f}",
                  f"sigma_a_mm = {max(sigma, 1e-3):.3f}",
                  f'source = "sigma^2 = alpha W^2 + sigma_a^2 fitted over {len(fit.spread_by_width)} widths of {Path(source).name}"']
    return "\n".join(lines) + "\n"


def fit_record(fit: Fit, path: Path) -> dict[str, Any]:
    return {
        "file": path.as_posix(), "form": fit.form, "conditions": fit.conditions,
        "intercept_ms": round(fit.intercept_ms, 2), "slope_ms_per_bit": round(fit.slope_ms_per_bit, 2),
        "r": round(fit.r, 4), "r_squared": round(fit.r_squared, 4),
        "throughput_bits_per_s": None if fit.throughput_bits_per_s is None else round(fit.throughput_bits_per_s, 3),
        "alpha": fit.alpha, "sigma_a_mm": None if fit.sigma_a_mm is None else round(fit.sigma_a_mm, 3),
        "points": [{"id_bits": round(i, 4), "time_ms": round(t, 2)} for i, t in fit.points],
    }
