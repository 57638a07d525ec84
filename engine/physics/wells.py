"""Thermal physics of one open-loop groundwater well doublet.

A doublet pumps groundwater from an extraction well through a heat exchanger and returns it through a reinjection
well. The heat it exchanges is ``P = m_dot * c_p * dT``. For heating, the water is reinjected colder than it was
extracted; for cooling, warmer. The temperature spread ``dT`` is limited by the design of the heat exchanger and
by the reinjection window the water authority allows (common practice for open-loop systems: reinjection no
colder than about 4.5 °C and no warmer than about 20 °C; no source, always an editable setting).

Interference between neighbouring doublets (thermal plumes) is a separate screening model. Everything here is a
screening estimate: the permit for a well rests on the local water authority's rules, a hydrogeological study
and a licensed engineer's design.

References
----------
.. [1] VDI 4640 Blatt 2 (2019). Thermische Nutzung des Untergrunds - Erdgekoppelte Wärmepumpenanlagen.
   Verein Deutscher Ingenieure, Düsseldorf (design of groundwater heat pump systems).
.. [2] Wagner, W. and Pruß, A. (2002). The IAPWS formulation 1995 for the thermodynamic properties of ordinary
   water substance for general and scientific use. Journal of Physical and Chemical Reference Data 31(2),
   387-535 (water properties, see :mod:`engine.physics.water`).
"""

from __future__ import annotations

import numpy as np

from engine.physics.water import water_density_kg_per_m3, water_specific_heat_j_per_kg_k
from engine.units import SECONDS_PER_HOUR, W_PER_KW

HOURS_PER_DAY = 24


def _finite_array(value, name: str) -> np.ndarray:
    array = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite; got a NaN or infinite value")
    return array


def _non_negative_array(value, name: str, unit: str) -> np.ndarray:
    array = _finite_array(value, name)
    if np.any(array < 0.0):
        raise ValueError(f"{name} must be >= 0 {unit}; got {float(np.min(array)):g}")
    return array


def _as_result(array: np.ndarray):
    return array[()] if array.ndim == 0 else array


def well_thermal_power_kw(flow_kg_s, spread_k, temp_c):
    """Thermal power a doublet exchanges with the groundwater.

    ``P = m_dot * c_p(T) * dT``.

    Parameters
    ----------
    flow_kg_s : float or array_like
        Mass flow of pumped groundwater, >= 0. [kg/s]
    spread_k : float or array_like
        Temperature difference between extracted and reinjected water, >= 0. [K]
    temp_c : float or array_like
        Temperature at which c_p is taken (the groundwater temperature). [°C], 0 to 100.

    Returns
    -------
    float or numpy.ndarray
        Thermal power, broadcast shape of the inputs. [kW]

    Raises
    ------
    ValueError
        If ``flow_kg_s`` or ``spread_k`` is negative or not finite, or ``temp_c`` lies outside 0 °C to 100 °C.

    References
    ----------
    .. [1] Wagner, W. and Pruß, A. (2002). The IAPWS formulation 1995 for the thermodynamic properties of
       ordinary water substance for general and scientific use. Journal of Physical and Chemical Reference Data
       31(2), 387-535.
    """
    flow = _non_negative_array(flow_kg_s, "flow_kg_s", "kg/s")
    spread = _non_negative_array(spread_k, "spread_k", "K")
    specific_heat = np.asarray(water_specific_heat_j_per_kg_k(temp_c))
    return _as_result(flow * specific_heat * spread / W_PER_KW)


def flow_m3_per_h_to_kg_s(flow_m3_per_h, temp_c):
    """Mass flow of a volumetric pumping rate at the water temperature.

    Parameters
    ----------
    flow_m3_per_h : float or array_like
        Volumetric pumping rate, >= 0. [m³/h]
    temp_c : float or array_like
        Water temperature at which the rate is measured. [°C], 0 to 100.

    Returns
    -------
    float or numpy.ndarray
        Mass flow. [kg/s]

    Raises
    ------
    ValueError
        If ``flow_m3_per_h`` is negative or not finite, or ``temp_c`` lies outside 0 °C to 100 °C.

    References
    ----------
    .. [1] Wagner, W. and Pruß, A. (2002). The IAPWS formulation 1995 for the thermodynamic properties of
       ordinary water substance for general and scientific use. Journal of Physical and Chemical Reference Data
       31(2), 387-535.
    """
    flow = _non_negative_array(flow_m3_per_h, "flow_m3_per_h", "m³/h")
    density = np.asarray(water_density_kg_per_m3(temp_c))
    return _as_result(flow * density / SECONDS_PER_HOUR)


