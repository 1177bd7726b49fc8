"""Controls for the scenario: a slider for dragging and a box for typing, kept in step.

``NumberControl`` pairs a slider (over a typical range) with a number box (any
value: powercore decides what is valid, and the message appears under the
control). When the control's quantity is the one being found it shows the
result, read-only, in their place. ``ScenarioControls`` lays out every control
of the scenario and keeps them in step with an :class:`~app.state.ExplorerState`.
"""
from __future__ import annotations

import html
import math
import threading
import time
from collections import deque
from typing import Any, Callable

import numpy as np
import panel as pn

import powercore as pc
from powercore import Design
from powercore.spec import ParamSpec

from .state import ExplorerState, directions
from .text import DIRECTION_LABELS, FIND_LABELS, MULTIPLICITY_LABELS, effect_unit, effect_value, num, param_unit, value_unit
from .theme import PANE_CSS, SLIDER_CSS, WIDGET_CSS, button_look, label_kw, page_models, page_value, show_message

__all__ = ["LIVE_DEBOUNCE_MS", "WATCHED", "NumberControl", "ScenarioControls", "nice_ceil"]

#: How long the server holds a slider's change before acting on it (Panel's default is 50 ms). None:
#: the page merges changes that arrive while a refresh is pending, and _slider_moved takes the newest
#: value, one change at a time, so a fast drag still ends where the hand let go
#: (test_mouse_drag_ends_on_the_released_value).
LIVE_DEBOUNCE_MS = 0
#: a value a slider sent this recently, shown back to it, is its own echo and does not move it
ECHO_SECONDS = 1.5


class _LiveOnly:
    """A slider that listens to ``value`` only.

    Bokeh's slider also reports ``value_throttled`` (at each key press, and when a drag ends); the
    page never reads it, and handling it cost a second trip through Panel's worker threads at each
    change, in the same moments as the change itself.
    """

    @property
    def _linked_properties(self) -> tuple[str, ...]:
        return tuple(p for p in super()._linked_properties if p != "value_throttled")


class _FloatSlider(_LiveOnly, pn.widgets.FloatSlider):
    pass


class _IntSlider(_LiveOnly, pn.widgets.IntSlider):
    pass


def nice_ceil(x: float) -> float:
    """The smallest of 1, 2, 2.5, 5 × 10^k that is at least ``x`` (> 0)."""
    if x <= 0 or not math.isfinite(x):
        return 1.0
    k = math.floor(math.log10(x))
    for m in (1, 2, 2.5, 5, 10):
        if m * 10 ** k >= x * (1 - 1e-12):
            return m * 10 ** k
    return 10 ** (k + 1)


def _decimals(step: float) -> int:
    return max(0, -math.floor(math.log10(step) + 1e-9)) if step > 0 else 6


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


