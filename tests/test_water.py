"""Tests of engine.physics.water against IAPWS-95 as implemented by the ``iapws`` package."""

import numpy as np
import pytest

import iapws

from engine.physics.water import water_density_kg_per_m3, water_specific_heat_j_per_kg_k

ATMOSPHERIC_PRESSURE_MPA = 0.101325
RELATIVE_TOLERANCE = 1e-5


def _iapws_state(temp_c):
    return iapws.IAPWS95(T=temp_c + 273.15, P=ATMOSPHERIC_PRESSURE_MPA)


@pytest.mark.parametrize("temp_c", [5.0, 10.0, 15.0])
def test_density_matches_iapws95_at_groundwater_temperatures(temp_c):
    """Density at 5, 10, 15 °C equals IAPWS-95 (iapws.IAPWS95, 0.101325 MPa) within 1e-5 relative."""
    expected = _iapws_state(temp_c).rho
    assert water_density_kg_per_m3(temp_c) == pytest.approx(expected, rel=RELATIVE_TOLERANCE)


@pytest.mark.parametrize("temp_c", [5.0, 10.0, 15.0])
def test_specific_heat_matches_iapws95_at_groundwater_temperatures(temp_c):
    """c_p at 5, 10, 15 °C equals IAPWS-95 (iapws.IAPWS95 cp is in kJ/(kg K)) within 1e-5 relative."""
    expected = _iapws_state(temp_c).cp * 1000.0
    assert water_specific_heat_j_per_kg_k(temp_c) == pytest.approx(expected, rel=RELATIVE_TOLERANCE)


def test_sweep_1_to_30_c_matches_iapws95_vectorised():
    """An array 1..30 °C (off the fitting grid, every 0.37 K) matches IAPWS-95 within 1e-5 relative."""
    temps = np.arange(1.0, 30.0, 0.37)
    states = [_iapws_state(t) for t in temps]
    rho = water_density_kg_per_m3(temps)
    cp = water_specific_heat_j_per_kg_k(temps)
    assert rho.shape == temps.shape and cp.shape == temps.shape
    np.testing.assert_allclose(rho, [s.rho for s in states], rtol=RELATIVE_TOLERANCE)
    np.testing.assert_allclose(cp, [s.cp * 1000.0 for s in states], rtol=RELATIVE_TOLERANCE)


@pytest.mark.parametrize("temp_c", [0.0, 40.0, 70.0, 95.0])
def test_edges_and_warm_range_match_iapws95(temp_c):
    """Both properties at 0, 40, 70, 95 °C match IAPWS-95 (iapws) within 1e-5 relative."""
    state = _iapws_state(temp_c)
    assert water_density_kg_per_m3(temp_c) == pytest.approx(state.rho, rel=RELATIVE_TOLERANCE)
    assert water_specific_heat_j_per_kg_k(temp_c) == pytest.approx(state.cp * 1000.0, rel=RELATIVE_TOLERANCE)


def test_density_maximum_near_4_c():
    """Liquid water is densest near 3.98 °C (handbook fact, e.g. CRC Handbook of Chemistry and Physics)."""
    temps = np.linspace(0.0, 10.0, 1001)
    assert temps[np.argmax(water_density_kg_per_m3(temps))] == pytest.approx(3.98, abs=0.02)


def test_keeps_shape_of_2d_input():
    """A 2-D temperature array gives a 2-D result of the same shape (vectorisation, common practice)."""
    temps = np.full((3, 4), 12.0)
    assert water_density_kg_per_m3(temps).shape == (3, 4)
    assert water_specific_heat_j_per_kg_k(temps).shape == (3, 4)


@pytest.mark.parametrize("bad", [-0.5, 100.5, np.nan, [10.0, 120.0]])
def test_out_of_range_raises_naming_argument(bad):
    """Temperatures outside 0..100 °C or non-finite raise ValueError naming temp_c."""
    with pytest.raises(ValueError, match="temp_c"):
        water_density_kg_per_m3(bad)
    with pytest.raises(ValueError, match="temp_c"):
        water_specific_heat_j_per_kg_k(bad)
