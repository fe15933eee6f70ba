"""Thermal properties of foods from their composition.

Density, specific heat and thermal conductivity follow the Choi & Okos (1986)
component equations with the mixture rules printed in the ASHRAE Handbook —
Refrigeration, chapter "Thermal Properties of Foods", except the specific heat
of liquid water from 0 °C up, which follows Popiel & Wojtkowiak (1998) and
tracks IAPWS-95 within 0.15 % from 0 to 150 °C: the printed Choi–Okos
quadratics for water run up to 2.2 % (constant 4.1289) or 1.0 % (constant
4.1762) below IAPWS-95 near 0 °C, and a low water cp makes every cook and
chill time short. Below 0 °C the unfrozen water takes the separate sub-zero
Choi–Okos equation. The conductivity of water follows the Ramires et al.
(1995) reference correlation instead of the Choi–Okos quadratic, which runs
1-2.8 % above IAPWS (2011) from 0 to 20 °C: a high k makes every cook and
chill time short. Below the initial freezing point part of the water is ice:
the ice fraction follows the Schwartzberg (1976) form with bound water, ice is
then treated as one more component, and the latent heat of the ice formed is
carried in the enthalpy and in the apparent specific heat.

Temperatures are in °C throughout (the physics uses differences); every other
quantity is SI: kg/m3, J/(kg K), W/(m K), m2/s, J/kg.

Two property sets implement the same protocol, :class:`ThermalProperties`:

- :class:`FoodProperties` from a :class:`Composition` (mass fractions);
- :class:`ConstantProperties` from measured k, rho, cp (and, optionally, a
  freezing point and latent heat).

Both are vectorised over temperature and precompute what they can at
construction, so that a numerical enthalpy solver can call them on thousands
of cells per step: enthalpy and apparent specific heat are closed-form
polynomials in t (half-integer powers in the water term above 0 °C, a
logarithm below freezing), and the inverse
``temperature_from_enthalpy`` interpolates a fine monotone table built once
per instance.

Range: the Choi–Okos equations are fitted for -40 to 150 °C. Outside that
range every component property is held at the value at the nearest end of the
range and the enthalpy continues linearly with the end specific heat, so that
``d(enthalpy)/dT == specific_heat`` everywhere. Temperatures at or below
absolute zero are refused.

References
----------
.. [1] Choi, Y. and Okos, M. R. (1986). Effects of temperature and composition
   on the thermal properties of foods. In: Le Maguer, M. and Jelen, P. (eds.),
   *Food Engineering and Process Applications*, Vol. 1, pp. 93-101. Elsevier
   Applied Science, London.
.. [2] ASHRAE Handbook — Refrigeration, chapter "Thermal Properties of Foods"
   (component equations, Table 1; mixture rules for density, specific heat
   and conductivity; ice fraction; latent heat 333.6 kJ/kg).
.. [3] Schwartzberg, H. G. (1976). Effective heat capacities for the freezing
   and thawing of food. *Journal of Food Science* 41(1), 152-156 (ice
   fraction with bound water; bound water about 0.4 x protein, as quoted in
   [2]).
.. [4] Pham, Q. T. (1996). Prediction of calorimetric properties and freezing
   time of foods from composition data. *Journal of Food Engineering* 30,
   95-107 (initial freezing point from composition).
.. [5] Maxwell, J. C. (1873). *A Treatise on Electricity and Magnetism*;
   Eucken, A. (1940). Allgemeine Gesetzmäßigkeiten für das Wärmeleitvermögen
   verschiedener Stoffarten und Aggregatzustände. *Forschung auf dem Gebiete
   des Ingenieurwesens* 11, 6-20 (Maxwell–Eucken model, as given in [2]).
.. [6] Popiel, C. O. and Wojtkowiak, J. (1998). Simple formulas for
   thermophysical properties of liquid water for heat transfer calculations
   (from 0 °C to 150 °C). *Heat Transfer Engineering* 19(3), 87-101
   (specific heat of saturated liquid water, fitted to IAPWS data).
.. [7] Ramires, M. L. V., Nieto de Castro, C. A., Nagasaka, Y., Nagashima,
   A., Assael, M. J. and Wakeham, W. A. (1995). Standard reference data for
   the thermal conductivity of water. *Journal of Physical and Chemical
   Reference Data* 24(3), 1377-1381 (liquid water at 0.1 MPa, 274-370 K).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field, fields
from typing import Protocol, runtime_checkable

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal._checks import as_float_array, in_range, positive, temperature_c
from thermal.errors import ThermalInputError

FloatArray = NDArray[np.float64]

T_LOW = -40.0
"""Lower end of the Choi–Okos fitting range and enthalpy reference [°C]."""
T_HIGH = 150.0
"""Upper end of the Choi–Okos fitting range [°C]."""
LATENT_HEAT_ICE = 333.6e3
"""Latent heat of fusion of water at 0 °C [J/kg] (ASHRAE, Thermal Properties of Foods)."""
BOUND_WATER_PER_PROTEIN = 0.4
"""Bound (unfreezable) water per kg of protein [-], Schwartzberg (1976) as quoted by ASHRAE."""
SUM_TOLERANCE = 1e-3
"""Accepted deviation of the sum of mass fractions from 1 [-]."""
MIN_DEPRESSION = 0.01
"""Smallest freezing-point depression used [K].

