"""Coefficient of performance of electrically driven heat pumps.

The model is the Carnot COP of the temperatures the refrigerant actually sees, times a quality grade: the
condenser runs a few kelvin above the heat sink (the supply temperature), the evaporator a few kelvin below the
heat source (outdoor air or groundwater). The grade, the share of the ideal (Carnot) COP a real machine reaches,
lies typically between 0.4 and 0.55 for current machines (textbook range, from memory). The result is clipped to
a plausible range so that a tiny lift (mild weather, warm source) does not give an unbounded COP.

All temperatures are given in °C and converted to kelvin inside.

References
----------
.. [1] Carnot, S. (1824). Réflexions sur la puissance motrice du feu et sur les machines propres à développer
   cette puissance. Bachelier, Paris.
.. [2] Baehr, H. D. and Kabelac, S. (2016). Thermodynamik: Grundlagen und technische Anwendungen, 16th ed.
   Springer Vieweg, Berlin.
"""

from __future__ import annotations

import numpy as np

from engine.scenario.defaults import HEAT_PUMP_QUALITY_GRADE, SINK_APPROACH_K, SOURCE_APPROACH_K

KELVIN_OFFSET = 273.15
"""0 °C in kelvin [K]."""


def _finite_array(value, name: str) -> np.ndarray:
    array = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite; got a NaN or infinite value")
    if np.any(array <= -KELVIN_OFFSET):
        raise ValueError(f"{name} must lie above absolute zero (-273.15 °C); got {float(np.min(array)):g} °C")
    return array


def _finite_scalar(value, name: str) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number; got {value!r}") from None
    if not np.isfinite(number):
        raise ValueError(f"{name} must be finite; got {number}")
    return number


def _as_result(array: np.ndarray):
    return array[()] if array.ndim == 0 else array


def carnot_cop_heating(sink_temp_c, source_temp_c):
    """Carnot (ideal) coefficient of performance of a heat pump in heating.

    ``COP_Carnot = T_sink / (T_sink - T_source)`` with both temperatures in kelvin.

    Parameters
    ----------
    sink_temp_c : float or array_like
        Temperature at which heat is delivered. [°C]
    source_temp_c : float or array_like
        Temperature at which heat is taken up. [°C] Broadcast against ``sink_temp_c``.

    Returns
    -------
    float or numpy.ndarray
        Carnot COP (heat delivered per unit of work). [-]

    Raises
    ------
    ValueError
        If a temperature is not finite or below absolute zero, or if ``sink_temp_c`` is not above
        ``source_temp_c`` everywhere (the Carnot COP of a non-positive lift is undefined).

    References
    ----------
    .. [1] Carnot, S. (1824). Réflexions sur la puissance motrice du feu et sur les machines propres à
       développer cette puissance. Bachelier, Paris.
    """
    sink = _finite_array(sink_temp_c, "sink_temp_c")
    source = _finite_array(source_temp_c, "source_temp_c")
    sink, source = np.broadcast_arrays(sink, source)
    lift = sink - source
    if np.any(lift <= 0.0):
        raise ValueError(
            "sink_temp_c must be above source_temp_c everywhere; the smallest lift is "
            f"{float(np.min(lift)):g} K"
        )
    sink_k = sink + KELVIN_OFFSET
    return _as_result(sink_k / lift)


def heat_pump_cop(
    sink_temp_c,
    source_temp_c,
    quality_grade: float = HEAT_PUMP_QUALITY_GRADE,
    sink_approach_k: float = SINK_APPROACH_K,
    source_approach_k: float = SOURCE_APPROACH_K,
    cop_min: float = 1.0,
    cop_max: float = 8.0,
):
    """Coefficient of performance of a real heat pump from a quality grade on the Carnot COP.

    ``COP = g * T_cond / (T_cond - T_evap)`` with ``T_cond = T_sink + sink_approach`` and
    ``T_evap = T_source - source_approach`` in kelvin, clipped to ``[cop_min, cop_max]``. Where the refrigerant
    lift ``T_cond - T_evap`` is zero or negative (the source is warmer than the sink), the COP is ``cop_max``.

    Parameters
    ----------
    sink_temp_c : float or array_like
        Heat sink (supply or flow) temperature. [°C]
    source_temp_c : float or array_like
        Heat source temperature (outdoor air, groundwater). [°C] Broadcast against ``sink_temp_c``.
    quality_grade : float, default 0.5
        Share of the Carnot COP the machine reaches, in (0, 1]. [-]
    sink_approach_k : float, default 3.0
        Condensing temperature above the sink temperature, >= 0. [K]
    source_approach_k : float, default 5.0
        Evaporating temperature below the source temperature, >= 0. [K]
        The defaults are those of a blank cell in ``technologies.csv`` (:mod:`engine.scenario.defaults`).
    cop_min : float, default 1.0
        Lower clip of the COP, > 0. [-]
    cop_max : float, default 8.0
        Upper clip of the COP, >= ``cop_min``. [-]

    Returns
    -------
    float or numpy.ndarray
        COP in heating (heat delivered per unit of electricity). [-]

    Raises
    ------
    ValueError
        If a temperature is not finite, or a parameter is outside the ranges above.

    Notes
    -----
    A single grade over the whole operating range is a screening simplification: real machines lose grade at
    part load, at very small and very large lifts, and with defrosting (air source).

    References
    ----------
    .. [1] Carnot, S. (1824). Réflexions sur la puissance motrice du feu et sur les machines propres à
       développer cette puissance. Bachelier, Paris.
    .. [2] Baehr, H. D. and Kabelac, S. (2016). Thermodynamik: Grundlagen und technische Anwendungen, 16th ed.
       Springer Vieweg, Berlin.
    """
    grade = _finite_scalar(quality_grade, "quality_grade")
    if not 0.0 < grade <= 1.0:
        raise ValueError(f"quality_grade must lie in (0, 1]; got {grade:g}")
    sink_approach = _finite_scalar(sink_approach_k, "sink_approach_k")
    if sink_approach < 0.0:
        raise ValueError(f"sink_approach_k must be >= 0 K; got {sink_approach:g}")
    source_approach = _finite_scalar(source_approach_k, "source_approach_k")
    if source_approach < 0.0:
        raise ValueError(f"source_approach_k must be >= 0 K; got {source_approach:g}")
    low = _finite_scalar(cop_min, "cop_min")
    if low <= 0.0:
        raise ValueError(f"cop_min must be > 0; got {low:g}")
    high = _finite_scalar(cop_max, "cop_max")
    if high < low:
        raise ValueError(f"cop_max must be >= cop_min ({low:g}); got {high:g}")

    sink = _finite_array(sink_temp_c, "sink_temp_c")
    source = _finite_array(source_temp_c, "source_temp_c")
    sink, source = np.broadcast_arrays(sink, source)
    condensing_k = sink + sink_approach + KELVIN_OFFSET
    evaporating_k = source - source_approach + KELVIN_OFFSET
    if np.any(evaporating_k <= 0.0):
        raise ValueError("source_temp_c minus source_approach_k must lie above absolute zero")
    lift_k = condensing_k - evaporating_k
    positive = lift_k > 0.0
    safe_lift = np.where(positive, lift_k, 1.0)
    cop = np.where(positive, grade * condensing_k / safe_lift, high)
    return _as_result(np.clip(cop, low, high))
