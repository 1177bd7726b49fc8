"""'What if the assumptions are wrong?': assurance, an uncertain SD, and a sensitivity table.

A collapsible card under the two power curves, in three tabs:

* **Assurance** — a normal prior on the effect (mean: the current effect unless typed; SD typed by
  the planner, in the effect's unit) gives the assurance (expected power) beside the power at the
  assumed effect, the distribution of power under the prior (a histogram), and the chance that
  power reaches the target (O'Hagan, Stevens and Campbell 2005).
* **Uncertain spread** — a pilot SD with its degrees of freedom and a confidence level give the
  upper confidence limit of σ (chi-square quantile) and the n it implies; a chosen SD range gives a
  band of power on both power curves, handed to the page through ``on_band``.
* **Sensitivity** — required n over effects × target powers, or SDs × dropout, with the current
  cell marked and a CSV download; a cell with no n shows a dash and the reason in its tooltip.

All numbers come from :mod:`powercore.uncertainty`. The panel never writes to the session's state:
a bad value here gets a message at its field and the last good numbers stay. The tabs are computed
only while the card is open (``update`` after each change of the scenario is then cheap); when they
took longer than ``SLOW_MS`` for the scenario (costly exact designs), a change of the scenario marks
them out of date and a button recomputes them. The band, once asked for, follows the scenario
whether the card is open or not.
"""
from __future__ import annotations

import datetime as _dt
import html
import io
import logging
import math
from typing import Any, Callable

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource, HoverTool, Label, Range1d, Span
from bokeh.plotting import figure

from powercore import InvalidParameter, NoSolution
from powercore import adjust
from powercore.engine import sample_size
from powercore.uncertainty import (assurance, band_range, power_band, sd_interval, sd_params, sd_upper_limit,
                                   sensitivity_effect_power, sensitivity_sd_dropout)

from .state import ExplorerState, Snapshot
from .text import effect_unit, num, param_unit, value_unit
from .theme import (CARD_CSS, FONT, INK, PALETTE, PANE_CSS, WIDGET_CSS, button_look, fill_when_opened, label_kw,
                    show_message, style_figure)

__all__ = ["TARGET_POWERS", "UncertaintyPanel"]

log = logging.getLogger("powerlens.app")

#: target powers of the sensitivity table's columns (the scenario's own target is added)
TARGET_POWERS = (0.8, 0.85, 0.9, 0.95)
EFFECT_FACTORS = (0.6, 0.8, 1.0, 1.25, 1.5)      # effects around the current one (from the null)
SD_FACTORS = (0.8, 0.9, 1.0, 1.1, 1.25)
DROPOUTS = (0.0, 0.1, 0.2, 0.3)
DIST_GRID = 201       # effects at which power is computed for its distribution (interpolated in between)
BAND_POINTS = 120     # at most this many points of each band (a shaded area needs no more)
SLOW_MS = 100.0       # tabs slower than this are recomputed on request, not on every change
PILOT_DF = 20          # a starting value for the pilot's degrees of freedom (the planner types theirs)
CONFIDENCE = 0.8

Band = tuple[np.ndarray, np.ndarray, np.ndarray, str]

# the download button is drawn like the page's other outlined buttons (Panel leaves it grey)
DOWNLOAD_CSS = (".bk-btn.bk-btn-default { border: 1px solid #0072B2 !important; color: #0072B2 !important; "
                "background: white !important; } .bk-btn.bk-btn-default:hover { background: #EAF3FA !important; } "
                ".bk-btn a { color: inherit; }")
UNC_CSS = PANE_CSS + """
table.pl-readout th { white-space: normal; }
table.pl-sens { border-collapse: collapse; font-size: 16px; margin: 4px 0; }
table.pl-sens th, table.pl-sens td { border: 1px solid #CCCCCC; padding: 4px 10px; text-align: right;
  font-variant-numeric: tabular-nums; }
table.pl-sens thead th { background: #F0F0F0; }
table.pl-sens tbody th { background: #F7F7F7; font-weight: 600; }
table.pl-sens th.pl-current { background: #FFF1CF; }
table.pl-sens td.pl-current { background: #FFE9B8; font-weight: 700; outline: 3px solid #E69F00;
  outline-offset: -3px; }
table.pl-sens td.pl-none { color: #6E6E6E; cursor: help; }
.pl-formula { font-style: italic; white-space: nowrap; }
.pl-src { color: #3F3F3F; font-size: 14px; }
"""


def _sig(x: float, digits: int = 2) -> float:
    """``x`` rounded to ``digits`` significant digits (a tidy starting value)."""
    if x == 0 or not math.isfinite(x):
        return x
    return float(f"{x:.{digits}g}")


def _thin(x, points: int = BAND_POINTS) -> np.ndarray:
    """At most about ``points`` of ``x``, evenly spread, keeping both ends."""
    x = np.asarray(x, dtype=float)
    if x.size <= points:
        return x
    idx = np.unique(np.round(np.linspace(0, x.size - 1, points)).astype(int))
    return x[idx]


