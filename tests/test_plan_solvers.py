"""The heat plan's commands with another solver, on a Dask cluster, and cancelled.

References:
* the two-period build-now-or-later plan worked out by hand in tests/test_pathway.py (``_hand_plans``);
* CBC (via pulp, its LP solver CLP) as a second, independent LP solver. Both it and HiGHS stop at primal and dual
  feasibility tolerances of 1e-7 (their documented defaults, from memory), so on these small, well-scaled LPs
  the optima agree far inside 1e-6 relative; 1e-6 is the tolerance of the checks below.
* the near-optimal ranges of the serial path (HiGHS is deterministic for a given model and options, common
  practice), which the Dask path must repeat to 1e-6.
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.cli import main
from engine.progress import JobCancelled
from engine.scenario.folder import load_scenario
from engine.scenario.inputs import Prices, Settings
from engine.studies.alternatives import near_optimal_ranges
from engine.studies.designation import designate
from engine.studies.pathway import solve_pathway
from test_pathway import _hand_plans, _pathway, _two_tech_city

TOL = 1e-6


def _flat_two_tech_city():
    # flat demand and prices: one typical day represents the year exactly, which keeps the pulp LP small
    scenario = _two_tech_city()
    scenario.settings = dataclasses.replace(scenario.settings, typical_days=1)
    return scenario


def test_pathway_with_cbc_matches_highs_and_the_hand_calculation():
    scenario = _flat_two_tech_city()
    pathway = _pathway([2030, 2035], [0.97, 0.6])
    highs = solve_pathway(scenario, pathway)
    cbc = solve_pathway(scenario, pathway, solver="cbc")
    assert highs.solved and cbc.solved, cbc.message
    assert cbc.solver == "pulp:PULP_CBC_CMD" and highs.solver == "highs"
    assert cbc.present_value_eur == pytest.approx(highs.present_value_eur, rel=TOL)
    assert cbc.present_value_eur == pytest.approx(min(_hand_plans(97.0, 60.0).values()), rel=TOL)
    np.testing.assert_allclose(cbc.summary["total_cost_eur_per_a"], highs.summary["total_cost_eur_per_a"], rtol=TOL)


def test_myopic_pathway_with_cbc_matches_highs():
    scenario = _flat_two_tech_city()
    pathway = _pathway([2030, 2035], [0.97, 0.6])
    highs = solve_pathway(scenario, pathway, myopic=True)
    cbc = solve_pathway(scenario, pathway, myopic=True, solver="cbc")
    assert cbc.solved, cbc.message
    assert cbc.present_value_eur == pytest.approx(highs.present_value_eur, rel=TOL)


def _two_boilers():
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=1.0),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0),
    )
    return f.scenario(
        [f.district("d1", heat_demand_mwh_per_a=8760.0)], techs, f.hourly(electricity=110.0, grid_co2=0.0),
        existing={("d1", "gas"): 1000.0, ("d1", "eboiler"): 1000.0},
        potential={("d1", "gas"): 1000.0, ("d1", "eboiler"): 1000.0},
        heat_demand_hourly_kw=pd.DataFrame({"d1": np.full(8760, 1000.0)}),
        settings=Settings(typical_days=1), prices=Prices(gas_eur_per_mwh=100.0, co2_eur_per_t=0.0),
    )


def test_designation_with_cbc_matches_highs():
    # the DeCarolis (2011) bound by hand: within +5 % the electric boiler (110 EUR/MWh against gas at 100) may
    # take at most half of the heat
    highs = designate(_two_boilers(), workers=1)
    cbc = designate(_two_boilers(), workers=1, solver="cbc")
    ranges = cbc.ranges.set_index(["scope", "subject"])
    assert ranges.loc[("city", "eboiler"), "maximum"] == pytest.approx(0.5, abs=TOL)
    for column in ("win_share", "lcoh_margin_eur_per_mwh", "network_share_min", "network_share_max"):
        np.testing.assert_allclose(cbc.table[column], highs.table[column], rtol=TOL, atol=TOL)
    assert list(cbc.table["supply_area"]) == list(highs.table["supply_area"])
    np.testing.assert_allclose(cbc.ranges[["optimum", "minimum", "maximum"]],
                               highs.ranges[["optimum", "minimum", "maximum"]], rtol=TOL, atol=TOL)


@pytest.mark.parametrize("command", ["pathway", "designate"])
def test_unknown_solver_refused_with_the_available_ones(tmp_path, capsys, command):
    code = main([command, "demo", "--solver", "nosuchsolver", "--out", str(tmp_path / "o"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "nosuchsolver" in err and "highs" in err and "Traceback" not in err


def test_serial_alternatives_can_be_cancelled():
    demo = load_scenario("demo")
    calls = []

    def cancel():
        calls.append(1)
        return len(calls) > 2  # after the second task has started

    with pytest.raises(JobCancelled):
        near_optimal_ranges(demo, typical_days=2, workers=1, cancel=cancel)


@pytest.mark.slow
def test_alternatives_on_a_dask_local_cluster_match_the_serial_path_and_cancel():
    import distributed  # imported here: the Dask scheduler is heavy to load and only this test needs it

    demo = load_scenario("demo")
    serial = near_optimal_ranges(demo, typical_days=2, workers=1).ranges
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, distributed.Client(cluster) as client:
        seen = []
        spread = near_optimal_ranges(demo, typical_days=2, scheduler=client,
                                     progress=lambda share, text: seen.append(share)).ranges
        finished = []
        with pytest.raises(JobCancelled):
            near_optimal_ranges(demo, typical_days=2, scheduler=client,
                                progress=lambda share, text: finished.append(share),
                                cancel=lambda: len(finished) >= 1)
        # the tasks not yet run were cancelled: the cluster goes idle and holds none of them
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline and (any(client.processing().values()) or client.who_has()):
            time.sleep(0.2)
        assert not any(client.processing().values())
    assert len(finished) < len(seen)
    pd.testing.assert_frame_equal(spread[["scope", "subject", "quantity", "status"]],
                                  serial[["scope", "subject", "quantity", "status"]])
    np.testing.assert_allclose(spread[["optimum", "minimum", "maximum"]], serial[["optimum", "minimum", "maximum"]],
                               rtol=TOL, atol=TOL)
    assert sorted(seen)[-1] == pytest.approx(1.0)
