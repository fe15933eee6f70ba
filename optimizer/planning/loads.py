"""Candidate batch loads and tunnel runs, read from the dwell table.

The planner never calls the physics: it reads the dwell table (one row per
product x oven x oven setting x tunnel x tunnel setting x loading) and turns
the feasible rows into

* cook options: (product, oven, oven setting) -> cook dwell [min] and heat
  in [kJ/kg];
* tunnel routes: (product, oven, oven setting, tunnel, tunnel setting,
  loading) -> fastest belt speed [m/min], throughput [kg/min] and heat out
  [kJ/kg];
* batch loads: (oven, setting, trays of each product) -> cycle [min] and
  most kg of each product per batch.

Rules used here (documented choices):

* A product is cooked at an (oven, setting) only if at least one feasible
  tunnel route takes it from there (what is cooked must be chilled).
* The cook dwell of a (product, oven, setting) is the largest ``cook_min`` of
  its feasible rows (they should all be equal; the largest is the safe one).
* Belt speed is ``max_belt_speed_m_per_min`` from the table, capped at the
  tunnel's maximum; a speed below the tunnel's minimum rules the route out.
  Throughput [kg/min] = ``belt_kg_per_m2 * coverage * width_m * speed``.
* Hot hold (per batch): every tray of a batch must be on the belt within
  the hot-hold limit of its unload end, the transfer counted, so the belt
  has ``window = hot_hold - transfer`` minutes to take it. A batch holding
  ``m`` kg of product p, fed at ``r`` kg/min, needs ``m / r`` minutes. So
  (i) the trays of p in any batch at (oven, setting) are capped so that
  ``m <= max(r * window)`` over the routes from there, and (ii) only routes
  with ``r * window >= m_max`` may take p from there, ``m_max`` the largest
  kg of p in any load at that oven and setting. A mixed batch going to one
  tunnel feeds its two products one after the other with the tunnel's
  changeover between them (two runs), each product within its own window;
  its tray patterns are capped so that some order fits. These are necessary
  conditions at the fastest feed; whether the belt is free when a batch
  comes out is the timed schedule's to keep.
* A mixed load holds at most two products whose cook dwells are close: the
  longer is at most ``(1 + mix_tolerance)`` times the shorter; the batch
  runs as long as the slower product. Batches may be loaded below the
  pattern (fewer trays), so only tray patterns that are maximal (no other
  pattern has at least as many trays of each product) are kept: the others
  are dominated.
* Within one (product, oven, setting, tunnel, tunnel setting) a loading
  option is dropped when another one is at least as fast and needs no more
  heat out (it is dominated).
* A tunnel setting is dropped for a product when another setting of the same
  tunnel is at least as fast from every oven and oven setting (and, for the
  least-energy objective, takes out no more heat): tunnel runs and their
  changeovers are per product and setting, so the swap never costs.
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from optimizer.planning.inputs import Objective, OvenData, PlanInputs, ProductData, TunnelData

_KEY_SEP = "|"


@dataclass(frozen=True)
class CookOption:
    """A product cookable in an oven at one setting.

    Parameters
    ----------
    product, oven, setting : str
        Keys.
    cook_min : float
        Cook dwell of the largest piece, margin included [min].
    heat_in_kj_per_kg : float
        Heat put into the product by the oven [kJ/kg].
    max_trays : int
        Most trays of this product one batch may hold (oven trays, oven kg
        capacity and the hot-hold cap) [-].
    """

    product: str
    oven: str
    setting: str
    cook_min: float
    heat_in_kj_per_kg: float
    max_trays: int


@dataclass(frozen=True)
class TunnelRoute:
    """One way a product from one oven setting goes through a tunnel.

    Parameters
    ----------
    product, oven, oven_setting, tunnel, tunnel_setting, loading : str
        Keys.
    belt_speed_m_per_min : float
        Belt speed used (the fastest the chill rule allows) [m/min].
    rate_kg_per_min : float
        Throughput at that speed and loading [kg/min].
    heat_in_kj_per_kg, heat_out_kj_per_kg : float
        Oven heat in and tunnel heat out [kJ/kg].
    chill_min : float
        Residence time the chill rule needs [min].
    """

    product: str
    oven: str
    oven_setting: str
    tunnel: str
    tunnel_setting: str
    loading: str
    belt_speed_m_per_min: float
    rate_kg_per_min: float
    heat_in_kj_per_kg: float
    heat_out_kj_per_kg: float
    chill_min: float

    @property
    def key(self) -> str:
        """Stable text key."""
        return _KEY_SEP.join(
            (
                self.product,
                self.oven,
                self.oven_setting,
                self.tunnel,
                self.tunnel_setting,
                self.loading,
            )
        )

    @property
    def run(self) -> tuple[str, str, str]:
        """The tunnel run this route belongs to: (tunnel, product, tunnel setting).

        Changing the loading pattern inside a run costs no changeover.
        """
        return (self.tunnel, self.product, self.tunnel_setting)

    @property
    def source(self) -> tuple[str, str, str]:
        """(product, oven, oven setting) this route takes product from."""
        return (self.product, self.oven, self.oven_setting)


@dataclass(frozen=True)
class BatchLoad:
    """A batch load: one oven, one setting, trays of one or two products.

    Parameters
    ----------
    oven, setting : str
        Keys.
    trays : tuple of (str, int)
        Trays of each product, sorted by product key [-].
    kg : tuple of (str, float)
        Most kg of each product per batch, same order [kg].
    cook_min : float
        Cook dwell of the slowest product in the load [min].
    cycle_min : float
        Cook plus load and unload minutes per batch [min].
    """

    oven: str
    setting: str
    trays: tuple[tuple[str, int], ...]
    kg: tuple[tuple[str, float], ...]
    cook_min: float
    cycle_min: float

    @property
    def key(self) -> str:
        """Stable text key, e.g. ``oven-1|hot|beef:4+pork:6``."""
        body = "+".join(f"{p}:{n}" for p, n in self.trays)
        return _KEY_SEP.join((self.oven, self.setting, body))

    @property
    def products(self) -> tuple[str, ...]:
        """Product keys in the load."""
        return tuple(p for p, _ in self.trays)

    @property
    def is_mixed(self) -> bool:
        """True when the load holds more than one product."""
        return len(self.trays) > 1

    @property
    def description(self) -> str:
        """Readable description, e.g. ``beef x4 + pork x6 trays``."""
        return " + ".join(f"{p} x{n}" for p, n in self.trays) + " trays"

    def kg_of(self, product: str) -> float:
        """Most kg of ``product`` per batch of this load [kg]."""
        for p, m in self.kg:
            if p == product:
                return m
        return 0.0


@dataclass(frozen=True)
class Candidates:
    """Everything the model is built from.

    Parameters
    ----------
    cook : mapping
        (product, oven, setting) -> CookOption, cookable and routable only.
    routes : tuple of TunnelRoute
        Sorted by key.
    singles : tuple of BatchLoad
        One full single-product load per cook option, sorted by key.
    mixed_pool : tuple of BatchLoad
        All maximal mixed loads (enumerated), sorted by key; the model uses
        all of them or the ones column generation picks.
    excluded : mapping
        product -> reasons it has no cook option or no route (from the dwell
        table and the checks here); empty for planned products that can run.
    """

    cook: Mapping[tuple[str, str, str], CookOption]
    routes: tuple[TunnelRoute, ...]
    singles: tuple[BatchLoad, ...]
    mixed_pool: tuple[BatchLoad, ...]
    excluded: Mapping[str, tuple[str, ...]]


def planned_products(inputs: PlanInputs) -> tuple[str, ...]:
    """Products named in at least one order, in catalogue order."""
    ordered = {o.product for o in inputs.orders}
    return tuple(p.name for p in inputs.products if p.name in ordered)


def _feasible_rows(inputs: PlanInputs):
    d = inputs.dwell
    feas = d["feasible"].astype(bool).to_numpy()
    return d.loc[feas]


def candidates(inputs: PlanInputs, mix_tolerance: float, max_mix_products: int) -> Candidates:
    """Cook options, tunnel routes and loads for ``inputs``.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    mix_tolerance : float
        Products share a mixed load when the longer cook is at most
        ``(1 + mix_tolerance)`` times the shorter [-].
    max_mix_products : int
        1 (single-product loads only) or 2.

    Returns
    -------
    Candidates
    """
    planned = planned_products(inputs)
    prods = {p.name: p for p in inputs.products}
    ovens = {o.name: o for o in inputs.ovens}
    tunnels = {t.name: t for t in inputs.tunnels}
    excluded: dict[str, list[str]] = defaultdict(list)

    all_rows = inputs.dwell
    rows = _feasible_rows(inputs)
    rows = rows[rows["product"].isin(planned)]
    known = rows["oven"].isin(ovens) & rows["tunnel"].isin(tunnels)
    rows = rows[known]

    # Raw routes with belt speed and rate; skip settings/loadings the plant lacks.
    raw: dict[tuple[str, str, str], list[TunnelRoute]] = defaultdict(list)
    cook_min: dict[tuple[str, str, str], float] = {}
    heat_in: dict[tuple[str, str, str], float] = {}
    cols = [
        "product",
        "oven",
        "oven_setting",
        "tunnel",
        "tunnel_setting",
        "loading",
        "cook_min",
        "heat_in_kj_per_kg",
        "heat_out_kj_per_kg",
        "chill_min",
        "max_belt_speed_m_per_min",
    ]
    for r in rows[cols].itertuples(index=False, name=None):
        p, o, os_, t, ts, ld, cmin, hin, hout, chmin, vmax = r
        oven, tun = ovens[o], tunnels[t]
        if os_ not in oven.settings or ts not in tun.settings:
            continue
        if ld not in {x.name for x in tun.loadings}:
            continue
        if not (np.isfinite(cmin) and cmin > 0 and np.isfinite(vmax) and vmax > 0):
            continue
        v = min(float(vmax), tun.max_speed_m_per_min)
        if v < tun.min_speed_m_per_min:
            continue
        rate = prods[p].belt_kg_per_m2 * tun.coverage(ld) * tun.width_m * v
        hin = float(hin) if np.isfinite(hin) else 0.0
        hout = float(hout) if np.isfinite(hout) else 0.0
        route = TunnelRoute(p, o, os_, t, ts, ld, v, rate, hin, hout, float(chmin))
        raw[(p, o, os_)].append(route)
        cook_min[(p, o, os_)] = max(cook_min.get((p, o, os_), 0.0), float(cmin))
        heat_in[(p, o, os_)] = max(heat_in.get((p, o, os_), 0.0), hin)

    cook: dict[tuple[str, str, str], CookOption] = {}
    routes: list[TunnelRoute] = []
    longest_shift = max(max(s.available(o) for s in inputs.shifts) for o in ovens)
    for src in sorted(raw):
        p, o, os_ = src
        oven, prod = ovens[o], prods[p]
        if cook_min[src] + oven.load_unload_min > longest_shift:
            excluded[p].append(
                f"{o} at {os_}: cook {cook_min[src]:.0f} min does not fit in a shift"
            )
            continue
        trays = min(oven.trays, math.floor(oven.capacity_kg / prod.kg_per_tray + 1e-9))
        if math.isfinite(prod.hot_hold_min):
            most = max(
                rt.rate_kg_per_min * feed_window(prod, tunnels[rt.tunnel]) for rt in raw[src]
            )
            trays = min(trays, math.floor(most / prod.kg_per_tray + 1e-9))
        if trays < 1:
            excluded[p].append(
                f"{o} at {os_}: not one tray fits the oven or the hot-hold limit "
                f"({prod.hot_hold_min:g} min less the transfer, at the fastest belt)"
            )
            continue
        cook[src] = CookOption(p, o, os_, cook_min[src], heat_in[src], trays)
        m_max = trays * prod.kg_per_tray
        ok = [
            rt
            for rt in raw[src]
            if not math.isfinite(prod.hot_hold_min)
            or rt.rate_kg_per_min * feed_window(prod, tunnels[rt.tunnel]) >= m_max * (1 - 1e-9)
        ]
        routes.extend(_undominated(ok))
    routes = _without_dominated_settings(routes, energy=inputs.objective is Objective.LEAST_ENERGY)
    routes.sort(key=lambda r: r.key)

    for p in planned:
        if not any(k[0] == p for k in cook):
            sub = all_rows[all_rows["product"] == p]
            reasons = sorted({str(x) for x in sub["reason"] if isinstance(x, str) and x})
            if sub.empty:
                reasons.append("no rows in the dwell table")
            elif not reasons and not excluded[p]:
                reasons.append("no feasible row on this plant's ovens, tunnels and settings")
            excluded[p] = list(excluded[p]) + reasons

    singles = sorted(
        (_load(inputs, o, os_, {p: c.max_trays}, cook) for (p, o, os_), c in cook.items()),
        key=lambda ld: ld.key,
    )
    mixed = (
        sorted(_mixed_loads(inputs, cook, mix_tolerance, routes), key=lambda ld: ld.key)
        if max_mix_products >= 2
        else []
    )
    return Candidates(
        cook=dict(sorted(cook.items())),
        routes=tuple(routes),
        singles=tuple(singles),
        mixed_pool=tuple(mixed),
        excluded={p: tuple(v) for p, v in sorted(excluded.items()) if v and p in planned},
    )


def feed_window(product: ProductData, tunnel: TunnelData) -> float:
    """Minutes the belt has to take a batch of ``product``: hot hold less transfer [min].

    ``inf`` without a hot-hold limit; 0 when the transfer alone uses the limit.
    """
    return max(0.0, product.hot_hold_min - tunnel.transfer_min)


def _best_feed(
    inputs: PlanInputs, routes: tuple[TunnelRoute, ...] | list[TunnelRoute]
) -> dict[tuple[str, str, str], dict[str, tuple[float, float]]]:
    """(product, oven, setting) -> tunnel -> (fastest feed [kg/min], feed window [min])."""
    tunnels = {t.name: t for t in inputs.tunnels}
    out: dict[tuple[str, str, str], dict[str, tuple[float, float]]] = defaultdict(dict)
    for r in routes:
        win = feed_window(inputs.product(r.product), tunnels[r.tunnel])
        rate = max(r.rate_kg_per_min, out[r.source].get(r.tunnel, (0.0, win))[0])
        out[r.source][r.tunnel] = (rate, win)
    return out


def _pair_fits(
    feed_a: Mapping[str, tuple[float, float]],
    feed_b: Mapping[str, tuple[float, float]],
    changeover: Mapping[str, float],
    kg_a: float,
    kg_b: float,
):
    """Predicate ``(trays_a, trays_b) -> bool``: the batch can go on the belts in time.

    Each product goes to one tunnel. On two tunnels both feed at once and
    each must fit its own window; on one tunnel one product follows the
    other after the tunnel's changeover, each within its window (either
    order). Feeds are at the fastest route [kg/min].
    """

    def fits(na: int, nb: int) -> bool:
        ma, mb = na * kg_a, nb * kg_b
        for ta, (ra, wa) in feed_a.items():
            for tb, (rb, wb) in feed_b.items():
                da, db = ma / ra, mb / rb
                if ta != tb:
                    if da <= wa + 1e-9 and db <= wb + 1e-9:
                        return True
                    continue
                co = changeover.get(ta, 0.0)
                if da <= wa + 1e-9 and da + co + db <= wb + 1e-9:
                    return True
                if db <= wb + 1e-9 and db + co + da <= wa + 1e-9:
                    return True
        return False

    return fits


def _undominated(routes: list[TunnelRoute]) -> list[TunnelRoute]:
    """Drop loadings beaten (faster and no more heat out) within one tunnel setting."""
    keep = []
    for a in routes:
        dominated = False
        for b in routes:
            if b is a or (b.tunnel, b.tunnel_setting) != (a.tunnel, a.tunnel_setting):
                continue
            ge = (
                b.rate_kg_per_min >= a.rate_kg_per_min
                and b.heat_out_kj_per_kg <= a.heat_out_kj_per_kg
            )
            gt = (
                b.rate_kg_per_min > a.rate_kg_per_min
                or b.heat_out_kj_per_kg < a.heat_out_kj_per_kg
                or b.loading < a.loading
            )
            if ge and gt:
                dominated = True
                break
        if not dominated:
            keep.append(a)
    return keep


def _without_dominated_settings(routes: list[TunnelRoute], *, energy: bool) -> list[TunnelRoute]:
    """Drop a product's tunnel setting that another setting of the same tunnel beats.

    Setting ``a`` of tunnel t beats setting ``b`` for product p when every
    route of p at ``b`` has a route at ``a`` from the same oven and oven
    setting that is at least as fast (and, when ``energy``, takes out no
    more heat). Any plan that runs p at ``b`` can then run it at ``a``
    instead in no more tunnel minutes and no more runs (changeovers are per
    product and setting), so the optimum is unchanged. Between two settings
    that beat each other the first by name is kept.
    """
    by_pt: dict[tuple[str, str], dict[str, list[TunnelRoute]]] = defaultdict(
        lambda: defaultdict(list)
    )
    for r in routes:
        by_pt[(r.product, r.tunnel)][r.tunnel_setting].append(r)

    def beats(a: list[TunnelRoute], b: list[TunnelRoute]) -> bool:
        best: dict[tuple[str, str, str], list[TunnelRoute]] = defaultdict(list)
        for r in a:
            best[r.source].append(r)
        return all(
            any(
                x.rate_kg_per_min >= y.rate_kg_per_min
                and (not energy or x.heat_out_kj_per_kg <= y.heat_out_kj_per_kg)
                for x in best.get(y.source, ())
            )
            for y in b
        )

    keep: list[TunnelRoute] = []
    for per_setting in by_pt.values():
        names = sorted(per_setting)
        dropped: set[str] = set()
        for b in names:
            for a in names:
                if a == b or a in dropped:
                    continue
                if beats(per_setting[a], per_setting[b]) and (
                    a < b or not beats(per_setting[b], per_setting[a])
                ):
                    dropped.add(b)
                    break
        for name in names:
            if name not in dropped:
                keep.extend(per_setting[name])
    return keep


def _load(
    inputs: PlanInputs,
    oven: str,
    setting: str,
    trays: Mapping[str, int],
    cook: Mapping[tuple[str, str, str], CookOption],
) -> BatchLoad:
    o = next(x for x in inputs.ovens if x.name == oven)
    items = tuple(sorted((p, int(n)) for p, n in trays.items() if n > 0))
    kg = tuple((p, n * inputs.product(p).kg_per_tray) for p, n in items)
    cmin = max(cook[(p, oven, setting)].cook_min for p, _ in items)
    return BatchLoad(oven, setting, items, kg, cmin, cmin + o.load_unload_min)


def close_enough(a_min: float, b_min: float, tolerance: float) -> bool:
    """True when the longer of two cook dwells is within ``(1 + tolerance)`` of the shorter."""
    lo, hi = sorted((a_min, b_min))
    return hi <= (1.0 + tolerance) * lo * (1 + 1e-12)


def pair_patterns(
    trays: int,
    capacity_kg: float,
    kg_a: float,
    kg_b: float,
    max_a: int,
    max_b: int,
    fits=None,
) -> list[tuple[int, int]]:
    """Maximal tray patterns (a, b), a >= 1, b >= 1, of two products in one batch.

    Parameters
    ----------
    trays : int
        Tray positions [-].
    capacity_kg : float
        Batch capacity [kg].
    kg_a, kg_b : float
        kg per tray of each product [kg].
    max_a, max_b : int
        Tray caps of each product (hot hold) [-].
    fits : callable, optional
        ``fits(a, b) -> bool``, monotone (fewer trays never fit worse): the
        two products of the batch can go onto the belts within the hot hold.

    Returns
    -------
    list of (int, int)
        Patterns no other pattern beats in both counts, by increasing ``a``.
    """
    best: list[tuple[int, int]] = []
    for a in range(1, min(max_a, trays - 1) + 1):
        room = capacity_kg - a * kg_a
        b = min(trays - a, max_b, math.floor(room / kg_b + 1e-9))
        while fits is not None and b >= 1 and not fits(a, b):
            b -= 1
        if b >= 1:
            best.append((a, b))
    out = []
    for i, (a, b) in enumerate(best):
        # b is non-increasing in a; (a, b) is dominated when a+1 keeps the same b.
        if i + 1 < len(best) and best[i + 1][1] >= b:
            continue
        out.append((a, b))
    return out


def _pairs(
    inputs: PlanInputs,
    cook: Mapping[tuple[str, str, str], CookOption],
    tolerance: float,
):
    by_oven: dict[tuple[str, str], list[CookOption]] = defaultdict(list)
    for c in cook.values():
        by_oven[(c.oven, c.setting)].append(c)
    for (o, os_), opts in sorted(by_oven.items()):
        opts = sorted(opts, key=lambda c: (c.cook_min, c.product))
        for i, a in enumerate(opts):
            for b in opts[i + 1 :]:
                if not close_enough(a.cook_min, b.cook_min, tolerance):
                    break
                pa, pb = sorted((a, b), key=lambda c: c.product)
                yield o, os_, pa, pb


def _pair_patterns_of(
    inputs: PlanInputs,
    oven: OvenData,
    a: CookOption,
    b: CookOption,
    feeds: Mapping[tuple[str, str, str], Mapping[str, tuple[float, float]]] | None,
) -> list[tuple[int, int]]:
    """Maximal tray patterns of cook options ``a`` and ``b`` in one batch.

    With ``feeds`` (from :func:`_best_feed`) the patterns also keep the hot
    hold of the two products together (:func:`_pair_fits`).
    """
    ka, kb = inputs.product(a.product).kg_per_tray, inputs.product(b.product).kg_per_tray
    fits = None
    if feeds is not None:
        changeover = {t.name: t.changeover_min for t in inputs.tunnels}
        fa = feeds.get((a.product, a.oven, a.setting), {})
        fb = feeds.get((b.product, b.oven, b.setting), {})
        fits = _pair_fits(fa, fb, changeover, ka, kb)
    return pair_patterns(oven.trays, oven.capacity_kg, ka, kb, a.max_trays, b.max_trays, fits)


def _mixed_loads(
    inputs: PlanInputs,
    cook: Mapping[tuple[str, str, str], CookOption],
    tolerance: float,
    routes: list[TunnelRoute],
) -> list[BatchLoad]:
    out = []
    ovens = {o.name: o for o in inputs.ovens}
    feeds = _best_feed(inputs, routes)
    for o, os_, a, b in _pairs(inputs, cook, tolerance):
        for na, nb in _pair_patterns_of(inputs, ovens[o], a, b, feeds):
            out.append(_load(inputs, o, os_, {a.product: na, b.product: nb}, cook))
    return out


def price_mixed_loads(
    inputs: PlanInputs,
    cook: Mapping[tuple[str, str, str], CookOption],
    tolerance: float,
    kg_value: Mapping[tuple[str, str, str, str], float],
    minute_cost: Mapping[tuple[str, str, str], float],
    limit_per_oven_setting: int = 3,
    threshold: float = 1e-6,
    routes: tuple[TunnelRoute, ...] | None = None,
) -> list[tuple[float, BatchLoad]]:
    """Knapsack pricing of mixed loads from LP duals (column generation).

    For each (oven, setting), shift and pair of close products, the best tray
    pattern is found exactly by scanning the tray count of the first product
    (the second gets the most trays that still fit the tray positions, the kg
    capacity and its hot-hold cap): this is the two-product knapsack over
    tray counts. Because a batch may be loaded below its pattern, a product
    whose kg has no value in that shift contributes nothing, and such a pair
    is left to the single-product loads.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    cook : mapping
        Cook options.
    tolerance : float
        Mix tolerance [-].
    kg_value : mapping
        (product, oven, setting, shift) -> value of one more kg unloaded
        there [objective units/kg].
    minute_cost : mapping
        (oven, setting, shift) -> cost of one more batch-minute there
        [objective units/min].
    limit_per_oven_setting : int
        Most loads returned per (oven, setting).
    threshold : float
        Least improvement a load must bring per batch [objective units].
    routes : sequence of TunnelRoute, optional
        The tunnel routes (``Candidates.routes``): a pattern must go onto the
        belts within the hot hold; ``None`` checks only each product's tray
        cap.

    Returns
    -------
    list of (float, BatchLoad)
        Best improvement per batch (over shifts) and the load, best first.
    """
    shifts = [s.name for s in inputs.shifts]
    found: dict[tuple[str, str], dict[str, tuple[float, BatchLoad]]] = defaultdict(dict)
    ovens = {o.name: o for o in inputs.ovens}
    feeds = None if routes is None else _best_feed(inputs, routes)
    for o, os_, a, b in _pairs(inputs, cook, tolerance):
        oven = ovens[o]
        ka, kb = inputs.product(a.product).kg_per_tray, inputs.product(b.product).kg_per_tray
        cycle = max(a.cook_min, b.cook_min) + oven.load_unload_min
        patterns = _pair_patterns_of(inputs, oven, a, b, feeds)
        if not patterns:
            continue
        pat = np.asarray(patterns, dtype=float)
        for s in shifts:
            va = kg_value.get((a.product, o, os_, s), 0.0)
            vb = kg_value.get((b.product, o, os_, s), 0.0)
            if va <= 0 or vb <= 0:
                continue
            gain = (
                va * ka * pat[:, 0]
                + vb * kb * pat[:, 1]
                - cycle * minute_cost.get((o, os_, s), 0.0)
            )
            i = int(np.argmax(gain))
            if gain[i] > threshold:
                na, nb = patterns[i]
                load = _load(inputs, o, os_, {a.product: na, b.product: nb}, cook)
                prev = found[(o, os_)].get(load.key)
                if prev is None or gain[i] > prev[0]:
                    found[(o, os_)][load.key] = (float(gain[i]), load)
    out = []
    for key in sorted(found):
        items = sorted(found[key].values(), key=lambda x: (-x[0], x[1].key))
        out.extend(items[:limit_per_oven_setting])
    out.sort(key=lambda x: (-x[0], x[1].key))
    return out


@dataclass(frozen=True)
class ShiftPattern:
    """What one oven does in one shift: batches of each load, settings in order.

    Parameters
    ----------
    oven, shift : str
        Keys.
    counts : tuple of (str, int)
        Load key -> number of batches, sorted by load key [-].
    minutes : float
        Batch cycles plus setting changeovers (the first setting is free)
        [min].
    settings : tuple of str
        Settings the pattern runs, sorted.
    """

    oven: str
    shift: str
    counts: tuple[tuple[str, int], ...]
    minutes: float
    settings: tuple[str, ...]

    @property
    def key(self) -> str:
        """Stable text key."""
        body = ",".join(f"{k}*{n}" for k, n in self.counts) or "idle"
        return f"{self.oven}{_KEY_SEP}{self.shift}{_KEY_SEP}{body}"


def make_pattern(
    oven: str,
    shift: str,
    counts: Mapping[str, int],
    loads: Mapping[str, BatchLoad],
    changeover_min: float,
) -> ShiftPattern:
    """A :class:`ShiftPattern` from batch counts, with its exact minutes."""
    items = tuple(sorted((k, int(n)) for k, n in counts.items() if n > 0))
    settings = tuple(sorted({loads[k].setting for k, _ in items}))
    minutes = sum(loads[k].cycle_min * n for k, n in items)
    minutes += changeover_min * max(0, len(settings) - 1)
    return ShiftPattern(oven, shift, items, minutes, settings)


def _unbounded_knapsack(capacity: int, sizes: list[int], values: list[float]):
    """Best value within each budget 0..capacity and the choice per budget."""
    best = [0.0] * (capacity + 1)
    choice = [-1] * (capacity + 1)
    for t in range(1, capacity + 1):
        b, c = best[t - 1], -1
        for i, (sz, v) in enumerate(zip(sizes, values, strict=True)):
            if sz <= t:
                cand = best[t - sz] + v
                if cand > b + 1e-12:
                    b, c = cand, i
        best[t], choice[t] = b, c
    return np.asarray(best), choice


def _pareto_items(items: list[tuple[int, float, str]]) -> list[tuple[int, float, str]]:
    """Drop items beaten by one no longer and at least as valuable."""
    items = sorted(items, key=lambda x: (x[0], -x[1], x[2]))
    out: list[tuple[int, float, str]] = []
    top = -math.inf
    for sz, v, k in items:
        if v > top + 1e-12:
            out.append((sz, v, k))
            top = v
    return out


def best_shift_pattern(
    items_by_setting: Mapping[str, list[tuple[float, float, str]]],
    available_min: float,
    changeover_min: float,
) -> dict[str, int]:
    """Knapsack pricing of one oven-shift: the batch counts of most value.

    Each setting's loads form an unbounded knapsack over minutes; settings
    are combined with a changeover between them (the first is free). Cycle
    and changeover minutes are rounded up to whole minutes for the search, so
    the pattern found always fits the exact minutes.

    Parameters
    ----------
    items_by_setting : mapping
        setting -> list of (cycle [min], value per batch [objective units],
        load key); only positive values are useful.
    available_min : float
        Oven minutes in the shift [min].
    changeover_min : float
        Minutes per change of setting [min].

    Returns
    -------
    dict
        Load key -> batches (empty when nothing has positive value).
    """
    cap = math.floor(available_min + 1e-9)
    if cap <= 0:
        return {}
    co = math.ceil(changeover_min - 1e-9)
    per_setting = []
    for os_ in sorted(items_by_setting):
        raw = [
            (math.ceil(c - 1e-9), v, k)
            for c, v, k in items_by_setting[os_]
            if v > 1e-12 and c <= cap
        ]
        its = _pareto_items(raw)
        if not its:
            continue
        f, ch = _unbounded_knapsack(cap, [i[0] for i in its], [i[1] for i in its])
        per_setting.append((os_, its, f, ch))
    if not per_setting:
        return {}
    t_idx = np.arange(cap + 1)
    u_idx = np.arange(cap + 1)
    prev_idx = t_idx[:, None] - u_idx[None, :] - co  # budget left before this setting
    valid = (prev_idx >= 0) & (u_idx[None, :] >= 1)
    prev_safe = np.where(valid, prev_idx, 0)
    b = np.full(cap + 1, -np.inf)
    history = []
    for _os, _its, f, _ch in per_setting:
        first = f.copy()
        combo = np.where(valid, b[prev_safe] + f[None, :], -np.inf)
        arg = np.argmax(combo, axis=1)
        combo_best = combo[t_idx, arg]
        code = np.zeros(cap + 1, dtype=int)  # 0 skip, 1 first setting, 2 after another
        new_b = b.copy()
        better_first = first > new_b + 1e-12
        new_b = np.where(better_first, first, new_b)
        code[better_first] = 1
        better_combo = combo_best > new_b + 1e-12
        new_b = np.where(better_combo, combo_best, new_b)
        code[better_combo] = 2
        history.append((code, arg))
        b = new_b
    if not b[cap] > 1e-12:
        return {}
    counts: dict[str, int] = defaultdict(int)

    def take(j: int, budget: int) -> None:
        _os, its, _f, ch = per_setting[j]
        while budget > 0:
            i = ch[budget]
            if i < 0:
                budget -= 1
            else:
                counts[its[i][2]] += 1
                budget -= its[i][0]

    t = cap
    for j in range(len(per_setting) - 1, -1, -1):
        code, arg = history[j]
        if code[t] == 0:
            continue
        if code[t] == 1:
            take(j, t)
            break
        u = int(arg[t])
        take(j, u)
        t = t - u - co
    return dict(counts)
