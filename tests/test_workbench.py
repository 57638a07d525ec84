"""Tests of pages._support (inputs, edits, cache, describe, tables, library): the plain helpers behind the pages.

Reference points outside the module: the scenario files themselves, read with Python's own ``csv`` module; the
project's reader (:func:`engine.scenario.load_scenario`) and fingerprint (:func:`engine.scenario.inputs.input_hash`) as the
judges of "the same inputs"; ``zipfile`` for bundles. Behaviour with no published source (what a planner may
type into a table, how a table names a bad cell) is marked "common practice".
"""

from __future__ import annotations

import dataclasses

import csv
import io
import math
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from pages._support.inputs import (
    InputSet, demo_input_set, input_set_from_bundle, input_set_from_files, scenario_from_files,
)
from pages._support.edits import (
    TECHNOLOGY_EDIT_COLUMNS, WELL_EDIT_COLUMNS, apply_edits, check_edits, editable_technology_table,
    editable_well_table, edited_cells, initial_setup, scenario_files_with_edits,
)
from pages._support.cache import (
    choices_of_run, remember, request_key, resolve_saved_run, scenario_for_files, solve_with_cache,
)
from pages._support.describe import describe_choices, suggested_run_name
from pages._support.tables import district_results_table, supply_results_table, table_height, well_results_table
from pages._support.library import (
    default_baseline, import_library_bytes, library_bytes, library_table, run_choices, safe_file_name,
    unique_run_names,
)
from engine.storage.bundle import export_bundle
from engine.scenario.inputs import input_hash
from engine.scenario.problems import InputError
from engine.model.results import RunResult
from engine.model.solve import run_settings
from engine.storage.store import ScenarioStore, read_scenario_files

TINY_DIR = Path(__file__).parent / "fixtures" / "tiny_city"
TINY_DAYS = 4


def _rows(content: bytes) -> list[dict]:
    return list(csv.DictReader(io.StringIO(content.decode("utf-8-sig"))))


@pytest.fixture(scope="module")
def demo() -> InputSet:
    inputs = demo_input_set()
    assert inputs.ok, inputs.problems
    return inputs


@pytest.fixture(scope="module")
def tiny() -> InputSet:
    inputs = input_set_from_files(read_scenario_files(TINY_DIR), "tiny city")
    assert inputs.ok, inputs.problems
    return inputs


@pytest.fixture(scope="module")
def tiny_cache(tiny):
    """One solve of the tiny city (reference case, 4 typical days) in a fresh session cache."""
    cache: dict = {}
    key = request_key(tiny.digest, None, None, "reference", "cost", 0.0, TINY_DAYS)
    run, from_cache = solve_with_cache(cache, key, tiny.scenario, tiny.files, tiny.label, "reference", "cost",
                                          0.0, TINY_DAYS)
    assert run.result.solved, run.result.message
    return cache, key, run, from_cache


# ------------------------------------------------------------------------------------------------ editable tables
def test_technology_table_holds_the_catalogue_values(demo):
    """Each editable cell equals the value in technologies.csv as the csv module reads it; the grade column
    shows the efficiency of boilers and coolers and the COP quality grade of heat pumps (docs/input_format.md)."""
    table = editable_technology_table(demo.scenario)
    rows = {r["technology_id"]: r for r in _rows(demo.files["technologies.csv"])}
    assert list(table["technology_id"]) == list(rows)
    for record in table.to_dict(orient="records"):
        row = rows[record["technology_id"]]
        assert record["investment_eur_per_kw"] == float(row["investment_eur_per_kw"])
        assert record["lifetime_a"] == float(row["lifetime_a"])
        if record["kind"] in ("air_heat_pump", "groundwater_heat_pump"):
            assert record["efficiency_or_grade"] == float(row["cop_quality_grade"])
        elif record["kind"] in ("fuel_boiler", "electric_boiler", "chiller", "groundwater_cooling"):
            assert record["efficiency_or_grade"] == float(row["efficiency"])
        else:
            assert math.isnan(record["efficiency_or_grade"])


def test_well_table_shows_no_annual_limit_as_blank(demo):
    """A blank permit_annual_volume_m3 in wells.csv means no annual limit (docs/input_format.md); the table shows
    it blank (NaN) and a number where the file has one."""
    table = editable_well_table(demo.scenario)
    rows = {r["well_id"]: r for r in _rows(demo.files["wells.csv"])}
    assert list(table["well_id"]) == list(rows)
    for record in table.to_dict(orient="records"):
        text = rows[record["well_id"]]["permit_annual_volume_m3"].strip()
        if text:
            assert record["permit_annual_volume_m3"] == float(text)
        else:
            assert math.isnan(record["permit_annual_volume_m3"])
        assert record["permit_flow_m3_per_h"] == float(rows[record["well_id"]]["permit_flow_m3_per_h"])


