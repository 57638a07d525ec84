"""Tests of engine.physics.demand (degree-hour demand profiles)."""

import numpy as np
import pytest

from engine.physics.demand import cooling_demand_profile_kw, heat_demand_profile_kw, hot_water_daily_shape


def _synthetic_year(n_hours=8760):
    """A central-European-like outdoor temperature year: 10 °C mean, 10 K seasonal and 4 K daily swing."""
    hours = np.arange(n_hours)
    seasonal = -10.0 * np.cos(2.0 * np.pi * (hours - 20 * 24) / n_hours)
    daily = -4.0 * np.cos(2.0 * np.pi * (hours % 24 - 3) / 24.0)
    return 10.0 + seasonal + daily


def test_hot_water_shape_has_24_factors_with_mean_one():
    """The daily hot-water shape has 24 hourly factors averaging 1 (definition of a shape factor)."""
    shape = hot_water_daily_shape()
    assert shape.shape == (24,)
    assert shape.mean() == pytest.approx(1.0, rel=1e-12)
    assert np.all(shape > 0.0)


def test_hot_water_shape_peaks_morning_and_evening():
    """Draw peaks in the morning (06-09 h) and evening (17-21 h) over a low night (common practice shape)."""
    shape = hot_water_daily_shape()
    night = shape[0:5].max()
    assert shape[6:9].max() > 1.5 * night and shape[17:21].max() > 1.5 * night
    assert shape[6:9].max() > shape[11:16].max() and shape[17:21].max() > shape[11:16].max()


@pytest.mark.parametrize("n_hours", [8760, 8784])
def test_heat_profile_sums_to_annual(n_hours):
    """The hourly series (kW for 1 h each) sums to the annual figure in kWh (degree-hour method, CIBSE TM41)."""
    profile = heat_demand_profile_kw(1234.5, _synthetic_year(n_hours))
    assert profile.shape == (n_hours,)
    assert profile.sum() == pytest.approx(1234.5 * 1000.0, rel=1e-12)
    assert np.all(profile >= 0.0)


def test_no_space_heating_at_or_above_base_temperature():
    """With hot_water_share = 0 the demand is 0 where T_out >= base and positive below (degree-hour method)."""
    temps = _synthetic_year()
    profile = heat_demand_profile_kw(500.0, temps, hot_water_share=0.0, base_temp_c=15.0)
    assert np.all(profile[temps >= 15.0] == 0.0)
    assert np.all(profile[temps < 15.0] > 0.0)


def test_space_heating_proportional_to_degree_hours_hand_example():
    """Two days at base 15 °C: day 1 at 5 °C (10 K below), day 2 at 10 °C (5 K below), no hot water. Degree
    hours 240 and 120, so 100 MWh split 2/3 : 1/3 and each hour of day 1 gets 100 000 kWh * 10 / 360 (hand
    calculation of the degree-hour method)."""
    temps = np.concatenate([np.full(24, 5.0), np.full(24, 10.0)])
    profile = heat_demand_profile_kw(100.0, temps, hot_water_share=0.0)
    np.testing.assert_allclose(profile[:24], 100_000.0 * 10.0 / 360.0, rtol=1e-12)
    np.testing.assert_allclose(profile[24:], 100_000.0 * 5.0 / 360.0, rtol=1e-12)


def test_hot_water_share_is_drawn_alike_every_day_in_daily_shape():
    """On summer days (all hours above base) only hot water remains: each day carries share * annual / n_days
    and follows the daily shape (definition of the hot-water part)."""
    temps = _synthetic_year()
    annual_mwh, share = 800.0, 0.2
    profile = heat_demand_profile_kw(annual_mwh, temps, hot_water_share=share).reshape(365, 24)
    warm_days = np.all(temps.reshape(365, 24) >= 15.0, axis=1)
    assert warm_days.sum() > 30
    expected_day_kwh = share * annual_mwh * 1000.0 / 365.0
    np.testing.assert_allclose(profile[warm_days].sum(axis=1), expected_day_kwh, rtol=1e-12)
    np.testing.assert_allclose(profile[warm_days][0], expected_day_kwh / 24.0 * hot_water_daily_shape(),
                               rtol=1e-12)


def test_space_heating_share_matches_one_minus_hot_water_share():
    """Subtracting the hot-water part (share * annual, daily shape) leaves (1 - share) * annual of space
    heating, all of it in hours below the base (definition of the split)."""
    temps = _synthetic_year()
    share = 0.3
    profile = heat_demand_profile_kw(1000.0, temps, hot_water_share=share)
    hot_water = np.tile(hot_water_daily_shape(), 365) * share * 1_000_000.0 / 8760.0
    space = profile - hot_water
    assert space.sum() == pytest.approx((1.0 - share) * 1_000_000.0, rel=1e-10)
    np.testing.assert_allclose(space[temps >= 15.0], 0.0, atol=1e-9)


