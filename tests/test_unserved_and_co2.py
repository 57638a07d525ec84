"""Runs that leave heat unserved, the abatement cost of the CO2 optimum's last tonnes, lowest CO2 within +X % cost.

Hand cases with constant demand and no investment, so that every plan's cost and CO2 is a sum of per-MWh rates:
gas boiler heat costs p_gas / eta and emits f_gas / eta (f_gas = 56 100 kg/TJ, IPCC 2006 Guidelines vol. 2 ch. 2
table 2.2), electric boiler heat costs p_el and emits the grid factor.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.cli import main as cli_main
from engine.model.solve import solve_scenario
from engine.scenario.inputs import Prices, Settings

HOURS = 8760
DEMAND_KW = 100.0
GAS_T_PER_MWH = 56_100 * 3.6e-3 / 1000  # IPCC 2006 default, natural gas


def two_boilers(grid_co2=0.0, settings=None, only_electric=False):
    rows = [dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0)]
    if not only_electric:
        rows.append(dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9))
    demand = np.full(HOURS, DEMAND_KW)
    return f.scenario(
        [f.district("A", heat_demand_mwh_per_a=demand.sum() / 1000)],
        f.technologies(*rows),
        f.hourly(electricity=100.0, grid_co2=grid_co2),
        heat_demand_hourly_kw=pd.DataFrame({"A": demand}),
        prices=Prices(gas_eur_per_mwh=40.0, co2_eur_per_t=0.0),
        settings=settings or Settings(typical_days=0),
    )


def test_unreachable_cap_gets_its_own_status_and_the_lowest_co2_without_unserved():
    """Only an electric boiler on a 100 kg/MWh grid: serving 876 MWh/a emits 87.6 t/a at least. A cap of 40 t/a
    is met only by leaving heat unserved: status optimal_with_unserved, the warning states 87.6 t/a, and the
    district's main supply is 'unserved' (more heat unserved than served)."""
    scenario = two_boilers(grid_co2=100.0, only_electric=True,
                           settings=Settings(typical_days=0, co2_cap_t_per_a=40.0))
    result = solve_scenario(scenario)
    assert result.status == "optimal_with_unserved"
    assert result.solved  # tables are complete
    floor = DEMAND_KW * HOURS / 1000 * 0.1
    assert result.extras["lowest_co2_without_unserved_t_per_a"] == pytest.approx(floor, rel=1e-6)
    assert f"{floor:,.0f} t/a" in result.message
    assert "cap" in result.message
    served = 40.0 / 0.1  # MWh the cap allows
    assert result.unserved_heat_mwh_per_a == pytest.approx(876.0 - served, rel=1e-6)
    assert result.tables["districts"].iloc[0]["main_supply"] == "unserved"


def test_reachable_run_stays_optimal():
    result = solve_scenario(two_boilers())
    assert result.status == "optimal"
    assert result.tables["districts"].iloc[0]["main_supply"] == "gas"


def test_abatement_cost_of_last_tonnes_of_co2_optimum():
    """CO2 optimum: all heat electric (zero-carbon grid). Each tonne let back in is gas heat, saving
    (p_el - p_gas / eta) per MWh of heat over f_gas / eta t per MWh: (100 - 40/0.9) / (0.20196/0.9) EUR/t."""
    result = solve_scenario(two_boilers(settings=Settings(typical_days=0, objective="co2")))
    assert result.status == "optimal"
    assert result.co2_t_per_a == pytest.approx(0.0, abs=1e-3)
    hand = (100.0 - 40.0 / 0.9) / (GAS_T_PER_MWH / 0.9)
    info = result.extras["co2_objective"]
    assert info["last_tonnes_abatement_cost_eur_per_t"] == pytest.approx(hand, rel=1e-5)
    assert info["abatement_step_t_per_a"] == pytest.approx(1.0, rel=1e-6)  # the 1 t floor of the step
    assert f"{hand:,.0f} EUR/t" in result.message


@pytest.mark.parametrize("pct", [5.0, 10.0])
def test_lowest_co2_within_cost_percent(pct):
    """Least cost: all gas, C = 876 MWh * 40/0.9 EUR/MWh. A budget of +X % buys X C / (100 - 40/0.9) MWh of
    electric heat in place of gas; CO2 = (876 MWh - that) * f_gas / 0.9."""
    result = solve_scenario(two_boilers(), objective="co2", co2_within_cost_pct=pct)
    assert result.solved, result.message
    least = 876.0 * 40.0 / 0.9
    switched = pct / 100 * least / (100.0 - 40.0 / 0.9)
    assert result.total_cost_eur_per_a == pytest.approx(least * (1 + pct / 100), rel=1e-5)
    assert result.co2_t_per_a == pytest.approx((876.0 - switched) * GAS_T_PER_MWH / 0.9, rel=1e-5)
    assert result.extras["co2_objective"]["within_cost_pct"] == pct


