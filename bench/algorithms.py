"""HiGHS's LP algorithms side by side on the synthetic city's LPs of growing size (short runs only).

Usage::

    python bench/algorithms.py                       # the default sizes, 20 s limit per solve
    python bench/algorithms.py --case 1:0 --case 3:0 --time-limit 60

A case ``N:DAYS`` is the monolithic LP of the synthetic city (:mod:`bench.synthetic_city`) with ``N`` districts at
``DAYS`` typical days (0 = the full year). Each LP is built once, and solved by a fresh ``highspy.Highs`` with each
of: the default (dual simplex after presolve), the interior point method with crossover, the interior point
method without crossover, and the first-order method (PDLP). Printed: seconds, status, objective and its relative
difference to the simplex optimum (an algorithm that stops at the time limit shows ``time_limit``). The
machine's 1-minute load average is printed before and after: on a shared machine compare the algorithms within
one case, not seconds across runs.

Also printed per case: how many columns are fixed (lower bound = upper bound) and how many are fixed at zero,
the share of the LP that presolve would remove anyway.
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

ALGORITHMS = {
    "simplex": {},
    "ipm+crossover": {"solver": "ipm", "run_crossover": "on"},
    "ipm": {"solver": "ipm", "run_crossover": "off"},
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


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="HiGHS algorithms per LP size on the synthetic city")
    parser.add_argument("--case", action="append", default=None, metavar="N:DAYS")
    parser.add_argument("--time-limit", type=float, default=20.0, help="seconds per solve")
    parser.add_argument("--algorithm", action="append", default=None, choices=sorted(ALGORITHMS))
    args = parser.parse_args(argv)
    cases = args.case or list(DEFAULT_CASES)
    algorithms = args.algorithm or list(ALGORITHMS)
    print(f"HiGHS {highspy.Highs().version()}, {os.cpu_count()} cores, 1-min load average "
          f"{os.getloadavg()[0]:.1f} before")
    print("case | variables | rows | fixed cols (at 0) | algorithm | seconds | status | rel. diff to simplex")
    for case in cases:
        n, days = (int(v) for v in case.split(":"))
        scenario = synthetic_city(n, typical_days=days)
        settings = run_settings(scenario, "cost", 0.0, days)
        prepared = prepare_run(scenario, "reference", settings)
        model = build_model(prepared)
        lp = model.lp
        lower, upper = lp.col_lower, lp.col_upper
        fixed = lower == upper
        label = f"{n} districts, {'year' if days == 0 else f'{days} days'}"
        reference = None
        for name in algorithms:
            seconds, status, objective = solve_with(lp, ALGORITHMS[name], args.time_limit)
            if name == "simplex" and status == "optimal":
                reference = objective
            diff = "-" if reference is None or status != "optimal" else \
                f"{abs(objective - reference) / max(1.0, abs(reference)):.1e}"
            print(f"{label} | {lp.n_cols:,} | {lp.n_rows:,} | {int(fixed.sum()):,} ({int((fixed & (upper == 0)).sum()):,})"
                  f" | {name} | {seconds:.2f} | {status} | {diff}", flush=True)
    print(f"1-min load average {os.getloadavg()[0]:.1f} after")
    return 0


if __name__ == "__main__":
    sys.exit(main())
