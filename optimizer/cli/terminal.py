"""Terminal output of the commands: messages, progress, and tables drawn with rich."""

from __future__ import annotations

import json
import math
import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any

import pandas as pd
from rich.console import Console
from rich.markup import escape
from rich.progress import (
    BarColumn,
    MofNCompleteColumn,
    Progress,
    SpinnerColumn,
    TextColumn,
    TimeElapsedColumn,
)
from rich.table import Table

from optimizer.planning.rounding import format_minutes, format_speed, safe_rounding
from optimizer.reporting import export
from optimizer.reporting.cells import COLUMN_LABELS, display_decimals, format_cell

__all__ = ["Ui", "render_dwell_table", "rich_table", "say_assumptions"]


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


def rich_table(table: pd.DataFrame, *, title: str) -> Table:
    """Any table as a rich table (numbers right-aligned, rounded for reading)."""
    out = Table(title=title, title_justify="left", header_style="bold")
    numeric = {c: pd.api.types.is_numeric_dtype(table[c]) for c in table.columns}
    decimals = [display_decimals(c, table[c]) if numeric[c] else 2 for c in table.columns]
    rounding = [safe_rounding(str(c)) for c in table.columns]
    for c in table.columns:
        label = COLUMN_LABELS.get(str(c), str(c).replace("_", " "))
        out.add_column(label, justify="right" if numeric[c] else "left")
    for row in table.itertuples(index=False, name=None):
        out.add_row(
            *(format_cell(v, d, w) for v, d, w in zip(row, decimals, rounding, strict=True))
        )
    return out


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
        return format_minutes(value) + (f" ({method[0]})" if method else "")

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
            format_speed(r.max_belt_speed_m_per_min),
            status,
            style=None if r.feasible else "dim",
        )
    out.caption = (
        "(s) exact series, (n) finite volumes; largest piece, safety margin included; "
        "minutes rounded up, belt speeds down. "
        "Model estimates: validate with probes against the plant's food-safety plan."
    )
    return out


_LEANS = {
    "shorter": "could shorten the dwell",
    "unknown": "either way",
    "longer": "lengthens it (safe side)",
}


def say_assumptions(ui: Ui, register: pd.DataFrame | None) -> None:
    """Print the assumptions register, one line each, those that could shorten a dwell first.

    Parameters
    ----------
    ui : Ui
        Where to print (nothing with ``--quiet`` or ``--json``).
    register : pandas.DataFrame or None
        :func:`optimizer.dwell.assumptions.assumptions_table` (None: nothing).
    """
    if register is None or register.empty:
        return
    risky = int((register["direction"] == "shorter").sum())
    ui.say(
        f"Assumptions in force: {len(register)} ({risky} could shorten a dwell; "
        "the report lists them with notes):"
    )
    for a in register.itertuples(index=False):
        line = f"  - {a.topic}: {a.value}; {a.applies_to} — {_LEANS.get(a.direction, a.direction)}"
        ui.say(escape(line))