def test_untouched_tables_leave_files_and_hash_alone(demo):
    """Without edits the files come back byte for byte and the scenario keeps its input hash (common practice:
    saving an unchanged form must not change the record)."""
    tech = editable_technology_table(demo.scenario)
    wells = editable_well_table(demo.scenario)
    edited, problems = apply_edits(demo.scenario, tech, wells)
    assert problems == []
    assert input_hash(edited, "reference") == input_hash(demo.scenario, "reference")
    assert scenario_files_with_edits(demo.files, tech, wells, demo.scenario) == demo.files
    assert edited_cells(demo.scenario, tech, wells).empty


def test_edits_written_to_the_files_reproduce_the_edited_scenario(demo):
    """Reading the files with the edits written back gives the input hash of the edited scenario (the run can be
    reproduced from its saved files), and only the edited rows of the CSV files change."""
    tech = editable_technology_table(demo.scenario)
    wells = editable_well_table(demo.scenario)
    tech.loc[0, "investment_eur_per_kw"] = 212.5
    tech.loc[tech["technology_id"] == "air_hp", "efficiency_or_grade"] = 0.47
    tech.loc[tech["technology_id"] == "gas_boiler", "efficiency_or_grade"] = 0.93
    wells.loc[0, "permit_flow_m3_per_h"] = 55.0
    limited = int(np.flatnonzero(np.isfinite(wells["permit_annual_volume_m3"].to_numpy()))[0])
    wells.loc[limited, "permit_annual_volume_m3"] = np.nan  # lift the annual limit
    edited, problems = apply_edits(demo.scenario, tech, wells)
    assert problems == []
    files = scenario_files_with_edits(demo.files, tech, wells, demo.scenario)
    reread, reread_problems = scenario_from_files(files)
    assert reread_problems == []
    for case in ("reference", "high_co2"):
        assert input_hash(reread, case) == input_hash(edited, case)
        assert input_hash(reread, case) != input_hash(demo.scenario, case)
    rows = {r["technology_id"]: r for r in _rows(files["technologies.csv"])}
    assert float(rows["air_hp"]["cop_quality_grade"]) == 0.47
    assert float(rows["gas_boiler"]["efficiency"]) == 0.93
    old_lines = demo.files["technologies.csv"].decode().splitlines()
    new_lines = files["technologies.csv"].decode().splitlines()
    changed = [k for k, (a, b) in enumerate(zip(old_lines, new_lines)) if a != b]
    assert changed == [1, 4]  # gas_boiler and air_hp; header and the other rows keep their text
    well_rows = _rows(files["wells.csv"])
    assert well_rows[limited]["permit_annual_volume_m3"] == ""
    assert float(well_rows[0]["permit_flow_m3_per_h"]) == 55.0
    assert len(edited_cells(demo.scenario, tech, wells)) == 5


@pytest.mark.parametrize(
    "table, item, column, value, words",
    [
        ("technology", "gas_boiler", "investment_eur_per_kw", -10.0, "negative"),
        ("technology", "oil_boiler", "investment_eur_per_kw", "abc", "must be a number"),
        ("technology", "oil_boiler", "fixed_om_pct_per_a", "2,5", "decimal mark"),
        ("technology", "air_hp", "lifetime_a", 0.0, "> 0"),
        ("technology", "air_hp", "variable_om_eur_per_mwh", None, "blank"),
        ("technology", "gw_hp", "efficiency_or_grade", 1.4, "<= 1"),
        ("technology", "gas_boiler", "efficiency_or_grade", 1.5, "<= 1.2"),
        ("technology", "network", "efficiency_or_grade", 0.9, "leave the cell blank"),
        ("technology", "gas_boiler", "investment_eur_per_kw", math.inf, "finite"),
        ("well", "ryn-2", "permit_flow_m3_per_h", -1.0, "negative"),
        ("well", "ryn-2", "permit_flow_m3_per_h", 9000.0, "<= 5000"),
        ("well", "ryn-3", "design_spread_k", 0.0, "> 0"),
        ("well", "ryn-3", "groundwater_temp_c", "warm", "must be a number"),
        ("well", "ryn-1", "permit_annual_volume_m3", -5.0, "negative"),
    ],
)
def test_bad_cells_are_named_by_table_row_and_column(demo, table, item, column, value, words):
    """A bad cell gives one problem naming the table, its row (first row = 1) and column, and no exception.
    Ranges as the reader applies them to technologies.csv and wells.csv (engine.scenario.catalogue and engine.scenario.well_table column specs; the unit-slip
    limit of 5000 m³/h per well is the reader's); the rest is common practice."""
    tech = editable_technology_table(demo.scenario).astype({c: object for c in TECHNOLOGY_EDIT_COLUMNS})
    wells = editable_well_table(demo.scenario).astype({c: object for c in WELL_EDIT_COLUMNS})
    frame, id_column, name = (tech, "technology_id", "technology table") if table == "technology" else (
        wells, "well_id", "well table")
    position = int(np.flatnonzero(frame[id_column].to_numpy() == item)[0])
    frame.loc[position, column] = value
    edited, problems = apply_edits(demo.scenario, tech, wells)
    assert edited is None
    assert len(problems) == 1
    problem = problems[0]
    assert (problem.file, problem.row, problem.column) == (name, position + 1, column)
    assert item in problem.message and words in problem.message
    assert check_edits(demo.scenario, tech, wells) == problems
    with pytest.raises(InputError) as raised:
        scenario_files_with_edits(demo.files, tech, wells, demo.scenario)
    assert raised.value.problems == problems


