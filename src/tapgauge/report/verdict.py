"""The run's verdict in words: one sentence that the table, the log, Markdown and HTML all print.

Every format states the same totals and the same verdict at the fail level (the JSON
summary's fields, SARIF's invocation and JUnit's counts carry the numbers).
"""

from __future__ import annotations

from typing import Any

# Where a finding could bear on safety or legal compliance, every format says what the figures are for.
DISCLAIMER = ("These figures support, and do not replace, an accessibility audit under the law that applies "
              "and by a qualified person.")


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def verdict_text(s: dict[str, Any], fail_level: str) -> str:
    """Why the run passed or failed, at its fail level, ending with the exit code."""
    at = f"{fail_level} or above" if fail_level != "error" else "error"
    words = {
        "pass": f"passed: no target has an open finding at {at}",
        "fail": f"failed: {_plural(s['failing'], 'target')} with open findings at {at}",
        "input-errors": f"incomplete: {s['errors']} input(s) could not be read",
        "nothing-compared": "nothing compared: " + (
            "no screen found" if not s["screens"] else f"no target on {_plural(s['screens'], 'screen')} was checked"),
    }[s["verdict"]]
    return f"{words} (exit {s['exit_code']})"


def summary_line(s: dict[str, Any], fail_level: str) -> str:
    """Totals by status and severity, then the verdict."""
    f = s["findings"]
    return (
        f"{_plural(s['screens'], 'screen')}, {_plural(s['targets'], 'target')}: {s['pass']} pass, {s['fail']} fail, "
        f"{s['partial']} partial, {s['exempt']} exempt, {s['unchecked']} unchecked; open findings: "
        f"{f['error']} error, {f['warning']} warning, {f['note']} note; {s['errors']} unreadable; "
        + verdict_text(s, fail_level)
    )
