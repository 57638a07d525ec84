"""Open a local HTML file in headless Chromium with every network request refused (shared by the offline tests)."""

from __future__ import annotations

import os
import re
import shutil
from contextlib import contextmanager

import pytest

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--no-first-run"]


def require_browser() -> None:
    """Skip without Debian's Chromium, or fail when HEATMOSAIC_REQUIRE_BROWSER=1 (as .ci/run sets it)."""
    if not os.path.exists(CHROMIUM) or shutil.which("chromium") is None:
        if os.environ.get("HEATMOSAIC_REQUIRE_BROWSER") == "1":
            pytest.fail("Chromium is required (HEATMOSAIC_REQUIRE_BROWSER=1) but /usr/bin/chromium is missing")
        pytest.skip("Debian's Chromium is not installed")


@contextmanager
def offline_page(path):
    """Yield ``(page, errors, outside)`` for the file at ``path``: ``errors`` collects page errors, ``outside`` the
    refused http(s) requests."""
    require_browser()
    from playwright.sync_api import sync_playwright

    errors, outside = [], []
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page()

            def refuse(route):
                outside.append(route.request.url)
                route.abort()

            page.route(re.compile(r"^https?://"), refuse)
            page.on("pageerror", lambda e: errors.append(str(e)))
            page.goto(path.as_uri())
            yield page, errors, outside
        finally:
            browser.close()
