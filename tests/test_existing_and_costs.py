"""Existing well-bound capacity, the levelised cost of heat and the physics functions production calls.

Hand cases, each solved over a short constant year so that every figure follows by arithmetic: the annuity
method (VDI 2067 part 1, annuity factor computed here from its formula), the Carnot COP with a quality grade
(COP = g T_cond / (T_cond - T_evap), kelvin) and P = m_dot c_p dT with c_p from IAPWS-95 (``iapws``).
"""

from __future__ import annotations

import iapws
import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.model.prepare import prepare_run
from engine.model.solve import solve_scenario
from engine.scenario.inputs import Prices, Settings

HOURS = 8760


def annuity(rate, years):
    """Annuity factor i (1+i)^n / ((1+i)^n - 1), VDI 2067 part 1."""
    return rate * (1 + rate) ** years / ((1 + rate) ** years - 1)


def carnot_cop(sink_c, source_c, grade, sink_approach, source_approach):
    cond = sink_c + sink_approach + 273.15
    evap = source_c - source_approach + 273.15
    return grade * cond / (cond - evap)


def groundwater_case(existing_kw, potential_kw, demand_kw=400.0):
    techs = f.technologies(
        dict(technology_id="gwhp", kind="groundwater_heat_pump", carrier="electricity", investment_eur_per_kw=900.0,
             fixed_om_pct_per_a=2.0, lifetime_a=20.0, cop_quality_grade=0.5, sink_approach_k=3.0,
             source_approach_k=5.0),
    )
    demand = np.full(HOURS, demand_kw)
    return f.scenario(
        [f.district("A", supply_temp_c=55.0, hot_water_share=0.0, heat_demand_mwh_per_a=demand.sum() / 1000)],
        techs,
        f.hourly(electricity=100.0, grid_co2=0.0),
        wells=[f.well("W1", "A", permit_flow_m3_per_h=200.0, groundwater_temp_c=11.0, design_spread_k=4.0)],
        existing={("A", "gwhp"): existing_kw},
        potential={("A", "gwhp"): potential_kw},
        heat_demand_hourly_kw=pd.DataFrame({"A": demand}),
        prices=Prices(co2_eur_per_t=0.0),
    )


def test_existing_groundwater_heat_pump_is_kept_and_pays_no_annuity():
    """400 kW of constant demand, 300 kW of heat pump existing, potential 800 kW: 100 kW are built.

    Hand cost: annuity(5 %, 20 a) * 900 EUR/kW * 100 kW (new part only) + 2 % * 900 EUR/kW * 400 kW (fixed O&M
    on all of it) + 100 EUR/MWh * 400 kW * 8760 h / COP / 1000, COP = 0.5 * 331.15 K / (331.15 K - 279.15 K).
    """
    result = solve_scenario(groundwater_case(300.0, 800.0))
    assert result.solved, result.message
    cop = carnot_cop(55.0, 11.0, 0.5, 3.0, 5.0)
    hand = annuity(0.05, 20) * 900 * 100 + 0.02 * 900 * 400 + 100 / 1000 * 400 * HOURS / cop
    assert result.total_cost_eur_per_a == pytest.approx(hand, rel=1e-7)
    row = result.tables["supply"].set_index("technology_id").loc["gwhp"]
    assert row["existing_kw"] == pytest.approx(300.0)
    assert row["new_kw"] == pytest.approx(100.0, rel=1e-7)
    assert row["investment_eur_per_a"] == pytest.approx(annuity(0.05, 20) * 900 * 100, rel=1e-7)


def test_existing_equal_to_potential_runs_without_investment():
    """Existing = potential = 400 kW: nothing may be built, the existing unit carries all the heat; no annuity."""
    result = solve_scenario(groundwater_case(400.0, 400.0))
    assert result.solved, result.message
    assert result.unserved_heat_mwh_per_a == pytest.approx(0.0, abs=1e-6)
    cop = carnot_cop(55.0, 11.0, 0.5, 3.0, 5.0)
    hand = 0.02 * 900 * 400 + 100 / 1000 * 400 * HOURS / cop
    assert result.total_cost_eur_per_a == pytest.approx(hand, rel=1e-7)
    assert result.cost_breakdown_eur_per_a()["investment"] == pytest.approx(0.0, abs=1e-6)


def test_existing_capacity_is_shared_over_wells_by_permit():
    """Two doublets in one district, permits 100 and 300 m³/h: 400 kW existing sit 100 / 300 kW on them."""
    scenario = groundwater_case(400.0, 400.0)
    scenario.wells = pd.DataFrame(
        [f.well("W1", "A", permit_flow_m3_per_h=100.0), f.well("W2", "A", permit_flow_m3_per_h=300.0)]
    )
    result = solve_scenario(scenario)
    assert result.solved, result.message
    existing = result.tables["supply"].set_index("well_id")["existing_kw"]
    assert existing["W1"] == pytest.approx(100.0)
    assert existing["W2"] == pytest.approx(300.0)


