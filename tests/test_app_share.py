"""Export, record, import, links and adjustments of the explorer, without a browser.

Expected values come from powercore (make_record, read_record, evaluate) on the same scenario.
"""
from __future__ import annotations

import json
import re

import pytest

import powercore as pc
from powercore.record import MAX_RECORD_BYTES
from app import sharing
from app.explorer import Explorer
from app.state import DEMO, ExplorerState
from app_support import app, render  # noqa: F401  (app is a fixture)

DESIGN_IDS = [d.id for d in pc.designs()]



def readout_value(app: Explorer, key: str) -> str:
    m = re.search(rf'data-key="{key}">([^<]*)<', app.readout.pane.object)
    assert m, f"no readout row {key}"
    return m.group(1)


def changed(app: Explorer) -> pc.Scenario:
    """Set a scenario different from the demo in every field the page has."""
    c = app.controls
    c.design.value = "two-proportions"
    c.others["p1"].box.value = 0.3
    c.effect.box.value = 0.12
    c.alpha.box.value = 0.025
    c.direction.value = "upper"
    c.target.box.value = 0.9
    c.dropout.box.value = 0.15
    c.comparisons.box.value = 3.0
    c.multiplicity.value = "sidak"
    c.others["continuity"].value = True
    c.find.value = "n"
    assert app.state.errors == {}
    return app.state.snapshot.scenario


# ---- the record ------------------------------------------------------------------------------
def test_record_download_is_make_record_of_the_views(app):
    """The download is make_record of the scenario behind the views, named like the pictures."""
    sc = changed(app)
    assert re.fullmatch(r"powerlens_two-proportions_\d{4}-\d\d-\d\d\.json", app.share.download.filename)
    assert app.share.base.value == app.share.download.filename[:-5]
    rec = json.loads(app.share._record_file().getvalue())
    ref = pc.record.make_record(sc)
    assert {k for k in ref if k != "created"} <= set(rec)
    assert rec["assumptions"] == ref["assumptions"] and rec["results"] == ref["results"]
    assert pc.record.read_record(rec) == sc and pc.record.verify_record(rec) == {}
    assert "simulation" not in rec


def test_record_carries_unit_name_and_simulation(app):
    """The unit name rides in 'extras'; a simulation result, when there is one, in 'simulation'."""
    app.simulation = {"power": 0.5, "reps": 1000, "seed": 7}
    rec = json.loads(app.share.record_text())
    assert rec["extras"] == {"unit_name": "min"} and rec["simulation"]["seed"] == 7
    pc.record.read_record(rec)   # still a valid record


def test_import_restores_the_exact_view(app):
    """A record from one page, imported into a fresh page, restores design, every value and the controls."""
    sc = changed(app)
    app.controls.unit_name.value = ""
    text = app.share.record_text()
    other = Explorer()
    render(other)
    assert other.share.import_file("plan.json", text, len(text.encode()))
    st = other.state
    assert st.snapshot.scenario == sc
    assert (st.design, st.find, st.direction, st.alpha, st.target_power) == ("two-proportions", "n", "upper",
                                                                             0.025, 0.9)
    assert st.adjustments == {"dropout": 0.15, "comparisons": 3, "multiplicity": "sidak"}
    c = other.controls
    assert c.design.value == "two-proportions" and c.others["continuity"].value is True
    assert c.dropout.box.value == 0.15 and c.comparisons.box.value == 3 and c.multiplicity.value == "sidak"
    assert c.n._found.visible and readout_value(other, "n") == readout_value(app, "n")
    assert "Loaded plan.json" in other.share.message.object


def test_import_keeps_unit_name():
    a, b = Explorer(), Explorer()
    render(a), render(b)
    b.controls.unit_name.value = "h"
    text = a.share.record_text()
    assert b.share.import_file("x.json", text, len(text))
    assert b.state.unit_name == "min"


def _good() -> dict:
    return pc.record.make_record(pc.Scenario(design=DEMO["design"], params=DEMO["params"], n=DEMO["n"]),
                                 curves=False)


BAD = [
    ("syntax", lambda: '{"kind": ', "json", "not valid JSON"),
    ("nan", lambda: json.dumps(_good()).replace('"alpha": 0.05', '"alpha": NaN', 1), "json", "NaN"),
    ("type", lambda: json.dumps({**_good(), "assumptions": {**_good()["assumptions"], "n": "sixty"}}),
     "assumptions.n", ""),
    ("unknown", lambda: json.dumps({**_good(), "colour": "red"}), "colour", "not a field"),
    ("version", lambda: json.dumps({**_good(), "schema_version": 2}), "schema_version", "must be"),
    ("param", lambda: json.dumps({**_good(), "assumptions": {**_good()["assumptions"],
                                                              "params": {"delta": 1, "sd": -4, "ratio": 1}}}),
     "sd", "(0, "),
    ("not-object", lambda: "[1, 2]", "record", "JSON object"),
]


