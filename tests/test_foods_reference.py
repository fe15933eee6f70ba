"""Food properties against outside references.

- Component equations against CoolProp's incompressible fluids
  ``INCOMP::Food*``, which implement the same Choi & Okos (1986) equations
  (all but the water specific heat above 0 °C and the water conductivity,
  which are not Choi–Okos equations: they are checked against CoolProp's
  IAPWS water).
- Mixture rules recomputed here from CoolProp component values, independent
  of thermal.foods' own polynomials.
- Mixtures against the ASHRAE Handbook — Refrigeration food table (table
  "Unfrozen composition data, initial freezing point, and specific heats of
  foods"), within tolerances stated beside each check.
"""

from __future__ import annotations

import numpy as np
import pytest

from thermal.foods import (
    COMPONENTS,
    LATENT_HEAT_ICE,
    Composition,
    FoodProperties,
    component_property,
)

CP = pytest.importorskip("CoolProp.CoolProp")

_FLUID = {
    "water": "INCOMP::FoodWater",
    "ice": "INCOMP::FoodIce",
    "protein": "INCOMP::FoodProtein",
    "fat": "INCOMP::FoodFat",
    "carbohydrate": "INCOMP::FoodCarbohydrate",
    "fiber": "INCOMP::FoodFiber",
    "ash": "INCOMP::FoodAsh",
}
_KEY = {"density": "D", "specific_heat": "C", "conductivity": "L"}


def coolprop(component: str, prop: str, t_c: np.ndarray) -> np.ndarray:
    """CoolProp value of one food component at temperatures [°C], 1 atm."""
    return np.array(
        [
            CP.PropsSI(_KEY[prop], "T", float(t) + 273.15, "P", 101325.0, _FLUID[component])
            for t in np.ravel(t_c)
        ]
    ).reshape(np.shape(t_c))


# --------------------------------------------------------------------------- components

# Source: CoolProp 6.x/7.x/8.x INCOMP::Food* fluids (Choi & Okos 1986), valid
# 233.15-423.15 K. Measured agreement: identical to the last bit (relative
# difference 0) at every point of the grid below; we allow 1e-12.
_TEMPS = np.linspace(-40.0, 150.0, 77)
_ICE_TEMPS = np.linspace(-40.0, 0.0, 41)


@pytest.mark.parametrize(
    ("component", "prop"),
    [
        (c, p)
        for c in COMPONENTS
        if c != "ice"
        for p in ("density", "specific_heat", "conductivity")
        if (c, p) not in (("water", "specific_heat"), ("water", "conductivity"))
    ],
)
def test_component_matches_coolprop(component: str, prop: str) -> None:
    # Source: CoolProp INCOMP::Food<component> (Choi & Okos 1986)
    ours = component_property(component, prop, _TEMPS)
    ref = coolprop(component, prop, _TEMPS)
    np.testing.assert_allclose(ours, ref, rtol=1e-12)


@pytest.mark.parametrize("prop", ["density", "specific_heat", "conductivity"])
def test_ice_matches_coolprop_below_zero(prop: str) -> None:
    # Source: CoolProp INCOMP::FoodIce (Choi & Okos 1986), ice below 0 °C
    ours = component_property("ice", prop, _ICE_TEMPS)
    ref = coolprop("ice", prop, _ICE_TEMPS)
    np.testing.assert_allclose(ours, ref, rtol=1e-12)


def iapws95_water_cp(t_c: float) -> float:
    """CoolProp's IAPWS-95 liquid-water cp [J/(kg K)] at 1 atm, or 5 bar from 99 °C.

    At 1 atm water boils at 99.97 °C; above that the liquid is taken at 5 bar
    (saturation pressure at 150 °C is 4.76 bar), where cp differs from the
    saturated liquid by under 0.05 %.
    """
    pressure = 101325.0 if t_c < 99.0 else 5e5
    return CP.PropsSI("C", "T", t_c + 273.15, "P", pressure, "Water")


_LIQUID_TEMPS = [0.01, 2.0, 5.0, 8.3, 10.0, 15.0, 20.0, 30.0, 40.0, 55.0, 70.0, 85.0, 98.0]
_HOT_LIQUID_TEMPS = [100.0, 110.0, 125.0, 140.0, 150.0]


