"""Pinned scenarios in headless Chromium: two pins on the curves' legends, the record out and back in a
fresh tab with its pins, and the justification's Copy button (clipboard, and the fallback when refused).

Uses the shared server and guarded pages of ``browser_support``; expected numbers come from powercore.
"""
from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

import powercore as pc
from powercore.justification import justification
from browser_support import *  # noqa: F401,F403
from browser_support import ARTIFACTS, demo, expect_power, needs_browser

pytestmark = [pytest.mark.browser, needs_browser]

LEGEND_JS = """(name) => { const m = Bokeh.documents[0].get_model_by_name(name + '-legend');
    if (!m.visible) return [];
    return m.items.filter(i => i.visible).map(i => typeof i.label === 'string' ? i.label : i.label.value); }"""
PIN_LINES_JS = """(name) => { const d = Bokeh.documents[0]; const out = [];
    for (let i = 0; i < 6; i++) { const r = d.get_model_by_name(name + '-pin-line-' + i);
        out.push([r.visible, r.data_source.data[name === 'power-n' ? 'n' : 'x'].length]); }
    return out; }"""


def type_into(page, key: str, text: str) -> None:
    box = page.locator(f".pl-box-{key} input")
    box.fill(text)
    box.press("Enter")


def pin(page, name: str | None = None) -> None:
    if name is not None:
        box = page.locator(".pl-pin-name input")
        box.fill(name)
        box.press("Enter")
    page.locator(".pl-pin-add button").click()


def pin_two(page) -> None:
    from playwright.sync_api import expect
    expect(page.locator(".pl-pin-name input")).to_have_value("A")
    pin(page)
    expect(page.locator(".pl-pin-row-0")).to_be_visible()
    type_into(page, "n", "110")
    expect_power(page, demo(n=110))
    pin(page, "bigger trial")
    expect(page.locator(".pl-pin-row-1")).to_be_visible()


def legend(page, name: str) -> list[str]:
    return page.evaluate(LEGEND_JS, name)


def test_two_pins_on_both_legends_and_record_round_trip(open_page, tmp_path):
    """Two pins give two named legend entries on each power view; the page's record carries them and a
    fresh tab importing it shows the same pins, legends and table."""
    from playwright.sync_api import expect
    gp = open_page()
    a = gp.page
    pin_two(a)
    type_into(a, "alpha", "0.01")
    expect_power(a, demo(n=110, alpha=0.01))
    for name in ("power-effect", "power-n"):
        a.wait_for_function(f"() => ({LEGEND_JS})('{name}').length === 3")
        assert legend(a, name) == ["current scenario", "A", "bigger trial"]
        lines = a.evaluate(PIN_LINES_JS, name)
        assert [v for v, _ in lines] == [True, True, False, False, False, False]
        assert all(k > 10 for _, k in lines[:2])
    table = a.locator(".pl-pins-table table")
    expect(table).to_contain_text("bigger trial")
    expect(table.locator("td.pl-diff").first).to_be_visible()
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    a.screenshot(path=str(ARTIFACTS / "pins.png"), full_page=True)
    a.locator(".pl-export-view button", has_text="power vs effect").click()   # the export keeps the pins
    with a.expect_download() as info:
        a.locator(".pl-export-svg button").click()
    root = ET.fromstring(Path(info.value.path()).read_bytes())
    texts = [t.text or "" for t in root.iter() if t.tag.endswith("text")]
    assert "bigger trial" in texts and "A" in texts and "current scenario" in texts

    with a.expect_download() as info:
        a.locator(".pl-download-record button").click()
    rec = json.loads(Path(info.value.path()).read_bytes())
    assert [p["name"] for p in rec["pinned"]] == ["A", "bigger trial"]
    assert rec["pinned"][1]["assumptions"]["n"] == 110 and rec["pinned"][0]["assumptions"]["n"] == 60
    assert rec["pinned"][1]["results"]["power"] == pytest.approx(pc.evaluate(demo(n=110)).power, rel=1e-12)
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(rec))

    b = open_page().page
    expect_power(b, demo())
    assert legend(b, "power-effect") == []
    with b.expect_file_chooser() as fc:
        b.locator(".pl-import-record button").click()
    fc.value.set_files(str(path))
    expect_power(b, demo(n=110, alpha=0.01))
    expect(b.locator(".pl-share-msg")).to_contain_text("Loaded plan.json")
    expect(b.locator(".pl-pin-row-1 input")).to_have_value("bigger trial")
    b.wait_for_function(f"() => ({LEGEND_JS})('power-n').length === 3")
    assert legend(b, "power-effect") == legend(b, "power-n") == ["current scenario", "A", "bigger trial"]
    assert b.locator(".pl-pins-table table").inner_text() == table.inner_text()

    b.locator(".pl-pin-show-0 button").click()          # Show: back to pin A's scenario
    expect_power(b, demo())
    b.locator(".pl-pin-remove-0 button").click()
    b.wait_for_function(f"() => ({LEGEND_JS})('power-effect').length === 2")


def test_seventh_pin_is_refused_at_the_button(open_page):
    """Six pins fill the board; the button is then disabled and says why when pressed in code."""
    from playwright.sync_api import expect
    page = open_page().page
    for k in range(6):
        type_into(page, "n", str(40 + k))
        expect_power(page, demo(n=40 + k))
        pin(page)
        expect(page.locator(f".pl-pin-row-{k}")).to_be_visible()
    expect(page.locator(".pl-pin-add button")).to_be_disabled()
    page.wait_for_function(f"() => ({LEGEND_JS})('power-effect').length === 7")


def test_copy_puts_the_justification_on_the_clipboard(open_page, server):
    """Copy writes the paragraph to the clipboard and says 'copied'; when the clipboard refuses, the
    paragraph is selected instead and the page says so."""
    from playwright.sync_api import expect
    gp = open_page()
    page = gp.page
    gp.context.grant_permissions(["clipboard-read", "clipboard-write"], origin=server.url.rstrip("/"))
    pin(page)
    expect(page.locator(".pl-just-0")).to_be_visible()
    from app.state import DEMO
    want = justification(pc.evaluate(demo()), pc.__version__, None, DEMO["unit_name"])   # the demo's "min"
    page.locator(".pl-just-copy-current button").click()
    expect(page.locator(".pl-just-status-current")).to_have_text("copied")
    assert page.evaluate("() => navigator.clipboard.readText()") == want
    page.locator(".pl-just-copy-0 button").click()
    expect(page.locator(".pl-just-status-0")).to_have_text("copied")
    assert page.evaluate("() => navigator.clipboard.readText()") == want   # pin A is the demo too
    # an insecure page or a refused permission: the clipboard rejects, the text gets selected
    page.evaluate("() => { navigator.clipboard.writeText = () => Promise.reject(new Error('refused')); }")
    page.evaluate("() => { document.execCommand = () => false; }")
    page.locator(".pl-just-copy-current button").click()
    expect(page.locator(".pl-just-status-current")).to_contain_text("the text is selected")
    selected = page.evaluate("() => [window.getSelection().rangeCount, window.getSelection().toString()]")
    assert selected == [1, want]