def test_rows_added_or_reordered_are_refused(demo):
    """The tables edit values only (common practice for a fixed catalogue): a reordered table is a problem."""
    tech = editable_technology_table(demo.scenario).iloc[::-1].reset_index(drop=True)
    edited, problems = apply_edits(demo.scenario, tech, None)
    assert edited is None
    assert [(p.file, p.column) for p in problems] == [("technology table", "technology_id")]


# ------------------------------------------------------------------------------------------------ bundles
def _bundle(tmp_path: Path, files: dict, name: str = "run.zip") -> bytes:
    result = RunResult(status="optimal", message="test bundle", cost_case="reference")
    return export_bundle(result, files, tmp_path / name).read_bytes()


def test_uploaded_bundle_gives_back_the_scenario(demo, tmp_path):
    """A bundle of the demo files reads back to a scenario with the demo's input hash and an empty problems
    table with the columns file, row, column, message."""
    data = _bundle(tmp_path, demo.files)
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        assert "inputs/technologies.csv" in archive.namelist()
    loaded = input_set_from_bundle(data, tmp_path / "work")
    scenario, problems, manifest = loaded.scenario, loaded.problems, loaded.manifest
    assert scenario is not None
    assert list(problems.columns) == ["file", "row", "column", "message"] and problems.empty
    assert manifest["format"] == "heatmosaic-bundle"
    assert input_hash(scenario, "reference") == input_hash(demo.scenario, "reference")
    assert not any((tmp_path / "work").iterdir())  # nothing left behind once the files are in memory


def test_damaged_uploads_become_problem_rows(tmp_path):
    """Bytes that are no zip, and a zip without a manifest, give one problem row each and no scenario."""
    junk = b"this is not a zip file" * 10
    other = io.BytesIO()
    with zipfile.ZipFile(other, "w") as archive:
        archive.writestr("notes.txt", "hello")
    for data in (junk, other.getvalue()):
        loaded = input_set_from_bundle(data, tmp_path)
        scenario, problems, manifest = loaded.scenario, loaded.problems, loaded.manifest
        assert scenario is None and manifest == {}
        assert len(problems) == 1 and problems.loc[0, "message"]


def test_bundle_with_a_bad_cell_names_file_row_and_column(demo, tmp_path):
    """A bundle whose wells.csv has a negative permit lists that cell (spreadsheet row: header = 1)."""
    files = dict(demo.files)
    lines = files["wells.csv"].decode().splitlines()
    header = lines[0].split(",")
    cells = lines[2].split(",")
    cells[header.index("permit_flow_m3_per_h")] = "-40"
    lines[2] = ",".join(cells)
    files["wells.csv"] = ("\n".join(lines) + "\n").encode()
    loaded = input_set_from_bundle(_bundle(tmp_path, files), tmp_path / "work")
    scenario, problems, _ = loaded.scenario, loaded.problems, loaded.manifest
    assert scenario is None
    hit = problems[(problems["file"] == "wells.csv") & (problems["column"] == "permit_flow_m3_per_h")]
    assert list(hit["row"]) == [3]


