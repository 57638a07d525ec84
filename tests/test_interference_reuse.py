"""The interference check changes the LPs held in HiGHS in place and gets the answers of solves from scratch.

A new source temperature changes some entries of each district LP: the COP in the cost of the heat pumps'
output and hot water, the water flow per kW in the well flow and volume rows, and where the reinjection window
closes, the output bound of those hours and the flow entries there (dropped from the matrix). The loop hands
HiGHS only those entries (``HighsSession.replace``) and solves from the last basis. Checks:

* HiGHS then holds the new LP entry for entry (its own copy read back with ``getLp``);
* every iteration's total cost equals a solve from scratch of the same source temperatures (1e-6 relative), and
  the loop with held models takes the same solves with the same shifts as the loop without;
* independently of both, one iteration's LPs solved by scipy.optimize.linprog (scipy's own HiGHS build, from the
  arrays, not our HiGHS model) give the iteration's total cost (1e-6 relative).

The test city is a cascade of three doublets along the groundwater flow (built here with tests/scenario_factory):
A's plume reaches B's extraction well, B's reaches C's, so the shifts take three solves to settle. The seasonal
groundwater (8 °C +- 1.5 K) with a shift of about -2 K reaches the 4.5 °C reinjection limit in the coldest
hours, so the pattern of the flow rows changes between iterations too.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

sys.path.insert(0, str(Path(__file__).parent))

import scenario_factory as f  # noqa: E402
from test_groundwater import LAT, _lon  # noqa: E402

from engine.model.formulation import build_model  # noqa: E402
from engine.model.lp import HighsSession  # noqa: E402
from engine.model.prepare import prepare_run  # noqa: E402
from engine.model.solve import run_settings, solve_scenario  # noqa: E402
from engine.scenario.inputs import Aquifer, Prices, Settings  # noqa: E402
from engine.studies.interference import _with_shift, solve_with_interference  # noqa: E402

REL = 1e-6


def cascade_of_doublets(typical_days: int = 4):
    """Three districts A, B, C with one doublet each, 350 m apart on a line along an eastward flow of 1 m/d.

    Heat demand with a seasonal swing (cosine, +-50 %, coldest at day 30); gas boiler or groundwater heat pump;
    B's well has an annual volume limit (so the well volume row is in the LP), the others none."""
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0),
        dict(technology_id="gw_hp", kind="groundwater_heat_pump", carrier="electricity", cop_quality_grade=0.5,
             investment_eur_per_kw=200.0),
    )
    names, heat = ("A", "B", "C"), (400.0, 300.0, 350.0)
    districts = [f.district(d, k, supply_temp_c=35.0, heat_demand_mwh_per_a=h * 8.76)
                 for k, (d, h) in enumerate(zip(names, heat))]
    hours = np.arange(8760)
    swing = 1.0 + 0.5 * np.cos(2 * np.pi * (hours / 8760.0 - 30 / 365))
    demand = pd.DataFrame({d: h * swing for d, h in zip(names, heat)})
    common = dict(permit_flow_m3_per_h=20.0, groundwater_temp_c=8.0, groundwater_temp_amplitude_k=1.5,
                  coldest_day_of_year=40, lat=LAT, reinjection_lat=LAT)
    wells = [f.well(f"w{d.lower()}", d, lon=_lon(350.0 * k), reinjection_lon=_lon(350.0 * k + 100.0),
                    permit_annual_volume_m3=1.2e5 if d == "B" else np.inf, **common)
             for k, d in enumerate(names)]
    scenario = f.scenario(
        districts, techs, f.hourly(outdoor_temp_c=5.0, electricity=150.0), wells=wells,
        heat_demand_hourly_kw=demand, settings=Settings(typical_days=typical_days),
        prices=Prices(gas_eur_per_mwh=80.0, co2_eur_per_t=100.0),
    )
    scenario.aquifer = Aquifer(flow_direction_deg=90.0, darcy_velocity_m_per_d=1.0, saturated_thickness_m=18.0)
    return scenario


