"""Benchmark (not a test): the demo's four-year pathway against its single-year solve, and its designation.

Usage::

    python bench/pathway.py                  # both parts, the scenario's typical days (12)
    python bench/pathway.py --part pathway   # pathway 2030, 2035, 2040, 2045 over the single-year solve
    python bench/pathway.py --part designation   # five cost cases + near-optimal alternatives

Prints wall times in seconds; nothing is asserted. The machine and its load decide the figures.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:  # run as a script from anywhere, like bench/run.py
    sys.path.insert(0, str(ROOT))

from engine.model.solve import solve_scenario  # noqa: E402
from engine.scenario.folder import load_scenario  # noqa: E402
from engine.studies.designation import designate  # noqa: E402
from engine.studies.pathway import resolve_pathway, solve_pathway  # noqa: E402

YEARS = [2030, 2035, 2040, 2045]


def bench_pathway(scenario, typical_days):
    started = time.perf_counter()
    single = solve_scenario(scenario, typical_days=typical_days)
    single_s = time.perf_counter() - started
    started = time.perf_counter()
    pathway = solve_pathway(scenario, years=YEARS, typical_days=typical_days)
    pathway_s = time.perf_counter() - started
    print(f"single-year solve: {single_s:.2f} s ({single.status}, {single.model_size.get('linear_programs')} LP(s))")
    print(f"four-year pathway: {pathway_s:.2f} s ({pathway.status}; {len(YEARS)} years, caps in "
          f"{sorted(pathway.co2_caps)}; solve {pathway.timings_s.get('solve', float('nan')):.2f} s)")
    print(f"pathway_over_single={pathway_s / single_s:.2f}")
    # the same years without the city-wide caps: one LP per district over all years, as the single year
    free = resolve_pathway(scenario, YEARS)
    free.city["co2_cap_t_per_a"] = float("nan")
    started = time.perf_counter()
    uncapped = solve_pathway(scenario, free, typical_days=typical_days)
    free_s = time.perf_counter() - started
    print(f"four-year pathway without caps (per-district LPs): {free_s:.2f} s ({uncapped.status}); "
          f"uncapped_over_single={free_s / single_s:.2f}")


def bench_designation(scenario, typical_days, workers):
    started = time.perf_counter()
    result = designate(scenario, typical_days=typical_days, workers=workers)
    elapsed = time.perf_counter() - started
    print(f"designation of {len(result.table)} districts with {len(result.cost_cases)} cost cases and the "
          f"alternatives: {elapsed:.2f} s on {workers or os.cpu_count()} worker(s) ({result.timings_s})")
    print(f"designation_s={elapsed:.2f}")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("pathway", "designation", "both"), default="both")
    parser.add_argument("--typical-days", type=int, default=None)
    parser.add_argument("--workers", type=int, default=None)
    args = parser.parse_args(argv)
    scenario = load_scenario("demo")
    if args.part in ("pathway", "both"):
        bench_pathway(scenario, args.typical_days)
    if args.part in ("designation", "both"):
        bench_designation(scenario, args.typical_days, args.workers)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
