"""The pathway over milestone years: the multi-period LP, its inputs and its tables.

References used below:
* Present value of an annuity and the capital recovery factor: Short, Packey & Holt (1995), "A manual for the
  economic evaluation of energy efficiency and renewable energy technologies", NREL/TP-462-5173, eq. for the
  uniform present-worth factor (from memory); checked here against numpy-financial's ``pv``.
* scipy.optimize.linprog (HiGHS) on a matrix the test writes down itself.
"""

from __future__ import annotations

import math
import shutil

import numpy as np
import numpy_financial as npf
import pandas as pd
import pytest
from scipy.optimize import linprog

import scenario_factory as f
from engine.model.multiperiod import build_charge, discount_sum, year_weights
from engine.model.solve import solve_scenario
from engine.scenario.inputs import Prices, Settings
from engine.scenario.pathway_inputs import CITY_COLUMNS, PathwayInputs, read_pathway_inputs
from engine.scenario.folder import DEMO_DIR
from engine.studies.pathway import solve_pathway

P_KW = 1000.0  # flat heat demand
E_MWH = P_KW * 8760 / 1000.0
GAS = 100.0  # EUR/MWh, boiler efficiency 1
INVEST = 500.0  # EUR/kW for the electric boiler
LIFE = 20.0
RATE = 0.05


def _pathway(years, electricity_factors, last_period_a=5):
    city = pd.DataFrame(np.nan, index=pd.Index(years, name="year"), columns=list(CITY_COLUMNS))
    city["electricity_price_factor"] = electricity_factors
    district = pd.DataFrame(columns=["year", "district_id", "heat_demand_factor"])
    return PathwayInputs(list(years), years[0], last_period_a, city, district)


def _two_tech_city(electricity=100.0):
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=1.0),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0,
             investment_eur_per_kw=INVEST, lifetime_a=LIFE),
    )
    demand = pd.DataFrame({"d1": np.full(8760, P_KW)})
    return f.scenario(
        [f.district("d1", heat_demand_mwh_per_a=E_MWH)], techs, f.hourly(electricity=electricity, grid_co2=0.0),
        existing={("d1", "gas"): P_KW}, potential={("d1", "gas"): P_KW},
        heat_demand_hourly_kw=demand,
        settings=Settings(typical_days=0, discount_rate=RATE),
        prices=Prices(gas_eur_per_mwh=GAS, co2_eur_per_t=0.0),
    )


# ------------------------------------------------------------------------------------------------ discounting
def test_discount_sum_matches_numpy_financial_present_value():
    # S(m) is the present value of 1 paid at the end of each of m years: -npf.pv(r, m, 1)
    for m in (1, 5, 12):
        assert discount_sum(RATE, m) == pytest.approx(-npf.pv(RATE, m, 1.0), rel=1e-12)
    assert discount_sum(0.0, 7) == 7.0


def test_build_charge_is_investment_minus_annuity_based_remaining_value():
    # built 2035, base 2030, horizon ends 2040: 5 of 20 years inside; remaining value = PV of the 15 annuities left
    annuity = -npf.pmt(RATE, LIFE, INVEST)  # capital recovery (numpy-financial)
    remaining_at_2040 = -npf.pv(RATE, 15, annuity)
    expected = (INVEST - remaining_at_2040 * 1.05 ** -5) * 1.05 ** -5
    assert float(build_charge(INVEST, LIFE, 2035, 2030, 2040, RATE)) == pytest.approx(expected, rel=1e-10)
    # a plant whose lifetime ends inside the horizon has no remaining value: full investment, discounted
    assert float(build_charge(INVEST, 4.0, 2030, 2030, 2040, RATE)) == pytest.approx(INVEST, rel=1e-12)


# ------------------------------------------------------------------------------------------------ two periods
def _hand_plans(e30, e35):
    """Present value of the three plans by hand: no build, build in 2030, build in 2035 (lifetime 20 a)."""
    d30 = discount_sum(RATE, 5)
    d35 = 1.05 ** -5 * discount_sum(RATE, 5)
    a = RATE / (1 - 1.05 ** -LIFE)  # capital recovery factor
    # investment minus the remaining value at 2040 = the annuities of the years inside the horizon
    charge30 = a * INVEST * discount_sum(RATE, 10) * P_KW
    charge35 = a * INVEST * 1.05 ** -5 * discount_sum(RATE, 5) * P_KW
    return {
        "none": (d30 + d35) * E_MWH * GAS,
        "2030": charge30 + d30 * E_MWH * e30 + d35 * E_MWH * e35,
        "2035": charge35 + d30 * E_MWH * GAS + d35 * E_MWH * e35,
    }


