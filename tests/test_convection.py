"""Behaviour of thermal.convection: shapes, regimes, options, bad input."""

from __future__ import annotations

import itertools
import math
import warnings
from types import SimpleNamespace

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from thermal.air import air_properties, humidity_ratio_from_relative
from thermal.convection import (
    CORRELATIONS,
    DEFAULT_LOADING_FACTOR,
    EXTRAPOLATION_OVERSTATES,
    EXTRAPOLATION_UNDERSTATES,
    EXTRAPOLATION_UNKNOWN,
    AirSetting,
    ConvectionResult,
    coverage_loading_factor,
    nusselt_flat_plate,
    nusselt_flat_plate_turbulent,
    surface_coefficient,
)
from thermal.errors import ThermalInputError, ValidityWarning


def sphere(r=0.03):
    return SimpleNamespace(kind="sphere", radius=r)


def cylinder(r=0.014):
    return SimpleNamespace(kind="cylinder", radius=r)


def finite_cylinder(r=0.05, length=0.2):
    return SimpleNamespace(kind="finite_cylinder", radius=r, length=length)


def slab(thickness=0.02, length=0.3, width=0.2):
    return SimpleNamespace(kind="slab", thickness=thickness, length=length, width=width)


def block(length=0.12, width=0.08, height=0.05):
    return SimpleNamespace(kind="block", length=length, width=width, height=height)


ALL_SHAPES = [sphere(), cylinder(), finite_cylinder(), slab(), block()]


def quiet(*args, **kwargs) -> ConvectionResult:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ValidityWarning)
        return surface_coefficient(*args, **kwargs)


# --------------------------------------------------------------------------
# Air setting
# --------------------------------------------------------------------------


def test_air_setting_humidity_from_relative_and_ratio():
    a = AirSetting(30.0, 2.0, relative_humidity=0.6)
    assert a.moisture == pytest.approx(float(humidity_ratio_from_relative(30.0, 0.6)))
    b = AirSetting(150.0, 2.0, humidity_ratio=float("inf"))
    assert math.isinf(b.moisture)
    assert AirSetting(20.0, 1.0).moisture == 0.0
    # Dry air above the critical point of water, where no saturation exists.
    assert AirSetting(400.0, 1.0, relative_humidity=0.0).moisture == 0.0
    assert AirSetting(20.0, 1.0).wall == 20.0
    assert AirSetting(20.0, 1.0, wall_temperature=35.0).wall == 35.0


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"temperature": -274.0, "speed": 1.0}, r"^temperature: must be above absolute zero"),
        ({"temperature": 20.0, "speed": -1.0}, r"^speed: must be >= 0"),
        ({"temperature": 20.0, "speed": float("nan")}, r"^speed: must be >= 0, got nan$"),
        ({"temperature": 20.0, "speed": [1.0, 2.0]}, r"^speed: must be a single number"),
        ({"temperature": 20.0, "speed": 1.0, "pressure": -5.0}, r"^pressure: must be > 0"),
        (
            {"temperature": 20.0, "speed": 1.0, "relative_humidity": 1.5},
            r"^relative_humidity: must be in",
        ),
        (
            {"temperature": 150.0, "speed": 1.0, "relative_humidity": 0.9},
            r"^relative_humidity: .*at most 0\.21",
        ),
        (
            {"temperature": 20.0, "speed": 1.0, "relative_humidity": 0.5, "humidity_ratio": 0.01},
            r"^relative_humidity: give either",
        ),
        (
            {"temperature": 20.0, "speed": 1.0, "humidity_ratio": -0.1},
            r"^humidity_ratio: must be >= 0",
        ),
        (
            {"temperature": 20.0, "speed": 1.0, "humidity_ratio": 0.5},
            r"^humidity_ratio: vapour above saturation",
        ),
        (
            {"temperature": 20.0, "speed": 1.0, "wall_temperature": -300.0},
            r"^wall_temperature: must be above",
        ),
        ({"temperature": 20.0, "speed": 1.0, "measured_h": 0.0}, r"^measured_h: must be > 0"),
        (
            {"temperature": 20.0, "speed": 1.0, "humidity_ratio": float("nan")},
            r"^humidity_ratio: must be >= 0 kg/kg \(inf = pure steam\), got nan$",
        ),
        (
            {"temperature": 20.0, "speed": 1.0, "relative_humidity": float("nan")},
            r"^relative_humidity: must be in \[0\.0, 1\.0\], got nan$",
        ),
        (
            {"temperature": 20.0, "speed": 1.0, "wall_temperature": float("nan")},
            r"^wall_temperature: must be above absolute zero \(-273\.15 °C\), got nan$",
        ),
    ],
)
def test_air_setting_bad_input(kwargs, match):
    with pytest.raises(ThermalInputError, match=match):
        AirSetting(**kwargs)


