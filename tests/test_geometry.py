"""thermal.geometry: shapes, product solution (against a 2-D method of lines),
dimensional helpers, lumped capacitance and bad input."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import sparse
from scipy.integrate import solve_ivp

from thermal import geometry, series
from thermal.errors import ThermalInputError, UnreachableTargetError
from thermal.geometry import Block, FiniteCylinder, InfiniteCylinder, Slab, Sphere

# made-up but plausible product data (a cooked meat roll), SI
K, RHO, CP = 0.45, 1050.0, 3500.0
ALPHA = K / (RHO * CP)


# --------------------------------------------------------------------------
# genuine 2-D method of lines on an (r or x, z) quarter section
# --------------------------------------------------------------------------
def mol_2d(curved: bool, biot: float, aspect: float, cells: int, fo: np.ndarray):
    """θ on cell centres of [0,1] × [0,aspect] (lengths scaled by the radius).

    Finite volumes: each cell exchanges with its four neighbours; the outer
    radial face and the top face lose heat through the film (Robin, Bi = h R / k),
    with the half-cell conduction in series. ``curved`` gives the axisymmetric
    cylinder (face areas ∝ r), otherwise a rectangular bar.
    """
    nr = nz = cells
    dr, dz = 1.0 / nr, aspect / nz
    r_face = np.arange(nr + 1) * dr
    if curved:
        ring = (r_face[1:] ** 2 - r_face[:-1] ** 2) / 2  # ∫ r dr per radial cell
        side = r_face  # radial face area per unit angle and height
    else:
        ring = np.full(nr, dr)
        side = np.ones(nr + 1)
    volume = np.outer(np.ones(nz), ring) * dz  # (nz, nr)
    index = np.arange(nr * nz).reshape(nz, nr)
    rows, cols, vals = [], [], []
    diag = np.zeros((nz, nr))

    def link(a, b, g):
        rows.extend([a.ravel(), b.ravel()])
        cols.extend([b.ravel(), a.ravel()])
        vals.extend([g.ravel(), g.ravel()])
        np.subtract.at(diag.ravel(), a.ravel(), g.ravel())
        np.subtract.at(diag.ravel(), b.ravel(), g.ravel())

    g_r = np.broadcast_to(side[1:-1] * dz / dr, (nz, nr - 1))
    link(index[:, :-1], index[:, 1:], g_r)
    g_z = np.broadcast_to(ring / dz, (nz - 1, nr))
    link(index[:-1, :], index[1:, :], g_z)
    diag[:, -1] -= side[-1] * dz * biot / (1 + biot * dr / 2)
    diag[-1, :] -= ring * biot / (1 + biot * dz / 2)
    rows.append(index.ravel())
    cols.append(index.ravel())
    vals.append(diag.ravel())
    mat = sparse.csr_matrix(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
        shape=(nr * nz, nr * nz),
    )
    mat = sparse.diags(1 / volume.ravel()) @ mat
    sol = solve_ivp(
        lambda t, y: mat @ y,
        (0.0, float(fo[-1])),
        np.ones(nr * nz),
        method="BDF",
        jac=mat,
        t_eval=fo,
        rtol=1e-8,
        atol=1e-10,
    )
    assert sol.success
    return sol.y.T.reshape(len(fo), nz, nr)


def sample(theta: np.ndarray) -> dict[str, np.ndarray]:
    """Centre (quadratic extrapolation both ways) and the grid corner at half-size."""

    def centre_1d(a, b):
        return (9 * a - b) / 8

    c0 = centre_1d(theta[:, 0, 0], theta[:, 0, 1])
    c1 = centre_1d(theta[:, 1, 0], theta[:, 1, 1])
    n = theta.shape[1] // 2
    corner = theta[:, n - 1 : n + 1, n - 1 : n + 1].mean(axis=(1, 2))
    return {"centre": centre_1d(c0, c1), "half": corner}


@pytest.mark.parametrize("curved", [True, False])
def test_product_solution_matches_2d_method_of_lines(curved):
    # Independent check of the product solution (Incropera et al. §5.8):
    # 2-D finite volumes + solve_ivp (BDF), Richardson over 16/32 cells a side.
    radius, half_length, h = 0.04, 0.03, 22.5  # Bi = h R / k = 2
    biot = h * radius / K
    aspect = half_length / radius
    fo = np.array([0.05, 0.15, 0.4])
    coarse = sample(mol_2d(curved, biot, aspect, 16, fo))
    fine = sample(mol_2d(curved, biot, aspect, 32, fo))
    if curved:
        shape = FiniteCylinder(radius, 2 * half_length)
    else:
        shape = Block(2 * radius, 2 * half_length, 50.0)  # third edge: no effect
        # third direction: a 50 m edge does not feel the surface at these times
    times = fo * radius**2 / ALPHA
    points = {"centre": None, "half": None}
    points["half"] = (radius / 2, half_length / 2) if curved else (radius / 2, half_length / 2, 0)
    for name, value in fine.items():
        extrapolated = (4 * value - coarse[name]) / 3
        product = geometry.temperature_ratio_at(
            shape, k=K, h=h, time=times, alpha=ALPHA, point=points[name]
        )
        assert np.max(np.abs(product - extrapolated)) < 1e-5, (name, product, extrapolated)
        assert np.max(np.abs(product - value)) < 1e-3


# --------------------------------------------------------------------------
# shapes
# --------------------------------------------------------------------------
def test_sizes_and_characteristic_lengths():
    slab = Slab(0.04, length=0.5, width=0.3)
    assert slab.volume == pytest.approx(0.006)
    assert slab.area == pytest.approx(0.3)
    assert slab.characteristic_length == pytest.approx(0.02)
    assert slab.directions == (("slab", 0.02),)
    assert Slab(0.04).characteristic_length == pytest.approx(0.02)
    cyl = InfiniteCylinder(0.03)
    assert cyl.characteristic_length == pytest.approx(0.015)
    assert cyl.directions == (("cylinder", 0.03),)
    sph = Sphere(0.03)
    assert sph.volume == pytest.approx(4 / 3 * math.pi * 0.03**3)
    assert sph.characteristic_length == pytest.approx(0.01)
    fc = FiniteCylinder(0.03, 0.1)
    assert fc.volume == pytest.approx(math.pi * 0.03**2 * 0.1)
    assert fc.area == pytest.approx(2 * math.pi * 0.03 * 0.1 + 2 * math.pi * 0.03**2)
    assert fc.directions == (("cylinder", 0.03), ("slab", 0.05))
    assert fc.smallest_half_dimension == pytest.approx(0.03)
    blk = Block(0.2, 0.1, 0.04)
    assert blk.volume == pytest.approx(0.0008)
    assert blk.area == pytest.approx(2 * (0.02 + 0.008 + 0.004))
    assert blk.directions == (("slab", 0.1), ("slab", 0.05), ("slab", 0.02))
    assert blk.smallest_half_dimension == pytest.approx(0.02)
    kinds = [s.kind for s in (slab, cyl, sph, fc, blk)]
    assert kinds == ["slab", "cylinder", "sphere", "finite_cylinder", "block"]


def test_scaled_and_frozen():
    blk = Block(0.2, 0.1, 0.04)
    big = blk.scaled(1.5)
    assert (big.length, big.width, big.height) == pytest.approx((0.3, 0.15, 0.06))
    assert Slab(0.02, 0.4).scaled(2) == Slab(0.04, 0.8)
    assert FiniteCylinder(0.03, 0.1).scaled(0.5) == FiniteCylinder(0.015, 0.05)
    with pytest.raises(AttributeError):
        blk.length = 1.0  # type: ignore[misc]


@pytest.mark.parametrize(
    "make, field",
    [
        (lambda: Slab(0.0), "Slab.thickness"),
        (lambda: Slab(0.02, length=-1.0), "Slab.length"),
        (lambda: InfiniteCylinder(-0.01), "InfiniteCylinder.radius"),
        (lambda: Sphere(float("nan")), "Sphere.radius"),
        (lambda: FiniteCylinder(0.02, 0.0), "FiniteCylinder.length"),
        (lambda: Block(0.1, 0.1, -0.02), "Block.height"),
        (lambda: Block(0.1, float("inf"), 0.02), "Block.width"),
        (lambda: Sphere(0.02).scaled(0.0), "factor"),
    ],
)
def test_bad_sizes_name_the_field(make, field):
    with pytest.raises(ThermalInputError) as err:
        make()
    assert str(err.value).startswith(field + ":")


# --------------------------------------------------------------------------
# dimensional helpers
# --------------------------------------------------------------------------
def test_one_dimensional_shapes_reduce_to_series():
    for shape, kind, length in (
        (Slab(0.05), "slab", 0.025),
        (InfiniteCylinder(0.03), "cylinder", 0.03),
        (Sphere(0.04), "sphere", 0.04),
    ):
        t = np.array([0.0, 60.0, 1800.0, 7200.0])
        got = geometry.temperature_at(
            shape, k=K, h=15.0, time=t, t_initial=75.0, t_air=2.0, rho=RHO, cp=CP, point=length / 2
        )
        theta = series.temperature_ratio(kind, 15.0 * length / K, ALPHA * t / length**2, 0.5)
        np.testing.assert_allclose(got, 2.0 + 73.0 * theta, rtol=1e-13)


def test_long_finite_shapes_tend_to_their_infinite_forms():
    t = np.array([600.0, 3600.0])
    long_cyl = geometry.temperature_ratio_at(
        FiniteCylinder(0.03, 5.0), k=K, h=20.0, time=t, alpha=ALPHA
    )
    cyl = geometry.temperature_ratio_at(InfiniteCylinder(0.03), k=K, h=20.0, time=t, alpha=ALPHA)
    np.testing.assert_allclose(long_cyl, cyl, atol=1e-12)
    bar = geometry.temperature_ratio_at(Block(3.0, 4.0, 0.04), k=K, h=20.0, time=t, alpha=ALPHA)
    slab = geometry.temperature_ratio_at(Slab(0.04), k=K, h=20.0, time=t, alpha=ALPHA)
    np.testing.assert_allclose(bar, slab, atol=1e-12)


@pytest.mark.parametrize(
    "shape",
    [
        Slab(0.05),
        InfiniteCylinder(0.03),
        Sphere(0.035),
        FiniteCylinder(0.03, 0.08),
        Block(0.12, 0.08, 0.05),
    ],
)
@pytest.mark.parametrize("heating", [False, True])
def test_time_to_temperature_inverts_temperature_at(shape, heating):
    t_initial, t_air = (4.0, 180.0) if heating else (75.0, -2.0)
    for target, point in ((60.0 if heating else 20.0, None), (40.0, "off")):
        pt = None if point is None else [0.5 * length for _, length in shape.directions]
        seconds = geometry.time_to_temperature(
            shape,
            k=K,
            h=25.0,
            t_initial=t_initial,
            t_air=t_air,
            t_target=target,
            alpha=ALPHA,
            point=pt,
        )
        assert 0 < seconds < 1e6
        reached = geometry.temperature_at(
            shape,
            k=K,
            h=25.0,
            time=seconds,
            t_initial=t_initial,
            t_air=t_air,
            alpha=ALPHA,
            point=pt,
        )
        assert float(reached) == pytest.approx(target, abs=1e-8)
        sooner = geometry.temperature_at(
            shape,
            k=K,
            h=25.0,
            time=0.999 * seconds,
            t_initial=t_initial,
            t_air=t_air,
            alpha=ALPHA,
            point=pt,
        )
        assert (sooner < target) if heating else (sooner > target)


@settings(max_examples=20, deadline=None)
@given(
    radius=st.floats(0.005, 0.2),
    aspect=st.floats(0.2, 5.0),
    h=st.floats(1.0, 2000.0),
    fraction=st.floats(0.02, 0.98),
)
def test_finite_cylinder_time_round_trip(radius, aspect, h, fraction):
    shape = FiniteCylinder(radius, 2 * radius * aspect)
    target = -1.0 + fraction * (70.0 + 1.0)
    seconds = geometry.time_to_temperature(
        shape, k=K, h=h, t_initial=70.0, t_air=-1.0, t_target=target, alpha=ALPHA
    )
    reached = geometry.temperature_at(
        shape, k=K, h=h, time=seconds, t_initial=70.0, t_air=-1.0, alpha=ALPHA
    )
    assert float(reached) == pytest.approx(target, abs=1e-7)
    # the slowest direction alone would be faster: composite bodies cool sooner
    alone = geometry.time_to_temperature(
        InfiniteCylinder(radius),
        k=K,
        h=h,
        t_initial=70.0,
        t_air=-1.0,
        t_target=target,
        alpha=ALPHA,
    )
    assert seconds <= alone * (1 + 1e-12)


def test_targets_already_met_and_instant_surface():
    kw = dict(k=K, h=30.0, t_initial=70.0, t_air=2.0, alpha=ALPHA)
    assert geometry.time_to_temperature(Sphere(0.03), t_target=70.0, **kw) == 0.0
    assert geometry.time_to_temperature(Sphere(0.03), t_target=80.0, **kw) == 0.0
    fixed = dict(kw, h=math.inf)
    assert geometry.time_to_temperature(Sphere(0.03), t_target=30.0, point=0.03, **fixed) == 0.0


@pytest.mark.parametrize(
    "t_initial, t_air, t_target, words",
    [
        (70.0, 2.0, 1.0, "air at 2.0 °C cannot bring the core below 2.0 °C"),
        (70.0, 2.0, 2.0, "only after infinite time"),
        (4.0, 90.0, 95.0, "air at 90.0 °C cannot bring the core above 90.0 °C"),
        (20.0, 20.0, 10.0, "starts at the air temperature"),
    ],
)
def test_unreachable_targets_say_why(t_initial, t_air, t_target, words):
    for shape in (Slab(0.03), Block(0.1, 0.08, 0.03)):
        with pytest.raises(UnreachableTargetError) as err:
            geometry.time_to_temperature(
                shape,
                k=K,
                h=20.0,
                t_initial=t_initial,
                t_air=t_air,
                t_target=t_target,
                alpha=ALPHA,
            )
        assert words in str(err.value) and "\n" not in str(err.value)
    with pytest.raises(UnreachableTargetError, match="no heat exchange"):
        geometry.time_to_temperature(
            Sphere(0.02), k=K, h=0.0, t_initial=70.0, t_air=2.0, t_target=30.0, alpha=ALPHA
        )


@pytest.mark.parametrize(
    "kwargs, name",
    [
        (dict(k=-1.0), "k"),
        (dict(h=-5.0), "h"),
        (dict(t_initial=-300.0), "t_initial"),
        (dict(t_air=float("nan")), "t_air"),
        (dict(alpha=None), "alpha"),
        (dict(rho=RHO, cp=CP), "alpha"),
        (dict(alpha=0.0), "alpha"),
        (dict(point=(0.01, 0.0)), "point"),
        (dict(point=0.05), "point"),
    ],
)
def test_bad_arguments_name_the_argument(kwargs, name):
    base = dict(k=K, h=20.0, t_initial=70.0, t_air=2.0, t_target=20.0, alpha=ALPHA)
    base.update(kwargs)
    with pytest.raises(ThermalInputError) as err:
        geometry.time_to_temperature(Sphere(0.03), **base)
    assert str(err.value).startswith(name + ":")
    with pytest.raises(ThermalInputError, match=r"^shape:"):
        geometry.temperature_at("sphere", k=K, h=1.0, time=1.0, t_initial=1, t_air=0, alpha=1)


# --------------------------------------------------------------------------
# lumped capacitance
# --------------------------------------------------------------------------
def test_lumped_capacitance_agrees_with_series_at_small_biot():
    # Source: Incropera et al. §5.2, eq. 5.6 and the Bi < 0.1 criterion.
    shape = Sphere(0.004)  # a small pellet; Bi on V/A = h R / (3 k)
    h = 5.0
    assert geometry.lumped_biot(shape, h=h, k=K) == pytest.approx(h * 0.004 / 3 / K)
    t = np.array([60.0, 600.0, 3000.0])
    lumped = geometry.lumped_temperature_ratio(shape, h=h, time=t, rho=RHO, cp=CP, k=K)
    # the lumped value stands for the volume mean; absolute θ error of order Bi
    bi = h * 0.004 / K
    mean = series.mean_temperature_ratio("sphere", bi, ALPHA * t / 0.004**2)
    np.testing.assert_allclose(lumped, mean, rtol=0, atol=0.1 * bi)
    assert np.max(np.abs(lumped - mean)) > 1e-5  # an approximation, not the same formula
    seconds = geometry.lumped_time(
        shape, h=h, rho=RHO, cp=CP, t_initial=70.0, t_air=5.0, t_target=20.0, k=K
    )
    tau = RHO * CP * shape.characteristic_length / h
    assert seconds == pytest.approx(tau * math.log(65.0 / 15.0), rel=1e-14)
    with pytest.raises(ThermalInputError, match=r"^h: lumped capacitance needs Bi"):
        geometry.lumped_temperature_ratio(Slab(0.1), h=50.0, time=1.0, rho=RHO, cp=CP, k=K)
    with pytest.raises(UnreachableTargetError, match="cannot bring the product below"):
        geometry.lumped_time(shape, h=h, rho=RHO, cp=CP, t_initial=70.0, t_air=5.0, t_target=4.0)


def test_biot_numbers_per_direction():
    bi = geometry.biot_numbers(FiniteCylinder(0.03, 0.1), h=30.0, k=0.5)
    assert [float(b) for b in bi] == pytest.approx([1.8, 3.0])
