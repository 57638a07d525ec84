"""Command line: ``python -m engine validate|solve|tradeoff|sweep ...``.

Exit codes: 0 solved (or valid), 2 input errors (printed, no traceback), 3 the solver failed.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

EXIT_OK, EXIT_INPUT, EXIT_SOLVER = 0, 2, 3


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="python -m engine", description="heatmosaic: heat-plan scenarios")
    sub = parser.add_subparsers(dest="command", required=True)

    p = sub.add_parser("validate", help="check a scenario folder and list every problem")
    p.add_argument("scenario", help="scenario folder, or 'demo'")

    p = sub.add_parser("solve", help="solve a scenario and write summary.json and CSV tables")
    p.add_argument("scenario", help="scenario folder, or 'demo'")
    p.add_argument("--cost-case", default=None)
    p.add_argument("--objective", choices=("cost", "co2"), default=None)
    p.add_argument("--co2-cap-t", type=float, default=None, help="city-wide CO2 cap [t/a]")
    p.add_argument("--co2-within-cost-pct", type=float, default=None, metavar="X",
                   help="lowest CO2 at a cost at most X %% above the least cost (implies --objective co2)")
    group = p.add_mutually_exclusive_group()
    group.add_argument("--typical-days", type=int, default=None)
    group.add_argument("--full-year", action="store_true")
    p.add_argument("--interference", action="store_true", help="re-solve until well source temperatures settle")
    p.add_argument("--horizon-years", type=float, default=1.0,
                   help="operating time the plume screening looks ahead [a] (with --interference)")
    p.add_argument("--out", default="out")
    p.add_argument("--time-limit-s", type=float, default=None)
    p.add_argument("--quiet", action="store_true")

    from engine.studies.sweep import add_sweep_parser
    from engine.studies.tradeoff import add_tradeoff_parser

    add_tradeoff_parser(sub)
    add_sweep_parser(sub)
    return parser


def _progress(quiet: bool):
    if quiet:
        return None

    def report(share: float, text: str) -> None:
        print(f"[{share * 100:5.1f} %] {text}", file=sys.stderr, flush=True)

    return report


def _load(path_arg: str):
    from engine.scenario.reader import load_scenario, resolve_scenario_path
    from engine.scenario.problems import InputError

    try:
        return load_scenario(resolve_scenario_path(path_arg)), None
    except InputError as error:
        return None, error


def _print_problems(error) -> None:
    print(f"The scenario has {len(error.problems)} problem(s):", file=sys.stderr)
    for problem in error.problems:
        print(f"  {problem}", file=sys.stderr)


def cmd_solve(args) -> int:
    from engine.model.solve import solve_scenario

    scenario, error = _load(args.scenario)
    if error is not None:
        _print_problems(error)
        return EXIT_INPUT
    typical_days = 0 if args.full_year else args.typical_days
    if args.cost_case is not None and args.cost_case not in scenario.cost_cases:
        known = ", ".join(sorted(scenario.cost_cases))
        print(f"Unknown cost case '{args.cost_case}'. Known cost cases: {known}", file=sys.stderr)
        return EXIT_INPUT
    if args.co2_cap_t is not None and args.co2_cap_t < 0:
        print("--co2-cap-t must be >= 0 (0 means no cap)", file=sys.stderr)
        return EXIT_INPUT
    if typical_days is not None and typical_days < 0:
        print("--typical-days must be >= 0 (0 means the full year)", file=sys.stderr)
        return EXIT_INPUT
    if args.co2_within_cost_pct is not None and args.co2_within_cost_pct < 0:
        print("--co2-within-cost-pct must be >= 0", file=sys.stderr)
        return EXIT_INPUT
    if args.co2_within_cost_pct is not None and args.objective == "cost":
        print("--co2-within-cost-pct goes with the CO2 objective, not --objective cost", file=sys.stderr)
        return EXIT_INPUT
    objective = "co2" if args.co2_within_cost_pct is not None else args.objective
    kwargs = dict(
        cost_case=args.cost_case,
        objective=objective,
        co2_cap_t_per_a=args.co2_cap_t,
        typical_days=typical_days,
        progress=_progress(args.quiet),
        time_limit_s=args.time_limit_s,
    )
    if args.co2_within_cost_pct is not None:
        if args.interference:
            print("--co2-within-cost-pct cannot be combined with --interference yet", file=sys.stderr)
            return EXIT_INPUT
        kwargs["co2_within_cost_pct"] = args.co2_within_cost_pct
    if args.interference:
        from engine.studies.interference import solve_with_interference

        if args.horizon_years <= 0:
            print("--horizon-years must be > 0", file=sys.stderr)
            return EXIT_INPUT
        result = solve_with_interference(scenario, horizon_years=args.horizon_years, **kwargs)
    else:
        result = solve_scenario(scenario, **kwargs)
    out = result.write(Path(args.out))
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


def main(argv=None) -> int:
    args = _parser().parse_args(argv)
    try:
        if args.command == "validate":
            from engine.scenario.reader import validate_command

            return validate_command(args.scenario)
        if args.command == "solve":
            return cmd_solve(args)
        if args.command == "tradeoff":
            from engine.studies.tradeoff import cmd_tradeoff

            return cmd_tradeoff(args)
        if args.command == "sweep":
            from engine.studies.sweep import cmd_sweep

            return cmd_sweep(args)
    except KeyboardInterrupt:
        print("Cancelled.", file=sys.stderr)
        return EXIT_SOLVER
    except Exception as error:  # the last guard: a plain message, never a traceback at the user
        print(f"Unexpected error: {type(error).__name__}: {error}", file=sys.stderr)
        return EXIT_SOLVER
    return EXIT_INPUT


if __name__ == "__main__":
    sys.exit(main())
