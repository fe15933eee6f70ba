"""The dwell table: every product at every air setting, from the physics.

One row per (product, oven, oven setting, tunnel, tunnel setting, loading),
for every tunnel the oven feeds. For each row:

* **cook** — the shortest oven dwell for the *largest* piece to meet the
  product's cook rule at that oven setting
  (:func:`thermal.process.required_cook`; the exact series where it is exact,
  the finite-volume solver otherwise), safety margin included;
* **chill** — the shortest tunnel residence to meet the chill (or freeze)
  rule, starting from the actual temperature field at oven exit, through the
  transfer (hot-hold) stage and the tunnel zones
  (:func:`thermal.process.required_chill`), margin included;
* **belt** — the fastest belt speed that gives that residence,
  ``tunnel length / chill minutes``, capped at the belt maximum; a row
  needing a belt slower than the belt minimum is ruled out;
* which rule clause binds, the method used, the heat per kg, and, for every
  ruled-out cell, the reason.

Columns (as agreed in the interface contract): ``product, oven, oven_setting,
tunnel, tunnel_setting, loading, cook_min, cook_feasible, cook_binding,
cook_reason, cook_method, heat_in_kj_per_kg, chill_min, chill_feasible,
chill_binding, chill_reason, chill_method, heat_out_kj_per_kg,
max_belt_speed_m_per_min, feasible, reason``, plus ``notes`` (validity
warnings of the correlations used, "" when none).

Transfer and hot hold
---------------------
A batch may wait anywhere from the tunnel's ``transfer.duration`` up to its
``hot_hold_max`` between oven and belt. A short wait sends the product into
the tunnel hotter (longer residence); a long wait uses up cooling-window time
in room air. When both are given and differ, the chill is computed at both
ends and the row takes the longer residence (and is ruled out if either end
breaks the rule), so the plan holds for any wait the planner allows.

Safety margins
--------------
``safety_margin.time_fraction`` is added to every cook dwell and tunnel
residence (:class:`thermal.process.Margin`); the chill starts from the oven
exit state *at the dwell with margin*. ``safety_margin.core_temperature`` is
added to every cook target (and table temperature) and taken off every chill
target (exit limit and each step's end temperature).

Mapping of rules
----------------
A scenario cook rule becomes a :class:`thermal.rules.CookRule`:
``core_temperature``/``hold`` directly; ``alternatives`` a
:class:`thermal.rules.TimeTemperatureTable` (any row, interpolated between
rows in log time) with the lowest row as core target; ``lethality`` a
:class:`thermal.rules.LethalityRule`. A rule with lethality only has no core
temperature of its own: its core target is set just above the product's
initial temperature, so only the lethality binds.

Cache
-----
Results are cached on disk under ``cache_dir`` (``None`` = no cache): one
small JSON file per cook cell and per chill cell, named by the SHA-256 of a
canonical JSON of every input the cell depends on (piece geometry, material,
air settings, rule, margin, solver options) and a salt made of
:data:`CACHE_VERSION` and a hash of the physics source code; and one file per
whole table. A second build of the same scenario reads one file; changing a
product's size, an air temperature or a rule recomputes only the cells that
depend on it. Files are written atomically (temporary file, then rename).

A cache is never trusted silently. Each entry carries a digest of its
inputs and its values, and a value must have the shape of a cell or table
this module writes (:mod:`optimizer.dwell.cache`); an entry that fails is
recomputed with a :class:`~optimizer.dwell.errors.CacheWarning`. A plan
re-verifies every cell it uses against the physics (:func:`verify_rows`,
called by :func:`optimizer.planning.run.plan_checked`): the cells this
process did not compute itself are computed again, and a row that differs
is replaced, noted, and the plan made again.

Computing
---------
The cells missing from the cache are computed together: first every missing
cook cell, then every missing chill cell, each cell's search a solver job
(:mod:`thermal.jobs`) whose simulations run batched with the other cells'
(one solver call per round of the searches and per grid). A cell's value
does not depend on which other cells are computed with it, so a full build,
a partial recompute and a build on several workers give the same table.

CAUTION: the figures are model estimates for the piece sizes entered. The
rules come from the plant's food-safety plan and local codes; validate any
plan with calibrated probes in the thickest pieces at the coldest spot.
"""

from __future__ import annotations

import math
import os
import tempfile
import warnings
from collections.abc import Callable, Generator, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from optimizer.dwell.cache import (
    dwell_cache_key,
    physics_salt,
    read_entry,
    remove_entry,
    write_entry,
)
from optimizer.dwell.convert import (
    air_setting,
    chill_rule,
    cook_rule,
    loading_factor,
    thermal_product,
)
from optimizer.dwell.errors import CacheWarning
from optimizer.dwell.stages import hold_waits, transfer_stage, tunnel_zones
from optimizer.dwell.workers import pool_initializer
from optimizer.scenario.models import (
    Oven,
    OvenSetting,
    Product,
    Scenario,
    Tunnel,
    TunnelSetting,
)
from optimizer.scenario.units import minutes_to_seconds, seconds_to_minutes

__all__ = [
    "COLUMNS",
    "DWELL_KEYS",
    "SolverOptions",
    "build_dwell_table",
    "ruled_out_table",
    "verify_rows",
    "write_dwell_csv",
]

