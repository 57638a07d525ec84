"""Hostile text in the inputs stays text: in the reader, the store, the tables, the spreadsheet, the HTML summary,
the district map and the dashboard.

The demo city is copied and its free-text fields are replaced by the payloads of the usual injection classes:
script and event-handler markup (OWASP Cross Site Scripting Prevention Cheat Sheet), a JavaScript template
literal ``${...}`` (folium writes popups into template literals), SQL comment-and-drop (OWASP SQL Injection
Prevention Cheat Sheet; the Python ``sqlite3`` documentation, "How to use placeholders to bind values in SQL
queries") and spreadsheet formulas (OWASP "CSV Injection"). Every markup payload also calls ``alert``, so a
payload that runs shows both as ``window.__pwned`` and as a dialog.

The browser checks open the files in Debian's Chromium through Playwright with every request that would leave the
file (or the local dashboard) refused; they skip without /usr/bin/chromium unless HEATMOSAIC_REQUIRE_BROWSER=1.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import os
import re
import shutil
import sqlite3
import subprocess
import sys
import zipfile
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from engine.outputs.export import tables_csv_zip, tables_xlsx
from engine.outputs.figures import difference_table, format_table, kpi_table, main_supply_changes
from engine.scenario import DEMO_DIR, load_scenario
from engine.outputs.maps import district_map
from engine.scenario.problems import InputError
from engine.outputs.report import html_report
from engine.model.solve import run_settings, solve_scenario
from engine.storage.store import ScenarioStore, read_scenario_files
from pages._support.tables import district_results_table
from test_browser_e2e import (
    CHROMIUM,
    CHROMIUM_ARGS,
    ROOT,
    STEP_TIMEOUT_MS,
    _free_port,
    _require_browser,
    _settled,
    _wait_for_health,
)

TYPICAL_DAYS = 3
SCRIPT_NAME = "Old <script>window.__pwned=1;alert(1)</script>"
IMG_NAME = '<img src=x onerror="window.__pwned=1;alert(2)">'
FORMULA_NAME = '=HYPERLINK("http://example.invalid/x","open")'
WELL_ID = '"><svg onload=window.__pwned=1;alert(3)>'
TEMPLATE_NAME = "Gas ${(window.__pwned=1, alert(4))}"
SQL_NAME = "Air '; DROP TABLE runs; --"
CASE_NAME = "fossil <svg/onload=window.__pwned=1;alert(5)>"
CASE_DESCRIPTION = "'; DROP TABLE runs; -- <img src=x onerror=\"window.__pwned=1;alert(6)\"> cheap gas"
SCENARIO_NAME = "=SUM(1,2) Kelmsvoort <script>window.__pwned=1;alert(7)</script>"
RUN_NAMES = ("Run <script>window.__pwned=1;alert(8)</script>", "=1+2 '; DROP TABLE runs; --")
TITLE = 'Summary <img src=x onerror="window.__pwned=1;alert(9)"> ${window.__pwned=1}'
NOTE = "'); DROP TABLE run_tables; -- <img src=x onerror=\"window.__pwned=1;alert(10)\">"
MARKDOWN_NOTE = "see ![tracker](http://example.invalid/pixel.png)"
MARKDOWN_RUN = "Run ![tracker](http://example.invalid/run.png)"
DISTRICT_NAMES = (SCRIPT_NAME, IMG_NAME, FORMULA_NAME)


# ---------------------------------------------------------------------------------------------------- inputs
def _edit_csv(path: Path, edit) -> None:
    rows = list(csv.reader(io.StringIO(path.read_text(encoding="utf-8"))))
    edit(rows)
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(rows)
    path.write_text(out.getvalue(), encoding="utf-8")


def _toml_string(text: str) -> str:
    return json.dumps(text)  # a JSON string is a valid TOML basic string for this text


def make_hostile_city(folder: Path) -> Path:
    """The demo city in ``folder`` with hostile names, ids (where the reader allows them) and descriptions."""
    shutil.copytree(DEMO_DIR, folder)
    geojson = json.loads((folder / "districts.geojson").read_text(encoding="utf-8"))
    for feature, name in zip(geojson["features"], DISTRICT_NAMES):
        feature["properties"]["name"] = name
    (folder / "districts.geojson").write_text(json.dumps(geojson), encoding="utf-8")

    def wells(rows):
        rows[1][rows[0].index("well_id")] = WELL_ID

    def technologies(rows):
        ids, names = rows[0].index("technology_id"), rows[0].index("name")
        for row in rows[1:]:
            row[names] = {"gas_boiler": TEMPLATE_NAME, "air_hp": SQL_NAME}.get(row[ids], row[names])

    _edit_csv(folder / "wells.csv", wells)
    _edit_csv(folder / "technologies.csv", technologies)
    cases = (folder / "cost_cases.toml").read_text(encoding="utf-8")
    cases = re.sub(r'\[cases\.fossil_lock_in\]\ndescription = "[^"\n]*"',
                   f"[cases.{_toml_string(CASE_NAME)}]\ndescription = {_toml_string(CASE_DESCRIPTION)}", cases)
    (folder / "cost_cases.toml").write_text(cases, encoding="utf-8")
    scenario = (folder / "scenario.toml").read_text(encoding="utf-8")
    scenario = re.sub(r'(?m)^name = "[^"\n]*"', f"name = {_toml_string(SCENARIO_NAME)}", scenario, count=1)
    (folder / "scenario.toml").write_text(scenario, encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def hostile(tmp_path_factory):
    """The hostile city read and solved under the reference case and the hostile-named case (3 typical days)."""
    folder = make_hostile_city(tmp_path_factory.mktemp("hostile") / "city")
    scenario = load_scenario(folder)
    settings = run_settings(scenario, typical_days=TYPICAL_DAYS)
    results = {
        name: solve_scenario(scenario, cost_case=case, settings=settings, workers=1)
        for name, case in zip(RUN_NAMES, ("reference", CASE_NAME))
    }
    assert all(r.solved for r in results.values()), [r.message for r in results.values()]
    return {"folder": folder, "scenario": scenario, "files": read_scenario_files(folder), "results": results}


# ---------------------------------------------------------------------------------------------------- browser
def _open_offline(sync_api, html: str, path: Path, action=None) -> dict:
    """Open ``html`` from ``path`` in Chromium with every other request refused; run ``action(page)``.

    Returns what happened: requests refused, dialogs, page errors, ``typeof window.__pwned`` and the action's
    return value.
    """
    path.write_text(html, encoding="utf-8")
    uri = path.resolve().as_uri()
    seen = {"refused": [], "dialogs": [], "errors": []}
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 1000})

            def refuse(route):
                if route.request.url == uri:
                    return route.continue_()
                seen["refused"].append(route.request.url[:120])
                return route.abort()

            page.route("**/*", refuse)
            page.on("dialog", lambda dialog: (seen["dialogs"].append(dialog.message), dialog.dismiss()))
            page.on("pageerror", lambda error: seen["errors"].append(str(error)))
            page.goto(uri)
            page.wait_for_load_state("load")
            page.wait_for_timeout(500)
            seen["action"] = action(page) if action else None
            page.wait_for_timeout(300)
            seen["pwned"] = page.evaluate("typeof window.__pwned")
        finally:
            browser.close()
    return seen


def _assert_inert(seen: dict) -> None:
    assert seen["pwned"] == "undefined", "a payload ran: window.__pwned was set"
    assert seen["dialogs"] == [], f"a payload opened dialogs {seen['dialogs']}"
    assert seen["errors"] == [], f"script errors (a payload may have broken a script): {seen['errors'][:3]}"
    assert seen["refused"] == [], f"the page asked for {seen['refused'][:5]}"


# ---------------------------------------------------------------------------------------------------- reader
def test_markup_in_a_district_id_is_refused_naming_file_feature_and_property(tmp_path):
    """A district id with markup is refused: the reader allows letters, digits, '_' and '-' only
    (docs/input_format.md), and the problem names districts.geojson, the feature and the property."""
    folder = tmp_path / "city"
    shutil.copytree(DEMO_DIR, folder)
    geojson = json.loads((folder / "districts.geojson").read_text(encoding="utf-8"))
    geojson["features"][1]["properties"]["district_id"] = "<b>station</b>"
    (folder / "districts.geojson").write_text(json.dumps(geojson), encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_scenario(folder)
    problems = [p for p in caught.value.problems if p.column == "district_id" and "<b>station</b>" in p.message]
    assert problems, [str(p) for p in caught.value.problems]
    problem = problems[0]
    assert problem.file == "districts.geojson" and problem.row == 2
    assert "letters, digits" in problem.message
    assert "feature 2" in str(problem) and "district_id" in str(problem)


def test_hostile_names_are_read_verbatim(hostile):
    """The reader keeps every hostile name, id and description exactly as written (no escaping at read time:
    escaping belongs to whoever renders, OWASP XSS Prevention Cheat Sheet, "output encoding")."""
    scenario = hostile["scenario"]
    assert list(scenario.districts["name"])[:3] == list(DISTRICT_NAMES)
    assert WELL_ID in set(scenario.wells["well_id"])
    names = dict(zip(scenario.technologies["technology_id"], scenario.technologies["name"]))
    assert names["gas_boiler"] == TEMPLATE_NAME and names["air_hp"] == SQL_NAME
    assert scenario.cost_cases[CASE_NAME].description == CASE_DESCRIPTION
    assert scenario.settings.name == SCENARIO_NAME


# ---------------------------------------------------------------------------------------------------- store
def test_store_keeps_hostile_names_verbatim_and_its_tables(hostile, tmp_path):
    """Runs saved under SQL payloads are listed, read and renamed verbatim and the store's tables survive
    (bound parameters; Python sqlite3 documentation, "How to use placeholders to bind values in SQL queries")."""
    path = tmp_path / "store.sqlite"
    with ScenarioStore(path) as store:
        ids = [store.save_run(result, name, NOTE, inputs=hostile["files"])
               for name, result in hostile["results"].items()]
        listed = store.list_runs().set_index("run_id")
        assert [listed.at[i, "name"] for i in ids] == list(RUN_NAMES)
        assert listed.at[ids[1], "cost_case"] == CASE_NAME
        assert listed.at[ids[0], "note"] == NOTE
        assert store.run_info(ids[1])["name"] == RUN_NAMES[1]
        loaded = store.load_run(ids[1])
        assert loaded.cost_case == CASE_NAME and loaded.scenario_name == SCENARIO_NAME
        assert set(loaded.tables["districts"]["name"]) >= set(DISTRICT_NAMES)
        assert WELL_ID in set(loaded.tables["wells"]["well_id"])
        assert store.load_inputs(ids[0]) == hostile["files"]
        renamed = "x'); DELETE FROM runs WHERE ('1'='1"
        store.rename_run(ids[0], renamed)
        assert store.run_info(ids[0])["name"] == renamed
        assert len(store.list_runs()) == 2
    with contextlib.closing(sqlite3.connect(path)) as conn:
        tables = {row[0] for row in conn.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        assert {"runs", "run_tables", "run_inputs"} <= tables
        assert conn.execute("SELECT count(*) FROM run_tables").fetchone()[0] > 0


# ---------------------------------------------------------------------------------------------------- tables
def test_kpi_and_difference_tables_keep_the_names_literally(hostile):
    """The key-figure and difference tables hold the raw names (the renderer escapes, engine.outputs.figures says so):
    run names, technology names in the column headers and the changed districts' names."""
    results, scenario = hostile["results"], hostile["scenario"]
    technologies = scenario.technologies
    kpi = kpi_table(results, technologies)
    assert list(kpi["run"]) == list(RUN_NAMES)
    assert list(kpi["cost case"]) == ["Reference", CASE_NAME]  # snake-case ids read as words, names as typed
    assert f"heat {TEMPLATE_NAME} [MWh/a]" in kpi.columns
    assert list(format_table(kpi)["run"]) == list(RUN_NAMES)
    changes = main_supply_changes(results[RUN_NAMES[1]], results[RUN_NAMES[0]], technologies)
    changed = set(changes["name"])
    assert changed & set(DISTRICT_NAMES), "the hostile case should change the main supply of a hostile district"
    differences = difference_table(results, RUN_NAMES[0], technologies)
    listed = differences["changed districts"].iloc[0]
    for name in changed:
        assert name in listed
    assert list(differences["run"]) == [RUN_NAMES[1]]
    assert set(changes["main supply"]) & {TEMPLATE_NAME, SQL_NAME}
    districts = district_results_table(results[RUN_NAMES[0]], technologies)
    assert list(districts["district"])[:3] == list(DISTRICT_NAMES)


