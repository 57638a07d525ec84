"""Solve a scenario: prepare the arrays, build the LP, solve it with HiGHS and return one :class:`RunResult`.

Without a city-wide constraint (CO2 cap, network plant limit) districts do not interact, so
:func:`solve_scenario` may solve each district as its own LP, in parallel processes, and merge the tables
(``decompose``). With a city-wide constraint the LP is solved in one piece.

``solver`` picks the solver of every LP (:mod:`engine.model.solvers`): HiGHS directly by default, or any solver
pulp drives. :func:`build_programs` builds the same LPs without solving them, for writing them to a file.
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.model.extract import UNSERVED_TOLERANCE_MWH, extract_tables
from engine.scenario.defaults import limit_from_entry
from engine.scenario.inputs import Scenario, Settings, default_cost_case, input_hash
from engine.model.formulation import DistrictModel, build_model, co2_stage_objective, solve_model, supply_units
from engine.model.lp import HighsSession, LpSolution
from engine.model.prepare import cop_bound_note, prepare_run
from engine.model.results import STATUS_SOLVED, STATUS_WITH_UNSERVED, RunResult
from engine.model.solvers import DIRECT, resolve_solver, solve_lp
from engine.progress import Cancel, Progress, no_progress
from engine.studies.permits import add_well_status


def run_settings(scenario: Scenario, objective=None, co2_cap_t_per_a=None, typical_days=None, **changes) -> Settings:
    """The scenario's settings with the given overrides (None keeps the scenario's value).

    ``co2_cap_t_per_a`` is entered as on the command line and in the dashboard: 0 removes the scenario's cap
    (the settings then hold None, no limit; :func:`engine.scenario.defaults.limit_from_entry`).
    """
    updates = dict(changes)
    if objective is not None:
        updates["objective"] = objective
    if co2_cap_t_per_a is not None:
        updates["co2_cap_t_per_a"] = limit_from_entry(co2_cap_t_per_a)
    if typical_days is not None:
        updates["typical_days"] = int(typical_days)
    return dataclasses.replace(scenario.settings, **updates)


def _has_coupling(settings: Settings) -> bool:
    return settings.co2_cap_t_per_a is not None or settings.network_plant_limit_kw is not None


@dataclass
class PartOutcome:
    """What solving one part (one district, or the whole city in one LP) gives."""

    status: str
    message: str
    tables: dict | None = None
    """The result tables of the part; None unless the status is ``optimal``."""
    build_s: float = 0.0
    solve_s: float = 0.0
    extract_s: float = 0.0
    size: dict | None = None
    """``variables``, ``constraints`` and ``nonzeros`` of the part's LP."""
    info: dict | None = None
    """What a staged CO2 solve adds (CO2 optimum, abatement step and saving)."""


PLAN_START_DAYS = 48
"""Typical days of the twin run whose plan starts a full-year LP with a store (:func:`plan_start`): more days give
a plan nearer the year's and fewer primal iterations after it; measured on three store districts of the 200-district
city (docs/model.md section 9) 48 days did better than 12, 24 and 96."""

PLAN_START = True
"""Whether full-year cost runs start their LPs with a store from the plan of the same LP on typical days."""


def attach_plan_start(scenario: Scenario, cost_case: str, settings: Settings, prepared, solver: str = DIRECT,
                      held=None) -> None:
    """Give a full-year cost run solved by HiGHS its twin on :data:`PLAN_START_DAYS` typical days
    (``prepared.plan_start``), whose capacities start the full-year LPs with a store (:func:`plan_start`)."""
    if (PLAN_START and prepared.fixed_new is None and settings.typical_days == 0 and settings.objective == "cost" and solver == DIRECT
            and held is None and prepared.n_steps > 24 * (PLAN_START_DAYS + 3)):
        prepared.plan_start = prepare_run(scenario, cost_case,
                                          dataclasses.replace(settings, typical_days=PLAN_START_DAYS))


def plan_capacities(plan: pd.DataFrame) -> dict:
    """``(district_id, technology_id, well_id)`` -> new capacity [kW; kWh for stores] of a plan table (a result's
    ``supply`` table); a blank well id is "" (a unit off the wells)."""
    missing = [c for c in ("district_id", "technology_id", "new_kw") if c not in plan.columns]
    if missing:
        raise ValueError(f"a plan needs the columns {', '.join(missing)}")
    wells = plan["well_id"].fillna("").astype(str) if "well_id" in plan.columns else pd.Series("", index=plan.index)
    keys = zip(plan["district_id"].astype(str), plan["technology_id"].astype(str), wells)
    values = pd.to_numeric(plan["new_kw"], errors="coerce").fillna(0.0).to_numpy(float)
    return {key: float(v) for key, v in zip(keys, values)}


def held_plan_hash(inputs_hash: str, plan: dict) -> str:
    """The fingerprint of a run whose new capacities are held at ``plan`` (:func:`plan_capacities`) on inputs of
    fingerprint ``inputs_hash``: SHA-256 over both, capacities to the watt. A run with a held plan is a plan's
    dispatch, not the optimum of its inputs, so it must never answer for a run of those inputs alone (the library
    hands back a saved run of the same fingerprint without solving); the same plan on the same inputs gives the
    same fingerprint."""
    entries = ";".join(f"{d}/{t}/{w}={v:.3f}" for (d, t, w), v in sorted(plan.items()))
    return hashlib.sha256(f"{inputs_hash}|held plan|{entries}".encode()).hexdigest()


