"""Command line: ``python -m engine validate|solve|export-lp|tradeoff|sweep|fidelity|pathway|designate|init ...``.

Exit codes: 0 solved (or valid), 2 input errors (printed, no traceback), 3 the solver failed. Every command that
solves takes ``--solver NAME`` (:mod:`engine.model.solvers`): ``highs``, HiGHS directly, by default.
"""

from __future__ import annotations

import argparse
import sys

from engine.cli import solve, studies
from engine.cli.common import EXIT_INPUT, EXIT_OK, EXIT_SOLVER
from engine.cli.plan import add_designate_parser, add_pathway_parser, cmd_designate, cmd_pathway
from engine.cli import init as init_cli

COMMANDS = {
    "validate": solve.cmd_validate,
    "solve": solve.cmd_solve,
    "export-lp": solve.cmd_export_lp,
    "tradeoff": studies.cmd_tradeoff,
    "sweep": studies.cmd_sweep,
    "fidelity": studies.cmd_fidelity,
    "pathway": cmd_pathway,
    "designate": cmd_designate,
    "init": init_cli.cmd_init,
}

__all__ = ["EXIT_INPUT", "EXIT_OK", "EXIT_SOLVER", "main", "parser"]


def parser() -> argparse.ArgumentParser:
    root = argparse.ArgumentParser(prog="python -m engine", description="heatmosaic: heat-plan scenarios")
    sub = root.add_subparsers(dest="command", required=True)
    solve.add_parsers(sub)
    studies.add_parsers(sub)
    add_pathway_parser(sub)
    add_designate_parser(sub)
    init_cli.add_init_parser(sub)
    return root


def main(argv=None) -> int:
    """Run one command; returns its exit code (argparse itself exits with 2 on a malformed command line)."""
    try:
        args = parser().parse_args(argv)
    except SystemExit as stop:  # argparse printed its sentence (or the help); hand back its exit code
        return stop.code if isinstance(stop.code, int) else EXIT_INPUT
    try:
        return COMMANDS[args.command](args)
    except KeyboardInterrupt:
        print("Cancelled.", file=sys.stderr)
        return EXIT_SOLVER
    except Exception as error:  # the last guard: a plain message, never a traceback at the user
        print(f"Unexpected error: {type(error).__name__}: {error}", file=sys.stderr)
        return EXIT_SOLVER