def test_spreadsheet_keeps_text_and_holds_no_formula(hostile):
    """In the xlsx export every name is a text cell, and text starting with '=' is no formula: no sheet holds an
    ``<f>`` element (ECMA-376 Part 1, SpreadsheetML, cell formula element ``f``, from memory; OWASP CSV
    Injection for the risk)."""
    data = tables_xlsx(hostile["results"])
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        sheets = [n for n in archive.namelist() if n.startswith("xl/worksheets/") and n.endswith(".xml")]
        assert sheets
        for name in sheets:
            assert not re.search(rb"<(?:\w+:)?f[ >/]", archive.read(name)), f"{name} holds a formula"
    book = openpyxl.load_workbook(io.BytesIO(data))
    runs = book["runs"]
    header = [c.value for c in runs[1]]
    cells = {header[k]: [row[k] for row in runs.iter_rows(min_row=2)] for k in range(len(header))}
    assert [c.value for c in cells["run"]] == list(RUN_NAMES)
    assert all(c.data_type == "s" for c in cells["run"])
    assert [c.value for c in cells["scenario"]] == [SCENARIO_NAME] * 2
    assert [c.value for c in cells["cost case"]] == ["reference", CASE_NAME]
    districts = book["districts"]
    header = [c.value for c in districts[1]]
    names = [row[header.index("name")] for row in districts.iter_rows(min_row=2)]
    formula_cells = [c for c in names if c.value == FORMULA_NAME]
    assert len(formula_cells) == 2 and all(c.data_type == "s" for c in formula_cells)
    assert {c.value for c in names} >= set(DISTRICT_NAMES)


