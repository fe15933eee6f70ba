"""Temperature histories the reports draw: one product along one planned route.

The largest piece is run through the oven for the dwell-table cook time
(margin included), the tunnel's transfer stage and the tunnel zones for the
residence a belt speed gives, with :func:`thermal.process.run_stages` and the
same conversions from the scenario as the dwell table
(:mod:`optimizer.dwell.table`). The records here (:class:`CurveSet` and its
stages and rule marks) are what :mod:`optimizer.reporting.html` draws.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from optimizer.dwell import convert
from optimizer.dwell.describe import duration_text, rule_text
from optimizer.dwell.stages import transfer_stage, tunnel_zones
from optimizer.scenario.models import (
    ChillRuleSpec,
    CookRuleSpec,
    FreezeRuleSpec,
    Scenario,
)
from thermal import lethality, process

__all__ = ["CurveSet", "Route", "RuleMark", "Stage", "route_history"]


@dataclass(frozen=True)
class Stage:
    """A stretch of a temperature history (oven, transfer, a tunnel zone).

    Parameters
    ----------
    name : str
        Label drawn above the stretch.
    start : float
        Start time [min].
    end : float
        End time [min].
    air_temperature : float or None
        Air temperature in the stage [°C], drawn as a thin line when given.
    """

    name: str
    start: float
    end: float
    air_temperature: float | None = None


@dataclass(frozen=True)
class RuleMark:
    """A rule drawn on a temperature plot: a target temperature, and a window.

    Parameters
    ----------
    label : str
        Text of the rule, e.g. ``"core ≥ 72 °C"`` or ``"core ≤ 21 °C within 120 min"``.
    temperature : float
        Target temperature [°C], drawn as a dashed horizontal line.
    start : float or None
        Time from which the rule's clock runs [min] (None: from the start).
    deadline : float or None
        Time by which the target must be met [min]; drawn as a vertical line
        and the window shaded.
    met_at : float or None
        Time the model reaches the target [min], marked with a point.
    """

    label: str
    temperature: float
    start: float | None = None
    deadline: float | None = None
    met_at: float | None = None


@dataclass(frozen=True)
class CurveSet:
    """Temperature histories of one product through oven and tunnel.

    Parameters
    ----------
    title : str
        Figure title (product, oven setting, tunnel setting).
    time_min : sequence of float
        Times [min] from oven loading.
    core : sequence of float
        Core (slowest point) temperature [°C] at those times.
    surface : sequence of float
        Surface temperature [°C] at those times.
    stages : sequence of Stage
        Stage boundaries to draw.
    rules : sequence of RuleMark
        Targets and windows to draw.
    mean : sequence of float or None
        Mass-mean temperature [°C], drawn thin when given.
    """

    title: str
    time_min: Sequence[float]
    core: Sequence[float]
    surface: Sequence[float]
    stages: Sequence[Stage] = ()
    rules: Sequence[RuleMark] = ()
    mean: Sequence[float] | None = None


def _first_crossing(
    t: npt.ArrayLike, y: npt.ArrayLike, level: float, *, below: bool, after: float = 0.0
) -> float:
    """First time [same unit as t] at or after ``after`` that ``y`` is at/below (or above)
    ``level``, interpolated linearly; NaN when it never is."""
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
    cook: CookRuleSpec,
    chill: ChillRuleSpec | FreezeRuleSpec,
    times_min: npt.ArrayLike,
    core: npt.ArrayLike,
    oven_end: float,
    tunnel_start: float,
    tunnel_end: float,
) -> list[RuleMark]:
    """Rule targets and windows to draw on a product's temperature plot [min, °C]."""
    marks = []
    holds = sorted(cook.holds, key=lambda h: h.core_temperature)
    if holds:
        lowest = holds[0]
        if len(holds) > 1:
            text = f"cook: core ≥ {lowest.core_temperature:g} °C (lowest of {len(holds)} options)"
        else:
            hold = f" for {duration_text(lowest.hold)}" if lowest.hold else ""
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
                    f"core ≤ {step.end:g} °C within {duration_text(step.within)} "
                    f"of {step.start:g} °C",
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


@dataclass(frozen=True)
class Route:
    """One planned way through the plant: the dwell-table keys and the belt speed.

    Parameters
    ----------
    product, oven, oven_setting, tunnel, tunnel_setting, loading : str
        Dwell-table keys (names in the scenario).
    cook_min : float
        Oven time of the dwell-table row, safety margin included [min].
    belt_speed_m_per_min : float
        Planned belt speed [m/min].
    """

    product: str
    oven: str
    oven_setting: str
    tunnel: str
    tunnel_setting: str
    loading: str
    cook_min: float
    belt_speed_m_per_min: float


def route_history(scenario: Scenario, route: Route) -> tuple[CurveSet, str]:
    """Core and surface history of a product's largest piece along one route.

    Parameters
    ----------
    scenario : optimizer.scenario.models.Scenario
        The validated scenario.
    route : Route
        Where the product goes, its cook time and belt speed.

    Returns
    -------
    tuple of (CurveSet, str)
        The histories with stages and rule marks, and a caption in words.
    """
    name, oven_name, oset_name = route.product, route.oven, route.oven_setting
    tunnel_name, tset_name, loading_name = route.tunnel, route.tunnel_setting, route.loading
    cook_min = route.cook_min
    belt_speed = route.belt_speed_m_per_min
    product = scenario.product(name)
    oven = scenario.oven(oven_name)
    oset = next(s for s in oven.settings if s.name == oset_name)
    tunnel = scenario.tunnel(tunnel_name)
    tset = next(s for s in tunnel.settings if s.name == tset_name)
    loading = next(x for x in tunnel.loadings if x.name == loading_name)
    residence_min = tunnel.length / belt_speed
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
        f"{belt_speed:.2f} m/min ({residence_min:.1f} min in the tunnel). "
        f"Core at tunnel exit {float(hist.core[-1]):.1f} °C. "
        f"Cook rule: {rule_text(cook)} ({cook.source}). "
        f"Chill rule: {rule_text(chill)} ({chill.source})."
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
    return curve, caption