def plan_start(prepared, districts, model: DistrictModel, cancel=None):
    """Where to start the full-year LP ``model`` of ``districts``: ``(columns, values)`` of its new capacities
    (units and stores) at the optimum of the same districts' LP on typical days (``prepared.plan_start``), or
    None (no twin, no store in the LP, another set of units, or no optimum on typical days).

    The answer stays the full-year LP's own optimum (:meth:`engine.model.lp.HighsSession.solve_from_fixed`): the
    typical-day plan only chooses the vertex the simplex method starts from. Measured in docs/model.md section 9
    ("The plan start"): full-year LPs with a store solve 1.6 to 4 times faster, LPs without one gain little or
    lose, so they start as before.
    """
    twin = prepared.plan_start
    if twin is None or not len(model.stores.technology_id):
        return None
    started = time.perf_counter()
    try:
        return _plan_start(twin, districts, model, cancel)
    finally:
        model.build_s += time.perf_counter() - started  # the start is part of building the LP


def _plan_start(twin, districts, model: DistrictModel, cancel=None):
    small = build_model(twin, districts)
    same = (small.units.technology_id == model.units.technology_id
            and np.array_equal(small.units.district, model.units.district)
            and np.array_equal(small.units.well, model.units.well)
            and small.stores.technology_id == model.stores.technology_id
            and np.array_equal(small.stores.district, model.stores.district))
    if not same:
        return None
    small.lp.set_objective(small.money)
    solution = small.lp.solve(cancel=cancel)
    if solution.status != "optimal":
        return None
    new = np.r_[small.cols["new"].ravel(), small.cols["store_new"].ravel()]
    return np.r_[model.cols["new"].ravel(), model.cols["store_new"].ravel()], solution.x[new]


def _solve_part(prepared, districts, objective, time_limit_s, cancel=None, solver=DIRECT, held=None) -> PartOutcome:
    model = build_model(prepared, districts)
    within = float(getattr(prepared.settings, "co2_within_cost_pct", 0.0) or 0.0)
    if held is not None and objective == "cost" and solver == DIRECT:
        solution = held.solve(model, districts, time_limit_s, cancel)
    else:
        start = plan_start(prepared, districts, model, cancel) if objective == "cost" and solver == DIRECT else None
        solution = solve_model(model, objective, time_limit_s=time_limit_s, cancel=cancel, solver=solver,
                               co2_within_cost_pct=within, fixed_start=start)
    started = time.perf_counter()
    tables = extract_tables(model, solution) if solution.status == "optimal" else None
    extract_s = time.perf_counter() - started
    size = {"variables": model.lp.n_cols, "constraints": model.lp.n_rows, "nonzeros": model.lp.n_nonzeros}
    return PartOutcome(solution.status, solution.message, tables, model.build_s, solution.solve_s, extract_s, size,
                       solution.info)


def lowest_co2_without_unserved(prepared, time_limit_s=None, cancel=None, solver=DIRECT) -> tuple[float | None, list[str]]:
    """The least CO2 [t/a] any plan reaches that serves all heat and cooling (no CO2 cap), or None and the
    districts where no plan serves everything with the allowed supply."""
    settings = dataclasses.replace(prepared.settings, allow_unserved_heat=False, co2_cap_t_per_a=None)
    strict = dataclasses.replace(prepared, settings=settings)
    coupled = settings.network_plant_limit_kw is not None
    n_d = len(prepared.district_ids)
    parts = [list(range(n_d))] if coupled else [[i] for i in range(n_d)]
    total, failed = 0.0, []
    for part in parts:
        model = build_model(strict, part)
        model.lp.set_objective(model.emissions)
        solution = solve_lp(model.lp, solver, time_limit_s=time_limit_s, cancel=cancel)
        if solution.status != "optimal":
            failed += [prepared.district_ids[i] for i in part]
            continue
        total += float(model.emissions @ solution.x)
    return (None if failed else total), failed


def _not_servable(prepared, district_ids, time_limit_s=None, cancel=None, solver=DIRECT) -> list[str]:
    """Of ``district_ids``, those where no plan serves all heat and cooling with the supply allowed (each
    district's LP with unserved heat switched off and no objective: a feasibility check; the city LP at once
    where a network plant limit couples the districts)."""
    if not district_ids:
        return []
    settings = dataclasses.replace(prepared.settings, allow_unserved_heat=False, co2_cap_t_per_a=None)
    strict = dataclasses.replace(prepared, settings=settings)
    index = {d: i for i, d in enumerate(prepared.district_ids)}
    wanted = [index[d] for d in district_ids if d in index]
    parts = [list(range(len(prepared.district_ids)))] if settings.network_plant_limit_kw is not None else [
        [i] for i in wanted]
    failed = []
    for part in parts:
        model = build_model(strict, part)
        model.lp.set_objective(np.zeros(model.lp.n_cols))
        solution = solve_lp(model.lp, solver, time_limit_s=time_limit_s, cancel=cancel)
        if solution.status != "optimal":
            failed += [prepared.district_ids[i] for i in part if i in wanted]
    return failed


