"""District decomposition against the city-wide LP, and the CO2 price that meets a city-wide cap.

The city: a seeded synthetic city of 6 districts over a two-week series (336 hours) at 8 typical days, small enough
for ``scipy.optimize.linprog`` to solve the whole city as an independent reference.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

from bench.synthetic_city import synthetic_city
from engine.model.formulation import build_model
from engine.model.prepare import prepare_run
from engine.model.solve import run_settings, solve_scenario
from engine.studies.tradeoff import co2_price_for_cap


@pytest.fixture(scope="module")
def city():
    return synthetic_city(6, n_hours=336, typical_days=8, seed=3)


@pytest.fixture(scope="module")
def runs(city):
    decomposed = solve_scenario(city, decompose=True, workers=1)
    monolithic = solve_scenario(city, decompose=False)
    assert decomposed.solved and monolithic.solved
    return decomposed, monolithic


def linprog_optimum(model) -> float:
    """Optimum of the model's LP solved by scipy.optimize.linprog from its arrays (rows split into <= / ==)."""
    lp = model.lp
    a = lp.matrix().tocsr()
    lo, up = lp.row_lower, lp.row_upper
    eq = lo == up
    ub_rows = np.flatnonzero(~eq & np.isfinite(up))
    lb_rows = np.flatnonzero(~eq & np.isfinite(lo))
    a_ub = sp.vstack([a[ub_rows], -a[lb_rows]]).tocsr()
    b_ub = np.r_[up[ub_rows], -lo[lb_rows]]
    bounds = np.column_stack([lp.col_lower, np.where(np.isinf(lp.col_upper), np.nan, lp.col_upper)])
    bounds = [(lo_, None if np.isnan(up_) else up_) for lo_, up_ in bounds]
    res = linprog(lp.cost, A_ub=a_ub, b_ub=b_ub, A_eq=a[np.flatnonzero(eq)], b_eq=lo[eq], bounds=bounds,
                  method="highs")
    assert res.status == 0, res.message
    return float(res.fun)


def test_decomposed_total_cost_equals_monolithic(runs):
    """Without a city-wide constraint the city LP is a sum of independent district LPs, so the minimum of the
    sum is the sum of the minima (separability of linear programs; e.g. Bertsimas & Tsitsiklis 1997,
    Introduction to Linear Optimization, sec. 6.4 on block-angular problems, from memory)."""
    decomposed, monolithic = runs
    assert decomposed.model_size["linear_programs"] == 6
    assert monolithic.model_size["linear_programs"] == 1
    assert decomposed.total_cost_eur_per_a == pytest.approx(monolithic.total_cost_eur_per_a, rel=1e-6)
    assert decomposed.co2_t_per_a == pytest.approx(monolithic.co2_t_per_a, rel=1e-5, abs=1e-3)


def test_decomposed_cost_per_district_equals_monolithic(runs):
    """Every district of a monolithic optimum sits at its own optimum (else that block alone could improve the
    total), so the district costs agree too (same source as above)."""
    decomposed, monolithic = runs
    a = decomposed.tables["districts"].set_index("district_id")["total_cost_eur_per_a"]
    b = monolithic.tables["districts"].set_index("district_id")["total_cost_eur_per_a"]
    assert list(a.index) == list(b.index)
    np.testing.assert_allclose(a.to_numpy(), b.to_numpy(), rtol=1e-6, atol=1e-2)


def test_monolithic_optimum_matches_linprog(city, runs):
    """Reference: scipy.optimize.linprog (an interface independent of the engine's own) on the same arrays; the
    engine's total cost is that optimum plus the fixed O&M of existing plant, which is not a decision."""
    _, monolithic = runs
    prepared = prepare_run(city, "reference", run_settings(city))
    model = build_model(prepared)
    optimum = linprog_optimum(model)
    # the engine's LP objective also holds a 1e-6 EUR/kWh charge cost that no cost table reports
    assert monolithic.total_cost_eur_per_a == pytest.approx(optimum + model.constant_fixed_om.sum(), rel=2e-5)


