"""Product: h, Biot and core time, checked against independent computations.

The core times are checked against a series solution written here from the
textbook eigen-equations and solved with scipy (root brackets, Bessel
functions), independent of thermal.series and thermal.geometry.

Source for the eigen-equations and coefficients: Incropera, DeWitt, Bergman,
Lavine, *Fundamentals of Heat and Mass Transfer*, section 5.5 (plane wall
ζ tan ζ = Bi, infinite cylinder ζ J1(ζ)/J0(ζ) = Bi, sphere 1 - ζ cot ζ = Bi).
"""

from __future__ import annotations

import doctest

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import j0, j1, jn_zeros

import thermal
from thermal import product as product_module
from thermal import series
from thermal.convection import AirSetting, surface_coefficient
from thermal.errors import ThermalInputError, UnreachableTargetError
from thermal.foods import Composition, ConstantProperties, FoodProperties
from thermal.geometry import Block, FiniteCylinder, InfiniteCylinder, Sphere
from thermal.product import BiotNumbers, CoreTimeResult, Product

# A frankfurter-style batter (invented demo composition).
SAUSAGE = Composition(water=0.58, protein=0.13, fat=0.24, carbohydrate=0.025, fiber=0.0, ash=0.025)

# --------------------------------------------------------------------------- independent series

_N_TERMS = 60


def _roots(shape: str, biot: float) -> np.ndarray:
    if shape == "slab":
        f = lambda z: z * np.tan(z) - biot  # noqa: E731
        brackets = [(n * np.pi + 1e-12, n * np.pi + np.pi / 2 - 1e-12) for n in range(_N_TERMS)]
    elif shape == "sphere":
        f = lambda z: 1.0 - z / np.tan(z) - biot  # noqa: E731
        brackets = [(n * np.pi + 1e-12, (n + 1) * np.pi - 1e-12) for n in range(_N_TERMS)]
    else:
        f = lambda z: z * j1(z) - biot * j0(z)  # noqa: E731
        zeros_j0 = jn_zeros(0, _N_TERMS)
        zeros_j1 = np.concatenate([[1e-12], jn_zeros(1, _N_TERMS - 1)])
        brackets = list(zip(zeros_j1, zeros_j0, strict=True))
    return np.array([brentq(f, a, b, xtol=1e-14) for a, b in brackets])


def _centre_ratio(shape: str, biot: float, fourier: float) -> float:
    z = _roots(shape, biot)
    if shape == "slab":
        c = 4 * np.sin(z) / (2 * z + np.sin(2 * z))
    elif shape == "sphere":
        c = 4 * (np.sin(z) - z * np.cos(z)) / (2 * z - np.sin(2 * z))
    else:
        c = 2 / z * j1(z) / (j0(z) ** 2 + j1(z) ** 2)
    return float(np.sum(c * np.exp(-(z**2) * fourier)))


def _independent_time(shape: str, biot: float, ratio: float, length: float, alpha: float) -> float:
    fo = brentq(lambda f: _centre_ratio(shape, biot, f) - ratio, 1e-3, 50.0, xtol=1e-13)
    return fo * length**2 / alpha


# --------------------------------------------------------------------------- the "done when" case


def test_sausage_28mm_in_3_m_per_s_air_at_175_C_to_core_72_C() -> None:
    """A 28 mm sausage of this composition in 3 m/s air at 175 °C: h, Bi and
    the time for its core to reach 72 °C, in a few lines."""
    sausage = Product("sausage", InfiniteCylinder(radius=0.014), SAUSAGE)
    air = AirSetting(temperature=175.0, speed=3.0)
    result = sausage.time_to_core(air, t_initial=4.0, t_target=72.0)

    assert isinstance(result, CoreTimeResult) and result.method == "series"
    # h is exactly the convection model's value at the surface temperature used
    expected_h = surface_coefficient(
        sausage.geometry, air, surface_temperature=result.surface_temperature, emissivity=0.9
    ).h
    assert result.h == pytest.approx(float(expected_h), rel=1e-12)
    # properties at the mean of start and target
    food = FoodProperties(SAUSAGE)
    assert result.property_temperature == 38.0
    assert result.conductivity == pytest.approx(float(food.conductivity(38.0)), rel=1e-12)
    assert result.diffusivity == pytest.approx(float(food.diffusivity(38.0)), rel=1e-12)
    # Biot numbers from their definitions
    bi = result.h * 0.014 / result.conductivity
    assert result.biot.per_direction == (("cylinder", pytest.approx(bi, rel=1e-12)),)
    assert result.biot.lumped == pytest.approx(result.h * 0.007 / result.conductivity)
    # time: independent series (scipy roots) and thermal.series inversion
    ratio = (72.0 - 175.0) / (4.0 - 175.0)
    t_ref = _independent_time("cylinder", bi, ratio, 0.014, result.diffusivity)
    assert result.seconds == pytest.approx(t_ref, rel=1e-6)
    fo = float(series.fourier_for_ratio("cylinder", bi, ratio))
    assert result.seconds == pytest.approx(fo * 0.014**2 / result.diffusivity, rel=1e-9)
    # the surface temperature used is the mean of start and end surface value
    end_surface = 175.0 + (4.0 - 175.0) * float(
        series.temperature_ratio("cylinder", bi, fo, position=1.0)
    )
    assert result.surface_temperature == pytest.approx(0.5 * (4.0 + end_surface), abs=0.05)


