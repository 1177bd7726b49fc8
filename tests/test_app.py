"""The explorer without a browser: render to a Bokeh document, change the state, read the models.

Expected numbers come from ``powercore.evaluate`` / ``densities`` / ``curve_*`` on the same
scenario, so these tests pin the wiring of the app, not the statistics.
"""
from __future__ import annotations

import math
import re

import numpy as np
import pytest
from bokeh.document import Document
from bokeh.models import ColumnDataSource, Title

import powercore as pc
from app.explorer import CAUTIONS, Explorer
from app.readout import readout_rows
from app.state import DEMO, ExplorerState
from app_support import app, render  # noqa: F401  (app is a fixture)
from app.text import caption, num

DESIGN_IDS = [d.id for d in pc.designs()]



def source(doc: Document, name: str) -> ColumnDataSource:
    src = doc.select_one({"name": name})
    assert isinstance(src, ColumnDataSource), name
    return src


def readout_value(app: Explorer, key: str) -> str:
    m = re.search(rf'data-key="{key}">([^<]*)<', app.readout.pane.object)
    assert m, f"no readout row {key}"
    return m.group(1)


def demo_scenario(**changes) -> pc.Scenario:
    sc = pc.Scenario(design=DEMO["design"], params=DEMO["params"], n=DEMO["n"], alpha=DEMO["alpha"],
                     direction=DEMO["direction"], find=DEMO["find"], target_power=DEMO["target_power"])
    return sc.replace(**changes) if changes else sc


# ---- the page at start ------------------------------------------------------------------
def test_demo_loads_and_matches_powercore(app):
    """The invented demo is loaded at start and its readout and densities match powercore."""
    res = pc.evaluate(demo_scenario())
    assert readout_value(app, "power").startswith(num(res.power, 4))
    assert readout_value(app, "beta") == num(res.beta, 4)
    dens = pc.densities(res.solved, "statistic")
    src = source(app.doc, "density-curve")
    np.testing.assert_allclose(src.data["x"], dens.x)
    np.testing.assert_allclose(src.data["alt"], dens.alt)
    assert "81 subjects in group 1" in readout_value(app, "required-n")
    assert "162 subjects in both groups" in readout_value(app, "required-n")


def test_demo_and_cautions_are_labelled():
    """The page says the demo is invented and shows both cautions."""
    explorer = Explorer()
    texts = " ".join(str(getattr(p, "object", "")) for p in explorer._layout.select(lambda o: hasattr(o, "object")))
    assert "Invented" in texts and "not a real study" in texts
    assert "qualified statistician" in CAUTIONS[0] and "regulations and ethics rules prevail" in CAUTIONS[0]
    assert "Hoenig &amp; Heisey 2001" in texts and "observed power" in texts.lower()


def test_columns_are_numpy_arrays(app):
    """Sources hold numpy arrays (sent as binary buffers), not lists."""
    for name in ("density-curve", "effect-curve", "n-curve"):
        for col in source(app.doc, name).data.values():
            assert isinstance(col, np.ndarray)


def test_captions_inside_figures(app):
    """Each figure carries its caption as a Bokeh Title inside the figure (so a PNG export keeps it)."""
    res = app.state.snapshot.result
    expected = caption(app.state.current_design(), res, "min")
    for fig in (app.densities.fig, app.effect_curve.fig, app.n_curve.fig):
        titles = [t.text for t in fig.below if isinstance(t, Title)]
        assert titles == ["\n".join(expected)]
    assert "two-sided" in expected[1] and "α = 0.05" in expected[1]
    assert "+20 min" in expected[2] and "d = 0.444" in expected[2]
    assert "common SD σ = 45 min" in expected[3] and "n = 60 subjects in group 1" in expected[4]
    assert expected[5] == f"Powerlens {pc.__version__} · {app.share.base.value[-10:]}"


def test_captions_travel_with_the_data_not_with_the_details(app):
    """A refresh without details (a slider step) still rewrites the captions, so the browser paints
    each figure once per change; the working waits for the details."""
    working_before = app.working.pane.object
    app._pending = True                 # hold the automatic refresh; the test makes the fast one itself
    app.state.values = {**app.state.values, "delta": 25.0}
    app.refresh(figures=True, details=False)
    want = "\n".join(caption(app.state.current_design(), app.state.snapshot.result, "min"))
    assert "+25 min" in want
    for fig in (app.densities.fig, app.effect_curve.fig, app.n_curve.fig):
        assert [t.text for t in fig.below if isinstance(t, Title)] == [want]
    assert app.working.pane.object == working_before
    app._refresh_details()
    assert app.working.pane.object != working_before