@pytest.mark.parametrize("t", _LIQUID_TEMPS + _HOT_LIQUID_TEMPS)
def test_water_specific_heat_tracks_iapws95(t: float) -> None:
    # Source: CoolProp 8 "Water" (IAPWS-95, Wagner & Pruss 2002). Ours is
    # Popiel & Wojtkowiak (1998). Measured: largest deviation 0.09 % (5 °C,
    # -0.09 %) over 0-150 °C; the printed Choi-Okos variant 4.1289 - ... was
    # 2.2 % low at 0 °C and 1.7 % low at 8.3 °C. Accepted: 0.2 %.
    ours = float(component_property("water", "specific_heat", t))
    assert ours == pytest.approx(iapws95_water_cp(t), rel=2e-3)


def test_water_specific_heat_max_error_over_0_to_100_c() -> None:
    # Source: CoolProp 8 "Water" (IAPWS-95) at 1 atm, every 0.5 K from 0.01
    # to 99 °C: the largest relative deviation must stay within 0.5 % (the
    # accuracy asked of the food model's water); measured 0.09 %.
    temps = np.concatenate([[0.01], np.arange(0.5, 99.01, 0.5)])
    ours = component_property("water", "specific_heat", temps)
    ref = np.array([iapws95_water_cp(float(t)) for t in temps])
    assert np.max(np.abs(ours / ref - 1.0)) < 5e-3


def choi_okos_subzero_water_cp(t_c: np.ndarray | float) -> np.ndarray:
    # Source: Choi & Okos (1986), water, -40 to 0 °C (from memory):
    # cp = 4.0817 - 5.3062e-3 t + 9.9516e-4 t^2 [kJ/(kg K)].
    t = np.asarray(t_c, dtype=float)
    return 1e3 * (4.0817 - 5.3062e-3 * t + 9.9516e-4 * t**2)


def test_water_specific_heat_below_zero_is_the_subzero_equation() -> None:
    # Source: Choi & Okos (1986) sub-zero water equation (from memory), as the
    # ASHRAE tables give it separately for -40 to 0 °C.
    np.testing.assert_allclose(
        component_property("water", "specific_heat", _ICE_TEMPS[:-1]),
        choi_okos_subzero_water_cp(_ICE_TEMPS[:-1]),
        rtol=1e-12,
    )


@pytest.mark.parametrize("t", [-17.8, -10.0, -5.0, -1.0])
def test_subzero_water_specific_heat_near_iapws95_supercooled(t: float) -> None:
    # Source: CoolProp 8 "Water" (IAPWS-95) metastable saturated liquid (Q=0),
    # an extrapolation below the melting line. The Choi-Okos sub-zero equation
    # is a fit for the unfrozen water of frozen foods, not of pure supercooled
    # water: measured -3.2 % at -1 °C, -2.5 % at -5 °C, -0.9 % at -10 °C,
    # +3.0 % at -17.8 °C. Accepted: 4 % (a plausibility check of the form).
    ours = float(component_property("water", "specific_heat", t))
    ref = CP.PropsSI("C", "T", t + 273.15, "Q", 0.0, "Water")
    assert ours == pytest.approx(ref, rel=0.04)


def iapws_water_k(t_c: float) -> float:
    """CoolProp's liquid-water conductivity [W/(m K)] (IAPWS 2011, Huber et al. 2012).

    At 1 atm below 99 °C, at 5 bar from 99 °C (liquid to 150 °C).
    """
    pressure = 101325.0 if t_c < 99.0 else 5e5
    return CP.PropsSI("L", "T", t_c + 273.15, "P", pressure, "Water")


def ramires_water_k(t_c: np.ndarray | float) -> np.ndarray:
    # Source: Ramires et al. (1995), J. Phys. Chem. Ref. Data 24, 1377, liquid
    # water at 0.1 MPa (from memory): k/k* = -1.48445 + 4.12292 T/T* - 1.63866
    # (T/T*)^2, T* = 298.15 K, k* = 0.6065 W/(m K); held at its maximum above it.
    x = np.asarray(t_c, dtype=float) + 273.15
    x = np.minimum(x, 4.12292 / (2 * 1.63866) * 298.15) / 298.15
    return 0.6065 * (-1.48445 + 4.12292 * x - 1.63866 * x**2)


@pytest.mark.parametrize("t", _LIQUID_TEMPS)
def test_water_conductivity_tracks_iapws_2011(t: float) -> None:
    # Source: CoolProp 8 "Water" conductivity (IAPWS 2011, Huber et al. 2012).
    # Ours: Ramires et al. (1995). Measured: +0.13 % at 0.01 °C, -0.12 % at
    # 10 °C, +0.29 % at 60 °C, -0.6 % at 98 °C; the Choi-Okos water equation
    # was +2.8 % at 0 °C, +1.6 % at 10 °C (a high k shortens every dwell).
    # Accepted: 0.7 %.
    ours = float(component_property("water", "conductivity", t))
    assert ours == pytest.approx(iapws_water_k(t), rel=7e-3)


