"""The explorer in headless Chromium: drag, type, switch, break, isolate, and look at it.

One server subprocess (``python3 -m app.server --port 0``) serves the whole module; every
page runs in a fresh browser context that refuses any request off 127.0.0.1 and fails the
test on a console error. Expected numbers come from powercore on the same scenario.
"""
from __future__ import annotations

import base64
import re

import pytest

import powercore as pc
from browser_support import *  # noqa: F401,F403  (fixtures: server, browser, open_page)
from browser_support import ARTIFACTS, demo, expect_power, needs_browser

pytestmark = [pytest.mark.browser, needs_browser]




def js_column(page, source: str, column: str) -> list[float]:
    return page.evaluate(f"() => Array.from(Bokeh.documents[0].get_model_by_name('{source}').data['{column}'])")


def type_into(page, key: str, text: str) -> None:
    box = page.locator(f".pl-box-{key} input")
    box.fill(text)
    box.press("Enter")


def test_page_offline_demo_and_cautions(open_page):
    """The page loads from 127.0.0.1 only, shows the invented demo, both cautions and the core's power."""
    from playwright.sync_api import expect
    gp = open_page()
    page = gp.page
    expect_power(page, demo())
    expect(page.locator(".pl-demo")).to_contain_text("Invented")
    expect(page.locator(".pl-cautions")).to_contain_text("qualified statistician")
    expect(page.locator(".pl-cautions")).to_contain_text("Hoenig & Heisey 2001")
    res = pc.evaluate(demo())
    assert js_column(page, "effect-point", "power") == pytest.approx([res.power])
    assert page.locator("table.pl-working").inner_text().count("SE = σ·√(1/n1 + 1/n2)") == 1


def test_visual_css_lookup_is_skipped(open_page):
    """app/speedups.py is installed on the page and Bokeh's per-paint CSS-variable lookup answers "" at once."""
    page = open_page().page
    page.wait_for_function("() => window.__powerlens_css_lookup_skipped === true"
                           " && window.__powerlens_same_css_kept === true", timeout=10000)
    # a visual of the power-vs-n figure: its lookup no longer consults the style sheets
    got = page.evaluate("""() => {
      const view = Bokeh.index.find_one(Bokeh.documents[0].get_model_by_name('power-n'));
      const vis = Object.values(view.visuals).find(v => v != null && typeof v._get_css_value === 'function');
      return [vis.__powerlens_skip === true, vis._get_css_value('line-color')];
    }""")
    assert got == [True, ""]   # the figure's visuals use the replaced lookup, which answers ""
    # an unchanged style sheet is not rewritten; a changed one still is
    kept = page.evaluate("""() => {
      const view = Bokeh.index.find_one(Bokeh.documents[0].get_model_by_name('power-n'));
      const sheet = view._css_vars, el = sheet.el, before = el.textContent;
      let writes = 0;
      const obs = new MutationObserver(m => { writes += m.length; });
      obs.observe(el, {childList: true, characterData: true, subtree: true});
      sheet.replace(before);
      const same = obs.takeRecords().length;
      sheet.replace(before + ' ');
      const changed = obs.takeRecords().length;
      sheet.replace(before);
      obs.disconnect();
      return [same, changed > 0, el.textContent === before];
    }""")
    assert kept == [0, True, True]


