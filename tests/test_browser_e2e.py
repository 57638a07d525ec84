"""End to end in a real browser: Debian's Chromium, driven by Playwright, against ``streamlit run app.py``.

A planner's path through the dashboard: open the set-up page, solve the demo under two cost cases, save both runs,
open the comparison and see both names in its key-figure table, with the maps and the plotly charts drawn. Every
request that leaves this machine is refused, so the test also shows that the dashboard works without internet.

Skipped where /usr/bin/chromium is missing, unless HEATMOSAIC_REQUIRE_BROWSER=1 (set by CI), which makes a
missing browser a failure. No browser is ever downloaded.
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # browser, fuzz or multi-process: left out of the quick loop

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
                 "--no-first-run"]
ARTIFACTS = ROOT / "test-artifacts"
START_TIMEOUT_S = 60
STEP_TIMEOUT_MS = 90_000


def _require_browser():
    """The Playwright module, or a skip (a failure when the browser is required)."""
    required = os.environ.get("HEATMOSAIC_REQUIRE_BROWSER") == "1"
    reason = None
    if not Path(CHROMIUM).exists():
        reason = f"{CHROMIUM} is not installed"
    else:
        try:
            from playwright import sync_api
        except ImportError as exc:  # pragma: no cover - depends on the machine
            reason = f"playwright is not importable ({exc})"
    if reason is not None:
        if required:
            pytest.fail(f"HEATMOSAIC_REQUIRE_BROWSER=1 but {reason}")
        pytest.skip(reason)
    return sync_api


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def _wait_for_health(base: str, server: subprocess.Popen, log: Path) -> None:
    deadline = time.monotonic() + START_TIMEOUT_S
    while time.monotonic() < deadline:
        if server.poll() is not None:
            raise AssertionError(f"streamlit stopped on start:\n{log.read_text()}")
        try:
            with urllib.request.urlopen(f"{base}/_stcore/health", timeout=2) as answer:
                if answer.read().strip() == b"ok":
                    return
        except OSError:
            pass
        time.sleep(0.5)
    raise AssertionError(f"streamlit did not answer within {START_TIMEOUT_S} s:\n{log.read_text()}")


@pytest.fixture
def server(tmp_path):
    """``streamlit run app.py`` on a free local port with a library file of its own; stopped afterwards."""
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    log = tmp_path / "streamlit.log"
    env = {**os.environ, "HEATMOSAIC_STORE": str(tmp_path / "store.sqlite")}
    with open(log, "wb") as out:
        process = subprocess.Popen(
            [sys.executable, "-m", "streamlit", "run", "app.py", "--server.headless", "true", "--server.port",
             str(port), "--server.address", "127.0.0.1", "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none"],
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


def _settled(page) -> None:
    """Wait until the app's script run has finished (the app root says so in an attribute)."""
    page.wait_for_timeout(300)
    page.wait_for_selector("[data-testid=stApp][data-test-script-state=notRunning]", timeout=STEP_TIMEOUT_MS)
    page.wait_for_timeout(500)


def _solve_and_save(page, name: str) -> None:
    page.get_by_role("button", name="Solve", exact=True).click()
    page.get_by_text("5 · Save to the library").wait_for(timeout=STEP_TIMEOUT_MS)
    _settled(page)
    page.get_by_label("Name").fill(name)
    page.get_by_role("button", name="Save run").click()
    page.get_by_text(f"Saved as “{name}”").wait_for(timeout=STEP_TIMEOUT_MS)
    _settled(page)


def _choose(page, label: str, option: str) -> None:
    """Pick ``option`` in the select box ``label`` (the list opens on a click, or else on the arrow key)."""
    box = page.get_by_role("combobox", name=label)
    box.click()
    wanted = page.get_by_role("option", name=option, exact=True)
    page.wait_for_timeout(300)
    if not wanted.is_visible():
        box.press("ArrowDown")
    wanted.click()


