"""Many dwell searches at once: their simulations run as batched solver calls.

A *job* is a generator that describes a computation needing simulations (a
search for a dwell, a forward run): it yields a :class:`RunRequest` for each
simulation it needs, receives the :class:`thermal.numeric.SimulationResult`
of that request's members, and finally returns its answer. :func:`run_job`
runs one job, one simulation at a time. :func:`run_jobs` runs many jobs in
lockstep: in each round every job that is waiting has its request collected,
requests that can share a solver call (same shape kind, grid and step counts
per segment) are simulated together in one batched call, and each job gets
its own members back. The finite-volume solver treats every member on its
own and its property tables sit on a fixed temperature lattice, so a job's
answer is the same (to rounding) whether it runs alone or batched with
others, whatever the grouping.

The per-call cost of the solver is mostly Python overhead per time step and
does not grow with the batch, so running the searches of a whole dwell table
this way costs a few dozen solver calls instead of several hundred.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Generator, Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from thermal import numeric

__all__ = ["Job", "JobOutcome", "RunRequest", "run_job", "run_jobs"]


@dataclass(frozen=True)
class RunRequest:
    """One simulation a job needs: ``batch`` members of one product.

    Attributes
    ----------
    product : Product
        The product (``geometry`` and ``properties``), the same for every member.
    initial : float, array or numeric.Profile
        Start temperature [°C] as :func:`thermal.numeric.simulate` takes it
        (uniform, per member, or a profile; a profile of one member serves all).
    segments : tuple of numeric.Segment
        The schedule; each field a scalar or an array of shape ``(batch,)``.
    cells : tuple of int
        Cells per direction [-].
    n_steps : tuple of int
        Time steps per segment [-].
    batch : int
        Number of members [-].
    """

    product: Any
    initial: Any
    segments: tuple[numeric.Segment, ...]
    cells: tuple[int, ...]
    n_steps: tuple[int, ...]
    batch: int = 1


Job = Generator[RunRequest, numeric.SimulationResult, Any]
"""A computation that yields simulation requests and returns its answer."""


@dataclass(frozen=True)
class JobOutcome:
    """What one job of :func:`run_jobs` gave.

    Attributes
    ----------
    value : Any
        The job's return value (None when it raised).
    error : Exception or None
        The exception the job raised, if any.
    warnings : tuple of warnings.WarningMessage
        Warnings issued while the job ran (its own steps and the solver calls
        it took part in).
    """

    value: Any = None
    error: Exception | None = None
    warnings: tuple[warnings.WarningMessage, ...] = ()


def _simulate_one(request: RunRequest) -> numeric.SimulationResult:
    geometry = request.product.geometry
    return numeric.simulate(
        geometry if request.batch == 1 else [geometry] * request.batch,
        request.product.properties,
        request.initial,
        list(request.segments),
        n_cells=request.cells,
        n_steps=request.n_steps,
    )


def run_job(job: Job) -> Any:
    """Run one job to its end, one simulation at a time; return its value.

    Exceptions of the solver are raised inside the job (where it yielded);
    warnings go to the caller as usual.
    """
    try:
        request = next(job)
        while True:
            try:
                result = _simulate_one(request)
            except Exception as exc:  # the job may handle it; else it propagates
                request = job.throw(exc)
            else:
                request = job.send(result)
    except StopIteration as stop:
        return stop.value


def _key(request: RunRequest) -> tuple:
    geometry = request.product.geometry
    axes = tuple(str(a) for a, _ in geometry.directions)
    carried = isinstance(request.initial, numeric.Profile) and request.initial.density is not None
    return (
        str(getattr(geometry, "kind", "+".join(axes))),
        axes,
        request.cells,
        request.n_steps,
        len(request.segments),
        carried,
    )


def _start(request: RunRequest) -> tuple[np.ndarray, np.ndarray | None]:
    """The request's start as cell temperatures (batch, *cells) and carried density."""
    shape = (request.batch, *request.cells)
    init = request.initial
    density = None
    if isinstance(init, numeric.Profile):
        temps = np.asarray(init.temperature, dtype=float)
        if init.density is not None:
            dens = np.asarray(init.density, dtype=float).reshape(-1)
            density = np.broadcast_to(dens, (request.batch,))
    else:
        temps = np.asarray(init, dtype=float)
        if temps.ndim == 1:
            temps = temps.reshape((-1,) + (1,) * len(request.cells))
    if temps.ndim == len(shape) and tuple(temps.shape[1:]) != request.cells:
        temps = numeric.resample(temps, request.cells).temperature
    return np.broadcast_to(temps, shape), density


