"""Which target is which across two captures of a screen, without using coordinates.

A target's key is its resource id, else its label, else its class, plus its rank
among targets with the same key in document order ("ordinal among equals"). Only
when a target has none of these does its position stand in.
"""

from __future__ import annotations

from collections import Counter

from tapgauge.model import Target


def base_key(t: Target) -> str:
    if t.resource_id:
        return f"id:{t.resource_id.split(':id/', 1)[-1]}"
    if t.label:
        return f"label:{t.label}"
    if t.cls:
        return f"class:{t.cls.rsplit('.', 1)[-1]}"
    l, top, r, b = t.bounds
    return f"at:{l:g},{top:g},{r:g},{b:g}"


def target_keys(targets: tuple[Target, ...] | list[Target]) -> list[str]:
    """Keys unique within one screen, stable when targets move or resize."""
    seen: Counter[str] = Counter()
    keys = []
    for t in targets:
        k = base_key(t)
        keys.append(f"{k}#{seen[k]}")
        seen[k] += 1
    return keys
