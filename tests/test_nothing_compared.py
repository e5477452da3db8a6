"""Nothing compared is never a pass: check, baseline and gate, run by a release engineer on folders
that hold no screens, on screens none of whose targets is checked, and against baselines that do not
belong to the run; and the project name that config and baseline both state."""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest
from conftest import DEMO, dump_node, dump_xml
from PIL import Image

from tapgauge.cli import main

V1 = DEMO / "releases" / "v1"
PKG = "org.fernwick.allotments"


_node = dump_node


def _dump(*nodes: str) -> str:
    return dump_xml(*nodes)


@pytest.fixture
def ci(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A CI workspace: the project's config, and the demo's first release copied in (never the original)."""
    (tmp_path / "tapgauge.toml").write_text('project = "fernwick-allotments"\n')
    shutil.copytree(V1, tmp_path / "v1")
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _junk(folder: Path) -> Path:
    """What a screens folder holds by mistake: notes, a PDF, a text file; none a screen."""
    folder.mkdir()
    (folder / "release-notes.md").write_text("# Plot booking 2.3\n\n- larger buttons\n")
    (folder / "site-plan.pdf").write_bytes(b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n1 0 obj\n<<>>\nendobj\ntrailer\n<<>>\n%%EOF\n")
    (folder / "todo.txt").write_text("photograph plot B7 again\n")
    return folder


@pytest.mark.parametrize("command", ["check", "baseline", "gate"])
def test_an_empty_folder_is_exit_2_saying_it_holds_no_files(ci: Path, capsys: pytest.CaptureFixture[str],
                                                            command: str) -> None:
    (ci / "exports").mkdir()
    if command == "gate":
        assert main(["baseline", "v1", "-o", "b.json"]) == 0
        capsys.readouterr()
    extra = {"check": [], "baseline": ["-o", "new.json"], "gate": ["-b", "b.json"]}[command]
    assert main([command, "exports", *extra]) == 2
    err = capsys.readouterr().err
    assert "no screens to check: exports holds no files" in err
    assert not (ci / "new.json").exists()


@pytest.mark.parametrize("command", ["check", "baseline", "gate"])
def test_a_folder_of_unrelated_files_says_what_it_holds(ci: Path, capsys: pytest.CaptureFixture[str],
                                                        command: str) -> None:
    _junk(ci / "exports")
    if command == "gate":
        assert main(["baseline", "v1", "-o", "b.json"]) == 0
        capsys.readouterr()
    extra = {"check": ["-f", "json"], "baseline": ["-o", "new.json"], "gate": ["-b", "b.json", "-f", "json"]}[command]
    assert main([command, "exports", *extra]) == 2
    out, err = capsys.readouterr()
    flat = " ".join(err.split())
    assert "exports holds 3 file(s)" in flat and "1 .md" in flat and "1 .pdf" in flat and "1 .txt" in flat
    assert "none is a screen export" in flat
    assert not (ci / "new.json").exists()
    if command != "baseline":
        assert json.loads(out)["summary"]["verdict"] == "nothing-compared"


def test_a_lone_picture_without_boxes_is_an_input_error_naming_it(ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # A picture on its own is read as a marked screenshot; a plain one has no boxes to measure.
    (ci / "exports").mkdir()
    Image.new("RGB", (360, 780), (246, 244, 238)).save(ci / "exports" / "plot_photo.png")
    assert main(["check", "exports", "-f", "json"]) == 2
    out, err = capsys.readouterr()
    report = json.loads(out)
    assert report["summary"]["verdict"] == "input-errors"
    assert [e["path"] for e in report["errors"]] == ["exports/plot_photo.png"]
    assert "exports/plot_photo.png" in err and "no marker boxes found" in err and "--marker" in err


def test_baseline_never_writes_zero_screens_and_leaves_an_existing_file_alone(
        ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["baseline", "v1", "-o", "b.json"]) == 0
    before = (ci / "b.json").read_bytes()
    _junk(ci / "exports")
    (ci / "empty").mkdir()
    for folder in ("exports", "empty"):
        assert main(["baseline", folder, "-o", "b.json"]) == 2
        assert "not writing an empty baseline" in capsys.readouterr().err
        assert (ci / "b.json").read_bytes() == before
    assert sorted(p.name for p in ci.iterdir()) == ["b.json", "empty", "exports", "tapgauge.toml", "v1"]  # no temp left


def test_gate_refuses_another_projects_baseline_unless_renamed_from(ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["baseline", "v1", "-o", "b.json"]) == 0
    (ci / "tapgauge.toml").write_text('project = "fernwick-plots"\n')  # the project was renamed
    capsys.readouterr()
    assert main(["gate", "v1", "-b", "b.json"]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""  # no report that could be taken for a verdict
    err = " ".join(captured.err.split())
    assert "recorded for project 'fernwick-allotments', but this is project 'fernwick-plots'" in err
    assert "--renamed-from fernwick-allotments" in err
    assert main(["gate", "v1", "-b", "b.json", "--renamed-from", "fernwick-allotments"]) == 0
    assert main(["gate", "v1", "-b", "b.json", "--renamed-from", "some-other-name"]) == 2


def test_gate_with_no_screen_of_the_run_in_the_baseline_is_exit_2(ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["baseline", "v1", "-o", "b.json"]) == 0
    (ci / "tablet").mkdir()
    shutil.copy(DEMO / "android" / "plots.xml", ci / "tablet" / "plots.xml")
    shutil.copy(DEMO / "android" / "device.txt", ci / "tablet" / "device.txt")
    capsys.readouterr()
    assert main(["gate", "tablet", "-b", "b.json", "-f", "json"]) == 2
    out, err = capsys.readouterr()
    record = json.loads(out)
    assert record["summary"]["verdict"] == "nothing-compared" and record["summary"]["screens"] == 0
    assert "none of the 1 screen(s) checked is in b.json" in " ".join(err.split())
    # JUnit says it as an error case, SARIF as an unsuccessful invocation (SARIF 2.1.0, 3.20.14
    # executionSuccessful; from memory): a CI dashboard does not show it as green.
    assert main(["gate", "tablet", "-b", "b.json", "-f", "sarif", "-o", "g.sarif"]) == 2
    invocation = json.loads((ci / "g.sarif").read_text())["runs"][0]["invocations"][0]
    assert invocation["executionSuccessful"] is False and invocation["exitCode"] == 2
    assert main(["gate", "tablet", "-b", "b.json", "-f", "junit", "-o", "g.xml"]) == 2
    from junitparser import JUnitXml

    assert JUnitXml.fromfile(str(ci / "g.xml")).errors == 1


def _config_project(capsys: pytest.CaptureFixture[str]) -> tuple[str, str]:
    assert main(["config"]) == 0
    out = capsys.readouterr().out
    m = re.search(r"^project\s+(\S+)\s+(.*)$", out, re.MULTILINE)
    assert m, out
    return m.group(1), m.group(2).strip()


def _baseline_project(capsys: pytest.CaptureFixture[str], screens: Path, out: Path) -> str:
    assert main(["baseline", str(screens), "-o", str(out)]) == 0
    said = capsys.readouterr().out
    recorded = json.loads(out.read_text())["project"]
    assert f"project {recorded!r}" in said
    return recorded


def test_config_and_baseline_name_the_project_alike(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                    capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.setenv("COLUMNS", "240")  # a wide log, so that no cell of `config` wraps
    repo = tmp_path / "plot-booking"
    app = repo / "app" / "screens"
    shutil.copytree(V1, app)
    # With `project =`: that name, from the config.
    (repo / "tapgauge.toml").write_text('project = "fernwick-allotments"\n')
    monkeypatch.chdir(repo / "app")
    name, origin = _config_project(capsys)
    assert name == "fernwick-allotments" == _baseline_project(capsys, app, tmp_path / "b1.json")
    assert "tapgauge.toml" in origin
    # Without it: the folder that holds the config, though tapgauge runs in a folder below it.
    (repo / "tapgauge.toml").write_text('fail_level = "error"\n')
    name, origin = _config_project(capsys)
    assert name == "plot-booking" == _baseline_project(capsys, app, tmp_path / "b2.json")
    assert origin.startswith("name of the folder")
    # With no config at all: the folder tapgauge runs in.
    (repo / "tapgauge.toml").unlink()
    monkeypatch.chdir(repo / "app")
    name, _ = _config_project(capsys)
    assert name == "app" == _baseline_project(capsys, app, tmp_path / "b3.json")


def _all_disabled(folder: Path) -> Path:
    """The booking screen while the site is closed for winter: every control greyed out."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "device.txt").write_text("density: 420\n")
    (folder / "plot_detail.xml").write_text(_dump(
        _node(1, (33, 80, 159, 206), desc="Back", cls="android.widget.ImageButton", enabled=False),
        _node(2, (42, 1100, 1038, 1247), text="Book this plot", rid=f"{PKG}:id/book", enabled=False),
        _node(3, (42, 1290, 1038, 1437), text="Join the waiting list", rid=f"{PKG}:id/wait", enabled=False),
    ))
    return folder / "plot_detail.xml"


def test_screens_whose_every_target_is_unchecked_compare_nothing(ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _all_disabled(ci / "winter")
    assert main(["check", "winter", "-f", "json"]) == 2
    out, err = capsys.readouterr()
    summary = json.loads(out)["summary"]
    assert (summary["verdict"], summary["unchecked"], summary["pass"] + summary["fail"]) == ("nothing-compared", 3, 0)
    assert "no target on 1 screen was checked" in err
    assert main(["check", "winter"]) == 2
    assert "none of the 3 targets on this screen was checked (disabled)" in " ".join(capsys.readouterr().out.split())


def test_baseline_of_screens_with_no_checked_target_is_refused(ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    _all_disabled(ci / "winter")
    assert main(["baseline", "winter", "-o", "winter.json"]) == 2
    assert not (ci / "winter.json").exists()


def test_gate_of_a_run_with_no_checked_target_is_exit_2(ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (ci / "winter").mkdir()
    shutil.copy(ci / "v1" / "device.txt", ci / "winter" / "device.txt")
    (ci / "winter" / "plot_detail.xml").write_text(
        (ci / "v1" / "plot_detail.xml").read_text().replace('enabled="true"', 'enabled="false"'))
    assert main(["baseline", "v1/plot_detail.xml", "-o", "b.json"]) == 0
    capsys.readouterr()
    assert main(["check", "winter"]) == 2  # check calls this nothing compared...
    assert main(["gate", "winter", "-b", "b.json"]) == 2  # ...and so should the gate


def test_a_baseline_that_names_no_project_is_not_taken_for_this_one(ci: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["baseline", "v1", "-o", "b.json"]) == 0
    doc = json.loads((ci / "b.json").read_text())
    del doc["project"]
    (ci / "b.json").write_text(json.dumps(doc))
    capsys.readouterr()
    assert main(["gate", "v1", "-b", "b.json"]) == 2
