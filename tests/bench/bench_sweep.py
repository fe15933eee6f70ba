"""Benchmark: a 200-point what-if sweep serially, in a local pool and on a Dask LocalCluster.

Not collected by pytest (run it as a script; it takes a few minutes)::

    .venv/bin/python tests/bench/bench_sweep.py [--points 200] [--workers N]

The plant is invented for the benchmark: two products, one oven, one tunnel
and three shifts; the grid is tunnel length × belt width, so every point has
the same dwell cells (computed once before the timed runs, into a cache all
runs share) and a different plan. Baseline: the serial run in this process,
measured in the same run. Each parallel time includes starting its worker
processes. The script prints the wall times, the speedups over the serial
baseline, and whether the three tables are identical; it never fails on
time.
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import sys
import tempfile
import time
from pathlib import Path

import yaml

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from optimizer.studies.study import load_study, run_study

PLANT = {
    "plant": "Benchmark plant (invented)",
    "ovens": [
        {
            "name": "oven-a",
            "trays": 10,
            "capacity": "100 kg",
            "load_time": "5 min",
            "unload_time": "5 min",
            "changeover": "10 min",
            "settings": [
                {"name": "hot", "air_temperature": 180, "measured_h": 40, "emissivity": 0}
            ],
        }
    ],
    "tunnels": [
        {
            "name": "tunnel-a",
            "length": "8 m",
            "belt_width": "0.5 m",
            "belt_speed_min": 0.01,
            "belt_speed_max": 5,
            "fed_by": ["oven-a"],
            "changeover": "5 min",
            "loadings": [{"name": "full", "coverage": 1.0}],
            "settings": [
                {
                    "name": "cold",
                    "zones": [{"length_fraction": 1.0, "air_temperature": -5, "measured_h": 30}],
                }
            ],
        }
    ],
    "products": [
        {
            "name": name,
            "geometry": {"shape": "slab", "thickness": thick, "length": 0.1, "width": 0.1},
            "properties": {"conductivity": 0.45, "density": 1050, "specific_heat": 3500},
            "initial_temperature": 4,
            "cook_rule": {"kind": "cook", "source": "invented", "core_temperature": 72},
            "chill_rule": {"kind": "chill", "source": "invented", "exit_core_temperature": 10},
            "kg_per_tray": 10,
            "belt_loading": 10,
            "value_per_kg": value,
        }
        for name, thick, value in (("thin", 0.010, 5.0), ("thick", 0.016, 7.0))
    ],
    "shifts": [{"name": f"s{i}", "minutes": 480} for i in range(1, 4)],
    "orders": [
        {"product": "thin", "max_kg": 4000},
        {"product": "thick", "max_kg": 4000},
    ],
    "objective": "most_value",
}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=200, help="grid points (multiple of 10)")
    parser.add_argument("--workers", type=int, default=os.cpu_count() or 2)
    args = parser.parse_args()
    n_len = max(args.points // 10, 1)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        (folder / "plant.yaml").write_text(yaml.safe_dump(PLANT))
        study_file = folder / "study.yaml"
        study_file.write_text(
            yaml.safe_dump(
                {
                    "base": "plant.yaml",
                    "grid": [
                        {
                            "what": "tunnel_length",
                            "values": [f"{4 + 2 * i} m" for i in range(n_len)],
                        },
                        {
                            "what": "belt_width",
                            "values": [f"{0.4 + 0.05 * j:.2f} m" for j in range(10)],
                        },
                    ],
                }
            )
        )
        cache = folder / "cache"
        study = load_study(study_file)
        n = len(study.points)
        t0 = time.perf_counter()
        run_study(
            dataclasses.replace(study, points=study.points[:1]), mode="serial", cache_dir=cache
        )
        print(f"dwell cells computed once: {time.perf_counter() - t0:.1f} s")
        print(f"{n} points, {args.workers} workers, {os.cpu_count()} CPUs")

        t0 = time.perf_counter()
        serial = run_study(study, mode="serial", cache_dir=cache)
        t_serial = time.perf_counter() - t0
        print(f"serial (baseline):  {t_serial:7.1f} s   {1000 * t_serial / n:6.0f} ms/point")

        t0 = time.perf_counter()
        pool = run_study(study, mode="pool", workers=args.workers, cache_dir=cache)
        t_pool = time.perf_counter() - t0
        print(
            f"process pool:       {t_pool:7.1f} s   {1000 * t_pool / n:6.0f} ms/point   "
            f"speedup {t_serial / t_pool:4.2f}x"
        )

        from distributed import LocalCluster

        t0 = time.perf_counter()
        with LocalCluster(
            n_workers=args.workers, threads_per_worker=1, processes=True, dashboard_address=None
        ) as cluster:
            clustered = run_study(
                study, mode="cluster", cluster=cluster.scheduler_address, cache_dir=cache
            )
        t_cluster = time.perf_counter() - t0
        print(
            f"dask LocalCluster:  {t_cluster:7.1f} s   {1000 * t_cluster / n:6.0f} ms/point   "
            f"speedup {t_serial / t_cluster:4.2f}x"
        )
        same_pool = pool.table.equals(serial.table) and pool.rows == serial.rows
        same_cluster = clustered.table.equals(serial.table) and clustered.rows == serial.rows
        print(f"identical to serial: pool {same_pool}, cluster {same_cluster}")
        print(f"load average during the run: {os.getloadavg()}")


if __name__ == "__main__":
    main()
