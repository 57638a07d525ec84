"""In Chromium: a planner's own city opened as a zipped scenario folder on Plan a run, solved, and a damaged one
refused with its problem table while the working inputs stay.

The city is the demo rewritten as a planner would hand it in (tests/own_city.py): districts as a GeoPackage in
ETRS89 / UTM 32N written by pyogrio (GDAL), weather as an EPW file in the published column layout (U.S. DOE,
EnergyPlus "Weather Converter Program" data dictionary), zipped in one folder as a file manager does. Same browser
rules as tests/test_browser_e2e.py (Debian's Chromium, no download; HEATMOSAIC_REQUIRE_BROWSER=1 makes a missing
browser a failure).
"""

from __future__ import annotations

import pytest

from own_city import folder_zip, own_city_files
from test_browser_e2e import ARTIFACTS, CHROMIUM, CHROMIUM_ARGS, STEP_TIMEOUT_MS, _require_browser, _settled, server  # noqa: F401

pytestmark = pytest.mark.slow


def _table_cells(page) -> list[str]:
    return page.evaluate(
        "() => Array.from(document.querySelectorAll('[data-testid=stDataFrame] td, [data-testid=stDataFrame] th'))"
        ".map(c => c.textContent.trim())")


@pytest.mark.slow
def test_a_zipped_scenario_folder_solves_and_a_damaged_one_shows_its_problems(server, tmp_path):
    sync_api = _require_browser()
    city = own_city_files("gpkg", tmp_path)
    good = tmp_path / "my_city.zip"
    good.write_bytes(folder_zip(city))
    lines = city["technologies.csv"].decode().splitlines()
    header = lines[0].split(",")
    cells = lines[2].split(",")
    cells[header.index("investment_eur_per_kw")] = "12O0"  # a letter O for a zero
    lines[2] = ",".join(cells)
    damaged = tmp_path / "damaged_city.zip"
    damaged.write_bytes(folder_zip({**city, "technologies.csv": ("\n".join(lines) + "\n").encode()}))
    errors: list[str] = []
    ARTIFACTS.mkdir(exist_ok=True)
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_context(viewport={"width": 1440, "height": 1000}).new_page()
            page.on("pageerror", lambda error: errors.append(str(error)))
            page.set_default_timeout(STEP_TIMEOUT_MS)
            page.goto(f"{server}/Plan_a_run")
            page.get_by_role("heading", name="Plan a run").wait_for()
            _settled(page)
            page.locator(".st-key-setup_upload input[type=file]").set_input_files(str(good))
            page.get_by_text("Folder zip my_city.zip").first.wait_for()
            _settled(page)
            page.screenshot(path=str(ARTIFACTS / "open_folder_zip.png"), full_page=True)
            days = page.get_by_role("spinbutton", name="Typical days")
            days.fill("3")
            days.press("Enter")
            _settled(page)
            page.locator(".st-key-setup_solve button").click()
            page.get_by_text("5 · Save to the library").wait_for(timeout=STEP_TIMEOUT_MS)
            _settled(page)
            assert page.locator("[data-testid=stMetric]").count() == 4, "no result figures"
            assert page.locator("[data-testid=stException]").count() == 0, "an exception after solving"

            page.locator(".st-key-setup_upload input[type=file]").set_input_files(str(damaged))
            page.get_by_text("was not opened").wait_for()
            _settled(page)
            page.screenshot(path=str(ARTIFACTS / "open_folder_zip_refused.png"), full_page=True)
            shown = _table_cells(page)
            assert "technologies.csv" in shown and "investment_eur_per_kw" in shown, shown[:40]
            assert page.get_by_role("button", name="Download problems (CSV)").count() >= 1
            assert page.get_by_text("Folder zip my_city.zip").count() >= 1, "the working inputs were replaced"
            assert page.locator("[data-testid=stException]").count() == 0, "an exception after the refusal"
        finally:
            browser.close()
    assert not errors, errors
