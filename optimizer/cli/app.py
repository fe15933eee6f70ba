"""The ``corepace`` command: one subcommand per question a plant asks.

Subcommands
-----------
``validate SCENARIO``
    Check a scenario file and list every problem, one line each.
``dwell SCENARIO``
    The dwell table: every product at every air setting, minutes required,
    fastest belt speed, and why a setting is ruled out.
``plan SCENARIO``
    The shift plan: batches, settings, belt speeds and loading, with the
    bottleneck, shadow prices and an HTML report.
``capacity SCENARIO``
    Most kg per hour and per week for a fixed product mix, and what limits it.
``compare A B ...``
    Several scenarios planned and put side by side.
``sweep STUDY``
    What-if study (:mod:`optimizer.studies.study`): one plan per point, purchases priced.
``schema``
    JSON Schema of scenario files, for editors that check YAML/JSON.

Exit codes
----------
0
    Done.
1
    No feasible plan; the shortfall diagnosis is printed.
2
    Bad input (scenario file, option): one line per problem on stderr, no
    traceback, nothing written.
3
    Internal error (a bug): one line on stderr; ``--debug`` shows the traceback.

Output files are written atomically (temporary file in the same directory,
then :func:`os.replace`); input files are never written; ``--out`` is created
when missing. The progress display on long steps is shown only when standard
output is a terminal and neither ``--quiet`` nor ``--json`` is given.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import math
import os
import re
import sys
import time
import warnings
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from importlib import metadata
from pathlib import Path
from typing import Any

import pandas as pd
from rich.console import Console
from rich.progress import (
    BarColumn,
    MofNCompleteColumn,
    Progress,
    SpinnerColumn,
    TextColumn,
    TimeElapsedColumn,
)
from rich.table import Table

from optimizer.reporting import export

__all__ = [
    "EXIT_BAD_INPUT",
    "EXIT_INTERNAL",
    "EXIT_NO_PLAN",
    "EXIT_OK",
    "BadInput",
    "main",
]

EXIT_OK = 0
EXIT_NO_PLAN = 1
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3

DEFAULT_OUT = "corepace-out"


class BadInput(Exception):
    """Bad input for a command: one or more one-line problems.

    Parameters
    ----------
    problems : sequence of str
        One line each, naming the field or option and what is accepted.
    """

    def __init__(self, problems: Sequence[str]) -> None:
        self.problems = tuple(str(p) for p in problems) or ("bad input",)
        super().__init__("; ".join(self.problems))


def tool_version() -> str:
    """Installed version of corepace (``"unknown"`` when not installed)."""
    try:
        return metadata.version("corepace")
    except metadata.PackageNotFoundError:
        return "unknown"


def resolved_sha256(scenario: Any) -> str:
    """SHA-256 of a validated scenario's content, after ``extends`` and ``--set``.

    The scenario is written as canonical JSON (sorted keys, documented units)
    and hashed, so two runs of the same plant data give the same hash
    whatever file layout or overrides produced it.
    """
    from optimizer.scenario.models import scenario_to_dict

    text = json.dumps(scenario_to_dict(scenario), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def file_sha256(path: str | os.PathLike[str]) -> str:
    """SHA-256 of a file's bytes, as hex.

    Parameters
    ----------
    path : str or path-like
        File to hash (read only).

    Returns
    -------
    str
        64 hex digits.
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 16), b""):
            digest.update(block)
    return digest.hexdigest()


# ---------------------------------------------------------------------------
# Terminal output
# ---------------------------------------------------------------------------


@dataclass
class Ui:
    """Where a command's messages go, and whether to show progress.

    Parameters
    ----------
    quiet : bool
        Print only errors and the final one-line result.
    json_mode : bool
        Machine-readable JSON on stdout; human text is suppressed.
    """

    quiet: bool = False
    json_mode: bool = False
    console: Console = field(init=False)
    err: Console = field(init=False)

    def __post_init__(self) -> None:
        tty = sys.stdout.isatty()
        # without a terminal (a pipe, a file) print wide rather than cut table cells
        self.console = Console(
            file=sys.stdout, highlight=False, width=None if tty else 200, soft_wrap=False
        )
        self.err = Console(file=sys.stderr, highlight=False, width=200, soft_wrap=True)
        self.show_progress = tty and not self.quiet and not self.json_mode

    @property
    def human(self) -> bool:
        """True when human-readable text goes to stdout."""
        return not self.json_mode

    def say(self, *objects: Any) -> None:
        """Print to stdout unless ``--quiet`` or ``--json``."""
        if not self.quiet and not self.json_mode:
            self.console.print(*objects)

    def result(self, *objects: Any) -> None:
        """Print the final result line (shown with ``--quiet``, not with ``--json``)."""
        if not self.json_mode:
            self.console.print(*objects)

    def problem(self, text: str) -> None:
        """One line on stderr."""
        print(text, file=sys.stderr, flush=True)

    def emit_json(self, obj: Any) -> None:
        """Write ``obj`` as JSON on stdout (only with ``--json``)."""
        if self.json_mode:
            text = json.dumps(export.to_jsonable(obj), indent=2, allow_nan=False)
            sys.stdout.write(text + "\n")
            sys.stdout.flush()

    @contextmanager
    def progress(self, description: str) -> Iterator[Callable[..., None]]:
        """A progress bar for a long step; yields a ``callback(done, total)``.

        The callback also accepts a third argument or ``text=`` keyword: a
        short description of the current item. Without a terminal the
        callback does nothing.
        """
        if not self.show_progress:
            yield _ignore
            return
        bar = Progress(
            SpinnerColumn(),
            TextColumn("{task.description}"),
            BarColumn(),
            MofNCompleteColumn(),
            TimeElapsedColumn(),
            console=self.console,
            transient=True,
        )
        task = bar.add_task(description, total=None)

        def update(done: float = 0, total: float | None = None, text: str | None = None, **_: Any):
            kwargs: dict[str, Any] = {"completed": done}
            if total is not None:
                kwargs["total"] = total
            if text:
                kwargs["description"] = f"{description}: {text}"
            bar.update(task, **kwargs)

        with bar:
            yield update

    @contextmanager
    def status(self, description: str) -> Iterator[None]:
        """A spinner with elapsed time for a step without a count."""
        if not self.show_progress:
            yield
            return
        bar = Progress(
            SpinnerColumn(),
            TextColumn("{task.description}"),
            TimeElapsedColumn(),
            console=self.console,
            transient=True,
        )
        bar.add_task(description, total=None)
        with bar:
            yield


def _ignore(*_: Any, **__: Any) -> None:
    return None


# ---------------------------------------------------------------------------
# Shared steps
# ---------------------------------------------------------------------------


def _scenario_path(text: str) -> Path:
    path = Path(text)
    if not path.exists():
        raise BadInput([f"{text}: no such file"])
    if path.is_dir():
        raise BadInput([f"{text}: is a directory; give a scenario file (.yaml, .yml or .json)"])
    if not os.access(path, os.R_OK):
        raise BadInput([f"{text}: cannot be read (permission denied)"])
    return path


def load(path_text: str, args: argparse.Namespace | None = None) -> Any:
    """Load and validate a scenario file, turning every problem into :class:`BadInput`.

    Parameters
    ----------
    path_text : str
        Scenario file as given on the command line.
    args : argparse.Namespace, optional
        Parsed options; its ``set`` list (``--set PATH=VALUE``) is applied
        to the file's contents before validation (the file is not changed).

    Returns
    -------
    optimizer.scenario.models.Scenario
        The validated scenario.

    Raises
    ------
    BadInput
        Listing every problem, each prefixed with the file name.
    """
    path = _scenario_path(path_text)
    from optimizer.dwell.checks import load_checked_scenario
    from optimizer.scenario.models import ScenarioError
    from optimizer.scenario.overrides import OverrideError, parse_assignment

    changes = []
    problems = []
    for text in getattr(args, "set", None) or []:
        try:
            changes.append(parse_assignment(text))
        except OverrideError as exc:
            problems.append(str(exc))
    if problems:
        raise BadInput(problems)
    try:
        return load_checked_scenario(path, changes)
    except ScenarioError as exc:
        # a line about the file itself names it already (the extends chain too)
        own = (f"{path_text}: ", f"{Path(path).resolve()}: ")
        raise BadInput(
            [p if p.startswith(own) else f"{path_text}: {p}" for p in _problems(exc)]
        ) from exc


def _problems(exc: BaseException) -> list[str]:
    problems = getattr(exc, "problems", None)
    if problems:
        return [str(p) for p in problems]
    lines = [line for line in str(exc).splitlines() if line.strip()]
    return lines or [type(exc).__name__]


