"""What-if studies: study files, named changes, sweeps, payback, the sweep command.

The sweeps run on a one-product plant invented for these tests (one oven, one
tunnel, one air setting each, a slab with measured surface coefficients), so a
dwell table is two cells and a plan a fraction of a second. Its dwell table
is computed once into a module-wide cache shared by every sweep, the way the
workers of a real sweep share theirs. Named-change tests work on the demo
plant's data without computing anything.
"""

from __future__ import annotations

import itertools
import json
import math
import re
from pathlib import Path

import pandas as pd
import pytest
import yaml

from optimizer.cli import sweep as sweep_cli
from optimizer.reporting import study as study_report
from optimizer.scenario.overrides import Change, OverrideError, apply_changes, load_raw
from optimizer.studies import study as sweep
from optimizer.studies.execute import grid_points
from optimizer.studies.study import StudyError, load_study, results_table, run_study

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.yaml"

# Invented test plant. Oven: 100 kg batches, 5 + 5 min load/unload; tunnel 0.5 m
# belt at 10 kg/m2 and full coverage, 480 min shift: short tunnels limit the
# plant, long ones leave the oven as the bottleneck.
PLANT = {
    "plant": "Sweep test plant (invented)",
    "ovens": [
        {
            "name": "oven-a",
            "trays": 10,
            "capacity": "100 kg",
            "load_time": "5 min",
            "unload_time": "5 min",
            "settings": [
                {
                    "name": "hot",
                    "air_temperature": "180 degC",
                    "measured_h": "40 W/m**2/K",
                    "emissivity": 0,
                }
            ],
        }
    ],
    "tunnels": [
        {
            "name": "tunnel-a",
            "length": "4 m",
            "belt_width": "0.5 m",
            "belt_speed_min": "0.01 m/min",
            "belt_speed_max": "5 m/min",
            "fed_by": ["oven-a"],
            "loadings": [{"name": "full", "coverage": "100 %"}],
            "settings": [
                {
                    "name": "cold",
                    "zones": [
                        {
                            "length_fraction": 1.0,
                            "air_temperature": "-5 degC",
                            "measured_h": "30 W/m**2/K",
                        }
                    ],
                }
            ],
        }
    ],
    "products": [
        {
            "name": "patty",
            "geometry": {
                "shape": "slab",
                "thickness": "12 mm",
                "length": "100 mm",
                "width": "100 mm",
            },
            "properties": {
                "conductivity": "0.45 W/m/K",
                "density": "1050 kg/m**3",
                "specific_heat": "3.5 kJ/kg/K",
            },
            "initial_temperature": "4 degC",
            "cook_rule": {"kind": "cook", "source": "invented test rule", "core_temperature": 72},
            "chill_rule": {
                "kind": "chill",
                "source": "invented test rule",
                "exit_core_temperature": 10,
            },
            "kg_per_tray": "10 kg",
            "belt_loading": "10 kg/m**2",
            "value_per_kg": 5.0,
        }
    ],
    "shifts": [{"name": "s1", "minutes": 480}],
    "objective": "most_kg",
}
SHIFT_MIN = 480.0
BATCH_KG = 100.0
LOAD_UNLOAD_MIN = 10.0
BELT_KG_PER_M = 10.0 * 1.0 * 0.5  # loading [kg/m2] x coverage x width [m]


@pytest.fixture(scope="module")
def plant(tmp_path_factory):
    """Folder with the test plant, and a dwell cache shared by the module."""
    folder = tmp_path_factory.mktemp("sweep")
    (folder / "plant.yaml").write_text(yaml.safe_dump(PLANT, sort_keys=False))
    return folder


@pytest.fixture(scope="module")
def cache(plant):
    return plant / "dwell-cache"


def write_study(folder: Path, name: str, data: dict) -> Path:
    path = folder / name
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return path


LENGTHS = ["4 m", "8 m", "16 m", "24 m", "40 m", "48 m", "60 m"]


