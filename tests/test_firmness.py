"""How firm a run's technology split is: the near-optimal ranges in MWh/a, solved with the run's own settings.

References: hand calculations on two boilers in one district serving a flat 1,000 kW for 8,760 h (8,760 MWh/a),
gas at 100 EUR/MWh and an electric boiler at 110 EUR/MWh (both efficiency 1, no investment); the ranges are the
near-optimal alternatives of DeCarolis, J. F. (2011). Using modeling to generate alternatives (MGA) to expand
our thinking on energy futures. Energy Economics 33(2), 145-152.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.model.solve import solve_scenario
from engine.scenario.inputs import Prices, Settings
from engine.studies import alternatives
from engine.studies.alternatives import NearOptimalRanges, near_optimal_ranges, run_firmness

DEMAND_MWH = 8760.0
REL = 1e-5
"""The cost row allows 1e-7 of the least cost above the slack (alternatives.COST_LIMIT_TOLERANCE): the ends move
by a few millionths of the hand-calculated values."""


def _two_boilers(electricity_eur_per_mwh: float = 110.0):
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=1.0),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0),
    )
    return f.scenario(
        [f.district("d1", heat_demand_mwh_per_a=DEMAND_MWH)], techs,
        f.hourly(electricity=electricity_eur_per_mwh, grid_co2=0.0),
        existing={("d1", "gas"): 1000.0, ("d1", "eboiler"): 1000.0},
        potential={("d1", "gas"): 1000.0, ("d1", "eboiler"): 1000.0},
        heat_demand_hourly_kw=pd.DataFrame({"d1": np.full(8760, 1000.0)}),
        settings=Settings(typical_days=0), prices=Prices(gas_eur_per_mwh=100.0, co2_eur_per_t=0.0),
    )


def _heat(ranges: NearOptimalRanges) -> pd.DataFrame:
    return ranges.technology_heat().set_index("technology_id")


def test_ranges_in_mwh_match_the_hand_calculation():
    # least cost: all gas. Within +5 %: 100 (1 - x) + 110 x <= 105, so the electric boiler takes at most x = 0.5
    ranges = near_optimal_ranges(_two_boilers(), slack_pct=5.0, workers=1)
    assert ranges.heat_demand_mwh_per_a == pytest.approx(DEMAND_MWH, rel=1e-9)
    heat = _heat(ranges)
    assert heat.loc["gas", "heat_mwh_per_a"] == pytest.approx(DEMAND_MWH, rel=REL)
    assert heat.loc["gas", "minimum_mwh_per_a"] == pytest.approx(0.5 * DEMAND_MWH, rel=REL)
    assert heat.loc["eboiler", "maximum_mwh_per_a"] == pytest.approx(0.5 * DEMAND_MWH, rel=REL)
    assert heat.loc["gas", "below_pct"] == pytest.approx(-50.0, abs=1e-4)
    assert np.isnan(heat.loc["eboiler", "below_pct"])  # no heat in the least-cost plan: no share of it


def test_a_slack_of_zero_is_solved_and_shows_alternative_optima():
    # a strict optimum collapses to a point; an exact tie (both at 100 EUR/MWh) spans every split at the least cost
    strict = _heat(near_optimal_ranges(_two_boilers(), slack_pct=0.0, workers=1))
    assert strict.loc["eboiler", "maximum_mwh_per_a"] == pytest.approx(0.0, abs=0.01)  # 1e-7 x 876,000 EUR / 10 EUR/MWh
    assert strict.loc["gas", "minimum_mwh_per_a"] == pytest.approx(DEMAND_MWH, rel=REL)
    tie = near_optimal_ranges(_two_boilers(100.0), slack_pct=0.0, workers=1)
    assert (tie.ranges["status"] == "optimal").all()
    heat = _heat(tie)
    for tech in ("gas", "eboiler"):
        assert heat.loc[tech, "minimum_mwh_per_a"] == pytest.approx(0.0, abs=1e-3)
        assert heat.loc[tech, "maximum_mwh_per_a"] == pytest.approx(DEMAND_MWH, rel=REL)


def test_the_ranges_are_solved_with_the_runs_own_settings():
    """A run solved under a CO2 cap the scenario does not hold: its ranges keep the cap.

    Gas emits 201.96 kg/MWh (the engine's default factor, docs/input_format.md), the electric boiler nothing here.
    A cap of half the all-gas emissions forces x >= 0.5 electric; the least cost is then 105 EUR/MWh, and within
    +2 %: 100 (1 - x) + 110 x <= 107.1, so x <= 0.71. Without the cap: 100 + 10 x <= 102, x <= 0.2. The minimum
    also checks that leaving heat unserved is no alternative: without the row that holds the unserved heat at the
    least-cost plan's, the minimum fell to 4,376 MWh/a (3.8 MWh/a unserved, within the slack at its penalty)."""
    scenario = _two_boilers()
    factor_t = scenario.prices.co2_kg_per_mwh["gas"] / 1000.0
    capped = dataclasses.replace(scenario.settings, co2_cap_t_per_a=0.5 * DEMAND_MWH * factor_t)
    result = solve_scenario(scenario, settings=capped)
    assert result.solved
    assert result.heat_by_technology_mwh_per_a()["eboiler"] == pytest.approx(0.5 * DEMAND_MWH, rel=REL)
    ranges = run_firmness(scenario, result, slack_pct=2.0, workers=1)
    assert ranges.typical_days == alternatives.FULL_YEAR_FIRMNESS_DAYS  # a full-year run: ranged on typical days
    heat = _heat(ranges)
    assert heat.loc["eboiler", "minimum_mwh_per_a"] == pytest.approx(0.5 * DEMAND_MWH, rel=REL)
    assert heat.loc["eboiler", "maximum_mwh_per_a"] == pytest.approx(0.71 * DEMAND_MWH, rel=REL)
    free = _heat(near_optimal_ranges(scenario, slack_pct=2.0, workers=1))
    assert free.loc["eboiler", "maximum_mwh_per_a"] == pytest.approx(0.2 * DEMAND_MWH, rel=REL)


def test_a_co2_run_is_ranged_around_the_least_cost_plan():
    scenario = _two_boilers()
    co2_run = solve_scenario(scenario, settings=dataclasses.replace(scenario.settings, objective="co2"))
    assert co2_run.heat_by_technology_mwh_per_a()["eboiler"] == pytest.approx(DEMAND_MWH, rel=REL)
    heat = _heat(run_firmness(scenario, co2_run, slack_pct=5.0, workers=1))
    assert heat.loc["gas", "heat_mwh_per_a"] == pytest.approx(DEMAND_MWH, rel=REL)  # the least-cost plan's


def test_an_end_not_solved_stays_unknown():
    """A minimisation or maximisation that does not reach optimality leaves its end unknown and the row (and the
    city's sum over districts) incomplete, never the optimum or a sum without that district."""
    row = alternatives._range_row(("district", "d1/gas", "technology_share"), 0.6, [np.nan, 0.9], 1.0)
    assert row["status"] == "incomplete" and np.isnan(row["minimum"]) and row["maximum"] == pytest.approx(0.9)
    scenario = _two_boilers()
    two = f.scenario(
        [f.district("d1", heat_demand_mwh_per_a=DEMAND_MWH), f.district("d2", 1, heat_demand_mwh_per_a=DEMAND_MWH)],
        scenario.technologies, scenario.hourly,
        existing={(d, t): 1000.0 for d in ("d1", "d2") for t in ("gas", "eboiler")},
        potential={(d, t): 1000.0 for d in ("d1", "d2") for t in ("gas", "eboiler")},
        heat_demand_hourly_kw=pd.DataFrame({"d1": np.full(8760, 1000.0), "d2": np.full(8760, 1000.0)}),
        settings=Settings(typical_days=0), prices=scenario.prices,
    )
    original = alternatives._range_row

    def fail_in_d2(target, optimum, found, slack_pct):
        if target[1].startswith("d2/"):
            found = [np.nan, found[1]]
        return original(target, optimum, found, slack_pct)

    alternatives._range_row = fail_in_d2
    try:
        ranges = near_optimal_ranges(two, slack_pct=5.0, workers=1)
    finally:
        alternatives._range_row = original
    city = ranges.ranges[ranges.ranges["scope"] == "city"].set_index("subject")
    assert city.loc["gas", "status"] == "incomplete" and np.isnan(city.loc["gas", "minimum"])
    assert city.loc["gas", "maximum"] == pytest.approx(1.0, abs=1e-6)  # both districts' ends known


def test_the_report_takes_the_ranges_of_the_runs_it_shares():
    """The Share page hands the report the ranges computed on Run results for a chosen saved run, matched by its
    id and its input hash (a run re-solved from other files does not get them)."""
    from pages._support.library import firmness_for_report

    run = dataclasses.replace(solve_scenario(_two_boilers()), input_hash="abc")
    ranges = near_optimal_ranges(_two_boilers(), slack_pct=1.0, workers=1)
    computed = {(7, "abc", 1.0): ranges, ("current-1", "abc", 1.0): ranges}
    assert firmness_for_report(computed, [7, 8], {7: "Reference", 8: "Other"}, {"Reference": run}) == {
        "Reference": ranges}
    other = dataclasses.replace(run, input_hash="def")
    assert firmness_for_report(computed, [7], {7: "Reference"}, {"Reference": other}) == {}


def test_a_stalled_warm_start_is_solved_again_from_scratch(monkeypatch):
    """When a range LP started from the least-cost basis stops short (here: an iteration limit of 0 on the
    maximisation of the electric boiler, the third LP: least cost, its minimum, its maximum), it is solved once more
    from scratch and the range is the hand-calculated one (+5 %: at most 0.5 electric)."""
    import highspy

    original = highspy.Highs.run
    calls = {"n": 0}

    def run(self):
        calls["n"] += 1
        if calls["n"] == 3:
            self.setOptionValue("simplex_iteration_limit", 0)
            try:
                return original(self)
            finally:
                self.setOptionValue("simplex_iteration_limit", 2**31 - 1)
        return original(self)

    cleared = {"n": 0}
    clear = highspy.Highs.clearSolver

    def counted_clear(self):
        cleared["n"] += 1
        return clear(self)

    monkeypatch.setattr(highspy.Highs, "run", run)
    monkeypatch.setattr(highspy.Highs, "clearSolver", counted_clear)
    ranges = near_optimal_ranges(_two_boilers(), slack_pct=5.0, workers=1)
    assert cleared["n"] == 1 and calls["n"] == 6  # least cost, 2 x 2 ranges, one retry
    heat = _heat(ranges)
    assert (ranges.ranges["status"] == "optimal").all()
    assert heat.loc["eboiler", "maximum_mwh_per_a"] == pytest.approx(0.5 * DEMAND_MWH, rel=REL)
    assert heat.loc["gas", "minimum_mwh_per_a"] == pytest.approx(0.5 * DEMAND_MWH, rel=REL)


def test_the_ranges_through_pulp_keep_the_cap():
    """The same hand case as above through pulp's CBC (every objective from the solver's own start): the run's
    CO2 cap gives [0.5, 0.71] of the heat electric within +2 %."""
    scenario = _two_boilers()
    factor_t = scenario.prices.co2_kg_per_mwh["gas"] / 1000.0
    capped = dataclasses.replace(scenario.settings, co2_cap_t_per_a=0.5 * DEMAND_MWH * factor_t)
    ranges = near_optimal_ranges(scenario, slack_pct=2.0, workers=1, solver="cbc", settings=capped)
    heat = _heat(ranges)
    assert heat.loc["eboiler", "minimum_mwh_per_a"] == pytest.approx(0.5 * DEMAND_MWH, rel=REL)
    assert heat.loc["eboiler", "maximum_mwh_per_a"] == pytest.approx(0.71 * DEMAND_MWH, rel=REL)
