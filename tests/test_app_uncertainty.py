"""The card 'What if the assumptions are wrong?' without a browser (rendered to a Bokeh document).

Expected numbers come from ``powercore.uncertainty`` / ``powercore.evaluate`` on the same scenario,
so these tests pin the wiring of the panel, not the statistics (tests/test_uncertainty.py does that).
"""
from __future__ import annotations

import csv
import io
import re
from html.parser import HTMLParser

import numpy as np
import pytest

import powercore as pc
from app.explorer import Explorer
from app.text import num
from app_support import app, render  # noqa: F401  (app is a fixture)
from browser_support import demo
from app.uncertainty_view import DIST_GRID
from powercore.uncertainty import assurance, power_band, sd_upper_limit


def value(pane_html: str, key: str) -> str:
    m = re.search(rf'data-key="{key}"[^>]*>([^<]*)<', pane_html)
    assert m, f"no row {key}"
    return m.group(1)


class _Table(HTMLParser):
    """The rows of the first <table> as lists of cell texts, with each cell's title attribute."""

    def __init__(self) -> None:
        super().__init__()
        self.rows: list[list[str]] = []
        self.titles: list[list[str | None]] = []
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        if tag == "tr":
            self.rows.append([])
            self.titles.append([])
        elif tag in ("td", "th"):
            self._cell = []
            self.titles[-1].append(dict(attrs).get("title"))

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.rows[-1].append("".join(self._cell).strip())
            self._cell = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)


def shown_table(panel) -> _Table:
    t = _Table()
    t.feed(panel.table_pane.object)
    return t


@pytest.fixture
def unc(app):
    app.uncertainty.card.collapsed = False   # open the card, as a planner would
    return app.uncertainty


def test_card_is_under_the_curves_and_closed_at_start():
    """The card sits in the main column right after the two curves, closed, and computes nothing until opened."""
    e = Explorer()
    render(e)
    main = e._layout[3][1]
    objs = list(main.objects)
    i = next(k for k, o in enumerate(objs) if o is e.uncertainty.card)
    row = list(objs[i - 1].objects)
    assert row[0] is e.effect_curve.__panel__() and row[1] is e.n_curve.__panel__()
    assert e.uncertainty.card.collapsed and e.uncertainty.card.title == "What if the assumptions are wrong?"
    assert e.uncertainty.assurance is None and e.uncertainty.table is None
    e.uncertainty.card.collapsed = False
    assert e.uncertainty.assurance is not None and e.uncertainty.table is not None


def test_demo_shows_assurance_beside_power_and_the_distribution(app, unc):
    """Assurance, the power at the assumed effect, P(power ≥ target), the method and the histogram of power
    all equal powercore's for the demo with the prior shown (mean: the current effect)."""
    sc = pc.evaluate(demo()).solved
    m, s = unc.prior_mean.value, unc.prior_sd.value
    assert m == pytest.approx(sc.params["delta"]) and s > 0
    a = assurance(sc, m, s, grid=DIST_GRID)
    html_ = unc.assurance_pane.object
    assert value(html_, "assurance") == num(a.assurance, 4)
    assert value(html_, "power-assumed") == num(pc.power(sc), 4)
    assert value(html_, "prob-target") == num(a.prob_power_above_target, 3)
    assert value(html_, "method").startswith("numerical integration")
    assert "O’Hagan, Stevens &amp; Campbell 2005" in html_
    src = app.doc.select_one({"name": "unc-hist"})
    edges, probs = a.distribution.histogram(20)
    np.testing.assert_allclose(src.data["top"], probs)
    np.testing.assert_allclose(src.data["left"], edges[:-1])
    assert unc.hist_assurance.location == pytest.approx(a.assurance)
    assert unc.hist_target.location == pytest.approx(sc.target_power)


def test_typed_prior_sd_is_used_and_a_z_test_says_closed_form(app, unc):
    """A typed prior SD gives powercore's assurance for it; on a z test the method is the closed form."""
    unc.prior_sd.box.value = 4.0
    a = assurance(pc.evaluate(demo()).solved, 20.0, 4.0)
    assert value(unc.assurance_pane.object, "assurance") == num(a.assurance, 4)
    app.state.load(pc.Scenario("two-means-z", {"delta": 5.0, "sd1": 10.0, "sd2": 10.0}, n=64))
    app.refresh()
    assert value(unc.assurance_pane.object, "method").startswith("closed form")