@pytest.fixture(scope="module")
def city():
    return cascade_of_doublets()


@pytest.fixture(scope="module")
def checked(city):
    return {
        "held": solve_with_interference(city, plume_levels_k=()),
        "fresh": solve_with_interference(city, plume_levels_k=(), reuse_models=False),
    }


def linprog_objective(lp, cost) -> float:
    """min cost @ x over the LP's rows and bounds, by scipy.optimize.linprog (method "highs", scipy's own build)."""
    a = lp.matrix().tocsr()
    lo, up = lp.row_lower, lp.row_upper
    eq = lo == up
    ub_rows = np.flatnonzero(~eq & np.isfinite(up))
    lb_rows = np.flatnonzero(~eq & np.isfinite(lo))
    bounds = [(l_, None if np.isinf(u_) else u_) for l_, u_ in zip(lp.col_lower, lp.col_upper)]
    found = linprog(cost, A_ub=sp.vstack([a[ub_rows], -a[lb_rows]]).tocsr(), b_ub=np.r_[up[ub_rows], -lo[lb_rows]],
                    A_eq=a[np.flatnonzero(eq)], b_eq=lo[eq], bounds=bounds, method="highs")
    assert found.status == 0, found.message
    return float(found.fun)


def held_lp_arrays(highs):
    """HiGHS's own copy of the LP it holds: costs, bounds and the matrix (CSC, entries sorted)."""
    lp = highs.getLp()
    a = lp.a_matrix_
    assert a.format_.name == "kColwise"
    matrix = sp.csc_matrix((np.asarray(a.value_), np.asarray(a.index_), np.asarray(a.start_)),
                           shape=(lp.num_row_, lp.num_col_))
    matrix.sort_indices()
    return (np.asarray(lp.col_cost_), np.asarray(lp.col_lower_), np.asarray(lp.col_upper_),
            np.asarray(lp.row_lower_), np.asarray(lp.row_upper_), matrix)


def test_replace_leaves_highs_holding_the_new_lp_entry_for_entry(city):
    """District B's LP without a shift, solved, then replaced by the LP with wb's source 2.5 K colder: HiGHS's
    copy equals the new LP exactly (entries changed, dropped where the reinjection window closes, bounds set
    to zero there), and the re-solve from the old basis reaches the optimum of a fresh solve (1e-9 relative)."""
    settings = run_settings(city)
    before = build_model(prepare_run(city, "reference", settings), [1])
    after = build_model(prepare_run(_with_shift(city, np.array([0.0, -2.5, -3.0])), "reference", settings), [1])
    session = HighsSession(before.lp)
    assert session.solve().status == "optimal"
    handed = session.replace(after.lp)
    assert handed["coefficients"] > 0 and handed["costs"] > 0
    assert handed["new_entries"] > 0 and handed["column_bounds"] > 0  # the pattern changed
    cost, col_lower, col_upper, row_lower, row_upper, matrix = held_lp_arrays(session.highs)
    lp = after.lp
    np.testing.assert_array_equal(cost, lp.cost)
    np.testing.assert_array_equal(col_lower, lp.col_lower)
    np.testing.assert_array_equal(col_upper, lp.col_upper)
    np.testing.assert_array_equal(row_lower, lp.row_lower)
    np.testing.assert_array_equal(row_upper, lp.row_upper)
    expected = lp.matrix().copy()
    expected.sort_indices()
    assert matrix.nnz == expected.nnz
    np.testing.assert_array_equal(matrix.indptr, expected.indptr)
    np.testing.assert_array_equal(matrix.indices, expected.indices)
    np.testing.assert_array_equal(matrix.data, expected.data)
    warm = session.solve()
    cold = HighsSession(after.lp).solve()
    assert warm.status == cold.status == "optimal"
    assert warm.objective == pytest.approx(cold.objective, rel=1e-9)
    assert HighsSession(before.lp).replace(build_model(prepare_run(city, "reference", settings), [0]).lp) is None