def test_levelised_cost_of_heat_leaves_out_unserved_and_cooling():
    """Gas boiler limited to 300 kW against 400 kW of demand, and a chiller for 100 kW of cooling.

    LCOH = (gas 60 EUR/MWh / 0.9 * 300 kW * 8760 h + annuity * 100 EUR/kW * 300 kW) / (300 kW * 8760 h); the
    unserved 100 kW (at 1000 EUR/MWh) and the chiller are reported beside it, not in it.
    """
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0),
        dict(technology_id="chiller", kind="chiller", carrier="electricity", efficiency=3.0,
             investment_eur_per_kw=200.0),
    )
    heat = np.full(HOURS, 400.0)
    scenario = f.scenario(
        [f.district("A", heat_demand_mwh_per_a=heat.sum() / 1000, cooling_demand_mwh_per_a=100.0 * HOURS / 1000)],
        techs,
        f.hourly(outdoor_temp_c=np.where(np.arange(HOURS) % 2 == 0, 30.0, 30.0), electricity=90.0, grid_co2=0.0),
        potential={("A", "gas"): 300.0},
        heat_demand_hourly_kw=pd.DataFrame({"A": heat}),
        prices=Prices(gas_eur_per_mwh=60.0, co2_eur_per_t=0.0),
        settings=Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=1000.0),
    )
    result = solve_scenario(scenario)
    assert result.solved, result.message
    row = result.tables["districts"].iloc[0]
    a = annuity(0.05, 20)
    heat_cost = 60 / 0.9 / 1000 * 300 * HOURS + a * 100 * 300
    served = 300 * HOURS / 1000
    assert row["levelised_cost_eur_per_mwh"] == pytest.approx(heat_cost / served, rel=1e-7)
    assert row["unserved_eur_per_a"] == pytest.approx(1000 * 100 * HOURS / 1000, rel=1e-7)
    cooling_mwh = result.tables["demand"]["cooling_demand_kw"].sum() / 1000
    assert cooling_mwh > 0
    chiller_cost = a * 200 * result.tables["supply"].set_index("technology_id").loc["chiller", "capacity_kw"] \
        + 90 / 3 / 1000 * cooling_mwh * 1000
    assert row["cooling_cost_eur_per_a"] == pytest.approx(chiller_cost, rel=1e-6)
    assert row["levelised_cost_of_cooling_eur_per_mwh"] == pytest.approx(chiller_cost / cooling_mwh, rel=1e-6)
    assert row["main_supply"] == "gas"  # 300 kW served against 100 kW unserved
    summary = result.summary()["districts"][0]
    assert summary["levelised_cost_eur_per_mwh"] == pytest.approx(heat_cost / served, rel=1e-7)
    assert summary["unserved_eur_per_a"] == pytest.approx(row["unserved_eur_per_a"])
    assert summary["cooling_cost_eur_per_a"] == pytest.approx(chiller_cost, rel=1e-6)


def test_prepared_well_flow_is_inverse_of_iapws_power():
    """The flow per kW the LP uses is 1 / (c_p dT) with c_p from IAPWS-95 at the groundwater temperature."""
    prepared = prepare_run(groundwater_case(0.0, 800.0), "reference")
    cp = iapws.IAPWS95(T=11.0 + 273.15, P=0.101325).cp  # kJ/(kg K)
    expected = 1.0 / (cp * 4.0)  # usable spread min(4 K design, 11 - 4.5 K window) = 4 K
    np.testing.assert_allclose(prepared.well_flow_per_kw_heating[0], expected, rtol=2e-4)


def test_production_calls_the_tested_physics_functions(monkeypatch):
    """One implementation of each formula: a run of a groundwater case with a degree-hour demand and cooling
    calls the very functions the physics tests check against their references (Carnot COP with a grade:
    tests/test_heatpump.py; annuity and levelised cost: tests/test_economics.py, numpy-financial; P = m_dot c_p dT,
    usable spreads and the groundwater sinusoid: tests/test_wells.py; water density: tests/test_water.py,
    IAPWS-95; degree-hour heat, hot-water and cooling profiles: tests/test_demand.py). Each is wrapped in place
    and must be called at least once, and the names production looks up must be those functions."""
    from collections import Counter

    from engine.model import extract
    from engine.physics import demand, economics, heatpump, water, wells

    assert extract.levelised_cost_eur_per_mwh is economics.levelised_cost_eur_per_mwh
    calls = Counter()
    tested = [(heatpump, "heat_pump_cop"), (economics, "annuity_factor"), (wells, "well_thermal_power_kw"),
              (wells, "usable_spread_heating_k"), (wells, "usable_spread_cooling_k"),
              (wells, "groundwater_temp_series_c"), (water, "water_density_kg_per_m3"),
              (demand, "heat_demand_profile_kw"), (demand, "hot_water_profile_kw"),
              (demand, "cooling_demand_profile_kw"), (extract, "levelised_cost_eur_per_mwh")]
    for module, name in tested:
        original = getattr(module, name)

        def counted(*args, _original=original, _name=name, **kwargs):
            calls[_name] += 1
            return _original(*args, **kwargs)

        monkeypatch.setattr(module, name, counted)
    scenario = groundwater_case(0.0, 800.0)
    scenario.heat_demand_hourly_kw = None  # the degree-hour profile from the annual figure
    scenario.districts["hot_water_share"] = 0.2
    scenario.districts["cooling_demand_mwh_per_a"] = 50.0
    scenario.technologies = pd.concat([scenario.technologies, f.technologies(
        dict(technology_id="chiller", kind="chiller", carrier="electricity", efficiency=3.0))], ignore_index=True)
    scenario.district_technologies = pd.concat([scenario.district_technologies, pd.DataFrame(
        [{"district_id": "A", "technology_id": "chiller", "existing_kw": 0.0, "potential_kw": np.inf}])],
        ignore_index=True)
    scenario.hourly["outdoor_temp_c"] = 8.0 + 12.0 * np.sin(2 * np.pi * np.arange(HOURS) / HOURS)
    result = solve_scenario(scenario, workers=1)
    assert result.solved, result.message
    missing = [name for _, name in tested if calls[name] == 0]
    assert not missing, f"production does not call {missing}"