@pytest.mark.parametrize("key, bad, words", [
    ("prior_sd", -2.0, "≥ 0"), ("prior_sd", None, "type a number"), ("prior_mean", None, "type a number"),
    ("pilot_sd", 0.0, "positive"), ("pilot_df", 0, "whole number ≥ 1"), ("confidence", 1.5, "between 0 and 1"),
    ("band_high", 1.0, "at least the lower end"), ("band_low", -1.0, "positive"),
])
def test_bad_input_gets_a_message_at_its_field_and_the_main_views_stay(app, unc, key, bad, words):
    """A bad value shows a message under its own field; the scenario, snapshot and main views are untouched
    and the panel keeps its last good numbers."""
    snap = app.state.snapshot
    readout = app.readout.pane.object
    dens = app.doc.select_one({"name": "density-curve"}).data["alt"].copy()
    before = unc.assurance_pane.object
    field = getattr(unc, key)
    field.box.value = bad
    assert field.msg.visible and words in field.msg.object and 'role="alert"' in field.msg.object
    assert app.state.snapshot is snap and app.state.errors == {}
    assert app.readout.pane.object == readout
    np.testing.assert_array_equal(app.doc.select_one({"name": "density-curve"}).data["alt"], dens)
    if key.startswith("prior"):
        assert "last good prior" in unc.assurance_pane.object and value(unc.assurance_pane.object, "assurance") \
            == value(before, "assurance")
    field.box.value = {"prior_sd": 5.0, "prior_mean": 20.0, "pilot_sd": 45.0, "pilot_df": 20,
                       "confidence": 0.8, "band_high": 60.0, "band_low": 30.0}[key]
    assert not field.msg.visible


def test_spread_tab_upper_limit_and_implied_n(unc):
    """σ_U and the n it implies are powercore's (pilot SD, df and confidence as typed)."""
    unc.pilot_sd.box.value, unc.pilot_df.box.value, unc.confidence.box.value = 40.0, 12, 0.9
    su = sd_upper_limit(40.0, 12, 0.9)
    html_ = unc.spread_pane.object
    assert value(html_, "sd-upper") == f"{num(su, 4)} min"
    n = pc.evaluate(demo(find="n", params={"sd": su})).n
    assert value(html_, "n-upper").startswith(f"{n} subjects in group 1")
    assert "Browne (1995" in html_ and "χ²" in html_


def test_band_reaches_both_curves_and_is_monotone_in_sd(app, unc):
    """With the box ticked both curves get the band from powercore; a wider SD range gives a wider band
    (power falls as the SD grows), and unticking clears both."""
    unc.band_low.box.value, unc.band_high.box.value = 40.0, 50.0
    unc.band_show.value = True
    sc = app.state.snapshot.result.solved
    eb, nb = unc.band
    x = np.asarray(app.state.snapshot.effect_curve.x, dtype=float)
    assert eb.x[0] == x[0] and eb.x[-1] == x[-1] and set(eb.x) <= set(x)
    ref = power_band(sc, "sd", 40.0, 50.0, effects=eb.x)
    np.testing.assert_allclose(eb.lower, ref.lower) and np.testing.assert_allclose(eb.upper, ref.upper)
    src = app.effect_curve.src_band.data
    np.testing.assert_allclose(src["lo"], eb.lower) and np.testing.assert_allclose(src["hi"], eb.upper)
    np.testing.assert_allclose(app.n_curve.src_band.data["hi"], nb.upper)
    assert app.effect_curve.band.visible and app.n_curve.band.visible
    assert np.all(eb.lower <= eb.upper) and np.all(nb.lower <= nb.upper)
    # power at SD 50 is the lower edge: below the curve at SD 45, which is below SD 40
    n_all = np.asarray(app.state.snapshot.n_curve.x, dtype=float)
    mid = np.asarray(app.state.snapshot.n_curve.power)[np.searchsorted(n_all, nb.x)]
    assert np.all(nb.lower <= mid + 1e-12) and np.all(mid <= nb.upper + 1e-12)
    unc.band_high.box.value = 60.0
    wider = unc.band[1]
    assert np.all(wider.lower <= nb.lower + 1e-12) and np.all(wider.upper == nb.upper)
    assert np.any(wider.lower < nb.lower)
    unc.band_show.value = False
    assert not app.effect_curve.band.visible and not app.n_curve.band.visible


