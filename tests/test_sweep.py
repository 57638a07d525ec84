"""Price sweeps: sampling, cost cases from multipliers, local and Dask execution, tornado, command line.

The city: a seeded synthetic city of 3 districts over a two-week series at 4 typical days.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from bench.synthetic_city import synthetic_city
from engine.scenario.inputs import apply_cost_case
from engine.storage.store import ScenarioStore
from engine.cli import main as cli_main
from engine.outputs.study_figures import tornado_figure
from engine.studies.sweep import (
    PARAMETERS, case_from_prices, default_ranges, grid_samples, random_samples, run_sweep, save_sweep,
    tasks_from_cost_cases, tasks_from_samples, tornado_table, tornado_tasks,
)


@pytest.fixture(scope="module")
def city():
    return synthetic_city(3, n_hours=336, typical_days=4, seed=11)


@pytest.fixture(scope="module")
def tasks(city):
    samples = random_samples(default_ranges(["co2_price_factor", "gas_price_factor", "heat_pump_subsidy_share"]),
                             3, seed=4)
    return tasks_from_samples(city, samples)


@pytest.fixture(scope="module")
def serial(city, tasks):
    return run_sweep(city, tasks, workers=1, keep_results=True)


def test_latin_hypercube_hits_every_stratum_once():
    """Definition of Latin hypercube sampling (McKay, Beckman & Conover 1979, Technometrics 21(2)): with n
    samples each parameter's range splits into n equal strata and every stratum holds exactly one sample."""
    ranges = {"gas_price_factor": (0.5, 1.5), "co2_price_factor": (1.0, 3.0)}
    samples = random_samples(ranges, 8, seed=3)
    for name, (low, high) in ranges.items():
        values = np.array([s[name] for s in samples])
        strata = np.floor((values - low) / (high - low) * 8).astype(int)
        assert sorted(strata) == list(range(8))
    assert samples == random_samples(ranges, 8, seed=3)
    assert samples != random_samples(ranges, 8, seed=4)


def test_uniform_and_grid_samples_stay_in_range():
    """Plain uniform draws lie within their ranges; a grid holds every combination (3 x 3 = 9)."""
    ranges = {"gas_price_factor": (0.5, 1.5), "electricity_price_factor": (0.8, 1.2)}
    for s in random_samples(ranges, 50, seed=0, method="uniform"):
        assert 0.5 <= s["gas_price_factor"] <= 1.5 and 0.8 <= s["electricity_price_factor"] <= 1.2
    grid = grid_samples(ranges, 3)
    assert len(grid) == 9
    assert {g["gas_price_factor"] for g in grid} == {0.5, 1.0, 1.5}
    with pytest.raises(ValueError, match="unknown sweep parameter"):
        grid_samples({"steel_price": (1, 2)}, 2)
    with pytest.raises(ValueError, match="method"):
        random_samples(ranges, 3, method="sobol")


def test_case_from_prices_multiplies_the_base_case(city):
    """Hand arithmetic on the synthetic city's prices (gas 58 EUR/MWh, CO2 110 EUR/t): the multipliers act on
    the base case, and the subsidy reaches both heat pump kinds."""
    base = city.cost_cases["high_co2"]  # CO2 250 EUR/t, gas factor 1.2
    case = case_from_prices(city, base, {"co2_price_factor": 0.5, "gas_price_factor": 1.5,
                                         "heat_pump_subsidy_share": 0.3}, "x")
    prices = apply_cost_case(dict_scenario(city, case), "x")
    assert prices.co2_eur_per_t == pytest.approx(125.0)
    assert prices.fuel_eur_per_mwh["gas"] == pytest.approx(58.0 * 1.2 * 1.5)
    assert prices.investment_eur_per_kw["air_hp"] == pytest.approx(
        city.technologies.set_index("technology_id").loc["air_hp", "investment_eur_per_kw"] * 0.7)
    assert case.subsidy_share == {"air_hp": 0.3, "gw_hp": 0.3}
    with pytest.raises(ValueError, match="heat_pump_subsidy_share"):
        case_from_prices(city, base, {"heat_pump_subsidy_share": 1.5}, "y")


def dict_scenario(city, case):
    import dataclasses

    return dataclasses.replace(city, cost_cases={**city.cost_cases, case.name: case})


def test_sweep_records_in_task_order(serial, tasks):
    """One record per task, in the order given, with its prices and figures; kept runs match the records."""
    table = serial.table
    assert list(table["name"]) == [t.name for t in tasks]
    assert (table["status"] == "optimal").all()
    for column in ("co2_price_factor", "case_co2_eur_per_t", "total_cost_eur_per_a", "co2_t_per_a"):
        assert column in table.columns
    assert len(serial.results) == len(tasks)
    for row, result in zip(table.itertuples(), serial.results):
        assert row.total_cost_eur_per_a == result.total_cost_eur_per_a
    assert serial.main_supply.shape == (3, 3)