def unserved_message(result: RunResult, prepared, settings: Settings, time_limit_s=None, cancel=None,
                     solver=DIRECT) -> str:
    """The warning of a run that leaves heat unserved.

    With a CO2 cap or the CO2 objective it states the lowest CO2 reachable without unserved heat (one more solve
    of every district, :func:`lowest_co2_without_unserved`): that tells whether the cap, not the supply, is what
    leaves the heat unserved. A least-cost run without a cap names the districts that leave heat unserved
    instead, split by a feasibility check of just those districts (:func:`_not_servable`) into those whose
    allowed supply cannot serve it and those where serving it costs more than the price of unserved heat."""
    unserved = result.unserved_heat_mwh_per_a
    share = 100 * unserved / result.heat_demand_mwh_per_a if result.heat_demand_mwh_per_a > 0 else 0.0
    text = (f"Solved, but {unserved:,.0f} MWh/a of heat demand ({share:.1f} %) is left unserved (priced at "
            f"{settings.value_of_unserved_heat_eur_per_mwh:,.0f} EUR/MWh): this is not a plan that supplies the city.")
    if prepared.fixed_new is not None:  # the capacities are a given plan's: no other plan is asked about
        districts = result.tables.get("districts") if result.tables else None
        if districts is not None and "unserved_heat_mwh_per_a" in districts:
            short = districts[districts["unserved_heat_mwh_per_a"] > 0.05].sort_values(
                "unserved_heat_mwh_per_a", ascending=False)
            shown = ", ".join(f"{d} ({v:,.1f} MWh/a)" for d, v in
                              zip(short["district_id"].astype(str)[:5], short["unserved_heat_mwh_per_a"][:5]))
            more = f" and {len(short) - 5} more" if len(short) > 5 else ""
            text += f" With the plan's capacities held, the heat is short in {shown}{more}."
        return text
    if settings.co2_cap_t_per_a is None and settings.objective == "cost":
        districts = result.tables.get("districts") if result.tables else None
        if districts is None or "unserved_heat_mwh_per_a" not in districts:
            return text
        short = districts[districts["unserved_heat_mwh_per_a"] > 0.05].sort_values(
            "unserved_heat_mwh_per_a", ascending=False)
        named = list(short["district_id"].astype(str))
        amount = dict(zip(named, short["unserved_heat_mwh_per_a"]))
        cannot = _not_servable(prepared, named, time_limit_s, cancel, solver)

        def listed(ids):
            shown = ", ".join(f"{d} ({amount[d]:,.1f} MWh/a)" for d in ids[:5])
            return shown + (f" and {len(ids) - 5} more" if len(ids) > 5 else "")

        if cannot:
            text += (" No plan serves all the heat with the allowed supply in " + listed(cannot)
                     + " (see potential_kw, the connection limits and the well permits).")
        cheaper = [d for d in named if d not in cannot]
        if cheaper:
            text += (" In " + listed(cheaper) + " serving it would cost more than the price of unserved heat "
                     "(usually a few peak hours: raise that price to serve them).")
        return text
    floor, failed = lowest_co2_without_unserved(prepared, time_limit_s, cancel, solver)
    if floor is None:
        return text + (" No plan serves all the heat with the allowed supply in district(s) " + ", ".join(failed)
                       + " (see potential_kw, the connection limits and the well permits).")
    text += f" The lowest CO2 reachable without unserved heat is {floor:,.0f} t/a"
    if settings.co2_cap_t_per_a is not None and settings.co2_cap_t_per_a < floor:
        text += f"; the CO2 cap of {settings.co2_cap_t_per_a:,.0f} t/a lies below it and is met only by leaving heat unserved"
    result.extras["lowest_co2_without_unserved_t_per_a"] = floor
    return text + "."


STITCH_MAX_COLUMNS = 2_000_000
"""Largest city LP (columns) whose district solutions are read in one pass (:func:`stitched_solution`)."""


def stitched_solution(city: DistrictModel, models: list[DistrictModel], solutions: list[LpSolution]):
    """The solutions of the district LPs written into the columns and rows of the city LP ``city``, or None.

    Without a city-wide row the city LP is the district LPs side by side: each variable block (and each row
    block) of the city is the districts' blocks stacked along the first axis, in district order. Reading the
    tables once from the city LP instead of once per district saves pandas' fixed cost per table (0.4 s of the
    demo's 2 s). The stacking is checked, not assumed: the blocks' shapes must add up, the stacked point must
    satisfy the city LP's bounds and rows (to 1e-6 relative) and give the sum of the districts' objectives;
    otherwise None, and the caller reads each district on its own.
    """
    lp = city.lp
    x = np.empty(lp.n_cols)
    for name, (start, shape) in lp.var_blocks.items():
        pieces = []
        for m, sol in zip(models, solutions):
            d_start, d_shape = m.lp.var_blocks[name]
            if d_shape[1:] != shape[1:]:
                return None
            pieces.append(sol.x[d_start:d_start + int(np.prod(d_shape))].reshape(d_shape))
        block = np.concatenate(pieces, axis=0) if pieces else np.zeros(shape)
        if block.shape != shape:
            return None
        x[start:start + block.size] = block.ravel()
    dual = np.full(lp.n_rows, np.nan)
    for name, index in city.rows.items():
        pieces = [sol.row_dual[m.rows[name]] for m, sol in zip(models, solutions)
                  if name in m.rows and sol.row_dual is not None]
        if len(pieces) == len(models):
            block = np.concatenate(pieces, axis=0)
            if block.shape == index.shape:
                dual[index] = block
    tol = 1e-6
    activity = lp.matrix() @ x
    scale = 1.0 + np.abs(activity)
    if (np.any(x < lp.col_lower - tol * (1 + np.abs(x))) or np.any(x > lp.col_upper + tol * (1 + np.abs(x)))
            or np.any(activity < lp.row_lower - tol * scale) or np.any(activity > lp.row_upper + tol * scale)):
        return None
    objective = float(city.money @ x)
    parts = sum(float(m.money @ sol.x) for m, sol in zip(models, solutions))
    if abs(objective - parts) > 1e-9 * max(1.0, abs(parts)):
        return None
    solve_s = sum(sol.solve_s for sol in solutions)
    return LpSolution("optimal", "Optimal solution found.", objective=objective, x=x, row_dual=dual, solve_s=solve_s)


