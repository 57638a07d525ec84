"""Typical days that keep what drives the choice between supplies: each cluster's duration curve of what a MWh of
electricity or network heat costs, carried to the price and the CO2 factor it is made of (the duration-curve
criterion of Poncelet et al. 2017, IEEE Trans. Power Syst. 32(3), per cluster as in the distribution-preserving
representation of Hoffmann, Kotzur & Stolten 2022, Applied Energy 315, 119029, from memory), each cluster's
distribution of a series on its own (groundwater temperature) and the cluster mean of slowly varying series. Checks against hand calculations written out in each test and
against plain numpy sums of the hourly year the test builds.
"""

from __future__ import annotations

import numpy as np
import pytest

from engine.physics.carrier_curves import keep_cost_duration_curve, keep_period_distribution, period_mean
from engine.physics.timeseries import full_year_grid, grid_from_medoids, keep_duration_curve


def two_clusters():
    """Four flat days of 1, 9, 5 and 5 kW; days 0-1 stand for cluster A (medoid day 0), days 2-3 for cluster B
    (medoid day 2): every step weighs 2 h."""
    year = np.repeat([1.0, 9.0, 5.0, 5.0], 24)[None, :]
    grid = grid_from_medoids([0, 2], [0, 1, 2, 3], [0, 0, 1, 1], [], 4)
    return year, grid


def test_cost_ranked_pair_by_hand_never_pairs_values_that_did_not_occur_together():
    """By hand. Day 0: price 10, CO2 0; day 1: price 0, CO2 20 (cost = price + CO2, so 10 and 20); one typical
    day (medoid day 0, every step 2 h). Ranked by cost, the year's 48 hours are day 1's 24 (cost 20), then day
    0's 24 (cost 10); the medoid's steps, all of cost 10 and so in step order, take hours 0-11 day 1's values
    (price 0, CO2 20) and hours 12-23 day 0's (price 10, CO2 0). Sums: price 2 h * 12 * 10 = 240 = 24 * 10, CO2
    2 h * 12 * 20 = 480 = 24 * 20. Sorting each series alone would give hours 0-11 price 10 and CO2 20, a cost
    of 30 that no hour of the year had."""
    price = np.repeat([10.0, 0.0], 24)
    co2 = np.repeat([0.0, 20.0], 24)
    grid = grid_from_medoids([0], [0, 1], [0, 0], [], 2)
    values = keep_cost_duration_curve(price + co2, np.vstack([price, co2]), grid)
    np.testing.assert_allclose(values[0], np.repeat([0.0, 10.0], 12), rtol=1e-12)
    np.testing.assert_allclose(values[1], np.repeat([20.0, 0.0], 12), rtol=1e-12)
    assert values[0] @ grid.weight_h == pytest.approx(240.0, rel=1e-12)
    assert values[1] @ grid.weight_h == pytest.approx(480.0, rel=1e-12)
    separately, _ = keep_duration_curve(np.vstack([price, co2]), grid)
    np.testing.assert_allclose(separately[:, :12].sum(axis=0), 30.0, rtol=1e-12)


def test_cost_ranked_within_each_period_by_hand():
    """By hand with the four days of :func:`two_clusters` as the cost and a second series equal to twice the
    cost: within each cluster the result is the period curve of the cost (A: 9 then 1, B: 5), the second series
    twice that; over the year (within="year") the cost is the year curve of :func:`keep_duration_curve`."""
    year, grid = two_clusters()
    both = np.vstack([year[0], 2.0 * year[0]])
    values = keep_cost_duration_curve(year[0], both, grid, within="period")
    a, b = grid.period == 0, grid.period == 1
    np.testing.assert_allclose(values[0, a], np.repeat([9.0, 1.0], 12), rtol=1e-12)
    np.testing.assert_allclose(values[0, b], np.full(24, 5.0), rtol=1e-12)
    np.testing.assert_allclose(values[1], 2.0 * values[0], rtol=1e-12)
    over_year = keep_cost_duration_curve(year[0], year, grid, within="year")
    np.testing.assert_allclose(over_year, keep_duration_curve(year, grid)[0], rtol=1e-12)