@pytest.mark.slow
def test_dask_local_cluster_gives_the_serial_results(city, tasks, serial):
    """The same LPs solved by HiGHS on Dask workers (a LocalCluster of 2 processes) give the same numbers as the
    serial sweep; HiGHS is deterministic for a given model and options (common practice)."""
    import distributed  # imported here: the Dask scheduler is heavy to load and only this test needs it
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, distributed.Client(cluster) as client:
        seen = []
        outcome = run_sweep(city, tasks, scheduler=client, progress=lambda share, text: seen.append(share))
    assert list(outcome.table["name"]) == list(serial.table["name"])
    np.testing.assert_allclose(outcome.table["total_cost_eur_per_a"], serial.table["total_cost_eur_per_a"],
                               rtol=1e-9)
    np.testing.assert_allclose(outcome.table["co2_t_per_a"], serial.table["co2_t_per_a"], rtol=1e-9, atol=1e-9)
    pd.testing.assert_frame_equal(outcome.main_supply, serial.main_supply)
    assert sorted(seen) == pytest.approx([1 / 3, 2 / 3, 1.0])


def test_tornado_directions(city):
    """LP sensitivity: with the quantities bought never negative, raising a price can never lower the least
    cost and lowering it can never raise it; a larger subsidy never raises it (Bertsimas & Tsitsiklis 1997,
    sec. 5.2, the optimal cost is concave and nondecreasing in such cost coefficients, from memory)."""
    outcome = run_sweep(city, tornado_tasks(city, parameters=["gas_price_factor", "heat_pump_subsidy_share"]),
                        workers=1)
    table = tornado_table(outcome)
    assert list(table["parameter"]) == sorted(table["parameter"], key=lambda p: -float(
        table.set_index("parameter").loc[p, "swing_eur_per_a"]))
    gas = table.set_index("parameter").loc["gas_price_factor"]
    assert gas["delta_cost_high_eur_per_a"] >= -1e-6 and gas["delta_cost_low_eur_per_a"] <= 1e-6
    subsidy = table.set_index("parameter").loc["heat_pump_subsidy_share"]
    assert subsidy["delta_cost_high_eur_per_a"] <= 1e-6
    assert subsidy["low_value"] == PARAMETERS["heat_pump_subsidy_share"].low
    figure = tornado_figure(table)
    assert len(figure.data) == 2 and list(figure.data[0].y) == list(table["label"][::-1])


def test_saved_runs_carry_the_sweep_id(serial, tmp_path):
    """Runs saved from a sweep are tagged with its id in the store."""
    with ScenarioStore(tmp_path / "runs.sqlite") as store:
        ids = save_sweep(serial, store, "Test sweep")
        runs = store.list_runs()
    assert len(ids) == 3
    assert set(runs["sweep_id"]) == {serial.sweep_id}


def test_command_writes_sweep_csv(tmp_path, capsys):
    """Contract of ``sweep DIR --cost-cases all --out OUT``: a row per run with its prices, total_cost_eur_per_a
    and co2_t_per_a; progress on stderr."""
    code = cli_main(["sweep", "tests/fixtures/tiny_city", "--cost-cases", "all", "--typical-days", "4",
                     "--workers", "1", "--out", str(tmp_path)])
    assert code == 0
    table = pd.read_csv(tmp_path / "sweep.csv")
    assert list(table["name"]) == ["reference", "high_co2"]
    assert {"case_co2_eur_per_t", "total_cost_eur_per_a", "co2_t_per_a", "sweep_id"} <= set(table.columns)
    assert table.loc[1, "case_co2_eur_per_t"] == 250.0
    assert "Run 2 of 2" in capsys.readouterr().err


def test_command_rejects_unknown_cost_case(tmp_path, capsys):
    """An unknown cost case is an input error (exit 2) named in the message."""
    assert cli_main(["sweep", "tests/fixtures/tiny_city", "--cost-cases", "nope", "--out", str(tmp_path)]) == 2
    assert "nope" in capsys.readouterr().err


def test_tasks_from_cost_cases_rejects_unknown(city):
    """Common practice: a clear ValueError naming the case."""
    assert [t.name for t in tasks_from_cost_cases(city)] == list(city.cost_cases)
    with pytest.raises(ValueError, match="nope"):
        tasks_from_cost_cases(city, ["nope"])
