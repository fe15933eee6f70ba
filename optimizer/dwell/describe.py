"""The rules and published methods behind a dwell table, in words (for reports and tables)."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import pandas as pd

from optimizer.scenario.models import (
    ChillRuleSpec,
    CookRuleSpec,
    FreezeRuleSpec,
    Scenario,
)
from thermal.convection import CORRELATIONS

__all__ = ["duration_text", "margin_text", "methods_used", "rule_text", "rules_table"]


def duration_text(minutes: float) -> str:
    """A hold or window in words: seconds below a minute, else minutes [min → text]."""
    if minutes < 1.0:
        return f"{minutes * 60:.0f} s"
    return f"{minutes:g} min"


def rule_text(rule: CookRuleSpec | ChillRuleSpec | FreezeRuleSpec) -> str:
    """A cook, chill or freeze rule in words."""
    kind = getattr(rule, "kind", "")
    parts: list[str] = []
    if kind == "cook":
        for h in rule.holds:
            hold = f" for {duration_text(h.hold)}" if h.hold else ""
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
            parts.append(f"{step.start:g} → {step.end:g} °C within {duration_text(step.within)}")
        if rule.exit_core_temperature is not None:
            parts.append(f"core ≤ {rule.exit_core_temperature:g} °C at tunnel exit")
        return "; ".join(parts)
    if kind == "freeze":
        within = f" within {rule.within:g} min of oven exit" if rule.within else ""
        return f"core ≤ {rule.core_temperature:g} °C at tunnel exit{within}"
    return str(rule)


def rules_table(scenario: Scenario, products: Sequence[str]) -> pd.DataFrame:
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
        chill_requirement, chill_source, margin. The requirements are as the
        rules state them; ``margin`` says what the calculation adds on top
        (kept apart so a target is never read with the margin folded in).
    """
    margin = margin_text(scenario)
    rows = []
    for name in products:
        product = scenario.product(name)
        cook = scenario.cook_rule(product)
        chill = scenario.chill_rule(product)
        rows.append(
            {
                "product": name,
                "cook_rule": product.cook_rule if isinstance(product.cook_rule, str) else "inline",
                "cook_requirement": rule_text(cook),
                "cook_source": cook.source,
                "chill_rule": product.chill_rule
                if isinstance(product.chill_rule, str)
                else "inline",
                "chill_requirement": rule_text(chill),
                "chill_source": chill.source,
                "margin": margin,
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
            "margin",
        ],
    )


def margin_text(scenario: Scenario) -> str:
    """The scenario's safety margin in words, as the dwell table applies it."""
    m = scenario.safety_margin
    parts = []
    if m.core_temperature:
        parts.append(
            f"cook targets +{m.core_temperature:g} K, chill limits −{m.core_temperature:g} K"
        )
    if m.time_fraction:
        parts.append(f"every cook and chill time +{100 * m.time_fraction:g} %")
    return "calculated with " + ("; ".join(parts) if parts else "no safety margin")


_SHAPE_CORRELATIONS = {
    "slab": ("flat_plate",),
    "block": ("flat_plate",),
    "cylinder": ("cylinder_churchill_bernstein",),
    "finite_cylinder": ("cylinder_churchill_bernstein",),
    "sphere": ("sphere_whitaker",),
}


def methods_used(dwell: pd.DataFrame, scenario: Scenario) -> list[tuple[str, str]]:
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
            "30, 95; water: Popiel & Wojtkowiak (1998), Heat Transfer Eng. 19(3), 87 "
            "(specific heat), Ramires et al. (1995), J. Phys. Chem. Ref. Data 24, 1377 "
            "(conductivity)",
        )
    )
    methods.append(
        (
            "Air properties versus temperature and humidity",
            "Lemmon & Jacobsen (2004) for dry air; IAPWS formulations for water vapour; "
            "Wilke and Mason–Saxena mixing rules",
        )
    )
    shapes = {getattr(p.geometry, "shape", "") for p in getattr(scenario, "products", [])}
    keys = sorted({k for shape in shapes for k in _SHAPE_CORRELATIONS.get(shape, ())})
    for key in keys:
        if key in CORRELATIONS:
            entry = CORRELATIONS[key]
            methods.append((f"Surface coefficient: {entry.name}", entry.reference))
    measured = [
        (label, spec) for label, spec in _air_specs(scenario) if spec.measured_h is not None
    ]
    if any(spec.measured_h_source is None for _, spec in measured):
        methods.append(
            (
                "Surface coefficient measured at the plant (air settings with measured_h)",
                "the plant's own measurement, as entered in the scenario",
            )
        )
    for label, spec in measured:
        if spec.measured_h_source is not None:
            methods.append(
                (
                    f"Surface coefficient measured at the plant: {label}, "
                    f"{spec.measured_h:.4g} W/(m² K)",
                    spec.measured_h_source,
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


def _air_specs(scenario: Scenario) -> list[tuple[str, Any]]:
    """Every air description of a scenario with a label: oven settings, transfer stages, zones."""
    out: list[tuple[str, Any]] = []
    for oven in getattr(scenario, "ovens", []):
        out += [(f"{oven.name} / {s.name}", s) for s in oven.settings]
    for tunnel in getattr(scenario, "tunnels", []):
        if tunnel.transfer is not None:
            out.append((f"{tunnel.name} / transfer", tunnel.transfer))
        for setting in tunnel.settings:
            out += [
                (f"{tunnel.name} / {setting.name} / {z.name or f'zone {i + 1}'}", z)
                for i, z in enumerate(setting.zones)
            ]
    return out
