"""The district LP on the demo city: balances, permits, cost parts, cost cases, objectives and the CO2 cap.

These are consistency checks of the optimum against the constraints of docs/model.md section 4 (every one must hold in
any feasible solution) and against the defining property of each objective; the figures are not compared with
stored numbers.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from engine.scenario import DEMO_DIR, load_scenario
from engine.model.solve import solve_scenario

TYPICAL_DAYS = 8


@pytest.fixture(scope="module")
def demo():
    return load_scenario(DEMO_DIR)


@pytest.fixture(scope="module")
def reference(demo):
    return solve_scenario(demo, cost_case="reference", typical_days=TYPICAL_DAYS)


@pytest.fixture(scope="module")
def co2_optimal(demo):
    return solve_scenario(demo, cost_case="reference", objective="co2", typical_days=TYPICAL_DAYS)


def test_solves_without_unserved_heat(reference):
    assert reference.status == "optimal", reference.message
    assert reference.unserved_heat_mwh_per_a < 1e-6 * reference.heat_demand_mwh_per_a


def test_heat_balance_closes_at_every_step(reference):
    """Constraint 1: supply + store discharge - charge + unserved = demand, per district and step."""
    dispatch = reference.tables["dispatch"].groupby(["district_id", "step"])["heat_kw"].sum()
    demand = reference.tables["demand"].set_index(["district_id", "step"]).sort_index()
    balance = dispatch.reindex(demand.index).fillna(0) + demand["unserved_heat_kw"] - demand["heat_demand_kw"]
    assert np.abs(balance.to_numpy()).max() < 1e-6 * demand["heat_demand_kw"].max()
    cooling = reference.tables["dispatch"].groupby(["district_id", "step"])["cooling_kw"].sum()
    cbalance = cooling.reindex(demand.index).fillna(0) + demand["unserved_cooling_kw"] - demand["cooling_demand_kw"]
    assert np.abs(cbalance.to_numpy()).max() < 1e-6 * max(demand["cooling_demand_kw"].max(), 1.0)


def test_annual_demand_matches_inputs(demo, reference):
    """The weighted typical-day demand reproduces the annual heat demand of the districts within 2 %.

    Typical days are medoids, so the annual sum is not exact; 2 % is the tolerance we accept for screening.
    """
    expected = demo.districts["heat_demand_mwh_per_a"].sum()
    assert reference.heat_demand_mwh_per_a == pytest.approx(expected, rel=0.02)


def test_no_well_beyond_permit_or_outside_window(demo, reference):
    """Constraints 4: pumped flow within the permit; reinjection within the window (4.5-20 °C by default)."""
    steps = reference.tables["well_steps"]
    assert steps["flow_share"].max() <= 1 + 1e-6
    window = demo.settings
    active = steps.dropna(subset=["reinjection_temp_c"])
    assert len(active) > 0
    assert active["reinjection_temp_c"].min() >= window.reinjection_min_temp_c - 1e-6
    assert active["reinjection_temp_c"].max() <= window.reinjection_max_temp_c + 1e-6
    wells = reference.tables["wells"].set_index("well_id")
    limits = demo.wells.set_index("well_id")["permit_annual_volume_m3"]
    limited = limits[np.isfinite(limits)]
    assert (wells.loc[limited.index, "annual_volume_m3"] <= limited * (1 + 1e-6)).all()


def test_investment_and_fuel_parts_match_an_independent_recalculation(demo, reference):
    """The investment annuity and the fuel cost of every unit, recomputed from the inputs alone.

    Annuity: new capacity x net investment x the capital recovery factor of numpy-financial
    (``-pmt(rate, lifetime, 1)``, the annuity method); fuel: annual fuel [MWh/a] x the fuel price of the cost case.
    The fixed O&M on new capacity is left out of the investment part (it has its own part).
    """
    import numpy_financial as npf

    from engine.scenario.inputs import apply_cost_case

    prices = apply_cost_case(demo, "reference")
    technologies = demo.technologies.set_index("technology_id")
    supply = reference.tables["supply"]
    rate = demo.settings.discount_rate
    lifetime = technologies.loc[supply["technology_id"], "lifetime_a"].to_numpy(float)
    net = np.array([prices.investment_eur_per_kw[t] for t in supply["technology_id"]])
    expected = supply["new_kw"].to_numpy(float) * net * -npf.pmt(rate, lifetime, 1.0)
    np.testing.assert_allclose(supply["investment_eur_per_a"].to_numpy(float), expected, rtol=1e-9, atol=1e-6)
    assert expected.sum() > 0  # the demo builds something, so the check is not about zeros

    fuel = supply[supply["fuel_mwh_per_a"] > 0]
    carriers = technologies.loc[fuel["technology_id"], "carrier"]
    fuel_cost = fuel["fuel_mwh_per_a"].to_numpy(float) * np.array([prices.fuel_eur_per_mwh[c] for c in carriers])
    assert len(fuel)  # the reference case still burns fuel somewhere
    np.testing.assert_allclose(fuel["energy_eur_per_a"].to_numpy(float), fuel_cost, rtol=1e-9, atol=1e-6)


def test_objective_value_equals_reported_cost(demo):
    """The LP objective (plus the fixed O&M of existing plant, a constant) equals the reported total cost."""
    from engine.model.formulation import build_model, solve_model
    from engine.model.prepare import prepare_run
    from engine.model.solve import run_settings

    settings = run_settings(demo, typical_days=TYPICAL_DAYS)
    prepared = prepare_run(demo, "reference", settings)
    model = build_model(prepared)
    solution = solve_model(model, "cost")
    result = solve_scenario(demo, cost_case="reference", typical_days=TYPICAL_DAYS, decompose=False)
    # the LP adds 1e-6 EUR per kWh charged into stores as a tie-break; it is not a cost of the plan
    charge = model.cols["charge"]
    tiebreak = float((1e-6 * model.prepared.grid.weight_h[None, :] * solution.x[charge]).sum())
    assert solution.objective - tiebreak + model.constant_fixed_om.sum() == pytest.approx(
        result.total_cost_eur_per_a, rel=1e-7
    )


def test_cost_cases_change_the_supply_mix(demo, reference):
    """Each demo cost case is meant to move the optimal supply of some districts (demo_data/README.md)."""
    base = reference.tables["districts"].set_index("district_id")["main_supply"]
    moved = {}
    for case in demo.cost_cases:
        if case == "reference":
            continue
        other = solve_scenario(demo, cost_case=case, typical_days=TYPICAL_DAYS)
        main = other.tables["districts"].set_index("district_id")["main_supply"]
        moved[case] = int((main != base).sum())
        mix_ref = reference.heat_by_technology_mwh_per_a()
        mix = other.heat_by_technology_mwh_per_a()
        shift = sum(abs(mix.get(k, 0) - mix_ref.get(k, 0)) for k in set(mix) | set(mix_ref))
        assert shift > 0.05 * reference.heat_demand_mwh_per_a, f"{case} barely changes the mix"
    assert max(moved.values()) >= 2, moved


def test_co2_objective_trades_cost_for_co2(reference, co2_optimal):
    """The CO2 objective gives lower CO2 and higher cost than the cost objective (defining property)."""
    assert co2_optimal.status == "optimal"
    assert co2_optimal.co2_t_per_a < reference.co2_t_per_a
    assert co2_optimal.total_cost_eur_per_a > reference.total_cost_eur_per_a
    assert co2_optimal.unserved_heat_mwh_per_a < 1e-6 * reference.heat_demand_mwh_per_a


def test_co2_cap_binds(demo, reference, co2_optimal):
    """A cap between the CO2 optimum and the cost optimum binds: CO2 equals the cap, cost lies in between."""
    cap = 0.5 * (reference.co2_t_per_a + co2_optimal.co2_t_per_a)
    capped = solve_scenario(demo, cost_case="reference", typical_days=TYPICAL_DAYS, co2_cap_t_per_a=cap)
    assert capped.status == "optimal"
    assert capped.co2_t_per_a == pytest.approx(cap, rel=1e-5)
    assert reference.total_cost_eur_per_a < capped.total_cost_eur_per_a < co2_optimal.total_cost_eur_per_a


def test_decomposed_equals_monolithic_on_demo(demo, reference):
    whole = solve_scenario(demo, cost_case="reference", typical_days=TYPICAL_DAYS, decompose=False)
    assert whole.total_cost_eur_per_a == pytest.approx(reference.total_cost_eur_per_a, rel=1e-6)


def test_cli_solve_contract(tmp_path):
    """`python -m engine solve demo` writes summary.json with the keys of the command-line contract."""
    out = tmp_path / "out"
    proc = subprocess.run(
        [sys.executable, "-m", "engine", "solve", "demo", "--typical-days", "4", "--out", str(out), "--quiet"],
        capture_output=True, text=True, timeout=300,
    )
    assert proc.returncode == 0, proc.stderr
    summary = json.loads((out / "summary.json").read_text())
    for key in ("status", "objective", "cost_case", "total_cost_eur_per_a", "co2_t_per_a", "heat_demand_mwh_per_a",
                "unserved_heat_mwh_per_a", "heat_by_technology_mwh_per_a", "cost_breakdown_eur_per_a", "districts",
                "wells", "timings_s", "input_hash"):
        assert key in summary
    for part in ("investment", "fixed_om", "energy", "co2", "unserved"):
        assert part in summary["cost_breakdown_eur_per_a"]
    for key in ("district_id", "total_cost_eur_per_a", "co2_t_per_a", "levelised_cost_eur_per_mwh",
                "heat_by_technology_mwh_per_a"):
        assert key in summary["districts"][0]
    for key in ("well_id", "district_id", "heat_mwh_per_a", "peak_flow_share", "min_reinjection_temp_c",
                "max_reinjection_temp_c"):
        assert key in summary["wells"][0]
    for key in ("build", "solve", "total"):
        assert key in summary["timings_s"]
    assert (out / "supply.csv").exists() and (out / "districts.csv").exists()


def test_cli_exit_codes(tmp_path):
    """Exit 2 on input errors (no traceback), as the command-line contract says."""
    proc = subprocess.run(
        [sys.executable, "-m", "engine", "solve", str(tmp_path / "missing"), "--out", str(tmp_path / "o")],
        capture_output=True, text=True, timeout=120,
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    proc = subprocess.run(
        [sys.executable, "-m", "engine", "solve", "demo", "--cost-case", "no_such_case", "--out", str(tmp_path / "o")],
        capture_output=True, text=True, timeout=120,
    )
    assert proc.returncode == 2 and "no_such_case" in proc.stderr
