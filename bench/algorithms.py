"""HiGHS's LP algorithms side by side on the synthetic city's LPs of growing size (short runs only).

Usage::

    python bench/algorithms.py                       # the default sizes, 20 s limit per solve
    python bench/algorithms.py --case 1:0 --case 3:0 --time-limit 60
    python bench/algorithms.py --districts 200 --sample 4 --time-limit 120    # district LPs of a 200-district city
    python bench/algorithms.py --growth 10,50,200 --sample 5 --algorithm default --time-limit 150

A case ``N:DAYS`` is the monolithic LP of the synthetic city (:mod:`bench.synthetic_city`) with ``N`` districts at
``DAYS`` typical days (0 = the full year). ``--districts N`` instead takes the full-year district LPs of an
``N``-district city (the LPs a decomposed run solves), ``--sample`` of them with a heat store and as many without,
spread over the LP sizes. ``--growth`` solves a systematic sample of the district LPs of each city size with each
algorithm and prints the mean seconds per district (and the estimate for the whole city: mean x districts).

Each LP is built once, and solved by a fresh ``highspy.Highs`` with each of: HiGHS's default (``solver=choose``), dual
simplex, the interior point method IPX (with and without crossover), the interior point method HiPO (direct
factorisation; with and without crossover) and the first-order method (PDLP). Printed:
seconds, status, objective and its relative difference to the simplex optimum (an algorithm that stops at the
time limit shows ``time_limit``). The machine's 1-minute load average is printed before and after: on a shared
machine compare the algorithms within one case, not seconds across runs.

Also printed per LP: how many columns are fixed (lower bound = upper bound) and how many are fixed at zero, and
the size of the LP after HiGHS's presolve (the share presolve removes anyway).
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
from engine.model.formulation import build_model, supply_units  # noqa: E402
from engine.model.prepare import prepare_run  # noqa: E402
from engine.model.solve import run_settings  # noqa: E402

ALGORITHMS = {
    "default": {},  # HiGHS's own choice ("choose": dual simplex after presolve for these LPs)
    "simplex": {"solver": "simplex"},
    "ipx+crossover": {"solver": "ipx", "run_crossover": "on"},
    "ipx": {"solver": "ipx", "run_crossover": "off"},
    "hipo+crossover": {"solver": "hipo", "run_crossover": "on"},
    "hipo": {"solver": "hipo", "run_crossover": "off"},
    "pdlp": {"solver": "pdlp"},
}
DEFAULT_CASES = ("1:12", "10:12", "1:0", "3:0")


def solve_with(lp, options: dict, time_limit_s: float) -> tuple[float, str, float]:
    h = lp.to_highs(time_limit_s)
    for name, value in options.items():
        h.setOptionValue(name, value)
    started = time.perf_counter()
    h.run()
    elapsed = time.perf_counter() - started
    status = h.getModelStatus()
    text = "optimal" if status == highspy.HighsModelStatus.kOptimal else h.modelStatusToString(status)
    return elapsed, text, float(h.getInfo().objective_function_value)


def presolved_size(lp) -> tuple[int, int, int]:
    """Columns, rows and nonzeros of ``lp`` after HiGHS's presolve."""
    h = lp.to_highs()
    h.presolve()
    reduced = h.getPresolvedLp()
    return int(reduced.num_col_), int(reduced.num_row_), int(len(reduced.a_matrix_.value_))


def size_text(lp) -> str:
    lower, upper = lp.col_lower, lp.col_upper
    fixed = lower == upper
    cols, rows, nnz = presolved_size(lp)
    return (f"{lp.n_cols:,} | {lp.n_rows:,} | {lp.n_nonzeros:,} | {int(fixed.sum()):,} "
            f"({int((fixed & (upper == 0)).sum()):,}) | {cols:,} x {rows:,} ({nnz:,})")


def compare(label: str, lp, algorithms, time_limit_s: float) -> dict[str, float]:
    reference = None
    sizes = size_text(lp)
    seconds_by = {}
    for name in algorithms:
        seconds, status, objective = solve_with(lp, ALGORITHMS[name], time_limit_s)
        seconds_by[name] = seconds if status == "optimal" else float("nan")
        if name in ("default", "simplex") and reference is None and status == "optimal":
            reference = objective
        diff = "-" if reference is None or status != "optimal" else \
            f"{abs(objective - reference) / max(1.0, abs(reference)):.1e}"
        print(f"{label} | {sizes} | {name} | {seconds:.2f} | {status} | {diff}", flush=True)
    return seconds_by


