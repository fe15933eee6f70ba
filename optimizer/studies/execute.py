"""Running many independent plan evaluations: serially, in a local process
pool, or on a Dask distributed cluster, with resume after an interruption.

Every point is evaluated by a top-level function ``func(point) -> dict``
that builds its own model from scenario data inside the worker (PuLP problems
do not travel between processes). Results are returned in point order
whatever order the workers finish in, so serial, pool and cluster runs give
identical tables. When ``done_dir`` is given, each finished point is written
there at once (atomically) and a rerun skips points already done.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import os
import tempfile
from collections.abc import Callable, Iterable, Mapping, Sequence
from concurrent.futures import Executor, ProcessPoolExecutor, as_completed
from dataclasses import dataclass
from enum import StrEnum
from multiprocessing import get_context
from pathlib import Path
from typing import Any

from optimizer.dwell.workers import pool_initializer
from optimizer.scenario.overrides import Change

PointFunc = Callable[["SweepPoint"], dict[str, Any]]


class ExecMode(StrEnum):
    """Where sweep points run."""

    SERIAL = "serial"
    POOL = "pool"
    CLUSTER = "cluster"


@dataclass(frozen=True)
class SweepPoint:
    """One point of a sweep: a label and the changes applied to the base.

    Attributes
    ----------
    index : int
        Position in the sweep (results keep this order).
    label : str
        Readable name, e.g. ``"tunnels.main.length=24 m"``.
    changes : tuple of Change
        Changes applied to the base scenario for this point.
    context : tuple of (str, Any)
        Data every point needs (base scenario path, options), hashable.
    """

    index: int
    label: str
    changes: tuple[Change, ...]
    context: tuple[tuple[str, Any], ...] = ()

    def key(self) -> str:
        """Stable hash of everything that decides this point's result."""
        payload = json.dumps(
            {
                "changes": [
                    (c.path, c.value) if c.op == "set" else (c.op, c.path, c.value, c.copy_of)
                    for c in self.changes
                ],
                "context": [list(kv) for kv in self.context],
            },
            sort_keys=True,
            default=str,
        )
        return hashlib.sha256(payload.encode()).hexdigest()[:16]


def grid_points(
    axes: Mapping[str, Sequence[Any]], context: Mapping[str, Any] | None = None
) -> list[SweepPoint]:
    """Cartesian product of value lists per dotted path, in a stable order.

    The first axis varies slowest. An empty mapping gives one point, the base.
    """
    ctx = tuple(sorted((context or {}).items()))
    paths = list(axes)
    points = []
    for i, values in enumerate(itertools.product(*(axes[p] for p in paths))):
        changes = tuple(Change(p, v) for p, v in zip(paths, values, strict=True))
        label = ", ".join(f"{c.path}={c.value}" for c in changes) or "base"
        points.append(SweepPoint(index=i, label=label, changes=changes, context=ctx))
    return points


def _done_path(done_dir: Path, point: SweepPoint) -> Path:
    return done_dir / f"{point.index:05d}-{point.key()}.json"


def _write_atomic(path: Path, row: Mapping[str, Any]) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=".tmp-", suffix=".json")
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        json.dump(row, fh, sort_keys=True, default=str)
    os.replace(tmp, path)


def _load_done(done_dir: Path, points: Iterable[SweepPoint]) -> dict[int, dict[str, Any]]:
    done = {}
    for p in points:
        f = _done_path(done_dir, p)
        if f.exists():
            done[p.index] = json.loads(f.read_text(encoding="utf-8"))
    return done


def done_indices(points: Iterable[SweepPoint], done_dir: str | Path | None) -> set[int]:
    """Indices of the points already finished in ``done_dir`` (same index and key).

    Parameters
    ----------
    points : iterable of SweepPoint
        Points of the sweep.
    done_dir : str or Path or None
        The folder given to :func:`run_points` (``None``: nothing is done).
    """
    if done_dir is None:
        return set()
    folder = Path(done_dir)
    return {p.index for p in points if _done_path(folder, p).exists()}


