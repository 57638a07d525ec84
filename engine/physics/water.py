"""Properties of liquid water at groundwater temperatures.

Density and isobaric specific heat capacity of liquid water at atmospheric pressure (0.101325 MPa), as needed to
turn a pumping rate into a mass flow and a mass flow into a thermal power. The functions are polynomial fits in
``t / 100 °C`` of values computed from the IAPWS-95 formulation. The fit covers 0 °C to 99.9 °C (the liquid
range at atmospheric pressure; 100 °C itself lies 0.03 K above the boiling point and is a slight extrapolation).
Against IAPWS-95 the relative deviation over 0 °C to 99.9 °C is below 1e-7 for the density and below 1e-6 for the
specific heat, well below the stated uncertainty of the formulation itself for the liquid at these conditions
(of the order of 1e-6 in density and 1e-3 in specific heat, Wagner & Pruß 2002; figures quoted from memory).
Pressure matters little at the depth of a shallow aquifer: at 10 °C, 4 bar (0.4 MPa) above atmospheric raise
the density by 1.9e-4 and lower the specific heat by 3.6e-4 (IAPWS-95), so one isobar serves for all wells.

The coefficients were obtained once by a least-squares fit of 1000 IAPWS-95 states (every 0.1 K from 0 °C to
99.9 °C); the runtime does not need an IAPWS implementation.

References
----------
.. [1] Wagner, W. and Pruß, A. (2002). The IAPWS formulation 1995 for the thermodynamic properties of ordinary
   water substance for general and scientific use. Journal of Physical and Chemical Reference Data 31(2),
   387-535.
.. [2] IAPWS R6-95(2018). Revised release on the IAPWS formulation 1995 for the thermodynamic properties of
   ordinary water substance for general and scientific use. International Association for the Properties of
   Water and Steam.
"""

from __future__ import annotations

import numpy as np

WATER_TEMP_MIN_C = 0.0
"""Lowest temperature accepted by the property functions [°C]."""
WATER_TEMP_MAX_C = 100.0
"""Highest temperature accepted by the property functions [°C]."""

# Coefficients of the power series in x = t / 100 °C, lowest order first. Least-squares fits of IAPWS-95 at
# 0.101325 MPa over 0 °C to 99.9 °C (see the module docstring).
_DENSITY_COEFFS_KG_PER_M3 = np.array(
    [
        999.8431553309689,
        6.766352049970583,
        -90.76081142722764,
        103.2612933951239,
        -146.48109308299348,
        186.9375000546573,
        -185.98765063136395,
        127.5130810820888,
        -52.296592574310786,
        9.553818242288838,
    ]
)
_SPECIFIC_HEAT_COEFFS_J_PER_KG_K = np.array(
    [
        4219.442157786399,
        -345.5270486473801,
        1299.2113559793581,
        -3350.2464400975364,
        7503.496443721675,
        -14237.434973859283,
        21001.907008403043,
        -21959.866970962863,
        15014.344759588696,
        -5976.261280662321,
        1046.610383563079,
    ]
)


def _checked_temperature(temp_c, name: str) -> np.ndarray:
    temp = np.asarray(temp_c, dtype=float)
    if not np.all(np.isfinite(temp)):
        raise ValueError(f"{name} must be finite; got a NaN or infinite value")
    if np.any(temp < WATER_TEMP_MIN_C) or np.any(temp > WATER_TEMP_MAX_C):
        low, high = float(np.min(temp)), float(np.max(temp))
        raise ValueError(
            f"{name} must lie between {WATER_TEMP_MIN_C:g} °C and {WATER_TEMP_MAX_C:g} °C (liquid water at "
            f"atmospheric pressure); got values from {low:g} °C to {high:g} °C"
        )
    return temp


def _evaluate(coeffs: np.ndarray, temp: np.ndarray):
    result = np.polynomial.polynomial.polyval(temp / 100.0, coeffs)
    return result[()] if np.ndim(result) == 0 else result


def water_density_kg_per_m3(temp_c):
    """Density of liquid water at atmospheric pressure.

    Parameters
    ----------
    temp_c : float or array_like
        Water temperature. [°C], 0 to 100.

    Returns
    -------
    float or numpy.ndarray
        Density, same shape as ``temp_c``. [kg/m³]

    Raises
    ------
    ValueError
        If ``temp_c`` is not finite or lies outside 0 °C to 100 °C.

    Notes
    -----
    Polynomial of degree 9 in ``t / 100 °C`` fitted to IAPWS-95 at 0.101325 MPa; relative deviation from
    IAPWS-95 below 1e-7 over 0 °C to 99.9 °C.

    References
    ----------
    .. [1] Wagner, W. and Pruß, A. (2002). The IAPWS formulation 1995 for the thermodynamic properties of
       ordinary water substance for general and scientific use. Journal of Physical and Chemical Reference Data
       31(2), 387-535.
    """
    temp = _checked_temperature(temp_c, "temp_c")
    return _evaluate(_DENSITY_COEFFS_KG_PER_M3, temp)


def water_specific_heat_j_per_kg_k(temp_c):
    """Isobaric specific heat capacity of liquid water at atmospheric pressure.

    Parameters
    ----------
    temp_c : float or array_like
        Water temperature. [°C], 0 to 100.

    Returns
    -------
    float or numpy.ndarray
        Specific heat capacity c_p, same shape as ``temp_c``. [J/(kg K)]

    Raises
    ------
    ValueError
        If ``temp_c`` is not finite or lies outside 0 °C to 100 °C.

    Notes
    -----
    Polynomial of degree 10 in ``t / 100 °C`` fitted to IAPWS-95 at 0.101325 MPa; relative deviation from
    IAPWS-95 below 1e-6 over 0 °C to 99.9 °C. c_p has its minimum of about 4178 J/(kg K) near 35 °C.

    References
    ----------
    .. [1] Wagner, W. and Pruß, A. (2002). The IAPWS formulation 1995 for the thermodynamic properties of
       ordinary water substance for general and scientific use. Journal of Physical and Chemical Reference Data
       31(2), 387-535.
    """
    temp = _checked_temperature(temp_c, "temp_c")
    return _evaluate(_SPECIFIC_HEAT_COEFFS_J_PER_KG_K, temp)
