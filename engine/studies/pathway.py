"""The pathway: investment and operation over the milestone years of a heat plan.

:func:`solve_pathway` turns the scenario into one scenario per milestone year (:func:`year_scenario`: demand
factors, prices, CO2 factors and price, CO2 cap, network reach, retired plant), and solves them together with
perfect foresight (:mod:`engine.model.multiperiod`: one LP per district, or one LP over all districts when a
city-wide CO2 cap or network plant limit couples them), or year by year with capacity carried forward (myopic).

Results are plain tables (:class:`PathwayResult`): ``summary`` (one row per year, the columns of pathway.csv),
``capacity`` (year, district, technology: capacity, new build, retirement) and a :class:`RunResult` per year.

The figures are screening-level planning aids: investment decisions need the detailed design of licensed engineers
and the local authorities' own assessment.
"""

from __future__ import annotations

import dataclasses
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np
import pandas as pd

from engine.model.extract import extract_tables
from engine.model.multiperiod import build_charge, build_multiperiod, builds, year_solution, year_weights
from engine.model.solvers import DIRECT, resolve_solver, solve_lp
from engine.model.warmstart import warm_basis
from engine.model.prepare import prepare_run
from engine.model.results import RunResult
from engine.model.solve import (
    choose_workers, diagnose_failure, district_major, failure_message, merge_tables, run_settings, stitched_solution,
)
from engine.model.formulation import build_model, solve_model
from engine.scenario.inputs import Scenario
from engine.scenario.kinds import COOLING_KINDS, FUELS
from engine.scenario.pathway_inputs import PathwayInputs, check_years, load_pathway
from engine.scenario.problems import InputError, Problem
from engine.progress import Progress

SUMMARY_COLUMNS = ("year", "total_cost_eur_per_a", "co2_t_per_a", "investment_eur", "heat_demand_mwh_per_a",
                   "unserved_heat_mwh_per_a")
CAPACITY_COLUMNS = ("year", "district_id", "technology_id", "capacity_kw", "new_kw", "retired_kw")


@dataclass
class PathwayResult:
    status: str
    message: str
    mode: str = "foresight"  # or "myopic"
    cost_case: str = "reference"
    years: list = field(default_factory=list)
    base_year: int = 0
    horizon_end: int = 0
    present_value_eur: float = float("nan")
    """Discounted cost of the whole pathway at the base year, net of the remaining value of plant [EUR]."""
    summary: pd.DataFrame = field(default_factory=pd.DataFrame)
    capacity: pd.DataFrame = field(default_factory=pd.DataFrame)
    year_results: dict = field(default_factory=dict)  # year -> RunResult
    co2_caps: dict = field(default_factory=dict)  # year -> t/a (only years with a cap)
    notes: list = field(default_factory=list)
    timings_s: dict = field(default_factory=dict)
    solver: str = DIRECT

    @property
    def solved(self) -> bool:
        return self.status == "optimal"

    def write(self, out_dir) -> Path:
        """Write pathway.csv and capacity.csv (and one folder of tables per year) into ``out_dir``."""
        out = Path(out_dir)
        out.mkdir(parents=True, exist_ok=True)
        self.summary.to_csv(out / "pathway.csv", index=False)
        self.capacity.to_csv(out / "capacity.csv", index=False)
        for year, result in self.year_results.items():
            result.write(out / f"year_{year}")
        return out


# ------------------------------------------------------------------------------------------------ year scenarios
def _value(frame: pd.DataFrame, year: int, column: str) -> float:
    if year not in frame.index or column not in frame.columns:
        return float("nan")
    return float(frame.loc[year, column])


