"""Studies that keep a model in HiGHS between solves give the answers of solves from scratch.

A re-solve after a changed bound or objective starts from the last basis; the optimum it reaches is that of the
changed LP, which an independent solve from scratch (``solve_scenario`` on the point's own settings, or
scipy.optimize.linprog on the LP's arrays) must reproduce to the solvers' tolerances (1e-7 relative on the
optimal value; the plan itself may be another of equally cheap plans).
"""

from __future__ import annotations

import dataclasses

import highspy
import numpy as np
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

from bench.synthetic_city import synthetic_city
from engine.model.formulation import build_model, co2_stage_objective, solve_model
from engine.model.live import LiveCityModel, district_row_map
from engine.model.prepare import prepare_run
from engine.model.solve import run_settings, solve_scenario
from engine.scenario import load_scenario, resolve_scenario_path
from engine.studies.tradeoff import point_scenario, tradeoff_curve_runs

REL = 1e-7


def linprog_solution(lp, cost, extra_rows=()):
    """x minimising ``cost @ x`` over the LP's rows and bounds (and ``extra_rows``: (coefs, upper) pairs), solved
    by scipy.optimize.linprog (its HiGHS build, from the arrays, independent of the engine's HiGHS model)."""
    a = lp.matrix().tocsr()
    lo, up = lp.row_lower, lp.row_upper
    eq = lo == up
    ub_rows = np.flatnonzero(~eq & np.isfinite(up))
    lb_rows = np.flatnonzero(~eq & np.isfinite(lo))
    blocks = [a[ub_rows], -a[lb_rows]] + [sp.csr_matrix(c.reshape(1, -1)) for c, _ in extra_rows]
    b_ub = np.r_[up[ub_rows], -lo[lb_rows], [u for _, u in extra_rows]]
    bounds = [(l_, None if np.isinf(u_) else u_) for l_, u_ in zip(lp.col_lower, lp.col_upper)]
    res = linprog(cost, A_ub=sp.vstack(blocks).tocsr(), b_ub=b_ub, A_eq=a[np.flatnonzero(eq)], b_eq=lo[eq],
                  bounds=bounds, method="highs")
    assert res.status == 0, res.message
    return res.x


@pytest.fixture(scope="module")
def city():
    return synthetic_city(4, n_hours=336, typical_days=4, seed=5)


def test_every_curve_point_equals_its_solve_from_scratch(city):
    """Each point of the curve (the live city LP, re-solved from the previous basis with only the CO2 bound
    changed; the least-CO2 point with its stages in one model) against solve_scenario of that point's settings,
    built and solved afresh."""
    table, results = tradeoff_curve_runs(city, n_points=6)
    assert results[0].model_size.get("reused_model")
    for point in range(len(table)):
        again = solve_scenario(point_scenario(city, table, point))
        assert again.solved
        assert table["total_cost_eur_per_a"].iloc[point] == pytest.approx(again.total_cost_eur_per_a, rel=REL)
        if table["kind"].iloc[point] == "co2_bounded":  # the bound binds: CO2 is the bound in both
            assert table["co2_t_per_a"].iloc[point] == pytest.approx(again.co2_t_per_a, rel=REL)


def test_least_cost_point_by_district_equals_linprog_on_the_city_lp(city):
    """The live model's first solve (district LPs stacked) against scipy's linprog on the whole city LP, and a
    bounded re-solve of the same model (from the stacked basis) against linprog with the bound as an extra row
    (optimal values of the LP's objective, which holds a negligible charging tie-break the tables leave out)."""
    settings = run_settings(city, "cost", 0.0)
    live = LiveCityModel(city, "reference", settings)
    model = live.model
    stacked = live._run_by_district()
    assert stacked is not None
    x = linprog_solution(model.lp, model.money)
    assert stacked.objective == pytest.approx(float(model.money @ x), rel=REL)
    bound = 0.9 * float(model.emissions @ stacked.x)
    capped = live.solve("cost", bound)
    assert capped.solved
    x = linprog_solution(model.lp, model.money, [(model.emissions, bound)])
    assert live.highs.getInfo().objective_function_value == pytest.approx(float(model.money @ x), rel=REL)