@pytest.mark.parametrize("t", _HOT_LIQUID_TEMPS)
def test_water_conductivity_above_100_c_is_low_side(t: float) -> None:
    # Source: CoolProp 8 "Water" (IAPWS 2011) at 5 bar. Above its maximum
    # (about 102 °C) the conductivity is held there: measured 0.7 % below
    # IAPWS at 100 °C and 1.2-1.5 % below from 110 to 150 °C. It must never be
    # above (a high k is the unsafe side) and stay within 2 %.
    ours = float(component_property("water", "conductivity", t))
    ref = iapws_water_k(t)
    assert ours <= ref
    assert ours == pytest.approx(ref, rel=0.02)


def test_water_conductivity_is_the_printed_ramires_form() -> None:
    # Source: Ramires et al. (1995), printed form (see ramires_water_k).
    temps = np.linspace(-40.0, 150.0, 96)
    np.testing.assert_allclose(
        component_property("water", "conductivity", temps), ramires_water_k(temps), rtol=1e-12
    )


@pytest.mark.parametrize("t", [-1.0, -5.0, -20.0])
def test_subzero_water_conductivity_near_iapws_supercooled(t: float) -> None:
    # Source: CoolProp 8 "Water" (IAPWS 2011) metastable saturated liquid
    # (Q=0), an extrapolation below the melting line, as is ours. Measured:
    # +0.2 % at -1 °C, +0.5 % at -5 °C, +3.9 % at -20 °C (the Choi-Okos water
    # equation: +3.0, +3.7, +9.4 %). Accepted: 5 %, a plausibility check.
    ours = float(component_property("water", "conductivity", t))
    ref = CP.PropsSI("L", "T", t + 273.15, "Q", 0.0, "Water")
    assert ours == pytest.approx(ref, rel=0.05)


# --------------------------------------------------------------------------- mixture rules

_MIX = Composition(water=0.62, protein=0.17, fat=0.12, carbohydrate=0.06, fiber=0.01, ash=0.02)


def _reference_mixture(food: FoodProperties, t: float) -> dict[str, float]:
    """ASHRAE mixture rules evaluated with CoolProp component properties."""
    comp = food.composition.normalised()
    ice = float(food.ice_fraction(t))
    x = {
        "water": comp.water - ice,
        "ice": ice,
        "protein": comp.protein,
        "fat": comp.fat,
        "carbohydrate": comp.carbohydrate,
        "fiber": comp.fiber,
        "ash": comp.ash,
    }
    tt = np.array(t)
    rho_i = {c: float(coolprop(c, "density", tt)) for c in x}
    cp_i = {c: float(coolprop(c, "specific_heat", tt)) for c in x}
    # water cp is no Choi-Okos INCOMP equation from 0 °C: the sub-zero
    # equation below 0 °C (printed above), IAPWS-95 liquid water from 0 °C
    cp_i["water"] = float(choi_okos_subzero_water_cp(t)) if t < 0.0 else iapws95_water_cp(t)
    k_i = {c: float(coolprop(c, "conductivity", tt)) for c in x}
    k_i["water"] = float(ramires_water_k(t))  # not a Choi-Okos equation either
    rho = 1.0 / sum(x[c] / rho_i[c] for c in x)
    v = {c: x[c] / rho_i[c] * rho for c in x}
    return {
        "density": rho,
        "sensible_cp": sum(x[c] * cp_i[c] for c in x),
        "parallel": sum(v[c] * k_i[c] for c in x),
        "series": 1.0 / sum(v[c] / k_i[c] for c in x),
    }


@pytest.mark.parametrize("t", [-35.0, -18.0, -5.0, 2.0, 20.0, 75.0, 140.0])
def test_mixture_rules_against_coolprop_components(t: float) -> None:
    # Source: ASHRAE Handbook — Refrigeration, Thermal Properties of Foods
    # (rho = 1/sum(x_i/rho_i); cp = sum x_i cp_i; k parallel sum v_i k_i and
    # series 1/sum(v_i/k_i)); components from CoolProp INCOMP::Food*, water
    # cp from the sub-zero Choi-Okos equation below 0 °C and from CoolProp
    # IAPWS-95 water above (ours tracks it within 0.09 %, x 0.62 water here).
    food = FoodProperties(_MIX)
    ref = _reference_mixture(food, t)
    # density and k come from a table interpolated in T (documented < 1e-5)
    assert float(food.density(t)) == pytest.approx(ref["density"], rel=1e-5)
    cp_tol = 1e-10 if t < 0.0 else 1e-3
    assert float(food.sensible_specific_heat(t)) == pytest.approx(ref["sensible_cp"], rel=cp_tol)
    assert float(food.conductivity(t)) == pytest.approx(ref["parallel"], rel=1e-5)
    series = FoodProperties(_MIX, conductivity_model="series")
    assert float(series.conductivity(t)) == pytest.approx(ref["series"], rel=1e-5)


