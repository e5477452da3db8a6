"""A tag with no free spot beside its box looks around it first, and judges the spots beside it only
when the nearest spot around covers or crosses something: the spots chosen must be the ones judging
all of them in the first place gives.
"""

from __future__ import annotations

import numpy as np
import pytest

from tapgauge.report import tags
from tapgauge.report.tags import place_tags


@pytest.mark.parametrize("seed", range(4))
def test_spots_beside_a_busy_box_judged_only_when_needed(monkeypatch: pytest.MonkeyPatch, seed: int) -> None:
    # The reference is the arrays' own judging of every spot (tags._Spot's order of costs), with the
    # spots beside the box always judged: _free_beside made to give up on every tag.
    from conftest import tag_layouts

    layouts = tag_layouts(seed, 12, (3, 12, 40, 80))
    taken = {"around only": 0, "beside too": 0}
    free_beside, best = tags._free_beside, tags._Look.best
    last = [None]

    def beside(*args: object) -> object:
        last[0] = free_beside(*args)  # type: ignore[arg-type]
        return last[0]

    def counted(look: tags._Look, corners: np.ndarray, rank: int = 0, columns: int = 0) -> tags._Spot:
        out = best(look, corners, rank, columns)
        if last[0] is tags._BUSY and rank == 1 and columns:  # around a box whose every spot beside is busy
            taken["around only" if out.cost[:7] == (0,) * 7 else "beside too"] += 1
            last[0] = None
        return out

    monkeypatch.setattr(tags, "_free_beside", beside)
    monkeypatch.setattr(tags._Look, "best", counted)
    quick = [place_tags(b, s, a, gap=g, clear=c) for b, s, a, (g, c) in layouts]
    assert taken["around only"] and taken["beside too"]  # both ways were taken
    monkeypatch.setattr(tags, "_free_beside", lambda *args: None)
    assert quick == [place_tags(b, s, a, gap=g, clear=c) for b, s, a, (g, c) in layouts]