def test_stacked_basis_of_the_demo_is_optimal_for_the_city_lp():
    """The demo lists its wells in an order that is not the districts' order, so the well rows of the city LP
    must be matched row by row: started from the stacked basis, HiGHS finds the city LP optimal without a
    single iteration, at the stacked solution."""
    scenario = load_scenario(resolve_scenario_path("demo"))
    live = LiveCityModel(scenario, "reference", run_settings(scenario, "cost", 0.0))
    solution = live._run_by_district()
    assert solution is not None
    h = live.highs
    assert h.getBasis().valid
    h.setOptionValue("simplex_iteration_limit", 0)
    h.run()
    assert h.getModelStatus() == highspy.HighsModelStatus.kOptimal
    assert np.allclose(np.asarray(h.getSolution().col_value), solution.x, rtol=1e-7, atol=1e-6)
    models = [build_model(live.prepared, [i]) for i in range(len(live.prepared.district_ids))]
    maps = district_row_map(live.model, models)
    well_rows = np.concatenate([m_[mod.rows["well_flow"]].ravel() for m_, mod in zip(maps, models)
                                if "well_flow" in mod.rows])
    assert not np.array_equal(well_rows, np.sort(well_rows))  # the case this matching is for


def test_co2_stages_in_one_model_equal_stages_from_scratch(city):
    """The lexicographic CO2 objective with its stages re-solved in one HiGHS model against the same two stages
    solved by scipy's linprog from scratch: least CO2 (unserved heat weighted), then least cost with CO2 and
    unserved heat held at that optimum (with the formulation's slack)."""
    from engine.model import formulation as f

    prepared = prepare_run(city, "reference", run_settings(city, "co2", 0.0))
    for district in ([0], [2]):
        model = build_model(prepared, district)
        solution = solve_model(model, "co2")
        assert solution.status == "optimal"
        fresh = build_model(prepared, district)
        first, unserved_cols, weight = co2_stage_objective(fresh)
        x1 = linprog_solution(fresh.lp, first)
        co2_opt = float(fresh.emissions @ x1)
        unserved = np.zeros(fresh.lp.n_cols)
        unserved[unserved_cols] = weight
        rows = [(fresh.emissions, co2_opt * (1 + f.CO2_STAGE_RELATIVE_SLACK) + f.CO2_STAGE_ABSOLUTE_SLACK_T),
                (unserved, float(unserved @ x1) * (1 + f.CO2_STAGE_RELATIVE_SLACK)
                 + f.UNSERVED_STAGE_ABSOLUTE_SLACK_MWH)]
        x2 = linprog_solution(fresh.lp, fresh.money, rows)
        assert float(model.emissions @ solution.x) == pytest.approx(float(fresh.emissions @ x2), rel=REL, abs=1e-6)
        assert float(model.money @ solution.x) == pytest.approx(float(fresh.money @ x2), rel=REL)


