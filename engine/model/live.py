"""A city LP kept in HiGHS between solves, for studies that change only a bound, the costs or a row.

A trade-off curve solves the same city LP again and again with another bound on the city's CO2; a price search
solves it with another CO2 price. Building the LP and handing it to HiGHS each time costs more than the change,
and a solve from scratch throws away the basis of the previous one. :class:`LiveCityModel` builds the LP of the
whole city once (with a city-wide CO2 row whose bound starts at "no limit"), keeps it in one ``highspy.Highs``,
and for each request changes what differs (``changeRowBounds`` on the CO2 row, ``changeColsCost`` for the
objective) and runs HiGHS again from the basis it holds (dual simplex after a bound change, primal after a cost
change: HiGHS chooses). :class:`LiveDistricts` does the same for every district LP of a decomposed run.

Measured on the demo city (12 typical days): the five bounded points of a seven-point curve took 20 s warm and
42 s solved from scratch; the whole curve 13 s, where building and solving every point took 37 s. A bounded
city LP stays dearer than the whole decomposed run (HiGHS re-solves it without presolve, at several times the
cost per iteration), so the bounded points are most of a curve's time. The first solve without a bound goes
district by district (:meth:`LiveCityModel._run_by_district`): the districts' solutions and bases, stacked into
the city LP (:func:`stacked_basis`), give the least-cost point at the price of a decomposed run and a warm start
for the first bounded point.

The programs solved are the same as :func:`engine.model.solve.solve_scenario` would build for the same settings
(a CO2 row with no limit is a free row); the results are read by the same extraction, so a point of a study is
the same run as a solve from scratch, up to the solver's tolerances and the choice among equally cheap plans.

Only the direct HiGHS solver keeps a model between solves; studies with a pulp solver solve from scratch.
"""

from __future__ import annotations

import dataclasses
import math
import os
import time

import highspy
import numpy as np

from engine.model.extract import extract_tables
from engine.model.formulation import build_model, co2_stage_objective, solve_model
from engine.model.lp import HighsSession, read_highs_solution
from engine.model.prepare import prepare_run
from engine.model.results import RunResult
from engine.model.solve import (PARALLEL_WORK, PartOutcome, district_major, finish_result, part_outcome, part_work,
                                stitched_solution)
from engine.model.solvers import DIRECT
from engine.scenario.inputs import Scenario, Settings, input_hash

NO_LIMIT_T_PER_A = 1e30
"""The CO2 row's bound while a request sets none (HiGHS reads any bound beyond 1e20 as infinite)."""