# --------------------------------------------------------------------------
# Surface coefficient behaviour
# --------------------------------------------------------------------------


@pytest.mark.parametrize("shape", ALL_SHAPES, ids=lambda s: s.kind)
def test_every_shape_gives_positive_h_and_consistent_parts(shape):
    res = quiet(shape, AirSetting(180.0, 2.5), surface_temperature=30.0, emissivity=0.8)
    assert res.h > 0
    assert res.h == pytest.approx(res.h_convective + res.h_radiative)
    assert res.h_convective >= max(res.h_forced, res.h_natural) * (1 - 1e-12)
    assert res.film_temperature == pytest.approx(105.0)
    k = float(air_properties(105.0).conductivity)
    assert res.nusselt == pytest.approx(res.h_convective * res.length / k)
    for key in res.correlation.split("+"):
        assert key in CORRELATIONS


@pytest.mark.parametrize("shape", ALL_SHAPES, ids=lambda s: s.kind)
def test_h_grows_with_air_speed(shape):
    hs = [quiet(shape, AirSetting(-20.0, v)).h for v in (0.5, 1.0, 2.0, 4.0, 8.0)]
    assert all(b > a for a, b in itertools.pairwise(hs))


def test_without_surface_temperature_forced_only_at_air_temperature():
    res = quiet(cylinder(), AirSetting(175.0, 3.0))
    assert res.regime == "forced"
    assert res.film_temperature == 175.0
    assert res.h_natural == 0.0
    assert math.isnan(res.rayleigh)
    assert res.correlation == "cylinder_churchill_bernstein"


def test_regime_moves_from_forced_to_natural_as_air_slows():
    # Gr/Re² thresholds 0.1 and 10 (Bergman et al. section 9.9).
    regimes = [
        quiet(cylinder(0.05), AirSetting(200.0, v), surface_temperature=20.0).regime
        for v in (10.0, 0.5, 0.05, 0.0)
    ]
    assert regimes == ["forced", "mixed", "natural", "natural"]


def test_mixed_combination_is_cube_rule_for_single_face():
    # Churchill (1977) with n = 3, Bergman et al. eq. 9.36.
    res = quiet(sphere(0.04), AirSetting(200.0, 0.3), surface_temperature=20.0)
    assert res.h_convective == pytest.approx((res.h_forced**3 + res.h_natural**3) ** (1 / 3))


def test_loading_factor_multiplies_convection_only():
    base = quiet(slab(), AirSetting(5.0, 3.0), surface_temperature=60.0, emissivity=0.9)
    packed = quiet(
        slab(), AirSetting(5.0, 3.0), surface_temperature=60.0, emissivity=0.9, loading_factor=0.7
    )
    assert DEFAULT_LOADING_FACTOR == 1.0
    assert packed.h_convective == pytest.approx(0.7 * base.h_convective)
    assert packed.h_radiative == pytest.approx(base.h_radiative)
    assert packed.loading_factor == 0.7