COLUMNS: tuple[str, ...] = (
    "product",
    "oven",
    "oven_setting",
    "tunnel",
    "tunnel_setting",
    "loading",
    "cook_min",
    "cook_feasible",
    "cook_binding",
    "cook_reason",
    "cook_method",
    "heat_in_kj_per_kg",
    "chill_min",
    "chill_feasible",
    "chill_binding",
    "chill_reason",
    "chill_method",
    "heat_out_kj_per_kg",
    "max_belt_speed_m_per_min",
    "feasible",
    "reason",
    "notes",
)
"""Dwell-table columns, in order."""

DWELL_KEYS = ["product", "oven", "oven_setting", "tunnel", "tunnel_setting", "loading"]
"""The columns that name a dwell-table row (one route of one product)."""

Progress = Callable[..., None]
"""``progress(done, total, text)``: called after each computed cell."""


@dataclass(frozen=True)
class SolverOptions:
    """Numerical options of the dwell computation (part of every cache key).

    The defaults are chosen for speed where accuracy allows: on the demo
    products (slab, cylinder, finite cylinder, block) they change cook and
    chill minutes by 0.05-0.5 % against the physics layer's own finer defaults
    (24/14/10 cells, 40 steps), well inside a 10 % time margin; pass finer
    options for a final check.

    Parameters
    ----------
    cells_1d, cells_2d, cells_3d : int
        Finite-volume cells per direction, centre to surface, for shapes with
        one direction (slab, cylinder, sphere), two (finite cylinder) and
        three (block) [-].
    steps : int
        Time steps over a run [-].
    tolerance : float
        Relative width to which a tunnel residence is bracketed [-].
    max_dwell_min : float
        Longest oven dwell considered [min].
    max_residence_min : float
        Longest tunnel residence considered [min].
    """

    cells_1d: int = 10
    cells_2d: int = 6
    cells_3d: int = 5
    steps: int = 20
    tolerance: float = 5e-3
    max_dwell_min: float = 24 * 60.0
    max_residence_min: float = 24 * 60.0

    def cells(self, n_directions: int) -> int:
        """Cells per direction for a shape with ``n_directions`` directions [-]."""
        return {1: self.cells_1d, 2: self.cells_2d}.get(n_directions, self.cells_3d)


# ------------------------------------------------------------------------ the cells


def _product_inputs(product: Product) -> dict[str, Any]:
    return product.model_dump(
        mode="json",
        include={
            "geometry",
            "composition",
            "properties",
            "freezing_point",
            "initial_temperature",
            "emissivity",
        },
    ) | {"largest": product.geometry.largest_dims(), "shape": product.geometry.shape}


def _cook_inputs(
    scenario: Scenario, product: Product, setting: OvenSetting, options: SolverOptions
) -> dict[str, Any]:
    return {
        "kind": "cook",
        "product": _product_inputs(product),
        "air": setting.model_dump(mode="json", exclude={"name"}),
        "rule": scenario.cook_rule(product).model_dump(mode="json", exclude={"source", "note"}),
        "margin": scenario.safety_margin.model_dump(mode="json"),
        "options": options.__dict__,
    }


def _chill_inputs(
    scenario: Scenario,
    product: Product,
    cook_key: str,
    tunnel: Tunnel,
    setting: TunnelSetting,
    factor: float,
    options: SolverOptions,
) -> dict[str, Any]:
    return {
        "kind": "chill",
        "cook": cook_key,
        "product": _product_inputs(product),
        "transfer": None if tunnel.transfer is None else tunnel.transfer.model_dump(mode="json"),
        "waits": hold_waits(tunnel),
        "zones": [
            z.model_dump(mode="json", exclude={"name", "length", "length_fraction"})
            for z in setting.zones
        ],
        "shares": tunnel.zone_fractions(setting),
        "loading_factor": factor,
        "rule": scenario.chill_rule(product).model_dump(mode="json", exclude={"source", "note"}),
        "margin": scenario.safety_margin.model_dump(mode="json"),
        "options": options.__dict__,
    }


def _notes(caught: Iterable[warnings.WarningMessage]) -> list[str]:
    out: list[str] = []
    for w in caught:
        text = str(w.message)
        if text not in out:
            out.append(text)
    return out


def _compute_cook(
    scenario: Scenario, product: Product, setting: OvenSetting, options: SolverOptions
) -> Generator[Any, Any, dict[str, Any]]:
    """The computation of one cook cell (no cache), as a solver job.

    The job (:mod:`thermal.jobs`) yields its simulations and returns the
    cell as plain data; its ``notes`` come from the warnings the job raised
    (added by :func:`_run_jobs`).
    """
    from thermal import process

    margin = scenario.safety_margin
    rule = cook_rule(
        scenario.cook_rule(product), product.initial_temperature, margin.core_temperature
    )
    piece = thermal_product(product, emissivity=setting.emissivity)
    try:
        res = yield from process.required_cook_job(
            piece,
            air_setting(setting),
            rule,
            product.initial_temperature,
            margin=process.Margin(relative=margin.time_fraction),
            max_dwell=minutes_to_seconds(options.max_dwell_min),
            n_cells=options.cells(len(piece.geometry.directions)),
            steps=options.steps,
        )
    except process.InfeasibleRuleError as exc:
        return {
            "feasible": False,
            "minutes": math.nan,
            "binding": exc.clause,
            "reason": f"cook: {exc.reason}",
            "method": "",
            "heat_in_kj_per_kg": math.nan,
        }
    profile = res.exit_profile
    return {
        "feasible": True,
        "minutes": seconds_to_minutes(res.dwell),
        "required_minutes": seconds_to_minutes(res.required_dwell),
        "binding": res.binding,
        "reason": "",
        "method": res.method,
        "heat_in_kj_per_kg": res.heat_in / 1000.0,
        "h": res.h,
        "profile": {
            "temperature": np.asarray(profile.temperature).tolist(),
            "density": None if profile.density is None else np.asarray(profile.density).tolist(),
        },
    }


