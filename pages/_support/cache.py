"""The session's caches: solved runs, saved runs read from the library, scenarios read from files.

A planner goes back and forth between cost cases; :func:`solve_with_cache` makes going back to a request already
solved instant (looked up by :func:`request_key`, then by the input hash). Every cache drops its oldest entries
beyond a size (:func:`remember`).
"""

from __future__ import annotations

import copy
import dataclasses
import hashlib
import sqlite3
from collections.abc import Callable, Mapping, MutableMapping
from dataclasses import dataclass

import pandas as pd

from engine.model.results import RunResult
from engine.model.solvers import DIRECT, resolve_solver
from engine.model.solve import run_settings, solve_scenario
from engine.scenario.inputs import Scenario, input_hash
from engine.progress import Cancel, Progress
from engine.storage.store import ScenarioStore, StoreError
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
    library: Callable[[], ScenarioStore] | None = None,
) -> tuple[SolvedRun, bool]:
    """Solve (or find in ``cache`` or the library) one request; returns the run and whether it was found.

    ``solver`` as in :func:`engine.model.solve.solve_scenario`; a run found by its input hash is reused only when
    it was solved by the same solver (the point of choosing another solver is to see its answer).

    The cache is looked up by ``key`` first and then by the input hash, so that two requests that differ only in
    ways the model ignores share one solve. Districts are solved one after the other in this process
    (``workers=1``): in a dashboard server a process pool would fork a threaded process, and for a city of the
    demo's size it is no faster.

    ``library`` (e.g. :class:`engine.storage.store.ScenarioStore`) opens the run library: a saved optimal run with
    the same input hash and solver comes back from it without a solve (the newest such run; its
    ``saved_run_id`` is set). A library that cannot be read is skipped.
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
    saved = _saved_run(library, hash_, solver) if library is not None else None
    if saved is not None:
        run_id, result = saved
        run = SolvedRun(result=result, files=dict(files), label=label, input_hash=hash_, saved_run_id=run_id)
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

def _saved_run(library: Callable[[], ScenarioStore], hash_: str, solver: str) -> tuple[int, RunResult] | None:
    """The newest saved run of ``hash_`` if it is optimal and was solved by ``solver``, else None."""
    try:
        with library() as store:
            run_id = store.find_by_hash(hash_)
            if run_id is None:
                return None
            result = store.load_run(run_id)
    except (StoreError, OSError, sqlite3.Error):
        return None
    if not result.solved or result.model_size.get("solver", DIRECT) != solver:
        return None
    return int(run_id), result


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


FIGURE_CACHE_SIZE = 32
"""Figures and maps kept per session (a folium map of the demo holds about a megabyte)."""


def result_fingerprint(result: RunResult) -> str:
    """A short digest of what a figure of ``result`` shows: its input hash, status, choices, totals and district
    table. Two results with the same fingerprint draw the same figures; a re-solved, re-checked or other run
    gets another one."""
    districts = (result.tables or {}).get("districts")
    table = ""
    if districts is not None:
        numbers = districts.select_dtypes("number").to_numpy(dtype=float, na_value=float("nan"))  # bools too
        text = "\x1f".join(str(c) for c in districts.columns) + "\x1e" + "\x1f".join(
            "\x1f".join(map(str, districts[c])) for c in districts.columns
            if not pd.api.types.is_numeric_dtype(districts[c]))
        table = hashlib.sha256(numbers.tobytes() + text.encode()).hexdigest()
    parts = [result.input_hash or "", result.status, str(result.cost_case), str(result.objective),
             repr(float(result.total_cost_eur_per_a)), repr(float(result.co2_t_per_a)),
             repr(float(result.unserved_heat_mwh_per_a)), str(sorted(result.extras)),
             str(result.model_size.get("solver", DIRECT)), table]
    return hashlib.sha256("|".join(parts).encode()).hexdigest()[:24]


def figure_key(kind: str, results: Mapping[str, RunResult] | None = None, **options) -> str:
    """The cache key of a figure: its kind, each run's name and :func:`result_fingerprint`, and the options it is
    drawn with (district, week, measure ...)."""
    runs = [(str(name), result_fingerprint(r)) for name, r in (results or {}).items()]
    text = repr((kind, runs, sorted((k, repr(v)) for k, v in options.items())))
    return kind + ":" + hashlib.sha256(text.encode()).hexdigest()[:32]


def cached_figure(cache: MutableMapping, key: str, build: Callable[[], object]):
    """The figure (or map, or table) under ``key``, built by ``build()`` on the first call only.

    The same object comes back on later calls: a page must not change it after drawing (a figure changed for a
    shared range is changed inside ``build``)."""
    if key in cache:
        remember(cache, key, cache[key], limit=FIGURE_CACHE_SIZE)
        return cache[key]
    value = build()
    remember(cache, key, value, limit=FIGURE_CACHE_SIZE)
    return value



def cached_map(cache: MutableMapping, key: str, build: Callable[[], object]):
    """A copy of the folium map under ``key``, built by ``build()`` on the first call only.

    ``st_folium`` renames the elements of the map it is given as it renders it, and a map rendered twice that way
    draws its layers twice: so the cache keeps the map as built and every call gets a deep copy (a few
    hundredths of a second for the demo city against about a second to build it)."""
    return copy.deepcopy(cached_figure(cache, key, build))