def test_two_cost_cases_solved_saved_and_compared_in_chromium(server):
    """In Chromium: the demo solved and saved under two cost cases shows both run names in the comparison's
    key-figure table, with a Leaflet map in its frame and plotly charts drawn, and no request leaves the machine
    (common practice for an offline-capable local tool)."""
    sync_api = _require_browser()
    refused: list[str] = []

    def only_local(route):
        url = route.request.url
        if url.startswith(server) or url.startswith(("data:", "blob:")):
            return route.continue_()
        refused.append(url)
        return route.abort()

    ARTIFACTS.mkdir(exist_ok=True)
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            context = browser.new_context(viewport={"width": 1400, "height": 1000})
            context.route("**/*", only_local)
            page = context.new_page()
            page.set_default_timeout(STEP_TIMEOUT_MS)
            page.goto(f"{server}/Plan_a_run")
            page.get_by_role("heading", name="Plan a run").wait_for()
            _settled(page)
            _solve_and_save(page, "Reference prices")
            _choose(page, "Cost case", "High CO2")
            _settled(page)
            _solve_and_save(page, "High CO2 price")

            page.goto(f"{server}/Compare_runs")
            page.get_by_role("heading", name="Key figures").wait_for()
            _settled(page)
            key_figures = page.locator("[data-testid=stDataFrame]").first.locator("table").first.text_content()
            assert "Reference prices" in key_figures and "High CO2 price" in key_figures

            frames = page.locator("iframe[title='streamlit_folium.st_folium']")
            frames.nth(1).wait_for(timeout=STEP_TIMEOUT_MS)  # drawn after the tables: later on a busy machine
            assert frames.count() == 2
            frames.first.scroll_into_view_if_needed()
            map_frame = page.frame_locator("iframe[title='streamlit_folium.st_folium']").first
            map_frame.locator(".leaflet-container").first.wait_for(timeout=STEP_TIMEOUT_MS)
            assert map_frame.locator("path.leaflet-interactive").count() > 0, "no district drawn on the map"
            assert frames.first.bounding_box()["height"] > 100

            charts = page.locator("[data-testid=stPlotlyChart]")
            assert charts.count() >= 3
            charts.first.scroll_into_view_if_needed()
            page.locator("[data-testid=stPlotlyChart] .main-svg").first.wait_for(timeout=STEP_TIMEOUT_MS)

            height = page.evaluate("() => document.querySelector('[data-testid=stMain]').scrollHeight")
            page.set_viewport_size({"width": 1400, "height": min(int(height) + 40, 8000)})
            page.wait_for_timeout(1500)
            page.screenshot(path=str(ARTIFACTS / "compare_runs.png"), full_page=True)
        finally:
            browser.close()
    assert refused == [], f"the dashboard asked the internet for {refused[:5]}"


def test_cancel_stops_a_full_year_solve_in_chromium(server):
    """In Chromium: a full-year solve of the demo (minutes of HiGHS) is stopped by its Cancel button. The page
    says so well before the runner would give up waiting (60 s), which it can only do once the solver has
    stopped; no run is offered for saving."""
    sync_api = _require_browser()
    ARTIFACTS.mkdir(exist_ok=True)
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_context(viewport={"width": 1400, "height": 1000}).new_page()
            page.set_default_timeout(STEP_TIMEOUT_MS)
            page.goto(f"{server}/Plan_a_run")
            page.get_by_role("heading", name="Plan a run").wait_for()
            _settled(page)
            page.get_by_text("Full year (8760 hours)").click()
            _settled(page)
            page.get_by_role("button", name="Solve", exact=True).click()
            cancel = page.get_by_role("button", name="Cancel")
            cancel.wait_for(timeout=STEP_TIMEOUT_MS)
            page.wait_for_timeout(3000)  # well inside the solve: HiGHS is running
            page.screenshot(path=str(ARTIFACTS / "plan_solving_with_cancel.png"), full_page=True)
            cancel.click()
            page.get_by_text("The solve was stopped before it finished").wait_for(timeout=40_000)
            _settled(page)
            page.screenshot(path=str(ARTIFACTS / "plan_after_cancel.png"), full_page=True)
            assert page.get_by_text("5 · Save to the library").count() == 0
            assert page.get_by_role("button", name="Cancel").count() == 0
        finally:
            browser.close()


# ------------------------------------------------------------------------------------------ every page, as a planner
def _demo_ids() -> set[str]:
    """Internal ids of the demo that a reader must never meet in a table: kinds, cost cases, districts."""
    from engine.scenario import DEMO_DIR, load_scenario
    from engine.scenario.kinds import TECHNOLOGY_KINDS

    demo = load_scenario(DEMO_DIR)
    return set(TECHNOLOGY_KINDS) | set(demo.cost_cases) | set(demo.districts["district_id"].astype(str))


