"""Near-optimal alternatives: how far each district's supply can move at almost the least cost.

Modelling to generate alternatives (DeCarolis 2011, "Using modeling to generate alternatives (MGA) to expand our
thinking on energy futures", Energy Economics 33(2), 145-152): once the least cost ``C*`` is known, the cost is
bounded by ``(1 + slack) C*`` (plus :data:`COST_LIMIT_TOLERANCE`), the unserved heat and cooling by the least-cost
plan's, and other objectives are minimised and maximised within those bounds. Here they are

* the network share of each district that the network can reach (heat from its network connection over its heat
  demand), and the share of every heat technology in each district, with that *district's* cost within the
  slack: the range of that district's own choice;
* the city-wide share of each heat technology. Without a city-wide constraint the districts are independent and
  the slack is applied per district (every district within ``(1 + slack)`` of its own least cost, which keeps the
  city within the slack too); the plans allowed then form a product set, so the city-wide extremes are exactly
  the sums of the district extremes, and many small LPs replace a few large ones.

Districts that a city-wide constraint (CO2 cap, network plant limit) couples are solved as one LP with the
city's cost within the slack.
Each group of objectives is one task: the LP is built and solved once for ``C*``, the cost row is added, and
every objective is then solved from the previous basis (HiGHS warm start). Tasks run in parallel on local
processes or on a Dask cluster, as the sweeps do (:mod:`engine.studies.sweep`).

Ranges are screening figures: a range says a choice is free *within this model*, not that either end is buildable.
"""

from __future__ import annotations

import dataclasses
import os
import uuid
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field

import highspy
import numpy as np
import pandas as pd

from engine.progress import JobCancelled, Progress
from engine.model.formulation import build_model
from engine.model.lp import new_highs
from engine.model.solvers import DIRECT, resolve_solver, solve_lp
from engine.model.prepare import prepare_run
from engine.model.solve import part_work, run_settings
from engine.scenario.inputs import Scenario, Settings
from engine.scenario.kinds import HEAT_KINDS

DEFAULT_SLACK_PCT = 5.0
RANGE_COLUMNS = ("scope", "subject", "quantity", "optimum", "minimum", "maximum", "slack_pct", "status")


@dataclass
class AlternativeTask:
    """One LP (``districts``) and the shares to minimise and maximise in it.

    ``targets`` are ``(scope, subject, quantity)``: ``("district", district_id, "network_share")``,
    ``("district", "district_id/technology_id", "technology_share")`` or ``("city", technology_id,
    "technology_share")``.
    """

    name: str
    districts: list
    targets: list


@dataclass
class NearOptimalRanges:
    cost_case: str
    slack_pct: float
    ranges: pd.DataFrame = field(default_factory=pd.DataFrame)
    """One row per target, the columns of :data:`RANGE_COLUMNS` (shares 0..1)."""
    heat_demand_mwh_per_a: float = float("nan")
    """The city's heat demand the city-wide shares are shares of (space heating and hot water) [MWh/a]."""
    typical_days: int = 0
    """The time resolution the ranges were solved at (0 = the full hourly year)."""

    def technology_heat(self) -> pd.DataFrame:
        """Per heat technology, city-wide: the least-cost plan's heat and the least and most heat of the plans
        within the cost slack [MWh/a] (``heat_mwh_per_a``, ``minimum_mwh_per_a``, ``maximum_mwh_per_a``), and the
        range as a share of the least-cost plan's heat (``below_pct``, ``above_pct``; NaN where it makes none)."""
        city = self.ranges[(self.ranges["scope"] == "city") & (self.ranges["quantity"] == "technology_share")]
        demand = self.heat_demand_mwh_per_a
        table = pd.DataFrame({
            "technology_id": city["subject"].to_numpy(),
            "heat_mwh_per_a": city["optimum"].to_numpy(float) * demand,
            "minimum_mwh_per_a": city["minimum"].to_numpy(float) * demand,
            "maximum_mwh_per_a": city["maximum"].to_numpy(float) * demand,
        })
        base = table["heat_mwh_per_a"].where(table["heat_mwh_per_a"] > 0)
        table["below_pct"] = 100.0 * (table["minimum_mwh_per_a"] - base) / base
        table["above_pct"] = 100.0 * (table["maximum_mwh_per_a"] - base) / base
        return table.sort_values("heat_mwh_per_a", ascending=False, ignore_index=True)

    def district_network(self) -> pd.DataFrame:
        """network_share_min and network_share_max per district id (only districts the network reaches)."""
        d = self.ranges[self.ranges["quantity"] == "network_share"].set_index("subject")
        return pd.DataFrame({"network_share_min": d["minimum"], "network_share_max": d["maximum"]})


