"""Export and sharing in headless Chromium: pictures, the record out and back in, links, bad files.

Uses the same server and guarded pages as ``test_browser.py`` (browser_support). Pictures are
decoded with Pillow when it is installed, else by the PNG header and zlib.
"""
from __future__ import annotations

import json
import re
import struct
import xml.etree.ElementTree as ET
import zlib
from pathlib import Path

import pytest

import powercore as pc
from powercore.record import MAX_RECORD_BYTES
from browser_support import *  # noqa: F401,F403
from browser_support import demo, expect_power, needs_browser

pytestmark = [pytest.mark.browser, needs_browser]

ALT_BLUE = (0x00, 0x72, 0xB2)
POWER_ORANGE = tuple(round(255 * 0.45 + c * 0.55) for c in (0xE6, 0x9F, 0x00))   # fill_alpha 0.55 on white



def type_into(page, key: str, text: str) -> None:
    box = page.locator(f".pl-box-{key} input")
    box.fill(text)
    box.press("Enter")


def pixels(data: bytes):
    """(width, height, set of RGB colours) of a PNG."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    w, h = struct.unpack(">II", data[16:24])
    try:
        import io

        from PIL import Image
        im = Image.open(io.BytesIO(data)).convert("RGB")
        return w, h, {c for _, c in im.getcolors(maxcolors=1 << 20)}
    except ImportError:   # pragma: no cover - header and a non-constant stream only
        chunks, pos = b"", 8
        while pos < len(data):
            n, kind = struct.unpack(">I4s", data[pos:pos + 8])
            if kind == b"IDAT":
                chunks += data[pos + 8:pos + 8 + n]
            pos += 12 + n
        raw = zlib.decompress(chunks)
        return w, h, set(raw[i:i + 3] for i in range(0, min(len(raw), 300000), 3))


def near(colours, rgb, tol=12) -> bool:
    return any(all(abs(a - b) <= tol for a, b in zip(c, rgb)) for c in colours)


def download(page, selector: str):
    with page.expect_download() as info:
        page.locator(selector).click()
    d = info.value
    return d.suggested_filename, Path(d.path()).read_bytes()


def view_size(page, name: str):
    return page.evaluate(f"""() => {{ const v = Bokeh.index.find_one(Bokeh.documents[0].get_model_by_name('{name}'));
        return [v.bbox.width, v.bbox.height]; }}""")


def choose(page, group: str, label: str) -> None:
    page.locator(f".{group} button", has_text=label).click()


def test_export_png_2x_and_svg_of_a_view_and_the_board(open_page):
    """PNG at 2x and SVG of the densities view and of the whole board: size, colours, caption, names."""
    page = open_page().page
    choose(page, "pl-export-scale", "2x")
    name, png = download(page, ".pl-export-png button")
    assert re.fullmatch(r"powerlens_two-means-t_\d{4}-\d\d-\d\d_density\.png", name), name
    w, h, colours = pixels(png)
    vw, vh = view_size(page, "densities")
    assert (w, h) == (round(2 * vw), round(2 * vh))
    assert len(colours) > 50 and (255, 255, 255) in colours        # not blank, white background
    assert near(colours, ALT_BLUE) and near(colours, POWER_ORANGE)
    name, svg = download(page, ".pl-export-svg button")
    assert name.endswith("_density.svg")
    root = ET.fromstring(svg)
    texts = " ".join(t.text or "" for t in root.iter() if t.tag.endswith("text"))
    assert f"Powerlens {pc.__version__}" in texts and "common SD σ = 45 min" in texts
    assert "two-sided · α = 0.05" in texts
    choose(page, "pl-export-view", "whole board")
    name, png = download(page, ".pl-export-png button")
    assert name.endswith("_board.png")
    w, h, colours = pixels(png)
    sizes = [view_size(page, n) for n in ("densities", "power-effect", "power-n")]
    assert w >= 2 * sizes[0][0] - 2 and h >= 2 * (sizes[0][1] + sizes[1][1]) - 2
    assert near(colours, ALT_BLUE) and near(colours, POWER_ORANGE) and (255, 255, 255) in colours
    name, svg = download(page, ".pl-export-svg button")
    root = ET.fromstring(svg)
    parts = [e for e in root if e.tag.endswith("svg")]
    assert [p.get("id") for p in parts] == ["powerlens-densities", "powerlens-power-effect", "powerlens-power-n"]
    for part in parts:   # each view keeps its caption
        assert any(f"Powerlens {pc.__version__}" in (t.text or "") for t in part.iter() if t.tag.endswith("text"))


def test_record_download_and_reimport_in_a_fresh_page(open_page, tmp_path):
    """The downloaded record is make_record's; importing it into a new page restores the exact view."""
    from playwright.sync_api import expect
    a = open_page().page
    type_into(a, "alpha", "0.01")
    type_into(a, "n", "75")
    a.locator(".pl-direction button", has_text="one-sided, upper").click()
    sc = demo(alpha=0.01, n=75, direction="upper")
    expect_power(a, sc)
    name, data = download(a, ".pl-download-record button")
    assert re.fullmatch(r"powerlens_two-means-t_\d{4}-\d\d-\d\d\.json", name)
    rec = json.loads(data)
    assert rec["assumptions"]["alpha"] == 0.01 and rec["assumptions"]["n"] == 75
    assert rec["extras"] == {"unit_name": "min"} and pc.record.read_record(rec) == sc
    path = tmp_path / name
    path.write_bytes(data)
    b = open_page().page
    expect_power(b, demo())
    with b.expect_file_chooser() as fc:
        b.locator(".pl-import-record button").click()
    fc.value.set_files(str(path))
    expect_power(b, sc)
    expect(b.locator(".pl-share-msg")).to_contain_text("Loaded")
    expect(b.locator(".pl-box-alpha input")).to_have_value("0.01")
    assert b.locator(".pl-readout table").inner_text() == a.locator(".pl-readout table").inner_text()


