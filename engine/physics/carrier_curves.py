"""Prices, CO2 factors and slowly varying series at the steps of typical days.

:func:`keep_cost_duration_curve` gives a price and its CO2 factor at the steps of each typical day the duration
curve, within the days it stands for, of the cost they set together; :func:`keep_period_distribution` gives a
series on its own (the groundwater temperature) each cluster's duration curve; :func:`period_mean` gives a slowly
varying series its cluster's mean (the former groundwater representation). The demand's duration curve is
:func:`engine.physics.timeseries.keep_duration_curve`; docs/model.md section 8 describes them.
"""

from __future__ import annotations

import numpy as np

from engine.physics.timeseries import HOURS_PER_DAY, TimeGrid


def keep_cost_duration_curve(driver_year, companion_years, grid: TimeGrid, within: str = "period"):
    """Values of series that set a cost together (a price and its CO2 factor) at the model steps: ranked by the
    cost they set, each step takes the mean of its band of hours ranked the same way.

    ``driver_year`` is the hourly cost the series set (e.g. electricity price + CO2 price x grid CO2 factor),
    ``companion_years`` the series themselves, shape (rows, n_hours). Within each typical day's cluster (or,
    with ``within="year"``, over all clustered days at once) the steps are ranked by their own driver value,
    highest first; the step of rank i, of weight w_i, stands for the hours sum_{j<i} w_j .. sum_{j<=i} w_j of
    the cluster's hours sorted by the driver, highest first, and every companion takes its mean over those hours.
    So:

    - each companion's weighted sum is the year's exactly (and each cluster's, with ``within="period"``);
    - when the driver is a fixed linear combination of the companions, its duration curve within each cluster
      is the cluster's to within one band: the hours of each season in which one supply is cheaper than another
      are as many as in the days the typical day stands for, which decides how heat splits between two
      supplies whose costs lie close together;
    - no step pairs a price with a CO2 factor it never met (sorting each series alone would pair the highest of
      both); within a day the order of the hours by cost is kept; extreme days keep their values.

    Duration curves are the criterion of Poncelet, K., Hoeschle, H., Delarue, E., Virag, A. and D'haeseleer, W.
    (2017). Selecting representative days for capturing the implications of integrating intermittent renewables
    in generation expansion planning problems. IEEE Transactions on Power Systems 32(3), 1936-1948; keeping each
    cluster's distribution in its representative period is the distribution-preserving representation of
    Hoffmann, M., Kotzur, L. and Stolten, D. (2022). The Pareto-optimal temporal aggregation of energy system
    models. Applied Energy 315, 119029 (from memory). Here the curve is taken of the cost that decides the
    dispatch and carried to the series that make it up.

    Parameters
    ----------
    driver_year : array_like
        The hourly cost that ranks the hours, shape (n_hours,). [EUR/MWh, or any unit]
    companion_years : array_like
        Hourly series to carry to the steps, shape (rows, n_hours) or (n_hours,). [any unit]
    grid : TimeGrid
        The time grid; its weights must sum to the hours of the year.
    within : {"period", "year"}, default "period"
        Rank within each cluster, or over all clustered days at once.

    Returns
    -------
    numpy.ndarray
        Companions at the model steps, shape (rows, n_steps); for the full year the hourly values as they are.

    Raises
    ------
    ValueError
        If a series does not hold ``grid.n_hours`` finite values or ``within`` is neither "period" nor "year".
    """
    driver = np.asarray(driver_year, dtype=float).ravel()
    rows = np.atleast_2d(np.asarray(companion_years, dtype=float))
    if driver.size != grid.n_hours or rows.shape[1] != grid.n_hours:
        raise ValueError(f"series must have {grid.n_hours} hourly values; got {driver.size} and {rows.shape}")
    if not (np.all(np.isfinite(driver)) and np.all(np.isfinite(rows))):
        raise ValueError("series must be finite")
    if within not in ("year", "period"):
        raise ValueError(f"within must be 'year' or 'period'; got {within!r}")
    out = rows[:, grid.year_hour].copy()
    if grid.is_full_year:
        return out
    extreme = (np.asarray(grid.extreme_period, dtype=bool) if grid.extreme_period is not None
               else np.zeros(grid.n_periods, dtype=bool))
    hour_period = np.repeat(grid.day_period, HOURS_PER_DAY)
    groups = ([np.flatnonzero(~extreme)] if within == "year" else [[p] for p in np.flatnonzero(~extreme)])
    own = driver[grid.year_hour]
    for periods in groups:
        steps = np.flatnonzero(np.isin(grid.period, periods))
        hours = np.flatnonzero(np.isin(hour_period, periods))
        if steps.size == 0 or hours.size == 0:
            continue
        by_cost = hours[np.argsort(-driver[hours], kind="stable")]
        order = steps[np.argsort(-own[steps], kind="stable")]
        weight = grid.weight_h[order]
        edges = np.r_[0.0, np.cumsum(weight)]
        edges = np.clip(edges * (hours.size / edges[-1]), 0.0, hours.size)
        whole = np.minimum(np.floor(edges).astype(int), hours.size - 1)
        for r in range(rows.shape[0]):
            sorted_values = rows[r, by_cost]
            cumulative = np.r_[0.0, np.cumsum(sorted_values)]
            area = cumulative[whole] + (edges - whole) * sorted_values[whole]
            out[r, order] = np.where(weight > 0, np.diff(area) / np.where(weight > 0, weight, 1.0), out[r, order])
    return out