@pytest.fixture(scope="module")
def length_sweep(plant, cache):
    path = write_study(
        plant,
        "lengths.yaml",
        {
            "study": "tunnel length",
            "base": "plant.yaml",
            "shifts_per_week": 10,
            "grid": [{"what": "tunnel_length", "values": LENGTHS}],
        },
    )
    return run_study(load_study(path), mode="serial", cache_dir=cache)


# ---------------------------------------------------------------------------
# The tunnel-length sweep
# ---------------------------------------------------------------------------


def test_tunnel_length_throughput_rises_while_the_tunnel_limits_then_stays_flat(
    length_sweep, plant, cache
):
    from optimizer.dwell.table import build_dwell_table
    from optimizer.scenario.models import load_scenario

    table = length_sweep.table
    assert list(table["status"]) == ["optimal"] * len(LENGTHS)
    lengths = [float(v.split()[0]) for v in table["tunnel_length"]]
    kg = list(table["kg_per_shift"])
    bottlenecks = list(table["bottleneck"])
    # The bottleneck moves once, from the tunnel to the oven.
    assert bottlenecks[0] == "tunnel-a" and bottlenecks[-1] == "oven-a"
    first_oven = bottlenecks.index("oven-a")
    assert all(b == "tunnel-a" for b in bottlenecks[:first_oven])
    assert all(b == "oven-a" for b in bottlenecks[first_oven:])

    dwell = build_dwell_table(load_scenario(plant / "plant.yaml"), cache_dir=cache)
    chill_min = float(dwell["chill_min"].iloc[0])
    cook_min = float(dwell["cook_min"].iloc[0])
    # Tunnel-limited part: non-decreasing, and equal to the belt's capacity by hand:
    # kg = loading x coverage x width x (length / residence) x feed minutes, the belt
    # feeding from the first batch out (fill = cook + load/unload) until the shift end
    # less the residence its last pieces need (the drain).
    fill = cook_min + LOAD_UNLOAD_MIN
    tunnel_part = kg[:first_oven]
    assert len(tunnel_part) >= 3
    assert all(b > a for a, b in itertools.pairwise(tunnel_part))
    for length, got in zip(lengths[:first_oven], tunnel_part, strict=True):
        hand = BELT_KG_PER_M * (length / chill_min) * (SHIFT_MIN - fill - chill_min)
        assert got == pytest.approx(hand, rel=0.01)
    # Oven-limited part: flat, at whole batches of the oven cycle by hand, the last
    # batch out a residence before the shift ends.
    oven_part = kg[first_oven:]
    assert len(oven_part) >= 2
    batches = math.floor((SHIFT_MIN - chill_min) / (cook_min + LOAD_UNLOAD_MIN))
    for got in oven_part:
        assert got == pytest.approx(batches * BATCH_KG, rel=1e-6)
    # kg per week is kg per shift times the study's shifts a week.
    assert list(table["kg_per_week"]) == pytest.approx([10 * k for k in kg])
    # Utilisation: the tunnel feeds all it can while it limits (idle in the fill and
    # while the last pieces drain), the oven once it does.
    feeding = SHIFT_MIN - fill - chill_min
    assert table["util:tunnel-a"].iloc[0] == pytest.approx(feeding / SHIFT_MIN, rel=0.01)
    assert table["util:tunnel-a"].iloc[-1] < 0.9
    assert (table["marginal_value"].iloc[:first_oven] > 0).all()


# ---------------------------------------------------------------------------
# Serial, pool and cluster agree; resume
# ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def small_grid(plant):
    path = write_study(
        plant,
        "grid.yaml",
        {
            "base": "plant.yaml",
            "grid": [
                {"what": "tunnel_length", "values": ["8 m", "40 m"]},
                {"what": "belt_width", "values": ["0.5 m", "0.7 m"], "label": "width"},
            ],
        },
    )
    return load_study(path)