@settings(max_examples=60, deadline=None)
@given(
    st.floats(min_value=0.0, max_value=1.0, allow_nan=False),
    st.floats(min_value=0.0, max_value=1.0, allow_nan=False),
)
def test_coverage_loading_factor_falls_with_coverage(a, b):
    # The estimate is monotone (more coverage never gives a higher h), stays
    # inside the accepted loading factors and never exceeds a lone piece's 1.
    low, high = sorted((a, b))
    assert coverage_loading_factor(high) <= coverage_loading_factor(low)
    assert 0.5 <= coverage_loading_factor(high) <= 1.0


def test_coverage_loading_factor_is_one_for_a_single_piece():
    # A single piece on an empty belt (coverage -> 0) is the free-air piece the
    # correlations describe: factor 1, the DEFAULT_LOADING_FACTOR.
    assert coverage_loading_factor(0.0) == DEFAULT_LOADING_FACTOR == 1.0
    assert coverage_loading_factor(1e-9) == pytest.approx(1.0, abs=1e-9)
    assert coverage_loading_factor(0.8) == pytest.approx(0.6)
    assert coverage_loading_factor(1.0) == pytest.approx(0.5)


@pytest.mark.parametrize("bad", [-0.1, 1.2, float("nan")])
def test_coverage_loading_factor_refuses_coverage_outside_0_1(bad):
    with pytest.raises(ThermalInputError, match=r"^coverage: must be in \[0\.0, 1\.0\]"):
        coverage_loading_factor(bad)


def test_measured_h_overrides_correlations():
    air = AirSetting(180.0, 2.0, measured_h=42.0)
    res = surface_coefficient(cylinder(), air, surface_temperature=20.0, emissivity=0.9)
    assert res.regime == "measured"
    assert res.correlation == "measured"
    assert res.h == 42.0
    assert res.h_radiative == 0.0
    scaled = surface_coefficient(cylinder(), air, loading_factor=1.2)
    assert scaled.h == pytest.approx(50.4)


def test_wall_temperature_sets_radiation_and_environment_temperature():
    air = AirSetting(150.0, 1.0, wall_temperature=220.0)
    res = quiet(slab(), air, surface_temperature=20.0, emissivity=0.9)
    expected_env = (res.h_convective * 150.0 + res.h_radiative * 220.0) / res.h
    assert res.environment_temperature == pytest.approx(expected_env)
    assert 150.0 < res.environment_temperature < 220.0
    assert quiet(slab(), air, surface_temperature=20.0).environment_temperature == 150.0


def test_correlation_choice_for_plate_faces():
    air = AirSetting(0.0, 6.0)
    lam = quiet(slab(length=0.5), air)
    turb = quiet(slab(length=0.5), air, correlation="flat_plate_turbulent")
    props = air_properties(0.0)
    re = 6.0 * 0.5 / float(props.kinematic_viscosity)
    k, pr = float(props.conductivity), float(props.prandtl)
    assert lam.h == pytest.approx(float(nusselt_flat_plate(re, pr)) * k / 0.5)
    assert turb.h == pytest.approx(float(nusselt_flat_plate_turbulent(re, pr)) * k / 0.5)
    assert turb.correlation == "flat_plate_turbulent"
    # On a finite cylinder the choice applies to its end plates only.
    fc = quiet(finite_cylinder(), air, correlation="flat_plate_laminar")
    assert fc.correlation == "cylinder_churchill_bernstein+flat_plate_laminar"


def test_finite_cylinder_is_area_weighted_side_and_ends():
    # Long finite cylinder tends to the infinite one (side dominates).
    air = AirSetting(-30.0, 4.0)
    long_fc = quiet(finite_cylinder(0.01, 2.0), air)
    inf_c = quiet(cylinder(0.01), air)
    assert long_fc.h == pytest.approx(inf_c.h, rel=0.01)


def test_block_and_slab_agree_on_plate_faces():
    # A very thin block is a slab: the side faces vanish.
    air = AirSetting(10.0, 3.0)
    assert quiet(block(0.3, 0.2, 1e-6), air).h == pytest.approx(
        quiet(slab(0.01, 0.3, 0.2), air).h, rel=1e-4
    )


