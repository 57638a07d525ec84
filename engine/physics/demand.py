"""Hourly heat and cooling demand from annual figures and the outdoor temperature.

Space heating follows the heating-degree-hour method: the demand of an hour is proportional to how far the
outdoor temperature lies below a heating base (balance-point) temperature, ``max(0, T_base - T_out)``. Hot water
is drawn alike on every day of the year, with a daily shape of morning and evening peaks. Cooling follows
cooling degree hours, ``max(0, T_out - T_base)``. Each profile is scaled so that its hourly values [kW], each
lasting one hour, sum to the annual figure.

The base temperatures of 15 °C (heating) and 20 °C (cooling) are common practice in central Europe; they are
parameters and scenario settings.

These are screening profiles: measured hourly demand, where available, should replace them.

References
----------
.. [1] CIBSE TM41 (2006). Degree-days: theory and application. The Chartered Institution of Building Services
   Engineers, London (degree-day method; the hourly form used here sums over hours instead of days).
"""

from __future__ import annotations

import numpy as np

from engine.units import KWH_PER_MWH

HOURS_PER_DAY = 24
COOLING_DAY_START_HOUR = 8
"""First hour of the day (local clock, hour starting 08:00) of the fallback cooling window."""
COOLING_DAY_END_HOUR = 18
"""End of the fallback cooling window (exclusive: the last hour is 17:00-18:00)."""

# Relative hot-water draw per hour of the day (hour 0 = 00:00-01:00). A morning peak (06:00-09:00) and a broader
# evening peak (17:00-21:00) on a low night base: common practice shape, invented numbers (no published
# profile), normalised to mean 1 below.
_HOT_WATER_RELATIVE_DRAW = np.array(
    [0.30, 0.20, 0.20, 0.20, 0.30, 0.60, 1.40, 2.00, 1.80, 1.30, 1.00, 1.00,
     1.10, 1.00, 0.90, 0.90, 1.00, 1.30, 1.70, 1.90, 1.70, 1.30, 0.80, 0.50]
)


def hot_water_daily_shape() -> np.ndarray:
    """Hourly factors of domestic hot-water draw over one day.

    Returns
    -------
    numpy.ndarray
        24 factors, one per hour of the day starting at 00:00, with mean 1. [-]

    Notes
    -----
    Morning peak 06:00-09:00 and evening peak 17:00-21:00 on a low night base. The shape is common practice;
    the numbers are invented for this tool, not taken from a published profile.
    """
    return _HOT_WATER_RELATIVE_DRAW / _HOT_WATER_RELATIVE_DRAW.mean()


def _checked_annual(annual_mwh, name: str) -> float:
    try:
        annual = float(annual_mwh)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number; got {annual_mwh!r}") from None
    if not np.isfinite(annual):
        raise ValueError(f"{name} must be finite; got {annual}")
    if annual < 0.0:
        raise ValueError(f"{name} must be >= 0 MWh/a; got {annual:g}")
    return annual


def _checked_hourly_temperature(outdoor_temp_c) -> np.ndarray:
    temp = np.asarray(outdoor_temp_c, dtype=float)
    if temp.ndim != 1:
        raise ValueError(f"outdoor_temp_c must be a 1-D hourly series; got an array of shape {temp.shape}")
    if temp.size == 0 or temp.size % HOURS_PER_DAY != 0:
        raise ValueError(
            f"outdoor_temp_c must hold whole days (a multiple of 24 hours, e.g. 8760 or 8784); got {temp.size} "
            "values"
        )
    bad = np.flatnonzero(~np.isfinite(temp))
    if bad.size:
        raise ValueError(
            f"outdoor_temp_c must be finite; hour {int(bad[0])} is {temp[bad[0]]} ({bad.size} non-finite values)"
        )
    return temp


def _checked_base(base_temp_c, name: str) -> float:
    try:
        base = float(base_temp_c)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number; got {base_temp_c!r}") from None
    if not np.isfinite(base):
        raise ValueError(f"{name} must be finite; got {base}")
    return base


def _scaled_to_total(weights: np.ndarray, total_kwh: float) -> np.ndarray:
    """Hourly kW proportional to ``weights`` whose sum over the year is ``total_kwh`` (1 h per value)."""
    profile = weights * (total_kwh / weights.sum())
    # One more rescale removes the rounding left by the first, so the sum matches to the last few ulps.
    return profile * (total_kwh / profile.sum())