def test_a_slider_step_makes_no_new_canvases_and_no_style_writes(open_page):
    """speedups items 5, 10 and 11: once warm, a slider step draws the hatch from its cache, leaves the
    legends' items alone (BokehJS 3.9 made 61 canvases a step, re-rendering every legend at every data
    change) and writes no glyph's empty element's position sheet (9-10 style sheets rewritten a step,
    each making the browser recompute styles), while the legends still show their entries and every
    figure is still redrawn (WAIT_JS waits for all three)."""
    from browser_support import HOOK_JS, WAIT_JS
    page = open_page().page
    page.wait_for_function("() => window.__powerlens_glyph_hatch_kept === true"
                           " && window.__powerlens_legend_kept === true"
                           " && window.__powerlens_glyph_place_kept === true", timeout=10000)
    page.evaluate(HOOK_JS)
    handle = page.locator(".pl-slider-effect .noUi-handle")
    handle.focus()

    def step(key):
        page.keyboard.press(key)
        page.evaluate(WAIT_JS, 10000)
        page.wait_for_timeout(400)          # past SETTLE_MS: the details follow too
    step("ArrowRight")                      # warm: first hatch of each kind, first legend key
    page.evaluate("""() => { window.__canvases = 0; const make = document.createElement.bind(document);
        document.createElement = (tag, ...rest) => {
          if (String(tag).toLowerCase() === 'canvas') window.__canvases++; return make(tag, ...rest); }; }""")
    # every style sheet written inside a glyph renderer's element, counted by a MutationObserver
    glyphs = page.evaluate("""() => { window.__sheet_writes = 0; let glyphs = 0;
        const obs = new MutationObserver(ms => { window.__sheet_writes += ms.length; });
        const seen = new Set(), stack = Object.values(Bokeh.index);
        while (stack.length) { const v = stack.pop(); if (v == null || seen.has(v)) continue; seen.add(v);
          if (v.model && v.model.type === 'GlyphRenderer') {
            glyphs++; obs.observe(v.shadow_el, {childList: true, characterData: true, subtree: true}); }
          for (const c of (v.child_views ?? [])) stack.push(c);
          if (v.renderer_views != null) for (const c of v.renderer_views.values()) stack.push(c); }
        return glyphs; }""")
    for key in ("ArrowRight", "ArrowLeft", "ArrowRight"):
        step(key)
    assert page.evaluate("() => window.__canvases") == 0
    assert glyphs >= 10 and page.evaluate("() => window.__sheet_writes") == 0
    entries = page.evaluate("""() => {
      const view = Bokeh.index.find_one(Bokeh.documents[0].get_model_by_name('densities'));
      const legend = [...view.renderer_views.values()].find(v => 'grid_el' in v);
      return [legend.entries.length, legend.grid_el.childElementCount, legend.entries.map(e => e.label)]; }""")
    assert entries == [4, 4, ["H0 (null)", "H1 (alternative)", "rejection region (α under H0)", "power (H1 there)"]]


def test_keyboard_drag_and_typing(open_page):
    """Arrow keys step the n slider; typing an exact effect moves its slider and Cohen's d."""
    from playwright.sync_api import expect
    page = open_page().page
    handle = page.locator(".pl-slider-n .noUi-handle")
    handle.focus()
    for _ in range(5):
        page.keyboard.press("ArrowRight")
    expect(handle).to_have_attribute("aria-valuenow", re.compile(r"^65(\.0)?$"))
    expect_power(page, demo(n=65))
    expect(page.locator(".pl-box-n input")).to_have_value("65")
    res = pc.evaluate(demo(n=65))
    page.wait_for_function(f"() => Math.abs(Array.from(Bokeh.documents[0].get_model_by_name('n-now')"
                           f".data_source.data.power)[0] - {res.power}) < 1e-12")
    type_into(page, "effect", "27.5")
    expect_power(page, demo(n=65, params={"delta": 27.5}))
    expect(page.locator(".pl-box-standardized input")).to_have_value("0.6111")
    expect(page.locator(".pl-slider-effect .noUi-handle")).to_have_attribute("aria-valuenow", "27.5")
    type_into(page, "standardized", "0.3")
    expect_power(page, demo(n=65, params={"delta": 13.5}))


def test_views_hold_the_servers_arrays_exactly(open_page):
    """The arrays reach the page bit for bit (small ones travel inside the message as base64, app/speedups.py
    item 8): the density curves equal a session rendered without a browser, at the start and after a change."""
    from app_support import render
    from app.explorer import Explorer
    page = open_page().page
    offline = Explorer()
    render(offline)
    for column in ("x", "null", "alt"):
        assert js_column(page, "density-curve", column) == list(offline.densities.src_curve.data[column])
    type_into(page, "effect", "27.5")
    expect_power(page, demo(params={"delta": 27.5}))
    offline.state.set_value("delta", 27.5)
    want = list(offline.densities.src_curve.data["alt"])
    page.wait_for_function(f"() => Bokeh.documents[0].get_model_by_name('density-curve').data.alt[0] === {float(want[0])!r}")
    for column in ("x", "null", "alt"):
        assert js_column(page, "density-curve", column) == list(offline.densities.src_curve.data[column])
    assert page.evaluate("() => Bokeh.documents[0].get_model_by_name('density-curve').data.alt instanceof Float64Array")


