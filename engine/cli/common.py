"""What every command shares: exit codes, progress on stderr, reading the scenario, checking common flags."""

from __future__ import annotations

import sys

from engine.model.solvers import DIRECT, SolverChoiceError, resolve_solver
from engine.scenario.problems import InputError
from engine.scenario import load_scenario, resolve_scenario_path

EXIT_OK, EXIT_INPUT, EXIT_SOLVER = 0, 2, 3
"""0 solved (or valid), 2 input errors (printed, no traceback), 3 the solver failed."""


def fail(message: str) -> int:
    """Print ``message`` on stderr and return the input-error exit code."""
    print(message, file=sys.stderr)
    return EXIT_INPUT


def stderr_progress(quiet: bool):
    """A progress callback printing ``[ 42.0 %] text`` lines on stderr (None when ``quiet``)."""
    if quiet:
        return None

    def report(share: float, text: str) -> None:
        print(f"[{share * 100:5.1f} %] {text}", file=sys.stderr, flush=True)

    return report


def print_problems(error: InputError) -> None:
    print(f"The scenario has {len(error.problems)} problem(s):", file=sys.stderr)
    for problem in error.problems:
        print(f"  {problem}", file=sys.stderr)


def load_for_command(path_arg: str):
    """The scenario of a command-line argument, or None after printing its problems on stderr."""
    try:
        return load_scenario(resolve_scenario_path(path_arg))
    except InputError as error:
        print_problems(error)
        return None


def add_resolution_arguments(p) -> None:
    """``--typical-days N`` or ``--full-year``."""
    group = p.add_mutually_exclusive_group()
    group.add_argument("--typical-days", type=int, default=None)
    group.add_argument("--full-year", action="store_true")


def typical_days_of(args) -> tuple[int | None, str | None]:
    """The time resolution the flags ask for (None keeps the scenario's; 0 is the full year), or an error text."""
    typical_days = 0 if getattr(args, "full_year", False) else args.typical_days
    if typical_days is not None and typical_days < 0:
        return None, "--typical-days must be >= 0 (0 means the full year)"
    return typical_days, None


def add_solver_argument(p) -> None:
    p.add_argument("--solver", default=DIRECT, metavar="NAME",
                   help="'highs' (HiGHS directly, the default), 'cbc' (CBC via pulp) or any solver pulp finds here, "
                        "as 'pulp:NAME'")


def solver_of(args) -> tuple[str | None, str | None]:
    """The canonical solver name of ``--solver``, or an error sentence naming the solvers available here."""
    try:
        return resolve_solver(args.solver), None
    except SolverChoiceError as error:
        return None, str(error)


def cost_case_error(scenario, name: str | None) -> str | None:
    """An error sentence when ``name`` is given and is not a cost case of ``scenario``."""
    if name is None or name in scenario.cost_cases:
        return None
    return f"Unknown cost case '{name}'. Known cost cases: {', '.join(sorted(scenario.cost_cases))}"