def usable_spread_heating_k(groundwater_temp_c, design_spread_k, reinjection_min_temp_c):
    """Temperature spread usable in heating, within the design and the reinjection window.

    ``dT = clip(min(design, T_gw - T_inj_min), 0, None)``: heating cools the water, and the reinjected water
    ``T_gw - dT`` must not fall below the lowest reinjection temperature allowed.

    Parameters
    ----------
    groundwater_temp_c : float or array_like
        Temperature of the extracted groundwater. [°C]
    design_spread_k : float or array_like
        Design temperature spread of the doublet, >= 0. [K]
    reinjection_min_temp_c : float or array_like
        Lowest temperature at which water may be reinjected. [°C]

    Returns
    -------
    float or numpy.ndarray
        Usable spread, >= 0 (0 where the groundwater is at or below the limit). [K]

    Raises
    ------
    ValueError
        If an input is not finite or ``design_spread_k`` is negative.
    """
    groundwater = _finite_array(groundwater_temp_c, "groundwater_temp_c")
    design = _non_negative_array(design_spread_k, "design_spread_k", "K")
    limit = _finite_array(reinjection_min_temp_c, "reinjection_min_temp_c")
    return _as_result(np.clip(np.minimum(design, groundwater - limit), 0.0, None))


def usable_spread_cooling_k(groundwater_temp_c, design_spread_k, reinjection_max_temp_c):
    """Temperature spread usable in cooling, within the design and the reinjection window.

    ``dT = clip(min(design, T_inj_max - T_gw), 0, None)``: cooling warms the water, and the reinjected water
    ``T_gw + dT`` must not exceed the highest reinjection temperature allowed.

    Parameters
    ----------
    groundwater_temp_c : float or array_like
        Temperature of the extracted groundwater. [°C]
    design_spread_k : float or array_like
        Design temperature spread of the doublet, >= 0. [K]
    reinjection_max_temp_c : float or array_like
        Highest temperature at which water may be reinjected. [°C]

    Returns
    -------
    float or numpy.ndarray
        Usable spread, >= 0 (0 where the groundwater is at or above the limit). [K]

    Raises
    ------
    ValueError
        If an input is not finite or ``design_spread_k`` is negative.
    """
    groundwater = _finite_array(groundwater_temp_c, "groundwater_temp_c")
    design = _non_negative_array(design_spread_k, "design_spread_k", "K")
    limit = _finite_array(reinjection_max_temp_c, "reinjection_max_temp_c")
    return _as_result(np.clip(np.minimum(design, limit - groundwater), 0.0, None))


def groundwater_temp_series_c(mean_temp_c, amplitude_k, coldest_day_of_year, n_hours):
    """Hourly seasonal groundwater temperature as a sinusoid.

    ``T(h) = mean - amplitude * cos(2 pi (h - h_min) / n_hours)`` where ``h`` is the hour of the year (0 at
    00:00 of day 1) and ``h_min = 24 * (coldest_day_of_year - 1) + 12`` is noon of the coldest day. The period
    is the whole series, ``n_hours / 24`` days; shallow groundwater follows the annual air temperature wave,
    damped and delayed with depth.

    Parameters
    ----------
    mean_temp_c : float or array_like
        Annual mean groundwater temperature. [°C]
    amplitude_k : float or array_like
        Seasonal amplitude (half the difference between warmest and coldest), >= 0. [K]
    coldest_day_of_year : float or array_like
        Day of the year of the minimum, 1-based (1 = first day), 1 to 366; it wraps around the end of the series.
        [day]
    n_hours : int
        Length of the series, > 0 (8760 or 8784 for a year). [h]

    Returns
    -------
    numpy.ndarray
        Hourly temperature, shape ``(n_hours,)`` for scalar parameters, or ``(n_hours,) + shape`` where the
        parameters broadcast to ``shape`` (one column per well). [°C]

    Raises
    ------
    ValueError
        If a parameter is not finite, ``amplitude_k`` is negative, ``coldest_day_of_year`` lies outside 1 to 366,
        or ``n_hours`` is not a positive integer.

    References
    ----------
    .. [1] Carslaw, H. S. and Jaeger, J. C. (1959). Conduction of Heat in Solids, 2nd ed. Clarendon Press, Oxford
       (periodic surface temperature penetrating a half-space: a damped, delayed sinusoid).
    """
    mean = _finite_array(mean_temp_c, "mean_temp_c")
    amplitude = _non_negative_array(amplitude_k, "amplitude_k", "K")
    day = _finite_array(coldest_day_of_year, "coldest_day_of_year")
    if np.any(day < 1.0) or np.any(day > 366.0):
        raise ValueError(f"coldest_day_of_year must lie between 1 and 366; got {float(np.min(day)):g} to "
                         f"{float(np.max(day)):g}")
    try:
        whole = not isinstance(n_hours, (bool, str)) and int(n_hours) == n_hours and int(n_hours) > 0
    except (TypeError, ValueError, OverflowError):
        whole = False
    if not whole:
        raise ValueError(f"n_hours must be a positive whole number of hours; got {n_hours!r}")
    n = int(n_hours)
    mean, amplitude, day = np.broadcast_arrays(mean, amplitude, day)
    hours = np.arange(n, dtype=float).reshape((n,) + (1,) * mean.ndim)
    coldest_hour = HOURS_PER_DAY * (day - 1.0) + 12.0
    return mean - amplitude * np.cos(2.0 * np.pi * (hours - coldest_hour) / n)