def new_pool(workers: int | None = None) -> ProcessPoolExecutor:
    """A local process pool as :func:`run_points` makes it (spawned processes).

    Pass it to several :func:`run_points` calls as ``executor`` to start the
    worker processes once; shut it down when finished. The workers end when
    this process ends (:func:`optimizer.dwell.workers.die_with_parent`), even
    when it is killed.
    """
    initializer, initargs = pool_initializer()
    return ProcessPoolExecutor(
        max_workers=workers,
        mp_context=get_context("spawn"),
        initializer=initializer,
        initargs=initargs,
    )


def run_points(
    points: Sequence[SweepPoint],
    func: PointFunc,
    *,
    mode: ExecMode | str = ExecMode.POOL,
    workers: int | None = None,
    cluster: str | Any | None = None,
    done_dir: str | Path | None = None,
    on_done: Callable[[int, int], None] | None = None,
    executor: Executor | None = None,
) -> list[dict[str, Any]]:
    """Evaluate ``func`` at every point and return the rows in point order.

    Parameters
    ----------
    points : sequence of SweepPoint
        Points to evaluate.
    func : callable
        Top-level (picklable) function of one point returning a JSON-able dict.
    mode : ExecMode or str
        ``"serial"``, ``"pool"`` (local processes) or ``"cluster"`` (Dask).
    workers : int, optional
        Pool size; default the number of CPUs.
    cluster : str or distributed.Client, optional
        Scheduler address (``"tcp://host:8786"``) or a Client, for ``"cluster"``.
    done_dir : str or Path, optional
        Folder keeping one JSON file per finished point; points found there
        (same index and same key) are not evaluated again.
    on_done : callable, optional
        Called as ``on_done(finished, total)`` after each point (progress).
    executor : concurrent.futures.Executor, optional
        For ``"pool"``: a running pool to use (see :func:`new_pool`); it is
        left running. Default: a pool of ``workers`` processes made and shut
        down here.

    Notes
    -----
    When a point raises or the run is interrupted (Ctrl-C), points not yet
    started are cancelled; points already finished stay in ``done_dir``.
    """
    mode = ExecMode(mode)
    folder = Path(done_dir) if done_dir is not None else None
    results: dict[int, dict[str, Any]] = {}
    if folder is not None:
        folder.mkdir(parents=True, exist_ok=True)
        results.update(_load_done(folder, points))
    todo = [p for p in points if p.index not in results]
    total = len(points)

    def finish(point: SweepPoint, row: dict[str, Any]) -> None:
        results[point.index] = row
        if folder is not None:
            _write_atomic(_done_path(folder, point), row)
        if on_done is not None:
            on_done(len(results), total)

    if mode is ExecMode.SERIAL or not todo:
        for p in todo:
            finish(p, func(p))
    elif mode is ExecMode.POOL:
        pool = executor if executor is not None else new_pool(workers)
        futures = {pool.submit(func, p): p for p in todo}
        try:
            for fut in as_completed(futures):
                finish(futures[fut], fut.result())
        except BaseException:
            for fut in futures:
                fut.cancel()
            if executor is None:
                pool.shutdown(wait=False, cancel_futures=True)
            raise
        if executor is None:
            pool.shutdown(wait=True)
    else:
        _run_on_cluster(todo, func, cluster, finish)
    return [results[p.index] for p in points]


def _run_on_cluster(
    todo: Sequence[SweepPoint],
    func: PointFunc,
    cluster: str | Any | None,
    finish: Callable[[SweepPoint, dict[str, Any]], None],
) -> None:
    if cluster is None:
        raise ValueError(
            "cluster: give a scheduler address such as tcp://host:8786 for mode 'cluster'"
        )
    try:
        from distributed import Client
        from distributed import as_completed as dask_completed
    except ImportError:
        raise ValueError(
            "cluster: dask.distributed is not installed; install the 'sweep' extra"
        ) from None
    own = isinstance(cluster, str)
    client = Client(cluster) if own else cluster
    futures: list[Any] = []
    try:
        futures = client.map(func, list(todo), pure=False)
        by_key = {f.key: p for f, p in zip(futures, todo, strict=True)}
        for fut in dask_completed(futures):
            finish(by_key[fut.key], fut.result())
    except BaseException:
        if futures:
            client.cancel(futures)
        raise
    finally:
        if own:
            client.close()