def out_dir(args: argparse.Namespace, scenario_path: str | None) -> Path:
    """The output directory of a run: ``--out`` or ``corepace-out/<scenario stem>``."""
    if args.out:
        target = Path(args.out)
    else:
        stem = Path(scenario_path).stem if scenario_path else "run"
        target = Path(DEFAULT_OUT) / stem
    if target.exists() and not target.is_dir():
        raise BadInput([f"--out {target}: exists and is not a directory; give a directory path"])
    return target


def _prepare_out(path: Path) -> Path:
    try:
        return export.prepare_out_dir(path)
    except export.OutputError as exc:
        raise BadInput([str(exc)]) from exc


def cache_dir(args: argparse.Namespace) -> Path | None:
    """The dwell-table cache directory (None when ``--no-cache``)."""
    if getattr(args, "no_cache", False):
        return None
    if getattr(args, "cache_dir", None):
        return Path(args.cache_dir)
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "corepace" / "dwell"


def dwell_table(scenario: Any, args: argparse.Namespace, ui: Ui) -> pd.DataFrame:
    """Build (or read from the cache) the dwell table, with a progress bar."""
    from optimizer.dwell.table import build_dwell_table

    with ui.progress("dwell table") as callback:
        return build_dwell_table(scenario, cache_dir=cache_dir(args), progress=callback)


def _written(ui: Ui, paths: Sequence[Path]) -> None:
    for p in paths:
        ui.say(f"  wrote {p}")


# ---------------------------------------------------------------------------
# validate
# ---------------------------------------------------------------------------


def cmd_validate(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace validate SCENARIO``: check a scenario file."""
    scenario = load(args.scenario, args)
    summary = _scenario_summary(scenario)
    ui.emit_json({"scenario": args.scenario, "valid": True, "problems": [], **summary})
    parts = ", ".join(f"{v} {k}" for k, v in summary.items())
    ui.result(f"{args.scenario}: valid ({parts})" if parts else f"{args.scenario}: valid")
    return EXIT_OK


def _scenario_summary(scenario: Any) -> dict[str, int]:
    counts = {}
    for name in ("products", "ovens", "tunnels", "shifts", "orders"):
        items = getattr(scenario, name, None)
        if items is not None:
            try:
                counts[name] = len(items)
            except TypeError:
                continue
    return counts


# ---------------------------------------------------------------------------
# dwell
# ---------------------------------------------------------------------------


def render_dwell_table(table: pd.DataFrame, *, title: str = "Dwell table") -> Table:
    """The dwell table as a :class:`rich.table.Table` for the terminal.

    One line per row: the keys, cook and chill minutes with the method and the
    binding clause, the fastest belt speed, and for ruled-out rows the
    reason. Ruled-out rows are dimmed.

    Parameters
    ----------
    table : pandas.DataFrame
        A dwell table (:func:`optimizer.dwell.table.build_dwell_table`).
    title : str
        Title printed above the table.
    """
    out = Table(title=title, title_justify="left", header_style="bold")
    for label, justify in (
        ("product", "left"),
        ("oven / setting", "left"),
        ("tunnel / setting / loading", "left"),
        ("cook min", "right"),
        ("chill min", "right"),
        ("belt ≤ m/min", "right"),
        ("binds / why not", "left"),
    ):
        out.add_column(label, justify=justify, overflow="fold")

    def minutes(value: float, method: str) -> str:
        if not math.isfinite(value):
            return "—"
        return f"{value:.1f}" + (f" ({method[0]})" if method else "")

    for r in table.itertuples(index=False):
        if r.feasible:
            status = f"cook: {r.cook_binding}; chill: {r.chill_binding}"
        else:
            status = r.reason
        out.add_row(
            r.product,
            f"{r.oven} / {r.oven_setting}",
            f"{r.tunnel} / {r.tunnel_setting} / {r.loading}",
            minutes(r.cook_min, r.cook_method),
            minutes(r.chill_min, r.chill_method),
            "—"
            if not math.isfinite(r.max_belt_speed_m_per_min)
            else f"{r.max_belt_speed_m_per_min:.2f}",
            status,
            style=None if r.feasible else "dim",
        )
    out.caption = (
        "(s) exact series, (n) finite volumes; largest piece, safety margin included. "
        "Model estimates: validate with probes against the plant's food-safety plan."
    )
    return out


def cmd_dwell(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace dwell SCENARIO``: print and write the dwell table."""
    scenario = load(args.scenario, args)
    target = out_dir(args, args.scenario)
    table = dwell_table(scenario, args, ui)
    _prepare_out(target)
    protect = [args.scenario]
    written = [
        export.write_csv(target / "dwell.csv", table, protect=protect),
        export.write_xlsx(target / "dwell.xlsx", {"dwell": table}, protect=protect),
    ]
    n_ok = int(table["feasible"].astype(bool).sum()) if "feasible" in table else len(table)
    ui.emit_json(
        {
            "scenario": args.scenario,
            "rows": len(table),
            "feasible_rows": n_ok,
            "files": [str(p) for p in written],
            "dwell": table,
        }
    )
    ui.say(render_dwell_table(table, title=f"Dwell table — {args.scenario}"))
    _written(ui, written)
    ui.result(f"{len(table)} rows, {n_ok} feasible, {len(table) - n_ok} ruled out → {target}")
    return EXIT_OK


# ---------------------------------------------------------------------------
# plan
# ---------------------------------------------------------------------------


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
        Hash of the validated scenario content (:func:`resolved_sha256`).
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
    scenario: Any
    dwell: pd.DataFrame
    inputs: Any
    result: Any
    tables: dict[str, pd.DataFrame]


def solve_options(args: argparse.Namespace, **overrides: Any) -> Any:
    """Planner options from the command line (``--time-limit``, ``--gap``, ``--solver``)."""
    from optimizer.planning.inputs import SolveOptions

    kwargs: dict[str, Any] = {}
    if getattr(args, "time_limit", None) is not None:
        kwargs["time_limit_s"] = args.time_limit
    if getattr(args, "gap", None) is not None:
        kwargs["gap_rel"] = args.gap
    if getattr(args, "solver", None):
        kwargs["solver"] = args.solver
    kwargs.update(overrides)
    return SolveOptions(**kwargs)


def _duration(minutes: float) -> str:
    """A hold or window in words: seconds below a minute, else minutes [min → text]."""
    if minutes < 1.0:
        return f"{minutes * 60:.0f} s"
    return f"{minutes:g} min"


def _rule_text(rule: Any) -> str:
    """A cook, chill or freeze rule in words."""
    kind = getattr(rule, "kind", "")
    parts: list[str] = []
    if kind == "cook":
        for h in rule.holds:
            hold = f" for {_duration(h.hold)}" if h.hold else ""
            parts.append(f"core ≥ {h.core_temperature:g} °C{hold}")
        text = " or ".join(parts)
        if rule.lethality is not None:
            leth = rule.lethality
            extra = (
                f"{leth.log_reduction:g}-log {leth.organism} "
                f"(D{leth.t_ref:g} = {leth.d_ref:g} min, z = {leth.z:g} K)"
            )
            text = f"{text}; {extra}" if text else extra
        return text
    if kind == "chill":
        for step in rule.steps:
            parts.append(f"{step.start:g} → {step.end:g} °C within {_duration(step.within)}")
        if rule.exit_core_temperature is not None:
            parts.append(f"core ≤ {rule.exit_core_temperature:g} °C at tunnel exit")
        return "; ".join(parts)
    if kind == "freeze":
        within = f" within {rule.within:g} min of oven exit" if rule.within else ""
        return f"core ≤ {rule.core_temperature:g} °C at tunnel exit{within}"
    return str(rule)


def rules_table(scenario: Any, products: Sequence[str]) -> pd.DataFrame:
    """Cook and chill rule of each product with its source.

    Parameters
    ----------
    scenario : optimizer.scenario.models.Scenario
        The scenario (rules resolved through its rule library).
    products : sequence of str
        Products to list.

    Returns
    -------
    pandas.DataFrame
        Columns product, cook_rule, cook_requirement, cook_source, chill_rule,
        chill_requirement, chill_source.
    """
    rows = []
    for name in products:
        product = scenario.product(name)
        cook = scenario.cook_rule(product)
        chill = scenario.chill_rule(product)
        rows.append(
            {
                "product": name,
                "cook_rule": product.cook_rule if isinstance(product.cook_rule, str) else "inline",
                "cook_requirement": _rule_text(cook),
                "cook_source": cook.source,
                "chill_rule": product.chill_rule
                if isinstance(product.chill_rule, str)
                else "inline",
                "chill_requirement": _rule_text(chill),
                "chill_source": chill.source,
            }
        )
    return pd.DataFrame(
        rows,
        columns=[
            "product",
            "cook_rule",
            "cook_requirement",
            "cook_source",
            "chill_rule",
            "chill_requirement",
            "chill_source",
        ],
    )


DWELL_KEYS = ["product", "oven", "oven_setting", "tunnel", "tunnel_setting", "loading"]


def dwell_used_table(dwell: pd.DataFrame, result: Any) -> pd.DataFrame:
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
    return dwell.loc[mask, columns].sort_values(DWELL_KEYS).reset_index(drop=True)


def ruled_out_table(dwell: pd.DataFrame, products: Sequence[str]) -> pd.DataFrame:
    """Dwell-table rows of the planned products that the physics rules out, with the reason."""
    columns = [*DWELL_KEYS, "reason"]
    if dwell.empty or "feasible" not in dwell.columns:
        return pd.DataFrame(columns=columns)
    mask = ~dwell["feasible"].astype(bool) & dwell["product"].isin(list(products))
    return dwell.loc[mask, columns].reset_index(drop=True)


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
)


