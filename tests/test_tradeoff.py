"""The cost-CO2 trade-off curve (epsilon-constraint method, Haimes, Lasdon & Wismer 1971).

The city: a seeded synthetic city of 4 districts over a two-week series at 4 typical days.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from bench.synthetic_city import synthetic_city
from engine.model.solve import solve_scenario
from engine.cli import main as cli_main
from engine.studies.tradeoff import TRADEOFF_COLUMNS, point_scenario, tradeoff_curve, tradeoff_curve_runs


@pytest.fixture(scope="module")
def city():
    return synthetic_city(4, n_hours=336, typical_days=4, seed=5)


@pytest.fixture(scope="module")
def curve(city):
    return tradeoff_curve_runs(city, n_points=5)


def test_table_shape(curve):
    """Contract of the table: one row per point, least cost first, least CO2 last."""
    table, results = curve
    assert list(table.columns[: len(TRADEOFF_COLUMNS)]) == list(TRADEOFF_COLUMNS)
    assert len(table) == len(results) == 5
    assert list(table["kind"]) == ["cost_optimal"] + ["co2_bounded"] * 3 + ["co2_optimal"]
    assert (table["status"] == "optimal").all()
    assert any(c.startswith("heat_") and c.endswith("_mwh_per_a") for c in table.columns)


def test_cost_never_falls_and_co2_never_rises_as_the_bound_tightens(curve):
    """A tighter bound shrinks the feasible set of the same LP, so the optimal cost cannot fall (Haimes et al.
    1971); each point's CO2 stays within its bound."""
    table, _ = curve
    cost = table["total_cost_eur_per_a"].to_numpy()
    co2 = table["co2_t_per_a"].to_numpy()
    assert np.all(np.diff(cost) >= -1e-9 * cost[:-1])
    assert np.all(np.diff(co2) <= 1e-7 * co2[:-1])
    bounded = table[table["kind"] == "co2_bounded"]
    assert np.all(bounded["co2_t_per_a"] <= bounded["co2_bound_t_per_a"] * (1 + 1e-7))
    assert cost[-1] > cost[0] and co2[-1] < co2[0]


def test_abatement_cost_rises_along_the_curve(curve):
    """The optimal value of an LP is convex in the right-hand side of a constraint (Bertsimas & Tsitsiklis 1997,
    Introduction to Linear Optimization, thm 5.1, from memory): the cost per tonne avoided can only rise."""
    table, _ = curve
    abatement = table["abatement_cost_eur_per_t"].to_numpy()[1:]
    assert np.all(np.diff(abatement) >= -1e-6 * np.abs(abatement[:-1]) - 1e-6)


def test_end_points_equal_cost_and_co2_optimal_runs(city, curve):
    """The end points are the least-cost run and the least-CO2 run, solved again here on their own (rel 1e-6)."""
    table, _ = curve
    cheapest = solve_scenario(city, objective="cost")
    cleanest = solve_scenario(city, objective="co2")
    first, last = table.iloc[0], table.iloc[-1]
    assert first["total_cost_eur_per_a"] == pytest.approx(cheapest.total_cost_eur_per_a, rel=1e-6)
    assert first["co2_t_per_a"] == pytest.approx(cheapest.co2_t_per_a, rel=1e-6)
    assert last["total_cost_eur_per_a"] == pytest.approx(cleanest.total_cost_eur_per_a, rel=1e-6)
    assert last["co2_t_per_a"] == pytest.approx(cleanest.co2_t_per_a, rel=1e-6)


