"""Opening a planner's own scenario folder: a plain folder zip, a typed folder path, the folder download, and a
city given as districts.gpkg + weather.epw carried through the library, a bundle and a library zip.

References: the scenario reader on the same files written to a folder on disk (``load_scenario``, the path the
command line takes) for what a zip or path must open to; Python's ``zipfile`` for building the zips, including
hostile ones (a ``..`` entry, a zip bomb of zeros); the saved run's own cost for the re-solves (1e-9 relative,
the precision brief of the library tests).
"""

from __future__ import annotations

import io
import math
import zipfile
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from engine.model.solve import solve_scenario
from engine.scenario import load_scenario
from engine.scenario.files import DISTRICT_LAYER_FILES, SCENARIO_FILES, missing_files
from engine.scenario.folder import DEMO_DIR, validate_scenario
from engine.scenario.inputs import input_hash
from engine.storage.bundle import export_bundle
from engine.storage.library import export_library, import_library
from engine.storage.scenario_zip import ScenarioZipError, read_folder_path, read_folder_zip, zip_kind
from engine.storage.store import ScenarioStore, read_scenario_files
from own_city import folder_zip, own_city_files
from pages._support.edits import editable_technology_table, editable_well_table, scenario_files_with_edits
from pages._support.inputs import (
    demo_input_set, folder_zip_of, input_set_from_bundle, input_set_from_files, input_set_from_path, open_upload,
    problem_table, problems_csv, split_message,
)

ROOT = Path(__file__).resolve().parents[1]
CASE = "reference"


def _written(folder: Path, files: dict[str, bytes]) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for name, content in files.items():
        (folder / name).write_bytes(content)
    return folder


@pytest.fixture(scope="module")
def demo_files():
    return read_scenario_files(DEMO_DIR)


@pytest.fixture(scope="module")
def city(tmp_path_factory):
    """The demo city as a planner's own: districts.gpkg in EPSG:25832 and weather.epw (tests/own_city.py)."""
    return own_city_files("gpkg", tmp_path_factory.mktemp("gpkg"))


# ------------------------------------------------------------------------------------------------ the rule of files
def test_one_districts_layer_in_any_form_is_the_rule():
    base = {"scenario.toml", "technologies.csv", "hourly.csv"}
    for layer in DISTRICT_LAYER_FILES:
        assert missing_files(base | {layer}) == [], layer
        assert layer in SCENARIO_FILES
    assert missing_files(base) == ["districts.geojson"]
    assert missing_files({"districts.gpkg"}) == ["scenario.toml", "technologies.csv", "hourly.csv"]
    assert missing_files(set()) == ["scenario.toml", "districts.geojson", "technologies.csv", "hourly.csv"]


def test_a_folder_without_any_districts_layer_names_every_accepted_form(tmp_path, demo_files):
    files = {k: v for k, v in demo_files.items() if k != "districts.geojson"}
    problems = validate_scenario(_written(tmp_path / "c", files))
    [message] = [p.message for p in problems if p.file == "districts.geojson"]
    assert "districts.gpkg" in message and "districts.zip" in message


# ------------------------------------------------------------------------------------------------ plain folder zips
@pytest.mark.parametrize("folder", [None, "my_city"], ids=["top", "one-folder"])
def test_plain_zip_opens_to_what_the_reader_reads_from_disk(tmp_path, city, folder):
    data = folder_zip({**city, "notes.txt": b"my notes", "__MACOSX/._hourly.csv": b"\x00\x05"}, folder)
    assert zip_kind(data) == "folder"
    files, notes, inner = read_folder_zip(data)
    assert files == city and inner == (folder or "")
    opened = open_upload(data, "my_city.zip", tmp_path / "work")
    assert opened.ok, opened.problems
    reference = load_scenario(_written(tmp_path / "disk", city))
    assert input_hash(opened.scenario, CASE) == input_hash(reference, CASE)
    assert opened.source == "folder_zip"


def test_a_misspelt_file_is_left_out_with_a_hint(city):
    renamed = {k: v for k, v in city.items() if k != "technologies.csv"}
    renamed["technology.csv"] = city["technologies.csv"]
    files, notes, _ = read_folder_zip(folder_zip(renamed))
    assert "technology.csv" not in files
    assert [n.file for n in notes] == ["my_city/technology.csv"] and "technologies.csv" in notes[0].message


def test_two_scenario_folders_are_refused_naming_both(tmp_path, demo_files):
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        for folder in ("north", "south"):
            for name, content in demo_files.items():
                archive.writestr(f"{folder}/{name}", content)
    opened = open_upload(buffer.getvalue(), "two.zip", tmp_path)
    assert not opened.ok and len(opened.problems) == 1
    message = opened.problems["message"].iloc[0]
    assert "2 scenario folders" in message and "north/" in message and "south/" in message