@pytest.mark.parametrize("case, make, field, words", BAD, ids=[b[0] for b in BAD])
def test_bad_records_are_refused_by_field_and_the_view_stays(app, case, make, field, words):
    """Each bad record gives a message naming its field; state and views are unchanged."""
    before = app.state.snapshot
    text = make()
    assert not app.share.import_file(f"{case}.json", text, len(text.encode()))
    msg = app.share.message.object
    assert app.share.message.visible and f"{case}.json was not loaded" in msg
    assert re.search(rf'data-field="([\w.]*\.)?{re.escape(field)}"', msg), msg
    assert words.replace("(", "(") in msg
    assert app.state.snapshot is before and app.state.errors == {}


def test_oversized_file_refused_before_reading(app):
    """A file over MAX_RECORD_BYTES is refused by its size alone (the browser sends no content)."""
    before = app.state.snapshot
    assert not app.share.import_file("huge.json", None, MAX_RECORD_BYTES + 1)
    assert 'data-field="file"' in app.share.message.object and "at most 2,000,000 bytes" in app.share.message.object
    assert app.state.snapshot is before
    ok, field, _ = sharing.import_record(app.state, b" " * (MAX_RECORD_BYTES + 1))
    assert (ok, field) == (False, "file")


def test_payload_from_the_browser_is_handled(app):
    """The browser's message (name, size, text) imports; the payload box is emptied afterwards."""
    text = app.share.record_text().replace('"n": 60', '"n": 64', 1)
    app.share.payload.value = json.dumps({"name": "a.json", "size": len(text), "text": text, "stamp": 1})
    assert app.state.n == 64 and app.share.payload.value == ""
    app.share.payload.value = json.dumps({"name": "b.json", "size": 5_000_000, "too_large": True, "stamp": 2})
    assert "b.json was not loaded" in app.share.message.object and app.state.n == 64


# ---- links -----------------------------------------------------------------------------------
@pytest.mark.parametrize("design_id", DESIGN_IDS)
def test_link_round_trip_every_design(design_id):
    """Every field goes into the query and comes back: the restored scenario is the same."""
    a = ExplorerState()
    a.design = design_id
    a.adjustments = {"dropout": 0.1, "comparisons": 2, "multiplicity": "bonferroni"}
    assert a.errors == {}
    q = sharing.parse_query_string(sharing.query_string(a))
    assert q["v"] == str(pc.scenario.SCHEMA_VERSION) and q["design"] == design_id
    assert {f"p.{s.name}" for s in pc.get_design(design_id).params} <= set(q)
    b = ExplorerState()
    assert sharing.apply_query(b, q) == {}
    assert b.snapshot.scenario == a.snapshot.scenario


def test_link_find_n_and_unit(app):
    sc = changed(app)
    q = sharing.scenario_query(app.state)
    assert "n" not in q and q["find"] == "n"
    fresh = Explorer(query=q)
    assert fresh.state.snapshot.scenario == sc and not fresh.share.message.visible


def test_bad_link_values_reported_while_the_rest_apply():
    """A bad value is reported by its field with the reason; every good value still applies."""
    q = sharing.scenario_query(ExplorerState())
    q.update({"alpha": "2", "p.sd": "abc", "n": "80", "dropout": "0.2", "comparisons": "2.5", "colour": "red",
              "p.zeta": "1", "multiplicity": "sidak", "v": "9"})
    app = Explorer(query=q)
    st = app.state
    assert st.n == 80 and st.adjustments["dropout"] == 0.2 and st.adjustments["multiplicity"] == "sidak"
    assert st.alpha == 0.05 and st.values["sd"] == 45.0 and st.adjustments["comparisons"] == 1
    msg = app.share.message.object
    for field, words in (("alpha", "must be in (0, 1)"), ("p.sd", "not a number"), ("comparisons", "whole number"),
                         ("colour", "not a field"), ("p.zeta", "not a parameter"), ("v", "schema version")):
        m = re.search(rf'<li data-field="{re.escape(field)}">(.*?)</li>', msg)
        assert m and words in m.group(1), (field, msg)
    assert app.share.message.visible


def test_link_with_unknown_design_keeps_the_page():
    app = Explorer(query={"design": "no-such-design", "n": "70"})
    assert app.state.design == DEMO["design"] and app.state.n == 70
    assert 'data-field="design"' in app.share.message.object


