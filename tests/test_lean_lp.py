"""The trimmed program handed to HiGHS (engine.model.lp.lean_program) has the optimum of the program as built.

The reference is an independent solve of the untrimmed LP with ``scipy.optimize.linprog`` (its interior point
method, not the dual simplex the direct path runs), on a two-week district with a groundwater heat pump making
hot water at 60 °C on a well whose permit binds, and whose groundwater is too cold for any spread in some hours.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

import scenario_factory as f
from engine.model.formulation import build_model
from engine.model.lp import LinearProgram, lean_program
from engine.model.prepare import prepare_run
from engine.scenario.inputs import Prices, Settings

HOURS = 24 * 14


def instance():
    hour = np.arange(HOURS)
    d = 80.0 + 40.0 * np.cos(2 * np.pi * hour / 24) ** 2
    techs = f.technologies(
        dict(technology_id="gwhp", kind="groundwater_heat_pump", carrier="electricity", investment_eur_per_kw=40.0,
             cop_quality_grade=0.5, sink_approach_k=5.0, source_approach_k=3.0),
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=5.0),
    )
    return f.scenario(
        [f.district("A", supply_temp_c=35.0, hot_water_share=0.3, hot_water_temp_c=60.0,
                    heat_demand_mwh_per_a=d.sum() / 1000)],
        techs,
        f.hourly(HOURS, outdoor_temp_c=0.0, electricity=100.0, grid_co2=0.0),
        # 7 °C +- 6 K, coldest on day 1: in the first days no spread is left above the reinjection minimum
        wells=[f.well("W1", "A", permit_flow_m3_per_h=5.0, groundwater_temp_c=7.0, groundwater_temp_amplitude_k=6.0,
                      coldest_day_of_year=1)],
        heat_demand_hourly_kw=pd.DataFrame({"A": d}),
        prices=Prices(gas_eur_per_mwh=60.0, co2_eur_per_t=0.0),
        settings=Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=5000.0),
    )


def linprog_optimum(cost, a, col_lower, col_upper, row_lower, row_upper) -> float:
    """min cost @ x with row_lower <= a x <= row_upper, as linprog's A_ub / A_eq (interior point method)."""
    a = sp.csr_matrix(a)
    eq = row_lower == row_upper
    up = ~eq & np.isfinite(row_upper)
    lo = ~eq & np.isfinite(row_lower)
    a_ub = sp.vstack([a[up], -a[lo]])
    b_ub = np.r_[row_upper[up], -row_lower[lo]]
    bounds = [(None if np.isinf(lw) else lw, None if np.isinf(hi) else hi) for lw, hi in zip(col_lower, col_upper)]
    res = linprog(cost, A_ub=a_ub, b_ub=b_ub, A_eq=a[eq], b_eq=row_lower[eq], bounds=bounds, method="highs-ipm")
    assert res.status == 0, res.message
    return float(res.fun)


def test_trimmed_district_lp_has_the_optimum_linprog_finds_for_the_lp_as_built():
    prepared = prepare_run(instance(), "reference", Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=5000.0))
    usable = int(np.isfinite(prepared.well_flow_per_kw_heating).sum())
    assert 0 < usable < HOURS  # the case has both kinds of hours
    model = build_model(prepared)
    lp = model.lp
    lp.set_objective(model.money)
    lean = lean_program(lp)
    # every usable hour's well row became a bound; in the others the heat pump's output and hot water are fixed at 0
    assert len(lean.flow_rows) == usable
    assert lp.n_cols - lean.n_cols == 2 * (HOURS - usable)
    assert lean.n_rows < lp.n_rows

    reference = linprog_optimum(lp.cost, lp.matrix(), lp.col_lower, lp.col_upper, lp.row_lower, lp.row_upper)
    trimmed_by_linprog = linprog_optimum(lean.cost, lean.matrix, lean.col_lower, lean.col_upper, lean.row_lower,
                                         lean.row_upper)
    solution = lp.solve()  # the direct path hands HiGHS the trimmed program
    assert solution.status == "optimal"
    assert solution.objective == pytest.approx(reference, rel=1e-7)
    assert trimmed_by_linprog == pytest.approx(reference, rel=1e-7)
    # the point read back is one of the program as built, with the cost HiGHS reports
    x = solution.x
    activity = lp.matrix() @ x
    tol = 1e-6 * (1 + np.abs(activity))
    assert np.all(activity >= lp.row_lower - tol) and np.all(activity <= lp.row_upper + tol)
    assert np.all(x >= lp.col_lower - 1e-6) and np.all(x <= lp.col_upper + 1e-6)
    assert lp.cost @ x == pytest.approx(reference, rel=1e-7)
    # the permit binds in some usable hour, so the bound that replaced the well row is active
    flow = activity[model.rows["well_flow"][0]]
    assert flow.max() == pytest.approx(lp.row_upper[model.rows["well_flow"][0]].max(), rel=1e-6)


