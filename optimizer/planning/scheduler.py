"""The timed shift schedule: a deterministic list scheduler over a solved plan.

:func:`schedule_plan` places every batch of a :class:`~optimizer.planning.results.PlanResult`
in time, shift by shift, and feeds its product onto the tunnel belts; what
cannot be placed under the rules is reported as
:class:`~optimizer.planning.schedule.Unplaced` with the rule that stopped it.

How it works
------------
1. Whole trays. For each planned batch line (oven, shift, load, ``n``
   batches) the kg of each product become ``floor(kg / kg_per_tray)`` whole
   trays, spread as evenly as possible over the ``n`` batches (never more
   than the load's trays per batch); the kg follow from the trays. The
   trays of each (product, oven, oven setting) are shared over the plan's
   tunnel routes in proportion to the routes' kg (largest remainder), batch
   by batch.
2. Order. Each oven gets a list of its batches; the lists follow one order
   of the tunnel runs (product at a tunnel setting), so ovens that share a
   tunnel feed the same run at about the same time. Run orders tried: the
   slowest residence first, the fastest first, as planned and by kg; each
   in four modes (:data:`MODES`: the tunnel may or may not have to finish a
   run before it starts the next; an oven runs its list in order or may
   pick one of its next three different batches that feeds sooner); then
   swaps of neighbouring runs in the best order while they help. At most
   ``ScheduleOptions.trials`` simulations per shift (a work limit, not a
   time limit); the one placing the most value (kg for objectives other
   than most value) is kept, ties to the earliest feeds.
3. Placement. Repeatedly, of the next batch of every oven, the one whose
   first feed can start earliest is placed (ties: earliest unload, then
   plant order, then list position). A batch starts as soon as its oven is free (after a
   setting changeover and clear of stops), unless its product would wait
   longer than the hot-hold limit for a busy belt: then its start is
   delayed just enough. When even an idle belt cannot take the whole batch
   within the hot-hold window, the batch runs with the trays that fit and
   the rest is unplaced (rule ``hot_hold``); likewise when the belt could
   not clear the whole batch by the shift end (rule ``shift_end``). A batch
   that does not fit in its oven's minutes is unplaced (``oven_minutes``).
   In a mixed batch the product of the run the tunnel is on goes first.
4. Belt. Each tunnel is simulated exactly (:mod:`optimizer.planning.belt`):
   the belt runs at the slowest speed the pieces on it allow, so a speed-up
   waits until slower pieces have left. A change of tunnel air setting
   waits until the belt is empty, then costs the tunnel's changeover; a
   change of product at the same setting costs the changeover after the
   previous feed. A stop of the tunnel needs an empty belt.

Rules kept (each is checked again by the test suite's own checker)
-------------------------------------------------------------------
* Ovens: batches, changeovers and stops never overlap; a setting change
  between consecutive batches costs the oven's changeover (the first setting
  of a shift is free); every batch unloads within the oven's minutes.
* Hot hold: every tray of a batch goes onto the belt no sooner than the
  tunnel's transfer minutes and no later than the hot-hold limit after the
  batch's unload end (the product's limit and the tunnel's, whichever is
  shorter). The feed rate is the belt speed times the loading (kg per m of
  belt), so a slow belt feeds a batch slowly.
* The chill starts from the actual wait: the dwell table's chill cells are
  computed with the shortest wait (the transfer) and checked with the
  longest (the tunnel's hot-hold limit), so they hold for any wait in
  between, which is the only range the schedule uses. Where a tunnel has no
  hot-hold limit of its own, the cells cover only the transfer wait; the
  schedule then still keeps every wait within the product's limit and says
  so in :attr:`Schedule.notes`.
* Belt: every piece's residence, integrated from the speed profile from its
  entry to its exit, is at least the residence its route needs.
* Shift ends: a belt is empty at the end of its shift, unless the shifts run
  back to back (:attr:`PlanInputs.back_to_back`); then pieces may carry
  into the next shift (the feed's ``last_exit`` passes the shift length and
  the timelines carry kg out and in). The last shift always clears.
* Stops: a stop with a start time is placed there; the others are placed at
  the start of their machine's span (the belt is idle until the first batch
  is cooked anyway), in the order given.

Everything is deterministic: no randomness, no clock; ties break on keys.

Units: minutes [min] from the start of each shift, kg, m, m/min.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass, replace

from optimizer.planning.belt import EPS, Belt
from optimizer.planning.inputs import Objective, OvenData, PlanInputs, ShiftData, TunnelData
from optimizer.planning.results import PlanResult, TunnelRun
from optimizer.planning.schedule import (
    BeltPiece,
    Changeover,
    Feed,
    Schedule,
    SettingSpan,
    ShiftSchedule,
    Stop,
    TimedBatch,
    TraysOf,
    TunnelTimeline,
    Unplaced,
)

__all__ = ["ScheduleOptions", "schedule_plan"]


@dataclass(frozen=True)
class ScheduleOptions:
    """How hard the scheduler searches.

    Parameters
    ----------
    trials : int
        Most run orders tried per shift (a work limit; the result does not
        depend on the machine's speed or load) [-].
    """

    trials: int = 40

    def __post_init__(self) -> None:
        if isinstance(self.trials, bool) or not isinstance(self.trials, int) or self.trials < 1:
            raise ValueError(f"options.trials: must be an integer >= 1, got {self.trials!r}")


# ------------------------------------------------------------------ preparation


@dataclass(frozen=True)
class _Part:
    """Trays of one product of one batch going to one tunnel route."""

    product: str
    trays: int
    kg_per_tray: float
    tunnel: str
    tunnel_setting: str
    loading: str
    limit: float  # fastest belt speed the route allows [m/min]
    residence: float  # residence the route needs [min]
    kg_per_m: float  # loading [kg/m of belt]
    hold: float  # longest wait oven -> belt [min]

    @property
    def kg(self) -> float:
        return self.trays * self.kg_per_tray

    @property
    def run(self) -> tuple[str, str, str]:
        return (self.tunnel, self.product, self.tunnel_setting)


@dataclass(frozen=True)
class _Job:
    """One batch to place."""

    index: int
    oven: str
    load: str
    setting: str
    cook_min: float
    parts: tuple[_Part, ...]
    cycle_min: float = 0.0

    @property
    def kg(self) -> float:
        return sum(p.kg for p in self.parts)


def _spread(total: int, n: int, cap: int) -> list[int]:
    """``total`` whole trays over ``n`` batches, as even as possible, at most ``cap`` each."""
    total = min(total, n * cap)
    base, extra = divmod(total, n)
    return [base + (1 if i < extra else 0) for i in range(n)]


def _largest_remainder(total: int, weights: list[float]) -> list[int]:
    """``total`` split in proportion to ``weights`` (largest remainder, ties in order)."""
    w = sum(weights)
    if w <= 0:
        return [total] + [0] * (len(weights) - 1)
    exact = [total * x / w for x in weights]
    out = [math.floor(x + 1e-9) for x in exact]
    rest = sorted(range(len(weights)), key=lambda i: (-(exact[i] - out[i]), i))
    for i in rest[: total - sum(out)]:
        out[i] += 1
    return out


def _jobs(inputs: PlanInputs, result: PlanResult, shift: str) -> list[_Job]:
    """The batches of ``shift``, whole trays assigned to tunnel routes."""
    products = {p.name: p for p in inputs.products}
    tunnels = {t.name: t for t in inputs.tunnels}
    lines = sorted((b for b in result.batches if b.shift == shift), key=lambda b: (b.oven, b.load))
    routes: dict[tuple[str, str, str], list[TunnelRun]] = defaultdict(list)
    for r in sorted(
        (r for r in result.runs if r.shift == shift),
        key=lambda r: (r.tunnel, r.tunnel_setting, r.loading, r.product, r.oven, r.oven_setting),
    ):
        if r.kg > EPS:
            routes[(r.product, r.oven, r.oven_setting)].append(r)
    # trays per batch, per line and product
    per_batch: list[list[dict[str, int]]] = []
    totals: dict[tuple[str, str, str], int] = defaultdict(int)
    for b in lines:
        rows = [dict() for _ in range(b.batches)]
        for c in b.contents:
            kpt = products[c.product].kg_per_tray
            trays = math.floor(c.kg / kpt + 1e-6)
            for i, k in enumerate(_spread(trays, b.batches, c.trays)):
                rows[i][c.product] = k
                totals[(c.product, b.oven, b.setting)] += k
        per_batch.append(rows)
    # share the trays of each source over its routes
    budget: dict[tuple[str, str, str], list[int]] = {}
    for src, total in totals.items():
        rs = routes.get(src, [])
        budget[src] = _largest_remainder(total, [r.kg for r in rs]) if rs else []
    jobs: list[_Job] = []
    for b, rows in zip(lines, per_batch, strict=True):
        for row in rows:
            parts = []
            for product in sorted(row):
                need = row[product]
                src = (product, b.oven, b.setting)
                rs, left = routes.get(src, []), budget.get(src, [])
                for k, r in enumerate(rs):
                    if need == 0:
                        break
                    take = min(need, left[k]) if k < len(rs) - 1 else need
                    if take <= 0:
                        continue
                    left[k] -= take
                    need -= take
                    parts.append(_part(products[product], tunnels[r.tunnel], r, take))
            if parts:
                jobs.append(
                    _Job(
                        len(jobs), b.oven, b.load, b.setting, b.cook_min, tuple(parts), b.cycle_min
                    )
                )
    return jobs


def _part(product, tunnel: TunnelData, run: TunnelRun, trays: int) -> _Part:
    limit = min(run.belt_speed_m_per_min, tunnel.max_speed_m_per_min)
    kg_per_m = run.rate_kg_per_min / run.belt_speed_m_per_min
    return _Part(
        product=product.name,
        trays=trays,
        kg_per_tray=product.kg_per_tray,
        tunnel=tunnel.name,
        tunnel_setting=run.tunnel_setting,
        loading=run.loading,
        limit=limit,
        residence=run.chill_min,
        kg_per_m=kg_per_m,
        hold=min(product.hot_hold_min, tunnel.hot_hold_min),
    )


# ------------------------------------------------------------------ machine state


def _place_stops(shift: ShiftData, machine: str) -> list[tuple[float, float, str]]:
    """Stops of ``machine``: fixed ones at their start, the others from the span's start."""
    fixed = sorted(
        (x.start, x.start + x.minutes, x.reason)
        for x in shift.stops_of(machine)
        if x.start is not None
    )
    placed = list(fixed)
    t = 0.0
    for x in shift.stops_of(machine):
        if x.start is not None:
            continue
        while True:
            clash = [b for a, b, _ in placed if a < t + x.minutes - EPS and b > t + EPS]
            if not clash:
                break
            t = max(clash)
        placed.append((t, t + x.minutes, x.reason))
        t += x.minutes
    return sorted(placed)


def _clear_of(start: float, end: float, blocks: list[tuple[float, float]]) -> float:
    """Earliest shift of ``[start, end]`` later so it misses every block: its new start."""
    span = end - start
    moved = True
    while moved:
        moved = False
        for a, b in blocks:
            if a < start + span - EPS and b > start + EPS:
                start = b
                moved = True
    return start


@dataclass
class _Oven:
    data: OvenData
    window: float
    stops: list[tuple[float, float]]
    free: float = 0.0
    setting: str | None = None
    count: int = 0


@dataclass
class _Tunnel:
    data: TunnelData
    belt: Belt
    offset: float  # absolute time of this shift's start [min]
    window: float  # tunnel span in this shift [min]
    blocks: list[tuple[float, float]]  # absolute intervals the belt must be empty
    run: tuple[str, str, str] | None = None


@dataclass(frozen=True)
class _Placed:
    job: _Job
    start: float
    unload: float
    changeover: float
    feeds: tuple[tuple[_Part, float, float, int], ...]  # part, start abs, end abs, key
    belts: dict[str, Belt]
    runs: dict[str, tuple[str, str, str]]
    changes: tuple[tuple[str, float, float, str, str], ...]
    cut: tuple[tuple[_Part, int, str, str], ...]  # trays not placed, rule, detail


@dataclass(frozen=True)
class _Fail:
    rule: str
    detail: str


def _ready(tunnel: _Tunnel, belt: Belt, run, part: _Part) -> tuple[float, float]:
    """Earliest feed start for ``part`` on ``belt`` (absolute) and the changeover minutes."""
    t = max(belt.feed_end, tunnel.offset)
    if run is None or run == part.run:
        return t, 0.0
    co = tunnel.data.changeover_min
    if run[2] != part.tunnel_setting:
        t = max(t, belt.empty_at)  # the air changes only over an empty belt
    return t + co, co


def _feed_part(
    tunnel: _Tunnel, belt: Belt, run, part: _Part, earliest: float, trays: int
) -> tuple[Belt, float, float, float] | _Fail:
    """Feed ``trays`` of ``part`` from ``earliest`` on (absolute times).

    Returns the new belt, the feed's start and end and the changeover
    minutes before it, or why it cannot be fed in this shift.
    """
    start, co = _ready(tunnel, belt, run, part)
    start = max(start, earliest)
    end_of_shift = tunnel.offset + tunnel.window
    while True:
        # the changeover and the feed must miss every block (stops, shift ends)
        inside = [b for a, b in tunnel.blocks if a < start - EPS and b > start - co + EPS]
        if inside:
            start = max(inside) + co
            continue
        if start > end_of_shift - EPS:
            return _Fail("shift_end", "the belt is not free again before the shift ends")
        new, end = belt.with_feed(start, trays * part.kg_per_tray, part.kg_per_m, part.limit)
        if end > end_of_shift + EPS:
            return _Fail(
                "shift_end",
                f"the feed would end at {end - tunnel.offset:.1f} min, after the tunnel's "
                f"{tunnel.window:g} min in the shift",
            )
        # pieces leave in the order they entered: the newest feed's last exit is the latest
        nxt = next((a for a, _ in tunnel.blocks if a >= start - EPS), math.inf)
        if new.exits[-1] <= nxt + EPS:
            return new, start, end, co
        if nxt >= end_of_shift - EPS:
            return _Fail(
                "shift_end",
                f"the belt would not clear by {nxt - tunnel.offset:.1f} min (its last piece "
                f"would leave at {new.exits[-1] - tunnel.offset:.1f} min)",
            )
        start = next(b for a, b in tunnel.blocks if a == nxt) + co


def _oven_start(oven: _Oven, job: _Job, earliest: float) -> tuple[float, float]:
    """Earliest load start of ``job`` at or after ``earliest``, and its changeover minutes."""
    co = oven.data.changeover_min if oven.setting not in (None, job.setting) else 0.0
    cycle = job.cook_min + oven.data.load_unload_min
    start = max(oven.free + co, earliest)
    return _clear_of(start - co, start + cycle, oven.stops) + co, co


def _try(job: _Job, oven: _Oven, tunnels: dict[str, _Tunnel]) -> _Placed | _Fail:
    """Where ``job`` goes next on ``oven``, given the tunnels' state, or why it cannot."""
    cycle = job.cook_min + oven.data.load_unload_min
    earliest = 0.0
    cut: list[tuple[_Part, int, str, str]] = []
    # the product of the run the tunnel is on goes first
    parts = sorted(job.parts, key=lambda p: (p.run != tunnels[p.tunnel].run, p.run))
    for _ in range(200):
        start, co = _oven_start(oven, job, earliest)
        unload = start + cycle
        if unload > oven.window + EPS:
            left = max(oven.window - max(oven.free, 0.0), 0.0)
            return _Fail(
                "oven_minutes",
                f"a batch needs {co + cycle:.1f} min of {oven.data.name} "
                f"(changeover included) but the oven has {left:.1f} min left in the shift",
            )
        belts = {k: t.belt for k, t in tunnels.items()}
        runs = {k: t.run for k, t in tunnels.items()}
        fed = []
        changes = []
        delay = 0.0
        retry = False
        slack_of: dict[str, float] = {}
        for i, part in enumerate(parts):
            tn = tunnels[part.tunnel]
            at = tn.offset + unload
            out = _feed_part(
                tn,
                belts[part.tunnel],
                runs[part.tunnel],
                part,
                at + tn.data.transfer_min,
                part.trays,
            )
            if isinstance(out, _Fail):
                fit = _trays_that_clear(tn, belts[part.tunnel], runs[part.tunnel], part, at)
                cut.append((part, part.trays - fit, out.rule, out.detail))
                parts[i] = replace(part, trays=fit)
                retry = True
                break
            new, f0, f1, tco = out
            slack = min(slack_of.get(part.tunnel, math.inf), f0 - (at + tn.data.transfer_min))
            slack_of[part.tunnel] = slack
            if f1 > at + part.hold + EPS:
                if slack > EPS:
                    delay = max(delay, min(f1 - at - part.hold, slack))
                    retry = True
                    break
                fit = _trays_that_fit(tn, belts[part.tunnel], runs[part.tunnel], part, at)
                fit = min(fit, part.trays - 1)
                detail = _hot_hold_detail(tn, part, f1 - f0, fit)
                cut.append((part, part.trays - fit, "hot_hold", detail))
                parts[i] = replace(part, trays=fit)
                retry = True
                break
            if tco > 0:
                changes.append(
                    (part.tunnel, f0 - tco, f0, _run_text(runs[part.tunnel]), _run_text(part.run))
                )
            belts[part.tunnel] = new
            runs[part.tunnel] = part.run
            fed.append((part, f0, f1, len(new.exits) - 1))
        if retry:
            parts = [p for p in parts if p.trays > 0]
            if not parts:
                return _Fail(cut[-1][2], cut[-1][3])
            earliest = max(earliest, start + delay) if delay > 0 else earliest
            continue
        job2 = replace(job, parts=tuple(parts))
        return _Placed(job2, start, unload, co, tuple(fed), belts, runs, tuple(changes), tuple(cut))
    return _Fail("hot_hold", "no placement found within the hot-hold window")


def _run_text(run) -> str:
    return "" if run is None else f"{run[1]} @ {run[2]}"


def _trays_that_fit(tn: _Tunnel, belt: Belt, run, part: _Part, at: float) -> int:
    """Most trays of ``part`` that go on within the hot-hold window when fed at once."""
    lo, hi = 0, part.trays
    while lo < hi:
        mid = (lo + hi + 1) // 2
        out = _feed_part(tn, belt, run, part, at + tn.data.transfer_min, mid)
        if not isinstance(out, _Fail) and out[2] <= at + part.hold + EPS:
            lo = mid
        else:
            hi = mid - 1
    return lo


def _trays_that_clear(tn: _Tunnel, belt: Belt, run, part: _Part, at: float) -> int:
    """Most trays of ``part`` (fewer than all) the belt can take and clear in time."""
    lo, hi = 0, part.trays - 1
    while lo < hi:
        mid = (lo + hi + 1) // 2
        out = _feed_part(tn, belt, run, part, at + tn.data.transfer_min, mid)
        if not isinstance(out, _Fail):
            lo = mid
        else:
            hi = mid - 1
    return lo


def _hot_hold_detail(tn: _Tunnel, part: _Part, feed_min: float, fit: int) -> str:
    window = part.hold - tn.data.transfer_min
    speed = part.kg / part.kg_per_m / feed_min if feed_min > 0 else part.limit
    slower = f" (slowed by product already on the belt; the route allows {part.limit:.3g})"
    return (
        f"{part.trays} trays of {part.product} take {feed_min:.1f} min to go onto "
        f"{tn.data.name} at {speed:.3g} m/min"
        f"{slower if speed < part.limit * (1 - 1e-6) else ''}, but only {window:.1f} min "
        f"are left of the {part.hold:g} min hot-hold limit after the "
        f"{tn.data.transfer_min:g} min transfer: {part.trays - fit} trays "
        f"({(part.trays - fit) * part.kg_per_tray:g} kg) over; {fit} trays per batch fit "
        "(fewer trays, a faster belt or a longer limit would)"
    )


# ------------------------------------------------------------------ one shift

MODES: tuple[tuple[bool, int], ...] = ((False, 1), (True, 1), (False, 3), (True, 3))
"""Search modes tried per run order: (tunnel finishes a run first, batches looked ahead)."""


@dataclass(frozen=True)
class _ShiftRun:
    """What one shift's simulation placed (absolute tunnel times)."""

    placed: tuple[_Placed, ...]
    failed: tuple[tuple[_Job, _Fail], ...]
    belts: dict[str, Belt]
    runs: dict[str, tuple[str, str, str] | None]
    score: tuple[float, float]


@dataclass(frozen=True)
class _Frame:
    """Where a shift sits on the tunnels' clock and what limits its machines."""

    shift: ShiftData
    offset: float
    length: float
    stops: dict[str, list[tuple[float, float, str]]]
    blocks: dict[str, list[tuple[float, float]]]


def _frames(inputs: PlanInputs) -> list[_Frame]:
    machines = [o.name for o in inputs.ovens] + [t.name for t in inputs.tunnels]
    out = []
    offset = 0.0
    lengths = [max(s.window(m) for m in machines) for s in inputs.shifts]
    placed = [{m: _place_stops(s, m) for m in machines} for s in inputs.shifts]
    blocks: dict[str, list[tuple[float, float]]] = {t.name: [] for t in inputs.tunnels}
    offsets = []
    for i, s in enumerate(inputs.shifts):
        offsets.append(offset)
        last = i == len(inputs.shifts) - 1
        for t in inputs.tunnels:
            b = blocks[t.name]
            b.extend((offset + a, offset + e) for a, e, _ in placed[i][t.name])
            w = s.window(t.name)
            if last:
                b.append((offset + w, math.inf))
            elif w < lengths[i] - EPS:
                b.append((offset + w, offset + lengths[i]))
            elif not inputs.back_to_back:
                b.append((offset + lengths[i], offset + lengths[i]))
        offset += lengths[i]
    for i, s in enumerate(inputs.shifts):
        out.append(
            _Frame(
                s,
                offsets[i],
                lengths[i],
                placed[i],
                {k: sorted(v) for k, v in blocks.items()},
            )
        )
    return out


def _weight(inputs: PlanInputs) -> dict[str, float]:
    if inputs.objective is Objective.MOST_VALUE:
        return {p.name: p.value_per_kg for p in inputs.products}
    return {p.name: 1.0 for p in inputs.products}


def _tunnels_of(job: _Job) -> tuple[str, ...]:
    return tuple(sorted({p.tunnel for p in job.parts}))


def _simulate(
    inputs: PlanInputs,
    frame: _Frame,
    jobs: list[_Job],
    belts: dict[str, Belt],
    runs: dict[str, tuple[str, str, str] | None],
    weight: dict[str, float],
    grouped: dict[tuple[str, str, str], int] | None = None,
    look: int = 1,
) -> _ShiftRun:
    """Place ``jobs`` (each oven's in list order) in one shift.

    Of the next batch of every oven, the one whose first feed starts earliest
    goes next; with ``grouped`` (run -> rank) the lowest-ranked run goes first,
    so the tunnel finishes one run before it starts the next. With ``look``
    > 1 an oven may run one of its next ``look`` different batches out of
    list order when that one feeds sooner.
    """
    sh = frame.shift
    ovens = {
        o.name: _Oven(o, sh.window(o.name), [(a, b) for a, b, _ in frame.stops[o.name]])
        for o in inputs.ovens
    }
    tunnels = {}
    for t in inputs.tunnels:
        belt = belts[t.name]
        carried = belt.empty_at > frame.offset + EPS
        tunnels[t.name] = _Tunnel(
            t,
            belt,
            frame.offset,
            sh.window(t.name),
            frame.blocks[t.name],
            run=runs[t.name] if carried else None,
        )
    pending = {o.name: [j for j in jobs if j.oven == o.name] for o in inputs.ovens}
    rank = {o.name: i for i, o in enumerate(inputs.ovens)}
    placed: list[_Placed] = []
    failed: list[tuple[_Job, _Fail]] = []
    cache: dict[int, tuple] = {}
    while True:
        best: tuple | None = None
        for name in pending:
            seen = set()
            i = 0
            while i < len(pending[name]) and len(seen) < look:
                job = pending[name][i]
                sig = (job.load, job.parts)
                if sig in seen:
                    i += 1
                    continue
                seen.add(sig)
                # a batch's placement depends only on its oven and the tunnels it feeds
                state = (ovens[name].free, ovens[name].setting)
                used = tuple((tunnels[t].belt, tunnels[t].run) for t in _tunnels_of(job))
                hit = cache.get(job.index)
                if (
                    hit is not None
                    and hit[0] == state
                    and all(a is b and r == q for (a, r), (b, q) in zip(hit[1], used, strict=True))
                ):
                    out = hit[2]
                else:
                    out = _try(job, ovens[name], tunnels)
                    cache[job.index] = (state, used, out)
                if isinstance(out, _Fail):
                    failed.append((pending[name].pop(i), out))
                    seen.discard(sig)
                    continue
                key = (min(f[1] for f in out.feeds), out.unload, rank[name], i)
                if grouped is not None:
                    first = min(grouped.get(p.run, len(grouped)) for p in out.job.parts)
                    key = (first, *key)
                if best is None or key < best[0]:
                    best = (key, name, out, i)
                i += 1
        if best is None:
            break
        _, name, out, i = best
        pending[name].pop(i)
        oven = ovens[name]
        oven.free = out.unload
        oven.setting = out.job.setting
        for k in _tunnels_of(out.job):
            tunnels[k].belt = out.belts[k]
            tunnels[k].run = out.runs[k]
        placed.append(out)
    kg = sum(p.kg * weight.get(p.product, 1.0) for x in placed for p in x.job.parts)
    finish = sum(f[2] for x in placed for f in x.feeds)
    return _ShiftRun(
        tuple(placed),
        tuple(failed),
        {k: t.belt for k, t in tunnels.items()},
        {k: t.run for k, t in tunnels.items()},
        (kg, -finish),
    )


def _orders(jobs: list[_Job]) -> list[list[tuple[str, str, str]]]:
    """Run orders to try first: slowest residence first, fastest first, as planned, by kg."""
    runs = sorted({j.parts[0].run for j in jobs})
    res = {r: max(p.residence for j in jobs for p in j.parts if p.run == r) for r in runs}
    kg = {r: sum(p.kg for j in jobs for p in j.parts if p.run == r) for r in runs}
    cands = [
        sorted(runs, key=lambda r: (-res[r], r)),
        sorted(runs, key=lambda r: (res[r], r)),
        list(runs),
        sorted(runs, key=lambda r: (-kg[r], r)),
    ]
    out: list[list[tuple[str, str, str]]] = []
    for c in cands:
        if c not in out:
            out.append(c)
    return out


def _ordered(jobs: list[_Job], runs: list[tuple[str, str, str]]) -> list[_Job]:
    """Jobs by run order, oven setting, then most kg per oven minute first."""
    rank = {r: i for i, r in enumerate(runs)}
    return sorted(
        jobs,
        key=lambda j: (
            rank[j.parts[0].run],
            j.setting,
            -j.kg / j.cycle_min if j.cycle_min > 0 else 0.0,
            j.load,
            j.index,
        ),
    )


def _best_shift(inputs, frame, jobs, belts, runs, weight, trials: int) -> _ShiftRun:
    """The best of up to ``trials`` run orders (first the candidates, then neighbour swaps)."""
    if not jobs:
        return _simulate(inputs, frame, [], belts, runs, weight)
    tried: dict[tuple, _ShiftRun] = {}

    def run(mode: tuple[bool, int], order: list) -> _ShiftRun:
        key = (mode, *order)
        if key not in tried:
            rank = {r: i for i, r in enumerate(order)} if mode[0] else None
            tried[key] = _simulate(
                inputs, frame, _ordered(jobs, order), belts, runs, weight, rank, mode[1]
            )
        return tried[key]

    cands = [(m, c) for c in _orders(jobs) for m in MODES]
    best_mode, best_order = cands[0]
    best = run(best_mode, best_order)
    for g, c in cands[1:]:
        if len(tried) >= trials:
            break
        r = run(g, c)
        if r.score > best.score:
            best, best_mode, best_order = r, g, c
    improved = True
    while improved and len(tried) < trials:
        improved = False
        for i in range(len(best_order) - 1):
            if len(tried) >= trials:
                break
            c = list(best_order)
            c[i], c[i + 1] = c[i + 1], c[i]
            if (best_mode, *c) in tried:
                continue
            r = run(best_mode, c)
            if r.score > best.score:
                best, best_order, improved = r, c, True
    return best


# ------------------------------------------------------------------ records


def schedule_plan(
    inputs: PlanInputs, result: PlanResult, *, options: ScheduleOptions | None = None
) -> Schedule:
    """The timed schedule of every shift of a solved plan.

    Parameters
    ----------
    inputs : PlanInputs
        The planner's inputs the plan was solved from.
    result : PlanResult
        The solved plan; without a plan (``result.status.has_plan`` false)
        every shift comes back empty.
    options : ScheduleOptions or None
        Search effort; default :class:`ScheduleOptions`.

    Returns
    -------
    Schedule
        Per shift: timed batches, changeovers, stops, one timeline per
        tunnel and what could not be placed (with the rule that stopped it).
        Times in minutes from the start of each shift [min].
    """
    options = options or ScheduleOptions()
    frames = _frames(inputs)
    weight = _weight(inputs)
    belts = {t.name: Belt.empty(t.length_m, t.max_speed_m_per_min) for t in inputs.tunnels}
    runs: dict[str, tuple[str, str, str] | None] = {t.name: None for t in inputs.tunnels}
    done: list[tuple[_Frame, _ShiftRun, float]] = []
    for frame in frames:
        jobs = _jobs(inputs, result, frame.shift.name) if result.status.has_plan else []
        lost = _tray_rounding_kg(inputs, result, frame.shift.name, jobs)
        best = _best_shift(inputs, frame, jobs, belts, runs, weight, options.trials)
        belts, runs = best.belts, best.runs
        done.append((frame, best, lost))
    prior: dict[str, list] = defaultdict(list)
    records = []
    for frame, run, _ in done:
        rec, segs = _records(inputs, frame, run, belts, prior)
        records.append(rec)
        for k, v in segs.items():
            prior[k].extend(v)
    shifts = tuple(records)
    notes = list(_notes(inputs))
    lost = sum(x for _, _, x in done)
    if lost > EPS:
        notes.append(
            f"{lost:.1f} kg of the plan are part trays and were not scheduled "
            "(the schedule runs whole trays only)"
        )
    return Schedule(shifts=shifts, back_to_back=inputs.back_to_back, notes=tuple(notes))


def _tray_rounding_kg(inputs: PlanInputs, result: PlanResult, shift: str, jobs) -> float:
    planned = sum(c.kg for b in result.batches if b.shift == shift for c in b.contents)
    return max(planned - sum(j.kg for j in jobs), 0.0) if result.status.has_plan else 0.0


def _notes(inputs: PlanInputs) -> list[str]:
    out = [
        "chill from the actual wait: every tray goes onto the belt between the tunnel's "
        "transfer minutes and the hot-hold limit after its batch's unload end; the dwell "
        "table's chill cells are computed with the shortest wait and checked with the "
        "tunnel's hot-hold limit, so they cover every wait the schedule uses"
    ]
    for t in inputs.tunnels:
        if math.isinf(t.hot_hold_min):
            out.append(
                f"{t.name}: no hot-hold limit of its own, so its chill cells cover only the "
                f"{t.transfer_min:g} min transfer wait; waits are kept within each "
                "product's limit"
            )
    return out


def _records(
    inputs: PlanInputs,
    frame: _Frame,
    run: _ShiftRun,
    belts: dict[str, Belt],
    prior: dict[str, list],
) -> tuple[ShiftSchedule, dict[str, list]]:
    """The records of one shift, and its feed segments (key, start, end, kg/m) per tunnel."""
    sh = frame.shift
    name = sh.name
    products = {p.name: p for p in inputs.products}
    batches: list[TimedBatch] = []
    changeovers: list[Changeover] = []
    feeds: dict[str, list[Feed]] = defaultdict(list)
    keys: dict[str, list[tuple[int, float, float, float]]] = defaultdict(list)
    count: dict[str, int] = defaultdict(int)
    last_setting: dict[str, str] = {}
    oven_data = {o.name: o for o in inputs.ovens}
    for x in sorted(run.placed, key=lambda x: (x.job.oven, x.start)):
        o = oven_data[x.job.oven]
        count[o.name] += 1
        bid = f"{name}/{o.name}/{count[o.name]:02d}"
        if x.changeover > 0:
            changeovers.append(
                Changeover(
                    name,
                    o.name,
                    x.start - x.changeover,
                    x.start,
                    last_setting.get(o.name, ""),
                    x.job.setting,
                )
            )
        last_setting[o.name] = x.job.setting
        trays: dict[str, int] = defaultdict(int)
        for p in x.job.parts:
            trays[p.product] += p.trays
        load_min = o.load_unload_min - o.unload_min
        batches.append(
            TimedBatch(
                shift=name,
                oven=o.name,
                batch=bid,
                load=x.job.load,
                setting=x.job.setting,
                load_start=x.start,
                cook_start=x.start + load_min,
                cook_end=x.start + load_min + x.job.cook_min,
                unload_end=x.unload,
                contents=tuple(
                    TraysOf(p, k, k * products[p].kg_per_tray) for p, k in sorted(trays.items())
                ),
            )
        )
        for part, f0, f1, key in x.feeds:
            belt = belts[part.tunnel]
            feeds[part.tunnel].append(
                Feed(
                    shift=name,
                    tunnel=part.tunnel,
                    batch=bid,
                    product=part.product,
                    oven=o.name,
                    oven_setting=x.job.setting,
                    tunnel_setting=part.tunnel_setting,
                    loading=part.loading,
                    start=f0 - frame.offset,
                    end=f1 - frame.offset,
                    kg=part.kg,
                    trays=part.trays,
                    required_residence_min=part.residence,
                    last_exit=belt.exits[key] - frame.offset,
                )
            )
            keys[part.tunnel].append((key, f0, f1, part.kg_per_m))
        for tunnel, a, b, before, after in x.changes:
            changeovers.append(
                Changeover(name, tunnel, a - frame.offset, b - frame.offset, before, after)
            )
    stops = tuple(
        Stop(name, m, a, b, reason)
        for m in [o.name for o in inputs.ovens] + [t.name for t in inputs.tunnels]
        for a, b, reason in frame.stops[m]
    )
    timelines = tuple(
        _timeline(
            frame,
            t,
            belts[t.name],
            sorted(feeds[t.name], key=lambda f: f.start),
            prior[t.name],
            keys[t.name],
            [c for c in changeovers if c.machine == t.name],
        )
        for t in inputs.tunnels
    )
    sched = ShiftSchedule(
        shift=name,
        length_min=frame.length,
        batches=tuple(sorted(batches, key=lambda b: (b.oven, b.load_start))),
        changeovers=tuple(sorted(changeovers, key=lambda c: (c.machine, c.start))),
        stops=stops,
        tunnels=timelines,
        unplaced=_unplaced(name, run),
    )
    return sched, keys


def _on_belt_kg(belt: Belt, segs, at: float) -> float:
    """kg on the belt at absolute time ``at`` from the feed segments ``segs``."""
    if belt.profile is None:
        return 0.0
    out = 0.0
    for key, f0, f1, kpm in segs:
        if belt.exits[key] <= at + EPS or f0 >= at - EPS:
            continue
        x_at = belt.profile.travel(f0, at)
        x_end = belt.profile.travel(f0, min(f1, at))
        out += kpm * max(x_end - max(0.0, x_at - belt.length), 0.0)
    return out


def _timeline(frame: _Frame, t: TunnelData, belt: Belt, feeds, prior, segs, changes):
    """One tunnel's timeline in one shift (``prior``: segments of earlier shifts)."""
    w = frame.shift.window(t.name)
    t0 = frame.offset
    carried_in = _on_belt_kg(belt, prior, t0)
    carried = [k for k, f0, _, _ in prior if belt.exits[k] > t0 + EPS]
    if not feeds and not carried:
        return TunnelTimeline(frame.shift.name, t.name, t.length_m, (), (), ())
    pieces = belt.profile.pieces(max(t0, belt.profile.times[0]), t0 + w)
    if pieces and pieces[0][0] > t0 + EPS:
        pieces[0] = (t0, pieces[0][1], pieces[0][2])
    belt_pieces = tuple(BeltPiece(a - t0, b - t0, v) for a, b, v in pieces)
    spans: list[SettingSpan] = []
    if changes:
        current = changes[0].before.split(" @ ")[-1]
    else:
        current = feeds[0].tunnel_setting if feeds else ""
    if not current and feeds:
        current = feeds[0].tunnel_setting
    since = 0.0
    for c in changes:
        after = c.after.split(" @ ")[-1]
        if after != current:
            spans.append(SettingSpan(since, c.start, current))
            current, since = after, c.end
    spans.append(SettingSpan(since, w, current))
    return TunnelTimeline(
        frame.shift.name,
        t.name,
        t.length_m,
        belt_pieces,
        tuple(s for s in spans if s.setting and s.end > s.start),
        tuple(feeds),
        carried_in_kg=carried_in,
        carried_out_kg=_on_belt_kg(belt, prior + segs, t0 + frame.length),
    )


def _unplaced(shift: str, run: _ShiftRun) -> tuple[Unplaced, ...]:
    agg: dict[tuple[str, str, str], list] = {}
    for job, fail in run.failed:
        k = (job.oven, job.load, fail.rule)
        agg.setdefault(k, [0.0, fail.detail])[0] += job.kg
    for x in run.placed:
        for part, trays, rule, detail in x.cut:
            k = (x.job.oven, x.job.load, rule)
            agg.setdefault(k, [0.0, detail])[0] += trays * part.kg_per_tray
    return tuple(
        Unplaced(shift, oven, load, kg, rule, detail)
        for (oven, load, rule), (kg, detail) in sorted(agg.items())
    )