HEADER = ("case | variables | rows | nonzeros | fixed cols (at 0) | after presolve: cols x rows (nonzeros) | "
          "algorithm | seconds | status | rel. diff to simplex")


def district_sample(n: int, sample: int, with_store: bool | None):
    """The prepared full-year run of an ``n``-district synthetic city and up to ``sample`` district indices,
    spread over the districts ordered by LP size (with a store, without one, or either when None)."""
    scenario = synthetic_city(n, typical_days=0)
    settings = run_settings(scenario, "cost", 0.0, 0)
    prepared = prepare_run(scenario, "reference", settings)
    info = []
    for i in range(n):
        units, stores = supply_units(prepared, np.array([i]))
        info.append((len(units.technology_id), len(stores.technology_id) > 0, i))
    chosen = [x for x in sorted(info) if with_store is None or x[1] == with_store]
    if len(chosen) > sample:
        picks = np.linspace(0, len(chosen) - 1, sample).round().astype(int)
        chosen = [chosen[k] for k in dict.fromkeys(picks)]
    return prepared, chosen


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="HiGHS algorithms per LP size on the synthetic city")
    parser.add_argument("--case", action="append", default=None, metavar="N:DAYS")
    parser.add_argument("--districts", type=int, default=None, help="district LPs of an N-district full-year city")
    parser.add_argument("--growth", default=None, help="comma-separated city sizes: mean seconds per district LP")
    parser.add_argument("--sample", type=int, default=3, help="district LPs per kind (store / none) or per size")
    parser.add_argument("--time-limit", type=float, default=20.0, help="seconds per solve")
    parser.add_argument("--algorithm", action="append", default=None, choices=list(ALGORITHMS))
    args = parser.parse_args(argv)
    algorithms = args.algorithm or list(ALGORITHMS)
    print(f"HiGHS {highspy.Highs().version()}, {os.cpu_count()} cores, 1-min load average "
          f"{os.getloadavg()[0]:.1f} before")
    if args.growth:
        print("districts | sampled LPs | algorithm | mean s per district LP | estimate for the city [s]")
        for n in (int(v) for v in args.growth.split(",")):
            prepared, chosen = district_sample(n, args.sample, None)
            totals = {name: [] for name in algorithms}
            stopped = {name: 0 for name in algorithms}
            for units, store, i in chosen:
                model = build_model(prepared, [i])
                model.lp.set_objective(model.money)
                for name in algorithms:
                    seconds, status, _ = solve_with(model.lp, ALGORITHMS[name], args.time_limit)
                    totals[name].append(seconds)
                    stopped[name] += status != "optimal"
            stores = sum(1 for _, store, _ in chosen if store)
            for name, seconds in totals.items():
                mean = float(np.mean(seconds))
                limit = f" ({stopped[name]} stopped at the time limit: at least)" if stopped[name] else ""
                print(f"{n} | {len(seconds)} ({stores} with a store) | {name} | {mean:.2f}{limit} | {mean * n:,.0f}",
                      flush=True)
    elif args.districts:
        print(HEADER)
        for with_store in (True, False):
            prepared, chosen = district_sample(args.districts, args.sample, with_store)
            for units, store, i in chosen:
                model = build_model(prepared, [i])
                model.lp.set_objective(model.money)
                label = (f"district {prepared.district_ids[i]} of {args.districts}, year, {units} units, "
                         f"{'store' if store else 'no store'}")
                compare(label, model.lp, algorithms, args.time_limit)
    else:
        print(HEADER)
        for case in args.case or list(DEFAULT_CASES):
            n, days = (int(v) for v in case.split(":"))
            scenario = synthetic_city(n, typical_days=days)
            settings = run_settings(scenario, "cost", 0.0, days)
            prepared = prepare_run(scenario, "reference", settings)
            model = build_model(prepared)
            model.lp.set_objective(model.money)
            compare(f"{n} districts, {'year' if days == 0 else f'{days} days'}", model.lp, algorithms,
                    args.time_limit)
    print(f"1-min load average {os.getloadavg()[0]:.1f} after")
    return 0


if __name__ == "__main__":
    sys.exit(main())