def test_command_line_takes_co2_within_cost_pct(tmp_path):
    assert cli_main(["solve", "demo", "--co2-within-cost-pct", "-1", "--out", str(tmp_path), "--quiet"]) == 2
    assert cli_main(["solve", "demo", "--objective", "cost", "--co2-within-cost-pct", "5", "--out",
                     str(tmp_path), "--quiet"]) == 2


def test_map_shows_the_unserved_class():
    """The district left mostly unserved is drawn in the palette's 'unserved' colour, legend 'Unserved heat'."""
    from engine.outputs.maps import district_values
    from engine.outputs.palette import technology_colors

    scenario = two_boilers(grid_co2=100.0, only_electric=True,
                           settings=Settings(typical_days=0, co2_cap_t_per_a=40.0))
    result = solve_scenario(scenario)
    table, legend = district_values(scenario, result, "main_supply")
    colours = technology_colors(scenario.technologies)
    assert table.set_index("district_id").loc["A", "color"] == colours["unserved"]
    assert ("Unserved heat", colours["unserved"]) in legend["entries"]


def test_co2_price_is_counted_once():
    """Gas heat only, CO2 price 100 EUR/t: every MWh of heat costs (p_gas + 100 EUR/t * f_gas) / eta, the CO2
    part is exactly the tonnes times the price, and the energy part is p_gas / eta per MWh (docs/model.md
    section 5: entered prices exclude the CO2 price; f_gas from IPCC 2006 Guidelines vol. 2 table 2.2)."""
    scenario = two_boilers()
    scenario.technologies = scenario.technologies[scenario.technologies["technology_id"] == "gas"]
    scenario.district_technologies = scenario.district_technologies[
        scenario.district_technologies["technology_id"] == "gas"]
    scenario.prices = Prices(gas_eur_per_mwh=40.0, co2_eur_per_t=100.0)
    result = solve_scenario(scenario)
    assert result.solved, result.message
    heat = DEMAND_KW * HOURS / 1000
    tonnes = heat * GAS_T_PER_MWH / 0.9
    parts = result.cost_breakdown_eur_per_a()
    assert result.co2_t_per_a == pytest.approx(tonnes, rel=1e-6)
    assert parts["co2"] == pytest.approx(100.0 * tonnes, rel=1e-6)
    assert parts["energy"] == pytest.approx(heat * 40.0 / 0.9, rel=1e-6)
    assert result.total_cost_eur_per_a == pytest.approx(heat * (40.0 + 100.0 * GAS_T_PER_MWH) / 0.9 + parts["investment"]
                                                        + parts["fixed_om"] + parts["variable_om"], rel=1e-6)


def test_least_cost_run_with_unserved_heat_names_the_districts_without_a_co2_solve():
    """No cap, a least-cost run: an electric boiler limited to 60 kW against a constant 100 kW demand leaves
    40 kW x 8760 h = 350.4 MWh/a unserved (hand). The warning names the district and its unserved heat, says no
    plan can serve it, and claims no lowest CO2 (that figure answers whether a cap is reachable; there is no
    cap). With the boiler unlimited but dearer than the price of unserved heat, the heat is left unserved by
    choice: the warning says serving it costs more."""
    scenario = two_boilers(only_electric=True)
    scenario.district_technologies.loc[:, "potential_kw"] = 60.0
    result = solve_scenario(scenario)
    assert result.status == "optimal_with_unserved"
    assert result.unserved_heat_mwh_per_a == pytest.approx(40.0 * HOURS / 1000, rel=1e-6)
    assert "No plan serves all the heat with the allowed supply in A (350.4 MWh/a)" in result.message
    assert "lowest_co2_without_unserved_t_per_a" not in result.extras
    dear = two_boilers(only_electric=True, settings=Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=50.0))
    result = solve_scenario(dear)  # electric heat at 100 EUR/MWh against 50 EUR/MWh for leaving it unserved
    assert result.unserved_heat_mwh_per_a == pytest.approx(876.0, rel=1e-6)
    assert "In A (876.0 MWh/a) serving it would cost more than the price of unserved heat" in result.message
