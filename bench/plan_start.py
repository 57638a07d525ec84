"""Full-year district LPs solved from scratch and from the plan of their typical-day twin (the plan start).

Usage::

    python bench/plan_start.py                          # two districts of each class of the 200-district city
    python bench/plan_start.py --districts 10 --pick 7,8
    python bench/plan_start.py --per-class 3 --all      # also districts without a store (the engine skips them)

For each district of the full-year synthetic city (:mod:`bench.synthetic_city`) the district LP (cost objective)
is solved by :meth:`engine.model.lp.LinearProgram.solve` twice from the same build: as the engine solved it before
("plain": the trimmed LP, HiGHS's dual simplex from its own start) and with the plan start
(:func:`engine.model.solve.plan_start`: the district's LP on 12 typical days is solved, the full-year LP is solved
with the new capacities fixed at that plan, then from that optimum with the capacities free by primal simplex).
Printed per district: its class, the seconds of each (the plan start's including its typical-day solve), the
iterations of both runs, how far the fixed plan's cost lies above the optimum, and the relative difference of the
optima. The estimate for the city weights each class's mean by its number of districts. The machine's 1-minute
load average is printed before and after: compare the two solves of one district, not seconds across runs.
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

import numpy as np  # noqa: E402

from bench.synthetic_city import synthetic_city  # noqa: E402
from engine.model.formulation import build_model  # noqa: E402
from engine.model.prepare import prepare_run  # noqa: E402
from engine.model.solve import attach_plan_start, plan_start, run_settings  # noqa: E402


def measure(prepared, district: int) -> dict:
    model = build_model(prepared, [district])
    model.lp.set_objective(model.money)
    plain = model.lp.solve()
    started = time.perf_counter()
    start = plan_start(prepared, [district], model)
    start_s = time.perf_counter() - started
    if start is None:
        return {"plain s": round(plain.solve_s, 2), "plan start": "none (no store)"}
    solution = model.lp.solve(fixed_start=start)
    info = solution.info["fixed_start"]
    return {
        "plain s": round(plain.solve_s, 2),
        "plan start s": round(start_s + solution.solve_s, 2),
        "typical-day plan s": round(start_s, 2),
        "fixed s / iterations": f"{info['first_s']:.2f} / {info['first_iterations']}",
        "freed s / iterations": f"{info['second_s']:.2f} / {info['second_iterations']}",
        "used": info["used"],
        "relative difference": f"{abs(solution.objective - plain.objective) / max(abs(plain.objective), 1.0):.1e}",
    }


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="full-year district LPs from scratch and from the plan start")
    parser.add_argument("--districts", type=int, default=200, help="size of the synthetic city")
    parser.add_argument("--pick", default="", help="comma-separated district indices instead of a per-class sample")
    parser.add_argument("--per-class", type=int, default=2, help="districts of each class (store, well-flow rows)")
    parser.add_argument("--all", action="store_true", help="also districts without a store")
    args = parser.parse_args(argv)
    print(f"load average before: {os.getloadavg()[0]:.2f}", flush=True)
    scenario = synthetic_city(args.districts, typical_days=0)
    settings = run_settings(scenario, "cost", 0.0, 0)
    prepared = prepare_run(scenario, "reference", settings)
    attach_plan_start(scenario, "reference", settings, prepared)
    classes: dict = {}
    for i in range(args.districts):
        model = build_model(prepared, [i])
        key = (len(model.stores.technology_id) > 0, len(model.lp.flow_pairs) > 0)
        classes.setdefault(key, []).append(i)
    if args.pick:
        picks = {k: [i for i in members if str(i) in args.pick.split(",")] for k, members in classes.items()}
    else:
        picks = {k: [members[int(j)] for j in np.linspace(0, len(members) - 1, min(args.per_class, len(members)))]
                 for k, members in classes.items() if k[0] or args.all}
    city_plain = city_start = 0.0
    for (store, wells), chosen in sorted(picks.items()):
        if not chosen:
            continue
        print(f"class store {store}, well-flow rows {wells}: {len(classes[(store, wells)])} districts, sampled "
              f"{chosen}", flush=True)
        plain_s, start_s = [], []
        for i in chosen:
            row = measure(prepared, i)
            plain_s.append(row["plain s"])
            start_s.append(row.get("plan start s", row["plain s"]))
            print(f"district {i} | " + " | ".join(f"{k} {v}" for k, v in row.items()), flush=True)
        weight = len(classes[(store, wells)])
        city_plain += weight * float(np.mean(plain_s))
        city_start += weight * float(np.mean(start_s))
    print(f"weighted by class to the sampled classes of the city: {city_plain:.0f} s plain, {city_start:.0f} s with "
          f"the plan start (HiGHS seconds, one solve at a time)")
    print(f"load average after: {os.getloadavg()[0]:.2f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
