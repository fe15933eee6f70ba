"""An independent checker of a timed schedule (written apart from the scheduler).

It reads only the schedule records, the planner inputs and the plan, and
checks every rule piece by piece with its own arithmetic: its own
integration of the belt-speed profile (exact for piecewise-constant speeds:
the travel is a piecewise-linear function of time), its own overlap and
hot-hold tests. It imports nothing from optimizer.planning.scheduler or
optimizer.planning.belt.

:func:`problems` returns a list of one-line findings (empty = all rules kept).
"""

from __future__ import annotations

import bisect
import itertools
import math
from collections import defaultdict

TOL = 1e-6
"""Tolerance on times [min], lengths [m] and kg [kg]."""


class _Travel:
    """Belt travel X(t) [m] from absolute-time constant pieces (start, end, speed)."""

    def __init__(self, pieces: list[tuple[float, float, float]]):
        pieces = sorted(pieces)
        self.t = [p[0] for p in pieces] + [pieces[-1][1]]
        self.v = [p[2] for p in pieces]
        self.x = [0.0]
        for a, b, v in pieces:
            self.x.append(self.x[-1] + v * (b - a))

    @property
    def end(self) -> float:
        return self.t[-1]

    def at(self, t: float) -> float:
        if t <= self.t[0]:
            return 0.0
        if t >= self.t[-1]:
            return self.x[-1]
        k = bisect.bisect_right(self.t, t) - 1
        return self.x[k] + self.v[k] * (t - self.t[k])

    def when(self, x: float) -> float:
        """First time the travel reaches ``x`` (inf when the profile ends first)."""
        if x <= 0:
            return self.t[0]
        if x > self.x[-1] + TOL:
            return math.inf
        k = bisect.bisect_left(self.x, x) - 1
        k = min(max(k, 0), len(self.v) - 1)
        return self.t[k] + (x - self.x[k]) / self.v[k]


