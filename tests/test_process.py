"""A product through oven, transfer and tunnel: required dwells, binding rules, energy."""

from __future__ import annotations

import math

import numpy as np
import pytest

from thermal import geometry, lethality
from thermal.convection import AirSetting
from thermal.errors import ThermalInputError, UnreachableTargetError
from thermal.foods import ConstantProperties
from thermal.geometry import Block, Slab
from thermal.process import (
    InfeasibleRuleError,
    Margin,
    OvenStage,
    TransferStage,
    TunnelZone,
    check_stages,
    cook_and_chill,
    required_chill,
    required_cook,
    required_freeze,
    run_stages,
)
from thermal.product import Product
from thermal.rules import ChillRule, CookRule, CoolingStep, FreezeRule, LethalityRule

# Invented demo-style product: a 30 mm meat patty with constant properties
# (k, rho, cp typical of lean meat; common practice values).
CP = 3500.0
MEAT = ConstantProperties(conductivity=0.45, density=1050.0, specific_heat=CP)
PATTY = Product("patty", Slab(0.03, 0.12, 0.12), MEAT, emissivity=0.0)
PATTY_RADIANT = Product("patty", Slab(0.03, 0.12, 0.12), MEAT, emissivity=0.9)
OVEN = AirSetting(temperature=160.0, speed=3.0)
ROOM = AirSetting(temperature=20.0, speed=0.5)

# Source: USDA FSIS (1999) Appendix A, 6.5-log10 Salmonella: 54.4 °C 112 min
# gives D(54.4 °C) = 6720 s / 6.5; z = 5.59 K from the 54.4 and 69.4 °C rows
# (see tests/test_lethality_reference.py).
SALMONELLA = LethalityRule("Salmonella", 6720.0 / 6.5, 54.4, 5.59, 6.5)
# Source: US FDA Food Code 2022, 3-501.14: 57 -> 21 °C within 2 h, to 5 °C within 6 h.
FDA_COOLING = ChillRule((CoolingStep(57.0, 21.0, 7200.0), CoolingStep(57.0, 5.0, 21600.0)), 5.0)


def three_zones(t1=-5.0, t2=-10.0, t3=-10.0, speed=4.0):
    return [
        TunnelZone(AirSetting(temperature=t1, speed=speed), 0.4),
        TunnelZone(AirSetting(temperature=t2, speed=speed), 0.3),
        TunnelZone(AirSetting(temperature=t3, speed=speed), 0.3),
    ]


# ----------------------------------------------------------------- cook


def test_series_path_equals_numeric_path():
    rule = CookRule(72.0)
    exact = required_cook(PATTY, OVEN, rule, 4.0)
    num = required_cook(PATTY, OVEN, rule, 4.0, method="numeric")
    assert exact.method == "series" and num.method == "numeric"
    assert exact.binding == num.binding == "core_target"
    assert num.dwell == pytest.approx(exact.dwell, rel=5e-3)
    assert num.heat_in == pytest.approx(exact.heat_in, rel=5e-3)
    # both histories end with the core at the target
    assert exact.history.core[-1] == pytest.approx(72.0, abs=1e-6)
    assert num.history.core[-1] == pytest.approx(72.0, abs=0.05)
    assert exact.verdict.met and num.verdict.met


def test_series_path_block_equals_numeric():
    block = Product("loaf", Block(0.12, 0.08, 0.05), MEAT, emissivity=0.0)
    rule = CookRule(70.0)
    exact = required_cook(block, OVEN, rule, 4.0)
    num = required_cook(block, OVEN, rule, 4.0, method="numeric", n_cells=8)
    assert exact.method == "series"
    assert num.dwell == pytest.approx(exact.dwell, rel=5e-3)


def test_series_refused_where_not_exact():
    with pytest.raises(ThermalInputError, match=r"^method: the exact series does not apply"):
        required_cook(PATTY_RADIANT, OVEN, CookRule(72.0), 4.0, method="series")
    assert required_cook(PATTY_RADIANT, OVEN, CookRule(72.0), 4.0).method == "numeric"