def _first_crossing(t: Any, y: Any, level: float, *, below: bool, after: float = 0.0) -> float:
    """First time [same unit as t] at or after ``after`` that ``y`` is at/below (or above)
    ``level``, interpolated linearly; NaN when it never is."""
    import numpy as np

    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    ok = (y <= level) if below else (y >= level)
    ok &= t >= after
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        return float("nan")
    i = int(idx[0])
    if i == 0 or t[i - 1] < after or ok[i - 1]:
        return float(max(t[i], after)) if t[i] >= after else float(after)
    t0, t1, y0, y1 = t[i - 1], t[i], y[i - 1], y[i]
    if y1 == y0:
        return float(t1)
    return float(t0 + (level - y0) * (t1 - t0) / (y1 - y0))


def _rule_marks(
    cook: Any,
    chill: Any,
    times_min: Any,
    core: Any,
    oven_end: float,
    tunnel_start: float,
    tunnel_end: float,
) -> list[Any]:
    """Rule targets and windows to draw on a product's temperature plot [min, °C]."""
    from optimizer.reporting.html import RuleMark

    marks = []
    holds = sorted(cook.holds, key=lambda h: h.core_temperature)
    if holds:
        lowest = holds[0]
        if len(holds) > 1:
            text = f"cook: core ≥ {lowest.core_temperature:g} °C (lowest of {len(holds)} options)"
        else:
            hold = f" for {_duration(lowest.hold)}" if lowest.hold else ""
            text = f"cook: core ≥ {lowest.core_temperature:g} °C{hold}"
        marks.append(
            RuleMark(
                text,
                lowest.core_temperature,
                0.0,
                oven_end,
                _first_crossing(times_min, core, lowest.core_temperature, below=False),
            )
        )
    kind = getattr(chill, "kind", "")
    if kind == "chill":
        for step in chill.steps:
            opens = _first_crossing(times_min, core, step.start, below=True, after=oven_end)
            if opens != opens:  # never falls to the opening temperature in the history
                opens = oven_end
            marks.append(
                RuleMark(
                    f"core ≤ {step.end:g} °C within {_duration(step.within)} of {step.start:g} °C",
                    step.end,
                    opens,
                    opens + step.within,
                    _first_crossing(times_min, core, step.end, below=True, after=opens),
                )
            )
        if chill.exit_core_temperature is not None:
            marks.append(
                RuleMark(
                    f"core ≤ {chill.exit_core_temperature:g} °C at tunnel exit",
                    chill.exit_core_temperature,
                    tunnel_start,
                    None,
                    _first_crossing(
                        times_min, core, chill.exit_core_temperature, below=True, after=oven_end
                    ),
                )
            )
    elif kind == "freeze":
        marks.append(
            RuleMark(
                f"core ≤ {chill.core_temperature:g} °C at tunnel exit",
                chill.core_temperature,
                tunnel_start,
                oven_end + chill.within if chill.within else None,
                _first_crossing(
                    times_min, core, chill.core_temperature, below=True, after=oven_end
                ),
            )
        )
    return marks


def temperature_curves(run: PlanRun) -> list[tuple[str, Any, str]]:
    """Core and surface histories of each planned product at its main planned route.

    For every product in the plan, the tunnel run carrying the most kg
    (ties: the first in key order) gives the route: oven and setting, tunnel,
    setting, loading and belt speed. The largest piece is simulated through
    the oven for the dwell-table cook time (margin included), the tunnel's
    transfer stage, and the tunnel zones for the residence the planned belt
    speed gives (tunnel length / speed), with :func:`thermal.process.run_stages`
    — the same conversions from the scenario as the dwell table
    (:mod:`optimizer.dwell.table`).

    Parameters
    ----------
    run : PlanRun
        A plan run with a plan.

    Returns
    -------
    list of (product, CurveSet, caption)
        One entry per planned product, in product order.
    """
    if not run.result.status.has_plan or not run.result.runs:
        return []
    import numpy as np

    from optimizer.dwell import convert
    from optimizer.dwell.stages import transfer_stage, tunnel_zones
    from optimizer.reporting.html import CurveSet, Stage
    from thermal import lethality, process

    scenario = run.scenario
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
    out = []
    for name in sorted(best):
        key = best[name]
        _, oven_name, oset_name, tunnel_name, tset_name, loading_name = key
        product = scenario.product(name)
        oven = scenario.oven(oven_name)
        oset = next(s for s in oven.settings if s.name == oset_name)
        tunnel = scenario.tunnel(tunnel_name)
        tset = next(s for s in tunnel.settings if s.name == tset_name)
        loading = next(x for x in tunnel.loadings if x.name == loading_name)
        cook_min = float(table.loc[key, "cook_min"])
        residence_min = tunnel.length / speed[key]
        factor = convert.loading_factor(loading, tset)
        transfer = (
            transfer_stage(tunnel.transfer, tunnel.transfer.duration)
            if tunnel.transfer is not None
            else None
        )
        hist_oven, profile = process.run_stages(
            convert.thermal_product(product, emissivity=oset.emissivity),
            product.initial_temperature,
            process.OvenStage(convert.air_setting(oset)),
            cook_min * 60.0,
        )
        hist_tunnel, _ = process.run_stages(
            convert.thermal_product(product),
            profile,
            None,
            0.0,
            transfer,
            tunnel_zones(tunnel, tset, factor),
            residence_min * 60.0,
        )
        hist = hist_oven.then(hist_tunnel)
        t_min = np.asarray(hist.times, dtype=float) / 60.0
        stages = []
        for span in hist.stages:
            stages.append(
                Stage(span.name, span.start / 60.0, span.end / 60.0, float(span.air_temperature))
            )
        oven_end = cook_min
        tunnel_start = next((st.start for st in stages if st.name.startswith("zone")), oven_end)
        cook = scenario.cook_rule(product)
        chill = scenario.chill_rule(product)
        marks = _rule_marks(cook, chill, t_min, hist.core, oven_end, tunnel_start, float(t_min[-1]))
        caption = (
            f"{name}, largest piece: {oven_name} at {oset_name} for {cook_min:.1f} min, "
            f"{tunnel_name} at {tset_name}, loading {loading_name}, belt "
            f"{speed[key]:.2f} m/min ({residence_min:.1f} min in the tunnel). "
            f"Core at tunnel exit {float(hist.core[-1]):.1f} °C. "
            f"Cook rule: {_rule_text(cook)} ({cook.source}). "
            f"Chill rule: {_rule_text(chill)} ({chill.source})."
        )
        if cook.lethality is not None:
            leth = cook.lethality
            achieved = float(
                lethality.log_reduction(
                    hist_oven.times, hist_oven.core, leth.d_ref * 60.0, leth.t_ref, leth.z
                )
            )
            caption += (
                f" {leth.organism}: {achieved:.1f} log reduction in the oven "
                f"(rule: {leth.log_reduction:g})."
            )
        title = f"{name} — {oven_name}/{oset_name} → {tunnel_name}/{tset_name}/{loading_name}"
        curve = CurveSet(
            title, t_min, hist.core, hist.surface, tuple(stages), tuple(marks), mean=hist.mean
        )
        out.append((name, curve, caption))
    return out


_SHAPE_CORRELATIONS = {
    "slab": ("flat_plate",),
    "block": ("flat_plate",),
    "cylinder": ("cylinder_churchill_bernstein",),
    "finite_cylinder": ("cylinder_churchill_bernstein",),
    "sphere": ("sphere_whitaker",),
}