# ---- changes flow to the views --------------------------------------------------------------
def test_effect_box_updates_views_in_place(app):
    """Typing an effect replaces the sources' data in place and the readout follows powercore."""
    figs = (app.densities.fig, app.effect_curve.fig, app.n_curve.fig)
    src_before = source(app.doc, "effect-curve")
    app.controls.effect.box.value = 30.0
    assert app.state.values["delta"] == 30.0
    res = pc.evaluate(demo_scenario(params={"delta": 30.0}))
    assert readout_value(app, "power").startswith(num(res.power, 4))
    assert source(app.doc, "effect-curve") is src_before
    np.testing.assert_allclose(source(app.doc, "effect-point").data["power"], [res.power])
    n_src = source(app.doc, "n-curve")
    lo, hi = pc.n_range(res)
    curve = pc.curve_n(res.solved, lo, hi, points=300)
    np.testing.assert_allclose(n_src.data["power"], curve.power)
    assert (app.densities.fig, app.effect_curve.fig, app.n_curve.fig) == figs
    assert app.n_curve.required.location == res.sample_size.n


def test_slider_and_box_stay_in_step(app):
    """Dragging a slider moves its box and the state; typing moves the slider."""
    ctl = app.controls.alpha
    ctl.slider.value = 0.01
    assert ctl.box.value == pytest.approx(0.01) and app.state.alpha == pytest.approx(0.01)
    ctl.box.value = 0.025
    assert ctl.slider.value == pytest.approx(0.025) and app.state.alpha == 0.025
    n = app.controls.n
    n.slider.value = 90
    assert n.box.value == 90 and app.state.n == 90
    res = pc.evaluate(demo_scenario(n=90, alpha=0.025))
    assert readout_value(app, "power").startswith(num(res.power, 4))


def test_typed_value_beyond_soft_range_widens_slider(app):
    """A typed value past the slider's typical range (inside the domain) is used and widens the slider."""
    ctl = app.controls.n
    ctl.box.value = 1000.0
    assert app.state.n == 1000 and ctl.slider.end >= 1000 and ctl.slider.value == 1000
    assert app.state.snapshot.result.n == 1000


def test_standardized_effect_kept_in_step(app):
    """Setting Cohen's d moves the effect in data units (d·σ) and back."""
    app.controls.standardized.box.value = 0.5
    assert app.state.values["delta"] == pytest.approx(0.5 * 45)
    assert app.controls.effect.box.value == pytest.approx(22.5)
    app.controls.effect.box.value = 9.0
    assert app.controls.standardized.box.value == pytest.approx(0.2)


def test_scale_switch_draws_data_units(app):
    """The densities switch to the estimate in data units, with the unit on the axis."""
    app.scale.value = "data"
    dens = pc.densities(pc.evaluate(demo_scenario()).solved, "data")
    src = source(app.doc, "density-curve")
    np.testing.assert_allclose(src.data["x"], dens.x)
    assert app.densities.fig.xaxis[0].axis_label.endswith("(min)")
    lo, hi = dens.critical
    assert app.densities.crit_lines[0].location == pytest.approx(lo)
    assert app.densities.crit_lines[1].location == pytest.approx(hi)


@pytest.mark.parametrize("find, unknown", [("n", {"n": None}), ("effect", {}), ("alpha", {"alpha": None})])
def test_find_modes_show_found_value_read_only(app, find, unknown):
    """The quantity being found is shown as a read-only result in place of its inputs."""
    app.controls.find.value = find
    res = pc.evaluate(demo_scenario(find=find, **unknown))
    ctl = {"n": app.controls.n, "effect": app.controls.effect, "alpha": app.controls.alpha}[find]
    assert ctl._found.visible and not ctl._inputs.visible
    assert "(found)" in ctl._found.object
    expected = {"n": f"n = {res.n} subjects in group 1", "effect": f"+{num(res.effect, 4)} min",
                "alpha": f"α = {num(res.alpha, 4)}"}[find]
    assert expected in ctl._found.object
    assert app.state.snapshot.result.power == pytest.approx(res.power)
    assert {"n": "sample size analysed (found)", "effect": "effect (found)",
            "alpha": "(found)"}[find] in app.readout.pane.object
    app.controls.find.value = "power"
    assert not ctl._found.visible and ctl._inputs.visible