class NumberControl(pn.viewable.Viewer):
    """A labelled slider and number box for one quantity, with its message line.

    ``on_change(value)`` is called when the planner drags or types; ``show(value)``
    moves both without calling back. ``hard`` is the open domain (slider ranges
    never leave it); a typed value outside the slider's range widens the range
    when it lies inside the domain.
    """

    def __init__(self, key: str, label: str, unit: str, soft: tuple[float, float], step: float,
                 value: Any, on_change: Callable[[Any], None], integer: bool = False,
                 hard: tuple[float, float] = (-math.inf, math.inf), doc: str = "") -> None:
        super().__init__()
        self.key, self.integer, self.step = key, integer, step
        self.hard = hard
        self._on_change = on_change
        self._sync_local = threading.local()
        self._syncing = False
        self._last_sent: Any = object()   # the value this control last handed to on_change
        self._sent: deque = deque(maxlen=16)   # (time, value) it handed on lately: a drag in flight
        self._box_shown: tuple[float, Any] | None = None   # (time, value) the server last put in the box
        self._move_lock = threading.Lock()
        self._label = pn.pane.HTML("", stylesheets=[PANE_CSS], margin=(6, 10, 0, 10),
                                   css_classes=["pl-label-row"])
        self.set_label(label, unit, doc)
        lo, hi = self._within_hard(*soft)
        start_value = value if _is_number(value) else lo
        lo, hi = self._range_for(start_value, lo, hi, headroom=True)
        slider_cls = _IntSlider if integer else _FloatSlider
        kwargs = {} if integer else {"format": f"0[.]{'0' * max(_decimals(step), 1)}"}
        self.slider = slider_cls(start=_cast(lo, integer), end=_cast(hi, integer),
                                 step=_cast(step, integer) or 1,
                                 value=_cast(min(max(start_value, lo), hi), integer),
                                 show_value=False, tooltips=False, sizing_mode="stretch_width",
                                 margin=(10, 12, 4, 12), css_classes=[f"pl-slider-{key}"],
                                 stylesheets=[SLIDER_CSS], **kwargs)
        self.slider._debounce = LIVE_DEBOUNCE_MS
        self.box = pn.widgets.FloatInput(value=_box_value(value, integer), width=130, margin=(0, 10, 0, 0),
                                         css_classes=[f"pl-box-{key}"], stylesheets=[WIDGET_CSS],
                                         step=step, format="0[.][000000]")
        self._found = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(4, 10),
                                   css_classes=[f"pl-found-{key}"])
        self._message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10, 4, 10),
                                     css_classes=[f"pl-msg-{key}"])
        self._inputs = pn.Row(self.slider, self.box, sizing_mode="stretch_width", margin=0)
        self.slider.param.watch(self._slider_moved, "value")
        self.box.param.watch(self._box_typed, "value")
        self._layout = pn.Column(self._label, self._inputs, self._found, self._message,
                                 sizing_mode="stretch_width", margin=(0, 0, 6, 0),
                                 css_classes=[f"pl-control-{key}"])

    def __panel__(self):
        return self._layout

    @property
    def _syncing(self) -> bool:
        """True while this thread moves the widgets itself, so that their watchers stay quiet.

        Per thread: the page moves the widgets on the server's event loop while the planner's next
        change is handled in a worker thread, and a shared flag made that change be dropped (the
        slider ended at 65 while the state stayed at 64, in a browser test with other tabs busy).
        """
        return getattr(self._sync_local, "on", False)

    @_syncing.setter
    def _syncing(self, on: bool) -> None:
        self._sync_local.on = on

    # ---- appearance ---------------------------------------------------------
    def set_label(self, label: str, unit: str, doc: str = "") -> None:
        unit_html = f' <span class="pl-unit">({html.escape(unit)})</span>' if unit else ""
        title = f' title="{html.escape(doc)}"' if doc else ""
        self._label.object = f'<p class="pl-label"{title}>{html.escape(label)}{unit_html}</p>'

    def set_message(self, message: str | None) -> None:
        show_message(self._message, message)

    def set_found(self, text: str | None) -> None:
        """Show ``text`` as the found result in place of the inputs (None: editable again)."""
        found = text is not None
        if found:
            html_text = (f'<p class="pl-found">{html.escape(text)} '
                         f'<span class="pl-tag">(found)</span></p>')
            if self._found.object != html_text:
                self._found.object = html_text
        if self._found.visible != found:
            self._found.visible = found
            self._inputs.visible = not found

    # ---- values -------------------------------------------------------------
    def show(self, value: Any) -> None:
        """Show ``value`` in the box and the slider without calling back.

        When ``value`` is the one this control just sent, the slider is left where the planner's
        hand is (a newer drag may already be on its way) and only the box follows.
        """
        self._syncing = True
        try:
            bv = _box_value(value, self.integer)
            if self.box.value != bv and not _same(self.box.value, bv) and not _arriving(self.box):
                self.box.value = bv
                self._box_shown = (time.monotonic(), bv)
            # the planner's own values of the last moments are echoes: the hand may already be further on
            now = time.monotonic()
            echo = _same(value, self._last_sent) or any(
                _same(value, sent) for t, sent in self._sent if now - t < ECHO_SECONDS)
            if not echo and _is_number(value) and self.hard[0] < value < self.hard[1] and not _arriving(self.slider):
                self._fit_slider(value)
                sv = _cast(min(max(value, self.slider.start), self.slider.end), self.integer)
                if not _same(self.slider.value, sv, self.step / 2):
                    self.slider.value = sv
        finally:
            self._syncing = False

    def set_range(self, lo: float, hi: float) -> None:
        """Move the slider's range (for a quantity whose typical range depends on others)."""
        lo, hi = self._within_hard(lo, hi)
        if not (lo < hi):
            return
        lo, hi = _cast(lo, self.integer), _cast(hi, self.integer)
        self._syncing = True
        try:
            if (self.slider.start, self.slider.end) != (lo, hi):
                v = self.slider.value
                self.slider.param.update(start=lo, end=hi, value=_cast(min(max(v, lo), hi), self.integer))
        finally:
            self._syncing = False

    def _fit_slider(self, value: float) -> None:
        lo, hi = self._range_for(value, self.slider.start, self.slider.end)
        lo, hi = _cast(lo, self.integer), _cast(hi, self.integer)
        if (lo, hi) != (self.slider.start, self.slider.end):
            self.slider.param.update(start=lo, end=hi)

    def _range_for(self, value: float, lo: float, hi: float, headroom: bool = False) -> tuple[float, float]:
        """Widen [lo, hi] so ``value`` is inside, with room to drag on (never past the domain).

        With ``headroom`` a value in the outer tenth of the range also widens it, so that a
        starting value is not pinned to the end of its slider.
        """
        if not _is_number(value):
            return lo, hi
        margin = 0.1 * (hi - lo) if headroom else 0.0
        if lo + margin <= value <= hi - margin:
            return lo, hi
        if lo <= value <= hi:   # in the outer tenth: widen as if just outside
            value = value + (margin if value > (lo + hi) / 2 else -margin)
        symmetric = math.isclose(lo, -hi)
        if value > hi:
            hi = nice_ceil(value * 1.5) if value > 0 else 0.0
            if symmetric:
                lo = -hi
        else:
            lo = -nice_ceil(-value * 1.5) if value < 0 else value / 2
            if symmetric:
                hi = -lo
        return self._within_hard(lo, hi)

    def _within_hard(self, lo: float, hi: float) -> tuple[float, float]:
        a, b = self.hard
        pad_a = max(self.step, 1e-9) if math.isfinite(a) else 0
        pad_b = max(self.step, 1e-9) if math.isfinite(b) else 0
        return max(lo, a + pad_a), min(hi, b - pad_b)

    def _slider_moved(self, event) -> None:
        if self._syncing:
            return
        with self._move_lock:   # one change at a time, and always the newest (see _latest_slider_value)
            v = self._latest_slider_value(event.new)
            if not self.integer:
                v = round(float(v), _decimals(self.step) + 2)
            if _same(self.box.value, v, self.step / 2):   # the slider snapped to a typed value
                return
            # the box follows when the page next shows the state (one batch with the views)
            v = int(v) if self.integer else v
            self._last_sent = v
            self._sent.append((time.monotonic(), v))
            self._on_change(v)

    def _latest_slider_value(self, fallback: Any) -> Any:
        """The value the browser sent last.

        Panel hands each change to a worker thread, and two changes in quick succession can finish
        in either order, so the older one could win. The slider's Bokeh model is set on the
        server's event loop in the order the changes arrive, so it holds the newest value.
        """
        v = page_value(self.slider)
        return v if _is_number(v) else fallback

    def _box_typed(self, event) -> None:
        if self._syncing:
            return
        v = event.new
        if _is_number(v) and self.hard[0] < v < self.hard[1]:
            self._syncing = True
            try:
                self._fit_slider(v)
                self.slider.value = _cast(min(max(v, self.slider.start), self.slider.end), self.integer)
            finally:
                self._syncing = False
        if self.integer and _is_number(v) and float(v).is_integer():
            v = int(v)
        self._last_sent = v
        self._on_change(v)
        shown = self._box_shown
        if shown is not None and time.monotonic() - shown[0] < ECHO_SECONDS and not _same(shown[1], event.new):
            self._send_box_again()

    def _send_box_again(self) -> None:
        """Send the box's value to the page again, although the server's copy has not changed.

        The server had just put another value in the box (a design switch showing its default n)
        while the planner typed: the page showed the server's value over the typed one, and the
        typed one, arriving next, changed nothing on the server that would be sent back. The box
        then showed 200 while the views were for the 1,000 typed (every time, in headless Chromium,
        when n was typed at once after choosing another design).
        """
        doc = pn.state.curdoc
        if doc is None or doc.session_context is None:
            return
        models = page_models(self.box)

        def send() -> None:
            for m in models:
                if m.document is doc:
                    doc.callbacks.notify_change(m, "value", m.value, m.value, callback_invoker=lambda: None)

        doc.add_next_tick_callback(send)


