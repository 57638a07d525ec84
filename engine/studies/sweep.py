"""Sweeps over prices: many cost cases solved in parallel, on local processes or a Dask cluster.

A sweep is a list of :class:`SweepTask` (a name and a :class:`engine.scenario.inputs.CostCase`). Tasks come from the
scenario's own cost cases (:func:`tasks_from_cost_cases`) or from price multipliers around a base case, on a grid
(:func:`grid_samples`) or drawn by Latin hypercube or plain uniform sampling (:func:`random_samples`), turned into
cases by :func:`tasks_from_samples`. :func:`run_sweep` solves every task (each one a new cost case added to a copy of
the scenario) and returns one compact record per run: the prices, total cost, CO2, heat by technology and the main
supply of each district; the full :class:`RunResult` too when asked, for the scenario store.

:func:`tornado_tasks` and :func:`tornado_table` vary one price at a time to its low and high value around the
reference and report the change in total cost and how many districts change their main supply;
:func:`engine.outputs.study_figures.tornado_figure` draws it.

Price multipliers (:data:`PARAMETERS`): ``co2_price_factor`` multiplies the base case's CO2 price,
``gas_price_factor``, ``electricity_price_factor`` and ``network_price_factor`` multiply those prices (on top of the
base case's own factors), and ``heat_pump_subsidy_share`` is the share of the investment in air and groundwater
heat pumps paid by a subsidy.

Results are screening figures for comparing futures, not a forecast of prices or an investment appraisal.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import os
import uuid
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from engine.scenario.inputs import CostCase, Scenario, default_cost_case
from engine.scenario.kinds import HEAT_PUMP_KINDS
from engine.model.results import RunResult
from engine.model.solve import HeldModels, run_settings, solve_scenario
from engine.model.solvers import DIRECT
from engine.progress import Cancel, Progress, SweepCancelled, no_progress


@dataclass(frozen=True)
class Parameter:
    name: str
    label: str
    low: float
    reference: float
    high: float
    unit: str


PARAMETERS = {
    p.name: p
    for p in (
        Parameter("co2_price_factor", "CO2 price", 0.5, 1.0, 2.5, "x base CO2 price"),
        Parameter("gas_price_factor", "Gas price", 0.7, 1.0, 1.5, "x base gas price"),
        Parameter("electricity_price_factor", "Electricity price", 0.7, 1.0, 1.4, "x base electricity price"),
        Parameter("network_price_factor", "Network heat price", 0.7, 1.0, 1.3, "x base network price"),
        Parameter("heat_pump_subsidy_share", "Heat pump subsidy", 0.0, 0.0, 0.5, "share of investment"),
    )
}
"""The prices a sweep can vary, with default low, reference and high values."""


@dataclass
class SweepTask:
    name: str
    cost_case: CostCase
    prices: dict = field(default_factory=dict)
    """The varied values (parameter name -> value); empty for a scenario's own cost case."""


@dataclass
class SweepOutcome:
    """What :func:`run_sweep` returns."""

    sweep_id: str
    table: pd.DataFrame
    """One row per run: run, name, the varied values (parameter names of :data:`PARAMETERS`), the solved case's
    case_co2_eur_per_t, case_gas_eur_per_mwh, case_electricity_price_factor, case_network_price_factor and
    case_heat_pump_subsidy_share, then status, message, total_cost_eur_per_a, co2_t_per_a,
    unserved_heat_mwh_per_a, solve_s and heat_<technology>_mwh_per_a."""
    main_supply: pd.DataFrame
    """One row per run, one column per district: the technology giving most of the district's heat."""
    results: list = field(default_factory=list)
    """The RunResult of each run when ``keep_results`` was set, else empty."""


# ============================================================================================ building tasks
def _check_parameter(name: str) -> Parameter:
    if name not in PARAMETERS:
        raise ValueError(f"unknown sweep parameter '{name}' (known: {', '.join(PARAMETERS)})")
    return PARAMETERS[name]


def _base_case(scenario: Scenario, base_case: str | None) -> CostCase:
    name = base_case or default_cost_case(scenario.cost_cases)
    if name not in scenario.cost_cases:
        known = ", ".join(sorted(scenario.cost_cases))
        raise ValueError(f"base_case '{name}' is not a cost case of the scenario (known: {known})")
    return scenario.cost_cases[name]


