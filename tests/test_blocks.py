"""Sizing in blocks (to bound the memory of a large schedule) gives what sizing at once gives.

The engine solves the (case, candidate) pairs in chunks of :data:`lagsheet.physics.candidates.CHUNK`
and prices the candidates in blocks of :data:`lagsheet.design.build.COST_PAIRS`; every line's
numbers are its own, so the smallest blocks (one line, seven pairs) must give every reported
value, word, note, chosen system, target thickness and margin exactly as the defaults do.
"""

from __future__ import annotations

import numpy as np
import pytest

from lagsheet.design import build
from lagsheet.design.select import specify
from lagsheet.physics import candidates
from test_search import _schedule

from conftest import assert_same_results


@pytest.fixture(scope="module")
def both(tmp_path_factory):
    inputs = _schedule(tmp_path_factory.mktemp("blocks") / "random.xlsx", 400, seed=31)
    whole = specify(inputs)
    old = candidates.CHUNK, build.COST_PAIRS
    candidates.CHUNK, build.COST_PAIRS = 7, 1
    try:
        small = specify(inputs)
    finally:
        candidates.CHUNK, build.COST_PAIRS = old
    return whole, small


def test_the_schedule_has_economic_lines(both):
    whole, _ = both
    assert any(str(g).startswith("economic") for g in whole.values["governing"])
    assert np.isfinite(whole.values["installed_cost"]).sum() >= 30


def test_small_blocks_give_every_value_of_one_block(both):
    whole, small = both
    assert_same_results(small, whole)
