"""Air properties against CoolProp (test-only reference) and bad-input checks."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from CoolProp.CoolProp import HAPropsSI, PropsSI
from hypothesis import given, settings
from hypothesis import strategies as st

from thermal.air import (
    ATMOSPHERIC_PRESSURE,
    MOLAR_MASS_AIR,
    MOLAR_MASS_WATER,
    air_properties,
    dew_point,
    humidity_ratio_from_dew_point,
    humidity_ratio_from_relative,
    relative_humidity,
    saturation_pressure,
    water_mole_fraction,
)
from thermal.errors import ThermalInputError, ValidityWarning

K = 273.15
TEMPS = np.linspace(-40.0, 300.0, 35)

# CoolProp key -> AirProperties field
_DRY_KEYS = {
    "D": "density",
    "V": "viscosity",
    "L": "conductivity",
    "C": "specific_heat",
    "PRANDTL": "prandtl",
}


def _rel(a, b):
    return np.abs(np.asarray(a, dtype=float) / np.asarray(b, dtype=float) - 1.0)


@pytest.mark.parametrize("pressure", [50_000.0, ATMOSPHERIC_PRESSURE, 200_000.0])
@pytest.mark.parametrize("key", list(_DRY_KEYS))
def test_dry_air_against_coolprop(key, pressure):
    # Source: CoolProp PropsSI(..., 'Air') (Lemmon et al. 2000 EOS, Lemmon &
    # Jacobsen 2004 transport), -40..300 °C; spec tolerance 1 %.
    props = air_properties(TEMPS, pressure)
    ref = np.array([PropsSI(key, "T", t + K, "P", pressure, "Air") for t in TEMPS])
    assert _rel(getattr(props, _DRY_KEYS[key]), ref).max() < 0.01


def test_dry_air_kinematic_viscosity_against_coolprop():
    # Source: CoolProp PropsSI('V')/PropsSI('D') for 'Air'.
    props = air_properties(TEMPS)
    ref = np.array(
        [
            PropsSI("V", "T", t + K, "P", 101325, "Air")
            / PropsSI("D", "T", t + K, "P", 101325, "Air")
            for t in TEMPS
        ]
    )
    assert _rel(props.kinematic_viscosity, ref).max() < 0.01


def test_dry_air_table_values_300k():
    # Source: Incropera et al., Fundamentals of Heat and Mass Transfer,
    # Table A.4, air at 300 K, 1 atm: k = 0.0263 W/m K, nu = 15.89e-6 m2/s,
    # Pr = 0.707 (printed precision: 3-4 figures). The table rests on older
    # viscosity data about 0.9 % above the modern Lemmon & Jacobsen values,
    # hence 1 % on nu.
    props = air_properties(300.0 - K)
    assert float(props.conductivity) == pytest.approx(0.0263, abs=0.00006)
    assert float(props.kinematic_viscosity) == pytest.approx(15.89e-6, rel=0.01)
    assert float(props.prandtl) == pytest.approx(0.707, abs=0.002)


def test_saturation_pressure_liquid_against_coolprop():
    # Source: CoolProp PropsSI('P','T',T,'Q',1,'Water') (IAPWS-95).
    temps = np.linspace(0.01, 370.0, 60)
    ref = np.array([PropsSI("P", "T", t + K, "Q", 1, "Water") for t in temps])
    assert _rel(saturation_pressure(temps), ref).max() < 1e-3


def test_saturation_pressure_published_points():
    # Source: IAPWS-95 / steam tables: 611.657 Pa at the triple point
    # (0.01 °C, IAPWS R14-08), 101.418 kPa at 100 °C (Wagner & Pruss 2002,
    # Table 13.1) — the latter from memory to the printed 5 figures.
    assert float(saturation_pressure(0.01)) == pytest.approx(611.657, rel=1e-4)
    assert float(saturation_pressure(100.0)) == pytest.approx(101418.0, rel=2e-4)
    # Over ice just below the triple point it joins the liquid curve.
    assert float(saturation_pressure(0.0099999)) == pytest.approx(611.657, rel=1e-4)


def test_saturation_pressure_over_ice_against_humid_air_model():
    # Source: CoolProp HAPropsSI('P_w', T, P, R=1) = f * p_ice(T) with the
    # enhancement factor f (Herrmann et al. 2009, ASHRAE RP-1485); f is within
    # 0.3-0.6 % of 1 at 1 atm below 0 °C, so 1 % tolerance.
    temps = np.array([-40.0, -30.0, -20.0, -10.0, -1.0])
    ref = np.array([HAPropsSI("P_w", "T", t + K, "P", 101325, "R", 1.0) for t in temps])
    assert _rel(saturation_pressure(temps), ref).max() < 0.01


@pytest.mark.parametrize("temp", [-40.0, -20.0, -1.0, 0.5, 20.0, 40.0, 60.0, 80.0, 95.0])
@pytest.mark.parametrize("rh", [0.1, 0.5, 1.0])
def test_humidity_ratio_from_relative_against_humid_air_model(temp, rh):
    # Source: CoolProp HAPropsSI('W', T, P, R). Our relative humidity is
    # p_w / p_sat without the enhancement factor (about 0.4-0.6 %); near
    # saturation above 60 °C that difference is amplified by p / (p - p_w):
    # 1 % tolerance there up to 1.6 % (95 °C, 100 %).
    ref = HAPropsSI("W", "T", temp + K, "P", 101325, "R", rh)
    tol = 0.016 if (temp >= 60.0 and rh == 1.0) else 0.01
    assert float(humidity_ratio_from_relative(temp, rh)) == pytest.approx(ref, rel=tol)


@pytest.mark.parametrize("td", [-30.0, -5.0, 5.0, 20.0, 45.0, 70.0])
def test_humidity_ratio_from_dew_point_against_humid_air_model(td):
    # Source: CoolProp HAPropsSI('W', 'D', Tdp) at 1 atm; same enhancement
    # factor note as above (1 % tolerance up to 45 °C, 1.2 % at 70 °C).
    ref = HAPropsSI("W", "T", max(td, 0.0) + 80.0 + K, "P", 101325, "D", td + K)
    tol = 0.012 if td > 60 else 0.01
    assert float(humidity_ratio_from_dew_point(td)) == pytest.approx(ref, rel=tol)


def test_dew_point_inverts_and_round_trips():
    w = np.array([1e-5, 1e-3, 0.01, 0.1, 1.0, 5.0])
    td = dew_point(w)
    np.testing.assert_allclose(humidity_ratio_from_dew_point(td), w, rtol=1e-7)
    # Pure steam at 1 atm condenses at the normal boiling point.
    # Source: IAPWS-95, normal boiling point 99.974 °C (ITS-90).
    assert float(dew_point(np.inf)) == pytest.approx(99.974, abs=0.01)


def test_relative_humidity_round_trip():
    t = np.array([-20.0, 25.0, 90.0, 150.0])
    rh = np.array([0.3, 0.8, 0.5, 0.1])
    w = humidity_ratio_from_relative(t, rh)
    np.testing.assert_allclose(relative_humidity(t, w), rh, rtol=1e-10)


# Humid air -----------------------------------------------------------------

_HUMID_CASES = [
    (t, w)
    for t in (-20.0, 0.0, 20.0, 40.0, 60.0, 80.0, 100.0, 120.0, 150.0, 200.0, 250.0, 300.0)
    for w in (0.0005, 0.005, 0.02, 0.05, 0.2, 0.5, 1.0, 3.0, 10.0)
    if float(relative_humidity(t, w)) <= 1.0
]


def _ha(key, t, w):
    return HAPropsSI(key, "T", t + K, "P", 101325, "W", w)


@pytest.mark.parametrize(("t", "w"), _HUMID_CASES)
def test_humid_density_and_cp_against_humid_air_model(t, w):
    # Source: CoolProp HAPropsSI('Vha') and ('cp_ha') — per kg humid air —
    # (Herrmann et al. 2009 real-gas mixture model). Measured max deviation
    # 0.1 % in density and 1.2 % in cp (pure-steam-rich air close to
    # saturation at 100 °C, where we keep only the water second virial term).
    props = air_properties(t, 101325, w)
    assert float(props.density) == pytest.approx(1.0 / _ha("Vha", t, w), rel=0.005)
    assert float(props.specific_heat) == pytest.approx(_ha("cp_ha", t, w), rel=0.015)


@pytest.mark.parametrize(
    ("t", "w"), [c for c in _HUMID_CASES if c[1] <= 0.005 or (c[1] <= 0.02 and c[0] <= 200.0)]
)
def test_humid_transport_ambient_against_humid_air_model(t, w):
    # Source: CoolProp HAPropsSI('mu') and ('k') for ambient and tunnel air
    # (humidity ratio up to 0.02). HAPropsSI mixes with Wilke's rule but takes
    # the vapour's viscosity and conductivity at saturation at the total
    # pressure (about 100 °C at 1 atm) whatever the temperature, so we compare
    # only where the vapour share is small (humidity ratio up to 0.005, or
    # 0.02 up to 200 °C): 1 % tolerance.
    props = air_properties(t, 101325, w)
    assert float(props.viscosity) == pytest.approx(_ha("mu", t, w), rel=0.01)
    assert float(props.conductivity) == pytest.approx(_ha("k", t, w), rel=0.01)


@pytest.mark.parametrize("w", [0.05, 0.2, 1.0, 3.0, 10.0])
def test_humid_transport_steam_rich_at_100c_against_humid_air_model(w):
    # Source: CoolProp HAPropsSI('mu'), ('k') at 100 °C and 1 atm, where its
    # vapour properties (saturated at 1 atm) are those at the air temperature.
    # Our vapour is the dilute gas; real steam at saturation conducts about
    # 1.7 % better, hence 2 % on k and 1 % on mu.
    props = air_properties(100.0, 101325, w)
    assert float(props.viscosity) == pytest.approx(_ha("mu", 100.0, w), rel=0.01)
    assert float(props.conductivity) == pytest.approx(_ha("k", 100.0, w), rel=0.02)


def _wilke_reference(t, x_w, p=101325.0):
    """Wilke / Mason-Saxena mixing of CoolProp pure-fluid values at T."""
    t_k = t + K
    mu_a = PropsSI("V", "T", t_k, "P", p, "Air")
    k_a = PropsSI("L", "T", t_k, "P", p, "Air")
    p_w = max(x_w * p, 1.0)
    mu_w = PropsSI("V", "T", t_k, "P", p_w, "Water")
    k_w = PropsSI("L", "T", t_k, "P", p_w, "Water")
    m_a, m_w = MOLAR_MASS_AIR, MOLAR_MASS_WATER

    def phi(mi, mj, mmi, mmj):
        return (1 + (mi / mj) ** 0.5 * (mmj / mmi) ** 0.25) ** 2 / (8 * (1 + mmi / mmj)) ** 0.5

    x_a = 1 - x_w
    f_aw, f_wa = phi(mu_a, mu_w, m_a, m_w), phi(mu_w, mu_a, m_w, m_a)
    den_a, den_w = x_a + x_w * f_aw, x_w + x_a * f_wa
    mu = x_a * mu_a / den_a + x_w * mu_w / den_w
    k = x_a * k_a / den_a + x_w * k_w / den_w
    return mu, k


_MIX_CASES = [
    (t, x)
    for t in (60.0, 120.0, 200.0, 300.0)
    for x in (0.1, 0.5, 0.9, 1.0)
    if x * 101325 <= float(saturation_pressure(t))
]


@pytest.mark.parametrize(("t", "x_w"), _MIX_CASES)
def test_humid_transport_against_pure_fluid_mixing(t, x_w):
    # Source: CoolProp PropsSI for 'Air' and 'Water' (IAPWS 2008/2011 full
    # formulations) at the air temperature, combined with Wilke (1950) and
    # Mason & Saxena (1958). This checks our pure-vapour correlations over the
    # steam-oven range; it shares the mixing rule with the code under test.
    w = x_w / (1 - x_w) * MOLAR_MASS_WATER / MOLAR_MASS_AIR if x_w < 1 else np.inf
    mu_ref, k_ref = _wilke_reference(t, x_w)
    props = air_properties(t, 101325, w)
    assert float(props.viscosity) == pytest.approx(mu_ref, rel=0.01)
    assert float(props.conductivity) == pytest.approx(k_ref, rel=0.02)


@pytest.mark.parametrize("t", [100.0, 150.0, 200.0, 300.0])
def test_pure_steam_against_coolprop(t):
    # Source: CoolProp PropsSI(..., 'Water') (IAPWS-95, IAPWS 2008/2011) at
    # 1 atm. Tolerances from the low-density model: 0.5 % density, 2 % cp
    # (measured -1.8 % at 100 °C: the second virial term catches most of the
    # real-gas cp excess, not all), 1 % mu, 2 % k (measured -1.7 % at 100 °C).
    props = air_properties(t, 101325, np.inf)
    tk = t + K
    assert float(props.density) == pytest.approx(
        PropsSI("D", "T", tk, "P", 101325, "Water"), rel=0.005
    )
    assert float(props.specific_heat) == pytest.approx(
        PropsSI("C", "T", tk + 1e-6, "P", 101325, "Water"), rel=0.02
    )
    assert float(props.viscosity) == pytest.approx(
        PropsSI("V", "T", tk, "P", 101325, "Water"), rel=0.01
    )
    assert float(props.conductivity) == pytest.approx(
        PropsSI("L", "T", tk, "P", 101325, "Water"), rel=0.02
    )


# Structure, broadcasting and property-based checks -------------------------


def test_broadcasting_shapes():
    props = air_properties(np.array([[20.0], [100.0]]), np.array([1e5, 2e5, 3e5]), 0.002)
    assert props.density.shape == (2, 3)
    assert props.prandtl.shape == (2, 3)
    np.testing.assert_allclose(props.kinematic_viscosity, props.viscosity / props.density)
    np.testing.assert_allclose(
        props.diffusivity, props.conductivity / (props.density * props.specific_heat)
    )


@settings(max_examples=60, deadline=None)
@given(
    t=st.floats(-40.0, 300.0),
    p=st.floats(5e4, 3e5),
    frac=st.floats(0.0, 1.0),
)
def test_humid_properties_physical(t, p, frac):
    # Any humid state up to saturation: positive properties, Pr between the
    # dry-air and steam values (about 0.68-1.1), density between the pure gases.
    w_sat = float(humidity_ratio_from_relative(t, min(1.0, p / float(saturation_pressure(t))), p))
    w = frac * w_sat if np.isfinite(w_sat) else frac / (1 - frac + 1e-9)
    props = air_properties(t, p, w)
    for name in ("density", "viscosity", "conductivity", "specific_heat", "prandtl"):
        assert float(getattr(props, name)) > 0
    assert 0.6 < float(props.prandtl) < 1.2
    dry = float(air_properties(t, p).density)
    assert float(props.density) <= dry * (1 + 1e-12)
    assert 0.0 <= float(water_mole_fraction(w)) <= 1.0


def test_humidity_lowers_density():
    # Water vapour (18 g/mol) is lighter than dry air (29 g/mol): common knowledge.
    d = air_properties(60.0, 101325, np.array([0.0, 0.05, 0.1])).density
    assert d[0] > d[1] > d[2]


# Validity warnings and bad input -------------------------------------------


def test_warning_outside_validity_names_range():
    with pytest.warns(ValidityWarning, match=r"temperature -100 °C outside the validity range"):
        air_properties(-100.0)
    with pytest.warns(ValidityWarning, match=r"pressure 2e\+06 Pa outside"):
        air_properties(20.0, 2e6)


def test_no_warning_inside_range():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        air_properties(TEMPS, 101325, 5e-5)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"temperature": -273.15}, r"^temperature: must be above absolute zero"),
        ({"temperature": -300.0}, r"^temperature: must be above absolute zero"),
        (
            {"temperature": float("nan")},
            r"^temperature: must be above absolute zero \(-273\.15 °C\), got nan$",
        ),
        ({"temperature": 20.0, "pressure": -1.0}, r"^pressure: must be > 0"),
        ({"temperature": 20.0, "pressure": 0.0}, r"^pressure: must be > 0"),
        ({"temperature": 20.0, "humidity_ratio": -0.01}, r"^humidity_ratio: must be >= 0"),
        (
            {"temperature": 20.0, "humidity_ratio": 0.05},
            r"^humidity_ratio: vapour above saturation",
        ),
        (
            {"temperature": 90.0, "humidity_ratio": np.inf},
            r"^humidity_ratio: vapour above saturation",
        ),
        ({"temperature": "hot"}, r"^temperature: must be a number"),
    ],
)
def test_air_properties_bad_input(kwargs, match):
    with pytest.raises(ThermalInputError, match=match):
        air_properties(**kwargs)


def test_supersaturation_message_gives_limit():
    with pytest.raises(ThermalInputError, match=r"at most 0\.014\d* kg/kg"):
        air_properties(20.0, 101325, 0.05)


def test_relative_humidity_bad_input():
    with pytest.raises(ThermalInputError, match=r"^relative_humidity: must be in \[0.0, 1.0\]"):
        humidity_ratio_from_relative(20.0, 1.2)
    with pytest.raises(ThermalInputError, match=r"^relative_humidity: must be in"):
        humidity_ratio_from_relative(20.0, -0.1)
    # At 150 °C and 1 atm saturation (476 kPa) exceeds the total pressure:
    # at most p / p_sat = 0.213 is possible.
    with pytest.raises(
        ThermalInputError, match=r"^relative_humidity: .* at most 0\.21\d* is possible"
    ):
        humidity_ratio_from_relative(150.0, 0.5)
    assert np.isinf(humidity_ratio_from_relative(150.0, 101325 / float(saturation_pressure(150.0))))
    with pytest.raises(ThermalInputError, match=r"^temperature: must be above absolute zero"):
        humidity_ratio_from_relative(-280.0, 0.5)
    with pytest.raises(ThermalInputError, match=r"^pressure: must be > 0"):
        humidity_ratio_from_relative(20.0, 0.5, -5.0)


def test_dew_point_bad_input():
    with pytest.raises(ThermalInputError, match=r"^dew_point: must not exceed the boiling point"):
        humidity_ratio_from_dew_point(120.0)
    with pytest.raises(ThermalInputError, match=r"^humidity_ratio: must be >= 0"):
        dew_point(-1.0)