def problems(inputs, result, schedule) -> list[str]:
    """Every rule the schedule breaks, one line each."""
    out: list[str] = []
    ovens = {o.name: o for o in inputs.ovens}
    tunnels = {t.name: t for t in inputs.tunnels}
    products = {p.name: p for p in inputs.products}
    shifts = {s.name: s for s in inputs.shifts}
    names = [s.shift for s in schedule.shifts]
    if names != [s.name for s in inputs.shifts]:
        out.append(f"shifts {names} differ from the plan's")
        return out
    loads = {(b.shift, b.load): b for b in result.batches}
    offset = {}
    t0 = 0.0
    for sh in schedule.shifts:
        offset[sh.shift] = t0
        t0 += sh.length_min
    last = names[-1]

    # ---- ovens: no overlap, shift ends, cook minutes, changeovers, whole trays
    by_id = {}
    for sh in schedule.shifts:
        sd = shifts[sh.shift]
        for name, o in ovens.items():
            items = [(b.load_start, b.unload_end, "batch", b) for b in sh.batches if b.oven == name]
            items += [
                (c.start, c.end, "changeover", c) for c in sh.changeovers if c.machine == name
            ]
            items += [(x.start, x.end, "stop", x) for x in sh.stops if x.machine == name]
            items.sort(key=lambda i: (i[0], i[1]))
            for a, b in itertools.pairwise(items):
                if b[0] < a[1] - TOL:
                    out.append(
                        f"{sh.shift} {name}: {a[2]} {a[0]:.3f}-{a[1]:.3f} overlaps "
                        f"{b[2]} {b[0]:.3f}-{b[1]:.3f}"
                    )
            for a, b, kind, _ in items:
                if a < -TOL or b > sd.window(name) + TOL:
                    out.append(
                        f"{sh.shift} {name}: {kind} {a:.3f}-{b:.3f} outside 0-{sd.window(name):g}"
                    )
            stop_min = sum(x.end - x.start for x in sh.stops if x.machine == name)
            want = sum(x.minutes for x in sd.stops_of(name))
            if abs(stop_min - want) > TOL:
                out.append(f"{sh.shift} {name}: stops last {stop_min:g} min, scenario {want:g}")
            batches = sorted((b for b in sh.batches if b.oven == name), key=lambda b: b.load_start)
            for prev, nxt in itertools.pairwise(batches):
                if prev.setting != nxt.setting and o.changeover_min > 0:
                    cos = [
                        c
                        for c in sh.changeovers
                        if c.machine == name
                        and c.start >= prev.unload_end - TOL
                        and c.end <= nxt.load_start + TOL
                        and c.end - c.start >= o.changeover_min - TOL
                    ]
                    if not cos:
                        out.append(
                            f"{sh.shift} {name}: setting change {prev.setting} -> "
                            f"{nxt.setting} without a {o.changeover_min:g} min changeover"
                        )
            for b in batches:
                by_id[b.batch] = b
                plan = loads.get((sh.shift, b.load))
                if plan is None:
                    out.append(f"{b.batch}: load {b.load} is not in the plan of {sh.shift}")
                    continue
                load_min = o.load_unload_min - o.unload_min
                if abs(b.cook_start - b.load_start - load_min) > TOL:
                    out.append(
                        f"{b.batch}: loads {b.cook_start - b.load_start:g} min, "
                        f"oven needs {load_min:g}"
                    )
                if b.cook_end - b.cook_start < plan.cook_min - TOL:
                    out.append(
                        f"{b.batch}: cooks {b.cook_end - b.cook_start:.3f} min < "
                        f"{plan.cook_min:.3f}"
                    )
                if abs(b.unload_end - b.cook_end - o.unload_min) > TOL:
                    out.append(
                        f"{b.batch}: unloads {b.unload_end - b.cook_end:g} min, "
                        f"oven needs {o.unload_min:g}"
                    )
                if b.setting != plan.setting:
                    out.append(f"{b.batch}: setting {b.setting} != plan's {plan.setting}")
                per = {c.product: c.trays for c in plan.contents}
                total = 0
                for c in b.contents:
                    if not isinstance(c.trays, int) or c.trays < 0:
                        out.append(f"{b.batch}: {c.product} trays {c.trays!r} not whole")
                    total += c.trays
                    if c.trays > per.get(c.product, 0):
                        out.append(
                            f"{b.batch}: {c.trays} trays of {c.product} > load's "
                            f"{per.get(c.product, 0)}"
                        )
                    if abs(c.kg - c.trays * products[c.product].kg_per_tray) > TOL:
                        out.append(f"{b.batch}: {c.product} kg {c.kg} != trays x kg/tray")
                if total > o.trays:
                    out.append(f"{b.batch}: {total} trays > oven's {o.trays}")
                if b.kg > o.capacity_kg + TOL:
                    out.append(f"{b.batch}: {b.kg} kg > oven capacity {o.capacity_kg}")

    # ---- feeds: kg balance, hot hold, one loading point, belt profile, residence
    fed: dict[tuple[str, str], float] = defaultdict(float)
    fed_trays: dict[tuple[str, str], int] = defaultdict(int)
    for name, t in tunnels.items():
        pieces = []
        feeds = []
        for sh in schedule.shifts:
            tl = [x for x in sh.tunnels if x.tunnel == name]
            if len(tl) != 1:
                out.append(f"{sh.shift}: {len(tl)} timelines for {name}")
                continue
            tl = tl[0]
            off = offset[sh.shift]
            belt = sorted(tl.belt, key=lambda p: p.start)
            for a, b in itertools.pairwise(belt):
                if abs(b.start - a.end) > TOL:
                    out.append(f"{sh.shift} {name}: belt profile gap {a.end:g}-{b.start:g}")
            for p in belt:
                if not (
                    t.min_speed_m_per_min - TOL <= p.speed_m_per_min <= t.max_speed_m_per_min + TOL
                ):
                    out.append(
                        f"{sh.shift} {name}: belt speed {p.speed_m_per_min:g} outside "
                        f"{t.min_speed_m_per_min:g}-{t.max_speed_m_per_min:g}"
                    )
                pieces.append((off + p.start, off + p.end, p.speed_m_per_min))
            for f in tl.feeds:
                feeds.append((off + f.start, off + f.end, f, sh.shift))
        if not feeds:
            continue
        # pieces of consecutive shifts must join when the belt carries over
        pieces.sort()
        merged = [pieces[0]]
        for p in pieces[1:]:
            if p[0] > merged[-1][1] + TOL:
                # an idle gap between shifts with an empty belt: no piece may be on it
                merged.append((merged[-1][1], p[0], merged[-1][2]))
            merged.append(p)
        travel = _Travel(merged)
        feeds.sort(key=lambda f: f[0])
        exits = []
        for (a0, a1, f, s), nxt in zip(feeds, [*feeds[1:], None], strict=True):
            if nxt is not None and nxt[0] < a1 - TOL:
                out.append(f"{name}: feeds {f.batch} and {nxt[2].batch} overlap")
            b = by_id.get(f.batch)
            if b is None:
                out.append(f"{f.batch}: feed of an unknown batch")
                continue
            prod = products[f.product]
            u = offset[s] + b.unload_end
            if a0 < u + t.transfer_min - TOL:
                out.append(
                    f"{f.batch}: {f.product} on the belt {a0 - u:.3f} min after unload, "
                    f"transfer takes {t.transfer_min:g}"
                )
            hold = min(prod.hot_hold_min, t.hot_hold_min)
            if a1 > u + hold + TOL:
                out.append(
                    f"{f.batch}: last tray of {f.product} on the belt {a1 - u:.3f} min "
                    f"after unload > hot hold {hold:g}"
                )
            if a1 > offset[s] + shifts[s].window(name) + TOL:
                out.append(f"{f.batch}: feed ends after {name}'s minutes in {s}")
            cov = t.coverage(f.loading)
            kpm = prod.belt_kg_per_m2 * cov * t.width_m
            moved = travel.at(a1) - travel.at(a0)
            if abs(kpm * moved - f.kg) > 1e-6 * max(1.0, f.kg):
                out.append(
                    f"{f.batch}: feed of {f.kg:.4f} kg but the belt took "
                    f"{kpm * moved:.4f} kg at the loading"
                )
            # residence: min over entry times is at a critical point (entry or exit
            # at a profile breakpoint, or the feed's ends)
            xa, xb = travel.at(a0), travel.at(a1)
            cands = [a0, a1]
            cands += [tk for tk in travel.t if a0 < tk < a1]
            cands += [travel.when(xk - t.length_m) for xk in travel.x if xa < xk - t.length_m < xb]
            worst = math.inf
            for tau in cands:
                ex = travel.when(travel.at(tau) + t.length_m)
                worst = min(worst, ex - tau)
            if worst < f.required_residence_min - 1e-6:
                out.append(
                    f"{f.batch}: a piece of {f.product} stays {worst:.4f} min < "
                    f"required {f.required_residence_min:.4f}"
                )
            last_exit = travel.when(xb + t.length_m)
            if abs(last_exit - (offset[s] + f.last_exit)) > 1e-5:
                out.append(
                    f"{f.batch}: last_exit {f.last_exit:.4f} but the profile says "
                    f"{last_exit - offset[s]:.4f}"
                )
            end_s = offset[s] + shifts[s].window(name)
            if (not schedule.back_to_back or s == last) and last_exit > end_s + TOL:
                out.append(
                    f"{f.batch}: belt not empty at the end of {s} ({name}); last "
                    f"piece leaves at {last_exit - offset[s]:.3f}"
                )
            if last_exit > offset[last] + shifts[last].window(name) + TOL:
                out.append(f"{f.batch}: belt not empty at the end of the last shift")
            exits.append((a0, a1, last_exit, f, s))
            fed[(f.batch, f.product)] += f.kg
            fed_trays[(f.batch, f.product)] += f.trays
        # stops of the tunnel: nothing on the belt, nothing fed
        for sh in schedule.shifts:
            for x in sh.stops:
                if x.machine != name:
                    continue
                s0, s1 = offset[sh.shift] + x.start, offset[sh.shift] + x.end
                for a0, _a1, ex, f, _s in exits:
                    if a0 < s1 - TOL and ex > s0 + TOL:
                        out.append(
                            f"{f.batch}: on {name}'s belt during the stop "
                            f"{x.start:g}-{x.end:g} of {sh.shift}"
                        )
        # run changes: changeover after the previous feed; a new air setting only
        # over an empty belt
        first_of = {}
        for a0, _a1, _ex, _f, s in exits:
            first_of.setdefault(s, a0)
        for (_p0, p1, pex, pf, _ps), (n0, _n1, _nex, nf, ns) in itertools.pairwise(exits):
            if pf.tunnel_setting != nf.tunnel_setting and n0 < pex - TOL:
                out.append(f"{nf.batch}: air setting changes while {pf.batch} is on the belt")
            same = (pf.product, pf.tunnel_setting) == (nf.product, nf.tunnel_setting)
            if same or t.changeover_min <= 0:
                continue
            ready = pex if pf.tunnel_setting != nf.tunnel_setting else p1
            # the first run of a shift on an empty belt is set up in time taken off
            free = abs(n0 - first_of[ns]) < TOL and pex <= offset[ns] + TOL
            if n0 < ready + t.changeover_min - TOL and not free:
                out.append(
                    f"{nf.batch}: run change on {name} without its "
                    f"{t.changeover_min:g} min changeover"
                )

    # ---- no more batches of a load than the plan has
    count = defaultdict(int)
    for sh in schedule.shifts:
        for b in sh.batches:
            count[(sh.shift, b.load)] += 1
    for key, n in count.items():
        if key in loads and n > loads[key].batches:
            out.append(f"{key}: {n} batches scheduled, plan has {loads[key].batches}")

    # ---- kg balance: batch -> feed -> totals
    for b in by_id.values():
        for c in b.contents:
            if abs(fed[(b.batch, c.product)] - c.kg) > TOL:
                out.append(
                    f"{b.batch}: {c.kg} kg of {c.product} in the batch, "
                    f"{fed[(b.batch, c.product)]} kg fed"
                )
            if fed_trays[(b.batch, c.product)] != c.trays:
                out.append(
                    f"{b.batch}: {c.trays} trays of {c.product}, "
                    f"{fed_trays[(b.batch, c.product)]} fed"
                )
    total_fed = sum(fed.values())
    if abs(total_fed - schedule.total_kg) > TOL:
        out.append(f"feeds total {total_fed} kg, schedule says {schedule.total_kg}")
    if abs(sum(b.kg for b in by_id.values()) - schedule.total_kg) > TOL:
        out.append("batch kg and schedule total differ")
    plan_by = defaultdict(float)
    for b in result.batches:
        for c in b.contents:
            plan_by[c.product] += c.kg
    for p, kg in schedule.kg_by_product().items():
        if kg > plan_by[p] + TOL:
            out.append(f"{p}: scheduled {kg} kg > planned {plan_by[p]} kg")
    unplaced = sum(u.kg for u in schedule.unplaced)
    plan_kg = sum(plan_by.values())
    if schedule.total_kg + unplaced > plan_kg + TOL:
        out.append(f"scheduled {schedule.total_kg} + unplaced {unplaced} > planned {plan_kg}")
    rounding = sum(products[c.product].kg_per_tray for b in result.batches for c in b.contents)
    if plan_kg - schedule.total_kg - unplaced > rounding + TOL:
        out.append(
            f"{plan_kg - schedule.total_kg - unplaced:.3f} kg of the plan neither "
            "scheduled nor reported unplaced"
        )
    for u in schedule.unplaced:
        if u.kg <= 0 or not u.detail:
            out.append(f"unplaced record without kg or detail: {u}")
    return out