def test_hold_binds_and_dwell_is_minimal():
    rule = CookRule(72.0, hold=120.0)
    res = required_cook(PATTY_RADIANT, OVEN, rule, 4.0)
    assert res.binding == "hold" and res.verdict.met
    hold = lethality.longest_hold_above(res.history.times, res.history.core, 72.0)
    assert hold == pytest.approx(120.0, abs=3.0)
    # 1 % shorter in the oven misses the hold
    hist, _ = run_stages(PATTY_RADIANT, 4.0, OvenStage(OVEN), 0.99 * res.dwell)
    assert not rule.check(hist.times, hist.core).met


def test_lethality_binds_at_a_low_oven_temperature():
    # A low-temperature cook: core target 58 °C is met early, 6.5 log only later.
    air = AirSetting(temperature=62.0, speed=3.0)
    rule = CookRule(58.0, lethality=SALMONELLA)
    res = required_cook(PATTY_RADIANT, air, rule, 4.0)
    assert res.binding == "lethality"
    assert res.history.log_reduction(SALMONELLA) == pytest.approx(6.5, rel=0.01)
    hist, _ = run_stages(PATTY_RADIANT, 4.0, OvenStage(air), 0.98 * res.dwell)
    assert hist.log_reduction(SALMONELLA) < 6.5


def test_margin_and_scale():
    rule = CookRule(72.0)
    base = required_cook(PATTY, OVEN, rule, 4.0)
    with_margin = required_cook(PATTY, OVEN, rule, 4.0, margin=Margin(0.1, 60.0))
    assert with_margin.required_dwell == pytest.approx(base.dwell)
    assert with_margin.dwell == pytest.approx(base.dwell * 1.1 + 60.0)
    assert with_margin.history.times[-1] == pytest.approx(with_margin.dwell)
    bigger = required_cook(PATTY, OVEN, rule, 4.0, scale=1.2)
    direct = required_cook(
        Product("patty", Slab(0.036, 0.144, 0.144), MEAT, emissivity=0.0), OVEN, rule, 4.0
    )
    assert bigger.dwell == pytest.approx(direct.dwell, rel=1e-9)
    assert bigger.dwell > 1.3 * base.dwell


def test_ramped_oven_takes_longer():
    rule = CookRule(72.0)
    flat = required_cook(PATTY_RADIANT, OVEN, rule, 4.0)
    stage = OvenStage(OVEN, ramp_from=40.0, ramp_duration=600.0, ramp_pieces=4)
    ramp = required_cook(PATTY_RADIANT, stage, rule, 4.0)
    assert ramp.method == "numeric"
    assert flat.dwell < ramp.dwell < flat.dwell + 600.0


def test_unreachable_cook_targets_say_why():
    with pytest.raises(
        UnreachableTargetError, match=r"oven air at 70.0 °C cannot bring the core to 72.0 °C"
    ):
        required_cook(PATTY, AirSetting(temperature=70.0, speed=3.0), CookRule(72.0), 4.0)
    warm = AirSetting(temperature=58.0, speed=3.0)
    with pytest.raises(
        InfeasibleRuleError, match=r"6.5 log of Salmonella would take more than"
    ) as err:
        required_cook(PATTY, warm, CookRule(55.0, lethality=SALMONELLA), 4.0, max_dwell=1200.0)
    assert err.value.clause == "lethality"
    hot = AirSetting(temperature=220.0, speed=5.0)
    with pytest.raises(InfeasibleRuleError, match=r"surface reaches 90.0 °C after") as err:
        required_cook(PATTY_RADIANT, hot, CookRule(72.0, surface_max=90.0), 4.0)
    assert err.value.clause == "surface_max"


# ----------------------------------------------------------------- chill


def test_cook_then_chill_hand_energy_balance():
    # Hand balance, constant cp: heat in (oven) - heat out (transfer, tunnel)
    # = cp (mean at tunnel exit - start temperature).
    cook = required_cook(PATTY, OVEN, CookRule(72.0), 4.0)
    transfer = TransferStage(ROOM, 300.0)
    chill = required_chill(PATTY, cook, transfer, three_zones(), FDA_COOLING)
    assert chill.verdict.met
    assert chill.history.core[-1] <= 5.0 + 1e-9
    hand = CP * (chill.history.mean[-1] - 4.0)
    net = cook.heat_in - chill.transfer_heat_out - chill.heat_out
    assert net == pytest.approx(hand, rel=0.01, abs=0.01 * cook.heat_in)
    assert chill.heat_out == pytest.approx(
        CP * (chill.history.mean[0] - chill.history.mean[-1]) - chill.transfer_heat_out, rel=0.01
    )
    # zone times follow the shares at one belt speed
    assert chill.zone_times == pytest.approx(tuple(chill.residence * s for s in (0.4, 0.3, 0.3)))
    # minimal: 2 % less residence leaves the core above 5 °C
    hist, _ = run_stages(
        PATTY, cook.exit_profile, None, 0.0, transfer, three_zones(), 0.98 * chill.residence
    )
    assert hist.core[-1] > 5.0