# ------------------------------------------------------------------------------------------ nothing changed
def test_requests_already_answered_perform_no_solve(monkeypatch, tmp_path):
    """A request solved in the session (same key, or another key with the same input hash), a saved run solved
    again in the session, and a request saved in the library come back without calling the solver: the calls of
    solve_scenario are counted (common practice for memoising on a content hash)."""
    from pathlib import Path

    from engine.storage.store import ScenarioStore, read_scenario_files
    from pages._support import cache as cache_module
    from pages._support.cache import request_key, resolve_saved_run, solve_with_cache
    from pages._support.inputs import input_set_from_files

    tiny = input_set_from_files(read_scenario_files(Path(__file__).parent / "fixtures" / "tiny_city"), "tiny")
    assert tiny.ok, tiny.problems
    calls = []
    real = cache_module.solve_scenario

    def counted(*args, **kwargs):
        calls.append(kwargs.get("cost_case"))
        return real(*args, **kwargs)

    monkeypatch.setattr(cache_module, "solve_scenario", counted)
    cache: dict = {}
    key = request_key(tiny.digest, None, None, "reference", "cost", 0.0, 4)
    run, hit = solve_with_cache(cache, key, tiny.scenario, tiny.files, "first", "reference", "cost", 0.0, 4)
    assert run.result.solved and not hit and len(calls) == 1
    solve_with_cache(cache, key, tiny.scenario, tiny.files, "again", "reference", "cost", 0.0, 4)
    other_key = request_key("another digest", None, None, "reference", "cost", 0.0, 4)
    solve_with_cache(cache, other_key, tiny.scenario, tiny.files, "same hash", "reference", "cost", 0.0, 4)
    again, hit = resolve_saved_run(cache, tiny.scenario, tiny.files, run.result, "re-solve")
    assert hit and again.result is run.result
    assert len(calls) == 1
    path = tmp_path / "library.sqlite"
    with ScenarioStore(path) as store:
        store.save_run(run.result, "tiny", inputs=tiny.files)
    found, hit = solve_with_cache({}, key, tiny.scenario, tiny.files, "library", "reference", "cost", 0.0, 4,
                                  library=lambda: ScenarioStore(path))
    assert hit and found.saved_run_id is not None and len(calls) == 1
    # another objective is another request: it is solved
    co2_key = request_key(tiny.digest, None, None, "reference", "co2", 0.0, 4)
    solve_with_cache(cache, co2_key, tiny.scenario, tiny.files, "co2", "reference", "co2", 0.0, 4)
    assert len(calls) == 2


def test_fast_table_text_of_the_fingerprint_is_pandas_text():
    """The input hash writes numeric tables without pandas; the text must be pandas' ``to_csv`` (index off,
    ``%.10g``) character for character, so that fingerprints of saved runs stay what they were: the demo's hourly
    table and a frame of awkward numbers (NaN, signed zero, infinities, large and tiny magnitudes)."""
    import pandas as pd

    from engine.scenario.inputs import _numeric_csv

    scenario = load_scenario(resolve_scenario_path("demo"))
    rng = np.random.default_rng(7)
    awkward = pd.DataFrame({
        "x": rng.normal(size=40) * 10.0 ** rng.integers(-12, 16, 40),
        "n": rng.integers(-9, 9, 40),
        "y": np.r_[np.nan, -0.0, np.inf, -np.inf, 1e16, 123456789012.0, 0.1 + 0.2, rng.random(33)],
    })
    for frame in (scenario.hourly, awkward):
        assert _numeric_csv(frame) == frame.to_csv(index=False, float_format="%.10g")
    assert _numeric_csv(scenario.wells) is None  # text columns: pandas writes it


def test_serial_sweep_with_held_models_equals_runs_from_scratch(city):
    """A serial sweep re-solves the district LPs of the last cost case with only the costs changed; each case's
    figures against that case solved on its own from scratch (solve_task without held models). Sampled cases
    (prices drawn in a Latin hypercube) exercise costs that differ in every price."""
    from engine.model.solve import HeldModels
    from engine.studies.sweep import default_ranges, random_samples, run_sweep, solve_task, tasks_from_samples

    tasks = tasks_from_samples(city, random_samples(default_ranges(), 4, seed=3))
    held = HeldModels()
    outcome = run_sweep(city, tasks, workers=1)
    for task, (_, record) in zip(tasks, outcome.table.iterrows()):
        fresh, _ = solve_task(city, task)
        assert record["status"] == fresh["status"] == "optimal"
        assert record["total_cost_eur_per_a"] == pytest.approx(fresh["total_cost_eur_per_a"], rel=REL)
        again, _ = solve_task(city, task, held=held)
        assert again["total_cost_eur_per_a"] == pytest.approx(fresh["total_cost_eur_per_a"], rel=REL)
    assert held.reused == (len(tasks) - 1) * len(city.districts)
