"""Two planners at once: two browser sessions against one ``streamlit run app.py`` server and one library file.

Each session opens the set-up page in its own Chromium context (its own cookies, so its own Streamlit session),
picks its own cost case and 3 typical days, and both press Solve and then Save run back to back, so the two
solves and the two saves overlap in the server. Both runs must reach the library, each with the figures the
engine computes for its own choices (no session sees the other's state), and neither page may show an error.

Skipped where /usr/bin/chromium is missing, unless HEATMOSAIC_REQUIRE_BROWSER=1, which makes it a failure.
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from engine.scenario import DEMO_DIR, load_scenario
from engine.model.solve import run_settings, solve_scenario
from engine.outputs.labels import cost_case_label
from engine.storage.store import ScenarioStore
from test_browser_e2e import (
    CHROMIUM,
    CHROMIUM_ARGS,
    ROOT,
    STEP_TIMEOUT_MS,
    _choose,
    _free_port,
    _require_browser,
    _settled,
    _wait_for_health,
)

pytestmark = pytest.mark.slow  # browser, fuzz or multi-process: left out of the quick loop

TYPICAL_DAYS = 3
SESSIONS = (("reference", "Planner A, reference prices"), ("high_co2", "Planner B, high CO2 price"))
ERROR_SELECTORS = "[data-testid=stException], [data-testid=stAlertContentError]"


@pytest.fixture
def shared_server(tmp_path):
    """One dashboard server on a free local port with a library file of its own; stopped afterwards."""
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    store = tmp_path / "store.sqlite"
    log = tmp_path / "streamlit.log"
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
        yield {"base": base, "store": store, "log": log}
    finally:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=15)


def _set_typical_days(page, days: int) -> None:
    field = page.get_by_role("spinbutton", name="Typical days")
    field.fill(str(days))
    field.press("Enter")
    _settled(page)


def _errors_shown(page) -> list[str]:
    return [text.strip()[:200] for text in page.locator(ERROR_SELECTORS).all_inner_texts()]


def test_two_sessions_solve_and_save_at_once_without_mixing(shared_server):
    """Two sessions that solve and save at the same moment both end up in the library, each with the total cost
    and CO2 of ``solve_scenario`` for its own cost case and typical days (rel 1e-6; the engine is the reference,
    as in the command-line check of the dashboard tests), and neither page shows an error or an exception."""
    sync_api = _require_browser()
    base, store = shared_server["base"], shared_server["store"]
    refused: list[str] = []
    page_errors: list[str] = []

    def only_local(route):
        url = route.request.url
        if url.startswith(base) or url.startswith(("data:", "blob:")):
            return route.continue_()
        refused.append(url)
        return route.abort()

    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            pages = []
            for case, _ in SESSIONS:
                context = browser.new_context(viewport={"width": 1400, "height": 1000})
                context.route("**/*", only_local)
                page = context.new_page()
                page.set_default_timeout(STEP_TIMEOUT_MS)
                page.on("pageerror", lambda error: page_errors.append(str(error)))
                page.goto(f"{base}/Plan_a_run")
                page.get_by_role("heading", name="Plan a run").wait_for()
                _settled(page)
                if case != "reference":
                    _choose(page, "Cost case", cost_case_label(case))  # the page shows the case in words
                    _settled(page)
                _set_typical_days(page, TYPICAL_DAYS)
                pages.append(page)

            for page in pages:  # both solves are sent before either has finished
                page.get_by_role("button", name="Solve", exact=True).click()
            for page in pages:
                page.get_by_text("5 · Save to the library").wait_for()
                _settled(page)

            for page, (_, name) in zip(pages, SESSIONS):
                page.get_by_label("Name").fill(name)
            for page in pages:  # both saves at once
                page.get_by_role("button", name="Save run").click()
            for page, (_, name) in zip(pages, SESSIONS):
                page.get_by_text(f"Saved as “{name}”").wait_for()
                _settled(page)
            shown = [_errors_shown(page) for page in pages]
            confirmations = [page.locator("[data-testid=stAlertContentSuccess]").all_inner_texts() for page in pages]
        finally:
            browser.close()

    assert shown == [[], []], f"a session shows an error: {shown}"
    assert page_errors == [], page_errors[:3]
    assert refused == [], f"the dashboard asked the internet for {refused[:5]}"
    for texts, (_, name), (_, other) in zip(confirmations, SESSIONS, SESSIONS[::-1]):
        assert any(name in t for t in texts) and not any(other in t for t in texts), texts

    with ScenarioStore(store) as library:
        runs = library.list_runs()
        saved = {row.name: library.load_run(int(row.run_id)) for row in runs.itertuples(index=False)}
    assert sorted(saved) == sorted(name for _, name in SESSIONS), list(runs["name"])
    scenario = load_scenario(DEMO_DIR)
    for case, name in SESSIONS:
        run = saved[name]
        assert run.cost_case == case and run.solved
        assert int(run.settings["typical_days"]) == TYPICAL_DAYS
        reference = solve_scenario(scenario, cost_case=case, settings=run_settings(scenario, typical_days=TYPICAL_DAYS),
                                   workers=1)
        assert run.total_cost_eur_per_a == pytest.approx(reference.total_cost_eur_per_a, rel=1e-6), name
        assert run.co2_t_per_a == pytest.approx(reference.co2_t_per_a, rel=1e-6), name
        assert run.input_hash == reference.input_hash