# --------------------------------------------------------------------------- other shapes


def test_sphere_with_constant_properties_and_measured_h() -> None:
    # Measured h bypasses the correlations; the time then depends only on the
    # series solution and the given properties.
    meatball = Product("meatball", Sphere(radius=0.02), ConstantProperties(0.45, 1080.0, 3300.0))
    air = AirSetting(temperature=160.0, speed=2.0, measured_h=40.0)
    result = meatball.time_to_core(air, t_initial=5.0, t_target=74.0)
    assert result.h == pytest.approx(40.0)
    bi = 40.0 * 0.02 / 0.45
    alpha = 0.45 / (1080.0 * 3300.0)
    ratio = (74.0 - 160.0) / (5.0 - 160.0)
    assert result.seconds == pytest.approx(
        _independent_time("sphere", bi, ratio, 0.02, alpha), rel=1e-6
    )


def test_block_biot_per_direction_and_lumped() -> None:
    block = Product("ham block", Block(0.30, 0.10, 0.08), ConstantProperties(0.5, 1050.0, 3500.0))
    bi = block.biot(20.0, 10.0)
    assert isinstance(bi, BiotNumbers)
    lengths = sorted(length for _, length in block.geometry.directions)
    assert lengths == pytest.approx([0.04, 0.05, 0.15])
    assert sorted(b for _, b in bi.per_direction) == pytest.approx(
        [20.0 * 0.04 / 0.5, 20.0 * 0.05 / 0.5, 20.0 * 0.15 / 0.5]
    )
    v_over_a = (0.30 * 0.10 * 0.08) / (2 * (0.30 * 0.10 + 0.30 * 0.08 + 0.10 * 0.08))
    assert bi.lumped == pytest.approx(20.0 * v_over_a / 0.5)
    assert bi.largest == pytest.approx(20.0 * 0.15 / 0.5)
    assert not bi.lumped_applies
    assert (
        Product("thin", Sphere(0.001), ConstantProperties(0.5, 1000, 3500))
        .biot(10.0, 0.0)
        .lumped_applies
    )


def test_finite_sausage_is_faster_than_infinite_one() -> None:
    air = AirSetting(temperature=175.0, speed=3.0, measured_h=60.0)
    props = ConstantProperties(0.45, 1050.0, 3400.0)
    long_one = Product("long", InfiniteCylinder(0.014), props).time_to_core(air, 4.0, 72.0)
    short_one = Product("short", FiniteCylinder(0.014, 0.06), props).time_to_core(air, 4.0, 72.0)
    assert short_one.seconds < long_one.seconds
    # a length of 100 diameters behaves as an infinite cylinder
    very_long = Product("very long", FiniteCylinder(0.014, 2.8), props).time_to_core(air, 4.0, 72.0)
    assert very_long.seconds == pytest.approx(long_one.seconds, rel=1e-6)


def test_faster_air_gives_higher_h_and_shorter_time() -> None:
    sausage = Product("sausage", InfiniteCylinder(radius=0.014), SAUSAGE)
    slow = sausage.time_to_core(AirSetting(temperature=175.0, speed=1.0), 4.0, 72.0)
    fast = sausage.time_to_core(AirSetting(temperature=175.0, speed=5.0), 4.0, 72.0)
    assert fast.h > slow.h and fast.seconds < slow.seconds


def test_cooling_above_freezing_is_allowed_and_consistent() -> None:
    sausage = Product("sausage", InfiniteCylinder(radius=0.014), SAUSAGE)
    air = AirSetting(temperature=1.0, speed=4.0)
    result = sausage.time_to_core(air, t_initial=72.0, t_target=5.0)
    ratio = (5.0 - 1.0) / (72.0 - 1.0)
    bi = result.biot.per_direction[0][1]
    assert result.seconds == pytest.approx(
        _independent_time("cylinder", bi, ratio, 0.014, result.diffusivity), rel=1e-6
    )
    assert result.property_temperature == pytest.approx(38.5)


