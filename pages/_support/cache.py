"""The session's caches: solved runs, saved runs read from the library, scenarios read from files.

A planner goes back and forth between cost cases; :func:`solve_with_cache` makes going back to a request already
solved instant (looked up by :func:`request_key`, then by the input hash). Every cache drops its oldest entries
beyond a size (:func:`remember`).
"""

from __future__ import annotations

import dataclasses
import hashlib
from collections.abc import Mapping, MutableMapping
from dataclasses import dataclass

import pandas as pd

from engine.model.results import RunResult
from engine.model.solvers import DIRECT, resolve_solver
from engine.model.solve import run_settings, solve_scenario
from engine.scenario.inputs import Scenario, input_hash
from engine.progress import Cancel, Progress
from engine.storage.store import ScenarioStore
from pages._support.edits import table_digest
from pages._support.inputs import files_digest, scenario_from_files

SOLVE_CACHE_SIZE = 12
"""Solved runs kept per session; the oldest goes first (a demo run holds a few MB of tables)."""


def remember(cache: MutableMapping, key: str, value, limit: int = SOLVE_CACHE_SIZE) -> None:
    """Put ``value`` under ``key``, dropping the oldest entries beyond ``limit``."""
    if key in cache:
        del cache[key]
    cache[key] = value
    while len(cache) > limit:
        del cache[next(iter(cache))]

@dataclass
class SolvedRun:
    """A run solved in this session, with the exact files it was solved from."""

    result: RunResult
    files: dict
    label: str
    input_hash: str
    saved_run_id: int | None = None
    """The library's run id once the planner saved this run."""

def request_key(
    base_digest: str,
    technology_table: pd.DataFrame | None,
    well_table: pd.DataFrame | None,
    cost_case: str,
    objective: str,
    co2_cap_t_per_a: float,
    typical_days: int,
) -> str:
    """A cheap key of everything a set-up page request holds (files, edits and run choices).

    Two requests with the same key have the same input hash; the key avoids re-reading the scenario on every
    page run only to find out that nothing changed.
    """
    parts = [
        base_digest, table_digest(technology_table), table_digest(well_table), str(cost_case), str(objective),
        f"{float(co2_cap_t_per_a or 0.0):.12g}", str(int(typical_days)),
    ]
    return hashlib.sha256("|".join(parts).encode()).hexdigest()

def solve_with_cache(
    cache: MutableMapping,
    key: str,
    scenario: Scenario,
    files: Mapping[str, bytes],
    label: str,
    cost_case: str,
    objective: str,
    co2_cap_t_per_a: float,
    typical_days: int,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    solver: str = DIRECT,
) -> tuple[SolvedRun, bool]:
    """Solve (or find in ``cache``) one request; returns the run and whether it came from the cache.

    ``solver`` as in :func:`engine.model.solve.solve_scenario`; a run found by its input hash is reused only when
    it was solved by the same solver (the point of choosing another solver is to see its answer).

    The cache is looked up by ``key`` first and then by the input hash, so that two requests that differ only in
    ways the model ignores share one solve. Districts are solved one after the other in this process
    (``workers=1``): in a dashboard server a process pool would fork a threaded process, and for a city of the
    demo's size it is no faster.
    """
    if key in cache:
        remember(cache, key, cache[key])
        return cache[key], True
    settings = run_settings(scenario, objective, co2_cap_t_per_a, typical_days)
    hash_ = input_hash(scenario, cost_case, settings)
    solver = resolve_solver(solver)
    for solved in list(cache.values()):
        if (solved.input_hash == hash_ and solved.result.solved
                and solved.result.model_size.get("solver", DIRECT) == solver):
            run = dataclasses.replace(solved, label=label)
            remember(cache, key, run)
            return run, True
    try:
        result = solve_scenario(
            scenario, cost_case=cost_case, settings=settings, progress=progress, cancel=cancel, workers=1,
            solver=solver,
        )
    except Exception as exc:  # a planner sees a message, never a traceback; a failed solve is not cached
        result = RunResult(
            status="error", message=f"The run could not be solved ({type(exc).__name__}: {exc}).",
            objective=settings.objective, cost_case=cost_case, input_hash=hash_, scenario_name=settings.name,
            settings=dataclasses.asdict(settings),
        )
        return SolvedRun(result=result, files=dict(files), label=label, input_hash=hash_), False
    run = SolvedRun(result=result, files=dict(files), label=label, input_hash=result.input_hash)
    if result.solved:
        remember(cache, key, run)
    return run, False

def choices_of_run(result: RunResult) -> dict:
    """The set-up choices a run was solved with: cost_case, objective, co2_cap_t_per_a, typical_days (0 = year)."""
    settings = result.settings or {}
    return {
        "cost_case": result.cost_case,
        "objective": result.objective if result.objective in ("cost", "co2") else "cost",
        "co2_cap_t_per_a": float(settings.get("co2_cap_t_per_a", 0.0) or 0.0),
        "typical_days": int(settings.get("typical_days", 0) or 0),
    }

def resolve_saved_run(
    cache: MutableMapping,
    scenario: Scenario,
    files: Mapping[str, bytes],
    result: RunResult,
    label: str,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
) -> tuple[SolvedRun, bool]:
    """Solve a saved run again from its own files, choices and solver (a reproducibility check)."""
    choices = choices_of_run(result)
    key = request_key(files_digest(files), None, None, choices["cost_case"], choices["objective"],
                      choices["co2_cap_t_per_a"], choices["typical_days"])
    return solve_with_cache(cache, key, scenario, files, label, progress=progress, cancel=cancel,
                            solver=result.model_size.get("solver", DIRECT), **choices)

def load_saved_run(store: ScenarioStore, cache: MutableMapping, run_id: int) -> RunResult:
    """A saved run, read from the library once per session (``cache``: run id -> RunResult)."""
    run_id = int(run_id)
    if run_id not in cache:
        remember(cache, run_id, store.load_run(run_id), limit=8)
    return cache[run_id]

def scenario_for_files(cache: MutableMapping, files: Mapping[str, bytes]) -> Scenario | None:
    """The scenario of ``files``, read once per session (``cache``: digest -> Scenario)."""
    if not files:
        return None
    digest = files_digest(files)
    if digest not in cache:
        scenario, _ = scenario_from_files(files)
        remember(cache, digest, scenario, limit=6)
    return cache[digest]