def _e(text: Any) -> str:
    return html.escape(str(text))


class _Field(pn.viewable.Viewer):
    """A labelled number box with its message line (the message sits at the field)."""

    def __init__(self, key: str, label: str, integer: bool = False, width: int = 230, step: float = 0.1) -> None:
        super().__init__()
        cls = pn.widgets.IntInput if integer else pn.widgets.FloatInput
        kw = {} if integer else {"format": "0[.][000000]"}
        self.key = key
        self.box = cls(**label_kw(label), value=None, width=width, step=step if not integer else 1,
                       css_classes=[f"pl-unc-{key}"], stylesheets=[WIDGET_CSS], margin=(4, 10, 0, 10), **kw)
        self.msg = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], css_classes=[f"pl-unc-msg-{key}"],
                                margin=(0, 10, 4, 10), width=max(width, 260))
        self._layout = pn.Column(self.box, self.msg, margin=0)

    def __panel__(self):
        return self._layout

    @property
    def value(self):
        return self.box.value

    def set_message(self, text: str | None) -> None:
        show_message(self.msg, text)

    def set_label(self, label: str) -> None:
        key = "label" if "label" in self.box.param else "name"
        if getattr(self.box, key) != label:
            setattr(self.box, key, label)


class UncertaintyPanel(pn.viewable.Viewer):
    """The card 'What if the assumptions are wrong?' for one session.

    ``on_band(effect_band, n_band)`` receives ``(x, lower, upper, label)`` for the power-vs-effect
    and power-vs-n views, or ``(None, None)`` to clear them. Call :meth:`update` after each change
    of the scenario.
    """

    def __init__(self, state: ExplorerState, on_band: Callable[[Band | None, Band | None], None] | None = None,
                 collapsed: bool = True) -> None:
        super().__init__()
        self.state = state
        self._on_band = on_band or (lambda effect_band, n_band: None)
        self._syncing = False
        self._typed: set[str] = set()        # fields the planner has typed (the rest follow the scenario)
        self._design: str | None = None
        self._dirty = True
        self._band_shown = False
        self._tabs_ms: float | None = None   # time of the last computation of the tabs
        self._tabs_for = None                # (scenario, unit name) they were computed for
        self._seen = None                    # the snapshot of the last update
        # last good results, per tab
        self.assurance = None
        self.spread: dict | None = None
        self.table = None
        self.band: tuple | None = None       # (effect PowerBand, n PowerBand), while it is drawn
        self.band_range: tuple[float, float] | None = None    # its checked SD range (low, high)
        self.timing_ms: float = 0.0
        look = button_look()
        solid = {k: v for k, v in look.items() if k in ("color", "button_type")}

        # ---- assurance ----
        self.prior_mean = _Field("prior-mean", "prior mean of the effect", width=270)
        self.prior_sd = _Field("prior-sd", "prior SD of the effect", width=270)
        self.use_current = pn.widgets.Button(label="use the current effect", **look, css_classes=["pl-unc-reset"],
                                             stylesheets=[WIDGET_CSS], margin=(30, 10, 0, 10), width=210)
        self.use_current.on_click(lambda e: self._reset_prior())
        self.assurance_pane = pn.pane.HTML("", stylesheets=[UNC_CSS], width=560,
                                           css_classes=["pl-unc-assurance"], margin=(4, 10))
        self._build_histogram()

        # ---- uncertain spread ----
        self.sd_name = pn.widgets.Select(**label_kw("SD parameter"), options=[], width=200, visible=False,
                                         css_classes=["pl-unc-sd-name"], stylesheets=[WIDGET_CSS],
                                         margin=(4, 10, 0, 10))
        self.pilot_sd = _Field("pilot-sd", "pilot SD")
        self.pilot_df = _Field("pilot-df", "pilot degrees of freedom", integer=True)
        self.confidence = _Field("confidence", "confidence level", step=0.05)
        self.band_low = _Field("band-low", "band: SD from")
        self.band_high = _Field("band-high", "band: SD to")
        self.band_show = pn.widgets.Checkbox(**label_kw("draw this band on the two power curves"), value=False,
                                             css_classes=["pl-unc-band-show"], stylesheets=[WIDGET_CSS],
                                             margin=(34, 10, 0, 10))
        self.spread_pane = pn.pane.HTML("", stylesheets=[UNC_CSS], sizing_mode="stretch_width",
                                        css_classes=["pl-unc-spread"], margin=(4, 10))

        # ---- sensitivity ----
        self.grid_kind = pn.widgets.RadioButtonGroup(options={"effect × target power": "effect",
                                                              "SD × dropout": "sd"}, value="effect", **look,
                                                     css_classes=["pl-unc-grid"], stylesheets=[WIDGET_CSS],
                                                     margin=(4, 10))
        self.table_pane = pn.pane.HTML("", stylesheets=[UNC_CSS], sizing_mode="stretch_width",
                                       css_classes=["pl-unc-table"], margin=(4, 10))
        self.download = pn.widgets.FileDownload(callback=self._csv_file, filename="powerlens-sensitivity.csv",
                                                label="Download CSV", **solid, css_classes=["pl-unc-csv"],
                                                stylesheets=[WIDGET_CSS, DOWNLOAD_CSS], margin=(4, 10), width=200)

        for f in (self.prior_mean, self.prior_sd, self.pilot_sd, self.pilot_df, self.confidence,
                  self.band_low, self.band_high):
            f.box.param.watch(lambda e, key=f.key: self._typed_in(key), "value")
        for w in (self.band_show, self.grid_kind):
            w.param.watch(lambda e: self._input_changed(), "value")
        self.sd_name.param.watch(lambda e: self._sd_chosen(), "value")

        intro = ('<p class="pl-note">Power is computed at assumed values. Here you see how much it depends '
                 'on them. These numbers are for planning only; never compute “observed power” from a '
                 'finished study’s own estimate.</p>')
        tab_assurance = pn.Column(
            pn.Row(self.prior_mean, self.prior_sd, self.use_current, margin=0, styles={"flex-wrap": "wrap"}),
            pn.Row(self.assurance_pane, self._hist_pane, sizing_mode="stretch_width", margin=0,
                   styles={"flex-wrap": "wrap"}),
            sizing_mode="stretch_width", margin=0, name="Assurance")
        tab_spread = pn.Column(
            pn.Row(self.sd_name, self.pilot_sd, self.pilot_df, self.confidence, margin=0,
                   styles={"flex-wrap": "wrap"}),
            pn.Row(self.band_low, self.band_high, self.band_show, margin=0, styles={"flex-wrap": "wrap"}),
            self.spread_pane, sizing_mode="stretch_width", margin=0, name="Uncertain spread")
        tab_table = pn.Column(pn.Row(self.grid_kind, self.download, margin=0), self.table_pane,
                              sizing_mode="stretch_width", margin=0, name="Sensitivity table")
        self.tabs = pn.Tabs(tab_assurance, tab_spread, tab_table, dynamic=True, sizing_mode="stretch_width",
                            margin=(0, 4),
                            css_classes=["pl-unc-tabs"], stylesheets=[WIDGET_CSS])
        self.stale = pn.pane.HTML("", stylesheets=[PANE_CSS], sizing_mode="stretch_width", margin=(0, 10),
                                  css_classes=["pl-unc-stale"])
        self.recompute = pn.widgets.Button(label="Update these numbers", **solid,
                                           css_classes=["pl-unc-recompute"], stylesheets=[WIDGET_CSS],
                                           margin=(4, 10), width=240)
        self.recompute.on_click(lambda e: self._input_changed())
        self._stale_row = pn.Row(self.stale, self.recompute, visible=False, sizing_mode="stretch_width", margin=0)
        self.card = pn.Card(title="What if the assumptions are wrong?", collapsed=collapsed,
                            sizing_mode="stretch_width", margin=(6, 10), css_classes=["pl-unc"],
                            header_css_classes=["card-header", "pl-unc-header"], stylesheets=[CARD_CSS])
        fill_when_opened(self.card, [pn.pane.HTML(intro, stylesheets=[PANE_CSS], sizing_mode="stretch_width",
                                                  margin=(0, 10)), self._stale_row, self.tabs])
        self.card.param.watch(lambda e: self._opened() if not e.new else None, "collapsed")

    def __panel__(self):
        return self.card

    # ---- the histogram of power under the prior ------------------------------------------------
    def _build_histogram(self) -> None:
        fig = figure(name="unc-power-hist", height=300, sizing_mode="stretch_width", min_width=360,
                     tools="save", toolbar_location=None, x_range=Range1d(0, 1), y_range=Range1d(0, 1),
                     title="Power under the prior on the effect")
        style_figure(fig)
        fig.title.text_font_size = "14pt"
        for axis in (*fig.xaxis, *fig.yaxis):
            axis.axis_label_text_font_size = "13pt"
            axis.major_label_text_font_size = "12pt"
        self.src_hist = ColumnDataSource(dict(left=np.zeros(0), right=np.zeros(0), top=np.zeros(0)),
                                         name="unc-hist")
        bars = fig.quad(left="left", right="right", bottom=0, top="top", source=self.src_hist,
                        fill_color=PALETTE["alt"], fill_alpha=0.55, line_color="white", name="unc-hist-bars")
        self.hist_target = Span(location=0.8, dimension="height", line_color=PALETTE["target"], line_width=2.5,
                                line_dash="dashed")
        self.hist_assurance = Span(location=0.5, dimension="height", line_color=PALETTE["power"], line_width=3.5)
        self.hist_label = Label(x=0.5, y=0, y_units="screen", y_offset=6, x_offset=4, text="assurance",
                                text_font=FONT, text_font_size="12pt", text_color="#7A5200", text_font_style="bold",
                                background_fill_color="white", background_fill_alpha=0.85)
        self.hist_target_label = Label(x=0.8, y=0, y_units="screen", y_offset=6, x_offset=-4, text="target",
                                       text_align="right", text_font=FONT, text_font_size="12pt",
                                       text_color="#006B4E", background_fill_color="white",
                                       background_fill_alpha=0.85)
        for obj in (self.hist_target, self.hist_assurance, self.hist_label, self.hist_target_label):
            fig.add_layout(obj)
        fig.add_tools(HoverTool(renderers=[bars], tooltips=[("power", "@left{0.00} to @right{0.00}"),
                                                            ("probability", "@top{0.000}")]))
        fig.xaxis.axis_label = "power of the study"
        fig.yaxis.axis_label = "probability under the prior"
        self.hist_fig = fig
        self._hist_pane = pn.pane.Bokeh(fig, sizing_mode="stretch_width", min_width=380, margin=(4, 10),
                                        css_classes=["pl-fig-unc-power-hist"])

    # ---- events ------------------------------------------------------------------------------------
    def _typed_in(self, key: str) -> None:
        if self._syncing:
            return
        self._typed.add(key)
        self._input_changed()

    def _input_changed(self) -> None:
        if self._syncing:
            return
        snap = self.state.snapshot
        if snap is None:
            return
        self._compute(snap, tabs=not self.card.collapsed)

    def _sd_chosen(self) -> None:
        """Another SD parameter: the pilot SD and the band start again from its value."""
        if self._syncing:
            return
        self._typed -= {"pilot-sd", "band-low", "band-high"}
        snap = self.state.snapshot
        if snap is not None:
            self._follow(snap)
        self._input_changed()

    def _opened(self) -> None:
        snap = self.state.snapshot
        if snap is not None:
            self._follow(snap)
            if self._dirty or self._tabs_for != (snap.scenario, snap.unit_name):
                self._compute(snap, tabs=True)

    def _reset_prior(self) -> None:
        self._typed.discard("prior-mean")
        self._typed.discard("prior-sd")
        self.update()

    # ---- defaults that follow the scenario until typed --------------------------------------------
    def _set_box(self, field: _Field, value) -> None:
        if field.key in self._typed or field.box.value == value:
            return
        self._syncing = True
        try:
            field.box.value = value
        finally:
            self._syncing = False

    def _follow(self, snap: Snapshot) -> None:
        d, sc = snap.design, snap.result.solved
        p = dict(sc.params)
        if self._design != d.id:   # another design: every field follows it again
            self._typed.clear()
            self._design = d.id
            names = list(sd_params(d.id))
            self._syncing = True
            try:
                self.sd_name.options = names
                self.sd_name.value = names[0] if names else None
                self.sd_name.visible = len(names) > 1
                if not names and self.grid_kind.value == "sd":
                    self.grid_kind.value = "effect"
                self.grid_kind.disabled = not names
            finally:
                self._syncing = False
        eff = float(snap.result.effect)
        try:
            null = float(d.null_effect(p))
        except (TypeError, ValueError, KeyError):
            null = 0.0
        unit = value_unit(effect_unit(d, snap.unit_name))
        self.prior_mean.set_label(f"prior mean of the effect ({unit})" if unit else "prior mean of the effect")
        self.prior_sd.set_label(f"prior SD of the effect ({unit})" if unit else "prior SD of the effect")
        self._set_box(self.prior_mean, float(f"{eff:.6g}"))
        self._set_box(self.prior_sd, _sig(abs(eff - null) / 2) or _sig(abs(eff) / 2 or 1.0))
        name = self.sd_name.value
        if name:
            s = float(p[name])
            su = value_unit(param_unit(d, name, snap.unit_name))
            for f, lab in ((self.pilot_sd, "pilot SD"), (self.band_low, "band: SD from"),
                           (self.band_high, "band: SD to")):
                f.set_label(f"{lab} ({su})" if su else lab)
            self._set_box(self.pilot_sd, float(f"{s:.6g}"))
            self._set_box(self.pilot_df, PILOT_DF)
            self._set_box(self.confidence, CONFIDENCE)
            try:   # the band follows the pilot's two-sided interval until typed
                lo, hi = sd_interval(float(self.pilot_sd.value), int(self.pilot_df.value),
                                     float(self.confidence.value))
                self._set_box(self.band_low, _sig(lo, 3))
                self._set_box(self.band_high, _sig(hi, 3))
            except (InvalidParameter, TypeError, ValueError):
                pass

    # ---- computing ---------------------------------------------------------------------------------
    def update(self) -> None:
        """Follow the scenario behind the views (call after each change)."""
        snap = self.state.snapshot
        if snap is None or (snap is self._seen and (self.card.collapsed or not self._dirty)):
            return   # nothing new (a refresh for a message elsewhere on the page)
        self._seen = snap
        self._follow(snap)
        slow = (self._tabs_ms is not None and self._tabs_ms > SLOW_MS and self._tabs_for is not None
                and self._tabs_for[0].design == snap.scenario.design)
        self._compute(snap, tabs=not self.card.collapsed and not slow)

    def _compute(self, snap: Snapshot, tabs: bool) -> None:
        import time
        t0 = time.perf_counter()
        with pn.io.hold():
            self._guarded(self._band, snap, None)
            if tabs:
                t1 = time.perf_counter()
                self._guarded(self._assurance, snap, self.assurance_pane)
                self._guarded(self._spread, snap, self.spread_pane)
                self._guarded(self._table, snap, self.table_pane)
                self._dirty = False
                self._tabs_ms = 1000 * (time.perf_counter() - t1)
                self._tabs_for = (snap.scenario, snap.unit_name)
                self._stale_row.visible = False
            elif self._tabs_for == (snap.scenario, snap.unit_name):   # back to the scenario shown
                self._dirty = False
                self._stale_row.visible = False
            else:
                self._dirty = True
                if self._tabs_for is not None and not self.card.collapsed:
                    self.stale.object = (f'<p class="pl-stale" role="status">The numbers below are for an earlier '
                                         f'scenario: they took {self._tabs_ms:,.0f} ms for this design, so they are '
                                         'worked out on request.</p>')
                    self._stale_row.visible = True
        self.timing_ms = 1000 * (time.perf_counter() - t0)

    @staticmethod
    def _guarded(part, snap: Snapshot, pane) -> None:
        """Run one tab's computation; a numeric failure shows in that tab, never breaks the page."""
        try:
            with np.errstate(all="ignore"):
                part(snap)
        except (ValueError, ArithmeticError, RuntimeError, TypeError) as e:
            log.warning("uncertainty panel: %s failed for %s: %s", part.__name__, snap.scenario.design, e)
            if pane is not None:
                pane.object = (f'<p class="pl-stale" role="alert">Could not compute this for the current '
                               f'scenario: {_e(e)}</p>')

    def _messages(self, errors: dict[str, str], fields) -> None:
        for f in fields:
            f.set_message(errors.get(f.key))

    @staticmethod
    def _number(field: _Field, errors: dict[str, str], what: str = "a number"):
        v = field.value
        if v is None or isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            errors[field.key] = f"type {what}"
            return None
        return v

    def _assurance(self, snap: Snapshot) -> None:
        d, sc = snap.design, snap.result.solved
        errors: dict[str, str] = {}
        m = self._number(self.prior_mean, errors)
        s = self._number(self.prior_sd, errors, "a number ≥ 0 (0: no uncertainty)")
        if m is not None:
            lo, hi = d.effect_bounds(dict(sc.params))
            if not lo < m < hi:
                errors["prior-mean"] = f"the prior mean must lie between {num(lo, 4)} and {num(hi, 4)}"
        if s is not None and s < 0:
            errors["prior-sd"] = f"the prior SD must be ≥ 0; got {num(s, 6)}"
        a = None
        if not errors:
            try:
                with np.errstate(all="ignore"):
                    a = assurance(sc, float(m), float(s), grid=DIST_GRID)
                if not math.isfinite(a.assurance):
                    raise ValueError("the assurance is not a finite number here")
            except InvalidParameter as e:
                key = {"prior_mean": "prior-mean", "prior_sd": "prior-sd"}.get(e.field, "prior-sd")
                errors[key] = f"{e.constraint}; got {e.value!r}"
            except (ValueError, ArithmeticError) as e:
                errors["prior-sd"] = f"could not compute assurance for this prior: {e}"
        self._messages(errors, (self.prior_mean, self.prior_sd))
        if a is None:
            if self.assurance is not None and "pl-stale" not in self.assurance_pane.object:
                self.assurance_pane.object = ('<p class="pl-stale">The numbers below are for the last good '
                                              'prior.</p>' + self.assurance_pane.object)
            return
        self.assurance = a
        self.assurance_pane.object = self._assurance_html(snap, a)
        edges, probs = a.distribution.histogram(20)
        self.src_hist.data = dict(left=edges[:-1], right=edges[1:], top=probs)
        top = float(probs.max()) if probs.size else 1.0
        self.hist_fig.y_range.update(start=0.0, end=max(0.05, 1.12 * top))
        self.hist_assurance.location = a.assurance
        self.hist_label.x = a.assurance
        self.hist_label.text = f"assurance {num(a.assurance, 3)}"
        # the label goes on the side away from the target's label
        self.hist_label.text_align = "right" if a.assurance < sc.target_power else "left"
        self.hist_label.x_offset = -4 if a.assurance < sc.target_power else 4
        self.hist_target_label.text_align = "left" if a.assurance < sc.target_power else "right"
        self.hist_target_label.x_offset = 4 if a.assurance < sc.target_power else -4
        self.hist_target.location = sc.target_power
        self.hist_target_label.x = sc.target_power
        self.hist_target_label.text = f"target {num(sc.target_power, 3)}"

    def _assurance_html(self, snap: Snapshot, a) -> str:
        d, sc, res = snap.design, snap.result.solved, snap.result
        unit = value_unit(effect_unit(d, snap.unit_name))
        u = f" {unit}" if unit else ""
        n_note = " (the sample size found)" if snap.scenario.find == "n" else ""
        q = a.quantiles
        rows = [
            ("assurance", "assurance (expected power)", num(a.assurance, 4), "pl-big"),
            ("power-assumed", f"power at the assumed effect {num(res.effect, 4)}{u}", num(res.power, 4), ""),
            ("prob-target", f"chance that power reaches the target {num(sc.target_power, 3)}",
             num(a.prob_power_above_target, 3), ""),
            ("power-spread", "power under the prior: 5%, median, 95%",
             f"{num(q['5%'], 3)}, {num(q['50%'], 3)}, {num(q['95%'], 3)}", ""),
        ]
        body = "".join(f'<tr><th>{_e(lab)}</th><td data-key="{k}" class="{c}">{_e(v)}</td></tr>'
                       for k, lab, v, c in rows)
        facts = [("prior", "Prior on the effect", f"normal, mean {num(a.prior_mean, 4)}{u}, SD {num(a.prior_sd, 4)}{u}"),
                 ("at-n", "At", f"n = {res.n} {d.n.unit}{n_note}, α = {num(res.alpha, 3)}, {sc.direction}"),
                 ("method", "Method", a.method)]
        lines = "".join(f'<p class="pl-note" style="margin:2px 0">{_e(lab)}: <span data-key="{k}">{_e(v)}</span></p>'
                        for k, lab, v in facts)
        if "prior-sd" not in self._typed:
            lines += ('<p class="pl-note" style="margin:2px 0" data-key="prior-hint">The prior SD starts at half '
                      'the assumed effect: type how unsure you are.</p>')
        return (f'<table class="pl-readout" aria-label="assurance">{body}</table>{lines}'
                '<p class="pl-src">Assurance: the power averaged over the prior on the effect '
                '(O’Hagan, Stevens &amp; Campbell 2005). The histogram shows power at 2,000 equally likely '
                'values of the prior (power computed at 201 effects across them and interpolated); the chance '
                'of reaching the target is read from them.</p>')

    def _spread_inputs(self, errors: dict[str, str]):
        s = self._number(self.pilot_sd, errors, "a positive number")
        df = self.pilot_df.value
        conf = self._number(self.confidence, errors, "a number between 0 and 1")
        if s is not None and s <= 0:
            errors["pilot-sd"] = f"the pilot SD must be positive; got {num(s, 6)}"
        if df is None or isinstance(df, bool) or not isinstance(df, int) or df < 1:
            errors["pilot-df"] = f"type a whole number ≥ 1; got {'nothing' if df is None else df}"
        if conf is not None and not 0 < conf < 1:
            errors["confidence"] = f"the confidence level must lie between 0 and 1; got {num(conf, 6)}"
        return s, df, conf

    def _band_inputs(self, errors: dict[str, str]):
        lo = self._number(self.band_low, errors, "a positive number")
        hi = self._number(self.band_high, errors, "a positive number")
        if lo is not None and lo <= 0:
            errors["band-low"] = f"the SD must be positive; got {num(lo, 6)}"
        if hi is not None and hi <= 0:
            errors["band-high"] = f"the SD must be positive; got {num(hi, 6)}"
        if lo is not None and hi is not None and lo > 0 and hi > 0 and hi < lo:
            errors["band-high"] = f"the upper end must be at least the lower end {num(lo, 4)}"
        return lo, hi

    def _spread(self, snap: Snapshot) -> None:
        d, sc = snap.design, snap.result.solved
        name = self.sd_name.value
        fields = (self.pilot_sd, self.pilot_df, self.confidence)
        for w in (*(f.__panel__() for f in (*fields, self.band_low, self.band_high)), self.band_show):
            if w.visible != bool(name):
                w.visible = bool(name)
        if not name:
            self.spread = None
            self._messages({}, fields)
            self.spread_pane.object = (f'<p class="pl-note">The design “{_e(d.title)}” has no SD parameter in '
                                       'data units, so there is no spread to be unsure of here.</p>')
            return
        errors: dict[str, str] = {}
        s, df, conf = self._spread_inputs(errors)
        out = None
        if not errors:
            try:
                su = sd_upper_limit(float(s), int(df), float(conf))
                p = dict(sc.params)
                alpha = adjust.test_alpha(sc.alpha, sc.adjustments)
                out = {"name": name, "pilot": float(s), "df": int(df), "conf": float(conf), "upper": su,
                       "n_pilot": self._n_for(d, {**p, name: float(s)}, alpha, sc),
                       "n_upper": self._n_for(d, {**p, name: su}, alpha, sc)}
            except InvalidParameter as e:
                errors[{"pilot_sd": "pilot-sd", "df": "pilot-df"}.get(e.field, "confidence")] = \
                    f"{e.constraint}; got {e.value!r}"
        self._messages(errors, fields)
        if out is None:
            if self.spread is not None and "pl-stale" not in self.spread_pane.object:
                self.spread_pane.object = ('<p class="pl-stale">The numbers below are for the last good '
                                           'pilot values.</p>' + self.spread_pane.object)
            return
        self.spread = out
        self.spread_pane.object = self._spread_html(snap, out)

    @staticmethod
    def _n_for(d, p, alpha, sc):
        try:
            with np.errstate(all="ignore"):
                ss = sample_size(d, p, alpha, sc.direction, sc.target_power)
        except (NoSolution, InvalidParameter) as e:
            return str(e)
        return ss

    def _spread_html(self, snap: Snapshot, out: dict) -> str:
        d = snap.design
        su = value_unit(param_unit(d, out["name"], snap.unit_name))
        u = f" {su}" if su else ""

        def n_text(ss) -> str:
            if isinstance(ss, str):
                return f"none: {ss}"
            text = f"{ss.n} {d.n.unit}"
            if len(ss.group_sizes) > 1:
                text += f" ({sum(ss.group_sizes)} {d.n.total_unit})"
            return text

        conf = num(out["conf"] * 100, 4)
        rows = [
            ("sd-upper", f"upper {conf}% confidence limit of σ", f"{num(out['upper'], 4)}{u}", "pl-big"),
            ("n-upper", f"n at the target power with σ = {num(out['upper'], 4)}{u}", n_text(out["n_upper"]), ""),
            ("n-pilot", f"n with the pilot SD {num(out['pilot'], 4)}{u}", n_text(out["n_pilot"]), ""),
        ]
        body = "".join(f'<tr><th>{_e(lab)}</th><td data-key="{k}" class="{c}">{_e(v)}</td></tr>'
                       for k, lab, v, c in rows)
        band = ""
        if self.band_range is not None:
            sd_low, sd_high = self.band_range
            band = (f'<p class="pl-note" data-key="band">Band: power with {_e(d.param(out["name"]).label)} from {num(sd_low, 4)} '
                    f'to {num(sd_high, 4)}{_e(u)}'
                    + (" — drawn on both power curves." if self.band_show.value else
                       " — tick the box to draw it on both power curves.") + "</p>")
        return (f'<table class="pl-readout" aria-label="uncertain spread">{body}</table>'
                f'<p class="pl-src"><span class="pl-formula">σ<sub>U</sub> = s·√(ν / χ²<sub>ν, 1−γ</sub>)</span> with the '
                f'pilot SD s, its ν = {out["df"]} degrees of freedom and confidence γ = {_e(num(out["conf"], 4))}: '
                'the one-sided upper limit from the chi-square distribution of ν s²/σ² for normal data. '
                'Planning with this limit instead of the pilot SD itself follows Browne (1995, Statistics in '
                'Medicine). The band’s starting range is the pilot’s two-sided interval at the same level.</p>'
                + band)

    def _band(self, snap: Snapshot) -> None:
        name = self.sd_name.value if self._design == snap.design.id else None
        errors: dict[str, str] = {}
        lo = hi = None
        if name:
            lo, hi = self._band_inputs(errors)
            self._messages(errors, (self.band_low, self.band_high))
        if name and not errors:
            sc = snap.result.solved
            try:
                self.band_range = lo, hi = band_range(sc, name, float(lo), float(hi))
                # the curves are worked out only to be drawn (~3 ms a change)
                self.band = ((power_band(sc, name, lo, hi, effects=_thin(snap.effect_curve.x)),
                              power_band(sc, name, lo, hi, ns=_thin(snap.n_curve.x)))
                             if self.band_show.value else None)
            except InvalidParameter as e:
                self._messages({"band-high" if e.field == "sd_high" else "band-low": f"{e.constraint}; got {e.value!r}"},
                               (self.band_low, self.band_high))
        elif not name:
            self.band = self.band_range = None
        if self.band is not None and self.band_show.value and name:
            eb, nb = self.band
            words = snap.design.param(name).label.split()
            sym = next((w for w in words if "σ" in w), name)
            label = f"power, {sym} {num(eb.sd_low, 3)} to {num(eb.sd_high, 3)}"
            self._on_band((eb.x, eb.lower, eb.upper, label), (nb.x, nb.lower, nb.upper, label))
            self._band_shown = True
        elif self._band_shown:
            self._on_band(None, None)
            self._band_shown = False

    # ---- the sensitivity table ---------------------------------------------------------------------
    def grid(self, snap: Snapshot) -> tuple[str, list[float], list[float], tuple[int | None, int | None]]:
        """(kind, rows, columns, index of the current cell) chosen from the scenario."""
        d, sc = snap.design, snap.result.solved
        p = dict(sc.params)
        kind = self.grid_kind.value if sd_params(d.id) else "effect"
        if kind == "sd":
            name = self.sd_name.value or sd_params(d.id)[0]
            s = float(p[name])
            rows = [_sig(s * f, 4) for f in SD_FACTORS]
            drop = float(dict(sc.adjustments).get("dropout", 0.0) or 0.0)
            cols = sorted(set(DROPOUTS) | {drop})
            return kind, rows, cols, (rows.index(_sig(s, 4)), cols.index(drop))
        eff = float(snap.result.effect)
        try:
            null = float(d.null_effect(p))
        except (TypeError, ValueError, KeyError):
            null = 0.0
        lo, hi = d.effect_bounds(p)
        rows = []
        for f in EFFECT_FACTORS:
            x = _sig(null + (eff - null) * f, 4) if f != 1.0 else float(f"{eff:.6g}")
            if lo < x < hi and x not in rows:
                rows.append(x)
        cols = sorted(set(TARGET_POWERS) | {float(sc.target_power)})
        cur = float(f"{eff:.6g}")
        return kind, rows, cols, (rows.index(cur) if cur in rows else None, cols.index(float(sc.target_power)))

    def _table(self, snap: Snapshot) -> None:
        sc = snap.result.solved
        kind, rows, cols, cur = self.grid(snap)
        with np.errstate(all="ignore"):
            if kind == "sd":
                t = sensitivity_sd_dropout(sc, self.sd_name.value or sd_params(sc.design)[0], rows, cols)
            else:
                t = sensitivity_effect_power(sc, rows, cols)
        self.table, self._table_current = t, cur
        self.table_pane.object = self._table_html(snap, t, kind, cur)
        self.download.filename = f"powerlens-sensitivity-{sc.design}-{_dt.date.today().isoformat()}.csv"

    def _table_html(self, snap: Snapshot, t, kind: str, cur) -> str:
        d = snap.design
        ci, cj = cur
        if kind == "sd":
            u = value_unit(param_unit(d, t.row_label, snap.unit_name))
            corner = f"{d.param(t.row_label).label}{f' ({u})' if u else ''} \\ dropout"
            col_head = [f"{c:g}" for c in t.columns]
            what = (f"Enrolled total ({d.n.total_unit}) to reach the target power "
                    f"{num(snap.result.solved.target_power, 3)}, for each SD (rows) and expected dropout (columns).")
        else:
            u = value_unit(effect_unit(d, snap.unit_name))
            corner = f"{d.effect_label}{f' ({u})' if u else ''} \\ target power"
            col_head = [f"{c:g}" for c in t.columns]
            what = f"Required n ({d.n.unit}, analysed) for each effect (rows) and target power (columns)."
        head = "".join(f'<th scope="col" class="{"pl-current" if j == cj else ""}">{_e(h)}</th>'
                       for j, h in enumerate(col_head))
        body = []
        for i, (r, row) in enumerate(zip(t.rows, t.cells)):
            cells = []
            for j, v in enumerate(row):
                cls = ["pl-current"] if (i == ci and j == cj) else []
                attrs = f' data-i="{i}" data-j="{j}"'
                if v is None:
                    cls.append("pl-none")
                    reason = t.reason(i, j) or "no sample size reaches this target"
                    cells.append(f'<td class="{" ".join(cls)}"{attrs} title="{_e(reason)}" '
                                 f'aria-label="no n: {_e(reason)}">—</td>')
                else:
                    cells.append(f'<td class="{" ".join(cls)}"{attrs}>{v}</td>')
            rcls = "pl-current" if i == ci else ""
            body.append(f'<tr><th scope="row" class="{rcls}">{_e(f"{r:g}")}</th>{"".join(cells)}</tr>')
        note = "" if ci is not None else ('<p class="pl-note">The current effect lies outside the grid\'s '
                                          'domain; no cell is marked.</p>')
        return (f'<p class="pl-note">{_e(what)} The marked cell is the current scenario; a dash has no n '
                '(hover for the reason).</p>'
                f'<table class="pl-sens" aria-label="sensitivity table"><thead><tr><th scope="col">{_e(corner)}</th>'
                f'{head}</tr></thead><tbody>{"".join(body)}</tbody></table>' + note)

    def csv_text(self) -> str:
        """The CSV of the table shown ('' before the card was first opened)."""
        return self.table.to_csv() if self.table is not None else ""

    def _csv_file(self) -> io.BytesIO:
        snap = self.state.snapshot
        if self._dirty and snap is not None:
            self._compute(snap, tabs=True)
        return io.BytesIO(self.csv_text().encode("utf-8"))