def _maxwell_eucken_printed(k_c: float, k_d: float, v_d: float) -> float:
    # Source: ASHRAE Handbook — Refrigeration, Thermal Properties of Foods,
    # Maxwell–Eucken two-component form (continuous phase c, dispersed phase d).
    return k_c * (2 * k_c + k_d - 2 * v_d * (k_c - k_d)) / (2 * k_c + k_d + v_d * (k_c - k_d))


@pytest.mark.parametrize("t", [-25.0, -4.0, 10.0, 60.0])
def test_maxwell_eucken_two_components_matches_printed_form(t: float) -> None:
    # A water + protein food: above freezing one step (protein dispersed in
    # water); below freezing a second step with the unfrozen matrix dispersed
    # in continuous ice, each step by the printed two-phase formula.
    comp = Composition(water=0.8, protein=0.2, fat=0.0)
    food = FoodProperties(comp, conductivity_model="maxwell_eucken")
    tt = np.array(t)
    ice = float(food.ice_fraction(t))
    x = {"water": 0.8 - ice, "ice": ice, "protein": 0.2}
    rho = {c: float(coolprop(c, "density", tt)) for c in x}
    k = {c: float(coolprop(c, "conductivity", tt)) for c in x}
    k["water"] = float(ramires_water_k(t))
    vol = {c: x[c] / rho[c] for c in x}
    total = sum(vol.values())
    v = {c: vol[c] / total for c in x}
    v_matrix = v["water"] + v["protein"]
    k_matrix = _maxwell_eucken_printed(k["water"], k["protein"], v["protein"] / v_matrix)
    expected = _maxwell_eucken_printed(k["ice"], k_matrix, v_matrix) if ice > 0 else k_matrix
    assert float(food.conductivity(t)) == pytest.approx(expected, rel=1e-5)


# --------------------------------------------------------------------------- ASHRAE food table

# Source: ASHRAE Handbook — Refrigeration, "Thermal Properties of Foods", table
# of unfrozen composition, initial freezing point, specific heats and latent
# heat. Table values confirmed in a public copy printed in I-P units (cod:
# 28.0 °F, 0.90 / 0.51 Btu/(lb °F), 117 Btu/lb; beef round, full cut, lean:
# freezing point not printed, 0.84 / 0.51 Btu/(lb °F), 102 Btu/lb), i.e.
# 3.77 / 2.14 kJ/(kg K), 272 kJ/kg and 3.52 / 2.13 kJ/(kg K), 237 kJ/kg.
BTU_PER_LB_F = 4186.8  # J/(kg K) per Btu/(lb °F)
BTU_PER_LB = 2326.0  # J/kg per Btu/lb

# Cod, Atlantic, raw: composition (from memory, USDA values as reproduced in
# the ASHRAE table): water 81.22 %, protein 17.81 %, fat 0.67 %, ash 1.16 %,
# no carbohydrate (secondary public copies of the USDA entry confirm about
# 18 g protein and under 1 g fat per 100 g). USDA proximates sum to 100.86 %;
# normalised here.
COD = Composition.from_percent(81.22 / 1.0086, 17.81 / 1.0086, 0.67 / 1.0086, 0, 0, 1.16 / 1.0086)
COD_FREEZING_POINT = (28.0 - 32.0) / 1.8  # -2.2 °C, table value
# Beef round, lean: water 71.04 % derived from the table's latent heat
# (237 kJ/kg / 333.6 kJ/kg, the table computes L = 333.6 x_w); protein 22.0 %,
# fat 5.9 %, ash 1.06 % from memory (typical lean round). cp hardly depends on
# how the 29 % dry matter splits between protein and fat (both about
# 2 kJ/(kg K)).
BEEF = Composition(water=0.7104, protein=0.2200, fat=0.0590, carbohydrate=0.0, ash=0.0106)


