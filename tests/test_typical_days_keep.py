"""Typical days keep what the year holds: annual sums, the peak-heating, peak-cooling and coldest days.

The extreme-period practice of the typical-period literature (Kotzur et al. 2018, Renewable Energy 117,
474-487): extreme days are periods of their own with weight one day, the clustered days are rescaled so that the
weighted sums equal the year's. Checks are against the hourly year the test builds (sums, maxima) and against
arithmetic on it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.model.prepare import demand_year_kw, extreme_days, prepare_run
from engine.model.solve import solve_scenario
from engine.physics.timeseries import full_year_grid, rescale_to_annual, typical_day_grid
from engine.scenario.inputs import Prices, Settings

N_DAYS = 60
HOURS = 24 * N_DAYS


def city(typical_days=4, gas_limit_kw=None):
    """Sixty days: a cold snap on day 20 (coldest and peak heating), five hot days 40-44 (the only cooling)."""
    hour = np.arange(HOURS)
    day = hour // 24
    outdoor = 5.0 + 4.0 * np.sin(2 * np.pi * hour / 24) + 3.0 * np.sin(2 * np.pi * day / N_DAYS)
    outdoor = np.where(day == 20, outdoor - 12.0, outdoor)
    outdoor = np.where((day >= 40) & (day <= 44), 27.0 + 3.0 * np.sin(2 * np.pi * hour / 24), outdoor)
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=80.0),
        dict(technology_id="chiller", kind="chiller", carrier="electricity", efficiency=3.0,
             investment_eur_per_kw=150.0),
    )
    potential = {("A", "gas"): gas_limit_kw} if gas_limit_kw else {}
    return f.scenario(
        [f.district("A", heat_demand_mwh_per_a=900.0, cooling_demand_mwh_per_a=40.0)],
        techs,
        f.hourly(HOURS, outdoor_temp_c=outdoor, grid_co2=0.0),
        potential=potential,
        prices=Prices(co2_eur_per_t=0.0),
        settings=Settings(typical_days=typical_days, value_of_unserved_heat_eur_per_mwh=100_000.0),
    )


def test_annual_heat_and_cooling_sums_are_kept_exactly():
    """With 4 typical days the weighted sums of the steps equal the year's sums: 900 MWh heat, 40 MWh cooling."""
    prepared = prepare_run(city(4), "reference")
    w = prepared.grid.weight_h
    assert (prepared.heat_demand_kw @ w).sum() / 1000 == pytest.approx(900.0, rel=1e-12)
    assert (prepared.cooling_demand_kw @ w).sum() / 1000 == pytest.approx(40.0, rel=1e-12)
    result = solve_scenario(city(4))
    assert result.tables["districts"]["cooling_demand_mwh_per_a"].sum() == pytest.approx(40.0, rel=1e-9)
    assert result.tables["districts"]["heat_demand_mwh_per_a"].sum() == pytest.approx(900.0, rel=1e-9)
    report = result.extras["time_aggregation"]
    assert abs(report["heat_sum_error_after_rescaling_pct"]) < 1e-9
    assert "heat_sum_error_before_rescaling_pct_worst_district" in report


def test_extreme_days_are_periods_of_weight_one_and_keep_the_peaks():
    scenario = city(4)
    heat, cool = demand_year_kw(scenario, scenario.settings)
    days = extreme_days(scenario, heat, cool)
    assert days["peak_heating_day"] == 20 and days["coldest_day"] == 20  # the cold snap
    assert 40 <= days["peak_cooling_day"] <= 44
    prepared = prepare_run(scenario, "reference")
    grid = prepared.grid
    assert grid.n_periods == 4 + 2  # four typical days, the cold snap and the peak-cooling day
    for day in set(days.values()):
        period = grid.day_period[day]
        assert grid.extreme_period[period]
        assert (grid.day_period == period).sum() == 1  # it stands for itself only
        assert grid.weight_h[grid.period == period].tolist() == [1.0] * 24
    assert prepared.heat_demand_kw.max() == pytest.approx(heat.max(), rel=1e-12)
    assert prepared.cooling_demand_kw.max() == pytest.approx(cool.max(), rel=1e-12)
    assert grid.weight_h.sum() == HOURS


def test_unserved_heat_on_the_peak_day_counts_once():
    """A boiler limit only the cold snap exceeds: the heat unserved is the same at 4 typical days as over the
    full year (it falls on a weight-one day), the year's sum of max(0, demand - limit)."""
    scenario = city(0)
    heat, _ = demand_year_kw(scenario, scenario.settings)
    others = np.delete(heat[0].reshape(N_DAYS, 24), 20, axis=0).max()
    limit = others * 1.3  # above every other day even after rescaling
    assert heat[0].max() > limit
    hand = np.maximum(heat[0] - limit, 0.0).sum() / 1000
    typical = solve_scenario(city(4, gas_limit_kw=limit))
    year = solve_scenario(city(0, gas_limit_kw=limit))
    assert year.unserved_heat_mwh_per_a == pytest.approx(hand, rel=1e-6)
    assert typical.unserved_heat_mwh_per_a == pytest.approx(hand, rel=1e-6)


def test_rescale_leaves_extremes_and_scales_the_rest_by_one_factor():
    """By hand: two rows over 10 days, day 3 extreme; the clustered steps scale by (sum - extreme) / clustered."""
    rng = np.random.default_rng(3)
    year = rng.uniform(1.0, 5.0, size=(2, 240))
    features = year[0].reshape(10, 24)
    grid = typical_day_grid(features, 2, None, extreme_days=[3])
    values, before = rescale_to_annual(year, grid)
    w = grid.weight_h
    np.testing.assert_allclose(values @ w, year.sum(axis=1), rtol=1e-12)
    extreme = grid.is_extreme_step
    np.testing.assert_array_equal(values[:, extreme], year[:, grid.year_hour][:, extreme])
    raw = year[:, grid.year_hour]
    factor = (year.sum(axis=1) - raw[:, extreme] @ w[extreme]) / (raw[:, ~extreme] @ w[~extreme])
    np.testing.assert_allclose(values[:, ~extreme], raw[:, ~extreme] * factor[:, None], rtol=1e-12)
    np.testing.assert_allclose(before, 100 * (raw @ w - year.sum(axis=1)) / year.sum(axis=1), rtol=1e-12)
    full, error = rescale_to_annual(year, full_year_grid(240))
    np.testing.assert_array_equal(full, year)
    np.testing.assert_allclose(error, 0.0, atol=1e-12)


def test_extreme_day_bad_index_raises():
    with pytest.raises(ValueError, match="extreme_days"):
        typical_day_grid(np.zeros((10, 24)), 2, None, extreme_days=[10])