def test_a_folder_two_levels_deep_and_a_zip_without_scenario_files_are_refused(demo_files):
    with pytest.raises(ScenarioZipError, match="2 folders deep"):
        read_folder_zip(folder_zip(demo_files, "outer/inner"))
    with pytest.raises(ScenarioZipError, match="no scenario files"):
        read_folder_zip(folder_zip({"holiday.jpg": b"\xff\xd8"}))
    with pytest.raises(ScenarioZipError, match="not a readable zip"):
        read_folder_zip(b"this is not a zip file")


def test_path_traversal_and_a_zip_bomb_are_refused_before_anything_is_read(tmp_path, demo_files):
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        archive.writestr("../scenario.toml", demo_files["scenario.toml"])
    opened = open_upload(buffer.getvalue(), "evil.zip", tmp_path)
    assert not opened.ok and "'..'" in opened.problems["message"].iloc[0]
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, content in demo_files.items():
            archive.writestr(name, content)
        archive.writestr("hourly.csv.bak", b"0" * (50 * 2**20))  # deflates about 1000 times (zlib, from memory)
    opened = open_upload(buffer.getvalue(), "bomb.zip", tmp_path)
    assert not opened.ok and "zip bomb" in opened.problems["message"].iloc[0]
    assert not list(tmp_path.rglob("*.csv")), "something was written"


def test_a_damaged_file_gives_every_problem_in_one_table(tmp_path, city):
    lines = city["technologies.csv"].decode().splitlines()
    header = lines[0].split(",")
    cells = lines[2].split(",")
    cells[header.index("lifetime_a")] = "twenty"
    lines[2] = ",".join(cells)
    broken = {**city, "technologies.csv": ("\n".join(lines) + "\n").encode(),
              "hourly.csv": city["hourly.csv"].replace(b"\n5,", b"\n5,=1+1,", 1)}
    opened = open_upload(folder_zip(broken), "broken.zip", tmp_path)
    assert not opened.ok
    table = problem_table(opened.problems)
    assert list(table.columns) == ["file", "row", "column", "what is wrong", "how to fix it"]
    row = table[(table["file"] == "technologies.csv") & (table["column"] == "lifetime_a")]
    assert list(row["row"]) == ["3"], table  # header is row 1 (docs/input_format.md)
    assert (table["file"] == "hourly.csv").any(), "the second file's problem is in the same table"
    text = problems_csv(opened.problems).decode("utf-8-sig")
    assert text.startswith("file,row,column,what is wrong,how to fix it")
    assert "\n=" not in text and ",=" not in text  # formula cells defused (engine/outputs/csvfile.py, OWASP)
    assert "Fix them in the files of the folder, zip the folder again" in opened.advice


def test_split_message_keeps_the_advice_apart():
    assert split_message("required file is missing: give the districts as one layer") == (
        "required file is missing", "give the districts as one layer")
    assert split_message("'x' is not a number") == ("'x' is not a number", "")
    assert split_message("is 5 K; expected 0 to 40; divide it by 1000") == ("is 5 K", "expected 0 to 40; divide it by 1000")


# ------------------------------------------------------------------------------------------------ folder paths
def test_folder_paths(tmp_path, city):
    folder = _written(tmp_path / "my city", city)
    opened = input_set_from_path(f'  "{folder}"  ')
    assert opened.ok and opened.source == "folder_path"
    assert input_hash(opened.scenario, CASE) == input_hash(load_scenario(folder), CASE)
    for text, words in (
        (str(tmp_path / "nowhere"), "there is no folder"),
        (str(folder / "hourly.csv"), "is a file, not a folder"),
        (str(tmp_path), "type the path of its folder 'my city'"),
        ("", "type the path"),
    ):
        refused = input_set_from_path(text)
        assert not refused.ok and words in refused.problems["message"].iloc[0], (text, refused.problems)
        assert "press Open folder again" in refused.advice
    zipped = tmp_path / "city.zip"
    zipped.write_bytes(folder_zip(city))
    files, _ = read_folder_path(str(zipped))
    assert files == city


# ------------------------------------------------------------------------------------------------ bundles told by content
def test_a_bundle_is_told_by_its_manifest_and_an_altered_one_points_to_the_plain_folder(tmp_path, demo_files):
    demo = demo_input_set()
    result = solve_scenario(demo.scenario, CASE, typical_days=2)
    path = export_bundle(result, demo_files, tmp_path / "run.zip")
    data = path.read_bytes()
    assert zip_kind(data) == "bundle"
    opened = open_upload(data, "run.zip", tmp_path / "work")
    assert opened.ok and opened.source == "bundle" and opened.manifest
    altered = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as source, zipfile.ZipFile(altered, "w") as target:
        for info in source.infolist():
            content = source.read(info)
            if info.filename == "inputs/technologies.csv":
                content = content.replace(b"0.05", b"0.06", 1) + b"\n"
            target.writestr(info.filename, content)
    refused = open_upload(altered.getvalue(), "run.zip", tmp_path / "work")
    assert not refused.ok
    assert "checksum" in refused.problems["message"].iloc[0] and "inputs/ folder" in refused.problems["message"].iloc[0]
    assert "plain scenario folder" in refused.advice


