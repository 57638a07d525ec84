"""Tests of engine.physics.timeseries (k-medoids clustering and the model's time grid)."""

import itertools

import numpy as np
import pytest

from engine.physics.timeseries import (
    TimeGrid,
    clustering_cost,
    daily_features,
    full_year_grid,
    k_medoids,
    typical_day_grid,
)


def _brute_force_cost(points, n_clusters, must_include=()):
    """Smallest sum of Euclidean distances to the nearest medoid over all medoid sets (exhaustive search,
    computed with plain numpy, independent of the module)."""
    distance = np.sqrt(((points[:, None, :] - points[None, :, :]) ** 2).sum(axis=2))
    best = np.inf
    for subset in itertools.combinations(range(len(points)), n_clusters):
        if not set(must_include) <= set(subset):
            continue
        best = min(best, distance[:, list(subset)].min(axis=1).sum())
    return best


def _hourly_year(n_hours=8760, seed=3):
    """Outdoor-temperature-like series with seasonal and daily swings plus noise, and a demand-like series."""
    rng = np.random.default_rng(seed)
    hours = np.arange(n_hours)
    temp = (10.0 - 10.0 * np.cos(2 * np.pi * (hours - 480) / n_hours)
            - 4.0 * np.cos(2 * np.pi * (hours % 24 - 3) / 24) + rng.normal(0.0, 1.5, n_hours))
    demand = np.maximum(0.0, 15.0 - temp) + 0.5
    return temp, demand


# ---------------------------------------------------------------------------------------------- k-medoids


def test_recovers_three_obvious_clusters():
    """Three well-separated blobs of 10 points (spread 0.3, centres 10 apart) are found exactly, one medoid in
    each (any correct clustering method must do this; common practice sanity check)."""
    rng = np.random.default_rng(0)
    centres = np.array([[0.0, 0.0], [10.0, 0.0], [5.0, 9.0]])
    truth = np.repeat(np.arange(3), 10)
    points = centres[truth] + rng.normal(0.0, 0.3, (30, 2))
    medoids, labels = k_medoids(points, 3)
    assert sorted(truth[medoids]) == [0, 1, 2]
    # Same partition up to renaming the clusters.
    for cluster in range(3):
        assert len(set(truth[labels == cluster])) == 1
    assert np.bincount(labels).tolist() == [10, 10, 10]


@pytest.mark.parametrize("instance", range(12))
def test_cost_equals_brute_force_optimum_on_tiny_instances(instance):
    """On 8 random points in the plane and 2 clusters, the cost equals the exhaustive-search optimum over all
    28 medoid pairs (brute force, an independent check)."""
    points = np.random.default_rng(100 + instance).uniform(0.0, 10.0, (8, 2))
    medoids, _ = k_medoids(points, 2)
    assert clustering_cost(points, medoids) == pytest.approx(_brute_force_cost(points, 2), rel=1e-12)


@pytest.mark.parametrize("instance", range(6))
def test_cost_near_brute_force_with_three_clusters_and_forced_medoid(instance):
    """10 points, 3 clusters, item 0 forced: the cost is within 5 % of the exhaustive optimum among medoid
    sets holding item 0 (brute force; PAM is a local search, Kaufman & Rousseeuw 1990, so a small gap is
    allowed) and item 0 is a medoid."""
    points = np.random.default_rng(200 + instance).normal(0.0, 3.0, (10, 3))
    medoids, _ = k_medoids(points, 3, forced_medoids=[0])
    assert 0 in medoids
    optimum = _brute_force_cost(points, 3, must_include=(0,))
    assert clustering_cost(points, medoids) <= optimum * 1.05


def test_labels_point_to_nearest_medoid_and_medoids_to_themselves():
    """Each item belongs to its nearest medoid and each medoid to its own cluster (definition of the
    k-medoids assignment)."""
    points = np.random.default_rng(5).normal(size=(60, 4))
    medoids, labels = k_medoids(points, 7)
    distance = np.sqrt(((points[:, None, :] - points[medoids][None, :, :]) ** 2).sum(axis=2))
    np.testing.assert_allclose(distance[np.arange(60), labels], distance.min(axis=1))
    np.testing.assert_array_equal(labels[medoids], np.arange(7))
    assert np.all(np.diff(medoids) > 0)