class LiveCityModel:
    """The whole city's LP under one cost case and resolution, held in HiGHS for a series of re-solves.

    Parameters
    ----------
    scenario : Scenario
        The city; a network plant limit of its settings stays in the LP.
    cost_case : str
        The cost case of every solve.
    settings : Settings
        The run settings (objective and CO2 cap are given per solve and ignored here).
    time_limit_s : float, optional
        Time limit of each solve.
    """

    def __init__(self, scenario: Scenario, cost_case: str, settings: Settings, time_limit_s: float | None = None):
        started = time.perf_counter()
        self.scenario = scenario
        self.cost_case = cost_case
        self.base_settings = dataclasses.replace(settings, objective="cost", co2_cap_t_per_a=None)
        self.prepared = prepare_run(scenario, cost_case,
                                    dataclasses.replace(self.base_settings, co2_cap_t_per_a=NO_LIMIT_T_PER_A))
        self.prepare_s = time.perf_counter() - started
        self.model = build_model(self.prepared)
        self.co2_row = int(self.model.rows["co2_cap"][0])
        self.highs = self.model.lp.to_highs(time_limit_s)
        self.time_limit_s = time_limit_s
        self._cost = self.model.money.copy()
        self.solves = 0
        self._build_s = self.model.build_s  # reported once, with the first run

    # ------------------------------------------------------------------ changes
    def _set_cost(self, cost: np.ndarray) -> None:
        changed = np.flatnonzero(cost != self._cost).astype(np.int32)
        if len(changed):
            self.highs.changeColsCost(len(changed), changed, cost[changed])
            self._cost = cost.copy()

    def _set_co2_bound(self, bound: float | None) -> None:
        upper = highspy.kHighsInf if bound is None else float(bound)
        self.highs.changeRowBounds(self.co2_row, -highspy.kHighsInf, upper)

    def _run(self):
        started = time.perf_counter()
        self.highs.run()
        self.solves += 1
        return read_highs_solution(self.highs, time.perf_counter() - started)

    def _run_by_district(self):
        """The first solve without a bound, surcharge or city-wide row: each district's LP on its own (together
        they are the city LP, without the free CO2 row), the solutions and bases stacked into the city LP, the
        basis handed to HiGHS for the bounded solves that follow; None where the stacking does not check out."""
        if self.base_settings.network_plant_limit_kw is not None or len(self.prepared.district_ids) < 2:
            return None
        started = time.perf_counter()
        models, solutions, bases = [], [], []
        for i in range(len(self.prepared.district_ids)):
            model = build_model(self.prepared, [i])
            model.lp.set_objective(model.money)
            session = HighsSession(model.lp, self.time_limit_s)
            solution = session.solve()
            if solution.status != "optimal":
                return None
            basis = session.highs.getBasis()
            models.append(model)
            solutions.append(solution)
            bases.append((np.array([int(v) for v in basis.col_status], np.int8),
                          np.array([int(v) for v in basis.row_status], np.int8)))
        solution = stitched_solution(self.model, models, solutions)
        if solution is None:
            return None
        solution.solve_s = time.perf_counter() - started
        self._build_s += sum(m.build_s for m in models)
        basis = stacked_basis(self.model, models, bases)
        if basis is not None and self.highs.setBasis(basis) == highspy.HighsStatus.kOk:
            self._cost = self.model.money.copy()
        self.solves += 1
        return solution

    # ------------------------------------------------------------------ requests
    def solve(self, objective: str = "cost", co2_bound_t_per_a: float | None = None,
              co2_surcharge_eur_per_t: float = 0.0) -> RunResult:
        """Solve from the basis of the previous solve and return the run.

        Minimises the cost (plus ``co2_surcharge_eur_per_t`` on every tonne) with the city's CO2 at most
        ``co2_bound_t_per_a`` (None: no bound). Only ``objective="cost"`` is offered: the lexicographic CO2
        objective is solved by :func:`engine.model.solve.solve_scenario`, district by district where it can.
        The run's settings record the objective and the bound, as a solve of those settings from scratch would.
        """
        if objective != "cost":
            raise ValueError(f"LiveCityModel solves the cost objective only, got {objective!r}")
        started = time.perf_counter()
        model = self.model
        settings = dataclasses.replace(
            self.base_settings, objective=objective,
            co2_cap_t_per_a=None if co2_bound_t_per_a is None else float(co2_bound_t_per_a))
        solution = None
        if self.solves == 0 and co2_bound_t_per_a is None and not co2_surcharge_eur_per_t:
            solution = self._run_by_district()
        if solution is None:
            self._set_co2_bound(co2_bound_t_per_a)
            self._set_cost(model.money + float(co2_surcharge_eur_per_t) * model.emissions)
            solution = self._run()
        extract_started = time.perf_counter()
        tables = extract_tables(model, solution) if solution.status == "optimal" else None
        extract_s = time.perf_counter() - extract_started
        size = {"variables": model.lp.n_cols, "constraints": model.lp.n_rows, "nonzeros": model.lp.n_nonzeros}
        outcome = PartOutcome(solution.status, solution.message, tables, self._build_s, solution.solve_s, extract_s,
                              size)
        self._build_s = 0.0
        result = RunResult(status="error", message="", objective=objective, cost_case=self.cost_case,
                           input_hash=input_hash(self.scenario, self.cost_case, settings),
                           scenario_name=settings.name, settings=dataclasses.asdict(settings))
        parts = [list(range(len(self.prepared.district_ids)))]
        finish_result(result, self.scenario, self.prepared, settings, parts, {0: outcome}, False, DIRECT)
        prepare_s, self.prepare_s = self.prepare_s, 0.0
        result.timings_s = {"prepare": round(prepare_s, 4), **result.timings_s, "total": round(time.perf_counter() - started, 4)}
        result.model_size["reused_model"] = True
        return result