@pytest.mark.parametrize("e30,e35", [(90.0, 40.0), (97.0, 60.0), (60.0, 60.0)])
def test_two_period_build_now_or_later_matches_hand_and_linprog(e30, e35):
    scenario = _two_tech_city(electricity=100.0)
    result = solve_pathway(scenario, _pathway([2030, 2035], [e30 / 100.0, e35 / 100.0]))
    assert result.solved, result.message
    plans = _hand_plans(e30, e35)
    best = min(plans, key=plans.get)
    assert result.present_value_eur == pytest.approx(plans[best], rel=1e-7)
    new = result.capacity.set_index(["year", "technology_id"])["new_kw"]
    assert new[(2030, "eboiler")] == pytest.approx(P_KW if best == "2030" else 0.0, abs=1e-3)
    assert new[(2035, "eboiler")] == pytest.approx(P_KW if best == "2035" else 0.0, abs=1e-3)

    # independent matrix: x30, x35 [kW built], h30, h35 [MWh/a from the electric boiler]
    d = year_weights([2030, 2035], 2030, 2040, RATE)
    c = np.array([build_charge(INVEST, LIFE, 2030, 2030, 2040, RATE), build_charge(INVEST, LIFE, 2035, 2030, 2040,
                                                                                   RATE),
                  d[0] * (e30 - GAS), d[1] * (e35 - GAS)])
    a_ub = np.array([[-8.76, 0, 1, 0], [-8.76, -8.76, 0, 1]])
    lp = linprog(c, A_ub=a_ub, b_ub=[0, 0], bounds=[(0, None), (0, None), (0, E_MWH), (0, E_MWH)], method="highs")
    assert lp.status == 0
    constant = (d[0] + d[1]) * E_MWH * GAS
    assert result.present_value_eur == pytest.approx(lp.fun + constant, rel=1e-7)


def test_one_year_pathway_equals_plain_solve_small():
    scenario = _two_tech_city(electricity=70.0)
    plain = solve_scenario(scenario)
    result = solve_pathway(scenario, _pathway([2030], [1.0]))
    assert result.solved
    assert result.summary["total_cost_eur_per_a"].iloc[0] == pytest.approx(plain.total_cost_eur_per_a, rel=1e-6)


def test_myopic_never_beats_foresight_and_can_lose():
    # 2030 electricity at 97 EUR/MWh barely beats gas: a myopic planner that sees only 2030-2035 does not build,
    # foresight does because 2035 is cheap (or the other way round); either way foresight is never dearer
    scenario = _two_tech_city()
    pathway = _pathway([2030, 2035], [0.97, 0.6])
    fore = solve_pathway(scenario, pathway)
    myo = solve_pathway(scenario, pathway, myopic=True)
    assert fore.solved and myo.solved
    assert fore.present_value_eur <= myo.present_value_eur * (1 + 1e-9)
    assert myo.mode == "myopic"
    hand = _hand_plans(97.0, 60.0)
    assert fore.present_value_eur == pytest.approx(min(hand.values()), rel=1e-7)


def test_retired_plant_is_replaced_and_capacity_table_records_it():
    scenario = _two_tech_city(electricity=200.0)  # the electric boiler never pays: gas is rebuilt
    pathway = _pathway([2030, 2035], [1.0, 1.0])
    pathway.retirement_year[("d1", "gas")] = 2035
    result = solve_pathway(scenario, pathway)
    assert result.solved, result.message
    gas = result.capacity[result.capacity["technology_id"] == "gas"].set_index("year")
    assert gas.loc[2030, "capacity_kw"] == pytest.approx(P_KW)
    assert gas.loc[2035, "retired_kw"] == pytest.approx(P_KW, abs=1e-6)
    assert gas.loc[2035, "new_kw"] == pytest.approx(P_KW, abs=1e-6)