def test_found_value_is_adopted_when_switching_back(app):
    """After finding n, asking for power again starts from the n that was found."""
    app.controls.find.value = "n"
    found = app.state.snapshot.result.n
    app.controls.find.value = "power"
    assert app.state.n == found and app.controls.n.box.value == found


def test_direction_one_sided(app):
    """One-sided upper: one critical value, one detectable effect."""
    app.controls.direction.value = "upper"
    res = pc.evaluate(demo_scenario(direction="upper"))
    assert readout_value(app, "power").startswith(num(res.power, 4))
    assert not app.densities.crit_lines[0].visible and app.densities.crit_lines[1].visible
    assert app.effect_curve.detect[1].visible and not app.effect_curve.detect[0].visible


# ---- bad input ----------------------------------------------------------------------------
BAD = [
    ("alpha", lambda a: setattr(a.controls.alpha.box, "value", 1.5), "alpha", "must be in (0, 1)"),
    ("n", lambda a: setattr(a.controls.n.box, "value", -3.0), "n", "at least 2"),
    ("n-fraction", lambda a: setattr(a.controls.n.box, "value", 12.5), "n", "whole number"),
    ("sd", lambda a: setattr(a.controls.others["sd"].box, "value", 0.0), "sd", "must be in (0, ∞)"),
    ("target-below-alpha", lambda a: setattr(a.controls.target.box, "value", 0.01), "target_power",
     "must exceed"),
    ("empty-box", lambda a: setattr(a.controls.alpha.box, "value", None), "alpha", "got nothing"),
]


@pytest.mark.parametrize("case, act, field, words", BAD, ids=[b[0] for b in BAD])
def test_bad_input_message_at_field_and_last_good_views_stay(app, case, act, field, words):
    """A bad value shows a message at its field and in the readout; the views keep the last good data."""
    before = {k: np.array(v) for k, v in source(app.doc, "density-curve").data.items()}
    power_before = readout_value(app, "power")
    act(app)
    assert field in app.state.errors and words in app.state.errors[field]
    ctl = {"alpha": app.controls.alpha, "n": app.controls.n, "target_power": app.controls.target,
           "sd": app.controls.others.get("sd")}[field]
    assert ctl._message.visible and words.replace("∞", "∞") in ctl._message.object.replace("&#x27;", "'")
    assert "last good scenario" in app.readout.pane.object
    after = source(app.doc, "density-curve").data
    for k in before:
        np.testing.assert_array_equal(after[k], before[k])
    assert readout_value(app, "power") == power_before


def test_unreachable_target_is_reported_at_the_found_field():
    """A target the design cannot reach (exact binomial, 5 trials) is a message, not a traceback."""
    app = Explorer(ExplorerState(demo=False, design="proportion-exact"))
    render(app)
    app.controls.n.box.value = 5.0
    app.controls.target.box.value = 0.99
    app.controls.find.value = "effect"
    assert "effect" in app.state.errors
    assert "No detectable effect reaches the target power" in app.state.errors["effect"]
    assert app.controls.effect._message.visible
    app.controls.n.box.value = 200.0
    assert app.state.errors == {} and app.state.snapshot.result.scenario.find == "effect"


def test_zero_effect_when_finding_n():
    """Finding n with a zero effect reports why there is no n; good input afterwards recovers."""
    app = Explorer()
    render(app)
    app.controls.find.value = "n"
    app.controls.effect.box.value = 0.0
    assert "n" in app.state.errors and "power stays at α" in app.state.errors["n"]
    assert app.controls.n._message.visible
    app.controls.effect.box.value = 20.0
    assert app.state.errors == {} and app.state.snapshot.result.n == 81


def test_recovery_clears_messages(app):
    """Correcting a bad value clears the message and updates the views again."""
    app.controls.alpha.box.value = 1.5
    app.controls.alpha.box.value = 0.01
    assert app.state.errors == {} and not app.controls.alpha._message.visible
    assert "last good" not in app.readout.pane.object
    res = pc.evaluate(demo_scenario(alpha=0.01))
    assert readout_value(app, "power").startswith(num(res.power, 4))