def _compute_chill(
    scenario: Scenario,
    product: Product,
    cook: dict[str, Any],
    tunnel: Tunnel,
    setting: TunnelSetting,
    factor: float,
    options: SolverOptions,
) -> Generator[Any, Any, dict[str, Any]]:
    """The computation of one chill cell from a feasible cook cell (no cache), as a job.

    The residence is searched with the shortest wait before the belt (the
    transfer duration: hottest entry); when the hot-hold limit is longer, one
    more run at that residence with the longest wait checks the cooling
    windows, which a long wait in room air can break. Notes as for
    :func:`_compute_cook`.
    """
    from thermal import numeric, process

    margin = scenario.safety_margin
    rule = chill_rule(scenario.chill_rule(product), margin.core_temperature)
    piece = thermal_product(product)
    prof = cook["profile"]
    start = numeric.Profile(
        np.asarray(prof["temperature"], dtype=float),
        None if prof["density"] is None else np.asarray(prof["density"], dtype=float),
    )
    zones = tunnel_zones(tunnel, setting, factor)
    waits = hold_waits(tunnel)
    try:
        res = yield from process.required_chill_job(
            piece,
            start,
            transfer_stage(tunnel.transfer, waits[0]),
            zones,
            rule,
            margin=process.Margin(relative=margin.time_fraction),
            max_residence=minutes_to_seconds(options.max_residence_min),
            steps=options.steps,
            tolerance=options.tolerance,
        )
    except process.InfeasibleRuleError as exc:
        when = f" (after a {waits[0]:g} min wait before the belt)" if waits[0] else ""
        return _ruled_out_chill(exc.clause, f"chill: {exc.reason}{when}")
    if len(waits) > 1:
        hist, _ = yield from process.run_stages_job(
            piece,
            start,
            None,
            0.0,
            transfer_stage(tunnel.transfer, waits[-1]),
            zones,
            res.residence,
            steps=options.steps,
        )
        verdict = rule.check(hist.times, hist.core)
        if not verdict.met:
            return _ruled_out_chill(
                verdict.binding,
                f"chill: {verdict.reason} when a batch waits the full hot-hold limit "
                f"({waits[-1]:g} min) before the belt",
            )
    return {
        "feasible": True,
        "minutes": seconds_to_minutes(res.residence),
        "required_minutes": seconds_to_minutes(res.required_residence),
        "binding": res.binding,
        "reason": "",
        "method": res.method,
        "heat_out_kj_per_kg": res.heat_out / 1000.0,
    }


def _ruled_out_chill(binding: str, reason: str) -> dict[str, Any]:
    return {
        "feasible": False,
        "minutes": math.nan,
        "binding": binding,
        "reason": reason,
        "method": "numeric",
        "heat_out_kj_per_kg": math.nan,
    }


# ------------------------------------------------------------------------ the table


def _belt(tunnel: Tunnel, chill_min: float) -> tuple[float, str]:
    """Fastest belt speed [m/min] for a residence, and the reason when too slow."""
    fastest = tunnel.length / chill_min
    if fastest < tunnel.belt_speed_min:
        return math.nan, (
            f"belt: the chill needs {chill_min:.1f} min in the tunnel, i.e. a belt at most "
            f"{fastest:.3g} m/min, below the belt minimum {tunnel.belt_speed_min:g} m/min "
            f"(at its slowest the {tunnel.length:g} m tunnel gives "
            f"{tunnel.length / tunnel.belt_speed_min:.1f} min)"
        )
    return min(fastest, tunnel.belt_speed_max), ""


def _cells(scenario: Scenario) -> list[tuple[Product, Oven, OvenSetting, Tunnel, Any, Any]]:
    out = []
    for product in scenario.products:
        for oven in scenario.ovens:
            for oset in oven.settings:
                for tunnel in scenario.feeds(oven.name):
                    for tset in tunnel.settings:
                        for loading in tunnel.loadings:
                            out.append((product, oven, oset, tunnel, tset, loading))
    return out


_NOT_COMPUTED = {
    "feasible": False,
    "minutes": math.nan,
    "binding": "",
    "reason": "not computed: the cook is ruled out",
    "method": "",
    "heat_out_kj_per_kg": math.nan,
    "notes": [],
}