def test_without_heating_degree_hours_space_heating_follows_hot_water_shape():
    """A year entirely above the base: the whole demand follows the hot-water shape and still sums to the
    annual figure (documented fallback)."""
    temps = np.full(8760, 22.0)
    profile = heat_demand_profile_kw(365.0, temps, hot_water_share=0.15)
    assert profile.sum() == pytest.approx(365_000.0, rel=1e-12)
    np.testing.assert_allclose(profile[:24], 1000.0 / 24.0 * hot_water_daily_shape(), rtol=1e-12)


def test_zero_annual_gives_zeros():
    """An annual demand of 0 gives an all-zero profile (sum must equal the annual figure)."""
    assert not np.any(heat_demand_profile_kw(0.0, _synthetic_year()))
    assert not np.any(cooling_demand_profile_kw(0.0, _synthetic_year()))


@pytest.mark.parametrize(
    "kwargs, name",
    [
        ({"annual_mwh": -1.0}, "annual_mwh"),
        ({"annual_mwh": np.nan}, "annual_mwh"),
        ({"hot_water_share": -0.1}, "hot_water_share"),
        ({"hot_water_share": 1.1}, "hot_water_share"),
        ({"outdoor_temp_c": np.r_[np.zeros(47), np.nan]}, "outdoor_temp_c"),
        ({"outdoor_temp_c": np.zeros(8761)}, "outdoor_temp_c"),
        ({"outdoor_temp_c": np.zeros((365, 24))}, "outdoor_temp_c"),
        ({"base_temp_c": np.inf}, "base_temp_c"),
    ],
)
def test_heat_profile_bad_input_raises_naming_argument(kwargs, name):
    """Bad inputs raise ValueError naming the argument (project rule)."""
    arguments = {"annual_mwh": 100.0, "outdoor_temp_c": np.zeros(48)}
    arguments.update(kwargs)
    with pytest.raises(ValueError, match=name):
        heat_demand_profile_kw(**arguments)


def test_nan_temperature_message_names_the_hour():
    """The error for a missing temperature names the first bad hour, so a planner can find the row."""
    temps = np.zeros(48)
    temps[30] = np.nan
    with pytest.raises(ValueError, match="hour 30"):
        heat_demand_profile_kw(10.0, temps)


@pytest.mark.parametrize("n_hours", [8760, 8784])
def test_cooling_profile_sums_to_annual_and_follows_degree_hours(n_hours):
    """Cooling is proportional to max(0, T_out - base) and sums to the annual figure (cooling-degree-hour
    method, CIBSE TM41)."""
    temps = _synthetic_year(n_hours)
    profile = cooling_demand_profile_kw(42.0, temps, base_temp_c=20.0)
    assert profile.sum() == pytest.approx(42_000.0, rel=1e-12)
    assert np.all(profile[temps <= 20.0] == 0.0)
    hot = temps > 20.0
    ratio = profile[hot] / (temps[hot] - 20.0)
    np.testing.assert_allclose(ratio, ratio[0], rtol=1e-12)


def test_cooling_without_degree_hours_spreads_over_daytime():
    """No hour above the base but a positive annual figure: spread evenly over 08:00-18:00 each day
    (documented fallback), 10 h a day."""
    temps = np.full(48, 10.0)
    profile = cooling_demand_profile_kw(2.0, temps).reshape(2, 24)
    np.testing.assert_allclose(profile[:, 8:18], 2000.0 / 20.0, rtol=1e-12)
    assert not np.any(profile[:, :8]) and not np.any(profile[:, 18:])


@pytest.mark.parametrize(
    "kwargs, name",
    [({"annual_mwh": -5.0}, "annual_mwh"), ({"outdoor_temp_c": np.zeros(25)}, "outdoor_temp_c"),
     ({"base_temp_c": np.nan}, "base_temp_c")],
)
def test_cooling_bad_input_raises_naming_argument(kwargs, name):
    """Bad inputs raise ValueError naming the argument (project rule)."""
    arguments = {"annual_mwh": 10.0, "outdoor_temp_c": np.zeros(48)}
    arguments.update(kwargs)
    with pytest.raises(ValueError, match=name):
        cooling_demand_profile_kw(**arguments)
