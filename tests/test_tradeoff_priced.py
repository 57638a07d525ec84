"""The trade-off curve from decomposed solves at CO2 surcharges (docs/model.md, trade-off curve).

Hand case: two districts with constant demand, no investment, a zero-carbon grid and no CO2 price, so every
plan's cost and CO2 are sums of per-MWh rates. District A has a gas boiler of efficiency 0.9, district B one of
0.6; both have an electric boiler. Gas heat emits f_gas / eta t per MWh (f_gas = 56 100 kg/TJ, IPCC 2006
Guidelines vol. 2 ch. 2 table 2.2) and costs p_gas / eta; electric heat costs p_el and emits nothing. The
frontier then has exactly three corners: all gas, B electric, all electric. B gives way first, at the CO2 price
(p_el - p_gas / 0.6) / (f_gas / 0.6); A at (p_el - p_gas / 0.9) / (f_gas / 0.9).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy.optimize import linprog

import scenario_factory as f
from bench.synthetic_city import synthetic_city
from engine.model.live import PricedDistricts
from engine.model.solve import run_settings, solve_scenario
from engine.scenario.inputs import CostCase, Prices, Settings
from engine.studies.tradeoff import point_scenario, scenario_with_case, tradeoff_curve_runs

HOURS = 8760
GAS_T_PER_MWH = 56_100 * 3.6e-3 / 1000  # IPCC 2006 default, natural gas
P_EL, P_GAS = 100.0, 40.0
DEMAND_KW = {"A": 100.0, "B": 50.0}
EFFICIENCY = {"A": 0.9, "B": 0.6}


def two_districts():
    techs = f.technologies(
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0),
        dict(technology_id="gas_new", kind="fuel_boiler", carrier="gas", efficiency=0.9),
        dict(technology_id="gas_old", kind="fuel_boiler", carrier="gas", efficiency=0.6),
    )
    demand = pd.DataFrame({d: np.full(HOURS, kw) for d, kw in DEMAND_KW.items()})
    return f.scenario(
        [f.district(d, k, heat_demand_mwh_per_a=demand[d].sum() / 1000) for k, d in enumerate(DEMAND_KW)],
        techs,
        f.hourly(electricity=P_EL, grid_co2=0.0),
        potential={("A", "gas_old"): 0.0, ("B", "gas_new"): 0.0},
        heat_demand_hourly_kw=demand,
        prices=Prices(gas_eur_per_mwh=P_GAS, co2_eur_per_t=0.0),
        settings=Settings(typical_days=0),
    )


def corners():
    """(CO2 t/a, cost EUR/a) of the three plans, by hand."""
    mwh = {d: kw * HOURS / 1000 for d, kw in DEMAND_KW.items()}
    gas = {d: (mwh[d] * GAS_T_PER_MWH / EFFICIENCY[d], mwh[d] * P_GAS / EFFICIENCY[d]) for d in mwh}
    electric = {d: (0.0, mwh[d] * P_EL) for d in mwh}
    plans = [("gas", "gas"), ("gas", "electric"), ("electric", "electric")]
    out = []
    for a, b in plans:
        pa = gas["A"] if a == "gas" else electric["A"]
        pb = gas["B"] if b == "gas" else electric["B"]
        out.append((pa[0] + pb[0], pa[1] + pb[1]))
    return out


def test_three_points_find_the_middle_corner_by_hand():
    """Three points: the least-cost plan (all gas), the corner where B burns no gas and A still does, and the
    least-CO2 plan (all electric), each at its hand-computed CO2 and cost; the middle point was found at the
    price where the two ends cost the same (the slope of the chord), and its bound is its own CO2."""
    table, results = tradeoff_curve_runs(two_districts(), n_points=3)
    hand = corners()
    assert list(table["kind"]) == ["cost_optimal", "co2_bounded", "co2_optimal"]
    for k, (co2, cost) in enumerate(hand):
        # the least-CO2 stages let each district's CO2 exceed its minimum by 1e-4 t (docs/model.md)
        assert table["co2_t_per_a"].iloc[k] == pytest.approx(co2, rel=1e-6, abs=2.1e-4)
        assert table["total_cost_eur_per_a"].iloc[k] == pytest.approx(cost, rel=1e-6)
    chord = (hand[2][1] - hand[0][1]) / (hand[0][0] - hand[2][0])
    assert table["co2_price_eur_per_t"].iloc[1] == pytest.approx(chord, rel=1e-6)
    assert table["co2_bound_t_per_a"].iloc[1] == pytest.approx(hand[1][0], rel=1e-6)
    # the abatement cost between the corners is each district's switching price
    b_switch = (P_EL - P_GAS / 0.6) / (GAS_T_PER_MWH / 0.6)
    a_switch = (P_EL - P_GAS / 0.9) / (GAS_T_PER_MWH / 0.9)
    assert table["abatement_cost_eur_per_t"].iloc[1] == pytest.approx(b_switch, rel=1e-6)
    assert table["abatement_cost_eur_per_t"].iloc[2] == pytest.approx(a_switch, rel=1e-6)
    assert results[1].model_size["reused_model"]


def test_points_beyond_the_corners_lie_on_the_straight_frontier():
    """Five points on a frontier with three corners: the two extra points are bounded solves of the city LP on
    the straight stretches, so their cost is the straight line between the corners at their CO2 (hand)."""
    table, _ = tradeoff_curve_runs(two_districts(), n_points=5)
    assert len(table) == 5
    hand = corners()
    co2 = np.array([c for c, _ in hand])[::-1]
    cost = np.array([c for _, c in hand])[::-1]
    for _, row in table.iterrows():
        assert row["total_cost_eur_per_a"] == pytest.approx(np.interp(row["co2_t_per_a"], co2, cost), rel=1e-6)
    assert table["co2_t_per_a"].is_monotonic_decreasing


def test_unchanged_district_plans_are_kept_without_a_solve():
    """Between two points where district A burns gas in both, A's plan is kept; the point then equals a solve
    of every district from scratch at the same surcharge (cost and CO2, rel 1e-9)."""
    scenario = two_districts()
    held = PricedDistricts(scenario, "reference", run_settings(scenario, "cost", 0.0))
    low = held.solve(0.0)
    high = held.solve(200.0)  # between B's and A's switching price: B electric, A gas
    middle = held.solve(150.0, low, high)
    assert held.reused == 1
    fresh = PricedDistricts(scenario, "reference", run_settings(scenario, "cost", 0.0)).solve(150.0)
    assert middle.co2_t_per_a == pytest.approx(fresh.co2_t_per_a, rel=1e-9, abs=1e-9)
    assert middle.cost_eur_per_a == pytest.approx(fresh.cost_eur_per_a, rel=1e-9)


@pytest.fixture(scope="module")
def synthetic():
    return synthetic_city(4, n_hours=336, typical_days=4, seed=5)


def test_interior_points_against_linprog_on_the_city_lp(synthetic):
    """Each interior point of a synthetic city's curve is the least-cost plan with CO2 at most its own: scipy's
    linprog (HiGHS inside scipy, independent of the held models) on the city LP with that bound as an extra row
    gives the same optimal cost (rel 1e-6), and a solve with the CO2 price of the point has the surcharged cost
    of the point (the weighted-sum value, rel 1e-6). Every hour of the two weeks is a step here: typical days
    are chosen on the carriers' costs, CO2 price included, so another CO2 price would choose other days."""
    import dataclasses

    from engine.model.formulation import build_model
    from engine.model.prepare import prepare_run

    synthetic = dataclasses.replace(synthetic, settings=dataclasses.replace(synthetic.settings, typical_days=0))

    table, results = tradeoff_curve_runs(synthetic, n_points=5)
    interior = table[table["kind"] == "co2_bounded"]
    assert len(interior) == 3
    settings = run_settings(synthetic, "cost", 0.0)
    prepared = prepare_run(synthetic, "reference", settings)
    model = build_model(prepared, list(range(len(prepared.district_ids))))
    lp = model.lp
    a = lp.matrix().tocsr()
    lo, hi = lp.row_lower, lp.row_upper
    eq = lo == hi
    upper = np.isfinite(hi) & ~eq
    lower = np.isfinite(lo) & ~eq
    bounds = [(l_, None if np.isinf(u_) else u_) for l_, u_ in zip(lp.col_lower, lp.col_upper)]
    constant = float(np.sum(model.constant_fixed_om))
    base_price = synthetic.prices.co2_eur_per_t
    for k, row in interior.iterrows():
        import scipy.sparse as sp

        a_ub = sp.vstack([a[np.flatnonzero(upper)], -a[np.flatnonzero(lower)],
                          sp.csr_matrix(model.emissions[None, :])]).tocsr()
        b_ub = np.r_[hi[upper], -lo[lower], row["co2_bound_t_per_a"] * (1 + 1e-9)]
        res = linprog(model.money, A_ub=a_ub, b_ub=b_ub, A_eq=a[np.flatnonzero(eq)], b_eq=lo[eq], bounds=bounds,
                      method="highs")
        assert res.status == 0, res.message
        charge = model.cols["charge"]
        tie_break = float(np.sum(res.x[charge] * prepared.grid.weight_h[None, :])) * 1e-6 if charge.size else 0.0
        assert row["total_cost_eur_per_a"] == pytest.approx(res.fun - tie_break + constant, rel=1e-6)
        price = row["co2_price_eur_per_t"]
        case = CostCase(name="priced", co2_eur_per_t=price)
        at_price = solve_scenario(scenario_with_case(synthetic, case), "priced")
        surcharged = row["total_cost_eur_per_a"] + (price - base_price) * row["co2_t_per_a"]
        assert at_price.total_cost_eur_per_a == pytest.approx(surcharged, rel=1e-6)
        again = solve_scenario(point_scenario(synthetic, table, k))
        assert again.total_cost_eur_per_a == pytest.approx(row["total_cost_eur_per_a"], rel=1e-6)