def district_major(tables: dict[str, pd.DataFrame], district_ids) -> dict[str, pd.DataFrame]:
    """``tables`` with their rows in the order the per-district tables give when stacked: a stable sort by the
    district's position (a table without ``district_id`` but with ``well_id`` by the district of the well)."""
    position = {d: k for k, d in enumerate(district_ids)}
    wells = tables.get("wells")
    well_district = {}
    if wells is not None and "district_id" in wells and "well_id" in wells:
        well_district = dict(zip(wells["well_id"], wells["district_id"].map(position)))
    out = {}
    for name, table in tables.items():
        if "district_id" in table.columns:
            key = table["district_id"].map(position)
        elif "well_id" in table.columns and well_district:
            key = table["well_id"].map(well_district)
        else:
            out[name] = table
            continue
        order = np.argsort(key.to_numpy(float), kind="stable")
        out[name] = table.iloc[order].reset_index(drop=True)
    return out


class HeldModels:
    """District LPs kept in HiGHS from one run to the next, for a series of runs of one city.

    A sweep over cost cases solves LPs whose matrix and bounds are the same from case to case; only the objective
    changes. Passed to :func:`solve_scenario` as ``held``, each district LP is checked against the one held for
    the same district (matrix, column and row bounds equal entry for entry); where they agree only the costs are
    handed to HiGHS (``changeColsCost``) and the solve starts from the last optimal basis (primal simplex: the
    old optimum stays feasible). Where they differ the new LP replaces the held one.

    With ``coefficients=True`` (a series whose runs change coefficients and bounds as well: the interference
    check's source temperatures change COPs, flows per kW and usable hours) a held LP with the same layout
    (columns, rows, blocks) is changed in place instead: HiGHS is handed only the matrix entries, costs and bounds
    that differ (:meth:`engine.model.lp.HighsSession.replace`) and solves from the last basis; an LP of another
    layout is solved from scratch and held in its place. Either way the LP HiGHS solves is the new LP, entry for
    entry.

    Cost objective, HiGHS directly, LPs solved in the calling process (a decomposed run district by district, a
    coupled run as one city LP); other runs ignore it.
    """

    def __init__(self, coefficients: bool = False):
        self.coefficients = bool(coefficients)
        self._held: dict[tuple, tuple] = {}  # district indices -> (model, HighsSession)
        self._cancel = None
        self.reused = 0
        """Solves that started from a held model."""
        self.fresh = 0
        """Solves from scratch (a new LP, or one whose layout differs from the held one)."""
        self.handed: dict[str, int] = {}
        """With ``coefficients``: the counts :meth:`engine.model.lp.HighsSession.replace` handed HiGHS, summed."""

    def _cancelled(self) -> bool:
        return bool(self._cancel is not None and self._cancel())

    @staticmethod
    def _same_structure(a: DistrictModel, b: DistrictModel) -> bool:
        la, lb = a.lp, b.lp
        if (la.n_cols, la.n_rows) != (lb.n_cols, lb.n_rows) or la.var_blocks != lb.var_blocks:
            return False
        ma, mb = la.matrix(), lb.matrix()
        return (np.array_equal(la.col_lower, lb.col_lower) and np.array_equal(la.col_upper, lb.col_upper)
                and np.array_equal(la.row_lower, lb.row_lower) and np.array_equal(la.row_upper, lb.row_upper)
                and np.array_equal(ma.indptr, mb.indptr) and np.array_equal(ma.indices, mb.indices)
                and np.array_equal(ma.data, mb.data))

    def solve(self, model: DistrictModel, part, time_limit_s=None, cancel=None) -> LpSolution:
        """Minimise ``model.money`` over ``model``'s LP, from the held LP of ``part`` where it may be reused."""
        self._cancel = cancel
        key = tuple(int(i) for i in part)
        held = self._held.get(key)
        if held is not None and self.coefficients:
            model.lp.set_objective(model.money)
            session = held[1]
            handed = session.replace(model.lp)
            if handed is not None:
                self.reused += 1
                for name, count in handed.items():
                    self.handed[name] = self.handed.get(name, 0) + count
                solution = session.solve()
                if solution.status == "optimal":
                    self._held[key] = (model, session)
                else:
                    del self._held[key]
                return solution
        elif held is not None and self._same_structure(held[0], model):
            held_model, session = held
            held_model.lp.set_objective(model.money)
            self.reused += 1
            return session.solve()
        model.lp.set_objective(model.money)
        # a run without cancel gets no interrupt callback (HiGHS calls it during the simplex iterations)
        session = HighsSession(model.lp, time_limit_s, cancel=None if cancel is None else self._cancelled)
        solution = session.solve()
        self.fresh += 1
        if solution.status == "optimal":
            self._held[key] = (model, session)
        return solution


