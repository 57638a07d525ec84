"""Which solver a linear program goes to: HiGHS directly (the default and the fast path) or any solver pulp drives.

Names a caller may give (``--solver`` on the command line, the dashboard's solver setting):

``highs``
    HiGHS through highspy, the whole sparse matrix handed over in one call (:meth:`LinearProgram.solve`).
``cbc``
    COIN-OR CBC through pulp (pulp bundles it, so it is always there).
``pulp:NAME``, or a pulp solver name on its own (``GLPK_CMD``, ``GUROBI_CMD``, ...)
    Any solver that ``pulp.listSolvers(onlyAvailable=True)`` reports on this machine; ``pulp:HiGHS`` is HiGHS
    through pulp's own interface (a cross-check of the direct path).

The pulp path builds one pulp variable per column (:meth:`LinearProgram.to_pulp`), which takes far longer than the
solve for a full-year city: it is for cross-checks, for solvers the user holds a licence for, and for small runs.
A pulp solve cannot be interrupted half way; ``cancel`` is checked before it starts.

HiGHS's LP algorithm is left at its default (``solver=choose``: dual simplex after presolve) at every size, as
measured by ``bench/algorithms.py`` on the synthetic city's full-year district LPs (HiGHS 1.16, two shared cores
at a load of 5 to 12, so within-case comparisons only). The dual simplex was the fastest or level with the
fastest in every case: without a heat store 0.7 s at 35 000 columns (interior point HiPO 1.0-1.9 s, IPX 11 s,
PDLP 8 s) and 6.9 s at 70 000 (HiPO 8-12 s, IPX 29 s, PDLP 23 s); with a store 20 s at 61 000 columns (HiPO
19-23 s, IPX 67 s, PDLP over 90 s). The largest store LP of the sample (131 000 columns, seven units) reached
the 90 s limit with every algorithm, and HiPO without crossover still had no optimum after 420 s; HiGHS 1.15.1
and 1.16.0 took the same time on the store LPs, and neither primal simplex nor dropping the tiny cost on store
charging changed it. What grows with the city is the share of districts with a store (20 % of 10 synthetic
districts, 30 % of 50, 37 % of 200) and the long tail of hard store LPs among them, not the time of a district
LP of a given size: the seconds per district follow the mix, linearly in the number of districts. HiGHS's
presolve already removes what carries nothing (35 043 x 35 040 -> 26 282 x 26 280 for a three-unit district
without a store; no column is fixed at zero). What it cannot undo since hot water has its own temperature is a
well's flow row holding a heat pump's output and its hot water: the direct path hands HiGHS the LP trimmed by
:func:`engine.model.lp.lean_program`, that row as the bounds of a column (docs/model.md section 9,
``bench/lean_lp.py``). The pulp path gets the LP as built.
"""

from __future__ import annotations

import time

import numpy as np
import pulp

from engine.model.lp import LinearProgram, LpSolution

DIRECT = "highs"
"""The default: HiGHS through highspy."""

ALIASES = {"cbc": "PULP_CBC_CMD", "glpk": "GLPK_CMD"}
"""Short names for pulp solvers."""

PULP_PREFIX = "pulp:"


class SolverChoiceError(ValueError):
    """A solver name that is unknown or not available on this machine (the message names the available ones)."""


def pulp_available() -> list[str]:
    """pulp's names of the solvers it can run on this machine, in pulp's order."""
    return list(pulp.listSolvers(onlyAvailable=True))


def solver_choices() -> dict[str, str]:
    """Every solver name that works here -> a label for people, the default first."""
    choices = {DIRECT: "HiGHS direct, the default"}
    short = {v: k for k, v in ALIASES.items()}
    for name in pulp_available():
        key = short.get(name, PULP_PREFIX + name)
        choices[key] = f"{'CBC' if name == ALIASES['cbc'] else name} via pulp"
    return choices