def year_scenario(scenario: Scenario, pathway: PathwayInputs, year: int) -> tuple[Scenario, list[str]]:
    """The scenario as it stands in milestone ``year`` (a copy), and notes on what could not be applied."""
    s = scenario.copy()
    notes = []
    city = pathway.city

    def factor(column: str) -> float:
        value = _value(city, year, column)
        return 1.0 if np.isnan(value) else value

    # demand: district factor, else the city-wide one
    districts = s.districts
    city_factor = factor("heat_demand_factor")
    by_district = pathway.district[pathway.district["year"] == year].set_index("district_id")["heat_demand_factor"]
    factors = np.array([float(by_district.get(d, np.nan)) for d in districts["district_id"]])
    factors = np.where(np.isnan(factors), city_factor, factors)
    districts["heat_demand_mwh_per_a"] = districts["heat_demand_mwh_per_a"] * factors
    if s.heat_demand_hourly_kw is not None:
        for d, f in zip(districts["district_id"], factors):
            if d in s.heat_demand_hourly_kw.columns:
                s.heat_demand_hourly_kw[d] = s.heat_demand_hourly_kw[d] * f
    # network reach
    for d, first in pathway.network_from_year.items():
        mask = districts["district_id"] == d
        reached = year >= first
        districts.loc[mask, "network_available"] = reached
        if reached and d in pathway.network_connection_limit_kw:
            districts.loc[mask, "network_connection_limit_kw"] = pathway.network_connection_limit_kw[d]
        if reached and float(districts.loc[mask, "network_connection_limit_kw"].iloc[0]) <= 0:
            notes.append(f"{year}: the network reaches {d} but its network_connection_limit_kw is 0, so it cannot "
                         "connect")
    # prices and CO2
    prices = s.prices
    for fuel in FUELS:
        value = _value(city, year, f"{fuel}_eur_per_mwh")
        if not np.isnan(value):
            setattr(prices, f"{fuel}_eur_per_mwh", value)
        else:
            setattr(prices, f"{fuel}_eur_per_mwh", prices.fuel_price_eur_per_mwh(fuel) * factor(f"{fuel}_price_factor"))
    co2_price = _value(city, year, "co2_eur_per_t")
    if not np.isnan(co2_price):
        prices.co2_eur_per_t = co2_price
    prices.co2_kg_per_mwh = {k: v * factor("fuel_co2_factor") for k, v in prices.co2_kg_per_mwh.items()}
    hourly = s.hourly
    hourly["electricity_price_eur_per_mwh"] = hourly["electricity_price_eur_per_mwh"] * factor("electricity_price_factor")
    hourly["network_price_eur_per_mwh"] = hourly["network_price_eur_per_mwh"] * factor("network_price_factor")
    hourly["grid_co2_kg_per_mwh"] = hourly["grid_co2_kg_per_mwh"] * factor("grid_co2_factor")
    hourly["network_co2_kg_per_mwh"] = hourly["network_co2_kg_per_mwh"] * factor("network_co2_factor")
    cap = _value(city, year, "co2_cap_t_per_a")
    s.settings = dataclasses.replace(s.settings, co2_cap_t_per_a=float(cap) if not np.isnan(cap)
                                     else s.settings.co2_cap_t_per_a)
    # retired existing plant
    dt = s.district_technologies
    for (d, t), retire in pathway.retirement_year.items():
        if year >= retire:
            dt.loc[(dt["district_id"] == d) & (dt["technology_id"] == t), "existing_kw"] = 0.0
    return s, notes


# ------------------------------------------------------------------------------------------------ solving
def _coupled(settings_by_year) -> bool:
    return any((st.co2_cap_t_per_a or 0) > 0 or (st.network_plant_limit_kw or 0) > 0 for st in settings_by_year)


def _explain(prepared_years, years, districts, status: str, solver: str = DIRECT) -> str:
    """Which year fails on its own, and why."""
    for prepared, year in zip(prepared_years, years):
        alone = solve_model(build_model(prepared, districts), "cost", solver=solver)
        if alone.status != "optimal":
            why = diagnose_failure(prepared, prepared.settings, alone.status, list(districts))
            return f"Year {year}: " + failure_message(alone.status, alone.message, why or "")
    return ("Each year can be solved on its own but not all together: plant built earlier and still within its "
            f"lifetime does not fit a later year's limits (solver: {status}).")


WARM_START = True
"""Start the stacked LP from the basis the years (and districts) solved alone give (:mod:`engine.model.warmstart`);
False solves it from HiGHS's own start (bench/pathway.py compares both)."""


def _solve_part(prepared_years, years, base_year, horizon_end, districts, myopic, time_limit_s, cancel,
                warm=None, solver=DIRECT, extract=True):
    """Solve one group of districts over all years; returns (status, message, per-year tables, builds, seconds).

    ``solver``: HiGHS directly (warm-started unless ``warm`` is False) or a pulp solver (from its own start).
    ``extract`` False: (model, solution) of each year instead of its tables, to be read city-wide in one pass
    (:func:`_year_tables`)."""
    status, message, pieces, built, solve_s = _solve_years(prepared_years, years, base_year, horizon_end, districts,
                                                           myopic, time_limit_s, cancel, warm, solver)
    if pieces is not None and extract:
        pieces = [extract_tables(model, solution) for model, solution in pieces]
    return status, message, pieces, built, solve_s


