"""The district LP on instances small enough to check by hand or to rebuild independently.

The hand optimum follows from the screening-curve argument (a kW of capacity that runs h hours a year costs
annuity * investment + h * marginal cost; the cheaper technology takes what its limit allows). The independent
re-build writes the same instance as matrices directly from the equations of docs/model.md sections 4 and 5 and solves it with
``scipy.optimize.linprog`` (HiGHS through SciPy, a separate code path from the engine's model builder).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

import scenario_factory as f
from engine.scenario.inputs import Prices, Settings
from engine.model.solve import solve_scenario

HOURS = 8760


def annuity(rate, years):
    return rate * (1 + rate) ** years / ((1 + rate) ** years - 1)


def two_level_instance():
    demand = np.where(np.arange(HOURS) < HOURS // 2, 1000.0, 400.0)
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0),
        dict(technology_id="net", kind="network_connection", carrier="network", investment_eur_per_kw=50.0),
    )
    scenario = f.scenario(
        [f.district("A", network_available=True, network_connection_limit_kw=600.0,
                    heat_demand_mwh_per_a=demand.sum() / 1000)],
        techs,
        f.hourly(network=30.0),
        heat_demand_hourly_kw=pd.DataFrame({"A": demand}),
        prices=Prices(gas_eur_per_mwh=40.0, co2_eur_per_t=0.0),
    )
    return scenario


def test_hand_optimum_two_level_demand():
    """Screening-curve hand solution: the network (cheaper per kWh) fills its 600 kW limit, gas covers the rest.

    cost = 600 kW * 50 EUR/kW * a + 30 EUR/MWh * (600 kW * 4380 h + 400 kW * 4380 h)
           + 400 kW * 100 EUR/kW * a + 40 EUR/MWh / 0.9 * 400 kW * 4380 h, a = annuity(5 %, 20 a).
    """
    result = solve_scenario(two_level_instance())
    a = annuity(0.05, 20)
    hand = 600 * 50 * a + 30 / 1000 * (600 * 4380 + 400 * 4380) + 400 * 100 * a + 40 / 0.9 / 1000 * 400 * 4380
    assert result.status == "optimal"
    assert result.total_cost_eur_per_a == pytest.approx(hand, rel=1e-9)
    supply = result.tables["supply"].set_index("technology_id")
    assert supply.loc["net", "capacity_kw"] == pytest.approx(600.0, rel=1e-7)
    assert supply.loc["gas", "capacity_kw"] == pytest.approx(400.0, rel=1e-7)
    parts = sum(result.cost_breakdown_eur_per_a().values())
    assert parts == pytest.approx(result.total_cost_eur_per_a, rel=1e-12)


def rich_instance(n_hours=HOURS):
    """Two districts, gas and electric boilers, a heat store, the network in one of them; daily price swings."""
    hour = np.arange(n_hours)
    demand_a = 800.0 + 400.0 * np.sin(2 * np.pi * hour / 24) ** 2 + 300.0 * np.cos(2 * np.pi * hour / n_hours)
    demand_b = 300.0 + 200.0 * (hour % 24 >= 17)
    electricity = 60.0 + 80.0 * ((hour % 24 >= 8) & (hour % 24 < 20))
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.92, investment_eur_per_kw=90.0,
             fixed_om_pct_per_a=2.0, variable_om_eur_per_mwh=1.5, lifetime_a=20),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=0.99,
             investment_eur_per_kw=60.0, lifetime_a=15),
        dict(technology_id="net", kind="network_connection", carrier="network", investment_eur_per_kw=40.0,
             lifetime_a=30),
        dict(technology_id="store", kind="heat_store", carrier="none", investment_eur_per_kw=2.0,
             store_loss_pct_per_h=0.5, store_efficiency=0.9, store_hours=4.0, lifetime_a=25),
    )
    scenario = f.scenario(
        [
            f.district("A", 0, network_available=True, network_connection_limit_kw=500.0),
            f.district("B", 1),
        ],
        techs,
        f.hourly(n_hours, electricity=electricity, network=55.0, grid_co2=300.0, network_co2=150.0),
        heat_demand_hourly_kw=pd.DataFrame({"A": demand_a, "B": demand_b}),
        existing={("B", "gas"): 250.0},
        prices=Prices(gas_eur_per_mwh=45.0, co2_eur_per_t=80.0),
        settings=Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=3000.0),
    )
    return scenario, {"A": demand_a, "B": demand_b}, electricity


def independent_rebuild(scenario, demands, electricity):
    """Build docs/model.md sections 4 and 5 for the rich instance as matrices, without the engine's builder."""
    n = scenario.n_hours
    rate = scenario.settings.discount_rate
    techs = scenario.technologies.set_index("technology_id")
    co2_price = scenario.prices.co2_eur_per_t
    gas_price = scenario.prices.gas_eur_per_mwh
    gas_co2 = scenario.prices.co2_kg_per_mwh["gas"] / 1000  # t/MWh
    net_price, net_co2, grid_co2 = 55.0, 0.150, 0.300
    voll = scenario.settings.value_of_unserved_heat_eur_per_mwh

    names, lower, upper, cost = [], [], [], []

    def var(name, size, ub=np.inf, c=0.0):
        start = len(names)
        names.extend(f"{name}[{k}]" for k in range(size))
        lower.extend([0.0] * size)
        upper.extend(np.broadcast_to(ub, (size,)).tolist())
        cost.extend(np.broadcast_to(np.asarray(c, float), (size,)).tolist())
        return np.arange(start, start + size)

    def tech_capacity_cost(tid):
        t = techs.loc[tid]
        return annuity(rate, t.lifetime_a) * t.investment_eur_per_kw + t.fixed_om_pct_per_a / 100 * t.investment_eur_per_kw

    eq_rows, eq_rhs, ub_rows, ub_rhs = [], [], [], []
    constant = 0.0
    for d, demand in demands.items():
        gas_rate = (gas_price + co2_price * gas_co2) / 0.92 + 1.5
        eb_rate = (electricity + co2_price * grid_co2) / 0.99
        cap_gas = var(f"{d}.cap_gas", 1, c=tech_capacity_cost("gas"))
        cap_eb = var(f"{d}.cap_eb", 1, c=tech_capacity_cost("eboiler"))
        cap_st = var(f"{d}.cap_store", 1, c=tech_capacity_cost("store"))
        gas = var(f"{d}.gas", n, c=gas_rate / 1000)
        eb = var(f"{d}.eb", n, c=eb_rate / 1000)
        ch = var(f"{d}.charge", n, c=1e-6)
        dis = var(f"{d}.discharge", n)
        lev = var(f"{d}.level", n)
        uns = var(f"{d}.unserved", n, c=voll / 1000)
        existing_gas = 250.0 if d == "B" else 0.0
        constant += 0.02 * 90.0 * existing_gas
        supply_terms = [gas, eb, dis, uns]
        if d == "A":
            cap_net = var(f"{d}.cap_net", 1, ub=500.0, c=annuity(rate, 30) * 40.0)
            net = var(f"{d}.net", n, c=(net_price + co2_price * net_co2) / 1000)
            supply_terms.append(net)
            for t in range(n):
                ub_rows.append({net[t]: 1.0, cap_net[0]: -1.0}); ub_rhs.append(0.0)
        for t in range(n):
            row = {v[t]: 1.0 for v in supply_terms}
            row[ch[t]] = -1.0
            eq_rows.append(row); eq_rhs.append(demand[t])
            ub_rows.append({gas[t]: 1.0, cap_gas[0]: -1.0}); ub_rhs.append(existing_gas)
            ub_rows.append({eb[t]: 1.0, cap_eb[0]: -1.0}); ub_rhs.append(0.0)
            ub_rows.append({lev[t]: 1.0, cap_st[0]: -1.0}); ub_rhs.append(0.0)
            ub_rows.append({ch[t]: 1.0, cap_st[0]: -0.25}); ub_rhs.append(0.0)
            ub_rows.append({dis[t]: 1.0, cap_st[0]: -0.25}); ub_rhs.append(0.0)
            prev = (t - 1) % n  # cyclic over the year
            eta = np.sqrt(0.9)
            eq_rows.append({lev[t]: 1.0, lev[prev]: -(1 - 0.005), ch[t]: -eta, dis[t]: 1 / eta})
            eq_rhs.append(0.0)

    def to_matrix(rows):
        r, c, v = [], [], []
        for i, row in enumerate(rows):
            for j, value in row.items():
                r.append(i); c.append(j); v.append(value)
        return sp.csr_matrix((v, (r, c)), shape=(len(rows), len(names)))

    res = linprog(
        np.array(cost), A_ub=to_matrix(ub_rows), b_ub=np.array(ub_rhs), A_eq=to_matrix(eq_rows),
        b_eq=np.array(eq_rhs), bounds=list(zip(lower, upper)), method="highs",
    )
    assert res.status == 0, res.message
    return res.fun + constant