def test_the_band_is_worked_out_only_while_it_is_drawn(app, unc, monkeypatch):
    """Unticked, a change of the scenario computes no band (four power curves of ~120 points each) but
    still checks the range and names it; ticking the box computes and draws it."""
    import app.uncertainty_view as uv
    calls = []
    monkeypatch.setattr(uv, "power_band", lambda *a, **k: calls.append(k) or power_band(*a, **k))
    unc.band_low.box.value, unc.band_high.box.value = 40.0, 50.0
    app.state.n = 70
    app.refresh()
    assert calls == [] and unc.band is None and unc.band_range == (40.0, 50.0)
    assert "from 40 to 50" in unc.spread_pane.object and "tick the box" in unc.spread_pane.object
    unc.band_high.box.value = 30.0                 # below the low end: refused at the field, no band
    assert unc.band_high.msg.visible and "at least the lower end" in unc.band_high.msg.object and calls == []
    unc.band_high.box.value = 50.0
    unc.band_show.value = True
    assert len(calls) == 2 and unc.band is not None and app.effect_curve.band.visible


def test_band_follows_the_scenario_while_the_card_is_closed(app, unc):
    """Once drawn, the band follows a change of n even with the card closed."""
    unc.band_show.value = True
    unc.card.collapsed = True
    app.state.n = 90
    app.refresh()
    sc = app.state.snapshot.result.solved
    assert sc.n == 90
    lo, hi = unc.band_low.value, unc.band_high.value
    x = app.effect_curve.src_band.data["x"]
    ref = power_band(sc, "sd", lo, hi, effects=x)
    np.testing.assert_allclose(app.effect_curve.src_band.data["hi"], ref.upper)


def test_csv_download_equals_the_table_shown_and_cells_equal_evaluate(unc):
    """The download's CSV has exactly the shown table's texts; each cell equals pc.evaluate(find='n');
    the current cell is marked and the file is named from the design and the date."""
    shown = shown_table(unc)
    data = unc.download.callback().getvalue().decode("utf-8")
    rows = list(csv.reader(io.StringIO(data)))
    assert [r[1:] for r in rows] == [r[1:] for r in shown.rows]
    assert [r[0] for r in rows[1:]] == [r[0] for r in shown.rows[1:]]
    for r in rows[1:]:
        for c, w in zip(r[1:], rows[0][1:]):
            want = pc.evaluate(demo(find="n", params={"delta": float(r[0])}, target_power=float(w))).n
            assert c == str(want)
    assert re.fullmatch(r"powerlens-sensitivity-two-means-t-\d{4}-\d{2}-\d{2}\.csv", unc.download.filename)
    assert re.search(r'class="pl-current" data-i="2" data-j="0">81<', unc.table_pane.object)


def test_sd_dropout_grid_matches_enrolled_totals(unc):
    """The SD × dropout grid gives the enrolled totals of pc.evaluate with that SD and dropout."""
    unc.grid_kind.value = "sd"
    rows = list(csv.reader(io.StringIO(unc.csv_text())))
    assert rows[0][0] == "sd \\ dropout"
    for r in rows[1:]:
        for c, q in zip(r[1:], rows[0][1:]):
            res = pc.evaluate(demo(find="n", params={"sd": float(r[0])}, adjustments={"dropout": float(q)}))
            assert c == str(res.enrolled_total)
    assert [r[1:] for r in rows] == [r[1:] for r in shown_table(unc).rows]


def test_unreachable_cells_show_a_dash_with_the_reason(app, unc):
    """With few clusters some targets are out of reach: a dash with the reason as its tooltip, never an error."""
    app.state.load(pc.Scenario("cluster-means-size", {"delta": 0.5, "sd": 1.0, "icc": 0.1, "k": 8, "cv": 0.0}, n=20))
    app.refresh()
    t = shown_table(unc)
    dashes = [(i, j) for i, row in enumerate(t.rows) for j, c in enumerate(row) if c == "—"]
    assert dashes and all("add clusters" in t.titles[i][j] for i, j in dashes)
    assert any(re.fullmatch(r"\d+", c) for row in t.rows[1:] for c in row[1:])
    rows = list(csv.reader(io.StringIO(unc.csv_text())))
    assert all(rows[i][j] == "" for i, j in dashes)


def test_design_without_sd_says_so(app, unc):
    """A design with no SD parameter says there is no spread, offers only the effect grid and draws no band."""
    app.state.load(pc.Scenario("two-proportions", {"p1": 0.3, "delta": 0.15}, n=120))
    app.refresh()
    assert "no SD parameter" in unc.spread_pane.object
    assert unc.grid_kind.disabled and unc.grid_kind.value == "effect"
    assert unc.band is None and not app.effect_curve.band.visible
    assert value(unc.assurance_pane.object, "assurance") == num(
        assurance(app.state.snapshot.result.solved, 0.15, unc.prior_sd.value, grid=DIST_GRID).assurance, 4)