def test_cost_ranked_keeps_extreme_days_sums_and_the_full_year():
    """Noisy price and CO2 over 20 days, day 4 extreme: the extreme day keeps its hours, each series' weighted
    sum is the year's (plain numpy), and the full-year grid returns the hours as they are."""
    rng = np.random.default_rng(8)
    price = rng.uniform(50.0, 150.0, 480)
    co2 = rng.uniform(100.0, 300.0, 480)
    cost = price + 0.1 * co2
    clustered = np.setdiff1d(np.arange(20), [4])
    grid = grid_from_medoids(clustered[:3], clustered, np.arange(19) % 3, [4], 20)
    for within in ("year", "period"):
        values = keep_cost_duration_curve(cost, np.vstack([price, co2]), grid, within=within)
        np.testing.assert_allclose(values @ grid.weight_h, [price.sum(), co2.sum()], rtol=1e-12)
        extreme = grid.is_extreme_step
        np.testing.assert_array_equal(values[:, extreme], np.vstack([price, co2])[:, 96:120])
    full = keep_cost_duration_curve(cost, np.vstack([price, co2]), full_year_grid(480))
    np.testing.assert_array_equal(full, np.vstack([price, co2]))
    with pytest.raises(ValueError, match="within"):
        keep_cost_duration_curve(cost, price, grid, within="week")


def test_period_mean_by_hand():
    """By hand. Days of 1, 3, 8 and 4 (flat) with hour 5 of day 1 at 7 instead of 3; days 0-1 stand for period A
    (medoid day 0), days 2-3 for period B (medoid day 2). A's steps take (1 + 3) / 2 = 2, hour 5 (1 + 7) / 2 = 4;
    B's steps (8 + 4) / 2 = 6. Weighted sum: 2 h * (23 * 2 + 4 + 24 * 6) = 388 = the year's 24 + 23 * 3 + 7 + 192
    + 96. With day 3 an extreme day standing alone, B is day 2 alone (8) and day 3 keeps 4."""
    year = np.repeat([1.0, 3.0, 8.0, 4.0], 24)
    year[24 + 5] = 7.0
    grid = grid_from_medoids([0, 2], [0, 1, 2, 3], [0, 0, 1, 1], [], 4)
    values = period_mean(year, grid)
    expected_a = np.full(24, 2.0)
    expected_a[5] = 4.0
    np.testing.assert_allclose(values[grid.period == 0], expected_a, rtol=1e-12)
    np.testing.assert_allclose(values[grid.period == 1], np.full(24, 6.0), rtol=1e-12)
    assert values @ grid.weight_h == pytest.approx(388.0, rel=1e-12) and year.sum() == pytest.approx(388.0)
    with_extreme = grid_from_medoids([0, 2], [0, 1, 2], [0, 0, 1], [3], 4)
    values = period_mean(np.vstack([year, 2 * year]), with_extreme)
    np.testing.assert_allclose(values[0, with_extreme.period == 1], np.full(24, 8.0), rtol=1e-12)
    np.testing.assert_allclose(values[0, with_extreme.is_extreme_step], np.full(24, 4.0), rtol=1e-12)
    np.testing.assert_allclose(values[1], 2 * values[0], rtol=1e-12)
    np.testing.assert_array_equal(period_mean(year, full_year_grid(96)), year)
    with pytest.raises(ValueError, match="hourly values"):
        period_mean(year[:95], grid)


