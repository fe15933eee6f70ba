"""One plan run: a validated scenario, its dwell table, the solve and the tables.

:class:`PlanRun` is what the ``corepace plan`` command, the reports and a
notebook share (``optimizer.plan_scenario`` returns one).
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd

from optimizer.dwell.assumptions import assumptions, assumptions_table
from optimizer.dwell.describe import rules_table
from optimizer.dwell.histories import CurveSet, Route, route_history
from optimizer.dwell.table import DWELL_KEYS, ruled_out_table, verify_rows
from optimizer.planning.adapter import plan_inputs
from optimizer.planning.highs import quiet_solver_banner
from optimizer.planning.inputs import PlanInputs, SolveOptions
from optimizer.planning.results import PlanResult, plan_tables, summary_text
from optimizer.planning.solve import plan
from optimizer.scenario.models import Scenario
from optimizer.scenario.provenance import file_sha256, resolved_sha256

__all__ = [
    "PlanRun",
    "alike_loadings",
    "dwell_notes",
    "dwell_used_table",
    "main_routes",
    "plan_checked",
    "solve_run",
    "summarise_notes",
    "temperature_curves",
]


@dataclass
class PlanRun:
    """Everything one plan run produced (for the report, the exports and JSON).

    Parameters
    ----------
    path : str
        Scenario file as given.
    sha256 : str
        Hash of the scenario file.
    resolved_sha256 : str
        Hash of the validated scenario content
        (:func:`optimizer.scenario.provenance.resolved_sha256`).
    scenario : optimizer.scenario.models.Scenario
        The validated scenario.
    dwell : pandas.DataFrame
        Its dwell table.
    inputs : optimizer.planning.inputs.PlanInputs
        Planner inputs.
    result : optimizer.planning.results.PlanResult
        The plan (or diagnosis).
    tables : dict of str to pandas.DataFrame
        Every table exported and shown in the report.
    """

    path: str
    sha256: str
    resolved_sha256: str
    scenario: Scenario
    dwell: pd.DataFrame
    inputs: PlanInputs
    result: PlanResult
    tables: dict[str, pd.DataFrame]

    def summary(self) -> str:
        """The plan's summary in words (status, objective, kg, bottleneck)."""
        return summary_text(self.result)


def solve_run(
    path: str, scenario: Scenario, dwell: pd.DataFrame, options: SolveOptions | None = None
) -> PlanRun:
    """Planner inputs, the solve and every table of one validated scenario.

    Parameters
    ----------
    path : str
        Scenario file the scenario came from (hashed into the run).
    scenario : optimizer.scenario.models.Scenario
        The validated scenario.
    dwell : pandas.DataFrame
        Its dwell table (:func:`optimizer.dwell.table.build_dwell_table`).
    options : optimizer.planning.inputs.SolveOptions, optional
        Solver options (default: :class:`SolveOptions` defaults).

    Returns
    -------
    PlanRun
        The run, with the plan tables plus ``rules``, ``dwell_used``,
        ``dwell_ruled_out`` and ``assumptions`` (the register of the planned
        products' dwell rows, :mod:`optimizer.dwell.assumptions`).
    """
    dwell, inputs, result = plan_checked(scenario, dwell, options)
    tables = dict(plan_tables(result, inputs))
    planned = sorted({o.product for o in inputs.orders})
    tables["rules"] = rules_table(scenario, planned)
    tables["dwell_used"] = dwell_used_table(dwell, result)
    tables["dwell_ruled_out"] = ruled_out_table(dwell, planned)
    rows = dwell[dwell["product"].isin(planned)] if "product" in dwell.columns else dwell
    tables["assumptions"] = assumptions_table(assumptions(scenario, rows))
    return PlanRun(
        path,
        file_sha256(path),
        resolved_sha256(scenario),
        scenario,
        dwell,
        inputs,
        result,
        tables,
    )


