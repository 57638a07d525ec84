"""Tests of engine.physics.wells (thermal power, spreads and seasonal groundwater temperature of one doublet)."""

import numpy as np
import pytest

import iapws

from engine.physics.wells import (
    flow_m3_per_h_to_kg_s,
    groundwater_temp_series_c,
    usable_spread_cooling_k,
    usable_spread_heating_k,
    well_thermal_power_kw,
)


def _iapws(temp_c):
    return iapws.IAPWS95(T=temp_c + 273.15, P=0.101325)


@pytest.mark.parametrize("temp_c", [8.0, 11.0, 14.0])
def test_power_is_mass_flow_times_cp_times_spread(temp_c):
    """P = m_dot * c_p * dT with c_p of IAPWS-95 at the groundwater temperature (iapws package): 20 kg/s over
    4 K is about 335 kW."""
    expected_kw = 20.0 * _iapws(temp_c).cp * 1000.0 * 4.0 / 1000.0
    assert well_thermal_power_kw(20.0, 4.0, temp_c) == pytest.approx(expected_kw, rel=1e-5)


def test_power_vectorised_over_hours():
    """An hourly temperature series gives an hourly power series, each matching IAPWS-95 c_p (iapws)."""
    temps = np.array([6.0, 10.0, 16.0])
    power = well_thermal_power_kw(np.array([5.0, 10.0, 15.0]), 3.0, temps)
    expected = [f * _iapws(t).cp * 3.0 for f, t in zip([5.0, 10.0, 15.0], temps)]
    np.testing.assert_allclose(power, expected, rtol=1e-5)


def test_volume_flow_to_mass_flow_uses_density():
    """100 m³/h at 10 °C is 100 * rho / 3600 kg/s with rho from IAPWS-95 (iapws): about 27.77 kg/s."""
    expected = 100.0 * _iapws(10.0).rho / 3600.0
    assert flow_m3_per_h_to_kg_s(100.0, 10.0) == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize(
    "function, kwargs, name",
    [
        (well_thermal_power_kw, {"flow_kg_s": -1.0, "spread_k": 3.0, "temp_c": 10.0}, "flow_kg_s"),
        (well_thermal_power_kw, {"flow_kg_s": 1.0, "spread_k": -3.0, "temp_c": 10.0}, "spread_k"),
        (well_thermal_power_kw, {"flow_kg_s": 1.0, "spread_k": 3.0, "temp_c": -2.0}, "temp_c"),
        (flow_m3_per_h_to_kg_s, {"flow_m3_per_h": np.nan, "temp_c": 10.0}, "flow_m3_per_h"),
    ],
)
def test_bad_flow_inputs_raise_naming_argument(function, kwargs, name):
    """Negative or non-finite flows and spreads, or temperatures outside 0..100 °C, raise ValueError naming
    the argument (project rule)."""
    with pytest.raises(ValueError, match=name):
        function(**kwargs)


def test_heating_spread_limited_by_design_and_reinjection_window():
    """Heating: dT = min(design, T_gw - T_min), at least 0 (reinjection window, design doc section 2).
    12 °C groundwater, 4.5 °C limit: a 5 K design is usable in full; at 7 °C only 2.5 K; at 4 °C none."""
    spread = usable_spread_heating_k(np.array([12.0, 7.0, 4.5, 4.0]), 5.0, 4.5)
    np.testing.assert_allclose(spread, [5.0, 2.5, 0.0, 0.0])


def test_cooling_spread_limited_by_design_and_reinjection_window():
    """Cooling: dT = min(design, T_max - T_gw), at least 0 (reinjection window, design doc section 2).
    20 °C limit: 12 °C groundwater allows the 6 K design, 17 °C only 3 K, 21 °C none."""
    spread = usable_spread_cooling_k(np.array([12.0, 17.0, 20.0, 21.0]), 6.0, 20.0)
    np.testing.assert_allclose(spread, [6.0, 3.0, 0.0, 0.0])


def test_reinjection_temperature_stays_in_window():
    """Reinjected water T_gw -/+ dT never leaves the window [4.5, 20] °C for any groundwater temperature in it
    (the purpose of the limits, common practice window)."""
    groundwater = np.linspace(4.5, 20.0, 200)
    heating = usable_spread_heating_k(groundwater, 6.0, 4.5)
    cooling = usable_spread_cooling_k(groundwater, 6.0, 20.0)
    assert np.all(groundwater - heating >= 4.5 - 1e-12)
    assert np.all(groundwater + cooling <= 20.0 + 1e-12)
    assert np.all((heating <= 6.0) & (cooling <= 6.0))


def test_negative_design_spread_raises():
    """A negative design spread is meaningless: ValueError naming design_spread_k."""
    with pytest.raises(ValueError, match="design_spread_k"):
        usable_spread_heating_k(10.0, -1.0, 4.5)
    with pytest.raises(ValueError, match="design_spread_k"):
        usable_spread_cooling_k(10.0, -1.0, 20.0)


@pytest.mark.parametrize("n_hours, coldest_day", [(8760, 45), (8784, 60), (8760, 1)])
def test_sinusoid_minimum_at_noon_of_coldest_day(n_hours, coldest_day):
    """The seasonal curve has its minimum mean - amplitude at noon of the given 1-based day, and its maximum
    mean + amplitude half a period later (definition of the sinusoid)."""
    series = groundwater_temp_series_c(11.0, 2.5, coldest_day, n_hours)
    assert series.shape == (n_hours,)
    coldest_hour = (coldest_day - 1) * 24 + 12
    assert int(np.argmin(series)) == coldest_hour
    assert series.min() == pytest.approx(11.0 - 2.5, abs=1e-12)
    assert int(np.argmax(series)) == (coldest_hour + n_hours // 2) % n_hours
    assert series.max() == pytest.approx(11.0 + 2.5, abs=1e-12)
    assert series.mean() == pytest.approx(11.0, abs=1e-9)


def test_sinusoid_with_zero_amplitude_is_constant():
    """Amplitude 0 means a constant groundwater temperature (input format: '0 for constant')."""
    np.testing.assert_array_equal(groundwater_temp_series_c(10.5, 0.0, 100, 8760), np.full(8760, 10.5))


def test_sinusoid_one_column_per_well():
    """Parameters for three wells give an (n_hours, 3) table whose columns equal the single-well series."""
    table = groundwater_temp_series_c(np.array([10.0, 11.0, 12.0]), np.array([1.0, 2.0, 0.5]),
                                      np.array([30, 50, 70]), 8760)
    assert table.shape == (8760, 3)
    np.testing.assert_array_equal(table[:, 1], groundwater_temp_series_c(11.0, 2.0, 50, 8760))


@pytest.mark.parametrize(
    "kwargs, name",
    [
        ({"amplitude_k": -1.0}, "amplitude_k"),
        ({"coldest_day_of_year": 0}, "coldest_day_of_year"),
        ({"coldest_day_of_year": 367}, "coldest_day_of_year"),
        ({"mean_temp_c": np.nan}, "mean_temp_c"),
        ({"n_hours": 0}, "n_hours"),
        ({"n_hours": 87.5}, "n_hours"),
    ],
)
def test_sinusoid_bad_input_raises_naming_argument(kwargs, name):
    """Bad parameters raise ValueError naming the argument (project rule)."""
    arguments = {"mean_temp_c": 10.0, "amplitude_k": 1.0, "coldest_day_of_year": 40, "n_hours": 8760}
    arguments.update(kwargs)
    with pytest.raises(ValueError, match=name):
        groundwater_temp_series_c(**arguments)