def _row_signatures(lp, col_ids: np.ndarray) -> np.ndarray:
    """Per row of ``lp``: the number of its nonzeros and the sums of ``col_ids`` and ``col_ids**2`` over them
    (integers, exact in float64 for any city LP), with ``col_ids`` the city column of each of ``lp``'s columns."""
    pattern = lp.matrix().tocsr().astype(bool).astype(float)
    ids = col_ids.astype(float)
    return np.rint(pattern @ np.c_[np.ones_like(ids), ids, ids * ids]).astype(np.int64)


def district_row_map(city, models) -> list[np.ndarray] | None:
    """For each district LP of ``models``, the city row of each of its rows (-1 for a row the city LP lacks: the
    district's own CO2 row), or None where the rows do not match up.

    The columns stack as in :func:`engine.model.solve.stitched_solution`; a row block of the city is matched to
    the districts' rows of the same block by the columns each row holds, so a block whose city order is not the
    district order (the well rows follow the well table) is matched all the same.
    """
    col_maps, offsets = [np.full(m.lp.n_cols, -1, np.int64) for m in models], {}
    for name, (start, shape) in city.lp.var_blocks.items():
        position = start
        for k, m in enumerate(models):
            d_start, d_shape = m.lp.var_blocks[name]
            n = int(np.prod(d_shape))
            col_maps[k][d_start:d_start + n] = np.arange(position, position + n)
            position += n
        if position != start + int(np.prod(shape)):
            return None
    if any(np.any(c < 0) for c in col_maps):
        return None
    city_sig = _row_signatures(city.lp, np.arange(city.lp.n_cols))
    district_sig = [_row_signatures(m.lp, c) for m, c in zip(models, col_maps)]
    row_maps = [np.full(m.lp.n_rows, -1, np.int64) for m in models]
    for name, index in city.rows.items():
        city_rows = np.asarray(index).ravel()
        owners = [(k, np.asarray(m.rows[name]).ravel()) for k, m in enumerate(models) if name in m.rows]
        if not owners:
            continue
        district_rows = np.concatenate([r for _, r in owners])
        if len(district_rows) != len(city_rows):
            continue  # a city-wide row (the CO2 row): no district row belongs to it
        keys_city = city_sig[city_rows]
        keys_district = np.concatenate([district_sig[k][r] for k, r in owners])
        if np.array_equal(keys_city, keys_district):
            matched = city_rows
        else:
            order_c = np.lexsort(keys_city.T[::-1])
            order_d = np.lexsort(keys_district.T[::-1])
            sorted_c = keys_city[order_c]
            if (not np.array_equal(sorted_c, keys_district[order_d])
                    or np.any(np.all(sorted_c[1:] == sorted_c[:-1], axis=1))):
                return None
            matched = np.empty(len(city_rows), np.int64)
            matched[order_d] = city_rows[order_c]
        position = 0
        for k, r in owners:
            row_maps[k][r] = matched[position:position + len(r)]
            position += len(r)
    return row_maps


