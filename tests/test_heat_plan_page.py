"""The "Heat plan" page driven through its widgets with Streamlit's AppTest (no browser), on the demo city.

The reference is the engine called directly on the same inputs: the page must show the pathway
``engine.studies.pathway.solve_pathway`` computes (the same total per year) and one designation per district.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from engine.scenario.folder import DEMO_DIR, load_scenario
from engine.studies.pathway import solve_pathway

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")
PAGE = "pages/7_Heat_plan.py"
SHARE = "pages/4_Share.py"
TIMEOUT_S = 180
DAYS = 2


def _texts(at: AppTest) -> str:
    parts = []
    for kind in ("markdown", "caption", "warning", "info", "success", "error", "title"):
        parts += [str(element.value) for element in at.get(kind)]
    return "\n".join(parts)


def test_heat_plan_page_computes_the_pathway_and_the_designation(tmp_path, monkeypatch):
    """On the demo with two typical days the page computes the pathway and the designation without an
    exception; the pathway's yearly totals equal solve_pathway's on the same inputs (rel 1e-6); every demo
    district appears once in the district table, by name; the caution is shown; and the Share page offers the
    heat plan for the summary."""
    monkeypatch.setenv("HEATMOSAIC_STORE", str(tmp_path / "store.sqlite"))
    at = AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()
    at.switch_page(PAGE).run()
    assert not at.exception, at.exception
    assert "planning proposals" in _texts(at)
    at.number_input(key="plan_typical_days").set_value(DAYS).run()
    at.button(key="plan_run_pathway").click().run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    [pathway] = at.session_state["hm_plan_pathways"].values()
    assert pathway.mode == "foresight"
    reference = solve_pathway(load_scenario(DEMO_DIR), typical_days=DAYS, workers=1)
    assert list(pathway.summary["total_cost_eur_per_a"]) == pytest.approx(
        list(reference.summary["total_cost_eur_per_a"]), rel=1e-6)
    assert "present value" in _texts(at)
    # myopic: a second pathway in the cache; planning with foresight is never dearer than year by year (the
    # myopic plan is one of the plans the foresight LP may choose, so its present value bounds the optimum)
    at.radio(key="plan_mode").set_value("myopic").run()
    at.button(key="plan_run_pathway").click().run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    by_mode = {p.mode: p for p in at.session_state["hm_plan_pathways"].values()}
    assert set(by_mode) == {"foresight", "myopic"}
    assert by_mode["foresight"].present_value_eur <= by_mode["myopic"].present_value_eur * (1 + 1e-9)

    at.button(key="plan_run_designation").click().run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    scenario = load_scenario(DEMO_DIR)
    tables = [d.value for d in at.dataframe if "District" in d.value.columns]
    assert tables, "no district table"
    assert sorted(tables[0]["District"]) == sorted(scenario.districts["name"])
    assert at.session_state["hm_heat_plan"].designation is not None

    at.switch_page(SHARE).run()
    assert not at.exception, at.exception


def test_bad_choice_reads_as_a_sentence(tmp_path, monkeypatch):
    """With no cost case chosen for the designation the page says so and offers no computation."""
    monkeypatch.setenv("HEATMOSAIC_STORE", str(tmp_path / "store.sqlite"))
    at = AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()
    at.switch_page(PAGE).run()
    at.multiselect(key="plan_cost_cases").set_value([]).run()
    assert not at.exception, at.exception
    assert "Choose at least one cost case" in _texts(at)
    assert at.button(key="plan_run_designation").disabled