def test_serial_pool_and_local_cluster_give_identical_tables(small_grid, cache, length_sweep):
    distributed = pytest.importorskip("distributed")
    serial = run_study(small_grid, mode="serial", cache_dir=cache)
    assert list(serial.table["point"]) == [
        "tunnel_length=8 m, width=0.5 m",
        "tunnel_length=8 m, width=0.7 m",
        "tunnel_length=40 m, width=0.5 m",
        "tunnel_length=40 m, width=0.7 m",
    ]
    assert serial.table["kg_per_shift"].iloc[1] > serial.table["kg_per_shift"].iloc[0]
    pool = run_study(small_grid, mode="pool", workers=2, cache_dir=cache)
    pd.testing.assert_frame_equal(pool.table, serial.table)
    assert pool.rows == serial.rows
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    ) as cluster:
        clustered = run_study(
            small_grid, mode="cluster", cluster=cluster.scheduler_address, cache_dir=cache
        )
    pd.testing.assert_frame_equal(clustered.table, serial.table)
    assert clustered.rows == serial.rows


def test_interrupted_sweep_keeps_points_done_and_resumes(small_grid, cache, tmp_path, monkeypatch):
    original = sweep.evaluate_point
    calls: list[int] = []

    def stops_at_third(point):
        if len(calls) == 2:
            raise KeyboardInterrupt
        calls.append(point.index)
        return original(point)

    monkeypatch.setattr(sweep, "evaluate_point", stops_at_third)
    with pytest.raises(KeyboardInterrupt):
        run_study(small_grid, mode="serial", cache_dir=cache, done_dir=tmp_path)
    assert calls == [0, 1]
    assert len(list(tmp_path.glob("*.json"))) == 2

    def counting(point):
        calls.append(point.index)
        return original(point)

    monkeypatch.setattr(sweep, "evaluate_point", counting)
    resumed = run_study(small_grid, mode="serial", cache_dir=cache, done_dir=tmp_path)
    assert calls == [0, 1, 2, 3]
    monkeypatch.setattr(sweep, "evaluate_point", original)
    fresh = run_study(small_grid, mode="serial", cache_dir=cache)
    pd.testing.assert_frame_equal(resumed.table, fresh.table)


# ---------------------------------------------------------------------------
# Payback against hand calculations
# ---------------------------------------------------------------------------


def hand_rows(study, kg_per_shift):
    rows = []
    for p, kg in zip(study.points, kg_per_shift, strict=True):
        rows.append(
            {
                "index": p.index,
                "label": p.name,
                "status": "optimal",
                "has_plan": True,
                "total_kg": 3 * kg,
                "n_shifts": 3,
                "kg_per_shift": kg,
                "value": 3 * kg * 4.0,
                "bottleneck": "tunnel-a",
                "bottleneck_kind": "tunnel",
                "marginal_value": 10.0,
                "marginal_unit": "kg/h",
                "energy_kwh": 3 * kg * 0.1,
                "utilisation": {"oven-a": 0.5, "tunnel-a": 1.0},
                "kg_by_product": {"patty": 3 * kg},
                "message": "",
            }
        )
    return rows