def _defused(text: str) -> str:
    """What the CSV export should hold for ``text``: an apostrophe before text that starts with = + - @ tab or CR
    (OWASP, "CSV Injection": prefix such cells so a spreadsheet shows them as text)."""
    return "'" + text if text[:1] in ("=", "+", "-", "@", "\t", "\r") else text


def test_csv_files_keep_text_and_start_no_formula(hostile):
    """The CSV zip gives back the names (RFC 4180 quoting of the quotes and commas in them), with formula-like
    text defused: no cell of any file starts with '=', '+', '-' or '@' unless it is a number."""
    with zipfile.ZipFile(io.BytesIO(tables_csv_zip(hostile["results"]))) as archive:
        runs = pd.read_csv(io.BytesIO(archive.read("runs.csv")), keep_default_na=False)
        districts = pd.read_csv(io.BytesIO(archive.read("districts.csv")), keep_default_na=False)
        texts = {name: archive.read(name).decode("utf-8") for name in archive.namelist()}
    assert list(runs["run"]) == [_defused(n) for n in RUN_NAMES]
    assert list(runs["run"])[1] == "'=1+2 '; DROP TABLE runs; --"
    assert list(runs["scenario"]) == [_defused(SCENARIO_NAME)] * 2
    assert set(districts["name"]) >= {_defused(n) for n in DISTRICT_NAMES}
    assert f"'{FORMULA_NAME}" in set(districts["name"])
    for name, text in texts.items():
        for row in csv.reader(io.StringIO(text)):
            for cell in row:
                if cell[:1] in ("=", "+", "-", "@"):
                    float(cell)  # only numbers such as -3.5 may start so; text raises here and fails the test


