"""Supply areas, grades and near-optimal ranges.

References: the modelling-to-generate-alternatives bound (DeCarolis 2011, Energy Economics 33, 145-152): within a
cost slack s the dearer of two supplies may take the share that spends exactly the slack, worked out by hand
below. The grading rule is the one documented in engine/studies/designation.py and docs/designation.md; the test
re-derives the points from that text rather than calling the engine's function.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.scenario.inputs import CostCase, Prices, Settings
from engine.scenario.folder import load_scenario
from engine.studies.alternatives import near_optimal_ranges
from engine.studies.designation import AREAS, Evidence, GradeThresholds, designate, grade_of

TYPICAL_DAYS = 4


def _documented_grade(w, m, firm, t=GradeThresholds()):
    points = (2 if w >= t.win_share_strong else 1 if w >= t.win_share_weak else 0) + (
        2 if m >= t.margin_strong_eur_per_mwh else 1 if m >= t.margin_weak_eur_per_mwh else 0) + (1 if firm else 0)
    return 1 if points >= 4 else 2 if points >= 2 else 3 if points >= 1 else 4


@pytest.mark.parametrize("w,m,firm", [(1.0, 20.0, True), (0.8, 10.0, False), (0.79, 9.9, True), (0.6, 3.0, False),
                                      (0.59, 2.9, True), (0.5, 0.0, False), (1.0, float("inf"), False)])
def test_grade_rule_as_documented(w, m, firm):
    grade, _, text = grade_of(Evidence(w, m, firm), GradeThresholds())
    assert grade == _documented_grade(w, m, firm)
    assert f"grade {grade}" in text


def test_thresholds_are_editable():
    strict = GradeThresholds(win_share_strong=1.0, margin_strong_eur_per_mwh=50.0)
    assert grade_of(Evidence(0.9, 20.0, True), GradeThresholds())[0] == 1
    assert grade_of(Evidence(0.9, 20.0, True), strict)[0] == 2  # 1 + 1 + 1 points


def _two_boilers(slack_cost_eboiler=110.0):
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=1.0),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0),
    )
    return f.scenario(
        [f.district("d1", heat_demand_mwh_per_a=8760.0)], techs,
        f.hourly(electricity=slack_cost_eboiler, grid_co2=0.0),
        existing={("d1", "gas"): 1000.0, ("d1", "eboiler"): 1000.0},
        potential={("d1", "gas"): 1000.0, ("d1", "eboiler"): 1000.0},
        heat_demand_hourly_kw=pd.DataFrame({"d1": np.full(8760, 1000.0)}),
        settings=Settings(typical_days=0), prices=Prices(gas_eur_per_mwh=100.0, co2_eur_per_t=0.0),
    )


def test_near_optimal_share_matches_hand_calculation():
    # least cost: all gas at 100 EUR/MWh. Within +5 %: 100 + 10 s <= 105, so the electric boiler (110 EUR/MWh)
    # may take at most s = 0.5 of the heat
    ranges = near_optimal_ranges(_two_boilers(), slack_pct=5.0, workers=1).ranges.set_index(["scope", "subject"])
    assert ranges.loc[("city", "eboiler"), "maximum"] == pytest.approx(0.5, abs=1e-6)
    assert ranges.loc[("city", "eboiler"), "minimum"] == pytest.approx(0.0, abs=1e-6)
    assert ranges.loc[("city", "gas"), "minimum"] == pytest.approx(0.5, abs=1e-6)
    assert ranges.loc[("city", "gas"), "optimum"] == pytest.approx(1.0, abs=1e-6)
    none = near_optimal_ranges(_two_boilers(), slack_pct=0.0, workers=1).ranges.set_index(["scope", "subject"])
    assert none.loc[("city", "eboiler"), "maximum"] == pytest.approx(0.0, abs=1e-6)


@pytest.fixture(scope="module")
def demo():
    return load_scenario("demo")


def test_every_demo_district_gets_one_area_and_one_grade(demo):
    result = designate(demo, ["reference", "high_co2"], typical_days=TYPICAL_DAYS, workers=1)
    table = result.table
    assert sorted(table["district_id"]) == sorted(demo.districts["district_id"])
    assert table["district_id"].is_unique
    assert table["supply_area"].isin(AREAS).all()
    assert table["grade"].isin([1, 2, 3, 4]).all()
    assert table["explanation"].str.contains("grade").all()
    # network shares are shares and a district without a network has none
    assert ((table["network_share_min"] >= 0) & (table["network_share_min"] <= table["network_share_max"] + 1e-9)
            & (table["network_share_max"] <= 1 + 1e-9)).all()
    unreached = ~demo.districts.set_index("district_id")["network_available"]
    assert (table.set_index("district_id").loc[unreached[unreached].index, "network_share_max"] == 0).all()


def test_a_cost_case_that_flips_a_district_lowers_its_grade(demo):
    before = designate(demo, ["reference"], typical_days=TYPICAL_DAYS, workers=1).table.set_index("district_id")
    flipped = demo.copy()
    # a network three times dearer: the districts the network wins today lose it in this case
    flipped.cost_cases["dear_network"] = CostCase(name="dear_network", network_price_factor=3.0)
    after_result = designate(flipped, ["reference", "dear_network"], typical_days=TYPICAL_DAYS, workers=1)
    after = after_result.table.set_index("district_id")
    network_districts = before.index[before["candidate"] == "heat_network"]
    assert len(network_districts) > 0
    for d in network_districts:
        assert after_result.winners.loc[d, "dear_network"] != "heat_network"
        assert after.loc[d, "win_share"] == pytest.approx(0.5)
        firm = after.loc[d, "network_share_min"] >= 0.5
        expected = _documented_grade(0.5, after.loc[d, "lcoh_margin_eur_per_mwh"], firm)
        assert after.loc[d, "grade"] == expected
        assert after.loc[d, "grade"] > before.loc[d, "grade"]
    # districts whose winner did not flip keep their grade
    same = [d for d in before.index if after_result.winners.loc[d, "dear_network"] == after_result.winners.loc[
        d, "reference"]]
    for d in same:
        assert after.loc[d, "grade"] == before.loc[d, "grade"]


def test_near_optimal_share_with_a_city_wide_cap_solves_one_lp():
    # a cap far above the emissions couples the districts without binding: the city-wide LP gives the same bound
    scenario = _two_boilers()
    scenario.settings = dataclasses.replace(scenario.settings, co2_cap_t_per_a=1e9)
    ranges = near_optimal_ranges(scenario, slack_pct=5.0, workers=1).ranges.set_index(["scope", "subject"])
    assert ranges.loc[("city", "eboiler"), "maximum"] == pytest.approx(0.5, abs=1e-6)