@dataclass(frozen=True)
class _Task:
    """One cook cell and the distinct chill cells that start from its exit state."""

    product: str
    oven: str
    setting: str
    cook_key: str
    chills: tuple[tuple[str, str, str, float], ...]  # (key, tunnel, tunnel setting, factor)


def _run_jobs(
    jobs: list[Generator[Any, Any, dict[str, Any]]],
    done: Callable[[int], None],
) -> list[dict[str, Any]]:
    """Run cell jobs with their simulations batched; each cell gets the notes of its warnings.

    ``done(i)`` is called as job ``i`` finishes. The first error that is not
    a ruled-out rule is raised once every job has ended.
    """
    from thermal.jobs import run_jobs

    outcomes = run_jobs(jobs, lambda i, _: done(i))
    for outcome in outcomes:
        if outcome.error is not None:
            raise outcome.error
    return [{**o.value, "notes": _notes(o.warnings)} for o in outcomes]


_PHYSICS_CELLS: dict[str, dict[str, Any]] = {}
"""Cells this process computed from the physics, by entry name (what verification trusts)."""

_PHYSICS_CELLS_MAX = 20_000
"""Most cells remembered in :data:`_PHYSICS_CELLS` (the oldest are forgotten first)."""


def _remember(name: str, value: dict[str, Any]) -> None:
    _PHYSICS_CELLS[name] = value
    while len(_PHYSICS_CELLS) > _PHYSICS_CELLS_MAX:
        del _PHYSICS_CELLS[next(iter(_PHYSICS_CELLS))]


@dataclass(frozen=True)
class _Store:
    """Where :func:`_run_tasks` reads known cells and writes computed ones (picklable).

    ``cache``: the disk cache (None: none). With ``physics_only`` only cells
    this process computed from the physics count as known (verification).
    """

    cache: Path | None
    physics_only: bool = False

    def read(self, name: str, notices: list[str]) -> dict[str, Any] | None:
        if self.physics_only:
            return _PHYSICS_CELLS.get(name)
        kind = "cook" if name.startswith("cook-") else "chill"
        return read_entry(self.cache, name, lambda v: _cell_problem(v, kind), notice=notices.append)

    def write(self, name: str, value: dict[str, Any], trusted: bool = True) -> None:
        """Store a computed cell; ``trusted``: computed from physics values only."""
        if trusted:
            _remember(name, value)
        if not self.physics_only:
            write_entry(self.cache, name, value)


def _run_tasks(
    scenario: Scenario,
    tasks: Sequence[_Task],
    store: _Store,
    options: SolverOptions,
    progress: Callable[[_Task], None] | None = None,
) -> tuple[dict[str, dict[str, Any]], dict[str, dict[str, Any]], list[str], list[str]]:
    """Compute (or read) the cells of ``tasks``.

    Cells ``store`` knows are not recomputed; the missing cook cells run as
    one set of batched jobs, then the missing chill cells (which start from
    the cook cells' exit states) as another. ``progress(task)`` is called
    once a task's cook and chill cells are all known.

    Returns
    -------
    tuple
        ({cook key: cook}, {chill key: chill}, names of the entries computed,
        notices about cache entries refused).
    """
    notices: list[str] = []
    computed: list[str] = []
    cooks: dict[str, dict[str, Any]] = {}
    todo: list[_Task] = []
    for task in tasks:
        if task.cook_key in cooks or any(t.cook_key == task.cook_key for t in todo):
            continue
        cook = store.read(f"cook-{task.cook_key}.json", notices)
        if cook is None:
            todo.append(task)
        else:
            cooks[task.cook_key] = cook
    jobs = []
    for task in todo:
        setting = next(st for st in scenario.oven(task.oven).settings if st.name == task.setting)
        jobs.append(_compute_cook(scenario, scenario.product(task.product), setting, options))
    for task, cook in zip(todo, _run_jobs(jobs, lambda i: None), strict=True):
        store.write(f"cook-{task.cook_key}.json", cook)
        computed.append(f"cook-{task.cook_key}.json")
        cooks[task.cook_key] = cook

    chills: dict[str, dict[str, Any]] = {}
    missing: dict[str, tuple[_Task, str, str, float]] = {}
    waiting = {id(task): 0 for task in tasks}
    for task in tasks:
        cook = cooks[task.cook_key]
        for key, tunnel_name, tset_name, factor in task.chills:
            if key in chills or key in missing:
                continue
            chill = (
                _NOT_COMPUTED if not cook["feasible"] else store.read(f"chill-{key}.json", notices)
            )
            if chill is None:
                missing[key] = (task, tunnel_name, tset_name, factor)
            else:
                chills[key] = chill
    for task in tasks:
        waiting[id(task)] = sum(key in missing for key, *_ in task.chills)
        if not waiting[id(task)] and progress is not None:
            progress(task)
    jobs = []
    for task, tunnel_name, tset_name, factor in missing.values():
        tunnel = scenario.tunnel(tunnel_name)
        tset = next(st for st in tunnel.settings if st.name == tset_name)
        product = scenario.product(task.product)
        cook = cooks[task.cook_key]
        jobs.append(_compute_chill(scenario, product, cook, tunnel, tset, factor, options))
    keys = list(missing)

    def chill_done(i: int) -> None:
        for task in tasks:
            if any(key == keys[i] for key, *_ in task.chills):
                waiting[id(task)] -= 1
                if not waiting[id(task)] and progress is not None:
                    progress(task)

    for key, chill in zip(keys, _run_jobs(jobs, chill_done), strict=True):
        # a chill starts from its cook's exit state: it is the physics' own only when the
        # cook is (not one read from the disk cache)
        trusted = f"cook-{missing[key][0].cook_key}.json" in _PHYSICS_CELLS
        store.write(f"chill-{key}.json", chill, trusted)
        if trusted:
            computed.append(f"chill-{key}.json")
        chills[key] = chill
    return cooks, chills, computed, notices


