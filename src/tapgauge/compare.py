"""Compare design alternatives: which is easier to hit, per profile, and which targets decide it.

Two screens, or two folders of the same screens (paired by relative path), are each
checked and scored as `check` does. Per profile, an alternative's figures are the
mean predicted miss probability per tap and the mean predicted time per tap over
all its checked targets; the lower mean miss wins, then the lower mean time.
Pointing difficulty is for comparing alternatives, not an absolute verdict.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from tapgauge.identity import target_keys
from tapgauge.model import InputError, ScreenResult
from tapgauge.pipeline import Settings, run_check
from tapgauge.readers import discover
from tapgauge.report.records import display_path

SHOWN = 8  # targets listed as making the difference


def _pairs(a: Path, b: Path) -> tuple[list[tuple[str, Path, Path]], list[str], list[str]]:
    if a.is_file() and b.is_file():
        return [(a.name if a.name == b.name else f"{a.name} vs {b.name}", a, b)], [], []
    if a.is_dir() and b.is_dir():
        fa, _ = discover([a])
        fb, _ = discover([b])
        ra = {p.relative_to(a).as_posix(): p for p in fa}
        rb = {p.relative_to(b).as_posix(): p for p in fb}
        both = sorted(set(ra) & set(rb))
        return [(k, ra[k], rb[k]) for k in both], sorted(set(ra) - set(rb)), sorted(set(rb) - set(ra))
    raise InputError(f"{a} / {b}", "compare two screen files, or two folders of the same screens")


def _one(path: Path, settings: Settings) -> ScreenResult:
    result = run_check([path], settings)
    if result.errors:
        raise result.errors[0]
    if len(result.screens) != 1:
        raise InputError(path, f"holds {len(result.screens)} screens; compare needs one per file")
    return result.screens[0]


def _figures(screens: list[ScreenResult], profile: str) -> dict[str, Any]:
    times, misses, n = 0.0, 0.0, 0
    has_miss = True
    for sr in screens:
        for t in sr.targets:
            for d in t.difficulty:
                if d.profile == profile:
                    n += 1
                    times += d.time_ms
                    if d.miss is None:
                        has_miss = False
                    else:
                        misses += d.miss
    return {"targets": n, "mean_time_ms": round(times / n, 1) if n else None,
            "mean_miss": round(misses / n, 4) if n and has_miss else None}


def compare(a: Path, b: Path, settings: Settings) -> dict[str, Any]:
    pairs, only_a, only_b = _pairs(a, b)
    if not pairs:
        raise InputError(f"{a} / {b}", "no screen appears on both sides (folders are paired by relative path)")
    sides = [(name, _one(pa, settings), _one(pb, settings)) for name, pa, pb in pairs]
    profiles = [p.id for p in settings.scoring.profiles]
    ranking = []
    for p in profiles:
        fa = _figures([s[1] for s in sides], p)
        fb = _figures([s[2] for s in sides], p)
        key_a = (fa["mean_miss"] if fa["mean_miss"] is not None else 0.0, fa["mean_time_ms"] or 0.0)
        key_b = (fb["mean_miss"] if fb["mean_miss"] is not None else 0.0, fb["mean_time_ms"] or 0.0)
        better = "A" if key_a < key_b else "B" if key_b < key_a else "tie"
        ranking.append({"profile": p, "A": fa, "B": fb, "better": better})
    return {
        "A": display_path(a), "B": display_path(b),
        "screens": [name for name, _, _ in sides], "only_in_A": only_a, "only_in_B": only_b,
        "ranking": ranking,
        "differences": _differences(sides, profiles),
    }


def _differences(sides: list[tuple[str, ScreenResult, ScreenResult]], profiles: list[str]) -> list[dict[str, Any]]:
    """Targets matched across A and B, largest change in miss (else time) for the first profile first."""
    rows: list[dict[str, Any]] = []
    for name, sa, sb in sides:
        ka = dict(zip(target_keys([t.target for t in sa.targets]), sa.targets))
        kb = dict(zip(target_keys([t.target for t in sb.targets]), sb.targets))
        for key in sorted(set(ka) | set(kb)):
            ta, tb = ka.get(key), kb.get(key)
            row: dict[str, Any] = {"screen": name, "key": key,
                                   "name": (ta or tb).target.name if (ta or tb) else key,  # type: ignore[union-attr]
                                   "A": None if ta is None else ta.status, "B": None if tb is None else tb.status,
                                   "by_profile": []}
            for p in profiles:
                da = next((d for d in ta.difficulty if d.profile == p), None) if ta else None
                db = next((d for d in tb.difficulty if d.profile == p), None) if tb else None
                row["by_profile"].append({
                    "profile": p,
                    "miss_A": None if da is None else da.miss,
                    "miss_B": None if db is None else db.miss,
                    "time_A": None if da is None else da.time_ms, "time_B": None if db is None else db.time_ms,
                })
            rows.append(row)

    def weight(row: dict[str, Any]) -> tuple[float, float]:
        first = row["by_profile"][0] if row["by_profile"] else {}
        dm = abs((first.get("miss_A") or 0.0) - (first.get("miss_B") or 0.0))
        dt = abs((first.get("time_A") or 0.0) - (first.get("time_B") or 0.0))
        present = row["A"] or row["B"]
        gone = 1.0 if (row["A"] is None or row["B"] is None) and present != "unchecked" else 0.0
        return (dm + gone, dt)

    rows.sort(key=lambda r: (-weight(r)[0], -weight(r)[1], r["screen"], r["key"]))
    return rows[:SHOWN]