def _page_faults(page, ids: set[str], where: str) -> list[str]:
    """What is wrong on the page now: exception elements, figures under 200 px, internal ids in table cells."""
    _settled(page)
    faults = []
    if page.locator("[data-testid=stException]").count():
        faults.append(f"{where}: an exception is shown")
    charts = page.locator("[data-testid=stPlotlyChart]")
    for k in range(charts.count()):
        chart = charts.nth(k)
        if not chart.is_visible():
            continue  # in a closed tab or a folded expander: checked where it is opened
        chart.scroll_into_view_if_needed()
        box = chart.bounding_box()
        if box is not None and box["height"] < 200:
            faults.append(f"{where}: figure {k + 1} is {box['height']:.0f} px tall")
    cells = page.evaluate(
        "() => Array.from(document.querySelectorAll('[data-testid=stDataFrame] th, [data-testid=stDataFrame] td,"
        " [data-testid=stTable] th, [data-testid=stTable] td')).map(c => c.textContent.trim())")
    for text in cells:
        if text in ids or text == "None" or any("_" in i and i in text for i in ids):
            faults.append(f"{where}: a table shows {text!r}")
    return faults


def _nav(page, title: str) -> None:
    """Open a page through the sidebar navigation (the session and its state stay; a new address would not)."""
    page.locator("[data-testid=stSidebarNav] a", has_text=title).first.click()
    page.wait_for_timeout(500)


def _click_tab(page, name: str) -> None:
    page.get_by_role("tab", name=name).click()
    _settled(page)