def test_purchase_table_against_hand_calculation(plant):
    path = write_study(
        plant,
        "money.yaml",
        {
            "base": "plant.yaml",
            "shifts_per_week": 12,
            "points": [
                {"name": "today"},
                {"name": "longer", "changes": [{"what": "tunnel_longer_by", "value": "3 m"}]},
                {"name": "wider", "changes": [{"what": "belt_width", "value": "0.6 m"}]},
            ],
            "finance": {"years": 10, "discount_rate": "8 %", "weeks_per_year": 50},
            "purchases": [
                {
                    "name": "extension",
                    "point": "longer",
                    "capital": 96000,
                    "running_cost_per_year": 6000,
                    "margin_per_kg": 1.5,
                },
                {"name": "wide belt", "point": "wider", "capital": 20000},
                {"name": "worse", "point": "today", "capital": 5000, "margin_per_kg": 1.0},
            ],
        },
    )
    study = load_study(path, check=False)
    # kg per shift: today 1000, longer 1000 + 400/12, wider 1100 (invented figures).
    table = results_table(study, hand_rows(study, [1000.0, 1000.0 + 400.0 / 12.0, 1100.0]))
    purchases, cases = sweep.purchase_table(study, table)
    ext = purchases.iloc[0]
    # Hand calculation: 400 kg/week extra x 1.5 per kg x 50 weeks = 30,000 a year;
    # less 6,000 running cost = 24,000 net; 96,000 / 24,000 = 4.0 years.
    assert ext["extra_kg_per_week"] == pytest.approx(400.0)
    assert ext["extra_margin_per_year"] == pytest.approx(30_000.0)
    assert ext["net_per_year"] == pytest.approx(24_000.0)
    assert ext["simple_payback_years"] == pytest.approx(4.0)
    # Source: uniform-series present-worth factor (P/A, 8 %, 10 years) = 6.7101, as
    # printed in compound-interest tables of engineering-economics texts (from memory).
    assert ext["npv"] == pytest.approx(-96_000.0 + 24_000.0 * 6.7101, abs=24_000.0 * 1e-4)
    # No margin per kg: product values. 100 kg/shift x 12 shifts x 4.0 per kg x 50 weeks.
    wide = purchases.iloc[1]
    assert wide["margin_basis"] == "product values"
    assert wide["extra_margin_per_year"] == pytest.approx(100 * 12 * 4.0 * 50)
    assert wide["simple_payback_years"] == pytest.approx(20_000.0 / 240_000.0)
    # An option that adds nothing never pays back.
    worse = purchases.iloc[2]
    assert worse["extra_kg_per_week"] == 0.0
    assert math.isinf(worse["simple_payback_years"])
    assert worse["npv"] == pytest.approx(-5000.0)
    assert [c.name for c in cases] == ["extension", "wide belt", "worse"]


def test_purchase_with_a_point_without_plan_is_not_priced(plant):
    path = write_study(
        plant,
        "nomoney.yaml",
        {
            "base": "plant.yaml",
            "points": [{"name": "today"}, {"name": "more"}],
            "finance": {"discount_rate": 0.05},
            "purchases": [{"name": "x", "point": "more", "capital": 10.0}],
        },
    )
    study = load_study(path, check=False)
    rows = hand_rows(study, [100.0, 200.0])
    rows[1] = {**rows[1], "status": "infeasible", "has_plan": False, "message": "short"}
    purchases, cases = sweep.purchase_table(study, results_table(study, rows))
    assert cases == [None]
    assert math.isnan(purchases["npv"].iloc[0])
    assert "no plan" in purchases["note"].iloc[0]


# ---------------------------------------------------------------------------
# Named changes, worked out on the demo plant's data
# ---------------------------------------------------------------------------


def demo_point(tmp_path, changes, **extra):
    data = {"base": str(DEMO), "points": [{"name": "p", "changes": changes}], **extra}
    study = load_study(write_study(tmp_path, "s.yaml", data), check=False)
    return apply_changes(study.base_raw, study.points[0].changes), study


def test_tunnel_and_air_changes_against_the_demo_values(tmp_path):
    raw, _ = demo_point(
        tmp_path,
        [
            {"what": "tunnel_longer_by", "value": "6 m"},
            {"what": "air_temperature_change", "machine": "chill-tunnel", "value": "-5 K"},
            {"what": "belt_width", "value": "120 cm"},
        ],
    )
    tunnel = raw["tunnels"][0]
    assert tunnel["length"] == pytest.approx(34.0 + 6.0)  # demo: 34 m
    assert tunnel["belt_width"] == pytest.approx(1.2)
    temps = [z["air_temperature"] for s in tunnel["settings"] for z in s["zones"]]
    assert temps == pytest.approx([2 - 5, -2 - 5, -4 - 5, -8 - 5])  # demo zones: 2, -2, -4, -8 °C
    raw, _ = demo_point(
        tmp_path,
        [
            {
                "what": "air_temperature",
                "machine": "rack-oven-1",
                "setting": "roast-180",
                "value": "356 degF",
            },
            {"what": "air_speed", "machine": "rack-oven-1", "value": "5 m/s"},
            {"what": "air_temperature_change", "machine": "rack-oven-1", "value": "10 K"},
        ],
    )
    oven = raw["ovens"][0]
    assert oven["settings"][0]["air_temperature"] == pytest.approx(190.0)  # 356 °F = 180 °C
    assert oven["settings"][1]["air_temperature"] == pytest.approx(160.0)  # 150 °C + 10 K
    assert [s["air_speed"] for s in oven["settings"]] == [5.0, 5.0]
    assert raw["ovens"][1] == load_raw(DEMO)["ovens"][1]


