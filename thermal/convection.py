"""Surface heat-transfer coefficient of a product in an air setting.

The coefficient combines forced convection (by shape), natural convection
(when the surface temperature is known), and linearised radiation to the
oven or tunnel walls:

* forced: cylinder in crossflow (Churchill & Bernstein 1977), sphere
  (Whitaker 1972), flat plate parallel to the flow (laminar 0.664 Re^½ Pr^⅓,
  mixed (0.037 Re^⅘ − 871) Pr^⅓ above the transition Reynolds number 5e5;
  Incropera et al., ch. 7);
* natural: horizontal cylinder and vertical plate (Churchill & Chu 1975),
  sphere (Churchill 1983), horizontal plates (the upper/lower surface
  correlations in Incropera et al., ch. 9);
* mixed: Churchill's combination h^n = h_F^n + h_N^n with n = 3 for each face
  (Churchill 1977; Incropera et al., eq. 9.36), taking the flow as transverse
  to gravity (horizontal air over the product), so the parts add;
* radiation: h_r = ε σ (Ts² + Tw²)(Ts + Tw) in kelvin.

Finite shapes are split into faces and the coefficient is the area-weighted
mean of the faces (common practice; it assumes each face behaves like the
isolated surface of the same kind):

* finite cylinder: lies with its axis horizontal and across the air flow;
  the curved side is a cylinder in crossflow (natural: horizontal cylinder),
  the two end discs are flat plates parallel to the flow with flow length D
  (natural: vertical plates of height D);
* block: length along the flow, height vertical; top, bottom and the two
  sides are flat plates of flow length ``length``; the front and back faces
  (normal to the flow) are given the same flat-plate value, taking their
  stagnation and wake regions as offsetting (common practice). Natural:
  top/bottom as horizontal plates (characteristic length area/perimeter),
  the four vertical faces as vertical plates of the block's height;
* slab: lies flat with both faces exposed, each a flat plate of flow length
  ``length`` (natural: horizontal plates, one facing up, one down); edges are
  neglected.

Loading factor
--------------
Products packed on a belt or tray shield each other and share boundary
layers, which lowers h; rows that trip the flow or mesh belts with air
passing through can raise it. The loading factor multiplies the convective
part (not radiation): 1.0 (``DEFAULT_LOADING_FACTOR``) is a single piece in
free air; accepted values are in (0, 1.5]. It is a plant-specific
calibration (common practice: fit it to a measured cooling or heating curve
of a loaded belt or tray), not a published correlation.

Where no calibrated factor is given for a belt loading,
:func:`coverage_loading_factor` estimates one from the belt coverage c:
``1 - 0.5 c`` (:data:`COVERAGE_LOADING_SLOPE`). That dense loading lowers h
is common practice; the rule's numbers are a planning estimate of this
module, chosen to lean slow, not a published correlation. It reasons that
on a fully covered belt the pieces' sides touch and their undersides meet
the air only through the belt, so about half the surface of a flat piece
sees the free stream, and scales linearly from a lone piece (factor 1 as
c -> 0) to that. Limits: one layer of pieces on a belt, c in [0, 1]; piled
or stacked product, pieces in trays or lidded containers, and solid belts
under thick pieces can shade more than the rule assumes. It is an
assumption to calibrate from probe logs, never a measurement.

Validity
--------
Each correlation in :data:`CORRELATIONS` carries its published validity
ranges; outside them a :class:`thermal.errors.ValidityWarning` names the
range and the value (mild extrapolation is allowed, never silent) and says
which way the extrapolated h is likely wrong: understated (the dwell errs
long), overstated (the dwell may come out short) or unknown. The likely
directions are common practice, judged per correlation and bound: a power
law in Re or Ra fitted above its lower bound tends to zero below it, where
conduction and the other mode keep h up (understated); a laminar form used
past transition misses the turbulent rise (understated); a turbulent form
used on a laminar boundary layer overstates h. Condensation
on a surface colder than the dew point of humid air (steam ovens) is not
modelled and also triggers a warning: h is then underestimated. Buoyancy is
taken from temperature alone (β = 1/T_film for an ideal gas); density
differences from humidity gradients next to the surface are neglected.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal._checks import as_float_array, in_range, nonnegative, positive, temperature_c
from thermal.air import (
    ATMOSPHERIC_PRESSURE,
    KELVIN,
    AirProperties,
    air_properties,
    dew_point,
    humidity_ratio_from_relative,
)
from thermal.errors import ThermalInputError, ValidityWarning

__all__ = [
    "CORRELATIONS",
    "COVERAGE_LOADING_SLOPE",
    "DEFAULT_LOADING_FACTOR",
    "EXTRAPOLATION_OVERSTATES",
    "EXTRAPOLATION_UNDERSTATES",
    "EXTRAPOLATION_UNKNOWN",
    "GRAVITY",
    "MIXED_EXPONENT",
    "STEFAN_BOLTZMANN",
    "TRANSITION_REYNOLDS",
    "VALIDITY_MARGIN",
    "AirSetting",
    "ConvectionResult",
    "Correlation",
    "coverage_loading_factor",
    "nusselt_cylinder_churchill_bernstein",
    "nusselt_flat_plate",
    "nusselt_flat_plate_laminar",
    "nusselt_flat_plate_turbulent",
    "nusselt_horizontal_cylinder_churchill_chu",
    "nusselt_horizontal_plate_lower",
    "nusselt_horizontal_plate_upper",
    "nusselt_sphere_churchill",
    "nusselt_sphere_whitaker",
    "nusselt_vertical_plate_churchill_chu",
    "radiation_coefficient",
    "surface_coefficient",
]

STEFAN_BOLTZMANN = 5.670374419e-8
"""Stefan–Boltzmann constant [W/(m2 K4)] (CODATA 2018)."""

GRAVITY = 9.80665
"""Standard acceleration of gravity [m/s2]."""

TRANSITION_REYNOLDS = 5.0e5
"""Transition Reynolds number of the flat-plate boundary layer [-]
(Incropera et al., section 7.2)."""

MIXED_EXPONENT = 3.0
"""Exponent n of Churchill's combination of forced and natural convection."""

DEFAULT_LOADING_FACTOR = 1.0
"""Loading factor of a single piece in free air [-]."""

LOADING_FACTOR_RANGE = (0.0, 1.5)
"""Accepted loading factors: 0 < factor <= 1.5 [-]."""