def test_chill_window_missed_is_infeasible_with_reason():
    # Thick slab in slow air: 57 -> 21 °C takes far longer than 2 h, and a
    # longer residence in the same zone cannot help.
    slab = Product("roast", Slab(0.10, 0.3, 0.3), MEAT, emissivity=0.0)
    zones = [TunnelZone(AirSetting(temperature=-5.0, speed=1.0), 1.0)]
    with pytest.raises(InfeasibleRuleError) as err:
        required_chill(slab, 75.0, None, zones, FDA_COOLING)
    assert err.value.clause == "step 1"
    assert "took too long" in err.value.reason


def test_chill_windows_against_the_exact_series():
    # One zone, uniform start, constant properties, no radiation: the window
    # 57 -> 21 °C follows from the exact series crossing times.
    zone = AirSetting(temperature=-5.0, speed=4.0)
    res = required_chill(PATTY, 75.0, None, [TunnelZone(zone, 1.0)], FDA_COOLING)
    h = float(res.history.stages[0].h)
    k, alpha = 0.45, 0.45 / (1050.0 * CP)

    def cross(target):
        return geometry.time_to_temperature(
            PATTY.geometry, k=k, h=h, t_initial=75.0, t_air=-5.0, t_target=target, alpha=alpha
        )

    window = cross(21.0) - cross(57.0)
    assert res.verdict.clause("step 1").margin == pytest.approx(7200.0 - window, abs=0.01 * window)
    assert res.required_residence == pytest.approx(cross(5.0), rel=5e-3)


def test_tunnel_air_cannot_reach_target():
    zones = [TunnelZone(AirSetting(temperature=2.0, speed=4.0), 1.0)]
    rule = ChillRule((), exit_core_max=2.0)
    with pytest.raises(
        UnreachableTargetError, match=r"tunnel air at 2.0 °C cannot bring the core to 2.0 °C"
    ):
        required_chill(PATTY, 70.0, None, zones, rule)


def test_freeze_to_minus_18():
    frozen = ConstantProperties(0.45, 1050.0, 3500.0, freezing_point=-1.5, latent_heat=230e3)
    fish = Product("fillet", Slab(0.02, 0.15, 0.08), frozen, emissivity=0.0)
    zones = [TunnelZone(AirSetting(temperature=-35.0, speed=5.0), 1.0)]
    res = required_freeze(fish, 5.0, None, zones, FreezeRule(-18.0))
    assert res.binding == "core_target" and res.verdict.met
    assert res.history.core[-1] == pytest.approx(-18.0, abs=0.3)
    # latent heat removed: more than the sensible heat alone
    assert res.heat_out > 230e3 * 0.8
    hist, _ = run_stages(fish, 5.0, None, 0.0, None, zones, 0.97 * res.residence)
    assert hist.core[-1] > -18.0


