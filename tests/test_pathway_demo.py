"""The demo city's pathway (2030, 2035, 2040): capacity, heat balance and CO2 caps year by year.

The checks are conservation and bookkeeping identities of the planning problem itself (common practice): plant
only leaves at its lifetime's end or its retirement year; heat supplied plus heat unserved is the demand; a cap
holds. Four typical days keep the test fast.
"""

from __future__ import annotations

import numpy as np
import pytest

from engine.model.solve import solve_scenario
from engine.scenario.folder import load_scenario
from engine.studies.pathway import resolve_pathway, solve_pathway, year_scenario

TYPICAL_DAYS = 4


@pytest.fixture(scope="module")
def demo():
    return load_scenario("demo")


@pytest.fixture(scope="module")
def pathway(demo):
    result = solve_pathway(demo, typical_days=TYPICAL_DAYS)
    assert result.solved, result.message
    return result


def test_one_year_pathway_equals_plain_solve_of_that_year(demo):
    # the plain solve of 2040 as the pathway sees it: the scenario with 2040's trajectory, cap and retirements
    one = solve_pathway(demo, years=[2040], typical_days=TYPICAL_DAYS)
    assert one.solved, one.message
    as_of_2040, _ = year_scenario(demo, resolve_pathway(demo, [2040]), 2040)
    plain = solve_scenario(as_of_2040, typical_days=TYPICAL_DAYS)
    assert plain.solved
    total = one.summary["total_cost_eur_per_a"].iloc[0]
    assert abs(total - plain.total_cost_eur_per_a) <= 1e-6 * plain.total_cost_eur_per_a
    assert one.co2_caps == {2040: 32000.0}


def test_capacity_falls_only_by_retirement(demo, pathway):
    cap = pathway.capacity.set_index(["year", "district_id", "technology_id"])
    years = pathway.years
    lifetime = demo.technologies.set_index("technology_id")["lifetime_a"].to_dict()
    existing = demo.district_technologies.set_index(["district_id", "technology_id"])["existing_kw"]
    retire = demo.pathway.retirement_year
    pairs = {(d, t) for _, d, t in cap.index}
    for d, t in pairs:
        for k in range(1, len(years)):
            before, now = years[k - 1], years[k]
            c0 = cap["capacity_kw"].get((before, d, t), 0.0)
            c1 = cap["capacity_kw"].get((now, d, t), 0.0)
            added = cap["new_kw"].get((now, d, t), 0.0)
            leaving = 0.0
            if before < retire.get((d, t), 10**6) <= now:
                leaving += float(existing.get((d, t), 0.0))
            for b in years[:k]:
                if before < b + lifetime[t] <= now:
                    leaving += cap["new_kw"].get((b, d, t), 0.0)
            assert c1 == pytest.approx(c0 + added - leaving, abs=1e-3), (d, t, now)
            assert c1 >= c0 - leaving - 1e-3


def test_retired_gas_boilers_and_network_arrival_show(pathway):
    cap = pathway.capacity.set_index(["year", "district_id", "technology_id"])
    assert cap.loc[(2035, "station_quarter", "gas_boiler"), "retired_kw"] > 0
    assert (2030, "larkmoss", "network") not in cap.index
    assert (2035, "larkmoss", "network") in cap.index


def test_heat_plus_unserved_is_demand_every_year(pathway):
    for year, run in pathway.year_results.items():
        districts = run.tables["districts"].set_index("district_id")
        supply = run.tables["supply"]
        heat = supply.groupby("district_id")["heat_mwh_per_a"].sum()
        served = heat.reindex(districts.index).fillna(0.0) + districts["unserved_heat_mwh_per_a"]
        np.testing.assert_allclose(served, districts["heat_demand_mwh_per_a"], rtol=1e-6, err_msg=str(year))


def test_demand_follows_the_trajectory(demo, pathway):
    # pathway.csv: heat demand factor 1.10 in 2030 and 1.05 in 2035 against the target year's figures
    summary = pathway.summary.set_index("year")
    assert summary.loc[2030, "heat_demand_mwh_per_a"] / summary.loc[2040, "heat_demand_mwh_per_a"] == pytest.approx(
        1.10, rel=2e-2)


def test_each_year_within_its_cap(pathway):
    assert pathway.co2_caps, "the demo pathway has caps"
    summary = pathway.summary.set_index("year")
    for year, cap in pathway.co2_caps.items():
        assert summary.loc[year, "co2_t_per_a"] <= cap * (1 + 1e-6)


def test_present_value_matches_the_objective(pathway):
    # the discounted yearly figures rebuilt from the tables equal the LP's own sum, within solver tolerance
    assert np.isfinite(pathway.present_value_eur) and pathway.present_value_eur > 0
    annual = pathway.summary["total_cost_eur_per_a"].to_numpy()
    weights = pathway.summary["discounted_years"].to_numpy()
    assert pathway.present_value_eur < (annual * weights).sum() * 1.2


def test_myopic_costs_at_least_as_much(demo, pathway):
    myopic = solve_pathway(demo, myopic=True, typical_days=TYPICAL_DAYS)
    assert myopic.solved, myopic.message
    assert myopic.present_value_eur >= pathway.present_value_eur * (1 - 1e-7)