def test_every_iteration_equals_a_solve_from_scratch(city, checked):
    """Each solve of the loop against solve_scenario from scratch with the source shifts that solve used."""
    info = checked["held"].extras["interference"]
    assert info["converged"] and len(info["iterations"]) >= 3
    assert info["held_models"][0] == {"iteration": 1, "in_place": 0, "from_scratch": 3}
    for record in info["held_models"][1:]:
        assert record["in_place"] == 3 and record["from_scratch"] == 0 and record["coefficients"] > 0
    assert any(r.get("new_entries", 0) > 0 for r in info["held_models"])  # an LP whose pattern changed in place
    for iteration, shift in zip(info["iterations"], info["source_shifts_k"]):
        fresh = solve_scenario(_with_shift(city, np.array(shift)))
        assert iteration["status"] == fresh.status == "optimal"
        assert iteration["total_cost_eur_per_a"] == pytest.approx(fresh.total_cost_eur_per_a, rel=REL)
        assert iteration["co2_t_per_a"] == pytest.approx(fresh.co2_t_per_a, rel=REL)


def test_held_models_keep_the_history_of_the_loop(checked):
    """With and without held LPs: the same number of solves, the same shifts (to 1e-6 K; on this city the
    optimal plan is unique, on others an equally cheap plan may shift the path by far less than the 0.05 K
    tolerance), the same converged run."""
    held, fresh = (checked[k].extras["interference"] for k in ("held", "fresh"))
    assert fresh["held_models"] == []
    assert len(held["iterations"]) == len(fresh["iterations"])
    np.testing.assert_allclose(held["source_shifts_k"], fresh["source_shifts_k"], atol=1e-6)
    for a, b in zip(held["iterations"], fresh["iterations"]):
        assert a["max_shift_k"] == pytest.approx(b["max_shift_k"], abs=1e-6)
        assert a["total_cost_eur_per_a"] == pytest.approx(b["total_cost_eur_per_a"], rel=REL)
    assert checked["held"].total_cost_eur_per_a == pytest.approx(checked["fresh"].total_cost_eur_per_a, rel=REL)


def test_second_iteration_agrees_with_scipy_linprog(city, checked):
    """Independent check: the LPs of the second solve (changed in place in the loop) built from its shifts and
    solved by scipy.optimize.linprog; their optimal values plus the fixed O&M of existing plant (none here) sum
    to the iteration's total cost (1e-6 relative). The cascade has no heat store, so the objective carries no
    charging tie-break."""
    info = checked["held"].extras["interference"]
    assert info["held_models"][1]["in_place"] == 3
    prepared = prepare_run(_with_shift(city, np.array(info["source_shifts_k"][1])), "reference", run_settings(city))
    total = 0.0
    for i in range(len(prepared.district_ids)):
        model = build_model(prepared, [i])
        assert len(model.stores.technology_id) == 0
        total += linprog_objective(model.lp, model.money) + float(np.sum(model.constant_fixed_om))
    assert info["iterations"][1]["total_cost_eur_per_a"] == pytest.approx(total, rel=REL)


def test_a_coupled_run_holds_the_city_lp(city):
    """With a CO2 cap the districts share one LP; it is held as one and changed in place (the CO2 row's
    electricity entries change with the COPs too), with the costs of solves from scratch."""
    result = solve_with_interference(city, plume_levels_k=(), co2_cap_t_per_a=1e6)
    info = result.extras["interference"]
    assert [r["in_place"] for r in info["held_models"]] == [0] + [1] * (len(info["iterations"]) - 1)
    for iteration, shift in zip(info["iterations"], info["source_shifts_k"]):
        fresh = solve_scenario(_with_shift(city, np.array(shift)), co2_cap_t_per_a=1e6)
        assert iteration["total_cost_eur_per_a"] == pytest.approx(fresh.total_cost_eur_per_a, rel=REL)


def test_co2_objective_solves_from_scratch(city):
    """The lexicographic CO2 objective is solved in stages, not held: no held-model record."""
    result = solve_with_interference(city, plume_levels_k=(), objective="co2", max_iterations=2)
    assert result.extras["interference"]["held_models"] == []
