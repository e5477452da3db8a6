"""Report schema v2: every number says its unit, the approach once per target, nothing derivable twice,
numbers as users see them; and baselines of version 1 read under the new names, never misread."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge.cli import main


@pytest.fixture(scope="module")
def demo() -> dict:
    import subprocess
    import sys

    out = subprocess.run([sys.executable, "-m", "tapgauge", "check", str(DEMO), "-f", "json", "--quiet"],
                         capture_output=True, text=True, timeout=300)
    return json.loads(out.stdout)


def test_version_2_with_its_disclaimer(demo: dict) -> None:
    assert (demo["format"], demo["version"]) == ("tapgauge-report", 2)
    assert "do not replace" in demo["disclaimer"]


def test_reach_states_the_unit_of_its_start_and_of_approach_lengths(demo: dict) -> None:
    for s in demo["screens"]:
        reach = s["reach"]
        assert reach["unit"] == s["device"]["unit"]  # x, y in dp or pt
        assert reach["approach_unit"] == ("mm" if s["device"]["xdpi"] else s["device"]["unit"])
        if reach["from"] == "centre":  # the centre of the screen, in the platform unit
            k = s["device"]["coords_per_unit"]
            assert math.isclose(reach["x"], s["width"] / 2 / k, abs_tol=0.01)
            assert math.isclose(reach["y"], s["height"] / 2 / k, abs_tol=0.01)


def test_the_approach_once_per_target_and_only_what_differs_per_profile(demo: dict) -> None:
    profiles = {p["id"]: p for p in demo["profiles"]}
    seen = 0
    for s in demo["screens"]:
        for t in s["targets"]:
            if t["status"] == "unchecked":
                assert not {"approach", "time_ms", "miss_probability"} & set(t)  # absent, not null
                continue
            a = t["approach"]
            # Shannon form, ID = log2(D / W + 1) (MacKenzie 1992), from the stored width and distance.
            assert math.isclose(a["id_bits"], math.log2(a["distance"] / a["width"] + 1), abs_tol=2e-4)
            # One time and one miss per profile, in the order of the report's profiles; hit = 1 - miss is not stored.
            assert len(t["time_ms"]) == len(t["miss_probability"]) == len(profiles)
            for p, time_ms in zip(profiles.values(), t["time_ms"]):
                assert math.isclose(time_ms, p["intercept_ms"] + p["slope_ms_per_bit"] * a["id_bits"], abs_tol=0.02)
                seen += 1
    assert seen > 100


def test_numbers_as_every_output_shows_them(demo: dict) -> None:
    for s in demo["screens"]:
        assert [t["number"] for t in s["targets"]] == list(range(1, len(s["targets"]) + 1))


def test_a_version_1_baseline_is_read_under_the_new_names(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                        monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    assert main(["baseline", str(DEMO / "releases" / "v1"), "-o", "b.json"]) == 0
    capsys.readouterr()
    doc = json.loads((tmp_path / "b.json").read_text())
    # What tapgauge 0.1 wrote: version 1, failures at its fail level only, old rule ids, no approach.
    old_ids = {"wcag-2.5.8/size-24": "wcag22-aa/target-size", "android-guidance/size-48": "android-guideline/touch-size",
               "android-guidance/gap-8": "android-guideline/touch-spacing"}
    doc["version"] = 1
    del doc["failing_from"]
    for entry in doc["screens"].values():
        for t in entry["targets"]:
            t["failing"] = [old_ids[r] for r in t["failing"] if r.startswith("wcag")]
            t.pop("approach")
    (tmp_path / "v1.json").write_text(json.dumps(doc))
    code_new = main(["gate", str(DEMO / "releases" / "v2"), "-b", "b.json", "-f", "json", "--quiet"])
    new = json.loads(capsys.readouterr().out)
    code_old = main(["gate", str(DEMO / "releases" / "v2"), "-b", "v1.json", "-f", "json", "--quiet"])
    captured = capsys.readouterr()
    old = json.loads(captured.out)
    assert "written by tapgauge 0.1" in captured.err
    assert code_old == code_new == 1
    fails = lambda r: sorted((c["screen"], c["target"]) for c in r["regressions"] if c["kind"] == "new-failure")  # noqa: E731
    assert fails(old) == fails(new)  # the old ids were not taken for new failures
    # At a lower fail level than the one a version-1 baseline kept, it is refused, not misread.
    assert main(["gate", str(DEMO / "releases" / "v2"), "-b", "v1.json", "--fail-level", "warning"]) == 2
    assert "re-record it" in capsys.readouterr().err