def _year_tables(prepared, pieces) -> dict:
    """The tables of one year from its parts' (model, solution) pairs: read once from the city LP when the
    district solutions stack onto it (:func:`engine.model.solve.stitched_solution`, checked there), else part by
    part."""
    if len(pieces) > 1:
        city = build_model(prepared, [i for model, _ in pieces for i in model.districts])
        city.lp.set_objective(city.money)
        solution = stitched_solution(city, [m for m, _ in pieces], [s for _, s in pieces])
        if solution is not None:
            return district_major(extract_tables(city, solution), prepared.district_ids)
    return merge_tables([extract_tables(model, solution) for model, solution in pieces])


def _solve_years(prepared_years, years, base_year, horizon_end, districts, myopic, time_limit_s, cancel, warm,
                 solver):
    n = len(years)
    if not myopic:
        mp = build_multiperiod(prepared_years, years, base_year, horizon_end, districts)
        basis, warm_s = None, 0.0
        if solver == DIRECT and (WARM_START if warm is None else warm):
            basis, warm_s = warm_basis(mp, prepared_years, years, base_year, horizon_end, districts,
                                       _coupled([p.settings for p in prepared_years]), time_limit_s, cancel)
        if solver == DIRECT:
            sol = mp.lp.solve(time_limit_s=time_limit_s, cancel=cancel, basis=basis)
        else:
            sol = solve_lp(mp.lp, solver, time_limit_s=time_limit_s, cancel=cancel)
        sol.solve_s += warm_s
        if sol.status != "optimal":
            return (sol.status, _explain(prepared_years, years, districts, sol.status, solver), None, None,
                    sol.solve_s)
        pieces = [(b.model, year_solution(mp, k, sol)) for k, b in enumerate(mp.blocks)]
        built = {(key, k): v for (key, k), v in builds(mp, sol.x).items()}
        return "optimal", "", pieces, built, sol.solve_s
    tables, built, solve_s = [], {}, 0.0
    lifetime = None
    for k in range(n):
        end = years[k + 1] if k + 1 < n else horizon_end
        carried = {}
        for (key, b), kw in built.items():
            if years[k] < years[b] + lifetime[key[1]]:
                carried[key] = carried.get(key, 0.0) + kw
        mp = build_multiperiod([prepared_years[k]], [years[k]], base_year, end, districts, carried=[carried])
        lifetime = mp.lifetime
        sol = solve_lp(mp.lp, solver, time_limit_s=time_limit_s, cancel=cancel)
        solve_s += sol.solve_s
        if sol.status != "optimal":
            why = _explain([prepared_years[k]], [years[k]], districts, sol.status, solver)
            if why.startswith("Each year"):
                why = (f"Year {years[k]}: plant carried forward from earlier years does not fit this year's limits "
                       f"(solver: {sol.status}).")
            return sol.status, why, None, None, solve_s
        tables.append((mp.blocks[0].model, year_solution(mp, 0, sol)))
        for (key, _), v in builds(mp, sol.x).items():
            built[(key, k)] = v
    return "optimal", "", tables, built, solve_s


_WORKER: dict = {}


def _worker_init(prepared_years):
    _WORKER["prepared_years"] = prepared_years


def _worker_solve(payload):
    years, base_year, horizon_end, part, myopic, time_limit_s, warm, solver = payload
    return _solve_part(_WORKER["prepared_years"], years, base_year, horizon_end, np.array(part), myopic,
                       time_limit_s, None, warm, solver)


def resolve_pathway(scenario: Scenario, years=None) -> PathwayInputs:
    """The scenario's pathway, with ``years`` (a list) replacing its milestone years; InputError if unusable."""
    folder = Path(scenario.source) if scenario.source else None
    pathway = getattr(scenario, "pathway", None)
    district_ids = list(scenario.districts["district_id"])
    if pathway is None and folder is not None and folder.is_dir():
        pathway = load_pathway(folder, district_ids)
    if years is not None:
        if folder is not None and folder.is_dir():
            return load_pathway(folder, district_ids, years_override=list(years))
        problems = check_years(list(years), None, "--years", None, None)
        if problems:
            raise InputError(problems)
        base = pathway or PathwayInputs([], years[0], 1, pd.DataFrame(), pd.DataFrame(
            columns=["year", "district_id", "heat_demand_factor"]))
        last = base.last_period_a if pathway else (years[-1] - years[-2] if len(years) > 1 else 1)
        return dataclasses.replace(base.with_years(list(years)), last_period_a=last)
    if pathway is None:
        raise InputError([Problem("scenario.toml", None, "pathway", "the scenario has no [pathway] table; add "
                                  "[pathway] years = [...] or give the years (--years 2030,2035,2040)")])
    return pathway


