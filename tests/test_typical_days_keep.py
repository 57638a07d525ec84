"""Typical days keep what the year holds: annual sums, duration curves, the peak-heating, peak-cooling and
coldest days.

The extreme-period practice of the typical-period literature (Kotzur et al. 2018, Renewable Energy 117,
474-487): extreme days are periods of their own with weight one day. The demand of the clustered days is given
the year's duration curve (the criterion of Poncelet et al. 2017, IEEE Trans. Power Syst. 32(3)), which keeps
the weighted sums equal to the year's. Checks are against the hourly year the test builds (sums, maxima, its
sorted values) and against arithmetic on it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.model.prepare import demand_year_kw, duration_curve_error_pct, extreme_days, prepare_run
from engine.model.solve import solve_scenario
from engine.physics.timeseries import full_year_grid, keep_duration_curve, rescale_to_annual, typical_day_grid
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
    assert 0.0 <= report["city_heat_duration_curve_error_pct_of_sum"] < 1.0
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


def test_duration_curve_by_hand_four_flat_days():
    """Four flat days of 10, 8, 6 and 2 kW, day 0 extreme, the other three one typical day. k-medoids picks the
    6 kW day (distances 2 + 4 against 2 + 6 and 4 + 6, by hand), weight 3 days: each of its 24 steps stands for 3
    hours. The clustered days' duration curve is 24 h at 8, 24 h at 6, 24 h at 2 kW, so (ties in step order)
    steps 0-7 take 8, steps 8-15 take 6, steps 16-23 take 2 kW; the extreme day keeps 10 kW. The single-factor
    rescaling would give every step 6 * 16 / 18 kW instead (and so no hour above 5.3 kW outside the extreme)."""
    year = np.repeat([10.0, 8.0, 6.0, 2.0], 24)[None, :]
    grid = typical_day_grid(year.reshape(4, 24), 1, None, extreme_days=[0])
    values, before = keep_duration_curve(year, grid)
    extreme = grid.is_extreme_step
    np.testing.assert_array_equal(values[0, extreme], np.full(24, 10.0))
    np.testing.assert_allclose(values[0, ~extreme], np.repeat([8.0, 6.0, 2.0], 8), rtol=1e-12)
    assert before[0] == pytest.approx(100 * (10 * 24 + 6 * 72 - 26 * 24) / (26 * 24))
    np.testing.assert_allclose(rescale_to_annual(year, grid)[0][0, ~extreme], 6.0 * 16 / 18, rtol=1e-12)
    # the error the run reports: none for the duration curve; for the single factor the top 72 h hold
    # 240 + 48 * 16/3 = 496 kWh against the year's 240 + 192 + 144 = 576, 80 of 624 kWh: 12.82 %
    assert duration_curve_error_pct(year[0], values[0], grid.weight_h) == pytest.approx(0.0, abs=1e-9)
    single = rescale_to_annual(year, grid)[0][0]
    assert duration_curve_error_pct(year[0], single, grid.weight_h) == pytest.approx(100 * 80 / 624, rel=1e-9)


def test_duration_curve_of_the_year_is_kept_at_every_band_edge():
    """Sixty days of noisy demand, 5 typical days, two extreme days: expanding every clustered step into as many
    hours as it weighs and sorting them gives, at each band edge, the same cumulative sum as the year's sorted
    clustered hours (the year's duration curve, computed here with plain numpy); the sums and the extreme days'
    values are the year's exactly; within each typical day the order of the hours is the medoid day's."""
    rng = np.random.default_rng(11)
    hour = np.arange(HOURS)
    base = np.maximum(0.0, 12.0 - 8.0 * np.sin(2 * np.pi * hour / HOURS) - 3 * np.cos(2 * np.pi * hour / 24))
    year = np.vstack([base + rng.uniform(0, 2, HOURS), 0.5 * base + rng.uniform(0, 4, HOURS)])
    grid = typical_day_grid(year[0].reshape(N_DAYS, 24), 5, None, extreme_days=[7, 33])
    values, _ = keep_duration_curve(year, grid)
    w = grid.weight_h.astype(int)
    extreme = grid.is_extreme_step
    np.testing.assert_allclose(values @ grid.weight_h, year.sum(axis=1), rtol=1e-12)
    np.testing.assert_array_equal(values[:, extreme], year[:, grid.year_hour][:, extreme])
    clustered_hours = np.ones(HOURS, bool)
    for day in (7, 33):
        clustered_hours[day * 24:(day + 1) * 24] = False
    for r in range(2):
        curve = np.cumsum(np.sort(year[r, clustered_hours])[::-1])
        steps = np.flatnonzero(~extreme)
        expanded = np.repeat(values[r, steps], w[steps])
        edges = np.cumsum(np.sort(w[steps])[::-1])  # every band edge lies on one of these hour counts or not:
        order = steps[np.argsort(-values[r, steps], kind="stable")]
        edges = np.cumsum(w[order])
        np.testing.assert_allclose(np.cumsum(np.sort(expanded)[::-1])[edges - 1], curve[edges - 1], rtol=1e-10)
        raw = year[r, grid.year_hour]
        for period in np.flatnonzero(~grid.extreme_period):
            at = grid.period == period
            assert (np.argsort(values[r, at], kind="stable") == np.argsort(raw[at], kind="stable")).all()


def test_full_year_is_left_as_it_is():
    year = np.arange(48.0)[None, :]
    values, error = keep_duration_curve(year, full_year_grid(48))
    np.testing.assert_array_equal(values, year)
    np.testing.assert_allclose(error, 0.0, atol=1e-12)


def peak_city(typical_days, limit_kw):
    """The sixty days of :func:`city` without cooling: a gas boiler whose potential is ``limit_kw`` (almost free
    capacity, cheap heat) and an electric boiler (dear heat) above it."""
    base = city(typical_days)
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=0.01),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0,
             investment_eur_per_kw=1.0),
    )
    return f.scenario([f.district("A", heat_demand_mwh_per_a=900.0)], techs, base.hourly,
                      potential={("A", "gas"): limit_kw}, prices=Prices(gas_eur_per_mwh=40.0, co2_eur_per_t=0.0),
                      settings=Settings(typical_days=typical_days))


@pytest.mark.parametrize("share", [0.5, 0.7])
def test_peak_boiler_heat_is_the_full_years_at_four_typical_days(share):
    """Gas up to ``share`` of the peak, an electric boiler above: over the year the electric boiler's heat is the
    sum of max(0, demand - limit) (by hand on the hourly year); at 4 typical days it must be within 2 % of that,
    since the energy above a level is kept to within one band of the duration curve."""
    scenario = peak_city(0, 1.0)
    heat, _ = demand_year_kw(scenario, scenario.settings)
    limit = share * heat[0].max()
    hand = np.maximum(heat[0] - limit, 0.0).sum() / 1000
    for days, tolerance in ((0, 1e-6), (4, 0.02)):
        result = solve_scenario(peak_city(days, limit))
        assert result.solved, result.message
        assert result.heat_by_technology_mwh_per_a()["eboiler"] == pytest.approx(hand, rel=tolerance), days