def test_link_with_value_refused_by_the_core():
    """A value the core refuses given the others (an impossible difference) is reported and reverted."""
    app = Explorer(query={"design": "two-proportions", "p.p1": "0.3", "p.delta": "0.9"})
    assert app.state.design == "two-proportions" and app.state.values["p1"] == 0.3
    assert app.state.values["delta"] != 0.9 and 'data-field="p.delta"' in app.share.message.object


def test_link_query_follows_the_page(app):
    app.controls.n.box.value = 75.0
    assert "n=75" in app.share.link.value and app.share.link.value.startswith("?v=")


# ---- adjustments on the page -----------------------------------------------------------------
def test_dropout_shows_analysed_and_enrolled(app):
    """Dropout leaves the analysed n and power alone and raises the n to enrol."""
    power = readout_value(app, "power")
    app.controls.dropout.box.value = 0.2
    res = pc.evaluate(app.state.snapshot.scenario)
    assert res.enrolled_sizes == (75, 75)
    assert readout_value(app, "power") == power
    assert readout_value(app, "enrolled").startswith("75 subjects in group 1 (groups 75 + 75 = 150")
    assert "dropout 20%" in readout_value(app, "enrolled") and readout_value(app, "n").startswith("n = 60")
    assert "enrol 150 for 20% dropout" in app.densities.captions.text
    app.controls.dropout.slider.value = 0.1
    assert app.state.adjustments["dropout"] == pytest.approx(0.1) and app.controls.dropout.box.value == 0.1


def test_several_tests_use_the_per_test_level(app):
    """Three tests with Bonferroni: the readout shows α/3 per test, and power follows the core."""
    app.controls.comparisons.box.value = 3.0
    app.controls.multiplicity.value = "bonferroni"
    res = pc.evaluate(app.state.snapshot.scenario)
    assert res.alpha_test == pytest.approx(0.05 / 3)
    assert readout_value(app, "alpha-test").startswith("0.01667 (3 tests, Bonferroni")
    assert readout_value(app, "power").startswith(f"{res.power:.4f}"[:6])
    assert "per test" in app.densities.captions.text
    app.controls.multiplicity.value = "sidak"
    assert app.state.snapshot.result.alpha_test == pytest.approx(1 - 0.95 ** (1 / 3))


@pytest.mark.parametrize("control, value, field, words", [
    ("dropout", 1.0, "adjustments.dropout", "[0, 1)"),
    ("comparisons", 0.0, "adjustments.comparisons", "whole number"),
    ("comparisons", 2.5, "adjustments.comparisons", "whole number"),
])
def test_bad_adjustments_message_at_field(app, control, value, field, words):
    before = app.state.snapshot
    getattr(app.controls, control).box.value = value
    assert field in app.state.errors and words in app.state.errors[field]
    ctl = getattr(app.controls, control)
    assert ctl._message.visible and app.state.snapshot is before


# ---- confirm by simulation -------------------------------------------------------------------
def test_simulation_result_beside_the_readout_in_the_record_and_on_the_n_view(app):
    """A run (in the calling thread without a server) shows the core's result, feeds the record and
    draws a point with its interval on the power-against-n view; a changed scenario marks it stale."""
    from powercore.simulate import simulate
    app.sim._seed = 11
    app.sim.reps.value = "1,000"
    app.sim.run()
    ref = simulate(app.state.snapshot.result.solved, 1000, seed=11)
    res = app.sim.result
    assert (res.power, res.reps, res.seed) == (ref.power, 1000, 11)
    html_text = app.sim.pane.object
    assert f'data-key="sim-power">{res.power:.4g}' in html_text.replace("0.6", "0.6")
    assert "Wilson" in html_text and "seed 11" in html_text and res.statement in html_text
    rec = json.loads(app.share.record_text())
    assert rec["simulation"]["power"] == res.power and rec["simulation"]["reps"] == 1000
    src = app.doc.select_one({"name": "n-sim"})
    assert list(src.data["n"]) == [60] and src.data["lower"][0] <= res.power <= src.data["upper"][0]
    app.controls.n.box.value = 80.0
    assert 'data-state="stale"' in app.sim.pane.object
    assert "simulation" not in json.loads(app.share.record_text())
    assert list(app.doc.select_one({"name": "n-sim"}).data["n"]) == [60]   # same scenario apart from n
    app.controls.alpha.box.value = 0.01
    assert len(app.doc.select_one({"name": "n-sim"}).data["n"]) == 0
