"""Pinned scenarios side by side, their curves on the power figures, the basis and the justification card.

No browser: the page is rendered to a Bokeh document (tests/app_support.py) and model properties read.
Expected numbers come from powercore (evaluate, curve_effect, make_record) on the same scenarios.
"""
from __future__ import annotations

import json

import numpy as np
import pytest

import powercore as pc
from powercore.justification import DELTA2_NOTE, justification
from powercore.record import read_pinned
from app.explorer import Explorer
from app.pins import MAX_PINS
from app.theme import PIN_STYLES
from app_support import app, render  # noqa: F401  (app is a fixture)


def pin_two(app: Explorer) -> tuple[pc.Scenario, pc.Scenario]:
    """Pin the demo as 'A', then n = 90 as 'B'."""
    first = app.state.snapshot.scenario
    assert app.pins.name_box.value == "A"           # the default name
    assert app.pins.pin()
    app.controls.n.box.value = 90
    assert app.pins.name_box.value == "B"
    assert app.pins.pin()
    return first, app.state.snapshot.scenario


def test_pin_fills_the_overlay_sources_and_legend(app):
    """Each pin fills its own overlay source on both power figures; the legend names it."""
    a, b = pin_two(app)
    eff, ncur = app.effect_curve, app.n_curve
    assert eff.pin_names() == ["A", "B"] and ncur.pin_names() == ["A", "B"]
    assert eff.overlay_legend.visible and ncur.overlay_legend.visible
    assert eff.legend_labels() == ["current scenario", "A", "B"] == ncur.legend_labels()
    ref = pc.evaluate(b)
    src = ncur.src_pins[1].data
    assert isinstance(src["n"], np.ndarray) and isinstance(src["power"], np.ndarray)
    at = np.searchsorted(src["n"], 90)
    assert src["n"][at] == 90 and src["power"][at] == pytest.approx(ref.power, rel=1e-9)
    x = eff.src_pins[0].data["x"]
    want = pc.curve_effect(a, float(x[0]), float(x[-1]), points=len(x)).power
    np.testing.assert_allclose(eff.src_pins[0].data["power"], want, rtol=1e-9)
    assert [r.visible for r in eff.pin_lines] == [True, True] + [False] * (MAX_PINS - 2)
    colours = {r.glyph.line_color for r in eff.pin_lines}
    assert len(colours) == MAX_PINS and "#0072B2" not in colours     # none is the current curve's blue
    assert len({str(r.glyph.line_dash) for r in eff.pin_lines}) == MAX_PINS


def test_overlay_renderers_are_a_fixed_pool(app):
    """Pinning and removing change data and visibility only: the same renderers stay in the figures."""
    before = [id(r) for r in app.effect_curve.fig.renderers]
    pin_two(app)
    app.pins.remove(0)
    assert [id(r) for r in app.effect_curve.fig.renderers] == before
    assert app.effect_curve.pin_names() == ["B"] and not app.effect_curve.pin_lines[0].visible
    app.pins.remove(1)
    assert not app.effect_curve.overlay_legend.visible


def test_seventh_pin_is_refused_with_a_message_at_the_button(app):
    """Six pins fill every slot; the seventh is refused with a message and the button is disabled."""
    for k in range(MAX_PINS):
        app.controls.n.box.value = 40 + k
        assert app.pins.pin(), app.pins.name_message.object
    assert app.pins.names() == list("ABCDEF")
    app.controls.n.box.value = 99
    assert not app.pins.pin("G")
    msg = app.pins.button_message
    assert msg.visible and "All 6 places are taken" in msg.object and app.pins.pin_button.disabled
    assert len(app.pins.pins) == MAX_PINS
    app.pins.remove(2)                   # frees slot 2: the next pin takes it (and its colour)
    assert not app.pins.button_message.visible and not app.pins.pin_button.disabled
    assert app.pins.pin("G") and app.pins.pins[-1].slot == 2
    assert app.effect_curve.pin_lines[2].glyph.line_color == PIN_STYLES[2][0]


@pytest.mark.parametrize("name, words", [
    ("   ", "must not be empty"),
    ("x" * 41, "at most 40 characters"),
    (" A ", "already used"),
])
def test_bad_names_get_a_message_at_the_name_box(app, name, words):
    """Names are trimmed, unique and at most 40 characters; otherwise the name box says why."""
    assert app.pins.pin("A")
    assert not app.pins.pin(name)
    assert app.pins.name_message.visible and words in app.pins.name_message.object
    assert app.pins.names() == ["A"]
    assert app.pins.pin("  padded  ") and app.pins.names() == ["A", "padded"]
    assert not app.pins.name_message.visible


