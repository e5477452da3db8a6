"""The baseline and the gate make no fix plans (they read none), and write what they wrote with them.

Plans are the dearest stage of a check (`bench/stage_share.py`): a release pipeline that only gates
should not pay for them. These tests fail if either command makes a plan again, or if leaving plans
out changes a byte of a baseline or a gate record.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from conftest import DEMO

from tapgauge import pipeline
from tapgauge.batch import Run
from tapgauge.cli import main

V1, V2 = DEMO / "releases" / "v1", DEMO / "releases" / "v2"


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    (tmp_path / "tapgauge.toml").write_text('project = "fernwick-allotments"\n')
    monkeypatch.chdir(tmp_path)
    return tmp_path


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