# ---------------------------------------------------------------------------------------------------- HTML
def test_html_summary_shows_hostile_text_and_runs_none_of_it(hostile, tmp_path):
    """The HTML summary with a hostile title opened in Chromium, nothing allowed out: no payload runs, no dialog
    opens, no script breaks, and every hostile text is on the page as visible text (OWASP XSS Prevention Cheat
    Sheet: HTML-encode untrusted data in element content and attributes)."""
    sync_api = _require_browser()
    scenario = hostile["scenario"]
    html = html_report(hostile["results"], scenario, scenario.technologies, title=TITLE)

    def read(page):
        return {
            "text": page.evaluate("() => document.body.innerText"),
            "svg_text": page.locator("svg text").all_text_contents(),
            "svg_titles": page.evaluate(
                "() => Array.from(document.querySelectorAll('svg title')).map(t => t.textContent)"),
            "title": page.title(),
        }

    seen = _open_offline(sync_api, html, tmp_path / "summary.html", read)
    _assert_inert(seen)
    shown = seen["action"]
    assert shown["title"] == TITLE
    for text in (TITLE, SCENARIO_NAME, *RUN_NAMES, CASE_NAME, CASE_DESCRIPTION, f"heat {TEMPLATE_NAME} [MWh/a]"):
        assert text in shown["text"], f"{text!r} is not shown as text"
    labels = " ".join(shown["svg_text"])
    for name in DISTRICT_NAMES:
        assert name in labels, f"district {name!r} is not labelled on the map"
    for name in RUN_NAMES:
        assert name in labels, f"run {name!r} is not on the charts"
    assert any(WELL_ID in title for title in shown["svg_titles"])