def resolve_solver(name: str | None) -> str:
    """The canonical form of a solver name: ``"highs"`` or ``"pulp:<pulp name>"``.

    Raises
    ------
    SolverChoiceError
        If pulp knows no solver of that name or it is not available here; the message lists those that are.
    """
    text = DIRECT if name is None else str(name).strip()
    if text.lower() == DIRECT:
        return DIRECT
    pulp_name = text[len(PULP_PREFIX):] if text.lower().startswith(PULP_PREFIX) else ALIASES.get(text.lower(), text)
    known = {n.lower(): n for n in pulp.listSolvers()}
    available = pulp_available()
    listing = "; ".join(f"{key} = {label}" for key, label in solver_choices().items())
    if pulp_name.lower() not in known:
        raise SolverChoiceError(f"Unknown solver '{text}'. Solvers available here: {listing}.")
    pulp_name = known[pulp_name.lower()]
    if pulp_name not in available:
        raise SolverChoiceError(f"The solver '{text}' ({pulp_name}) is not available on this machine (pulp cannot "
                                f"find it or its licence). Solvers available here: {listing}.")
    return PULP_PREFIX + pulp_name


def solve_lp(lp: LinearProgram, solver: str = DIRECT, time_limit_s: float | None = None, cancel=None,
             fixed_start=None) -> LpSolution:
    """Solve ``lp`` with the named solver (see the module's docstring for the names). ``fixed_start``
    ``(columns, values)``: HiGHS starts from the optimum with those columns fixed there
    (:meth:`engine.model.lp.HighsSession.solve_from_fixed`); other solvers ignore it."""
    if resolve_solver(solver) == DIRECT:
        return lp.solve(time_limit_s=time_limit_s, cancel=cancel, fixed_start=fixed_start)
    return solve_with_pulp(lp, solver, time_limit_s, cancel)


def solve_with_pulp(lp: LinearProgram, solver: str, time_limit_s: float | None = None, cancel=None) -> LpSolution:
    """Solve ``lp`` with a pulp solver; the same LpSolution as HiGHS.

    The primal values and the row duals are read back into arrays in the program's column and row order (a
    ranged row, written to pulp as two inequalities, gets the sum of their duals), so the result tables are
    built exactly as after a direct solve. pulp's statuses map to ``optimal``, ``infeasible``, ``unbounded`` and,
    when a time limit was set and no optimum was proven, ``time_limit``; anything else is ``error``.
    """
    name = resolve_solver(solver)
    if name == DIRECT:
        raise ValueError("solve_with_pulp is for pulp solvers; 'highs' solves directly")
    if cancel is not None and cancel():
        return LpSolution("interrupted", "The solve was cancelled.")
    pulp_name = name[len(PULP_PREFIX):]
    options = {"msg": False}
    if time_limit_s:
        options["timeLimit"] = float(time_limit_s)
    engine = pulp.getSolver(pulp_name, **options)
    started = time.perf_counter()  # the solve time includes building the pulp problem: it is this path's cost
    prob, variables, row_names = lp.to_pulp(with_row_names=True)
    try:
        prob.solve(engine)
    except pulp.PulpSolverError as error:
        return LpSolution("error", f"{pulp_name}: {error}", solve_s=time.perf_counter() - started)
    elapsed = time.perf_counter() - started
    status = pulp.LpStatus.get(prob.status, str(prob.status))
    if prob.status == pulp.LpStatusOptimal and prob.sol_status in (pulp.LpSolutionOptimal, None):
        x = np.array([v.varValue if v.varValue is not None else 0.0 for v in variables], float)
        dual = np.zeros(lp.n_rows)
        constraints = prob.constraints
        for i, names in enumerate(row_names):
            for row_name in names:
                pi = constraints[row_name].pi
                dual[i] += 0.0 if pi is None else float(pi)
        objective = float(lp.cost @ x)
        return LpSolution("optimal", "Optimal solution found.", objective=objective, x=x, row_dual=dual,
                          solve_s=elapsed)
    if prob.status == pulp.LpStatusInfeasible:
        mapped = "infeasible"
    elif prob.status == pulp.LpStatusUnbounded:
        mapped = "unbounded"
    elif time_limit_s and prob.status in (pulp.LpStatusNotSolved, pulp.LpStatusOptimal):
        mapped = "time_limit"  # stopped with a feasible point or none, but no proven optimum
    else:
        mapped = "error"
    return LpSolution(mapped, f"{pulp_name}: {status}", solve_s=elapsed)