COVERAGE_LOADING_SLOPE = 0.5
"""Fall of the estimated loading factor per unit belt coverage [-] (see the
module notes: a planning estimate, not a published value)."""

EXTRAPOLATION_UNDERSTATES = "likely understating h (the dwell errs long)"
"""Validity-warning phrase: outside its range the correlation likely gives too low an h."""

EXTRAPOLATION_OVERSTATES = "likely overstating h (the dwell may come out short)"
"""Validity-warning phrase: outside its range the correlation likely gives too high an h."""

EXTRAPOLATION_UNKNOWN = "the direction of the error is unknown"
"""Validity-warning phrase: no known direction of the extrapolation error."""

VALIDITY_MARGIN = 0.05
"""Relative margin on the printed validity bounds of the correlations [-]."""

RICHARDSON_LIMITS = (0.1, 10.0)
"""Gr/Re² below which the regime is called forced, above which natural
(Incropera et al., section 9.9)."""


# --------------------------------------------------------------------------
# Nusselt correlations (vectorised, dimensionless)
# --------------------------------------------------------------------------


def nusselt_cylinder_churchill_bernstein(reynolds: ArrayLike, prandtl: ArrayLike) -> NDArray:
    """Mean Nusselt number of a cylinder in crossflow (Churchill–Bernstein).

    Nu = 0.3 + 0.62 Re^½ Pr^⅓ / [1 + (0.4/Pr)^⅔]^¼ · [1 + (Re/282000)^⅝]^⅘,
    properties at the film temperature.

    Parameters
    ----------
    reynolds : array_like
        Reynolds number on the diameter [-], >= 0.
    prandtl : array_like
        Prandtl number [-], > 0.

    Returns
    -------
    ndarray
        Nusselt number on the diameter [-].

    References
    ----------
    .. [1] Churchill, S. W., Bernstein, M. (1977). A correlating equation for
       forced convection from gases and liquids to a circular cylinder in
       crossflow. J. Heat Transfer 99, 300-306.
    .. [2] Bergman, T. L., Lavine, A. S., Incropera, F. P., DeWitt, D. P.
       (2011). Fundamentals of Heat and Mass Transfer, 7th ed., eq. 7.54.
    """
    re = nonnegative("reynolds", reynolds)
    pr = positive("prandtl", prandtl)
    return (
        0.3
        + (0.62 * np.sqrt(re) * np.cbrt(pr) / (1.0 + (0.4 / pr) ** (2.0 / 3.0)) ** 0.25)
        * (1.0 + (re / 282000.0) ** 0.625) ** 0.8
    )


def nusselt_sphere_whitaker(
    reynolds: ArrayLike, prandtl: ArrayLike, viscosity_ratio: ArrayLike = 1.0
) -> NDArray:
    """Mean Nusselt number of a sphere in a gas or liquid flow (Whitaker).

    Nu = 2 + (0.4 Re^½ + 0.06 Re^⅔) Pr^0.4 (μ/μs)^¼, all properties at the
    free-stream temperature except μs at the surface temperature.

    Parameters
    ----------
    reynolds : array_like
        Reynolds number on the diameter, free-stream properties [-], >= 0.
    prandtl : array_like
        Prandtl number at the free-stream temperature [-], > 0.
    viscosity_ratio : array_like, optional
        μ(T∞) / μ(Ts) [-], > 0. Default 1.

    Returns
    -------
    ndarray
        Nusselt number on the diameter [-].

    References
    ----------
    .. [1] Whitaker, S. (1972). Forced convection heat transfer correlations
       for flow in pipes, past flat plates, single cylinders, single spheres,
       and for flow in packed beds and tube bundles. AIChE J. 18, 361-371.
    .. [2] Bergman et al. (2011), Fundamentals of Heat and Mass Transfer,
       7th ed., eq. 7.56.
    """
    re = nonnegative("reynolds", reynolds)
    pr = positive("prandtl", prandtl)
    ratio = positive("viscosity_ratio", viscosity_ratio)
    return 2.0 + (0.4 * np.sqrt(re) + 0.06 * re ** (2.0 / 3.0)) * pr**0.4 * ratio**0.25


def nusselt_flat_plate_laminar(reynolds: ArrayLike, prandtl: ArrayLike) -> NDArray:
    """Average Nusselt number of a laminar flat plate: 0.664 Re^½ Pr^⅓.

    Parameters
    ----------
    reynolds : array_like
        Reynolds number on the plate length along the flow [-], >= 0.
    prandtl : array_like
        Prandtl number at the film temperature [-], > 0.

    Returns
    -------
    ndarray
        Average Nusselt number on the plate length [-].

    References
    ----------
    .. [1] Bergman et al. (2011), Fundamentals of Heat and Mass Transfer,
       7th ed., eq. 7.30 (isothermal plate, Pr >= 0.6).
    """
    re = nonnegative("reynolds", reynolds)
    pr = positive("prandtl", prandtl)
    return 0.664 * np.sqrt(re) * np.cbrt(pr)


def nusselt_flat_plate(reynolds: ArrayLike, prandtl: ArrayLike) -> NDArray:
    """Average Nusselt number of a flat plate, laminar or mixed boundary layer.

    Laminar 0.664 Re^½ Pr^⅓ up to the transition Reynolds number 5e5, above
    it the mixed laminar–turbulent form (0.037 Re^⅘ − 871) Pr^⅓ (the two meet
    within 0.1 % at the transition).

    Parameters
    ----------
    reynolds : array_like
        Reynolds number on the plate length along the flow [-], >= 0.
    prandtl : array_like
        Prandtl number at the film temperature [-], > 0.

    Returns
    -------
    ndarray
        Average Nusselt number on the plate length [-].

    References
    ----------
    .. [1] Bergman et al. (2011), Fundamentals of Heat and Mass Transfer,
       7th ed., eqs. 7.30 and 7.38 with Re_x,c = 5e5 (0.6 <= Pr <= 60,
       Re_L <= 1e8).
    """
    re = nonnegative("reynolds", reynolds)
    pr = positive("prandtl", prandtl)
    laminar = 0.664 * np.sqrt(re)
    mixed = 0.037 * re**0.8 - 871.0
    return np.where(re <= TRANSITION_REYNOLDS, laminar, mixed) * np.cbrt(pr)


