"""thermal.series: cross-method checks, properties, edge cases and bad input."""

from __future__ import annotations

from functools import lru_cache

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import sparse, special
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

import thermal
from thermal import series
from thermal.errors import ThermalInputError

SHAPES = series.SHAPES
EXPONENT = {"slab": 0, "cylinder": 1, "sphere": 2}


# --------------------------------------------------------------------------
# independent method of lines (finite volumes + scipy.integrate.solve_ivp)
# --------------------------------------------------------------------------
def mol_matrix(shape: str, biot: float, cells: int):
    """dθ/dFo = M θ on cell centres (i + ½)/N, symmetric centre, convective surface."""
    m = EXPONENT[shape]
    h = 1.0 / cells
    faces = np.arange(1, cells + 1) * h
    volume = (faces ** (m + 1) - (faces - h) ** (m + 1)) / (m + 1)
    area = faces**m
    main = np.zeros(cells)
    off = area[:-1] / h  # conductance between cell i and i+1
    main[:-1] -= off
    main[1:] -= off
    # surface: half-cell conduction in series with the film, 1/(h/2 + 1/Bi)
    g_out = area[-1] * (2 / h if np.isinf(biot) else biot / (1 + biot * h / 2))
    main[-1] -= g_out
    return sparse.csr_matrix(sparse.diags(1 / volume) @ sparse.diags([off, main, off], [-1, 0, 1]))


def mol_solution(shape: str, biot: float, fo: np.ndarray, cells: int):
    mat = mol_matrix(shape, biot, cells)
    sol = solve_ivp(
        lambda t, y: mat @ y,
        (0.0, float(fo[-1])),
        np.ones(cells),
        method="BDF",
        jac=mat,
        t_eval=fo,
        rtol=1e-8,
        atol=1e-10,
    )
    assert sol.success
    return sol.y.T  # (len(fo), cells)


def mol_points(shape: str, biot: float, theta: np.ndarray, cells: int) -> dict[float, np.ndarray]:
    """Centre (quadratic through the first two cells), faces x = 0.5, 0.9, surface."""
    h = 1.0 / cells
    out = {0.0: (9 * theta[:, 0] - theta[:, 1]) / 8}
    for x in (0.5, 0.9):
        k = round(x * cells)
        out[x] = 0.5 * (theta[:, k - 1] + theta[:, k])
    # surface from the same half-cell resistance used in the scheme
    out[1.0] = theta[:, -1] * (0.0 if np.isinf(biot) else 1 / (1 + biot * h / 2))
    return out


@pytest.mark.parametrize(
    "shape, biot",
    [
        ("slab", 0.3),
        ("slab", np.inf),
        ("cylinder", 5.0),
        ("cylinder", np.inf),
        ("sphere", 0.3),
        ("sphere", 5.0),
    ],
)
def test_series_matches_method_of_lines(shape, biot):
    # Independent check: second-order finite volumes in space, stiff BDF in time
    # (scipy.integrate.solve_ivp), Richardson extrapolation over 60/120 cells.
    fo = np.array([0.05, 0.2, 0.6, 1.5])
    coarse = mol_points(shape, biot, mol_solution(shape, biot, fo, 60), 60)
    fine = mol_points(shape, biot, mol_solution(shape, biot, fo, 120), 120)
    for x, value in fine.items():
        if x == 1.0 and np.isinf(biot):
            continue  # surface fixed at 0 in both
        extrapolated = (4 * value - coarse[x]) / 3
        exact = series.temperature_ratio(shape, biot, fo, x)
        assert np.max(np.abs(exact - extrapolated)) < 2e-6, (x, exact, extrapolated)
        assert np.max(np.abs(exact - value)) < 1e-4


@lru_cache(maxsize=32)
def bisected_roots(shape: str, biot: float, terms: int) -> np.ndarray:
    """Eigenvalues by plain bisection (100 halvings) inside the textbook brackets."""

    def residual(z):
        if shape == "slab":
            return z * np.sin(z) - biot * np.cos(z)
        if shape == "cylinder":
            return z * special.j1(z) - biot * special.j0(z)
        # sphere: (1 - ζ cot ζ - Bi) sin ζ / ζ, with sin ζ/ζ - cos ζ by Taylor near 0
        sinc = np.sinc(z / np.pi)
        taylor = z**2 / 3 - z**4 / 30 + z**6 / 840 - z**8 / 45360
        return np.where(z < 0.05, taylor, sinc - np.cos(z)) - biot * sinc

    if shape == "cylinder":
        lo = np.concatenate(([1e-300], special.jn_zeros(1, terms - 1)))
        hi = special.jn_zeros(0, terms)
    else:
        n = np.arange(1, terms + 1)
        lo = (n - 1) * np.pi + 1e-12
        hi = (n - 0.5) * np.pi if shape == "slab" else n * np.pi - 1e-12
    f_lo = np.sign(residual(lo))
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        same = np.sign(residual(mid)) == f_lo
        lo, hi = np.where(same, mid, lo), np.where(same, hi, mid)
    return 0.5 * (lo + hi)