@pytest.fixture(scope="module")
def capped(city, runs):
    """A cap halfway between the least-CO2 run and the least-cost run."""
    _, cheapest = runs
    cleanest = solve_scenario(city, objective="co2", decompose=True, workers=1)
    cap = 0.5 * (cheapest.co2_t_per_a + cleanest.co2_t_per_a)
    return cap, solve_scenario(city, co2_cap_t_per_a=cap)


def test_cap_solve_is_monolithic_and_matches_linprog(city, capped):
    """A CO2 cap couples the districts, so the engine solves one city-wide LP; its optimum equals that of
    scipy.optimize.linprog on the same LP with the cap row, and the cap binds (it lies below the least-cost
    emissions)."""
    cap, result = capped
    assert result.solved
    assert result.model_size["linear_programs"] == 1
    prepared = prepare_run(city, "reference", run_settings(city, co2_cap_t_per_a=cap))
    model = build_model(prepared)
    assert "co2_cap" in model.rows
    assert result.total_cost_eur_per_a == pytest.approx(linprog_optimum(model) + model.constant_fixed_om.sum(),
                                                        rel=2e-5)
    assert result.co2_t_per_a == pytest.approx(cap, rel=1e-6)


@pytest.fixture(scope="module")
def priced(city, capped):
    cap, _ = capped
    return co2_price_for_cap(city, cap, rel_tol=1e-6, workers=1)


def test_co2_price_meets_cap_within_bounds_of_capped_optimum(capped, priced):
    """Lagrangian relaxation of the cap (Everett 1963, Operations Research 11(3)): at the found CO2 price the
    districts solved apart meet the cap; LP duality puts the capped optimum between the Lagrangian bound and the
    cost of the blended plan, and the search closes that gap to its tolerance (1e-6 relative)."""
    cap, result = capped
    assert priced.converged
    assert priced.co2_t_per_a <= cap * (1 + 1e-7)
    assert priced.result.model_size["linear_programs"] == 6
    optimum = result.total_cost_eur_per_a
    assert priced.cost_lower_eur_per_a <= optimum * (1 + 1e-7)
    assert priced.cost_upper_eur_per_a >= optimum * (1 - 1e-7)
    assert priced.relative_gap <= 1e-6
    assert priced.cost_estimate_eur_per_a == pytest.approx(optimum, rel=1e-6)


def test_co2_price_brackets_the_dual_of_the_cap(city, capped, priced):
    """LP duality: the shadow price of the cap row in the city-wide LP is the CO2 surcharge at which the
    relaxed problem has the capped optimum (Everett 1963); it lies in the bracket the search ends with."""
    cap, _ = capped
    prepared = prepare_run(city, "reference", run_settings(city, co2_cap_t_per_a=cap))
    model = build_model(prepared)
    solution = model.lp.solve()
    shadow = abs(float(solution.row_dual[model.rows["co2_cap"]][0]))
    history = priced.history
    below = max(h["surcharge_eur_per_t"] for h in history if h["co2_t_per_a"] > cap)
    above = min(h["surcharge_eur_per_t"] for h in history if h["co2_t_per_a"] <= cap)
    assert below - 1e-6 <= shadow <= above + 1e-6
    assert shadow > 0


def test_co2_price_for_a_slack_cap_is_zero(city, runs):
    """A cap above the least-cost emissions does not bind: no surcharge (complementary slackness)."""
    _, cheapest = runs
    found = co2_price_for_cap(city, cheapest.co2_t_per_a * 1.01, workers=1)
    assert found.surcharge_eur_per_t == 0.0
    assert found.cost_upper_eur_per_a == pytest.approx(cheapest.total_cost_eur_per_a, rel=1e-9)


def test_co2_price_rejects_bad_caps(city):
    """Common practice: a clear ValueError naming the argument."""
    with pytest.raises(ValueError, match="cap_t_per_a"):
        co2_price_for_cap(city, 0.0)
    with pytest.raises(ValueError, match="cap_t_per_a"):
        co2_price_for_cap(city, float("nan"))
