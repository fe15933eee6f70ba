"""Purchase arithmetic against hand calculations and interest-factor tables."""

from __future__ import annotations

import math

import pytest

from optimizer.studies.finance import annual_margin, npv, purchase_case


def test_payback_and_npv_against_hand_calculation():
    # Hand calculation: 400 kg/week extra at 1.5 per kg over 50 weeks = 30,000 a year;
    # minus 6,000 running cost = 24,000 net; 96,000 capital -> payback 4.0 years.
    margin = annual_margin(400.0, 1.5, 50.0)
    assert margin == pytest.approx(30_000.0)
    case = purchase_case("longer tunnel", 96_000.0, margin, 6_000.0, years=10, rate=0.08)
    assert case.net_per_year == pytest.approx(24_000.0)
    assert case.simple_payback_years == pytest.approx(4.0)
    # Source: uniform-series present-worth factor (P/A, 8 %, 10 years) = 6.7101, as
    # printed in compound-interest tables of engineering-economics texts (from memory).
    assert case.npv == pytest.approx(-96_000.0 + 24_000.0 * 6.7101, abs=24_000.0 * 1e-4)


def test_npv_zero_rate_is_plain_sum_and_never_paying_back():
    assert npv(1000.0, 300.0, 5, 0.0) == pytest.approx(500.0)
    case = purchase_case("fans", 5000.0, 1000.0, 1500.0, years=5, rate=0.05)
    assert math.isinf(case.simple_payback_years)
    assert case.npv < -5000.0


def test_npv_matches_explicit_discounting():
    flows = sum(1234.0 / 1.07**y for y in range(1, 13))
    assert npv(5000.0, 1234.0, 12, 0.07) == pytest.approx(flows - 5000.0, rel=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [({"years": -1, "rate": 0.05}, "years"), ({"years": 3, "rate": -1.0}, "rate")],
)
def test_bad_arguments_name_the_field(kwargs, field):
    with pytest.raises(ValueError, match=field):
        npv(100.0, 10.0, **kwargs)


def test_negative_capital_is_refused():
    with pytest.raises(ValueError, match=r"oven\.capital: must be >= 0"):
        purchase_case("oven", -1.0, 10.0, 0.0, years=3, rate=0.05)