COST_LIMIT_TOLERANCE = 1e-7
"""Relative allowance on the cost row above ``(1 + slack) C*``: the least-cost plan itself meets the row within
the solver's feasibility tolerance, so that a slack of 0 is not declared infeasible by rounding."""


def _cost_limit(best: float, slack_pct: float, constant: float) -> float:
    """Upper bound of the LP's cost (constant fixed O&M left out) for plans within the slack of ``best``."""
    return best * (1 + slack_pct / 100.0) + COST_LIMIT_TOLERANCE * abs(best) - constant


def _unserved_row(model, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """Columns, weights [h] and upper bound [kWh/a] of a row that holds the unserved heat and cooling at most at
    the least-cost plan's: a plan that leaves more heat unserved is no alternative supply, whatever its cost."""
    cols = np.concatenate([model.cols["unserved_heat"].ravel(), model.cols["unserved_cooling"].ravel()])
    w = model.prepared.grid.weight_h
    weights = np.concatenate([np.broadcast_to(w, model.cols["unserved_heat"].shape).ravel(),
                              np.broadcast_to(w, model.cols["unserved_cooling"].shape).ravel()])
    return cols.astype(np.int32), weights.astype(float), float(weights @ x[cols]) + 1e-6


def _range_row(target, optimum: float, found: list, slack_pct: float) -> dict:
    """A range row from the least-cost share and the minimised and maximised ones (NaN where that LP was not
    solved to optimality: then the row says ``incomplete`` and that end stays unknown, never the optimum)."""
    low, high = found
    status = "optimal" if np.isfinite(low) and np.isfinite(high) else "incomplete"
    low = max(min(low, optimum), 0.0) if np.isfinite(low) else np.nan
    high = min(max(high, optimum), 1.0) if np.isfinite(high) else np.nan
    return dict(zip(RANGE_COLUMNS, (*target, optimum, low, high, slack_pct, status)))


def _coupled(settings) -> bool:
    return bool((settings.co2_cap_t_per_a or 0) > 0 or (settings.network_plant_limit_kw or 0) > 0)


def plan_tasks(scenario: Scenario, prepared) -> list[AlternativeTask]:
    """Tasks for the district network shares and the city-wide technology shares."""
    model = build_model(prepared)  # only read: which units exist where
    ids = prepared.district_ids
    kinds = np.array(model.units.kind)
    net = sorted({int(i) for i in model.units.district[kinds == "network_connection"]})
    heat_techs = sorted({t for t, k in zip(model.units.technology_id, kinds) if k in HEAT_KINDS})
    city = [("city", t, "technology_share") for t in heat_techs]
    all_d = list(range(len(ids)))
    if _coupled(prepared.settings):
        targets = [("district", ids[i], "network_share") for i in net] + city
        return [AlternativeTask("city", all_d, targets)]
    tasks = []
    for i in all_d:
        here = sorted({t for t, k, d in zip(model.units.technology_id, kinds, model.units.district)
                       if k in HEAT_KINDS and d == i})
        # a district's network share is the share of its network technology: no target of its own
        targets = [("district", f"{ids[i]}/{t}", "technology_share") for t in here]
        if targets:
            tasks.append(AlternativeTask(f"district {ids[i]}", [i], targets))
    return tasks


def _share_coefficients(model, target) -> tuple[np.ndarray, np.ndarray, float]:
    """Columns, weights [h] and denominator [kWh/a] of a share target in ``model``."""
    scope, subject, _ = target
    prepared, units = model.prepared, model.units
    w = prepared.grid.weight_h
    if scope == "district" and "/" in subject:
        did, tech = subject.split("/", 1)
        i = prepared.district_ids.index(did)
        chosen = np.flatnonzero((units.district == i) & (np.array(units.technology_id) == tech))
        demand = float((prepared.heat_demand_kw[i] * w).sum())
    elif scope == "district":
        i = prepared.district_ids.index(subject)
        chosen = np.flatnonzero((units.district == i) & (np.array(units.kind) == "network_connection"))
        demand = float((prepared.heat_demand_kw[i] * w).sum())
    else:
        chosen = np.flatnonzero((np.array(units.technology_id) == subject) & ~units.serves_cooling)
        demand = float((prepared.heat_demand_kw[model.districts] * w[None, :]).sum())
    cols = model.cols["out"][chosen].ravel()
    weights = np.broadcast_to(w, (len(chosen), len(w))).ravel()
    return cols, weights, max(demand, 1e-9)


def _solve_task_elsewhere(prepared, task: AlternativeTask, slack_pct: float, solver: str) -> list[dict]:
    """:func:`solve_task` with a pulp solver: every objective from the solver's own start."""
    model = build_model(prepared, np.array(task.districts))
    lp = model.lp
    first = solve_lp(lp, solver)
    if first.status != "optimal":
        return [dict(zip(RANGE_COLUMNS, (*t, np.nan, np.nan, np.nan, slack_pct, "infeasible"))) for t in task.targets]
    x, money = first.x, model.money
    constant = float(model.constant_fixed_om.sum())
    limit = _cost_limit(float(money @ x) + constant, slack_pct, constant)
    nz = np.flatnonzero(money)
    lp.add_rows_coo("cost_within_slack", 1, np.zeros(len(nz)), nz, money[nz], upper=np.array([limit]))
    held, held_w, held_up = _unserved_row(model, x)
    if held.size:
        lp.add_rows_coo("unserved_held", 1, np.zeros(held.size), held, held_w, upper=np.array([held_up]))
    rows = []
    for target in task.targets:
        cols, weights, demand = _share_coefficients(model, target)
        optimum = float(weights @ x[cols]) / demand
        found = []
        for sign in (1.0, -1.0):
            cost = np.zeros(lp.n_cols)
            cost[cols] = sign * weights / max(float(weights.max()), 1e-12)
            lp.set_objective(cost)
            solution = solve_lp(lp, solver)
            found.append(float(solution.x[cols] @ weights) / demand if solution.status == "optimal" else np.nan)
        rows.append(_range_row(target, optimum, found, slack_pct))
    return rows


def solve_task(prepared, task: AlternativeTask, slack_pct: float, solver: str = DIRECT) -> list[dict]:
    """Least cost, then the minimum and maximum of every target within the cost slack (warm started; a pulp
    ``solver`` solves each from its own start)."""
    if solver != DIRECT:
        return _solve_task_elsewhere(prepared, task, slack_pct, solver)
    model = build_model(prepared, np.array(task.districts))
    lp = model.lp
    h = lp.to_highs()
    h.run()
    rows = []
    if h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
        return [dict(zip(RANGE_COLUMNS, (*t, np.nan, np.nan, np.nan, slack_pct, "infeasible"))) for t in task.targets]
    x = np.asarray(h.getSolution().col_value)
    money = model.money
    constant = float(model.constant_fixed_om.sum())
    best = float(money @ x) + constant
    limit = _cost_limit(best, slack_pct, constant)
    nz = np.flatnonzero(money)
    h.addRow(-highspy.kHighsInf, float(limit), len(nz), nz.astype(np.int32), money[nz])
    held, held_w, held_up = _unserved_row(model, x)
    if held.size:
        h.addRow(-highspy.kHighsInf, held_up, held.size, held, held_w)
    # from the least-cost basis every new objective starts primal feasible: primal simplex, no new presolve
    h.setOptionValue("presolve", "off")
    h.setOptionValue("simplex_strategy", 4)
    n = lp.n_cols
    zero = np.zeros(n)
    all_cols = np.arange(n, dtype=np.int32)
    for target in task.targets:
        cols, weights, demand = _share_coefficients(model, target)
        optimum = float(weights @ x[cols]) / demand
        found = []
        for sign in (1.0, -1.0):
            cost = zero.copy()
            cost[cols] = sign * weights / max(float(weights.max()), 1e-12)  # O(1) costs: tolerances stay meaningful
            h.changeColsCost(n, all_cols, cost)
            h.run()
            ok = h.getModelStatus() == highspy.HighsModelStatus.kOptimal
            if not ok:  # the warm start stalled: once more from scratch, with presolve and the default simplex
                h.clearSolver()
                h.setOptionValue("presolve", "on")
                h.setOptionValue("simplex_strategy", 1)
                h.run()
                ok = h.getModelStatus() == highspy.HighsModelStatus.kOptimal
                h.setOptionValue("presolve", "off")
                h.setOptionValue("simplex_strategy", 4)
            found.append(float(np.asarray(h.getSolution().col_value)[cols] @ weights) / demand if ok else np.nan)
        rows.append(_range_row(target, optimum, found, slack_pct))
    return rows


_WORKER: dict = {}


def _init(prepared):
    _WORKER["prepared"] = prepared
    new_highs()  # the banner once per process, silenced


def _in_worker(task, slack_pct, solver=DIRECT):
    return solve_task(_WORKER["prepared"], task, slack_pct, solver)


def _on_cluster(prepared, task, slack_pct, solver=DIRECT):
    return solve_task(prepared, task, slack_pct, solver)


def _cancelled(cancel) -> bool:
    return cancel is not None and bool(cancel())


def near_optimal_ranges(
    scenario: Scenario,
    cost_case: str | None = None,
    slack_pct: float = DEFAULT_SLACK_PCT,
    typical_days: int | None = None,
    workers: int | None = None,
    scheduler=None,
    progress: Progress | None = None,
    cancel=None,
    solver: str = DIRECT,
    settings: Settings | None = None,
) -> NearOptimalRanges:
    """Minimum and maximum of each district's network share and each technology's city-wide share.

    ``workers`` local processes (default: the cores, at most the tasks; 1 = in this process), or ``scheduler``
    (a Dask scheduler address or client) to run the tasks on a cluster. ``cancel()`` is checked before each
    task and as each finishes: once it returns True the tasks not yet done are cancelled (on the cluster too)
    and :class:`JobCancelled` is raised. ``solver``: HiGHS directly (default) or a pulp solver
    (:mod:`engine.model.solvers`). ``settings``: the run settings to solve with (e.g. a saved run's, with its
    CO2 cap and stores; default the scenario's); ``typical_days``, if given, overrides theirs. The slack is always
    on the least cost: the ranges are of the plans near the least-cost plan, whatever the settings' objective.
    """
    if slack_pct < 0:
        raise ValueError("slack_pct must be >= 0")
    solver = resolve_solver(solver)
    report = progress or (lambda share, text: None)
    cost_case = cost_case or ("reference" if "reference" in scenario.cost_cases else next(iter(scenario.cost_cases)))
    if settings is None:
        settings = run_settings(scenario, typical_days=typical_days)
    elif typical_days is not None:
        settings = dataclasses.replace(settings, typical_days=int(typical_days))
    prepared = prepare_run(scenario, cost_case, settings)
    if workers is None:
        workers = os.cpu_count() or 1
    tasks = plan_tasks(scenario, prepared)
    # largest first (a heat store's level chain makes a district's LPs slow), so that no worker is left with a
    # long task while the others idle at the end
    tasks.sort(key=lambda t: -part_work(prepared, t.districts))
    rows: list = []
    if scheduler is not None:
        from distributed import Client, as_completed as dask_as_completed  # optional dependency, only for clusters

        own = not isinstance(scheduler, Client)
        client = Client(scheduler) if own else scheduler
        futures = []
        try:
            if _cancelled(cancel):
                raise JobCancelled("the near-optimal alternatives were cancelled")
            shared = client.scatter(prepared, broadcast=True)
            futures = [client.submit(_on_cluster, shared, t, slack_pct, solver, pure=False,
                                     key=f"heatmosaic-mga-{uuid.uuid4().hex[:8]}") for t in tasks]
            for k, future in enumerate(dask_as_completed(futures)):
                rows += future.result()
                report((k + 1) / len(tasks), f"Alternatives: {k + 1} of {len(tasks)} groups")
                if _cancelled(cancel) and k + 1 < len(tasks):
                    client.cancel(futures)
                    raise JobCancelled("the near-optimal alternatives were cancelled")
        finally:
            if own:
                client.close()
    elif workers <= 1 or len(tasks) == 1:
        for k, task in enumerate(tasks):
            if _cancelled(cancel):
                raise JobCancelled("the near-optimal alternatives were cancelled")
            rows += solve_task(prepared, task, slack_pct, solver)
            report((k + 1) / len(tasks), f"Alternatives: {k + 1} of {len(tasks)} groups")
    else:
        if _cancelled(cancel):
            raise JobCancelled("the near-optimal alternatives were cancelled")
        with ProcessPoolExecutor(max_workers=min(workers, len(tasks)), initializer=_init,
                                 initargs=(prepared,)) as pool:
            futures = [pool.submit(_in_worker, t, slack_pct, solver) for t in tasks]
            for k, future in enumerate(as_completed(futures)):
                rows += future.result()
                report((k + 1) / len(tasks), f"Alternatives: {k + 1} of {len(tasks)} groups")
                if _cancelled(cancel) and k + 1 < len(tasks):
                    for f in futures:
                        f.cancel()
                    raise JobCancelled("the near-optimal alternatives were cancelled")
    table = pd.DataFrame(rows, columns=list(RANGE_COLUMNS))
    techs = scenario.technologies
    network_ids = set(techs.loc[techs["kind"] == "network_connection", "technology_id"])
    if not (table["quantity"] == "network_share").any():
        own = table[table["subject"].map(lambda s: "/" in s and s.split("/", 1)[1] in network_ids)].copy()
        own["subject"] = own["subject"].str.split("/", n=1).str[0]
        own["quantity"] = "network_share"
        known_sum = lambda v: v.sum(min_count=len(v))  # noqa: E731 - an unknown end stays unknown
        own = own.groupby(["scope", "subject", "quantity"], as_index=False).agg(
            optimum=("optimum", "sum"), minimum=("minimum", known_sum), maximum=("maximum", known_sum),
            slack_pct=("slack_pct", "first"), status=("status", lambda v: "optimal" if (v == "optimal").all()
                                                      else "incomplete"))
        table = pd.concat([table, own[list(RANGE_COLUMNS)]], ignore_index=True)
    if not (table["scope"] == "city").any():
        table = pd.concat([table, _city_from_districts(table, prepared, slack_pct)], ignore_index=True)
    table = table.sort_values(["scope", "quantity", "subject"], ignore_index=True)
    w = prepared.grid.weight_h
    demand = float((prepared.heat_demand_kw * w[None, :]).sum()) / 1000.0
    return NearOptimalRanges(cost_case, float(slack_pct), table, demand,
                             0 if prepared.grid.is_full_year else int(settings.typical_days))


def _city_from_districts(table: pd.DataFrame, prepared, slack_pct: float) -> pd.DataFrame:
    """City-wide technology shares as demand-weighted sums of the district extremes (independent districts)."""
    w = prepared.grid.weight_h
    demand = dict(zip(prepared.district_ids, (prepared.heat_demand_kw * w[None, :]).sum(axis=1)))
    total = max(sum(demand.values()), 1e-9)
    parts = table[table["quantity"] == "technology_share"].copy()
    if parts.empty:
        return pd.DataFrame(columns=list(RANGE_COLUMNS))
    split = parts["subject"].str.split("/", n=1, expand=True)
    parts["district"], parts["technology"] = split[0], split[1]
    parts["weight"] = parts["district"].map(demand) / total
    rows = []
    for tech, group in parts.groupby("technology"):
        status = "optimal" if (group["status"] == "optimal").all() else "incomplete"
        # a district end that is unknown leaves the city's end unknown (never summed as if it were 0)
        rows.append(dict(zip(RANGE_COLUMNS, ("city", tech, "technology_share",
                                             *(float((group[c] * group["weight"]).sum(min_count=len(group))) for c in
                                               ("optimum", "minimum", "maximum")), slack_pct, status))))
    return pd.DataFrame(rows, columns=list(RANGE_COLUMNS))


FIRMNESS_SLACK_PCT = 0.2
"""Default cost slack of :func:`run_firmness` [%]: about the typical days' own cost error on the demo (0.17 % at 12
days, docs/model.md section 8), so that plans the time resolution cannot tell apart count as alternatives; far
below what uncertain prices move."""
FULL_YEAR_FIRMNESS_DAYS = 12
"""Typical days the ranges of a full-year run are solved on when its scenario names none: the full-year LPs of
the alternatives take hours (docs/model.md section 8, "How firm is a technology's heat")."""


def run_firmness(scenario: Scenario, result, slack_pct: float = FIRMNESS_SLACK_PCT, workers: int | None = None,
                 progress: Progress | None = None, cancel=None) -> NearOptimalRanges:
    """How firm each technology's city heat is in a solved run: the least and most of it among the plans that
    cost at most ``slack_pct`` more than the least-cost plan on the run's inputs, cost case and settings (its CO2
    cap, stores, limits; the objective is the least cost).

    A typical-day run's ranges are solved on its own typical days; a full-year run's on the scenario's typical
    days (or :data:`FULL_YEAR_FIRMNESS_DAYS`), as the full-year alternatives take hours: ``.typical_days`` says
    which. A wide range marks a near-tie: plans that differ there cost almost the same, so the run's figure for
    that technology is not a firm result (docs/model.md section 8).
    """
    known = {f.name for f in dataclasses.fields(Settings)}
    values = {k: v for k, v in (result.settings or {}).items() if k in known}
    values["objective"] = "cost"
    settings = Settings(**values)
    days = int(settings.typical_days or 0) or int(scenario.settings.typical_days or 0) or FULL_YEAR_FIRMNESS_DAYS
    return near_optimal_ranges(scenario, result.cost_case, slack_pct, days, workers=workers, progress=progress,
                               cancel=cancel, settings=settings)