def test_matches_independent_linprog_rebuild():
    """Same optimum as the instance written out by hand as matrices and solved by scipy.optimize.linprog."""
    scenario, demands, electricity = rich_instance(24 * 28)
    result = solve_scenario(scenario, typical_days=0)
    reference = independent_rebuild(scenario, demands, electricity)
    assert result.status == "optimal"
    assert result.total_cost_eur_per_a == pytest.approx(reference, rel=1e-6)
    supply = result.tables["supply"].set_index(["district_id", "technology_id"])
    # the store earns its keep on the day/night electricity spread in B, where electricity competes with gas
    assert supply["capacity_kw"].sum() > 0


def test_heat_balance_closes_every_step_small():
    """Heat balance (docs/model.md section 4, constraint 1): supply + discharge - charge + unserved = demand."""
    scenario, demands, _ = rich_instance(24 * 28)
    result = solve_scenario(scenario, typical_days=0)
    dispatch = result.tables["dispatch"].groupby(["district_id", "step"])["heat_kw"].sum()
    demand = result.tables["demand"].set_index(["district_id", "step"])
    balance = dispatch + demand["unserved_heat_kw"] - demand["heat_demand_kw"]
    assert np.abs(balance.to_numpy()).max() < 1e-5 * demand["heat_demand_kw"].max()