def case_from_prices(scenario: Scenario, base: CostCase, prices: dict, name: str) -> CostCase:
    """A new cost case: ``base`` with the multipliers and the heat pump subsidy of ``prices`` applied.

    Raises
    ------
    ValueError
        If a parameter is unknown, a factor is negative or not finite, or the subsidy share lies outside [0, 1].
    """
    changes = {"name": name, "description": ", ".join(f"{k} = {v:.4g}" for k, v in prices.items())}
    for key, value in prices.items():
        _check_parameter(key)
        value = float(value)
        if not math.isfinite(value) or value < 0:
            raise ValueError(f"sweep parameter '{key}' must be a finite number >= 0, got {value!r}")
        if key == "co2_price_factor":
            price = scenario.prices.co2_eur_per_t if base.co2_eur_per_t is None else base.co2_eur_per_t
            changes["co2_eur_per_t"] = float(price) * value
        elif key == "heat_pump_subsidy_share":
            if value > 1:
                raise ValueError(f"sweep parameter 'heat_pump_subsidy_share' must lie in [0, 1], got {value!r}")
            techs = scenario.technologies
            subsidy = dict(base.subsidy_share)
            for tech in techs.loc[techs["kind"].isin(HEAT_PUMP_KINDS), "technology_id"]:
                subsidy[str(tech)] = value
            changes["subsidy_share"] = subsidy
        else:
            changes[key] = float(getattr(base, key)) * value
    return dataclasses.replace(base, **changes)


def tasks_from_cost_cases(scenario: Scenario, names=None) -> list[SweepTask]:
    """One task per cost case of the scenario (all of them by default, in the scenario's order)."""
    names = list(scenario.cost_cases) if names is None else list(names)
    for name in names:
        if name not in scenario.cost_cases:
            raise ValueError(f"'{name}' is not a cost case of the scenario (known: {', '.join(scenario.cost_cases)})")
    return [SweepTask(name, scenario.cost_cases[name], {}) for name in names]


def grid_samples(ranges: dict, points_per_axis: int = 3) -> list[dict]:
    """Every combination of ``points_per_axis`` evenly spaced values per parameter.

    Parameters
    ----------
    ranges : dict
        Parameter name -> (low, high).
    points_per_axis : int
        Values per parameter, >= 2 (1 takes the middle of each range).
    """
    if points_per_axis < 1:
        raise ValueError(f"points_per_axis must be >= 1, got {points_per_axis}")
    axes = []
    for name, (low, high) in ranges.items():
        _check_parameter(name)
        axes.append(np.linspace(low, high, points_per_axis) if points_per_axis > 1 else np.array([(low + high) / 2]))
    return [dict(zip(ranges, map(float, values))) for values in itertools.product(*axes)]


def random_samples(ranges: dict, n: int, seed: int = 0, method: str = "latin_hypercube") -> list[dict]:
    """``n`` seeded samples of the parameters within their ranges.

    Parameters
    ----------
    ranges : dict
        Parameter name -> (low, high).
    n : int
        Number of samples, >= 1.
    seed : int
        Seed of the generator (the same seed gives the same samples).
    method : {"latin_hypercube", "uniform"}
        Latin hypercube: each parameter's range is cut into ``n`` equal strata and every stratum is sampled once,
        paired at random across parameters; uniform: independent uniform draws.

    References
    ----------
    .. [1] McKay, M. D., Beckman, R. J., Conover, W. J. (1979). A comparison of three methods for selecting
       values of input variables in the analysis of output from a computer code. Technometrics, 21(2), 239-245.
    """
    if int(n) != n or n < 1:
        raise ValueError(f"n must be a whole number >= 1, got {n!r}")
    if method not in ("latin_hypercube", "uniform"):
        raise ValueError(f"method must be 'latin_hypercube' or 'uniform', got {method!r}")
    n = int(n)
    rng = np.random.default_rng(seed)
    names = list(ranges)
    for name in names:
        _check_parameter(name)
    if method == "uniform":
        unit = rng.random((n, len(names)))
    else:
        unit = np.empty((n, len(names)))
        for j in range(len(names)):
            unit[:, j] = (rng.permutation(n) + rng.random(n)) / n
    low = np.array([ranges[k][0] for k in names], float)
    high = np.array([ranges[k][1] for k in names], float)
    values = low + unit * (high - low)
    return [dict(zip(names, map(float, row))) for row in values]


def default_ranges(names=None) -> dict:
    """Parameter name -> (low, high) from :data:`PARAMETERS`."""
    names = list(PARAMETERS) if names is None else list(names)
    return {k: (_check_parameter(k).low, _check_parameter(k).high) for k in names}


