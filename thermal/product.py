"""A product: a piece of food of a given shape and properties.

Combines a :mod:`thermal.geometry` shape with food properties (a
:class:`thermal.foods.Composition`, :class:`thermal.foods.FoodProperties` or
:class:`thermal.foods.ConstantProperties`) and answers the first questions a
process engineer asks of it: the surface heat-transfer coefficient in an air
setting, the Biot numbers, and how long until the core reaches a temperature
by the exact series solution.

Temperatures in °C, times in s, everything else SI.

References
----------
.. [1] Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S.
   *Fundamentals of Heat and Mass Transfer*, chapter 5 (Biot number, lumped
   capacitance for Bi < 0.1 on V/A, exact series and product solutions).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal import convection, geometry
from thermal._checks import as_float_array, in_range, nonnegative, temperature_c
from thermal.errors import ThermalInputError, UnreachableTargetError
from thermal.foods import Composition, FoodProperties, ThermalProperties
from thermal.geometry import Shape

LUMPED_BIOT_LIMIT = 0.1
"""Biot number on V/A below which lumped capacitance is accurate [-] (Incropera, ch. 5)."""

_SURFACE_ITERATIONS = 25
_SURFACE_TOLERANCE = 1e-4  # relative change of h between iterations


@dataclass(frozen=True)
class BiotNumbers:
    """Biot numbers of a product for one h and one conductivity.

    Attributes
    ----------
    per_direction : tuple of (str, float)
        ``(series shape, Bi = h L / k)`` for each 1-D factor of the shape's
        product solution, L being that factor's conduction length [-].
    lumped : float
        ``h (V/A) / k`` [-]; lumped capacitance applies when below 0.1.
    h : float
        Surface heat-transfer coefficient used [W/(m2 K)].
    conductivity : float
        Product conductivity used [W/(m K)].
    """

    per_direction: tuple[tuple[str, float], ...]
    lumped: float
    h: float
    conductivity: float

    @property
    def largest(self) -> float:
        """Largest per-direction Biot number [-] (the one of the slowest direction)."""
        return max(bi for _, bi in self.per_direction)

    @property
    def lumped_applies(self) -> bool:
        """True when ``lumped`` < 0.1 (uniform temperature inside a few per cent)."""
        return self.lumped < LUMPED_BIOT_LIMIT


@dataclass(frozen=True)
class CoreTimeResult:
    """Time for the core (slowest point) of a product to reach a temperature.

    Attributes
    ----------
    seconds : float
        Time from the start until the core reaches ``t_target`` [s].
    h : float
        Surface heat-transfer coefficient used, convection plus radiation
        [W/(m2 K)].
    biot : BiotNumbers
        Biot numbers at ``h`` and the representative conductivity.
    method : str
        ``"series"``: exact series (product) solution with constant
        properties.
    property_temperature : float
        Temperature at which k, ρ, cp were taken: mean of initial and target
        [°C].
    surface_temperature : float
        Surface temperature used for the film properties, natural convection
        and radiation [°C] (see :meth:`Product.time_to_core`).
    conductivity : float
        k at ``property_temperature`` [W/(m K)].
    diffusivity : float
        α at ``property_temperature`` [m2/s].
    convection : ConvectionResult
        The :class:`thermal.convection.ConvectionResult` behind ``h``; the
        series uses its ``environment_temperature`` as the sink temperature
        (the air temperature unless the walls differ).
    warnings : tuple of str
        Caveats of this estimate (also in ``convection.warnings``).
    """

    seconds: float
    h: float
    biot: BiotNumbers
    method: str
    property_temperature: float
    surface_temperature: float
    conductivity: float
    diffusivity: float
    convection: convection.ConvectionResult = field(repr=False)
    warnings: tuple[str, ...] = ()

    @property
    def minutes(self) -> float:
        """``seconds`` / 60 [min]."""
        return self.seconds / 60.0


def _as_properties(properties: object) -> ThermalProperties:
    if isinstance(properties, Composition):
        return FoodProperties(properties)
    if properties is None:
        raise ThermalInputError(
            "properties: missing; give a Composition, FoodProperties or ConstantProperties"
        )
    if not isinstance(properties, ThermalProperties):
        raise ThermalInputError(
            "properties: must be a Composition, FoodProperties or ConstantProperties, "
            f"got {type(properties).__name__}"
        )
    return properties


def _check_geometry(shape: object) -> None:
    needed = ("kind", "volume", "area", "characteristic_length", "directions")
    missing = [name for name in needed if not hasattr(shape, name)]
    if missing:
        raise ThermalInputError(
            "geometry: must be a thermal.geometry shape (Slab, InfiniteCylinder, Sphere, "
            f"FiniteCylinder, Block), got {type(shape).__name__}"
        )


def _scalar(name: str, value: ArrayLike) -> float:
    arr = as_float_array(name, value)
    if arr.ndim != 0:
        raise ThermalInputError(f"{name}: must be a single number, got shape {arr.shape}")
    return float(arr)


class Product:
    """A piece of food: shape, thermal properties and surface emissivity.

    Parameters
    ----------
    name : str
        Product name (non-empty).
    geometry : shape
        A :mod:`thermal.geometry` shape, full dimensions in m (for the
        largest piece when planning).
    properties : Composition or ThermalProperties
        A composition (turned into :class:`thermal.foods.FoodProperties` with
        the defaults) or any property set of the ``ThermalProperties``
        protocol.
    emissivity : float
        Surface emissivity for radiation to oven walls [-], in [0, 1];
        0.9 is a usual value for moist foods (common practice).

    Examples
    --------
    A 28 mm sausage (an invented batter composition) from 4 °C to a 72 °C
    core in 3 m/s air at 175 °C: h [W/(m2 K)], the Biot number and minutes.

    >>> from thermal import AirSetting, Composition, InfiniteCylinder, Product
    >>> sausage = Product(
    ...     "sausage",
    ...     InfiniteCylinder(radius=0.014),
    ...     Composition(water=0.58, protein=0.13, fat=0.24, carbohydrate=0.025, ash=0.025),
    ... )
    >>> r = sausage.time_to_core(AirSetting(temperature=175.0, speed=3.0), 4.0, 72.0)
    >>> round(r.h, 1), round(r.biot.largest, 2), round(r.minutes, 1)
    (47.4, 1.46, 8.6)
    """

    def __init__(
        self,
        name: str,
        geometry: Shape,
        properties: Composition | ThermalProperties,
        emissivity: float = 0.9,
    ) -> None:
        if not isinstance(name, str) or not name.strip():
            raise ThermalInputError(f"name: must be a non-empty string, got {name!r}")
        _check_geometry(geometry)
        self.name = name
        self.geometry = geometry
        self.properties = _as_properties(properties)
        self.emissivity = float(in_range("emissivity", emissivity, 0.0, 1.0))

    def __repr__(self) -> str:
        return (
            f"Product({self.name!r}, {self.geometry!r}, {self.properties!r}, "
            f"emissivity={self.emissivity!r})"
        )

    # -- properties ---------------------------------------------------------------
    def conductivity(self, temperature: ArrayLike) -> NDArray[np.float64]:
        """Thermal conductivity at a temperature [W/(m K)] (temperature in °C)."""
        return self.properties.conductivity(temperature)

    def diffusivity(self, temperature: ArrayLike) -> NDArray[np.float64]:
        """Thermal diffusivity at a temperature [m2/s] (apparent cp below freezing)."""
        return self.properties.diffusivity(temperature)

    def biot(self, h: float, temperature: float) -> BiotNumbers:
        """Biot numbers at a surface coefficient and a product temperature.

        Parameters
        ----------
        h : float
            Surface heat-transfer coefficient [W/(m2 K)], >= 0.
        temperature : float
            Product temperature at which k is taken [°C].

        Returns
        -------
        BiotNumbers
            Per direction ``h L_i / k`` and lumped ``h (V/A) / k``.
        """
        h_value = _scalar("h", nonnegative("h", h))
        t = _scalar("temperature", temperature_c("temperature", temperature))
        k = float(self.conductivity(t))
        per_direction = tuple(
            (shape, h_value * length / k) for shape, length in self.geometry.directions
        )
        lumped = h_value * self.geometry.characteristic_length / k
        return BiotNumbers(per_direction, lumped, h_value, k)

    # -- surface ------------------------------------------------------------------
    def surface_coefficient(
        self,
        air: convection.AirSetting,
        loading_factor: float = 1.0,
        surface_temperature: float | None = None,
    ) -> convection.ConvectionResult:
        """Surface heat-transfer coefficient in an air setting.

        Delegates to :func:`thermal.convection.surface_coefficient` with this
        product's geometry and emissivity.

        Parameters
        ----------
        air : AirSetting
            Air temperature [°C], speed [m/s], humidity, walls.
        loading_factor : float
            Belt or tray loading factor [-] (see :mod:`thermal.convection`).
        surface_temperature : float, optional
            Product surface temperature [°C] for film properties, natural
            convection and radiation; ``None`` = air temperature.

        Returns
        -------
        ConvectionResult
            ``h`` [W/(m2 K)] and its parts.
        """
        return convection.surface_coefficient(
            self.geometry,
            air,
            surface_temperature=surface_temperature,
            emissivity=self.emissivity,
            loading_factor=loading_factor,
        )

    def _surface_point(self) -> tuple[float, ...]:
        """Centre of the largest face: the surface of the shortest direction."""
        lengths = [length for _, length in self.geometry.directions]
        shortest = int(np.argmin(lengths))
        return tuple(length if i == shortest else 0.0 for i, length in enumerate(lengths))

    # -- core time ----------------------------------------------------------------
    def time_to_core(
        self,
        air: convection.AirSetting,
        t_initial: float,
        t_target: float,
        loading_factor: float = 1.0,
    ) -> CoreTimeResult:
        """Time for the core to reach ``t_target`` from a uniform start.

        Exact series (product) solution for the shape with constant
        properties taken at the mean of ``t_initial`` and ``t_target``, and a
        constant surface coefficient from :meth:`surface_coefficient`. The
        surface temperature used for the film properties, natural convection
        and radiation is the time mean of the surface temperature,
        approximated by the mean of ``t_initial`` and the series surface
        temperature (centre of the largest face) at the moment the core
        reaches the target; it is found by fixed-point iteration on h
        (converged to 1e-4 relative, usually in 2-4 steps), starting from the
        mean of ``t_initial`` and the air temperature.

        Parameters
        ----------
        air : AirSetting
            The air setting (temperature [°C], speed [m/s], ...).
        t_initial : float
            Uniform initial product temperature [°C].
        t_target : float
            Core temperature to reach [°C], strictly between ``t_initial``
            and the air temperature.
        loading_factor : float
            Loading factor passed to the convection model [-].

        Returns
        -------
        CoreTimeResult
            Time [s], h, Biot numbers, method and what was assumed.

        Raises
        ------
        UnreachableTargetError
            When the target is on the far side of (or equal to) the air
            temperature.
        ThermalInputError
            For bad input, or when the core would pass below the initial
            freezing point of a freezing product (latent heat: use the
            numerical solver, :mod:`thermal.numeric`).

        References
        ----------
        .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*,
           ch. 5 (series and product solutions).
        """
        t_i = _scalar("t_initial", temperature_c("t_initial", t_initial))
        t_t = _scalar("t_target", temperature_c("t_target", t_target))
        t_air = float(air.temperature)
        props = self.properties
        t_f = props.freezing_point
        notes: list[str] = []
        if t_f is not None and props.latent_heat > 0.0:
            if min(t_i, t_t) < t_f:
                raise ThermalInputError(
                    f"t_target: the core would pass below the initial freezing point "
                    f"({t_f:.2f} °C); the series solution has no latent heat, use the "
                    "numerical solver (thermal.numeric) for freezing and thawing"
                )
            if t_air < t_f:
                notes.append(
                    f"air at {t_air:g} °C is below the initial freezing point "
                    f"({t_f:.2f} °C): the surface may freeze, which the series "
                    "solution ignores"
                )

        t_prop = 0.5 * (t_i + t_t)
        k = float(props.conductivity(t_prop))
        alpha = float(props.diffusivity(t_prop))

        if t_i == t_air:
            raise UnreachableTargetError(
                f"t_initial: the product starts at the air temperature ({t_air:g} °C), so "
                f"the core cannot move to {t_t:g} °C"
            )

        def core_time(conv: convection.ConvectionResult) -> float:
            return float(
                geometry.time_to_temperature(
                    self.geometry,
                    k=k,
                    h=float(conv.h),
                    t_initial=t_i,
                    t_air=float(conv.environment_temperature),
                    t_target=t_t,
                    alpha=alpha,
                )
            )

        t_surface = 0.5 * (t_i + t_air)
        result = self.surface_coefficient(air, loading_factor, t_surface)
        h = float(result.h)
        seconds = core_time(result)
        point = self._surface_point()
        for _ in range(_SURFACE_ITERATIONS):
            end_surface = float(
                geometry.temperature_at(
                    self.geometry,
                    k=k,
                    h=h,
                    time=seconds,
                    t_initial=t_i,
                    t_air=float(result.environment_temperature),
                    alpha=alpha,
                    point=point,
                )
            )
            t_surface = 0.5 * (t_i + end_surface)
            result = self.surface_coefficient(air, loading_factor, t_surface)
            h_new = float(result.h)
            converged = abs(h_new - h) <= _SURFACE_TOLERANCE * max(h, 1e-12)
            h = h_new
            seconds = core_time(result)
            if converged:
                break
        else:
            notes.append(
                f"surface temperature iteration did not settle in {_SURFACE_ITERATIONS} steps"
            )

        return CoreTimeResult(
            seconds=seconds,
            h=h,
            biot=self.biot(h, t_prop),
            method="series",
            property_temperature=t_prop,
            surface_temperature=t_surface,
            conductivity=k,
            diffusivity=alpha,
            convection=result,
            warnings=tuple(notes) + tuple(getattr(result, "warnings", ())),
        )
