"""Tests of engine.studies.interference: the plume superposition and the fixed-point loop over re-solves.

The plume of a continuous line source in uniform flow is checked against direct numerical quadrature (scipy
``quad``) of its defining time integral of instantaneous Gaussian puffs (Kinzelbach 1987, Numerische Methoden
zur Modellierung des Transports von Schadstoffen im Grundwasser; Carslaw and Jaeger 1959, Conduction of Heat
in Solids, section 10.4). The demo checks (a visible effect on the Rynwater line of doublets, convergence to
0.05 K) test the loop on the demo city of demo_data/.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import integrate
from shapely.geometry import Point, Polygon

sys.path.insert(0, str(Path(__file__).parent))

from test_groundwater import LAT, _lon, line_of_doublets  # noqa: E402

from engine.physics import coords  # noqa: E402
from engine.physics import plume  # noqa: E402
from engine.cli import main  # noqa: E402
from engine.studies.permits import net_injection  # noqa: E402
from engine.studies.interference import (  # noqa: E402
    SECONDS_PER_YEAR,
    interference_comparison,
    interference_matrix_for,
    plume_polygons,
    solve_with_interference,
    superposed_shift_k,
)
from engine.scenario import load_scenario, resolve_scenario_path  # noqa: E402
from engine.model.solve import solve_scenario  # noqa: E402

TINY_CITY = Path(__file__).parent / "fixtures" / "tiny_city"
DEMO_TYPICAL_DAYS = 6


def puff_integral_k(x_m, y_m, rate_m3_s, delta_k, aquifer, time_s):
    """Temperature change of a continuous line source by quadrature of the puff integral [K].

    T = m / (4 pi sqrt(D_L D_T)) * int_0^t exp(-(x - u s)^2 / (4 D_L s) - y^2 / (4 D_T s)) ds / s,
    m = C_w Q dT / (b C_a), u = q C_w / C_a, D = alpha u + lambda / C_a (Kinzelbach 1987). lambda = 2 W/(m K)
    is the conductivity the engine assumes (a handbook value quoted from memory in engine/physics/plume.py).
    """
    c_a = aquifer.aquifer_heat_capacity_mj_per_m3_k * 1e6
    c_w = aquifer.water_heat_capacity_mj_per_m3_k * 1e6
    q = aquifer.darcy_velocity_m_per_d / 86400.0
    u = q * c_w / c_a
    d_l = aquifer.longitudinal_dispersivity_m * u + 2.0 / c_a
    d_t = aquifer.transverse_dispersivity_m * u + 2.0 / c_a
    m = c_w * rate_m3_s * delta_k / (aquifer.saturated_thickness_m * c_a)

    def integrand(s):
        return np.exp(-((x_m - u * s) ** 2) / (4 * d_l * s) - y_m**2 / (4 * d_t * s)) / s

    peak = x_m / u if x_m > 0 else time_s / 2
    value, _ = integrate.quad(integrand, 0.0, time_s, points=[min(peak, time_s * 0.999)], limit=400, epsabs=0,
                              epsrel=1e-10)
    return m / (4 * np.pi * np.sqrt(d_l * d_t)) * value


@pytest.fixture(scope="module")
def line_case():
    scenario = line_of_doublets()
    result = solve_scenario(scenario)
    assert result.solved, result.message
    return scenario, result


@pytest.fixture(scope="module")
def demo_runs():
    scenario = load_scenario(resolve_scenario_path("demo"))
    with_interference = solve_with_interference(scenario, typical_days=DEMO_TYPICAL_DAYS, plume_levels_k=())
    without = solve_scenario(scenario, typical_days=DEMO_TYPICAL_DAYS)
    assert with_interference.solved and without.solved
    return scenario, with_interference, without


def test_shift_matches_quadrature_of_the_line_source(line_case):
    """The shift at the down-gradient extraction well equals the quadrature of the puff integral.

    Doublet wa reinjects 300 m up-gradient of wb's extraction, on the flow axis (x = 300 m, y = 0), with its
    annual net injection, after a one-year horizon (Kinzelbach 1987; scipy quad as the independent route).
    The up-gradient well wa sees nothing of wb's plume, which lies 400 m behind it against the flow.
    """
    scenario, result = line_case
    injection = net_injection(result).set_index("well_id").reindex(scenario.wells["well_id"])
    rate = injection["mean_flow_m3_per_s"].to_numpy()
    delta = injection["mean_injection_temp_change_k"].to_numpy()
    shift = superposed_shift_k(interference_matrix_for(scenario, 1.0), rate, delta)
    expected = puff_integral_k(300.0, 0.0, rate[0], delta[0], scenario.aquifer, SECONDS_PER_YEAR)
    assert delta[0] < 0 and -abs(delta[0]) < expected < -0.1  # a cold plume, not clipped
    assert shift[1] == pytest.approx(expected, rel=1e-4)
    assert abs(shift[0]) < 1e-6


def test_superposition_is_linear_in_each_source():
    """Two plumes add up (linearity of the line-source model, Kinzelbach 1987) and zero flow adds nothing."""
    matrix = np.array([[0.0, 20.0, 30.0], [0.0, 0.0, 25.0], [0.0, 0.0, 0.0]])
    rate = np.array([0.01, 0.02, 0.0])
    delta = np.array([-3.0, -2.0, -4.0])
    both = superposed_shift_k(matrix, rate, delta)
    first = superposed_shift_k(matrix, rate * [1, 0, 0], delta)
    second = superposed_shift_k(matrix, rate * [0, 1, 0], delta)
    np.testing.assert_allclose(both, first + second)
    np.testing.assert_allclose(first, [0.0, -0.6, -0.9])  # 20 * 0.01 * 3 and 30 * 0.01 * 3
    np.testing.assert_array_equal(superposed_shift_k(matrix, np.zeros(3), delta), np.zeros(3))


def test_zero_flow_gives_zero_shift():
    """With no heat demand the wells stay idle: no plume, no shift, converged at the first solve."""
    scenario = line_of_doublets(heat_kw=(0.0, 0.0))
    result = solve_with_interference(scenario, plume_levels_k=(1.0,))
    info = result.extras["interference"]
    assert info["converged"] is True
    assert len(info["iterations"]) == 1
    assert info["iterations"][0]["max_shift_k"] == 0.0
    assert (result.tables["wells"]["source_temp_shift_k"] == 0.0).all()
    assert result.tables["plumes"].empty


def test_under_relaxation_takes_the_given_share_of_the_step(line_case):
    """With relaxation 0.5 the second solve uses half the shift the first solve implies (damped iteration)."""
    scenario, _ = line_case
    result = solve_with_interference(scenario, relaxation=0.5, max_iterations=2, plume_levels_k=())
    first, second = result.extras["interference"]["iterations"]
    assert first["largest_source_shift_k"] == 0.0
    assert second["largest_source_shift_k"] == pytest.approx(0.5 * first["max_shift_k"], rel=1e-12)
    assert result.extras["interference"]["converged"] is False


def test_plume_outline_agrees_with_the_quadrature(line_case):
    """The 1 K isotherm encloses wb's extraction well, where the quadrature gives about 2 K, and the 3 K one
    does not; a point 1.5 km down-gradient (beyond the thermal front after a year) lies outside both."""
    scenario, _ = line_case
    result = solve_with_interference(scenario, max_iterations=1, plume_levels_k=(1.0, 3.0))
    injection = net_injection(result).set_index("well_id")
    at_wb = puff_integral_k(300.0, 0.0, injection.loc["wa", "mean_flow_m3_per_s"],
                            injection.loc["wa", "mean_injection_temp_change_k"], scenario.aquifer, SECONDS_PER_YEAR)
    assert -3.0 < at_wb < -1.0
    rings = {(p["well_id"], p["level_k"]): Polygon(p["coordinates"]) for p in plume_polygons(result)}
    wb = scenario.wells.set_index("well_id").loc["wb"]
    extraction = Point(wb["lon"], wb["lat"])
    far = Point(_lon(100.0 + 1500.0), LAT)
    assert rings[("wa", 1.0)].contains(extraction)
    assert not rings[("wa", 3.0)].contains(extraction)
    assert not rings[("wa", 1.0)].contains(far)
    table = result.tables["plumes"]
    ring = json.loads(table["coordinates_json"].iloc[0])
    assert ring[0] == ring[-1]


def test_arguments_out_of_range_name_themselves(line_case):
    scenario, _ = line_case
    for name, value in (("max_iterations", 0), ("tolerance_k", -0.1), ("relaxation", 1.5), ("horizon_years", 0.0)):
        with pytest.raises(ValueError, match=name):
            solve_with_interference(scenario, **{name: value})


def test_demo_loop_converges(demo_runs):
    """On the demo the largest change of a source temperature falls below 0.05 K within ten solves."""
    _, result, _ = demo_runs
    info = result.extras["interference"]
    iterations = info["iterations"]
    assert info["converged"] is True
    assert 2 <= len(iterations) <= 10
    assert iterations[-1]["max_shift_k"] < 0.05
    assert all(it["max_shift_k"] >= 0.05 for it in iterations[:-1])
    assert [it["iteration"] for it in iterations] == list(range(1, len(iterations) + 1))
    for it in iterations:
        assert np.isfinite(it["total_cost_eur_per_a"]) and np.isfinite(it["co2_t_per_a"]) and it["seconds"] > 0


def test_demo_first_iteration_is_the_run_without_interference(demo_runs):
    """The loop starts from unshifted source temperatures: its first solve is the plain run."""
    _, result, without = demo_runs
    first = result.extras["interference"]["iterations"][0]
    assert first["largest_source_shift_k"] == 0.0
    assert first["total_cost_eur_per_a"] == pytest.approx(without.total_cost_eur_per_a, rel=1e-6)
    assert first["co2_t_per_a"] == pytest.approx(without.co2_t_per_a, rel=1e-6)


def test_demo_well_in_a_cold_plume_loses_heat_or_cop(demo_runs):
    """Every demo extraction well with a shift below -0.05 K lies down-gradient of another doublet's
    reinjection well, and gives less heat or has a lower seasonal COP than in the run without interference."""
    scenario, result, without = demo_runs
    wells = result.tables["wells"].set_index("well_id")
    shifted = wells.index[wells["source_temp_shift_k"] < -0.05]
    assert len(shifted) >= 1
    assert (wells["source_temp_shift_k"] <= 1e-9).all()  # heating dominates: no warm plumes reach a well

    table = scenario.wells.set_index("well_id")
    direction = scenario.aquifer.flow_direction_deg

    def seasonal_cop(run, well_id):
        supply = run.tables["supply"]
        hp = supply[(supply["well_id"] == well_id) & (supply["kind"] == "groundwater_heat_pump")]
        return float(hp["heat_mwh_per_a"].sum() / hp["electricity_mwh_per_a"].sum())

    before = without.tables["wells"].set_index("well_id")
    for well_id in shifted:
        others = table.drop(index=well_id)
        lon0, lat0 = float(table["lon"].mean()), float(table["lat"].mean())
        x_e, y_e = coords.lonlat_to_local_m(table.loc[well_id, "lon"], table.loc[well_id, "lat"], lon0, lat0)
        x_r, y_r = coords.lonlat_to_local_m(others["reinjection_lon"], others["reinjection_lat"], lon0, lat0)
        along, across = coords.to_flow_frame(x_e - np.asarray(x_r), y_e - np.asarray(y_r), direction)
        # some other doublet's reinjection well lies up-gradient, within a few transverse plume widths
        assert np.any((np.asarray(along) > 0) & (np.abs(np.asarray(across)) < 100.0)), well_id
        lost_heat = wells.loc[well_id, "heat_mwh_per_a"] < before.loc[well_id, "heat_mwh_per_a"] - 1.0
        lost_cop = seasonal_cop(result, well_id) < seasonal_cop(without, well_id) - 1e-3
        assert lost_heat or lost_cop, well_id
    comparison = interference_comparison(result).set_index("well_id")
    np.testing.assert_allclose(comparison.loc[shifted, "heat_mwh_per_a_without"].to_numpy(float),
                               before.loc[shifted, "heat_mwh_per_a"].to_numpy(float), rtol=1e-6)


def test_demo_effect_is_visible_in_city_totals(demo_runs):
    """The shifted source temperatures change the city's cost and CO2 by more than 0.05 % (demo claim)."""
    _, result, without = demo_runs
    assert abs(result.total_cost_eur_per_a / without.total_cost_eur_per_a - 1.0) > 5e-4
    assert abs(result.co2_t_per_a / without.co2_t_per_a - 1.0) > 5e-4