def test_bounds_at_the_end_points_reproduce_them(city, curve):
    """Epsilon-constraint consistency: bounding CO2 at the least-cost run's emissions leaves that optimum, and
    bounding it at the least-CO2 emissions relaxes the second stage of the CO2 objective (which also holds
    unserved heat at its minimum), so it costs no more than the least-CO2 point and, unserved heat being priced
    at 5000 EUR/MWh, hardly less (within 1 %: the peak day is an extreme day of weight one, so leaving a peak
    hour unserved there costs 5000 EUR/MWh for that one day, less than the capacity it would need, as over the
    full year)."""
    table, _ = curve
    co2_high, co2_low = table["co2_t_per_a"].iloc[0], table["co2_t_per_a"].iloc[-1]
    loose = solve_scenario(city, co2_cap_t_per_a=co2_high * (1 + 1e-9))
    assert loose.total_cost_eur_per_a == pytest.approx(table["total_cost_eur_per_a"].iloc[0], rel=1e-6)
    tight = solve_scenario(city, co2_cap_t_per_a=co2_low * (1 + 1e-7) + 1e-4)
    least_co2_cost = table["total_cost_eur_per_a"].iloc[-1]
    assert tight.total_cost_eur_per_a <= least_co2_cost * (1 + 1e-7)
    assert tight.total_cost_eur_per_a == pytest.approx(least_co2_cost, rel=1e-2)


def test_point_scenario_resolves_to_the_same_point(city, curve):
    """A point saved as a scenario (its objective and cap in the run settings) solves to the same figures."""
    table, _ = curve
    for point in (1, 4):
        again = solve_scenario(point_scenario(city, table, point))
        assert again.total_cost_eur_per_a == pytest.approx(table["total_cost_eur_per_a"].iloc[point], rel=1e-6)
    with pytest.raises(ValueError, match="point"):
        point_scenario(city, table, 99)


def test_two_points_are_the_end_points(city):
    """n_points = 2 gives the two extremes only; fewer is an error naming n_points."""
    table = tradeoff_curve(city, n_points=2)
    assert list(table["kind"]) == ["cost_optimal", "co2_optimal"]
    with pytest.raises(ValueError, match="n_points"):
        tradeoff_curve(city, n_points=1)


def test_command_writes_tradeoff_csv(tmp_path, capsys):
    """Contract of ``tradeoff DIR --points N --out OUT``: OUT/tradeoff.csv with co2_t_per_a and
    total_cost_eur_per_a per point; progress on stderr."""
    folder = "tests/fixtures/tiny_city"
    code = cli_main(["tradeoff", folder, "--points", "2", "--typical-days", "3", "--out", str(tmp_path)])
    assert code == 0
    table = pd.read_csv(tmp_path / "tradeoff.csv")
    assert len(table) == 2
    assert {"co2_t_per_a", "total_cost_eur_per_a"} <= set(table.columns)
    assert "%" in capsys.readouterr().err


def test_command_reports_input_errors(tmp_path, capsys):
    """Bad input gives exit code 2 and a message, never a traceback (common practice of the command line)."""
    assert cli_main(["tradeoff", "tests/fixtures/tiny_city", "--points", "1", "--out", str(tmp_path)]) == 2
    assert "--points" in capsys.readouterr().err
    assert cli_main(["tradeoff", str(tmp_path / "missing"), "--points", "3", "--out", str(tmp_path)]) == 2


def test_next_bound_splits_the_longest_scaled_segment():
    """Hand-checked placement: with ends (CO2 100, cost 0) and (0, 100) and a point at (50, 10), the scaled
    segment from 50 to 0 t is the longer (hypot(0.5, 0.9) against hypot(0.5, 0.1)), so the next bound is its CO2
    midpoint, 25 t; a segment next to a failed point (cost NaN) is never split."""
    from engine.studies.tradeoff import _next_bound

    assert _next_bound([(100.0, 0.0), (0.0, 100.0)]) == pytest.approx(50.0)
    assert _next_bound([(100.0, 0.0), (0.0, 100.0), (50.0, 10.0)]) == pytest.approx(25.0)
    assert _next_bound([(100.0, 0.0), (0.0, 100.0), (50.0, 10.0), (25.0, float("nan"))]) == pytest.approx(75.0)