def test_district_map_popups_and_tooltips_show_text_and_run_nothing(hostile, tmp_path):
    """The folium district map (with a plume outline of the hostile well) opened in Chromium with nothing allowed
    out: every popup and tooltip opened, none runs a payload, and the popups show the hostile names as text."""
    sync_api = _require_browser()
    scenario = hostile["scenario"]
    result, baseline = hostile["results"][RUN_NAMES[1]], hostile["results"][RUN_NAMES[0]]
    well = scenario.wells[scenario.wells["well_id"] == WELL_ID].iloc[0]
    lon, lat = float(well["lon"]), float(well["lat"])
    plume = [(lon, lat), (lon + 0.002, lat + 0.0005), (lon + 0.002, lat - 0.0005), (lon, lat)]
    fmap = district_map(scenario, result, measure="change_total_cost", baseline=baseline,
                        technologies=scenario.technologies,
                        plume_polygons=[{"well_id": WELL_ID, "level_k": 1.0, "coordinates": plume}])
    html = fmap.get_root().render()

    def open_everything(page):
        try:
            page.wait_for_selector("path.leaflet-interactive", timeout=15_000)
        except sync_api.TimeoutError:
            return None  # the map did not draw; the page errors say why
        return page.evaluate(
            """(name) => {
                const map = window[name], popups = [], tooltips = [];
                map.eachLayer(layer => {
                    const where = layer.getBounds ? layer.getBounds().getCenter()
                        : (layer.getLatLng ? layer.getLatLng() : null);
                    if (layer.getPopup && layer.getPopup()) {
                        layer.openPopup(where || undefined);
                        const element = layer.getPopup().getElement();
                        popups.push(element ? element.innerText : '');
                    }
                    if (layer.getTooltip && layer.getTooltip()) {
                        try { layer.openTooltip(where || undefined); } catch (error) { }
                        const element = layer.getTooltip().getElement();
                        tooltips.push(element ? element.innerText : '');
                    }
                });
                return {popups, tooltips, legend: document.querySelector('.heatmosaic-legend').innerText};
            }""",
            fmap.get_name(),
        )

    seen = _open_offline(sync_api, html, tmp_path / "map.html", open_everything)
    _assert_inert(seen)
    assert seen["action"] is not None, "the map drew no district"
    popups, tooltips = seen["action"]["popups"], seen["action"]["tooltips"]
    assert len(popups) >= len(scenario.districts) + len(scenario.wells)
    text = "\n".join(popups)
    for name in (*DISTRICT_NAMES, WELL_ID, TEMPLATE_NAME, SQL_NAME):
        assert name in text, f"{name!r} is not in any popup"
    tips = "\n".join(tooltips)
    assert f"Plume of well {WELL_ID}" in tips and f"Well {WELL_ID}" in tips
    assert any(t.startswith(SCRIPT_NAME) for t in tooltips)


