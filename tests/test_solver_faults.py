"""Solver faults end with a plain message that names the district or constraint at fault, never an exception."""

from __future__ import annotations


import numpy as np
import pandas as pd

import scenario_factory as f
from engine.scenario.inputs import Prices, Settings
from engine.model.solve import solve_scenario


def _instance(allow_unserved=False, gas_potential=100.0, cap=None):
    demand = np.where(np.arange(8760) < 4380, 1000.0, 400.0)
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0),
        dict(technology_id="net", kind="network_connection", carrier="network", investment_eur_per_kw=50.0),
    )
    return f.scenario(
        [f.district("core", network_available=True, network_connection_limit_kw=600.0),
         f.district("edge", 1)],
        techs,
        f.hourly(network=30.0),
        heat_demand_hourly_kw=pd.DataFrame({"core": demand, "edge": demand / 2}),
        potential={("core", "gas"): gas_potential},
        prices=Prices(gas_eur_per_mwh=40.0),
        settings=Settings(typical_days=0, allow_unserved_heat=allow_unserved, co2_cap_t_per_a=cap),
    )


def test_short_supply_names_the_district():
    result = solve_scenario(_instance())
    assert result.status == "infeasible"
    assert "district core" in result.message and "1,000 kW" in result.message
    assert "edge" not in result.message


def test_unserved_heat_keeps_it_feasible():
    result = solve_scenario(_instance(allow_unserved=True))
    # a run that leaves heat unserved is solved but has its own status (docs/model.md section 7)
    assert result.status == "optimal_with_unserved" and result.solved
    assert result.unserved_heat_mwh_per_a > 0
    assert "left unserved" in result.message
    assert "No plan serves all the heat" in result.message and "core" in result.message


def test_impossible_co2_cap_names_the_cap():
    result = solve_scenario(_instance(gas_potential=np.inf, cap=1.0))
    assert result.status == "infeasible"
    assert "CO2 cap" in result.message


def test_cancel_ends_with_a_message():
    result = solve_scenario(_instance(allow_unserved=True), cancel=lambda: True)
    assert result.status == "interrupted"
    assert "cancelled" in result.message


def test_time_limit_ends_with_a_message():
    """A time limit far below what HiGHS needs stops it before the optimum."""
    result = solve_scenario(_instance(allow_unserved=True), time_limit_s=1e-6)
    assert result.status == "time_limit"
    assert "time limit" in result.message and "district core" in result.message
