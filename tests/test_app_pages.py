"""The dashboard pages, driven through their widgets with Streamlit's AppTest (no browser).

The reference for the numbers is the command line, ``python -m engine solve demo``, run in a separate process
on the same inputs: the dashboard must show the very run the engine computes. The demo is solved twice through
the widgets (two cost cases) and once on the command line, in parallel, to keep the suite quick.
"""

from __future__ import annotations

import csv
import io
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from engine.model.solve import solve_scenario
from engine.scenario import load_scenario
from engine.storage.store import ScenarioStore, read_scenario_files
from pages._support.inputs import input_set_from_files

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")
PLAN = "pages/1_Plan_a_run.py"
RESULTS = "pages/2_Run_results.py"
COMPARE = "pages/3_Compare_runs.py"
SHARE = "pages/4_Share.py"
TIMEOUT_S = 120
CLI_CASE = "high_co2"
TYPICAL_DAYS = 12  # the demo's scenario.toml setting, which the set-up page starts from


def _pages() -> list[str]:
    return sorted(p.relative_to(ROOT).as_posix() for p in (ROOT / "pages").glob("[0-9]*.py"))


def _texts(at: AppTest) -> str:
    parts = []
    for kind in ("markdown", "caption", "warning", "info", "success", "error", "title"):
        parts += [str(element.value) for element in at.get(kind)]
    return "\n".join(parts)


def _button(at: AppTest, label: str):
    matches = [b for b in at.button if b.label == label]
    assert matches, f"no button {label!r}; buttons: {[b.label for b in at.button]}"
    return matches[0]


def _solve_and_save(at: AppTest, name: str) -> None:
    at.button(key="setup_solve").click().run()
    assert not at.exception, at.exception
    assert len(at.metric) == 4, "the result summary did not appear"
    [field] = [t for t in at.text_input if t.label == "Name"]
    field.input(name)
    _button(at, "Save run").click().run()
    assert not at.exception, at.exception
    assert any(name in str(s.value) for s in at.success), "no confirmation of the save"


@pytest.fixture(scope="module")
def session(tmp_path_factory):
    """One dashboard session in which the demo was solved and saved under two cost cases.

    Meanwhile the command line solves the demo under ``CLI_CASE`` in another process.
    """
    folder = tmp_path_factory.mktemp("dashboard")
    before = os.environ.get("HEATMOSAIC_STORE")
    os.environ["HEATMOSAIC_STORE"] = str(folder / "store.sqlite")
    cli = subprocess.Popen(
        [sys.executable, "-m", "engine", "solve", "demo", "--cost-case", CLI_CASE, "--typical-days",
         str(TYPICAL_DAYS), "--out", str(folder / "cli"), "--quiet"],
        cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
    )
    try:
        at = AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()
        at.switch_page(PLAN).run()
        assert not at.exception, at.exception
        assert at.selectbox(key="setup_cost_case").value == "reference"
        _solve_and_save(at, "Reference prices")
        at.selectbox(key="setup_cost_case").select(CLI_CASE).run()
        _solve_and_save(at, "High CO2 price")
        _, errors = cli.communicate(timeout=TIMEOUT_S)
        assert cli.returncode == 0, errors.decode()
        summary = json.loads((folder / "cli" / "summary.json").read_text())
        yield {"at": at, "cli": summary, "store": folder / "store.sqlite"}
    finally:
        if cli.poll() is None:
            cli.kill()
        if before is None:
            os.environ.pop("HEATMOSAIC_STORE", None)
        else:
            os.environ["HEATMOSAIC_STORE"] = before


def test_every_page_renders_with_an_empty_library(tmp_path, monkeypatch):
    """Each page draws without an exception on a fresh library and shows the screening caution (project rule:
    results that could hurt someone carry the caution)."""
    monkeypatch.setenv("HEATMOSAIC_STORE", str(tmp_path / "empty.sqlite"))
    at = AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()
    assert not at.exception, at.exception
    assert "Screening" in _texts(at)
    assert "No saved runs yet" in _texts(at)
    for page in _pages():
        at.switch_page(page).run()
        assert not at.exception, (page, at.exception)
        assert "Screening" in _texts(at) or "screening" in _texts(at), page