def test_added_oven_demand_growth_product_mix_and_shift_pattern(tmp_path):
    base = load_raw(DEMO)
    raw, study = demo_point(
        tmp_path,
        [
            {"what": "add_oven", "copy_of": "rack-oven-1", "value": 2},
            {"what": "demand_growth", "value": 1.5},
            {"what": "product_mix", "value": "sausage-heavy"},
            {"what": "shift_pattern", "value": "two"},
        ],
        product_mixes={"sausage-heavy": {"pork-sausage": 2}},
        shift_patterns={
            "two": {
                "shifts_per_week": 10,
                "shifts": [
                    {"name": "mon-early", "minutes": 480},
                    {"name": "mon-late", "minutes": 480},
                    {"name": "tue-early", "minutes": 480},
                ],
            }
        },
    )
    names = [o["name"] for o in raw["ovens"]]
    assert names == ["rack-oven-1", "cook-chamber-2", "rack-oven-1-copy-1", "rack-oven-1-copy-2"]
    assert raw["ovens"][2]["trays"] == base["ovens"][0]["trays"]
    assert raw["tunnels"][0]["fed_by"][-2:] == ["rack-oven-1-copy-1", "rack-oven-1-copy-2"]
    orders = {o["product"]: o for o in raw["orders"]}
    assert orders["chicken-fillet"]["min_kg"] == pytest.approx(600 * 1.5)
    assert orders["chicken-fillet"]["max_kg"] == pytest.approx(3000 * 1.5)
    assert orders["pork-sausage"]["min_kg"] == pytest.approx(800 * 1.5 * 2)
    assert orders["pork-sausage"]["max_kg"] == pytest.approx(2000 * 1.5 * 2)
    assert "min_kg" not in orders["veg-dumpling"]  # no minimum stays no minimum
    assert [s.get("stops") for s in raw["shifts"]] == [None, None, None]
    assert study.points[0].shifts_per_week == 10.0


def test_demo_study_points_validate(tmp_path):
    study = load_study(ROOT / "configs" / "study_tunnel.yaml")
    assert study.points[0].name == "today"
    assert study.base_index == 0
    assert len(study.purchase_points) == len(study.spec.purchases)
    signatures = {p.signature for p in study.points}
    assert len(signatures) == 2  # today's air and 5 K colder air


def test_add_changes_in_overrides():
    base = load_raw(DEMO)
    out = apply_changes(
        base,
        [
            Change("ovens", {"name": "oven-x", "trays": 12}, op="add", copy_of="rack-oven-1"),
            Change("tunnels.chill-tunnel.fed_by", "oven-x", op="add"),
        ],
    )
    assert out["ovens"][-1]["trays"] == 12
    assert out["ovens"][-1]["settings"] == base["ovens"][0]["settings"]
    assert out["tunnels"][0]["fed_by"][-1] == "oven-x"
    assert len(base["ovens"]) == 2
    with pytest.raises(OverrideError, match="exists already"):
        apply_changes(base, [Change("ovens", {"name": "cook-chamber-2"}, op="add")])
    with pytest.raises(OverrideError, match="needs a new name"):
        apply_changes(base, [Change("ovens", {}, op="add", copy_of="rack-oven-1")])
    with pytest.raises(OverrideError, match="'add' needs a list"):
        apply_changes(base, [Change("plant", "x", op="add")])
    with pytest.raises(OverrideError, match="copy_of is only accepted with 'add'"):
        Change("plant", "x", copy_of="y")
    # Keys of executor points tell an add from a set.
    a = grid_points({"x": [1]})[0]
    b = type(a)(0, a.label, (Change("x", 1, op="add"),))
    assert a.key() != b.key()


# ---------------------------------------------------------------------------
# The sweep command
# ---------------------------------------------------------------------------


