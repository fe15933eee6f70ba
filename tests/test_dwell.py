"""The dwell table against direct calls of the physics layer, its reasons and its cache.

The scenario here is small and invented (a cocktail sausage, a thin patty and
a frozen meatball; one oven with two settings, one tunnel with one setting
and two loadings) so the whole file runs in well under a minute. Numerical
options are coarse where a test only checks the bookkeeping.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path
from typing import Any

import pandas as pd
import pytest

import optimizer.dwell.table as dwell
from optimizer.cli.terminal import render_dwell_table
from optimizer.dwell.table import COLUMNS, SolverOptions, build_dwell_table
from optimizer.scenario.models import scenario_from_dict

FAST = SolverOptions(cells_1d=6, steps=12, tolerance=2e-2)

BASE: dict[str, Any] = {
    "plant": "Test kitchen (invented)",
    "ovens": [
        {
            "name": "oven",
            "trays": 10,
            "capacity": "100 kg",
            "settings": [
                # measured h, no radiation: the exact series applies to constant properties
                {
                    "name": "steam",
                    "air_temperature": "100 degC",
                    "measured_h": "60 W/m**2/K",
                    "relative_humidity": 0.9,
                    "emissivity": 0,
                },
                {"name": "hot-air", "air_temperature": "160 degC", "air_speed": "3 m/s"},
            ],
        }
    ],
    "tunnels": [
        {
            "name": "tunnel",
            "length": "12 m",
            "belt_width": "0.8 m",
            "belt_speed_min": "0.05 m/min",
            "belt_speed_max": "2 m/min",
            "fed_by": ["oven"],
            "hot_hold_max": "20 min",
            "transfer": {"air_temperature": "20 degC", "air_speed": "0.5 m/s", "duration": "5 min"},
            "loadings": [
                {"name": "full", "coverage": "80 %", "h_factor": 0.8},
                {"name": "spaced", "coverage": "50 %"},
            ],
            "settings": [
                {
                    "name": "cold",
                    "zones": [
                        {"length_fraction": 0.5, "air_temperature": 0, "air_speed": 3},
                        {"length_fraction": 0.5, "air_temperature": -5, "air_speed": 4},
                    ],
                }
            ],
        }
    ],
    "products": [
        {
            "name": "cocktail-sausage",
            "geometry": {"shape": "cylinder", "radius": "7 mm", "largest_scale": 1.1},
            "properties": {
                "conductivity": 0.45,
                "density": 1050,
                "specific_heat": "3.4 kJ/kg/K",
            },
            "initial_temperature": 4,
            "cook_rule": "fda-food-code-2022-poultry",
            "chill_rule": "fda-food-code-2022-cooling",
            "kg_per_tray": 5,
            "belt_loading": 10,
        },
        {
            "name": "thin-patty",
            "geometry": {
                "shape": "slab",
                "thickness": "8 mm",
                "length": "90 mm",
                "width": "90 mm",
                "largest": {"thickness": "9 mm"},
            },
            "composition": {
                "water": 0.62,
                "protein": 0.19,
                "fat": 0.17,
                "carbohydrate": 0.01,
                "ash": 0.01,
            },
            "initial_temperature": 3,
            "cook_rule": "fda-food-code-2022-comminuted",
            "chill_rule": "fda-food-code-2022-cooling",
            "kg_per_tray": 5,
            "belt_loading": 12,
        },
    ],
    "shifts": [{"name": "day", "minutes": 480}],
    "orders": [{"product": "cocktail-sausage", "max_kg": 500}],
    "safety_margin": {"time_fraction": 0.1, "core_temperature": "0.5 K"},
}


def _scenario(change=None):
    data = copy.deepcopy(BASE)
    if change is not None:
        change(data)
    return scenario_from_dict(data)


@pytest.fixture(scope="module")
def table() -> pd.DataFrame:
    return build_dwell_table(_scenario(), cache_dir=None, options=FAST, workers=1)


@pytest.fixture
def counters(monkeypatch):
    """Count the cells actually computed (not read from the cache)."""
    calls = {"cook": 0, "chill": 0}
    real_cook, real_chill = dwell._compute_cook, dwell._compute_chill

    def cook(*args, **kwargs):
        calls["cook"] += 1
        return real_cook(*args, **kwargs)

    def chill(*args, **kwargs):
        calls["chill"] += 1
        return real_chill(*args, **kwargs)

    monkeypatch.setattr(dwell, "_compute_cook", cook)
    monkeypatch.setattr(dwell, "_compute_chill", chill)
    return calls


# ----------------------------------------------------------------- shape of the table


def test_one_row_per_combination_with_the_agreed_columns(table):
    assert tuple(table.columns) == COLUMNS
    assert (
        len(table) == 2 * 2 * 1 * 1 * 2
    )  # products × oven settings × tunnels × settings × loadings
    keys = table[["product", "oven", "oven_setting", "tunnel", "tunnel_setting", "loading"]]
    assert not keys.duplicated().any()
    assert table["cook_feasible"].dtype == bool and table["feasible"].dtype == bool
    for c in ("cook_min", "chill_min", "max_belt_speed_m_per_min", "heat_in_kj_per_kg"):
        assert pd.api.types.is_float_dtype(table[c])


def test_every_ruled_out_row_says_why_and_every_feasible_row_has_numbers(table):
    for row in table.itertuples():
        if row.feasible:
            assert row.reason == ""
            assert row.cook_min > 0 and row.chill_min > 0
            assert 0 < row.max_belt_speed_m_per_min <= 2.0
            assert row.heat_in_kj_per_kg > 0 and row.heat_out_kj_per_kg > 0
        else:
            assert row.reason
            assert math.isnan(row.max_belt_speed_m_per_min)


def test_series_is_used_where_it_is_exact_and_recorded(table):
    steam = table[(table["product"] == "cocktail-sausage") & (table["oven_setting"] == "steam")]
    assert set(steam["cook_method"]) == {"series"}
    # radiation in hot air, and temperature-dependent properties, need the numerical solver
    assert set(table[table["oven_setting"] == "hot-air"]["cook_method"]) == {"numeric"}
    assert set(table[table["product"] == "thin-patty"]["cook_method"]) == {"numeric"}
    assert set(table["chill_method"]) == {"numeric"}


# ------------------------------------------------------------ equal to direct calls


def _direct(product: str, setting: str, loading_factor: float, options: SolverOptions):
    """Cook and chill one cell by calling thermal directly, built by hand from BASE."""
    from thermal import convection, foods, geometry, process, rules
    from thermal.product import Product

    if product == "cocktail-sausage":
        shape = geometry.InfiniteCylinder(0.007 * 1.1)
        props = foods.ConstantProperties(0.45, 1050.0, 3400.0)
        cook = rules.CookRule(74.0 + 0.5)  # FDA Food Code 2022 3-401.11(A)(3) plus the margin
        t0 = 4.0
    else:
        shape = geometry.Slab(0.009, length=0.09, width=0.09)
        props = foods.FoodProperties(foods.Composition(0.62, 0.19, 0.17, 0.01, 0.0, 0.01))
        table_rows = ((63.5, 180.0), (66.5, 60.0), (68.5, 17.0), (70.5, 0.0))
        cook = rules.CookRule(
            63.5,
            table=rules.TimeTemperatureTable(
                "t", tuple(r[0] for r in table_rows), tuple(r[1] for r in table_rows)
            ),
        )
        t0 = 3.0
    if setting == "steam":
        air = convection.AirSetting(100.0, 0.0, relative_humidity=0.9, measured_h=60.0)
        eps = 0.0
    else:
        air = convection.AirSetting(160.0, 3.0)
        eps = 0.9
    margin = process.Margin(relative=0.1)
    cells = options.cells(len(shape.directions))
    c = process.required_cook(
        Product(product, shape, props, eps),
        air,
        cook,
        t0,
        margin=margin,
        n_cells=cells,
        steps=options.steps,
    )
    piece = Product(product, shape, props, 0.9)
    zones = [
        process.TunnelZone(convection.AirSetting(0.0, 3.0), 0.5, loading_factor),
        process.TunnelZone(convection.AirSetting(-5.0, 4.0), 0.5, loading_factor),
    ]
    transfer = process.TransferStage(convection.AirSetting(20.0, 0.5), 5 * 60.0)
    # Source of the rule: US FDA Food Code 2022, 3-501.14(A), with the 0.5 K margin
    chill_rule = rules.ChillRule(
        (rules.CoolingStep(57.0, 20.5, 7200.0), rules.CoolingStep(57.0, 4.5, 21600.0))
    )
    ch = process.required_chill(
        piece,
        c.exit_profile,
        transfer,
        zones,
        chill_rule,
        margin=margin,
        steps=options.steps,
        tolerance=options.tolerance,
    )
    return c, ch


@pytest.mark.parametrize(
    ("product", "setting", "loading", "factor"),
    [
        ("cocktail-sausage", "steam", "full", 0.8),
        ("cocktail-sausage", "hot-air", "spaced", 0.75),  # no h_factor: 1 - 0.5 x 50 %
        ("thin-patty", "hot-air", "full", 0.8),
    ],
)
def test_dwell_values_equal_direct_thermal_calls(table, product, setting, loading, factor):
    row = table[
        (table["product"] == product)
        & (table["oven_setting"] == setting)
        & (table["loading"] == loading)
    ].iloc[0]
    cook, chill = _direct(product, setting, factor, FAST)
    assert row["cook_min"] == pytest.approx(cook.dwell / 60.0, rel=1e-12)
    assert row["cook_method"] == cook.method
    assert row["cook_binding"] == cook.binding
    assert row["heat_in_kj_per_kg"] == pytest.approx(cook.heat_in / 1000.0, rel=1e-12)
    assert row["chill_min"] == pytest.approx(chill.residence / 60.0, rel=1e-12)
    assert row["chill_binding"] == chill.binding
    assert row["heat_out_kj_per_kg"] == pytest.approx(chill.heat_out / 1000.0, rel=1e-12)
    expected_speed = min(12.0 / (chill.residence / 60.0), 2.0)
    assert row["max_belt_speed_m_per_min"] == pytest.approx(expected_speed, rel=1e-12)
    assert bool(row["feasible"])


def test_series_cook_matches_the_exact_solution_of_the_largest_piece(table):
    # The series cook of a constant-property cylinder with a given h is the exact
    # transient-conduction answer: check it against scipy's Bessel roots independently.
    # Source: Incropera et al., Fundamentals of Heat and Mass Transfer, eq. 5.49
    # (infinite cylinder, exact series); roots of ζ J1(ζ) = Bi J0(ζ).
    import numpy as np
    from scipy.optimize import brentq
    from scipy.special import j0, j1

    r, k, rho, cp, h = 0.0077, 0.45, 1050.0, 3400.0, 60.0
    bi, alpha = h * r / k, k / (rho * cp)

    def f(z):
        return z * j1(z) - bi * j0(z)

    grid = np.linspace(1e-6, 120.0, 40001)
    vals = f(grid)
    change = np.flatnonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))
    roots = np.array([brentq(f, grid[i], grid[i + 1], xtol=1e-14) for i in change])
    coef = 2 / roots * j1(roots) / (j0(roots) ** 2 + j1(roots) ** 2)
    target = (74.5 - 100.0) / (4.0 - 100.0)
    t = brentq(
        lambda s: float(np.sum(coef * np.exp(-(roots**2) * alpha * s / r**2))) - target, 1.0, 1e5
    )
    row = table[(table["product"] == "cocktail-sausage") & (table["oven_setting"] == "steam")]
    assert row["cook_min"].iloc[0] == pytest.approx(1.1 * t / 60.0, rel=1e-4)


# ---------------------------------------------------------------- ruled-out reasons


def test_reasons_for_unreachable_targets_and_a_too_slow_belt():
    def change(d):
        d["ovens"][0]["settings"].append(
            {"name": "warm", "air_temperature": "70 degC", "air_speed": "2 m/s"}
        )
        d["tunnels"][0]["belt_speed_min"] = "1.5 m/min"
        d["products"].append(
            {
                "name": "frozen-ball",
                "geometry": {"shape": "sphere", "diameter": "12 mm"},
                "properties": {
                    "conductivity": 0.45,
                    "density": 1050,
                    "specific_heat": 3400,
                    "latent_heat": "200 kJ/kg",
                },
                "freezing_point": -1.5,
                "initial_temperature": 4,
                "cook_rule": "fda-food-code-2022-poultry",
                "chill_rule": "freeze-core-minus-18",
                "kg_per_tray": 5,
                "belt_loading": 10,
            }
        )
        d["tunnels"][0]["settings"].append(
            {
                "name": "deep",
                "zones": [{"length_fraction": 1, "air_temperature": -30, "air_speed": 4}],
            }
        )
        d["tunnels"][0]["loadings"] = d["tunnels"][0]["loadings"][1:]
        d["products"] = d["products"][::2]  # the sausage and the frozen ball

    s = _scenario(change)
    t = build_dwell_table(s, cache_dir=None, options=FAST, workers=1)
    warm = t[t["oven_setting"] == "warm"]
    assert not warm["cook_feasible"].any()
    assert set(warm["cook_reason"]) == {
        "cook: oven air at 70.0 °C cannot bring the core to 74.5 °C"
    }
    assert set(warm["chill_reason"]) == {"not computed: the cook is ruled out"}
    assert (warm["reason"] == warm["cook_reason"]).all()
    frozen_cold = t[
        (t["product"] == "frozen-ball") & (t["tunnel_setting"] == "cold") & t["cook_feasible"]
    ]
    assert len(frozen_cold) == 2
    assert set(frozen_cold["chill_reason"]) == {
        "chill: tunnel air at -5.0 °C cannot bring the core to -18.5 °C (after a 5 min wait "
        "before the belt)"
    }
    slow = t[t["cook_feasible"] & t["chill_feasible"]]
    assert len(slow) > 0
    for row in slow.itertuples():
        needed = 12.0 / row.chill_min
        if needed < 1.5:
            assert not row.feasible
            assert row.reason.startswith(
                f"belt: the chill needs {row.chill_min:.1f} min in the tunnel, i.e. a belt at "
                f"most {needed:.3g} m/min, below the belt minimum 1.5 m/min"
            )
        else:
            assert row.feasible
    assert (~t["feasible"]).sum() >= 4 and (t.loc[~t["feasible"], "reason"] != "").all()


def test_a_long_hot_hold_that_breaks_a_cooling_window_rules_the_row_out():
    def change(d):
        d["rules"] = {
            "tight-window": {
                "kind": "chill",
                "source": "invented for the test",
                "steps": [{"from": 57, "to": 40, "within": "25 min"}],
                "exit_core_temperature": 10,
            }
        }
        d["products"] = d["products"][:1]
        d["products"][0]["chill_rule"] = "tight-window"
        d["ovens"][0]["settings"] = d["ovens"][0]["settings"][1:]
        d["tunnels"][0]["loadings"] = d["tunnels"][0]["loadings"][1:]
        # a warm, still room: the window opens during a long wait, which then uses it up
        d["tunnels"][0]["transfer"] = {
            "air_temperature": "45 degC",
            "measured_h": "8 W/m**2/K",
            "duration": "1 min",
        }

    short = _scenario(change)
    t_short = build_dwell_table(
        short.model_copy(
            update={"tunnels": [short.tunnels[0].model_copy(update={"hot_hold_max": 1.0})]}
        ),
        cache_dir=None,
        options=FAST,
        workers=1,
    )
    assert bool(t_short["feasible"].iloc[0]), t_short["reason"].iloc[0]
    t_long = build_dwell_table(
        short.model_copy(
            update={"tunnels": [short.tunnels[0].model_copy(update={"hot_hold_max": 90.0})]}
        ),
        cache_dir=None,
        options=FAST,
        workers=1,
    )
    row = t_long.iloc[0]
    assert not row["chill_feasible"]
    assert row["chill_binding"] == "step 1"
    assert row["chill_reason"].endswith(
        "when a batch waits the full hot-hold limit (90 min) before the belt"
    )


# ------------------------------------------------------------------------ the cache


def _files(cache: Path) -> set[str]:
    return {p.name for p in cache.iterdir()} if cache.exists() else set()


def test_no_cache_dir_writes_nothing(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    small = _scenario(lambda d: d.update(products=d["products"][:1]))
    small = small.model_copy(
        update={
            "ovens": [small.ovens[0].model_copy(update={"settings": small.ovens[0].settings[:1]})]
        }
    )
    build_dwell_table(small, cache_dir=None, options=FAST, workers=1)
    assert list(tmp_path.iterdir()) == []


def _one_cell(change=None):
    def base(d):
        d["products"] = d["products"][:1]
        d["ovens"][0]["settings"] = d["ovens"][0]["settings"][:1]
        d["tunnels"][0]["loadings"] = d["tunnels"][0]["loadings"][:1]
        if change is not None:
            change(d)

    return _scenario(base)


@pytest.mark.parametrize(
    ("what", "change", "cook", "chill"),
    [
        ("nothing", None, 0, 0),
        ("product size", lambda d: d["products"][0]["geometry"].update(radius="8 mm"), 1, 1),
        ("oven air", lambda d: d["ovens"][0]["settings"][0].update(air_temperature=98), 1, 1),
        (
            "cook rule",
            lambda d: d["products"][0].update(cook_rule="fda-food-code-2022-whole-muscle"),
            1,
            1,
        ),
        (
            "tunnel air",
            lambda d: d["tunnels"][0]["settings"][0]["zones"][1].update(air_temperature=-8),
            0,
            1,
        ),
        ("chill rule", lambda d: d["products"][0].update(chill_rule="fsis-appendix-b-chill"), 0, 1),
        ("loading factor", lambda d: d["tunnels"][0]["loadings"][0].update(h_factor=0.9), 0, 1),
        ("hot hold", lambda d: d["tunnels"][0].update(hot_hold_max="25 min"), 0, 1),
        ("margin", lambda d: d["safety_margin"].update(time_fraction=0.2), 1, 1),
        ("tunnel length", lambda d: d["tunnels"][0].update(length="14 m"), 0, 0),
        ("names and prices", lambda d: d["products"][0].update(value_per_kg=9.0), 0, 0),
    ],
    ids=lambda v: v if isinstance(v, str) else None,
)
def test_cache_recomputes_exactly_what_an_input_change_affects(
    what, change, cook, chill, counters, tmp_path
):
    cache = tmp_path / "cache"
    first = build_dwell_table(_one_cell(), cache_dir=cache, options=FAST, workers=1)
    assert counters == {"cook": 1, "chill": 1}
    counters.update(cook=0, chill=0)
    second = build_dwell_table(_one_cell(change), cache_dir=cache, options=FAST, workers=1)
    assert counters == {"cook": cook, "chill": chill}, what
    if what == "nothing":
        pd.testing.assert_frame_equal(first, second)
    if what == "tunnel length":
        assert second["chill_min"].iloc[0] == first["chill_min"].iloc[0]
        assert second["max_belt_speed_m_per_min"].iloc[0] == pytest.approx(
            min(14.0 / first["chill_min"].iloc[0], 2.0)
        )
    if cook:
        assert second["cook_min"].iloc[0] != first["cook_min"].iloc[0]
    assert not [n for n in _files(cache) if n.startswith(".")]  # no temporary files left


def test_second_build_reads_one_table_file(counters, tmp_path, monkeypatch):
    cache = tmp_path / "cache"
    first = build_dwell_table(_one_cell(), cache_dir=cache, options=FAST, workers=1)
    names = _files(cache)
    assert {n.split("-")[0] for n in names} == {"cook", "chill", "table"}
    reads: list[str] = []
    real = dwell.read_entry
    monkeypatch.setattr(
        dwell, "read_entry", lambda c, n, *a, **k: reads.append(n) or real(c, n, *a, **k)
    )
    counters.update(cook=0, chill=0)
    again = build_dwell_table(_one_cell(), cache_dir=cache, options=FAST, workers=1)
    assert counters == {"cook": 0, "chill": 0}
    assert len(reads) == 1 and reads[0].startswith("table-")
    pd.testing.assert_frame_equal(first, again)


def test_options_are_part_of_the_key(counters, tmp_path):
    cache = tmp_path / "cache"
    build_dwell_table(_one_cell(), cache_dir=cache, options=FAST, workers=1)
    counters.update(cook=0, chill=0)
    finer = SolverOptions(cells_1d=8, steps=12, tolerance=2e-2)
    build_dwell_table(_one_cell(), cache_dir=cache, options=finer, workers=1)
    assert counters == {"cook": 1, "chill": 1}


def test_a_corrupt_cache_file_is_recomputed(counters, tmp_path):
    cache = tmp_path / "cache"
    first = build_dwell_table(_one_cell(), cache_dir=cache, options=FAST, workers=1)
    for p in cache.iterdir():
        p.write_text("{not json", encoding="utf-8")
    counters.update(cook=0, chill=0)
    again = build_dwell_table(_one_cell(), cache_dir=cache, options=FAST, workers=1)
    assert counters == {"cook": 1, "chill": 1}
    pd.testing.assert_frame_equal(first, again)


def test_parallel_build_gives_the_same_table(table, tmp_path):
    parallel = build_dwell_table(_scenario(), cache_dir=tmp_path / "c", options=FAST, workers=2)
    pd.testing.assert_frame_equal(parallel, table)


# ----------------------------------------------------------------- output helpers


def test_csv_and_rich_rendering(table, tmp_path):
    from rich.console import Console

    path = dwell.write_dwell_csv(table, tmp_path / "dwell.csv")
    back = pd.read_csv(path, keep_default_na=False, na_values=[""])
    assert list(back.columns) == list(COLUMNS) and len(back) == len(table)
    assert back["cook_min"].to_numpy() == pytest.approx(table["cook_min"].to_numpy(), rel=1e-5)
    assert [p.name for p in tmp_path.iterdir()] == ["dwell.csv"]
    rendered = render_dwell_table(table, title="t")
    assert rendered.row_count == len(table)
    console = Console(width=200, record=True)
    console.print(rendered)
    text = console.export_text()
    assert "cocktail-sausage" in text and "(s)" in text


def test_plan_inputs_accepts_the_real_table(table):
    from optimizer.planning.adapter import plan_inputs

    inputs = plan_inputs(_scenario(), table)
    assert len(inputs.dwell) == len(table)
    assert inputs.product("cocktail-sausage").hot_hold_min == 20.0