def converged_sum(shape: str, biot: float, fo: float, x: np.ndarray, terms: int) -> np.ndarray:
    """Plain eigenfunction sum with many terms (textbook coefficient formulas)."""
    roots = bisected_roots(shape, biot, terms)
    if shape == "slab":
        coef = 4 * np.sin(roots) / (2 * roots + np.sin(2 * roots))
        mode = np.cos(np.outer(x, roots))
    elif shape == "cylinder":
        coef = 2 / roots * special.j1(roots) / (special.j0(roots) ** 2 + special.j1(roots) ** 2)
        mode = special.j0(np.outer(x, roots))
    else:
        coef = 4 * (np.sin(roots) - roots * np.cos(roots)) / (2 * roots - np.sin(2 * roots))
        mode = np.sinc(np.outer(x, roots) / np.pi)
    return mode @ (coef * np.exp(-(roots**2) * fo))


@pytest.mark.parametrize("shape", SHAPES)
@pytest.mark.parametrize("fo", [1e-6, 2e-5, 2e-4, 2e-3, 0.02, 0.3])
def test_against_converged_many_term_sum(shape, fo):
    # Short and moderate times: the library's term choice and its short-time
    # method against a plain 4000-term sum with roots found by bisection. At
    # Fo = 1e-6 the neglected terms are below exp(-(4000 π)² 1e-6) ~ 1e-69.
    x = np.array([0.0, 0.3, 0.7, 0.9, 0.97, 0.995, 0.9995, 1.0])
    for biot in (0.2, 3.0, 50.0):
        exact = converged_sum(shape, biot, fo, x, 4000)
        got = series.temperature_ratio(shape, biot, fo, x)
        assert np.max(np.abs(got - exact)) < 1e-9, (biot, got - exact)


def test_eigenvalues_against_bisection_over_many_decades():
    for shape in SHAPES:
        for biot in (1e-6, 1e-3, 0.7, 1.0, 1.3, 40.0, 1e4, 1e7):
            ref = bisected_roots(shape, biot, 8)
            got = series.eigenvalues(shape, biot, 8)
            np.testing.assert_allclose(got, ref, rtol=2e-14)


def test_mean_against_converged_sum_and_quadrature():
    # The volume mean equals (m+1) ∫ θ x^m dx; Gauss–Legendre on the point solution.
    nodes, weights = np.polynomial.legendre.leggauss(80)
    x = 0.5 * (nodes + 1)
    for shape in SHAPES:
        m = EXPONENT[shape]
        for biot in (0.05, 2.0, np.inf):
            for fo in (1e-3, 0.05, 0.4):
                theta = series.temperature_ratio(shape, biot, fo, x)
                mean = 0.5 * (m + 1) * np.sum(weights * theta * x**m)
                got = series.mean_temperature_ratio(shape, biot, fo)
                tol = 1e-9 if fo > 0.01 else 2e-6  # quadrature of the steep surface layer
                assert abs(got - mean) < tol, (shape, biot, fo, got, mean)


def test_coefficient_bound_used_for_term_count():
    # The tail bound relies on |C_n| <= B for n >= 2 (all Bi); check it widely.
    biot = np.concatenate(([0.0], np.geomspace(1e-6, 1e8, 400), [np.inf]))
    for shape in SHAPES:
        z = series.eigenvalues(shape, biot, 300)[:, 1:]
        coef = series._coefficients(shape, z)
        assert np.max(np.abs(coef)) <= series._COEF_BOUND[shape]