def tasks_from_samples(scenario: Scenario, samples: list[dict], base_case: str | None = None,
                       prefix: str = "sample") -> list[SweepTask]:
    """One task per sample: the base case with the sample's multipliers."""
    base = _base_case(scenario, base_case)
    width = len(str(max(len(samples) - 1, 0)))
    tasks = []
    for k, prices in enumerate(samples):
        name = f"{prefix}_{k:0{width}d}"
        tasks.append(SweepTask(name, case_from_prices(scenario, base, prices, name), dict(prices)))
    return tasks


# ============================================================================================ solving
def _record(task: SweepTask, result: RunResult, scenario: Scenario) -> dict:
    case = task.cost_case
    co2_price = scenario.prices.co2_eur_per_t if case.co2_eur_per_t is None else case.co2_eur_per_t
    techs = scenario.technologies
    pumps = [str(t) for t in techs.loc[techs["kind"].isin(HEAT_PUMP_KINDS), "technology_id"]]
    record = {
        "name": task.name,
        # the varied values as sampled, then the prices of the cost case that was solved
        **{k: float(v) for k, v in task.prices.items()},
        "case_co2_eur_per_t": float(co2_price),
        "case_gas_eur_per_mwh": float(scenario.prices.gas_eur_per_mwh * case.gas_price_factor),
        "case_electricity_price_factor": float(case.electricity_price_factor),
        "case_network_price_factor": float(case.network_price_factor),
        "case_heat_pump_subsidy_share": max([float(case.subsidy_share.get(t, 0.0)) for t in pumps], default=0.0),
        "status": result.status,
        "message": result.message,
        "total_cost_eur_per_a": result.total_cost_eur_per_a if result.solved else math.nan,
        "co2_t_per_a": result.co2_t_per_a if result.solved else math.nan,
        "unserved_heat_mwh_per_a": result.unserved_heat_mwh_per_a if result.solved else math.nan,
        "solve_s": float(result.timings_s.get("total", math.nan)),
    }
    if result.solved:
        for tech, mwh in result.heat_by_technology_mwh_per_a().items():
            record[f"heat_{tech}_mwh_per_a"] = mwh
        districts = result.tables["districts"]
        record["main_supply"] = dict(zip(districts["district_id"].astype(str), districts["main_supply"].astype(str)))
    else:
        record["main_supply"] = {}
    return record


def solve_task(scenario: Scenario, task: SweepTask, typical_days=None, objective=None, keep_result=False,
               solver: str = DIRECT, held: HeldModels | None = None):
    """Solve one task (its cost case added to a shallow copy of ``scenario``); returns (record, result or None).

    The districts of one task are solved one after another in this process: a sweep's parallelism is across
    tasks, so that two levels of process pools do not compete for the same cores. ``held`` keeps the district
    LPs in HiGHS for the next task (:class:`engine.model.solve.HeldModels`: a cost case changes only costs).
    """
    cases = dict(scenario.cost_cases)
    cases[task.cost_case.name] = task.cost_case
    copy = dataclasses.replace(scenario, cost_cases=cases)
    settings = run_settings(copy, objective, None, typical_days)
    result = solve_scenario(copy, task.cost_case.name, settings=settings, workers=1, solver=solver, held=held)
    return _record(task, result, scenario), (result if keep_result else None)


_WORKER: dict = {}


def _init_worker(scenario):
    _WORKER["scenario"] = scenario


def _payload(task: SweepTask) -> tuple:
    # plain values cross the process boundary: a class re-imported by a reloading host (a dashboard that
    # watches its source files) would otherwise no longer pickle
    return task.name, dataclasses.asdict(task.cost_case), dict(task.prices)


def _task(payload: tuple) -> SweepTask:
    name, case, prices = payload
    return SweepTask(name, CostCase(**case), prices)


def _solve_in_worker(payload, typical_days, objective, keep_result, solver=DIRECT):
    return solve_task(_WORKER["scenario"], _task(payload), typical_days, objective, keep_result, solver)


def _solve_on_cluster(scenario, payload, typical_days, objective, keep_result, solver=DIRECT):
    return solve_task(scenario, _task(payload), typical_days, objective, keep_result, solver)