def test_mouse_drag_ends_on_the_released_value(open_page):
    """A fast mouse drag of the effect slider (each move sent at once): the views end on the released value."""
    page = open_page().page
    handle = page.locator(".pl-slider-effect .noUi-handle")
    box = handle.bounding_box()
    x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    page.mouse.move(x, y)
    page.mouse.down()
    for i in range(1, 31):                     # 30 moves, 4 px apart, as fast as the browser sends them
        page.mouse.move(x + 4 * i, y)
    page.mouse.up()
    page.wait_for_timeout(300)
    value = float(handle.get_attribute("aria-valuenow"))
    assert value > 20                           # the demo's effect is 20 min; the drag went right
    expect_power(page, demo(params={"delta": value}))
    res = pc.evaluate(demo(params={"delta": value}))
    page.wait_for_function(f"() => Math.abs(Array.from(Bokeh.documents[0].get_model_by_name('effect-point')"
                           f".data['power'])[0] - {res.power}) < 1e-9")


def test_switch_design_and_find(open_page):
    """Another design gets its own controls; finding n shows the core's n read-only in its place."""
    from playwright.sync_api import expect
    page = open_page().page
    d = pc.get_design("two-proportions")
    page.locator(".pl-design select").select_option(label=d.title)
    expect(page.locator(".pl-check-continuity")).to_be_visible()
    expect(page.locator(".pl-control-n .pl-label")).to_contain_text("subjects in group 1")
    expect_power(page, pc.Scenario(design=d.id, params=d.defaults(), n=60))
    page.locator(".pl-find button", has_text="sample size").click()
    res = pc.evaluate(pc.Scenario(design=d.id, params=d.defaults(), n=None, find="n"))
    expect(page.locator(".pl-found-n")).to_contain_text(f"n = {res.n} subjects in group 1")
    expect(page.locator(".pl-box-n input")).to_be_hidden()
    page.locator(".pl-check-continuity input").check()
    res_cc = pc.evaluate(pc.Scenario(design=d.id, params={**d.defaults(), "continuity": True}, n=None,
                                     find="n"))
    expect(page.locator(".pl-found-n")).to_contain_text(f"n = {res_cc.n} subjects in group 1")
    page.locator(".pl-direction button", has_text="one-sided, upper").click()
    res_up = pc.evaluate(pc.Scenario(design=d.id, params={**d.defaults(), "continuity": True}, n=None,
                                     find="n", direction="upper"))
    expect(page.locator(".pl-found-n")).to_contain_text(f"n = {res_up.n} subjects in group 1")
    page.locator(".pl-scale button", has_text="estimate").click()
    page.wait_for_function("() => Bokeh.documents[0].get_model_by_name('densities').below"
                           ".some(a => a.axis_label && a.axis_label.startsWith('difference in proportions'))")


def test_typing_n_at_once_after_a_design_switch_is_kept(open_page):
    """Choose another design and type n before the switch has come back from the server: the box and
    the views end at the typed n, not at the new design's default (the box showed the default in 8
    of 8 tries, and the typed n was lost altogether in 4 of 8, before controls._send_box_again and
    controls._arriving)."""
    from playwright.sync_api import expect
    page = open_page().page
    for design_id, n in (("logrank-events", "1000"), ("two-means-t", "37")):
        d = pc.get_design(design_id)
        page.locator(".pl-design select").select_option(label=d.title)
        type_into(page, "n", n)           # at once: no wait for the switch
        expect_power(page, pc.Scenario(design=d.id, params=d.defaults(), n=int(n)))
        page.wait_for_timeout(1500)       # anything still on its way from the switch has arrived
        expect(page.locator(".pl-box-n input")).to_have_value(re.compile(rf"^{n}(\.0*)?$"))
        expect_power(page, pc.Scenario(design=d.id, params=d.defaults(), n=int(n)))


