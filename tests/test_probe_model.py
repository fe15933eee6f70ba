"""The probe model: logged air as segments, temperatures at probe positions."""

from __future__ import annotations

import math

import numpy as np
import pytest

from optimizer.probes.model import air_segments, probe_temperatures
from thermal.foods import ConstantProperties
from thermal.geometry import Slab

K, RHO, CP = 0.5, 1000.0, 4000.0


def test_air_segments_keep_the_time_mean_and_join_steady_stretches():
    t = np.arange(0.0, 3601.0, 60.0)
    air = np.where(t < 1800.0, 150.0, 175.0)
    seg = air_segments(t, air)
    assert seg.total == pytest.approx(3600.0)
    # the time integral of the linear-between-readings air is kept exactly
    integral = np.trapezoid(air, t)
    assert float(seg.durations @ seg.temperatures) == pytest.approx(integral, rel=1e-12)
    # two steady stretches and the one interval of the step between them
    assert seg.durations.size <= 3
    assert seg.temperatures[0] == pytest.approx(150.0) and seg.temperatures[-1] == pytest.approx(
        175.0
    )


def test_air_segments_bridge_missing_readings_linearly():
    t = np.arange(0.0, 601.0, 60.0)
    air = 100.0 + t / 6.0
    air_missing = air.copy()
    air_missing[3:6] = np.nan
    a = air_segments(t, air, max_segments=5)
    b = air_segments(t, air_missing, max_segments=5)
    assert a.temperatures == pytest.approx(b.temperatures)


def test_probe_model_matches_the_one_term_series_of_a_plane_wall_at_bi_1():
    # Bi = h L / k = 1 with L = 25 mm: h = 20 W/(m² K) for k = 0.5 W/(m K).
    # Source: Incropera, DeWitt, Bergman, Lavine, Fundamentals of Heat and Mass
    # Transfer, 6th ed., Table 5.1, plane wall, Bi = 1.0: zeta1 = 0.8603,
    # C1 = 1.1191 (C1 from memory); one-term form theta = C1 exp(-zeta1² Fo)
    # cos(zeta1 x/L), accurate to well under 1 % for Fo > 0.2 (same text).
    half = 0.025
    slab = Slab(2 * half)
    props = ConstantProperties(K, RHO, CP)
    alpha = K / (RHO * CP)
    fo = np.array([0.5, 1.0, 1.5])
    times = np.concatenate([[0.0], fo * half**2 / alpha])
    t_i, t_air = 5.0, 105.0
    seg = air_segments(times, np.full(times.size, t_air))
    y = probe_temperatures(
        slab,
        props,
        seg,
        times,
        np.array([20.0, 20.0]),
        start_core=t_i,
        offset=np.array([0.0, 0.5]),
        n_cells=32,
        steps=400,
    )
    zeta, c1 = 0.8603, 1.1191
    for row, x in zip(y, (0.0, 0.5), strict=True):
        theta = (row[1:] - t_air) / (t_i - t_air)
        expected = c1 * np.exp(-(zeta**2) * fo) * math.cos(zeta * x)
        # printed to 4 digits: 2e-4 on zeta moves theta by about 2 zeta Fo 2e-4 ~ 5e-4
        assert theta == pytest.approx(expected, rel=2e-3)


def test_start_profile_from_core_and_surface_readings():
    slab = Slab(0.04)
    props = ConstantProperties(K, RHO, CP)
    t = np.array([0.0, 1.0])
    seg = air_segments(t, np.array([60.0, 60.0]))
    y = probe_temperatures(
        slab,
        props,
        seg,
        t,
        np.array([1e-6, 1e-6, 1e-6]),
        start_core=10.0,
        start_surface=50.0,
        offset=np.array([0.0, 0.5, 1.0]),
        n_cells=40,
    )
    # Tc + (Ts - Tc) x²: 10, 20 and 50 °C at the centre, half way and the face
    assert y[:, 0] == pytest.approx([10.0, 20.0, 50.0], abs=0.05)