def run_sweep(
    scenario: Scenario,
    tasks: list[SweepTask],
    typical_days: int | None = None,
    objective: str | None = None,
    workers: int | None = None,
    scheduler=None,
    keep_results: bool = False,
    progress: Progress | None = None,
    sweep_id: str | None = None,
    cancel: Cancel | None = None,
    solver: str = DIRECT,
) -> SweepOutcome:
    """Solve every task and collect one record per run.

    Parameters
    ----------
    scenario : Scenario
        The city.
    tasks : list of SweepTask
        The runs (see :func:`tasks_from_cost_cases` and :func:`tasks_from_samples`).
    typical_days : int, optional
        Time resolution of every run (None keeps the scenario's; 0 is the full year).
    objective : {"cost", "co2"}, optional
        Objective of every run (None keeps the scenario's).
    workers : int, optional
        Local worker processes (default: the number of cores, at most the number of tasks); 1 solves the tasks
        one after another in this process. Ignored when ``scheduler`` is given.
    scheduler : str or distributed.Client, optional
        Address of a Dask distributed scheduler (``"tcp://host:8786"``) or a connected client: the tasks then run
        on that cluster. The scenario is sent to the workers once.
    keep_results : bool
        Also return every :class:`RunResult` (for saving to the store; memory grows with the runs).
    progress : callable, optional
        ``progress(share, text)`` each time a run finishes.
    sweep_id : str, optional
        Identifier of the sweep (default: a new random one); saved runs carry it.
    cancel : callable, optional
        Checked each time a run finishes; when it returns True the runs not yet started are dropped and
        :class:`SweepCancelled` is raised.
    solver : str
        Solver of every run (:mod:`engine.model.solvers`; HiGHS directly by default).

    Returns
    -------
    SweepOutcome
        Records in the order of ``tasks``, whatever order the runs finished in.
    """
    if not tasks:
        raise ValueError("tasks is empty: a sweep needs at least one run")
    names = [t.name for t in tasks]
    if len(set(names)) != len(names):
        raise ValueError("tasks must have distinct names")
    report = progress or no_progress
    sweep_id = sweep_id or f"sweep-{uuid.uuid4().hex[:12]}"
    outputs: list = [None] * len(tasks)
    done = 0

    stopped = cancel or (lambda: False)

    def finished(k: int, output) -> None:
        nonlocal done
        outputs[k] = output
        done += 1
        record = output[0]
        figure = (f"{record['total_cost_eur_per_a']:,.0f} EUR/a, {record['co2_t_per_a']:,.0f} t/a"
                  if record["status"] == "optimal" else record["status"])
        report(done / len(tasks), f"Run {done} of {len(tasks)} done: {tasks[k].name} ({figure})")
        if stopped():
            raise SweepCancelled(f"the sweep was cancelled after {done} of {len(tasks)} runs")

    if scheduler is not None:
        _run_on_cluster(scenario, tasks, typical_days, objective, keep_results, scheduler, finished, solver)
    else:
        if workers is None:
            workers = min(len(tasks), os.cpu_count() or 1)
        if workers <= 1 or len(tasks) == 1:
            # one after the other: each task re-solves the district LPs of the last from their bases, with only
            # the costs changed
            held = HeldModels()
            for k, task in enumerate(tasks):
                if stopped():
                    raise SweepCancelled(f"the sweep was cancelled after {done} of {len(tasks)} runs")
                finished(k, solve_task(scenario, task, typical_days, objective, keep_results, solver, held))
        else:
            with ProcessPoolExecutor(max_workers=workers, initializer=_init_worker, initargs=(scenario,)) as pool:
                futures = {
                    pool.submit(_solve_in_worker, _payload(task), typical_days, objective, keep_results, solver): k
                    for k, task in enumerate(tasks)
                }
                try:
                    for future in as_completed(futures):
                        finished(futures[future], future.result())
                except SweepCancelled:
                    for future in futures:
                        future.cancel()
                    raise
    return _outcome(sweep_id, outputs, keep_results)


def _run_on_cluster(scenario, tasks, typical_days, objective, keep_results, scheduler, finished,
                    solver=DIRECT) -> None:
    try:  # imported here: distributed is slow to import and only sweeps on a cluster need it
        from distributed import Client, as_completed as dask_as_completed
    except ImportError as error:  # pragma: no cover - dask[distributed] is in requirements.txt
        raise RuntimeError("a Dask scheduler was given but the 'distributed' package is not installed") from error
    own_client = not isinstance(scheduler, Client)
    client = Client(scheduler) if own_client else scheduler
    try:
        shared = client.scatter(scenario, broadcast=True)
        futures = [
            client.submit(_solve_on_cluster, shared, _payload(task), typical_days, objective, keep_results, solver,
                          pure=False,
                          key=f"heatmosaic-{task.name}-{uuid.uuid4().hex[:8]}")
            for task in tasks
        ]
        index = {f.key: k for k, f in enumerate(futures)}
        try:
            for future in dask_as_completed(futures):
                finished(index[future.key], future.result())
        except SweepCancelled:
            client.cancel(futures)
            raise
    finally:
        if own_client:
            client.close()