@dataclass(frozen=True)
class _Keys:
    """The cache keys of a scenario's cells, and the order of its rows."""

    cells: list[tuple[Product, Oven, OvenSetting, Tunnel, Any, Any]]
    cooks: dict[tuple[str, str, str], str]  # (product, oven, setting) -> cook key
    chills: dict[tuple[str, ...], str]  # row key (DWELL_KEYS) -> chill key
    chills_of: dict[tuple[str, str, str], dict[str, tuple[str, str, str, float]]]
    table_name: str

    @classmethod
    def of(cls, scenario: Scenario, options: SolverOptions) -> _Keys:
        salt = physics_salt()
        cells = _cells(scenario)
        cooks: dict[tuple[str, str, str], str] = {}
        chills: dict[tuple[str, ...], str] = {}
        chills_of: dict[tuple[str, str, str], dict[str, tuple[str, str, str, float]]] = {}
        for product, oven, oset, tunnel, tset, loading in cells:
            ck = (product.name, oven.name, oset.name)
            if ck not in cooks:
                cooks[ck] = dwell_cache_key(_cook_inputs(scenario, product, oset, options), salt)
                chills_of[ck] = {}
            factor = loading_factor(loading, tset)
            key = dwell_cache_key(
                _chill_inputs(scenario, product, cooks[ck], tunnel, tset, factor, options), salt
            )
            chills[(*ck, tunnel.name, tset.name, loading.name)] = key
            chills_of[ck].setdefault(key, (key, tunnel.name, tset.name, factor))
        belts = {t.name: (t.length, t.belt_speed_min, t.belt_speed_max) for t in scenario.tunnels}
        table_key = dwell_cache_key(
            {"rows": [[*k, v] for k, v in chills.items()], "belts": belts}, salt
        )
        return cls(cells, cooks, chills, chills_of, f"table-{table_key}.json")

    def tasks(self, rows: Iterable[tuple[str, ...]] | None = None) -> list[_Task]:
        """The tasks computing every cell, or only those behind the row keys ``rows``."""
        if rows is None:
            return [
                _Task(*ck, key, tuple(self.chills_of[ck].values()))
                for ck, key in self.cooks.items()
            ]
        wanted: dict[tuple[str, str, str], dict[str, None]] = {}
        for row in rows:
            wanted.setdefault(row[:3], {})[self.chills[row]] = None
        return [
            _Task(*ck, self.cooks[ck], tuple(self.chills_of[ck][k] for k in keys))
            for ck, keys in wanted.items()
        ]

    def rows(
        self,
        scenario: Scenario,
        cooks: dict[str, dict[str, Any]],
        chills: dict[str, dict[str, Any]],
        only: set[tuple[str, ...]] | None = None,
    ) -> list[dict[str, Any]]:
        """The table rows from the cells, in scenario order (or only the row keys ``only``)."""
        out = []
        for product, oven, oset, tunnel, tset, loading in self.cells:
            row = (product.name, oven.name, oset.name, tunnel.name, tset.name, loading.name)
            if only is not None and row not in only:
                continue
            cook, chill = cooks[self.cooks[row[:3]]], chills[self.chills[row]]
            out.append(_row(product, oven, oset, tunnel, tset, loading, cook, chill))
        return out


def _warn(notices: Iterable[str]) -> None:
    for text in dict.fromkeys(notices):
        warnings.warn(text, CacheWarning, stacklevel=3)


