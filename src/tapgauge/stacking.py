"""Which target is drawn over which, and how sure the source lets us be.

Two kinds of evidence, kept apart:

- **Windows.** A dump may hold the app's window beside the on-screen keyboard, the
  system bars and dialogs. Stock dumps list window roots in no set order, so windows
  are stacked by what they are: the app's main window at the bottom, then the app's
  other windows (dialogs, menus), other apps' windows, the keyboard, the system bars.
- **Views in one window.** A view draws before (under) its descendants: certain.
  Between other views, Android's `drawing-order` decides where the dump carries it.
  Without it, document order is weak evidence (elevation and surface views reorder
  what is drawn), so the order is presumed, not known: a target that wholly contains
  another is presumed beneath it, otherwise the later one in the file is on top.
  Rules never fail a target on presumed stacking alone; they say so in a note.
"""

from __future__ import annotations

from collections import Counter
from typing import NamedTuple

import numpy as np

from tapgauge.geometry import (
    FloatArray,
    IntArray,
    Pairs,
    candidate_pairs,
    contains,
    intersection_areas,
)
from tapgauge.model import Box, Screen, Target, Window

# AOSP's status and navigation bars live in this package (the SystemUI app of the platform source).
SYSTEM_PACKAGES = frozenset({"com.android.systemui"})
# Input methods are ordinary apps with no fixed package; these words in a package name mark one
# (common practice: keyboards name their package after what they are).
KEYBOARD_WORDS = ("inputmethod", "keyboard")

# Roles bottom to top; the number is the window's layer.
ROLES = ("app", "dialog", "other app", "keyboard", "system bar")
CHECKED_ROLES = frozenset({"app", "dialog"})


class WindowRole(NamedTuple):
    role: str  # one of ROLES
    layer: int  # larger is drawn over smaller
    bounds: Box
    package: str


def window_roles(screen: Screen, app_package: str | None = None) -> tuple[WindowRole, ...]:
    """Each of the screen's windows with its role and layer.

    The app's package is the one given, else that of the largest window that is neither
    a keyboard nor a system bar (the app fills the screen; its dialogs do not), and of
    equally large ones the one holding more targets.
    """
    windows = screen.windows
    kinds = [_kind(w) for w in windows]
    if app_package is None:  # two full-screen windows (the app and a prompt): the one with more targets
        count = Counter(t.window for t in screen.targets)
        candidates = [(_area(w.bounds), count[k], -k) for k, w in enumerate(windows) if kinds[k] == ""]
        app_package = windows[-max(candidates)[2]].package if candidates else ""
    roles: list[WindowRole] = []
    main = -1
    for k, w in enumerate(windows):
        role = kinds[k]
        if not role:
            if w.package == app_package:
                role = "app"
                if main < 0 or _area(w.bounds) > _area(windows[main].bounds):
                    main = k
            else:
                role = "other app"
        roles.append(WindowRole(role, ROLES.index(role), w.bounds, w.package))
    for k, r in enumerate(roles):  # the app's windows other than its main one are its dialogs and menus
        if r.role == "app" and k != main:
            roles[k] = r._replace(role="dialog", layer=ROLES.index("dialog"))
    return tuple(roles)


def _kind(w: Window) -> str:
    if w.kind == "keyboard":
        return "keyboard"
    if w.package in SYSTEM_PACKAGES:
        return "system bar"
    if any(word in w.package.lower() for word in KEYBOARD_WORDS):
        return "keyboard"
    return ""


def _area(b: Box) -> float:
    return max(0.0, b[2] - b[0]) * max(0.0, b[3] - b[1])


class Blocked(NamedTuple):
    """What windows over a target do to it: hide it (not checked) or cut part of it off."""

    hidden: str = ""  # the reason it is not checked, or ""
    cut: str = ""  # what covers part of it, or ""


_CLEAR = Blocked()


def blocking_window(target: Target, roles: tuple[WindowRole, ...], with_targets: set[int]) -> Blocked:
    """What the windows drawn over a target's own window do to it."""
    if target.window < 0 or not roles:
        return _CLEAR
    mine = roles[target.window]
    l, t, r, b = target.bounds
    cut = ""
    for k, other in enumerate(roles):
        if other.layer <= mine.layer or k == target.window:
            continue
        if other.role in ("dialog", "other app"):
            if k in with_targets:  # a modal window takes every tap while it is open
                where = f"package {other.package}" if other.package else "the app"
                return Blocked(f"behind a dialog window ({where}) at {fmt_box(other.bounds)} that takes the taps "
                               "while open")
            continue
        ol, ot, or_, ob = other.bounds
        il, it, ir, ib = max(l, ol), max(t, ot), min(r, or_), min(b, ob)
        if ir <= il or ib <= it:
            continue
        what = "the on-screen keyboard" if other.role == "keyboard" else "a system bar"
        if il <= l and it <= t and ir >= r and ib >= b:
            return Blocked(f"hidden under {what} at {fmt_box(other.bounds)}")
        cut = cut or f"partly under {what} at {fmt_box(other.bounds)}"
    return Blocked(cut=cut) if cut else _CLEAR


def fmt_box(b: Box) -> str:
    """A box as dumps write bounds: [left,top][right,bottom]."""
    return "[{:g},{:g}][{:g},{:g}]".format(*b)


class Covers(NamedTuple):
    """Overlapping pairs of checked targets: `over` drawn over `under`; `known` when the source says so."""

    under: IntArray
    over: IntArray
    known: np.ndarray


def cover_pairs(boxes: FloatArray, targets: list[Target], roles: tuple[WindowRole, ...],
                among: Pairs | None = None) -> Covers:
    """Every pair of overlapping boxes, which one is on top, and whether that is known or presumed.
    `among`: as in candidate_pairs."""
    i, j = candidate_pairs(boxes, 0.0, among)
    if len(i):
        keep = intersection_areas(boxes[i], boxes[j]) > 0
        i, j = i[keep], j[keep]
    under, over, known = [], [], []
    inside_ij = contains(boxes[i], boxes[j]).tolist() if len(i) else []  # j inside i
    inside_ji = contains(boxes[j], boxes[i]).tolist() if len(i) else []
    for n, (a, b) in enumerate(zip(i.tolist(), j.tolist())):
        ta, tb = targets[a], targets[b]
        b_on_top, sure = _order(ta, tb, roles, inside_ij[n], inside_ji[n])
        under.append(a if b_on_top else b)
        over.append(b if b_on_top else a)
        known.append(sure)
    return Covers(np.array(under, dtype=np.intp), np.array(over, dtype=np.intp), np.array(known, dtype=bool))


def _order(a: Target, b: Target, roles: tuple[WindowRole, ...], b_inside_a: bool, a_inside_b: bool) -> tuple[bool, bool]:
    """(b is drawn over a, the source says so)."""
    if a.window != b.window:
        if roles and roles[a.window].layer != roles[b.window].layer:
            return roles[b.window].layer > roles[a.window].layer, True
    elif a.is_ancestor_of(b) or b.is_ancestor_of(a):
        return a.is_ancestor_of(b), True  # a view draws its descendants over itself
    else:
        for (pa, na), (pb, nb) in zip(a.path, b.path):
            if pa != pb:
                if na and nb:  # both siblings numbered by the source's drawing order
                    return pb > pa, True
                break
    if b_inside_a != a_inside_b:
        return b_inside_a, False  # the one wholly inside the other is presumed on top
    return b.paint_rank > a.paint_rank, False