def test_copied_link_restores_view_and_bad_link_values_are_reported(open_page, browser, server):
    """Copy link puts every field in the address; a new context opening it shows the same readout."""
    from playwright.sync_api import expect
    gp = open_page()
    a = gp.page
    gp.context.grant_permissions(["clipboard-read", "clipboard-write"], origin=server.url.rstrip("/"))
    type_into(a, "sd", "38")
    a.locator(".pl-find button", has_text="sample size").click()
    expect(a.locator(".pl-found-n")).to_be_visible()
    a.locator(".pl-copy-link button").click()
    a.wait_for_function("() => !!window.powerlensLink")
    url = a.evaluate("() => window.powerlensLink")
    assert a.evaluate("() => window.location.href") == url
    assert a.evaluate("() => navigator.clipboard.readText()") == url
    for key in ("v=1", "design=two-means-t", "find=n", "p.sd=38", "alpha=0.05", "dropout=0", "multiplicity=none"):
        assert key in url, key
    b = GuardedPage(browser, url)
    try:
        b.open()
        expect(b.page.locator(".pl-found-n")).to_be_visible()
        assert b.page.locator(".pl-readout table").inner_text() == a.locator(".pl-readout table").inner_text()
        assert not b.page.locator(".pl-share-msg").is_visible()
    finally:
        b.close()
    bad = url.replace("p.sd=38", "p.sd=abc").replace("alpha=0.05", "alpha=2") + "&colour=red"
    c = GuardedPage(browser, bad)
    try:
        c.open()
        msg = c.page.locator(".pl-share-msg")
        expect(msg.locator('li[data-field="alpha"]')).to_contain_text("must be in (0, 1)")
        expect(msg.locator('li[data-field="p.sd"]')).to_contain_text("not a number")
        expect(msg.locator('li[data-field="colour"]')).to_contain_text("not a field")
        expect(c.page.locator(".pl-found-n")).to_be_visible()   # find=n from the link still applied
        expect(c.page.locator(".pl-box-alpha input")).to_have_value("0.05")
        assert c.errors == [] and c.external == []
    finally:
        c.close()