def _merged_segments(requests: Sequence[RunRequest]) -> list[numeric.Segment]:
    out = []
    for i in range(len(requests[0].segments)):

        def column(name: str, i: int = i) -> np.ndarray:
            parts = []
            for r in requests:
                seg = r.segments[i]
                value = getattr(seg, name)
                if value is None:  # walls at the air temperature
                    value = seg.t_air
                parts.append(np.broadcast_to(np.asarray(value, dtype=float), (r.batch,)))
            return np.concatenate(parts)

        out.append(
            numeric.Segment(
                column("duration"),
                column("t_air"),
                column("h"),
                column("t_wall"),
                column("emissivity"),
            )
        )
    return out


def _simulate_group(requests: Sequence[RunRequest]) -> list[Any]:
    """Results (or exceptions) of requests that share one batched solver call."""
    if len(requests) == 1:
        try:
            return [_simulate_one(requests[0])]
        except Exception as exc:
            return [exc]
    starts = [_start(r) for r in requests]
    temps = np.concatenate([t for t, _ in starts])
    initial: Any = temps
    if starts[0][1] is not None:
        initial = numeric.Profile(temps, np.concatenate([d for _, d in starts]))
    geometry = [r.product.geometry for r in requests for _ in range(r.batch)]
    properties = [r.product.properties for r in requests for _ in range(r.batch)]
    try:
        res = numeric.simulate(
            geometry,
            properties,
            initial,
            _merged_segments(requests),
            n_cells=requests[0].cells,
            n_steps=requests[0].n_steps,
        )
    except Exception:
        # one member's failure must not be everybody's: run them one by one
        return [_simulate_group([r])[0] for r in requests]
    out, start = [], 0
    for r in requests:
        out.append(res.take(slice(start, start + r.batch)))
        start += r.batch
    return out


def run_jobs(
    jobs: Iterable[Job], finished: Callable[[int, JobOutcome], None] | None = None
) -> list[JobOutcome]:
    """Run many jobs in lockstep, their simulations batched; one outcome per job.

    Parameters
    ----------
    jobs : iterable of Job
        Generators yielding :class:`RunRequest` and returning their answer.
    finished : callable, optional
        ``finished(index, outcome)``, called as each job ends.

    Returns
    -------
    list of JobOutcome
        In the order of ``jobs``: the value or the exception of each job and
        the warnings issued while it ran. Exceptions do not stop the others.
    """
    jobs = list(jobs)
    outcomes: list[JobOutcome | None] = [None] * len(jobs)
    caught: list[list[warnings.WarningMessage]] = [[] for _ in jobs]
    waiting: dict[int, RunRequest] = {}

    def advance(i: int, reply: Any) -> None:
        with warnings.catch_warnings(record=True) as seen:
            warnings.simplefilter("always")
            try:
                if reply is None:
                    request = next(jobs[i])
                elif isinstance(reply, Exception):
                    request = jobs[i].throw(reply)
                else:
                    request = jobs[i].send(reply)
            except StopIteration as stop:
                outcomes[i] = JobOutcome(stop.value, None)
            except Exception as exc:
                outcomes[i] = JobOutcome(None, exc)
            else:
                waiting[i] = request
        caught[i].extend(seen)
        done = outcomes[i]
        if done is not None:
            outcomes[i] = JobOutcome(done.value, done.error, tuple(caught[i]))
            if finished is not None:
                finished(i, outcomes[i])

    for i in range(len(jobs)):
        advance(i, None)
    while waiting:
        groups: dict[tuple, list[int]] = {}
        for i, request in waiting.items():
            groups.setdefault(_key(request), []).append(i)
        requests = dict(waiting)
        waiting.clear()
        for members in groups.values():
            with warnings.catch_warnings(record=True) as seen:
                warnings.simplefilter("always")
                results = _simulate_group([requests[i] for i in members])
            for i, result in zip(members, results, strict=True):
                caught[i].extend(seen)
                advance(i, result)
    return [o for o in outcomes if o is not None]
