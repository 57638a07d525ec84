"""What every command shares: exit codes, progress on stderr, reading the scenario, checking common flags."""

from __future__ import annotations

import argparse
import math
import sys

from pathlib import Path

from engine.model.solvers import DIRECT, SolverChoiceError, resolve_solver
from engine.scenario.problems import InputError
from engine.scenario import load_scenario, resolve_scenario_path
from engine.outputs.outfolder import output_folder_problem

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


MAX_TYPICAL_DAYS = 366
"""Most typical days a run may use (a year has at most 366 days; settings.toml has the same bound)."""


def number(kind=float, low=None, high=None, low_open=False, what=""):
    """An argparse ``type`` for a finite number within [low, high] (``low_open``: above ``low``).

    A value that is not a number, NaN, infinite or out of range ends the command before any work with exit code 2
    and a sentence naming the flag and the allowed range (argparse adds "argument --flag:").
    """

    def parse(text: str):
        try:
            value = kind(text)
        except (TypeError, ValueError, OverflowError):
            noun = "a whole number" if kind is int else "a number"
            raise argparse.ArgumentTypeError(f"{text!r} is not {noun}{what}") from None
        if kind is float and not math.isfinite(value):
            raise argparse.ArgumentTypeError(f"{text!r} is not a finite number{what}")
        if low is not None and (value < low or (low_open and value == low)):
            bound = f"above {low}" if low_open else f"at least {low}"
            raise argparse.ArgumentTypeError(f"{text} is too small: it must be {bound}{what}")
        if high is not None and value > high:
            raise argparse.ArgumentTypeError(f"{text} is too large: it must be at most {high}{what}")
        return value

    parse.__name__ = "whole number" if kind is int else "number"
    return parse


TYPICAL_DAYS = number(int, 0, MAX_TYPICAL_DAYS, what=" (typical days; 0 means the full year)")


def add_resolution_arguments(p) -> None:
    """``--typical-days N`` (0 to 366) or ``--full-year``."""
    group = p.add_mutually_exclusive_group()
    group.add_argument("--typical-days", type=TYPICAL_DAYS, default=None,
                       help=f"0 (the full year) to {MAX_TYPICAL_DAYS}")
    group.add_argument("--full-year", action="store_true")


def typical_days_of(args) -> tuple[int | None, str | None]:
    """The time resolution the flags ask for (None keeps the scenario's; 0 is the full year), or an error text."""
    typical_days = 0 if getattr(args, "full_year", False) else args.typical_days
    if typical_days is not None and not 0 <= typical_days <= MAX_TYPICAL_DAYS:
        return None, f"--typical-days must be between 0 (the full year) and {MAX_TYPICAL_DAYS}"
    return typical_days, None


def out_folder_error(path_text: str) -> str | None:
    """Why ``--out`` cannot be an output folder (it names a file, or its parent is not writable), or None."""
    return output_folder_problem(path_text)


def out_file_error(path_text: str, suffixes: tuple[str, ...]) -> str | None:
    """Why ``--out FILE`` cannot be written (wrong suffix, an existing folder, a parent that is a file), or None."""
    path = Path(path_text)
    if suffixes and path.suffix.lower() not in suffixes:
        return f"--out must end in {' or '.join(suffixes)}, got '{path_text}'"
    if path.is_dir():
        return f"--out '{path_text}' names an existing folder, not a file"
    return output_folder_problem(path.parent) if str(path.parent) not in ("", ".") else None


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