# ---- every design, and sessions ---------------------------------------------------------
@pytest.mark.parametrize("design_id", DESIGN_IDS)
def test_every_registered_design_renders(design_id):
    """Each design in the registry gets controls from its ParamSpecs and draws finite data."""
    app = Explorer()
    doc = render(app)
    app.controls.design.value = design_id
    d = pc.get_design(design_id)
    assert app.state.errors == {}
    # values that mean the same in both designs (same family, name and unit) are carried over
    assert set(app.state.values) == {s.name for s in d.params}
    res = pc.evaluate(pc.Scenario(design=design_id, params=app.state.values, n=app.state.n))
    assert readout_value(app, "power").startswith(num(res.power, 4))
    assert d.n.unit in readout_value(app, "n")
    if d.discrete:
        kept = [source(doc, f"density-bars-{k}").data for k in ("null", "null-reject")]
        assert len(kept[0]["x"]) > 0 and len(source(doc, "density-curve").data["x"]) == 0
        total = sum(float(np.sum(b["null"])) for b in kept)
        assert 0.999 < total <= 1.0 + 1e-9   # the span drops 1e-4 in each tail
        size = float(np.sum(kept[1]["null"]))
        assert size == pytest.approx(app.state.snapshot.result.size, abs=2e-4)   # hatched bars hold the size
    else:
        curve = source(doc, "density-curve").data
        assert len(curve["x"]) > 10 and np.all(np.isfinite(curve["alt"]))
    for name in ("effect-curve", "n-curve"):
        assert np.all(np.isfinite(source(doc, name).data["power"]))
    names = {s.name for s in d.params} - {d.effect}
    assert set(app.controls.others) == names
    for spec in d.params:
        if spec.kind == "bool":
            assert type(app.controls.others[spec.name]).__name__ == "Checkbox"
    for find in ("n", "effect", "alpha"):
        app.controls.find.value = find
        # the defaults may not reach the target for every unknown (e.g. too few clusters):
        # then the only message is at the found field, saying why
        errs = app.state.errors
        assert errs == {} or (set(errs) == {find} and errs[find].startswith("No ")), (design_id, find, errs)


def test_design_picker_grouped_by_family():
    """The picker lists every registered design, grouped by family."""
    app = Explorer()
    groups = app.controls.design.groups
    assert set(groups) == {d.family for d in pc.designs()}
    listed = [v for g in groups.values() for v in g.values()]
    assert sorted(listed) == sorted(DESIGN_IDS)


def test_sessions_do_not_share_state():
    """Two pages have separate states, widgets and figures."""
    a, b = Explorer(), Explorer()
    render(a), render(b)
    a.controls.alpha.box.value = 0.01
    a.controls.design.value = "correlation-fisher"
    assert b.state.alpha == 0.05 and b.state.design == DEMO["design"]
    assert a.densities.fig is not b.densities.fig
    assert a.controls.alpha.slider is not b.controls.alpha.slider
    assert b.state.snapshot.result.power == pytest.approx(pc.evaluate(demo_scenario()).power)


def test_state_has_no_panel_dependency():
    """The state module imports param and powercore only (no Panel, no Bokeh)."""
    import app.state as st
    import app.text as tx
    for mod in (st, tx):
        src = open(mod.__file__, encoding="utf-8").read()
        assert "import panel" not in src and "bokeh" not in src


def test_readout_rows_units():
    """Every readout row that carries a quantity in data units shows the unit."""
    state = ExplorerState()
    rows = {k: t for k, _, t in readout_rows(state.snapshot)}
    assert rows["critical-data"].count("min") == 2
    assert "min" in rows["detectable"] and "(d = 0.516)" in rows["detectable"]
    assert "t ≤ −1.98 or ≥ 1.98" == rows["critical-statistic"]


def test_no_style_sheet_sets_a_bokeh_visual_variable():
    """app/speedups.py skips BokehJS's --bk-* visual lookups: safe only while no CSS of the app sets one."""
    import pathlib
    from app.speedups import VISUAL_CSS_VARIABLES
    for path in pathlib.Path(__file__).resolve().parents[1].joinpath("app").glob("*.py"):
        if path.name == "speedups.py":
            continue
        text = path.read_text()
        assert not [v for v in VISUAL_CSS_VARIABLES if v in text], path.name


def test_speedup_is_attached_to_the_session_document():
    """create_app attaches the lookup skip to the session's document as a document-ready callback."""
    from bokeh.document import Document
    from app import speedups
    doc = Document()
    speedups.install(doc)
    callbacks = [cb for cbs in doc.callbacks._js_event_callbacks.values() for cb in cbs]
    assert any(cb.code == speedups.SKIP_CSS_LOOKUP_JS for cb in callbacks)