def methods_used(dwell: pd.DataFrame, scenario: Any) -> list[tuple[str, str]]:
    """The published methods behind a run's figures, with their sources.

    Parameters
    ----------
    dwell : pandas.DataFrame
        The dwell table (``cook_method``/``chill_method`` say which
        conduction solution each row used).
    scenario : optimizer.scenario.models.Scenario
        The scenario (shapes of the products, measured coefficients).

    Returns
    -------
    list of (str, str)
        Method and its source, in the order the calculation uses them.
    """
    methods: list[tuple[str, str]] = []
    used = set()
    for column in ("cook_method", "chill_method"):
        if column in dwell.columns:
            used |= set(dwell[column].dropna().astype(str))
    methods.append(
        (
            "Food properties from composition (component equations, mixture rules, ice "
            "fraction below the initial freezing point)",
            "Choi & Okos (1986); ASHRAE Handbook — Refrigeration, chapter 'Thermal Properties "
            "of Foods'; Schwartzberg (1976), J. Food Sci. 41, 152; Pham (1996), J. Food Eng. "
            "30, 95",
        )
    )
    methods.append(
        (
            "Air properties versus temperature and humidity",
            "Lemmon & Jacobsen (2004) for dry air; IAPWS formulations for water vapour; "
            "Wilke and Mason–Saxena mixing rules",
        )
    )
    try:
        from thermal.convection import CORRELATIONS
    except ImportError:  # pragma: no cover - part of the package
        CORRELATIONS = {}
    shapes = {getattr(p.geometry, "shape", "") for p in getattr(scenario, "products", [])}
    keys = sorted({k for shape in shapes for k in _SHAPE_CORRELATIONS.get(shape, ())})
    for key in keys:
        if key in CORRELATIONS:
            entry = CORRELATIONS[key]
            methods.append((f"Surface coefficient: {entry.name}", entry.reference))
    measured = any(
        getattr(s, "measured_h", None) is not None
        for unit in [*getattr(scenario, "ovens", []), *getattr(scenario, "tunnels", [])]
        for s in getattr(unit, "settings", [])
    )
    if measured:
        methods.append(
            (
                "Surface coefficient measured at the plant (air settings with measured_h)",
                "the plant's own measurement, as entered in the scenario",
            )
        )
    if "series" in used or not used:
        methods.append(
            (
                "Transient conduction, exact series solutions (slab, cylinder, sphere) and "
                "product solutions (finite cylinder, block)",
                "Incropera, DeWitt, Bergman & Lavine, Fundamentals of Heat and Mass Transfer, "
                "6th ed., §5.5–5.8; Carslaw & Jaeger, Conduction of Heat in Solids, 2nd ed. "
                "(1959)",
            )
        )
    if "numeric" in used or not used:
        methods.append(
            (
                "Transient conduction, finite-volume solution with an enthalpy formulation "
                "(phase change, changing air, any starting profile)",
                "Patankar (1980), Numerical Heat Transfer and Fluid Flow; Swaminathan & "
                "Voller (1992), Metall. Trans. B 23, 651; Voller (1990), Numer. Heat "
                "Transfer B 17, 155",
            )
        )
    methods.append(
        (
            "Lethality along the core history (F-value, log reduction with D- and z-values)",
            "Bigelow (1921), J. Infect. Dis. 29, 528; Ball (1923), Bull. Natl. Res. Counc. "
            "7(37); Stumbo (1973), Thermobacteriology in Food Processing, 2nd ed.",
        )
    )
    methods.append(
        (
            "Shift plan as a mixed-integer linear programme; shadow prices from the linear "
            "programme with the on/off choices fixed",
            "HiGHS solver: Huangfu & Hall (2018), Math. Prog. Comp. 10, 119; "
            "modelled with PuLP (Mitchell, O'Sullivan & Dunning, 2011)",
        )
    )
    return methods


def quiet_solver_banner() -> None:
    """Let HiGHS print its one-time start-up banner into /dev/null, not our stdout.

    highspy writes a banner straight to file descriptor 1 the first time a
    solver object is created in a process, bypassing ``sys.stdout``; that
    would corrupt ``--json`` output and clutter the summary. Creating the
    first object here, with descriptor 1 pointed at /dev/null, uses the
    banner up. Later solver objects print nothing unless asked to.
    """
    try:
        import highspy
    except ImportError:  # pragma: no cover - a declared dependency
        return
    sys.stdout.flush()
    saved = os.dup(1)
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, 1)
        highspy.Highs()
    finally:
        os.dup2(saved, 1)
        os.close(saved)
        os.close(devnull)


def run_plan(path: str, scenario: Any, args: argparse.Namespace, ui: Ui) -> PlanRun:
    """Dwell table, planner inputs and the solve for one validated scenario."""
    from optimizer.planning.adapter import plan_inputs
    from optimizer.planning.results import plan_tables
    from optimizer.planning.solve import plan

    dwell = dwell_table(scenario, args, ui)
    inputs = plan_inputs(scenario, dwell)
    options = solve_options(args)
    quiet_solver_banner()
    with ui.status(f"solving the plan ({path})"):
        result = plan(inputs, options)
    tables = dict(plan_tables(result))
    planned = sorted({o.product for o in inputs.orders})
    tables["rules"] = rules_table(scenario, planned)
    tables["dwell_used"] = dwell_used_table(dwell, result)
    tables["dwell_ruled_out"] = ruled_out_table(dwell, planned)
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


def _status_code(result: Any) -> int:
    from optimizer.planning.results import SolveStatus

    if result.status.has_plan:
        return EXIT_OK
    if result.status in (SolveStatus.INFEASIBLE, SolveStatus.NO_SOLUTION_IN_TIME):
        return EXIT_NO_PLAN
    return EXIT_INTERNAL


def _bottleneck_json(result: Any) -> dict[str, Any] | None:
    from optimizer.planning.results import bottleneck

    bn = bottleneck(result)
    return None if bn is None else export.to_jsonable(bn)


def plan_json(run: PlanRun, files: Sequence[Path]) -> dict[str, Any]:
    """The machine-readable summary of a plan run (``--json``)."""
    r = run.result
    return {
        "scenario": run.path,
        "scenario_sha256": run.sha256,
        "scenario_content_sha256": run.resolved_sha256,
        "tool_version": tool_version(),
        "status": r.status.value,
        "objective": r.objective.value,
        "objective_value": r.objective_value,
        "objective_unit": r.objective_unit,
        "best_bound": r.best_bound,
        "gap": r.gap,
        "solver": r.solver,
        "total_kg": r.total_kg,
        "bottleneck": _bottleneck_json(r),
        "shortfalls": [s.message for s in r.shortfalls],
        "excluded": {k: list(v) for k, v in r.excluded.items()},
        "messages": list(r.messages),
        "files": [str(p) for p in files],
        "tables": {name: export.table_records(t) for name, t in run.tables.items()},
    }


def made_at() -> str:
    """The time written into reports (UTC).

    ``SOURCE_DATE_EPOCH`` (seconds since 1970, the reproducible-builds
    convention) replaces the clock when set, so a report regenerated from the
    same inputs is byte-for-byte the same file.
    """
    from datetime import UTC, datetime

    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    when = datetime.fromtimestamp(int(epoch), UTC) if epoch.isdigit() else datetime.now(UTC)
    return when.strftime("%Y-%m-%d %H:%M UTC")


def _run_info(run: PlanRun, argv_text: str) -> Any:
    from optimizer.reporting.html import RunInfo

    return RunInfo(
        scenario_path=run.path,
        scenario_sha256=run.sha256,
        resolved_sha256=run.resolved_sha256,
        tool_version=tool_version(),
        generated=made_at(),
        plant=getattr(run.scenario, "plant", Path(run.path).stem),
        command=argv_text,
    )


def write_plan_outputs(run: PlanRun, target: Path, argv_text: str) -> list[Path]:
    """Write the plan's tables (CSV + XLSX), its JSON summary and its HTML report."""
    from optimizer.reporting.html import plan_report

    protect = [run.path]
    written = export.write_tables(target, run.tables, workbook="plan.xlsx", protect=protect)
    written.append(export.write_csv(target / "dwell.csv", run.dwell, protect=protect))
    html_text = plan_report(
        run.result,
        run.inputs,
        run.tables,
        info=_run_info(run, argv_text),
        curves=temperature_curves(run),
        methods=methods_used(run.dwell, run.scenario),
    )
    written.append(export.atomic_write_text(target / "report.html", html_text, protect=protect))
    written.append(
        export.write_json(target / "plan.json", plan_json(run, written), protect=protect)
    )
    return written


def plan_summary(run: PlanRun, ui: Ui) -> None:
    """Print the plan's summary and its tables readably."""
    from optimizer.planning.results import summary_text

    r = run.result
    ui.say(summary_text(r))
    if r.status.has_plan:
        ui.say(rich_table(run.tables["totals"], title="kg per product and shift"))
        ui.say(rich_table(run.tables["ovens"], title="Oven batches"))
        ui.say(rich_table(run.tables["tunnels"], title="Tunnel runs"))


def rich_table(table: pd.DataFrame, *, title: str) -> Table:
    """Any table as a rich table (numbers right-aligned, rounded for reading)."""
    from optimizer.reporting.html import COLUMN_LABELS, column_decimals, format_cell

    out = Table(title=title, title_justify="left", header_style="bold")
    numeric = {c: pd.api.types.is_numeric_dtype(table[c]) for c in table.columns}
    decimals = [column_decimals(table[c]) if numeric[c] else 2 for c in table.columns]
    for c in table.columns:
        label = COLUMN_LABELS.get(str(c), str(c).replace("_", " "))
        out.add_column(label, justify="right" if numeric[c] else "left")
    for row in table.itertuples(index=False, name=None):
        out.add_row(*(format_cell(v, d) for v, d in zip(row, decimals, strict=True)))
    return out


