"""The plan in plain sentences, for the first screen of the report.

A planner opening the report wants three answers before any table: why
each product is made where it is, why a product is not made, and why some
batches are small. :func:`plan_explanation` writes them from the plan's own
numbers (the binding machine and its shadow price, the orders' minimums and
maximums, the dwell table's cook minutes, the belt's feed rate against the
hot-hold window); it states only what those numbers show.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import pandas as pd

from optimizer.planning.inputs import PlanInputs
from optimizer.planning.results import PlanResult, bottleneck

__all__ = ["SMALL_BATCH", "not_made_notes", "plan_explanation"]

SMALL_BATCH = 0.9
"""A batch is small when it fills less than this share of both the trays and the kg [-]."""

_KG_TOL = 0.5  # kg: "at the order minimum" within half a kilogram


def _orders(inputs: PlanInputs) -> dict[str, tuple[float, float]]:
    out: dict[str, tuple[float, float]] = {}
    for o in inputs.orders:
        lo, hi = out.get(o.product, (0.0, 0.0))
        out[o.product] = (lo + o.min_kg, hi + o.max_kg)
    return out


def _fastest(dwell: pd.DataFrame, product: str, oven: str) -> tuple[str, float] | None:
    if dwell.empty:
        return None
    rows = dwell[(dwell["product"] == product) & (dwell["oven"] == oven)]
    if "feasible" in rows.columns:
        rows = rows[rows["feasible"].astype(bool)]
    rows = rows[rows["cook_min"].notna()]
    if rows.empty:
        return None
    best = rows.sort_values(["cook_min", "oven_setting"]).iloc[0]
    return str(best["oven_setting"]), float(best["cook_min"])


def _order_phrase(kg: float, wanted: tuple[float, float] | None, limiter: str) -> str:
    if wanted is None:
        return f"{kg:,.0f} kg"
    lo, hi = wanted
    if lo > 0 and kg <= lo + _KG_TOL:
        return (
            f"{kg:,.0f} kg, its order minimum: more of it would use {limiter} time that "
            "gains the objective more on other products"
        )
    if math.isfinite(hi) and kg >= hi - _KG_TOL:
        return f"{kg:,.0f} kg, its order maximum"
    if lo <= 0 and not math.isfinite(hi):
        return f"{kg:,.0f} kg: as much as {limiter} time allows"
    upper = f"{hi:,.0f} kg" if math.isfinite(hi) else "no maximum"
    return f"{kg:,.0f} kg (orders {lo:,.0f} kg to {upper}): as much as {limiter} time allows"


def _where(result: PlanResult, inputs: PlanInputs, product: str) -> str:
    by_route: dict[tuple[str, str], float] = {}
    for r in result.runs:
        if r.product == product and r.kg > 0:
            by_route[(r.oven, r.oven_setting)] = by_route.get((r.oven, r.oven_setting), 0.0) + r.kg
    parts = []
    for (oven, setting), kg in sorted(by_route.items(), key=lambda kv: -kv[1]):
        cook = _cook_at(inputs.dwell, product, oven, setting)
        text = f"{kg:,.0f} kg on {oven} at {setting}"
        fastest = _fastest(inputs.dwell, product, oven)
        if cook is not None:
            text += f" ({cook:.0f} min cook"
            if fastest is not None and fastest[0] != setting and fastest[1] < cook - 0.5:
                sharing = _sharing(result, oven, setting, product)
                text += (
                    f"; its fastest there is {fastest[0]} at {fastest[1]:.0f} min, but the "
                    f"oven runs {setting} for {sharing} and a setting change costs time"
                    if sharing
                    else f"; its fastest there is {fastest[0]} at {fastest[1]:.0f} min"
                )
            text += ")"
        parts.append(text)
    tunnels = sorted(
        {(r.tunnel, r.tunnel_setting, r.loading) for r in result.runs if r.product == product}
    )
    chill = "; ".join(f"{t} at {s}, {ld} loading" for t, s, ld in tunnels)
    return ", ".join(parts) + (f"; chilled in {chill}" if chill else "")


def _cook_at(dwell: pd.DataFrame, product: str, oven: str, setting: str) -> float | None:
    if dwell.empty:
        return None
    rows = dwell[
        (dwell["product"] == product) & (dwell["oven"] == oven) & (dwell["oven_setting"] == setting)
    ]
    rows = rows[rows["cook_min"].notna()]
    return float(rows["cook_min"].min()) if not rows.empty else None


def _sharing(result: PlanResult, oven: str, setting: str, product: str) -> str:
    others = sorted(
        {
            c.product
            for b in result.batches
            if b.oven == oven and b.setting == setting
            for c in b.contents
            if c.product != product and c.kg > 0
        }
    )
    return ", ".join(others)


def _small_batches(result: PlanResult, inputs: PlanInputs, limit: int) -> list[str]:
    ovens = {o.name: o for o in inputs.ovens}
    products = {p.name: p for p in inputs.products}
    tunnels = {t.name: t for t in inputs.tunnels}
    rate: dict[tuple[str, str, str, str], tuple[float, str]] = {}
    for r in result.runs:
        rate[(r.shift, r.product, r.oven, r.oven_setting)] = (r.rate_kg_per_min, r.tunnel)
    found = []
    for b in result.batches:
        oven = ovens.get(b.oven)
        if oven is None or b.batches <= 0:
            continue
        # trays that hold product (a load pattern may leave a product's trays empty)
        trays = sum(
            math.ceil(c.kg / b.batches / products[c.product].kg_per_tray - 1e-9)
            for c in b.contents
            if c.kg > 0 and c.product in products
        )
        kg = b.kg / b.batches
        fill = max(trays / max(oven.trays, 1), kg / oven.capacity_kg if oven.capacity_kg else 0)
        if fill >= SMALL_BATCH:
            continue
        what = " + ".join(c.product for c in b.contents if c.kg > 0)
        head = (
            f"{b.oven} in {b.shift}: {b.batches} {'batch' if b.batches == 1 else 'batches'} "
            f"of {what} at {kg:,.0f} kg "
            f"({trays} of {oven.trays} trays)"
        )
        why = ""
        for c in b.contents:
            feed = rate.get((b.shift, c.product, b.oven, b.setting))
            if feed is None:
                continue
            per_min, tunnel = feed
            t = tunnels.get(tunnel)
            p = products.get(c.product)
            hold = min(
                p.hot_hold_min if p is not None else math.inf,
                t.hot_hold_min if t is not None else math.inf,
            )
            window = hold - (t.transfer_min if t is not None else 0.0)
            if math.isfinite(window) and window > 0 and kg >= 0.9 * per_min * window:
                why = (
                    f": the belt of {tunnel} takes {per_min:.1f} kg/min, so about "
                    f"{per_min * window:,.0f} kg can go on within the {hold:.0f} min hot hold "
                    "after the transfer"
                )
                break
        if not why:
            planned = sum(c.kg for c in b.contents)
            why = f": only {planned:,.0f} kg of it is planned on this oven in the shift"
        found.append((fill, head + why + "."))
    found.sort(key=lambda x: x[0])
    return [text for _, text in found[:limit]]


def plan_explanation(
    result: PlanResult,
    inputs: PlanInputs,
    not_made: Mapping[str, str] | None = None,
    *,
    small_batches: int = 5,
) -> list[str]:
    """Plain sentences on why the plan is what it is.

    Parameters
    ----------
    result : PlanResult
        The plan.
    inputs : PlanInputs
        Its inputs (orders, machines, the dwell table).
    not_made : mapping of str to str, optional
        Product → why it is not made (the ``note`` of the totals table).
    small_batches : int
        Most sentences on small batches (the smallest first).

    Returns
    -------
    list of str
        The binding machine, one sentence per product made, one per
        product not made, and the small batches; empty without a plan.
    """
    if not result.status.has_plan:
        return []
    lines: list[str] = []
    bn = bottleneck(result)
    limiter = f"{bn.kind} {bn.machine}" if bn is not None else "machine"
    if bn is not None:
        lines.append(
            f"The {limiter} limits the plan: it is used {100 * bn.utilisation:.0f} % of its "
            f"minutes on average, and one more hour of it is worth "
            f"{bn.per_hour:,.0f} {result.objective_unit} ({bn.reason})."
        )
    orders = _orders(inputs)
    made: dict[str, float] = {}
    for r in result.runs:
        made[r.product] = made.get(r.product, 0.0) + r.kg
    for product, kg in sorted(made.items(), key=lambda kv: -kv[1]):
        if kg <= 0:
            continue
        lines.append(
            f"{product}: {_order_phrase(kg, orders.get(product), limiter)}. "
            f"Made as {_where(result, inputs, product)}."
        )
    for product, why in sorted((not_made or {}).items()):
        lines.append(f"{product}: {why}.")
    lines.extend(_small_batches(result, inputs, small_batches))
    return lines


def not_made_notes(totals: pd.DataFrame) -> dict[str, str]:
    """Product → note for the products the long totals table lists with no kg."""
    if totals.empty or "note" not in totals.columns:
        return {}
    rows = totals[totals["note"].notna() & (totals["note"].astype(str) != "")]
    return {str(p): str(n) for p, n in zip(rows["product"], rows["note"], strict=True)}