class _Socket:
    """Stands in for a websocket connection: records frames, or fails like a stream closed mid-message
    (``closed``: the writes already queued fail; from write number ``refuse_from`` on, the write
    itself raises, as tornado's does once it knows the connection is closing)."""

    def __init__(self, closed: bool, refuse_from: int | None = None):
        import tornado.locks
        self.closed, self.refuse_from, self.frames, self.write_lock = closed, refuse_from, [], tornado.locks.Lock()
        self.calls = 0

    def write_message(self, data, binary=False):
        import asyncio
        from tornado.websocket import WebSocketClosedError

        self.calls += 1
        if self.refuse_from is not None and self.calls >= self.refuse_from:
            raise WebSocketClosedError()

        async def write():
            await asyncio.sleep(0)
            if self.closed:
                raise WebSocketClosedError()
            self.frames.append((data, binary))
        return asyncio.ensure_future(write())


def _send_with(closed: bool, refuse_from: int | None = None):
    """Send one Bokeh patch message with three binary arrays through speedups' send; the frames and the
    asyncio errors nobody retrieved."""
    import asyncio
    import gc
    from unittest import mock
    import numpy as np
    from bokeh.document import Document
    from bokeh.models import ColumnDataSource
    from bokeh.protocol import Protocol
    from tornado.websocket import WebSocketHandler
    from app import speedups

    doc = Document()
    source = ColumnDataSource({"x": np.arange(3.0), "y": np.ones(3), "z": np.zeros(3)})
    doc.add_root(source)
    events = []
    doc.on_change(lambda e: events.append(e))
    n = speedups.INLINE_BYTES // 8 + 1       # arrays too large to travel inline: binary buffers either way
    source.data = {"x": np.arange(n, dtype=float), "y": np.ones(n), "z": np.zeros(n)}
    message = Protocol().create("PATCH-DOC", events)
    sock = _Socket(closed, refuse_from)
    unretrieved = []

    async def main():
        asyncio.get_running_loop().set_exception_handler(lambda loop, ctx: unretrieved.append(ctx))
        with mock.patch.object(WebSocketHandler, "write_message", _Socket.write_message):
            conn = object.__new__(WebSocketHandler)     # a handler without a connection, sock's state in it
            conn.__dict__.update(vars(sock))
            try:
                return await speedups._send_at_once(message, conn)
            except Exception as exc:       # noqa: BLE001 - the error Bokeh's connection handles
                return exc
            finally:
                await asyncio.sleep(0.01)
                gc.collect()
    sent = asyncio.run(main())
    return sent, message, sock.frames, unretrieved


def test_server_send_writes_every_frame_in_order():
    """speedups' send writes Bokeh's frames (header, metadata, content, then ref + bytes per array) in order."""
    sent, message, frames, unretrieved = _send_with(closed=False)
    assert len(message.buffers) >= 3
    assert len(frames) == 3 + 2 * len(message.buffers)
    assert frames[0][0] == message.header_json and frames[2][0] == message.content_json
    assert [binary for _, binary in frames[3:]] == [False, True] * len(message.buffers)
    assert sent == sum(len(data) for data, _ in frames)
    assert unretrieved == []


