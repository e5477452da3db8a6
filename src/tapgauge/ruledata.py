"""Where the rule data is: `rules/` beside `src/` in the repository, `tapgauge/rules/` inside the wheel.

Rule sets, profiles, start points, platform units and the annotation class table are data
that a reviewer reads next to their sources, so they sit at the project's top level and the
wheel carries them into the package (pyproject.toml, force-include). A source checkout or an
editable install has no copy inside the package and reads the top-level folder itself.
"""

from __future__ import annotations

from functools import cache
from pathlib import Path


@cache
def rules_dir() -> Path:
    # A folder beside this module, not importlib.resources: tapgauge runs from files on disk (numpy and lxml
    # cannot load from a zip), and importlib.resources (with zipfile and tempfile) made a one-screen check
    # 15-19 ms slower (bench/bench_startup.py).
    here = Path(__file__).resolve().parent
    shipped = here / "rules"
    if shipped.is_dir():
        return shipped
    return here.parents[1] / "rules"