def _is_number(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def _shape_of(value: Any, depth: int = 0) -> tuple[int, ...] | None:
    """Shape of a profile (nested lists of finite numbers, up to 3 deep), None when not one."""
    if not isinstance(value, list) or not value or depth > 3:
        return None
    if all(_is_number(x) and math.isfinite(x) for x in value):
        return (len(value),)
    inner = {_shape_of(x, depth + 1) for x in value}
    if len(inner) != 1 or None in inner:
        return None
    return (len(value), *inner.pop())


def _cell_problem(value: Any, kind: str) -> str | None:
    """Why a cached cook or chill cell cannot be a cell :func:`_compute_cook` made, or None."""
    if not isinstance(value, dict):
        return f"a {kind} cell must be a mapping, got {type(value).__name__}"
    heat = "heat_in_kj_per_kg" if kind == "cook" else "heat_out_kj_per_kg"
    kinds = {"feasible": bool, "binding": str, "reason": str, "method": str, "notes": list}
    for name, want in kinds.items():
        if not isinstance(value.get(name), want):
            return f"{kind} cell field {name!r} missing or not {want.__name__}"
    if not all(isinstance(n, str) for n in value["notes"]):
        return f"{kind} cell notes must be text"
    for name in ("minutes", heat):
        if not _is_number(value.get(name)):
            return f"{kind} cell field {name!r} missing or not a number"
    if not value["feasible"]:
        return None
    minutes, required = value["minutes"], value.get("required_minutes")
    if not (math.isfinite(minutes) and minutes > 0):
        return f"a feasible {kind} cell needs minutes > 0, got {minutes!r}"
    if not (_is_number(required) and 0 < required <= minutes):
        return f"a feasible {kind} cell needs 0 < required_minutes <= minutes"
    if kind == "cook":
        profile = value.get("profile")
        shape = _shape_of(profile.get("temperature")) if isinstance(profile, dict) else None
        if shape is None:
            return "a feasible cook cell needs its exit temperature profile"
        density = profile.get("density")
        if not (
            density is None
            or (_is_number(density) and math.isfinite(density))
            or _shape_of(density) == shape[:1]  # one density per batch member
        ):
            return "the exit profile's density does not match its temperatures"
        if not (_is_number(value.get("h")) and math.isfinite(value["h"]) and value["h"] > 0):
            return "a feasible cook cell needs its surface coefficient h > 0"
    return None


_NUMBER_COLUMNS = (
    "cook_min",
    "heat_in_kj_per_kg",
    "chill_min",
    "heat_out_kj_per_kg",
    "max_belt_speed_m_per_min",
)
_BOOL_COLUMNS = ("cook_feasible", "chill_feasible", "feasible")


def _table_problem(value: Any, expected: Sequence[tuple[str, ...]]) -> str | None:
    """Why a cached table cannot be the table of the row keys ``expected``, or None."""
    if not isinstance(value, list):
        return f"a table must be a list of rows, got {type(value).__name__}"
    if len(value) != len(expected):
        return f"{len(value)} rows where the scenario has {len(expected)}"
    for row, key in zip(value, expected, strict=True):
        if not isinstance(row, dict) or set(row) != set(COLUMNS):
            return "a row without the dwell-table columns"
        if tuple(row[c] for c in DWELL_KEYS) != key:
            return "rows of another scenario"
        if not all(_is_number(row[c]) for c in _NUMBER_COLUMNS):
            return "a row whose minutes, heat or belt speed is not a number"
        if not all(isinstance(row[c], bool) for c in _BOOL_COLUMNS):
            return "a row whose feasibility is not true or false"
        if row["feasible"] and not all(
            math.isfinite(row[c]) and row[c] > 0
            for c in ("cook_min", "chill_min", "max_belt_speed_m_per_min")
        ):
            return "a feasible row without positive minutes and belt speed"
    return None


def _default_workers(n_tasks: int) -> int:
    cpus = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    return max(1, min(cpus or 1, n_tasks)) if n_tasks >= 4 else 1


def _compute(
    scenario: Scenario,
    tasks: Sequence[_Task],
    store: _Store,
    options: SolverOptions,
    workers: int | None,
    finished: Callable[[_Task], None] | None = None,
) -> tuple[dict[str, dict[str, Any]], dict[str, dict[str, Any]], list[str]]:
    """:func:`_run_tasks` on ``workers`` processes (default :func:`_default_workers`).

    Returns ({cook key: cook}, {chill key: chill}, notices); cells computed
    from the physics in a worker are remembered here as in the worker.
    """
    n_workers = _default_workers(len(tasks)) if workers is None else max(1, int(workers))
    n_workers = min(n_workers, len(tasks))
    if n_workers <= 1:
        cooks, chills, _, notices = _run_tasks(scenario, tasks, store, options, finished)
        return cooks, chills, notices
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor, as_completed

    cooks: dict[str, dict[str, Any]] = {}
    chills: dict[str, dict[str, Any]] = {}
    notices: list[str] = []
    # fork where the platform has it: workers only compute (no terminal output), and
    # fork does not re-run the caller's main script as spawn would
    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork" if "fork" in methods else "spawn")
    # a fixed share of the tasks per worker; a cell's value does not depend on the
    # other cells batched with it, so neither the split nor the timing matters
    shares = [tasks[i::n_workers] for i in range(n_workers)]
    initializer, initargs = pool_initializer()  # no orphans when this process is killed
    with ProcessPoolExecutor(
        max_workers=n_workers, mp_context=context, initializer=initializer, initargs=initargs
    ) as pool:
        futures = {
            pool.submit(_run_tasks, scenario, share, store, options): share for share in shares
        }
        for future in as_completed(futures):
            part_cooks, part_chills, computed, part_notices = future.result()
            cooks.update(part_cooks)
            chills.update(part_chills)
            for name in computed:  # computed from the physics in a worker
                kind, _, key = name.removesuffix(".json").partition("-")
                _remember(name, (part_cooks if kind == "cook" else part_chills)[key])
            notices += part_notices
            for task in futures[future]:
                if finished is not None:
                    finished(task)
    return cooks, chills, notices


def build_dwell_table(
    scenario: Scenario,
    *,
    cache_dir: str | Path | None = ".corepace-cache",
    progress: Progress | None = None,
    options: SolverOptions | None = None,
    workers: int | None = None,
) -> pd.DataFrame:
    """Build the dwell table of a scenario (or read it from the cache).

    Parameters
    ----------
    scenario : Scenario
        A validated scenario (:func:`optimizer.scenario.models.load_scenario`).
    cache_dir : str or Path or None
        Directory of the on-disk cache; created when first written. ``None``
        computes everything and writes nothing.
    progress : callable, optional
        ``progress(done, total, text)`` after each cook cell with its chill
        cells (``done`` and ``total`` count cells).
    options : SolverOptions, optional
        Numerical options (part of every cache key).
    workers : int, optional
        Processes computing cells in parallel; default: the CPUs available
        when there are at least four cook cells to compute, else 1. Results do
        not depend on it.

    Returns
    -------
    pandas.DataFrame
        One row per (product, oven, oven_setting, tunnel, tunnel_setting,
        loading) in scenario order, columns :data:`COLUMNS`: minutes [min]
        (largest piece, margin included; NaN when ruled out), heat
        [kJ/kg], belt speed [m/min], feasibility and reasons.

    Raises
    ------
    thermal.errors.ThermalInputError
        When the physics refuses an input that validation let through.
    """
    options = options or SolverOptions()
    cache = None if cache_dir is None else Path(cache_dir)
    keys = _Keys.of(scenario, options)
    total = len(keys.cooks) + sum(len(v) for v in keys.chills_of.values())
    notices: list[str] = []
    expected = list(keys.chills)
    cached = read_entry(
        cache,
        keys.table_name,
        lambda v: _table_problem(v, expected),
        notice=notices.append,
    )
    _warn(notices)
    if cached is not None:
        if progress is not None:
            progress(total, total, "read from the cache")
        return _frame(cached, cache, options, keys.table_name)

    tasks = keys.tasks()
    done = 0

    def finished(task: _Task) -> None:
        nonlocal done
        done += 1 + len(task.chills)
        if progress is not None:
            progress(done, total, f"{task.product} in {task.oven}/{task.setting}")

    cooks, chills, notices = _compute(scenario, tasks, _Store(cache), options, workers, finished)
    _warn(notices)
    rows = keys.rows(scenario, cooks, chills)
    write_entry(cache, keys.table_name, rows)
    return _frame(rows, cache, options, keys.table_name)


def _same(a: Any, b: Any) -> bool:
    if _is_number(a) and _is_number(b):
        if math.isnan(a) or math.isnan(b):
            return math.isnan(a) and math.isnan(b)
        return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12)
    return bool(a == b)