def test_solving_through_the_widgets_matches_the_command_line(session):
    """The total cost and CO2 the set-up page solved under high_co2 with 12 typical days equal those of
    ``python -m engine solve demo --cost-case high_co2 --typical-days 12`` (rel 1e-6), in the session and in
    the saved run."""
    at, cli = session["at"], session["cli"]
    current = at.session_state["hm_solved"][at.session_state["hm_current"]]
    assert current.result.cost_case == CLI_CASE
    assert current.result.total_cost_eur_per_a == pytest.approx(cli["total_cost_eur_per_a"], rel=1e-6)
    assert current.result.co2_t_per_a == pytest.approx(cli["co2_t_per_a"], rel=1e-6)
    assert current.input_hash == cli["input_hash"]
    with ScenarioStore(session["store"]) as store:
        runs = store.list_runs()
    saved = runs[runs["name"] == "High CO2 price"].iloc[0]
    assert saved["total_cost_eur_per_a"] == pytest.approx(cli["total_cost_eur_per_a"], rel=1e-6)


def test_going_back_to_a_solved_cost_case_needs_no_new_solve(session):
    """Choosing a cost case solved before shows its result at once from the session cache (common practice)."""
    at = session["at"]
    solved_before = len(at.session_state["hm_solved"])
    at.selectbox(key="setup_cost_case").select("reference").run()
    assert not at.exception, at.exception
    assert len(at.session_state["hm_solved"]) == solved_before
    current = at.session_state["hm_solved"][at.session_state["hm_current"]]
    assert current.result.cost_case == "reference"
    assert "Solved earlier in this session" in _texts(at)
    assert len(at.metric) == 4
    at.selectbox(key="setup_cost_case").select(CLI_CASE).run()


def test_both_saved_runs_appear_in_the_comparison(session):
    """The comparison's key-figure table lists both saved runs; the difference table holds the run that is not
    the baseline (the reference cost case is the default baseline)."""
    at = session["at"]
    at.switch_page(COMPARE).run()
    assert not at.exception, at.exception
    kpis = at.dataframe[0].value
    assert set(kpis["run"]) == {"Reference prices", "High CO2 price"}
    differences = at.dataframe[1].value
    assert list(differences["run"]) == ["High CO2 price"]
    assert at.selectbox(key="compare_baseline").value is not None
    assert "Reference prices" in _texts(at)


def test_results_page_shows_a_saved_run_and_reopens_it(session):
    """The results page shows the chosen saved run's figures; re-opening it puts its cost case back on the
    set-up page."""
    at = session["at"]
    at.switch_page(RESULTS).run()
    assert not at.exception, at.exception
    with ScenarioStore(session["store"]) as store:
        runs = store.list_runs()
    reference_id = int(runs[runs["name"] == "Reference prices"]["run_id"].iloc[0])
    at.selectbox(key="results_run").select(reference_id).run()
    assert not at.exception, at.exception
    total = float(runs[runs["run_id"] == reference_id]["total_cost_eur_per_a"].iloc[0])
    assert at.metric[0].value == f"{total / 1e6:,.2f}"
    for tab in ("Load curves", "Costs", "Tables", "Manage run"):
        at.session_state["results_tab"] = tab
        at.run()
        assert not at.exception, (tab, at.exception)
    assert "Well doublets" not in _texts(at)  # only the open tab is drawn
    at.button(key="results_reopen").click().run()
    assert not at.exception, at.exception
    assert at.selectbox(key="setup_cost_case").value == "reference"
    assert "Saved run" in _texts(at)


def test_results_page_checks_a_saved_plan_over_the_full_year(session):
    """The full-year check of a saved 12-day run shows the plan's cost over every hour, its unserved heat and the
    heat per technology; the engine's check of the same run (engine.studies.year_check, tested against hand
    calculations in tests/test_year_check.py) is the reference for the cost shown."""
    at = session["at"]
    at.switch_page(RESULTS).run()
    with ScenarioStore(session["store"]) as store:
        runs = store.list_runs()
    reference_id = int(runs[runs["name"] == "Reference prices"]["run_id"].iloc[0])
    at.selectbox(key="results_run").select(reference_id).run()
    at.session_state["results_tab"] = "Full-year check"
    at.run()
    assert not at.exception, at.exception
    at.button(key="year_check_button").click().run(timeout=600)
    assert not at.exception, at.exception
    labels = [m.label for m in at.metric]
    assert "Cost over the full year [M€/a]" in labels
    check = at.session_state["hm_year_checks"]
    (only,) = check.values()
    assert only.solved and len(only.year.tables["steps"]) == 8760
    shown = at.metric[labels.index("Cost over the full year [M€/a]")].value
    assert shown == f"{only.year.total_cost_eur_per_a / 1e6:,.2f}"
    assert abs(only.cost_difference_pct) < 2.0  # the demo's 12-day plan holds over the year (docs/model.md 9)
    assert "Over every hour of the year" in _texts(at)
    table = at.dataframe[0].value
    assert "heat over the full year [MWh/a]" in table.columns and len(table) >= 5
    # kept in the library as a run of its own, marked as a held plan (never answering for an optimised run)
    at.button(key="year_check_save").click().run()
    assert not at.exception, at.exception
    with ScenarioStore(session["store"]) as store:
        runs = store.list_runs()
        saved_id = int(runs[runs["name"] == "Reference prices · plan over the full year"]["run_id"].iloc[0])
        saved = store.load_run(saved_id)
        reference = store.load_run(reference_id)
    try:
        assert any(f"Saved the full-year check as run #{saved_id}" in str(s.value) for s in at.success)
        assert f"This check is saved as run #{saved_id}." in _texts(at)  # saved once, not again
        assert not [b for b in at.button if b.key == "year_check_save"]
        assert saved.extras["fixed_plan"] and saved.input_hash != reference.input_hash
        assert saved.total_cost_eur_per_a == pytest.approx(only.year.total_cost_eur_per_a, rel=1e-12)
        at.selectbox(key="results_run").select(saved_id).run()
        assert not at.exception, at.exception
        assert "capacities held from a plan" in _texts(at)
        assert "a saved full-year check" in _texts(at)
    finally:  # the later tests count the library's runs
        with ScenarioStore(session["store"]) as store:
            store.delete_run(saved_id)