# --------------------------------------------------------------------------
# exact limits and edge values
# --------------------------------------------------------------------------
@pytest.mark.parametrize("shape", SHAPES)
def test_edges_of_the_domain(shape):
    fo = np.array([0.0, 1e-300, 1e-30, 1e-12, 1e-6, 0.1, 10.0, 1e6, np.inf])
    x = np.array([0.0, 0.5, 1.0])[:, None]
    # Bi = 0: no exchange
    assert np.all(series.temperature_ratio(shape, 0.0, fo, x) == 1.0)
    assert np.all(series.mean_temperature_ratio(shape, 0.0, fo) == 1.0)
    # Fo = 0: initial state everywhere, any Bi
    assert np.all(series.temperature_ratio(shape, [0.1, 1e3, np.inf], 0.0, x) == 1.0)
    # Bi = inf: surface at air temperature for any Fo > 0
    assert np.all(series.temperature_ratio(shape, np.inf, fo[1:], 1.0) == 0.0)
    # Fo = inf: at air temperature
    assert np.all(series.temperature_ratio(shape, [1e-9, 1.0, np.inf], np.inf, x) == 0.0)
    for bi in (1e-300, 1e-9, 0.01, 1.0, 100.0, 1e12, 1e300, np.inf):
        theta = series.temperature_ratio(shape, bi, fo, x)
        mean = series.mean_temperature_ratio(shape, bi, fo)
        assert np.all(np.isfinite(theta)) and np.all(np.isfinite(mean))
        assert np.all((theta >= 0) & (theta <= 1)) and np.all((mean >= 0) & (mean <= 1))


def test_tiny_biot_has_no_cancellation():
    # For Bi -> 0, 1 - θ ≈ m Bi Fo (m = 1, 2, 3): relative accuracy kept.
    for shape, m in (("slab", 1), ("cylinder", 2), ("sphere", 3)):
        bi = 1e-13
        fo = 1e3
        loss = 1 - series.mean_temperature_ratio(shape, bi, fo)
        assert loss == pytest.approx(m * bi * fo, rel=1e-3)


def test_huge_biot_approaches_fixed_surface():
    for shape in SHAPES:
        fo = np.array([1e-4, 0.01, 0.3])
        x = np.array([0.0, 0.8, 0.99])[:, None]
        a = series.temperature_ratio(shape, 1e10, fo, x)
        b = series.temperature_ratio(shape, np.inf, fo, x)
        assert np.max(np.abs(a - b)) < 1e-8


def test_broadcasting_and_return_types():
    out = series.temperature_ratio("slab", np.array([0.1, 1.0, 10.0])[:, None], [0.1, 0.5], 0.0)
    assert out.shape == (3, 2)
    scalar = series.temperature_ratio("sphere", 1.0, 0.2)
    assert isinstance(scalar, np.ndarray) and scalar.shape == ()
    pos = series.temperature_ratio("cylinder", 2.0, 0.3, np.linspace(0, 1, 5))
    assert pos.shape == (5,) and np.all(np.diff(pos) < 0)
    assert series.eigenvalues("cylinder", [[1.0, 2.0]], 3).shape == (1, 2, 3)
    assert series.mean_temperature_ratio("slab", [1.0, 2.0], [[0.1], [0.2], [0.3]]).shape == (3, 2)
    fo = series.fourier_for_ratio("slab", [1.0, 2.0], [[0.5], [0.2]], [0.0, 1.0])
    assert fo.shape == (2, 2)
    assert thermal.temperature_ratio is series.temperature_ratio


# --------------------------------------------------------------------------
# inverse problem
# --------------------------------------------------------------------------
def test_fourier_for_ratio_special_values():
    for shape in SHAPES:
        assert series.fourier_for_ratio(shape, 2.0, 1.0) == 0.0
        assert series.fourier_for_ratio(shape, 2.0, 1.5) == 0.0
        assert series.fourier_for_ratio(shape, 0.0, 0.5) == np.inf
        assert series.fourier_for_ratio(shape, np.inf, 0.5, 1.0) == 0.0
        assert series.fourier_for_ratio(shape, 0.0, 1.0) == 0.0
        out = series.fourier_for_ratio(shape, [0.0, 1.0, np.inf], [0.5, 0.5, 0.5])
        assert np.isinf(out[0]) and np.all(np.isfinite(out[1:]))


def test_fourier_for_ratio_against_per_case_brentq():
    rng = np.random.default_rng(7)
    for shape in SHAPES:
        bi = 10 ** rng.uniform(-2, 3, 8)
        ratio = rng.uniform(0.02, 0.98, 8)
        x = rng.choice([0.0, 0.5, 0.95], 8)
        got = series.fourier_for_ratio(shape, bi, ratio, x)
        for b, r, p, fo in zip(bi, ratio, x, got, strict=True):

            def gap(f, b=b, r=r, p=p, shape=shape):
                return float(series.temperature_ratio(shape, b, f, p)) - r

            ref = brentq(gap, 1e-12, 1e4, xtol=1e-15, rtol=1e-13)
            assert fo == pytest.approx(ref, rel=1e-9)