def verify_rows(
    scenario: Scenario,
    dwell: pd.DataFrame,
    rows: Iterable[tuple[str, ...]],
    cooks: Iterable[tuple[str, str, str]] = (),
) -> pd.DataFrame | None:
    """Check dwell-table rows against the physics; the table corrected when any differ.

    Every cell behind the rows ``rows`` (row keys, :data:`DWELL_KEYS`) and
    the cook cells ``cooks`` (product, oven, oven setting) that this process
    has not computed from the physics itself is computed again (no cache).
    The rows ``rows`` are compared with the physics in every column but
    ``notes``, and every row sharing a checked cook cell in its cook columns
    (numbers to 1e-9 relative). A row that differs came from a cache entry
    that does not hold the physics' values: a
    :class:`~optimizer.dwell.errors.CacheWarning` says which, the cache
    entries are replaced by the physics' values, and the corrected table is
    returned for the plan to be made again.

    Parameters
    ----------
    scenario : Scenario
        The scenario the table was built for.
    dwell : pandas.DataFrame
        A table from :func:`build_dwell_table` (one without its build record,
        e.g. read back from CSV, is not checked).
    rows : iterable of tuple of str
        Row keys to check (the routes a plan's tunnel runs use).
    cooks : iterable of tuple of str
        Cook cells to check (those a plan's oven batches use).

    Returns
    -------
    pandas.DataFrame or None
        None when every row checked holds the physics' values, else the
        table with the differing rows replaced.
    """
    build = dwell.attrs.get(_BUILD)
    wanted = list(dict.fromkeys(tuple(r) for r in rows))
    options = SolverOptions(**build["options"]) if build else None
    keys = _Keys.of(scenario, options) if options is not None else None
    if keys is None or keys.table_name != build["table"]:
        return None  # not a table built here for this scenario: nothing to compare with
    wanted_cooks = {tuple(c) for c in cooks} | {r[:3] for r in wanted}
    if any(r not in keys.chills for r in wanted) or any(c not in keys.cooks for c in wanted_cooks):
        return None
    tasks = keys.tasks(wanted)
    tasks += [
        _Task(*ck, keys.cooks[ck], ()) for ck in sorted(wanted_cooks - {r[:3] for r in wanted})
    ]
    store = _Store(None, physics_only=True)

    def known(task: _Task) -> bool:
        names = [f"cook-{task.cook_key}.json", *(f"chill-{k}.json" for k, *_ in task.chills)]
        return all(name in _PHYSICS_CELLS for name in names)

    _compute(scenario, [t for t in tasks if not known(t)], store, options, None)
    got_cooks, got_chills, _, _ = _run_tasks(scenario, tasks, store, options)
    physics = {
        tuple(r[c] for c in DWELL_KEYS): r
        for r in keys.rows(scenario, got_cooks, got_chills, set(wanted))
    }
    records = dwell.to_dict("records")
    wrong: dict[int, tuple[str, ...]] = {}
    for i, have in enumerate(records):
        key = tuple(have[c] for c in DWELL_KEYS)
        if key in physics:
            want = physics[key]
        elif key[:3] in wanted_cooks:
            want = {**have, **_cook_columns(got_cooks[keys.cooks[key[:3]]])}
        else:
            continue
        differ = [c for c in COLUMNS if c != "notes" and not _same(have[c], want[c])]
        if not differ:
            continue
        wrong[i] = key
        records[i] = want
        c = differ[0]
        _warn(
            [
                f"dwell cache: {key[0]} in {key[1]}/{key[2]} through {key[3]}/{key[4]}/"
                f"{key[5]}: the cached {c} ({have[c]}) is not the physics' ({want[c]}); the "
                "cache entry is replaced and the plan made again from the physics"
            ]
        )
    if not wrong:
        return None
    cache = None if build["cache"] is None else Path(build["cache"])
    for key in wrong.values():
        cook_key = keys.cooks[key[:3]]
        write_entry(cache, f"cook-{cook_key}.json", got_cooks[cook_key])
        if key in physics:
            write_entry(cache, f"chill-{keys.chills[key]}.json", got_chills[keys.chills[key]])
        else:  # its chill was computed from the refused cook: recompute it next time
            remove_entry(cache, f"chill-{keys.chills[key]}.json")
    remove_entry(cache, keys.table_name)
    corrected = _plain_frame(records)
    corrected.attrs[_BUILD] = dict(build)
    return corrected