def _solve_serial_stitched(prepared, parts, objective, time_limit_s, cancel, solver, report, held=None):
    """Solve the district LPs one after the other; read their tables in one pass over the city LP.

    Returns ``(city, outcomes)``: ``city`` True with ``{0: PartOutcome}`` for the city as a whole; False with one
    outcome per district solved (read one by one: the city LP would be larger than
    :data:`STITCH_MAX_COLUMNS`, the stacking did not check out, or a district failed, which ends the run)."""
    models, solutions, outcomes = [], [], {}
    for k, p in enumerate(parts):
        model = build_model(prepared, p)
        if held is not None:
            solution = held.solve(model, p, time_limit_s, cancel)
        else:
            start = plan_start(prepared, p, model, cancel) if objective == "cost" and solver == DIRECT else None
            solution = solve_model(model, objective, time_limit_s=time_limit_s, cancel=cancel, solver=solver,
                                   fixed_start=start)
        report(0.1 + 0.8 * (k + 1) / len(parts), f"Solved {k + 1} of {len(parts)}")
        if models and (solution.status != "optimal"
                       or sum(m.lp.n_cols for m in models) + model.lp.n_cols > STITCH_MAX_COLUMNS):
            outcomes.update({j: part_outcome(m, sol) for j, (m, sol) in enumerate(zip(models, solutions))})
            models, solutions = [], []
        if outcomes or solution.status != "optimal":
            outcomes[k] = part_outcome(model, solution)
            if solution.status != "optimal":
                return False, outcomes
            continue
        models.append(model)
        solutions.append(solution)
    if outcomes:
        return False, outcomes
    starts = sum(bool(sol.info.get("fixed_start", {}).get("used")) for sol in solutions)
    city = build_model(prepared, [i for p in parts for i in p])
    city.lp.set_objective(city.money)
    solution = stitched_solution(city, models, solutions)
    if solution is None:
        return False, {j: part_outcome(m, sol) for j, (m, sol) in enumerate(zip(models, solutions))}
    started = time.perf_counter()
    tables = district_major(extract_tables(city, solution), prepared.district_ids)
    size = {"variables": sum(m.lp.n_cols for m in models), "constraints": sum(m.lp.n_rows for m in models),
            "nonzeros": sum(m.lp.n_nonzeros for m in models)}
    return True, {0: PartOutcome("optimal", solution.message, tables, sum(m.build_s for m in models) + city.build_s,
                                 solution.solve_s, time.perf_counter() - started, size,
                                 {"plan_starts_used": starts} if starts else None)}


def part_outcome(model, solution) -> PartOutcome:
    """The outcome of one solved LP: its tables (when optimal), timings and size."""
    started = time.perf_counter()
    tables = extract_tables(model, solution) if solution.status == "optimal" else None
    size = {"variables": model.lp.n_cols, "constraints": model.lp.n_rows, "nonzeros": model.lp.n_nonzeros}
    return PartOutcome(solution.status, solution.message, tables, model.build_s, solution.solve_s,
                       time.perf_counter() - started, size, solution.info)


def part_work(prepared, districts) -> float:
    """A rough relative solve effort of one part, for scheduling: steps times units, a heat store as forty units.

    On the synthetic benchmark city's full-year district LPs, HiGHS needed about 0.17 s per supply unit and about
    7 s more for a heat store (its level chain runs through the whole year), so parts with stores start first.
    """
    units, stores = supply_units(prepared, np.asarray(districts, dtype=int))
    return float(prepared.n_steps * (len(units.technology_id) + 40 * len(stores.technology_id)))


PARALLEL_WORK = 5e5
"""Least summed :func:`part_work` of a run for which a process pool pays (about five seconds of HiGHS).

Starting a pool and sending it the prepared run costs about half a second on two cores; below this size the
districts are solved one after the other in the calling process. Measured on the demo city: 11 district LPs at
12 typical days (work 1.5e5) took 2.5 s with two workers and 2.1 s with one; the synthetic benchmark city's 10
full-year districts (work 1.1e6, about 18 s of HiGHS) gain from two workers."""


def choose_workers(prepared, parts, workers: int | None = None) -> int:
    """The number of worker processes for ``parts``: ``workers`` if given, else 1 for a run whose summed
    :func:`part_work` is below :data:`PARALLEL_WORK` (or a single LP), else one per core up to one per LP."""
    if workers is not None:
        return max(1, int(workers))
    if len(parts) < 2:
        return 1
    work = part_work(prepared, sorted(i for p in parts for i in p))  # one call: the sum over the parts
    return min(len(parts), os.cpu_count() or 1) if work >= PARALLEL_WORK else 1