def plan_checked(
    scenario: Scenario,
    dwell: pd.DataFrame,
    options: SolveOptions | None = None,
    solve: Callable[[PlanInputs, SolveOptions], PlanResult] = plan,
) -> tuple[pd.DataFrame, PlanInputs, PlanResult]:
    """Plan, then re-verify every dwell cell the plan uses against the physics.

    The cells behind the plan's tunnel runs and oven batches are computed
    again unless this process computed them from the physics itself
    (:func:`optimizer.dwell.table.verify_rows`); when a cached value differs,
    the table is corrected (with a notice) and the plan made again, until
    the plan uses only the physics' values. ``solve``: the planner
    (:func:`optimizer.planning.solve.plan`, or ``plan_buckets`` for studies).

    Returns
    -------
    (pandas.DataFrame, PlanInputs, PlanResult)
        The dwell table the plan was made from, the planner inputs and the plan.
    """
    quiet_solver_banner()
    while True:
        inputs = plan_inputs(scenario, dwell)
        result = solve(inputs, options if options is not None else SolveOptions())
        routes = [
            (r.product, r.oven, r.oven_setting, r.tunnel, r.tunnel_setting, r.loading)
            for r in result.runs
        ]
        cooks = [(c.product, b.oven, b.setting) for b in result.batches for c in b.contents]
        corrected = verify_rows(scenario, dwell, routes, cooks)
        if corrected is None:
            return dwell, inputs, result
        dwell = corrected


def dwell_used_table(dwell: pd.DataFrame, result: PlanResult) -> pd.DataFrame:
    """The dwell-table rows behind the plan's tunnel runs (one per combination used)."""
    used = {
        (r.product, r.oven, r.oven_setting, r.tunnel, r.tunnel_setting, r.loading)
        for r in result.runs
    }
    if not used or dwell.empty:
        return dwell.iloc[0:0][[c for c in dwell.columns if c in _DWELL_USED_COLUMNS]]
    keys = list(zip(*(dwell[c] for c in DWELL_KEYS), strict=True))
    mask = [k in used for k in keys]
    columns = [c for c in _DWELL_USED_COLUMNS if c in dwell.columns]
    used_rows = dwell.loc[mask, columns].sort_values(DWELL_KEYS).reset_index(drop=True)
    if "notes" in used_rows.columns:
        used_rows["notes"] = [summarise_notes(n) or None for n in used_rows["notes"]]
    return used_rows


_DWELL_USED_COLUMNS = (
    *DWELL_KEYS,
    "cook_min",
    "cook_binding",
    "cook_method",
    "chill_min",
    "chill_binding",
    "chill_method",
    "max_belt_speed_m_per_min",
    "heat_in_kj_per_kg",
    "heat_out_kj_per_kg",
    "notes",
)

_NUMBER = re.compile(r"-?\d+(?:\.\d+)?(?:e-?\d+)?")


def summarise_notes(text: object) -> str:
    """One cell's notes with repeats folded: the same note at several values becomes a range.

    The physics notes of a cell (a correlation outside its range, condensation
    not modelled) repeat once per evaluation with a different first number,
    e.g. ``mu/mu_s = 0.903 …; mu/mu_s = 0.8707 …``; they are folded into one
    note giving the range of that number (``mu/mu_s = 0.8707–0.903 …``).

    Parameters
    ----------
    text : str or None
        The dwell table's ``notes`` cell (``"; "``-separated), or missing.

    Returns
    -------
    str
        The folded notes, ``"; "``-separated (empty when there are none).
    """
    if not isinstance(text, str) or not text.strip():
        return ""
    groups: dict[str, list[float]] = {}
    for note in (n.strip() for n in text.split("; ")):
        if not note:
            continue
        match = _NUMBER.search(note)
        if match is None:
            groups.setdefault(note, [])
            continue
        template = note[: match.start()] + "{}" + note[match.end() :]
        groups.setdefault(template, []).append(float(match.group()))
    out = []
    for template, values in groups.items():
        if not values:
            out.append(template)
            continue
        lo, hi = min(values), max(values)
        shown = f"{lo:.4g}" if lo == hi else f"{lo:.4g}–{hi:.4g}"
        out.append(template.replace("{}", shown, 1))
    return "; ".join(out)