def test_period_distribution_by_hand():
    """By hand, with the days of :func:`test_period_mean_by_hand` (1, 3 with hour 5 at 7, 8, 4; A = days 0-1,
    medoid day 0; B = days 2-3, medoid day 2; every step 2 h). The medoid days are flat, so their steps rank in
    step order. A's hours sorted highest first: 7, 3 (23 times), 1 (24 times); step 0 takes the band of hours
    0-1, (7 + 3) / 2 = 5, steps 1-11 take 3, steps 12-23 take 1. B: 8 (24 hours), then 4: steps 0-11 take 8,
    steps 12-23 take 4. Each cluster's sum is its days' (A: 2 h * (5 + 33 + 12) = 100 = 24 + 69 + 7; B: 2 h * 144 =
    288 = 192 + 96), as with the cluster mean, but the heat above 4 is kept: the year has 3 (hour 5 of day 1) + 96
    (day 2) = 99, this representation 2 h * (1 + 12 * 4) = 98 (within one band of 2 h), the cluster mean
    (A: 2, hour 5 4; B: 6) 2 h * 24 * 2 = 96."""
    year = np.repeat([1.0, 3.0, 8.0, 4.0], 24)
    year[24 + 5] = 7.0
    grid = grid_from_medoids([0, 2], [0, 1, 2, 3], [0, 0, 1, 1], [], 4)
    values = keep_period_distribution(year, grid)
    a, b = grid.period == 0, grid.period == 1
    np.testing.assert_allclose(values[a], np.r_[5.0, np.full(11, 3.0), np.full(12, 1.0)], rtol=1e-12)
    np.testing.assert_allclose(values[b], np.r_[np.full(12, 8.0), np.full(12, 4.0)], rtol=1e-12)
    w = grid.weight_h
    assert values[a] @ w[a] == pytest.approx(100.0, rel=1e-12) and values[b] @ w[b] == pytest.approx(288.0)
    above = lambda v: float(np.maximum(v - 4.0, 0.0) @ w)  # noqa: E731
    assert np.maximum(year - 4.0, 0.0).sum() == pytest.approx(99.0)
    assert above(values) == pytest.approx(98.0, rel=1e-12)
    assert above(period_mean(year, grid)) == pytest.approx(96.0, rel=1e-12)
    np.testing.assert_array_equal(keep_period_distribution(year, full_year_grid(96)), year)
    with pytest.raises(ValueError, match="hourly values"):
        keep_period_distribution(year[:95], grid)


def test_period_distribution_keeps_each_clusters_sorted_hours():
    """Noisy seasonal series over 30 days, 3 clusters of 9-10 days, day 7 extreme. Against plain numpy: each
    cluster's steps, sorted, are the means of consecutive bands of n hours of its days' hours sorted (n = its
    number of days, so every step stands for n hours); each cluster's weighted sum is its days'; the extreme day
    keeps its values; a 2-row input gives each row its own curve."""
    rng = np.random.default_rng(11)
    hours = np.arange(720)
    year = 9.0 + 3.0 * np.sin(2 * np.pi * hours / 720) + rng.normal(0.0, 0.4, 720)
    clustered = np.setdiff1d(np.arange(30), [7])
    labels = np.arange(29) % 3
    medoids = [clustered[np.flatnonzero(labels == k)[0]] for k in range(3)]
    grid = grid_from_medoids(medoids, clustered, labels, [7], 30)
    values = keep_period_distribution(np.vstack([year, -year]), grid)
    by_day = year.reshape(30, 24)
    for k in range(3):
        days = clustered[labels == k]
        period = grid.day_period[medoids[k]]
        steps = grid.period == period
        own = np.sort(by_day[days].ravel())[::-1].reshape(24, len(days)).mean(axis=1)
        np.testing.assert_allclose(np.sort(values[0, steps])[::-1], own, rtol=1e-12)
        np.testing.assert_allclose(np.sort(values[1, steps]), -own, rtol=1e-12)
        assert values[0, steps] @ grid.weight_h[steps] == pytest.approx(by_day[days].sum(), rel=1e-12)
    np.testing.assert_array_equal(values[0, grid.is_extreme_step], year[7 * 24:8 * 24])
