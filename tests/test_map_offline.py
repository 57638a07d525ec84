"""The district map draws with no internet: Leaflet ships with heatmosaic and nothing is fetched from outside."""

from __future__ import annotations

import re

import pytest

from engine.scenario import DEMO_DIR, load_scenario
from engine.outputs.maps import district_map
from tests.offline_browser import offline_page

pytestmark = pytest.mark.slow  # browser, fuzz or multi-process: left out of the quick loop

@pytest.fixture(scope="module")
def map_html():
    scenario = load_scenario(DEMO_DIR)
    return scenario, district_map(scenario).get_root().render()


def test_no_external_resources(map_html):
    _, html = map_html
    assert not re.findall(r"""(?:src|href)\s*=\s*["']https?://""", html)


def test_polygons_and_legend_drawn_offline(map_html, tmp_path):
    """Load the map in Chromium with every network request refused: each district polygon must be drawn."""
    scenario, html = map_html
    page_file = tmp_path / "map.html"
    page_file.write_text(html, encoding="utf-8")
    with offline_page(page_file) as (page, errors, outside):
        page.wait_for_selector("path.leaflet-interactive", timeout=15000)
        drawn = page.locator("path.leaflet-interactive").count()
        legend = page.inner_text("body")
    assert not errors, errors
    assert not outside, outside
    assert drawn >= len(scenario.districts)
    assert "Main heat supply" in legend or "supply" in legend.lower()