def solve_pathway(
    scenario: Scenario,
    pathway: PathwayInputs | None = None,
    years=None,
    myopic: bool = False,
    cost_case: str | None = None,
    typical_days: int | None = None,
    progress: Progress | None = None,
    cancel: Callable[[], bool] | None = None,
    time_limit_s: float | None = None,
    workers: int | None = None,
    warm_start: bool | None = None,
    solver: str = DIRECT,
) -> PathwayResult:
    """Solve the pathway of ``scenario`` (its own, or ``pathway``; ``years`` overrides the milestone years).

    Never raises for solver failures: an infeasible pathway comes back with ``status`` and a ``message`` naming the
    year and the reason. Without a city-wide constraint each district is its own LP over all years, solved on
    ``workers`` local processes (default: as :func:`solve_scenario` would choose for one of the years).
    ``warm_start`` (default :data:`WARM_START`) starts each stacked LP from the basis of its years (and districts)
    solved alone. ``solver``: ``"highs"`` (HiGHS directly, the default), ``"cbc"`` or ``"pulp:NAME"``
    (:mod:`engine.model.solvers`; a pulp solver starts cold and is much slower); an unknown or unavailable name
    raises :class:`engine.model.solvers.SolverChoiceError` before anything is solved. Raises
    :class:`InputError` when the pathway inputs themselves are wrong.
    """
    started = time.perf_counter()
    solver = resolve_solver(solver)
    report = progress or (lambda share, text: None)
    if pathway is None:
        pathway = resolve_pathway(scenario, years)
    elif years is not None:
        pathway = pathway.with_years(list(years))
    cost_case = cost_case or ("reference" if "reference" in scenario.cost_cases else next(iter(scenario.cost_cases)))
    years = list(pathway.years)
    horizon_end = years[-1] + pathway.last_period_a
    result = PathwayResult("error", "", "myopic" if myopic else "foresight", cost_case, years, pathway.base_year,
                           horizon_end, solver=solver)
    report(0.02, "Preparing the milestone years")
    scenarios, prepared_years = [], []
    for year in years:
        s, notes = year_scenario(scenario, pathway, year)
        result.notes += notes
        settings = run_settings(s, typical_days=typical_days)
        s.settings = settings
        scenarios.append(s)
        prepared_years.append(prepare_run(s, cost_case, settings))
        if settings.co2_cap_t_per_a and settings.co2_cap_t_per_a > 0:
            result.co2_caps[year] = float(settings.co2_cap_t_per_a)
    prepare_s = time.perf_counter() - started
    n_d = len(scenario.districts)
    parts = [list(range(n_d))] if _coupled([p.settings for p in prepared_years]) else [[i] for i in range(n_d)]
    if workers is None:
        # warm-started, the pathway's LPs cost about what its years cost alone: processes pay when one year
        # would (solve.choose_workers). The demo (12 typical days) is below that: its uncapped four-year pathway
        # took 19-20 s on one process and 25-27 s on two (2 cores, load average 8), 9.4-9.7 s and 13-14 s at
        # load average 3.5.
        workers = choose_workers(prepared_years[0], parts)
    args = (years, pathway.base_year, horizon_end)
    done: dict = {}
    if workers > 1 and len(parts) > 1:
        with ProcessPoolExecutor(max_workers=workers, initializer=_worker_init, initargs=(prepared_years,)) as pool:
            futures = {pool.submit(_worker_solve, (*args, part, myopic, time_limit_s, warm_start, solver)): k
                       for k, part in enumerate(parts)}
            for future in as_completed(futures):
                done[futures[future]] = future.result()
                report(0.05 + 0.9 * len(done) / len(parts), f"Solved {len(done)} of {len(parts)} linear program(s)")
                if cancel is not None and cancel():
                    for f in futures:
                        f.cancel()
                    break
    else:
        for k, part in enumerate(parts):
            done[k] = _solve_part(prepared_years, *args, np.array(part), myopic, time_limit_s, cancel, warm_start,
                                  solver, extract=len(parts) == 1)
            report(0.05 + 0.9 * (k + 1) / len(parts), f"Solved {k + 1} of {len(parts)} linear program(s)")
            if done[k][0] != "optimal":
                break
    outcomes, solve_s = [], 0.0
    for k, part in enumerate(parts):
        outcome = done.get(k, ("interrupted", "The solve was cancelled.", None, None, 0.0))
        solve_s += outcome[4]
        if outcome[0] != "optimal":
            result.status = outcome[0]
            where = "" if len(parts) == 1 else " (district " + scenario.districts["district_id"].iloc[part[0]] + ")"
            result.message = outcome[1] + where
            result.timings_s = {"prepare": round(prepare_s, 4), "total": round(time.perf_counter() - started, 4)}
            return result
        outcomes.append(outcome)
    built = {}
    for o in outcomes:
        built.update(o[3])
    for k, year in enumerate(years):
        pieces = [o[2][k] for o in outcomes]
        tables = merge_tables(pieces) if isinstance(pieces[0], dict) else _year_tables(prepared_years[k], pieces)
        run = RunResult("optimal", "Optimal solution found.", objective="cost", cost_case=cost_case,
                        scenario_name=scenarios[k].settings.name, settings=dataclasses.asdict(scenarios[k].settings),
                        tables=tables)
        result.year_results[year] = run
    _tables(result, scenario, scenarios, prepared_years, built)
    result.status = "optimal"
    result.message = "Optimal pathway found." + "".join(" " + n for n in result.notes)
    result.timings_s = {"prepare": round(prepare_s, 4), "solve": round(solve_s, 4),
                        "total": round(time.perf_counter() - started, 4)}
    report(1.0, "Done")
    return result