# ---------------------------------------------------------------------------------------------------- dashboard
@contextlib.contextmanager
def _dashboard(store: Path, log: Path):
    """``streamlit run app.py`` on a free local port using the library file ``store``."""
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    env = {**os.environ, "HEATMOSAIC_STORE": str(store)}
    with open(log, "wb") as out:
        process = subprocess.Popen(
            [sys.executable, "-m", "streamlit", "run", "app.py", "--server.headless", "true", "--server.port",
             str(port), "--server.address", "127.0.0.1", "--browser.gatherUsageStats", "false",
             # a source file saved while the test runs must not reload the engine's modules under the sessions
             "--server.fileWatcherType", "none"],
            cwd=ROOT, env=env, stdout=out, stderr=subprocess.STDOUT,
        )
    try:
        _wait_for_health(base, process, log)
        yield base
    finally:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=15)


@pytest.fixture(scope="module")
def dashboard_visit(hostile, tmp_path_factory):
    """The results, comparison and share pages of a library holding the two hostile runs, visited in Chromium.

    The second run's name and the notes also carry Markdown images pointing outside the machine.
    """
    sync_api = _require_browser()
    folder = tmp_path_factory.mktemp("dashboard")
    store = folder / "store.sqlite"
    names = (RUN_NAMES[0], f"{RUN_NAMES[1]} {MARKDOWN_RUN}")
    with ScenarioStore(store) as library:
        for name, result in zip(names, hostile["results"].values()):
            library.save_run(result, name, f"{NOTE} {MARKDOWN_NOTE}", inputs=hostile["files"])
    seen = {"refused": [], "dialogs": [], "errors": [], "pages": {}}
    with _dashboard(store, folder / "streamlit.log") as base, sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            context = browser.new_context(viewport={"width": 1400, "height": 1000})

            def only_local(route):
                url = route.request.url
                if url.startswith(base) or url.startswith(("data:", "blob:")):
                    return route.continue_()
                seen["refused"].append(url[:120])
                return route.abort()

            context.route("**/*", only_local)
            page = context.new_page()
            page.set_default_timeout(STEP_TIMEOUT_MS)
            page.on("dialog", lambda dialog: (seen["dialogs"].append(dialog.message), dialog.dismiss()))
            page.on("pageerror", lambda error: seen["errors"].append(str(error)))
            for path, heading in (("Run_results", "Run results"), ("Compare_runs", "Compare runs"),
                                  ("Share", "Share")):
                page.goto(f"{base}/{path}")
                page.get_by_role("heading", name=heading).wait_for()
                _settled(page)
                for frame in page.locator("iframe[title='streamlit_folium.st_folium']").all():
                    frame.scroll_into_view_if_needed()
                page.wait_for_timeout(1000)
                seen["pages"][path] = {
                    "text": page.evaluate("() => document.body.innerText"),
                    "pwned": [frame.evaluate("typeof window.__pwned") for frame in page.frames],
                    "exceptions": page.locator("[data-testid=stException]").count(),
                }
        finally:
            browser.close()
    return seen


@pytest.mark.slow
def test_dashboard_pages_run_no_payload_of_saved_runs(dashboard_visit):
    """Results, comparison and share pages of hostile saved runs (their maps in frames included) run no payload,
    open no dialog, raise no exception, and the comparison shows the run's script name as text."""
    seen = dashboard_visit
    assert seen["dialogs"] == [], seen["dialogs"]
    assert seen["errors"] == [], seen["errors"][:3]
    for path, page in seen["pages"].items():
        assert set(page["pwned"]) == {"undefined"}, f"a payload ran on {path}"
        assert page["exceptions"] == 0, f"{path} shows an exception"
    assert RUN_NAMES[0] in seen["pages"]["Compare_runs"]["text"]
    assert "DROP TABLE run_tables" in seen["pages"]["Run_results"]["text"]


@pytest.mark.slow
def test_dashboard_pages_fetch_nothing_a_name_points_to(dashboard_visit):
    """A Markdown image in a run's name or note is shown as text, not fetched (common practice: user text is
    displayed literally; the dashboard works offline)."""
    assert dashboard_visit["refused"] == [], f"the pages asked for {dashboard_visit['refused'][:5]}"
