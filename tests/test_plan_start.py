"""The plan start (docs/model.md section 9): a full-year LP with a store starts from the plan of its typical-day twin
and still ends at its own optimum.

The reference is an independent solve of each district LP as built with ``scipy.optimize.linprog`` (its interior
point method, not the simplex path the engine runs). The city: 60 days with a daily price swing, district A with a
gas boiler, an electric boiler and a heat store; district B the same plus a groundwater heat pump on a well with a
binding permit (its flow row is handed to HiGHS as a column's bounds, so the start must skip the columns that
change) and hot water at 60 °C.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

import scenario_factory as f
from engine.model import solve as solve_mod
from engine.model.formulation import build_model
from engine.model.lp import LinearProgram, lean_program
from engine.model.prepare import prepare_run
from engine.model.solve import attach_plan_start, plan_start, solve_scenario
from engine.scenario.inputs import Prices, Settings

HOURS = 24 * 60


def city():
    hour = np.arange(HOURS)
    day = hour // 24
    cold = 1.0 + 0.6 * np.cos(2 * np.pi * day / 60) + 0.25 * np.sin(2 * np.pi * day / 7)
    demand_a = 600.0 * cold + 250.0 * np.sin(2 * np.pi * hour / 24) ** 2
    demand_b = 400.0 * cold + 150.0 * (hour % 24 >= 17)
    electricity = 50.0 + 90.0 * ((hour % 24 >= 7) & (hour % 24 < 21)) + 20.0 * np.sin(2 * np.pi * day / 9)
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.92, investment_eur_per_kw=90.0,
             fixed_om_pct_per_a=2.0, lifetime_a=20),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=0.99,
             investment_eur_per_kw=60.0, lifetime_a=15),
        dict(technology_id="gwhp", kind="groundwater_heat_pump", carrier="electricity", investment_eur_per_kw=300.0,
             cop_quality_grade=0.5, sink_approach_k=5.0, source_approach_k=3.0),
        dict(technology_id="store", kind="heat_store", carrier="none", investment_eur_per_kw=2.0,
             store_loss_pct_per_h=0.5, store_efficiency=0.9, store_hours=4.0, lifetime_a=25),
    )
    return f.scenario(
        [f.district("A", 0), f.district("B", 1, supply_temp_c=40.0, hot_water_share=0.3, hot_water_temp_c=60.0)],
        techs,
        f.hourly(HOURS, outdoor_temp_c=2.0 - 4.0 * (cold - 1.0), electricity=electricity, grid_co2=250.0),
        wells=[f.well("W1", "B", permit_flow_m3_per_h=30.0, groundwater_temp_c=11.0)],
        heat_demand_hourly_kw=pd.DataFrame({"A": demand_a, "B": demand_b}),
        potential={("A", "gwhp"): 0.0},
        prices=Prices(gas_eur_per_mwh=55.0, co2_eur_per_t=60.0),
        settings=Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=4000.0),
    )


def linprog_optimum(lp: LinearProgram) -> float:
    """min cost @ x over the LP as built, as linprog's A_ub / A_eq (interior point method)."""
    a = sp.csr_matrix(lp.matrix())
    rl, ru = lp.row_lower, lp.row_upper
    eq = rl == ru
    up = ~eq & np.isfinite(ru)
    lo = ~eq & np.isfinite(rl)
    bounds = [(None if np.isinf(x) else x, None if np.isinf(y) else y) for x, y in zip(lp.col_lower, lp.col_upper)]
    res = linprog(lp.cost, A_ub=sp.vstack([a[up], -a[lo]]), b_ub=np.r_[ru[up], -rl[lo]], A_eq=a[eq], b_eq=rl[eq],
                  bounds=bounds, method="highs-ipm")
    assert res.status == 0, res.message
    return float(res.fun)


@pytest.fixture(scope="module")
def prepared(request):
    scenario = city()
    settings = Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=4000.0)
    run = prepare_run(scenario, "reference", settings)
    saved = solve_mod.PLAN_START_DAYS
    solve_mod.PLAN_START_DAYS = 6  # 60 days: six typical days and the extreme days
    try:
        attach_plan_start(scenario, "reference", settings, run)
    finally:
        solve_mod.PLAN_START_DAYS = saved
    assert run.plan_start is not None and run.plan_start.n_steps < HOURS
    return run


@pytest.mark.parametrize("district", [0, 1])
def test_full_year_lp_started_from_the_typical_day_plan_has_the_optimum_linprog_finds(prepared, district):
    model = build_model(prepared, [district])
    model.lp.set_objective(model.money)
    start = plan_start(prepared, [district], model)
    assert start is not None
    cols, values = start
    assert len(cols) == len(model.units.technology_id) + len(model.stores.technology_id)
    assert values.max() > 0  # the typical days build something
    reference = linprog_optimum(model.lp)
    started = model.lp.solve(fixed_start=start)
    assert started.status == "optimal"
    assert started.info["fixed_start"]["used"]
    assert started.info["fixed_start"]["fixed_columns"] == len(cols)
    assert started.objective == pytest.approx(reference, rel=1e-7)
    plain = model.lp.solve()
    assert plain.objective == pytest.approx(reference, rel=1e-7)
    # the full year's plan is not the typical days' plan: the start moved to another vertex
    assert not np.allclose(started.x[cols], values, rtol=1e-3, atol=1.0)


