"""Tests of engine.physics.economics (annuity method and levelised cost)."""

import numpy as np
import pytest

import numpy_financial as npf

from engine.physics.economics import annualised_investment_eur_per_a, annuity_factor, levelised_cost_eur_per_mwh


def test_annuity_matches_numpy_financial_pmt_over_a_grid():
    """The annuity factor equals -pmt(rate, n, 1) of numpy-financial (present value 1 repaid in n equal
    end-of-year payments) for rates -2 % .. 12 % and lifetimes 1 .. 50 a."""
    rates = np.array([-0.02, 0.0, 0.001, 0.03, 0.05, 0.08, 0.12])
    lifetimes = np.array([1.0, 5.0, 15.0, 20.0, 30.0, 50.0])
    rate_grid, life_grid = np.meshgrid(rates, lifetimes)
    expected = -npf.pmt(rate_grid, life_grid, 1.0)
    np.testing.assert_allclose(annuity_factor(rate_grid, life_grid), expected, rtol=1e-12)


def test_annuity_5_percent_20_years():
    """i = 5 %, n = 20 a gives 0.08024 to 5 decimals (annuity method, VDI 2067 part 1, 2012; value also in
    the design doc)."""
    assert round(float(annuity_factor(0.05, 20)), 5) == 0.08024


@pytest.mark.parametrize("lifetime", [1.0, 10.0, 25.0, 40.0])
def test_annuity_at_zero_rate_is_one_over_lifetime(lifetime):
    """Without interest the investment is repaid in equal shares: a = 1/n (limit of the annuity formula)."""
    assert annuity_factor(0.0, lifetime) == pytest.approx(1.0 / lifetime, rel=1e-15)


def test_annuity_is_continuous_near_zero_rate():
    """For tiny rates a = 1/n + i (n + 1) / (2 n) + O(i^2) (first-order series expansion of the annuity
    formula), without the cancellation a naive evaluation would suffer."""
    rate, n = 1e-9, 20.0
    assert annuity_factor(rate, n) == pytest.approx(1.0 / n + rate * (n + 1.0) / (2.0 * n), rel=1e-12)


def test_annuity_one_year_lifetime_is_one_plus_rate():
    """Over one year the investment plus one year's interest is paid back: a = 1 + i (annuity formula, n=1)."""
    assert annuity_factor(0.07, 1.0) == pytest.approx(1.07, rel=1e-14)


@pytest.mark.parametrize(
    "rate, lifetime, name",
    [(0.05, 0.0, "lifetime_a"), (0.05, -3.0, "lifetime_a"), (-1.0, 20.0, "discount_rate"),
     (np.nan, 20.0, "discount_rate"), (0.05, np.inf, "lifetime_a")],
)
def test_annuity_bad_input_raises_naming_argument(rate, lifetime, name):
    """Lifetime <= 0 or rate <= -1 (or non-finite values) raise ValueError naming the argument."""
    with pytest.raises(ValueError, match=name):
        annuity_factor(rate, lifetime)


def test_annualised_investment_is_investment_times_pmt():
    """1 M€ at 4 % over 25 a costs -pmt(0.04, 25, 1e6) per year (numpy-financial), vectorised over items."""
    investment = np.array([1e6, 2.5e5, 0.0])
    expected = -npf.pmt(0.04, 25, investment)
    np.testing.assert_allclose(annualised_investment_eur_per_a(investment, 0.04, 25), expected, rtol=1e-12)


def test_annualised_investment_negative_raises():
    """A negative investment raises ValueError naming investment_eur (project rule)."""
    with pytest.raises(ValueError, match="investment_eur"):
        annualised_investment_eur_per_a(-1.0, 0.05, 20)


def test_levelised_cost_and_nan_without_energy():
    """Levelised cost = annual cost / annual energy (definition, VDI 2067); NaN where no energy is delivered."""
    result = levelised_cost_eur_per_mwh(np.array([12_000.0, 500.0, 0.0]), np.array([100.0, 0.0, 0.0]))
    assert result[0] == pytest.approx(120.0)
    assert np.isnan(result[1]) and np.isnan(result[2])
    assert np.isnan(levelised_cost_eur_per_mwh(1.0, 0.0))


def test_levelised_cost_negative_energy_raises():
    """Negative energy is an input error: ValueError naming annual_energy_mwh (project rule)."""
    with pytest.raises(ValueError, match="annual_energy_mwh"):
        levelised_cost_eur_per_mwh(100.0, -1.0)
