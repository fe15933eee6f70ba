"""Purchase arithmetic for what-if studies: extra margin, payback, NPV.

Conventions: money in the scenario's currency unit, years of 365 days, cash
flows at the end of each year, the purchase paid at time zero.
"""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class PurchaseCase:
    """Money figures of one purchase option against the base plant.

    Attributes
    ----------
    name : str
        Option name.
    capital : float
        Purchase and installation cost, paid at time zero [currency].
    extra_margin_per_year : float
        Extra contribution margin the option earns each year [currency/year].
    running_cost_per_year : float
        Extra running cost each year (energy, maintenance) [currency/year].
    net_per_year : float
        ``extra_margin_per_year - running_cost_per_year`` [currency/year].
    simple_payback_years : float
        ``capital / net_per_year``; ``inf`` when the option never pays back.
    npv : float
        Net present value over ``years`` at ``rate`` [currency].
    """

    name: str
    capital: float
    extra_margin_per_year: float
    running_cost_per_year: float
    net_per_year: float
    simple_payback_years: float
    npv: float


def annual_margin(
    extra_kg_per_week: float, margin_per_kg: float, weeks_per_year: float = 50.0
) -> float:
    """Extra margin per year from extra weekly output [currency/year].

    Parameters
    ----------
    extra_kg_per_week : float
        Extra kg shipped per week [kg/week].
    margin_per_kg : float
        Contribution margin per kg [currency/kg].
    weeks_per_year : float
        Production weeks per year [week/year]; 50 is common practice.
    """
    return extra_kg_per_week * margin_per_kg * weeks_per_year


def npv(capital: float, net_per_year: float, years: int, rate: float) -> float:
    """Net present value of a constant yearly net cash flow [currency].

    ``-capital + sum(net / (1 + rate)**y for y in 1..years)``.

    Parameters
    ----------
    capital : float
        Cost at time zero [currency].
    net_per_year : float
        Net cash flow at the end of each year [currency/year].
    years : int
        Years of service.
    rate : float
        Discount rate per year (0.08 for 8 %).
    """
    if years < 0:
        raise ValueError(f"years: must be >= 0, got {years}")
    if rate <= -1.0:
        raise ValueError(f"rate: must be > -1 (a fraction per year, 0.08 for 8 %), got {rate}")
    if rate == 0.0:
        annuity = float(years)
    else:
        annuity = (1.0 - (1.0 + rate) ** (-years)) / rate
    return -capital + net_per_year * annuity


def purchase_case(
    name: str,
    capital: float,
    extra_margin_per_year: float,
    running_cost_per_year: float,
    *,
    years: int,
    rate: float,
) -> PurchaseCase:
    """Evaluate one purchase option (simple payback and NPV)."""
    if capital < 0:
        raise ValueError(f"{name}.capital: must be >= 0, got {capital}")
    net = extra_margin_per_year - running_cost_per_year
    payback = capital / net if net > 0 else math.inf
    return PurchaseCase(
        name=name,
        capital=capital,
        extra_margin_per_year=extra_margin_per_year,
        running_cost_per_year=running_cost_per_year,
        net_per_year=net,
        simple_payback_years=payback,
        npv=npv(capital, net, years, rate),
    )
