"""The dwell table's cells computed batched: per-cell cache, partial recomputes.

The cells missing from the cache run together as batched solver jobs; a
cell's value must not depend on which other cells run with it.
"""

from __future__ import annotations

import pandas as pd

import optimizer.dwell.table as dwell
from optimizer.dwell.table import build_dwell_table
from tests.test_dwell import FAST, _scenario


def test_a_partial_recompute_computes_only_the_missing_cells_and_gives_the_same_table(
    tmp_path, monkeypatch
):
    cache = tmp_path / "cache"
    full = build_dwell_table(_scenario(), cache_dir=cache, options=FAST, workers=1)
    cooks = sorted(p for p in cache.iterdir() if p.name.startswith("cook-"))
    chills = sorted(p for p in cache.iterdir() if p.name.startswith("chill-"))
    assert len(cooks) == 4 and len(chills) >= 4
    # drop the table, one cook cell (its chill cells stay cached) and two chill cells
    for p in [*cache.glob("table-*.json"), cooks[0], chills[0], chills[-1]]:
        p.unlink()
    computed = {"cook": 0, "chill": 0}
    real_cook, real_chill = dwell._compute_cook, dwell._compute_chill

    def cook(*args):
        computed["cook"] += 1
        return real_cook(*args)

    def chill(*args):
        computed["chill"] += 1
        return real_chill(*args)

    monkeypatch.setattr(dwell, "_compute_cook", cook)
    monkeypatch.setattr(dwell, "_compute_chill", chill)
    again = build_dwell_table(_scenario(), cache_dir=cache, options=FAST, workers=1)
    assert computed == {"cook": 1, "chill": 2}
    # computed with other cells (or alone) than in the full build: the very same numbers
    pd.testing.assert_frame_equal(again, full, check_exact=True)


def test_worker_count_does_not_change_a_single_digit(tmp_path):
    one = build_dwell_table(_scenario(), cache_dir=None, options=FAST, workers=1)
    two = build_dwell_table(_scenario(), cache_dir=None, options=FAST, workers=3)
    pd.testing.assert_frame_equal(one, two, check_exact=True)