def test_start_skips_the_well_column_the_trimming_replaces(prepared):
    model = build_model(prepared, [1])
    model.lp.set_objective(model.money)
    lean = lean_program(model.lp)
    assert len(lean.flow_rows) > 0  # the heat pump's output became the well-flow column
    out = model.cols["out"][model.units.technology_id.index("gwhp")]
    new = np.r_[model.cols["new"].ravel(), model.cols["store_new"].ravel()]
    held, values = lean.held_columns(np.r_[new, out[:5]], np.arange(len(new) + 5, dtype=float))
    assert len(held) == len(new)  # the capacities are kept as they are, the replaced outputs left out
    assert np.array_equal(values, np.arange(len(new), dtype=float))
    y = np.zeros(lean.n_cols)
    y[held] = 1.0 + np.arange(len(held))
    assert np.allclose((lean.to_original @ y)[new], 1.0 + np.arange(len(new)))


def test_start_without_feasible_point_falls_back_to_the_lp_from_scratch():
    # min x + 2y, x + y >= 1, x <= 0.6: optimum 0.6 + 0.8 = 1.4 (hand calculation)
    lp = LinearProgram()
    x = lp.add_variables("x", 2, 0.0, np.array([0.6, np.inf]))
    lp.add_cost(x, [1.0, 2.0])
    lp.add_rows("need", [(x[0], 1.0), (x[1], 1.0)], lower=1.0)
    lp.add_rows("no_shortage", [(x[1], 1.0)], upper=np.inf, lower=-np.inf)
    without = lp.solve(fixed_start=(np.array([0, 1]), np.array([0.0, 0.0])))  # x = y = 0 leaves the need unmet
    assert without.status == "optimal" and not without.info["fixed_start"]["used"]
    assert without.objective == pytest.approx(1.4, rel=1e-12)
    clipped = lp.solve(fixed_start=(np.array([0, 1]), np.array([5.0, 3.0])))  # x clipped to its bound 0.6
    assert clipped.info["fixed_start"]["used"]
    assert clipped.objective == pytest.approx(1.4, rel=1e-12)
    assert clipped.x == pytest.approx([0.6, 0.4], abs=1e-9)


def test_full_year_run_with_the_plan_start_costs_what_the_run_without_it_costs(monkeypatch):
    scenario = city()
    monkeypatch.setattr(solve_mod, "PLAN_START_DAYS", 6)
    started = solve_scenario(scenario, workers=1)
    assert started.model_size["plan_start_lps"] == 2  # both districts have a store
    monkeypatch.setattr(solve_mod, "PLAN_START", False)
    plain = solve_scenario(scenario, workers=1)
    assert "plan_start_lps" not in plain.model_size
    assert started.status == plain.status
    assert started.total_cost_eur_per_a == pytest.approx(plain.total_cost_eur_per_a, rel=1e-7)
    assert started.unserved_heat_mwh_per_a == pytest.approx(plain.unserved_heat_mwh_per_a, abs=1e-6)


def test_typical_day_and_co2_runs_get_no_twin():
    scenario = city()
    for settings in (Settings(typical_days=6), Settings(typical_days=0, objective="co2")):
        run = prepare_run(scenario, "reference", settings)
        attach_plan_start(scenario, "reference", settings, run)
        assert run.plan_start is None
    full_year = Settings(typical_days=0)
    run = prepare_run(scenario, "reference", full_year)
    attach_plan_start(scenario, "reference", full_year, run, solver="cbc")  # pulp solvers start as they do
    assert run.plan_start is None
    attach_plan_start(scenario, "reference", full_year, run)
    assert run.plan_start is not None  # HiGHS, cost, full year: the twin is made
    run = prepare_run(scenario, "reference", full_year)
    run.fixed_new = {}
    attach_plan_start(scenario, "reference", full_year, run)
    assert run.plan_start is None  # a fixed plan has nothing to choose


def test_the_full_year_check_keeps_every_unit_store_and_well_of_the_plan():
    """engine.studies.year_check fixes each unit's new capacity by district, technology and well (the store in
    kWh): the full-year run builds exactly the typical-day plan."""
    from engine.studies.year_check import check_over_year

    scenario = city()
    planned = solve_scenario(scenario, settings=Settings(typical_days=6, value_of_unserved_heat_eur_per_mwh=4000.0))
    check = check_over_year(scenario, planned)
    assert check.solved and "plan_start_lps" not in check.year.model_size  # a fixed plan needs no start
    keys = ["district_id", "technology_id", "well_id"]
    a = planned.tables["supply"].set_index(keys)["new_kw"]
    b = check.year.tables["supply"].set_index(keys)["new_kw"]
    assert a.index.equals(b.index)
    assert a[("B", "gwhp", "W1")] > 0 and a[("A", "store", "")] > 0  # the plan holds a well and a store
    assert np.allclose(b.to_numpy(), a.to_numpy(), rtol=1e-9, atol=1e-9)
