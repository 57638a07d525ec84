"""Time resolution of the model: the full hourly year or a set of typical days.

A :class:`TimeGrid` lists the model's time steps, the hours each step stands for (its weight), the period each
step belongs to (the whole year, or a typical day; stores are cyclic within it unless linked from day to day,
docs/model.md section 4, constraint 8) and, per calendar day, the typical day that stands for it. With the full year there is one period, the whole year, and every step has weight 1 h. With typical
days, the calendar days are clustered by k-medoids on their hourly profiles; each medoid day becomes a period of
24 hourly steps whose weight is the number of days in its cluster, so the weights sum to the hours of the year.
Results of a typical-day run are rebuilt to the hourly year by copying each typical day into every day it stands
for.

The clustering is PAM, partitioning around medoids (Kaufman & Rousseeuw 1990), with eager exchanges (Schubert &
Rousseeuw 2021), run from its BUILD start and from a few seeded random starts that a cheap alternating descent
(Park & Jun 2009) brings close to a local optimum first; the best result wins. A year's days (365 or 366) cluster
in well under a second for the usual 8 to 24 typical days.

Typical days keep the sequence of hours inside a day but not the sequence of days, except for stores where the
run asks for it (``day_period`` in calendar order; ``Settings.stores_between_days``). Extreme days (peak heating, peak cooling, coldest) are kept as periods
of their own with weight one day (:func:`typical_day_grid` ``extreme_days``; Kotzur et al. 2018), and
:func:`keep_duration_curve` gives the demand of the clustered steps the year's duration curve, which keeps the
annual sums exactly and the heat above any level to within one step's weight (docs/model.md section 8), and
:func:`engine.physics.carrier_curves.keep_cost_duration_curve` gives a carrier's price and CO2 factor at the steps of each typical day its
cluster's duration curve of the carrier's cost, so that the hours in which one supply is cheaper than another are
as many as in the days it stands for.
:func:`rescale_to_annual`, one factor per row, is the former method, kept for the comparison in
bench/typical_days.py.

References
----------
.. [1] Kaufman, L. and Rousseeuw, P. J. (1990). Finding Groups in Data: An Introduction to Cluster Analysis.
   Wiley, New York (chapter 2: partitioning around medoids, PAM, with its BUILD and SWAP phases).
.. [2] Park, H.-S. and Jun, C.-H. (2009). A simple and fast algorithm for K-medoids clustering. Expert Systems
   with Applications 36(2), 3336-3341.
.. [3] Schubert, E. and Rousseeuw, P. J. (2021). Fast and eager k-medoids clustering: O(k) runtime improvement
   of the PAM, CLARA, and CLARANS algorithms. Information Systems 101, 101804 (evaluating the exchanges of all
   medoids at once from the nearest and second-nearest distances; eager exchanges).
.. [4] Arthur, D. and Vassilvitskii, S. (2007). k-means++: the advantages of careful seeding. Proceedings of the
   18th Annual ACM-SIAM Symposium on Discrete Algorithms (SODA), 1027-1035 (distance-weighted random starts).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial.distance import cdist

HOURS_PER_DAY = 24
N_RANDOM_STARTS = 10
"""Random starts :func:`k_medoids` tries besides the BUILD start; the best local optimum wins."""
MAX_ITEMS = 4000
"""Largest number of items :func:`k_medoids` accepts (it holds the n x n distance matrix in memory)."""


# ---------------------------------------------------------------------------------------------------- k-medoids


def _checked_features(features) -> np.ndarray:
    array = np.asarray(features, dtype=float)
    if array.ndim != 2:
        raise ValueError(f"features must be a 2-D array (n_items, n_features); got shape {array.shape}")
    if array.shape[0] == 0:
        raise ValueError("features must hold at least one item")
    if array.shape[0] > MAX_ITEMS:
        raise ValueError(f"features may hold at most {MAX_ITEMS} items; got {array.shape[0]}")
    if not np.all(np.isfinite(array)):
        row = int(np.flatnonzero(~np.all(np.isfinite(array), axis=1))[0])
        raise ValueError(f"features must be finite; item {row} has a NaN or infinite value")
    return array


def _checked_count(value, name: str) -> int:
    try:
        whole = not isinstance(value, (bool, str)) and int(value) == value
    except (TypeError, ValueError, OverflowError):
        whole = False
    if not whole or int(value) < 1:
        raise ValueError(f"{name} must be a whole number >= 1; got {value!r}")
    return int(value)


def _checked_forced(forced_medoids, n_items: int, n_clusters: int) -> np.ndarray:
    forced = np.asarray(forced_medoids if forced_medoids is not None else (), dtype=float).ravel()
    if forced.size and (not np.all(np.isfinite(forced)) or np.any(forced != np.round(forced))):
        raise ValueError(f"forced_medoids must be item indices (whole numbers); got {list(forced)}")
    forced = forced.astype(int)
    if np.any((forced < 0) | (forced >= n_items)):
        raise ValueError(f"forced_medoids must lie between 0 and {n_items - 1}; got {forced.tolist()}")
    if np.unique(forced).size != forced.size:
        raise ValueError(f"forced_medoids must not repeat an item; got {forced.tolist()}")
    if forced.size > n_clusters:
        raise ValueError(f"forced_medoids holds {forced.size} items but n_clusters is only {n_clusters}")
    return forced


def _build(distance: np.ndarray, forced: np.ndarray, n_clusters: int) -> np.ndarray:
    """Greedy BUILD phase of PAM: start from the forced medoids, add the item that lowers the cost most."""
    selected = [int(i) for i in forced]
    if not selected:
        selected.append(int(np.argmin(distance.sum(axis=0))))
    nearest = distance[:, selected].min(axis=1)
    is_selected = np.zeros(distance.shape[0], dtype=bool)
    is_selected[selected] = True
    while len(selected) < n_clusters:
        gain = np.maximum(nearest[:, None] - distance, 0.0).sum(axis=0)
        gain[is_selected] = -np.inf
        candidate = int(np.argmax(gain))
        selected.append(candidate)
        is_selected[candidate] = True
        nearest = np.minimum(nearest, distance[:, candidate])
    return np.array(selected, dtype=int)


def _seeded_start(distance: np.ndarray, forced: np.ndarray, n_clusters: int, rng) -> np.ndarray:
    """Random start drawn like k-means++ seeding: each new medoid with probability proportional to its distance
    from the medoids chosen so far (Arthur & Vassilvitskii 2007); forced medoids first."""
    n_items = distance.shape[0]
    selected = [int(i) for i in forced]
    if not selected:
        selected.append(int(rng.integers(n_items)))
    nearest = distance[:, selected].min(axis=1)
    while len(selected) < n_clusters:
        total = nearest.sum()
        if total > 0.0:
            candidate = int(rng.choice(n_items, p=nearest / total))
        else:
            # Every item coincides with a chosen medoid: any unchosen item will do.
            candidate = int(np.setdiff1d(np.arange(n_items), selected)[0])
        selected.append(candidate)
        nearest = np.minimum(nearest, distance[:, candidate])
    return np.array(selected, dtype=int)


def _alternate(distance: np.ndarray, medoids: np.ndarray, fixed: np.ndarray) -> np.ndarray:
    """Alternating k-medoids (Park & Jun 2009): assign items to the nearest medoid, move each free medoid to the
    member with the least total distance to its cluster, repeat until nothing moves. A cheap first descent
    that leaves few exchanges for the SWAP phase."""
    medoids = medoids.copy()
    for _ in range(100):
        labels = np.argmin(distance[:, medoids], axis=1)
        labels[medoids] = np.arange(medoids.size)
        moved = False
        for position in np.flatnonzero(~fixed):
            members = np.flatnonzero(labels == position)
            best = int(members[np.argmin(distance[np.ix_(members, members)].sum(axis=0))])
            if distance[members, best].sum() < distance[members, medoids[position]].sum() * (1.0 - 1e-12):
                medoids[position] = best
                moved = True
        if not moved:
            break
    return medoids


def _nearest_two(distance: np.ndarray, medoids: np.ndarray):
    """Position (in ``medoids``) of each item's nearest medoid, and the distances to its nearest and
    second-nearest medoid (infinite when there is only one medoid)."""
    to_medoids = distance[:, medoids]
    rows = np.arange(distance.shape[0])
    if medoids.size == 1:
        return np.zeros(rows.size, dtype=int), to_medoids[:, 0], np.full(rows.size, np.inf)
    order = np.argsort(to_medoids, axis=1, kind="stable")
    return order[:, 0], to_medoids[rows, order[:, 0]], to_medoids[rows, order[:, 1]]


def _swap(distance: np.ndarray, medoids: np.ndarray, fixed: np.ndarray) -> np.ndarray:
    """SWAP phase of PAM with eager exchanges: apply an exchange as soon as it lowers the cost.

    For a candidate item h, the change of cost of replacing medoid m by h is, with d1/d2 the distances of item
    j to its nearest and second-nearest medoid, sum_j min(d_jh - d1_j, 0) over items outside m's cluster plus
    sum_j (min(d_jh, d2_j) - d1_j) over items inside it, so the changes for all k medoids come from one pass
    over the items (Schubert & Rousseeuw 2021). The search stops when a full pass over the candidates finds no
    exchange that lowers the cost: the same local optimum criterion as PAM's, reached in far fewer passes.
    """
    medoids = medoids.copy()
    n_items, n_clusters = distance.shape[0], medoids.size
    is_medoid = np.zeros(n_items, dtype=bool)
    is_medoid[medoids] = True
    nearest_pos, d1, d2 = _nearest_two(distance, medoids)
    for _ in range(1000):
        improved = False
        for candidate in range(n_items):
            if is_medoid[candidate]:
                continue
            to_candidate = distance[:, candidate]
            outside = np.minimum(to_candidate - d1, 0.0)
            inside = np.minimum(to_candidate, d2) - d1 - outside
            change = outside.sum() + np.bincount(nearest_pos, weights=inside, minlength=n_clusters)
            change[fixed] = np.inf
            position = int(np.argmin(change))
            # A relative tolerance stops exchanges that only shuffle rounding noise between equal-cost solutions.
            if change[position] < -1e-12 * max(d1.sum(), 1e-300):
                is_medoid[medoids[position]] = False
                medoids[position] = candidate
                is_medoid[candidate] = True
                nearest_pos, d1, d2 = _nearest_two(distance, medoids)
                improved = True
        if not improved:
            break
    return medoids


def k_medoids(features, n_clusters: int, seed: int = 0, forced_medoids=()):
    """Cluster items around medoids (representative items) by Partitioning Around Medoids (PAM).

    Minimises the sum over items of the Euclidean distance to the nearest medoid. The BUILD phase picks the
    forced medoids, then (if none were forced) the most central item, then greedily the item that lowers the
    cost most; the SWAP phase then exchanges a medoid and a non-medoid whenever that lowers the cost, until no
    exchange does (a local optimum of the exchange neighbourhood). Ten further starts, drawn at random with
    k-means++ weights and first improved by alternating k-medoids, go through the same SWAP phase; the cheapest
    of the eleven results is returned. Forced medoids are never exchanged.

    Parameters
    ----------
    features : array_like
        Feature vectors, shape (n_items, n_features), finite; at most 4000 items. [any unit; scale the columns
        first if they differ in unit]
    n_clusters : int
        Number of clusters, >= 1. With ``n_clusters >= n_items`` every item is its own medoid.
    seed : int, default 0
        Seed of the random starts and of the order in which items are visited; the same seed always gives the
        same result. Another seed may find another local optimum, of equal or nearly equal cost.
    forced_medoids : sequence of int, default ()
        Items that must be medoids (e.g. the peak day), at most ``n_clusters`` distinct indices.

    Returns
    -------
    medoids : numpy.ndarray of int
        Indices of the medoid items, ascending, shape ``(min(n_clusters, n_items),)``.
    labels : numpy.ndarray of int
        Cluster of each item as a position in ``medoids``, shape ``(n_items,)``; every item belongs to its
        nearest medoid and every medoid to its own cluster.

    Raises
    ------
    ValueError
        If ``features`` is not a finite 2-D array, ``n_clusters`` is not a whole number >= 1, or
        ``forced_medoids`` holds invalid, repeated or too many indices.

    Notes
    -----
    A pass of the SWAP phase costs O(k n^2) time and the method holds the n x n distance matrix, which suits
    clustering the days of a year (n <= 366). Like every exchange heuristic it finds a local optimum; the
    random starts make it the global one in most small cases, but this is not guaranteed.

    References
    ----------
    .. [1] Kaufman, L. and Rousseeuw, P. J. (1990). Finding Groups in Data: An Introduction to Cluster
       Analysis. Wiley, New York, chapter 2.
    .. [2] Schubert, E. and Rousseeuw, P. J. (2021). Fast and eager k-medoids clustering: O(k) runtime
       improvement of the PAM, CLARA, and CLARANS algorithms. Information Systems 101, 101804.
    .. [3] Park, H.-S. and Jun, C.-H. (2009). A simple and fast algorithm for K-medoids clustering. Expert
       Systems with Applications 36(2), 3336-3341.
    .. [4] Arthur, D. and Vassilvitskii, S. (2007). k-means++: the advantages of careful seeding. Proceedings of
       the 18th Annual ACM-SIAM Symposium on Discrete Algorithms (SODA), 1027-1035.
    """
    points = _checked_features(features)
    k = _checked_count(n_clusters, "n_clusters")
    n_items = points.shape[0]
    forced = _checked_forced(forced_medoids, n_items, k)
    if k >= n_items:
        return np.arange(n_items), np.arange(n_items)

    # Work on a seeded permutation of the items so that ties, too, are broken reproducibly.
    rng = np.random.default_rng(seed)
    order = rng.permutation(n_items)
    position_of = np.empty(n_items, dtype=int)
    position_of[order] = np.arange(n_items)
    distance = cdist(points[order], points[order])
    forced_positions = position_of[forced]
    fixed = np.zeros(k, dtype=bool)
    fixed[: forced.size] = True
    medoids = _swap(distance, _build(distance, forced_positions, k), fixed)
    best_cost = distance[:, medoids].min(axis=1).sum()
    for _ in range(N_RANDOM_STARTS):
        start = _seeded_start(distance, forced_positions, k, rng)
        candidate = _swap(distance, _alternate(distance, start, fixed), fixed)
        cost = distance[:, candidate].min(axis=1).sum()
        if cost < best_cost * (1.0 - 1e-12):
            medoids, best_cost = candidate, cost

    labels = np.argmin(distance[:, medoids], axis=1)
    labels[medoids] = np.arange(k)
    # Back to the callers' item indices, medoids ascending.
    original_medoids = order[medoids]
    ascending = np.argsort(original_medoids)
    rank = np.empty(k, dtype=int)
    rank[ascending] = np.arange(k)
    original_labels = np.empty(n_items, dtype=int)
    original_labels[order] = rank[labels]
    return original_medoids[ascending], original_labels


def clustering_cost(features, medoids) -> float:
    """Sum over items of the Euclidean distance to the nearest of ``medoids`` (the k-medoids objective).

    Parameters
    ----------
    features : array_like
        Feature vectors, shape (n_items, n_features).
    medoids : sequence of int
        Indices of the medoid items.

    Returns
    -------
    float
        Total distance. [unit of the features]
    """
    points = _checked_features(features)
    chosen = np.asarray(medoids, dtype=int)
    return float(cdist(points, points[chosen]).min(axis=1).sum())


# ---------------------------------------------------------------------------------------------------- time grid


@dataclass
class TimeGrid:
    """The model's time steps and how they map to the hours of the year.

    Attributes
    ----------
    n_steps : int
        Number of model time steps.
    weight_h : numpy.ndarray
        Hours each step stands for, shape (n_steps,); sums to the hours of the year. [h]
    period : numpy.ndarray of int
        Cyclic period (typical day, or the whole year) of each step, shape (n_steps,).
    n_periods : int
        Number of periods.
    hour_of_day : numpy.ndarray of int
        Hour of the day (0-23) of each step, shape (n_steps,).
    year_hour : numpy.ndarray of int
        Hour of the year (0-based) each step's data are taken from, shape (n_steps,).
    day_period : numpy.ndarray of int
        Period standing for each calendar day, shape (n_days,); all 0 for the full year, whose single period
        is the whole year.
    is_full_year : bool
        True for the hourly year (one step per hour).
    """

    n_steps: int
    weight_h: np.ndarray
    period: np.ndarray
    n_periods: int
    hour_of_day: np.ndarray
    year_hour: np.ndarray
    day_period: np.ndarray
    is_full_year: bool
    extreme_period: np.ndarray | None = None
    """True for each period that is an extreme day kept on its own (weight one day), shape (n_periods,)."""

    @property
    def is_extreme_step(self) -> np.ndarray:
        """True for every step of an extreme period, shape (n_steps,)."""
        if self.extreme_period is None:
            return np.zeros(self.n_steps, dtype=bool)
        return np.asarray(self.extreme_period, dtype=bool)[self.period]

    @property
    def n_hours(self) -> int:
        """Hours of the year the grid covers (8760 or 8784). [h]"""
        return int(self.day_period.size * HOURS_PER_DAY)

    def select(self, series) -> np.ndarray:
        """Values of an hourly year at the model steps (``series[year_hour]``).

        Parameters
        ----------
        series : array_like
            Hourly values, shape (n_hours,) or (n_hours, k).

        Returns
        -------
        numpy.ndarray
            Shape (n_steps,) or (n_steps, k).

        Raises
        ------
        ValueError
            If the first dimension of ``series`` is not ``n_hours``.
        """
        values = np.asarray(series)
        if values.ndim == 0 or values.shape[0] != self.n_hours:
            raise ValueError(
                f"series must have {self.n_hours} hourly values along its first axis; got shape {values.shape}"
            )
        return values[self.year_hour]

    def rebuild(self, values) -> np.ndarray:
        """Hourly year from values at the model steps.

        Each typical day's values are copied into every calendar day it stands for; for the full year the
        values are returned as they are (a copy).

        Parameters
        ----------
        values : array_like
            Values per step, shape (n_steps,) or (n_steps, k).

        Returns
        -------
        numpy.ndarray
            Shape (n_hours,) or (n_hours, k).

        Raises
        ------
        ValueError
            If the first dimension of ``values`` is not ``n_steps``.
        """
        array = np.asarray(values)
        if array.ndim == 0 or array.shape[0] != self.n_steps:
            raise ValueError(f"values must have {self.n_steps} steps along their first axis; got shape "
                             f"{array.shape}")
        if self.is_full_year:
            return array.copy()
        step_at = np.full((self.n_periods, HOURS_PER_DAY), -1, dtype=int)
        step_at[self.period, self.hour_of_day] = np.arange(self.n_steps)
        hourly_steps = step_at[self.day_period].ravel()
        if np.any(hourly_steps < 0):
            raise ValueError("the time grid lacks a step for some hour of a typical day")
        return array[hourly_steps]

    def previous_step(self) -> np.ndarray:
        """Index of the step before each step, cyclic within its period.

        The first step of a period is preceded by the last step of the same period: the store level is cyclic
        over the year for the full year, and within each typical day unless the run links the stores from day
        to day (``Settings.stores_between_days``, :func:`engine.model.formulation.stores_linked`).

        Returns
        -------
        numpy.ndarray of int
            Shape (n_steps,).
        """
        order = np.argsort(self.period, kind="stable")
        sorted_period = self.period[order]
        previous = np.empty(self.n_steps, dtype=int)
        previous[order[1:]] = order[:-1]
        starts = np.flatnonzero(np.r_[True, sorted_period[1:] != sorted_period[:-1]])
        ends = np.r_[starts[1:], self.n_steps] - 1
        previous[order[starts]] = order[ends]
        return previous


def full_year_grid(n_hours: int) -> TimeGrid:
    """Time grid of the full hourly year: one step per hour, weight 1 h, one period (the whole year).

    Parameters
    ----------
    n_hours : int
        Hours of the year, a positive multiple of 24 (8760 or 8784). [h]

    Returns
    -------
    TimeGrid

    Raises
    ------
    ValueError
        If ``n_hours`` is not a positive multiple of 24.
    """
    n = _checked_count(n_hours, "n_hours")
    if n % HOURS_PER_DAY:
        raise ValueError(f"n_hours must be a multiple of 24 (whole days); got {n}")
    steps = np.arange(n)
    return TimeGrid(
        n_steps=n,
        weight_h=np.ones(n),
        period=np.zeros(n, dtype=int),
        n_periods=1,
        hour_of_day=steps % HOURS_PER_DAY,
        year_hour=steps,
        day_period=np.zeros(n // HOURS_PER_DAY, dtype=int),
        is_full_year=True,
    )


def typical_day_grid(day_features, n_days_wanted: int, peak_day: int | None, extreme_days=()) -> TimeGrid:
    """Time grid of typical days chosen by k-medoids clustering of the calendar days, plus extreme days.

    Each column of ``day_features`` is scaled to zero mean and unit standard deviation (constant columns become
    0), the days are clustered with :func:`k_medoids`, and each medoid day becomes a period of 24 hourly steps
    whose weight is the number of calendar days in its cluster. Periods are numbered in calendar order.

    ``extreme_days`` (e.g. the peak-heating, peak-cooling and coldest days) are taken out of the clustering and
    each kept as a period of its own with weight one day, on top of the ``n_days_wanted`` clustered days: the
    extreme-period practice of the typical-period literature (Kotzur, L., Markewitz, P., Robinius, M. and
    Stolten, D. (2018). Impact of different time series aggregation methods on optimal energy system design.
    Renewable Energy 117, 474-487), so that the supply is sized for them and nothing that happens on them is
    multiplied by a cluster's weight.

    Parameters
    ----------
    day_features : array_like
        One row per calendar day, shape (n_days, n_features), e.g. from :func:`daily_features`.
    n_days_wanted : int
        Number of typical days, >= 1; at least ``n_days`` makes every day its own period.
    peak_day : int or None
        Calendar day (0-based row of ``day_features``) that must be a typical day, e.g. the day of peak
        demand; None forces no day. Days close to it may join its cluster.

    Returns
    -------
    TimeGrid

    Raises
    ------
    ValueError
        If ``day_features`` is not a finite 2-D array, ``n_days_wanted`` is not a whole number >= 1, or
        ``peak_day`` is not a day of the year.

    References
    ----------
    .. [1] Kaufman, L. and Rousseeuw, P. J. (1990). Finding Groups in Data: An Introduction to Cluster
       Analysis. Wiley, New York, chapter 2.
    """
    features = _checked_features(day_features)
    try:
        wanted = _checked_count(n_days_wanted, "n_days_wanted")
    except ValueError:
        raise ValueError(
            f"n_days_wanted must be a whole number >= 1 (use full_year_grid for the hourly year); got "
            f"{n_days_wanted!r}"
        ) from None
    n_days = features.shape[0]
    extremes = sorted({int(d) for d in extreme_days})
    if any(not 0 <= d < n_days for d in extremes):
        raise ValueError(f"extreme_days must be day indices between 0 and {n_days - 1}; got {extremes}")
    if extremes and n_days - len(extremes) >= 1:
        return _grid_with_extremes(features, wanted, extremes)
    forced: tuple = ()
    if peak_day is not None:
        try:
            valid = not isinstance(peak_day, (bool, str)) and int(peak_day) == peak_day
        except (TypeError, ValueError, OverflowError):
            valid = False
        if not valid or not 0 <= int(peak_day) < n_days:
            raise ValueError(f"peak_day must be a day index between 0 and {n_days - 1} or None; got {peak_day!r}")
        forced = (int(peak_day),)

    spread = features.std(axis=0)
    scaled = (features - features.mean(axis=0)) / np.where(spread > 0.0, spread, 1.0)
    medoids, labels = k_medoids(scaled, wanted, seed=0, forced_medoids=forced)
    n_periods = medoids.size
    days_per_period = np.bincount(labels, minlength=n_periods)
    hours = np.arange(HOURS_PER_DAY)
    return TimeGrid(
        n_steps=n_periods * HOURS_PER_DAY,
        weight_h=np.repeat(days_per_period, HOURS_PER_DAY).astype(float),
        period=np.repeat(np.arange(n_periods), HOURS_PER_DAY),
        n_periods=int(n_periods),
        hour_of_day=np.tile(hours, n_periods),
        year_hour=(medoids[:, None] * HOURS_PER_DAY + hours[None, :]).ravel(),
        day_period=labels.astype(int),
        is_full_year=False,
    )


def _grid_with_extremes(features: np.ndarray, wanted: int, extremes: list) -> TimeGrid:
    """Cluster the days other than ``extremes`` into ``wanted`` typical days and add each extreme day alone."""
    n_days = features.shape[0]
    rest = np.setdiff1d(np.arange(n_days), extremes)
    part = features[rest]
    spread = part.std(axis=0)
    scaled = (part - part.mean(axis=0)) / np.where(spread > 0.0, spread, 1.0)
    medoids, labels = k_medoids(scaled, min(wanted, rest.size), seed=0)
    return grid_from_medoids(rest[medoids], rest, labels, extremes, n_days)


def grid_from_medoids(medoid_days, clustered_days, labels, extremes, n_days: int) -> TimeGrid:
    """A :class:`TimeGrid` from chosen representative days: medoid ``k`` stands for the days of
    ``clustered_days`` whose label is ``k``; each of ``extremes`` stands for itself (weight one day)."""
    medoid_days = np.asarray(medoid_days, dtype=int)
    representative = np.r_[medoid_days, np.asarray(extremes, dtype=int)]
    is_extreme = np.r_[np.zeros(medoid_days.size, bool), np.ones(len(extremes), bool)]
    order = np.argsort(representative, kind="stable")  # periods in calendar order
    rank = np.empty(order.size, dtype=int)
    rank[order] = np.arange(order.size)
    day_period = np.empty(n_days, dtype=int)
    day_period[np.asarray(clustered_days, dtype=int)] = rank[np.asarray(labels, dtype=int)]
    for k, day in enumerate(extremes):
        day_period[day] = rank[medoid_days.size + k]
    n_periods = representative.size
    days_per_period = np.bincount(day_period, minlength=n_periods)
    hours = np.arange(HOURS_PER_DAY)
    return TimeGrid(
        n_steps=n_periods * HOURS_PER_DAY,
        weight_h=np.repeat(days_per_period, HOURS_PER_DAY).astype(float),
        period=np.repeat(np.arange(n_periods), HOURS_PER_DAY),
        n_periods=int(n_periods),
        hour_of_day=np.tile(hours, n_periods),
        year_hour=(representative[order][:, None] * HOURS_PER_DAY + hours[None, :]).ravel(),
        day_period=day_period,
        is_full_year=False,
        extreme_period=is_extreme[order],
    )


def rescale_to_annual(year_values, grid: TimeGrid):
    """Values at the model steps whose weighted sums equal the hourly year's sums, row by row.

    ``year_values`` has shape (rows, n_hours). The clustered (non-extreme) steps of each row are multiplied by
    one factor so that ``sum_t weight_t * value_t`` equals the year's sum exactly; extreme days keep their
    values (the peak stays the peak). Where the clustered days hold nothing of a row that the year holds outside
    the extreme days, the factor would be undefined: then every step of the row is scaled, extremes included.
    The cluster-period rescaling of the typical-period literature (e.g. Kotzur et al. 2018).

    Returns
    -------
    values : numpy.ndarray
        Shape (rows, n_steps).
    error_before_pct : numpy.ndarray
        Per row, ``100 * (weighted sum before rescaling - year's sum) / year's sum`` (NaN where the year is 0).
    """
    year = np.atleast_2d(np.asarray(year_values, dtype=float))
    values = year[:, grid.year_hour]
    w = grid.weight_h
    target = year.sum(axis=1)
    before = values @ w
    with np.errstate(divide="ignore", invalid="ignore"):
        error = np.where(target != 0, 100.0 * (before - target) / target, np.nan)
    if grid.is_full_year:
        return values, error
    extreme = grid.is_extreme_step
    fixed = values[:, extreme] @ w[extreme]
    free = values[:, ~extreme] @ w[~extreme]
    out = values.copy()
    for r in range(year.shape[0]):
        if target[r] == 0:
            continue
        if free[r] > 0 and target[r] - fixed[r] >= 0:
            out[r, ~extreme] *= (target[r] - fixed[r]) / free[r]
        elif before[r] > 0:
            out[r] *= target[r] / before[r]
    return out, error


def keep_duration_curve(year_values, grid: TimeGrid):
    """Values at the model steps whose weighted duration curve is the hourly year's, row by row.

    ``year_values`` has shape (rows, n_hours). Extreme days keep their values. The clustered steps of a row are
    ranked by their own values (highest first, ties in step order); the step of rank i, of weight w_i, stands
    for the hours of the year from sum_{j<i} w_j to sum_{j<=i} w_j of the row's duration curve over the hours
    that are not extreme days (the year's values sorted, highest first), and takes their mean. So:

    - the weighted sum equals the year's sum exactly (the bands tile the duration curve);
    - the energy above any level L, sum_t w_t max(value_t - L, 0), is the year's to within one band at L
      (the heat a peak boiler or a capacity limit sees is the year's, not a medoid day's times its cluster);
    - within a day, the order of the hours is kept (the mapping is monotone); a step keeps its calendar hour,
      weather, prices and COP.

    Clustering picks representative days; this representation then preserves the duration curve, the criterion
    of Poncelet, K., Hoeschle, H., Delarue, E., Virag, A. and D'haeseleer, W. (2017). Selecting representative
    days for capturing the implications of integrating intermittent renewables in generation expansion planning
    problems. IEEE Transactions on Power Systems 32(3), 1936-1948. It is the whole year's duration curve
    kept at once, like the distribution-preserving representation of typical periods (Hoffmann, M., Kotzur, L.
    and Stolten, D. (2022). The Pareto-optimal temporal aggregation of energy system models. Applied Energy 315,
    119029; from memory), but over all clustered days rather than cluster by cluster.

    Parameters
    ----------
    year_values : array_like
        Hourly values, shape (rows, n_hours) or (n_hours,). [any unit]
    grid : TimeGrid
        The time grid; its weights must sum to the hours of the year.

    Returns
    -------
    values : numpy.ndarray
        Shape (rows, n_steps). For the full year the hourly values as they are.
    error_before_pct : numpy.ndarray
        Per row, ``100 * (weighted sum of the medoid days' own values - year's sum) / year's sum``: the error
        the representation removes (NaN where the year is 0).

    Raises
    ------
    ValueError
        If the rows do not hold ``grid.n_hours`` values or a value is not finite.
    """
    year = np.atleast_2d(np.asarray(year_values, dtype=float))
    if year.ndim != 2 or year.shape[1] != grid.n_hours:
        raise ValueError(f"year_values must have {grid.n_hours} hourly values per row; got shape {year.shape}")
    if not np.all(np.isfinite(year)):
        raise ValueError("year_values must be finite")
    values = year[:, grid.year_hour]
    w = grid.weight_h
    target = year.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        error = np.where(target != 0, 100.0 * (values @ w - target) / target, np.nan)
    if grid.is_full_year:
        return values, error
    extreme_step = grid.is_extreme_step
    extreme_day = (np.asarray(grid.extreme_period, dtype=bool)[grid.day_period] if grid.extreme_period is not None
                   else np.zeros(grid.day_period.size, dtype=bool))
    clustered_hours = ~np.repeat(extreme_day, HOURS_PER_DAY)
    steps = np.flatnonzero(~extreme_step)
    out = values.copy()
    if steps.size == 0:
        return out, error
    for r in range(year.shape[0]):
        out[r, steps] = _duration_curve_bands(year[r, clustered_hours], values[r, steps], w[steps])
    return out, error


def _duration_curve_bands(year_values: np.ndarray, own_values: np.ndarray, weight: np.ndarray) -> np.ndarray:
    """Values of steps (own values ``own_values``, weights ``weight`` summing to the hours ``year_values``
    covers) that take, ranked highest first, the mean of consecutive bands of the sorted ``year_values``."""
    curve = np.sort(year_values)[::-1]
    cumulative = np.r_[0.0, np.cumsum(curve)]
    order = np.argsort(-own_values, kind="stable")
    edges = np.r_[0.0, np.cumsum(weight[order])]
    edges = np.clip(edges * (curve.size / edges[-1]), 0.0, curve.size)  # weights sum to those hours
    whole = np.minimum(np.floor(edges).astype(int), curve.size - 1)
    energy = cumulative[whole] + (edges - whole) * curve[whole]  # area under the curve up to each edge
    ordered_weight = weight[order]
    out = np.empty_like(own_values, dtype=float)
    out[order] = np.where(ordered_weight > 0, np.diff(energy) / np.where(ordered_weight > 0, ordered_weight, 1.0),
                          own_values[order])
    return out


def daily_features(hourly_table) -> np.ndarray:
    """Per-day feature vectors from hourly series: the 24 hours of each series side by side.

    Parameters
    ----------
    hourly_table : dict of str to array_like, or array_like
        Hourly series of one year: a dict of 1-D series (used in the dict's order), a 2-D array of shape
        (n_hours, k), or a single 1-D series. n_hours must be a multiple of 24.

    Returns
    -------
    numpy.ndarray
        Shape (n_days, 24 * k); row d holds hours 0-23 of day d of the first series, then of the second, ...

    Raises
    ------
    ValueError
        If the series differ in length, their length is not a positive multiple of 24, or a value is not finite.
    """
    if isinstance(hourly_table, dict):
        if not hourly_table:
            raise ValueError("hourly_table must hold at least one series")
        columns = []
        for name, series in hourly_table.items():
            column = np.asarray(series, dtype=float)
            if column.ndim != 1:
                raise ValueError(f"hourly_table['{name}'] must be a 1-D hourly series; got shape {column.shape}")
            columns.append(column)
        lengths = {column.size for column in columns}
        if len(lengths) != 1:
            raise ValueError(f"hourly_table series must all have the same length; got lengths {sorted(lengths)}")
        table = np.column_stack(columns)
    else:
        table = np.asarray(hourly_table, dtype=float)
        if table.ndim == 1:
            table = table[:, None]
        if table.ndim != 2:
            raise ValueError(f"hourly_table must be 1-D or 2-D (n_hours, k); got shape {table.shape}")
    n_hours, n_series = table.shape
    if n_hours == 0 or n_hours % HOURS_PER_DAY:
        raise ValueError(f"hourly_table must hold whole days (a multiple of 24 hours); got {n_hours} hours")
    if not np.all(np.isfinite(table)):
        hour = int(np.flatnonzero(~np.all(np.isfinite(table), axis=1))[0])
        raise ValueError(f"hourly_table must be finite; hour {hour} has a NaN or infinite value")
    n_days = n_hours // HOURS_PER_DAY
    return table.reshape(n_days, HOURS_PER_DAY, n_series).transpose(0, 2, 1).reshape(n_days, -1)
