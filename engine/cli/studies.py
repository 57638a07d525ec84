"""``tradeoff``, ``sweep`` and ``fidelity``: the studies on the command line, each writing its table as CSV."""

from __future__ import annotations

import sys
from pathlib import Path

import pandas as pd

from engine.cli.common import (
    EXIT_INPUT, EXIT_OK, EXIT_SOLVER, MAX_TYPICAL_DAYS, add_resolution_arguments, add_solver_argument,
    cost_case_error, fail, load_for_command, number, out_file_error, out_folder_error, solver_of, stderr_progress,
    typical_days_of,
)
from engine.outputs.csvfile import csv_bytes
from engine.outputs.outfolder import publish_files
from engine.studies.fidelity import DEFAULT_DAY_COUNTS, cached_fidelity, recommend_typical_days, typical_day_fidelity
from engine.studies.sweep import (
    PARAMETERS, default_ranges, random_samples, run_sweep, tasks_from_cost_cases, tasks_from_samples, tornado_table,
    tornado_tasks,
)
from engine.studies.tradeoff import tradeoff_curve_runs

MAX_POINTS = 101
"""Most points of a trade-off curve (each point is one solve)."""
MAX_SAMPLES = 10_000
"""Most Latin hypercube samples of one sweep (each sample is one solve)."""
MAX_WORKERS = 256
"""Most local worker processes of a sweep."""
MAX_SEED = 2**32 - 1
"""Largest random seed (numpy's seed range)."""

STUDY_FILES = ("tradeoff.csv", "sweep.csv", "main_supply.csv", "tornado.csv")
"""The tables the studies write into ``--out``; one a study did not write is removed there."""


def add_parsers(sub) -> None:
    p = sub.add_parser("tradeoff", help="cost-CO2 trade-off curve (epsilon-constraint); writes tradeoff.csv")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    p.add_argument("--points", type=number(int, 2, MAX_POINTS, what=" (points of the curve)"), default=7,
                   help=f"number of points, 2 to {MAX_POINTS} (default 7)")
    p.add_argument("--cost-case", default=None)
    add_resolution_arguments(p)
    p.add_argument("--out", default="out")
    add_solver_argument(p)
    p.add_argument("--quiet", action="store_true")

    p = sub.add_parser("sweep", help="solve many cost cases in parallel; writes sweep.csv")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    what = p.add_mutually_exclusive_group(required=True)
    what.add_argument("--cost-cases", metavar="all|NAME,NAME", help="the scenario's cost cases ('all' or a list)")
    what.add_argument("--sample", type=number(int, 1, MAX_SAMPLES, what=" (samples)"), metavar="N", help="N Latin hypercube samples of the price multipliers")
    what.add_argument("--tornado", action="store_true", help="one price at a time, low and high; also tornado.csv")
    p.add_argument("--parameters", default=None, help=f"comma-separated, of: {', '.join(PARAMETERS)}")
    p.add_argument("--seed", type=number(int, 0, MAX_SEED, what=" (random seed)"), default=0)
    p.add_argument("--base-case", default=None, help="cost case the multipliers apply to (default reference)")
    p.add_argument("--scheduler", default=None, metavar="ADDR", help="Dask scheduler address, e.g. tcp://host:8786")
    p.add_argument("--workers", type=number(int, 1, MAX_WORKERS, what=" (worker processes)"), default=None, help="local worker processes (default: the cores)")
    add_resolution_arguments(p)
    p.add_argument("--out", default="out")
    add_solver_argument(p)
    p.add_argument("--quiet", action="store_true")

    p = sub.add_parser("fidelity", help="typical days against the full year; prints the table, --out writes CSV")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    p.add_argument("--days", default=",".join(map(str, DEFAULT_DAY_COUNTS)),
                   help="numbers of typical days to test, comma-separated")
    p.add_argument("--cost-case", default=None)
    p.add_argument("--out", default=None, metavar="FILE.csv")
    p.add_argument("--no-cache", action="store_true", help="measure again without reading or writing the cache")
    add_solver_argument(p)


def cmd_tradeoff(args) -> int:
    """``python -m engine tradeoff DIR --points N --out OUT``: exit 0 solved, 2 input error, 3 solver failure."""
    if not 2 <= args.points <= MAX_POINTS:
        return fail(f"--points must be between 2 and {MAX_POINTS}")
    typical_days, problem = typical_days_of(args)
    solver, solver_problem = solver_of(args)
    problem = problem or solver_problem or out_folder_error(args.out)
    if problem:
        return fail(problem)
    scenario = load_for_command(args.scenario)
    if scenario is None:
        return EXIT_INPUT
    problem = cost_case_error(scenario, args.cost_case)
    if problem:
        return fail(problem)
    table, _ = tradeoff_curve_runs(scenario, args.cost_case, args.points, typical_days,
                                   stderr_progress(args.quiet), solver=solver)
    out = publish_files(args.out, {"tradeoff.csv": csv_bytes(table)}, owned=STUDY_FILES)
    failed = table[table["status"] != "optimal"]
    if len(failed):
        print(f"{len(failed)} point(s) failed: {', '.join(failed['status'].astype(str))}", file=sys.stderr)
        return EXIT_SOLVER
    if not args.quiet:
        print(f"{len(table)} points from {table['total_cost_eur_per_a'].iloc[0]:,.0f} EUR/a at "
              f"{table['co2_t_per_a'].iloc[0]:,.0f} t/a to {table['total_cost_eur_per_a'].iloc[-1]:,.0f} EUR/a at "
              f"{table['co2_t_per_a'].iloc[-1]:,.0f} t/a; written to {out / 'tradeoff.csv'}")
    return EXIT_OK