A numerical floor (ours, not a published value): the Schwartzberg ice
fraction needs a freezing point below 0 °C, so an estimate closer to 0 °C than
this (nearly pure water) is set to -0.01 °C, which releases the latent heat
within a few hundredths of a kelvin of 0 °C.
"""

COMPONENTS: tuple[str, ...] = ("water", "ice", "protein", "fat", "carbohydrate", "fiber", "ash")
"""Component order used in every coefficient table below."""

# Choi & Okos (1986) as printed in the ASHRAE Handbook — Refrigeration, "Thermal
# Properties of Foods", Table 1: property = c0 + c1 t + c2 t**2, t in °C.
_DENSITY = np.array(  # [kg/m3]
    [
        [997.18, 3.1439e-3, -3.7574e-3],  # water
        [916.89, -0.13071, 0.0],  # ice
        [1329.9, -0.5184, 0.0],  # protein
        [925.59, -0.41757, 0.0],  # fat
        [1599.1, -0.31046, 0.0],  # carbohydrate
        [1311.5, -0.36589, 0.0],  # fiber
        [2423.8, -0.28063, 0.0],  # ash
    ]
)
# Specific heat below 0 °C: every row Choi & Okos (1986) as in Table 1; the
# water row is their separate sub-zero equation for -40 to 0 °C (coefficients
# from memory of Choi & Okos), the unfrozen water of a frozen food.
_SPECIFIC_HEAT = 1e3 * np.array(  # [J/(kg K)] (printed in kJ/(kg K))
    [
        [4.0817, -5.3062e-3, 9.9516e-4],  # water, -40 to 0 °C
        [2.0623, 6.0769e-3, 0.0],  # ice
        [2.0082, 1.2089e-3, -1.3129e-6],  # protein
        [1.9842, 1.4733e-3, -4.8008e-6],  # fat
        [1.5488, 1.9625e-3, -5.9399e-6],  # carbohydrate
        [1.8459, 1.8306e-3, -4.6509e-6],  # fiber
        [1.0926, 1.8896e-3, -3.6817e-6],  # ash
    ]
)
# Specific heat from 0 °C: c0 + c1 t + c15 t**1.5 + c2 t**2 + c25 t**2.5. The
# water row is Popiel & Wojtkowiak (1998), saturated liquid water 0-150 °C
# (coefficients from memory; tests check it against IAPWS-95 within 0.5 %);
# the other rows are the Choi–Okos quadratics above.
_SPECIFIC_HEAT_ABOVE_ZERO = np.zeros((len(_SPECIFIC_HEAT), 5))
_SPECIFIC_HEAT_ABOVE_ZERO[:, [0, 1, 3]] = _SPECIFIC_HEAT
_SPECIFIC_HEAT_ABOVE_ZERO[0] = 1e3 * np.array(
    [4.2174356, -5.6181625e-3, 1.2992528e-3, -1.1535353e-4, 4.14964e-6]
)
# Conductivity: water is :func:`_water_conductivity` (Ramires et al. 1995), not
# the Choi–Okos quadratic 0.57109 + 1.7625e-3 t - 6.7036e-6 t**2, which runs
# 1-2.8 % above IAPWS (2011) from 0 to 20 °C.
_CONDUCTIVITY = np.array(  # [W/(m K)]
    [
        [np.nan, np.nan, np.nan],  # water: see _water_conductivity
        [2.2196, -6.2489e-3, 1.0154e-4],  # ice
        [0.17881, 1.1958e-3, -2.7178e-6],  # protein
        [0.18071, -2.7604e-4, -1.7749e-7],  # fat
        [0.20141, 1.3874e-3, -4.3312e-6],  # carbohydrate
        [0.18331, 1.2497e-3, -3.1683e-6],  # fiber
        [0.32962, 1.4011e-3, -2.9069e-6],  # ash
    ]
)
_COEFFICIENTS = {
    "density": _DENSITY,
    "specific_heat": _SPECIFIC_HEAT,
    "conductivity": _CONDUCTIVITY,
}
_WATER, _ICE = 0, 1


def _poly(coefficients: FloatArray, t: FloatArray) -> FloatArray:
    """Evaluate c0 + c1 t + c2 t² for each row of ``coefficients`` -> shape (rows, *t.shape)."""
    c = coefficients.reshape(coefficients.shape[0], 3, *([1] * t.ndim))
    return c[:, 0] + t * (c[:, 1] + t * c[:, 2])


def _above_zero(c: FloatArray, t: FloatArray) -> FloatArray:
    """c0 + c1 t + c15 t^1.5 + c2 t² + c25 t^2.5 for t >= 0; ``c`` has the five on axis 0."""
    r = np.sqrt(t)
    return c[0] + t * (c[1] + r * c[2] + t * (c[3] + r * c[4]))


def _above_zero_integral(c: FloatArray, t: FloatArray) -> FloatArray:
    """∫_0^t of :func:`_above_zero` for t >= 0."""
    r = np.sqrt(t)
    return t * (c[0] + t * (c[1] / 2.0 + r * c[2] / 2.5 + t * (c[3] / 3.0 + r * c[4] / 3.5)))


# Ramires et al. (1995), liquid water at 0.1 MPa, 274-370 K (coefficients from
# memory; tests check it against IAPWS 2011 in CoolProp):
# k / k* = a0 + a1 (T/T*) + a2 (T/T*)**2 with T* = 298.15 K, k* = 0.6065 W/(m K).
_RAMIRES_K_REF = 0.6065  # [W/(m K)]
_RAMIRES_T_REF = 298.15  # [K]
_RAMIRES = (-1.48445, 4.12292, -1.63866)
WATER_K_PEAK_T = -_RAMIRES[1] / (2.0 * _RAMIRES[2]) * _RAMIRES_T_REF - 273.15
"""Temperature of the maximum of the water conductivity form [°C] (about 102 °C).

