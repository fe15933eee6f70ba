"""A tampered or corrupt dwell cache is never used silently.

Before these checks a ``table-*.json`` edited to a 1-minute cook for a
product was planned with (exit 0), a table holding ``[]`` gave a dwell table
of "0 rows" and one holding ``42`` exited 3. Every entry now carries a
digest of its inputs (its file name) and its values and is checked on
reading; a refused entry is recomputed with a notice; and the cells a plan
uses are computed again from the physics before the plan is reported, so
even an edit that rewrites the digest does not reach a plan.
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import pandas as pd
import pytest
import yaml

import optimizer.dwell.table as dwell
from optimizer.cli import main
from optimizer.dwell.cache import entry_digest
from optimizer.dwell.errors import CacheWarning
from optimizer.dwell.table import build_dwell_table, verify_rows
from optimizer.planning.run import solve_run
from tests.test_dwell import FAST, _one_cell, _scenario
from tests.test_fuzz_scenarios import small_demo


def _entries(cache: Path, kind: str) -> list[Path]:
    return sorted(cache.glob(f"{kind}-*.json"))


def _rewrite(path: Path, change, *, fix_digest: bool) -> None:
    """Edit an entry's value; with ``fix_digest`` rewrite its digest to match, as a forger would."""
    data = json.loads(path.read_text(encoding="utf-8"))
    data["value"] = change(data["value"])
    if fix_digest:
        data["digest"] = entry_digest(data["name"], data["value"])
    path.write_text(json.dumps(data), encoding="utf-8")


def _build(scenario, cache: Path) -> tuple[pd.DataFrame, list[str]]:
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CacheWarning)
        table = build_dwell_table(scenario, cache_dir=cache, options=FAST, workers=1)
    return table, [str(w.message) for w in caught if issubclass(w.category, CacheWarning)]


def _minutes_one(rows):
    for row in rows:
        row.update(cook_min=1.0, chill_min=1.0)
    return rows


@pytest.mark.parametrize(
    ("kind", "change", "why"),
    [
        ("table", _minutes_one, "digest does not match"),
        ("cook", lambda v: {**v, "minutes": 1.0}, "digest does not match"),
        ("chill", lambda v: {**v, "minutes": 1.0}, "digest does not match"),
    ],
)
def test_an_edited_entry_is_refused_and_recomputed(tmp_path, kind, change, why):
    cache = tmp_path / "cache"
    fresh, notes = _build(_one_cell(), cache)
    assert notes == []
    for path in _entries(cache, kind):
        _rewrite(path, change, fix_digest=False)
    if kind != "table":  # the cells are read when the table is not cached
        for path in _entries(cache, "table"):
            path.unlink()
    again, notes = _build(_one_cell(), cache)
    assert len(notes) >= 1 and all(why in n and "recomputed" in n for n in notes), notes
    pd.testing.assert_frame_equal(again, fresh)
    # the recomputed entries replaced the refused ones: a third build is quiet
    assert _build(_one_cell(), cache)[1] == []


@pytest.mark.parametrize("text", ["[]", "42", "{not json", "", '{"entry": 1}', "\udcff"], ids=repr)
def test_a_table_file_that_is_not_an_entry_is_refused(tmp_path, text):
    cache = tmp_path / "cache"
    fresh, _ = _build(_one_cell(), cache)
    (table,) = _entries(cache, "table")
    table.write_text(text, encoding="utf-8", errors="surrogateescape")
    again, notes = _build(_one_cell(), cache)
    assert len(again) == len(fresh) == 1 and len(notes) == 1
    pd.testing.assert_frame_equal(again, fresh)


@pytest.mark.parametrize(
    ("value", "why"),
    [
        ([], "0 rows where the scenario has 1"),
        (42, "a table must be a list of rows"),
        ([{"product": "x"}], "a row without the dwell-table columns"),
    ],
)
def test_a_forged_entry_of_the_wrong_shape_is_refused(tmp_path, value, why):
    cache = tmp_path / "cache"
    fresh, _ = _build(_one_cell(), cache)
    (table,) = _entries(cache, "table")
    _rewrite(table, lambda _: value, fix_digest=True)
    again, notes = _build(_one_cell(), cache)
    assert len(notes) == 1 and why in notes[0], notes
    pd.testing.assert_frame_equal(again, fresh)


