"""Calibration against the published Fitts (1954) regression and generated trials."""

from __future__ import annotations

import math
import statistics
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import linregress

from conftest import DATA
from tapgauge.calibrate import WE_FACTOR, calibrate, profile_toml
from tapgauge.cli import main
from tapgauge.profiles import parse_profile

FITTS = DATA / "fitts1954_summary.csv"


def test_fitts_form_reproduces_the_published_regression() -> None:
    # MacKenzie, Handbook of HCI (2018), for Fitts's 1954 stylus data: MT = 12.8 + 94.7 ID,
    # r = .9831 (the published value from memory, not re-read; reproduced here by computation).
    fit = calibrate(FITTS, "fitts")
    assert (round(fit.intercept_ms, 1), round(fit.slope_ms_per_bit, 1), round(fit.r, 4)) == (12.8, 94.7, 0.9831)


def test_shannon_form_matches_scipy() -> None:
    # Oracle: scipy.stats.linregress on the same 16 cells; 27.7 + 111.5 ID, r = .9936 is our own computation
    # on them (no published figure).
    fit = calibrate(FITTS, "shannon")
    ids = [i for i, _ in fit.points]
    times = [t for _, t in fit.points]
    ref = linregress(ids, times)
    assert fit.intercept_ms == pytest.approx(ref.intercept) and fit.slope_ms_per_bit == pytest.approx(ref.slope)
    assert fit.r == pytest.approx(ref.rvalue)
    assert (round(fit.intercept_ms, 1), round(fit.slope_ms_per_bit, 1), round(fit.r, 4)) == (27.7, 111.5, 0.9936)


TRIAL_HEAD = "participant,start_x,start_y,target_x,target_y,width,touch_x,touch_y,time_ms,hit\n"


def test_effective_width_and_mean_of_means_by_hand(tmp_path: Path) -> None:
    # Touches on the task axis (x) only, so dx is the touch's x offset: hand-checkable.
    # ISO 9241-9 effective width: We = 4.133 * SD (n - 1); throughput = mean over participants of
    # mean over conditions of IDe / MT (ISO 9241-9:2000; Soukoreff & MacKenzie, "Towards a standard for
    # pointing device evaluation", Int. J. Human-Computer Studies 61(6), 2004, pp. 751-789: abstract
    # re-read, the formulas and "mean of means" from memory).
    data = {  # (participant, amplitude, width): (touch x offsets, times)
        ("p1", 40, 5): ([-1.0, 0.5, 1.5], [400, 420, 410]),
        ("p1", 80, 5): ([-2.0, 0.0, 1.0], [520, 500, 510]),
        ("p2", 40, 5): ([0.5, -0.5, 1.0], [380, 390, 400]),
        ("p2", 80, 5): ([1.0, -1.0, 2.5], [480, 470, 490]),
    }
    rows = []
    for (who, amp, w), (offs, times) in data.items():
        for off, t in zip(offs, times):
            rows.append(f"{who},0,0,{amp},0,{w},{amp + off},0,{t},1")
    p = tmp_path / "trials.csv"
    p.write_text(TRIAL_HEAD + "\n".join(rows) + "\n")
    fit = calibrate(p)
    tp = {}
    points = {}
    for (who, amp, w), (offs, times) in data.items():
        we = WE_FACTOR * statistics.stdev(offs)
        de = amp + statistics.mean(offs)
        ide = math.log2(de / we + 1)
        mt = statistics.mean(times)
        tp.setdefault(who, []).append(ide / (mt / 1000))
        points.setdefault(amp, []).append((ide, mt))
    assert fit.throughput_bits_per_s == pytest.approx(statistics.mean(statistics.mean(v) for v in tp.values()))
    expected = sorted((statistics.mean(i for i, _ in v), statistics.mean(t for _, t in v)) for v in points.values())
    got = sorted(fit.points)
    assert [v for pt in got for v in pt] == pytest.approx([v for pt in expected for v in pt])
    assert WE_FACTOR == pytest.approx(4.133, abs=5e-4)  # sqrt(2 pi e), ISO 9241-9


def test_spread_parameters_are_recovered_from_generated_trials(tmp_path: Path) -> None:
    # Generated data with known sigma^2 = alpha W^2 + sigma_a^2 (Bi & Zhai's dual-Gaussian form).
    rng = np.random.default_rng(11)
    alpha, sigma_a = 0.02, 1.2
    rows = []
    for w in (4.0, 8.0, 12.0, 16.0):
        sigma = math.sqrt(alpha * w * w + sigma_a**2)
        for amp in (30.0, 60.0):
            for _ in range(600):
                tx, ty = rng.normal(0, sigma, 2)
                ide = math.log2(amp / w + 1)
                rows.append(f"p,0,0,{amp},0,{w},{amp + tx},{ty},{200 + 120 * ide + rng.normal(0, 20)},1")
    p = tmp_path / "trials.csv"
    p.write_text(TRIAL_HEAD + "\n".join(rows) + "\n")
    fit = calibrate(p)
    assert fit.alpha == pytest.approx(alpha, abs=0.006)
    assert fit.sigma_a_mm == pytest.approx(sigma_a, abs=0.2)
    for w, s in fit.spread_by_width:
        assert s == pytest.approx(math.sqrt(alpha * w * w + sigma_a**2), rel=0.08)
    # The written profile loads and carries the fit.
    prof = parse_profile(profile_toml(fit, "study-7", str(p)), "fitted")
    assert prof.id == "study-7" and prof.sigma_a_mm == pytest.approx(fit.sigma_a_mm, abs=1e-3)


@pytest.mark.parametrize(
    ("text", "expect"),
    [
        ("amplitude,width\n2,1\n", "columns missing"),
        ("amplitude,width,time_ms\n2,0,300\n4,1,400\n", "'width' is 0"),
        ("amplitude,width,time_ms\n2,1,300\n", "at least two conditions"),
        ("amplitude,width,time_ms\n2,1,300\n2,1,310\n", "at least two conditions"),
        ("amplitude,width,time_ms\n2,1,nan\n4,1,400\n", "finite number"),
        ("amplitude,width,time_ms\n2,1,fast\n4,1,400\n", "expected a number"),
        (TRIAL_HEAD + "p,0,0,40,0,5,41,0,400,1\np,0,0,80,0,5,81,0,500,1\n", "at least 2 per condition"),
        (TRIAL_HEAD + "p,0,0,0,0,5,1,0,400,1\n", "same point"),
        ("# only a comment\n", "no data"),
    ],
)
def test_bad_trial_logs_are_clear_errors(tmp_path: Path, capsys: pytest.CaptureFixture[str], text: str, expect: str) -> None:
    p = tmp_path / "log.csv"
    p.write_text(text)
    assert main(["calibrate", str(p)]) == 2
    assert expect in capsys.readouterr().err


def test_cli_writes_profile_and_chart(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out, chart = tmp_path / "p.toml", tmp_path / "c.png"
    assert main(["calibrate", str(FITTS), "-o", str(out), "--chart", str(chart), "--name", "stylus-1954"]) == 0
    assert parse_profile(out.read_text(), str(out)).slope_ms_per_bit == pytest.approx(111.54, abs=0.01)
    assert chart.read_bytes().startswith(b"\x89PNG")
    # A fitted profile is usable straight away.
    assert main(["check", str(DATA.parent.parent / "screens_demo" / "ios"), "--profiles", str(out), "-f", "json"]) == 1