def nusselt_flat_plate_turbulent(reynolds: ArrayLike, prandtl: ArrayLike) -> NDArray:
    """Average Nusselt number of a flat plate turbulent from its leading edge.

    0.037 Re^⅘ Pr^⅓: the mixed form with the laminar part removed, for a
    boundary layer tripped at the front edge (rough edges, high free-stream
    turbulence behind fans).

    Parameters
    ----------
    reynolds : array_like
        Reynolds number on the plate length along the flow [-], >= 0.
    prandtl : array_like
        Prandtl number at the film temperature [-], > 0.

    Returns
    -------
    ndarray
        Average Nusselt number on the plate length [-].

    References
    ----------
    .. [1] Bergman et al. (2011), Fundamentals of Heat and Mass Transfer,
       7th ed., eq. 7.38 with Re_x,c = 0.
    """
    re = nonnegative("reynolds", reynolds)
    pr = positive("prandtl", prandtl)
    return 0.037 * re**0.8 * np.cbrt(pr)


def nusselt_horizontal_cylinder_churchill_chu(rayleigh: ArrayLike, prandtl: ArrayLike) -> NDArray:
    """Natural convection from a long horizontal cylinder (Churchill–Chu).

    Nu = {0.60 + 0.387 Ra^⅙ / [1 + (0.559/Pr)^(9/16)]^(8/27)}².

    Parameters
    ----------
    rayleigh : array_like
        Rayleigh number on the diameter [-], >= 0.
    prandtl : array_like
        Prandtl number at the film temperature [-], > 0.

    Returns
    -------
    ndarray
        Nusselt number on the diameter [-].

    References
    ----------
    .. [1] Churchill, S. W., Chu, H. H. S. (1975). Correlating equations for
       laminar and turbulent free convection from a horizontal cylinder.
       Int. J. Heat Mass Transfer 18, 1049-1053.
    .. [2] Bergman et al. (2011), 7th ed., eq. 9.34 (Ra_D <= 1e12).
    """
    ra = nonnegative("rayleigh", rayleigh)
    pr = positive("prandtl", prandtl)
    return (
        0.60 + 0.387 * ra ** (1.0 / 6.0) / (1.0 + (0.559 / pr) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    ) ** 2


def nusselt_vertical_plate_churchill_chu(rayleigh: ArrayLike, prandtl: ArrayLike) -> NDArray:
    """Natural convection from an isothermal vertical plate (Churchill–Chu).

    Nu = {0.825 + 0.387 Ra^⅙ / [1 + (0.492/Pr)^(9/16)]^(8/27)}².

    Parameters
    ----------
    rayleigh : array_like
        Rayleigh number on the plate height [-], >= 0.
    prandtl : array_like
        Prandtl number at the film temperature [-], > 0.

    Returns
    -------
    ndarray
        Nusselt number on the height [-].

    References
    ----------
    .. [1] Churchill, S. W., Chu, H. H. S. (1975). Correlating equations for
       laminar and turbulent free convection from a vertical plate. Int. J.
       Heat Mass Transfer 18, 1323-1329.
    .. [2] Bergman et al. (2011), 7th ed., eq. 9.26 (all Ra, 0.1 to 1e12).
    """
    ra = nonnegative("rayleigh", rayleigh)
    pr = positive("prandtl", prandtl)
    return (
        0.825 + 0.387 * ra ** (1.0 / 6.0) / (1.0 + (0.492 / pr) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    ) ** 2


def nusselt_sphere_churchill(rayleigh: ArrayLike, prandtl: ArrayLike) -> NDArray:
    """Natural convection from a sphere (Churchill).

    Nu = 2 + 0.589 Ra^¼ / [1 + (0.469/Pr)^(9/16)]^(4/9)
    · {1 + 7.44e-8 Ra / [1 + (0.469/Pr)^(9/16)]^(16/9)}^(1/12);
    the last factor extends the laminar form (Bergman et al. eq. 9.35) to
    turbulent Rayleigh numbers; it is within 1 % of 1 up to Ra = 3e6 (food
    pieces up to about 0.1 m) and adds about 30 % at Ra = 1e9.

    Parameters
    ----------
    rayleigh : array_like
        Rayleigh number on the diameter [-], >= 0.
    prandtl : array_like
        Prandtl number at the film temperature [-], > 0.

    Returns
    -------
    ndarray
        Nusselt number on the diameter [-].

    References
    ----------
    .. [1] Churchill, S. W. (1983). Free convection around immersed bodies.
       In Heat Exchanger Design Handbook, section 2.5.7, Hemisphere.
    .. [2] Bergman et al. (2011), 7th ed., eq. 9.35 (Ra_D <= 1e11, Pr >= 0.7).
    """
    ra = nonnegative("rayleigh", rayleigh)
    pr = positive("prandtl", prandtl)
    psi = 1.0 + (0.469 / pr) ** (9.0 / 16.0)
    return 2.0 + 0.589 * ra**0.25 / psi ** (4.0 / 9.0) * (
        1.0 + 7.44e-8 * ra / psi ** (16.0 / 9.0)
    ) ** (1.0 / 12.0)


def nusselt_horizontal_plate_upper(rayleigh: ArrayLike, prandtl: ArrayLike = 0.7) -> NDArray:
    """Natural convection, upper face of a hot plate or lower face of a cold one.

    Nu = 0.54 Ra^¼ for Ra <= 1e7, 0.15 Ra^⅓ above (up to 1e11), on the
    characteristic length area/perimeter.

    Parameters
    ----------
    rayleigh : array_like
        Rayleigh number on area/perimeter [-], >= 0.
    prandtl : array_like, optional
        Prandtl number [-], > 0 (checked against the validity range only;
        the correlation holds for Pr >= 0.7).

    Returns
    -------
    ndarray
        Nusselt number on area/perimeter [-].

    References
    ----------
    .. [1] McAdams, W. H. (1954). Heat Transmission, 3rd ed., McGraw-Hill;
       Lloyd, J. R., Moran, W. R. (1974). Natural convection adjacent to
       horizontal surfaces of various planforms. J. Heat Transfer 96, 443-447.
    .. [2] Bergman et al. (2011), 7th ed., eqs. 9.30-9.31.
    """
    ra = nonnegative("rayleigh", rayleigh)
    positive("prandtl", prandtl)
    return np.where(ra <= 1e7, 0.54 * ra**0.25, 0.15 * np.cbrt(ra))


def nusselt_horizontal_plate_lower(rayleigh: ArrayLike, prandtl: ArrayLike = 0.7) -> NDArray:
    """Natural convection, lower face of a hot plate or upper face of a cold one.

    Nu = 0.52 Ra^⅕ on the characteristic length area/perimeter.

    Parameters
    ----------
    rayleigh : array_like
        Rayleigh number on area/perimeter [-], >= 0.
    prandtl : array_like, optional
        Prandtl number [-], > 0 (range check only; valid for Pr >= 0.7).

    Returns
    -------
    ndarray
        Nusselt number on area/perimeter [-].

    References
    ----------
    .. [1] Radziemska, E., Lewandowski, W. M. (2001). Heat transfer by natural
       convection from an isothermal downward-facing round plate in unlimited
       space. Applied Energy 68, 347-366.
    .. [2] Bergman et al. (2011), 7th ed., eq. 9.32 (1e4 <= Ra <= 1e9).
    """
    ra = nonnegative("rayleigh", rayleigh)
    positive("prandtl", prandtl)
    return 0.52 * ra**0.2


def radiation_coefficient(
    emissivity: ArrayLike, surface_temperature: ArrayLike, wall_temperature: ArrayLike
) -> NDArray:
    """Linearised radiation coefficient to surrounding walls [W/(m2 K)].

    h_r = ε σ (Ts² + Tw²)(Ts + Tw), temperatures in kelvin: a small grey body
    in a large enclosure, so that q = h_r (Ts − Tw) exactly.

    Parameters
    ----------
    emissivity : array_like
        Surface emissivity [-], 0 to 1.
    surface_temperature : array_like
        Product surface temperature [°C].
    wall_temperature : array_like
        Wall temperature [°C].

    Returns
    -------
    ndarray
        Radiation coefficient [W/(m2 K)].

    References
    ----------
    .. [1] Bergman et al. (2011), 7th ed., eq. 1.9.
    """
    eps = in_range("emissivity", emissivity, 0.0, 1.0)
    ts = temperature_c("surface_temperature", surface_temperature) + KELVIN
    tw = temperature_c("wall_temperature", wall_temperature) + KELVIN
    return eps * STEFAN_BOLTZMANN * (ts**2 + tw**2) * (ts + tw)


# --------------------------------------------------------------------------
# Registry
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Correlation:
    """One entry of the correlation registry.

    Attributes
    ----------
    name : str
        Usual name of the correlation.
    function : callable
        Vectorised Nusselt function; forced ones take ``(reynolds, prandtl)``
        (Whitaker also ``viscosity_ratio``), natural ones ``(rayleigh, prandtl)``.
    validity : mapping of str to (float, float)
        Published ranges, keys among ``"Re"``, ``"Pr"``, ``"Ra"``,
        ``"Re*Pr"``, ``"mu/mu_s"``; bounds inclusive.
    reference : str
        Published source.
    mode : str
        ``"forced"`` or ``"natural"``.
    surface : str
        Surface kind it applies to: ``"cylinder"``, ``"sphere"``, ``"plate"``
        (parallel flow), ``"vertical_plate"``, ``"plate_up"``, ``"plate_down"``.
    extrapolation : mapping of str to (str, str)
        Per validity key, the likely error of h below and above the range
        (:data:`EXTRAPOLATION_UNDERSTATES`, :data:`EXTRAPOLATION_OVERSTATES`
        or :data:`EXTRAPOLATION_UNKNOWN`, the default); see the module notes.
    """

    name: str
    function: Callable[..., NDArray]
    validity: Mapping[str, tuple[float, float]]
    reference: str
    mode: str
    surface: str
    extrapolation: Mapping[str, tuple[str, str]] = field(
        default_factory=lambda: MappingProxyType({})
    )

    def out_of_range(self, **values: float) -> tuple[str, ...]:
        """Messages for each given value outside the validity ranges.

        Bounds are printed to one or two figures in the sources (e.g. the
        ``Pr >= 0.7`` of the natural-convection correlations is meant to
        include air at Pr 0.69-0.72), so a value within
        ``VALIDITY_MARGIN`` (5 %) of a bound counts as inside.
        """
        messages = []
        for quantity, value in values.items():
            if quantity not in self.validity or value is None or math.isnan(value):
                continue
            low, high = self.validity[quantity]
            below = value < low * (1.0 - VALIDITY_MARGIN)
            if below or value > high * (1.0 + VALIDITY_MARGIN):
                sides = self.extrapolation.get(
                    quantity, (EXTRAPOLATION_UNKNOWN, EXTRAPOLATION_UNKNOWN)
                )
                messages.append(
                    f"{self.name}: {quantity} = {value:.4g} outside the validity range "
                    f"[{low:.4g}, {high:.4g}]; result extrapolated, {sides[0 if below else 1]}"
                )
        return tuple(messages)


_INF = math.inf
# likely error of h outside a range (common practice; see the module notes)
_UNDER, _OVER, _UNKNOWN = (
    EXTRAPOLATION_UNDERSTATES,
    EXTRAPOLATION_OVERSTATES,
    EXTRAPOLATION_UNKNOWN,
)
_BERGMAN = (
    "Bergman, Lavine, Incropera, DeWitt (2011), Fundamentals of Heat and Mass Transfer, 7th ed."
)

CORRELATIONS: Mapping[str, Correlation] = MappingProxyType(
    {
        "cylinder_churchill_bernstein": Correlation(
            "Churchill-Bernstein cylinder in crossflow",
            nusselt_cylinder_churchill_bernstein,
            MappingProxyType({"Re*Pr": (0.2, _INF), "Re": (0.0, 1.0e7)}),
            "Churchill & Bernstein (1977), J. Heat Transfer 99, 300; " + _BERGMAN + " eq. 7.54",
            "forced",
            "cylinder",
        ),
        "sphere_whitaker": Correlation(
            "Whitaker sphere",
            nusselt_sphere_whitaker,
            MappingProxyType({"Re": (3.5, 7.6e4), "Pr": (0.71, 380.0), "mu/mu_s": (1.0, 3.2)}),
            "Whitaker (1972), AIChE J. 18, 361; " + _BERGMAN + " eq. 7.56",
            "forced",
            "sphere",
            MappingProxyType({"Re": (_UNDER, _UNKNOWN)}),
        ),
        "flat_plate": Correlation(
            "flat plate, laminar or mixed (Re_c = 5e5)",
            nusselt_flat_plate,
            MappingProxyType({"Re": (0.0, 1.0e8), "Pr": (0.6, 60.0)}),
            _BERGMAN + " eqs. 7.30 and 7.38",
            "forced",
            "plate",
        ),
        "flat_plate_laminar": Correlation(
            "flat plate, laminar",
            nusselt_flat_plate_laminar,
            MappingProxyType({"Re": (0.0, TRANSITION_REYNOLDS), "Pr": (0.6, _INF)}),
            _BERGMAN + " eq. 7.30",
            "forced",
            "plate",
            MappingProxyType({"Re": (_UNKNOWN, _UNDER)}),
        ),
        "flat_plate_turbulent": Correlation(
            "flat plate, turbulent from the leading edge",
            nusselt_flat_plate_turbulent,
            MappingProxyType({"Re": (TRANSITION_REYNOLDS, 1.0e8), "Pr": (0.6, 60.0)}),
            _BERGMAN + " eq. 7.38 with Re_x,c = 0",
            "forced",
            "plate",
            MappingProxyType({"Re": (_OVER, _UNKNOWN)}),
        ),
        "horizontal_cylinder_churchill_chu": Correlation(
            "Churchill-Chu horizontal cylinder, natural convection",
            nusselt_horizontal_cylinder_churchill_chu,
            MappingProxyType({"Ra": (1.0e-5, 1.0e12)}),
            "Churchill & Chu (1975), Int. J. Heat Mass Transfer 18, 1049; "
            + _BERGMAN
            + " eq. 9.34",
            "natural",
            "cylinder",
        ),
        "vertical_plate_churchill_chu": Correlation(
            "Churchill-Chu vertical plate, natural convection",
            nusselt_vertical_plate_churchill_chu,
            MappingProxyType({"Ra": (0.1, 1.0e12)}),
            "Churchill & Chu (1975), Int. J. Heat Mass Transfer 18, 1323; "
            + _BERGMAN
            + " eq. 9.26",
            "natural",
            "vertical_plate",
        ),
        "sphere_churchill": Correlation(
            "Churchill sphere, natural convection",
            nusselt_sphere_churchill,
            MappingProxyType({"Ra": (0.0, 1.0e11), "Pr": (0.7, _INF)}),
            "Churchill (1983), Heat Exchanger Design Handbook 2.5.7; " + _BERGMAN + " eq. 9.35",
            "natural",
            "sphere",
        ),
        "horizontal_plate_upper": Correlation(
            "horizontal plate, hot face up or cold face down, natural convection",
            nusselt_horizontal_plate_upper,
            MappingProxyType({"Ra": (1.0e4, 1.0e11), "Pr": (0.7, _INF)}),
            "McAdams (1954); Lloyd & Moran (1974); " + _BERGMAN + " eqs. 9.30-9.31",
            "natural",
            "plate_up",
            MappingProxyType({"Ra": (_UNDER, _UNKNOWN)}),
        ),
        "horizontal_plate_lower": Correlation(
            "horizontal plate, hot face down or cold face up, natural convection",
            nusselt_horizontal_plate_lower,
            MappingProxyType({"Ra": (1.0e4, 1.0e9), "Pr": (0.7, _INF)}),
            "Radziemska & Lewandowski (2001); " + _BERGMAN + " eq. 9.32",
            "natural",
            "plate_down",
            MappingProxyType({"Ra": (_UNDER, _UNKNOWN)}),
        ),
    }
)
"""Registry of Nusselt correlations: key -> :class:`Correlation`."""

_DEFAULT_FORCED = {
    "cylinder": "cylinder_churchill_bernstein",
    "sphere": "sphere_whitaker",
    "plate": "flat_plate",
}
_DEFAULT_NATURAL = {
    "cylinder": "horizontal_cylinder_churchill_chu",
    "sphere": "sphere_churchill",
    "vertical_plate": "vertical_plate_churchill_chu",
    "plate_up": "horizontal_plate_upper",
    "plate_down": "horizontal_plate_lower",
}


# --------------------------------------------------------------------------
# Air setting and result
# --------------------------------------------------------------------------


def _scalar(
    name: str, value: Any, *, allow_inf: bool = False, accepted: str | None = None
) -> float:
    arr = as_float_array(name, value, allow_inf=allow_inf, accepted=accepted)
    if arr.ndim != 0:
        raise ThermalInputError(
            f"{name}: must be a single number, got an array of shape {arr.shape}"
        )
    return float(arr)


@dataclass(frozen=True)
class AirSetting:
    """Air conditions around the product in an oven or tunnel.

    Parameters
    ----------
    temperature : float
        Air temperature [°C], above absolute zero.
    speed : float
        Air speed approaching the product [m/s], >= 0 (0 = still air).
    relative_humidity : float or None, optional
        Relative humidity [-], 0 to 1 (and at most p / p_sat above the boiling
        point); None = dry air unless ``humidity_ratio`` is given.
    pressure : float, optional
        Total pressure [Pa], > 0. Default one standard atmosphere.
    wall_temperature : float or None, optional
        Temperature of the surrounding walls for radiation [°C]; None = the
        air temperature.
    measured_h : float or None, optional
        A measured surface coefficient [W/(m2 K)], > 0, which overrides the
        correlations (radiation is then taken as included in it).
    humidity_ratio : float or None, optional
        Humidity ratio [kg vapour/kg dry air], >= 0, ``inf`` = pure steam; an
        alternative to ``relative_humidity`` for steam ovens (give one, not
        both).

    Attributes
    ----------
    moisture : float
        Humidity ratio used for the air properties [kg/kg] (0 for dry air,
        ``inf`` for pure steam), from ``relative_humidity`` or
        ``humidity_ratio``.

    Raises
    ------
    ThermalInputError
        Any field outside its accepted domain (message names the field).
    """

    temperature: float
    speed: float
    relative_humidity: float | None = None
    pressure: float = ATMOSPHERIC_PRESSURE
    wall_temperature: float | None = None
    measured_h: float | None = None
    humidity_ratio: float | None = None
    moisture: float = field(init=False, repr=False)

    def __post_init__(self) -> None:
        t = _scalar("temperature", temperature_c("temperature", self.temperature))
        speed = _scalar("speed", nonnegative("speed", self.speed))
        p = _scalar("pressure", positive("pressure", self.pressure))
        object.__setattr__(self, "temperature", t)
        object.__setattr__(self, "speed", speed)
        object.__setattr__(self, "pressure", p)
        if self.wall_temperature is not None:
            tw = _scalar(
                "wall_temperature", temperature_c("wall_temperature", self.wall_temperature)
            )
            object.__setattr__(self, "wall_temperature", tw)
        if self.measured_h is not None:
            h = _scalar("measured_h", positive("measured_h", self.measured_h))
            object.__setattr__(self, "measured_h", h)
        if self.relative_humidity is not None and self.humidity_ratio is not None:
            raise ThermalInputError(
                "relative_humidity: give either relative_humidity or humidity_ratio, not both"
            )
        if self.relative_humidity is not None:
            rh = _scalar("relative_humidity", self.relative_humidity, accepted="in [0.0, 1.0]")
            object.__setattr__(self, "relative_humidity", rh)
            w = 0.0 if rh == 0.0 else float(humidity_ratio_from_relative(t, rh, p))
        elif self.humidity_ratio is not None:
            w = _scalar(
                "humidity_ratio",
                self.humidity_ratio,
                allow_inf=True,
                accepted=">= 0 kg/kg (inf = pure steam)",
            )
            object.__setattr__(self, "humidity_ratio", w)
            air_properties(t, p, w)  # refuses negative or supersaturated values
        else:
            w = 0.0
        object.__setattr__(self, "moisture", w)

    @property
    def wall(self) -> float:
        """Wall temperature used for radiation [°C]."""
        return self.temperature if self.wall_temperature is None else self.wall_temperature

    def properties(self, temperature: float | None = None) -> AirProperties:
        """Air properties at ``temperature`` [°C] (default: the air temperature)
        with this setting's pressure and humidity ratio."""
        t = self.temperature if temperature is None else temperature
        return air_properties(t, self.pressure, self.moisture, allow_supersaturated=True)


@dataclass(frozen=True)
class ConvectionResult:
    """Surface coefficient of a product in an air setting.

    Attributes
    ----------
    h : float
        Total coefficient h_convective + h_radiative [W/(m2 K)].
    h_convective : float
        Convective part, loading factor applied [W/(m2 K)].
    h_radiative : float
        Linearised radiation to the walls [W/(m2 K)].
    correlation : str
        Registry keys used, joined by ``"+"`` ("measured" for a measured h).
    reynolds : float
        Reynolds number on ``length`` [-].
    nusselt : float
        Convective Nusselt number h L / k before the loading factor [-].
    regime : str
        ``"forced"``, ``"mixed"``, ``"natural"`` or ``"measured"``.
    film_temperature : float
        Temperature at which properties were taken [°C].
    warnings : tuple of str
        Validity and condensation warnings (also emitted with warnings.warn).
    rayleigh : float
        Rayleigh number on ``length`` (NaN without natural convection) [-].
    length : float
        Length used for Re and Nu [m] (diameter, or plate length along flow).
    environment_temperature : float
        Effective sink temperature (h_c T_air + h_r T_wall) / h [°C]: use
        q = h (Ts − environment_temperature) when the walls differ from the air.
    h_forced : float
        Area-weighted forced-convection part before combination [W/(m2 K)].
    h_natural : float
        Area-weighted natural-convection part before combination [W/(m2 K)].
    loading_factor : float
        Loading factor applied to the convective part [-].
    """

    h: float
    h_convective: float
    h_radiative: float
    correlation: str
    reynolds: float
    nusselt: float
    regime: str
    film_temperature: float
    warnings: tuple[str, ...]
    rayleigh: float
    length: float
    environment_temperature: float
    h_forced: float
    h_natural: float
    loading_factor: float


# --------------------------------------------------------------------------
# Shapes as faces
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Face:
    area: float
    forced_surface: str
    forced_length: float
    natural_surface: str
    natural_length: float


def _dimension(geometry: Any, name: str) -> float:
    value = getattr(geometry, name, None)
    if value is None:
        raise ThermalInputError(
            f"geometry.{name}: required for convection on a {geometry.kind!r} shape, got None"
        )
    return _scalar(f"geometry.{name}", positive(f"geometry.{name}", value))


def _horizontal_plates(area: float, char_length: float, hot: bool) -> list[_Face]:
    """Top and bottom faces of a horizontal plate of given area."""
    up, down = ("plate_up", "plate_down") if hot else ("plate_down", "plate_up")
    return [
        _Face(area, "plate", math.nan, up, char_length),
        _Face(area, "plate", math.nan, down, char_length),
    ]


def _faces(geometry: Any, hot: bool) -> tuple[list[_Face], float]:
    """Faces of a shape and the principal length for Re and Nu [m]."""
    kind = getattr(geometry, "kind", None)
    if kind == "sphere":
        d = 2.0 * _dimension(geometry, "radius")
        return [_Face(math.pi * d * d, "sphere", d, "sphere", d)], d
    if kind == "cylinder":
        d = 2.0 * _dimension(geometry, "radius")
        return [_Face(math.pi * d, "cylinder", d, "cylinder", d)], d
    if kind == "finite_cylinder":
        r = _dimension(geometry, "radius")
        length = _dimension(geometry, "length")
        d = 2.0 * r
        side = _Face(math.pi * d * length, "cylinder", d, "cylinder", d)
        end = _Face(2.0 * math.pi * r * r, "plate", d, "vertical_plate", d)
        return [side, end], d
    if kind == "slab":
        _dimension(geometry, "thickness")
        length = _dimension(geometry, "length")
        width = getattr(geometry, "width", None)
        if width is None:
            area, char = length, length / 2.0  # per unit width; A/P of a wide strip
        else:
            width = _dimension(geometry, "width")
            area, char = length * width, length * width / (2.0 * (length + width))
        faces = [
            _Face(f.area, f.forced_surface, length, f.natural_surface, f.natural_length)
            for f in _horizontal_plates(area, char, hot)
        ]
        return faces, length
    if kind == "block":
        length = _dimension(geometry, "length")
        width = _dimension(geometry, "width")
        height = _dimension(geometry, "height")
        char = length * width / (2.0 * (length + width))
        faces = [
            _Face(f.area, "plate", length, f.natural_surface, f.natural_length)
            for f in _horizontal_plates(length * width, char, hot)
        ]
        faces.append(_Face(2.0 * length * height, "plate", length, "vertical_plate", height))
        faces.append(_Face(2.0 * width * height, "plate", length, "vertical_plate", height))
        return faces, length
    raise ThermalInputError(
        "geometry: must be a thermal.geometry shape with kind 'slab', 'cylinder', 'sphere', "
        f"'finite_cylinder' or 'block', got {kind!r}"
    )


def coverage_loading_factor(coverage: float) -> float:
    """Estimated loading factor of a belt loading from its coverage [-].

    ``1 - COVERAGE_LOADING_SLOPE * coverage``: 1 for a lone piece
    (coverage 0), 0.75 at 50 %, 0.6 at 80 %, 0.5 on a fully covered belt.
    Used where no calibrated factor is given; it leans slow but is not a
    bound (see the module notes for its reasoning and limits).

    Parameters
    ----------
    coverage : float
        Fraction of the belt area covered by product [-], in [0, 1].

    Returns
    -------
    float
        Factor on the convective part of h [-], in [0.5, 1].

    Raises
    ------
    ThermalInputError
        Coverage not a number in [0, 1].
    """
    c = _scalar("coverage", in_range("coverage", coverage, 0.0, 1.0))
    return 1.0 - COVERAGE_LOADING_SLOPE * c


# --------------------------------------------------------------------------
# The coefficient
# --------------------------------------------------------------------------


def _forced_keys(faces: list[_Face], correlation: str | None) -> dict[str, str]:
    keys = {f.forced_surface: _DEFAULT_FORCED[f.forced_surface] for f in faces}
    if correlation is None:
        return keys
    entry = CORRELATIONS.get(correlation)
    allowed = sorted(k for k, c in CORRELATIONS.items() if c.mode == "forced" and c.surface in keys)
    if entry is None or entry.mode != "forced" or entry.surface not in keys:
        raise ThermalInputError(
            f"correlation: for this shape one of {allowed} (or None), got {correlation!r}"
        )
    keys[entry.surface] = correlation
    return keys


def _emit(messages: list[str]) -> tuple[str, ...]:
    unique = tuple(dict.fromkeys(messages))
    for message in unique:
        warnings.warn(message, ValidityWarning, stacklevel=3)
    return unique


def _forced_h(
    face: _Face,
    key: str,
    air: AirSetting,
    film: AirProperties,
    free: AirProperties,
    mu_surface: float,
    notes: list[str],
) -> tuple[float, float]:
    """Forced coefficient of one face [W/(m2 K)] and its Reynolds number."""
    corr = CORRELATIONS[key]
    if corr.surface == "sphere":
        # Whitaker: free-stream properties, viscosity ratio to the surface.
        nu, pr, k = float(free.kinematic_viscosity), float(free.prandtl), float(free.conductivity)
        re = air.speed * face.forced_length / nu
        ratio = float(free.viscosity) / mu_surface
        nusselt = float(corr.function(re, pr, ratio))
        notes.extend(corr.out_of_range(Re=re, Pr=pr, **{"mu/mu_s": ratio}))
    else:
        nu, pr, k = float(film.kinematic_viscosity), float(film.prandtl), float(film.conductivity)
        re = air.speed * face.forced_length / nu
        nusselt = float(corr.function(re, pr))
        notes.extend(corr.out_of_range(Re=re, Pr=pr, **{"Re*Pr": re * pr}))
    return nusselt * k / face.forced_length, re


def _natural_h(
    face: _Face, film: AirProperties, delta_t: float, film_k: float, notes: list[str]
) -> float:
    """Natural-convection coefficient of one face [W/(m2 K)]."""
    key = _DEFAULT_NATURAL[face.natural_surface]
    corr = CORRELATIONS[key]
    length = face.natural_length
    nu, pr = float(film.kinematic_viscosity), float(film.prandtl)
    alpha = nu / pr
    beta = 1.0 / film_k
    ra = GRAVITY * beta * abs(delta_t) * length**3 / (nu * alpha)
    nusselt = float(corr.function(ra, pr))
    notes.extend(corr.out_of_range(Ra=ra, Pr=pr))
    return nusselt * float(film.conductivity) / length


def _properties(air: AirSetting, temperature: float | None, notes: list[str]) -> AirProperties:
    """Air properties, collecting property-range warnings into ``notes``."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ValidityWarning)
        props = air.properties(temperature)
    notes.extend(str(w.message) for w in caught if issubclass(w.category, ValidityWarning))
    return props


def _regime(air: AirSetting, natural: bool, grashof: float, reynolds: float) -> str:
    if not natural:
        return "forced"
    if air.speed == 0.0:
        return "natural"
    richardson = grashof / reynolds**2
    low, high = RICHARDSON_LIMITS
    if richardson < low:
        return "forced"
    if richardson > high:
        return "natural"
    return "mixed"


def surface_coefficient(
    geometry: Any,
    air: AirSetting,
    *,
    surface_temperature: float | None = None,
    emissivity: float = 0.0,
    loading_factor: float = DEFAULT_LOADING_FACTOR,
    correlation: str | None = None,
) -> ConvectionResult:
    """Surface heat-transfer coefficient of a product in an air setting.

    Properties are taken at the film temperature (Ts + T_air)/2 (Whitaker's
    sphere correlation: at the air temperature, with μs at Ts). When
    ``surface_temperature`` is None the film temperature is the air
    temperature and only forced convection is used (no natural convection,
    which needs the surface-to-air difference), and radiation, if any, is
    evaluated with the surface at the air temperature — an upper estimate for
    a product far from the air temperature. When it is given, forced and
    natural convection are combined per face as h³ = h_F³ + h_N³ (Churchill
    1977, transverse flow) and ``regime`` tells which dominates by Gr/Re²
    (below 0.1 forced, above 10 natural, else mixed). A ``measured_h`` on the
    air setting replaces all of this (radiation included in it); the loading
    factor still multiplies it, so pass 1.0 if it was measured on the loaded
    belt or tray.

    Parameters
    ----------
    geometry : thermal.geometry shape
        Slab (needs ``length`` along the flow; ``width`` optional), cylinder,
        sphere, finite cylinder or block; see the module notes for how each
        is split into faces and oriented.
    air : AirSetting
        Air temperature, speed, humidity, pressure, walls, or a measured h.
    surface_temperature : float or None, optional
        Product surface temperature [°C]; None = see above. Required in still
        air (speed 0), and must then differ from the air temperature.
    emissivity : float, optional
        Surface emissivity for radiation to the walls [-], 0 to 1. Default 0
        (no radiation).
    loading_factor : float, optional
        Multiplies the convective part [-], 0 < factor <= 1.5; default 1.0
        (single piece in free air). See the module notes.
    correlation : str or None, optional
        Registry key of the forced correlation to use instead of the default
        for the matching faces (e.g. ``"flat_plate_turbulent"``); None = the
        defaults: cylinder_churchill_bernstein, sphere_whitaker, flat_plate.

    Returns
    -------
    ConvectionResult
        Total, convective and radiative coefficients and the numbers behind them.

    Raises
    ------
    ThermalInputError
        Bad geometry dimensions, temperatures at or below absolute zero, an
        emissivity outside [0, 1], a loading factor outside (0, 1.5], an
        unknown or mismatched correlation key, or still air without a
        surface-to-air temperature difference.

    Warns
    -----
    ValidityWarning
        A correlation used outside its validity range (naming range and
        value), or a surface below the dew point (condensation not modelled).

    References
    ----------
    .. [1] Bergman, T. L., Lavine, A. S., Incropera, F. P., DeWitt, D. P.
       (2011). Fundamentals of Heat and Mass Transfer, 7th ed., chapters 7
       and 9 (correlations), eq. 1.9 (radiation), eq. 9.36 (mixed convection).
    .. [2] Churchill, S. W. (1977). A comprehensive correlating equation for
       laminar, assisting, forced and free convection. AIChE J. 23, 10-16.
    """
    if not isinstance(air, AirSetting):
        raise ThermalInputError(f"air: must be an AirSetting, got {type(air).__name__}")
    lf = _scalar("loading_factor", loading_factor, accepted="in (0, 1.5]")
    low, high = LOADING_FACTOR_RANGE
    if not low < lf <= high:
        raise ThermalInputError(f"loading_factor: must be in (0, 1.5], got {lf!r}")
    eps = _scalar("emissivity", in_range("emissivity", emissivity, 0.0, 1.0))
    ts = None
    if surface_temperature is not None:
        ts = _scalar(
            "surface_temperature", temperature_c("surface_temperature", surface_temperature)
        )
    t_air = air.temperature
    hot = ts is not None and ts > t_air
    faces, principal = _faces(geometry, hot)
    if air.speed == 0.0 and air.measured_h is None and (ts is None or ts == t_air):
        raise ThermalInputError(
            "surface_temperature: still air (speed 0) needs a surface temperature different "
            "from the air temperature for natural convection"
        )
    notes: list[str] = []
    t_film = t_air if ts is None else 0.5 * (t_air + ts)

    if air.measured_h is not None:
        props = _properties(air, t_film, notes)
        h_conv = air.measured_h * lf
        reynolds = air.speed * principal / float(props.kinematic_viscosity)
        return ConvectionResult(
            h=h_conv,
            h_convective=h_conv,
            h_radiative=0.0,
            correlation="measured",
            reynolds=reynolds,
            nusselt=air.measured_h * principal / float(props.conductivity),
            regime="measured",
            film_temperature=t_film,
            warnings=_emit(notes),
            rayleigh=math.nan,
            length=principal,
            environment_temperature=t_air,
            h_forced=math.nan,
            h_natural=math.nan,
            loading_factor=lf,
        )

    if ts is not None and air.moisture > 0.0:
        td = float(dew_point(air.moisture, air.pressure))
        if ts < td:
            notes.append(
                f"surface_temperature {ts:.4g} °C is below the dew point {td:.4g} °C of the air: "
                "condensation on the product is not modelled, so h is underestimated"
            )

    film = _properties(air, t_film, notes)
    free = _properties(air, None, notes)
    mu_surface = float(free.viscosity)
    if ts is not None:
        mu_surface = float(_properties(air, ts, notes).viscosity)
    keys = _forced_keys(faces, correlation)
    natural = ts is not None and ts != t_air
    film_k = t_film + KELVIN

    total_area = sum(f.area for f in faces)
    h_sum = hf_sum = hn_sum = 0.0
    used: list[str] = []
    reynolds = rayleigh = math.nan
    for face in faces:
        hf = 0.0
        if air.speed > 0.0:
            key = keys[face.forced_surface]
            hf, re = _forced_h(face, key, air, film, free, mu_surface, notes)
            used.append(key)
            if face.forced_length == principal and math.isnan(reynolds):
                reynolds = re
        hn = 0.0
        if natural:
            hn = _natural_h(face, film, ts - t_air, film_k, notes)
            used.append(_DEFAULT_NATURAL[face.natural_surface])
        h_face = (hf**MIXED_EXPONENT + hn**MIXED_EXPONENT) ** (1.0 / MIXED_EXPONENT)
        h_sum += h_face * face.area
        hf_sum += hf * face.area
        hn_sum += hn * face.area

    if air.speed == 0.0:
        reynolds = 0.0
    nu_f, pr_f = float(film.kinematic_viscosity), float(film.prandtl)
    grashof = math.nan
    if natural:
        grashof = GRAVITY * abs(ts - t_air) / film_k * principal**3 / nu_f**2
        rayleigh = grashof * pr_f
    h_unloaded = h_sum / total_area
    h_conv = h_unloaded * lf
    surface_for_radiation = t_air if ts is None else ts
    h_rad = float(radiation_coefficient(eps, surface_for_radiation, air.wall))
    h_total = h_conv + h_rad
    env = t_air if h_total == 0.0 else (h_conv * t_air + h_rad * air.wall) / h_total
    return ConvectionResult(
        h=h_total,
        h_convective=h_conv,
        h_radiative=h_rad,
        correlation="+".join(dict.fromkeys(used)),
        reynolds=reynolds,
        nusselt=h_unloaded * principal / float(film.conductivity),
        regime=_regime(air, natural, grashof, reynolds),
        film_temperature=t_film,
        warnings=_emit(notes),
        rayleigh=rayleigh,
        length=principal,
        environment_temperature=env,
        h_forced=hf_sum / total_area,
        h_natural=hn_sum / total_area,
        loading_factor=lf,
    )
