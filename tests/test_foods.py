"""Behaviour of thermal.foods: consistency, limits, property tests, bad input.

Outside references (CoolProp, ASHRAE tables) are in test_foods_reference.py;
the checks here are physical identities of the model itself (energy
consistency, ice-fraction limits, bounds on mixture conductivity).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

from thermal.errors import ThermalInputError
from thermal.foods import (
    CONDUCTIVITY_MODELS,
    LATENT_HEAT_ICE,
    T_HIGH,
    T_LOW,
    Composition,
    ConstantProperties,
    FoodProperties,
    ThermalProperties,
    component_property,
    pham_freezing_point,
)

LEAN_MEAT = Composition(water=0.74, protein=0.21, fat=0.035, carbohydrate=0.0, ash=0.015)
SAUSAGE = Composition(water=0.58, protein=0.13, fat=0.24, carbohydrate=0.025, fiber=0.0, ash=0.025)
VEGETABLE = Composition(
    water=0.88, protein=0.01, fat=0.002, carbohydrate=0.078, fiber=0.02, ash=0.01
)
ALL_FOODS = [LEAN_MEAT, SAUSAGE, VEGETABLE]


@st.composite
def compositions(draw: st.DrawFn) -> Composition:
    """Random food compositions: water 5-95 %, the rest split at random."""
    water = draw(st.floats(0.05, 0.95))
    weights = np.array(draw(st.lists(st.floats(0.0, 1.0), min_size=5, max_size=5))) + 1e-3
    rest = (1.0 - water) * weights / weights.sum()
    return Composition(water, *map(float, rest))


# --------------------------------------------------------------------------- composition


def test_composition_accepts_percent_and_mapping() -> None:
    a = Composition.from_percent(74, 21, 3.5, 0, 0, 1.5)
    b = Composition.from_mapping({"water": 0.74, "protein": 0.21, "fat": 0.035, "ash": 0.015})
    for name in ("water", "protein", "fat", "carbohydrate", "fiber", "ash"):
        assert getattr(a, name) == pytest.approx(getattr(b, name))
    assert a.total == pytest.approx(1.0)
    assert b.carbohydrate == 0.0 and b.fiber == 0.0
    assert a.solids == pytest.approx(0.26)


def test_normalised_sums_to_one() -> None:
    c = Composition(0.7005, 0.2, 0.05, 0.0, 0.0, 0.05)
    assert c.normalised().total == pytest.approx(1.0, abs=1e-15)


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"water": 0.7, "protein": 0.2, "fat": 0.05}, "sum to 0.9500"),
        ({"water": 0.8, "protein": 0.2, "fat": 0.05}, "sum to 1.0500"),
        ({"water": 74, "protein": 21, "fat": 5}, "composition.water"),
        ({"water": 0.8, "protein": 0.3, "fat": -0.1}, "composition.fat"),
        ({"water": float("nan"), "protein": 0.3, "fat": 0.1}, "composition.water"),
    ],
)
def test_composition_bad_input(kwargs: dict, fragment: str) -> None:
    with pytest.raises(ThermalInputError, match=fragment.replace(".", r"\.")) as err:
        Composition(**kwargs)
    assert "\n" not in str(err.value)


def test_composition_sum_message_says_what_is_accepted() -> None:
    with pytest.raises(ThermalInputError, match=r"accepted: 1 within 0\.001"):
        Composition(0.5, 0.2, 0.1)


def test_missing_composition_is_refused() -> None:
    with pytest.raises(ThermalInputError, match="composition: missing"):
        FoodProperties(None)
    with pytest.raises(ThermalInputError, match="composition: missing"):
        Composition.from_mapping(None)
    with pytest.raises(ThermalInputError, match=r"composition\.water: missing"):
        Composition.from_mapping({"protein": 0.2, "fat": 0.8})
    with pytest.raises(ThermalInputError, match=r"unknown field.*sugar"):
        Composition.from_mapping({"water": 0.7, "protein": 0.2, "fat": 0.05, "sugar": 0.05})
    with pytest.raises(ThermalInputError, match="composition: must be a Composition"):
        FoodProperties({"water": 1.0, "protein": 0.0, "fat": 0.0})  # type: ignore[arg-type]


# --------------------------------------------------------------------------- bad input


def test_temperature_below_absolute_zero_is_refused() -> None:
    food = FoodProperties(LEAN_MEAT)
    for method in (food.density, food.specific_heat, food.conductivity, food.enthalpy):
        with pytest.raises(ThermalInputError, match="temperature: must be above absolute zero"):
            method(np.array([20.0, -300.0]))
    with pytest.raises(ThermalInputError, match="temperature"):
        component_property("water", "density", -274.0)
    with pytest.raises(
        ThermalInputError,
        match=r"^temperature: must be above absolute zero \(-273\.15 °C\), got nan$",
    ):
        food.diffusivity(float("nan"))
    with pytest.raises(
        ThermalInputError,
        match=r"^enthalpy: must be a finite number, got nan in an array of shape \(2,\)$",
    ):
        food.temperature_from_enthalpy([1.0, float("nan")])


def test_bad_options_are_refused() -> None:
    with pytest.raises(ThermalInputError, match="conductivity_model: must be one of"):
        FoodProperties(LEAN_MEAT, conductivity_model="levy")
    with pytest.raises(ThermalInputError, match="freezing_point: must be in"):
        FoodProperties(LEAN_MEAT, freezing_point=0.0)
    with pytest.raises(ThermalInputError, match="freezing_point: must be in"):
        FoodProperties(LEAN_MEAT, freezing_point=2.0)
    with pytest.raises(ThermalInputError, match="bound_water: must be in"):
        FoodProperties(LEAN_MEAT, bound_water=0.9)
    with pytest.raises(ThermalInputError, match="component: must be one of"):
        component_property("salt", "density", 20.0)
    with pytest.raises(ThermalInputError, match="prop: must be one of"):
        component_property("water", "viscosity", 20.0)


def test_constant_properties_bad_input() -> None:
    with pytest.raises(ThermalInputError, match="conductivity: must be > 0"):
        ConstantProperties(-0.5, 1000.0, 3500.0)
    with pytest.raises(ThermalInputError, match="density: must be > 0"):
        ConstantProperties(0.5, 0.0, 3500.0)
    with pytest.raises(ThermalInputError, match=r"^specific_heat: must be > 0, got nan$"):
        ConstantProperties(0.5, 1000.0, float("nan"))
    with pytest.raises(ThermalInputError, match="freezing_point: required when latent_heat"):
        ConstantProperties(0.5, 1000.0, 3500.0, latent_heat=2.3e5)
    with pytest.raises(ThermalInputError, match="latent_heat: must be in"):
        ConstantProperties(0.5, 1000.0, 3500.0, freezing_point=-1.0, latent_heat=4e5)
    with pytest.raises(ThermalInputError, match="temperature: must be above absolute zero"):
        ConstantProperties(0.5, 1000.0, 3500.0).density(-280.0)


# --------------------------------------------------------------------------- model facts


def test_both_property_sets_implement_the_protocol() -> None:
    assert isinstance(FoodProperties(LEAN_MEAT), ThermalProperties)
    assert isinstance(ConstantProperties(0.5, 1050.0, 3500.0), ThermalProperties)


def test_vectorised_shapes() -> None:
    food = FoodProperties(SAUSAGE, conductivity_model="maxwell_eucken")
    t = np.linspace(-30.0, 90.0, 12).reshape(3, 4)
    for method in (
        food.density,
        food.specific_heat,
        food.conductivity,
        food.diffusivity,
        food.enthalpy,
        food.ice_fraction,
    ):
        assert method(t).shape == (3, 4)
    assert food.temperature_from_enthalpy(food.enthalpy(t)).shape == (3, 4)
    assert np.ndim(food.conductivity(20.0)) == 0


@pytest.mark.parametrize("composition", ALL_FOODS)
def test_enthalpy_reference_and_integral_of_cp(composition: Composition) -> None:
    # dH/dT = apparent cp: the closed-form enthalpy must equal the quadrature
    # of the apparent specific heat (scipy.integrate.quad, split at t_f and
    # at 0 °C, where the water cp changes from the sub-zero equation).
    food = FoodProperties(composition)
    t_f = food.freezing_point
    assert float(food.enthalpy(T_LOW)) == 0.0
    for t1, t2 in [(-40.0, -10.0), (-25.0, 30.0), (-5.0, 0.0), (0.0, 150.0), (-60.0, 180.0)]:
        points = [p for p in (t_f, 0.0, T_LOW, T_HIGH) if p is not None and t1 < p < t2]
        integral, _ = quad(
            lambda t: float(food.specific_heat(t)), t1, t2, points=points or None, limit=200
        )
        delta = float(food.enthalpy(t2) - food.enthalpy(t1))
        assert delta == pytest.approx(integral, rel=1e-7)


@pytest.mark.parametrize("composition", ALL_FOODS)
def test_central_difference_of_enthalpy_equals_cp(composition: Composition) -> None:
    food = FoodProperties(composition)
    t_f = food.freezing_point
    t = np.concatenate([np.linspace(-39.0, t_f - 0.2, 40), np.linspace(t_f + 0.2, 149.0, 40)])
    step = 1e-4
    numeric = (food.enthalpy(t + step) - food.enthalpy(t - step)) / (2 * step)
    np.testing.assert_allclose(numeric, food.specific_heat(t), rtol=1e-6)


@pytest.mark.parametrize("composition", ALL_FOODS)
def test_ice_fraction_limits(composition: Composition) -> None:
    food = FoodProperties(composition)
    t_f = food.freezing_point
    freezable = composition.normalised().water - food.bound_water
    # no ice at or above the initial freezing point
    assert np.all(food.ice_fraction(np.linspace(t_f, 150.0, 50)) == 0.0)
    # Schwartzberg form at -40 °C: (x_w - x_b)(1 - t_f/t), below x_w - x_b
    at_low = float(food.ice_fraction(T_LOW))
    assert at_low == pytest.approx(freezable * (1.0 - t_f / T_LOW), rel=1e-12)
    assert 0.9 * freezable < at_low < freezable
    # more ice as it gets colder; latent part makes cp jump up at t_f
    ice = food.ice_fraction(np.linspace(T_LOW, t_f, 200))
    assert np.all(np.diff(ice) < 0.0)
    assert float(food.specific_heat(t_f - 1e-6)) > 10 * float(food.specific_heat(t_f + 1e-6))
    # the latent heat released from t_f down to -40 °C is L0 times the ice formed
    sensible, _ = quad(lambda t: float(food.sensible_specific_heat(t)), T_LOW, t_f, limit=200)
    released = float(food.enthalpy(t_f)) - sensible
    assert released == pytest.approx(LATENT_HEAT_ICE * at_low, rel=1e-7)


def test_bound_water_default_is_schwartzberg_fraction_of_protein() -> None:
    # Source: Schwartzberg (1976) as quoted by ASHRAE: x_b about 0.4 x_protein
    assert FoodProperties(LEAN_MEAT).bound_water == pytest.approx(0.4 * 0.21)
    assert FoodProperties(LEAN_MEAT, bound_water=0.05).bound_water == 0.05


def test_pham_estimate_formula_terms() -> None:
    # Pham (1996): t_f = -4.66 x_o/x_w - 46.4 x_a/x_w. Doubling the ash of a
    # protein-free food doubles the depression; fat does not depress it.
    salty = Composition(water=0.9, protein=0.0, fat=0.08, ash=0.02)
    saltier = Composition(water=0.9, protein=0.0, fat=0.06, ash=0.04)
    assert pham_freezing_point(saltier) == pytest.approx(2 * pham_freezing_point(salty))
    assert pham_freezing_point(salty) == pytest.approx(-46.4 * 0.02 / 0.9)


def test_no_freezable_water_means_no_freezing() -> None:
    fat = FoodProperties(Composition(water=0.0, protein=0.0, fat=1.0))
    assert fat.freezing_point is None and fat.latent_heat == 0.0
    assert np.all(fat.ice_fraction(np.linspace(-40, 20, 7)) == 0.0)
    dry = FoodProperties(Composition(water=0.05, protein=0.5, fat=0.45))  # all water bound
    assert dry.freezing_point is None
    assert float(dry.specific_heat(-20.0)) == pytest.approx(
        float(dry.sensible_specific_heat(-20.0))
    )


def test_pure_water_freezes_just_below_zero() -> None:
    water = FoodProperties(Composition(water=1.0, protein=0.0, fat=0.0))
    assert water.freezing_point == pytest.approx(-0.01)
    assert float(water.ice_fraction(-1.0)) == pytest.approx(0.99, abs=1e-3)
    # enthalpy drop across freezing close to the latent heat of water
    drop = float(water.enthalpy(0.0) - water.enthalpy(-1.0))
    assert drop == pytest.approx(0.99 * LATENT_HEAT_ICE, rel=0.02)
    t = np.array([-0.5, -0.02, -0.011, -0.005, 0.3])
    np.testing.assert_allclose(water.temperature_from_enthalpy(water.enthalpy(t)), t, atol=1e-5)


def test_outside_fitting_range_properties_are_held_and_enthalpy_linear() -> None:
    food = FoodProperties(SAUSAGE)
    assert float(food.conductivity(170.0)) == pytest.approx(float(food.conductivity(150.0)))
    assert float(food.density(-55.0)) == pytest.approx(float(food.density(-40.0)))
    cp_hi = float(food.specific_heat(150.0))
    assert float(food.enthalpy(175.0) - food.enthalpy(150.0)) == pytest.approx(25 * cp_hi)
    cp_lo = float(food.specific_heat(-40.0))
    assert float(food.enthalpy(-50.0)) == pytest.approx(-10 * cp_lo)
    np.testing.assert_allclose(
        food.temperature_from_enthalpy(food.enthalpy([-70.0, 200.0])), [-70.0, 200.0]
    )


def test_density_drops_when_ice_forms() -> None:
    food = FoodProperties(LEAN_MEAT)
    assert float(food.density(-20.0)) < float(food.density(food.freezing_point + 0.1))


def test_diffusivity_is_k_over_rho_cp() -> None:
    food = FoodProperties(VEGETABLE, conductivity_model="maxwell_eucken")
    t = np.array([-20.0, 5.0, 60.0])
    np.testing.assert_allclose(
        food.diffusivity(t),
        food.conductivity(t) / (food.density(t) * food.specific_heat(t)),
        rtol=1e-14,
    )
    # order of magnitude for moist foods above freezing (common practice):
    # about 1.2-1.6e-7 m2/s
    assert 1.0e-7 < float(food.diffusivity(20.0)) < 1.8e-7


# --------------------------------------------------------------------------- constant properties


def test_constant_properties_without_freezing() -> None:
    p = ConstantProperties(0.48, 1060.0, 3520.0)
    t = np.array([-30.0, 0.0, 70.0])
    np.testing.assert_allclose(p.conductivity(t), 0.48)
    np.testing.assert_allclose(p.density(t), 1060.0)
    np.testing.assert_allclose(p.specific_heat(t), 3520.0)
    np.testing.assert_allclose(p.enthalpy(t), 3520.0 * (t + 40.0))
    np.testing.assert_allclose(p.temperature_from_enthalpy(p.enthalpy(t)), t, atol=1e-9)
    assert p.freezing_point is None and p.latent_heat == 0.0
    np.testing.assert_allclose(p.ice_fraction(t), 0.0)


def test_constant_properties_with_freezing_release_latent_heat() -> None:
    # ASHRAE-style table values (lean beef round 3.52 / 237 kJ/kg, -1.7 °C)
    p = ConstantProperties(0.48, 1060.0, 3520.0, freezing_point=-1.7, latent_heat=237e3)
    released_at_low = 237e3 * (1.0 - (-1.7) / T_LOW)
    assert float(p.enthalpy(5.0)) == pytest.approx(3520.0 * 45.0 + released_at_low)
    assert float(p.ice_fraction(T_LOW)) == pytest.approx(released_at_low / LATENT_HEAT_ICE)
    integral, _ = quad(lambda t: float(p.specific_heat(t)), -30.0, 10.0, points=[-1.7])
    assert float(p.enthalpy(10.0) - p.enthalpy(-30.0)) == pytest.approx(integral, rel=1e-8)
    t = np.linspace(-45.0, 20.0, 301)
    np.testing.assert_allclose(p.temperature_from_enthalpy(p.enthalpy(t)), t, atol=1e-4)


# --------------------------------------------------------------------------- property tests


@settings(max_examples=60, deadline=None)
@given(
    composition=compositions(),
    t=st.lists(st.floats(-60.0, 170.0), min_size=2, max_size=20),
)
def test_enthalpy_monotone_and_inverse_round_trip(composition: Composition, t: list) -> None:
    food = FoodProperties(composition)
    temps = np.sort(np.array(t))
    h = food.enthalpy(temps)
    assert np.all(np.diff(h) >= 0.0)
    assert np.all(food.specific_heat(temps) > 0.0)
    np.testing.assert_allclose(food.temperature_from_enthalpy(h), temps, atol=1e-4)


@settings(max_examples=60, deadline=None)
@given(
    composition=compositions(),
    h=st.lists(st.floats(-1e5, 8e5), min_size=1, max_size=20),
)
def test_temperature_from_enthalpy_is_an_inverse(composition: Composition, h: list) -> None:
    # Judge the inverse in temperature: the enthalpy gap divided by the
    # (smaller) sensible cp bounds the temperature error; accept 1e-4 K.
    food = FoodProperties(composition)
    temps = food.temperature_from_enthalpy(np.array(h))
    gap = np.abs(food.enthalpy(temps) - np.array(h))
    assert np.all(gap <= 1e-4 * food.sensible_specific_heat(temps))


@settings(max_examples=60, deadline=None)
@given(composition=compositions(), t=st.floats(-40.0, 150.0))
def test_conductivity_models_ordered(composition: Composition, t: float) -> None:
    # Wiener bounds: parallel >= any mixture >= series; Maxwell–Eucken lies
    # between them.
    k = {
        m: float(FoodProperties(composition, conductivity_model=m).conductivity(t))
        for m in CONDUCTIVITY_MODELS
    }
    assert k["parallel"] >= k["maxwell_eucken"] * (1 - 1e-9)
    assert k["maxwell_eucken"] >= k["series"] * (1 - 1e-9)
    assert k["series"] > 0.0


@settings(max_examples=30, deadline=None)
@given(composition=compositions())
def test_properties_continuous_at_freezing_point(composition: Composition) -> None:
    for model in CONDUCTIVITY_MODELS:
        food = FoodProperties(composition, conductivity_model=model)
        t_f = food.freezing_point
        if t_f is None or t_f <= T_LOW:
            continue
        # continuous, but steep when the depression is tiny: the ice fraction
        # rises at (x_w - x_b)/|t_f| per K, 37 per K at t_f = -0.02 °C, so the
        # step must be far below 1e-7 K to compare values at 1e-5
        eps = 1e-9
        for method in (food.conductivity, food.density, food.enthalpy):
            below, above = float(method(t_f - eps)), float(method(t_f + eps))
            assert below == pytest.approx(above, rel=1e-5), method.__name__