def _tables(result, scenario, scenarios, prepared_years, built) -> None:
    years = result.years
    techs = scenario.technologies.set_index("technology_id")
    lifetime = techs["lifetime_a"].astype(float).to_dict()
    rate = float(scenario.settings.discount_rate)
    weights = year_weights(years, result.base_year, result.horizon_end, rate)
    # builds per (district, technology, year) and their overnight cost
    new = {}
    invest_by_year = np.zeros(len(years))
    charges = 0.0
    for (key, k), kw in built.items():
        if kw <= 0:
            continue
        d, t, _ = key
        new[(years[k], d, t)] = new.get((years[k], d, t), 0.0) + kw
        price = prepared_years[k].prices.investment_eur_per_kw[t]
        invest_by_year[k] += kw * price
        charges += kw * float(build_charge(price, lifetime[t], years[k], result.base_year, result.horizon_end, rate))
    rows, previous = [], None
    base_existing = scenario.district_technologies.groupby(["district_id", "technology_id"])["existing_kw"].sum()
    summary_rows, pv = [], charges
    for k, year in enumerate(years):
        run = result.year_results[year]
        supply = run.tables["supply"]
        cap = supply.groupby(["district_id", "technology_id"])["capacity_kw"].sum()
        before = base_existing if previous is None else previous
        for (d, t), value in cap.items():
            added = new.get((year, d, t), 0.0)
            prior = float(before.get((d, t), 0.0))
            rows.append({"year": year, "district_id": d, "technology_id": t, "capacity_kw": float(value),
                         "new_kw": added, "retired_kw": max(prior + added - float(value), 0.0)})
        previous = cap
        annual = run.total_cost_eur_per_a
        pv += weights[k] * (annual - float(supply["investment_eur_per_a"].sum()))
        record = {"year": year, "total_cost_eur_per_a": annual, "co2_t_per_a": run.co2_t_per_a,
                  "investment_eur": float(invest_by_year[k]), "heat_demand_mwh_per_a": run.heat_demand_mwh_per_a,
                  "unserved_heat_mwh_per_a": run.unserved_heat_mwh_per_a}
        for t, mwh in run.heat_by_technology_mwh_per_a().items():
            record[f"heat_{t}_mwh_per_a"] = mwh
        record["co2_cap_t_per_a"] = result.co2_caps.get(year, float("nan"))
        record["discounted_years"] = float(weights[k])
        summary_rows.append(record)
        cap_t = result.co2_caps.get(year)
        if cap_t and run.unserved_heat_mwh_per_a > 0.5:
            result.notes.append(f"{year}: {run.unserved_heat_mwh_per_a:,.0f} MWh/a of heat is left unserved"
                                + (f" (the CO2 cap of {cap_t:,.0f} t/a may force it)." if cap_t else "."))
    summary = pd.DataFrame(summary_rows)
    cooling = {f"heat_{t}_mwh_per_a" for t, k in zip(techs.index, techs["kind"]) if k in COOLING_KINDS}
    heat_cols = sorted(c for c in summary.columns if c.startswith("heat_") and c != "heat_demand_mwh_per_a"
                       and c not in cooling)
    summary[heat_cols] = summary[heat_cols].fillna(0.0)
    result.summary = summary[list(SUMMARY_COLUMNS) + heat_cols + ["co2_cap_t_per_a", "discounted_years"]]
    result.capacity = pd.DataFrame(rows, columns=list(CAPACITY_COLUMNS))
    result.present_value_eur = float(pv)