Above it the water conductivity is held at its maximum (0.6726 W/(m K)), up to
1.6 % below IAPWS (2011) to 150 °C, where the quadratic itself would fall 5 %
below: the lower value is the slow (safe) side for heating and cooling."""


def _water_conductivity(t: FloatArray) -> FloatArray:
    """Thermal conductivity of (liquid or unfrozen) water [W/(m K)] at ``t`` [°C].

    Ramires et al. (1995) from -40 °C to :data:`WATER_K_PEAK_T`, constant
    above. Below 0 °C (outside the published 274-370 K) the form is continued:
    it stays below the Choi–Okos water equation, within 0.5 % of IAPWS's
    supercooled liquid to -5 °C and 4 % to -20 °C (ice, which the ice fraction
    carries, dominates a frozen food's conductivity there).
    """
    x = (np.minimum(t, WATER_K_PEAK_T) + 273.15) / _RAMIRES_T_REF
    a0, a1, a2 = _RAMIRES
    return _RAMIRES_K_REF * (a0 + x * (a1 + x * a2))


def _conductivities(t: FloatArray) -> FloatArray:
    """Component conductivities [W/(m K)] at ``t`` [°C] -> shape (7, *t.shape)."""
    k = _poly(_CONDUCTIVITY, t)
    k[_WATER] = _water_conductivity(t)
    return k


def _specific_heats(t: FloatArray) -> FloatArray:
    """Component specific heats [J/(kg K)] at ``t`` [°C] -> shape (7, *t.shape)."""
    below = _poly(_SPECIFIC_HEAT, t)
    c = _SPECIFIC_HEAT_ABOVE_ZERO.T.reshape(5, len(COMPONENTS), *([1] * t.ndim))
    above = _above_zero(c, np.maximum(t, 0.0))
    return np.where(t < 0.0, below, above)


def _component_values(prop: str, rows: slice, t: FloatArray) -> FloatArray:
    if prop == "specific_heat":
        return _specific_heats(t)[rows]
    if prop == "conductivity":
        return _conductivities(t)[rows]
    return _poly(_COEFFICIENTS[prop][rows], t)


def component_property(component: str, prop: str, temperature: ArrayLike) -> FloatArray:
    """Property of one pure food component (Choi–Okos; water cp as noted).

    Parameters
    ----------
    component : str
        One of ``"water"``, ``"ice"``, ``"protein"``, ``"fat"``,
        ``"carbohydrate"``, ``"fiber"``, ``"ash"``.
    prop : str
        ``"density"`` [kg/m3], ``"specific_heat"`` [J/(kg K)] or
        ``"conductivity"`` [W/(m K)].
    temperature : array_like
        Temperature [°C]; the equations are fitted for -40 to 150 °C and are
        evaluated as printed (no clipping) by this function.

    Returns
    -------
    ndarray
        The property, same shape as ``temperature``.

    Notes
    -----
    The specific heat of water is the sub-zero Choi–Okos equation below 0 °C
    and the Popiel & Wojtkowiak (1998) liquid-water form from 0 °C (within
    0.15 % of IAPWS-95 from 0 to 150 °C). The two published forms do not meet:
    at 0 °C the sub-zero one gives 4081.7 J/(kg K), 3.2 % below the liquid
    value, so the water cp steps at 0 °C (the enthalpy stays continuous).
    The conductivity of water is Ramires et al. (1995), held at its maximum
    above about 102 °C (see :func:`_water_conductivity`), within 0.6 % of
    IAPWS (2011) from 0 to 98 °C and at most 1.6 % below it to 150 °C.

    References
    ----------
    .. [1] Choi & Okos (1986), as printed in the ASHRAE Handbook —
       Refrigeration, "Thermal Properties of Foods", Table 1.
    .. [2] Popiel & Wojtkowiak (1998), Heat Transfer Eng. 19(3), 87-101.
    .. [3] Ramires et al. (1995), J. Phys. Chem. Ref. Data 24(3), 1377-1381.
    """
    if component not in COMPONENTS:
        raise ThermalInputError(
            f"component: must be one of {', '.join(COMPONENTS)}, got {component!r}"
        )
    if prop not in _COEFFICIENTS:
        raise ThermalInputError(f"prop: must be one of {', '.join(_COEFFICIENTS)}, got {prop!r}")
    t = temperature_c("temperature", temperature)
    row = COMPONENTS.index(component)
    return _component_values(prop, slice(row, row + 1), t)[0]


# --------------------------------------------------------------------------- composition


@dataclass(frozen=True)
class Composition:
    """Mass fractions of a food's main components (proximate composition).

    Parameters
    ----------
    water : float
        Water content, total (free plus bound) [kg/kg].
    protein : float
        Protein [kg/kg].
    fat : float
        Fat [kg/kg].
    carbohydrate : float
        Carbohydrate other than fibre [kg/kg]. Food tables often print *total*
        carbohydrate including fibre (as the ASHRAE table does): subtract the
        fibre first.
    fiber : float
        Dietary fibre [kg/kg].
    ash : float
        Ash (minerals, salt) [kg/kg].

    Each fraction must lie in [0, 1] and their sum must be 1 within 1e-3;
    otherwise :class:`thermal.errors.ThermalInputError` names the field or the
    sum. :meth:`normalised` scales a composition to sum exactly 1.
    """

    water: float
    protein: float
    fat: float
    carbohydrate: float = 0.0
    fiber: float = 0.0
    ash: float = 0.0

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            arr = in_range(f"composition.{f.name}", value, 0.0, 1.0)
            if arr.ndim != 0:
                raise ThermalInputError(
                    f"composition.{f.name}: must be a single number, got {value!r}"
                )
            object.__setattr__(self, f.name, float(arr))
        total = self.total
        if abs(total - 1.0) > SUM_TOLERANCE:
            parts = " + ".join(f"{f.name} {getattr(self, f.name):g}" for f in fields(self))
            raise ThermalInputError(
                f"composition: mass fractions sum to {total:.4f} ({parts}); "
                f"accepted: 1 within {SUM_TOLERANCE:g} (use fractions, not percent)"
            )

    @property
    def total(self) -> float:
        """Sum of the six mass fractions [-]."""
        return sum(getattr(self, f.name) for f in fields(self))

    @property
    def solids(self) -> float:
        """Dry matter, 1 - water [kg/kg]."""
        return 1.0 - self.water

    def as_array(self) -> FloatArray:
        """Fractions in :data:`COMPONENTS` order, with ice = 0 [kg/kg]."""
        return np.array(
            [self.water, 0.0, self.protein, self.fat, self.carbohydrate, self.fiber, self.ash]
        )

    def normalised(self) -> Composition:
        """The same composition scaled so the fractions sum to exactly 1."""
        total = self.total
        return Composition(**{f.name: getattr(self, f.name) / total for f in fields(self)})

    @classmethod
    def from_mapping(cls, mapping: Mapping[str, float] | None) -> Composition:
        """Build from a mapping such as a parsed configuration block.

        Keys are the field names; ``water``, ``protein`` and ``fat`` are
        required, the others default to 0. Unknown keys are refused.
        """
        if mapping is None:
            raise ThermalInputError(
                "composition: missing; give mass fractions of water, protein, fat "
                "(and carbohydrate, fiber, ash)"
            )
        names = [f.name for f in fields(cls)]
        unknown = sorted(set(mapping) - set(names))
        if unknown:
            raise ThermalInputError(
                f"composition: unknown field(s) {', '.join(unknown)}; accepted: {', '.join(names)}"
            )
        for required in ("water", "protein", "fat"):
            if required not in mapping:
                raise ThermalInputError(
                    f"composition.{required}: missing; give its mass fraction (0 if none)"
                )
        return cls(**{k: mapping[k] for k in names if k in mapping})

    @classmethod
    def from_percent(
        cls,
        water: float,
        protein: float,
        fat: float,
        carbohydrate: float = 0.0,
        fiber: float = 0.0,
        ash: float = 0.0,
    ) -> Composition:
        """Build from percentages by mass (as food tables print them) [%]."""
        return cls(
            water / 100, protein / 100, fat / 100, carbohydrate / 100, fiber / 100, ash / 100
        )


def pham_freezing_point(composition: Composition) -> float:
    """Initial freezing point estimated from composition (Pham 1996).

    ``t_f = -4.66 x_o / x_w - 46.4 x_a / x_w`` with ``x_w`` water, ``x_a``
    ash and ``x_o`` the other dissolved-capable solids. We take ``x_o`` as
    protein + carbohydrate + fibre (fat, being insoluble in water, does not
    depress the freezing point); this reading of "other components" is ours.

    Parameters
    ----------
    composition : Composition
        Mass fractions.

    Returns
    -------
    float
        Estimated initial freezing point [°C], at most ``-MIN_DEPRESSION``.
        ``-inf`` for a food without water.

    References
    ----------
    .. [1] Pham, Q. T. (1996). Prediction of calorimetric properties and
       freezing time of foods from composition data. *Journal of Food
       Engineering* 30, 95-107.
    """
    if composition.water <= 0.0:
        return float("-inf")
    other = composition.protein + composition.carbohydrate + composition.fiber
    estimate = -4.66 * other / composition.water - 46.4 * composition.ash / composition.water
    return min(estimate, -MIN_DEPRESSION)


# --------------------------------------------------------------------------- conductivity models


def _parallel(k: FloatArray, v: FloatArray) -> FloatArray:
    return np.einsum("i...,i...->...", v, k)


def _series(k: FloatArray, v: FloatArray) -> FloatArray:
    return 1.0 / np.einsum("i...,i...->...", v, 1.0 / k)


def _maxwell(k_c: FloatArray, k_d: FloatArray, v_d: FloatArray) -> FloatArray:
    """Maxwell–Eucken for several dispersed phases in one continuous phase.

    ``(k - k_c)/(k + 2 k_c) = Σ v_d (k_d - k_c)/(k_d + 2 k_c)`` (volume
    fractions of the whole), which for one dispersed phase is the ASHRAE form
    ``k = k_c (2k_c + k_d - 2v_d(k_c - k_d)) / (2k_c + k_d + v_d(k_c - k_d))``.
    """
    s = np.sum(v_d * (k_d - k_c) / (k_d + 2.0 * k_c), axis=0)
    return k_c * (1.0 + 2.0 * s) / (1.0 - s)


def _maxwell_eucken(k: FloatArray, v: FloatArray) -> FloatArray:
    # Step 1: the unfrozen matrix, liquid water continuous, solids dispersed
    # (volume fractions relative to the non-ice volume).
    v_ice = v[_ICE]
    v_matrix = 1.0 - v_ice
    safe = np.where(v_matrix > 0.0, v_matrix, 1.0)
    solids = slice(2, None)
    k_matrix = _maxwell(k[_WATER], k[solids], v[solids] / safe)
    # Step 2: ice continuous with the unfrozen matrix dispersed in it. At the
    # freezing point (no ice) this reduces exactly to the matrix value.
    k_step2 = _maxwell(k[_ICE], k_matrix[np.newaxis], v_matrix[np.newaxis])
    return np.where(v_ice > 0.0, k_step2, k_matrix)


@dataclass(frozen=True)
class ConductivityModel:
    """One entry of :data:`CONDUCTIVITY_MODELS`.

    Attributes
    ----------
    name : str
        Human-readable name.
    function : callable
        ``function(k, v) -> k_mix`` with component conductivities ``k`` and
        volume fractions ``v`` stacked along axis 0 in :data:`COMPONENTS`
        order [W/(m K)], [-].
    reference : str
        Published source.
    """

    name: str
    function: Callable[[FloatArray, FloatArray], FloatArray] = field(repr=False)
    reference: str


CONDUCTIVITY_MODELS: dict[str, ConductivityModel] = {
    "parallel": ConductivityModel(
        "parallel (volume-weighted mean)",
        _parallel,
        "ASHRAE Handbook — Refrigeration, Thermal Properties of Foods (parallel model)",
    ),
    "series": ConductivityModel(
        "series (volume-weighted harmonic mean)",
        _series,
        "ASHRAE Handbook — Refrigeration, Thermal Properties of Foods (series model)",
    ),
    "maxwell_eucken": ConductivityModel(
        "Maxwell–Eucken, two steps: solids dispersed in liquid water, then the "
        "unfrozen matrix dispersed in continuous ice",
        _maxwell_eucken,
        "Maxwell (1873); Eucken (1940); as given in ASHRAE Handbook — Refrigeration, "
        "Thermal Properties of Foods",
    ),
}
"""Registry of mixture conductivity models, key -> :class:`ConductivityModel`."""


# --------------------------------------------------------------------------- enthalpy model


def _antiderivative(c: FloatArray, t: FloatArray) -> FloatArray:
    """∫ (c0 + c1 τ + c2 τ²) dτ evaluated at ``t`` (zero at 0)."""
    return t * (c[0] + t * (c[1] / 2.0 + t * c[2] / 3.0))


@dataclass(frozen=True)
class _Enthalpy:
    """Apparent specific heat, enthalpy and ice fraction of one material.

    Sensible specific heat ``c_s(t) = a(t) + x_ice(t) d(t)``: ``a`` (all water
    liquid) is the quadratic ``a_below`` below 0 °C and the five-term form
    ``a_above`` (powers 0, 1, 1.5, 2, 2.5) from 0 °C; ``d`` (ice minus
    water, per kg of ice) is quadratic. Ice fraction ``x_ice = A (1 - t_f/t)``
    below ``t_f`` < 0 (Schwartzberg form), and ``H(t) = ∫_{-40}^{t} c_s dτ -
    L0 (x_ice(t) - x_ice(-40))``. Outside [-40, 150] °C the properties are
    frozen at the end values and H continues linearly, so dH/dt equals the
    apparent specific heat everywhere.
    """

    a_below: FloatArray  # (3,) [J/(kg K)]
    a_above: FloatArray  # (5,) [J/(kg K)]
    d: FloatArray  # (3,) [J/(kg K)]
    freezable: float  # A: ice fraction approached far below t_f [kg/kg]
    t_f: float  # initial freezing point [°C] (-inf: no freezing in range)
    latent: float = LATENT_HEAT_ICE
    table_t: FloatArray = field(init=False, repr=False)
    table_h: FloatArray = field(init=False, repr=False)
    h_high: float = field(init=False, repr=False)
    cp_low: float = field(init=False, repr=False)
    cp_high: float = field(init=False, repr=False)

    def __post_init__(self) -> None:
        freezes = self.freezable > 0.0 and self.t_f > T_LOW
        object.__setattr__(self, "freezable", self.freezable if freezes else 0.0)
        object.__setattr__(self, "t_f", self.t_f if freezes else float("-inf"))
        object.__setattr__(self, "cp_low", float(self._cp_inside(np.array(T_LOW))))
        object.__setattr__(self, "cp_high", float(self._cp_inside(np.array(T_HIGH))))
        object.__setattr__(self, "h_high", float(self._h_inside(np.array(T_HIGH))))
        if freezes:
            # geometric spacing of |t| below t_f (relative step 0.2 %) where the
            # latent release is steep, 0.05 K steps above (nodes at t_f and 0 °C).
            n_low = int(np.ceil(np.log(T_LOW / self.t_f) / np.log1p(2e-3))) + 1
            below = self.t_f * np.geomspace(1.0, T_LOW / self.t_f, n_low)[::-1]
            n_high = int(np.ceil((T_HIGH - self.t_f) / 0.05)) + 1
            above = np.linspace(self.t_f, T_HIGH, n_high)[1:]
            grid = np.concatenate([below, above])
        else:
            grid = np.linspace(T_LOW, T_HIGH, int((T_HIGH - T_LOW) / 0.05) + 1)
        # a node at 0 °C, where the water cp changes equation (a kink in H)
        grid = np.union1d(grid[np.abs(grid) > 1e-9], [0.0])
        object.__setattr__(self, "table_t", grid)
        object.__setattr__(self, "table_h", self._h_inside(grid))

    # -- inside [-40, 150] ------------------------------------------------------
    def _ice_inside(self, t: FloatArray) -> FloatArray:
        if self.freezable == 0.0:
            return np.zeros_like(t)
        below = t < self.t_f
        safe = np.where(below, t, self.t_f)
        return np.where(below, self.freezable * (1.0 - self.t_f / safe), 0.0)

    def _cp_inside(self, t: FloatArray) -> FloatArray:
        a, d = self.a_below, self.d
        cp = np.where(
            t < 0.0, a[0] + t * (a[1] + t * a[2]), _above_zero(self.a_above, np.maximum(t, 0.0))
        )
        if self.freezable == 0.0:
            return cp
        below = t < self.t_f
        safe = np.where(below, t, self.t_f)
        ice = self.freezable * (1.0 - self.t_f / safe)
        dice_dt = self.freezable * self.t_f / safe**2  # negative
        extra = ice * (d[0] + safe * (d[1] + safe * d[2])) - self.latent * dice_dt
        return cp + np.where(below, extra, 0.0)

    def _h_inside(self, t: FloatArray) -> FloatArray:
        low = np.array(T_LOW)
        sensible = np.where(
            t < 0.0,
            _antiderivative(self.a_below, t),
            _above_zero_integral(self.a_above, np.maximum(t, 0.0)),
        )
        h = sensible - _antiderivative(self.a_below, low)
        if self.freezable == 0.0:
            return h
        d, t_f, big_a = self.d, self.t_f, self.freezable

        def g(u: FloatArray) -> FloatArray:  # ∫ (1 - t_f/τ) d(τ) dτ, τ < 0
            return _antiderivative(d, u) - t_f * (d[0] * np.log(-u) + d[1] * u + d[2] * u**2 / 2.0)

        u = np.minimum(t, t_f)
        h = h + big_a * (g(u) - g(low))
        ice_low = big_a * (1.0 - t_f / T_LOW)
        return h - self.latent * (self._ice_inside(t) - ice_low)

    # -- public, whole temperature axis -----------------------------------------
    def ice_fraction(self, t: FloatArray) -> FloatArray:
        return self._ice_inside(np.clip(t, T_LOW, T_HIGH))

    def specific_heat(self, t: FloatArray) -> FloatArray:
        return self._cp_inside(np.clip(t, T_LOW, T_HIGH))

    def enthalpy(self, t: FloatArray) -> FloatArray:
        inside = self._h_inside(np.clip(t, T_LOW, T_HIGH))
        return np.where(
            t < T_LOW,
            self.cp_low * (t - T_LOW),
            np.where(t > T_HIGH, self.h_high + self.cp_high * (t - T_HIGH), inside),
        )

    def temperature(self, h: FloatArray) -> FloatArray:
        inside = np.interp(h, self.table_h, self.table_t)
        return np.where(
            h < 0.0,
            T_LOW + h / self.cp_low,
            np.where(h > self.h_high, T_HIGH + (h - self.h_high) / self.cp_high, inside),
        )


# --------------------------------------------------------------------------- property sets


@runtime_checkable
class ThermalProperties(Protocol):
    """What the solvers need from a material (all vectorised over T [°C]).

    ``specific_heat`` is the apparent specific heat (latent heat included
    below the initial freezing point) and ``enthalpy`` its integral, zero at
    -40 °C.
    """

    @property
    def freezing_point(self) -> float | None: ...

    @property
    def latent_heat(self) -> float: ...

    def density(self, temperature: ArrayLike) -> FloatArray: ...

    def specific_heat(self, temperature: ArrayLike) -> FloatArray: ...

    def conductivity(self, temperature: ArrayLike) -> FloatArray: ...

    def diffusivity(self, temperature: ArrayLike) -> FloatArray: ...

    def enthalpy(self, temperature: ArrayLike) -> FloatArray: ...

    def temperature_from_enthalpy(self, enthalpy: ArrayLike) -> FloatArray: ...

    def ice_fraction(self, temperature: ArrayLike) -> FloatArray: ...


def _temperature(value: ArrayLike) -> FloatArray:
    return temperature_c("temperature", value)


def _enthalpy_arg(value: ArrayLike) -> FloatArray:
    return as_float_array("enthalpy", value)


class FoodProperties:
    """Thermal properties of a food computed from its composition.

    Parameters
    ----------
    composition : Composition
        Mass fractions (required); scaled internally to sum exactly 1.
    freezing_point : float, optional
        Initial freezing point [°C], in [-100, -0.01]. ``None`` estimates it
        from the composition with :func:`pham_freezing_point` (Pham 1996).
    conductivity_model : str
        Key of :data:`CONDUCTIVITY_MODELS`: ``"parallel"`` (default),
        ``"series"`` or ``"maxwell_eucken"``.
    bound_water : float, optional
        Water that never freezes [kg/kg of food], in [0, water]. ``None``
        uses 0.4 x protein (Schwartzberg 1976, as quoted by ASHRAE).

    Notes
    -----
    - Above the freezing point all water is liquid. Below it the ice fraction
      is ``x_ice = (x_w - x_b)(1 - t_f/t)`` (Schwartzberg form, t in °C), the
      unfrozen water is ``x_w - x_ice`` and ice is a component with its own
      Choi–Okos density, specific heat and conductivity. Water cp is the
      sub-zero Choi–Okos equation below 0 °C and Popiel & Wojtkowiak (1998)
      from 0 °C; water k is Ramires et al. (1995) (see
      :func:`component_property`).
    - Density ``1/Σ(x_i/ρ_i)``, specific heat ``Σ x_i c_i`` (mass fractions),
      conductivity by the chosen model with volume fractions
      ``v_i = (x_i/ρ_i) ρ``. No porosity (solid foods).
    - Apparent specific heat = sensible ``Σ x_i c_i`` plus
      ``-L0 d(x_ice)/dt`` with L0 = 333.6 kJ/kg; the enthalpy (0 J/kg at
      -40 °C) is its exact integral. The cp steps up at the freezing point
      (the Schwartzberg ice curve has a finite slope there); the enthalpy is
      continuous.
    - ``latent_heat`` is L0 x_w, the quantity the ASHRAE food tables print;
      the enthalpy releases only the freezable water, so use enthalpy
      differences for energy balances.
    - ``diffusivity`` = k / (ρ cp) with the apparent cp (an effective value
      below freezing).

    References
    ----------
    .. [1] Choi & Okos (1986); ASHRAE Handbook — Refrigeration, "Thermal
       Properties of Foods" (see module references).
    .. [2] Schwartzberg (1976), J. Food Sci. 41, 152-156.
    .. [3] Pham (1996), J. Food Eng. 30, 95-107.
    .. [4] Popiel & Wojtkowiak (1998), Heat Transfer Eng. 19(3), 87-101.
    """

    def __init__(
        self,
        composition: Composition | None,
        freezing_point: float | None = None,
        conductivity_model: str = "parallel",
        bound_water: float | None = None,
    ) -> None:
        if composition is None:
            raise ThermalInputError(
                "composition: missing; give a Composition of mass fractions "
                "(water, protein, fat, carbohydrate, fiber, ash)"
            )
        if not isinstance(composition, Composition):
            raise ThermalInputError(
                f"composition: must be a Composition, got {type(composition).__name__}"
            )
        if conductivity_model not in CONDUCTIVITY_MODELS:
            raise ThermalInputError(
                f"conductivity_model: must be one of {', '.join(CONDUCTIVITY_MODELS)}, "
                f"got {conductivity_model!r}"
            )
        self.composition = composition
        self.conductivity_model = conductivity_model
        self._conductivity_fn = CONDUCTIVITY_MODELS[conductivity_model].function
        x = composition.normalised().as_array()
        self._x = x
        water = float(x[_WATER])

        if bound_water is None:
            x_b = min(BOUND_WATER_PER_PROTEIN * float(x[2]), water)
        else:
            x_b = float(in_range("bound_water", bound_water, 0.0, max(water, 0.0)))
        self.bound_water = x_b
        freezable = water - x_b

        if freezing_point is None:
            t_f = pham_freezing_point(composition) if freezable > 0.0 else None
            if t_f is not None and not np.isfinite(t_f):
                t_f = None
        else:
            t_f = float(in_range("freezing_point", freezing_point, -100.0, -MIN_DEPRESSION))
        self._freezing_point = t_f
        self._model = _Enthalpy(
            a_below=x @ _SPECIFIC_HEAT,
            a_above=x @ _SPECIFIC_HEAT_ABOVE_ZERO,
            d=_SPECIFIC_HEAT[_ICE] - _SPECIFIC_HEAT[_WATER],
            freezable=freezable if t_f is not None else 0.0,
            t_f=t_f if t_f is not None else float("-inf"),
        )
        # ASHRAE table convention L0 x_w, when ice forms within -40..150 °C
        self._latent_heat = LATENT_HEAT_ICE * water if self._model.freezable > 0.0 else 0.0
        # k and rho are the costly ones (seven components, volume fractions):
        # tabulate once on the enthalpy grid, which has a node at the freezing
        # point where both have a kink; np.interp holds the end values outside
        # [-40, 150] °C, the same rule as the closed forms.
        self._grid = self._model.table_t
        self._rho_table = self._density_exact(self._grid)
        self._k_table = self._conductivity_exact(self._grid)

    def __repr__(self) -> str:
        return (
            f"FoodProperties({self.composition!r}, freezing_point={self._freezing_point!r}, "
            f"conductivity_model={self.conductivity_model!r}, bound_water={self.bound_water!r})"
        )

    @property
    def freezing_point(self) -> float | None:
        """Initial freezing point [°C], ``None`` when the food has no freezable water."""
        return self._freezing_point

    @property
    def latent_heat(self) -> float:
        """Latent heat of fusion of the food's water, L0 x_w [J/kg] (0 if it does not freeze)."""
        return self._latent_heat

    def _fractions(self, t: FloatArray) -> FloatArray:
        """Mass fractions per component at ``t`` (ice taken from the water), shape (7, *t)."""
        ice = self._model.ice_fraction(t)
        x = np.broadcast_to(self._x.reshape(-1, *([1] * t.ndim)), (len(COMPONENTS), *t.shape))
        x = x.copy()
        x[_WATER] -= ice
        x[_ICE] = ice
        return x

    def ice_fraction(self, temperature: ArrayLike) -> FloatArray:
        """Mass fraction of ice [kg/kg]; 0 at and above the freezing point."""
        return self._model.ice_fraction(_temperature(temperature))

    def _density_exact(self, t: FloatArray) -> FloatArray:
        tc = np.clip(t, T_LOW, T_HIGH)
        return 1.0 / np.sum(self._fractions(tc) / _poly(_DENSITY, tc), axis=0)

    def _conductivity_exact(self, t: FloatArray) -> FloatArray:
        tc = np.clip(t, T_LOW, T_HIGH)
        x = self._fractions(tc)
        spec_vol = x / _poly(_DENSITY, tc)
        v = spec_vol / np.sum(spec_vol, axis=0)
        return self._conductivity_fn(_conductivities(tc), v)

    def density(self, temperature: ArrayLike) -> FloatArray:
        """Density ``1/Σ(x_i/ρ_i)`` with ice below freezing [kg/m3].

        Interpolated in a table built at construction on the enthalpy grid
        (node at the freezing point; relative error below 1e-5).
        """
        return np.interp(_temperature(temperature), self._grid, self._rho_table)

    def specific_heat(self, temperature: ArrayLike) -> FloatArray:
        """Apparent specific heat, latent heat included below freezing [J/(kg K)]."""
        return self._model.specific_heat(_temperature(temperature))

    def sensible_specific_heat(self, temperature: ArrayLike) -> FloatArray:
        """Specific heat ``Σ x_i c_i`` without the latent part [J/(kg K)]."""
        t = np.clip(_temperature(temperature), T_LOW, T_HIGH)
        return np.sum(self._fractions(t) * _specific_heats(t), axis=0)

    def conductivity(self, temperature: ArrayLike) -> FloatArray:
        """Thermal conductivity by the chosen mixture model [W/(m K)].

        Interpolated in a table built at construction, as :meth:`density`.
        """
        return np.interp(_temperature(temperature), self._grid, self._k_table)

    def diffusivity(self, temperature: ArrayLike) -> FloatArray:
        """Thermal diffusivity k/(ρ cp) with the apparent cp [m2/s]."""
        return self.conductivity(temperature) / (
            self.density(temperature) * self.specific_heat(temperature)
        )

    def enthalpy(self, temperature: ArrayLike) -> FloatArray:
        """Specific enthalpy, 0 J/kg at -40 °C [J/kg]."""
        return self._model.enthalpy(_temperature(temperature))

    def temperature_from_enthalpy(self, enthalpy: ArrayLike) -> FloatArray:
        """Temperature [°C] at a specific enthalpy [J/kg] (inverse of :meth:`enthalpy`)."""
        return self._model.temperature(_enthalpy_arg(enthalpy))


class ConstantProperties:
    """Measured (constant) properties, with an optional freezing range.

    Parameters
    ----------
    conductivity : float
        Thermal conductivity [W/(m K)], > 0.
    density : float
        Density [kg/m3], > 0.
    specific_heat : float
        Specific heat (sensible) [J/(kg K)], > 0.
    freezing_point : float, optional
        Initial freezing point [°C], in [-100, -0.01]; required when
        ``latent_heat`` > 0.
    latent_heat : float
        Latent heat released on freezing [J/kg], >= 0 (e.g. the ASHRAE table
        value).

    Notes
    -----
    k, ρ and the sensible cp do not change with temperature or ice. Below the
    freezing point the latent heat is released with the Schwartzberg shape,
    ``released(t) = latent_heat (1 - t_f/t)`` (t in °C), so the apparent cp
    is ``cp - latent_heat t_f / t²``; ``ice_fraction`` reports
    ``released / 333.6 kJ/kg``. Enthalpy is 0 J/kg at -40 °C, as for
    :class:`FoodProperties`.

    References
    ----------
    .. [1] Schwartzberg (1976), J. Food Sci. 41, 152-156 (shape of the release).
    """

    def __init__(
        self,
        conductivity: float,
        density: float,
        specific_heat: float,
        freezing_point: float | None = None,
        latent_heat: float = 0.0,
    ) -> None:
        self._k = float(positive("conductivity", conductivity))
        self._rho = float(positive("density", density))
        self._cp = float(positive("specific_heat", specific_heat))
        self._latent_heat = float(in_range("latent_heat", latent_heat, 0.0, LATENT_HEAT_ICE))
        if freezing_point is None:
            if self._latent_heat > 0.0:
                raise ThermalInputError(
                    "freezing_point: required when latent_heat > 0; give the initial "
                    "freezing point in °C (in [-100, -0.01])"
                )
            self._freezing_point = None
        else:
            self._freezing_point = float(
                in_range("freezing_point", freezing_point, -100.0, -MIN_DEPRESSION)
            )
        self._model = _Enthalpy(
            a_below=np.array([self._cp, 0.0, 0.0]),
            a_above=np.array([self._cp, 0.0, 0.0, 0.0, 0.0]),
            d=np.zeros(3),
            freezable=self._latent_heat / LATENT_HEAT_ICE,
            t_f=self._freezing_point if self._freezing_point is not None else float("-inf"),
        )

    def __repr__(self) -> str:
        return (
            f"ConstantProperties(conductivity={self._k!r}, density={self._rho!r}, "
            f"specific_heat={self._cp!r}, freezing_point={self._freezing_point!r}, "
            f"latent_heat={self._latent_heat!r})"
        )

    @property
    def freezing_point(self) -> float | None:
        """Initial freezing point [°C] or ``None``."""
        return self._freezing_point

    @property
    def latent_heat(self) -> float:
        """Latent heat released on freezing [J/kg]."""
        return self._latent_heat

    def density(self, temperature: ArrayLike) -> FloatArray:
        """Density [kg/m3] (constant)."""
        return np.full_like(_temperature(temperature), self._rho)

    def conductivity(self, temperature: ArrayLike) -> FloatArray:
        """Thermal conductivity [W/(m K)] (constant)."""
        return np.full_like(_temperature(temperature), self._k)

    def specific_heat(self, temperature: ArrayLike) -> FloatArray:
        """Apparent specific heat [J/(kg K)], latent part included below freezing."""
        return self._model.specific_heat(_temperature(temperature))

    def diffusivity(self, temperature: ArrayLike) -> FloatArray:
        """Thermal diffusivity k/(ρ cp) with the apparent cp [m2/s]."""
        return self._k / (self._rho * self.specific_heat(temperature))

    def enthalpy(self, temperature: ArrayLike) -> FloatArray:
        """Specific enthalpy, 0 J/kg at -40 °C [J/kg]."""
        return self._model.enthalpy(_temperature(temperature))

    def temperature_from_enthalpy(self, enthalpy: ArrayLike) -> FloatArray:
        """Temperature [°C] at a specific enthalpy [J/kg]."""
        return self._model.temperature(_enthalpy_arg(enthalpy))

    def ice_fraction(self, temperature: ArrayLike) -> FloatArray:
        """Equivalent ice fraction, latent heat released / 333.6 kJ/kg [kg/kg]."""
        return self._model.ice_fraction(_temperature(temperature))