def test_forced_outlier_is_kept_as_medoid():
    """A forced item stays a medoid even when it is an outlier that a free clustering would not pick
    (used to keep the peak day; requirement of the time grid)."""
    points = np.r_[np.random.default_rng(1).normal(0.0, 1.0, (20, 2)), [[2.5, 2.5]]]
    free, _ = k_medoids(points, 1)
    assert 20 not in free
    forced, labels = k_medoids(points, 1, forced_medoids=[20])
    np.testing.assert_array_equal(forced, [20])
    assert np.all(labels == 0)


def test_more_clusters_than_items_makes_each_item_a_medoid():
    """n_clusters >= n_items: every item is its own medoid (trivial optimum, cost 0)."""
    points = np.random.default_rng(2).normal(size=(5, 3))
    for n_clusters in (5, 9):
        medoids, labels = k_medoids(points, n_clusters)
        np.testing.assert_array_equal(medoids, np.arange(5))
        np.testing.assert_array_equal(labels, np.arange(5))


def _improving_single_exchange_exists(points, medoids, fixed=()):
    """True if replacing one (non-fixed) medoid by one other item lowers the cost (exhaustive check)."""
    cost = clustering_cost(points, medoids)
    for position, medoid in enumerate(medoids):
        if medoid in fixed:
            continue
        for item in set(range(len(points))) - set(medoids):
            trial = np.array(medoids)
            trial[position] = item
            if clustering_cost(points, trial) < cost * (1.0 - 1e-12):
                return True
    return False


def test_same_seed_same_result_and_every_seed_a_local_optimum():
    """The same seed gives the same result (determinism requirement); for every seed no single exchange of a
    medoid and an item lowers the cost (PAM's local-optimality criterion, Kaufman & Rousseeuw 1990, checked by
    trying all exchanges)."""
    points = np.random.default_rng(4).normal(size=(40, 2))
    first = k_medoids(points, 4, seed=0)
    again = k_medoids(points, 4, seed=0)
    np.testing.assert_array_equal(first[0], again[0])
    np.testing.assert_array_equal(first[1], again[1])
    for seed in (0, 1, 7):
        medoids, _ = k_medoids(points, 4, seed=seed)
        assert not _improving_single_exchange_exists(points, medoids)
    medoids, _ = k_medoids(points, 4, seed=3, forced_medoids=[17])
    assert 17 in medoids and not _improving_single_exchange_exists(points, medoids, fixed=(17,))


def test_duplicate_items_are_handled():
    """Two groups of four identical points: every seed finds the zero-cost clustering with two groups of four
    (ties from duplicates must not break the method; common practice check)."""
    duplicates = np.repeat([[0.0, 0.0], [5.0, 5.0]], 4, axis=0)
    for seed in range(3):
        medoids, labels = k_medoids(duplicates, 2, seed=seed)
        assert clustering_cost(duplicates, medoids) == 0.0
        assert np.bincount(labels).tolist() == [4, 4]
    medoids, labels = k_medoids(duplicates, 3)
    assert clustering_cost(duplicates, medoids) == 0.0 and len(set(medoids)) == 3


@pytest.mark.parametrize(
    "kwargs, name",
    [
        ({"features": np.zeros(10)}, "features"),
        ({"features": np.array([[0.0, np.nan], [1.0, 1.0]])}, "features"),
        ({"n_clusters": 0}, "n_clusters"),
        ({"n_clusters": 2.5}, "n_clusters"),
        ({"forced_medoids": [10]}, "forced_medoids"),
        ({"forced_medoids": [1, 1]}, "forced_medoids"),
        ({"forced_medoids": [0, 1, 2], "n_clusters": 2}, "forced_medoids"),
    ],
)
def test_bad_arguments_raise_naming_argument(kwargs, name):
    """Invalid arguments raise ValueError naming the argument (project rule)."""
    arguments = {"features": np.random.default_rng(0).normal(size=(10, 2)), "n_clusters": 3}
    arguments.update(kwargs)
    with pytest.raises(ValueError, match=name):
        k_medoids(**arguments)


# ---------------------------------------------------------------------------------------------- time grids


