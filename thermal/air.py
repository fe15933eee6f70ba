"""Properties of dry and humid air for convection in ovens and cooling tunnels.

Air is treated as an ideal-gas mixture of dry air (a pseudo-pure gas) and
water vapour at low density. Each pure-gas property comes from a published
correlation of the dilute (zero-density) gas, and the mixture from the usual
kinetic-theory mixing rules:

* density: ideal-gas law with the mixture molar mass (plus the water
  second virial term);
* specific heat: mass-weighted ideal-gas heat capacities, dry air from its
  N2/O2/Ar composition, each gas from the NASA seven-coefficient polynomials;
* viscosity: Lemmon & Jacobsen (2004) dilute-gas term for dry air, IAPWS
  (2008) dilute-gas term for water vapour, mixed by Wilke's rule;
* thermal conductivity: Lemmon & Jacobsen (2004) dilute-gas term for dry air,
  IAPWS (2011) dilute-gas term for water vapour, mixed by the Wassiljewa
  equation with the Mason–Saxena coefficients;
* saturation pressure over liquid water (Wagner & Pruss) and over ice (IAPWS
  2011 sublimation equation) for humidity from relative humidity or dew point.

Validity
--------
Checked against CoolProp (test-only): dry air from −40 to 300 °C within
0.3 % at 1 atm and 0.6 % at 2 bar in every property; humid air within 0.2 %
in density and 1.3 % in specific heat up to pure steam (HAPropsSI), viscosity
and conductivity within 1 % and 2 % of IAPWS steam mixed by the same rules.
The pure-gas correlations themselves are valid from 200 to 1000 K; outside
that, and outside 10-500 kPa, a :class:`thermal.errors.ValidityWarning` is
issued. The model is a low-density one: the only real-gas term kept is the
water-water second virial coefficient (Harvey & Lemmon 2004) in density and
specific heat, which matters for steam-rich air. Humid air is accepted from
dry air up to pure steam (humidity ratio ``inf``) as long as the vapour is
not supersaturated (partial pressure at most the saturation pressure). For
pure steam at 100 °C and 1 atm the remaining errors are about −1.8 % in
specific heat and −1.7 % in conductivity, shrinking to below 0.5 % at 300 °C.

All temperatures are in °C at the interface and converted to kelvin inside.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal._checks import as_float_array, in_range, positive, temperature_c
from thermal.errors import ThermalInputError, ValidityWarning

__all__ = [
    "ATMOSPHERIC_PRESSURE",
    "MOLAR_MASS_AIR",
    "MOLAR_MASS_WATER",
    "AirProperties",
    "air_properties",
    "dew_point",
    "humidity_ratio_from_dew_point",
    "humidity_ratio_from_relative",
    "relative_humidity",
    "saturation_pressure",
    "water_mole_fraction",
]

KELVIN = 273.15
"""Offset from °C to K [K]."""

ATMOSPHERIC_PRESSURE = 101325.0
"""Standard atmosphere [Pa]."""

GAS_CONSTANT = 8.314462618
"""Molar gas constant [J/(mol K)] (CODATA 2018)."""

MOLAR_MASS_AIR = 0.0289586
"""Molar mass of dry air [kg/mol] (Lemmon et al. 2000)."""

MOLAR_MASS_WATER = 0.018015268
"""Molar mass of water [kg/mol] (IAPWS-95)."""

_EPSILON = MOLAR_MASS_WATER / MOLAR_MASS_AIR
"""Ratio of molar masses water / dry air [-] (about 0.6221)."""

VALID_TEMPERATURE_K = (200.0, 1000.0)
"""Temperature range of the pure-gas correlations [K]."""

VALID_PRESSURE_PA = (1.0e4, 5.0e5)
"""Pressure range in which the low-density model is within about 1 % [Pa]."""

# Mole fractions of the main constituents of dry air (Lemmon et al. 2000).
_AIR_COMPOSITION = {"N2": 0.7812, "O2": 0.2096, "Ar": 0.0092}

# NASA seven-coefficient polynomials, low-temperature range (200-1000 K):
# cp/R = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4, T in K.
_NASA_CP = {
    "N2": (3.53100528, -1.23660988e-04, -5.02999433e-07, 2.43530612e-09, -1.40881235e-12),
    "O2": (3.78245636, -2.99673416e-03, 9.84730201e-06, -9.68129509e-09, 3.24372837e-12),
    "Ar": (2.5, 0.0, 0.0, 0.0, 0.0),
    "H2O": (4.19864056, -2.03643410e-03, 6.52040211e-06, -5.48797062e-09, 1.77197817e-12),
}


@dataclass(frozen=True)
class AirProperties:
    """Properties of (humid) air at given temperatures and pressures.

    All fields are arrays broadcast to a common shape; mass-based properties
    refer to one kilogram of the humid mixture (dry air plus vapour).

    Attributes
    ----------
    temperature : ndarray
        Temperature [°C].
    pressure : ndarray
        Total pressure [Pa].
    humidity_ratio : ndarray
        Mass of water vapour per mass of dry air [kg/kg] (``inf`` = pure steam).
    density : ndarray
        Density of the mixture [kg/m3].
    viscosity : ndarray
        Dynamic viscosity [Pa s].
    kinematic_viscosity : ndarray
        Kinematic viscosity [m2/s].
    conductivity : ndarray
        Thermal conductivity [W/(m K)].
    specific_heat : ndarray
        Isobaric specific heat per kg of mixture [J/(kg K)].
    prandtl : ndarray
        Prandtl number [-].
    """

    temperature: NDArray[np.float64]
    pressure: NDArray[np.float64]
    humidity_ratio: NDArray[np.float64]
    density: NDArray[np.float64]
    viscosity: NDArray[np.float64]
    kinematic_viscosity: NDArray[np.float64]
    conductivity: NDArray[np.float64]
    specific_heat: NDArray[np.float64]
    prandtl: NDArray[np.float64]

    @property
    def diffusivity(self) -> NDArray[np.float64]:
        """Thermal diffusivity k / (rho cp) [m2/s]."""
        return self.conductivity / (self.density * self.specific_heat)


# --------------------------------------------------------------------------
# Pure gases
# --------------------------------------------------------------------------


def _nasa_cp_molar(species: str, t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """Ideal-gas molar heat capacity of one species [J/(mol K)]."""
    a1, a2, a3, a4, a5 = _NASA_CP[species]
    return GAS_CONSTANT * (a1 + t_k * (a2 + t_k * (a3 + t_k * (a4 + t_k * a5))))


def _cp_dry_air(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """Ideal-gas specific heat of dry air [J/(kg K)] from its composition.

    References
    ----------
    .. [1] McBride, B. J., Gordon, S., Reno, M. A. (1993). Coefficients for
       calculating thermodynamic and transport properties of individual
       species. NASA TM-4513 (seven-coefficient polynomial form); values as
       tabulated by Burcat, A., Ruscic, B. (2005), Third Millennium Ideal Gas
       and Condensed Phase Thermochemical Database, ANL-05/20.
    .. [2] Lemmon, E. W., Jacobsen, R. T., Penoncello, S. G., Friend, D. G.
       (2000). Thermodynamic properties of air and mixtures of nitrogen,
       argon and oxygen from 60 to 2000 K at pressures to 2000 MPa. J. Phys.
       Chem. Ref. Data 29, 331-385 (composition of dry air).
    """
    molar = sum(x * _nasa_cp_molar(s, t_k) for s, x in _AIR_COMPOSITION.items())
    return molar / MOLAR_MASS_AIR


def _cp_water_vapour(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """Ideal-gas specific heat of water vapour [J/(kg K)] (NASA polynomial)."""
    return _nasa_cp_molar("H2O", t_k) / MOLAR_MASS_WATER


# Lemmon & Jacobsen (2004), dry air: Lennard-Jones parameters, collision
# integral coefficients and the dilute-gas conductivity terms.
_LJ_SIGMA_NM = 0.360
_LJ_EPS_K = 103.3
_OMEGA_B = (0.431, -0.4623, 0.08406, 0.005341, -0.00331)
_AIR_T_REDUCING = 132.6312
_AIR_K_TERMS = ((1.405, -1.1), (-1.036, -0.3))
_AIR_K_N1 = 1.308


def _viscosity_dry_air(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """Dilute-gas viscosity of dry air [Pa s].

    References
    ----------
    .. [1] Lemmon, E. W., Jacobsen, R. T. (2004). Viscosity and thermal
       conductivity equations for nitrogen, oxygen, argon, and air. Int. J.
       Thermophys. 25, 21-69, eqs. (2)-(4) and Table I.
    """
    ln_t = np.log(t_k / _LJ_EPS_K)
    omega = np.exp(sum(b * ln_t**i for i, b in enumerate(_OMEGA_B)))
    micro = 0.0266958 * np.sqrt(1000.0 * MOLAR_MASS_AIR * t_k) / (_LJ_SIGMA_NM**2 * omega)
    return micro * 1e-6


def _conductivity_dry_air(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """Dilute-gas thermal conductivity of dry air [W/(m K)].

    References
    ----------
    .. [1] Lemmon, E. W., Jacobsen, R. T. (2004). Viscosity and thermal
       conductivity equations for nitrogen, oxygen, argon, and air. Int. J.
       Thermophys. 25, 21-69, eq. (5) and Table II.
    """
    tau = _AIR_T_REDUCING / t_k
    milli = _AIR_K_N1 * _viscosity_dry_air(t_k) * 1e6
    for n, t in _AIR_K_TERMS:
        milli = milli + n * tau**t
    return milli * 1e-3


_WATER_T_CRIT = 647.096
_WATER_P_CRIT = 22.064e6
_IAPWS_MU_H = (1.67752, 2.20462, 0.6366564, -0.241605)
_IAPWS_K_L = (2.443221e-3, 1.323095e-2, 6.770357e-3, -3.454586e-3, 4.096266e-4)


# Harvey & Lemmon (2004): second virial coefficient of water,
# B = sum a_i (T / 100 K)^b_i  [dm3/mol].
_HL_A = (0.34404, -0.75826, -24.219, -3978.2)
_HL_B = (-0.5, -0.8, -3.35, -8.3)


def _virial_water(t_k: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Second virial coefficient of water and its second T-derivative.

    Returns ``(B, d2B/dT2)`` in [m3/mol] and [m3/(mol K2)].

    References
    ----------
    .. [1] Harvey, A. H., Lemmon, E. W. (2004). Correlation for the second
       virial coefficient of water. J. Phys. Chem. Ref. Data 33, 369-376.
    """
    tr = t_k / 100.0
    b = sum(a * tr**e for a, e in zip(_HL_A, _HL_B, strict=True)) * 1e-3
    b2 = sum(a * e * (e - 1.0) * tr**e for a, e in zip(_HL_A, _HL_B, strict=True)) * 1e-3 / t_k**2
    return b, b2


