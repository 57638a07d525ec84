"""Tests of engine.physics.heatpump (Carnot COP and the quality-grade COP model)."""

import numpy as np
import pytest

from engine.physics.heatpump import carnot_cop_heating, heat_pump_cop


def test_carnot_cop_35_over_10_c():
    """Carnot COP = T_sink / (T_sink - T_source) in kelvin (Carnot 1824): 35 °C / 10 °C gives 308.15 / 25."""
    assert carnot_cop_heating(35.0, 10.0) == pytest.approx(308.15 / 25.0, rel=1e-12)


def test_carnot_cop_vectorised_and_broadcast():
    """Arrays broadcast: sinks 35, 55 °C over sources 0, 10 °C give 308.15/35, 328.15/45 (Carnot formula)."""
    result = carnot_cop_heating(np.array([35.0, 55.0]), np.array([0.0, 10.0]))
    np.testing.assert_allclose(result, [308.15 / 35.0, 328.15 / 45.0], rtol=1e-12)
    assert carnot_cop_heating(np.array([35.0, 45.0]), 5.0).shape == (2,)


@pytest.mark.parametrize("sink, source", [(10.0, 10.0), (5.0, 10.0), ([40.0, 8.0], [10.0, 10.0])])
def test_carnot_rejects_non_positive_lift(sink, source):
    """The Carnot COP is undefined for T_sink <= T_source: ValueError naming sink_temp_c."""
    with pytest.raises(ValueError, match="sink_temp_c"):
        carnot_cop_heating(sink, source)


def test_water_to_water_rating_point_w10_w35_is_in_datasheet_range():
    """W10/W35 (EN 14511 rating conditions: water source 10 °C in, sink 35 °C out) with grade 0.5 and the
    default approaches (sink 3 K, source 5 K) lies within COP 4.5 to 6.5, the range of typical water-to-water heat pumps
    at that rating point (from memory of manufacturers' datasheets and heat-pump test-centre results)."""
    cop = heat_pump_cop(35.0, 10.0, quality_grade=0.5)
    assert 4.5 <= cop <= 6.5


def test_cop_is_grade_times_carnot_of_approach_temperatures():
    """COP = g * Carnot(T_sink + sink approach, T_source - source approach) (model definition, design doc
    section 2; Carnot formula evaluated independently here) with the documented defaults of a blank cell
    (docs/input_format.md, table "Defaults": grade 0.5, sink approach 3 K, source approach 5 K)."""
    expected = 0.5 * (35.0 + 3.0 + 273.15) / ((35.0 + 3.0) - (10.0 - 5.0))
    assert heat_pump_cop(35.0, 10.0) == pytest.approx(expected, rel=1e-12)


def test_cop_falls_as_lift_rises():
    """For a fixed source, a higher supply temperature (larger lift) gives a lower COP (thermodynamics: the
    Carnot COP falls with the lift)."""
    sinks = np.linspace(30.0, 70.0, 41)
    cop = heat_pump_cop(sinks, 5.0, quality_grade=0.5, cop_max=50.0)
    assert np.all(np.diff(cop) < 0.0)


def test_cop_is_clipped_to_bounds():
    """Small lifts are capped at cop_max, huge lifts floored at cop_min (clipping is part of the model)."""
    cop = heat_pump_cop(np.array([20.0, 300.0]), np.array([18.0, -30.0]), quality_grade=0.5, cop_min=1.5,
                        cop_max=7.0)
    np.testing.assert_allclose(cop, [7.0, 1.5])


def test_non_positive_lift_gives_cop_max():
    """Where the source (minus its approach) is warmer than the sink (plus its approach), the COP is cop_max."""
    cop = heat_pump_cop(np.array([20.0, 35.0]), np.array([40.0, 10.0]), cop_max=6.0)
    assert cop[0] == 6.0
    assert 1.0 < cop[1] < 6.0


def test_cop_shape_follows_broadcast_of_inputs():
    """An hourly source series against one supply temperature gives an hourly COP series (vectorisation)."""
    source = np.linspace(-10.0, 15.0, 8760)
    cop = heat_pump_cop(55.0, source)
    assert cop.shape == (8760,)
    assert np.all(np.diff(cop) >= 0.0)


@pytest.mark.parametrize(
    "kwargs, name",
    [
        ({"quality_grade": 0.0}, "quality_grade"),
        ({"quality_grade": 1.2}, "quality_grade"),
        ({"sink_approach_k": -1.0}, "sink_approach_k"),
        ({"source_approach_k": np.nan}, "source_approach_k"),
        ({"cop_min": 0.0}, "cop_min"),
        ({"cop_min": 5.0, "cop_max": 4.0}, "cop_max"),
        ({"sink_temp_c": np.nan}, "sink_temp_c"),
        ({"source_temp_c": [10.0, np.inf]}, "source_temp_c"),
    ],
)
def test_bad_parameters_raise_naming_argument(kwargs, name):
    """Out-of-range parameters raise ValueError naming the argument (project rule)."""
    arguments = {"sink_temp_c": 35.0, "source_temp_c": 10.0}
    arguments.update(kwargs)
    with pytest.raises(ValueError, match=name):
        heat_pump_cop(**arguments)