def _argv_text(argv: Sequence[str] | None) -> str:
    items = list(sys.argv[1:] if argv is None else argv)
    return " ".join(["corepace", *items])


def cmd_plan(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace plan SCENARIO``: the shift plan, its tables and its report."""
    scenario = load(args.scenario, args)
    target = out_dir(args, args.scenario)
    run = run_plan(args.scenario, scenario, args, ui)
    _prepare_out(target)
    with ui.status("writing the report"):
        written = write_plan_outputs(run, target, args.argv_text)
    ui.emit_json(plan_json(run, written))
    plan_summary(run, ui)
    _written(ui, written)
    code = _status_code(run.result)
    r = run.result
    if code == EXIT_OK:
        ui.result(
            f"{r.status.value}: {r.total_kg:,.0f} kg over {len(r.shifts)} shift(s) → {target}"
        )
    else:
        for s in r.shortfalls:
            if not ui.human or ui.quiet:
                ui.problem(f"shortfall: {s.message}")
        ui.result(f"no feasible plan ({r.status.value}); diagnosis in {target / 'report.html'}")
    return code


# ---------------------------------------------------------------------------
# capacity
# ---------------------------------------------------------------------------

CAPACITY_TOLERANCE = 0.005
"""Relative width [-] at which the capacity search stops."""


def parse_mix(texts: Sequence[str], known: Sequence[str]) -> dict[str, float]:
    """Read ``--mix`` values (``NAME=SHARE``, comma separated or repeated) into shares.

    Parameters
    ----------
    texts : sequence of str
        Option values, e.g. ``["pork-sausage=2,ham-log=1"]``.
    known : sequence of str
        Product names of the scenario.

    Returns
    -------
    dict of str to float
        Product → share, the shares summing to 1.

    Raises
    ------
    BadInput
        Listing every malformed item, unknown product and bad share.
    """
    raw: dict[str, float] = {}
    problems = []
    for text in texts:
        for item in text.split(","):
            item = item.strip()
            if not item:
                continue
            name, sep, share = item.rpartition("=")
            name = name.strip()
            if not sep or not name:
                problems.append(f"--mix: expected PRODUCT=SHARE such as ham-log=2, got {item!r}")
                continue
            if name not in known:
                problems.append(
                    f"--mix: {name!r} is not a product; known: {', '.join(sorted(known))}"
                )
                continue
            try:
                value = float(share)
            except ValueError:
                problems.append(f"--mix {name}: share must be a number >= 0, got {share!r}")
                continue
            if not value >= 0 or value == float("inf"):
                problems.append(f"--mix {name}: share must be a finite number >= 0, got {share!r}")
                continue
            raw[name] = raw.get(name, 0.0) + value
    if not problems and raw and sum(raw.values()) <= 0:
        problems.append("--mix: at least one share must be > 0")
    if problems:
        raise BadInput(problems)
    total = sum(raw.values())
    return {k: v / total for k, v in raw.items() if v > 0}


def default_mix(inputs: Any) -> tuple[dict[str, float], str]:
    """The mix when ``--mix`` is not given: the orders' proportions, else equal shares.

    Returns
    -------
    tuple of (dict of str to float, str)
        Shares summing to 1, and where they came from.
    """
    by_min: dict[str, float] = {}
    by_max: dict[str, float] = {}
    for o in inputs.orders:
        by_min[o.product] = by_min.get(o.product, 0.0) + o.min_kg
        by_max[o.product] = by_max.get(o.product, 0.0) + o.max_kg
    if sum(by_min.values()) > 0:
        total = sum(by_min.values())
        return {k: v / total for k, v in by_min.items() if v > 0}, "order minimums"
    finite = {k: v for k, v in by_max.items() if 0 < v < float("inf")}
    if finite and len(finite) == len(by_max):
        total = sum(finite.values())
        return {k: v / total for k, v in finite.items()}, "order maximums"
    names = sorted(by_max)
    return {k: 1.0 / len(names) for k in names}, "equal shares of the ordered products"


def _mix_inputs(inputs: Any, shares: Mapping[str, float], total_kg: float | None) -> Any:
    """Inputs whose only orders are the mix at ``total_kg`` (None: as much as fits)."""
    import dataclasses
    import math

    from optimizer.planning.inputs import Objective, OrderData

    orders = tuple(
        OrderData(
            product=p,
            min_kg=0.0 if total_kg is None else share * total_kg,
            max_kg=math.inf if total_kg is None else share * total_kg,
            name=f"mix {p}",
        )
        for p, share in sorted(shares.items())
    )
    return dataclasses.replace(
        inputs, orders=orders, objective=Objective.MOST_KG, fixed_output_kg=None
    )


@dataclass
class CapacityResult:
    """The most a plant makes with a fixed product mix.

    Parameters
    ----------
    shares : dict of str to float
        Mix proportions (sum 1).
    mix_source : str
        Where the shares came from.
    total_kg : float
        Most kg over the scenario's shifts with that mix [kg].
    horizon_hours : float
        Hours of the scenario's shifts [h].
    kg_per_hour : float
        ``total_kg / horizon_hours`` [kg/h].
    kg_per_week : float
        ``total_kg / shifts * shifts_per_week`` [kg/week].
    shifts_per_week : float
        Shifts a week assumed [-].
    free_mix_kg : float
        Most kg over the horizon when the mix may change freely [kg] (the
        search's upper end).
    solves : int
        Plans solved in the search [-].
    plan : optimizer.planning.results.PlanResult
        The plan at ``total_kg`` (with utilisation and shadow prices).
    limit : optimizer.planning.results.PlanResult or None
        The diagnosis just above ``total_kg`` (what runs out first).
    """

    shares: dict[str, float]
    mix_source: str
    total_kg: float
    horizon_hours: float
    kg_per_hour: float
    kg_per_week: float
    shifts_per_week: float
    free_mix_kg: float
    solves: int
    plan: Any
    limit: Any


def max_mix_capacity(
    inputs: Any,
    shares: Mapping[str, float],
    options: Any,
    *,
    shifts_per_week: float,
    mix_source: str,
    tolerance: float = CAPACITY_TOLERANCE,
) -> CapacityResult:
    """Most kg with fixed mix proportions, by bisection on the total.

    The planner is asked for the most kg of the mix's products with the mix
    free (an upper end ``U``); then each step fixes every product's kg to its
    share of a trial total ``X`` (order minimum = maximum = share × X) and
    asks whether a plan exists. Making less of a product never makes a plan
    infeasible (batches may be loaded below their pattern, tunnel minutes
    fall with kg), so feasibility is monotone in ``X``, and the free-mix plan
    itself shows ``X = min_p kg_p / share_p`` is feasible (a lower end).
    Bisection between the two converges to the largest feasible total within
    ``tolerance`` (relative). A final solve at that total gives utilisation and shadow
    prices; one just above it, with the elastic diagnosis, names what runs
    out first.

    Parameters
    ----------
    inputs : optimizer.planning.inputs.PlanInputs
        Planner inputs of the scenario.
    shares : mapping of str to float
        Product → share (sum 1).
    options : optimizer.planning.inputs.SolveOptions
        Solver options for every solve.
    shifts_per_week : float
        Shifts a week, for kg per week [-].
    mix_source : str
        Where the shares came from (for the report).
    tolerance : float
        Relative search width at which to stop [-].

    Returns
    -------
    CapacityResult
        The capacity and the plans behind it.
    """
    import dataclasses

    from optimizer.planning.solve import plan

    quick = dataclasses.replace(options, shadow_prices=False, diagnose=False)
    solves = 0
    free = plan(_mix_inputs(inputs, shares, None), quick)
    solves += 1
    upper = free.total_kg if free.status.has_plan else 0.0
    low, high = 0.0, upper
    if upper > 0:
        # the free-mix plan, cut down to the mix, is a plan: a lower end for the search
        made = {p: 0.0 for p in shares}
        for r in free.runs:
            if r.product in made:
                made[r.product] += r.kg
        low = min(made[p] / share for p, share in shares.items()) * (1.0 - 1e-9)
        if plan(_mix_inputs(inputs, shares, upper), quick).status.has_plan:
            low = upper
        solves += 1
        while high - low > tolerance * high:
            mid = 0.5 * (low + high)
            solves += 1
            if plan(_mix_inputs(inputs, shares, mid), quick).status.has_plan:
                low = mid
            else:
                high = mid
    final = plan(_mix_inputs(inputs, shares, low), options)
    solves += 1
    limit = None
    if high > low or low == 0:
        probe = high if high > low else max(upper, 1.0)
        limit = plan(_mix_inputs(inputs, shares, probe), options)
        solves += 1
        if limit.status.has_plan:
            limit = None
    hours = sum(s.minutes for s in inputs.shifts) / 60.0
    n = len(inputs.shifts)
    return CapacityResult(
        shares=dict(shares),
        mix_source=mix_source,
        total_kg=low,
        horizon_hours=hours,
        kg_per_hour=low / hours if hours > 0 else 0.0,
        kg_per_week=low / n * shifts_per_week if n else 0.0,
        shifts_per_week=shifts_per_week,
        free_mix_kg=upper,
        solves=solves,
        plan=final,
        limit=limit,
    )


FULL_USE = 0.99
"""Utilisation [-] from which a machine counts as full in a shift."""


def full_machines(result: Any) -> list[str]:
    """Machines whose time runs out in a plan: one line each, fullest first.

    At a capacity limit the total is fixed by the mix, so the shadow prices
    of machine time say little; what limits the total is the machines used
    (nearly) to the last minute. A machine is listed when its utilisation is
    at least :data:`FULL_USE` in some shift.
    """
    shifts: dict[str, list[tuple[str, float]]] = {}
    kinds: dict[str, str] = {}
    for u in result.machine_use:
        kinds[u.machine] = u.kind
        shifts.setdefault(u.machine, []).append((u.shift, u.utilisation))
    rows = []
    for machine, uses in shifts.items():
        full = [s for s, x in uses if x >= FULL_USE]
        if full:
            mean = sum(x for _, x in uses) / len(uses)
            where = "every shift" if len(full) == len(uses) else ", ".join(full)
            rows.append(
                (
                    mean,
                    f"{kinds[machine]} {machine}: full in {where} "
                    f"(mean {100 * mean:.0f} % of available minutes)",
                )
            )
    return [text for _, text in sorted(rows, key=lambda r: -r[0])]


def capacity_tables(cap: CapacityResult) -> dict[str, pd.DataFrame]:
    """Tables of a capacity run: the mix, the limits, and the plan at capacity."""
    from optimizer.planning.results import plan_tables

    mix = pd.DataFrame(
        [
            {
                "product": p,
                "share": share,
                "kg": share * cap.total_kg,
                "kg_per_hour": share * cap.kg_per_hour,
                "kg_per_week": share * cap.kg_per_week,
            }
            for p, share in sorted(cap.shares.items())
        ],
        columns=["product", "share", "kg", "kg_per_hour", "kg_per_week"],
    )
    limits = (
        pd.DataFrame(
            [
                (s.kind, s.subject, s.shift, s.amount, s.unit, s.message)
                for s in cap.limit.shortfalls
            ],
            columns=["kind", "subject", "shift", "amount", "unit", "message"],
        )
        if cap.limit is not None
        else pd.DataFrame(columns=["kind", "subject", "shift", "amount", "unit", "message"])
    )
    tables = {"capacity_mix": mix, "capacity_limits": limits}
    tables.update(plan_tables(cap.plan))
    return tables


def capacity_json(path: str, cap: CapacityResult, tables: Mapping[str, pd.DataFrame], files):
    """The machine-readable result of ``corepace capacity``."""
    return {
        "scenario": path,
        "scenario_sha256": file_sha256(path),
        "mix": cap.shares,
        "mix_source": cap.mix_source,
        "total_kg": cap.total_kg,
        "horizon_hours": cap.horizon_hours,
        "kg_per_hour": cap.kg_per_hour,
        "kg_per_week": cap.kg_per_week,
        "shifts_per_week": cap.shifts_per_week,
        "free_mix_kg": cap.free_mix_kg,
        "solves": cap.solves,
        "full_machines": full_machines(cap.plan),
        "limits": [s.message for s in cap.limit.shortfalls] if cap.limit is not None else [],
        "files": [str(p) for p in files],
        "tables": {name: export.table_records(t) for name, t in tables.items()},
    }


def cmd_capacity(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace capacity SCENARIO``: most kg per hour and week for a fixed mix."""
    from optimizer.planning.adapter import plan_inputs

    scenario = load(args.scenario, args)
    names = [p.name for p in scenario.products]
    shares = parse_mix(args.mix, names) if args.mix else None
    if args.shifts_per_week is not None and not args.shifts_per_week > 0:
        raise BadInput([f"--shifts-per-week: must be > 0, got {args.shifts_per_week:g}"])
    target = out_dir(args, args.scenario)
    dwell = dwell_table(scenario, args, ui)
    inputs = plan_inputs(scenario, dwell)
    source = "--mix"
    if shares is None:
        shares, source = default_mix(inputs)
    per_week = args.shifts_per_week if args.shifts_per_week is not None else 15.0
    quiet_solver_banner()
    with ui.status("searching the most kg with the mix fixed"):
        cap = max_mix_capacity(
            inputs, shares, solve_options(args), shifts_per_week=per_week, mix_source=source
        )
    tables = capacity_tables(cap)
    _prepare_out(target)
    protect = [args.scenario]
    written = export.write_tables(target, tables, workbook="capacity.xlsx", protect=protect)
    html_text = capacity_report(args.scenario, scenario, cap, tables, args.argv_text)
    written.append(export.atomic_write_text(target / "capacity.html", html_text, protect=protect))
    data = capacity_json(args.scenario, cap, tables, written)
    written.append(export.write_json(target / "capacity.json", data, protect=protect))
    data["files"] = [str(p) for p in written]
    ui.emit_json(data)
    ui.say(rich_table(tables["capacity_mix"], title=f"Mix ({source})"))
    for line in full_machines(cap.plan):
        ui.say(f"At capacity: {line}")
    if cap.limit is not None:
        ui.say("Just above this total the plan runs out of:")
        for s in cap.limit.shortfalls:
            ui.say(f"  - {s.message}")
    _written(ui, written)
    if cap.total_kg <= 0:
        for p, reasons in cap.plan.excluded.items():
            ui.problem(f"{p} cannot be made on this plant: {'; '.join(reasons)}")
        ui.result("no feasible plan with this mix: capacity 0 kg")
        return EXIT_NO_PLAN
    ui.result(
        f"capacity with this mix: {cap.kg_per_hour:,.0f} kg/h, {cap.kg_per_week:,.0f} kg/week "
        f"({cap.total_kg:,.0f} kg over {len(inputs.shifts)} shift(s), "
        f"{per_week:g} shifts/week) → {target}"
    )
    return EXIT_OK


def capacity_report(
    path: str, scenario: Any, cap: CapacityResult, tables: Mapping[str, pd.DataFrame], command: str
) -> str:
    """The HTML page of a capacity run."""
    from optimizer.reporting.html import SAFETY_CAUTION, HtmlReport, utilisation_figure

    plant = getattr(scenario, "plant", Path(path).stem)
    report = HtmlReport(
        f"Capacity with a fixed mix — {plant}",
        f"Scenario {path} · made {made_at()}",
    )
    report.caution("Food safety", SAFETY_CAUTION)
    report.section("Capacity")
    pairs: list[tuple[str, Any]] = [
        ("most kg per hour", f"{cap.kg_per_hour:,.0f} kg/h"),
        ("most kg per week", f"{cap.kg_per_week:,.0f} kg ({cap.shifts_per_week:g} shifts)"),
        ("over the scenario's shifts", f"{cap.total_kg:,.0f} kg in {cap.horizon_hours:g} h"),
        ("with the mix free", f"{cap.free_mix_kg:,.0f} kg"),
        ("mix from", cap.mix_source),
    ]
    for line in full_machines(cap.plan):
        pairs.append(("at capacity", line))
    report.key_values(pairs)
    report.paragraph(
        "Method: the most kg with the product proportions fixed, found by bisection on the "
        f"total ({cap.solves} plans solved, stopped within {100 * CAPACITY_TOLERANCE:g} %). "
        "kg per hour is over the shifts' available hours; kg per week assumes the "
        "scenario's shifts repeat."
    )
    report.table(
        "capacity_mix",
        tables["capacity_mix"],
        caption="Mix and capacity per product",
        percent=("share",),
    )
    report.section("What limits it")
    if cap.limit is not None and cap.limit.shortfalls:
        report.bullets(s.message for s in cap.limit.shortfalls)
    report.table(
        "capacity_limits",
        tables["capacity_limits"],
        caption="Shortfalls just above the capacity (elastic re-solve)",
        empty_text="none: the capacity is the most the mix allows",
    )
    util = tables["utilisation"]
    if not util.empty:
        report.figure(
            utilisation_figure(util),
            caption="Machine utilisation at capacity.",
            alt="utilisation at capacity",
            name="utilisation",
        )
    report.table("utilisation", util, caption="Utilisation at capacity", percent=("utilisation",))
    report.table("ovens", tables["ovens"], caption="Oven batches at capacity")
    report.table("tunnels", tables["tunnels"], caption="Tunnel runs at capacity")
    report.footer("scenario", path)
    report.footer("scenario sha256", file_sha256(path))
    report.footer("corepace version", tool_version())
    report.footer("command", command)
    return report.render()


# ---------------------------------------------------------------------------
# compare
# ---------------------------------------------------------------------------


def _labels(paths: Sequence[str]) -> list[str]:
    stems = [Path(p).stem for p in paths]
    if len(set(stems)) == len(stems):
        return stems
    return [str(p) for p in paths]


def compare_table(runs: Sequence[PlanRun], labels: Sequence[str]) -> pd.DataFrame:
    """Side-by-side figures of several plan runs: one row per figure, one column per scenario.

    Rows: status, objective value, total kg, mean kg per shift, kg of each
    product, mean utilisation of each machine, the bottleneck and its shadow
    price, solve seconds. Values are strings or numbers; a product or machine
    a scenario does not have is empty.
    """
    from optimizer.planning.results import bottleneck

    products = sorted({r.product for run in runs for r in run.result.runs})
    machines = list(dict.fromkeys(u.machine for run in runs for u in run.result.machine_use))
    rows: list[tuple[str, str, list[Any]]] = []

    def add(figure: str, unit: str, values: list[Any]) -> None:
        rows.append((figure, unit, values))

    add("status", "", [run.result.status.value for run in runs])
    add("objective", "", [run.result.objective.value for run in runs])
    add("objective value", "", [run.result.objective_value for run in runs])
    add("total kg", "kg", [run.result.total_kg for run in runs])
    add(
        "mean kg per shift",
        "kg",
        [run.result.total_kg / max(len(run.result.shifts), 1) for run in runs],
    )
    for p in products:
        add(f"kg {p}", "kg", [sum(r.kg for r in run.result.runs if r.product == p) for run in runs])
    for m in machines:
        values = []
        for run in runs:
            uses = [u.utilisation for u in run.result.machine_use if u.machine == m]
            values.append(sum(uses) / len(uses) if uses else None)
        add(f"utilisation {m}", "-", values)
    bns = [bottleneck(run.result) for run in runs]
    add("bottleneck", "", [f"{b.kind} {b.machine}" if b else "" for b in bns])
    add(
        "bottleneck shadow price",
        "per extra hour",
        [b.per_hour if b else None for b in bns],
    )
    data = {"figure": [r[0] for r in rows], "unit": [r[1] for r in rows]}
    for i, label in enumerate(labels):
        data[label] = [r[2][i] for r in rows]
    return pd.DataFrame(data).astype({label: object for label in labels})


def compare_report(
    runs: Sequence[PlanRun], labels: Sequence[str], table: pd.DataFrame, command: str
) -> str:
    """The HTML page comparing several scenarios."""
    from matplotlib.figure import Figure

    from optimizer.reporting.html import BAR_COLOURS, SAFETY_CAUTION, HtmlReport

    report = HtmlReport(
        "Scenario comparison",
        f"{len(runs)} scenarios · made {made_at()}",
    )
    report.caution("Food safety", SAFETY_CAUTION)
    report.section("Side by side")
    report.table("compare", table, caption="Plan figures per scenario")
    products = sorted({r.product for run in runs for r in run.result.runs})
    fig = Figure(figsize=(7.4, 0.9 + 0.5 * max(len(runs), 1)))
    ax = fig.add_subplot(1, 1, 1)
    left = [0.0] * len(runs)
    for j, p in enumerate(products):
        values = [sum(r.kg for r in run.result.runs if r.product == p) for run in runs]
        ax.barh(labels, values, left=left, color=BAR_COLOURS[j % len(BAR_COLOURS)], label=p)
        left = [a + b for a, b in zip(left, values, strict=True)]
    ax.invert_yaxis()
    ax.set_xlabel("kg over the horizon", fontsize=9)
    ax.set_title("kg per product and scenario", fontsize=10, loc="left")
    ax.spines["top"].set_visible(False)
    ax.spines["right"].set_visible(False)
    if products:
        ax.legend(fontsize=7.5, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    fig.tight_layout()
    report.figure(
        fig,
        caption="Planned kg per product in each scenario.",
        alt="kg per scenario",
        name="compare-kg",
    )
    for run, label in zip(runs, labels, strict=True):
        if run.result.shortfalls:
            report.heading(f"{label}: what does not fit")
            report.bullets(s.message for s in run.result.shortfalls)
    for run, label in zip(runs, labels, strict=True):
        report.footer(f"{label} sha256", run.sha256)
    report.footer("corepace version", tool_version())
    report.footer("command", command)
    return report.render()


def cmd_compare(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace compare A B ...``: several scenarios side by side."""
    if len(args.scenarios) < 2:
        raise BadInput(["compare: give at least two scenario files"])
    problems: list[str] = []
    scenarios = []
    for path in args.scenarios:
        try:
            scenarios.append(load(path, args))
        except BadInput as exc:
            problems.extend(exc.problems)
    if problems:
        raise BadInput(problems)
    labels = _labels(args.scenarios)
    target = out_dir(args, "compare")
    runs = [
        run_plan(path, scenario, args, ui)
        for path, scenario in zip(args.scenarios, scenarios, strict=True)
    ]
    table = compare_table(runs, labels)
    _prepare_out(target)
    protect = list(args.scenarios)
    tables = {"compare": table}
    written = export.write_tables(target, tables, workbook="compare.xlsx", protect=protect)
    html_text = compare_report(runs, labels, table, args.argv_text)
    written.append(export.atomic_write_text(target / "compare.html", html_text, protect=protect))
    data = {
        "scenarios": [
            {"label": label, **{k: v for k, v in plan_json(run, []).items() if k != "tables"}}
            for run, label in zip(runs, labels, strict=True)
        ],
        "tables": {"compare": export.table_records(table)},
    }
    written.append(export.write_json(target / "compare.json", data, protect=protect))
    data["files"] = [str(p) for p in written]
    ui.emit_json(data)
    ui.say(rich_table(table, title="Scenarios side by side"))
    _written(ui, written)
    codes = [_status_code(run.result) for run in runs]
    for run, label, code in zip(runs, labels, codes, strict=True):
        if code != EXIT_OK:
            ui.problem(f"{label}: no feasible plan ({run.result.status.value})")
            for s in run.result.shortfalls:
                ui.problem(f"{label}: shortfall: {s.message}")
    ui.result(f"compared {len(runs)} scenarios → {target}")
    return max(codes)


# ---------------------------------------------------------------------------
# schema
# ---------------------------------------------------------------------------


def cmd_schema(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace schema``: the JSON Schema of scenario files."""
    from optimizer.scenario.models import scenario_json_schema

    schema = scenario_json_schema()
    text = json.dumps(schema, indent=2, ensure_ascii=False) + "\n"
    if args.out:
        target = _prepare_out(Path(args.out))
        path = export.atomic_write_text(target / "scenario.schema.json", text)
        ui.emit_json({"file": str(path), "schema": schema})
        ui.result(f"wrote {path}")
    else:
        sys.stdout.write(text)
    return EXIT_OK


# ---------------------------------------------------------------------------
# Parser
# ---------------------------------------------------------------------------

EPILOG = """\
examples:
  corepace validate configs/demo.yaml
  corepace dwell configs/demo.yaml --out reports/demo
  corepace plan configs/demo.yaml --out reports/demo
  corepace capacity configs/demo.yaml --mix pork-sausage=2,ham-log=1
  corepace compare configs/demo.yaml other.yaml
  corepace sweep study.yaml --out reports/what-if
  corepace schema > scenario.schema.json

every command: --help for its options; --quiet, --json; --out DIR where files are written.

exit codes: 0 done, 1 no feasible plan (diagnosis printed), 2 bad input
(one line per problem, nothing written), 3 internal error.
"""


class _Formatter(argparse.RawDescriptionHelpFormatter):
    def __init__(self, prog: str) -> None:
        super().__init__(prog, max_help_position=30, width=100)


def _common(parser: argparse.ArgumentParser, *, out: bool = True) -> None:
    group = parser.add_argument_group("common options")
    if out:
        group.add_argument(
            "--out",
            metavar="DIR",
            help=f"directory for the files written (created when missing; "
            f"default {DEFAULT_OUT}/<scenario name>)",
        )
    group.add_argument("--quiet", "-q", action="store_true", help="print only the result line")
    group.add_argument(
        "--json", action="store_true", help="machine-readable JSON on stdout instead of text"
    )
    group.add_argument(
        "--debug", action="store_true", help="show the traceback of an internal error"
    )


def _positive_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number > 0, got {text!r}") from None
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"must be a finite number > 0, got {text!r}")
    return value


def _fraction(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number in [0, 1), got {text!r}") from None
    if not 0 <= value < 1:
        raise argparse.ArgumentTypeError(f"must be a number in [0, 1), got {text!r}")
    return value


def _scenario_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--set",
        action="append",
        metavar="PATH=VALUE",
        help="change a scenario value for this run only (the file is not changed), "
        "e.g. --set tunnels.chill-tunnel.length='30 m'; repeatable",
    )


def _solve_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("solver")
    group.add_argument(
        "--time-limit",
        type=_positive_float,
        metavar="SECONDS",
        help="wall-clock limit per solve [s] (default 60)",
    )
    group.add_argument(
        "--gap", type=_fraction, metavar="FRACTION", help="relative MIP gap to stop at"
    )
    group.add_argument("--solver", choices=("highs", "cbc"), help="first solver to try")


def _cache_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("dwell table cache")
    group.add_argument(
        "--cache-dir",
        metavar="DIR",
        help="where dwell tables are cached (default $XDG_CACHE_HOME/corepace/dwell)",
    )
    group.add_argument("--no-cache", action="store_true", help="recompute the dwell table")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``corepace`` command."""
    parser = argparse.ArgumentParser(
        prog="corepace",
        description="Dwell times from heat-transfer physics and shift plans for batch ovens\n"
        "and cooling tunnels. The figures are model estimates for the piece sizes entered;\n"
        "limits come from the plant's food-safety plan and the local regulator, and a plan\n"
        "is validated with calibrated probes in the thickest pieces before use.",
        epilog=EPILOG,
        formatter_class=_Formatter,
    )
    parser.add_argument("--version", action="version", version=f"corepace {tool_version()}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    p = sub.add_parser(
        "validate",
        help="check a scenario file and list every problem",
        description="Check a scenario file; list every problem, one line each (exit 2 if any).",
        epilog="example:\n  corepace validate configs/demo.yaml\n",
        formatter_class=_Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.yaml/.yml/.json)")
    _scenario_options(p)
    _common(p, out=False)
    p.set_defaults(func=cmd_validate)

    p = sub.add_parser(
        "dwell",
        help="the dwell table: minutes per product and air setting, and why cells are ruled out",
        description="Compute the dwell table (cook and chill minutes for the largest piece at "
        "every air setting, fastest belt speed, reasons for ruled-out cells); print it and "
        "write dwell.csv and dwell.xlsx.",
        epilog="examples:\n  corepace dwell configs/demo.yaml\n"
        "  corepace dwell configs/demo.yaml --out /tmp/dwell --no-cache\n",
        formatter_class=_Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file")
    _scenario_options(p)
    _common(p)
    _cache_options(p)
    p.set_defaults(func=cmd_dwell)

    p = sub.add_parser(
        "plan",
        help="the shift plan: batches, settings, belt speeds and loading for the most output",
        description="Plan the shifts for the scenario's objective; print a summary and write "
        "the plan tables (CSV, plan.xlsx), plan.json, dwell.csv and report.html.\n"
        "Exit 1 when no plan meets the orders: the shortfall diagnosis is printed.",
        epilog="examples:\n  corepace plan configs/demo.yaml\n"
        "  corepace plan configs/demo.yaml --out reports/demo --time-limit 30\n"
        "  corepace plan configs/demo.yaml --set tunnels.chill-tunnel.length='30 m' --json\n",
        formatter_class=_Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file")
    _scenario_options(p)
    _solve_options(p)
    _common(p)
    _cache_options(p)
    p.set_defaults(func=cmd_plan)

    p = sub.add_parser(
        "capacity",
        help="most kg per hour and per week for a fixed product mix, and what limits it",
        description="With the product proportions fixed, find the most kg the plant makes over "
        "the scenario's shifts, per hour and per week, and what runs out first. Writes\n"
        "capacity.html, capacity.json, the tables as CSV and capacity.xlsx.",
        epilog="examples:\n  corepace capacity configs/demo.yaml\n"
        "  corepace capacity configs/demo.yaml --mix pork-sausage=2,ham-log=1\n"
        "  corepace capacity configs/demo.yaml --shifts-per-week 10 --json\n",
        formatter_class=_Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file")
    p.add_argument(
        "--mix",
        action="append",
        metavar="PRODUCT=SHARE,...",
        help="product proportions (any positive numbers, normalised); default: the orders' "
        "minimums, else their maximums, else equal shares",
    )
    p.add_argument(
        "--shifts-per-week",
        type=float,
        metavar="N",
        help="shifts a week for kg per week (default 15: three shifts, five days)",
    )
    _scenario_options(p)
    _solve_options(p)
    _common(p)
    _cache_options(p)
    p.set_defaults(func=cmd_capacity)

    p = sub.add_parser(
        "compare",
        help="several scenarios side by side",
        description="Plan each scenario and put the figures side by side; writes compare.csv, "
        "compare.xlsx, compare.json and compare.html.\nExit 1 when any scenario has no "
        "feasible plan.",
        epilog="examples:\n  corepace compare configs/demo.yaml configs/demo-longer-tunnel.yaml\n"
        "  corepace compare a.yaml b.yaml c.yaml --out reports/what-if\n",
        formatter_class=_Formatter,
    )
    p.add_argument("scenarios", metavar="SCENARIO", nargs="+", help="two or more scenario files")
    _scenario_options(p)
    _solve_options(p)
    _common(p)
    _cache_options(p)
    p.set_defaults(func=cmd_compare)

    from optimizer.studies.study import add_sweep_parser

    add_sweep_parser(sub)

    p = sub.add_parser(
        "schema",
        help="JSON Schema of scenario files",
        description="Print the JSON Schema of scenario files (or write "
        "scenario.schema.json into --out).",
        epilog="examples:\n  corepace schema > scenario.schema.json\n"
        "  corepace schema --out schemas\n",
        formatter_class=_Formatter,
    )
    _common(p)
    p.set_defaults(func=cmd_schema)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``corepace`` command.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name; default ``sys.argv[1:]``.

    Returns
    -------
    int
        Exit code: 0 done, 1 no feasible plan, 2 bad input, 3 internal error.
    """
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, usage errors (argparse exits 2)
        return int(exc.code or 0) if not isinstance(exc.code, str) else EXIT_BAD_INPUT
    args.argv_text = _argv_text(argv)
    ui = Ui(quiet=args.quiet, json_mode=args.json)
    start = time.perf_counter()
    extrapolated: dict[str, int] = {}
    try:
        with _validity_notes(extrapolated):
            code = args.func(args, ui)
    except BadInput as exc:
        for line in exc.problems:
            ui.problem(line)
        ui.emit_json({"status": "bad_input", "problems": list(exc.problems)})
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        ui.problem("corepace: interrupted; no partial files were left behind")
        return 130
    except Exception as exc:
        if args.debug:
            raise
        bad = _input_error(exc)
        if bad is not None:
            for line in bad:
                ui.problem(line)
            ui.emit_json({"status": "bad_input", "problems": bad})
            return EXIT_BAD_INPUT
        ui.problem(
            f"corepace: internal error: {type(exc).__name__}: {exc} (run with --debug for details)"
        )
        return EXIT_INTERNAL
    if not ui.json_mode and not ui.quiet:
        for text, count in sorted(extrapolated.items()):
            ui.problem(f"note: {text} ({count} case{'s' if count > 1 else ''})")
    if not ui.json_mode and not ui.quiet and args.command != "schema":
        ui.console.print(f"[dim]done in {time.perf_counter() - start:.1f} s[/dim]")
    return code


@contextmanager
def _validity_notes(counts: dict[str, int]) -> Iterator[None]:
    """Collect the physics' out-of-range warnings as one note per kind.

    A correlation used outside its validity range warns once per case with
    the value; a person needs the kind and how often, not a line per cell.
    Other warnings are shown as usual.
    """
    from thermal.errors import ValidityWarning

    shown = warnings.showwarning

    def show(message, category, filename, lineno, file=None, line=None):
        if issubclass(category, ValidityWarning):
            text = re.sub(r" = [-+0-9.eE]+", "", str(message))
            counts[text] = counts.get(text, 0) + 1
        else:
            shown(message, category, filename, lineno, file, line)

    with warnings.catch_warnings():
        warnings.simplefilter("always", ValidityWarning)
        warnings.showwarning = show
        yield


def _input_error(exc: Exception) -> list[str] | None:
    """Problems when ``exc`` is an input error of a lower layer, else None."""
    kinds: list[type[BaseException]] = [export.OutputError]
    try:
        from thermal.errors import ThermalInputError

        kinds.append(ThermalInputError)
    except ImportError:  # pragma: no cover - thermal is part of the package
        pass
    try:
        from optimizer.planning.inputs import PlanInputError

        kinds.append(PlanInputError)
    except ImportError:
        pass
    if isinstance(exc, tuple(kinds)):
        return _problems(exc)
    return None


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