def test_sweep_command_writes_tables_report_and_exit_code(plant, cache, tmp_path, capsys):
    study = write_study(
        plant,
        "command.yaml",
        {
            "study": "command test",
            "base": "plant.yaml",
            "points": [
                {"name": "today"},
                {"name": "longer", "changes": [{"what": "tunnel_longer_by", "value": "12 m"}]},
                {
                    "name": "impossible orders",
                    "changes": [{"set": "orders", "value": [{"product": "patty", "min_kg": 1e6}]}],
                },
            ],
            "finance": {"discount_rate": "6 %"},
            "purchases": [{"name": "ext", "point": "longer", "capital": 1000, "margin_per_kg": 1}],
        },
    )
    out = tmp_path / "out"
    code = sweep_cli.main([str(study), "--out", str(out), "--cache-dir", str(cache), "--serial"])
    captured = capsys.readouterr()
    assert code == 1  # one point has no feasible plan
    assert "impossible orders: no feasible plan (infeasible)" in captured.err
    names = sorted(p.name for p in out.iterdir())
    assert names == [
        "points",
        "purchases.csv",
        "sweep.csv",
        "sweep.html",
        "sweep.json",
        "sweep.xlsx",
    ]
    table = pd.read_csv(out / "sweep.csv")
    assert list(table["point"]) == ["today", "longer", "impossible orders"]
    assert list(table["status"]) == ["optimal", "optimal", "infeasible"]
    assert table["kg_per_week"].iloc[1] > table["kg_per_week"].iloc[0]
    purchases = pd.read_csv(out / "purchases.csv")
    assert purchases["extra_kg_per_week"].iloc[0] == pytest.approx(
        table["kg_per_week"].iloc[1] - table["kg_per_week"].iloc[0]
    )
    page = (out / "sweep.html").read_text()
    assert "food-safety plan" in page and 'data-table="purchases"' in page
    assert 'data-figure="throughput-points"' in page
    assert len(list((out / "points").glob("*.json"))) == 3
    # --json on a rerun resumes from the points folder and gives the same table.
    code = sweep_cli.main(
        [str(study), "--out", str(out), "--cache-dir", str(cache), "--serial", "--json"]
    )
    data = json.loads(capsys.readouterr().out)
    assert code == 1
    assert [r["point"] for r in data["tables"]["sweep"]] == list(table["point"])
    assert data["tables"]["sweep"][1]["kg_per_week"] == pytest.approx(table["kg_per_week"][1])


def test_grid_report_has_a_plot_per_axis_and_a_bottleneck_map(small_grid, cache):
    result = run_study(small_grid, mode="serial", cache_dir=cache)
    names = [name for name, _, _ in study_report.study_figures(result)]
    assert names == ["throughput-0", "throughput-1", "bottleneck-map"]
    page = study_report.sweep_report(result)
    assert page.count("data:image/png;base64,") == 3


BAD_STUDIES = [
    ({"grid": {"tunnels.tunnel-a.length": ["5 m"]}}, "base: required field is missing"),
    (
        {"base": "plant.yaml", "points": [{"name": "a"}], "grid": {"x.y": [1]}},
        "give either 'grid:' or 'points:'",
    ),
    ({"base": "plant.yaml", "points": [{"name": "a"}], "purchase": []}, "unknown field 'purchase'"),
    ({"base": "missing.yaml", "points": [{"name": "a"}]}, "base: no scenario file"),
    ({"base": "plant.yaml", "grid": [{"what": "longer_tunnel", "values": [1]}]}, "grid[0].what"),
    (
        {
            "base": "plant.yaml",
            "grid": [{"what": "tunnel_length", "machine": "spiral", "values": ["5 m"]}],
        },
        "machine: no tunnel named 'spiral'; known: tunnel-a",
    ),
    (
        {"base": "plant.yaml", "grid": [{"what": "tunnel_longer_by", "values": ["6 kg"]}]},
        "6 kg",
    ),
    (
        {"base": "plant.yaml", "grid": {"tunnels.tunnel-a.length": ["5 m", "-3 m"]}},
        "tunnels[0].length: must be > 0 m",
    ),
    (
        {"base": "plant.yaml", "grid": {"tunnels.tunnel-a.lenght": ["5 m"]}},
        "tunnels[0].lenght: unknown field",
    ),
    (
        {
            "base": "plant.yaml",
            "points": [{"name": "a"}],
            "purchases": [{"name": "x", "point": "a", "capital": 1}],
        },
        "finance: required with purchases",
    ),
    (
        {
            "base": "plant.yaml",
            "points": [{"name": "a"}],
            "finance": {"discount_rate": "eight"},
            "purchases": [{"name": "x", "point": "a", "capital": 1}],
        },
        "finance.discount_rate: expected a fraction",
    ),
    (
        {
            "base": "plant.yaml",
            "points": [{"name": "a"}],
            "finance": {"discount_rate": 0.05},
            "purchases": [{"name": "x", "point": "b", "capital": 1}],
        },
        "purchases[0].point: no point named 'b'",
    ),
    (
        {
            "base": "plant.yaml",
            "points": [{"name": "a", "changes": [{"what": "demand_growth", "value": 1.2}]}],
        },
        "has no orders to scale",
    ),
    (
        {
            "base": "plant.yaml",
            "points": [{"name": "a", "changes": [{"what": "air_speed", "value": 3}]}],
        },
        "uses measured_h, so air_speed does not apply",
    ),
]


