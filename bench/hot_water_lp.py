"""What hot water at its own temperature costs a full-year district LP of the synthetic city (short runs only).

Usage::

    python bench/hot_water_lp.py                              # districts 1 (no store) and 7 (store), 10-district city
    python bench/hot_water_lp.py --districts 10 --pick 1,7 --time-limit 300

For each picked district of the full-year ``N``-district synthetic city (:mod:`bench.synthetic_city`) the district
LP is built twice from the same inputs: as run ("own temperature": the districts' ``hot_water_temp_c``, the
hot-water columns of the heat pumps and the hot-water rows of docs/model.md section 4 constraint 3) and with every
district's hot-water temperature set to its supply temperature (the hot-water columns and rows are left out, as
before hot water had its own temperature). Printed per LP: the units, whether it has a store, columns, rows,
nonzeros, the size after HiGHS's presolve, simplex iterations, seconds of HiGHS's default algorithm and the
objective. The machine's 1-minute load average is printed before and after: on a shared machine compare the two
builds of one district, not seconds across runs.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import highspy  # noqa: E402
import numpy as np  # noqa: E402

from bench.synthetic_city import synthetic_city  # noqa: E402
from engine.model.formulation import build_model  # noqa: E402
from engine.model.prepare import prepare_run  # noqa: E402
from engine.model.solve import run_settings  # noqa: E402


def measure(prepared, district: int, time_limit_s: float) -> dict:
    model = build_model(prepared, [district])
    lp = model.lp
    lp.set_objective(model.money)
    h = lp.to_highs(time_limit_s)
    h.presolve()
    reduced = h.getPresolvedLp()
    after = f"{reduced.num_col_} x {reduced.num_row_}"
    h = lp.to_highs(time_limit_s)
    started = time.perf_counter()
    h.run()
    seconds = time.perf_counter() - started
    info = h.getInfo()
    status = h.getModelStatus()
    return {
        "units": ",".join(model.units.kind),
        "store": len(model.stores.technology_id) > 0,
        "hot-water cols": int(model.cols["hot_water"].size),
        "cols": lp.n_cols,
        "rows": lp.n_rows,
        "nonzeros": lp.n_nonzeros,
        "after presolve": after,
        "iterations": int(info.simplex_iteration_count),
        "seconds": round(seconds, 1),
        "status": "optimal" if status == highspy.HighsModelStatus.kOptimal else h.modelStatusToString(status),
        "objective": round(float(info.objective_function_value), 2),
    }


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="hot water at its own temperature in full-year district LPs")
    parser.add_argument("--districts", type=int, default=10, help="size of the synthetic city")
    parser.add_argument("--pick", default="1,7", help="comma-separated district indices")
    parser.add_argument("--time-limit", type=float, default=300.0, help="seconds per solve")
    args = parser.parse_args(argv)
    print(f"load average before: {os.getloadavg()[0]:.2f}")
    scenario = synthetic_city(args.districts, typical_days=0)
    settings = run_settings(scenario, "cost", 0.0, 0)
    own = prepare_run(scenario, "reference", settings)
    flat_scenario = synthetic_city(args.districts, typical_days=0)
    flat_scenario.districts["hot_water_temp_c"] = flat_scenario.districts["supply_temp_c"]
    flat = prepare_run(flat_scenario, "reference", run_settings(flat_scenario, "cost", 0.0, 0))
    for i in (int(x) for x in args.pick.split(",") if x.strip()):
        for label, prepared in (("own temperature", own), ("at supply temperature", flat)):
            row = measure(prepared, i, args.time_limit)
            print(f"district {i} | {label} | " + " | ".join(f"{k} {v}" for k, v in row.items()), flush=True)
    print(f"load average after: {os.getloadavg()[0]:.2f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
