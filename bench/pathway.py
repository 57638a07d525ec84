"""Benchmark (not a test): the demo's four-year pathway against its single-year solve, and its designation.

Usage::

    python bench/pathway.py                  # both parts, the scenario's typical days (12)
    python bench/pathway.py --part pathway   # pathway 2030, 2035, 2040, 2045 over the single-year solve
    python bench/pathway.py --part designation   # five cost cases + near-optimal alternatives

Prints wall times in seconds; nothing is asserted. The machine and its load decide the figures (the load
average is printed beside each part).

The single-year reference is fair: each milestone year's own scenario (its demand, prices and CO2 cap) solved
alone with :func:`solve_scenario` at the same typical days, a capped year as one city-wide LP as the pathway is;
the ratio divides the pathway by the mean of those single years. ``--repeat N`` (default 3) runs N rounds of
(single years, pathway), each round's ratio under about the same load, and prints their median: on a shared
machine the load moves single runs by a third or more. ``--cold``
also times the stacked LPs solved from HiGHS's own start (no warm start; slow: a minute or more).
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:  # run as a script from anywhere, like bench/run.py
    sys.path.insert(0, str(ROOT))

from engine.model.solve import run_settings, solve_scenario  # noqa: E402
from engine.scenario.folder import load_scenario  # noqa: E402
from engine.studies.designation import designate  # noqa: E402
from engine.studies.pathway import resolve_pathway, solve_pathway, year_scenario  # noqa: E402

YEARS = [2030, 2035, 2040, 2045]


def load() -> str:
    return "load average " + ", ".join(f"{x:.2f}" for x in os.getloadavg())


def single_years(scenario, pathway, typical_days, show=False) -> float:
    """Each milestone year's scenario solved alone; returns the mean wall time [s] (printed with ``show``)."""
    times = []
    for year in pathway.years:
        s, _ = year_scenario(scenario, pathway, year)
        s.settings = run_settings(s, typical_days=typical_days)
        started = time.perf_counter()
        result = solve_scenario(s, settings=s.settings)
        times.append(time.perf_counter() - started)
        if show:
            print(f"  single year {year}: {times[-1]:.2f} s ({result.status}, "
                  f"{result.model_size.get('linear_programs')} LP(s), CO2 cap {s.settings.co2_cap_t_per_a})")
    return sum(times) / len(times)


def timed_pathway(scenario, pathway, typical_days, warm):
    started = time.perf_counter()
    result = solve_pathway(scenario, pathway, typical_days=typical_days, warm_start=warm)
    return result, time.perf_counter() - started


def bench_pathway(scenario, typical_days, cold=False, repeat=3):
    """Rounds of (the single years, then the pathway), so that both see about the same load; the ratio of each
    round, and their median."""
    for label, capped in (("with the demo's CO2 caps", True), ("without CO2 caps", False)):
        pathway = resolve_pathway(scenario, YEARS)
        if not capped:
            pathway.city["co2_cap_t_per_a"] = float("nan")
        key = "capped" if capped else "uncapped"
        print(f"{label} ({load()}):")
        ratios = []
        for round_ in range(repeat):
            single_s = single_years(scenario, pathway, typical_days, show=round_ == 0)
            result, elapsed = timed_pathway(scenario, pathway, typical_days, True)
            ratios.append(elapsed / single_s)
            print(f"  round {round_ + 1}: single year (mean) {single_s:.2f} s, four-year pathway {elapsed:.2f} s "
                  f"({result.status}; caps in {sorted(result.co2_caps)}; present value "
                  f"{result.present_value_eur:,.2f} EUR); ratio {ratios[-1]:.2f} ({load()})")
        print(f"  {key}_pathway_over_single={float(np.median(ratios)):.2f} (median of {repeat} rounds; "
              f"{', '.join(f'{r:.2f}' for r in ratios)})")
        if cold:
            plain, plain_s = timed_pathway(scenario, pathway, typical_days, False)
            print(f"  without warm start: {plain_s:.2f} s, present value {plain.present_value_eur:,.2f} EUR "
                  f"(difference {abs(plain.present_value_eur - result.present_value_eur):.2e}); "
                  f"{key}_cold_over_single={plain_s / single_s:.2f} ({load()})")


def bench_designation(scenario, typical_days, workers):
    started = time.perf_counter()
    result = designate(scenario, typical_days=typical_days, workers=workers)
    elapsed = time.perf_counter() - started
    print(f"designation of {len(result.table)} districts with {len(result.cost_cases)} cost cases and the "
          f"alternatives: {elapsed:.2f} s on {workers or os.cpu_count()} worker(s) ({result.timings_s})")
    print(f"designation_s={elapsed:.2f} ({load()})")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("pathway", "designation", "both"), default="both")
    parser.add_argument("--typical-days", type=int, default=None)
    parser.add_argument("--workers", type=int, default=None)
    parser.add_argument("--cold", action="store_true", help="also time the pathway without the warm start")
    parser.add_argument("--repeat", type=int, default=3, help="runs of each timing; the fastest is reported")
    args = parser.parse_args(argv)
    scenario = load_scenario("demo")
    if args.part in ("pathway", "both"):
        bench_pathway(scenario, args.typical_days, args.cold, max(1, args.repeat))
    if args.part in ("designation", "both"):
        bench_designation(scenario, args.typical_days, args.workers)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