def test_fourier_for_ratio_one_term_limit():
    # Source: Incropera et al. eq. 5.44: Fo = -ln(θ/C1)/ζ1² once the second
    # term has died out (here exp(-(ζ2² - ζ1²) Fo) < 1e-17).
    for shape in SHAPES:
        bi = 4.0
        z1, z2 = series.eigenvalues(shape, bi, 2)
        theta = series.temperature_ratio(shape, bi, 50.0 / z1**2)
        c1 = theta * np.exp(50.0)
        for ratio in (1e-6, 1e-30, 1e-100):
            expected = np.log(c1 / ratio) / z1**2
            assert (z2**2 - z1**2) * expected > 40
            assert series.fourier_for_ratio(shape, bi, ratio) == pytest.approx(expected, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(
    shape=st.sampled_from(SHAPES),
    log_bi=st.floats(-4, 6),
    log_fo=st.floats(-7, 1.5),
    x=st.floats(0, 1),
)
def test_inverse_round_trip(shape, log_bi, log_fo, x):
    bi, fo = 10.0**log_bi, 10.0**log_fo
    theta = float(series.temperature_ratio(shape, bi, fo, x))
    if not 1e-12 < theta < 1 - 1e-9:
        return  # θ indistinguishable from 0 or 1: Fo is not determined
    back = float(series.fourier_for_ratio(shape, bi, theta, x))
    again = float(series.temperature_ratio(shape, bi, back, x))
    assert abs(again - theta) <= 1e-8 * theta + 1e-13
    # Fo itself to 1e-8 where θ is not flat in Fo (condition number below 1e5)
    dfo = 1e-6 * fo
    slope = (
        float(series.temperature_ratio(shape, bi, fo + dfo, x))
        - float(series.temperature_ratio(shape, bi, fo - dfo, x))
    ) / (2 * dfo)
    if abs(slope) * fo > 1e-5 * theta:
        assert back == pytest.approx(fo, rel=1e-8)


# --------------------------------------------------------------------------
# properties
# --------------------------------------------------------------------------
finite_bi = st.floats(0, 1e6)
any_bi = st.one_of(finite_bi, st.just(np.inf), st.floats(1e-12, 1e-3))
fourier_st = st.one_of(st.floats(0, 50), st.floats(1e-9, 1e-3))


@settings(max_examples=60, deadline=None)
@given(shape=st.sampled_from(SHAPES), bi=any_bi, fo=fourier_st, x=st.floats(0, 1))
def test_ratio_in_unit_interval_and_finite(shape, bi, fo, x):
    theta = series.temperature_ratio(shape, bi, fo, x)
    mean = series.mean_temperature_ratio(shape, bi, fo)
    assert np.isfinite(theta) and 0.0 <= theta <= 1.0
    assert np.isfinite(mean) and 0.0 <= mean <= 1.0


@settings(max_examples=25, deadline=None)
@given(shape=st.sampled_from(SHAPES), bi=st.floats(1e-3, 1e4), x=st.floats(0, 1))
def test_decreasing_in_fourier(shape, bi, x):
    fo = np.geomspace(1e-5, 20, 40)
    # monotone to within the accuracy contract (series tails are <= 1e-10)
    theta = series.temperature_ratio(shape, bi, fo, x)
    assert np.all(np.diff(theta) <= 2e-10)
    mean = series.mean_temperature_ratio(shape, bi, fo)
    assert np.all(np.diff(mean) <= 2e-10)
    assert mean[-1] < mean[0]


@settings(max_examples=40, deadline=None)
@given(shape=st.sampled_from(SHAPES), fo=st.floats(1e-3, 5))
def test_centre_decreasing_in_biot(shape, fo):
    bi = np.concatenate((np.geomspace(1e-4, 1e5, 50), [np.inf]))
    theta = series.temperature_ratio(shape, bi, fo)
    assert np.all(np.diff(theta) <= 2e-10)


@settings(max_examples=30, deadline=None)
@given(
    shape=st.sampled_from(SHAPES),
    bi=st.one_of(st.floats(1e-8, 1e8), st.just(np.inf)),
    ratio=st.floats(1e-30, 1 - 1e-9),
    x=st.floats(0, 1),
)
def test_inverse_never_nan(shape, bi, ratio, x):
    fo = series.fourier_for_ratio(shape, bi, ratio, x)
    assert np.isfinite(fo) and fo >= 0


# --------------------------------------------------------------------------
# bad input
# --------------------------------------------------------------------------
SHAPE_DOMAIN = "one of 'slab', 'cylinder', 'sphere'"
BIOT_DOMAIN = ">= 0 (or inf)"
FOURIER_DOMAIN = ">= 0 (or inf)"
POSITION_DOMAIN = "in [0.0, 1.0]"
RATIO_DOMAIN = "> 0 (θ = (T - T_air)/(T_i - T_air); 0 is never reached)"
NAN_IN_PAIR = "nan in an array of shape (2,)"


@pytest.mark.parametrize(
    "call, name, accepted, given",
    [
        (lambda: series.temperature_ratio("cube", 1.0, 0.1), "shape", SHAPE_DOMAIN, "'cube'"),
        (lambda: series.temperature_ratio(3, 1.0, 0.1), "shape", SHAPE_DOMAIN, "3"),
        (lambda: series.temperature_ratio("slab", -1.0, 0.1), "biot", BIOT_DOMAIN, "-1.0"),
        (lambda: series.temperature_ratio("slab", np.nan, 0.1), "biot", BIOT_DOMAIN, "nan"),
        (lambda: series.temperature_ratio("slab", 1.0, -0.1), "fourier", FOURIER_DOMAIN, "-0.1"),
        (
            lambda: series.temperature_ratio("slab", 1.0, [0.1, np.nan]),
            "fourier",
            FOURIER_DOMAIN,
            NAN_IN_PAIR,
        ),
        (
            lambda: series.temperature_ratio("slab", 1.0, 0.1, 1.2),
            "position",
            POSITION_DOMAIN,
            "1.2",
        ),
        (
            lambda: series.temperature_ratio("slab", 1.0, 0.1, -0.1),
            "position",
            POSITION_DOMAIN,
            "-0.1",
        ),
        (
            lambda: series.temperature_ratio("slab", 1.0, 0.1, np.nan),
            "position",
            POSITION_DOMAIN,
            "nan",
        ),
        (
            lambda: series.temperature_ratio("cylinder", 1.0, 0.1, [0.5, np.nan]),
            "position",
            POSITION_DOMAIN,
            NAN_IN_PAIR,
        ),
        (lambda: series.mean_temperature_ratio("ball", 1.0, 0.1), "shape", SHAPE_DOMAIN, "'ball'"),
        (
            lambda: series.mean_temperature_ratio("slab", 1.0, "soon"),
            "fourier",
            "a number or array of numbers",
            "'soon'",
        ),
        (
            lambda: series.mean_temperature_ratio("sphere", np.nan, 0.1),
            "biot",
            BIOT_DOMAIN,
            "nan",
        ),
        (
            lambda: series.mean_temperature_ratio("slab", [2.0, np.nan], 0.1),
            "biot",
            BIOT_DOMAIN,
            NAN_IN_PAIR,
        ),
        (lambda: series.fourier_for_ratio("slab", 1.0, 0.0), "ratio", RATIO_DOMAIN, "0.0"),
        (lambda: series.fourier_for_ratio("slab", 1.0, -0.5), "ratio", RATIO_DOMAIN, "-0.5"),
        (lambda: series.fourier_for_ratio("slab", 1.0, np.nan), "ratio", RATIO_DOMAIN, "nan"),
        (
            lambda: series.fourier_for_ratio("sphere", 1.0, [0.5, np.nan]),
            "ratio",
            RATIO_DOMAIN,
            NAN_IN_PAIR,
        ),
        (lambda: series.fourier_for_ratio("slab", -2.0, 0.5), "biot", BIOT_DOMAIN, "-2.0"),
        (
            lambda: series.fourier_for_ratio("sphere", 1.0, 0.5, 2.0),
            "position",
            POSITION_DOMAIN,
            "2.0",
        ),
        (lambda: series.eigenvalues("slab", 1.0, 0), "n", "an integer >= 1", "0"),
        (lambda: series.eigenvalues("slab", 1.0, 2.5), "n", "an integer >= 1", "2.5"),
        (lambda: series.eigenvalues("torus", 1.0, 2), "shape", SHAPE_DOMAIN, "'torus'"),
        (lambda: series.eigenvalues("slab", np.nan, 2), "biot", BIOT_DOMAIN, "nan"),
    ],
)
def test_bad_input_names_the_argument_and_the_accepted_domain(call, name, accepted, given):
    # One line: the argument, what is accepted, what was given (NaN included).
    with pytest.raises(ThermalInputError) as err:
        call()
    assert str(err.value) == f"{name}: must be {accepted}, got {given}"
    assert isinstance(err.value, ValueError)
