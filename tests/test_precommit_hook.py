"""The pre-commit hook manifest: documented keys, a real console script, the right files.

Checked against the pre-commit documentation, pre-commit.com (sources re-read for this
test, in the site's repository pre-commit/pre-commit.com):
- "Creating new hooks" (sections/new-hooks.md): a hook repository holds a
  `.pre-commit-hooks.yaml`, a list of hooks; `id`, `name`, `entry`, `language` are
  required, the other keys optional, from a fixed table; for `language: python` the
  repository must be pip-installable and `entry` must match an executable it installs,
  "usually through console_scripts";
- "Regular expressions" (sections/advanced.md): `files` and `exclude` are Python regular
  expressions matched with `re.search`;
- "Confining hooks to run at certain stages" (sections/advanced.md): stage names match the
  git hook names since pre-commit 3.2.0.
File names are matched as paths relative to the repository top with '/' separators
(from memory: pre-commit takes them from git, which writes '/').

PyYAML is not a dependency, so the manifest is read by a small parser below that accepts
only the subset the file uses and fails on anything else.
"""

from __future__ import annotations

import re
import tomllib
from typing import Any

from conftest import DEMO, REPO
from tapgauge.cli import main

MANIFEST = REPO / ".pre-commit-hooks.yaml"

# sections/new-hooks.md, the table of hook keys.
REQUIRED = {"id", "name", "entry", "language"}
OPTIONAL = {"files", "exclude", "types", "types_or", "exclude_types", "always_run", "verbose", "pass_filenames",
            "require_serial", "description", "language_version", "minimum_pre_commit_version", "args", "stages"}
# sections/advanced.md, "Supported git hooks", plus the `manual` stage.
STAGES = {"commit-msg", "post-checkout", "post-commit", "post-merge", "post-rewrite", "pre-commit",
          "pre-merge-commit", "pre-push", "pre-rebase", "prepare-commit-msg", "manual"}


def _scalar(text: str) -> Any:
    text = text.strip()
    if text.startswith("'") and text.endswith("'"):
        return text[1:-1].replace("''", "'")  # YAML single quotes: no escapes but ''
    if text.startswith('"') and text.endswith('"'):
        assert "\\" not in text, "the mini parser does not read double-quoted escapes"
        return text[1:-1]
    if text.startswith("[") and text.endswith("]"):
        return [_scalar(v) for v in text[1:-1].split(",") if v.strip()]
    if text in ("true", "false"):
        return text == "true"
    assert not text.startswith(("{", "|", ">", "&", "*", "!")), f"unsupported YAML: {text!r}"
    return text


def read_manifest(text: str) -> list[dict[str, Any]]:
    """A top-level list of flat mappings, one `key: value` per line; anything else fails."""
    hooks: list[dict[str, Any]] = []
    for n, line in enumerate(text.splitlines(), start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        if line.startswith("- "):
            hooks.append({})
            line = "  " + line[2:]
        m = re.fullmatch(r"  ([a-z_]+): (.+)", line)
        assert m and hooks, f"line {n} is outside the subset this test reads: {line!r}"
        assert m[1] not in hooks[-1], f"line {n}: {m[1]} given twice"
        hooks[-1][m[1]] = _scalar(m[2])
    return hooks


def hook() -> dict[str, Any]:
    hooks = read_manifest(MANIFEST.read_text(encoding="utf-8"))
    assert len(hooks) == 1
    return hooks[0]


def matched(path: str) -> bool:
    h = hook()
    return bool(re.search(h["files"], path)) and not re.search(h.get("exclude", "^$"), path)


def test_manifest_uses_documented_keys_only() -> None:
    h = hook()
    assert REQUIRED <= set(h), f"missing: {REQUIRED - set(h)}"
    assert set(h) <= REQUIRED | OPTIONAL, f"not in the documented table: {set(h) - REQUIRED - OPTIONAL}"
    assert h["language"] == "python"
    assert set(h["stages"]) <= STAGES
    # Stage names equal to git hook names need pre-commit 3.2.0 (advanced.md).
    assert tuple(int(v) for v in h["minimum_pre_commit_version"].split(".")) >= (3, 2, 0)


def test_entry_is_a_console_script_of_this_package() -> None:
    scripts = tomllib.loads((REPO / "pyproject.toml").read_text(encoding="utf-8"))["project"]["scripts"]
    exe, *args = hook()["entry"].split()
    assert exe in scripts
    assert args == ["check"]  # the subcommand that takes files, as pre-commit passes them
    assert hook().get("pass_filenames", True) is True  # new-hooks.md: default true, the staged files are passed
    # And that script, given files as pre-commit gives them, runs: the demo has findings (exit 1), not errors (2).
    assert main([*args, str(DEMO / "android" / "plots.xml"), str(DEMO / "ios" / "seed_tray.xml")]) in (0, 1)


def test_files_pattern_takes_screens_not_sidecars_or_pictures() -> None:
    for screen in ("screens_demo/android/plots.xml", "screens_demo/ios/seed_tray.xml",
                   "exports/checkout.json", "exports/Checkout.XML"):
        assert matched(screen), screen
    for other in ("screens_demo/android/device.txt", "screens_demo/android/plots.device.txt",
                  "screens_demo/android/plots.png", "screens_demo/annotated/boxes.csv",
                  "screens_demo/android/plots.xml.bak", "notes/xml.md"):
        assert not matched(other), other


def test_every_demo_file_it_takes_is_one_check_reads(capsys: Any) -> None:
    # What the hook would hand tapgauge on `pre-commit run --all-files` in this repository's demo.
    taken = sorted(p for p in DEMO.rglob("*") if p.is_file() and matched(p.relative_to(REPO).as_posix()))
    assert DEMO / "android" / "plots.xml" in taken and len(taken) >= 10
    assert main(["check", *map(str, taken), "-f", "json"]) in (0, 1)  # 2 would mean a file it cannot read
    capsys.readouterr()