def cmd_sweep(args) -> int:
    """``python -m engine sweep DIR (--cost-cases all | --sample N | --tornado) [--scheduler ADDR] --out OUT``.

    Exit codes: 0 every run solved, 2 input error, 3 some run failed (sweep.csv is written all the same).
    """
    typical_days, problem = typical_days_of(args)
    solver, solver_problem = solver_of(args)
    problem = problem or solver_problem or out_folder_error(args.out)
    if problem:
        return fail(problem)
    if args.sample is not None and not 1 <= args.sample <= MAX_SAMPLES:
        return fail(f"--sample must be between 1 and {MAX_SAMPLES}")
    if args.workers is not None and not 1 <= args.workers <= MAX_WORKERS:
        return fail(f"--workers must be between 1 and {MAX_WORKERS}")
    parameters = None
    if args.parameters:
        parameters = [p.strip() for p in args.parameters.split(",") if p.strip()]
        unknown = [p for p in parameters if p not in PARAMETERS]
        if unknown:
            return fail(f"Unknown parameter(s) {', '.join(unknown)}. Known: {', '.join(PARAMETERS)}")
    scenario = load_for_command(args.scenario)
    if scenario is None:
        return EXIT_INPUT
    problem = cost_case_error(scenario, args.base_case)
    if problem:
        return fail(problem)
    if args.cost_cases is not None:
        names = None if args.cost_cases.strip() == "all" else [n.strip() for n in args.cost_cases.split(",")]
        unknown = [n for n in (names or []) if n not in scenario.cost_cases]
        if unknown:
            return fail(f"Unknown cost case(s) {', '.join(unknown)}. Known cost cases: "
                        f"{', '.join(scenario.cost_cases)}")
        tasks = tasks_from_cost_cases(scenario, names)
    elif args.tornado:
        tasks = tornado_tasks(scenario, args.base_case, parameters)
    else:
        samples = random_samples(default_ranges(parameters), args.sample, seed=args.seed)
        tasks = tasks_from_samples(scenario, samples, args.base_case)
    try:
        outcome = run_sweep(scenario, tasks, typical_days=typical_days, workers=args.workers,
                            scheduler=args.scheduler, progress=stderr_progress(args.quiet), solver=solver)
    except OSError as error:  # e.g. the scheduler cannot be reached
        print(f"The sweep could not run: {error}", file=sys.stderr)
        return EXIT_SOLVER
    files = {
        "sweep.csv": csv_bytes(outcome.table.assign(sweep_id=outcome.sweep_id)),
        "main_supply.csv": csv_bytes(outcome.main_supply, index=True),
    }
    if args.tornado:
        files["tornado.csv"] = csv_bytes(tornado_table(outcome))
    out = publish_files(args.out, files, owned=STUDY_FILES)
    failed = outcome.table[outcome.table["status"] != "optimal"]
    if len(failed):
        print(f"{len(failed)} of {len(outcome.table)} run(s) failed: {', '.join(failed['name'])}", file=sys.stderr)
        return EXIT_SOLVER
    if not args.quiet:
        print(f"{len(outcome.table)} runs solved; written to {out / 'sweep.csv'}")
    return EXIT_OK


def cmd_fidelity(args) -> int:
    """``python -m engine fidelity DIR [--days 4,8,12,24] [--out FILE.csv]``: measure and print the table.

    Exit codes: 0 measured, 2 input error or a measurement that could not be made (its reason printed).
    """
    try:
        days = [int(d) for d in args.days.split(",") if d.strip()]
    except ValueError:
        return fail(f"--days must be whole numbers separated by commas, got '{args.days}'")
    if not days:
        return fail("--days must list at least one number of typical days")
    if len(days) > 50:
        return fail(f"--days lists {len(days)} numbers; at most 50 can be measured in one go")
    wrong = [d for d in days if not 1 <= d <= MAX_TYPICAL_DAYS]
    if wrong:
        return fail(f"--days must be between 1 and {MAX_TYPICAL_DAYS} typical days, got {wrong[0]}")
    solver, problem = solver_of(args)
    problem = problem or (out_file_error(args.out, (".csv",)) if args.out else None)
    if problem:
        return fail(problem)
    scenario = load_for_command(args.scenario)
    if scenario is None:
        return EXIT_INPUT
    try:
        if args.no_cache:
            table = typical_day_fidelity(scenario, args.cost_case, days, progress=stderr_progress(False),
                                         solver=solver)
        else:
            table = cached_fidelity(scenario, args.cost_case, day_counts=days, progress=stderr_progress(False),
                                    solver=solver)
    except (ValueError, RuntimeError) as error:
        return fail(str(error))
    with pd.option_context("display.width", 200, "display.max_columns", 12):
        print(table.iloc[:, :10].to_string(index=False, float_format=lambda v: f"{v:,.2f}"))
    print(f"recommended typical days (cost within 1 %, capacity within 10 %): {recommend_typical_days(table)}")
    if args.out:
        out = Path(args.out)
        out.parent.mkdir(parents=True, exist_ok=True)
        partial = out.with_name(f".{out.name}.partial")
        partial.write_bytes(csv_bytes(table))
        partial.replace(out)
    return EXIT_OK