_WORKER_STATE: dict = {}


def _worker_init(prepared):
    _WORKER_STATE["prepared"] = prepared


def _worker_solve(args):
    districts, objective, time_limit_s, solver = args
    return _solve_part(_WORKER_STATE["prepared"], districts, objective, time_limit_s, solver=solver)


def merge_tables(parts: list[dict]) -> dict[str, pd.DataFrame]:
    """Concatenate per-district tables; the time tables are the same in every part."""
    merged = {}
    for name in parts[0]:
        if name in ("steps", "day_map"):
            merged[name] = parts[0][name]
            continue
        # empty pieces (a district without wells) would turn every column into object dtype
        pieces = [p[name] for p in parts if len(p[name])] or [parts[0][name]]
        merged[name] = pd.concat(pieces, ignore_index=True)
    return merged


def failure_message(status: str, message: str, where: str) -> str:
    hints = {
        "infeasible": "The model has no feasible solution.",
        "unbounded": "The model is unbounded: some cost can fall without limit.",
        "time_limit": "The solver hit its time limit before reaching the optimum; try fewer typical days or a "
        "longer time limit.",
        "interrupted": "The solve was cancelled.",
    }
    return f"{hints.get(status, 'The solver failed.')} {where} ({message})"


def district_supply_limits(prepared, district: int) -> list[str]:
    """Plain reasons why one district cannot meet its demand with the supply it is allowed (empty if none found)."""
    units, stores = supply_units(prepared, np.array([district]))
    reasons = []
    did = prepared.district_ids[district]
    for cooling, label, demand in (
        (False, "heat", prepared.heat_demand_kw[district]),
        (True, "cooling", prepared.cooling_demand_kw[district]),
    ):
        peak = float(demand.max()) if demand.size else 0.0
        if peak <= 0:
            continue
        chosen = units.serves_cooling == cooling
        if not chosen.any():
            reasons.append(f"district {did} has a {label} demand (peak {peak:,.0f} kW) but no technology that may "
                           f"supply {label} there")
            continue
        finite_upper = np.where(np.isfinite(units.output_upper[chosen]), units.output_upper[chosen], np.inf)
        most = (np.minimum(units.existing_kw[chosen] + units.max_new_kw[chosen], finite_upper.max(axis=1))).sum()
        if not cooling and len(stores.technology_id):
            most += np.inf if np.isinf(stores.max_new_kwh).any() else 0.0
        if np.isfinite(most) and most < peak * (1 - 1e-9):
            reasons.append(
                f"district {did}: peak {label} demand {peak:,.0f} kW exceeds the most its technologies may supply "
                f"({most:,.0f} kW; see potential_kw in district_technologies.csv, the connection limit and the well "
                "permits)"
            )
    return reasons


def diagnose_failure(prepared, settings: Settings, status: str, districts: list[int]) -> str:
    """Name the districts or city-wide constraints behind an infeasible or unbounded model."""
    if status == "unbounded":
        hourly = prepared.scenario.hourly
        negative = [c for c in ("electricity_price_eur_per_mwh", "network_price_eur_per_mwh")
                    if (hourly[c] < 0).any()]
        rows = ", ".join(f"{c} (first at row {int(np.argmax(hourly[c].to_numpy() < 0)) + 2} of hourly.csv)"
                         for c in negative)
        return ("Negative prices let a store or boiler earn money without limit: " + rows) if negative else (
            "Check for negative prices or costs in the inputs."
        )
    if status != "infeasible":
        return ""
    reasons = []
    for i in districts:
        reasons += district_supply_limits(prepared, i)
    if reasons:
        return "; ".join(reasons) + "."
    coupling = []
    if settings.co2_cap_t_per_a is not None:
        coupling.append(f"the city-wide CO2 cap of {settings.co2_cap_t_per_a:,.0f} t/a")
    if settings.network_plant_limit_kw is not None:
        coupling.append(f"the network plant limit of {settings.network_plant_limit_kw:,.0f} kW")
    if coupling:
        return ("Every district can be supplied on its own, so " + " and ".join(coupling)
                + " cannot be met with unserved heat switched off.")
    if not settings.allow_unserved_heat:
        return "With unserved heat switched off, some hour of some district cannot be supplied (check well permits " \
               "and the reinjection window, which can leave a well unusable in winter)."
    return "Check the inputs for contradictions."


def plan_parts(prepared, settings: Settings, decompose: bool | str = "auto") -> tuple[bool, list[list[int]]]:
    """Whether the run is decomposed, and the district indices of each LP (one per district, or one for all)."""
    n_d = len(prepared.district_ids)
    if decompose == "auto":
        decompose = n_d > 1 and not _has_coupling(settings)
    if decompose and _has_coupling(settings):
        raise ValueError("a city-wide CO2 cap or network plant limit couples the districts: solve without decompose")
    return bool(decompose), ([[i] for i in range(n_d)] if decompose else [list(range(n_d))])


