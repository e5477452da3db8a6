"""Release gate end to end on the demo's two app versions, plus config, waivers and baselines."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from conftest import DEMO
from tapgauge import pipeline
from tapgauge.batch import Run
from tapgauge.cli import main

V1, V2 = DEMO / "releases" / "v1", DEMO / "releases" / "v2"


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A project folder with a config naming it, as a release pipeline would have."""
    (tmp_path / "tapgauge.toml").write_text('project = "fernwick-allotments"\n')
    monkeypatch.chdir(tmp_path)
    return tmp_path


def gate_json(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, dict]:
    code = main(["gate", *args, "-f", "json"])
    out = capsys.readouterr().out
    return code, (json.loads(out) if out.strip() else {})


def baseline(path: Path, capsys: pytest.CaptureFixture[str], screens: Path = V1) -> None:
    assert main(["baseline", str(screens), "-o", str(path)]) == 0
    capsys.readouterr()


def test_unchanged_release_passes(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    baseline(project / "b.json", capsys)
    doc = json.loads((project / "b.json").read_text())
    assert doc["project"] == "fernwick-allotments" and set(doc["screens"]) == {"booking_form.xml", "plot_detail.xml"}
    assert "bounds" not in json.dumps(doc)  # no coordinates in a baseline
    code, rec = gate_json([str(V1), "-b", str(project / "b.json")], capsys)
    assert code == 0 and rec["regressions"] == [] and rec["gone"] == []


def test_second_release_fails_on_each_documented_regression(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    baseline(project / "b.json", capsys)
    code, rec = gate_json([str(V2), "-b", str(project / "b.json")], capsys)
    assert code == 1
    kinds = {(r["kind"], r["screen"], r["name"]) for r in rec["regressions"]}
    assert ("shrank", "booking_form.xml", "Confirm booking") in kinds  # 56 -> 40 dp
    assert ("new-failure", "plot_detail.xml", "Favourite") in kinds  # a new undersized icon
    assert ("harder", "booking_form.xml", "Confirm booking") in kinds  # predicted misses rose
    shrank = next(r for r in rec["regressions"] if r["kind"] == "shrank")
    assert "from 360 x 56 to 360 x 40 dp" in shrank["message"]
    # The back button lost its label: its fingerprint changed, so the old one is gone (reported only).
    assert [(g["kind"], g["name"]) for g in rec["gone"]] == [("gone-target", "Back")]
    code, rec = gate_json([str(V2), "-b", str(project / "b.json"), "--missing", "fail"], capsys)
    assert any(r["kind"] == "gone-target" for r in rec["regressions"])


def test_going_back_reports_improvements(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    baseline(project / "b2.json", capsys, screens=V2)
    code, rec = gate_json([str(V1), "-b", str(project / "b2.json")], capsys)
    kinds = {r["kind"] for r in rec["improvements"]}
    assert {"fixed", "grew", "easier"} <= kinds
    assert all(r["kind"] != "shrank" for r in rec["regressions"])


def test_duplicates_are_matched_by_count(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Two identical failing icons in the baseline, three now: the third is new.
    def screen(n: int) -> str:
        icons = "".join(f'<node class="android.widget.ImageButton" content-desc="Water" clickable="true" '
                        f'bounds="[{20 * k},0][{20 * k + 20},20]"/>' for k in range(n))
        return f'<hierarchy rotation="0"><node class="F" bounds="[0,0][1080,2000]">{icons}</node></hierarchy>'
    for name, n in (("a", 2), ("b", 3)):
        (project / name).mkdir()
        (project / name / "s.xml").write_text(screen(n))
        (project / name / "device.txt").write_text("density: 160\n")
    (project / "a" / "s.xml").write_text(screen(2))
    baseline(project / "b.json", capsys, screens=project / "a")
    code, rec = gate_json([str(project / "b"), "-b", str(project / "b.json")], capsys)
    assert code == 1
    assert [r["target"] for r in rec["regressions"] if r["kind"] == "new-failure"] == ["label:Water|ImageButton#2"]


@pytest.mark.parametrize("lookahead", [1, 256])
def test_gate_reads_the_baseline_in_any_order(project: Path, capsys: pytest.CaptureFixture[str],
                                              monkeypatch: pytest.MonkeyPatch, lookahead: int) -> None:
    """The baseline is read side by side with the run; its order must not change the verdict."""
    import tapgauge.gate as gate_module

    baseline(project / "b.json", capsys)
    code, expected = gate_json([str(V2), "-b", str(project / "b.json")], capsys)
    doc = json.loads((project / "b.json").read_text())
    doc["screens"] = {"retired.xml": {"targets": []}, **dict(reversed(list(doc["screens"].items())))}
    (project / "r.json").write_text(json.dumps(doc))
    monkeypatch.setattr(gate_module, "LOOKAHEAD", lookahead)  # 1: every screen waits for its partner
    again, got = gate_json([str(V2), "-b", str(project / "r.json")], capsys)
    assert (again, got["regressions"], got["improvements"]) == (code, expected["regressions"], expected["improvements"])
    assert got["gone"] == sorted(expected["gone"] + [
        {"kind": "gone-screen", "screen": "retired.xml", "target": "", "name": "",
         "message": "screen retired.xml is in the baseline but was not checked",
         "fingerprint": next(g["fingerprint"] for g in got["gone"] if g["screen"] == "retired.xml"),
         "rules": [], "path": ""}],
        key=lambda c: (c["screen"], c["target"], c["kind"], c["message"]))


@pytest.mark.parametrize(("content", "expect"), [
    (None, "baseline not found"),
    ("{not json", "not valid JSON"),
    ('{"format": "something-else"}', "not a tapgauge baseline"),
    ('{"format": "tapgauge-baseline", "version": 99, "screens": {}}', "version 99"),
    ('{"format": "tapgauge-baseline", "version": 1, "screens": {"s": {"targets": [{"key": 1}]}}}', "damaged"),
])
def test_bad_baselines_are_errors_not_empty(project: Path, capsys: pytest.CaptureFixture[str], content: str | None,
                                           expect: str) -> None:
    path = project / "b.json"
    if content is not None:
        path.write_text(content)
    assert main(["gate", str(V1), "-b", str(path)]) == 2
    assert expect in capsys.readouterr().err


def test_baseline_never_silently_replaces_another_projects(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = project / "b.json"
    baseline(path, capsys)
    doc = json.loads(path.read_text())
    doc["project"] = "another-app"
    path.write_text(json.dumps(doc))
    assert main(["baseline", str(V1), "-o", str(path)]) == 2
    assert "another-app" in capsys.readouterr().err
    (project / "notes.json").write_text('{"mine": true}')
    assert main(["baseline", str(V1), "-o", str(project / "notes.json")]) == 2
    assert json.loads((project / "notes.json").read_text()) == {"mine": True}
    assert main(["baseline", str(V1), "-o", str(path), "--force"]) == 0
    assert json.loads(path.read_text())["project"] == "fernwick-allotments"


WAIVER = """project = "fernwick-allotments"
[[waivers]]
screen = "screens/plot_detail.xml"
target = "label:What does booking include?"
rule = "wcag-2.5.8/*"
reason = "Equivalent control: the same help opens from the menu (WCAG 2.5.8 equivalent exception)"
author = "Accessibility review, Fernwick committee"
expires = 2027-03-31
"""


def test_waivers_exempt_expire_and_go_stale(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    shutil.copytree(DEMO / "android", project / "screens")
    (project / "tapgauge.toml").write_text(WAIVER + WAIVER.split("\n", 1)[1].replace("What does booking include?", "Nowhere"))
    assert main(["check", "screens/plot_detail.xml", "-f", "json", "--today", "2027-01-01"]) == 0
    rep = json.loads(capsys.readouterr().out)
    help_icon = next(t for t in rep["screens"][0]["targets"] if t["name"] == "What does booking include?")
    # Its WCAG finding is waived; the Android guideline's warnings are not, so it still shows as failing.
    waived = {f["rule"]: bool(f["waiver"]) for f in help_icon["findings"]}
    assert waived["wcag-2.5.8/size-24"] and not waived["android-guidance/size-48"]
    assert help_icon["status"] == "fail" and rep["summary"]["findings"]["error"] == 0
    assert main(["check", "screens/plot_detail.xml", "-f", "json", "--today", "2027-01-01", "--rules", "wcag-2.5.8"]) == 0
    rep = json.loads(capsys.readouterr().out)
    help_icon = next(t for t in rep["screens"][0]["targets"] if t["name"] == "What does booking include?")
    assert help_icon["status"] == "exempt" and "Equivalent control" in help_icon["reason"]
    assert help_icon["findings"][0]["waiver"]["author"] == "Accessibility review, Fernwick committee"
    assert [w["state"] for w in rep["waivers"]] == ["active", "stale"]
    # After the expiry date the waiver stops waiving, and says so.
    assert main(["check", "screens/plot_detail.xml", "-f", "json", "--today", "2027-04-01"]) == 1
    rep = json.loads(capsys.readouterr().out)
    help_icon = next(t for t in rep["screens"][0]["targets"] if t["name"] == "What does booking include?")
    assert help_icon["status"] == "fail"
    assert any("expired on 2027-03-31" in n for n in rep["screens"][0]["notices"])
    assert rep["waivers"][0]["state"] == "expired"


@pytest.mark.parametrize(("toml", "expect"), [
    ('projekt = "x"\n', "config key 'projekt': unknown key"),
    ('rules = "wcag-2.5.8"\n', "config key 'rules': must be a list"),
    ('[gate]\nsize_tolerance = "big"\n', "gate.size_tolerance"),
    ('[[waivers]]\nscreen = "*"\ntarget = "id:x"\nrule = "*"\nauthor = "me"\n', "non-empty 'reason'"),
    ('[[waivers]]\nscreen = "*"\ntarget = "x"\nrule = "*"\nreason = "r"\nauthor = "me"\n', "id:RESOURCE_ID"),
    ('[[waivers]]\nscreen = "*"\ntarget = "id:x"\nrule = "*"\nreason = "r"\nauthor = "me"\nexpires = "soon"\n', "TOML date"),
    ('[[devices]]\ndensity = 420\n', "needs match"),
])
def test_bad_config_is_exit_2_naming_the_key(project: Path, capsys: pytest.CaptureFixture[str], toml: str,
                                            expect: str) -> None:
    (project / "tapgauge.toml").write_text(toml)
    assert main(["check", str(V1)]) == 2
    err = capsys.readouterr().err
    assert expect in err and "tapgauge.toml" in err


def test_device_per_pattern_and_config_command(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    shutil.copy(V1 / "plot_detail.xml", project / "phone.xml")
    (project / "tablet").mkdir()
    shutil.copy(V1 / "plot_detail.xml", project / "tablet" / "t.xml")
    (project / "tapgauge.toml").write_text('project = "p"\n[device]\ndensity = 440\n'
                                           '[[devices]]\nmatch = "tablet/*"\ndensity = 320\n')
    assert main(["check", "phone.xml", "tablet", "-f", "json"]) in (0, 1)
    rep = json.loads(capsys.readouterr().out)
    assert {s["path"]: s["device"]["density_dpi"] for s in rep["screens"]} == {"phone.xml": 440, "tablet/t.xml": 320}
    assert main(["config"]) == 0
    out = capsys.readouterr().out
    assert "device for tablet/*" in out and "density 320" in out and "built-in default" in out


# The baseline and the gate make no fix plans (they read none), and write what they wrote with them.
#
# Plans are the dearest stage of a check (`bench/stage_share.py`): a release pipeline that only gates
# should not pay for them. These tests fail if either command makes a plan again, or if leaving plans
# out changes a byte of a baseline or a gate record.


def _plans_counted(monkeypatch: pytest.MonkeyPatch, force: bool) -> list[int]:
    """Count the plans made (in this process: the commands run with -j 1); with `force`, every report
    asks for plans, as the baseline and the gate did before they left them out."""
    made: list[int] = []
    real_plan, real_report = pipeline.plan_screen, Run.report

    def counted(*args, **kwargs):  # type: ignore[no-untyped-def]
        made.append(1)
        return real_plan(*args, **kwargs)

    monkeypatch.setattr(pipeline, "plan_screen", counted)
    if force:
        monkeypatch.setattr(Run, "report", lambda self, paths, tick, document_only=False, plans=True:
                            real_report(self, paths, tick, document_only, plans=True))
    return made


@pytest.mark.parametrize("screens", [V1, V2])
def test_baseline_and_gate_make_no_plan_and_write_the_same_bytes(
        project: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, screens: Path) -> None:
    outputs: dict[bool, tuple[bytes, str, int]] = {}
    for force in (True, False):
        with monkeypatch.context() as m:
            made = _plans_counted(m, force)
            base = project / f"b-{force}.json"
            assert main(["baseline", str(V1), "-o", str(base), "-j", "1"]) == 0
            capsys.readouterr()
            code = main(["gate", str(screens), "-b", str(base), "-f", "json", "-j", "1"])
            record = capsys.readouterr().out.replace(base.name, "b.json")
            # The demo's releases have targets too small, so a report with plans makes some.
            assert (len(made) > 0) is force
            outputs[force] = (base.read_bytes(), record, code)
    assert outputs[False] == outputs[True]


def test_check_still_plans(project: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> None:
    made = _plans_counted(monkeypatch, force=False)
    main(["check", str(V2), "-f", "json", "-j", "1"])
    assert '"plan"' in capsys.readouterr().out and made
