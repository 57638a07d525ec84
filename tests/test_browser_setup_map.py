"""In a real browser: a click on the set-up map of Plan a run proposes a well doublet in the district clicked.

The click goes through streamlit-folium (``last_clicked``) to the page, which adds the row with
:func:`pages._support.city_edits.well_row_from_click`; the row's blank permit cells are then reported in the
problem table. Skipped like tests/test_browser_e2e.py where the browser is missing.
"""

from __future__ import annotations

import pytest

from test_browser_e2e import CHROMIUM, CHROMIUM_ARGS, STEP_TIMEOUT_MS, _require_browser, _settled, server  # noqa: F401

pytestmark = pytest.mark.slow  # a browser


def test_a_click_on_the_setup_map_adds_a_doublet_in_that_district(server):  # noqa: F811
    sync_api = _require_browser()
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 1100})
            errors: list[str] = []
            page.on("pageerror", lambda error: errors.append(str(error)))
            page.goto(f"{server}/Plan_a_run")
            page.get_by_text("3 · Your city").wait_for(timeout=STEP_TIMEOUT_MS)
            _settled(page)
            frame = page.locator("iframe[title='streamlit_folium.st_folium']").first
            frame.scroll_into_view_if_needed()
            page.wait_for_timeout(1500)
            box = frame.bounding_box()
            assert box and box["height"] > 300
            # the districts' middle: the map centres them in the part left of the legend (270 px)
            page.mouse.click(box["x"] + box["width"] / 2 - 135, box["y"] + box["height"] / 2)
            page.get_by_text("proposed in district Old Kelmsvoort").last.wait_for(timeout=STEP_TIMEOUT_MS)
            _settled(page)
            assert page.get_by_role("tab", name="Wells (16 + 1 new)").count() == 1
            assert page.get_by_text("well 'new-1': is blank").count() >= 1
            assert page.locator("[data-testid=stException]").count() == 0
            assert errors == []
        finally:
            browser.close()