@pytest.mark.parametrize("key, text, words", [
    ("alpha", "1.5", "must be in (0, 1)"),
    ("n", "-3", "must be at least 2"),
    ("sd", "0", "must be in (0, ∞)"),
    ("target_power", "0.01", "must exceed the significance level"),
])
def test_bad_values_message_and_page_keeps_working(open_page, key, text, words):
    """A bad value shows a message at the field and in the readout; the last views stay; a fix recovers."""
    from playwright.sync_api import expect
    page = open_page().page
    before = js_column(page, "density-curve", "alt")
    type_into(page, key, text)
    expect(page.locator(f".pl-msg-{key}")).to_contain_text(words)
    expect(page.locator(".pl-readout .pl-stale")).to_contain_text(words)
    expect_power(page, demo())
    assert js_column(page, "density-curve", "alt") == before
    good = {"alpha": "0.01", "n": "70", "sd": "40", "target_power": "0.9"}[key]
    type_into(page, key, good)
    expect(page.locator(f".pl-msg-{key}")).to_be_hidden()
    change = {"alpha": {"alpha": 0.01}, "n": {"n": 70}, "sd": {"params": {"sd": 40.0}},
              "target_power": {"target_power": 0.9}}[key]
    expect_power(page, demo(**change))


def test_unreachable_target_message(open_page):
    """Finding the effect for an exact test with five trials and target 0.99 says why it fails."""
    from playwright.sync_api import expect
    page = open_page().page
    page.locator(".pl-design select").select_option(label=pc.get_design("proportion-exact").title)
    type_into(page, "n", "5")
    type_into(page, "target_power", "0.99")
    page.locator(".pl-find button", has_text="smallest detectable effect").click()
    expect(page.locator(".pl-msg-effect")).to_contain_text("No detectable effect reaches the target power")
    type_into(page, "n", "300")
    expect(page.locator(".pl-msg-effect")).to_be_hidden()
    expect(page.locator(".pl-found-effect")).to_contain_text("(found)")


def test_hover_shows_values(open_page):
    """Pointing at the power-against-n curve shows n and power under the pointer."""
    from playwright.sync_api import expect
    page = open_page().page
    pt = page.evaluate("""() => { const v = Bokeh.index.find_one(Bokeh.documents[0].get_model_by_name('power-n'));
        v.el.scrollIntoView({block: 'center'}); const r = v.el.getBoundingClientRect(); const f = v.frame.bbox;
        return {x: r.x + f.left + f.width * 0.5, y: r.y + f.top + f.height * 0.5}; }""")
    page.mouse.move(pt["x"] - 8, pt["y"])
    page.mouse.move(pt["x"], pt["y"], steps=3)
    expect(page.locator(".bk-Tooltip").first).to_be_visible()
    expect(page.get_by_text(re.compile(r"^0\.\d{4}$")).first).to_be_visible()
    expect(page.get_by_text("power:").first).to_be_visible()


def test_two_tabs_are_isolated(open_page):
    """Two browser contexts are two sessions: a change in one leaves the other alone."""
    from playwright.sync_api import expect
    a, b = open_page().page, open_page().page
    type_into(a, "alpha", "0.01")
    expect_power(a, demo(alpha=0.01))
    a.locator(".pl-find button", has_text="sample size").click()
    expect(a.locator(".pl-found-n")).to_be_visible()
    b.wait_for_timeout(300)
    expect_power(b, demo())
    expect(b.locator(".pl-box-alpha input")).to_have_value("0.05")
    expect(b.locator(".pl-found-n")).to_be_hidden()


def test_screenshots_and_figure_export(open_page):
    """Whole page and one exported figure (captions drawn inside it) saved to tests/artifacts/."""
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    gp = open_page(viewport=(1600, 1000))
    page = gp.page
    page.wait_for_timeout(400)
    page.screenshot(path=str(ARTIFACTS / "explorer.png"), full_page=True)
    png = page.evaluate("""async () => {
        const view = Bokeh.index.find_one(Bokeh.documents[0].get_model_by_name('densities'));
        const blob = await view.export('png', true).to_blob();
        const u = new Uint8Array(await blob.arrayBuffer()); let s = '';
        for (let i = 0; i < u.length; i += 0x8000) s += String.fromCharCode(...u.subarray(i, i + 0x8000));
        return btoa(s); }""")
    data = base64.b64decode(png)
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    (ARTIFACTS / "densities-export.png").write_bytes(data)
    page.locator(".pl-design select").select_option(label=pc.get_design("proportion-exact").title)
    page.wait_for_function("() => Bokeh.documents[0].get_model_by_name('density-bars-null')"
                           ".data.x.length > 0")
    page.wait_for_timeout(300)
    page.screenshot(path=str(ARTIFACTS / "explorer-exact.png"), full_page=True)