def test_slab_without_width_is_a_wide_strip():
    air = AirSetting(10.0, 3.0)
    wide = quiet(SimpleNamespace(kind="slab", thickness=0.02, length=0.3, width=None), air)
    assert wide.h == pytest.approx(quiet(slab(0.02, 0.3, 0.2), air).h)


def test_hot_or_cold_horizontal_plate_symmetric_average():
    # Top and bottom faces swap correlations when the plate is hotter or
    # colder than the air; with equal face areas the average is the same for
    # the same |ΔT| and film temperature.
    hot = quiet(slab(), AirSetting(20.0, 0.0), surface_temperature=80.0)
    cold = quiet(slab(), AirSetting(80.0, 0.0), surface_temperature=20.0)
    assert hot.h == pytest.approx(cold.h, rel=1e-12)


def test_condensation_warning_below_dew_point():
    air = AirSetting(100.0, 1.0, humidity_ratio=float("inf"))
    with pytest.warns(ValidityWarning, match=r"below the dew point 99\.9\d °C.*condensation"):
        res = surface_coefficient(cylinder(), air, surface_temperature=40.0)
    assert any("condensation" in w for w in res.warnings)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        surface_coefficient(
            cylinder(), AirSetting(100.0, 3.0, relative_humidity=0.2), surface_temperature=95.0
        )


def test_air_property_range_warning_is_reported():
    # Cryogenic tunnel air at -110 °C is below the 200 K validity of the gas
    # correlations (thermal.air): the warning reaches the result.
    with pytest.warns(ValidityWarning, match=r"air_properties: temperature -110"):
        res = surface_coefficient(cylinder(), AirSetting(-110.0, 3.0))
    assert any("air_properties" in w for w in res.warnings)


def test_warnings_in_result_match_emitted():
    with pytest.warns(ValidityWarning) as record:
        res = surface_coefficient(sphere(0.03), AirSetting(0.0, 2.0), surface_temperature=80.0)
    assert {str(w.message) for w in record} == set(res.warnings)
    assert any("mu/mu_s" in w for w in res.warnings)


@pytest.mark.parametrize(
    ("key", "values", "phrase"),
    [
        # A laminar form past transition misses the turbulent rise: h too low.
        ("flat_plate_laminar", {"Re": 2.0e6}, EXTRAPOLATION_UNDERSTATES),
        # A turbulent-from-the-edge form on a laminar layer: h too high.
        ("flat_plate_turbulent", {"Re": 1.0e4}, EXTRAPOLATION_OVERSTATES),
        # Whitaker below Re 3.5 tends to the conduction floor Nu = 2: h too low.
        ("sphere_whitaker", {"Re": 1.0}, EXTRAPOLATION_UNDERSTATES),
        ("sphere_whitaker", {"mu/mu_s": 0.9}, EXTRAPOLATION_UNKNOWN),
        ("horizontal_plate_upper", {"Ra": 10.0}, EXTRAPOLATION_UNDERSTATES),
        ("horizontal_plate_lower", {"Ra": 1.0e12}, EXTRAPOLATION_UNKNOWN),
    ],
)
def test_out_of_range_warning_says_which_way_h_is_likely_wrong(key, values, phrase):
    # Common practice (module notes of thermal.convection): the likely error
    # of each extrapolation, which decides whether it could shorten a dwell.
    (message,) = CORRELATIONS[key].out_of_range(**values)
    assert message.endswith(f"result extrapolated, {phrase}")


def test_every_out_of_range_warning_names_a_direction():
    phrases = (EXTRAPOLATION_UNDERSTATES, EXTRAPOLATION_OVERSTATES, EXTRAPOLATION_UNKNOWN)
    for key, corr in CORRELATIONS.items():
        for quantity, (low, high) in corr.validity.items():
            for value in (
                low / 10.0 if low > 0 else None,
                high * 10.0 if high < math.inf else None,
            ):
                if value is None:
                    continue
                (message,) = corr.out_of_range(**{quantity: value})
                assert message.endswith(phrases), (key, quantity, message)