def test_with_a_network_plant_limit_the_points_are_bounded_city_solves(synthetic):
    """A network plant limit ties the districts together, so the interior points are the city LP with CO2
    bounded (epsilon-constraint, Haimes et al. 1971): each equals a solve from scratch with its bound (rel 1e-6),
    costs rise and CO2 falls along the curve, and no CO2 price is claimed for them."""
    import dataclasses

    limited = dataclasses.replace(synthetic, settings=dataclasses.replace(synthetic.settings,
                                                                          network_plant_limit_kw=2000.0))
    table, _ = tradeoff_curve_runs(limited, n_points=4)
    assert list(table["kind"]) == ["cost_optimal", "co2_bounded", "co2_bounded", "co2_optimal"]
    assert table["co2_price_eur_per_t"].iloc[1:3].isna().all()
    assert np.all(np.diff(table["total_cost_eur_per_a"]) >= -1e-9 * table["total_cost_eur_per_a"].iloc[0])
    assert np.all(np.diff(table["co2_t_per_a"]) <= 1e-7 * table["co2_t_per_a"].iloc[0])
    for k in (1, 2):
        again = solve_scenario(point_scenario(limited, table, k))
        assert again.total_cost_eur_per_a == pytest.approx(table["total_cost_eur_per_a"].iloc[k], rel=1e-6)


def test_worker_processes_give_the_same_curve(synthetic):
    """The districts held in two worker processes (a warm pool for the whole curve) give the curve solved in
    this process: the same points, costs and CO2 (rel 1e-6), and the runs say how many workers they used."""
    serial, _ = tradeoff_curve_runs(synthetic, n_points=5, workers=1)
    pooled, results = tradeoff_curve_runs(synthetic, n_points=5, workers=2)
    assert results[1].model_size["workers"] == 2
    for column in ("co2_t_per_a", "total_cost_eur_per_a", "co2_price_eur_per_t"):
        np.testing.assert_allclose(pooled[column].to_numpy(float), serial[column].to_numpy(float), rtol=1e-6)
    assert list(pooled["kind"]) == list(serial["kind"])
