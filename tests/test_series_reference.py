"""thermal.series against published tables and closed-form limits."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from thermal import series

# Source: Incropera, DeWitt, Bergman, Lavine, Fundamentals of Heat and Mass
# Transfer, Table 5.1 (the same table is Çengel, Heat and Mass Transfer,
# Table 4-2). Columns: Bi, then ζ1 [rad] and C1 for plane wall, infinite
# cylinder and sphere. Rows Bi = 0.01 ... 10 were checked against a public
# copy of Çengel's Table 4-2 (found with the search tool); rows Bi = 20 ... inf
# are from memory. Printed to 4 decimals; printed values differ from the exact
# roots by up to 1e-4 (e.g. cylinder C1 at Bi = inf printed 1.6021, exact
# 1.60197), hence the tolerance.
TABLE_5_1 = """
0.01  0.0998 1.0017  0.1412 1.0025  0.1730 1.0030
0.02  0.1410 1.0033  0.1995 1.0050  0.2445 1.0060
0.04  0.1987 1.0066  0.2814 1.0099  0.3450 1.0120
0.06  0.2425 1.0098  0.3438 1.0148  0.4217 1.0179
0.08  0.2791 1.0130  0.3960 1.0197  0.4860 1.0239
0.1   0.3111 1.0161  0.4417 1.0246  0.5423 1.0298
0.2   0.4328 1.0311  0.6170 1.0483  0.7593 1.0592
0.3   0.5218 1.0450  0.7465 1.0712  0.9208 1.0880
0.4   0.5932 1.0580  0.8516 1.0931  1.0528 1.1164
0.5   0.6533 1.0701  0.9408 1.1143  1.1656 1.1441
0.6   0.7051 1.0814  1.0184 1.1345  1.2644 1.1713
0.7   0.7506 1.0918  1.0873 1.1539  1.3525 1.1978
0.8   0.7910 1.1016  1.1490 1.1724  1.4320 1.2236
0.9   0.8274 1.1107  1.2048 1.1902  1.5044 1.2488
1.0   0.8603 1.1191  1.2558 1.2071  1.5708 1.2732
2.0   1.0769 1.1785  1.5995 1.3384  2.0288 1.4793
3.0   1.1925 1.2102  1.7887 1.4191  2.2889 1.6227
4.0   1.2646 1.2287  1.9081 1.4698  2.4556 1.7202
5.0   1.3138 1.2403  1.9898 1.5029  2.5704 1.7870
6.0   1.3496 1.2479  2.0490 1.5253  2.6537 1.8338
7.0   1.3766 1.2532  2.0937 1.5411  2.7165 1.8673
8.0   1.3978 1.2570  2.1286 1.5526  2.7654 1.8920
9.0   1.4149 1.2598  2.1566 1.5611  2.8044 1.9106
10.0  1.4289 1.2620  2.1795 1.5677  2.8363 1.9249
20.0  1.4961 1.2699  2.2880 1.5919  2.9857 1.9781
30.0  1.5202 1.2717  2.3261 1.5973  3.0372 1.9898
40.0  1.5325 1.2723  2.3455 1.5993  3.0632 1.9942
50.0  1.5400 1.2727  2.3572 1.6002  3.0788 1.9962
100.0 1.5552 1.2731  2.3809 1.6015  3.1102 1.9990
inf   1.5708 1.2732  2.4048 1.6021  3.1416 2.0000
"""
ROWS = np.array([[float(v) for v in line.split()] for line in TABLE_5_1.strip().splitlines()])
TABLE_TOL = 1.5e-4


def first_term_coefficient(shape: str, biot: np.ndarray) -> np.ndarray:
    """C1 recovered from θ itself: at large Fo, θ_centre · exp(ζ1² Fo) -> C1."""
    z1 = series.eigenvalues(shape, biot, 1)[..., 0]
    fo = 40.0 / z1**2  # second term exp(-(ζ2² - ζ1²) Fo) is below 1e-16 here
    fo = np.maximum(fo, 4.0)
    with np.errstate(over="ignore"):
        return series.temperature_ratio(shape, biot, fo) * np.exp(z1**2 * fo)


@pytest.mark.parametrize("column, shape", [(1, "slab"), (3, "cylinder"), (5, "sphere")])
def test_first_eigenvalue_matches_table_5_1(column, shape):
    # Source: Incropera et al., Table 5.1
    z1 = series.eigenvalues(shape, ROWS[:, 0], 1)[:, 0]
    np.testing.assert_allclose(z1, ROWS[:, column], atol=TABLE_TOL, rtol=0)


@pytest.mark.parametrize("column, shape", [(2, "slab"), (4, "cylinder"), (6, "sphere")])
def test_first_coefficient_matches_table_5_1(column, shape):
    # Source: Incropera et al., Table 5.1 (C1 checked through θ at long times)
    biot = ROWS[:, 0]
    finite = np.isfinite(biot)
    c1 = first_term_coefficient(shape, biot[finite])
    np.testing.assert_allclose(c1, ROWS[finite, column], atol=TABLE_TOL, rtol=0)


# Source: Watts, R. G., Essentials of Applied Mathematics for Scientists and
# Engineers, Morgan & Claypool 2007, Appendix A, Table A.1 (first six roots of
# ζ tan ζ = C, i.e. the plane wall with Bi = C) and Table A.2 (roots of
# ζ cot ζ + C = 0, i.e. the sphere with Bi = C + 1); values checked against a
# public copy with the search tool. Last digits there are off by up to 1e-4
# (e.g. 11.0856 for the exact 11.08554), hence TABLE_TOL again.
SLAB_HIGHER = {
    0.1: [0.3111, 3.1731, 6.2991, 9.4354, 12.5743, 15.7143],
    1.0: [0.8603, 3.4256, 6.4373, 9.5293, 12.6453, 15.7713],
    10.0: [1.4289, 4.3058, 7.2281, 10.2003, 13.2142, 16.2594],
    20.0: [1.4961, 4.4915, 7.4954, 10.5117, 13.5420, 16.5864],
}
SPHERE_HIGHER = {  # key: Bi (= C + 1)
    2.0: [2.0288, 4.9132, 7.9787, 11.0856, 14.2075, 17.3364],
    3.0: [2.2889, 5.0870, 8.0962, 11.1727, 14.2764, 17.3932],
}


@pytest.mark.parametrize("biot, roots", list(SLAB_HIGHER.items()))
def test_higher_slab_roots_match_published_table(biot, roots):
    # Source: Watts (2007), Table A.1
    np.testing.assert_allclose(series.eigenvalues("slab", biot, 6), roots, atol=TABLE_TOL, rtol=0)


@pytest.mark.parametrize("biot, roots", list(SPHERE_HIGHER.items()))
def test_higher_sphere_roots_match_published_table(biot, roots):
    # Source: Watts (2007), Table A.2
    np.testing.assert_allclose(series.eigenvalues("sphere", biot, 6), roots, atol=TABLE_TOL, rtol=0)


def test_cylinder_roots_bracketed_by_bessel_zeros():
    # Source: Incropera et al. eq. 5.50c: ζ J1(ζ)/J0(ζ) = Bi; the n-th root lies
    # between the (n-1)-th zero of J1 and the n-th zero of J0 (scipy zeros).
    bi = np.array([1e-6, 0.3, 3.0, 300.0, 3e6])
    z = series.eigenvalues("cylinder", bi, 8)
    j0z = special.jn_zeros(0, 8)
    j1z = np.concatenate(([0.0], special.jn_zeros(1, 7)))
    assert np.all(z > j1z) and np.all(z < j0z)
    residual = z * special.j1(z) - bi[:, None] * special.j0(z)
    assert np.max(np.abs(residual) / (1 + bi[:, None])) < 1e-12


def test_infinite_biot_limits():
    # Source: Incropera et al., Table 5.1, Bi = inf row: π/2, 2.4048, π
    # (2.4048 is the first zero of J0, scipy.special.jn_zeros).
    limits = {"slab": np.pi / 2, "cylinder": special.jn_zeros(0, 1)[0], "sphere": np.pi}
    for shape, limit in limits.items():
        z_inf = series.eigenvalues(shape, np.inf, 1)[0]
        z_big = series.eigenvalues(shape, 1e9, 1)[0]
        assert z_inf == pytest.approx(limit, rel=1e-15)
        assert z_big == pytest.approx(limit, rel=1e-8)
    np.testing.assert_allclose(
        series.eigenvalues("slab", np.inf, 5), (np.arange(1, 6) - 0.5) * np.pi, rtol=1e-15
    )
    np.testing.assert_allclose(
        series.eigenvalues("sphere", np.inf, 5), np.arange(1, 6) * np.pi, rtol=1e-15
    )


@pytest.mark.parametrize("shape, m", [("slab", 1), ("cylinder", 2), ("sphere", 3)])
def test_small_biot_tends_to_lumped_capacitance(shape, m):
    # Source: Incropera et al. §5.2 (lumped capacitance, θ = exp(-Bi Fo) with
    # Bi and Fo on V/A; on L or R this is exp(-m Bi Fo), m = A L / V = 1, 2, 3)
    # and ζ1² -> m Bi as Bi -> 0.
    for bi in [1e-12, 1e-8, 1e-4]:
        z1 = series.eigenvalues(shape, bi, 1)[0]
        assert z1**2 == pytest.approx(m * bi, rel=2 * bi + 1e-12)
        fo = np.array([0.0, 0.5 / bi, 2.0 / bi, 10.0 / bi])
        for x in (0.0, 1.0):
            theta = series.temperature_ratio(shape, bi, fo, x)
            np.testing.assert_allclose(theta, np.exp(-m * bi * fo), rtol=20 * m * bi, atol=1e-14)
    # within the usual Bi < 0.1 rule the lumped value is within a few percent
    theta = series.temperature_ratio(shape, 0.1 / m, [1.0, 5.0, 10.0])
    np.testing.assert_allclose(theta, np.exp(-0.1 * np.array([1.0, 5.0, 10.0])), rtol=0.05)


@pytest.mark.parametrize("shape", series.SHAPES)
def test_one_term_approximation_accuracy_for_fo_above_0_2(shape):
    # Source: Incropera et al. §5.5.2: the one-term approximation is good for
    # Fo > 0.2; REFERENCES.md: largest centre error about 1.5 % at Fo = 0.2.
    biot = np.geomspace(0.01, 100, 41)
    z1 = series.eigenvalues(shape, biot, 1)[:, 0]
    c1 = first_term_coefficient(shape, biot)
    worst = []
    for fo in (0.2, 0.3, 0.5, 1.0):
        exact = series.temperature_ratio(shape, biot, fo)
        one = c1 * np.exp(-(z1**2) * fo)
        worst.append(np.max(np.abs(one - exact) / exact))
    assert worst[0] < 0.02
    assert worst[0] > 1e-4  # the one-term form is not exact: the check has teeth
    assert worst[1] < 0.006 and worst[2] < 0.0015 and worst[3] < 1e-4
    assert worst == sorted(worst, reverse=True)


def semi_infinite_convective(depth, fo, biot):
    """Incropera et al. eq. 5.60 in dimensionless form: θ = 1 - [erfc η - e^(…) erfc(…)]."""
    eta = depth / (2 * np.sqrt(fo))
    beta = biot * np.sqrt(fo)
    return 1 - (special.erfc(eta) - np.exp(biot * depth + beta**2) * special.erfc(eta + beta))


@pytest.mark.parametrize("biot", [0.1, 1.0, 10.0, 100.0])
def test_short_times_match_semi_infinite_solid(biot):
    # Source: Incropera et al. eq. 5.60 (semi-infinite solid with surface
    # convection). A slab is a semi-infinite solid near each face while the
    # other face is unfelt: at Fo <= 1e-3 the second face changes θ by less than
    # erfc(1 / (2 √Fo)) < 1e-50 — the comparison is exact to rounding.
    fo = np.array([1e-24, 1e-19, 1e-14, 1e-8, 1e-6, 1e-4, 1e-3])[:, None]
    depth = np.array([0.0, 1e-11, 1e-8, 1e-4, 1e-3, 0.01, 0.05, 0.1])[None, :]
    expected = semi_infinite_convective(depth, fo, biot)
    theta = series.temperature_ratio("slab", biot, fo, 1 - depth)
    np.testing.assert_allclose(theta, expected, atol=1e-10, rtol=0)


@pytest.mark.parametrize("shape, m", [("slab", 0), ("cylinder", 1), ("sphere", 2)])
def test_short_time_surface_heat_flux_has_curvature_correction(shape, m):
    # Source: Crank, The Mathematics of Diffusion, 2nd ed., eqs. 4.18, 5.23 and
    # 6.21 (from memory): with the surface held at the air temperature the
    # fraction of heat exchanged at short times is 2√(Fo/π) (slab),
    # 4√(Fo/π) - Fo (cylinder), 6√(Fo/π) - 3 Fo (sphere), + O(Fo^1.5).
    fo = np.array([1e-6, 1e-5, 1e-4])
    lead = (m + 1) * 2 * np.sqrt(fo / np.pi)
    fraction = 1 - series.mean_temperature_ratio(shape, np.inf, fo)
    assert np.all(np.abs(fraction - (lead - (m + 1) * m * fo / 2)) < 3 * fo**1.5)
    assert np.all(np.abs(fraction - lead) > 0.3 * m * fo)  # the Fo term is really there


@pytest.mark.parametrize("shape", ["cylinder", "sphere"])
def test_curved_surfaces_at_extremely_short_times(shape):
    # Source: Incropera et al. eq. 5.60. Curvature changes 1 - θ by a relative
    # O(√Fo): at Fo <= 1e-14 the semi-infinite solid agrees to ~1e-7 of 1 - θ.
    for biot in (0.5, 20.0, 1e6):
        fo = np.array([1e-24, 1e-21, 1e-19, 1e-16, 1e-14])[:, None]
        depth = np.array([0.0, 1e-12, 1e-9, 1e-8])[None, :]
        position = 1 - depth
        theta = series.temperature_ratio(shape, biot, fo, position)
        semi = semi_infinite_convective(1 - position, fo, biot)  # depth as represented
        assert np.all(np.abs(theta - semi) <= 1e-6 * (1 - semi) + 1e-15)
