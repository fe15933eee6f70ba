"""Product shapes and their transient conduction by the exact series.

Five shapes, all as frozen dataclasses with lengths in metres (full
dimensions, not half-dimensions):

* :class:`Slab` — heat flows through the thickness, both faces exposed;
* :class:`InfiniteCylinder` — long roll or sausage, radius;
* :class:`Sphere` — radius;
* :class:`FiniteCylinder` — radius and length, all faces exposed;
* :class:`Block` — three edges (length along the air flow, width, height).

Each shape lists its ``directions``: the one-dimensional factors of the
product solution as ``(series shape, conduction length)``. For a body with
uniform initial temperature, constant properties and the same air and ``h``
on every face, the dimensionless temperature of a finite cylinder is the
product of the infinite-cylinder and slab solutions, and that of a block the
product of three slab solutions, each with its own Biot and Fourier number.

The dimensional helpers take conductivity ``k`` [W/m K], surface coefficient
``h`` [W/m² K] and either the diffusivity ``alpha`` [m²/s] or the density
``rho`` [kg/m³] and specific heat ``cp`` [J/kg K], plus initial, air and
target temperatures [°C], and return temperatures [°C] or times [s].

References
----------
.. [1] Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S.,
   *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley, 2007, §5.2
   (lumped capacitance, Bi < 0.1 on V/A) and §5.8 (multidimensional effects,
   product solutions).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import brentq

from thermal import series
from thermal._checks import as_float_array, nonnegative, positive, temperature_c
from thermal.errors import ThermalInputError, UnreachableTargetError

__all__ = [
    "LUMPED_BIOT_LIMIT",
    "Block",
    "FiniteCylinder",
    "InfiniteCylinder",
    "Shape",
    "Slab",
    "Sphere",
    "biot_numbers",
    "lumped_biot",
    "lumped_temperature_ratio",
    "lumped_time",
    "temperature_at",
    "temperature_ratio_at",
    "time_to_temperature",
]

LUMPED_BIOT_LIMIT = 0.1
"""Largest Biot number on V/A for which lumped capacitance is used [-]."""


def _length(owner: str, name: str, value: float) -> float:
    arr = positive(f"{owner}.{name}", value)
    if arr.ndim != 0:
        raise ThermalInputError(f"{owner}.{name}: must be a single number in metres, got {value!r}")
    return float(arr)


@dataclass(frozen=True)
class Slab:
    """Plane slab cooled or heated on both faces.

    Parameters
    ----------
    thickness : float
        Full thickness in the direction of heat flow [m].
    length : float, optional
        Plan size along the air flow [m] (used by convection correlations).
        Without ``length`` and ``width`` volume and area are per square metre
        of face.
    width : float, optional
        Plan size across the air flow [m].
    """

    thickness: float
    length: float | None = None
    width: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "thickness", _length("Slab", "thickness", self.thickness))
        for name in ("length", "width"):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, _length("Slab", name, value))

    @property
    def kind(self) -> str:
        """Shape name: ``"slab"``."""
        return "slab"

    @property
    def _plan_area(self) -> float:
        if self.length is None and self.width is None:
            return 1.0
        if self.length is None or self.width is None:
            side = self.length if self.length is not None else self.width
            return float(side)  # per metre of the missing side
        return self.length * self.width

    @property
    def volume(self) -> float:
        """Volume [m³] (per m² of face without a plan size)."""
        return self._plan_area * self.thickness

    @property
    def area(self) -> float:
        """Exposed area of the two faces [m²]; edges neglected."""
        return 2.0 * self._plan_area

    @property
    def directions(self) -> tuple[tuple[str, float], ...]:
        """Product-solution factors ``(series shape, conduction length [m])``."""
        return (("slab", self.thickness / 2),)

    @property
    def characteristic_length(self) -> float:
        """V / A [m]: half the thickness."""
        return self.volume / self.area

    @property
    def smallest_half_dimension(self) -> float:
        """Shortest conduction length [m] (half the thickness)."""
        return min(length for _, length in self.directions)

    def scaled(self, factor: float) -> Slab:
        """Same shape with every dimension multiplied by ``factor`` [-]."""
        f = _factor(factor)
        return Slab(
            self.thickness * f,
            None if self.length is None else self.length * f,
            None if self.width is None else self.width * f,
        )


@dataclass(frozen=True)
class InfiniteCylinder:
    """Long cylinder, heat flow radial only.

    Parameters
    ----------
    radius : float
        Radius [m]. Volume and area are per metre of length.
    """

    radius: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "radius", _length("InfiniteCylinder", "radius", self.radius))

    @property
    def kind(self) -> str:
        """Shape name: ``"cylinder"``."""
        return "cylinder"

    @property
    def volume(self) -> float:
        """Volume per metre of length [m³/m]."""
        return math.pi * self.radius**2

    @property
    def area(self) -> float:
        """Mantle area per metre of length [m²/m]."""
        return 2 * math.pi * self.radius

    @property
    def directions(self) -> tuple[tuple[str, float], ...]:
        return (("cylinder", self.radius),)

    @property
    def characteristic_length(self) -> float:
        """V / A = R / 2 [m]."""
        return self.volume / self.area

    @property
    def smallest_half_dimension(self) -> float:
        return self.radius

    def scaled(self, factor: float) -> InfiniteCylinder:
        """Same shape with every dimension multiplied by ``factor`` [-]."""
        return InfiniteCylinder(self.radius * _factor(factor))


@dataclass(frozen=True)
class Sphere:
    """Sphere.

    Parameters
    ----------
    radius : float
        Radius [m].
    """

    radius: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "radius", _length("Sphere", "radius", self.radius))

    @property
    def kind(self) -> str:
        """Shape name: ``"sphere"``."""
        return "sphere"

    @property
    def volume(self) -> float:
        return 4.0 / 3.0 * math.pi * self.radius**3

    @property
    def area(self) -> float:
        return 4 * math.pi * self.radius**2

    @property
    def directions(self) -> tuple[tuple[str, float], ...]:
        return (("sphere", self.radius),)

    @property
    def characteristic_length(self) -> float:
        """V / A = R / 3 [m]."""
        return self.volume / self.area

    @property
    def smallest_half_dimension(self) -> float:
        return self.radius

    def scaled(self, factor: float) -> Sphere:
        """Same shape with every dimension multiplied by ``factor`` [-]."""
        return Sphere(self.radius * _factor(factor))


@dataclass(frozen=True)
class FiniteCylinder:
    """Cylinder of finite length, mantle and both ends exposed.

    Parameters
    ----------
    radius : float
        Radius [m].
    length : float
        Full length along the axis [m].
    """

    radius: float
    length: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "radius", _length("FiniteCylinder", "radius", self.radius))
        object.__setattr__(self, "length", _length("FiniteCylinder", "length", self.length))

    @property
    def kind(self) -> str:
        """Shape name: ``"finite_cylinder"``."""
        return "finite_cylinder"

    @property
    def volume(self) -> float:
        return math.pi * self.radius**2 * self.length

    @property
    def area(self) -> float:
        return 2 * math.pi * self.radius * (self.length + self.radius)

    @property
    def directions(self) -> tuple[tuple[str, float], ...]:
        return (("cylinder", self.radius), ("slab", self.length / 2))

    @property
    def characteristic_length(self) -> float:
        return self.volume / self.area

    @property
    def smallest_half_dimension(self) -> float:
        return min(self.radius, self.length / 2)

    def scaled(self, factor: float) -> FiniteCylinder:
        """Same shape with every dimension multiplied by ``factor`` [-]."""
        f = _factor(factor)
        return FiniteCylinder(self.radius * f, self.length * f)


@dataclass(frozen=True)
class Block:
    """Rectangular block, all six faces exposed.

    Parameters
    ----------
    length : float
        Edge along the air flow [m].
    width : float
        Edge across the air flow [m].
    height : float
        Vertical edge [m].
    """

    length: float
    width: float
    height: float

    def __post_init__(self) -> None:
        for name in ("length", "width", "height"):
            object.__setattr__(self, name, _length("Block", name, getattr(self, name)))

    @property
    def kind(self) -> str:
        """Shape name: ``"block"``."""
        return "block"

    @property
    def volume(self) -> float:
        return self.length * self.width * self.height

    @property
    def area(self) -> float:
        lw, lh, wh = self.length * self.width, self.length * self.height, self.width * self.height
        return 2 * (lw + lh + wh)

    @property
    def directions(self) -> tuple[tuple[str, float], ...]:
        return (("slab", self.length / 2), ("slab", self.width / 2), ("slab", self.height / 2))

    @property
    def characteristic_length(self) -> float:
        return self.volume / self.area

    @property
    def smallest_half_dimension(self) -> float:
        return min(self.length, self.width, self.height) / 2

    def scaled(self, factor: float) -> Block:
        """Same shape with every dimension multiplied by ``factor`` [-]."""
        f = _factor(factor)
        return Block(self.length * f, self.width * f, self.height * f)


Shape = Slab | InfiniteCylinder | Sphere | FiniteCylinder | Block
_SHAPE_TYPES = (Slab, InfiniteCylinder, Sphere, FiniteCylinder, Block)


def _factor(factor: float) -> float:
    arr = positive("factor", factor)
    if arr.ndim != 0:
        raise ThermalInputError(f"factor: must be a single number > 0, got {factor!r}")
    return float(arr)


def _check_shape(shape: object) -> Shape:
    if not isinstance(shape, _SHAPE_TYPES):
        names = ", ".join(t.__name__ for t in _SHAPE_TYPES)
        raise ThermalInputError(f"shape: must be one of {names}, got {type(shape).__name__}")
    return shape


def _diffusivity(k, alpha, rho, cp) -> NDArray[np.float64]:
    if alpha is not None:
        if rho is not None or cp is not None:
            raise ThermalInputError("alpha: give either alpha or both rho and cp, not both")
        return positive("alpha", alpha)
    if rho is None or cp is None:
        raise ThermalInputError("alpha: give alpha [m2/s], or both rho [kg/m3] and cp [J/kg K]")
    return k / (positive("rho", rho) * positive("cp", cp))


def _positions(shape: Shape, point) -> list[float]:
    dirs = shape.directions
    if point is None:
        return [0.0] * len(dirs)
    coords = np.atleast_1d(as_float_array("point", point)).ravel()
    if coords.size != len(dirs):
        raise ThermalInputError(
            f"point: must give {len(dirs)} coordinate(s) from the centre in m "
            f"(one per direction of {type(shape).__name__}), got {coords.size}"
        )
    out = []
    for c, (_, half) in zip(coords, dirs, strict=True):
        rel = abs(float(c)) / half
        if rel > 1 + 1e-12:
            raise ThermalInputError(
                f"point: coordinate {float(c)!r} m lies outside the body (half-size {half!r} m)"
            )
        out.append(min(rel, 1.0))
    return out


def biot_numbers(shape: Shape, *, h: ArrayLike, k: ArrayLike) -> tuple[NDArray[np.float64], ...]:
    """Biot number ``h L_i / k`` for each direction of the product solution.

    Parameters
    ----------
    shape : Shape
        One of the shapes of this module.
    h : array_like
        Surface heat-transfer coefficient [W/m² K], ``>= 0`` (``inf`` allowed:
        surface at the air temperature).
    k : array_like
        Thermal conductivity of the product [W/m K], ``> 0``.

    Returns
    -------
    tuple of ndarray
        One Biot number [-] per entry of ``shape.directions``.
    """
    shape = _check_shape(shape)
    hh = nonnegative("h", h, allow_inf=True)
    kk = positive("k", k)
    return tuple(hh * length / kk for _, length in shape.directions)


def temperature_ratio_at(
    shape: Shape,
    *,
    k: ArrayLike,
    h: ArrayLike,
    time: ArrayLike,
    alpha: ArrayLike | None = None,
    rho: ArrayLike | None = None,
    cp: ArrayLike | None = None,
    point: Sequence[float] | float | None = None,
) -> NDArray[np.float64]:
    """θ = (T - T_air) / (T_i - T_air) at a point, by the product solution.

    Parameters
    ----------
    shape : Shape
        Product shape.
    k : array_like
        Thermal conductivity [W/m K].
    h : array_like
        Surface coefficient [W/m² K], the same on every face.
    time : array_like
        Time since exposure [s], ``>= 0``.
    alpha : array_like, optional
        Thermal diffusivity [m²/s]; otherwise ``k / (rho cp)``.
    rho : array_like, optional
        Density [kg/m³].
    cp : array_like, optional
        Specific heat [J/kg K].
    point : sequence of float, optional
        Coordinates from the centre [m], one per direction (radius first for a
        finite cylinder; length, width, height for a block). Default: centre.

    Returns
    -------
    ndarray
        θ [-], broadcast over ``k``, ``h``, ``time`` and properties.

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., §5.8, eqs. 5.64–5.69 (product solutions).
    """
    shape = _check_shape(shape)
    kk = positive("k", k)
    hh = nonnegative("h", h, allow_inf=True)
    tt = nonnegative("time", time)
    aa = _diffusivity(kk, alpha, rho, cp)
    positions = _positions(shape, point)
    theta = np.ones(np.broadcast_shapes(kk.shape, hh.shape, tt.shape, aa.shape))
    for (kind, length), x in zip(shape.directions, positions, strict=True):
        theta = theta * series.temperature_ratio(kind, hh * length / kk, aa * tt / length**2, x)
    return theta


def temperature_at(
    shape: Shape,
    *,
    k: ArrayLike,
    h: ArrayLike,
    time: ArrayLike,
    t_initial: ArrayLike,
    t_air: ArrayLike,
    alpha: ArrayLike | None = None,
    rho: ArrayLike | None = None,
    cp: ArrayLike | None = None,
    point: Sequence[float] | float | None = None,
) -> NDArray[np.float64]:
    """Temperature at a point after ``time`` in air at ``t_air``.

    Parameters
    ----------
    shape : Shape
        Product shape.
    k : array_like
        Thermal conductivity [W/m K].
    h : array_like
        Surface coefficient [W/m² K].
    time : array_like
        Time since exposure [s].
    t_initial : array_like
        Uniform initial temperature [°C].
    t_air : array_like
        Air temperature [°C].
    alpha, rho, cp : array_like, optional
        Diffusivity [m²/s], or density [kg/m³] and specific heat [J/kg K].
    point : sequence of float, optional
        Coordinates from the centre [m]; default the centre.

    Returns
    -------
    ndarray
        Temperature [°C].

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., §5.5–5.8.
    """
    ti = temperature_c("t_initial", t_initial)
    ta = temperature_c("t_air", t_air)
    theta = temperature_ratio_at(
        shape, k=k, h=h, time=time, alpha=alpha, rho=rho, cp=cp, point=point
    )
    return ta + (ti - ta) * theta


def _scalar(name: str, arr: NDArray[np.float64]) -> float:
    if arr.ndim != 0:
        raise ThermalInputError(
            f"{name}: must be a single number, got an array of shape {arr.shape}"
        )
    return float(arr)


def _fmt(value: float) -> str:
    """Temperature for messages: up to 6 significant digits, always a decimal point."""
    text = f"{value:.6g}"
    return text if ("." in text or "e" in text or "n" in text) else text + ".0"


def _target_ratio(t_initial: float, t_air: float, t_target: float, where: str) -> float:
    """θ of the target, or UnreachableTargetError with the physical reason."""
    t_initial, t_air, t_target = float(t_initial), float(t_air), float(t_target)
    ta, tt = _fmt(t_air), _fmt(t_target)
    if t_initial == t_air:
        if t_target == t_initial:
            return 1.0
        raise UnreachableTargetError(
            f"t_target: the product starts at the air temperature ({ta} °C), so it stays "
            f"there and never reaches {tt} °C"
        )
    cooling = t_initial > t_air
    verb = "below" if cooling else "above"
    if (cooling and t_target < t_air) or (not cooling and t_target > t_air):
        raise UnreachableTargetError(
            f"t_target: air at {ta} °C cannot bring the {where} {verb} {ta} °C (target {tt} °C)"
        )
    if t_target == t_air:
        raise UnreachableTargetError(
            f"t_target: air at {ta} °C brings the {where} to {ta} °C only after infinite "
            "time; choose a target short of the air temperature"
        )
    return (t_target - t_air) / (t_initial - t_air)


def time_to_temperature(
    shape: Shape,
    *,
    k: float,
    h: float,
    t_initial: float,
    t_air: float,
    t_target: float,
    alpha: float | None = None,
    rho: float | None = None,
    cp: float | None = None,
    point: Sequence[float] | float | None = None,
) -> float:
    """Time for the point (default the centre) to reach ``t_target``.

    Works for heating and cooling alike. A target already passed at the
    start (between the initial temperature and beyond it) gives 0.

    Parameters
    ----------
    shape : Shape
        Product shape.
    k : float
        Thermal conductivity [W/m K].
    h : float
        Surface coefficient [W/m² K] (``inf``: surface at the air temperature).
    t_initial : float
        Uniform initial temperature [°C].
    t_air : float
        Air temperature [°C].
    t_target : float
        Target temperature at the point [°C].
    alpha, rho, cp : float, optional
        Diffusivity [m²/s], or density [kg/m³] and specific heat [J/kg K].
    point : sequence of float, optional
        Coordinates from the centre [m]; default the centre.

    Returns
    -------
    float
        Time [s].

    Raises
    ------
    UnreachableTargetError
        Target on the far side of, or equal to, the air temperature; no heat
        exchange (``h = 0``); product already at the air temperature.
    ThermalInputError
        Bad argument (named in the message).

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., §5.5–5.8 (series and product solutions, inverted numerically;
       the product of decreasing factors is decreasing, so the root is
       bracketed and found by Brent's method).
    """
    shape = _check_shape(shape)
    kk = _scalar("k", positive("k", k))
    hh = _scalar("h", nonnegative("h", h, allow_inf=True))
    ti = _scalar("t_initial", temperature_c("t_initial", t_initial))
    ta = _scalar("t_air", temperature_c("t_air", t_air))
    tg = _scalar("t_target", temperature_c("t_target", t_target))
    aa = _scalar("alpha", _diffusivity(kk, alpha, rho, cp))
    positions = _positions(shape, point)
    where = "core" if all(x == 0 for x in positions) else "point"
    ratio = _target_ratio(ti, ta, tg, where)
    if ratio >= 1.0:
        return 0.0
    if hh == 0.0:
        raise UnreachableTargetError(
            f"h: with h = 0 there is no heat exchange; the {where} stays at {_fmt(ti)} °C"
        )
    dirs = [
        (kind, length, x, hh * length / kk)
        for (kind, length), x in zip(shape.directions, positions, strict=True)
    ]
    if len(dirs) == 1:
        kind, length, x, bi = dirs[0]
        return float(series.fourier_for_ratio(kind, bi, ratio, x)) * length**2 / aa
    # product of n decreasing factors: if every factor is above r^(1/n) the
    # product is above r; once any factor is below r so is the product
    n = len(dirs)
    t_each = np.empty((n, 2))
    for kind in {d[0] for d in dirs}:  # one vectorised inversion per series shape
        rows = [i for i, d in enumerate(dirs) if d[0] == kind]
        bi = np.array([[dirs[i][3]] for i in rows])
        x = np.array([[dirs[i][2]] for i in rows])
        scale = np.array([[dirs[i][1] ** 2 / aa] for i in rows])
        fo = series.fourier_for_ratio(kind, bi, np.array([ratio, ratio ** (1 / n)]), x)
        t_each[rows] = fo * scale
    t_hi = float(t_each[:, 0].min())
    t_lo = float(t_each[:, 1].min())
    if t_hi == 0.0:
        return 0.0
    log_r = math.log(ratio)
    # one θ(Fo) per direction with its eigen data computed once (valid from t_lo)
    factors = [
        (series._point_evaluator(kind, bi, x, aa * t_lo / length**2), aa / length**2)
        for kind, length, x, bi in dirs
    ]

    def gap(t: float) -> float:
        total = 0.0
        for theta_of, scale in factors:
            theta = theta_of(scale * t)
            if theta <= 0.0:
                return -math.inf
            total += math.log(theta)
        return total - log_r

    if t_lo >= t_hi or gap(t_hi) >= 0.0:
        return t_hi
    if gap(t_lo) <= 0.0:
        return t_lo
    return float(brentq(gap, t_lo, t_hi, xtol=1e-13 * t_hi, rtol=1e-13))


def lumped_biot(shape: Shape, *, h: ArrayLike, k: ArrayLike) -> NDArray[np.float64]:
    """Biot number on the characteristic length V/A, ``h (V/A) / k`` [-].

    Lumped capacitance is acceptable for ``Bi < LUMPED_BIOT_LIMIT`` (0.1).

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., eq. 5.10 and the criterion Bi < 0.1.
    """
    shape = _check_shape(shape)
    return nonnegative("h", h, allow_inf=True) * shape.characteristic_length / positive("k", k)


def _check_lumped(shape: Shape, h, k) -> None:
    if k is None:
        return
    bi = lumped_biot(shape, h=h, k=k)
    if np.any(bi >= LUMPED_BIOT_LIMIT):
        worst = float(np.max(bi))
        raise ThermalInputError(
            f"h: lumped capacitance needs Bi = h (V/A) / k < {LUMPED_BIOT_LIMIT}, got Bi = "
            f"{worst:.3g}; use temperature_at / time_to_temperature instead"
        )


def lumped_temperature_ratio(
    shape: Shape,
    *,
    h: ArrayLike,
    time: ArrayLike,
    rho: ArrayLike,
    cp: ArrayLike,
    k: ArrayLike | None = None,
) -> NDArray[np.float64]:
    """θ = exp(-h A t / (ρ cp V)) for a body of uniform temperature.

    Parameters
    ----------
    shape : Shape
        Product shape (only V/A is used).
    h : array_like
        Surface coefficient [W/m² K].
    time : array_like
        Time [s].
    rho : array_like
        Density [kg/m³].
    cp : array_like
        Specific heat [J/kg K].
    k : array_like, optional
        Conductivity [W/m K]; when given, ``Bi = h (V/A) / k < 0.1`` is
        enforced (ThermalInputError otherwise).

    Returns
    -------
    ndarray
        θ [-].

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., eq. 5.6.
    """
    shape = _check_shape(shape)
    hh = nonnegative("h", h)
    tt = nonnegative("time", time)
    _check_lumped(shape, hh, k)
    tau = positive("rho", rho) * positive("cp", cp) * shape.characteristic_length
    return np.exp(-hh * tt / tau)


def lumped_time(
    shape: Shape,
    *,
    h: float,
    rho: float,
    cp: float,
    t_initial: float,
    t_air: float,
    t_target: float,
    k: float | None = None,
) -> float:
    """Time [s] for a lumped body to reach ``t_target``: ``τ ln(1/θ)``, τ = ρ cp V / (h A).

    Parameters
    ----------
    shape : Shape
        Product shape (only V/A is used).
    h : float
        Surface coefficient [W/m² K].
    rho : float
        Density [kg/m³].
    cp : float
        Specific heat [J/kg K].
    t_initial, t_air, t_target : float
        Initial, air and target temperatures [°C].
    k : float, optional
        Conductivity [W/m K]; when given, Bi < 0.1 is enforced.

    Raises
    ------
    UnreachableTargetError
        Target on the far side of, or equal to, the air temperature, or h = 0.

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., eq. 5.5.
    """
    shape = _check_shape(shape)
    hh = _scalar("h", nonnegative("h", h))
    ti = _scalar("t_initial", temperature_c("t_initial", t_initial))
    ta = _scalar("t_air", temperature_c("t_air", t_air))
    tg = _scalar("t_target", temperature_c("t_target", t_target))
    _check_lumped(shape, hh, k)
    ratio = _target_ratio(ti, ta, tg, "product")
    if ratio >= 1.0:
        return 0.0
    if hh == 0.0:
        raise UnreachableTargetError(
            f"h: with h = 0 there is no heat exchange; the product stays at {_fmt(ti)} °C"
        )
    tau = _scalar("rho", positive("rho", rho)) * _scalar("cp", positive("cp", cp))
    tau *= shape.characteristic_length / hh
    return tau * math.log(1.0 / ratio)