def build_programs(
    scenario: Scenario,
    cost_case: str | None = None,
    settings: Settings | None = None,
    decompose: bool | str = "auto",
) -> list[tuple[str, DistrictModel]]:
    """The LPs :func:`solve_scenario` would solve, built but not solved, each with its objective set.

    Returns ``(label, model)`` pairs: the label is the district's id when the run is decomposed (one LP per
    district), else ``"city"``. A cost objective is set as is; a CO2 objective is solved in two stages, and the
    program returned carries the first (least CO2, unserved demand counted at its CO2 equivalent).
    """
    cost_case = cost_case or default_cost_case(scenario.cost_cases)
    settings = settings or scenario.settings
    prepared = prepare_run(scenario, cost_case, settings)
    decomposed, parts = plan_parts(prepared, settings, decompose)
    programs = []
    for part in parts:
        model = build_model(prepared, part)
        if settings.objective == "co2":
            model.lp.set_objective(co2_stage_objective(model)[0])
        else:
            model.lp.set_objective(model.money)
        label = str(prepared.district_ids[part[0]]) if decomposed else "city"
        programs.append((label, model))
    return programs


def solve_scenario(
    scenario: Scenario,
    cost_case: str | None = None,
    objective: str | None = None,
    co2_cap_t_per_a: float | None = None,
    typical_days: int | None = None,
    decompose: bool | str = "auto",
    workers: int | None = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    time_limit_s: float | None = None,
    settings: Settings | None = None,
    solver: str = DIRECT,
    co2_within_cost_pct: float | None = None,
    held: HeldModels | None = None,
    fixed_plan: pd.DataFrame | None = None,
) -> RunResult:
    """Solve ``scenario`` under ``cost_case`` and return the result (never raises for solver failures).

    ``solver`` is ``"highs"`` (HiGHS directly, the default) or a pulp solver (``"cbc"``, ``"pulp:NAME"``; see
    :mod:`engine.model.solvers`); an unknown or unavailable name raises
    :class:`engine.model.solvers.SolverChoiceError` before anything is solved. ``model_size["solver"]`` records it.
    ``co2_within_cost_pct`` (with the CO2 objective): the least CO2 at a cost at most that many percent above
    the least cost, bounded per solved LP (each district when decomposed).
    ``held`` (:class:`HeldModels`) keeps the LPs of a cost run solved in this process (each district of a
    decomposed run, or the one city LP of a coupled run) in HiGHS for the next run of a series: one that changes
    only costs (a sweep over cost cases), or with ``HeldModels(coefficients=True)`` also coefficients and bounds
    (the interference check); the answer is the same LP's optimum. Pass ``workers=1``: LPs solved in a process
    pool are not held.
    ``fixed_plan`` (a result's ``supply`` table, or any table with ``district_id``, ``technology_id``, ``well_id``
    and ``new_kw``) fixes the new capacities at that plan's (kWh for stores; units it does not name build none):
    the run is then the plan's dispatch, as in :func:`engine.studies.year_check.check_over_year`; its
    ``input_hash`` is :func:`held_plan_hash` of the inputs' (kept in ``extras["fixed_plan"]["inputs_hash"]``).
    """
    started = time.perf_counter()
    solver = resolve_solver(solver)
    report = progress or no_progress
    cost_case = cost_case or default_cost_case(scenario.cost_cases)
    settings = settings or run_settings(scenario, objective, co2_cap_t_per_a, typical_days,
                                        **({} if co2_within_cost_pct is None else
                                           {"co2_within_cost_pct": float(co2_within_cost_pct)}))
    if settings.co2_within_cost_pct < 0:
        raise ValueError(f"co2_within_cost_pct must be >= 0, got {settings.co2_within_cost_pct!r}")
    if settings.objective not in ("cost", "co2"):
        raise ValueError(f"objective must be 'cost' or 'co2', got {settings.objective!r}")
    result = RunResult(
        status="error",
        message="",
        objective=settings.objective,
        cost_case=cost_case,
        input_hash=input_hash(scenario, cost_case, settings),
        scenario_name=settings.name,
        settings=dataclasses.asdict(settings),
    )
    report(0.02, "Preparing demand, COPs and the time grid")
    prepared = prepare_run(scenario, cost_case, settings)
    if fixed_plan is not None:
        prepared.fixed_new = plan_capacities(fixed_plan)
        result.extras["fixed_plan"] = {"units": len(prepared.fixed_new), "inputs_hash": result.input_hash}
        result.input_hash = held_plan_hash(result.input_hash, prepared.fixed_new)
    attach_plan_start(scenario, cost_case, settings, prepared, solver, held)
    result.extras["time_aggregation"] = prepared.aggregation
    result.extras["cop_bounds"] = prepared.cop_bounds
    prepare_s = time.perf_counter() - started
    decompose, parts = plan_parts(prepared, settings, decompose)
    workers = choose_workers(prepared, parts, workers)
    report(0.1, f"Building and solving {len(parts)} linear program(s)")
    done: dict[int, PartOutcome] = {}  # part index -> outcome
    if workers > 1 and len(parts) > 1:
        # largest first, so that no worker is left with a long store LP while the other idles at the end
        order = sorted(range(len(parts)), key=lambda k: -part_work(prepared, parts[k]))
        with ProcessPoolExecutor(max_workers=workers, initializer=_worker_init, initargs=(prepared,)) as pool:
            futures = {pool.submit(_worker_solve, (parts[k], settings.objective, time_limit_s, solver)): k
                       for k in order}
            for future in as_completed(futures):
                done[futures[future]] = future.result()
                report(0.1 + 0.85 * len(done) / len(parts), f"Solved {len(done)} of {len(parts)}")
                if cancel is not None and cancel():
                    for f in futures:
                        f.cancel()
                    break
    else:
        # one-pass reading for cost runs; a CO2 run's stages carry per-district information read part by part
        if decompose and len(parts) > 1 and solver == DIRECT and settings.objective == "cost":
            city, outcomes = _solve_serial_stitched(prepared, parts, settings.objective, time_limit_s, cancel, solver,
                                                    report, held)
            if city:
                finish_result(result, scenario, prepared, settings, [sum(parts, [])], outcomes, decompose, solver,
                              time_limit_s, cancel)
                result.model_size["linear_programs"] = len(parts)
                result.timings_s = {"prepare": round(prepare_s, 4), **result.timings_s,
                                    "total": round(time.perf_counter() - started, 4)}
                report(1.0, "Done")
                return result
            done.update(outcomes)
        for k, p in enumerate(parts if not done else []):
            done[k] = _solve_part(prepared, p, settings.objective, time_limit_s, cancel, solver, held)
            report(0.1 + 0.85 * (k + 1) / len(parts), f"Solved {k + 1} of {len(parts)}")
            if done[k].status != "optimal":
                break
    finish_result(result, scenario, prepared, settings, parts, done, decompose, solver, time_limit_s, cancel)
    result.timings_s = {"prepare": round(prepare_s, 4), **result.timings_s,
                        "total": round(time.perf_counter() - started, 4)}
    report(1.0, "Done")
    return result


