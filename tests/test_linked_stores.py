"""Stores on typical days that follow the calendar (``stores_between_days``; docs/model.md section 4, 8b).

The engine writes the level of a store on typical days as a start-of-day level per calendar day plus a level
within each typical day (the superposition of Kotzur et al. 2018, Applied Energy 213, 123-135). The check here is
independent of that: the same instance is written out as matrices with one level variable for every hour of the
calendar year, the level following the hours in calendar order, each calendar day dispatched as the typical day
that stands for it, each extreme day ending at the level it started with, and solved with
``scipy.optimize.linprog``. For a store without losses both are the same
program, so the optima agree, with and without losses; the engine's dispatch, replayed hour by hour over the
calendar, keeps the level within [0, capacity].
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

import scenario_factory as f
from engine.model import formulation
from engine.model.prepare import prepare_run
from engine.model.solve import solve_scenario
from engine.scenario.inputs import Prices, Settings

DAYS = 28
HOURS = 24 * DAYS


def annuity(rate, years):
    return rate * (1 + rate) ** years / ((1 + rate) ** years - 1)


def windy_instance(loss_pct_per_h: float):
    """One district: a gas boiler, an electric boiler and a store that can hold two days of heat. Electricity is
    cheap on windy days (every third day and a windy spell of four days), dear otherwise; demand is steady with a
    morning peak. Heat made on a windy day pays to keep for the dear days after it."""
    hour = np.arange(HOURS)
    day = hour // 24
    windy = (day % 3 == 0) | ((day >= 12) & (day < 16))
    electricity = np.where(windy, 15.0, 160.0) + 10.0 * ((hour % 24 >= 7) & (hour % 24 < 10))
    demand = 600.0 + 250.0 * ((hour % 24 >= 6) & (hour % 24 < 9)) + 40.0 * np.cos(2 * np.pi * day / DAYS)
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0,
             fixed_om_pct_per_a=0.0, variable_om_eur_per_mwh=0.0, lifetime_a=20),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0,
             investment_eur_per_kw=60.0, fixed_om_pct_per_a=0.0, variable_om_eur_per_mwh=0.0, lifetime_a=20),
        dict(technology_id="store", kind="heat_store", carrier="none", investment_eur_per_kw=1.0,
             fixed_om_pct_per_a=0.0, store_loss_pct_per_h=loss_pct_per_h, store_efficiency=0.9, store_hours=24.0,
             lifetime_a=25),
    )
    return f.scenario(
        [f.district("A", 0)],
        techs,
        f.hourly(HOURS, electricity=electricity, network=80.0, grid_co2=0.0, network_co2=0.0),
        heat_demand_hourly_kw=pd.DataFrame({"A": demand}),
        prices=Prices(gas_eur_per_mwh=70.0, co2_eur_per_t=0.0),
        settings=Settings(typical_days=4, value_of_unserved_heat_eur_per_mwh=3000.0, stores_between_days=True),
    )


def calendar_rebuild(scenario, cyclic_within_day: bool = False):
    """docs/model.md sections 4 and 5 for the windy instance on its typical days, written as matrices with a
    level for every calendar hour (``cyclic_within_day``: the level of each calendar day returns to its start,
    the representation before). Returns (optimum without the fixed O&M constant, store capacity)."""
    prepared = prepare_run(scenario, "reference")
    grid = prepared.grid
    demand = prepared.heat_demand_kw[0]
    electricity = prepared.electricity_eur_per_mwh
    w = grid.weight_h
    n_t = grid.n_steps
    techs = scenario.technologies.set_index("technology_id")
    store = techs.loc["store"]
    keep = 1.0 - store.store_loss_pct_per_h / 100.0
    eta = np.sqrt(store.store_efficiency)
    rate = scenario.settings.discount_rate
    voll = scenario.settings.value_of_unserved_heat_eur_per_mwh

    n_cols = 0
    lower, upper, cost = [], [], []

    def var(size, c=0.0):
        nonlocal n_cols
        start = n_cols
        n_cols += size
        lower.extend([0.0] * size)
        upper.extend([np.inf] * size)
        cost.extend(np.broadcast_to(np.asarray(c, float), (size,)).tolist())
        return np.arange(start, start + size)

    cap_gas = var(1, annuity(rate, 20) * 100.0)[0]
    cap_eb = var(1, annuity(rate, 20) * 60.0)[0]
    cap_st = var(1, annuity(rate, 25) * 1.0)[0]
    gas = var(n_t, w * 70.0 / 0.9 / 1000)
    eb = var(n_t, w * electricity / 1.0 / 1000)
    charge = var(n_t, w * 1e-6)
    discharge = var(n_t)
    unserved = var(n_t, w * voll / 1000)
    n_days = grid.day_period.size
    level = var(n_days * 24).reshape(n_days, 24)  # every calendar hour

    eq, eq_rhs, ub, ub_rhs = [], [], [], []
    for t in range(n_t):
        eq.append({gas[t]: 1.0, eb[t]: 1.0, discharge[t]: 1.0, charge[t]: -1.0, unserved[t]: 1.0})
        eq_rhs.append(demand[t])
        ub += [{gas[t]: 1.0, cap_gas: -1.0}, {eb[t]: 1.0, cap_eb: -1.0},
               {charge[t]: 1.0, cap_st: -1.0 / 24.0}, {discharge[t]: 1.0, cap_st: -1.0 / 24.0}]
        ub_rhs += [0.0] * 4
    step_of = {(int(p), int(h)): s for s, (p, h) in enumerate(zip(grid.period, grid.hour_of_day))}
    for d in range(n_days):
        for h in range(24):
            t = step_of[(int(grid.day_period[d]), h)]
            if h > 0:
                previous = level[d, h - 1]
            else:
                previous = level[d, 23] if cyclic_within_day else level[(d - 1) % n_days, 23]
            eq.append({level[d, h]: 1.0, previous: -keep, charge[t]: -eta, discharge[t]: 1.0 / eta})
            eq_rhs.append(0.0)
            ub.append({level[d, h]: 1.0, cap_st: -1.0})
            ub_rhs.append(0.0)
        if not cyclic_within_day and grid.extreme_period[grid.day_period[d]]:
            # an extreme day ends at the level it started with (docs/model.md section 4, constraint 8b)
            eq.append({level[d, 23]: 1.0, level[(d - 1) % n_days, 23]: -1.0})
            eq_rhs.append(0.0)

    def matrix(rows):
        r, c, v = [], [], []
        for i, row in enumerate(rows):
            for j, value in row.items():
                r.append(i); c.append(j); v.append(value)
        return sp.csr_matrix((v, (r, c)), shape=(len(rows), n_cols))

    res = linprog(np.array(cost), A_ub=matrix(ub), b_ub=np.array(ub_rhs), A_eq=matrix(eq), b_eq=np.array(eq_rhs),
                  bounds=list(zip(lower, upper)), method="highs")
    assert res.status == 0, res.message
    tie_break = float(np.sum(w * 1e-6 * res.x[charge]))  # not part of the reported cost
    return res.fun - tie_break, res.x[cap_st]


def test_lossless_store_matches_the_calendar_rebuild():
    """Without losses the linked store is exact: same optimum as the hour-by-hour calendar LP (scipy linprog)."""
    scenario = windy_instance(0.0)
    result = solve_scenario(scenario)
    reference, store_kwh = calendar_rebuild(scenario)
    assert result.status == "optimal"
    assert result.extras["time_aggregation"]["typical_days"] == 4
    assert result.total_cost_eur_per_a == pytest.approx(reference, rel=1e-6)
    # the store carries heat from the windy days to the dear ones: larger than a day's peak shift needs
    supply = result.tables["supply"].set_index("technology_id")
    assert supply.loc["store", "capacity_kw"] == pytest.approx(store_kwh, rel=1e-4, abs=1e-3)
    assert store_kwh > 600.0 * 24


def test_lossy_store_matches_the_calendar_rebuild_and_stays_within_bounds():
    """With 0.5 %/h losses the linked store is exact as well: the same optimum as the calendar LP, and the engine's
    own dispatch, replayed over the calendar hour by hour from its first start-of-day level, meets every later
    start-of-day level and stays within [0, capacity]."""
    scenario = windy_instance(0.5)
    result = solve_scenario(scenario)
    reference, _ = calendar_rebuild(scenario)
    assert result.status == "optimal"
    assert result.total_cost_eur_per_a == pytest.approx(reference, rel=1e-6)

    prepared = prepare_run(scenario, "reference")
    model = formulation.build_model(prepared)
    solution = model.lp.solve()
    x = solution.x
    grid = prepared.grid
    charge = x[model.cols["charge"][0]]
    tie_break = float(np.sum(grid.weight_h * 1e-6 * charge))
    assert solution.objective - tie_break == pytest.approx(result.total_cost_eur_per_a, rel=1e-6)
    discharge = x[model.cols["discharge"][0]]
    capacity = x[model.cols["store_new"][0]]
    level = x[model.cols["store_day_start"][0, 0]]
    keep, eta = 1 - 0.005, np.sqrt(0.9)
    step_of = {(int(p), int(h)): s for s, (p, h) in enumerate(zip(grid.period, grid.hour_of_day))}
    lowest, highest = np.inf, -np.inf
    for d in range(grid.day_period.size):
        assert level == pytest.approx(x[model.cols["store_day_start"][0, d]], abs=1e-6 * max(1.0, capacity))
        for h in range(24):
            t = step_of[(int(grid.day_period[d]), h)]
            level = keep * level + eta * charge[t] - discharge[t] / eta
            lowest, highest = min(lowest, level), max(highest, level)
    assert lowest >= -1e-6 * capacity
    assert highest <= capacity * (1 + 1e-6)
    start = x[model.cols["store_day_start"][0]]
    extreme = np.flatnonzero(grid.extreme_period[grid.day_period])
    assert extreme.size  # the peak-heating and coldest days
    assert np.allclose(start[(extreme + 1) % start.size], start[extreme], atol=1e-6 * max(1.0, capacity))


def test_cyclic_within_each_day_is_the_default_and_costs_more_here():
    """``stores_between_days = false`` (the default) keeps each store cyclic within its typical day: the calendar
    LP with each day's level back at its start; on the windy instance that rules out keeping heat for the dear
    days, so it costs more."""
    import dataclasses

    assert Settings().stores_between_days is False
    scenario = windy_instance(0.0)
    linked = solve_scenario(scenario).total_cost_eur_per_a
    scenario.settings = dataclasses.replace(scenario.settings, stores_between_days=False)
    prepared = prepare_run(scenario, "reference")
    assert not formulation.stores_linked(prepared.grid, scenario.technologies, scenario.settings)
    daily = solve_scenario(scenario).total_cost_eur_per_a
    reference, _ = calendar_rebuild(scenario, cyclic_within_day=True)
    assert daily == pytest.approx(reference, rel=1e-6)
    assert daily > linked * 1.01


def test_full_year_store_is_unchanged():
    """The full year has one period (the year) and keeps its cyclic level without the day variables."""
    scenario = windy_instance(0.5)
    prepared = prepare_run(scenario, "reference", Settings(typical_days=0, stores_between_days=True))
    assert not formulation.stores_linked(prepared.grid, scenario.technologies, prepared.settings)
    model = formulation.build_model(prepared)
    assert "store_day_start" not in model.cols


def test_a_store_losing_most_of_its_heat_each_hour_stays_cyclic():
    """Above 25 %/h of loss a store keeps under 1e-3 of its heat over a day; it stays cyclic within the day."""
    scenario = windy_instance(30.0)
    prepared = prepare_run(scenario, "reference")
    assert not formulation.stores_linked(prepared.grid, scenario.technologies, scenario.settings)
    assert formulation.stores_linked(prepared.grid, windy_instance(0.5).technologies, scenario.settings)


def test_a_run_saved_under_an_earlier_model_revision_is_not_handed_back(tmp_path, monkeypatch):
    """The input hash carries the model revision: a run saved under an earlier revision keeps its place in the
    library but is not found again for the same files."""
    from engine.scenario import inputs
    from engine.storage.store import ScenarioStore

    scenario = windy_instance(0.0)
    revision = inputs.MODEL_REVISION
    monkeypatch.setattr(inputs, "MODEL_REVISION", revision - 1)
    saved_before = solve_scenario(scenario)
    monkeypatch.setattr(inputs, "MODEL_REVISION", revision)
    now = solve_scenario(scenario)
    assert saved_before.input_hash != now.input_hash
    with ScenarioStore(tmp_path / "library.sqlite") as store:
        run_id = store.save_run(saved_before, name="saved before")
        assert store.find_by_hash(now.input_hash) is None
        assert store.find_by_hash(saved_before.input_hash) == run_id
        assert store.load_run(run_id).total_cost_eur_per_a == pytest.approx(saved_before.total_cost_eur_per_a)


def test_the_setting_is_read_from_the_run_section(tmp_path):
    """``stores_between_days`` in ``[run]`` of scenario.toml reaches the run's settings (docs/input_format.md);
    absent, it is false; a value that is not a boolean is an error that names the file and the key."""
    import shutil

    from engine.scenario import DEMO_DIR, load_scenario
    from engine.scenario.problems import InputError

    folder = tmp_path / "city"
    shutil.copytree(DEMO_DIR, folder)
    assert load_scenario(folder).settings.stores_between_days is False
    toml = folder / "scenario.toml"
    text = toml.read_text(encoding="utf-8")
    toml.write_text(text.replace("[run]\n", "[run]\nstores_between_days = true\n", 1), encoding="utf-8")
    assert load_scenario(folder).settings.stores_between_days is True
    toml.write_text(text.replace("[run]\n", '[run]\nstores_between_days = "often"\n', 1), encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_scenario(folder)
    assert "scenario.toml" in str(caught.value) and "stores_between_days" in str(caught.value)