# ----------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("make", "pattern"),
    [
        (lambda: TransferStage(ROOM, 0.0), r"TransferStage.duration \[s\]: must be > 0"),
        (lambda: TransferStage(ROOM, -60.0), r"TransferStage.duration \[s\]: must be > 0"),
        (lambda: TunnelZone(ROOM, 0.0), r"TunnelZone.share: must be > 0"),
        (lambda: TunnelZone(ROOM, 1.5), r"TunnelZone.share: must be in \(0, 1\]"),
        (
            lambda: OvenStage(OVEN, ramp_from=20.0, ramp_duration=0.0),
            r"ramp_duration \[s\]: must be > 0",
        ),
        (lambda: Margin(-0.1), r"Margin.relative: must be >= 0"),
        (
            lambda: required_chill(
                PATTY, 70.0, None, [TunnelZone(ROOM, 0.5), TunnelZone(ROOM, 0.4)], FDA_COOLING
            ),
            r"zones: length shares must sum to 1, got 0.9",
        ),
        (
            lambda: required_chill(
                PATTY,
                70.0,
                None,
                [
                    TunnelZone(AirSetting(temperature=-10.0, speed=3.0), 0.5),
                    TunnelZone(AirSetting(temperature=-2.0, speed=3.0), 0.5),
                ],
                FDA_COOLING,
            ),
            r"zones\[1\].air.temperature: -2.0 °C is warmer than zones\[0\]",
        ),
        (lambda: required_chill(PATTY, 70.0, None, [], FDA_COOLING), r"zones: needs at least one"),
        (lambda: required_cook(PATTY, OVEN, FDA_COOLING, 4.0), r"rule: must be a CookRule"),
        (lambda: required_cook(PATTY, OVEN, CookRule(72.0), 4.0, scale=0.0), r"scale: must be > 0"),
    ],
)
def test_bad_input_is_one_clear_line(make, pattern):
    with pytest.raises(ThermalInputError, match=pattern) as err:
        make()
    assert "\n" not in str(err.value)


# ----------------------------------------------------------------- the whole line


def test_oven_transfer_three_zone_tunnel_in_a_few_lines():
    # Done when: a product through oven, transfer and a three-zone tunnel,
    # with its core curve, its lethality and the binding rule.
    line = cook_and_chill(
        PATTY_RADIANT,
        4.0,
        OvenStage(OVEN),
        CookRule(72.0, hold=15.0, lethality=SALMONELLA),
        TransferStage(ROOM, 300.0),
        three_zones(),
        FDA_COOLING,
    )
    h = line.history
    assert [s.name for s in h.stages] == ["oven", "transfer", "zone 1", "zone 2", "zone 3"]
    assert np.all(np.diff(h.times) >= 0)
    assert h.times[-1] == pytest.approx(line.cook.dwell + 300.0 + line.chill.residence)
    assert h.core.max() >= 72.0 and h.core[-1] <= 5.0 + 1e-9
    # lethality along the whole history is at least that credited in the oven
    assert h.log_reduction(SALMONELLA) >= line.cook.history.log_reduction(SALMONELLA) >= 6.5
    assert line.binding == (line.cook.binding, line.chill.binding)
    assert line.cook.binding in ("hold", "lethality") and line.chill.binding == "exit_core_max"
    assert not math.isnan(line.chill.verdict.margin)


# ----------------------------------------------------------------- input checks without solving


def test_check_stages_refuses_what_the_solvers_refuse():
    # A loading factor above 1.5 is refused only where h is computed, and a
    # piece 1e308 m long only where the Reynolds number is formed: the
    # check finds both without solving, with the solvers' own messages.
    too_loaded = [TunnelZone(AirSetting(temperature=-5.0, speed=4.0), 1.0, 2.0)]
    with pytest.raises(ThermalInputError, match=r"loading_factor: must be in \(0, 1\.5\]") as a:
        check_stages(PATTY, 70.0, zones=too_loaded)
    with pytest.raises(ThermalInputError) as b:
        required_chill(PATTY, 70.0, None, too_loaded, FDA_COOLING)
    assert str(a.value) == str(b.value)
    huge = Product("sheet", Slab(0.03, 1e308, 0.12), MEAT, emissivity=0.0)
    with pytest.raises(ThermalInputError, match="reynolds: must be finite"):
        check_stages(huge, 4.0, oven=OVEN)
    with pytest.raises(ThermalInputError, match="reynolds: must be finite"):
        required_cook(huge, OVEN, CookRule(72.0), 4.0)
    warmer = [TunnelZone(ROOM, 0.5), TunnelZone(AirSetting(temperature=30.0, speed=1.0), 0.5)]
    with pytest.raises(ThermalInputError, match=r"zones\[1\]\.air\.temperature"):
        check_stages(PATTY, 70.0, zones=warmer)
    # accepted stages pass silently
    check_stages(PATTY, 4.0, oven=OVEN, transfer=TransferStage(ROOM, 60.0), zones=three_zones())
