"""Searches run as batched solver jobs give the answers they give alone.

The batched driver (:mod:`thermal.jobs`) must not change any value: each
search is compared with the same search run on its own (the reference is
the unbatched call of the same code, which the other test files check
against published solutions).
"""

from __future__ import annotations

import numpy as np
import pytest

from thermal import numeric
from thermal.convection import AirSetting
from thermal.foods import Composition, ConstantProperties, FoodProperties
from thermal.geometry import InfiniteCylinder, Slab, Sphere
from thermal.jobs import run_jobs
from thermal.process import (
    InfeasibleRuleError,
    TransferStage,
    TunnelZone,
    required_chill,
    required_chill_job,
    required_cook,
    required_cook_job,
)
from thermal.product import Product
from thermal.rules import ChillRule, CookRule, CoolingStep

MEAT = FoodProperties(Composition(water=0.7, protein=0.2, fat=0.08, ash=0.02))
FISH = ConstantProperties(conductivity=0.46, density=1060.0, specific_heat=3600.0)
PRODUCTS = [
    Product("fillet", Slab(0.03, 0.16, 0.07), MEAT, emissivity=0.9),
    Product("thin", Slab(0.012, 0.1, 0.1), FISH, emissivity=0.0),
    Product("sausage", InfiniteCylinder(0.014), MEAT, emissivity=0.9),
    Product("ball", Sphere(0.017), MEAT, emissivity=0.9),
]
OVENS = [AirSetting(temperature=170.0, speed=4.0), AirSetting(temperature=140.0, speed=2.0)]
COOK = CookRule(72.0, 30.0)
ROOM = TransferStage(AirSetting(temperature=18.0, speed=0.3), 480.0)
ZONES = [
    TunnelZone(AirSetting(temperature=2.0, speed=3.0), 0.5),
    TunnelZone(AirSetting(temperature=-4.0, speed=4.0), 0.5),
]
CHILL = ChillRule((CoolingStep(57.0, 21.0, 7200.0), CoolingStep(57.0, 5.0, 21600.0)), 5.0)
OPTIONS = {"n_cells": 8, "steps": 16}


def test_batched_cook_and_chill_searches_equal_the_searches_alone():
    cases = [(p, air) for p in PRODUCTS for air in OVENS]
    outcomes = run_jobs(required_cook_job(p, air, COOK, 4.0, **OPTIONS) for p, air in cases)
    cooks = []
    for (product, air), outcome in zip(cases, outcomes, strict=True):
        alone = required_cook(product, air, COOK, 4.0, **OPTIONS)
        assert outcome.error is None
        batched = outcome.value
        assert batched.method == alone.method == "numeric"
        assert batched.binding == alone.binding
        assert batched.dwell == pytest.approx(alone.dwell, rel=1e-12)
        assert batched.heat_in == pytest.approx(alone.heat_in, rel=1e-12)
        np.testing.assert_allclose(batched.history.core, alone.history.core, rtol=0, atol=1e-9)
        cooks.append(batched)
    chills = run_jobs(
        required_chill_job(p, cook, ROOM, ZONES, CHILL, steps=16)
        for (p, _), cook in zip(cases, cooks, strict=True)
    )
    for (product, _), cook, outcome in zip(cases, cooks, chills, strict=True):
        alone = required_chill(product, cook, ROOM, ZONES, CHILL, steps=16)
        assert outcome.error is None
        assert outcome.value.residence == pytest.approx(alone.residence, rel=1e-12)
        assert outcome.value.heat_out == pytest.approx(alone.heat_out, rel=1e-12)


def test_a_ruled_out_search_does_not_stop_the_others():
    unreachable = CookRule(190.0)  # hotter than the oven air
    jobs = [
        required_cook_job(PRODUCTS[0], OVENS[0], COOK, 4.0, **OPTIONS),
        required_cook_job(PRODUCTS[0], OVENS[0], unreachable, 4.0, **OPTIONS),
        required_cook_job(PRODUCTS[2], OVENS[1], COOK, 4.0, **OPTIONS),
    ]
    finished = []
    first, failed, last = run_jobs(jobs, lambda i, _: finished.append(i))
    assert sorted(finished) == [0, 1, 2]
    assert isinstance(failed.error, InfeasibleRuleError) and failed.value is None
    assert first.value.dwell == pytest.approx(
        required_cook(PRODUCTS[0], OVENS[0], COOK, 4.0, **OPTIONS).dwell, rel=1e-12
    )
    assert last.value.dwell > 0


def test_simulate_members_batched_equal_members_alone():
    # different sizes, materials, air and starts; the same step counts
    geos = [Slab(0.02, 0.1, 0.1), Slab(0.04, 0.1, 0.1)]
    props = [MEAT, FISH]
    segs = [numeric.Segment(np.array([600.0, 900.0]), np.array([150.0, 90.0]), 30.0, None, 0.8)]
    both = numeric.simulate(geos, props, np.array([4.0, -1.0]), segs, n_cells=10, n_steps=[25])
    for k in range(2):
        one = numeric.simulate(
            geos[k],
            props[k],
            [4.0, -1.0][k],
            [numeric.Segment([600.0, 900.0][k], [150.0, 90.0][k], 30.0, None, 0.8)],
            n_cells=10,
            n_steps=[25],
        )
        part = both.take(slice(k, k + 1))
        np.testing.assert_allclose(part.core, one.core, rtol=0, atol=1e-9)
        np.testing.assert_allclose(part.final, one.final, rtol=0, atol=1e-9)
        assert part.heat_in[0] == pytest.approx(one.heat_in[0], rel=1e-12)


def test_n_steps_needs_one_count_per_segment():
    with pytest.raises(numeric.ThermalInputError, match="n_steps"):
        numeric.simulate(
            Slab(0.02, 0.1, 0.1), FISH, 4.0, numeric.Segment(60.0, 90.0, 20.0), n_steps=[3, 4]
        )