# ------------------------------------------------------------------------------------------------ solving
def test_a_repeated_request_comes_from_the_cache(tiny, tiny_cache):
    """The same request is answered from the session cache, also under another key with the same input hash;
    another cost case is solved anew (common practice for memoising on a content hash)."""
    cache, key, run, from_cache = tiny_cache
    assert from_cache is False
    again, hit = solve_with_cache(cache, key, tiny.scenario, tiny.files, "again", "reference", "cost", 0.0,
                                     TINY_DAYS)
    assert hit and again is run
    other_key = request_key("another digest", None, None, "reference", "cost", 0.0, TINY_DAYS)
    same, hit = solve_with_cache(cache, other_key, tiny.scenario, tiny.files, "same", "reference", "cost", 0.0,
                                    TINY_DAYS)
    assert hit and same.result is run.result and same.label == "same"
    assert run.input_hash == input_hash(tiny.scenario, "reference", run_settings(tiny.scenario, "cost", 0.0,
                                                                                   TINY_DAYS))


def test_cache_keeps_the_newest_entries():
    """The cache drops the oldest entry beyond its limit and refreshes an entry used again (common practice)."""
    cache: dict = {}
    for k in range(5):
        remember(cache, f"k{k}", k, limit=3)
    assert list(cache) == ["k2", "k3", "k4"]
    remember(cache, "k2", 2, limit=3)
    remember(cache, "k5", 5, limit=3)
    assert list(cache) == ["k4", "k2", "k5"]


def test_saved_run_solves_again_to_the_same_cost(tiny, tiny_cache, tmp_path):
    """A run saved with its files and solved again from them gives the same total cost (rel 1e-9) and CO2: the
    files and the stored choices are all the model needs (the reproducibility the input hash promises)."""
    _, _, run, _ = tiny_cache
    with ScenarioStore(tmp_path / "store.sqlite") as store:
        run_id = store.save_run(run.result, "tiny reference", inputs=run.files)
        saved = store.load_run(run_id)
        files = store.load_inputs(run_id)
    scenario = scenario_for_files({}, files)
    again, from_cache = resolve_saved_run({}, scenario, files, saved, "re-solve")
    assert from_cache is False
    assert again.result.total_cost_eur_per_a == pytest.approx(saved.total_cost_eur_per_a, rel=1e-9)
    assert again.result.co2_t_per_a == pytest.approx(saved.co2_t_per_a, rel=1e-9, abs=1e-6)
    assert again.input_hash == saved.input_hash


def test_a_request_saved_in_the_library_comes_back_without_a_solve(tiny, tiny_cache, tmp_path):
    """A request whose input hash matches an optimal saved run of the same solver is answered from the library
    (the saved run itself, its id set); another solver's request is solved (common practice for memoising on a
    content hash)."""
    _, key, run, _ = tiny_cache
    path = tmp_path / "library.sqlite"
    with ScenarioStore(path) as store:
        run_id = store.save_run(run.result, "tiny reference", inputs=run.files)

    found, hit = solve_with_cache({}, key, tiny.scenario, tiny.files, "from library", "reference", "cost", 0.0,
                                  TINY_DAYS, library=lambda: ScenarioStore(path))
    assert hit and found.saved_run_id == run_id and found.result.timings_s == run.result.timings_s
    assert found.result.total_cost_eur_per_a == pytest.approx(run.result.total_cost_eur_per_a, rel=1e-12)
    other, hit = solve_with_cache({}, key, tiny.scenario, tiny.files, "cbc", "reference", "cost", 0.0, TINY_DAYS,
                                  solver="cbc", library=lambda: ScenarioStore(path))
    assert not hit and other.saved_run_id is None


def test_choices_of_a_run_restore_the_set_up(tiny, tiny_cache):
    """Re-opening a run puts back its cost case, objective, cap and resolution (common practice)."""
    _, _, run, _ = tiny_cache
    choices = choices_of_run(run.result)
    assert choices == {"cost_case": "reference", "objective": "cost", "co2_cap_t_per_a": 0.0,
                       "typical_days": TINY_DAYS}
    setup = initial_setup(tiny, run.result.settings, run.result.cost_case)
    assert (setup["cost_case"], setup["objective"], setup["full_year"], setup["typical_days"]) == (
        "reference", "cost", False, TINY_DAYS)
    year = initial_setup(tiny, {**run.result.settings, "typical_days": 0, "objective": "co2"}, "high_co2")
    assert (year["cost_case"], year["objective"], year["full_year"]) == ("high_co2", "co2", True)
    assert initial_setup(tiny, None, "no such case")["cost_case"] == "reference"
    assert suggested_run_name(run.result) == f"Reference, lowest cost, {TINY_DAYS} typical days"
    assert describe_choices(run.result) == (
        f"Cost case **Reference** · objective **lowest cost** · CO2 cap none · {TINY_DAYS} typical days")
    linked = dataclasses.replace(run.result, settings={**run.result.settings, "stores_between_days": True})
    assert describe_choices(linked).endswith(f"{TINY_DAYS} typical days · stores carry heat from day to day")