def alike_loadings(dwell: pd.DataFrame) -> list[str]:
    """A note per tunnel whose loadings all give the same chill in the dwell table.

    Loadings without a measured ``h_factor`` cool alike in the model, so their
    dwell rows repeat; a reader is told once instead of wondering why.

    Parameters
    ----------
    dwell : pandas.DataFrame
        The dwell table (columns of :data:`optimizer.dwell.table.DWELL_KEYS`,
        ``chill_min``).

    Returns
    -------
    list of str
        One sentence per such tunnel (none when loadings differ or a tunnel
        has one loading).
    """
    if dwell.empty or "chill_min" not in dwell.columns:
        return []
    notes = []
    for tunnel, rows in dwell.groupby("tunnel", sort=False):
        loadings = list(dict.fromkeys(rows["loading"]))
        if len(loadings) < 2:
            continue
        keys = [k for k in DWELL_KEYS if k not in ("tunnel", "loading")]
        wide = rows.pivot_table(index=keys, columns="loading", values="chill_min", dropna=False)
        values = wide.to_numpy(dtype=float)
        same = np.isclose(values, values[:, :1], rtol=1e-9, atol=0.0) | (
            np.isnan(values) & np.isnan(values[:, :1])
        )
        if values.size and same.all():
            notes.append(
                f"Loadings {', '.join(loadings)} of {tunnel} cool alike in the model (no "
                "h_factor measured for them), so their dwell rows are the same; they "
                "differ only in the kg a metre of belt carries."
            )
    return notes


def dwell_notes(dwell_used: pd.DataFrame) -> list[str]:
    """One line per dwell cell the plan uses that carries a physics note.

    Parameters
    ----------
    dwell_used : pandas.DataFrame
        :func:`dwell_used_table` (with its ``notes`` column).

    Returns
    -------
    list of str
        ``"dwell <product> at <oven>/<setting> → <tunnel>/<setting>/<loading>: <notes>"``.
    """
    if "notes" not in dwell_used.columns:
        return []
    lines = []
    for row in dwell_used.itertuples(index=False):
        notes = summarise_notes(row.notes)
        if notes:
            lines.append(
                f"dwell {row.product} at {row.oven}/{row.oven_setting} → "
                f"{row.tunnel}/{row.tunnel_setting}/{row.loading}: {notes}"
            )
    return lines


def main_routes(run: PlanRun) -> list[Route]:
    """The main planned route of each product: its tunnel run carrying the most kg.

    Ties go to the first route in key order; the cook time is the dwell
    table's (margin included) and the belt speed the planned one.

    Parameters
    ----------
    run : PlanRun
        A plan run.

    Returns
    -------
    list of optimizer.dwell.histories.Route
        One per planned product, in product order (empty without a plan).
    """
    if not run.result.status.has_plan or not run.result.runs:
        return []
    kg: dict[tuple[str, ...], float] = {}
    speed: dict[tuple[str, ...], float] = {}
    for r in run.result.runs:
        key = (r.product, r.oven, r.oven_setting, r.tunnel, r.tunnel_setting, r.loading)
        kg[key] = kg.get(key, 0.0) + r.kg
        speed[key] = r.belt_speed_m_per_min
    best: dict[str, tuple[str, ...]] = {}
    for key in sorted(kg):
        if key[0] not in best or kg[key] > kg[best[key[0]]]:
            best[key[0]] = key
    table = run.dwell.set_index(DWELL_KEYS)
    return [
        Route(*best[name], float(table.loc[best[name], "cook_min"]), speed[best[name]])
        for name in sorted(best)
    ]


def temperature_curves(run: PlanRun) -> list[tuple[str, CurveSet, str]]:
    """Core and surface histories of each planned product at its main planned route.

    Routes from :func:`main_routes`, histories from
    :func:`optimizer.dwell.histories.route_history`.

    Parameters
    ----------
    run : PlanRun
        A plan run.

    Returns
    -------
    list of (product, CurveSet, caption)
        One entry per planned product, in product order.
    """
    out = []
    for route in main_routes(run):
        curve, caption = route_history(run.scenario, route)
        out.append((route.product, curve, caption))
    return out
