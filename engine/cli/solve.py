"""``validate``, ``solve`` and ``export-lp``: check a scenario, solve it, or write its linear program to a file."""

from __future__ import annotations

import re
import sys
from pathlib import Path

from engine.cli.common import (
    EXIT_INPUT, EXIT_OK, EXIT_SOLVER, TYPICAL_DAYS, add_resolution_arguments, add_solver_argument, cost_case_error,
    fail, load_for_command, number, out_file_error, out_folder_error, solver_of, stderr_progress, typical_days_of,
)
from engine.model.solve import build_programs, run_settings, solve_scenario
from engine.scenario import validate_command
from engine.studies.interference import solve_with_interference

LP_SUFFIXES = (".lp", ".mps")

MAX_HORIZON_YEARS = 100.0
"""Longest look-ahead of the plume screening [a] (a permit term is far shorter; common practice)."""


def add_parsers(sub) -> None:
    p = sub.add_parser("validate", help="check a scenario folder and list every problem")
    p.add_argument("scenario", help="scenario folder, or 'demo'")

    p = sub.add_parser("solve", help="solve a scenario and write summary.json and CSV tables")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    p.add_argument("--cost-case", default=None)
    p.add_argument("--objective", choices=("cost", "co2"), default=None)
    p.add_argument("--co2-cap-t", type=number(float, 0.0, what=" (t/a; 0 means no cap)"), default=None,
                   help="city-wide CO2 cap [t/a], a finite number >= 0 (0 means no cap)")
    p.add_argument("--co2-within-cost-pct", type=number(float, 0.0, what=" (%)"), default=None, metavar="X",
                   help="lowest CO2 at a cost at most X %% above the least cost (implies --objective co2)")
    add_resolution_arguments(p)
    p.add_argument("--interference", action="store_true", help="re-solve until well source temperatures settle")
    p.add_argument("--horizon-years", type=number(float, 0.0, MAX_HORIZON_YEARS, low_open=True, what=" (years)"),
                   default=1.0,
                   help="operating time the plume screening looks ahead [a] (with --interference)")
    p.add_argument("--out", default="out")
    p.add_argument("--time-limit-s", type=number(float, 0.0, low_open=True, what=" (seconds)"), default=None,
                   help="solver time limit [s], above 0")
    add_solver_argument(p)
    p.add_argument("--quiet", action="store_true")

    p = sub.add_parser("export-lp", help="write the scenario's linear program(s) as an LP or MPS file, unsolved")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    p.add_argument("--out", required=True, metavar="FILE.lp|FILE.mps",
                   help="the file; a run decomposed by district writes one file per district, FILE_<district>.lp")
    p.add_argument("--cost-case", default=None)
    p.add_argument("--typical-days", type=TYPICAL_DAYS, default=None, help="time resolution (0 = the full year)")
    p.add_argument("--quiet", action="store_true")


def cmd_validate(args) -> int:
    return validate_command(args.scenario)


def cmd_solve(args) -> int:
    """``python -m engine solve DIR``: exit 0 solved, 2 input errors, 3 the solver failed.

    Every flag is checked before the scenario is read (argparse checks the numbers: finite, in range).
    """
    typical_days, problem = typical_days_of(args)
    solver, solver_problem = solver_of(args)
    problem = problem or solver_problem or out_folder_error(args.out)
    if problem:
        return fail(problem)
    scenario = load_for_command(args.scenario)
    if scenario is None:
        return EXIT_INPUT
    problem = cost_case_error(scenario, args.cost_case)
    within = args.co2_within_cost_pct
    if within is not None and args.objective == "cost":
        problem = problem or "--co2-within-cost-pct goes with the CO2 objective, not --objective cost"
    if within is not None and args.interference:
        problem = problem or "--co2-within-cost-pct cannot be combined with --interference yet"
    if problem:
        return fail(problem)
    kwargs = dict(
        cost_case=args.cost_case,
        objective="co2" if within is not None else args.objective,
        co2_cap_t_per_a=args.co2_cap_t,
        typical_days=typical_days,
        progress=stderr_progress(args.quiet),
        time_limit_s=args.time_limit_s,
        solver=solver,
    )
    if args.interference:
        result = solve_with_interference(scenario, horizon_years=args.horizon_years, **kwargs)
    else:
        result = solve_scenario(scenario, co2_within_cost_pct=within, **kwargs)
    try:
        out = result.write(Path(args.out))
    except OSError as error:
        print(f"The results could not be written to '{args.out}': {error}", file=sys.stderr)
        return EXIT_SOLVER
    if not result.solved:
        print(f"Solver failed: {result.message}", file=sys.stderr)
        return EXIT_SOLVER
    if not args.quiet:
        print(
            f"{result.status}: total cost {result.total_cost_eur_per_a:,.0f} EUR/a, "
            f"CO2 {result.co2_t_per_a:,.0f} t/a, unserved {result.unserved_heat_mwh_per_a:,.1f} MWh/a; "
            f"written to {out}"
        )
    return EXIT_OK


def part_path(out: Path, label: str) -> Path:
    """The file of one district's LP: ``FILE_<district>.lp`` (characters other than letters, digits, - and _
    become _)."""
    return out.with_name(f"{out.stem}_{re.sub(r'[^A-Za-z0-9_-]', '_', label)}{out.suffix}")


def cmd_export_lp(args) -> int:
    """``python -m engine export-lp DIR --out FILE.lp|FILE.mps``: exit 0 written, 2 input errors."""
    out = Path(args.out)
    problem = out_file_error(args.out, LP_SUFFIXES)
    if problem:
        return fail(problem)
    scenario = load_for_command(args.scenario)
    if scenario is None:
        return EXIT_INPUT
    problem = cost_case_error(scenario, args.cost_case)
    if problem:
        return fail(problem)
    settings = run_settings(scenario, typical_days=args.typical_days)
    programs = build_programs(scenario, args.cost_case, settings)
    out.parent.mkdir(parents=True, exist_ok=True)
    written = []
    for label, model in programs:
        path = out if len(programs) == 1 and label == "city" else part_path(out, label)
        model.lp.write(path)
        written.append((path, model.lp))
    if not args.quiet:
        if len(programs) == 1 and programs[0][0] == "city":
            kind = "one city-wide LP (a city-wide constraint couples the districts, or there is one district)"
        else:
            kind = f"{len(programs)} district LPs (the districts do not interact, so each is its own LP)"
        stage = (" The scenario's objective is CO2: the file holds the first stage (least CO2); the solve then "
                 "minimises cost at that CO2." if settings.objective == "co2" else "")
        print(f"Wrote {kind}:{stage}")
        for path, lp in written:
            print(f"  {path}: {lp.n_cols} variables, {lp.n_rows} constraints, {lp.n_nonzeros} nonzeros")
    return EXIT_OK
