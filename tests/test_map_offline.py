"""The district map draws with no internet: Leaflet ships with heatmosaic and nothing is fetched from outside."""

from __future__ import annotations

import os
import re
import shutil

import pytest

from engine.scenario import DEMO_DIR, load_scenario
from engine.outputs.maps import district_map

pytestmark = pytest.mark.slow  # browser, fuzz or multi-process: left out of the quick loop

CHROMIUM = "/usr/bin/chromium"


def _require_browser():
    if not os.path.exists(CHROMIUM) or shutil.which("chromium") is None:
        if os.environ.get("HEATMOSAIC_REQUIRE_BROWSER") == "1":
            pytest.fail("Chromium is required (HEATMOSAIC_REQUIRE_BROWSER=1) but /usr/bin/chromium is missing")
        pytest.skip("Debian's Chromium is not installed")


@pytest.fixture(scope="module")
def map_html():
    scenario = load_scenario(DEMO_DIR)
    return scenario, district_map(scenario).get_root().render()


def test_no_external_resources(map_html):
    _, html = map_html
    assert not re.findall(r"""(?:src|href)\s*=\s*["']https?://""", html)


def test_polygons_and_legend_drawn_offline(map_html, tmp_path):
    """Load the map in Chromium with every network request refused: each district polygon must be drawn."""
    _require_browser()
    from playwright.sync_api import sync_playwright

    scenario, html = map_html
    page_file = tmp_path / "map.html"
    page_file.write_text(html, encoding="utf-8")
    errors, outside = [], []
    with sync_playwright() as p:
        browser = p.chromium.launch(
            executable_path=CHROMIUM,
            args=["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                  "--disable-component-update", "--no-first-run"],
        )
        page = browser.new_page()

        def refuse(route):
            outside.append(route.request.url)
            route.abort()

        page.route(re.compile(r"^https?://"), refuse)
        page.on("pageerror", lambda e: errors.append(str(e)))
        page.goto(page_file.as_uri())
        page.wait_for_selector("path.leaflet-interactive", timeout=15000)
        drawn = page.locator("path.leaflet-interactive").count()
        legend = page.inner_text("body")
        browser.close()
    assert not errors, errors
    assert not outside, outside
    assert drawn >= len(scenario.districts)
    assert "Main heat supply" in legend or "supply" in legend.lower()