def _arriving(widget) -> bool:
    """True while a value the planner gave this widget has reached the server and waits to be handled.

    Panel lets the server's own change win over such a value and drops it (a design switch
    showing its default n over the n typed just after: the typed value was lost in 1 of 8 tries).
    The page then leaves the widget alone: handling the planner's value shows the state again.
    """
    return "value" in getattr(widget, "_events", {})


def _choice_options(d: Design, spec: ParamSpec) -> dict[str, str]:
    """A choice's options, label → value; a choice that brings another parameter into use says so."""
    out = {}
    for c in spec.choices:
        typed = [_short(o.label) for o in d.params if o.used_when == (spec.name, c)]
        out[f"{c} (type the {typed[0]})" if typed else c] = c
    return out


def _short(label: str) -> str:
    """A label's abbreviation in closing brackets ("efficiency ... (ARE)" → "ARE"), else the label."""
    if label.endswith(")") and "(" in label:
        return label[label.rindex("(") + 1:-1]
    return label


def _cast(x, integer):
    if integer:
        return int(round(x)) if _is_number(x) else x
    return float(x) if _is_number(x) else x


def _box_value(v, integer):
    if not _is_number(v):
        return v if v is None or isinstance(v, (int, float)) else None
    if integer and float(v).is_integer():
        return float(v)
    return float(f"{float(v):.6g}")


