"""Which target is which across two captures of a screen, without using coordinates.

A target's key is its resource id (else its label) with its class, plus its rank
among targets with the same key in document order ("ordinal among equals"). Only
when a target has neither id, label nor class does its position stand in.
"""

from __future__ import annotations

import hashlib

from tapgauge.model import Target


def base_key(t: Target) -> str:
    cls = t.cls.rsplit(".", 1)[-1]
    if t.resource_id:
        return f"id:{t.resource_id.split(':id/', 1)[-1]}|{cls}"
    if t.label:
        return f"label:{t.label}|{cls}"
    if cls:
        return f"class:{cls}"
    l, top, r, b = t.bounds
    return f"at:{l:g},{top:g},{r:g},{b:g}"


def target_keys(targets: tuple[Target, ...] | list[Target]) -> list[str]:
    """Keys unique within one screen ('KEY#N'), stable when targets move or resize."""
    seen: dict[str, int] = {}  # a plain dict: Counter's missing-key path costs a Python call per new key
    keys = []
    for t in targets:
        # base_key's usual case inline (an id or a label): a call per target cost more than the rest
        rid = t.resource_id
        if rid or t.label:
            cls = t.cls.rsplit(".", 1)[-1]
            k = f"id:{rid.split(':id/', 1)[-1]}|{cls}" if rid else f"label:{t.label}|{cls}"
        else:
            k = base_key(t)
        n = seen.get(k, 0)
        keys.append(f"{k}#{n}")
        seen[k] = n + 1
    return keys


def fingerprint(screen_id: str, key: str) -> str:
    """A short stable hash of a target's identity on a screen (no coordinates unless it has nothing else)."""
    return hashlib.sha256(f"{screen_id}\n{key}".encode()).hexdigest()[:20]