def stacked_basis(city, models, bases):
    """The bases of the district LPs ``models`` written into the columns and rows of the city LP ``city``, or None.

    ``bases`` holds ``(col_status, row_status)`` integer arrays (``highspy.HighsBasisStatus`` values) per district.
    Columns stack as in :func:`engine.model.solve.stitched_solution`, rows as :func:`district_row_map` finds them.
    A city row no district row maps to (the city-wide CO2 row) is basic; a district row the city lacks must be
    basic (its free CO2 row), so that the count of basic variables stays the city's number of rows. The basis
    only starts HiGHS: a wrong one would cost iterations, never a wrong answer.
    """
    row_maps = district_row_map(city, models)
    if row_maps is None:
        return None
    lp = city.lp
    basic = int(highspy.HighsBasisStatus.kBasic)
    col_status = np.full(lp.n_cols, -1, np.int8)
    for name, (start, shape) in lp.var_blocks.items():  # the blocks lie one after the other
        position = start
        for m, (cols, _) in zip(models, bases):
            d_start, d_shape = m.lp.var_blocks[name]
            n = int(np.prod(d_shape))
            col_status[position:position + n] = cols[d_start:d_start + n]
            position += n
    row_status = np.full(lp.n_rows, basic, np.int8)
    for mapping, (_, rows) in zip(row_maps, bases):
        inside = mapping >= 0
        if np.any(rows[~inside] != basic):
            return None
        row_status[mapping[inside]] = rows[inside]
    if np.any(col_status < 0) or int(np.sum(col_status == basic) + np.sum(row_status == basic)) != lp.n_rows:
        return None
    statuses = {int(v): v for v in highspy.HighsBasisStatus.__members__.values()}
    basis = highspy.HighsBasis()
    basis.col_status = [statuses[int(v)] for v in col_status]
    basis.row_status = [statuses[int(v)] for v in row_status]
    basis.valid = True
    return basis


class LiveDistricts:
    """Every district's LP held in its own HiGHS, for a series of cost-only changes (a CO2 price search).

    Without a city-wide row each district is its own LP; a CO2 surcharge changes only the objective, so each
    district re-solves from its last basis (the old optimum stays feasible). :meth:`emissions_and_cost` gives the
    two figures a price search needs from the solution vectors, without reading tables.
    """

    def __init__(self, scenario: Scenario, cost_case: str, settings: Settings, time_limit_s: float | None = None):
        settings = dataclasses.replace(settings, objective="cost", co2_cap_t_per_a=None)
        self.prepared = prepare_run(scenario, cost_case, settings)
        self.models = [build_model(self.prepared, [i]) for i in range(len(self.prepared.district_ids))]
        for m in self.models:
            m.lp.set_objective(m.money)
        # lean sessions: the trimmed program in HiGHS (engine.model.lp.lean_program), new costs mapped onto it
        self.sessions = [HighsSession(m.lp, time_limit_s, lean=True) for m in self.models]

    def emissions_and_cost(self, co2_surcharge_eur_per_t: float) -> tuple[float, float]:
        """The city's CO2 [t/a] and its cost at the cost case's own prices [€/a] (annuities, O&M, energy, CO2 at
        the case's price, unserved heat; the fixed O&M of existing plant included) of the least-cost plan with
        ``co2_surcharge_eur_per_t`` added to every tonne.

        Raises
        ------
        RuntimeError
            If a district LP is not solved to optimality (its status named).
        """
        emissions = cost = 0.0
        for k, (model, session) in enumerate(zip(self.models, self.sessions)):
            model.lp.set_objective(model.money + float(co2_surcharge_eur_per_t) * model.emissions)
            solution = session.solve()
            if solution.status != "optimal":
                raise RuntimeError(f"district {self.prepared.district_ids[k]}: {solution.message}")
            x = solution.x
            emissions += float(model.emissions @ x)
            # the objective carries a negligible charging cost (formulation.build_model) that no table reports
            charge = model.cols["charge"]
            tie_break = float(np.sum(x[charge] * self.prepared.grid.weight_h[None, :])) * 1e-6 if charge.size else 0.0
            cost += float(model.money @ x) - tie_break + float(np.sum(model.constant_fixed_om))
        return emissions, cost


SAME_PLAN_TOLERANCE = 1e-7
"""Relative difference below which a district's plans at two surcharges count as the same (CO2-equivalent and
cost): the solver's own optimality tolerance, and the slack the least-CO2 stages allow."""