def test_results_page_shows_how_firm_each_technology_is(session):
    """The How-firm tab of a saved 12-day run gives each technology's heat in the run beside the least and the most
    within the cost slack. The run is the least-cost plan of the same LPs, so each range must hold the run's own
    heat (the ranges themselves are checked against hand calculations in tests/test_firmness.py)."""
    at = session["at"]
    at.switch_page(RESULTS).run()
    with ScenarioStore(session["store"]) as store:
        runs = store.list_runs()
        reference_id = int(runs[runs["name"] == "Reference prices"]["run_id"].iloc[0])
        run = store.load_run(reference_id)
    at.selectbox(key="results_run").select(reference_id).run()
    at.session_state["results_tab"] = "How firm"
    at.run()
    assert not at.exception, at.exception
    assert "How firm is the split between technologies?" in _texts(at)
    at.number_input(key="firmness_slack_pct").set_value(0.2).run()
    at.button(key="firmness_button").click().run(timeout=600)
    assert not at.exception, at.exception
    table = at.dataframe[0].value
    assert list(table.columns[:4]) == ["technology", "this run [MWh/a]", "least [MWh/a]", "most [MWh/a]"]
    own = run.heat_by_technology_mwh_per_a()
    technologies = load_scenario("demo").technologies
    names = dict(zip(technologies["name"], technologies["technology_id"]))
    assert len(table) >= 5
    for _, row in table.iterrows():
        assert row["this run [MWh/a]"] == pytest.approx(own[names[row["technology"]]], rel=1e-9)
        assert row["least [MWh/a]"] <= row["this run [MWh/a]"] + 1.0 <= row["most [MWh/a]"] + 2.0
    # the widest range relative to its heat is named first (on the demo a peak boiler, docs/model.md section 8)
    width = table["most against this run [%]"] - table["least against this run [%]"]
    widest = table.loc[width.idxmax(), "technology"]
    assert f"Least firm within +0.2 % of the least cost: {widest} (" in _texts(at)
    # the Share page offers them for the summary of this run
    at.switch_page(SHARE).run()
    assert not at.exception, at.exception
    at.multiselect(key="share_runs").set_value([reference_id]).run()
    assert not at.exception, at.exception
    assert at.checkbox(key="share_firmness").value is True
    assert "water authority" in _texts(at)


def test_results_page_flags_ranges_left_incomplete(session, monkeypatch):
    """A range the solver could not finish is flagged above the table (its end is blank, not the optimum)."""
    import engine.studies.alternatives as alternatives

    real = alternatives.run_firmness

    def partly(*args, **kwargs):
        ranges = real(*args, **kwargs)
        ranges.ranges.loc[ranges.ranges.index[0], ["minimum", "status"]] = [float("nan"), "incomplete"]
        return ranges

    monkeypatch.setattr(alternatives, "run_firmness", partly)
    at = session["at"]
    at.switch_page(RESULTS).run()
    with ScenarioStore(session["store"]) as store:
        runs = store.list_runs()
    at.selectbox(key="results_run").select(int(runs[runs["name"] == "Reference prices"]["run_id"].iloc[0])).run()
    at.session_state["results_tab"] = "How firm"
    at.run()
    at.number_input(key="firmness_slack_pct").set_value(0.3).run()
    at.button(key="firmness_button").click().run(timeout=600)
    assert not at.exception, at.exception
    assert any("could not be solved" in str(w.value) for w in at.warning)