def test_rename_checks_the_name_and_updates_legend_and_table(app):
    """Renaming keeps the rules; the legend and the table follow."""
    pin_two(app)
    assert not app.pins.rename(1, "A")
    assert "already used" in app.pins.rows[1].message.object and app.pins.names() == ["A", "B"]
    assert app.pins.rename(1, "  larger n ")
    assert app.pins.names() == ["A", "larger n"] and app.n_curve.pin_names() == ["A", "larger n"]
    assert 'data-pin="larger n"' in app.pins.table.object and not app.pins.rows[1].message.visible


def test_show_restores_the_pinned_scenario(app):
    """'Show' loads a pin back into the state: the views and controls show it again."""
    a, b = pin_two(app)
    assert app.state.snapshot.scenario == b
    assert app.pins.show(0)
    assert app.state.snapshot.scenario == a and app.controls.n.box.value == 60
    assert app.effect_curve.src_point.data["power"][0] == pytest.approx(pc.evaluate(a).power, rel=1e-12)


def test_pin_that_fails_is_refused_while_inputs_are_bad(app):
    """With a bad input on the page nothing is pinned and the button says why."""
    app.controls.alpha.box.value = 1.5
    assert app.state.errors
    assert not app.pins.pin("bad")
    assert "problem" in app.pins.button_message.object and app.pins.pins == []


def test_comparison_table_marks_differences(app):
    """A column per scenario (current first); values that differ from the current one are marked."""
    pin_two(app)
    app.controls.alpha.box.value = 0.01
    table = app.pins.table.object
    assert app.pins.table.visible and table.count("<th scope=\"col\"") == 3
    for row in ("design", "direction", "significance level α", "effect (data units)", "standardized effect",
                "spreads", "n per group", "n total", "power", "target power"):
        assert f'<th scope="row">{row}</th>' in table
    alpha_row = table.split('<th scope="row">significance level α</th>')[1].split("</tr>")[0]
    assert alpha_row.count('class="pl-diff"') == 2 and ">0.01<" in alpha_row
    design_row = table.split('<th scope="row">design</th>')[1].split("</tr>")[0]
    assert "pl-diff" not in design_row
    power_b = pc.evaluate(app.pins.pins[1].scenario).power
    assert f"{power_b:.3g}" in table.split('<th scope="row">power</th>')[1].split("</tr>")[0]


def test_pins_of_another_design_are_not_drawn_on_the_effect_curve(app):
    """After a switch of design, pins stay in the table but leave the effect axis (another meaning)."""
    pin_two(app)
    app.controls.design.value = "two-proportions"
    assert app.pins.names() == ["A", "B"]
    assert app.effect_curve.pin_names() == []
    assert "another design" in app.pins.table.object or "power vs n only" in app.pins.table.object


def test_record_round_trip_with_pins(app):
    """The downloaded record carries the pins; importing it into a fresh page brings them back."""
    a, b = pin_two(app)
    app.basis.value = "pilot"
    app.pins.rename(1, "bigger")
    text = app.share.record_text()
    rec = json.loads(text)
    assert [p["name"] for p in rec["pinned"]] == ["A", "bigger"] and rec["basis"] == "pilot"
    assert [p.scenario for p in read_pinned(rec)] == [a, b] and rec["pinned"][0]["unit_name"] == "min"
    other = Explorer()
    render(other)
    assert other.share.import_file("plan.json", text, len(text.encode()))
    assert other.pins.names() == ["A", "bigger"] and [p.scenario for p in other.pins.pins] == [a, b]
    assert other.effect_curve.pin_names() == ["A", "bigger"] and other.basis.value == "pilot"
    assert "Loaded plan.json." in other.share.message.object
    np.testing.assert_allclose(other.n_curve.src_pins[1].data["power"][:50],
                               app.n_curve.src_pins[1].data["power"][:50], rtol=1e-9)


def test_import_replaces_the_pins(app):
    """A record without pins clears the page's pins (the record describes the whole view)."""
    pin_two(app)
    plain = Explorer()
    render(plain)
    text = plain.share.record_text()
    assert app.share.import_file("plain.json", text, len(text))
    assert app.pins.pins == [] and not app.effect_curve.overlay_legend.visible