def finish_result(result: RunResult, scenario: Scenario, prepared, settings: Settings, parts: list[list[int]],
                  done: dict[int, PartOutcome], decompose: bool, solver: str, time_limit_s=None,
                  cancel: Cancel | None = None) -> RunResult:
    """Fill ``result`` from the outcomes of its parts: model size, status and message, merged tables and well
    status, and the summed stage timings (``prepare`` and ``total`` are the caller's). ``time_limit_s`` and
    ``cancel`` apply to the extra solve that finds the lowest CO2 without unserved heat, when heat is unserved."""
    outcomes = [done[k] for k in sorted(done)]
    size = {key: int(sum(o.size[key] for o in outcomes if o.size)) for key in ("variables", "constraints", "nonzeros")}
    size["linear_programs"] = len(parts)
    size["solver"] = solver
    result.model_size = size
    failed = [(k, done[k]) for k in sorted(done) if done[k].status != "optimal"]
    if len(done) < len(parts) and not failed:
        missing = min(k for k in range(len(parts)) if k not in done)
        failed = [(missing, PartOutcome("interrupted", "cancelled"))]
    if failed:
        k, o = failed[0]
        where = diagnose_failure(prepared, settings, o.status, parts[k])
        if not where:
            where = ("In district " + ", ".join(prepared.district_ids[i] for i in parts[k]) + "."
                     if decompose else "In the city-wide model.")
        result.status = o.status
        result.message = failure_message(o.status, o.message, where)
    else:
        result.tables = merge_tables([done[k].tables for k in range(len(parts))])
        result.status = STATUS_SOLVED
        add_well_status(result, scenario)
        abatement_text = ""
        if settings.objective == "co2":
            infos = [o.info for o in outcomes if o.info]
            step = sum(i.get("abatement_step_t_per_a", 0.0) for i in infos)
            saving = sum(i.get("abatement_saving_eur_per_a", 0.0) for i in infos)
            co2_info = {"abatement_step_t_per_a": step,
                        "last_tonnes_abatement_cost_eur_per_t": saving / step if step > 0 else None}
            if any("cost_limit_eur_per_a" in i for i in infos):
                co2_info["within_cost_pct"] = settings.co2_within_cost_pct
            result.extras["co2_objective"] = co2_info
            if step > 0:
                abatement_text = (f" The last {step:,.1f} t/a of CO2 avoided cost {saving / step:,.0f} EUR/t "
                                  "(abatement cost of the last tonnes).")
        # a COP clip that binds for a heat pump the plan uses is said where the planner reads the run
        supply = result.tables["supply"]
        used = set(supply.loc[supply["heat_mwh_per_a"] > 0, "technology_id"].astype(str))
        cop_text = cop_bound_note(prepared.cop_bounds, used)
        abatement_text += f" {cop_text}" if cop_text else ""
        result.message = "Optimal solution found." + abatement_text
        if result.unserved_heat_mwh_per_a > UNSERVED_TOLERANCE_MWH:
            result.status = STATUS_WITH_UNSERVED
            result.message = unserved_message(result, prepared, settings, time_limit_s, cancel,
                                              solver) + abatement_text
    infos = [o.info or {} for o in outcomes]
    starts = sum(i.get("plan_starts_used", int(bool(i.get("fixed_start", {}).get("used")))) for i in infos)
    if prepared.plan_start is not None:  # full-year LPs started from their typical-day twin's plan
        result.model_size["plan_start_lps"] = int(starts)
    result.timings_s = {
        "build": round(sum(o.build_s for o in outcomes), 4),
        "solve": round(sum(o.solve_s for o in outcomes), 4),
        "extract": round(sum(o.extract_s for o in outcomes), 4),
    }
    return result