def test_slow_designs_are_worked_out_on_request(app, unc, monkeypatch):
    """When the tabs took longer than SLOW_MS, a change of the scenario marks them out of date and the
    button brings them up to date; the band still follows at once."""
    import app.uncertainty_view as uv
    monkeypatch.setattr(uv, "SLOW_MS", -1.0)   # every computation counts as slow
    unc.band_show.value = True
    before = value(unc.assurance_pane.object, "at-n")
    app.state.n = 75
    app.refresh()
    assert unc._stale_row.visible and "earlier scenario" in unc.stale.object
    assert value(unc.assurance_pane.object, "at-n") == before
    np.testing.assert_allclose(app.effect_curve.src_band.data["hi"],
                               power_band(app.state.snapshot.result.solved, "sd", unc.band_low.value,
                                          unc.band_high.value, effects=app.effect_curve.src_band.data["x"]).upper)
    unc.recompute.clicks += 1
    assert not unc._stale_row.visible and value(unc.assurance_pane.object, "at-n").startswith("n = 75 ")


def test_when_finding_n_assurance_is_at_the_n_found(app, unc):
    """With 'find sample size' the assurance is computed at the n found, and says so."""
    app.state.find = "n"
    app.refresh()
    sc = app.state.snapshot.result.solved
    assert sc.n == pc.evaluate(demo(find="n")).n
    text = value(unc.assurance_pane.object, "at-n")
    assert text.startswith(f"n = {sc.n} ") and "the sample size found" in text
    a = assurance(sc, unc.prior_mean.value, unc.prior_sd.value, grid=DIST_GRID)
    assert value(unc.assurance_pane.object, "assurance") == num(a.assurance, 4)


def test_two_sd_design_offers_a_choice_of_sd(app, unc):
    """A design with an SD per group shows the SD picker; the limit and the band use the SD chosen."""
    app.state.load(pc.Scenario("two-means-welch", {"delta": 5.0, "sd1": 8.0, "sd2": 12.0}, n=40))
    app.refresh()
    assert unc.sd_name.visible and unc.sd_name.options == ["sd1", "sd2"]
    unc.sd_name.value = "sd2"
    unc.update()
    assert unc.pilot_sd.value == 12.0
    assert value(unc.spread_pane.object, "sd-upper").split()[0] == num(sd_upper_limit(12.0, 20, 0.8), 4)
    unc.band_show.value = True
    eb = unc.band[0]
    assert eb.sd_name == "sd2"
    ref = power_band(app.state.snapshot.result.solved, "sd2", eb.sd_low, eb.sd_high, effects=eb.x)
    np.testing.assert_allclose(app.effect_curve.src_band.data["lo"], ref.lower)


@pytest.mark.parametrize("design", [d.id for d in pc.designs()])
def test_every_design_fills_the_three_tabs(design):
    """For each design's default scenario the open card shows an assurance, the spread tab and a table,
    with no failure message."""
    from app.state import ExplorerState
    from app.uncertainty_view import UncertaintyPanel
    st = ExplorerState(demo=False, design=design)
    panel = UncertaintyPanel(st, collapsed=False)
    panel.update()
    assert panel.assurance is not None and 0.0 <= panel.assurance.assurance <= 1.0
    assert panel.table is not None and len(panel.table.rows) >= 1
    for pane in (panel.assurance_pane, panel.spread_pane, panel.table_pane):
        assert "Could not compute" not in pane.object


def test_a_numeric_failure_stays_in_its_tab(app, unc, monkeypatch):
    """A failure inside one tab's computation shows there; the other tabs and the main views carry on."""
    import app.uncertainty_view as uv

    def broken(*args, **kwargs):
        raise ArithmeticError("overflow in a test double")
    monkeypatch.setattr(uv, "sensitivity_effect_power", broken)
    snap = app.state.snapshot
    unc.prior_sd.box.value = 6.0
    assert "Could not compute" in unc.table_pane.object and "overflow in a test double" in unc.table_pane.object
    assert value(unc.assurance_pane.object, "assurance") == num(
        assurance(snap.result.solved, 20.0, 6.0, grid=DIST_GRID).assurance, 4)
    assert app.state.snapshot is snap
