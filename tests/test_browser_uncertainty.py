"""The card 'What if the assumptions are wrong?' in headless Chromium.

Uses the shared fixtures of tests/browser_support.py (one server subprocess on 127.0.0.1, Debian
Chromium, a page that refuses requests off 127.0.0.1 and fails on console errors). The expected
assurance comes from powercore on the same scenario and prior.
"""
from __future__ import annotations

import csv
import io
import re

import pytest

import powercore as pc
from app.text import num
from app.uncertainty_view import DIST_GRID
from browser_support import *  # noqa: F401,F403  (fixtures: server, browser, open_page)
from browser_support import ARTIFACTS, demo, expect_power, needs_browser
from powercore.uncertainty import assurance

pytestmark = [pytest.mark.browser, needs_browser]


def test_open_card_type_prior_sd_and_read_assurance(open_page):
    """Opening the card and typing a prior SD shows powercore's assurance and its histogram; the main
    readout is unchanged; a bad prior SD gets a message; the CSV download holds the table shown."""
    from playwright.sync_api import expect
    gp = open_page()
    page = gp.page
    expect_power(page, demo())
    page.locator(".pl-unc-header").first.click()
    box = page.locator(".pl-unc-prior-sd input")
    expect(box).to_be_visible()
    box.fill("7.5")
    box.press("Enter")
    a = assurance(pc.evaluate(demo()).solved, 20.0, 7.5, grid=DIST_GRID)
    cell = page.locator('.pl-unc-assurance td[data-key="assurance"]')
    expect(cell).to_have_text(num(a.assurance, 4))
    expect(page.locator('.pl-unc-assurance td[data-key="prob-target"]')).to_have_text(
        num(a.prob_power_above_target, 3))
    expect(page.locator('.pl-unc-assurance [data-key="method"]')).to_have_text(re.compile(r"^numerical integration"))
    edges, probs = a.distribution.histogram(20)
    page.wait_for_function(
        "(want) => { const s = Bokeh.documents[0].get_model_by_name('unc-hist');"
        " const t = s && Array.from(s.data.top); return !!t && t.length === want.length &&"
        " t.every((v, i) => Math.abs(v - want[i]) < 1e-12); }", arg=[float(p) for p in probs])
    expect_power(page, demo())   # the main scenario did not move
    box.fill("-1")
    box.press("Enter")
    expect(page.locator(".pl-unc-msg-prior-sd")).to_contain_text("must be ≥ 0")
    expect(cell).to_have_text(num(a.assurance, 4))
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    page.locator(".pl-unc").first.screenshot(path=str(ARTIFACTS / "uncertainty-card.png"))
    # the sensitivity table's CSV arrives as a file whose rows are the table's cells
    page.get_by_text("Sensitivity table").click()
    expect(page.locator("table.pl-sens td.pl-current")).to_have_text(str(pc.evaluate(demo(find="n")).n))
    with page.expect_download() as info:
        page.locator(".pl-unc-csv button").first.click()
    dl = info.value
    assert re.fullmatch(r"powerlens-sensitivity-two-means-t-\d{4}-\d{2}-\d{2}\.csv", dl.suggested_filename)
    rows = list(csv.reader(io.StringIO(open(dl.path(), encoding="utf-8").read())))
    shown = page.locator("table.pl-sens tbody tr").evaluate_all(
        "trs => trs.map(tr => Array.from(tr.children).map(c => c.textContent.trim()))")
    assert [r for r in rows[1:]] == shown
