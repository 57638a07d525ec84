"""Annualised costs by the annuity method, and levelised cost of heat.

An investment is turned into a constant annual payment over its economic lifetime at a real discount rate with
the annuity (capital recovery) factor ``a = i (1 + i)^n / ((1 + i)^n - 1)``. Dividing the annual cost by the
annual energy gives the levelised cost of heat.

These are screening figures for comparing options; an investment decision needs a full economic appraisal
(taxes, financing, price paths, subsidies' terms) by a qualified professional.

References
----------
.. [1] VDI 2067 Blatt 1 (2012). Wirtschaftlichkeit gebäudetechnischer Anlagen - Grundlagen und
   Kostenberechnung (Economic efficiency of building installations - Fundamentals and economic calculation).
   Verein Deutscher Ingenieure, Düsseldorf.
"""

from __future__ import annotations

import numpy as np


def _finite_array(value, name: str) -> np.ndarray:
    array = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite; got a NaN or infinite value")
    return array


def _as_result(array: np.ndarray):
    return array[()] if array.ndim == 0 else array


def annuity_factor(discount_rate, lifetime_a):
    """Annuity (capital recovery) factor.

    ``a = i (1 + i)^n / ((1 + i)^n - 1)``, and ``a = 1 / n`` at ``i = 0``.

    Parameters
    ----------
    discount_rate : float or array_like
        Real discount (interest) rate per year, > -1 (0.05 for 5 %). [1/a]
    lifetime_a : float or array_like
        Economic lifetime, > 0; need not be a whole number. [a] Broadcast against ``discount_rate``.

    Returns
    -------
    float or numpy.ndarray
        Share of the investment paid each year. [1/a]

    Raises
    ------
    ValueError
        If ``discount_rate`` is not finite or <= -1, or ``lifetime_a`` is not finite or <= 0.

    Notes
    -----
    Written as ``i / (1 - (1 + i)^-n)`` and evaluated with ``log1p`` and ``expm1``, so that it stays accurate
    for rates very close to 0 and tends smoothly to ``1 / n``.

    References
    ----------
    .. [1] VDI 2067 Blatt 1 (2012). Wirtschaftlichkeit gebäudetechnischer Anlagen - Grundlagen und
       Kostenberechnung. Verein Deutscher Ingenieure, Düsseldorf (annuity method).
    """
    rate = _finite_array(discount_rate, "discount_rate")
    if np.any(rate <= -1.0):
        raise ValueError(f"discount_rate must be > -1; got {float(np.min(rate)):g}")
    lifetime = _finite_array(lifetime_a, "lifetime_a")
    if np.any(lifetime <= 0.0):
        raise ValueError(f"lifetime_a must be > 0 years; got {float(np.min(lifetime)):g}")
    rate, lifetime = np.broadcast_arrays(rate, lifetime)
    zero = rate == 0.0
    safe_rate = np.where(zero, 1.0, rate)
    # 1 - (1 + i)^-n = -expm1(-n * log1p(i))
    factor = safe_rate / -np.expm1(-lifetime * np.log1p(safe_rate))
    return _as_result(np.where(zero, 1.0 / lifetime, factor))


def annualised_investment_eur_per_a(investment_eur, discount_rate, lifetime_a):
    """Constant annual payment that repays an investment over its lifetime (annuity method).

    Parameters
    ----------
    investment_eur : float or array_like
        Investment, >= 0. [€] (a specific investment in €/kW gives €/(kW a)).
    discount_rate : float or array_like
        Real discount rate per year, > -1. [1/a]
    lifetime_a : float or array_like
        Economic lifetime, > 0. [a]

    Returns
    -------
    float or numpy.ndarray
        Annual capital cost. [€/a]

    Raises
    ------
    ValueError
        If ``investment_eur`` is negative or not finite, or the rate or lifetime are invalid (see
        :func:`annuity_factor`).

    References
    ----------
    .. [1] VDI 2067 Blatt 1 (2012). Wirtschaftlichkeit gebäudetechnischer Anlagen - Grundlagen und
       Kostenberechnung. Verein Deutscher Ingenieure, Düsseldorf (annuity method).
    """
    investment = _finite_array(investment_eur, "investment_eur")
    if np.any(investment < 0.0):
        raise ValueError(f"investment_eur must be >= 0 €; got {float(np.min(investment)):g}")
    factor = np.asarray(annuity_factor(discount_rate, lifetime_a))
    return _as_result(investment * factor)


def levelised_cost_eur_per_mwh(annual_cost_eur, annual_energy_mwh):
    """Levelised cost: annual cost per unit of energy delivered in the year.

    Parameters
    ----------
    annual_cost_eur : float or array_like
        Annual cost, annuity of investment plus operation. [€/a]
    annual_energy_mwh : float or array_like
        Energy delivered per year, >= 0. [MWh/a]

    Returns
    -------
    float or numpy.ndarray
        Levelised cost; NaN where ``annual_energy_mwh`` is 0 (no energy, no cost per unit). [€/MWh]

    Raises
    ------
    ValueError
        If an input is not finite, or ``annual_energy_mwh`` is negative.

    References
    ----------
    .. [1] VDI 2067 Blatt 1 (2012). Wirtschaftlichkeit gebäudetechnischer Anlagen - Grundlagen und
       Kostenberechnung. Verein Deutscher Ingenieure, Düsseldorf.
    """
    cost = _finite_array(annual_cost_eur, "annual_cost_eur")
    energy = _finite_array(annual_energy_mwh, "annual_energy_mwh")
    if np.any(energy < 0.0):
        raise ValueError(f"annual_energy_mwh must be >= 0 MWh/a; got {float(np.min(energy)):g}")
    cost, energy = np.broadcast_arrays(cost, energy)
    positive = energy > 0.0
    return _as_result(np.where(positive, cost / np.where(positive, energy, 1.0), np.nan))