def test_small_arrays_travel_inside_the_message():
    """speedups item 8: an array of at most INLINE_BYTES goes in the message's JSON (gzip + base64, as Bokeh
    embeds arrays in files), a larger one stays a binary buffer; Bokeh's own reader gets both back exactly."""
    import base64
    import gzip
    import json
    from unittest import mock
    import numpy as np
    from bokeh.core.serialization import Deserializer, Serializer
    from bokeh.document import Document
    from bokeh.models import ColumnDataSource
    from bokeh.protocol import Protocol
    from app import speedups

    doc = Document()
    small_src, large_src = ColumnDataSource({"y": np.zeros(2)}), ColumnDataSource({"y": np.zeros(2)})
    doc.add_root(small_src)
    doc.add_root(large_src)
    events = []
    doc.on_change(lambda e: events.append(e))
    small = np.linspace(-3.0, 3.0, speedups.INLINE_BYTES // 8)          # exactly at the limit
    large = np.linspace(0.0, 1.0, speedups.INLINE_BYTES // 8 + 1)
    small_src.data = {"y": small}
    large_src.data = {"y": large}
    with mock.patch.object(Serializer, "_encode_bytes", speedups._encode_small_bytes_inline):
        message = Protocol().create("PATCH-DOC", events)
    assert len(message.buffers) == 1 and message.buffers[0].to_bytes() == large.tobytes()
    small_event, large_event = json.loads(message.content_json)["events"]
    inline = dict(small_event["data"]["entries"])["y"]["array"]["data"]
    assert isinstance(inline, str)
    assert gzip.decompress(base64.b64decode(inline)) == small.tobytes()
    assert isinstance(dict(large_event["data"]["entries"])["y"]["array"]["data"], dict)   # a reference to the buffer
    reader = Deserializer(references=[small_src, large_src])
    got = [reader.decode(ev["data"], message.buffers)["y"] for ev in (small_event, large_event)]
    assert np.array_equal(got[0], small) and np.array_equal(got[1], large)


def test_patches_refer_to_the_models_they_meet_as_bokeh_does(app):
    """speedups item 9: a patch built without a reference for every model of the document is Bokeh's
    own message, byte for byte: changed data, a new model sent whole, the models it names as
    references, and afterwards the same models still waiting to be sent."""
    from unittest import mock
    from bokeh.core.serialization import Serializer
    from bokeh.models import Label
    from bokeh.protocol import Protocol
    from bokeh.protocol.messages.patch_doc import patch_doc
    from app import speedups

    doc = app.doc
    doc.models.flush_synced()        # as once the page has the document: every model so far is synced
    events = []
    doc.on_change(lambda e: events.append(e))
    app._pending = True
    app.state.values = {**app.state.values, "delta": 27.0}
    app.refresh()
    app.densities.fig.add_layout(Label(x=0, y=0, text="new"))     # a model the page has not had yet
    unsent = Label(x=1, y=1, text="other")
    doc.add_root(unsent)                                            # new too, but not in these events
    events = [e for e in events if getattr(e, "model", None) is not unsent]
    assert len(events) > 10
    waiting = set(doc.models._new_models)
    assert unsent in waiting and len(waiting) == 2

    def build(create):
        doc.models._new_models = set(waiting)
        with mock.patch.object(Serializer, "_encode_bytes", speedups._encode_small_bytes_inline), \
                mock.patch.object(patch_doc, "create", create):
            message = Protocol().create("PATCH-DOC", events)
        return message.content_json, [b.to_bytes() for b in message.buffers], set(doc.models._new_models)

    ours = build(classmethod(speedups._create_patch))
    bokehs = build(speedups._bokeh_create_patch)
    assert ours == bokehs
    assert '"text":"new"' in ours[0].replace(" ", "") and "other" not in ours[0]
    assert ours[2] == {unsent}


@pytest.fixture
def kept_defaults():
    """Speed-up 12 of app/speedups.py in place for one test (the server installs it for good)."""
    from unittest import mock
    from bokeh.core.has_props import HasProps
    from bokeh.core.property.bases import Property
    from bokeh.core.property.descriptors import PropertyDescriptor
    from app import speedups
    with mock.patch.object(HasProps, "_overridden_defaults", classmethod(speedups._overridden_defaults)), \
            mock.patch.object(Property, "themed_default", speedups._themed_default), \
            mock.patch.object(PropertyDescriptor, "has_unstable_default", speedups._has_unstable_default), \
            mock.patch.object(HasProps, "themed_values", speedups._themed_values):
        yield speedups


def _same(a, b) -> bool:
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        return np.array_equal(np.asarray(a), np.asarray(b))
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return type(a) is type(b) and len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    return a is b or a == b or (isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b))


def test_kept_property_defaults_read_as_bokehs_own(kept_defaults):
    """speedups item 12: every property of every model of a whole page, defaults included, reads the
    same with the kept defaults as with Bokeh's own steps, for a page built either way."""
    from unittest import mock
    from bokeh.core.has_props import HasProps
    from bokeh.core.property.bases import Property
    from bokeh.core.property.descriptors import PropertyDescriptor

    def bokehs_own():
        return mock.patch.multiple(HasProps, _overridden_defaults=kept_defaults._bokeh_overridden_defaults,
                                   themed_values=kept_defaults._bokeh_themed_values), \
            mock.patch.object(Property, "themed_default", kept_defaults._bokeh_themed_default), \
            mock.patch.object(PropertyDescriptor, "has_unstable_default", kept_defaults._bokeh_has_unstable_default)

    docs = {}
    for way in ("kept", "bokeh"):
        if way == "kept":
            explorer = Explorer()
            docs[way] = render(explorer)
        else:
            a, b, c = bokehs_own()
            with a, b, c:
                explorer = Explorer()
                docs[way] = render(explorer)
    compared = 0
    for doc in docs.values():
        for model in doc.models:
            kept = model.properties_with_values(include_defaults=True)
            a, b, c = bokehs_own()
            with a, b, c:
                own = model.properties_with_values(include_defaults=True)
                unset = {name: model.lookup(name).class_default(type(model)) for name in own
                         if name not in model._property_values}
            assert kept.keys() == own.keys(), type(model).__name__
            for name in own:
                assert _same(kept[name], own[name]), (type(model).__name__, name, kept[name], own[name])
                compared += 1
            for name, default in unset.items():       # a model default is made anew at each read: compare its kind
                again = model.lookup(name).class_default(type(model))
                assert (type(again) is type(default) if isinstance(default, HasProps) else _same(again, default)), \
                    (type(model).__name__, name)
    assert compared > 20_000
    assert len(kept_defaults._defaults_kept) > 500 and len(kept_defaults._unstable_kept) > 500


def test_kept_defaults_leave_mutable_defaults_per_object_and_themes_first(kept_defaults):
    """speedups item 12: a list, dict or model default is still a new one for each object, and a
    document's theme still overrides a default that was kept, and stops when the theme goes."""
    from bokeh.models import Column, Div
    from bokeh.themes import Theme

    a, b = Column(), Column()
    assert a.children == [] and a.children is not b.children
    a.children.append(Div())
    assert b.children == []
    s1, s2 = ColumnDataSource(), ColumnDataSource()
    assert s1.data is not s2.data
    assert s1.selected is not s2.selected           # a model default: one per object

    title = Title(text="x")
    default_size = title.text_font_size               # read (and kept) before any theme
    assert default_size == Title().text_font_size and kept_defaults._defaults_kept
    doc = Document()
    doc.add_root(Column(children=[Div(text="y")]))
    doc.add_root(title)
    doc.theme = Theme(json={"attrs": {"Title": {"text_font_size": "31px"}}})
    assert title.text_font_size == "31px"
    doc.theme = Theme(json={})
    assert title.text_font_size == default_size


def test_figure_overlays_change_on_the_event_loop_only():
    """A pin, band or simulation drawn from a worker thread of a served session waits for the loop's
    next tick (raw Bokeh models changed off the loop once escaped the document lock); on the loop,
    and offline, it is drawn at once."""
    import threading
    import weakref
    from bokeh.document import Document
    from app.figures import EffectCurveFigure, NCurveFigure

    class Context:            # stands in for the session that a served document has
        pass

    effect, ncurve = EffectCurveFigure(), NCurveFigure()
    doc = Document()
    doc.add_root(effect.fig)
    doc.add_root(ncurve.fig)
    context = Context()
    doc._session_context = weakref.ref(context)
    curve = {0: ("A", np.array([0.1, 0.2]), np.array([0.3, 0.5]))}

    def from_a_worker():
        effect.set_pins(curve)
        effect.set_band(np.array([0.1, 0.2]), np.array([0.2, 0.3]), np.array([0.4, 0.6]), "band")
        ncurve.set_simulated([(10, 0.5, 0.4, 0.6)])
    worker = threading.Thread(target=from_a_worker)
    worker.start()
    worker.join()
    assert effect.pin_names() == [] and not effect.band.visible and len(ncurve.src_sim.data["n"]) == 0
    queued = list(doc.session_callbacks)
    assert len(queued) == 3
    for cb in queued:           # what the loop does at its next tick
        cb.callback()
    assert effect.pin_names() == ["A"] and effect.band.visible and list(ncurve.src_sim.data["n"]) == [10]

    effect.set_pins({})          # on the loop's own thread (here the main one): at once
    assert effect.pin_names() == []
    doc._session_context = None   # not served: at once from any thread
    worker = threading.Thread(target=lambda: effect.set_pins(curve))
    worker.start()
    worker.join()
    assert effect.pin_names() == ["A"]


def test_server_send_to_a_closed_socket_is_one_handled_error():
    """A browser gone mid-message: the send raises WebSocketClosedError once (Bokeh's connection logs
    that as a warning) and asyncio reports no 'exception was never retrieved' traceback."""
    from tornado.websocket import WebSocketClosedError
    sent, _, frames, unretrieved = _send_with(closed=True)
    assert isinstance(sent, WebSocketClosedError)
    assert frames == []
    assert unretrieved == [], [c.get("message") for c in unretrieved]


def test_server_send_when_the_socket_closes_between_frames():
    """Closed after four frames were queued: the fifth write raises at once; the four queued writes
    still fail and are collected, so again no unretrieved-exception traceback reaches the log."""
    from tornado.websocket import WebSocketClosedError
    sent, _, frames, unretrieved = _send_with(closed=True, refuse_from=5)
    assert isinstance(sent, WebSocketClosedError)
    assert frames == []
    assert unretrieved == [], [c.get("message") for c in unretrieved]


def test_failed_writes_to_a_closed_tab_are_not_logged_as_tracebacks():
    """Writes to a closed websocket that nobody awaits (Panel's held batches when a tab closes or the
    server stops): the server's loop drops asyncio's report; any other unretrieved error still reaches
    the default handler."""
    import asyncio
    import gc
    from unittest import mock
    from tornado.websocket import WebSocketClosedError
    from app import speedups

    async def failing(exc):
        await asyncio.sleep(0)
        raise exc

    def run(quiet: bool):
        async def main():
            loop = asyncio.get_running_loop()
            if quiet:
                speedups.quiet_closed_writes(loop)
            with mock.patch.object(type(loop), "default_exception_handler") as default:
                futures = [asyncio.ensure_future(failing(WebSocketClosedError())) for _ in range(3)]
                futures.append(asyncio.ensure_future(failing(ValueError("a real bug"))))
                await asyncio.sleep(0.01)
                del futures                  # dropped unawaited
                gc.collect()
                return [type(c["exception"]) for (c,), _ in default.call_args_list]
        return asyncio.run(main())

    assert sorted(run(quiet=False), key=str) == [ValueError] + [WebSocketClosedError] * 3   # asyncio's own way
    assert run(quiet=True) == [ValueError]


def test_switching_design_carries_effect_and_spread_together():
    """Within a family the effect and SD carry over (a common SD becomes both groups' SDs); when a
    spread cannot (a paired SD of differences), effect and spreads all take the new defaults."""
    import powercore as pc
    from app.state import DEMO, ExplorerState
    st = ExplorerState()
    st.design = "two-means-welch"
    assert st.values["delta"] == DEMO["params"]["delta"] and st.values["sd1"] == st.values["sd2"] == DEMO["params"]["sd"]
    st.design = "mean-z"     # one group: its null mean takes its default, effect and SD stay
    assert (st.values["delta"], st.values["sd"]) == (DEMO["params"]["delta"], DEMO["params"]["sd"])
    st.design = "paired-t"
    d = pc.get_design("paired-t")
    assert st.values["delta"] == d.param("delta").default and st.values["sd_diff"] == d.param("sd_diff").default


def test_every_card_header_keeps_panels_header_class(app):
    """A card's header_css_classes replace Panel's "card-header"; without it the arrow sits above the title."""
    import panel as pn
    cards = app.__panel__().select(pn.Card)
    assert len(cards) >= 4     # working, justification, uncertainty, effect helper at least
    for card in cards:
        if card.header_css_classes:
            assert "card-header" in card.header_css_classes, card.title or card.css_classes


def test_a_change_in_one_thread_is_not_dropped_while_another_thread_moves_the_widgets():
    """The page moves a control's widgets on the event loop while the planner's next slider change is
    handled in a worker thread: the change must reach the state (it was dropped by a shared flag)."""
    import threading
    from app.controls import NumberControl
    got = []
    ctl = NumberControl("n", "sample size", "per group", (2, 200), 1, 60, got.append, integer=True)
    moving, go_on = threading.Event(), threading.Event()

    def page_moves_widgets():
        ctl._syncing = True          # as show() does on the event loop
        moving.set()
        go_on.wait(5)
        ctl._syncing = False
    loop = threading.Thread(target=page_moves_widgets)
    loop.start()
    moving.wait(5)
    ctl.slider.value = 65            # the planner's change, handled meanwhile in this thread
    go_on.set()
    loop.join(5)
    assert got == [65]
    ctl._syncing = True              # in its own thread the flag still keeps the watchers quiet
    ctl.slider.value = 66
    ctl._syncing = False
    assert got == [65]


@pytest.mark.skipif(not __import__("sys").platform.startswith("linux"), reason="per-thread nice is Linux's")
def test_a_simulation_thread_lowers_its_own_priority_only():
    """simulation_view.yield_cpu: the thread that calls it runs SIM_NICE lower (Linux nice is per
    thread); the thread that started it keeps its priority."""
    import os
    import threading

    from app.simulation_view import SIM_NICE, yield_cpu
    me = threading.get_native_id()
    before = os.getpriority(os.PRIO_PROCESS, me)
    seen = {}

    def run():
        tid = threading.get_native_id()
        start = os.getpriority(os.PRIO_PROCESS, tid)
        yield_cpu()
        seen["change"] = os.getpriority(os.PRIO_PROCESS, tid) - start

    t = threading.Thread(target=run)
    t.start()
    t.join()
    assert seen["change"] == min(SIM_NICE, 19 - before) and SIM_NICE == 10
    assert os.getpriority(os.PRIO_PROCESS, me) == before