def test_a_forged_cook_cell_of_the_wrong_shape_is_refused(tmp_path):
    cache = tmp_path / "cache"
    fresh, _ = _build(_one_cell(), cache)
    (table,) = _entries(cache, "table")
    table.unlink()
    (cook,) = _entries(cache, "cook")
    _rewrite(cook, lambda v: {**v, "minutes": -3.0}, fix_digest=True)
    again, notes = _build(_one_cell(), cache)
    assert len(notes) == 1 and "needs minutes > 0" in notes[0], notes
    pd.testing.assert_frame_equal(again, fresh)


def test_a_forged_table_never_reaches_a_plan(tmp_path):
    """Digest rewritten to match: the table reads, the plan's re-verification catches it."""
    cache = tmp_path / "cache"
    scenario = _scenario()
    fresh, _ = _build(scenario, cache)
    (table,) = _entries(cache, "table")
    _rewrite(table, _minutes_one, fix_digest=True)
    dwell._PHYSICS_CELLS.clear()  # a new process: nothing computed here yet
    forged, notes = _build(scenario, cache)
    assert notes == [] and (forged["cook_min"] == 1.0).all()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CacheWarning)
        path = tmp_path / "scenario.yaml"
        path.write_text("the scenario of tests.test_dwell\n", encoding="utf-8")
        run = solve_run(str(path), scenario, forged)
    notes = [str(w.message) for w in caught if issubclass(w.category, CacheWarning)]
    assert notes and all("is not the physics'" in n for n in notes)
    assert run.result.batches and run.result.runs
    used = run.tables["dwell_used"]
    assert (used["cook_min"] > 1.0).all() and (used["chill_min"] > 1.0).all()
    keys = [*dwell.DWELL_KEYS]
    want = fresh.set_index(keys).loc[used.set_index(keys).index]
    assert used["cook_min"].tolist() == pytest.approx(want["cook_min"].tolist(), rel=1e-9)
    for batch in run.result.batches:
        rows = fresh[(fresh["oven"] == batch.oven) & (fresh["oven_setting"] == batch.setting)]
        products = {c.product for c in batch.contents}
        slowest = rows[rows["product"].isin(products)]["cook_min"].max()
        assert batch.cook_min == pytest.approx(slowest, rel=1e-9)
    # the forged entry is gone and the cells hold the physics again
    assert not _entries(cache, "table")
    dwell._PHYSICS_CELLS.clear()
    healed, notes = _build(scenario, cache)
    assert notes == []
    pd.testing.assert_frame_equal(healed, fresh)


def test_rows_computed_here_are_not_computed_again(tmp_path, monkeypatch):
    scenario = _one_cell()
    table, _ = _build(scenario, None)
    calls = []
    real = dwell._compute_cook
    monkeypatch.setattr(dwell, "_compute_cook", lambda *a: calls.append(a) or real(*a))
    rows = [tuple(r) for r in table[dwell.DWELL_KEYS].itertuples(index=False)]
    assert verify_rows(scenario, table, rows) is None
    assert calls == []


def test_plan_command_notes_a_forged_table_and_plans_from_the_physics(capsys, tmp_path):
    scenario = tmp_path / "small.yaml"
    scenario.write_text(yaml.safe_dump(small_demo()), encoding="utf-8")
    cache = tmp_path / "cache"
    assert main(["plan", str(scenario), "--quiet", "--out", str(tmp_path / "a"),
                 "--cache-dir", str(cache)]) == 0  # fmt: skip
    capsys.readouterr()
    (table,) = _entries(cache, "table")
    _rewrite(table, _minutes_one, fix_digest=True)
    dwell._PHYSICS_CELLS.clear()
    assert main(["plan", str(scenario), "--quiet", "--out", str(tmp_path / "b"),
                 "--cache-dir", str(cache)]) == 0  # fmt: skip
    err = capsys.readouterr().err
    assert "note: dwell cache: beef-patty in rack-oven-1/roast-180" in err
    for name in ("ovens.csv", "tunnels.csv", "dwell.csv"):
        first = (tmp_path / "a" / name).read_text(encoding="utf-8")
        assert (tmp_path / "b" / name).read_text(encoding="utf-8") == first, name