@pytest.mark.parametrize(("data", "expected"), BAD_STUDIES)
def test_bad_study_files_exit_2_with_one_line_naming_the_field(
    plant, tmp_path, capsys, data, expected
):
    study = write_study(plant, "bad.yaml", data)
    out = tmp_path / "out"
    code = sweep_cli.main([str(study), "--out", str(out), "--serial"])
    err = capsys.readouterr().err
    assert code == 2
    assert expected in err
    lines = [line for line in err.splitlines() if line.strip()]
    assert all(line.startswith(str(study)) for line in lines)
    assert not out.exists()


def test_bad_yaml_and_missing_study_file(plant, tmp_path, capsys):
    bad = plant / "broken.yaml"
    bad.write_text("base: [unclosed\n")
    assert sweep_cli.main([str(bad), "--out", str(tmp_path / "o")]) == 2
    assert re.search(r"line \d+: not valid YAML", capsys.readouterr().err)
    assert sweep_cli.main([str(plant / "nope.yaml"), "--out", str(tmp_path / "o")]) == 2
    assert "no such study file" in capsys.readouterr().err
    with pytest.raises(StudyError, match="must hold a mapping"):
        (plant / "list.yaml").write_text("- 1\n")
        load_study(plant / "list.yaml")
    assert not (tmp_path / "o").exists()


# ---------------------------------------------------------------------------
# The sweep command: cluster, unreachable cluster, resume and --restart
# ---------------------------------------------------------------------------


def sweep_command(capsys, study: Path, out: Path, cache: Path, *options: str):
    """``corepace sweep`` through the command's entry point: (code, stdout, stderr, table)."""
    from optimizer.cli import app as cli

    argv = ["sweep", str(study), "--out", str(out), "--cache-dir", str(cache), *options]
    code = cli.main(argv)
    captured = capsys.readouterr()
    table = pd.read_csv(out / "sweep.csv") if (out / "sweep.csv").exists() else None
    return code, captured.out, captured.err, table


@pytest.fixture(scope="module")
def serial_command_table(small_grid, cache, tmp_path_factory):
    """The small grid's sweep.csv from ``corepace sweep --serial``, read back."""
    from optimizer.cli import app as cli

    out = tmp_path_factory.mktemp("serial-command")
    argv = ["sweep", str(small_grid.path), "--out", str(out), "--cache-dir", str(cache)]
    assert cli.main([*argv, "--serial", "--quiet"]) == 0
    table = pd.read_csv(out / "sweep.csv")
    assert len(table) == len(small_grid.points) == 4
    assert (table["status"] == "optimal").all()
    return table


