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
    page.get_by_role("button", name="Solve").click()
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
            _choose(page, "Cost case", "high_co2")
            _settled(page)
            _solve_and_save(page, "High CO2 price")

            page.goto(f"{server}/Compare_runs")
            page.get_by_role("heading", name="Key figures").wait_for()
            _settled(page)
            key_figures = page.locator("[data-testid=stDataFrame]").first.locator("table").first.text_content()
            assert "Reference prices" in key_figures and "High CO2 price" in key_figures

            frames = page.locator("iframe[title='streamlit_folium.st_folium']")
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
            page.get_by_role("button", name="Solve").click()
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