def heat_demand_profile_kw(annual_mwh, outdoor_temp_c, hot_water_share=0.15, base_temp_c=15.0) -> np.ndarray:
    """Hourly heat demand (space heating plus hot water) from the annual demand.

    Space heating ``(1 - hot_water_share) * annual`` is spread over the hours in proportion to the heating
    degree hours ``max(0, base_temp_c - T_out)``. Hot water ``hot_water_share * annual`` is the same on every day
    and follows :func:`hot_water_daily_shape` within the day. The series sums to ``annual_mwh * 1000`` kWh.

    Parameters
    ----------
    annual_mwh : float
        Annual heat demand, space heating plus hot water, >= 0. [MWh/a]
    outdoor_temp_c : array_like
        Hourly outdoor air temperature of one year, whole days (8760 or 8784 values), hour 0 starting at 00:00
        of the first day. [°C]
    hot_water_share : float, default 0.15
        Share of the annual demand that is hot water, in [0, 1]. [-]
    base_temp_c : float, default 15.0
        Heating base temperature: no space heating at or above it. [°C]

    Returns
    -------
    numpy.ndarray
        Hourly heat demand, one value per hour of ``outdoor_temp_c``. [kW]

    Raises
    ------
    ValueError
        If ``annual_mwh`` is negative or not finite, ``hot_water_share`` lies outside [0, 1],
        ``outdoor_temp_c`` has a non-finite value or its length is not a multiple of 24.

    Notes
    -----
    If no hour lies below ``base_temp_c`` (a year without heating degree hours), the space-heating part follows
    the hot-water shape instead, so that the annual figure is still met. ``annual_mwh = 0`` gives zeros.

    References
    ----------
    .. [1] CIBSE TM41 (2006). Degree-days: theory and application. The Chartered Institution of Building
       Services Engineers, London.
    """
    annual = _checked_annual(annual_mwh, "annual_mwh")
    temp = _checked_hourly_temperature(outdoor_temp_c)
    try:
        share = float(hot_water_share)
    except (TypeError, ValueError):
        raise ValueError(f"hot_water_share must be a number; got {hot_water_share!r}") from None
    if not 0.0 <= share <= 1.0:
        raise ValueError(f"hot_water_share must lie in [0, 1]; got {share:g}")
    base = _checked_base(base_temp_c, "base_temp_c")

    if annual == 0.0:
        return np.zeros(temp.size)
    total_kwh = annual * KWH_PER_MWH
    n_days = temp.size // HOURS_PER_DAY
    hot_water_weights = np.tile(hot_water_daily_shape(), n_days)
    degree_hours = np.maximum(0.0, base - temp)
    space_weights = degree_hours if degree_hours.sum() > 0.0 else hot_water_weights

    # Both parts as shares of one, then one scaling to the annual total.
    weights = (1.0 - share) * space_weights / space_weights.sum()
    weights = weights + share * hot_water_weights / hot_water_weights.sum()
    return _scaled_to_total(weights, total_kwh)


def hot_water_profile_kw(annual_mwh, n_hours: int, hot_water_share=0.15) -> np.ndarray:
    """Hourly hot-water part of a district's heat demand [kW]: the part :func:`heat_demand_profile_kw` adds.

    ``hot_water_share * annual`` is the same on every day and follows :func:`hot_water_daily_shape` within the
    day; the series sums to ``hot_water_share * annual_mwh * 1000`` kWh.

    Parameters
    ----------
    annual_mwh : float
        Annual heat demand (space heating and hot water), >= 0. [MWh/a]
    n_hours : int
        Hours of the year, a positive multiple of 24. [h]
    hot_water_share : float, default 0.15
        Share of the annual heat demand that is hot water, in [0, 1]. [-]

    Raises
    ------
    ValueError
        If ``annual_mwh`` is negative or not finite, ``hot_water_share`` lies outside [0, 1] or ``n_hours`` is
        not a positive multiple of 24.
    """
    annual = _checked_annual(annual_mwh, "annual_mwh")
    share = float(hot_water_share)
    if not 0.0 <= share <= 1.0:
        raise ValueError(f"hot_water_share must lie in [0, 1]; got {share:g}")
    if int(n_hours) != n_hours or n_hours <= 0 or n_hours % HOURS_PER_DAY:
        raise ValueError(f"n_hours must be a positive multiple of 24; got {n_hours!r}")
    weights = np.tile(hot_water_daily_shape(), int(n_hours) // HOURS_PER_DAY)
    return _scaled_to_total(weights, share * annual * 1000.0) if annual * share > 0 else np.zeros(int(n_hours))


def cooling_demand_profile_kw(annual_mwh, outdoor_temp_c, base_temp_c=20.0) -> np.ndarray:
    """Hourly cooling demand from the annual demand by the cooling-degree-hour method.

    The annual cooling demand is spread over the hours in proportion to ``max(0, T_out - base_temp_c)``; the
    series sums to ``annual_mwh * 1000`` kWh.

    Parameters
    ----------
    annual_mwh : float
        Annual cooling demand, >= 0. [MWh/a]
    outdoor_temp_c : array_like
        Hourly outdoor air temperature of one year, whole days (8760 or 8784 values). [°C]
    base_temp_c : float, default 20.0
        Cooling base temperature: no cooling at or below it. [°C]

    Returns
    -------
    numpy.ndarray
        Hourly cooling demand, one value per hour of ``outdoor_temp_c``. [kW]

    Raises
    ------
    ValueError
        If ``annual_mwh`` is negative or not finite, or ``outdoor_temp_c`` has a non-finite value or a length
        that is not a multiple of 24.

    Notes
    -----
    If no hour lies above ``base_temp_c`` the result is zeros, unless ``annual_mwh > 0``: then the annual figure
    is spread evenly over the daytime hours 08:00 to 18:00 of every day (the hours in which offices and shops
    need cooling), so that the stated demand is not lost.

    References
    ----------
    .. [1] CIBSE TM41 (2006). Degree-days: theory and application. The Chartered Institution of Building
       Services Engineers, London.
    """
    annual = _checked_annual(annual_mwh, "annual_mwh")
    temp = _checked_hourly_temperature(outdoor_temp_c)
    base = _checked_base(base_temp_c, "base_temp_c")
    if annual == 0.0:
        return np.zeros(temp.size)
    degree_hours = np.maximum(0.0, temp - base)
    if degree_hours.sum() > 0.0:
        weights = degree_hours
    else:
        hour_of_day = np.arange(temp.size) % HOURS_PER_DAY
        daytime = (hour_of_day >= COOLING_DAY_START_HOUR) & (hour_of_day < COOLING_DAY_END_HOUR)
        weights = daytime.astype(float)
    return _scaled_to_total(weights, annual * KWH_PER_MWH)