@dataclasses.dataclass
class PricedPoint:
    """One solve of :class:`PricedDistricts`: every district at one CO2 surcharge (or the least-CO2 stages)."""

    surcharge_eur_per_t: float
    """Price added to every tonne of CO2-equivalent (CO2, with unserved heat and cooling counted at
    :data:`engine.model.formulation.UNSERVED_CO2_EQUIVALENT_T_PER_MWH`); infinite for the least-CO2 point. [€/t]"""
    token: int
    """Which solve this is (the bases of its districts are kept under it)."""
    solutions: list
    """Per district: its LpSolution, or None where it was not solved (a district before it failed)."""
    values: list
    """Per district: (CO2 [t/a], CO2-equivalent [t/a], the LP's cost objective [€/a]) at the cost case's own
    prices (no surcharge), or None where not solved to optimality."""
    priced: bool
    """True for a solve of the held district LPs at a surcharge; False for the least-CO2 stages (solved in
    copies of the LPs: their solutions read with those, no basis kept)."""

    @property
    def solved(self) -> bool:
        return all(v is not None for v in self.values)

    @property
    def co2_t_per_a(self) -> float:
        return float(sum(v[0] for v in self.values if v is not None))

    @property
    def co2_equivalent_t_per_a(self) -> float:
        return float(sum(v[1] for v in self.values if v is not None))

    @property
    def cost_eur_per_a(self) -> float:
        return float(sum(v[2] for v in self.values if v is not None))


def _same_plan(a: PricedPoint, b: PricedPoint, k: int) -> bool:
    if a.values[k] is None or b.values[k] is None:
        return False
    return all(abs(x - y) <= SAME_PLAN_TOLERANCE * max(1.0, abs(x), abs(y))
               for x, y in zip(a.values[k][1:], b.values[k][1:]))


class _HeldDistrictLPs:
    """Some districts' LPs held in HiGHS with the bases of earlier solves (in this process or in a worker)."""

    def __init__(self, prepared, districts, time_limit_s=None, cancel=None):
        self.prepared = prepared
        self.time_limit_s = time_limit_s
        self.cancel = cancel
        self.models = {k: build_model(prepared, [k]) for k in districts}
        self.equivalent = {k: co2_stage_objective(m)[0] for k, m in self.models.items()}
        self.sessions: dict[int, HighsSession] = {}
        self.bases: dict[tuple[int, int], object] = {}

    def values(self, k: int, solution, model=None) -> tuple[float, float, float]:
        model = model or self.models[k]
        x = solution.x
        return float(model.emissions @ x), float(self.equivalent[k] @ x), float(model.money @ x)

    def solve(self, token: int, lam: float, tasks) -> dict:
        """``tasks``: (district, start token or None, keep token or None) per district; a keep token copies that
        solve's basis to ``token`` without solving. Returns {district: (LpSolution, values or None)}."""
        out = {}
        for k, start, keep in tasks:
            if keep is not None:
                if (keep, k) in self.bases:
                    self.bases[(token, k)] = self.bases[(keep, k)]
                continue
            model = self.models[k]
            model.lp.set_objective(model.money + lam * self.equivalent[k] if lam else model.money)
            session = self.sessions.get(k)
            if session is None:
                session = self.sessions[k] = HighsSession(model.lp, self.time_limit_s, cancel=self.cancel, lean=True)
            if start is not None and (start, k) in self.bases:
                session.set_basis(self.bases[(start, k)])
            solution = session.solve()
            optimal = solution.status == "optimal"
            if optimal:
                self.bases[(token, k)] = session.basis()
            out[k] = (solution, self.values(k, solution) if optimal else None)
            if not optimal:
                break
        return out

    def least_co2(self, districts) -> dict:
        within = float(getattr(self.prepared.settings, "co2_within_cost_pct", 0.0) or 0.0)
        out = {}
        for k in districts:
            model = build_model(self.prepared, [k])
            solution = solve_model(model, "co2", self.time_limit_s, self.cancel, DIRECT, within)
            optimal = solution.status == "optimal"
            out[k] = (solution, self.values(k, solution, model) if optimal else None)
            if not optimal:
                break
        return out