def _cook_columns(cook: dict[str, Any]) -> dict[str, Any]:
    return {
        "cook_min": cook["minutes"],
        "cook_feasible": bool(cook["feasible"]),
        "cook_binding": cook["binding"],
        "cook_reason": cook["reason"],
        "cook_method": cook["method"],
        "heat_in_kj_per_kg": cook["heat_in_kj_per_kg"],
    }


def _row(product, oven, oset, tunnel, tset, loading, cook, chill) -> dict[str, Any]:
    speed, belt_reason = (math.nan, "")
    if chill["feasible"]:
        speed, belt_reason = _belt(tunnel, chill["minutes"])
    reason = cook["reason"] or chill["reason"] or belt_reason
    notes = list(dict.fromkeys([*cook.get("notes", []), *chill.get("notes", [])]))
    return {
        "product": product.name,
        "oven": oven.name,
        "oven_setting": oset.name,
        "tunnel": tunnel.name,
        "tunnel_setting": tset.name,
        "loading": loading.name,
        **_cook_columns(cook),
        "chill_min": chill["minutes"],
        "chill_feasible": bool(chill["feasible"]),
        "chill_binding": chill["binding"],
        "chill_reason": chill["reason"],
        "chill_method": chill["method"],
        "heat_out_kj_per_kg": chill["heat_out_kj_per_kg"],
        "max_belt_speed_m_per_min": speed,
        "feasible": bool(cook["feasible"] and chill["feasible"] and not belt_reason),
        "reason": reason,
        "notes": "; ".join(notes),
    }


_BUILD = "corepace_dwell_build"
"""``DataFrame.attrs`` key: how the table was built (options, cache, table entry)."""


def _frame(
    rows: Sequence[dict[str, Any]],
    cache: Path | None = None,
    options: SolverOptions | None = None,
    table_name: str | None = None,
) -> pd.DataFrame:
    frame = _plain_frame(rows)
    if options is not None:
        frame.attrs[_BUILD] = {
            "options": dict(options.__dict__),
            "cache": None if cache is None else str(cache),
            "table": table_name,
        }
    return frame


def _plain_frame(rows: Sequence[dict[str, Any]]) -> pd.DataFrame:
    frame = pd.DataFrame(list(rows), columns=list(COLUMNS))
    for c in (
        "cook_min",
        "heat_in_kj_per_kg",
        "chill_min",
        "heat_out_kj_per_kg",
        "max_belt_speed_m_per_min",
    ):
        frame[c] = frame[c].astype(float)
    for c in ("cook_feasible", "chill_feasible", "feasible"):
        frame[c] = frame[c].astype(bool)
    return frame


def write_dwell_csv(table: pd.DataFrame, path: str | Path) -> Path:
    """Write the dwell table as CSV (UTF-8, header row), atomically.

    Parameters
    ----------
    table : pandas.DataFrame
        A dwell table.
    path : str or Path
        Destination file; its directory must exist.

    Returns
    -------
    Path
        The file written.
    """
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            table.to_csv(fh, index=False, float_format="%.6g")
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return path


def ruled_out_table(dwell: pd.DataFrame, products: Sequence[str]) -> pd.DataFrame:
    """Dwell-table rows of the planned products that the physics rules out, with the reason."""
    columns = [*DWELL_KEYS, "reason"]
    if dwell.empty or "feasible" not in dwell.columns:
        return pd.DataFrame(columns=columns)
    mask = ~dwell["feasible"].astype(bool) & dwell["product"].isin(list(products))
    return dwell.loc[mask, columns].reset_index(drop=True)
