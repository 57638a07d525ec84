"""``python -m engine pathway`` and ``python -m engine designate``: the heat plan's two commands.

Argument parsing and printing only; the work is :func:`engine.studies.pathway.solve_pathway` and
:func:`engine.studies.designation.designate`. Exit codes as everywhere: 0 done, 2 input errors, 3 solver failed.
"""

from __future__ import annotations

import sys
from pathlib import Path

from engine.cli.common import add_solver_argument, solver_of
from engine.scenario import load_scenario, resolve_scenario_path
from engine.scenario.problems import InputError
from engine.studies.designation import (
    DEFAULT_SLACK_PCT, DESIGNATION_COLUMNS, designate, thresholds_from_folder,
)
from engine.studies.pathway import resolve_pathway, solve_pathway, year_scenario


def add_pathway_parser(sub) -> None:
    p = sub.add_parser("pathway", help="solve the milestone years of a heat plan; writes pathway.csv and capacity.csv")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    p.add_argument("--years", default=None, help="milestone years, e.g. 2030,2035,2040 (default: [pathway] years)")
    p.add_argument("--myopic", action="store_true", help="year by year with capacity carried forward")
    p.add_argument("--cost-case", default=None)
    p.add_argument("--typical-days", type=int, default=None)
    p.add_argument("--out", default="out")
    p.add_argument("--time-limit-s", type=float, default=None)
    add_solver_argument(p)
    p.add_argument("--quiet", action="store_true")
    p.set_defaults(run=cmd_pathway)


def _parse_years(text: str):
    try:
        return [int(part) for part in text.split(",") if part.strip()], None
    except ValueError:
        return None, f"--years must be whole years separated by commas (e.g. 2030,2035,2040), got '{text}'"


def cmd_pathway(args) -> int:
    solver, solver_problem = solver_of(args)
    if solver_problem:
        print(solver_problem, file=sys.stderr)
        return 2
    years = None
    if args.years is not None:
        years, error = _parse_years(args.years)
        if error:
            print(error, file=sys.stderr)
            return 2
    if args.typical_days is not None and args.typical_days < 0:
        print("--typical-days must be >= 0 (0 means the full year)", file=sys.stderr)
        return 2
    try:
        scenario = load_scenario(resolve_scenario_path(args.scenario))
        if args.cost_case is not None and args.cost_case not in scenario.cost_cases:
            print(f"Unknown cost case '{args.cost_case}'. Known cost cases: {', '.join(sorted(scenario.cost_cases))}",
                  file=sys.stderr)
            return 2
        pathway = resolve_pathway(scenario, years)
    except InputError as error:
        print(f"The scenario has {len(error.problems)} problem(s):", file=sys.stderr)
        for problem in error.problems:
            print(f"  {problem}", file=sys.stderr)
        return 2
    progress = None if args.quiet else (lambda share, text: print(f"[{share * 100:5.1f} %] {text}", file=sys.stderr))
    result = solve_pathway(scenario, pathway, myopic=args.myopic, cost_case=args.cost_case,
                           typical_days=args.typical_days, progress=progress, time_limit_s=args.time_limit_s,
                           solver=solver)
    if not result.solved:
        print(f"Solver failed: {result.message}", file=sys.stderr)
        return 3
    out = result.write(Path(args.out))
    if not args.quiet:
        print(f"{result.mode} pathway {', '.join(map(str, result.years))}: present value "
              f"{result.present_value_eur:,.0f} EUR; written to {out}")
        for note in result.notes:
            print(f"  note: {note}")
    return 0


def add_designate_parser(sub) -> None:
    p = sub.add_parser("designate", help="supply area and graded suitability per district; writes designation.csv")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    p.add_argument("--cost-cases", default="all", help="'all' or names separated by commas")
    p.add_argument("--slack-pct", type=float, default=DEFAULT_SLACK_PCT, help="cost slack of the alternatives [%%]")
    p.add_argument("--year", type=int, default=None, help="a milestone year of the pathway (default: the scenario)")
    p.add_argument("--typical-days", type=int, default=None)
    p.add_argument("--workers", type=int, default=None)
    p.add_argument("--scheduler", default=None, metavar="ADDR", help="Dask scheduler address, e.g. tcp://host:8786")
    add_solver_argument(p)
    p.add_argument("--out", default="out")
    p.add_argument("--quiet", action="store_true")
    p.set_defaults(run=cmd_designate)


def cmd_designate(args) -> int:
    solver, solver_problem = solver_of(args)
    if solver_problem:
        print(solver_problem, file=sys.stderr)
        return 2
    if args.slack_pct < 0:
        print("--slack-pct must be >= 0", file=sys.stderr)
        return 2
    if args.typical_days is not None and args.typical_days < 0:
        print("--typical-days must be >= 0 (0 means the full year)", file=sys.stderr)
        return 2
    try:
        scenario = load_scenario(resolve_scenario_path(args.scenario))
        thresholds = thresholds_from_folder(scenario.source)
        if args.year is not None:
            pathway = resolve_pathway(scenario)
            if args.year not in pathway.years:
                print(f"--year {args.year} is not a milestone year of the pathway "
                      f"({', '.join(map(str, pathway.years))})", file=sys.stderr)
                return 2
            scenario, _ = year_scenario(scenario, pathway, args.year)
    except InputError as error:
        print(f"The scenario has {len(error.problems)} problem(s):", file=sys.stderr)
        for problem in error.problems:
            print(f"  {problem}", file=sys.stderr)
        return 2
    names = None if args.cost_cases.strip().lower() == "all" else [n.strip() for n in args.cost_cases.split(",")
                                                                     if n.strip()]
    unknown = [n for n in names or [] if n not in scenario.cost_cases]
    if unknown:
        print(f"Unknown cost case(s) {', '.join(unknown)}. Known cost cases: {', '.join(sorted(scenario.cost_cases))}",
              file=sys.stderr)
        return 2
    progress = None if args.quiet else (lambda share, text: print(f"[{share * 100:5.1f} %] {text}", file=sys.stderr))
    try:
        result = designate(scenario, names, args.slack_pct, args.typical_days, thresholds, workers=args.workers,
                           scheduler=args.scheduler, progress=progress, solver=solver)
    except RuntimeError as error:
        print(f"Solver failed: {error}", file=sys.stderr)
        return 3
    out = result.write(Path(args.out))
    if not args.quiet:
        print(result.table[list(DESIGNATION_COLUMNS)].to_string(index=False))
        print(f"written to {out}")
    return 0