def _district_worker(connection, prepared, districts, time_limit_s) -> None:
    """A worker process of :class:`PricedDistricts`: holds its districts' LPs and answers requests until told
    to stop (or its pipe closes)."""
    held = _HeldDistrictLPs(prepared, districts, time_limit_s)
    while True:
        try:
            request = connection.recv()
        except (EOFError, OSError):
            return
        if request[0] == "stop":
            return
        try:
            answer = held.solve(*request[1:]) if request[0] == "solve" else held.least_co2(*request[1:])
            connection.send(("ok", answer))
        except Exception as error:  # handed to the caller, which raises it with the worker's words
            connection.send(("error", f"{type(error).__name__}: {error}"))


class PricedDistricts:
    """Every district's LP held in HiGHS, solved at a series of CO2 surcharges (a trade-off curve).

    Without a city-wide row (no network plant limit) a surcharge ``lam`` on every tonne decouples the districts:
    each minimises its own cost plus ``lam`` times its CO2-equivalent. A plan optimal at ``lam > 0`` is also the
    least-cost plan under a cap on the CO2-equivalent at its own emissions (for any plan ``x`` within that cap,
    ``C(x) >= C(x*) + lam * (E(x*) - E(x)) >= C(x*)``: the weighted-sum theorem, Geoffrion, A. M. (1968). Proper
    efficiency and the theory of vector maximization. Journal of Mathematical Analysis and Applications 22(3),
    618-630), so every solve gives an exact point of the cost-CO2 frontier at the price of one decomposed run.
    Each solve starts a district from the basis of a point given by the caller (changing only costs keeps that
    optimum feasible: primal simplex); the least-CO2 point runs the two CO2 stages of
    :func:`engine.model.formulation.solve_model` in fresh copies of the district LPs.

    ``workers`` > 1 holds the districts in that many worker processes (a warm pool for the whole series: each
    keeps its districts' LPs and bases; the districts are dealt largest first by
    :func:`engine.model.solve.part_work`); None chooses from the work of the series (:func:`study_workers`).
    Call :meth:`close` (or use the object as a context manager) to end the workers.
    """

    def __init__(self, scenario: Scenario, cost_case: str, settings: Settings, time_limit_s: float | None = None,
                 cancel=None, workers: int | None = 1, solves: int = 1):
        started = time.perf_counter()
        self.scenario = scenario
        self.cost_case = cost_case
        self.base_settings = dataclasses.replace(settings, objective="cost", co2_cap_t_per_a=None)
        if self.base_settings.network_plant_limit_kw is not None:
            raise ValueError("PricedDistricts: a network plant limit couples the districts")
        self.prepared = prepare_run(scenario, cost_case, self.base_settings)
        n = len(self.prepared.district_ids)
        self.models = [build_model(self.prepared, [i]) for i in range(n)]
        self.time_limit_s = time_limit_s
        self.cancel = cancel
        self.workers = study_workers(self.prepared, solves) if workers is None else max(1, min(int(workers), n))
        self._local = _HeldDistrictLPs(self.prepared, range(n), time_limit_s, cancel) if self.workers == 1 else None
        self._pipes: list = []
        self._processes: list = []
        self._owner: dict[int, int] = {}
        if self.workers > 1:
            self._start_workers()
        self._city = None
        self._tokens = 0
        self.reused = 0
        """District solves saved because the district's plan was the same at both neighbouring surcharges."""
        self.setup_s = time.perf_counter() - started

    # ------------------------------------------------------------------ workers
    def _start_workers(self) -> None:
        import multiprocessing

        order = sorted(range(len(self.models)), key=lambda k: -part_work(self.prepared, [k]))
        shares: list[list[int]] = [[] for _ in range(self.workers)]
        load = [0.0] * self.workers
        for k in order:  # largest first onto the least loaded worker
            w = int(np.argmin(load))
            shares[w].append(k)
            load[w] += part_work(self.prepared, [k])
            self._owner[k] = w
        context = multiprocessing.get_context("fork" if "fork" in multiprocessing.get_all_start_methods()
                                              else None)
        for share in shares:
            mine, theirs = context.Pipe()
            process = context.Process(target=_district_worker, args=(theirs, self.prepared, share, self.time_limit_s),
                                      daemon=True)
            process.start()
            theirs.close()
            self._pipes.append(mine)
            self._processes.append(process)

    def _ask(self, kind: str, per_worker: dict[int, tuple]) -> dict:
        for w, args in per_worker.items():
            self._pipes[w].send((kind, *args))
        out = {}
        for w in per_worker:
            try:
                status, answer = self._pipes[w].recv()
            except (EOFError, OSError) as error:
                raise RuntimeError(f"a worker process of the trade-off curve ended unexpectedly ({error})") from None
            if status != "ok":
                raise RuntimeError(f"a worker process of the trade-off curve failed: {answer}")
            out.update(answer)
        return out

    def close(self) -> None:
        """End the worker processes (nothing to do without them)."""
        for pipe in self._pipes:
            try:
                pipe.send(("stop",))
                pipe.close()
            except (OSError, ValueError):
                pass
        for process in self._processes:
            process.join(timeout=5)
            if process.is_alive():
                process.terminate()
        self._pipes, self._processes = [], []

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def __del__(self):
        if self._processes:
            self.close()

    def _run(self, kind: str, token: int, lam: float, tasks: list) -> dict:
        if self._local is not None:
            if kind == "solve":
                return self._local.solve(token, lam, tasks)
            return self._local.least_co2([k for k, _, _ in tasks])
        per_worker: dict[int, list] = {}
        for task in tasks:
            per_worker.setdefault(self._owner[task[0]], []).append(task)
        if kind == "solve":
            return self._ask("solve", {w: (token, lam, t) for w, t in per_worker.items()})
        return self._ask("least_co2", {w: ([k for k, _, _ in t],) for w, t in per_worker.items()})

    # ------------------------------------------------------------------ requests
    def solve(self, surcharge_eur_per_t: float, below: PricedPoint | None = None,
              above: PricedPoint | None = None) -> PricedPoint:
        """Every district at ``surcharge_eur_per_t`` [€/t] on its CO2-equivalent.

        ``below`` and ``above`` are points at a lower and a higher surcharge (the least-CO2 point stands for an
        infinite one). A district whose plan is the same in both (CO2-equivalent and cost equal to
        :data:`SAME_PLAN_TOLERANCE`) keeps that plan without a solve: its least surcharged cost is concave in the
        surcharge and meets the plan's straight line at both ends, so the plan is optimal for every surcharge in
        between. Every other district starts from the basis of the nearer of the two points that has one (nearer
        in the ratio of the whole CO2 prices, :meth:`_price_distance`).
        """
        lam = float(surcharge_eur_per_t)
        self._tokens += 1
        token = self._tokens
        n = len(self.models)
        solutions, values = [None] * n, [None] * n
        tasks = []
        for k in range(n):
            if below is not None and above is not None and below.priced and _same_plan(below, above, k):
                solutions[k], values[k] = below.solutions[k], below.values[k]
                tasks.append((k, None, below.token))
                self.reused += 1
                continue
            starts = [p for p in (below, above) if p is not None and p.priced and p.values[k] is not None]
            start = min(starts, key=lambda p: self._price_distance(p.surcharge_eur_per_t, lam)).token if starts else None
            tasks.append((k, start, None))
        for k, (solution, value) in self._run("solve", token, lam, tasks).items():
            solutions[k], values[k] = solution, value
        return PricedPoint(lam, token, solutions, values, True)

    def _price_distance(self, a: float, b: float) -> float:
        """How far apart two surcharges are for a warm start: the ratio of the whole CO2 prices (the case's price,
        at least 1 EUR/t, plus the surcharge), on a log scale. Measured on the demo at 12 typical days: 5,000 EUR/t
        from the basis at 21,943 took 0.63 s, from the one at 0 1.82 s; 116 EUR/t 0.69 s from 0 and 1.44 s from
        21,943 (the case's price is 100 EUR/t)."""
        base = max(float(self.prepared.prices.co2_eur_per_t), 1.0)
        return abs(math.log((base + a) / (base + b)))

    def least_co2(self) -> PricedPoint:
        """Least CO2, then least cost at it, district by district (the CO2 objective of
        :func:`engine.model.formulation.solve_model`)."""
        self._tokens += 1
        n = len(self.models)
        solutions, values = [None] * n, [None] * n
        for k, (solution, value) in self._run("least_co2", self._tokens, math.inf,
                                              [(k, None, None) for k in range(n)]).items():
            solutions[k], values[k] = solution, value
        return PricedPoint(math.inf, self._tokens, solutions, values, False)

    def result(self, point: PricedPoint, settings: Settings) -> RunResult:
        """The run of ``point`` under ``settings`` (what it records as objective and cap), read as a decomposed
        run of :func:`engine.model.solve.solve_scenario` reads it."""
        started = time.perf_counter()
        outcomes = None
        if point.solved and point.priced and settings.objective == "cost":
            if self._city is None:
                self._city = build_model(self.prepared, list(range(len(self.models))))
                self._city.lp.set_objective(self._city.money)
            stitched = stitched_solution(self._city, self.models, point.solutions)
            if stitched is not None:
                extract_started = time.perf_counter()
                tables = district_major(extract_tables(self._city, stitched), self.prepared.district_ids)
                size = {"variables": sum(m.lp.n_cols for m in self.models),
                        "constraints": sum(m.lp.n_rows for m in self.models),
                        "nonzeros": sum(m.lp.n_nonzeros for m in self.models)}
                outcomes = {0: PartOutcome("optimal", stitched.message, tables, 0.0, stitched.solve_s,
                                           time.perf_counter() - extract_started, size)}
                parts = [list(range(len(self.models)))]
        if outcomes is None:
            # the least-CO2 stages added rows to their copies of the LPs; the solutions are read with the
            # held models' columns and rows, which come first in the same order
            outcomes = {k: part_outcome(self.models[k], _cut_to(self.models[k], s))
                        for k, s in enumerate(point.solutions) if s is not None}
            parts = [[k] for k in range(len(self.models))]
        result = RunResult(status="error", message="", objective=settings.objective, cost_case=self.cost_case,
                           input_hash=input_hash(self.scenario, self.cost_case, settings),
                           scenario_name=settings.name, settings=dataclasses.asdict(settings))
        result.extras["time_aggregation"] = self.prepared.aggregation
        result.extras["cop_bounds"] = self.prepared.cop_bounds
        finish_result(result, self.scenario, self.prepared, settings, parts, outcomes, True, DIRECT,
                      self.time_limit_s, self.cancel)
        result.model_size["linear_programs"] = len(self.models)
        result.model_size["reused_model"] = True
        result.model_size["workers"] = self.workers
        setup_s, self.setup_s = self.setup_s, 0.0
        result.timings_s = {"prepare": round(setup_s, 4), **result.timings_s,
                            "total": round(setup_s + time.perf_counter() - started
                                           + sum(s.solve_s for s in point.solutions if s is not None), 4)}
        return result


def _cut_to(model, solution):
    """``solution`` of a copy of ``model``'s LP with rows added after its own, cut to ``model``'s rows."""
    if solution.row_dual is None or len(solution.row_dual) == model.lp.n_rows:
        return solution
    return dataclasses.replace(solution, row_dual=solution.row_dual[:model.lp.n_rows])


def study_workers(prepared, solves: int) -> int:
    """Worker processes for a series of ``solves`` decomposed solves of ``prepared``: one per core (up to one
    per district) when their summed :func:`engine.model.solve.part_work` passes
    :data:`engine.model.solve.PARALLEL_WORK` (where a pool pays for its start), else 1."""
    n = len(prepared.district_ids)
    if n < 2:
        return 1
    work = part_work(prepared, list(range(n))) * max(int(solves), 1)
    return min(n, os.cpu_count() or 1) if work >= PARALLEL_WORK else 1