def period_mean(year_values, grid: TimeGrid) -> np.ndarray:
    """Values at the model steps: for each typical day, the mean over the calendar days it stands for at the same
    hour of the day (the centroid of its cluster); extreme days keep their own values.

    For series that vary slowly over the season and hardly within a day, such as the groundwater temperature:
    a medoid day's own value would stand for days weeks apart (days are clustered by their weather, and the
    aquifer lags the air by weeks), while the cluster's mean keeps the year's weighted sum exactly and each
    cluster's mean. Representing a cluster by its centroid rather than its medoid is the centroid representation
    compared in Kotzur, L., Markewitz, P., Robinius, M. and Stolten, D. (2018). Impact of different time series
    aggregation methods on optimal energy system design. Renewable Energy 117, 474-487.

    Parameters
    ----------
    year_values : array_like
        Hourly values, shape (rows, n_hours) or (n_hours,). [any unit]
    grid : TimeGrid

    Returns
    -------
    numpy.ndarray
        Shape (rows, n_steps) (or (n_steps,) for a 1-D input); for the full year the hourly values as they are.

    Raises
    ------
    ValueError
        If the rows do not hold ``grid.n_hours`` finite values.
    """
    values, year = _hourly_rows(year_values, grid)
    out = year[:, grid.year_hour].copy()
    if not grid.is_full_year:
        extreme = (np.asarray(grid.extreme_period, dtype=bool) if grid.extreme_period is not None
                   else np.zeros(grid.n_periods, dtype=bool))
        by_day = year.reshape(year.shape[0], -1, HOURS_PER_DAY)
        for period in np.flatnonzero(~extreme):
            days = np.flatnonzero(grid.day_period == period)
            steps = np.flatnonzero(grid.period == period)
            out[:, steps] = by_day[:, days, :].mean(axis=1)[:, grid.hour_of_day[steps]]
    return out if values.ndim == 2 else out[0]


def keep_period_distribution(year_values, grid: TimeGrid) -> np.ndarray:
    """Values of series at the model steps that keep, for each typical day, the distribution of the hours its
    cluster stands for: row by row, :func:`keep_cost_duration_curve` with the series as its own driver, within
    each period.

    The steps of a typical day are ranked by their own (medoid) values, highest first (ties in step order); the
    step of rank i, of weight w_i, takes the mean of the band sum_{j<i} w_j .. sum_{j<=i} w_j of the cluster's
    hours sorted highest first. So each cluster's weighted sum and mean are its days' exactly (as with
    :func:`period_mean`), and its duration curve is kept to within one band, so that for any level L the
    weighted sum of max(value - L, 0) and of min(value, L) is the cluster's to within one band at L.

    Why, for the groundwater temperature: a groundwater heat pump's heat at the permitted flow is about
    flow x c_p x (T - floor), capped by its capacity, a concave function of T; a cluster's mean temperature
    overstates the capped sum over its days (Jensen's inequality), so the heat pump looked able to use more
    capacity in the late-winter weeks of the coldest water than it is and was sized too large (docs/model.md
    section 8). Keeping each cluster's distribution is the distribution-preserving representation of Hoffmann, M.,
    Kotzur, L. and Stolten, D. (2022). The Pareto-optimal temporal aggregation of energy system models. Applied
    Energy 315, 119029 (from memory); the duration-curve criterion is Poncelet et al. (2017, see
    :func:`keep_cost_duration_curve`).

    ``year_values`` and the result are shaped as in :func:`period_mean` (rows of hourly values, or one row;
    the full year comes back as it is, extreme days keep their own values), and so is the ValueError.
    """
    values, year = _hourly_rows(year_values, grid)
    out = (np.vstack([keep_cost_duration_curve(row, row, grid, "period") for row in year]) if len(year)
           else year[:, grid.year_hour].copy())
    return out if values.ndim == 2 else out[0]


def _hourly_rows(year_values, grid: TimeGrid):
    """``year_values`` as an array and as rows of ``grid.n_hours`` finite values (ValueError otherwise)."""
    values = np.asarray(year_values, dtype=float)
    year = np.atleast_2d(values)
    if year.ndim != 2 or year.shape[1] != grid.n_hours:
        raise ValueError(f"year_values must have {grid.n_hours} hourly values per row; got shape {values.shape}")
    if not np.all(np.isfinite(year)):
        raise ValueError("year_values must be finite")
    return values, year
