"""Sweep execution: serial, local pool and a Dask LocalCluster agree; resume works."""

from __future__ import annotations

import json

import pytest

from optimizer.studies.execute import grid_points, run_points
from tests.sweep_points import square_point


def test_grid_points_order_and_labels():
    pts = grid_points({"x": [1, 2], "y": ["a", "b", "c"]})
    assert [p.index for p in pts] == list(range(6))
    assert pts[0].label == "x=1, y=a"
    assert pts[-1].label == "x=2, y=c"
    assert grid_points({})[0].label == "base"
    assert len({p.key() for p in pts}) == 6


def test_serial_and_pool_identical():
    pts = grid_points({"x": [0, 1, 2, 3], "y": [0.0, 0.5]})
    serial = run_points(pts, square_point, mode="serial")
    pool = run_points(pts, square_point, mode="pool", workers=2)
    assert serial == pool
    assert [r["index"] for r in serial] == list(range(8))


def test_local_cluster_identical_to_serial():
    distributed = pytest.importorskip("distributed")
    pts = grid_points({"x": [0, 1, 2], "y": [0.0, 1.0]})
    serial = run_points(pts, square_point, mode="serial")
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    ) as cluster:
        clustered = run_points(pts, square_point, mode="cluster", cluster=cluster.scheduler_address)
    assert clustered == serial


def test_resume_skips_points_already_done(tmp_path):
    pts = grid_points({"x": [1, 2, 3]})
    calls = []

    def counting(point):
        calls.append(point.index)
        return square_point(point)

    first = run_points(pts[:2], counting, mode="serial", done_dir=tmp_path)
    assert calls == [0, 1]
    again = run_points(pts, counting, mode="serial", done_dir=tmp_path)
    assert calls == [0, 1, 2]
    assert again[:2] == first
    assert len(list(tmp_path.glob("*.json"))) == 3
    # A changed point (same index, other changes) is not taken from the old file.
    changed = grid_points({"x": [1, 2, 30]})
    run_points(changed, counting, mode="serial", done_dir=tmp_path)
    assert calls == [0, 1, 2, 2]
    row = json.loads(sorted(tmp_path.glob("00002-*.json"))[-1].read_text())
    assert "f" in row


def test_cluster_mode_needs_an_address():
    with pytest.raises(ValueError, match="cluster: give a scheduler address"):
        run_points(grid_points({"x": [1]}), square_point, mode="cluster")