@pytest.mark.parametrize("mutate, field, kept", [
    (lambda r: r["pinned"][0]["assumptions"].__setitem__("alpha", 2), "pinned[0].assumptions.alpha", ["A"]),
    (lambda r: r["pinned"][1].__setitem__("name", "B"), "pinned[1].name", ["B"]),
    (lambda r: r["pinned"][0]["assumptions"]["params"].__setitem__("sd", -1), "pinned[0].assumptions.sd", ["A"]),
    (lambda r: r["pinned"].insert(0, "junk"), "pinned[0]", ["B", "A"]),
])
def test_a_bad_pin_is_named_and_the_rest_still_load(app, mutate, field, kept):
    """One bad pinned entry: a message names it, the other pin and the main scenario still load."""
    a, b = pin_two(app)
    rec = json.loads(app.share.record_text())
    rec["pinned"].reverse()          # B first, then A
    mutate(rec)
    text = json.dumps(rec)
    other = Explorer()
    render(other)
    assert other.share.import_file("plan.json", text, len(text))
    assert other.state.snapshot.scenario == b
    assert other.pins.names() == kept
    msg = other.share.message.object
    assert f'data-field="{field}"' in msg and "not restored" in msg


def test_pin_that_cannot_be_computed_is_named():
    """A pinned scenario that reads but has no solution is reported by its name; the others load."""
    a = Explorer()
    render(a)
    a.pins.pin("ok")
    rec = json.loads(a.share.record_text())
    rec["pinned"].append({"name": "none", "assumptions": {"design": "two-means-t", "find": "n", "n": None,
                                                          "params": {"delta": 0.0, "sd": 5.0}}})
    text = json.dumps(rec)
    b = Explorer()
    render(b)
    assert b.share.import_file("p.json", text, len(text))
    assert b.pins.names() == ["ok"] and "pinned scenario &#x27;none&#x27;" in b.share.message.object


def test_basis_select_warns_about_observed_power(app):
    """Choosing 'the observed result of this same study' shows the observed-power warning at the field."""
    assert not app.basis.warning.visible
    app.basis.select.value = "observed"
    assert app.basis.warning.visible and "Hoenig and Heisey 2001" in app.basis.warning.object
    assert "finished study" in app.basis.warning.object
    text = app.justification.texts()["current"]
    assert "restatement of the p-value" in text
    assert "pl-warn" in app.justification.current.para.object
    rec = json.loads(app.share.record_text())
    assert rec["basis"] == "observed" and any("Hoenig" in c and "finished" in c for c in rec["cautions"])
    app.basis.select.value = "relevance"
    assert not app.basis.warning.visible and "smallest difference that matters" in app.justification.texts()["current"]


def test_delta2_note_for_standardized_only_designs(app):
    """A design whose effect is only standardized (Cohen's w) shows the DELTA2 note; a difference design not."""
    assert not app.basis.delta2.visible
    app.controls.design.value = "chisquare-gof"
    assert app.basis.delta2.visible and "DELTA2" in app.basis.delta2.object
    assert DELTA2_NOTE in app.justification.texts()["current"]
    app.controls.design.value = "two-means-t"
    assert not app.basis.delta2.visible


def test_justification_card_per_scenario(app):
    """The card holds the current paragraph and one per pin, each the powercore text of that scenario."""
    a, b = pin_two(app)
    texts = app.justification.texts()
    assert set(texts) == {"current", "A", "B"}
    unit = app.state.snapshot.unit_name      # the demo's "min", written after the effect and the SD
    assert unit and f"of 20 {unit}" in texts["current"]
    assert texts["A"] == justification(pc.evaluate(a), pc.__version__, None, unit)
    assert texts["current"] == justification(app.state.snapshot.result, pc.__version__, None, unit)
    assert app.justification.blocks[1].layout.visible and not app.justification.blocks[2].layout.visible
    assert "Pinned: B" in app.justification.blocks[1].head.object
    app.pins.remove(0)
    assert set(app.justification.texts()) == {"current", "B"} and not app.justification.blocks[0].layout.visible


def test_cautions_stay_on_the_page(app):
    """The clinical cautions are still shown with the pins and the justification on the page."""
    from app.explorer import CAUTIONS
    assert any("qualified statistician" in c for c in CAUTIONS)


def test_band_api_draws_and_clears(app):
    """set_band shows a translucent varea with a legend entry; set_band(None) hides it again."""
    eff, ncur = app.effect_curve, app.n_curve
    assert not eff.band.visible
    x = np.linspace(0, 40, 5)
    eff.set_band(x, x / 100, x / 50, "power, 80% interval")
    assert eff.band.visible and eff.overlay_legend.visible
    assert eff.legend_labels() == ["current scenario", "power, 80% interval"]
    np.testing.assert_array_equal(eff.src_band.data["hi"], x / 50)
    ncur.set_band(np.arange(10, 15), np.zeros(5), np.ones(5), "σ upper limit")
    assert ncur.band.visible and len(ncur.src_band.data["n"]) == 5
    eff.set_band(None)
    assert not eff.band.visible and not eff.overlay_legend.visible
    with pytest.raises(ValueError):
        eff.set_band(x, x[:3], x, "bad")
