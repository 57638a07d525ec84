"""Hot water at its own temperature: a 35 °C district with a 35 % hot-water share.

Hot water needs about 60 °C at the store against legionella (common practice; local hygiene rules decide), so a
heat pump making it runs at the COP of a 60 °C sink, not of the 35 °C space-heating supply. The engine's result is
checked against an independent re-solve: the same week written here as matrices from the equations (heat balance,
hot-water balance served by the gas boiler, the heat pump's hot-water part or unserved heat, capacities, Carnot
COP with a quality grade) and solved with ``scipy.optimize.linprog``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

import scenario_factory as f
from engine.model.solve import solve_scenario
from engine.physics.demand import hot_water_daily_shape
from engine.scenario.inputs import Prices, Settings

HOURS = 24 * 7
SHARE = 0.35
OUTDOOR_C = 5.0
GRADE, SINK_APPROACH, SOURCE_APPROACH = 0.45, 5.0, 3.0
HP_EUR_PER_KW, GAS_EUR_PER_KW = 40.0, 5.0  # per kW for a week-long "year": capital and energy comparable
ELECTRICITY, GAS = 100.0, 60.0
VOLL = 5000.0


def demand_kw():
    hour = np.arange(HOURS)
    return 80.0 + 40.0 * np.cos(2 * np.pi * hour / 24) ** 2


def instance(hot_water_temp_c):
    techs = f.technologies(
        dict(technology_id="ahp", kind="air_heat_pump", carrier="electricity", investment_eur_per_kw=HP_EUR_PER_KW,
             cop_quality_grade=GRADE, sink_approach_k=SINK_APPROACH, source_approach_k=SOURCE_APPROACH),
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9,
             investment_eur_per_kw=GAS_EUR_PER_KW),
    )
    d = demand_kw()
    return f.scenario(
        [f.district("A", supply_temp_c=35.0, hot_water_share=SHARE, hot_water_temp_c=hot_water_temp_c,
                    heat_demand_mwh_per_a=d.sum() / 1000)],
        techs,
        f.hourly(HOURS, outdoor_temp_c=OUTDOOR_C, electricity=ELECTRICITY, grid_co2=0.0),
        heat_demand_hourly_kw=pd.DataFrame({"A": d}),
        prices=Prices(gas_eur_per_mwh=GAS, co2_eur_per_t=0.0),
        settings=Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=VOLL),
    )


def cop(sink_c):
    """Carnot COP times grade on condensing / evaporating temperatures in kelvin."""
    cond, evap = sink_c + SINK_APPROACH + 273.15, OUTDOOR_C - SOURCE_APPROACH + 273.15
    return GRADE * cond / (cond - evap)


def independent_cost(hot_water_temp_c):
    """Variables: cap_hp, cap_gas, then per hour hp_space, hp_hot_water, gas, unserved."""
    a = 0.05 * 1.05**20 / (1.05**20 - 1)  # annuity factor, 5 %, 20 a (VDI 2067 part 1)
    d = demand_kw()
    shape = np.tile(hot_water_daily_shape(), HOURS // 24)
    hw = np.minimum(SHARE * d.sum() * shape / shape.sum(), d)
    n = HOURS
    hp_s, hp_w, gas, uns = (2 + k * n + np.arange(n) for k in range(4))
    n_var = 2 + 4 * n
    c = np.zeros(n_var)
    c[0], c[1] = a * HP_EUR_PER_KW, a * GAS_EUR_PER_KW
    c[hp_s] = ELECTRICITY / cop(35.0) / 1000
    c[hp_w] = ELECTRICITY / cop(max(hot_water_temp_c, 35.0)) / 1000
    c[gas] = GAS / 0.9 / 1000
    c[uns] = VOLL / 1000
    t = np.arange(n)
    eq = sp.coo_matrix((np.ones(4 * n), (np.tile(t, 4), np.r_[hp_s, hp_w, gas, uns])), shape=(n, n_var))
    # hot water: hp_hot_water + gas + unserved >= hw  ->  -(...) <= -hw
    hw_rows = sp.coo_matrix((-np.ones(3 * n), (np.tile(t, 3), np.r_[hp_w, gas, uns])), shape=(n, n_var))
    cap_hp = sp.coo_matrix((np.r_[np.ones(2 * n), -np.ones(n)], (np.r_[t, t, t], np.r_[hp_s, hp_w, np.zeros(n, int)])),
                           shape=(n, n_var))
    cap_gas = sp.coo_matrix((np.r_[np.ones(n), -np.ones(n)], (np.r_[t, t], np.r_[gas, np.ones(n, int)])),
                            shape=(n, n_var))
    a_ub = sp.vstack([hw_rows, cap_hp, cap_gas])
    b_ub = np.r_[-hw, np.zeros(2 * n)]
    res = linprog(c, A_ub=a_ub, b_ub=b_ub, A_eq=eq, b_eq=d, bounds=(0, None), method="highs")
    assert res.status == 0
    return res.fun


def test_hot_water_at_60_c_matches_independent_resolve_and_moves_cost_about_ten_percent():
    old = solve_scenario(instance(35.0))  # hot water made at the 35 °C supply temperature: the old behaviour
    new = solve_scenario(instance(60.0))
    assert old.solved and new.solved
    assert old.total_cost_eur_per_a == pytest.approx(independent_cost(35.0), rel=1e-6)
    assert new.total_cost_eur_per_a == pytest.approx(independent_cost(60.0), rel=1e-6)
    change = new.total_cost_eur_per_a / old.total_cost_eur_per_a - 1
    assert 0.07 < change < 0.13, change


def test_hot_water_temperature_defaults_to_60_c():
    """Without the column, 60 °C: the same cost as stating it."""
    scenario = instance(60.0)
    scenario.districts = scenario.districts.drop(columns="hot_water_temp_c")
    assert solve_scenario(scenario).total_cost_eur_per_a == pytest.approx(independent_cost(60.0), rel=1e-6)


def test_hot_water_share_runs_at_its_own_cop_by_hand():
    """The heat pump alone (gas dear): electricity = space heat / COP(35 °C) + hot water / COP(60 °C)."""
    result = solve_scenario(instance(60.0))
    d = demand_kw()
    shape = np.tile(hot_water_daily_shape(), HOURS // 24)
    hw = np.minimum(SHARE * d.sum() * shape / shape.sum(), d)
    supply = result.tables["supply"].set_index("technology_id")
    if supply.loc["gas", "heat_mwh_per_a"] < 1e-9:
        hand = ((d - hw).sum() / cop(35.0) + hw.sum() / cop(60.0)) / 1000
        assert supply.loc["ahp", "electricity_mwh_per_a"] == pytest.approx(hand, rel=1e-6)
    else:  # gas covers some peak hours: electricity lies between the all-35 °C and the all-60 °C figures
        assert d.sum() / cop(35.0) / 1000 < supply.loc["ahp", "electricity_mwh_per_a"] < d.sum() / cop(60.0) / 1000


def test_cop_clips_are_counted():
    """Half the hours at 40 °C outdoors: a 35 °C sink then has a 3 K lift (condensing 40 °C, evaporating 37 °C),
    Carnot COP 0.45 * 313.15 / 3 = 47, clipped to 8: 84 district-hours at the upper clip for space heating; the
    60 °C hot-water sink keeps a 28 K lift, COP 0.45 * 338.15 / 28 = 5.4, below the clip."""
    from engine.model.prepare import prepare_run

    scenario = instance(60.0)
    scenario.hourly["outdoor_temp_c"] = np.where(np.arange(HOURS) % 2 == 0, 40.0, OUTDOOR_C)
    bounds = prepare_run(scenario, "reference").cop_bounds
    assert bounds["space_heating"]["ahp"]["district_hours_at_cop_max"] == pytest.approx(HOURS / 2)
    assert bounds["space_heating"]["ahp"]["districts_at_a_bound"] == 1
    assert bounds["hot_water"]["ahp"]["district_hours_at_cop_max"] == 0.0
    assert bounds["space_heating"]["ahp"]["cop_max"] == 8.0


def test_binding_cop_clip_is_said_in_the_run_message():
    """The same 84 district-hours at the upper clip (by hand above) are named in the message a planner reads;
    at 5 °C throughout (lift 33 K for 35 °C, COP 0.45 * 313.15 / 33 = 4.3) no clip binds and nothing is said."""
    scenario = instance(60.0)
    scenario.hourly["outdoor_temp_c"] = np.where(np.arange(HOURS) % 2 == 0, 40.0, OUTDOOR_C)
    result = solve_scenario(scenario)
    assert result.solved, result.message
    assert "COP held at its bounds [1, 8]" in result.message
    assert "ahp (space heating) 84 h at 8" in result.message
    assert "COP held" not in solve_scenario(instance(60.0)).message