def _same(a, b, tol: float = 0.0) -> bool:
    if _is_number(a) and _is_number(b):
        return abs(a - b) <= max(tol, 1e-12 * max(abs(a), abs(b), 1.0))
    return a is b or a == b


WATCHED = ("design", "direction", "find", "alpha", "target_power", "n", "values", "unit_name", "scale",
           "adjustments", "errors", "snapshot")


class ScenarioControls(pn.viewable.Viewer):
    """Every control of the scenario, two-way bound to one session's state."""

    def __init__(self, state: ExplorerState, watch: bool = True) -> None:
        super().__init__()
        self.state = state
        self._design_id: str | None = None
        groups: dict[str, dict[str, str]] = {}
        for d in pc.designs():
            groups.setdefault(d.family or "other", {})[d.title] = d.id
        self.design = pn.widgets.Select(groups=groups, value=state.design,
                                        sizing_mode="stretch_width", css_classes=["pl-design"],
                                        stylesheets=[WIDGET_CSS], margin=(4, 10))
        self.find = pn.widgets.RadioButtonGroup(
            options={v: k for k, v in FIND_LABELS.items()}, value=state.find,
            **button_look(), orientation="vertical",
            sizing_mode="stretch_width", css_classes=["pl-find"], stylesheets=[WIDGET_CSS], margin=(4, 10))
        self.direction = pn.widgets.RadioButtonGroup(
            options={v: k for k, v in DIRECTION_LABELS.items()}, value=state.direction,
            **button_look(), sizing_mode="stretch_width", orientation="vertical",
            css_classes=["pl-direction"], stylesheets=[WIDGET_CSS], margin=(4, 10))
        self.unit_name = pn.widgets.TextInput(**label_kw("Unit of the outcome (your word for 'data units')"),
                                              value=state.unit_name, placeholder="e.g. min, mmHg, points",
                                              sizing_mode="stretch_width", css_classes=["pl-unit-name"],
                                              stylesheets=[WIDGET_CSS], margin=(4, 10))
        self.alpha = NumberControl("alpha", "significance level α", "", state.param.alpha.softbounds, 0.001,
                                   state.alpha, lambda v: setattr(state, "alpha", v), hard=(0.0, 1.0),
                                   doc="probability of rejecting the null hypothesis when it is true")
        self.target = NumberControl("target_power", "target power", "", state.param.target_power.softbounds,
                                    0.01, state.target_power, lambda v: setattr(state, "target_power", v),
                                    hard=(0.0, 1.0), doc="the power the study should reach (1 − β)")
        d = state.current_design()
        self.n = NumberControl("n", "sample size n", d.n.unit, d.n.soft, 1, state.n,
                               lambda v: setattr(state, "n", v), integer=True, hard=(0, pc.scenario.N_MAX + 1),
                               doc=d.n.doc)
        adj = state.adjustments
        self.dropout = NumberControl("dropout", "expected dropout", "proportion lost", (0.0, 0.5), 0.01,
                                     adj.get("dropout", 0.0), lambda v: state.set_adjustment("dropout", v),
                                     hard=(-0.01, 1.0),
                                     doc="share of those enrolled expected to give no outcome; n is the number "
                                         "analysed and the enrolled n is n / (1 − dropout), rounded up")
        self.comparisons = NumberControl("comparisons", "number of tests", "", (1, 10), 1,
                                         adj.get("comparisons", 1),
                                         lambda v: state.set_adjustment("comparisons", v), integer=True,
                                         hard=(0, 10001),
                                         doc="how many primary tests share the significance level α")
        self.multiplicity = pn.widgets.RadioButtonGroup(
            options={v: k for k, v in MULTIPLICITY_LABELS.items()}, value=adj.get("multiplicity", "none"),
            **button_look(), sizing_mode="stretch_width", css_classes=["pl-multiplicity"],
            stylesheets=[WIDGET_CSS], margin=(4, 10))
        self.multiplicity.param.watch(
            lambda e: e.new is not None and state.set_adjustment("multiplicity", e.new), "value")
        self._messages = {"design": self._small_message("design"), "find": self._small_message("find"),
                          "direction": self._small_message("direction"),
                          "adjustments.multiplicity": self._small_message("multiplicity")}
        self._design_box = pn.Column(sizing_mode="stretch_width", margin=0)
        self.effect: NumberControl | None = None
        self.standardized: NumberControl | None = None
        self.others: dict[str, Any] = {}
        self._build_design_controls(d)

        for widget, name in ((self.design, "design"), (self.find, "find"), (self.direction, "direction"),
                             (self.unit_name, "unit_name")):
            widget.param.watch(lambda e, name=name: e.new is not None and setattr(state, name, e.new), "value")
        if watch:   # an owner that batches updates (the Explorer) calls refresh() itself
            state.param.watch(self._state_changed, list(WATCHED))
        self._layout = pn.Column(
            self._heading("Design"), self.design, self._messages["design"],
            self._heading("Find"), self.find, self._messages["find"],
            self._heading("Direction of the alternative"), self.direction, self._messages["direction"],
            self.alpha, self.target, self._design_box, self.n,
            self._heading("Adjustments"), self.dropout, self.comparisons,
            self._heading("Correction for several tests"), self.multiplicity,
            self._messages["adjustments.multiplicity"],
            sizing_mode="stretch_width", css_classes=["pl-controls"], margin=0)
        self.refresh()

    def __panel__(self):
        return self._layout

    @staticmethod
    def _heading(text: str):
        return pn.pane.HTML(f'<p class="pl-label">{html.escape(text)}</p>', stylesheets=[PANE_CSS],
                            margin=(8, 10, 0, 10))

    @staticmethod
    def _small_message(key: str):
        return pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10),
                            css_classes=[f"pl-msg-{key}"])

    # ---- building the design's own controls ----------------------------------
    def _build_design_controls(self, d: Design) -> None:
        st = self.state
        self._design_id = d.id
        unit = st.unit_name
        eff = d.param(d.effect)
        self.effect = NumberControl("effect", f"effect: {eff.label}", effect_unit(d, unit), eff.soft, eff.step,
                                    st.value(d.effect), lambda v: st.set_value(d.effect, v),
                                    hard=(eff.low, eff.high), doc=eff.doc)
        s_lo, s_hi = self._standardized_range(d)
        self.standardized = NumberControl("standardized", f"standardized effect {d.standardized_name}", "",
                                          (s_lo, s_hi), 0.01, st.standardized(), st.set_standardized,
                                          doc="the effect in units of the spread (or on the design's "
                                              "transformed scale)")
        self.others = {}
        rows: list[Any] = [self.effect, self.standardized]
        for spec in d.params:
            if spec.name == d.effect:
                continue
            self.others[spec.name] = self._param_widget(d, spec)
            rows.append(self.others[spec.name])
        allowed = directions(d)
        options = {DIRECTION_LABELS[k]: k for k in allowed}
        if self.direction.options != options:
            value = self.state.direction if self.state.direction in allowed else allowed[0]
            self.direction.param.update(options=options, value=value)
        show_unit = any(s.unit == "data units" for s in d.params)
        self.unit_name.visible = show_unit
        self._design_box.objects = [self.unit_name, *rows]
        self.n.set_label("sample size n", d.n.unit, d.n.doc)
        self.n.set_range(d.min_n(st.values) if self._params_ok(d) else d.n.minimum, d.n.soft[1])

    def _param_widget(self, d: Design, spec: ParamSpec):
        st = self.state
        if spec.kind == "bool":
            box = pn.widgets.Checkbox(**label_kw(spec.label), value=bool(st.value(spec.name)),
                                      css_classes=[f"pl-check-{spec.name}"], stylesheets=[WIDGET_CSS],
                                      margin=(8, 10))
            box.param.watch(lambda e, name=spec.name: st.set_value(name, bool(e.new)), "value")
            return box
        if spec.kind == "choice":
            value = st.value(spec.name)
            select = pn.widgets.Select(**label_kw(spec.label), options=_choice_options(d, spec),
                                       value=value if value in spec.choices else spec.default,
                                       description=spec.doc or None, sizing_mode="stretch_width",
                                       css_classes=[f"pl-choice-{spec.name}"], stylesheets=[WIDGET_CSS],
                                       margin=(8, 10))
            select.param.watch(lambda e, name=spec.name: e.new is not None and st.set_value(name, e.new), "value")
            return select
        return NumberControl(spec.name, spec.label, param_unit(d, spec.name, st.unit_name), spec.soft, spec.step,
                             st.value(spec.name), lambda v, name=spec.name: st.set_value(name, v),
                             hard=(spec.low, spec.high), doc=spec.doc)

    def _params_ok(self, d: Design) -> bool:
        return self.state._params_or_none(d) is not None

    def _standardized_range(self, d: Design) -> tuple[float, float]:
        """The standardized effects at the ends of the effect slider, at the other current values."""
        p = self.state._params_or_none(d, skip=d.effect)
        if p is None:
            return -1.0, 1.0
        lo_b, hi_b = d.effect_bounds(p) if self._bounds_ok(d, p) else (-math.inf, math.inf)
        if self.effect is not None:
            lo, hi = self.effect.slider.start, self.effect.slider.end
        else:
            lo, hi = d.param(d.effect).soft
        span = hi - lo
        lo = max(lo, lo_b + 1e-6 * span)
        hi = min(hi, hi_b - 1e-6 * span)
        with np.errstate(all="ignore"):
            ends = [float(d.standardized({**p, d.effect: x})) for x in (lo, hi)]
        if not all(math.isfinite(e) for e in ends) or ends[0] == ends[1]:
            return -1.0, 1.0
        return min(ends), max(ends)

    @staticmethod
    def _bounds_ok(d: Design, p: dict) -> bool:
        try:
            lo, hi = d.effect_bounds(p)
            return lo < hi
        except (TypeError, ValueError, KeyError):
            return False

    # ---- keeping the widgets in step with the state ---------------------------
    def _state_changed(self, *events) -> None:
        if any(e.name == "design" for e in events) and self.state.design != self._design_id:
            self._build_design_controls(self.state.current_design())
        self.refresh()

    def refresh(self) -> None:
        """Show the state's values, the found quantity and the messages in the controls."""
        st = self.state
        d = st.current_design()
        if self._design_id != d.id:
            self._build_design_controls(d)
        if self.design.value != st.design:
            self.design.value = st.design
        if self.find.value != st.find:
            self.find.value = st.find
        if self.direction.value != st.direction:
            self.direction.value = st.direction
        if self.unit_name.value != st.unit_name:
            self.unit_name.value = st.unit_name
        unit = st.unit_name
        eff = d.param(d.effect)
        self.effect.set_label(f"effect: {eff.label}", effect_unit(d, unit), eff.doc)
        for name, w in self.others.items():
            spec = d.param(name)
            if spec.used_when is not None:
                used = st.value(spec.used_when[0]) == spec.used_when[1]
                box = w._layout if isinstance(w, NumberControl) else w
                if box.visible != used:
                    box.visible = used
            if isinstance(w, NumberControl):
                w.set_label(spec.label, param_unit(d, name, unit), spec.doc)
                w.show(st.value(name))
            elif spec.kind == "choice":
                if st.value(name) in spec.choices and w.value != st.value(name):
                    w.value = st.value(name)
            elif w.value != bool(st.value(name)):
                w.value = bool(st.value(name))
        self.alpha.show(st.alpha)
        self.target.show(st.target_power)
        adj = st.adjustments
        self.dropout.show(adj.get("dropout"))
        self.comparisons.show(adj.get("comparisons"))
        if adj.get("multiplicity") in MULTIPLICITY_LABELS and self.multiplicity.value != adj["multiplicity"]:
            self.multiplicity.value = adj["multiplicity"]
        self.n.show(st.n)
        self.effect.show(st.value(d.effect))
        self.standardized.set_range(*self._standardized_range(d))
        std = st.standardized()
        if std is not None:
            self.standardized.show(float(f"{std:.4g}"))
        self._show_found(d)
        self._show_messages(d)

    def _show_found(self, d: Design) -> None:
        st = self.state
        snap = st.snapshot
        find = st.find
        res = snap.result if snap is not None and snap.scenario.design == d.id else None
        unit = effect_unit(d, st.unit_name)
        self.n.set_found(None if find != "n" else (
            f"n = {res.n} {d.n.unit}" + (f", {res.total} {d.n.total_unit}" if len(res.group_sizes) > 1 else "")
            if res is not None and res.scenario.find == "n" else "—"))
        self.alpha.set_found(None if find != "alpha" else (
            f"α = {num(res.alpha, 4)}" if res is not None and res.scenario.find == "alpha" else "—"))
        if find == "effect":
            if res is not None and res.scenario.find == "effect":
                self.effect.set_found(f"{effect_value(d, res.solved.params, res.effect, 4)} {value_unit(unit)}".strip())
                self.standardized.set_found(f"{d.standardized_name} = {num(res.standardized_effect, 4)}")
            else:
                self.effect.set_found("—")
                self.standardized.set_found("—")
        else:
            self.effect.set_found(None)
            self.standardized.set_found(None)

    def _show_messages(self, d: Design) -> None:
        errors = self.state.errors
        controls: dict[str, Any] = {"alpha": self.alpha, "target_power": self.target, "n": self.n,
                                    d.effect: self.effect, "effect": self.effect,
                                    "standardized": self.standardized,
                                    "adjustments.dropout": self.dropout,
                                    "adjustments.comparisons": self.comparisons}
        for name, w in self.others.items():
            if isinstance(w, NumberControl):
                controls[name] = w
        placed = set()
        for key, ctl in controls.items():
            if ctl in placed:
                continue
            msg = errors.get(key) or (errors.get("effect") if ctl is self.effect else None)
            ctl.set_message(msg)
            placed.add(ctl)
        for key, pane in self._messages.items():
            msg = errors.get(key)
            pane.object = f'<p class="pl-msg" role="alert">{html.escape(msg)}</p>' if msg else ""
            pane.visible = bool(msg)