@pytest.mark.parametrize("n_hours", [8760, 8784])
def test_full_year_grid_weights_and_single_period(n_hours):
    """Full year: one step per hour of weight 1 h (sum = hours of the year), one cyclic period, every day
    mapped to period 0 (definition of the hourly grid)."""
    grid = full_year_grid(n_hours)
    assert grid.is_full_year and grid.n_steps == n_hours and grid.n_periods == 1
    assert grid.weight_h.sum() == n_hours
    assert grid.day_period.shape == (n_hours // 24,) and not np.any(grid.day_period)
    np.testing.assert_array_equal(grid.hour_of_day[:25], np.r_[np.arange(24), 0])
    assert grid.n_hours == n_hours


def test_full_year_rebuild_of_select_is_identity():
    """Full year: rebuild(select(series)) returns the series exactly, 1-D and 2-D (identity requirement)."""
    temp, demand = _hourly_year()
    grid = full_year_grid(8760)
    np.testing.assert_array_equal(grid.rebuild(grid.select(temp)), temp)
    table = np.column_stack([temp, demand])
    np.testing.assert_array_equal(grid.rebuild(grid.select(table)), table)


@pytest.mark.parametrize("n_hours", [8760, 8784])
def test_typical_day_weights_sum_to_hours_of_year(n_hours):
    """12 typical days: 288 steps whose weights (days in the cluster) sum to the hours of the year, and the
    weights equal 24-hour-day counts of the day map (definition of typical-day weights)."""
    temp, demand = _hourly_year(n_hours)
    grid = typical_day_grid(daily_features({"temp": temp, "demand": demand}), 12, None)
    assert grid.n_steps == 288 and grid.n_periods == 12 and not grid.is_full_year
    assert grid.weight_h.sum() == pytest.approx(n_hours, abs=1e-9)
    counts = np.bincount(grid.day_period, minlength=12)
    np.testing.assert_array_equal(grid.weight_h.reshape(12, 24), np.repeat(counts[:, None], 24, axis=1))
    assert grid.n_hours == n_hours


@pytest.mark.parametrize("n_hours", [8760, 8784])
def test_every_day_its_own_typical_day_rebuilds_exactly(n_hours):
    """With as many typical days as days of the year, each day stands for itself: rebuild(select(series)) is
    the series exactly and every weight is 1 h (identity requirement)."""
    temp, demand = _hourly_year(n_hours)
    n_days = n_hours // 24
    grid = typical_day_grid(daily_features(np.column_stack([temp, demand])), n_days, None)
    assert np.all(grid.weight_h == 1.0)
    np.testing.assert_array_equal(grid.rebuild(grid.select(temp)), temp)
    table = np.column_stack([temp, demand])
    np.testing.assert_array_equal(grid.rebuild(grid.select(table)), table)


def test_typical_day_rebuild_copies_medoid_day_into_its_days():
    """Rebuilt hour h of calendar day d equals hour h of the medoid day of d's cluster (checked by a plain
    loop over days; definition of the rebuild)."""
    temp, demand = _hourly_year()
    grid = typical_day_grid(daily_features(temp), 8, None)
    rebuilt = grid.rebuild(grid.select(temp))
    medoid_day = grid.year_hour.reshape(8, 24)[:, 0] // 24
    for day in range(365):
        source = medoid_day[grid.day_period[day]]
        np.testing.assert_array_equal(rebuilt[day * 24:(day + 1) * 24], temp[source * 24:(source + 1) * 24])
    # The medoid day stands for itself.
    np.testing.assert_array_equal(grid.day_period[medoid_day], np.arange(8))


def test_peak_day_is_kept_as_typical_day():
    """The day of peak demand forced as a medoid is one of the typical days and maps to itself (requirement:
    size the supply for the peak)."""
    temp, demand = _hourly_year()
    peak_day = int(np.argmax(demand.reshape(365, 24).sum(axis=1)))
    grid = typical_day_grid(daily_features({"demand": demand}), 6, peak_day)
    medoid_day = grid.year_hour.reshape(6, 24)[:, 0] // 24
    assert peak_day in medoid_day
    assert medoid_day[grid.day_period[peak_day]] == peak_day
    daily_sums = demand.reshape(365, 24).sum(axis=1)
    assert grid.select(demand).reshape(6, 24).sum(axis=1).max() == daily_sums.max()


def test_typical_days_are_in_calendar_order():
    """Periods are numbered in calendar order of their medoid days (documented convention)."""
    temp, _ = _hourly_year()
    grid = typical_day_grid(daily_features(temp), 10, None)
    medoid_day = grid.year_hour.reshape(10, 24)[:, 0] // 24
    assert np.all(np.diff(medoid_day) > 0)


def test_typical_days_represent_the_year_better_than_chance():
    """Twelve clustered days reproduce the hourly temperature year better (root-mean-square error) than twelve
    evenly spaced days standing for their neighbours (the purpose of clustering; common practice check)."""
    temp, _ = _hourly_year()
    grid = typical_day_grid(daily_features(temp), 12, None)
    clustered = np.sqrt(np.mean((grid.rebuild(grid.select(temp)) - temp) ** 2))
    days = temp.reshape(365, 24)
    representative = (np.arange(365) // 31).clip(max=11) * 31 + 15
    naive = np.sqrt(np.mean((days[representative].ravel() - temp) ** 2))
    assert clustered < naive


def test_previous_step_is_cyclic_within_period():
    """The step before hour 0 of a typical day is hour 23 of the same day; in the full year the step before
    hour 0 is hour 8759 (cyclic stores, design doc section 3, constraint 6)."""
    grid = typical_day_grid(np.random.default_rng(0).normal(size=(365, 3)), 4, None)
    previous = grid.previous_step()
    np.testing.assert_array_equal(previous[:24], np.r_[23, np.arange(23)])
    np.testing.assert_array_equal(grid.period[previous], grid.period)
    year = full_year_grid(8760).previous_step()
    assert year[0] == 8759 and year[1] == 0 and year[8759] == 8758


def test_select_and_rebuild_reject_wrong_lengths():
    """Series of the wrong length raise ValueError naming the argument (project rule)."""
    grid = full_year_grid(8760)
    with pytest.raises(ValueError, match="series"):
        grid.select(np.zeros(8784))
    typical = typical_day_grid(np.random.default_rng(0).normal(size=(365, 2)), 3, None)
    with pytest.raises(ValueError, match="values"):
        typical.rebuild(np.zeros(8760))


@pytest.mark.parametrize(
    "kwargs, name",
    [({"n_days_wanted": 0}, "n_days_wanted"), ({"peak_day": 365}, "peak_day"), ({"peak_day": -1}, "peak_day"),
     ({"day_features": np.zeros((365, 2)) + np.nan}, "features")],
)
def test_typical_day_grid_bad_arguments(kwargs, name):
    """Invalid arguments raise ValueError naming the argument (project rule)."""
    arguments = {"day_features": np.random.default_rng(0).normal(size=(365, 2)), "n_days_wanted": 4,
                 "peak_day": None}
    arguments.update(kwargs)
    with pytest.raises(ValueError, match=name):
        typical_day_grid(**arguments)


def test_full_year_grid_rejects_partial_days():
    """A year that is not whole days raises ValueError naming n_hours (project rule)."""
    with pytest.raises(ValueError, match="n_hours"):
        full_year_grid(8761)


def test_daily_features_layout():
    """Row d holds hours 0-23 of day d of each series in turn (checked against a plain loop)."""
    a = np.arange(72.0)
    b = 1000.0 + np.arange(72.0)
    features = daily_features({"a": a, "b": b})
    assert features.shape == (3, 48)
    for day in range(3):
        np.testing.assert_array_equal(features[day], np.r_[a[day * 24:(day + 1) * 24], b[day * 24:(day + 1) * 24]])
    np.testing.assert_array_equal(daily_features(np.column_stack([a, b])), features)
    np.testing.assert_array_equal(daily_features(a), a.reshape(3, 24))


@pytest.mark.parametrize(
    "table",
    [{"a": np.zeros(48), "b": np.zeros(24)}, np.zeros(50), np.zeros((48, 2, 2)), {}, np.r_[np.zeros(47), np.inf]],
)
def test_daily_features_bad_input(table):
    """Unequal lengths, partial days, wrong dimensions, empty or non-finite tables raise ValueError naming
    hourly_table (project rule)."""
    with pytest.raises(ValueError, match="hourly_table"):
        daily_features(table)


def test_time_grid_is_a_dataclass_with_documented_fields():
    """The grid exposes the fields the model builder reads (interface check)."""
    fields = set(TimeGrid.__dataclass_fields__)
    assert fields == {"n_steps", "weight_h", "period", "n_periods", "hour_of_day", "year_hour", "day_period",
                      "is_full_year", "extreme_period"}
