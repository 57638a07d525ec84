"""The warm-started pathway LP (engine/model/warmstart.py) reaches the optimum of the stacked LP.

Reference: scipy.optimize.linprog (its HiGHS interface, started cold from its own presolve) on the very matrix,
bounds and costs of the stacked LP; the pathway's present value is that optimum plus the fixed O&M of existing
plant (the LP's constant). A warm start may only change where the simplex method starts, never the optimum.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

import scenario_factory as f
from engine.model.multiperiod import build_multiperiod
from engine.model.prepare import prepare_run
from engine.model.solve import run_settings
from engine.model.warmstart import BASIC, city_from_districts, warm_basis, year_chain_basis
from engine.scenario.inputs import Prices, Settings
from engine.scenario.pathway_inputs import CITY_COLUMNS, PathwayInputs
from engine.studies.pathway import solve_pathway, year_scenario

YEARS = [2030, 2035, 2040]
HOURS = np.arange(8760)


def _city():
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.95, investment_eur_per_kw=100.0),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0,
             investment_eur_per_kw=300.0, lifetime_a=20.0),
    )
    winter = 1.0 + 0.8 * np.cos(2 * np.pi * HOURS / 8760)  # peak in January
    demand = pd.DataFrame({"d1": 600.0 * winter, "d2": 300.0 * winter[::-1]})
    return f.scenario(
        [f.district("d1", k=0, heat_demand_mwh_per_a=float(demand["d1"].sum() / 1000)),
         f.district("d2", k=1, heat_demand_mwh_per_a=float(demand["d2"].sum() / 1000))],
        techs, f.hourly(electricity=110.0, grid_co2=0.0),
        existing={("d1", "gas"): 1100.0, ("d2", "gas"): 550.0},
        heat_demand_hourly_kw=demand,
        settings=Settings(typical_days=3, discount_rate=0.04),
        prices=Prices(gas_eur_per_mwh=60.0, co2_eur_per_t=0.0),
    )


def _pathway(caps):
    city = pd.DataFrame(np.nan, index=pd.Index(YEARS, name="year"), columns=list(CITY_COLUMNS))
    city["co2_cap_t_per_a"] = caps
    return PathwayInputs(list(YEARS), YEARS[0], 5, city, pd.DataFrame(columns=["year", "district_id",
                                                                              "heat_demand_factor"]))


def _stacked(scenario, pathway, districts):
    prepared = []
    for year in YEARS:
        s, _ = year_scenario(scenario, pathway, year)
        s.settings = run_settings(s)
        prepared.append(prepare_run(s, "reference", s.settings))
    end = YEARS[-1] + pathway.last_period_a
    return build_multiperiod(prepared, YEARS, pathway.base_year, end, districts), prepared, end


def _linprog_optimum(lp) -> float:
    a = lp.matrix().tocsr()
    lo, up = lp.row_lower, lp.row_upper
    eq = lo == up
    ub = ~eq & np.isfinite(up)
    lb = ~eq & np.isfinite(lo)
    a_ub = sp.vstack([a[ub], -a[lb]])
    b_ub = np.r_[up[ub], -lo[lb]]
    bounds = list(zip(lp.col_lower, [None if np.isinf(u) else u for u in lp.col_upper]))
    out = linprog(lp.cost, A_ub=a_ub, b_ub=b_ub, A_eq=a[eq], b_eq=lo[eq], bounds=bounds, method="highs")
    assert out.status == 0, out.message
    return float(out.fun)


@pytest.mark.parametrize("caps", [[np.nan, np.nan, np.nan], [np.nan, 900.0, 500.0]])
def test_warm_started_pathway_equals_linprog_on_the_stacked_lp(caps):
    scenario = _city()
    pathway = _pathway(caps)
    mp, _, _ = _stacked(scenario, pathway, [0, 1])
    reference = _linprog_optimum(mp.lp) + mp.constant_eur
    result = solve_pathway(scenario, pathway)  # warm-started (the default)
    assert result.solved, result.message
    assert result.present_value_eur == pytest.approx(reference, rel=1e-6)
    if not np.isnan(caps[1]):
        # the caps bind (so the dual simplex had work to do from the districts' uncapped bases)
        free = solve_pathway(scenario, _pathway([np.nan] * 3))
        assert free.summary["co2_t_per_a"].iloc[1] > caps[1] * 1.05
        summary = result.summary.set_index("year")
        assert summary.loc[2035, "co2_t_per_a"] == pytest.approx(caps[1], rel=1e-6)
        assert result.present_value_eur > free.present_value_eur


def test_district_bases_fill_the_city_basis():
    # the city's stacked LP started from its districts' optimal bases: a full basis (one basic column or row per
    # row), the CO2 cap rows basic; with caps that do not bind it is already optimal
    scenario = _city()
    pathway = _pathway([1e9, 1e9, 1e9])
    city, prepared, end = _stacked(scenario, pathway, [0, 1])
    free = [dataclasses.replace(p, settings=dataclasses.replace(p.settings, co2_cap_t_per_a=None)) for p in prepared]
    parts, bases = [], []
    for d in (0, 1):
        part = build_multiperiod(free, YEARS, pathway.base_year, end, [d])
        start, _ = year_chain_basis(part)
        assert start is not None
        solution = part.lp.solve(basis=start, keep_basis=True)
        parts.append(part)
        bases.append(solution.basis)
    basis = city_from_districts(city, parts, bases)
    assert basis is not None
    assert int((basis[0] == BASIC).sum() + (basis[1] == BASIC).sum()) == city.lp.n_rows
    for block in city.blocks:
        cap_rows = block.model.rows["co2_cap"]
        assert all(basis[1][block.row0 + int(r)] == BASIC for r in np.ravel(cap_rows))
    started, _ = warm_basis(city, prepared, YEARS, pathway.base_year, end, [0, 1], coupled=True)
    solution = city.lp.solve(basis=started)
    assert solution.status == "optimal"
    assert solution.objective == pytest.approx(_linprog_optimum(city.lp), rel=1e-6)
