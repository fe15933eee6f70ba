"""F-value, log reduction, holds and crossings; rule checks on synthetic histories."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

from thermal import lethality as L
from thermal.errors import ThermalInputError
from thermal.rules import (
    ChillRule,
    CookRule,
    CoolingStep,
    FreezeRule,
    LethalityRule,
    TimeTemperatureTable,
)

LN10 = math.log(10.0)


# ----------------------------------------------------------------- analytic F


def test_isothermal_hold_is_time_times_rate():
    # Closed form: F = t * 10**((T - Tref)/z) for constant T.
    t = np.linspace(0.0, 900.0, 4)
    for temp in (60.0, 70.0, 75.5):
        f = L.f_value(t, np.full(4, temp), 70.0, 7.5)
        assert f == pytest.approx(900.0 * 10 ** ((temp - 70.0) / 7.5), rel=1e-12)


def test_linear_ramp_closed_form_with_two_samples():
    # Closed form for T = T0 + r t: F = z / (r ln10) (L(T1) - L(T0)).
    t0, t1, T0, T1, tref, z = 0.0, 1200.0, 40.0, 90.0, 70.0, 10.0
    r = (T1 - T0) / (t1 - t0)
    exact = z / (r * LN10) * (10 ** ((T1 - tref) / z) - 10 ** ((T0 - tref) / z))
    f = L.f_value([t0, t1], [T0, T1], tref, z)
    assert f == pytest.approx(exact, rel=1e-12)


def test_piecewise_linear_exact_against_quad():
    # Reference: scipy.integrate.quad of the lethal rate of the linear interpolant.
    t = np.array([0.0, 100.0, 250.0, 250.0, 400.0, 700.0])
    y = np.array([20.0, 65.0, 72.0, 72.0, 71.999999, 50.0])
    ref = sum(
        quad(lambda s: 10 ** ((np.interp(s, t, y) - 70.0) / 6.0), a, b, epsabs=0, epsrel=1e-12)[0]
        for a, b in itertools.pairwise(t)
        if b > a
    )
    assert L.f_value(t, y, 70.0, 6.0) == pytest.approx(ref, rel=1e-9)


def test_smooth_history_converges_second_order_or_better():
    # Reference: quad of a smooth curve; piecewise-linear sampling error falls
    # at least as h^2 (interpolation error of the temperature).
    def temp(s):
        return 20.0 + 55.0 * (1.0 - np.exp(-s / 600.0))

    ref = quad(lambda s: 10 ** ((temp(s) - 70.0) / 5.0), 0, 3600, epsrel=1e-12, limit=200)[0]
    errs = []
    for n in (31, 61, 121):
        s = np.linspace(0, 3600, n)
        errs.append(abs(L.f_value(s, temp(s), 70.0, 5.0) / ref - 1.0))
    assert errs[2] < 1e-3
    assert errs[0] / errs[1] > 3.5 and errs[1] / errs[2] > 3.5


def test_log_reduction_is_f_over_d():
    t = np.array([0.0, 60.0])
    y = np.array([70.0, 70.0])
    assert L.log_reduction(t, y, 10.0, 70.0, 5.0) == pytest.approx(6.0)


def test_batch_matches_one_by_one():
    rng = np.random.default_rng(3)
    t = np.sort(rng.uniform(0, 1000, 40))
    y = rng.uniform(40, 80, (5, 40))
    tref = np.array([60.0, 65.0, 70.0, 70.0, 72.0])
    batch = L.f_value(t, y, tref, 6.0)
    assert batch.shape == (5,)
    for i in range(5):
        assert batch[i] == pytest.approx(float(L.f_value(t, y[i], tref[i], 6.0)), rel=1e-13)
    # times per history
    tt = np.sort(rng.uniform(0, 1000, (5, 40)), axis=-1)
    b2 = L.cumulative_f_value(tt, y, 70.0, 6.0)
    assert b2.shape == (5, 40)
    assert b2[3, -1] == pytest.approx(float(L.f_value(tt[3], y[3], 70.0, 6.0)))


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.floats(30.0, 90.0), min_size=3, max_size=12),
    st.floats(2.0, 15.0),
    st.integers(1, 5),
)
def test_refining_a_piecewise_linear_history_leaves_f_unchanged(temps, z, k):
    # Exactness: inserting the linear interpolant's own midpoints changes nothing.
    t = np.arange(len(temps)) * 60.0
    y = np.array(temps)
    fine_t = np.linspace(0.0, t[-1], (len(temps) - 1) * (k + 1) + 1)
    fine_y = np.interp(fine_t, t, y)
    assert L.f_value(fine_t, fine_y, 70.0, z) == pytest.approx(
        float(L.f_value(t, y, 70.0, z)), rel=1e-9
    )


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(30.0, 90.0), min_size=2, max_size=12), st.floats(0.01, 0.99))
def test_time_to_f_inverts_cumulative(temps, share):
    t = np.arange(len(temps)) * 45.0
    y = np.array(temps)
    total = float(L.f_value(t, y, 70.0, 8.0))
    when = float(L.time_to_f_value(t, y, share * total, 70.0, 8.0))
    # F accumulated up to `when` on the linear interpolant equals the goal.
    cut = np.append(t[t < when], when)
    assert L.f_value(cut, np.interp(cut, t, y), 70.0, 8.0) == pytest.approx(share * total, rel=1e-7)


def test_time_to_f_never_reached_is_nan():
    assert math.isnan(float(L.time_to_f_value([0, 10], [50, 50], 1e6, 70.0, 5.0)))


# ----------------------------------------------------------------- holds and crossings


def test_longest_hold_interpolates_entries_and_exits():
    t = np.arange(7) * 10.0
    y = np.array([60, 72, 74, 71, 73, 75, 60.0])
    # Hand: runs [10, 26.67] and [35, 52]; the second, 17 s, is longest.
    assert L.longest_hold_above(t, y, 72.0) == pytest.approx(17.0)
    assert L.hold_reached_time(t, y, 72.0, 15.0) == pytest.approx(25.0)
    assert L.hold_reached_time(t, y, 72.0, 16.9) == pytest.approx(51.9)
    assert math.isnan(float(L.hold_reached_time(t, y, 72.0, 17.5)))
    assert L.longest_hold_above(t, y, 80.0) == 0.0


def test_history_starting_above_counts_from_the_start():
    assert L.longest_hold_above([0, 10, 20], [80, 80, 60], 70.0) == pytest.approx(15.0)
    assert L.first_time_at([0, 10], [80, 60], 70.0) == 0.0


def test_first_time_at_both_directions_and_never():
    t = [0.0, 100.0, 200.0]
    y = [20.0, 80.0, 10.0]
    assert L.first_time_at(t, y, 50.0, "rising") == pytest.approx(50.0)
    assert L.first_time_at(t, y, 45.0, "falling") == pytest.approx(0.0)
    assert L.first_time_at(t, [80, 90, 45], 45.0, "falling") == pytest.approx(200.0)
    assert math.isnan(float(L.first_time_at(t, y, 90.0)))
    batch = L.first_time_at(t, np.array([y, [20, 40, 60]]), 50.0)
    assert batch[0] == pytest.approx(50.0) and batch[1] == pytest.approx(150.0)


# ----------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("call", "field"),
    [
        (lambda: L.f_value([0, 10, 5], [1, 2, 3], 70, 5), "times"),
        (lambda: L.f_value([0, 10], [1, 2, 3], 70, 5), "times"),
        (lambda: L.f_value([0, 10], [1, np.nan], 70, 5), "temps"),
        (lambda: L.f_value([0, 10], [1, 2], 70, 0.0), "z"),
        (lambda: L.log_reduction([0, 10], [1, 2], -1.0, 70, 5), "d_ref"),
        (lambda: L.first_time_at([0, 1], [1, 2], 1.5, "up"), "direction"),
        (lambda: L.hold_reached_time([0, 1], [1, 2], 1.5, -3.0), "hold"),
    ],
)
def test_bad_input_names_the_argument(call, field):
    with pytest.raises(ThermalInputError) as err:
        call()
    msg = str(err.value)
    assert msg.startswith(field) and "\n" not in msg


# ----------------------------------------------------------------- rules

SALMONELLA = LethalityRule("Salmonella", d_ref=60.0, t_ref=60.0, z=5.6, log_reduction=6.5)


def _heating(t_end=3600.0, n=721, tau=900.0, top=75.0):
    t = np.linspace(0.0, t_end, n)
    return t, top - (top - 10.0) * np.exp(-t / tau)


def test_cook_rule_met_and_binding_is_the_last_clause_met():
    t, core = _heating()
    surf = 95.0 - 60.0 * np.exp(-t / 200.0)
    rule = CookRule(72.0, hold=120.0, lethality=SALMONELLA, surface_max=100.0)
    v = rule.check(t, core, surf)
    assert v.met
    reach = -900.0 * math.log(3.0 / 65.0)  # analytic time core hits 72 °C
    assert v.clause("core_target").met_at == pytest.approx(reach, abs=0.5)
    assert v.clause("hold").met_at == pytest.approx(reach + 120.0, abs=0.5)
    assert v.binding == "hold"
    assert v.clause("surface_max").margin == pytest.approx(100.0 - surf.max())


def test_cook_rule_history_never_reaching_target_says_so():
    t, core = _heating(t_end=1800.0, n=361)
    v = CookRule(72.0).check(t, core)
    assert not v.met and v.binding == "core_target"
    assert v.reason.startswith("core never reached 72.0 °C: peaked at 66.2 °C after 30.0 min")
    assert v.margin == pytest.approx(core.max() - 72.0)


def test_cook_rule_lethality_binds_with_a_large_reduction():
    t, core = _heating(tau=600.0, top=64.0)
    rule = CookRule(60.0, lethality=LethalityRule("S", 60.0, 60.0, 5.6, 40.0))
    v = rule.check(t, core)
    logs = float(L.log_reduction(t, core, 60.0, 60.0, 5.6))
    if logs >= 40.0:
        assert v.met and v.binding == "lethality"
    else:
        assert not v.met and v.binding == "lethality"
        assert v.clause("lethality").margin == pytest.approx(logs - 40.0)


def test_surface_limit_missed_is_reported():
    t, core = _heating()
    surf = 110.0 - 90.0 * np.exp(-t / 300.0)
    v = CookRule(72.0, surface_max=100.0).check(t, core, surf)
    assert not v.met and v.binding == "surface_max"
    assert v.reason.startswith("surface passed 100.0 °C after")
    with pytest.raises(ThermalInputError, match="surface"):
        CookRule(72.0, surface_max=100.0).check(t, core)


def _cooling(tau, start=75.0, air=0.0, t_end=8 * 3600.0):
    t = np.linspace(0.0, t_end, 2881)
    return t, air + (start - air) * np.exp(-t / tau)


FDA_COOLING = ChillRule((CoolingStep(57, 21, 7200), CoolingStep(57, 5, 21600)), 5.0)


def test_chill_rule_windows_against_analytic_crossings():
    tau = 3000.0
    t, core = _cooling(tau)
    v = FDA_COOLING.check(t, core)
    # Analytic crossing times of 75 e^{-t/tau}
    t57, t21, t5 = (tau * math.log(75.0 / x) for x in (57.0, 21.0, 5.0))
    assert v.met
    assert v.clause("step 1").margin == pytest.approx(7200 - (t21 - t57), abs=2.0)
    assert v.clause("step 2").margin == pytest.approx(21600 - (t5 - t57), abs=2.0)
    assert v.binding in ("step 2", "exit_core_max")


def test_chill_rule_slow_cooling_misses_first_window():
    t, core = _cooling(8000.0, t_end=12 * 3600.0)  # 57 -> 21 °C takes 2.2 h
    v = FDA_COOLING.check(t, core)
    assert not v.met and v.binding == "step 1"
    assert "took too long" in v.reason


def test_chill_rule_never_reaching_to_temp_says_so():
    t, core = _cooling(3000.0, air=8.0)
    v = FDA_COOLING.check(t, core)
    assert not v.met and v.binding == "step 2"
    assert "core never fell to 5.0 °C" in v.reason


def test_fsis_appendix_b_steps_chain():
    # Source: USDA FSIS Appendix B (1999): 54.4 -> 26.7 °C in 1.5 h, 26.7 -> 4.4 °C in 5 h.
    rule = ChillRule.from_dict(
        {
            "steps": [
                {"from_temp": 54.4, "to_temp": 26.7, "within": 5400},
                {"from_temp": 26.7, "to_temp": 4.4, "within": 18000},
            ]
        }
    )
    assert rule.exit_core_max == 4.4
    t, core = _cooling(3500.0, start=60.0, air=-2.0)
    v = rule.check(t, core)
    a = 3500 * math.log(62.0 / 56.4)
    b = 3500 * math.log(62.0 / 28.7)
    assert v.clause("step 1").margin == pytest.approx(5400 - (b - a), abs=2.0)


def test_freeze_rule():
    t, core = _cooling(3000.0, air=-30.0)
    assert FreezeRule(-18.0).check(t, core).met
    v = FreezeRule(-25.0).check(t[:100], core[:100])
    assert not v.met and "core never fell to -25.0 °C" in v.reason


def test_table_semantics_fda_style():
    # Source: US FDA Food Code 2022, 3-401.11(A)(2): 63 °C 3 min, 66 °C 1 min,
    # 68 °C 17 s, 70 °C < 1 s (instantaneous, entered as 0 s).
    tab = TimeTemperatureTable("FDA 2022 3-401.11(A)(2)", (63, 66, 68, 70), (180, 60, 17, 0))
    hold = tab.required_hold([62.9, 63, 64.5, 66, 67, 68, 69.9, 70, 80])
    # log-time interpolation by hand: 180*(60/180)**0.5, 60*(17/60)**0.5
    expect = [np.inf, 180, 180 * (1 / 3) ** 0.5, 60, 60 * (17 / 60) ** 0.5, 17, 17, 0, 0]
    np.testing.assert_allclose(hold, expect, rtol=1e-12)

    def plateau(level, dwell):
        return np.array([0.0, 600.0, 600.0 + dwell, 660.0 + dwell]), np.array(
            [20.0, level, level, 20.0]
        )

    assert tab.check(*plateau(66.0, 61.0)).met
    assert not tab.check(*plateau(66.0, 55.0)).met
    assert tab.check(*plateau(70.0, 0.0)).met
    v = tab.check(*plateau(62.0, 900.0))
    assert not v.met and "never reached the table's lowest 63.0 °C" in v.reason


def test_rule_dicts_give_clear_errors():
    with pytest.raises(ThermalInputError, match=r"^cook_rule: unknown field 'core_temp'"):
        CookRule.from_dict({"core_temp": 72})
    with pytest.raises(ThermalInputError, match=r"^cook_rule.core_target: is required"):
        CookRule.from_dict({"hold": 10})
    with pytest.raises(ThermalInputError, match=r"CookRule.hold \[s\]: must be >= 0"):
        CookRule.from_dict({"core_target": 72, "hold": -1})
    with pytest.raises(ThermalInputError, match=r"must be a number, got '72 degC'"):
        CookRule.from_dict({"core_target": "72 degC"})
    with pytest.raises(ThermalInputError, match=r"cook_rule.lethality: unknown field 'D'"):
        CookRule.from_dict({"core_target": 72, "lethality": {"D": 1}})
    with pytest.raises(ThermalInputError, match=r"chill_rule.steps\[1\].within: is required"):
        ChillRule.from_dict(
            {
                "steps": [
                    {"from_temp": 57, "to_temp": 21, "within": 7200},
                    {"from_temp": 21, "to_temp": 5},
                ]
            }
        )
    with pytest.raises(ThermalInputError, match=r"CoolingStep.within \[s\]: must be > 0"):
        CoolingStep(57, 21, 0.0)
    with pytest.raises(ThermalInputError, match=r"CoolingStep.to_temp: must be below from_temp"):
        CoolingStep(21, 57, 60.0)
    with pytest.raises(ThermalInputError, match=r"TimeTemperatureTable.holds"):
        TimeTemperatureTable("x", (60, 65), (10, 20))
    with pytest.raises(ThermalInputError, match=r"LethalityRule.z \[K\]: must be > 0"):
        LethalityRule("S", 1.0, 60.0, -5.0, 6.5)


def test_rule_from_dict_roundtrip():
    rule = CookRule.from_dict(
        {
            "core_target": 72.0,
            "hold": 15,
            "lethality": {
                "organism": "S",
                "d_ref": 60,
                "t_ref": 60,
                "z": 5.6,
                "log_reduction": 6.5,
            },
            "surface_max": 95,
        }
    )
    assert rule == CookRule(72.0, 15.0, SALMONELLA.__class__("S", 60.0, 60.0, 5.6, 6.5), 95.0)
    assert "core ≥ 72.0 °C held 15 s" in rule.describe()
