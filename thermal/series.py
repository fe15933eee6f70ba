"""Exact series solutions of transient conduction with a convective surface.

A body at a uniform initial temperature ``T_i`` is exposed at time zero to air
at ``T_air`` through a surface coefficient ``h``. For the three one-dimensional
shapes

* ``"slab"``: plane wall of half-thickness ``L`` cooled (or heated) on both
  faces, position ``x / L``;
* ``"cylinder"``: infinitely long cylinder of radius ``R``, position ``r / R``;
* ``"sphere"``: sphere of radius ``R``, position ``r / R``;

the dimensionless temperature ``θ = (T - T_air) / (T_i - T_air)`` depends only
on the Biot number ``Bi = h L / k`` (``L`` or ``R``), the Fourier number
``Fo = α t / L²`` and the position. The exact solution is the eigenfunction
series ``θ = Σ C_n exp(-ζ_n² Fo) X(ζ_n x)``.

Accuracy contract: ``|error in θ| <= 1e-8`` for every ``Bi`` in ``[0, inf]``,
``Fo >= 0`` and position in ``[0, 1]``. The number of series terms is chosen
per case from a rigorous bound on the neglected tail (``<= 1e-10``). Where
that would need more than ``MAX_SERIES_TERMS`` terms (very short times, about
``Fo < 6e-4``) the solution is obtained instead from its closed-form Laplace
transform by a fixed Talbot contour quadrature (24 nodes), which converges
geometrically for transforms whose singularities lie on the negative real
axis, as here; it agrees with the series and with closed forms to about 1e-14
(see the tests). Points deeper than ``13 √Fo`` below the surface at such short
times have not yet felt the surface (``1 - θ < 1e-17``) and are returned as
exactly 1. Below ``Fo = 1e-20`` the semi-infinite solid with surface
convection is used; curvature changes ``1 - θ`` there by a relative
``O(√Fo) < 1e-9``.

The inverse, :func:`fourier_for_ratio`, starts from the one-term inverse (or
an early-time estimate), then runs a bracketed Newton iteration in ``ln Fo``
on all cases at once, on ``ln θ`` or, while θ is near 1, on ``ln(1 - θ)``.
Term counts are raised only for the cases whose root lies below the range
their eigen data cover.

Everything is vectorised over numpy arrays; there is no Python loop per case.

References
----------
.. [1] Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S.,
   *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley, 2007, §5.5–5.6
   (series solutions, eigenvalue equations, one-term approximation).
.. [2] Carslaw, H. S., Jaeger, J. C., *Conduction of Heat in Solids*, 2nd ed.,
   Oxford, 1959, §3.10, §6.3, §9.9 (series and Laplace-transform solutions).
.. [3] Weideman, J. A. C., "Optimizing Talbot's contours for the inversion of
   the Laplace transform", *SIAM J. Numer. Anal.* 44 (2006) 2342–2362.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special

from thermal._checks import as_float_array, in_range, nonnegative
from thermal.errors import ThermalInputError

__all__ = [
    "MAX_SERIES_TERMS",
    "SHAPES",
    "eigenvalues",
    "fourier_for_ratio",
    "mean_temperature_ratio",
    "temperature_ratio",
]

SHAPES: tuple[str, ...] = ("slab", "cylinder", "sphere")
"""Accepted one-dimensional shape names."""

MAX_SERIES_TERMS = 64
"""Most eigenfunction terms used before switching to the short-time method."""

_TAIL_TOL = 1e-10
# Bound on |C_n| for n >= 2 (all Biot numbers); the eigenfunctions are bounded
# by 1 and so are the mean-value factors. Slab: |C_n| <= 4 / (2 ζ_n - 1) with
# ζ_n >= π. Sphere: |C_n| <= 2 (shown from the eigenvalue equation).
# Cylinder: |C_n| <= 2 / sqrt(ζ · ζ (J0² + J1²)) with ζ >= j1,1 = 3.83, where
# ζ (J0² + J1²) >= 0.588 (checked numerically on [3.8, 2000], tends to 2/π);
# gives 1.31, rounded up. tests/test_series.py checks these bounds.
_COEF_BOUND = {"slab": 0.76, "cylinder": 1.4, "sphere": 2.0}
# Buckets of term counts so that cases needing similar counts share arrays.
_TERM_BUCKETS = np.array([1, 2, 3, 4, 5, 6, 8, 10, 12, 16, 20, 24, 32, 40, 48, 56, 64])
# Depth (in units of 2 √Fo) beyond which a point has not yet felt the surface.
_DEEP_ETA = 6.5
# Fixed Talbot contour (Weideman 2006): z(φ) = (N/t)(σ + μ φ cot(a φ) + i ν φ).
_TALBOT_N = 24
_TALBOT_SIGMA, _TALBOT_MU, _TALBOT_A, _TALBOT_NU = -0.6122, 0.5017, 0.6407, 0.2645


# --------------------------------------------------------------------------
# argument checks
# --------------------------------------------------------------------------
def _check_shape(shape: object) -> str:
    if not isinstance(shape, str) or shape not in SHAPES:
        raise ThermalInputError(
            f"shape: must be one of {', '.join(repr(s) for s in SHAPES)}, got {shape!r}"
        )
    return shape


def _check_biot(biot: ArrayLike) -> NDArray[np.float64]:
    return nonnegative("biot", biot, allow_inf=True)


def _check_fourier(fourier: ArrayLike) -> NDArray[np.float64]:
    return nonnegative("fourier", fourier, allow_inf=True)


def _check_position(position: ArrayLike) -> NDArray[np.float64]:
    return in_range("position", position, 0.0, 1.0)


_RATIO_DOMAIN = "> 0 (θ = (T - T_air)/(T_i - T_air); 0 is never reached)"


def _check_ratio(ratio: ArrayLike) -> NDArray[np.float64]:
    arr = as_float_array("ratio", ratio, allow_inf=True, accepted=_RATIO_DOMAIN)
    bad = arr <= 0
    if bad.any():
        raise ThermalInputError(
            f"ratio: must be {_RATIO_DOMAIN}, got {float(arr[bad].ravel()[0])!r}"
        )
    return arr


# --------------------------------------------------------------------------
# small special functions without cancellation near zero
# --------------------------------------------------------------------------
_S1_COEF = np.array([(-1) ** (k + 1) * 2 * k / special.factorial(2 * k + 1) for k in range(1, 12)])
_T2_COEF = np.array(
    [(-1) ** (k + 1) * 2.0 ** (2 * k + 1) / special.factorial(2 * k + 1) for k in range(1, 14)]
)


def _series_even(coef: NDArray[np.float64], z2: NDArray[np.float64]) -> NDArray[np.float64]:
    out = np.zeros_like(z2)
    for c in coef[::-1]:
        out = out * z2 + c
    return out


def _small_safe(z, direct, coef):
    """Evaluate ``direct`` where |z| >= 0.5 and the even Taylor series below."""
    z = np.asarray(z, dtype=float)
    small = np.abs(z) < 0.5
    if not small.any():
        return direct(z)
    out = np.empty_like(z)
    big = ~small
    if big.any():
        out[big] = direct(z[big])
    zs = z[small]
    out[small] = _series_even(coef, zs * zs)
    return out


def _s1(z: NDArray[np.float64]) -> NDArray[np.float64]:
    """(sin z - z cos z) / z³, accurate at small z."""
    return _small_safe(z, lambda v: (np.sin(v) - v * np.cos(v)) / v**3, _S1_COEF)


def _t2(z: NDArray[np.float64]) -> NDArray[np.float64]:
    """(2z - sin 2z) / z³, accurate at small z."""
    return _small_safe(z, lambda v: (2 * v - np.sin(2 * v)) / v**3, _T2_COEF)


def _sinc(z: NDArray[np.float64]) -> NDArray[np.float64]:
    """sin z / z with the value 1 at 0."""
    z = np.asarray(z, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.sin(z) / z
    return np.where(z == 0, 1.0, out)


def _j1_over_x(z: NDArray[np.float64]) -> NDArray[np.float64]:
    with np.errstate(divide="ignore", invalid="ignore"):
        out = special.j1(z) / z
    return np.where(z == 0, 0.5, out)


def _weights(biot: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """a = 1/(1+Bi), b = Bi/(1+Bi), exact at Bi = 0 and Bi = inf."""
    inf = np.isinf(biot)
    with np.errstate(invalid="ignore"):
        a = np.where(inf, 0.0, 1.0 / (1.0 + biot))
        b = np.where(inf, 1.0, biot * a)
    return a, b


@lru_cache(maxsize=8)
def _bessel_zeros_table(order: int, count: int) -> NDArray[np.float64]:
    zeros = special.jn_zeros(order, count)
    zeros.setflags(write=False)
    return zeros


def _bessel_zeros(order: int, count: int) -> NDArray[np.float64]:
    """First ``count`` positive zeros of J_order (table grown in steps of 256)."""
    size = 256 * (1 + (count - 1) // 256)
    return _bessel_zeros_table(order, size)[:count]


# --------------------------------------------------------------------------
# eigenvalues
# --------------------------------------------------------------------------
def _residual(shape: str, z, a, b):
    """Scaled eigenvalue equation F(ζ) and dF/dζ (no poles, exact at Bi = inf)."""
    if shape == "slab":  # ζ tan ζ = Bi
        s, c = np.sin(z), np.cos(z)
        return a * z * s - b * c, a * (s + z * c) + b * s
    if shape == "cylinder":  # ζ J1(ζ) / J0(ζ) = Bi
        j0, j1 = special.j0(z), special.j1(z)
        return a * z * j1 - b * j0, a * z * j0 + b * j1
    # sphere: 1 - ζ cot ζ = Bi, divided by ζ to remove the root at 0
    s1 = _s1(z)
    s = np.sin(z)
    with np.errstate(divide="ignore", invalid="ignore"):
        sinc = np.where(z == 0, 1.0, s / z)
    return b * sinc - a * z * z * s1, -(b - a) * z * s1 - a * s


def _brackets(shape: str, biot, n: NDArray[np.int64]):
    """Interval (lo, hi) holding the n-th root, and an initial guess."""
    nf = n.astype(float)
    if shape == "slab":
        lo = (nf - 1) * np.pi
        hi = (nf - 0.5) * np.pi
    elif shape == "cylinder":
        nmax = int(n.max())
        z1 = np.concatenate(([0.0], _bessel_zeros(1, max(nmax - 1, 1))))
        lo = z1[n - 1]
        hi = _bessel_zeros(0, nmax)[n - 1]
    else:
        lower_half = biot < 1.0
        lo = np.where(lower_half, (nf - 1) * np.pi, (nf - 0.5) * np.pi)
        hi = np.where(lower_half, (nf - 0.5) * np.pi, nf * np.pi)
    lo, hi = np.broadcast_arrays(lo, hi)
    # guess: fraction of the bracket from the large-ζ phase atan(Bi / ζ)
    mid = 0.5 * (lo + hi)
    with np.errstate(divide="ignore", invalid="ignore"):
        if shape == "sphere":
            phase = np.arctan2(mid, 1.0 - biot)  # ζ = (n-1)π + phase, in (0, π)
            guess = (nf - 1) * np.pi + phase
        else:
            frac = np.arctan(biot / mid) / (np.pi / 2)
            guess = lo + frac * (hi - lo)
        # first root: blend of the small-Bi limit ζ² ≈ m Bi and the Bi → inf limit
        first = n == 1
        if first.any():
            lim, m = {"slab": (np.pi / 2, 1.0), "cylinder": (2.404825557695773, 2.0)}.get(
                shape, (np.pi, 3.0)
            )
            g1 = lim * np.sqrt(biot / (biot + lim * lim / m))
            guess = np.where(first, g1, guess)
    inside = (guess > lo) & (guess < hi)
    guess = np.where(inside, guess, 0.5 * (lo + hi))
    # sign of the residual at the left end, known analytically (rounding in
    # the Bessel zeros must not decide it when Bi is tiny)
    sign_lo = np.where(n % 2 == 0, 1.0, -1.0)
    if shape == "sphere":
        sign_lo = -sign_lo
    return lo, hi, guess, np.broadcast_to(sign_lo, lo.shape)


def _solve_roots(shape: str, biot, n):
    """Roots for finite Bi > 0; biot and n broadcast to the output shape."""
    biot, n = np.broadcast_arrays(biot, n)
    biot = biot.ravel()
    n = n.ravel()
    a, b = _weights(biot)
    lo, hi, x, s_lo = _brackets(shape, biot, n)
    lo, hi, x = lo.astype(float).copy(), hi.astype(float).copy(), x.astype(float).copy()
    idx = np.arange(x.size)
    for _ in range(200):
        if idx.size == 0:
            break
        xi, ai, bi = x[idx], a[idx], b[idx]
        f, df = _residual(shape, xi, ai, bi)
        same = np.sign(f) == s_lo[idx]
        lo_i = np.where(same, xi, lo[idx])
        hi_i = np.where(same, hi[idx], xi)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = -f / df
        xn = xi + step
        # quadratic convergence: a step below 1e-11 |ζ| leaves an error near 1e-22
        small = (np.abs(step) <= 1e-11 * xi) | (f == 0)
        outside = ~((xn > lo_i) & (xn < hi_i)) & ~small
        xn = np.where(outside, 0.5 * (lo_i + hi_i), xn)
        done = small | (hi_i - lo_i <= 4e-16 * xi)
        x[idx], lo[idx], hi[idx] = np.where(f == 0, xi, xn), lo_i, hi_i
        idx = idx[~done]
    return x


def _eigen(shape: str, biot: NDArray[np.float64], count: int) -> NDArray[np.float64]:
    """First ``count`` roots for every Biot number in the 1-D array ``biot``."""
    n = np.arange(1, count + 1)
    out = np.empty((biot.size, count))
    zero = biot == 0
    inf = np.isinf(biot)
    mid = ~(zero | inf)
    if zero.any():
        if shape == "slab":
            row = (n - 1) * np.pi
        elif shape == "cylinder":
            row = np.concatenate(([0.0], _bessel_zeros(1, max(count - 1, 1))))[:count]
        else:
            row = np.zeros(count)
            if count > 1:
                row[1:] = _solve_roots(shape, np.zeros(1), n[1:])
        out[zero] = row
    if inf.any():
        if shape == "slab":
            row = (n - 0.5) * np.pi
        elif shape == "cylinder":
            row = np.array(_bessel_zeros(0, count))
        else:
            row = n * np.pi
        out[inf] = row
    if shape == "sphere":  # Bi = 1: cot ζ = 0 exactly
        one = biot == 1.0
        out[one] = (n - 0.5) * np.pi
        mid &= ~one
    if mid.any():
        bm = biot[mid]
        out[mid] = _solve_roots(shape, bm[:, None], n[None, :]).reshape(bm.size, count)
    return out


def _coefficients(shape: str, z: NDArray[np.float64]) -> NDArray[np.float64]:
    """Series coefficients C_n for the eigenvalues ``z`` (ζ = 0 gives 1)."""
    if shape == "slab":
        with np.errstate(divide="ignore", invalid="ignore"):
            c = 4 * np.sin(z) / (2 * z + np.sin(2 * z))
        return np.where(z == 0, 1.0, c)
    if shape == "cylinder":
        j0, j1 = special.j0(z), special.j1(z)
        return 2 * _j1_over_x(z) / (j0 * j0 + j1 * j1)
    return 4 * _s1(z) / _t2(z)


def _mode(shape: str, z: NDArray[np.float64], position: NDArray[np.float64]):
    arg = z * position
    if shape == "slab":
        return np.cos(arg)
    if shape == "cylinder":
        return special.j0(arg)
    return _sinc(arg)


def _mean_factor(shape: str, z: NDArray[np.float64]) -> NDArray[np.float64]:
    if shape == "slab":
        return _sinc(z)
    if shape == "cylinder":
        return 2 * _j1_over_x(z)
    return 3 * _s1(z)


def _terms_needed(shape: str, fourier: NDArray[np.float64]) -> NDArray[np.int64]:
    """Fewest terms K with the neglected tail below ``_TAIL_TOL``.

    With ζ_n >= (n - 1) π and |C_n X_n| <= B for n >= 2, the tail after K
    terms is at most B Σ_{m>=K} exp(-π² m² Fo) <= B [exp(-c K²) +
    √π erfc(√c K) / (2 √c)], c = π² Fo. Looked up in the table of the
    smallest Fo each K covers; ``MAX_SERIES_TERMS + 1`` means "more than the
    series is used for".
    """
    floors = _floor_table(shape)  # decreasing in K = 1, 2, ...
    pos = np.searchsorted(-floors, -np.asarray(fourier, dtype=float), side="left")
    return (pos + 1).astype(np.int64)


@lru_cache(maxsize=4)
def _floor_table(shape: str) -> NDArray[np.float64]:
    table = np.array([_fourier_floor(shape, k) for k in range(1, MAX_SERIES_TERMS + 1)])
    table.setflags(write=False)
    return table


def _bucket(k: NDArray[np.int64]) -> NDArray[np.int64]:
    pos = np.searchsorted(_TERM_BUCKETS, np.minimum(k, MAX_SERIES_TERMS))
    return _TERM_BUCKETS[pos]


def _fourier_floor(shape: str, terms: int) -> float:
    """Smallest Fourier number for which ``terms`` terms meet the tail bound."""
    return float(_fourier_floor_cached(shape, int(terms)))


@lru_cache(maxsize=256)
def _fourier_floor_cached(shape: str, terms: int) -> float:
    bound = _COEF_BOUND[shape]

    def tail(fo: float) -> float:
        c = math.pi**2 * fo
        sc = math.sqrt(c)
        return bound * (
            math.exp(-c * terms * terms) + math.sqrt(math.pi) * math.erfc(sc * terms) / (2 * sc)
        )

    lo, hi = 1e-12, 1e3
    while hi / lo > 1 + 1e-13:  # bisection in log space, once per (shape, terms)
        mid = math.sqrt(lo * hi)
        if tail(mid) <= _TAIL_TOL:
            hi = mid
        else:
            lo = mid
    return hi


# --------------------------------------------------------------------------
# short times: Laplace transform and Talbot quadrature
# --------------------------------------------------------------------------
def _talbot_nodes():
    h = 2 * np.pi / _TALBOT_N
    phi = (np.arange(_TALBOT_N // 2) + 0.5) * h
    cot = 1 / np.tan(_TALBOT_A * phi)
    z = _TALBOT_SIGMA + _TALBOT_MU * phi * cot + 1j * _TALBOT_NU * phi
    dz = _TALBOT_MU * cot - _TALBOT_MU * _TALBOT_A * phi / np.sin(_TALBOT_A * phi) ** 2
    dz = dz + 1j * _TALBOT_NU
    return z, dz, h


_TB_Z, _TB_DZ, _TB_H = _talbot_nodes()


def _hankel_coefficients(nu: int, terms: int = 14) -> NDArray[np.float64]:
    mu = 4.0 * nu * nu
    coef = [1.0]
    for k in range(1, terms):
        coef.append(-coef[-1] * (mu - (2 * k - 1) ** 2) / (k * 8.0))
    return np.array(coef)


_HANKEL = {nu: _hankel_coefficients(nu) for nu in (0, 1)}


def _bessel_i_scaled(nu: int, z):
    """I_nu(z) exp(-z) for complex z with Re z > 0.

    scipy's ``ive`` below |z| = 100; above, the large-argument expansion
    (Abramowitz & Stegun 9.7.1) with 14 terms, where the neglected
    exponentially small part is below e^(-2 Re z) and Re z > 0.27 |z| on the
    Talbot contour used here.
    """
    z = np.asarray(z, dtype=complex)
    big = np.abs(z) >= 100.0
    out = np.empty_like(z)
    if (~big).any():
        zs = z[~big]
        out[~big] = special.ive(nu, zs) * np.exp(-1j * zs.imag)
    if big.any():
        zb = z[big]
        inv = 1.0 / zb
        acc = np.zeros_like(zb)
        for c in _HANKEL[nu][::-1]:
            acc = acc * inv + c
        out[big] = acc / np.sqrt(2 * np.pi * zb)
    return out


def _laplace_w(shape: str, p, a, b, position, mean: bool):
    """Laplace transform of w = 1 - θ (point or volume mean), Re √p > 0."""
    q = np.sqrt(p)
    e2 = np.exp(-2 * q)
    tanh = (1 - e2) / (1 + e2)
    if shape == "slab":
        den = p * (a * q * tanh + b)
        if mean:
            return b * tanh / (q * den)
        ratio = (np.exp(-q * (1 - position)) + np.exp(-q * (1 + position))) / (1 + e2)
        return b * ratio / den
    if shape == "cylinder":
        i0, i1 = _bessel_i_scaled(0, q), _bessel_i_scaled(1, q)
        den = p * (a * q * i1 + b * i0)
        if mean:
            return 2 * b * i1 / (q * den)
        return b * _bessel_i_scaled(0, q * position) * np.exp(-q * (1 - position)) / den
    den = p * (a * q + (b - a) * tanh)
    if mean:
        return 3 * b * (1 / q - tanh / (q * q)) / den
    ratio = (np.exp(-q * (1 - position)) - np.exp(-q * (1 + position))) / (position * (1 + e2))
    return b * ratio / den


def _talbot(shape: str, biot, fourier, position, mean: bool, rate: bool = False):
    """w = 1 - θ at short times (and dw/dFo when ``rate``) by Talbot quadrature."""
    a, b = _weights(np.asarray(biot, dtype=float))
    a, b, t, x = (np.asarray(v, dtype=float)[:, None] for v in (a, b, fourier, position))
    n = _TALBOT_N
    p = (n / t) * _TB_Z[None, :]
    with np.errstate(over="ignore", invalid="ignore", under="ignore"):
        fw = _laplace_w(shape, p, a, b, x, mean)
        weight = np.exp(n * _TB_Z)[None, :] * _TB_DZ[None, :] * (n / t) * (_TB_H / np.pi)
        w = np.sum((weight * fw).imag, axis=1)
        if not rate:
            return w
        dw = np.sum((weight * fw * p).imag, axis=1)
    return w, dw


_SEMI_INFINITE_FO = 1e-20
_SHAPE_AREA = {"slab": 1.0, "cylinder": 2.0, "sphere": 3.0}  # A L / V


def _semi_infinite(shape, biot, fourier, position, mean: bool, rate: bool):
    """w = 1 - θ of the semi-infinite solid with a convective surface.

    Used below ``Fo = 1e-20``, where surface curvature and the far faces change
    w by a relative ``O(√Fo)``. Incropera et al. eq. 5.60.
    """
    sq = np.sqrt(fourier)
    inf = np.isinf(biot)
    with np.errstate(over="ignore", invalid="ignore", under="ignore"):
        beta = np.where(inf, np.inf, biot * sq)
        if mean:
            # heat taken in per area: (1/Bi)(erfcx β - 1 + 2β/√π); β → inf: 2 √(Fo/π)
            small = beta < 1e-3
            m_big = (special.erfcx(beta) - 1 + 2 * beta / np.sqrt(np.pi)) / beta
            m_small = beta - 4 * beta**2 / (3 * np.sqrt(np.pi)) + beta**3 / 2
            m_val = np.where(small, m_small, np.where(inf, 2 / np.sqrt(np.pi), m_big))
            return _SHAPE_AREA[shape] * sq * m_val
        eta = (1 - position) / (2 * sq)
        gauss = np.exp(-eta * eta)
        w = np.where(inf, special.erfc(eta), special.erfc(eta) - gauss * special.erfcx(eta + beta))
        if not rate:
            return w
        dw_inf = eta * gauss / (fourier * np.sqrt(np.pi))
        dw = biot * gauss * (1 / np.sqrt(np.pi * fourier) - biot * special.erfcx(eta + beta))
        return w, np.where(inf, dw_inf, np.maximum(dw, 0.0))


def _short_w(shape, biot, fourier, position, mean: bool, rate: bool = False):
    """1 - θ (and its Fo derivative) at times too short for the series."""
    tiny = fourier < _SEMI_INFINITE_FO
    if not tiny.any():
        return _talbot(shape, biot, fourier, position, mean, rate)
    w = np.empty(fourier.size)
    dw = np.empty(fourier.size)
    for sel, fun in ((tiny, _semi_infinite), (~tiny, _talbot)):
        if sel.any():
            res = fun(shape, biot[sel], fourier[sel], position[sel], mean, rate)
            if rate:
                w[sel], dw[sel] = res
            else:
                w[sel] = res
    return (w, dw) if rate else w


# --------------------------------------------------------------------------
# series evaluation
# --------------------------------------------------------------------------
def _unique_rows(biot: NDArray[np.float64]):
    uniq, inv = np.unique(biot, return_inverse=True)
    return uniq, inv.ravel()


def _series_terms(shape: str, biot, position, count: int, mean: bool):
    """(ζ, A) arrays of shape (m, count) with A = C_n · mode (or mean factor)."""
    uniq, inv = _unique_rows(biot)
    zu = _eigen(shape, uniq, count)
    cu = _coefficients(shape, zu)
    zu[uniq == 0, 1:] = 0.0  # Bi = 0: only the constant mode, C_1 = 1
    cu[uniq == 0, 1:] = 0.0
    z, c = zu[inv], cu[inv]
    if mean:
        factor = _mean_factor(shape, z)
    else:
        factor = _mode(shape, z, np.asarray(position, dtype=float)[:, None])
    return z, c * factor


def _evaluate(shape: str, biot, fourier, position, mean: bool) -> NDArray[np.float64]:
    biot, fourier, position = (np.ravel(v) for v in np.broadcast_arrays(biot, fourier, position))
    out = np.ones(biot.shape)
    todo = (fourier > 0) & (biot > 0)
    out[todo & np.isinf(fourier)] = 0.0
    todo &= np.isfinite(fourier)
    if not mean:
        surface_fixed = todo & np.isinf(biot) & (position == 1.0)
        out[surface_fixed] = 0.0
        todo &= ~surface_fixed
    if not todo.any():
        return out
    idx = np.flatnonzero(todo)
    k = _terms_needed(shape, fourier[idx])
    short = k > MAX_SERIES_TERMS
    if short.any():
        sidx = idx[short]
        if mean:
            live = np.ones(sidx.size, dtype=bool)
        else:
            eta = (1 - position[sidx]) / (2 * np.sqrt(fourier[sidx]))
            live = eta < _DEEP_ETA
        if live.any():
            li = sidx[live]
            w = _short_w(shape, biot[li], fourier[li], position[li], mean)
            out[li] = np.clip(1 - w, 0.0, 1.0)
    sidx = idx[~short]
    buckets = _bucket(k[~short])
    for size in np.unique(buckets):
        gi = sidx[buckets == size]
        z, amp = _series_terms(shape, biot[gi], position[gi], int(size), mean)
        with np.errstate(under="ignore"):
            val = np.sum(amp * np.exp(-(z * z) * fourier[gi][:, None]), axis=1)
        out[gi] = np.clip(val, 0.0, 1.0)
    return out


# --------------------------------------------------------------------------
# public functions
# --------------------------------------------------------------------------
def eigenvalues(shape: str, biot: ArrayLike, n: int) -> NDArray[np.float64]:
    """First ``n`` eigenvalues ζ_1 < ζ_2 < ... of the convective conduction problem.

    Roots of ``ζ tan ζ = Bi`` (slab), ``ζ J1(ζ)/J0(ζ) = Bi`` (cylinder) and
    ``1 - ζ cot ζ = Bi`` (sphere), found by a bracketed, safeguarded Newton
    iteration on whole arrays. The n-th root lies in ``((n-1)π, (n-½)π)``
    (slab), between the (n-1)-th zero of J1 and the n-th zero of J0
    (cylinder) and in ``((n-1)π, nπ)`` (sphere).

    Parameters
    ----------
    shape : str
        ``"slab"``, ``"cylinder"`` or ``"sphere"``.
    biot : array_like
        Biot number ``h L / k`` (``L`` half-thickness or radius) [-], ``0`` to
        ``inf`` inclusive. At ``Bi = 0`` the first root is 0; at ``Bi = inf``
        the roots are ``(n-½)π``, the zeros of J0 and ``nπ``.
    n : int
        Number of roots wanted, ``>= 1``.

    Returns
    -------
    ndarray
        Shape ``biot.shape + (n,)`` [-].

    Raises
    ------
    ThermalInputError
        Unknown shape, negative or NaN Biot number, or ``n < 1``.

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., eqs. 5.39c, 5.50c, 5.51c.
    """
    shape = _check_shape(shape)
    bi = _check_biot(biot)
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise ThermalInputError(f"n: must be an integer >= 1, got {n!r}")
    out = _eigen(shape, bi.ravel(), int(n))
    return out.reshape((*bi.shape, int(n)))


def temperature_ratio(
    shape: str, biot: ArrayLike, fourier: ArrayLike, position: ArrayLike = 0.0
) -> NDArray[np.float64]:
    """Dimensionless temperature θ = (T - T_air) / (T_i - T_air) at a point.

    Parameters
    ----------
    shape : str
        ``"slab"`` (half-thickness L), ``"cylinder"`` (infinite, radius R) or
        ``"sphere"`` (radius R).
    biot : array_like
        Biot number ``h L / k`` or ``h R / k`` [-], ``0`` (no exchange, θ = 1)
        to ``inf`` (surface held at the air temperature) inclusive.
    fourier : array_like
        Fourier number ``α t / L²`` [-], ``>= 0`` (``inf`` allowed). At
        ``Fo = 0`` θ = 1 everywhere, the surface included.
    position : array_like, optional
        ``x / L`` or ``r / R`` in ``[0, 1]`` [-]; 0 is the centre (default),
        1 the surface.

    Returns
    -------
    ndarray
        θ in ``[0, 1]``, broadcast shape of the inputs, absolute error
        ``<= 1e-8``.

    Raises
    ------
    ThermalInputError
        Unknown shape, negative or NaN Biot or Fourier number, position
        outside ``[0, 1]``.

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., eqs. 5.39a, 5.50a, 5.51a (exact series).
    .. [2] Weideman (2006), Talbot contour used at very short times.
    """
    shape = _check_shape(shape)
    bi, fo, x = _check_biot(biot), _check_fourier(fourier), _check_position(position)
    out_shape = np.broadcast_shapes(bi.shape, fo.shape, x.shape)
    return _evaluate(shape, bi, fo, x, mean=False).reshape(out_shape)


def mean_temperature_ratio(shape: str, biot: ArrayLike, fourier: ArrayLike) -> NDArray[np.float64]:
    """Volume-averaged θ̄; the fraction of the possible heat exchanged is 1 - θ̄.

    Parameters
    ----------
    shape : str
        ``"slab"``, ``"cylinder"`` or ``"sphere"``.
    biot : array_like
        Biot number [-], ``0`` to ``inf`` inclusive.
    fourier : array_like
        Fourier number [-], ``>= 0``.

    Returns
    -------
    ndarray
        θ̄ = Q / Q0 complement in ``[0, 1]`` [-], absolute error ``<= 1e-8``.

    Raises
    ------
    ThermalInputError
        Unknown shape, negative or NaN Biot or Fourier number.

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., eqs. 5.46, 5.54, 5.55 (energy transferred).
    """
    shape = _check_shape(shape)
    bi, fo = _check_biot(biot), _check_fourier(fourier)
    out_shape = np.broadcast_shapes(bi.shape, fo.shape)
    return _evaluate(shape, bi, fo, np.zeros(1), mean=True).reshape(out_shape)


def _point_evaluator(shape: str, biot: float, position: float, fo_min: float):
    """θ(Fo) for one case as a fast scalar function.

    The eigen data are computed once, with enough terms for Fo >= fo_min;
    used by root finders that evaluate θ many times for the same body (the
    product solution's inverse in :mod:`thermal.geometry`). Shorter times and
    the trivial cases go through the general evaluation.
    """
    one = (np.array([biot]), np.array([position]))

    def general(fo: float) -> float:
        return float(_evaluate(shape, one[0], np.array([fo]), one[1], False)[0])

    k = int(_terms_needed(shape, np.array([fo_min]))[0])
    if biot == 0 or (np.isinf(biot) and position == 1.0) or k > MAX_SERIES_TERMS:
        return general
    z, amp = _series_terms(shape, one[0], one[1], k, False)
    z2, amp = (z * z)[0], amp[0]

    def fast(fo: float) -> float:
        if fo < fo_min:
            return general(fo)
        return min(max(float(np.dot(amp, np.exp(-z2 * fo))), 0.0), 1.0)

    return fast


# --------------------------------------------------------------------------
# inverse problem
# --------------------------------------------------------------------------
def _series_evaluator(z, amp):
    """Evaluator (ln θ, θ, dθ/dFo) for series data, first term factored out."""
    z2 = z * z
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = amp[:, 1:] / amp[:, :1]
        base = np.log(amp[:, 0])
    gap = z2[:, 1:] - z2[:, :1]

    def evaluate(idx, fo):
        with np.errstate(under="ignore", over="ignore"):
            e = rel[idx] * np.exp(-gap[idx] * fo[:, None])
        s = 1.0 + e.sum(axis=1)
        ds = -(e * gap[idx]).sum(axis=1)
        positive = s > 0  # a truncated sum <= 0: θ below the tail bound
        with np.errstate(invalid="ignore", divide="ignore", under="ignore"):
            log_theta = np.where(positive, base[idx] - z2[idx, 0] * fo + np.log(s), -745.0)
            log_theta = np.minimum(log_theta, 0.0)  # θ <= 1 (rounding near Fo = 0)
            theta = np.exp(log_theta)
            dtheta = theta * np.where(positive, -z2[idx, 0] + ds / s, 0.0)
        return log_theta, theta, dtheta

    return evaluate


def _short_evaluator(shape, biot, position):
    """Evaluator (ln θ, θ, dθ/dFo) at short times (Talbot quadrature)."""

    def evaluate(idx, fo):
        theta = np.ones(fo.size)
        dtheta = np.zeros(fo.size)
        eta = (1 - position[idx]) / (2 * np.sqrt(fo))
        live = eta < _DEEP_ETA
        if live.any():
            li = idx[live]
            w, dw = _short_w(shape, biot[li], fo[live], position[li], False, rate=True)
            theta[live] = np.clip(1 - w, 0.0, 1.0)
            dtheta[live] = -dw
        with np.errstate(divide="ignore"):
            return np.log(theta), theta, dtheta

    return evaluate


def _rtsafe(evaluate, ratio, upper, u, u_floor, u_hi):
    """Bracketed Newton in u = ln Fo for θ(Fo) = ratio, all cases at once.

    The objective is ln θ - ln r (``upper`` False) or ln(1 - r) - ln(1 - θ)
    (``upper`` True, better conditioned while θ is near 1); both are positive
    while θ > r. Newton steps are taken only inside the bracket and while they
    shrink; otherwise the bracket is bisected (or widened while open). No
    iterate goes below ``u_floor`` (the evaluator is valid above it); the
    floor itself is tried once. Returns (u, ok, u_estimate): ``ok`` False
    where θ(floor) < r, with a Newton estimate of the root below the floor.
    """
    m = u.size
    log_r, log_1mr = np.log(ratio), np.log1p(-np.minimum(ratio, 1.0))
    u = np.clip(u, u_floor, u_hi)
    lo = np.full(m, u_floor)
    hi = u_hi.copy()
    verified = ~np.isfinite(lo)
    ok = np.ones(m, dtype=bool)
    estimate = np.full(m, np.nan)
    last = np.full(m, np.inf)
    idx = np.arange(m)
    for _ in range(120):
        if idx.size == 0:
            break
        ui = u[idx]
        with np.errstate(over="ignore"):
            fo = np.exp(ui)
        log_theta, theta, dtheta = evaluate(idx, fo)
        up = upper[idx]
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            obj = np.where(up, log_1mr[idx] - np.log1p(-theta), log_theta - log_r[idx])
            dobj = fo * dtheta / np.where(up, 1 - theta, theta)
            step = -obj / dobj
        above = obj > 0
        failed = (ui <= u_floor) & ~above & (obj != 0)
        verified[idx] |= above
        lo_i = np.where(above, ui, lo[idx])
        hi_i = np.where(above, hi[idx], ui)
        un = ui + step
        # a Newton step below 1e-13 in ln Fo: converged (test before the bracket,
        # a step under one ulp would otherwise look like leaving it)
        small = np.isfinite(step) & (np.abs(step) <= 1e-13)
        closed = np.isfinite(lo_i) & np.isfinite(hi_i)
        # while the bracket is open, steps are limited to a factor e³ in Fo
        limit = np.where(closed, 0.75 * last[idx], np.minimum(0.75 * last[idx], 3.0))
        newton = small | (np.isfinite(un) & (un > lo_i) & (un < hi_i) & (np.abs(step) < limit))
        fallback = np.where(closed, 0.5 * (lo_i + hi_i), np.where(above, ui + 2.0, ui - 2.0))
        to_floor = ~newton & ~verified[idx] & np.isfinite(lo_i) & (un <= lo_i)
        un = np.where(newton, un, np.where(to_floor, lo_i, fallback))
        tiny = un < -690.0  # Fo below 1e-300: report 1e-300
        un = np.maximum(un, -690.0)
        done = failed | small | (obj == 0) | (hi_i - lo_i <= 1e-14)
        done |= tiny & (ui <= -690.0)
        if failed.any():
            ok[idx[failed]] = False
            estimate[idx[failed]] = (ui + step)[failed]
        last[idx] = np.where(newton, np.abs(step), np.abs(un - ui) * 2)
        u[idx], lo[idx], hi[idx] = np.where(failed | (obj == 0), ui, un), lo_i, hi_i
        idx = idx[~done]
    return u, ok, estimate


def _start_guess(shape, biot, ratio, position, fo_one):
    """Rough Fo to start from: one-term value, or a semi-infinite estimate."""
    depth = 1.0 - position
    m = {"slab": 1.0, "cylinder": 2.0, "sphere": 3.0}[shape]
    with np.errstate(divide="ignore", over="ignore"):
        eta = special.erfcinv(np.clip(1.0 - ratio, 1e-300, 1.0))
        # penetration to this depth (fixed surface), or lumped-like loss m Bi Fo
        early = np.maximum((depth / (2.0 * np.maximum(eta, 1e-3))) ** 2, (1 - ratio) / (m * biot))
    guess = np.where(np.isfinite(fo_one) & (fo_one > 0.2), fo_one, early)
    guess = np.where(np.isfinite(guess) & (guess > 0), guess, 1.0)
    return np.clip(guess, 1e-280, 1e280)


def _solve_inverse(shape, biot, ratio, position):
    m = biot.size
    uniq, inv = _unique_rows(biot)
    z1u = _eigen(shape, uniq, 1)[:, 0]
    z1 = z1u[inv]
    a1 = _coefficients(shape, z1u)[inv] * _mode(shape, z1, position)
    with np.errstate(divide="ignore", invalid="ignore"):
        fo_one = (np.log(a1) - np.log(ratio)) / (z1 * z1)  # one-term inverse
    start = np.log(_start_guess(shape, biot, ratio, position, fo_one))
    upper = ratio > 0.5
    size_of = _bucket(_terms_needed(shape, 0.5 * np.exp(start)))
    size_of = np.where(
        _terms_needed(shape, 0.5 * np.exp(start)) > MAX_SERIES_TERMS, MAX_SERIES_TERMS + 1, size_of
    )
    result = np.full(m, np.nan)
    u_hi = np.full(m, np.inf)
    pending = np.arange(m)
    while pending.size:
        sizes = size_of[pending]
        retry = []
        for size in np.unique(sizes):
            gi = pending[sizes == size]
            if size > MAX_SERIES_TERMS:
                evaluate = _short_evaluator(shape, biot[gi], position[gi])
                u, _, _ = _rtsafe(evaluate, ratio[gi], upper[gi], start[gi], -np.inf, u_hi[gi])
                result[gi] = np.exp(u)
                continue
            u_floor = np.log(_fourier_floor(shape, int(size)))
            z, amp = _series_terms(shape, biot[gi], position[gi], int(size), False)
            evaluate = _series_evaluator(z, amp)
            u, ok, est = _rtsafe(evaluate, ratio[gi], upper[gi], start[gi], u_floor, u_hi[gi])
            result[gi[ok]] = np.exp(u[ok])
            bad = gi[~ok]
            if bad.size:
                # root below this floor: more terms, at most a factor 20 lower in
                # Fo per round; the short-time method only below the last floor
                est = np.clip(np.nan_to_num(est[~ok], nan=u_floor - 3.0), u_floor - 3.0, u_floor)
                u_hi[bad] = u_floor
                start[bad] = est
                need = _terms_needed(shape, 0.5 * np.exp(est))
                if size >= MAX_SERIES_TERMS:
                    size_of[bad] = MAX_SERIES_TERMS + 1
                else:
                    nxt = _TERM_BUCKETS[np.searchsorted(_TERM_BUCKETS, size) + 1]
                    size_of[bad] = _bucket(np.maximum(need, nxt))
                retry.append(bad)
        pending = np.concatenate(retry) if retry else np.array([], dtype=int)
    return result


def fourier_for_ratio(
    shape: str, biot: ArrayLike, ratio: ArrayLike, position: ArrayLike = 0.0
) -> NDArray[np.float64]:
    """Fourier number at which θ at ``position`` falls to ``ratio``.

    The inverse of :func:`temperature_ratio` in time: the time for the core
    (or any point) to reach a target temperature is ``Fo · L² / α``.
    θ decreases strictly with Fo for ``Bi > 0``, so the answer is unique.

    Parameters
    ----------
    shape : str
        ``"slab"``, ``"cylinder"`` or ``"sphere"``.
    biot : array_like
        Biot number [-], ``0`` to ``inf`` inclusive.
    ratio : array_like
        Target θ = (T_target - T_air) / (T_i - T_air) [-], ``> 0``.
    position : array_like, optional
        ``x / L`` or ``r / R`` in ``[0, 1]`` [-]; default 0 (centre).

    Returns
    -------
    ndarray
        Fourier number [-]: ``0`` where ``ratio >= 1`` (already there) and at
        the surface of a body with ``Bi = inf`` (the surface takes the air
        temperature at once); ``inf`` where the ratio is never reached
        (``Bi = 0``: no heat exchange). Never raises inside the vectorised
        solve. The returned Fo reproduces ``ratio`` within the accuracy of
        :func:`temperature_ratio`.

    Raises
    ------
    ThermalInputError
        Unknown shape; negative or NaN Biot; ``ratio <= 0`` or NaN; position
        outside ``[0, 1]``.

    References
    ----------
    .. [1] Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th
       ed., eq. 5.44 (one-term inverse, used as the starting point).
    """
    shape = _check_shape(shape)
    bi, r, x = _check_biot(biot), _check_ratio(ratio), _check_position(position)
    out_shape = np.broadcast_shapes(bi.shape, r.shape, x.shape)
    bi, r, x = (np.ravel(v) for v in np.broadcast_arrays(bi, r, x))
    out = np.zeros(bi.shape)
    below = r < 1
    never = below & (bi == 0)
    out[never] = np.inf
    instant = below & np.isinf(bi) & (x == 1.0)
    solve = below & ~never & ~instant
    if solve.any():
        out[solve] = _solve_inverse(shape, bi[solve], r[solve], x[solve])
    return out.reshape(out_shape)