# ------------------------------------------------------------------------------------------------ download this folder
def test_download_with_edits_opens_again_to_the_same_input_hash(tmp_path, city):
    current = input_set_from_files(city, "own city", source="folder_zip")
    assert current.ok, current.problems
    technologies = editable_technology_table(current.scenario)
    technologies.loc[0, "investment_eur_per_kw"] *= 1.37
    wells = editable_well_table(current.scenario)
    edited = scenario_files_with_edits(current.files, technologies, wells, current.scenario)
    data, name = folder_zip_of(current, edited)
    assert name.endswith(".zip")
    again = open_upload(data, name, tmp_path / "work")
    assert again.ok, again.problems
    assert again.files["districts.gpkg"] == city["districts.gpkg"] and again.files["weather.epw"] == city["weather.epw"]
    reference = load_scenario(_written(tmp_path / "edited", edited))
    assert input_hash(again.scenario, CASE) == input_hash(reference, CASE)
    assert input_hash(again.scenario, CASE) != input_hash(current.scenario, CASE), "the edit was lost"


# ------------------------------------------------------------------------------------------------ a saved run keeps them
def test_gpkg_and_epw_city_saves_reopens_and_resolves_to_the_same_cost(tmp_path, city):
    first = input_set_from_files(city, "own city")
    assert first.ok, first.problems
    result = solve_scenario(first.scenario, CASE, typical_days=2)
    assert result.solved
    cost = result.summary()["total_cost_eur_per_a"]
    with ScenarioStore(tmp_path / "store.sqlite") as store:
        run_id = store.save_run(result, "own city", inputs=city)
        saved = store.load_inputs(run_id)
        export_library(store, tmp_path / "library.zip")
    assert saved == city, "the store lost a binary input"
    with ScenarioStore(tmp_path / "other.sqlite") as other:
        [imported] = import_library(other, tmp_path / "library.zip")
        assert other.load_inputs(imported) == city
    bundle = export_bundle(result, saved, tmp_path / "own.zip")
    from_bundle = input_set_from_bundle(bundle.read_bytes(), tmp_path / "work")
    assert from_bundle.ok and from_bundle.files == city
    for reopened in (input_set_from_files(saved, "saved"), from_bundle):
        assert input_hash(reopened.scenario, CASE) == input_hash(first.scenario, CASE)
        again = solve_scenario(reopened.scenario, CASE, typical_days=2)
        assert again.input_hash == result.input_hash
        assert math.isclose(again.summary()["total_cost_eur_per_a"], cost, rel_tol=1e-9)


# ------------------------------------------------------------------------------------------------ the page keeps its set
def test_a_refused_folder_leaves_the_inputs_in_use_as_they_were(tmp_path, demo_files):
    broken = dict(demo_files)
    broken["technologies.csv"] = broken["technologies.csv"].replace(b",", b";", 3)
    bad = _written(tmp_path / "bad", broken)
    good = _written(tmp_path / "good", own_city_files("geojson"))
    at = AppTest.from_file(str(ROOT / "app.py"), default_timeout=120).run()
    at.switch_page("pages/1_Plan_a_run.py").run()
    assert not at.exception
    before = at.session_state["hm_input"].digest
    at.text_input(key="setup_folder").input(str(bad))
    [button] = [b for b in at.button if b.label == "Open folder"]
    button.click().run()
    assert not at.exception, at.exception
    assert at.session_state["hm_input"].digest == before, "a refused folder replaced the inputs in use"
    assert any("was not opened" in str(e.value) for e in at.error)
    shown = [d.value for d in at.dataframe if "what is wrong" in d.value.columns]
    assert shown and (shown[0]["file"] == "technologies.csv").any()
    assert at.button(key="setup_solve") is not None  # the demo can still be solved
    at.text_input(key="setup_folder").input(str(good))
    [button] = [b for b in at.button if b.label == "Open folder"]
    button.click().run()
    assert not at.exception, at.exception
    assert at.session_state["hm_input"].source == "folder_path"
    assert not any("was not opened" in str(e.value) for e in at.error)


def test_bundles_take_binary_layers_as_bytes_but_still_refuse_nul_and_archives_in_text_files(tmp_path, demo_files):
    """Only the binary scenario files (engine/scenario/files.py BINARY_FILES) skip the text checks of safezip."""
    result = solve_scenario(demo_input_set().scenario, CASE, typical_days=2)
    with_nul = export_bundle(result, {**demo_files, "pathway.csv": b"year\x00\n"}, tmp_path / "nul.zip")
    refused = input_set_from_bundle(with_nul.read_bytes(), tmp_path / "w1")
    assert not refused.ok and "NUL" in refused.problems["message"].iloc[0]
    tar_like = b"a" * 257 + b"ustar" + b"\n"  # the POSIX tar magic at offset 257 (POSIX.1-1988 ustar header)
    nested = export_bundle(result, {**demo_files, "wells.csv": tar_like}, tmp_path / "nest.zip")
    refused = input_set_from_bundle(nested.read_bytes(), tmp_path / "w2")
    assert not refused.ok and "archive inside the archive" in refused.problems["message"].iloc[0]