@pytest.mark.parametrize(
    ("name", "composition", "cp_table"),
    [("cod", COD, 0.90 * BTU_PER_LB_F), ("beef round, lean", BEEF, 0.84 * BTU_PER_LB_F)],
)
def test_specific_heat_above_freezing_against_ashrae_table(name, composition, cp_table) -> None:
    # Source: ASHRAE food table (see above). Choi–Okos sum at 10 °C. Measured:
    # cod 3707 vs 3768 J/(kg K) (-1.6 %), beef 3507 vs 3517 (-0.3 %). The table
    # value carries +-0.005 Btu/(lb °F) (0.6 %) of rounding and comes from a
    # different correlation; we accept 3 %.
    food = FoodProperties(composition)
    assert float(food.specific_heat(10.0)) == pytest.approx(cp_table, rel=0.03), name


@pytest.mark.parametrize(
    ("name", "composition", "freezing_point", "cp_table"),
    [
        ("cod", COD, COD_FREEZING_POINT, 0.51 * BTU_PER_LB_F),
        ("beef round, lean", BEEF, None, 0.51 * BTU_PER_LB_F),
    ],
)
def test_specific_heat_below_freezing_against_ashrae_table(
    name, composition, freezing_point, cp_table
) -> None:
    # Source: ASHRAE food table (see above); the table's frozen value is the
    # apparent cp at -40 °C (from memory: its footnote; it agrees with the
    # Schwartzberg latent term plus a frozen-food sensible correlation).
    # Measured: cod (table freezing point -2.2 °C) 2629 vs 2135 (+23.1 %),
    # beef (Pham estimate -2.14 °C) 2617 vs 2135 (+22.6 %). The component sum
    # keeps the bound and unfrozen water at the Choi–Okos sub-zero water cp
    # (5.89 kJ/(kg K) at -40 °C, the steep rise of supercooled water) where
    # the table's correlation uses a lower frozen-food value, so the model
    # runs about 23 % high here (13 % with liquid-water cp before the
    # sub-zero equation was used); we accept 25 % and check the sign of the
    # difference so that a change of model shows up.
    food = FoodProperties(composition, freezing_point=freezing_point)
    ours = float(food.specific_heat(-40.0))
    assert ours == pytest.approx(cp_table, rel=0.25), name
    assert ours > cp_table


def test_latent_heat_against_ashrae_table_cod() -> None:
    # Source: ASHRAE food table, cod 117 Btu/lb = 272.1 kJ/kg (+-1.2 kJ/kg
    # printed rounding), computed there as 333.6 kJ/kg x water. Ours uses the
    # water fraction after normalising the USDA proximates (80.53 % instead of
    # 81.22 %), 268.6 kJ/kg: -1.3 %. We accept 2 %.
    food = FoodProperties(COD, freezing_point=COD_FREEZING_POINT)
    assert food.latent_heat == pytest.approx(117 * BTU_PER_LB, rel=0.02)
    assert food.latent_heat == pytest.approx(LATENT_HEAT_ICE * COD.water, rel=1e-12)


def test_latent_heat_beef_matches_table_definition() -> None:
    # Source: ASHRAE food table, beef round lean 102 Btu/lb = 237 kJ/kg. The
    # water fraction above was derived from it, so this only checks that
    # latent_heat follows the table's definition L = 333.6 kJ/kg x water.
    assert FoodProperties(BEEF).latent_heat == pytest.approx(102 * BTU_PER_LB, rel=0.005)


def test_pham_freezing_point_estimate_against_ashrae_cod() -> None:
    # Source: ASHRAE food table, cod initial freezing point 28.0 °F (-2.2 °C).
    # Estimate: Pham (1996), J. Food Eng. 30, 95-107 (formula confirmed in a
    # secondary public copy). Measured: -1.68 °C, 0.52 K warmer than the table.
    # A composition-only estimate is coarse; we accept 0.6 K and require it to
    # lie between 0 and -3 °C.
    food = FoodProperties(COD)
    assert food.freezing_point == pytest.approx(COD_FREEZING_POINT, abs=0.6)
    assert -3.0 < food.freezing_point < 0.0


def test_frozen_lean_meat_conductivity_order_of_magnitude() -> None:
    # Common practice (from memory, ASHRAE conductivity tables): lean beef
    # about 0.45-0.50 W/(m K) chilled and 1.3-1.6 W/(m K) frozen at -20 °C.
    # The Maxwell–Eucken model gives 0.462 and 1.390; the parallel model is the
    # upper bound (1.577 frozen). Wide bands: a plausibility check only.
    food = FoodProperties(BEEF, conductivity_model="maxwell_eucken")
    assert 0.40 < float(food.conductivity(5.0)) < 0.55
    assert 1.1 < float(food.conductivity(-20.0)) < 1.7