@settings(max_examples=40, deadline=None)
@given(
    t_air=st.floats(-40.0, 250.0),
    ts=st.floats(-30.0, 90.0),
    speed=st.floats(0.05, 15.0),
    eps=st.floats(0.0, 1.0),
    lf=st.floats(0.1, 1.5),
    shape=st.sampled_from(ALL_SHAPES),
)
def test_property_h_finite_positive(t_air, ts, speed, eps, lf, shape):
    res = quiet(
        shape, AirSetting(t_air, speed), surface_temperature=ts, emissivity=eps, loading_factor=lf
    )
    assert math.isfinite(res.h) and res.h > 0
    assert res.h_radiative >= 0
    assert res.regime in {"forced", "mixed", "natural"}


# --------------------------------------------------------------------------
# Bad input
# --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("geometry", "kwargs", "match"),
    [
        (SimpleNamespace(kind="sphere", radius=-0.01), {}, r"^geometry\.radius: must be > 0"),
        (SimpleNamespace(kind="cylinder", radius=0.0), {}, r"^geometry\.radius: must be > 0"),
        (
            SimpleNamespace(kind="block", length=0.1, width=-1, height=0.1),
            {},
            r"^geometry\.width: must be > 0",
        ),
        (
            SimpleNamespace(kind="slab", thickness=0.02, length=None),
            {},
            r"^geometry\.length: required",
        ),
        (
            SimpleNamespace(kind="torus", radius=0.1),
            {},
            r"^geometry: must be a thermal\.geometry shape",
        ),
        (
            sphere(),
            {"surface_temperature": -280.0},
            r"^surface_temperature: must be above absolute zero",
        ),
        (sphere(), {"emissivity": 1.2}, r"^emissivity: must be in \[0.0, 1.0\]"),
        (sphere(), {"emissivity": -0.1}, r"^emissivity: must be in"),
        (sphere(), {"loading_factor": 0.0}, r"^loading_factor: must be in \(0, 1\.5\]"),
        (sphere(), {"loading_factor": 2.0}, r"^loading_factor: must be in \(0, 1\.5\]"),
        (
            sphere(),
            {"correlation": "nope"},
            r"^correlation: for this shape one of \['sphere_whitaker'\]",
        ),
        (sphere(), {"correlation": "flat_plate"}, r"^correlation: for this shape one of"),
        (sphere(), {"correlation": "sphere_churchill"}, r"^correlation: for this shape"),
    ],
)
def test_surface_coefficient_bad_input(geometry, kwargs, match):
    with pytest.raises(ThermalInputError, match=match):
        surface_coefficient(geometry, AirSetting(20.0, 2.0), **kwargs)


def test_still_air_needs_temperature_difference():
    with pytest.raises(ThermalInputError, match=r"^surface_temperature: still air"):
        surface_coefficient(sphere(), AirSetting(20.0, 0.0))
    with pytest.raises(ThermalInputError, match=r"^surface_temperature: still air"):
        surface_coefficient(sphere(), AirSetting(20.0, 0.0), surface_temperature=20.0)


def test_air_must_be_air_setting():
    with pytest.raises(ThermalInputError, match=r"^air: must be an AirSetting"):
        surface_coefficient(sphere(), {"temperature": 20.0, "speed": 1.0})


def test_real_geometry_classes_when_available():
    geometry = pytest.importorskip("thermal.geometry")
    air = AirSetting(175.0, 3.0)
    shapes = [
        geometry.Sphere(0.03),
        geometry.InfiniteCylinder(0.014),
        geometry.FiniteCylinder(0.014, 0.12),
        geometry.Slab(0.02, 0.3, 0.2),
        geometry.Block(0.12, 0.08, 0.05),
    ]
    for shape in shapes:
        res = quiet(shape, air, surface_temperature=20.0, emissivity=0.9)
        assert res.h > 0