def test_sweep_command_on_a_dask_cluster_gives_the_serial_table(
    small_grid, cache, serial_command_table, tmp_path, capsys
):
    distributed = pytest.importorskip("distributed")
    out = tmp_path / "cluster"
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None
    ) as cluster:
        code, stdout, _, table = sweep_command(
            capsys, small_grid.path, out, cache, "--cluster", cluster.scheduler_address, "--json"
        )
        # every point was planned on the cluster (the scheduler counts its finished tasks)
        planned = cluster.scheduler.task_prefixes["evaluate_point"].state_counts["memory"]
        assert planned == len(small_grid.points)
    assert code == 0
    pd.testing.assert_frame_equal(table, serial_command_table)
    data = json.loads(stdout)
    assert [r["point"] for r in data["tables"]["sweep"]] == list(serial_command_table["point"])
    assert len(list((out / "points").glob("*.json"))) == len(small_grid.points)


def test_unreachable_cluster_is_exit_2_one_line_nothing_written(
    small_grid, tmp_path, capsys, monkeypatch
):
    pytest.importorskip("distributed")
    # nothing listens on port 1 of the loopback; a short wait keeps the test light
    monkeypatch.setattr(sweep, "CLUSTER_CONNECT_TIMEOUT_S", 1.0)
    out = tmp_path / "out"
    cache = tmp_path / "cache"
    address = "tcp://127.0.0.1:1"
    code, stdout, stderr, _ = sweep_command(
        capsys, small_grid.path, out, cache, "--cluster", address
    )
    assert code == 2
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    assert lines[0].startswith(f"--cluster {address}: cannot connect (")
    assert "Traceback" not in stderr
    assert stdout == ""
    assert not out.exists() and not cache.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == []
    # a malformed address is refused the same way
    code, _, stderr, _ = sweep_command(capsys, small_grid.path, out, cache, "--cluster", "nowhere")
    assert code == 2
    assert stderr.strip().splitlines() == [
        "--cluster nowhere: cannot connect (missing port number in address 'nowhere')"
    ]
    assert not out.exists()


def test_sweep_command_resumes_in_pool_mode_and_restarts(
    small_grid, cache, serial_command_table, tmp_path, capsys
):
    out = tmp_path / "out"
    points = out / "points"
    # the first run in this process (a pool start is the slow part of a small sweep);
    # the finished points it keeps do not depend on where they ran
    code, stdout, _, first = sweep_command(capsys, small_grid.path, out, cache, "--serial")
    assert code == 0
    assert "resuming" not in stdout
    pd.testing.assert_frame_equal(first, serial_command_table)
    files = sorted(points.glob("*.json"))
    assert [f.name[:5] for f in files] == ["00000", "00001", "00002", "00003"]

    # an interrupted sweep: points 2 and 3 never finished
    for f in files[2:]:
        f.unlink()
    kept = {f: (f.stat().st_ino, f.stat().st_mtime_ns, f.read_bytes()) for f in files[:2]}
    # resumed in the default mode: the local process pool
    code, stdout, _, resumed = sweep_command(capsys, small_grid.path, out, cache)
    assert code == 0
    assert f"resuming: 2 of 4 points done in {points}" in stdout
    # the finished points were read back, not planned again (a new result would
    # have replaced the file, giving it a new inode)
    for f, before in kept.items():
        assert (f.stat().st_ino, f.stat().st_mtime_ns, f.read_bytes()) == before
    assert sorted(points.glob("*.json")) == files
    pd.testing.assert_frame_equal(resumed, serial_command_table)

    # a kept row altered by hand: a plain rerun (nothing left to plan) shows it,
    # --restart forgets it and plans every point again (here in this process)
    row = json.loads(files[0].read_text())
    row["message"] = "kept from an earlier run"
    files[0].write_text(json.dumps(row))
    code, stdout, _, rerun = sweep_command(capsys, small_grid.path, out, cache)
    assert code == 0
    assert f"resuming: 4 of 4 points done in {points}" in stdout
    assert list(rerun["message"].fillna("")) == ["kept from an earlier run", "", "", ""]
    code, stdout, _, restarted = sweep_command(
        capsys, small_grid.path, out, cache, "--restart", "--serial"
    )
    assert code == 0
    assert "resuming" not in stdout
    pd.testing.assert_frame_equal(restarted, serial_command_table)
    assert sorted(points.glob("*.json")) == files