def test_share_page_and_overview_list_the_runs(session):
    """The share page offers its downloads for saved runs and the overview's library lists both runs."""
    at = session["at"]
    at.switch_page(SHARE).run()
    assert not at.exception, at.exception
    labels = [b.proto.label for b in at.get("download_button")]
    assert "Download the HTML summary" in labels and "Spreadsheet (.xlsx)" in labels
    assert any(label.startswith("Export all 2 run") for label in labels)
    at.switch_page(APP).run()
    assert not at.exception, at.exception
    library = at.dataframe[0].value
    assert set(library["name"]) == {"Reference prices", "High CO2 price"}


def test_an_edited_cost_is_checked_solved_and_kept_in_the_run_files(session):
    """On the set-up page a negative investment is listed with table, row and column and blocks the solve; a
    valid edit is solved, and the run's files carry it: reading them again gives the run's input hash (the saved
    run keeps exactly the inputs it was solved with)."""
    from engine.scenario.inputs import input_hash
    from engine.model.solve import run_settings
    from pages._support.inputs import scenario_from_files
    from pages._support.cache import choices_of_run

    at = session["at"]
    at.switch_page(PLAN).run()
    setup = at.session_state["hm_setup"]
    table = setup["technology_table"].copy()
    row = int(table.index[table["technology_id"] == "air_hp"][0])
    table.loc[row, "investment_eur_per_kw"] = -5.0
    setup["technology_table"] = setup["technology_base"] = table  # as if typed into the editor
    at.run()
    assert not at.exception, at.exception
    assert at.button(key="setup_solve").disabled
    problems = [df.value for df in at.dataframe if "message" in df.value.columns][0]
    assert list(problems[["file", "row", "column"]].itertuples(index=False, name=None)) == [
        ("technology table", str(row + 1), "investment_eur_per_kw")]
    table.loc[row, "investment_eur_per_kw"] = 800.0
    setup["technology_table"] = setup["technology_base"] = table
    at.run()
    assert not at.button(key="setup_solve").disabled
    assert any(e.label.startswith("1 value(s) differ") for e in at.expander)
    at.button(key="setup_solve").click().run()
    assert not at.exception, at.exception
    run = at.session_state["hm_solved"][at.session_state["hm_current"]]
    assert run.result.solved
    rows = {r["technology_id"]: r for r in csv.DictReader(io.StringIO(run.files["technologies.csv"].decode()))}
    assert float(rows["air_hp"]["investment_eur_per_kw"]) == 800.0
    scenario, problems = scenario_from_files(run.files)
    assert problems == []
    choices = choices_of_run(run.result)
    settings = run_settings(scenario, choices["objective"], choices["co2_cap_t_per_a"], choices["typical_days"])
    assert input_hash(scenario, run.result.cost_case, settings) == run.result.input_hash


def test_the_solver_setting_solves_through_pulp(tmp_path, monkeypatch):
    """The Plan a run page's advanced Solver setting (``setup_solver``) offers HiGHS direct first and CBC; a solve
    with CBC gives the direct HiGHS total cost of the same inputs within 1e-6 relative (CBC is a solver independent
    of HiGHS), and is kept as its own run beside the HiGHS one; the choice stays when the planner comes back."""
    tiny = ROOT / "tests" / "fixtures" / "tiny_city"
    monkeypatch.setenv("HEATMOSAIC_STORE", str(tmp_path / "store.sqlite"))
    at = AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()
    at.session_state["hm_input"] = input_set_from_files(read_scenario_files(tiny), "Tiny city")
    at.switch_page(PLAN).run()
    assert not at.exception, at.exception
    choice = at.selectbox(key="setup_solver")
    assert choice.options[0] == "HiGHS direct, the default" and "CBC via pulp" in choice.options
    totals = {}
    for solver in ("cbc", "highs"):
        at.selectbox(key="setup_solver").set_value(solver).run()
        at.button(key="setup_solve").click().run()
        assert not at.exception, at.exception
        run = at.session_state["hm_solved"][at.session_state["hm_current"]]
        assert run.result.solved, run.result.message
        totals[run.result.model_size["solver"]] = run.result.total_cost_eur_per_a
        days = run.result.settings["typical_days"]
        at.switch_page(RESULTS).run()
        at.switch_page(PLAN).run()
        assert at.selectbox(key="setup_solver").value == solver, "the choice is kept across pages"
    assert set(totals) == {"pulp:PULP_CBC_CMD", "highs"}
    reference = solve_scenario(load_scenario(tiny), typical_days=days).total_cost_eur_per_a
    assert totals["pulp:PULP_CBC_CMD"] == pytest.approx(reference, rel=1e-6)
    assert totals["highs"] == pytest.approx(reference, rel=1e-12)