def test_unreachable_cap_names_the_year_and_the_cap():
    scenario = _two_tech_city(electricity=200.0)
    scenario.district_technologies.loc[scenario.district_technologies["technology_id"] == "eboiler",
                                       "potential_kw"] = 0.0
    scenario.settings.allow_unserved_heat = False
    pathway = _pathway([2030, 2035], [1.0, 1.0])
    pathway.city.loc[2035, "co2_cap_t_per_a"] = 100.0
    result = solve_pathway(scenario, pathway)
    assert result.status == "infeasible"
    assert "Year 2035" in result.message and "CO2 cap of 100 t/a" in result.message


# ------------------------------------------------------------------------------------------------ inputs
def _folder(tmp_path, toml_extra="", csv=None, dt_retire=None):
    folder = tmp_path / "city"
    shutil.copytree(DEMO_DIR, folder)
    text = (folder / "scenario.toml").read_text()
    if "[pathway]" in text:
        text = text[:text.index("[pathway]")]
    (folder / "scenario.toml").write_text(text + "\n" + toml_extra)
    (folder / "pathway.csv").unlink(missing_ok=True)
    if csv is not None:
        (folder / "pathway.csv").write_text(csv)
    if dt_retire is not None:
        dt = pd.read_csv(folder / "district_technologies.csv", dtype=str, keep_default_na=False)
        dt["retirement_year"] = ""
        dt.loc[0, "retirement_year"] = dt_retire
        dt.to_csv(folder / "district_technologies.csv", index=False)
    return folder


def test_years_out_of_order_named(tmp_path):
    folder = _folder(tmp_path, "[pathway]\nyears = [2030, 2040, 2035]\n")
    pathway, problems = read_pathway_inputs(folder)
    assert pathway is None
    assert any(p.file == "scenario.toml" and p.column == "pathway.years" and "2035" in p.message for p in problems)
    assert problems[0].row is not None


def test_year_before_base_year_named(tmp_path):
    folder = _folder(tmp_path, "[pathway]\nbase_year = 2030\nyears = [2025, 2035]\n")
    _, problems = read_pathway_inputs(folder)
    assert any("2025" in p.message and "base year 2030" in p.message for p in problems)


def test_trajectory_row_for_a_year_not_in_the_pathway(tmp_path):
    folder = _folder(tmp_path, "[pathway]\nyears = [2030, 2035]\n",
                     "year,district_id,heat_demand_factor\n2030,,0.95\n2033,,0.9\n")
    _, problems = read_pathway_inputs(folder)
    assert [(p.file, p.row, p.column) for p in problems] == [("pathway.csv", 3, "year")]
    assert "2033" in problems[0].message


def test_retirement_before_base_year(tmp_path):
    folder = _folder(tmp_path, "[pathway]\nyears = [2030, 2035]\n", dt_retire="2020")
    _, problems = read_pathway_inputs(folder)
    assert [(p.file, p.row, p.column) for p in problems] == [("district_technologies.csv", 2, "retirement_year")]
    assert "2020" in problems[0].message and "2030" in problems[0].message


def test_bad_cells_and_unknown_district(tmp_path):
    csv = ("year,district_id,co2_cap_t_per_a,network_from_year\n2030,,abc,\n2035,nowhere,,\n"
           "2035,old_town,5,\n")
    folder = _folder(tmp_path, "[pathway]\nyears = [2030, 2035]\n", csv)
    _, problems = read_pathway_inputs(folder, district_ids=["old_town"])
    found = {(p.row, p.column) for p in problems}
    assert (2, "co2_cap_t_per_a") in found  # not a number
    assert (3, "district_id") in found  # unknown district
    assert (4, "co2_cap_t_per_a") in found  # a city-wide column in a district row


def test_valid_inputs_are_typed(tmp_path):
    csv = "year,district_id,co2_cap_t_per_a,heat_demand_factor,network_from_year\n2035,,20000,0.9,\n" \
          "2035,larkmoss,,0.8,2035\n"
    folder = _folder(tmp_path, "[pathway]\nyears = [2030, 2035]\nlast_period_a = 10\n", csv)
    pathway, problems = read_pathway_inputs(folder)
    assert problems == []
    assert pathway.years == [2030, 2035] and pathway.period_years() == [5, 10]
    assert pathway.city.loc[2035, "co2_cap_t_per_a"] == 20000 and math.isnan(pathway.city.loc[2030, "co2_cap_t_per_a"])
    assert pathway.network_from_year == {"larkmoss": 2035}
