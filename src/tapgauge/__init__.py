"""tapgauge: check touch targets on mobile app screens against published minimums.

From Python: `tapgauge.check_source(...)` and `tapgauge.assert_touch_targets(...)` (see
tapgauge.api). They are loaded on first use, so `import tapgauge` and the CLI's start-up
do not pay for the readers and checks they bring in.
"""

from __future__ import annotations

__version__ = "0.1.0"

TYPE_CHECKING = False  # True to type checkers; spares `import typing` at start-up (about 4 ms)
if TYPE_CHECKING:  # what type checkers and IDEs see; at run time __getattr__ loads them
    from typing import Any

    from tapgauge.api import FindingCheck as FindingCheck
    from tapgauge.api import ScreenCheck as ScreenCheck
    from tapgauge.api import Source as Source
    from tapgauge.api import TargetCheck as TargetCheck
    from tapgauge.api import WaiverNote as WaiverNote
    from tapgauge.api import assert_touch_targets as assert_touch_targets
    from tapgauge.api import check_source as check_source
    from tapgauge.model import InputError as InputError

# public name -> module that defines it
_LAZY = {
    "check_source": "tapgauge.api",
    "assert_touch_targets": "tapgauge.api",
    "ScreenCheck": "tapgauge.api",
    "TargetCheck": "tapgauge.api",
    "FindingCheck": "tapgauge.api",
    "WaiverNote": "tapgauge.api",
    "Source": "tapgauge.api",
    "InputError": "tapgauge.model",
}

__all__ = ["FindingCheck", "InputError", "ScreenCheck", "Source", "TargetCheck", "WaiverNote", "__version__",
           "assert_touch_targets", "check_source"]


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'tapgauge' has no attribute {name!r}")
    from importlib import import_module

    value = getattr(import_module(module), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *_LAZY})