def program(third_entry: bool) -> LinearProgram:
    """min -3x - w: w - x <= 0, x - w/2 <= 4 (the flow row), w <= 6. By hand: w = 6 (its bound), x = 4 + 6/2 = 7
    (w <= x holds), optimum -3 * 7 - 6 = -27. With ``third_entry`` the flow row also holds z in [0, 1] at cost -5."""
    lp = LinearProgram()
    x = lp.add_variables("x", 1)
    w = lp.add_variables("w", 1, 0.0, 6.0)
    z = lp.add_variables("z", 1, 0.0, 1.0)
    lp.add_rows_coo("within", 1, [0, 0], [w[0], x[0]], [1.0, -1.0], upper=0.0)
    flow = lp.add_rows_coo("flow", 1, [0, 0, 0], [x[0], w[0], z[0]], [1.0, -0.5, 1.0 if third_entry else 0.0],
                           upper=4.0)
    lp.add_flow_pairs(x, w, flow)
    lp.set_objective(np.array([-3.0, -1.0, -5.0 if third_entry else 0.0]))
    return lp


def test_flow_pair_by_hand_and_left_alone_when_its_row_holds_more():
    lp = program(third_entry=False)
    lean = lean_program(lp)
    assert list(lean.flow_rows) == [1] and lean.n_rows == 1
    solution = lp.solve()
    assert solution.objective == pytest.approx(-27.0, rel=1e-9)
    assert solution.x[:2] == pytest.approx([7.0, 6.0], rel=1e-9)
    assert solution.row_dual[1] == pytest.approx(-3.0, rel=1e-9)  # one more unit of flow row: one more x, 3 less cost
    crowded = program(third_entry=True)
    assert len(lean_program(crowded).flow_rows) == 0 and lean_program(crowded).n_rows == 2
    # z = 1 takes a unit of the row for 5 (w = 6, x = 4 - 1 + 3 = 6): -3 * 6 - 6 - 5 = -29 < -27
    assert crowded.solve().objective == pytest.approx(-29.0, rel=1e-9)


def test_lean_session_takes_new_costs_and_warm_starts():
    """A lean session held over two objectives (the cost, then the cost plus 500 EUR/t on CO2-equivalent, as the
    trade-off curve does) reaches, warm from the first basis, the optimum linprog finds for the LP as built with
    the second objective (interior point method, rel 1e-7)."""
    from engine.model.formulation import co2_stage_objective
    from engine.model.lp import HighsSession

    prepared = prepare_run(instance(), "reference", Settings(typical_days=0, value_of_unserved_heat_eur_per_mwh=5000.0))
    model = build_model(prepared)
    lp = model.lp
    lp.set_objective(model.money)
    session = HighsSession(lp, lean=True)
    assert session.solve().status == "optimal"
    first_basis = session.basis()
    lp.set_objective(model.money + 500.0 * co2_stage_objective(model)[0])
    assert session.set_basis(first_basis)
    second = session.solve()
    assert second.status == "optimal"
    reference = linprog_optimum(lp.cost, lp.matrix(), lp.col_lower, lp.col_upper, lp.row_lower, lp.row_upper)
    assert float(lp.cost @ second.x) == pytest.approx(reference, rel=1e-7)
    lp.add_rows_coo("extra", 1, np.zeros(1), np.zeros(1, np.int64), np.ones(1), upper=np.array([1e9]))
    with pytest.raises(ValueError, match="new costs only"):
        session.solve()