def test_result_tables_for_reading_add_up_to_the_city_figures(tiny, tiny_cache):
    """The planner's tables keep the totals of the result (rounded to whole euros and MWh)."""
    _, _, run, _ = tiny_cache
    result = run.result
    districts = district_results_table(result, tiny.scenario.technologies)
    assert len(districts) == len(result.tables["districts"])
    assert districts["total cost [€/a]"].sum() == pytest.approx(result.total_cost_eur_per_a, abs=len(districts))
    supply = supply_results_table(result, tiny.scenario.technologies)
    full = supply_results_table(result, tiny.scenario.technologies, all_rows=True)
    assert len(supply) <= len(full) == len(result.tables["supply"])
    assert supply["heat [MWh/a]"].sum() == pytest.approx(result.tables["supply"]["heat_mwh_per_a"].sum(),
                                                         abs=len(full))
    names = set(tiny.scenario.technologies["name"]) | {"Unserved heat", "No heat supply"}
    assert set(districts["main supply"]) <= names
    wells = well_results_table(result)
    assert list(wells["well doublet"]) == list(result.tables["wells"]["well_id"])


# ------------------------------------------------------------------------------------------------ library
def test_library_table_lists_runs_newest_first(tiny_cache, tmp_path):
    """The overview lists saved runs newest first with the total cost in M€/a (1 M€ = 1e6 €)."""
    _, _, run, _ = tiny_cache
    with ScenarioStore(tmp_path / "lib.sqlite") as store:
        first = store.save_run(run.result, "first", "a note", inputs=run.files)
        second = store.save_run(run.result, "second")
        table = library_table(store)
        choices = run_choices(store)
    assert list(table["name"]) == ["second", "first"]
    assert list(table["run_id"]) == [second, first]
    assert table.loc[1, "total cost [M€/a]"] == pytest.approx(run.result.total_cost_eur_per_a / 1e6)
    assert table.loc[1, "note"] == "a note" and table.loc[1, "objective"] == "lowest cost"
    assert list(choices) == [second, first] and "first" in choices[first]


def test_library_round_trip_through_bytes(tiny_cache, tmp_path):
    """Export and import of the whole library add the same runs to another store; a damaged file is refused
    with a message."""
    _, _, run, _ = tiny_cache
    with ScenarioStore(tmp_path / "a.sqlite") as source, ScenarioStore(tmp_path / "b.sqlite") as target:
        source.save_run(run.result, "exported", inputs=run.files)
        added, error = import_library_bytes(target, library_bytes(source))
        assert error is None and len(added) == 1
        assert target.run_info(added[0])["name"] == "exported"
        none, error = import_library_bytes(target, b"not a library")
        assert none == [] and error


def test_names_and_labels():
    """Small display helpers (common practice)."""
    assert unique_run_names({1: "a", 2: "b", 3: "a"}) == {1: "a (#1)", 2: "b", 3: "a (#3)"}
    assert safe_file_name("High CO2 / 2040 ", ".zip") == "High_CO2___2040.zip"
    # the first saved least-cost run is the baseline (issue 14), whatever its cost case; least-CO2 runs are not
    runs = {3: RunResult("optimal", "", objective="co2", cost_case="high_co2"),
            5: RunResult("optimal", "", cost_case="high_co2"), 7: RunResult("optimal", "", cost_case="reference")}
    assert default_baseline(runs) == 5
    assert default_baseline({4: runs[3], 2: runs[3]}) == 2
    frame = pd.DataFrame({"a": range(3)})
    assert table_height(frame) == 38 + 3 * 35


def test_a_solve_that_fails_gives_a_message_and_is_not_kept(tiny):
    """An error inside the engine reaches the page as a run with status 'error' and a message naming the error,
    never as an exception, and the cache keeps no failed run (common practice: retrying must solve again)."""
    cache: dict = {}
    key = request_key(tiny.digest, None, None, "reference", "money", 0.0, TINY_DAYS)
    run, from_cache = solve_with_cache(cache, key, tiny.scenario, tiny.files, tiny.label, "reference", "money",
                                          0.0, TINY_DAYS)
    assert from_cache is False and cache == {}
    assert run.result.status == "error" and not run.result.solved
    assert "ValueError" in run.result.message and "objective" in run.result.message
