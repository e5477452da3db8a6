"""Where the rule data is: `rules/` beside `src/` in the repository, `tapgauge/rules/` inside the wheel.

Rule sets, profiles, start points, platform units and the annotation class table are data
that a reviewer reads next to their sources, so they sit at the project's top level and the
wheel carries them into the package (pyproject.toml, force-include). A source checkout or an
editable install has no copy inside the package and reads the top-level folder itself.
"""

from __future__ import annotations

from functools import cache
from importlib import resources
from importlib.resources.abc import Traversable
from pathlib import Path


@cache
def rules_dir() -> Traversable:
    shipped = resources.files("tapgauge").joinpath("rules")
    if shipped.is_dir():
        return shipped
    return Path(__file__).resolve().parents[2] / "rules"