def test_demo_summary_carries_shift_and_status(demo_runs):
    """summary() serialises the wells table: every well has source_temp_shift_k and a status."""
    _, result, _ = demo_runs
    summary = result.summary()
    assert summary["interference"]["converged"] is True
    assert summary["interference"]["notes"][0].startswith("Screening estimate")
    for well in summary["wells"]:
        assert well["status"] in ("ok", "at_limit", "breach")
        assert isinstance(well["source_temp_shift_k"], float)
    json.dumps(summary, allow_nan=False)


def test_command_line_interference_flag(tmp_path):
    """``python -m engine solve <folder> --interference`` writes the iterations, shifts, statuses and plumes."""
    out = tmp_path / "run"
    code = main(["solve", str(TINY_CITY), "--interference", "--typical-days", "4", "--out", str(out), "--quiet"])
    assert code == 0
    summary = json.loads((out / "summary.json").read_text())
    info = summary["interference"]
    assert info["iterations"] and info["horizon_years"] == 1.0 and info["tolerance_k"] == 0.05
    assert all("status" in w and "source_temp_shift_k" in w for w in summary["wells"])
    plumes = pd.read_csv(out / "plumes.csv")
    assert list(plumes.columns) == ["well_id", "level_k", "sign", "coordinates_json"]