def _viscosity_water_vapour(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """Dilute-gas viscosity of water vapour [Pa s].

    References
    ----------
    .. [1] IAPWS R12-08 (2008). Release on the IAPWS formulation 2008 for the
       viscosity of ordinary water substance, eq. (11) (Huber et al. 2009,
       J. Phys. Chem. Ref. Data 38, 101-125).
    """
    tr = t_k / _WATER_T_CRIT
    denom = sum(h / tr**i for i, h in enumerate(_IAPWS_MU_H))
    return 100.0 * np.sqrt(tr) / denom * 1e-6


def _conductivity_water_vapour(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """Dilute-gas thermal conductivity of water vapour [W/(m K)].

    References
    ----------
    .. [1] IAPWS R15-11 (2011). Release on the IAPWS formulation 2011 for the
       thermal conductivity of ordinary water substance, eq. (16) (Huber et
       al. 2012, J. Phys. Chem. Ref. Data 41, 033102).
    """
    tr = t_k / _WATER_T_CRIT
    denom = sum(c / tr**i for i, c in enumerate(_IAPWS_K_L))
    return np.sqrt(tr) / denom * 1e-3


# --------------------------------------------------------------------------
# Mixing rules
# --------------------------------------------------------------------------


def _wilke_phi(
    mu_i: NDArray[np.float64], mu_j: NDArray[np.float64], m_i: float, m_j: float
) -> NDArray[np.float64]:
    """Wilke's interaction coefficient phi_ij [-]."""
    return (1.0 + np.sqrt(mu_i / mu_j) * (m_j / m_i) ** 0.25) ** 2 / np.sqrt(
        8.0 * (1.0 + m_i / m_j)
    )


def _mix_transport(
    x_w: NDArray[np.float64],
    prop_a: NDArray[np.float64],
    prop_w: NDArray[np.float64],
    mu_a: NDArray[np.float64],
    mu_w: NDArray[np.float64],
) -> NDArray[np.float64]:
    """Binary mixing rule sum_i x_i P_i / sum_j x_j phi_ij (Wilke phi).

    With ``P = mu`` this is Wilke's rule for viscosity; with ``P = k`` it is
    the Wassiljewa equation with the Mason–Saxena coefficients (epsilon = 1).
    """
    x_a = 1.0 - x_w
    phi_aw = _wilke_phi(mu_a, mu_w, MOLAR_MASS_AIR, MOLAR_MASS_WATER)
    phi_wa = _wilke_phi(mu_w, mu_a, MOLAR_MASS_WATER, MOLAR_MASS_AIR)
    with np.errstate(invalid="ignore", divide="ignore"):
        term_a = np.where(x_a > 0.0, x_a * prop_a / (x_a + x_w * phi_aw), 0.0)
        term_w = np.where(x_w > 0.0, x_w * prop_w / (x_w + x_a * phi_wa), 0.0)
    return term_a + term_w


# --------------------------------------------------------------------------
# Saturation and humidity
# --------------------------------------------------------------------------

_WP_A = (-7.85951783, 1.84408259, -11.7866497, 22.6807411, -15.9618719, 1.80122502)
_WP_EXP = (1.0, 1.5, 3.0, 3.5, 4.0, 7.5)
_TRIPLE_T = 273.16
_TRIPLE_P = 611.657
_SUB_A = (-0.212144006e2, 0.273203819e2, -0.610598130e1)
_SUB_B = (0.333333333e-2, 0.120666667e1, 0.170333333e1)


def _psat_liquid(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    tau = 1.0 - t_k / _WATER_T_CRIT
    s = sum(a * np.abs(tau) ** e for a, e in zip(_WP_A, _WP_EXP, strict=True))
    return _WATER_P_CRIT * np.exp(_WATER_T_CRIT / t_k * s)


def _psat_ice(t_k: NDArray[np.float64]) -> NDArray[np.float64]:
    theta = t_k / _TRIPLE_T
    s = sum(a * theta**b for a, b in zip(_SUB_A, _SUB_B, strict=True))
    return _TRIPLE_P * np.exp(s / theta)


def saturation_pressure(temperature: ArrayLike) -> NDArray[np.float64]:
    """Saturation pressure of water vapour [Pa].

    Over liquid water at and above the triple point (0.01 °C) up to the
    critical point (373.946 °C), over ice below it (the convention of the
    ASHRAE Handbook — Fundamentals, psychrometrics chapter).

    Parameters
    ----------
    temperature : array_like
        Temperature [°C], from -100 °C up to 373.946 °C.

    Returns
    -------
    ndarray
        Saturation pressure [Pa].

    Raises
    ------
    ThermalInputError
        Temperature at or below absolute zero, below -100 °C or above the
        critical temperature of water.

    References
    ----------
    .. [1] Wagner, W., Pruss, A. (1993). International equations for the
       saturation properties of ordinary water substance. Revised according
       to the International Temperature Scale of 1990. J. Phys. Chem. Ref.
       Data 22, 783-787 (vapour-pressure equation; also eq. 2.5 of Wagner &
       Pruss 2002, J. Phys. Chem. Ref. Data 31, 387).
    .. [2] Wagner, W., Riethmann, T., Feistel, R., Harvey, A. H. (2011). New
       equations for the sublimation pressure and melting pressure of H2O
       ice Ih. J. Phys. Chem. Ref. Data 40, 043103 (IAPWS R14-08(2011)).
    """
    return _checked_psat("temperature", temperature)


def _checked_psat(name: str, temperature: ArrayLike) -> NDArray[np.float64]:
    t_c = temperature_c(name, temperature)
    in_range(name, t_c, -100.0, _WATER_T_CRIT - KELVIN)
    t_k = t_c + KELVIN
    return np.where(t_k >= _TRIPLE_T, _psat_liquid(t_k), _psat_ice(t_k))


def _mole_fraction_from_ratio(w: NDArray[np.float64]) -> NDArray[np.float64]:
    with np.errstate(invalid="ignore"):
        return np.where(np.isinf(w), 1.0, w / (w + _EPSILON))


def _ratio_from_partial_pressure(
    p_w: NDArray[np.float64], pressure: NDArray[np.float64]
) -> NDArray[np.float64]:
    with np.errstate(divide="ignore"):
        return np.where(p_w >= pressure, np.inf, _EPSILON * p_w / (pressure - p_w))


def water_mole_fraction(humidity_ratio: ArrayLike) -> NDArray[np.float64]:
    """Mole fraction of water vapour from the humidity ratio [-].

    Parameters
    ----------
    humidity_ratio : array_like
        Mass of vapour per mass of dry air [kg/kg], >= 0; ``inf`` = pure steam.

    Returns
    -------
    ndarray
        Mole fraction of water vapour in the mixture [-], in [0, 1].
    """
    w = _check_humidity_ratio(humidity_ratio)
    return _mole_fraction_from_ratio(w)


def _check_humidity_ratio(humidity_ratio: ArrayLike) -> NDArray[np.float64]:
    domain = ">= 0 kg/kg (inf = pure steam)"
    w = as_float_array("humidity_ratio", humidity_ratio, allow_inf=True, accepted=domain)
    bad = (w < 0) | np.isneginf(w)
    if bad.any():
        raise ThermalInputError(
            f"humidity_ratio: must be {domain}, got {float(w[bad].ravel()[0])!r}"
        )
    return w


def humidity_ratio_from_relative(
    temperature: ArrayLike,
    relative_humidity: ArrayLike,
    pressure: ArrayLike = ATMOSPHERIC_PRESSURE,
) -> NDArray[np.float64]:
    """Humidity ratio from relative humidity [kg vapour / kg dry air].

    Relative humidity is the vapour partial pressure over the saturation
    pressure at the air temperature (over ice below 0.01 °C). When the
    saturation pressure exceeds the total pressure (above about 100 °C at
    1 atm) the largest possible relative humidity is ``pressure / p_sat``,
    which means pure steam (humidity ratio ``inf``); larger values are refused.
    The vapour is treated as an ideal gas without the enhancement factor of
    real humid air (that factor changes the result by about 0.5 % at 1 atm).

    Parameters
    ----------
    temperature : array_like
        Air temperature [°C], -100 to 373.9 °C.
    relative_humidity : array_like
        Relative humidity as a fraction [-], 0 to 1 (and at most
        ``pressure / saturation_pressure(temperature)``).
    pressure : array_like, optional
        Total pressure [Pa], > 0. Default one standard atmosphere.

    Returns
    -------
    ndarray
        Humidity ratio [kg/kg]; ``inf`` for pure steam.

    Raises
    ------
    ThermalInputError
        A relative humidity outside [0, 1] or one that would need a vapour
        partial pressure above the total pressure; bad temperature or pressure.

    References
    ----------
    .. [1] ASHRAE Handbook — Fundamentals (2017), ch. 1 Psychrometrics,
       eqs. (20), (22) and (24) (humidity ratio, relative humidity).
    """
    p = positive("pressure", pressure)
    rh = in_range("relative_humidity", relative_humidity, 0.0, 1.0)
    p_sat = saturation_pressure(temperature)
    p_w = rh * p_sat
    too_high = p_w > p * (1.0 + 1e-12)
    if too_high.any():
        limit = np.broadcast_to(p / p_sat, too_high.shape)[too_high].ravel()[0]
        raise ThermalInputError(
            "relative_humidity: the saturation pressure exceeds the total pressure here, "
            f"so at most {float(limit):.4g} is possible (pure steam), "
            f"got {float(np.broadcast_to(rh, too_high.shape)[too_high].ravel()[0])!r}"
        )
    return _ratio_from_partial_pressure(p_w, np.broadcast_to(p, p_w.shape))


def humidity_ratio_from_dew_point(
    dew_point: ArrayLike, pressure: ArrayLike = ATMOSPHERIC_PRESSURE
) -> NDArray[np.float64]:
    """Humidity ratio from the dew point [kg vapour / kg dry air].

    Below 0.01 °C the dew point is taken over ice (frost point).

    Parameters
    ----------
    dew_point : array_like
        Dew-point temperature [°C], -100 °C up to the boiling point at
        ``pressure`` (the boiling point itself means pure steam).
    pressure : array_like, optional
        Total pressure [Pa], > 0. Default one standard atmosphere.

    Returns
    -------
    ndarray
        Humidity ratio [kg/kg]; ``inf`` for pure steam.

    Raises
    ------
    ThermalInputError
        A dew point above the boiling point at the given pressure.

    References
    ----------
    .. [1] ASHRAE Handbook — Fundamentals (2017), ch. 1 Psychrometrics,
       eq. (20) with the vapour pressure at the dew point.
    """
    p = positive("pressure", pressure)
    p_w = _checked_psat("dew_point", dew_point)
    too_high = p_w > p * (1.0 + 1e-12)
    if too_high.any():
        raise ThermalInputError(
            "dew_point: must not exceed the boiling point of water at the given pressure "
            f"(saturation pressure {float(p_w[too_high].ravel()[0]):.6g} Pa > pressure)"
        )
    return _ratio_from_partial_pressure(p_w, np.broadcast_to(p, p_w.shape))


def relative_humidity(
    temperature: ArrayLike,
    humidity_ratio: ArrayLike,
    pressure: ArrayLike = ATMOSPHERIC_PRESSURE,
) -> NDArray[np.float64]:
    """Relative humidity from the humidity ratio [-] (inverse of
    :func:`humidity_ratio_from_relative`).

    Parameters
    ----------
    temperature : array_like
        Air temperature [°C], -100 to 373.9 °C.
    humidity_ratio : array_like
        Humidity ratio [kg/kg], >= 0; ``inf`` = pure steam.
    pressure : array_like, optional
        Total pressure [Pa], > 0.

    Returns
    -------
    ndarray
        Vapour partial pressure over saturation pressure [-]; above 1 means
        supersaturated (fog), which :func:`air_properties` refuses.
    """
    p = positive("pressure", pressure)
    x_w = water_mole_fraction(humidity_ratio)
    return x_w * p / saturation_pressure(temperature)


def dew_point(
    humidity_ratio: ArrayLike, pressure: ArrayLike = ATMOSPHERIC_PRESSURE
) -> NDArray[np.float64]:
    """Dew point (frost point below 0.01 °C) of humid air [°C].

    Solved by bisection on :func:`saturation_pressure` between -100 °C and
    the critical temperature, to better than 1e-6 K.

    Parameters
    ----------
    humidity_ratio : array_like
        Humidity ratio [kg/kg], > 0 (``inf`` = pure steam).
    pressure : array_like, optional
        Total pressure [Pa], > 0.

    Returns
    -------
    ndarray
        Dew-point temperature [°C]; -100 °C is returned for air drier than
        saturation at -100 °C.

    Raises
    ------
    ThermalInputError
        Bad humidity ratio or pressure, or a vapour partial pressure above the
        critical pressure of water.
    """
    p = positive("pressure", pressure)
    p_w = _mole_fraction_from_ratio(_check_humidity_ratio(humidity_ratio)) * p
    if (p_w > _WATER_P_CRIT).any():
        raise ThermalInputError(
            "pressure: vapour partial pressure above the critical pressure of water "
            f"({_WATER_P_CRIT:.6g} Pa) has no dew point"
        )
    lo = np.full(np.shape(p_w), -100.0 + KELVIN)
    hi = np.full(np.shape(p_w), _WATER_T_CRIT)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        p_mid = np.where(mid >= _TRIPLE_T, _psat_liquid(mid), _psat_ice(mid))
        below = p_mid < p_w
        lo = np.where(below, mid, lo)
        hi = np.where(below, hi, mid)
    return 0.5 * (lo + hi) - KELVIN


# --------------------------------------------------------------------------
# Mixture properties
# --------------------------------------------------------------------------


def _warn_outside(t_k: NDArray[np.float64], p: NDArray[np.float64]) -> None:
    t_lo, t_hi = VALID_TEMPERATURE_K
    if ((t_k < t_lo) | (t_k > t_hi)).any():
        worst = float(t_k[(t_k < t_lo) | (t_k > t_hi)].ravel()[0]) - KELVIN
        warnings.warn(
            f"air_properties: temperature {worst:.6g} °C outside the validity range "
            f"[{t_lo - KELVIN:.2f}, {t_hi - KELVIN:.2f}] °C of the gas correlations; "
            "values are extrapolated",
            ValidityWarning,
            stacklevel=3,
        )
    p_lo, p_hi = VALID_PRESSURE_PA
    if ((p < p_lo) | (p > p_hi)).any():
        worst = float(p[(p < p_lo) | (p > p_hi)].ravel()[0])
        warnings.warn(
            f"air_properties: pressure {worst:.6g} Pa outside the validity range "
            f"[{p_lo:.6g}, {p_hi:.6g}] Pa of the low-density model; values are extrapolated",
            ValidityWarning,
            stacklevel=3,
        )


def air_properties(
    temperature: ArrayLike,
    pressure: ArrayLike = ATMOSPHERIC_PRESSURE,
    humidity_ratio: ArrayLike = 0.0,
    *,
    allow_supersaturated: bool = False,
) -> AirProperties:
    """Density, viscosity, conductivity, specific heat and Prandtl number of air.

    Dry or humid air as an ideal-gas mixture of dry air and water vapour at
    low density (see the module notes for validity). Arguments broadcast
    against each other.

    Parameters
    ----------
    temperature : array_like
        Temperature [°C], above absolute zero; correlations valid
        -73.15 to 726.85 °C (200-1000 K), checked from -40 to 300 °C.
    pressure : array_like, optional
        Total pressure [Pa], > 0 (validated 10 kPa to 500 kPa). Default 1 atm.
    humidity_ratio : array_like, optional
        Mass of water vapour per mass of dry air [kg/kg], >= 0; ``inf`` means
        pure steam. The vapour partial pressure must not exceed the saturation
        pressure at ``temperature`` (no fog). Default 0 (dry air).
    allow_supersaturated : bool, optional
        Accept vapour above saturation, treated as a metastable gas. Meant for
        film properties in the boundary layer next to a surface colder than
        the dew point (where condensation, not modelled here, takes place).
        Default False.

    Returns
    -------
    AirProperties
        Properties per kg of the humid mixture, arrays of the broadcast shape.

    Raises
    ------
    ThermalInputError
        Temperature at or below absolute zero, non-positive pressure, negative
        humidity ratio, or vapour above saturation.

    Warns
    -----
    ValidityWarning
        Temperature or pressure outside the validity ranges above.

    References
    ----------
    .. [1] Lemmon, E. W., Jacobsen, R. T. (2004). Viscosity and thermal
       conductivity equations for nitrogen, oxygen, argon, and air. Int. J.
       Thermophys. 25, 21-69 (dry air, dilute-gas terms).
    .. [2] IAPWS R12-08 (2008) and R15-11 (2011): viscosity and thermal
       conductivity of water substance (dilute-gas terms).
    .. [3] McBride, B. J., Gordon, S., Reno, M. A. (1993). NASA TM-4513;
       Burcat, A., Ruscic, B. (2005), ANL-05/20 (ideal-gas heat capacities).
    .. [4] Wilke, C. R. (1950). A viscosity equation for gas mixtures. J. Chem.
       Phys. 18, 517-519.
    .. [5] Mason, E. A., Saxena, S. C. (1958). Approximate formula for the
       thermal conductivity of gas mixtures. Phys. Fluids 1, 361-369; as
       given in Poling, B. E., Prausnitz, J. M., O'Connell, J. P. (2001).
       The Properties of Gases and Liquids, 5th ed., chapters 9 and 10.
    .. [6] Harvey, A. H., Lemmon, E. W. (2004). Correlation for the second
       virial coefficient of water. J. Phys. Chem. Ref. Data 33, 369-376.
    """
    t_c = temperature_c("temperature", temperature)
    p = positive("pressure", pressure)
    w = _check_humidity_ratio(humidity_ratio)
    t_c, p, w = np.broadcast_arrays(t_c, p, w)
    t_k = t_c + KELVIN
    x_w = _mole_fraction_from_ratio(w)
    if not allow_supersaturated:
        _check_not_supersaturated(t_c, p, x_w)
    _warn_outside(t_k, p)

    molar_mass = (1.0 - x_w) * MOLAR_MASS_AIR + x_w * MOLAR_MASS_WATER
    b_ww, b_ww_tt = _virial_water(t_k)
    # Water-water second virial term only: it is the one non-ideal term that
    # matters (steam-rich mixtures); the air terms are below 0.3 % here.
    # Pressure-explicit virial form: Z = 1 + B_m p / (R T), B_m = x_w^2 B_ww.
    p_ww = x_w**2 * p
    density = p * molar_mass / (GAS_CONSTANT * t_k + b_ww * p_ww)
    mass_w = x_w * MOLAR_MASS_WATER / molar_mass
    cp_ideal = (1.0 - mass_w) * _cp_dry_air(t_k) + mass_w * _cp_water_vapour(t_k)
    # Residual heat capacity to first order in pressure: -T B_m'' p per mole.
    cp = cp_ideal - t_k * b_ww_tt * p_ww / molar_mass
    mu_a = _viscosity_dry_air(t_k)
    mu_w = _viscosity_water_vapour(t_k)
    mu = _mix_transport(x_w, mu_a, mu_w, mu_a, mu_w)
    k = _mix_transport(x_w, _conductivity_dry_air(t_k), _conductivity_water_vapour(t_k), mu_a, mu_w)
    return AirProperties(
        temperature=t_c.copy(),
        pressure=p.copy(),
        humidity_ratio=w.copy(),
        density=density,
        viscosity=mu,
        kinematic_viscosity=mu / density,
        conductivity=k,
        specific_heat=cp,
        prandtl=mu * cp / k,
    )


def _check_not_supersaturated(
    t_c: NDArray[np.float64], p: NDArray[np.float64], x_w: NDArray[np.float64]
) -> None:
    """Refuse a vapour partial pressure above saturation (fog or condensate)."""
    wet = x_w > 0.0
    if not wet.any():
        return
    t_crit_c = _WATER_T_CRIT - KELVIN
    t_k = np.clip(t_c, -100.0, t_crit_c) + KELVIN
    p_sat = np.where(t_k >= _TRIPLE_T, _psat_liquid(t_k), _psat_ice(t_k))
    p_sat = np.where(t_c > t_crit_c, np.inf, p_sat)
    p_sat = np.where(t_c < -100.0, 0.0, p_sat)
    bad = wet & (x_w * p > p_sat * (1.0 + 1e-9))
    if bad.any():
        i = np.flatnonzero(bad.ravel())[0]
        t_i, p_i = float(t_c.ravel()[i]), float(p.ravel()[i])
        w_max = float(_ratio_from_partial_pressure(np.minimum(p_sat.ravel()[i], p_i), p_i))
        raise ThermalInputError(
            f"humidity_ratio: vapour above saturation at {t_i:.6g} °C and {p_i:.6g} Pa; "
            f"at most {w_max:.6g} kg/kg is possible there"
        )