BAD_FILES = [
    ("syntax.json", b'{"kind": "powerlens.assumptions-record", ', "json", "not valid JSON"),
    ("types.json", None, "alpha", "must be a number in (0, 1)"),
    ("unknown.json", None, "colour", "not a field"),
    ("version.json", None, "schema_version", "must be"),
    ("big.json", b" " * (MAX_RECORD_BYTES + 10), "file", "at most 2,000,000 bytes"),
]


def test_malformed_records_are_refused_and_the_session_goes_on(open_page, tmp_path):
    """Each bad file shows a message naming the field; the view stays; the page keeps working."""
    from playwright.sync_api import expect
    good = pc.record.make_record(demo(), curves=False)
    made = {"types.json": {**good, "assumptions": {**good["assumptions"], "alpha": "high"}},
            "unknown.json": {**good, "colour": "red"},
            "version.json": {**good, "schema_version": 99}}
    page = open_page().page
    type_into(page, "n", "70")
    expect_power(page, demo(n=70))
    for name, data, field, words in BAD_FILES:
        path = tmp_path / name
        path.write_bytes(data if data is not None else json.dumps(made[name]).encode())
        with page.expect_file_chooser() as fc:
            page.locator(".pl-import-record button").click()
        fc.value.set_files(str(path))
        item = page.locator(".pl-share-msg li")
        expect(item).to_have_attribute("data-field", re.compile(rf"(^|\.){re.escape(field)}$"))
        expect(item).to_contain_text(words)
        expect(page.locator(".pl-share-msg")).to_contain_text(f"{name} was not loaded")
        expect_power(page, demo(n=70))
    type_into(page, "n", "90")
    expect_power(page, demo(n=90))


def test_simulation_progress_cancel_and_other_session_unaffected(open_page):
    """A long run shows progress and can be cancelled; meanwhile another session keeps updating;
    a short run then shows its result and a simulated point on the power-against-n view."""
    from playwright.sync_api import expect
    a = open_page().page
    b = open_page().page
    d = pc.get_design("logrank-events")        # the slowest simulation: 100,000 runs at 4,000 events take about
    a.locator(".pl-design select").select_option(label=d.title)   # a minute here (12 s at 1,000 events was
    expect_power(a, pc.Scenario(design=d.id, params=d.defaults(), n=d.n.default))   # once too short in CI)
    type_into(a, "n", "4000")
    expect_power(a, pc.Scenario(design=d.id, params=d.defaults(), n=4000))
    choose(a, "pl-sim-reps", "100,000")
    a.locator(".pl-sim-start button").click()
    expect(a.locator(".pl-sim-progress progress")).to_have_attribute("value", re.compile(r"^[1-9]\d*$"))
    type_into(b, "n", "72")                   # another session, while the first one simulates
    expect_power(b, demo(n=72))
    expect(a.locator(".pl-sim-cancel button")).to_be_enabled()    # the run was still going meanwhile
    a.locator(".pl-sim-cancel button").click()
    expect(a.locator('.pl-sim-result [data-state="cancelled"]')).to_contain_text("Cancelled after")
    expect(a.locator(".pl-sim-start button")).to_be_enabled()
    choose(a, "pl-sim-reps", "1,000")
    a.locator(".pl-sim-start button").click()
    expect(a.locator('.pl-sim-result td[data-key="sim-reps"]')).to_contain_text("1,000 replicates")
    expect(a.locator('.pl-sim-result td[data-key="sim-statement"]')).to_contain_text("simulated power")
    a.wait_for_function("() => Bokeh.documents[0].get_model_by_name('n-sim').data.n.length === 1")