def _outcome(sweep_id: str, outputs: list, keep_results: bool) -> SweepOutcome:
    records = [o[0] for o in outputs]
    main = pd.DataFrame([r.pop("main_supply") for r in records], index=[r["name"] for r in records])
    main.index.name = "name"
    table = pd.DataFrame(records)
    table.insert(0, "run", np.arange(len(table)))
    heat = sorted(c for c in table.columns if c.startswith("heat_"))
    if heat:
        table[heat] = table[heat].fillna(0.0)
    results = [o[1] for o in outputs] if keep_results else []
    return SweepOutcome(sweep_id, table, main, results)


def save_sweep(outcome: SweepOutcome, store, name_prefix: str = "Sweep", inputs=None, tags="sweep") -> list[int]:
    """Save every kept run of a sweep to a :class:`engine.storage.store.ScenarioStore`, tagged with its sweep id.

    Raises
    ------
    ValueError
        If the sweep was run without ``keep_results``.
    """
    if not outcome.results:
        raise ValueError("the sweep kept no runs: run it with keep_results=True to save them")
    ids = []
    for row, result in zip(outcome.table.itertuples(index=False), outcome.results):
        if result is None or not result.solved:
            continue
        ids.append(store.save_run(result, f"{name_prefix}: {row.name}", note=outcome.sweep_id, inputs=inputs,
                                  tags=tags, sweep_id=outcome.sweep_id))
    return ids


# ============================================================================================ tornado
def tornado_tasks(scenario: Scenario, base_case: str | None = None, parameters=None) -> list[SweepTask]:
    """The reference run and, for each parameter, a run at its low and at its high value (others at reference)."""
    names = list(PARAMETERS) if parameters is None else list(parameters)
    base = _base_case(scenario, base_case)
    reference = {k: PARAMETERS[k].reference for k in names}
    tasks = [SweepTask("reference", case_from_prices(scenario, base, reference, "tornado_reference"), reference)]
    for name in names:
        p = _check_parameter(name)
        for side, value in (("low", p.low), ("high", p.high)):
            prices = dict(reference, **{name: value})
            case_name = f"tornado_{name}_{side}"
            tasks.append(SweepTask(f"{name}:{side}", case_from_prices(scenario, base, prices, case_name), prices))
    return tasks


def tornado_table(outcome: SweepOutcome) -> pd.DataFrame:
    """Summarise a sweep of :func:`tornado_tasks`: one row per parameter, largest cost swing first.

    Columns: parameter, label, low_value, high_value, reference_cost_eur_per_a, cost_low_eur_per_a,
    cost_high_eur_per_a, delta_cost_low_eur_per_a, delta_cost_high_eur_per_a, districts_changed_low,
    districts_changed_high, swing_eur_per_a.
    """
    table = outcome.table.set_index("name")
    if "reference" not in table.index:
        raise ValueError("the sweep has no 'reference' run: build it with tornado_tasks")
    ref_cost = float(table.loc["reference", "total_cost_eur_per_a"])
    ref_main = outcome.main_supply.loc["reference"]
    rows = []
    for name in dict.fromkeys(n.split(":")[0] for n in table.index if ":" in n):
        p = _check_parameter(name)
        row = {"parameter": name, "label": p.label, "low_value": p.low, "high_value": p.high,
               "reference_cost_eur_per_a": ref_cost}
        for side in ("low", "high"):
            key = f"{name}:{side}"
            cost = float(table.loc[key, "total_cost_eur_per_a"])
            row[f"cost_{side}_eur_per_a"] = cost
            row[f"delta_cost_{side}_eur_per_a"] = cost - ref_cost
            row[f"districts_changed_{side}"] = int((outcome.main_supply.loc[key] != ref_main).sum())
        row["swing_eur_per_a"] = abs(row["cost_high_eur_per_a"] - row["cost_low_eur_per_a"])
        rows.append(row)
    return pd.DataFrame(rows).sort_values("swing_eur_per_a", ascending=False, ignore_index=True)