@pytest.mark.slow
def test_every_page_after_a_refused_upload_reads_cleanly_in_chromium(server, tmp_path):
    """In Chromium, as a planner: a refused upload, then the demo at 3 typical days solved and saved under two
    cost cases, compared, every results tab, the groundwater page with its interactive map, a 3-point trade-off
    curve, a 2-sample sweep and the share page. Nowhere an exception element, a browser page error, a figure
    under 200 px (common practice: a readable chart) or an internal id of the demo in a table (issue 14)."""
    sync_api = _require_browser()
    ids = _demo_ids()
    errors: list[str] = []
    faults: list[str] = []
    bad_upload = tmp_path / "notes.zip"
    bad_upload.write_bytes(b"this is not a zip file")
    ARTIFACTS.mkdir(exist_ok=True)
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            context = browser.new_context(viewport={"width": 1440, "height": 1000})
            page = context.new_page()
            page.on("pageerror", lambda error: errors.append(str(error)))
            page.set_default_timeout(STEP_TIMEOUT_MS)
            page.goto(f"{server}/Plan_a_run")
            page.get_by_role("heading", name="Plan a run").wait_for()
            _settled(page)
            page.locator("input[type=file]").first.set_input_files(str(bad_upload))
            page.get_by_text("was not opened").wait_for()
            _settled(page)
            faults += _page_faults(page, ids, "plan after the refused upload")
            assert page.get_by_role("button", name="Use the demo city instead").count() == 0, "the demo was replaced"
            page.get_by_role("button", name="Solve", exact=True).wait_for()  # the demo stays in use
            _settled(page)
            days = page.get_by_role("spinbutton", name="Typical days")
            days.fill("3")
            days.press("Enter")
            _settled(page)
            _solve_and_save(page, "Reference prices")
            faults += _page_faults(page, ids, "plan")
            _choose(page, "Cost case", "High CO2")
            _settled(page)
            _solve_and_save(page, "High CO2 price")

            _nav(page, "Compare runs")
            page.get_by_role("heading", name="Key figures").wait_for()
            faults += _page_faults(page, ids, "compare")
            page.screenshot(path=str(ARTIFACTS / "walk_compare.png"), full_page=True)
            _choose(page, "Baseline run", "High CO2 price")
            page.get_by_role("heading", name="Differences against the baseline “High CO2 price”").wait_for()

            _nav(page, "Run results")
            page.get_by_role("heading", name="Run results").wait_for()
            for tab in ("Map", "Load curves", "Costs", "Tables", "How firm", "Manage run"):
                _click_tab(page, tab)
                faults += _page_faults(page, ids, f"results {tab}")

            _nav(page, "Groundwater check")
            page.get_by_role("heading", name="Groundwater check").wait_for()
            faults += _page_faults(page, ids, "groundwater")
            _click_tab(page, "Map")
            page.get_by_text("Interactive with popups").click()
            _settled(page)
            frame = page.locator("iframe[title='streamlit_folium.st_folium']").first
            frame.wait_for()
            frame.scroll_into_view_if_needed()
            leaflet = page.frame_locator("iframe[title='streamlit_folium.st_folium']").first
            leaflet.locator(".leaflet-container").first.wait_for()
            page.wait_for_timeout(1500)
            assert frame.bounding_box()["height"] > 200, "the groundwater map has no height"
            assert leaflet.locator("path.leaflet-interactive").count() > 0, "no district drawn on the groundwater map"
            faults += _page_faults(page, ids, "groundwater map")
            page.screenshot(path=str(ARTIFACTS / "walk_groundwater_map.png"), full_page=True)
            _click_tab(page, "Interference check")
            faults += _page_faults(page, ids, "groundwater check tab")

            _nav(page, "Trade-offs and sweeps")
            page.get_by_role("heading", name="Trade-offs and sweeps").wait_for()
            _settled(page)
            days = page.get_by_role("spinbutton", name="Typical days")
            days.fill("3")
            days.press("Enter")
            _settled(page)
            slider = page.get_by_role("slider").first
            slider.focus()
            slider.press("Home")
            slider.press("ArrowRight")  # 2 -> 3 points
            _settled(page)
            page.get_by_role("button", name="Compute the curve").click()
            page.get_by_role("button", name="Save point").wait_for(timeout=4 * STEP_TIMEOUT_MS)
            faults += _page_faults(page, ids, "trade-off")
            page.screenshot(path=str(ARTIFACTS / "walk_tradeoff.png"), full_page=True)
            _click_tab(page, "Price sweep")
            page.get_by_text("Random mixes of prices, spread evenly").click()
            _settled(page)
            samples = page.get_by_role("spinbutton", name="Samples")
            samples.fill("2")
            samples.press("Enter")
            _settled(page)
            page.get_by_role("button", name="Run the sweep").click()
            page.get_by_role("button", name="Download the sweep (CSV)").wait_for(timeout=4 * STEP_TIMEOUT_MS)
            faults += _page_faults(page, ids, "sweep")
            page.get_by_text("Main supply of each district in each run").click()
            faults += _page_faults(page, ids, "sweep main supply")
            page.screenshot(path=str(ARTIFACTS / "walk_sweep.png"), full_page=True)

            _nav(page, "Share")
            page.get_by_role("heading", name="Share").wait_for()
            faults += _page_faults(page, ids, "share")
            _nav(page, "Compare runs")  # through the navigation: same session
            page.get_by_role("heading", name="Key figures").wait_for()
            _settled(page)
            assert page.get_by_role("heading", name="Differences against the baseline “High CO2 price”").count(), \
                "the comparison forgot its baseline after a page switch"
            page.goto(server)
            page.get_by_role("heading", name="heatmosaic").wait_for()
            faults += _page_faults(page, ids, "overview")
        finally:
            browser.close()
    assert errors == [], f"browser page errors: {errors[:5]}"
    assert faults == [], "\n".join(faults)


@pytest.mark.slow
def test_the_page_check_finds_what_it_looks_for_in_chromium():
    """The checks of the walk above can fail: on a page made to look like the dashboard's output, an exception
    element, a figure 120 px tall, a kind id, a district id and a literal "None" in table cells are all found."""
    sync_api = _require_browser()
    markup = (
        "<div data-testid='stApp' data-test-script-state='notRunning'>"
        "<div data-testid='stException'>Traceback</div>"
        "<div data-testid='stPlotlyChart' style='height:120px;width:300px'></div>"
        "<div data-testid='stDataFrame'><table><tr><th>kind</th><th>district</th><th>note</th></tr>"
        "<tr><td>fuel_boiler</td><td>old_town</td><td>None</td></tr>"
        "<tr><td>Fuel boiler</td><td>Old Kelmsvoort</td><td>–</td></tr></table></div></div>"
    )
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page()
            page.set_content(markup)
            faults = _page_faults(page, _demo_ids(), "made-up page")
        finally:
            browser.close()
    assert any("exception" in f for f in faults)
    assert any("120 px" in f for f in faults)
    assert {"'fuel_boiler'", "'old_town'", "'None'"} <= {f.split("shows ")[-1] for f in faults if "shows" in f}
    assert len([f for f in faults if "shows" in f]) == 3
