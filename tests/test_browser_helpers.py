"""The effect helper and the allocation panel in headless Chromium (Debian's chromium via Playwright)."""
from __future__ import annotations

import pytest

from browser_support import *  # noqa: F401,F403  (fixtures: server, browser, open_page)
from browser_support import ARTIFACTS, demo, expect_power, needs_browser

pytestmark = [pytest.mark.browser, needs_browser]


def type_into(page, key: str, text: str) -> None:
    box = page.locator(f".pl-helper-{key} input")
    box.fill(text)
    box.press("Enter")


def test_effect_helper_two_means_and_an_sd_set_the_power(open_page):
    """Open the helper on the demo, type two means and an SD, press Use: the power is powercore's for them."""
    from playwright.sync_api import expect
    page = open_page().page
    expect_power(page, demo())
    page.locator(".pl-effect-helper .card-header").click()
    type_into(page, "mean1", "410")
    type_into(page, "mean2", "440")
    type_into(page, "sd", "50")
    expect(page.locator(".pl-helper-readout")).to_contain_text("d = (440 − 410)/50 = 0.6")
    page.locator(".pl-helper-use button").click()
    expect_power(page, demo(params={"delta": 30.0, "sd": 50.0}))   # the demo with δ = 30, σ = 50
    expect(page.locator(".pl-box-effect input")).to_have_value("30")
    expect(page.locator(".pl-box-sd input")).to_have_value("50")
    page.locator(".pl-allocation .card-header").click()
    expect(page.locator(".pl-alloc-ratio")).to_contain_text("for the same total of 120")
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    page.locator(".pl-sidebar").screenshot(path=str(ARTIFACTS / "sidebar-helpers.png"))
