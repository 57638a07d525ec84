"""A plan run over every hour of the year (engine.studies.year_check; docs/model.md section 9).

Checks by hand calculation: with the capacities fixed, the full year's cost is the annuity of the plan's capacity
plus each hour's fuel or electricity, the annuity by ``numpy_financial.pmt`` (the standard annuity formula,
a = r / (1 - (1 + r)^-n)); a plan cut below the peak leaves unserved the heat above its capacity,
sum_t max(D_t - capacity, 0), hour by hour.
"""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pandas as pd
import pytest

import scenario_factory as f
from engine.model.solve import solve_scenario
from engine.scenario.inputs import Prices, Settings
from engine.scenario.inputs import input_hash
from engine.storage.store import ScenarioStore
from engine.studies.year_check import check_over_year, holds_a_plan, resolve_held_plan, year_settings

HOURS = 8760
GAS_EUR_PER_MWH = 40.0
VOLL = 3000.0


def boiler_city(typical_days: int = 8):
    hour = np.arange(HOURS)
    day = hour // 24
    demand = (500.0 + 350.0 * np.cos(2 * np.pi * (day - 20) / 365) + 120.0 * np.sin(2 * np.pi * day / 11)
              + 80.0 * np.sin(2 * np.pi * hour / 24) ** 2)
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0,
             lifetime_a=20),
    )
    scenario = f.scenario(
        [f.district("A", heat_demand_mwh_per_a=demand.sum() / 1000)],
        techs,
        f.hourly(HOURS, outdoor_temp_c=10.0 - 12.0 * np.cos(2 * np.pi * (day - 20) / 365)),
        heat_demand_hourly_kw=pd.DataFrame({"A": demand}),
        prices=Prices(gas_eur_per_mwh=GAS_EUR_PER_MWH, co2_eur_per_t=0.0),
        # the plan serves every hour; the check allows unserved heat, priced at VOLL
        settings=Settings(typical_days=typical_days, value_of_unserved_heat_eur_per_mwh=VOLL,
                          allow_unserved_heat=False),
    )
    return scenario, demand


def annuity() -> float:
    return -npf.pmt(0.05, 20, 1.0)  # 5 % over 20 years, the scenario's default discount rate


def test_the_plan_over_the_year_costs_its_annuity_and_every_hours_fuel():
    scenario, demand = boiler_city()
    planned = solve_scenario(scenario)
    assert planned.solved
    capacity = float(planned.tables["supply"]["new_kw"].sum())
    # the peak day is kept as an extreme period: the typical days build the year's peak
    assert capacity == pytest.approx(demand.max(), rel=1e-6)
    check = check_over_year(scenario, planned)
    assert check.solved
    hand = capacity * 100.0 * annuity() + demand.sum() / 0.9 / 1000 * GAS_EUR_PER_MWH
    assert check.year.total_cost_eur_per_a == pytest.approx(hand, rel=1e-9)
    assert check.unserved_heat_mwh_per_a == pytest.approx(0.0, abs=1e-6)
    assert float(check.year.tables["supply"]["new_kw"].sum()) == pytest.approx(capacity, rel=1e-12)
    assert len(check.year.tables["steps"]) == HOURS
    row = check.technologies.set_index("technology_id").loc["gas"]
    assert row["year_heat_mwh_per_a"] == pytest.approx(demand.sum() / 1000, rel=1e-9)
    assert check.cost_difference_pct == pytest.approx(
        100 * (hand - planned.total_cost_eur_per_a) / planned.total_cost_eur_per_a, rel=1e-6)
    assert "serves every hour" in check.summary()


def test_a_plan_below_the_peak_leaves_the_heat_above_it_unserved():
    scenario, demand = boiler_city()
    planned = solve_scenario(scenario)
    capacity = 0.8 * demand.max()
    supply = planned.tables["supply"].copy()
    supply["new_kw"] = capacity
    planned.tables["supply"] = supply
    check = check_over_year(scenario, planned)
    short = np.maximum(demand - capacity, 0.0).sum() / 1000
    assert short > 10  # the cut is felt in many hours
    assert check.unserved_heat_mwh_per_a == pytest.approx(short, rel=1e-7)
    hand = (capacity * 100.0 * annuity() + (demand.sum() / 1000 - short) / 0.9 * GAS_EUR_PER_MWH
            + short * VOLL)
    assert check.year.total_cost_eur_per_a == pytest.approx(hand, rel=1e-9)
    assert "unserved" in check.summary()
    assert "With the plan's capacities held, the heat is short in A" in check.year.message


def test_a_plan_that_names_no_unit_builds_nothing_and_a_run_without_a_plan_has_none():
    scenario, demand = boiler_city()
    planned = solve_scenario(scenario)
    planned.tables["supply"] = planned.tables["supply"].iloc[0:0]
    check = check_over_year(scenario, planned)
    assert check.unserved_heat_mwh_per_a == pytest.approx(demand.sum() / 1000, rel=1e-9)
    failed = solve_scenario(scenario)
    failed.status = "infeasible"
    with pytest.raises(ValueError, match="solved run"):
        check_over_year(scenario, failed)


def test_a_held_plan_has_its_own_fingerprint_and_solves_again_to_the_same_cost(tmp_path):
    """A check is the plan's dispatch, not the optimum of its inputs: saved to the library it must never answer
    for a full-year run of the same inputs (the library hands back a saved run of the same fingerprint without
    solving). Its fingerprint differs from the inputs' (kept in extras), the same plan gives the same one, another
    plan another; re-solved from its own supply table it costs the same (hand value of the first test)."""
    scenario, demand = boiler_city()
    planned = solve_scenario(scenario)
    check = check_over_year(scenario, planned)
    inputs = input_hash(scenario, planned.cost_case, year_settings(planned))
    assert holds_a_plan(check.year) and not holds_a_plan(planned)
    assert check.year.extras["fixed_plan"]["inputs_hash"] == inputs
    assert check.year.input_hash != inputs
    assert check_over_year(scenario, planned).year.input_hash == check.year.input_hash
    smaller = planned.tables["supply"].copy()
    smaller["new_kw"] *= 0.9
    other = planned.__class__(**{**planned.__dict__, "tables": {**planned.tables, "supply": smaller}})
    assert check_over_year(scenario, other).year.input_hash != check.year.input_hash
    with ScenarioStore(tmp_path / "runs.sqlite") as store:
        run_id = store.save_run(check.year, "checked")
        assert store.find_by_hash(inputs) is None
        back = store.load_run(run_id)
    assert holds_a_plan(back) and back.input_hash == check.year.input_hash
    again = resolve_held_plan(scenario, back)
    capacity = float(planned.tables["supply"]["new_kw"].sum())
    hand = capacity * 100.0 * annuity() + demand.sum() / 0.9 / 1000 * GAS_EUR_PER_MWH
    assert again.total_cost_eur_per_a == pytest.approx(hand, rel=1e-9)
    assert again.input_hash == back.input_hash
    with pytest.raises(ValueError, match="does not hold a plan"):
        resolve_held_plan(scenario, planned)