def test_surface_coefficient_delegates_with_emissivity() -> None:
    product = Product("sausage", InfiniteCylinder(0.014), SAUSAGE, emissivity=0.6)
    air = AirSetting(temperature=175.0, speed=3.0)
    ours = product.surface_coefficient(air, surface_temperature=60.0)
    direct = surface_coefficient(product.geometry, air, surface_temperature=60.0, emissivity=0.6)
    assert ours.h == pytest.approx(direct.h, rel=1e-12)
    assert product.conductivity(20.0) == pytest.approx(FoodProperties(SAUSAGE).conductivity(20.0))
    assert product.diffusivity(20.0) == pytest.approx(FoodProperties(SAUSAGE).diffusivity(20.0))


# --------------------------------------------------------------------------- limits and bad input


def test_freezing_core_is_refused_with_reason() -> None:
    sausage = Product("sausage", InfiniteCylinder(radius=0.014), SAUSAGE)
    air = AirSetting(temperature=-30.0, speed=4.0)
    with pytest.raises(ThermalInputError, match=r"freezing point.*numerical solver"):
        sausage.time_to_core(air, t_initial=5.0, t_target=-18.0)


def test_chilling_in_air_below_freezing_point_warns() -> None:
    sausage = Product("sausage", InfiniteCylinder(radius=0.014), SAUSAGE)
    air = AirSetting(temperature=-8.0, speed=4.0)
    result = sausage.time_to_core(air, t_initial=60.0, t_target=5.0)
    assert any("surface may freeze" in w for w in result.warnings)


def test_target_beyond_air_is_unreachable() -> None:
    sausage = Product("sausage", InfiniteCylinder(radius=0.014), SAUSAGE)
    with pytest.raises(UnreachableTargetError):
        sausage.time_to_core(AirSetting(temperature=70.0, speed=3.0), 4.0, 72.0)


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"name": ""}, "name: must be a non-empty string"),
        ({"geometry": 0.028}, "geometry: must be a thermal.geometry shape"),
        ({"properties": None}, "properties: missing"),
        ({"properties": {"water": 0.7}}, "properties: must be a Composition"),
        ({"emissivity": 1.5}, "emissivity: must be in"),
    ],
)
def test_bad_product_input(kwargs: dict, fragment: str) -> None:
    base = {"name": "sausage", "geometry": InfiniteCylinder(0.014), "properties": SAUSAGE}
    base.update(kwargs)
    with pytest.raises(ThermalInputError, match=fragment):
        Product(**base)


def test_bad_call_input() -> None:
    sausage = Product("sausage", InfiniteCylinder(radius=0.014), SAUSAGE)
    air = AirSetting(temperature=175.0, speed=3.0)
    with pytest.raises(ThermalInputError, match="t_initial: must be above absolute zero"):
        sausage.time_to_core(air, t_initial=-300.0, t_target=72.0)
    with pytest.raises(ThermalInputError, match="h: must be >= 0"):
        sausage.biot(-5.0, 20.0)
    with pytest.raises(
        ThermalInputError,
        match=r"^temperature: must be above absolute zero \(-273\.15 °C\), got nan$",
    ):
        sausage.biot(5.0, float("nan"))


# --------------------------------------------------------------------------- docstring example


def test_product_docstring_example_runs_and_prints_what_the_code_gives() -> None:
    # Only Product's own docstring (recurse=False); fresh globals, so the
    # example must import what it uses from the package itself.
    finder = doctest.DocTestFinder(recurse=False)
    (test,) = finder.find(product_module.Product, "Product", module=product_module, globs={})
    assert not any(ex.options.get(doctest.SKIP) for ex in test.examples)
    report: list[str] = []
    runner = doctest.DocTestRunner(verbose=False)
    result = runner.run(test, out=report.append)
    assert result.failed == 0, "".join(report)
    assert result.attempted == len(test.examples) >= 4


def test_package_exports_the_product_api() -> None:
    # What a user needs for "a 28 mm sausage of this composition in 3 m/s air
    # at 175 °C", importable from the package itself.
    for name in ("Product", "AirSetting", "Composition", "FoodProperties", "ConstantProperties"):
        assert name in thermal.__all__
    assert thermal.Product is Product
    assert thermal.AirSetting is AirSetting
    assert thermal.Composition is Composition
    assert thermal.FoodProperties is FoodProperties
    assert thermal.ConstantProperties is ConstantProperties
    assert thermal.CoreTimeResult is CoreTimeResult and thermal.BiotNumbers is BiotNumbers
