"""The explorer page: controls, readout, three linked views and the working, for one session."""
from __future__ import annotations

import html
import threading
import time

import panel as pn

from .allocation_view import AllocationPanel
from .controls import WATCHED, ScenarioControls
from .effect_helper import EffectHelper
from .figures import DensityFigure, EffectCurveFigure, NCurveFigure
from .justification_view import BasisField, JustificationCard
from .pins import PinBoard
from .readout import Readout, Working
from .share import SharePanel
from .simulation_view import SimulationPanel
from .state import DEMO, ExplorerState
from .text import SCALE_LABELS
from . import speedups
from .theme import PANE_CSS, WIDGET_CSS, button_look
from .uncertainty_view import UncertaintyPanel

__all__ = ["CAUTIONS", "SETTLE_MS", "Explorer", "create_app"]

#: how long after the last change the page refreshes its details (see ``Explorer.refresh``)
SETTLE_MS = 250

CAUTIONS = (
    "A study plan that affects people needs a qualified statistician; local regulations and ethics "
    "rules prevail.",
    "Do not compute “observed power” from the observed effect of the same study: it is only a "
    "restatement of the p-value (Hoenig & Heisey 2001) and must not be used.",
)


class Explorer(pn.viewable.Viewer):
    """One session's page. ``state`` is created here unless given (tests pass their own)."""

    def __init__(self, state: ExplorerState | None = None, query: dict[str, str] | None = None) -> None:
        super().__init__()
        self.state = state if state is not None else ExplorerState()
        st = self.state
        self._lock = threading.Lock()
        self._pending = False
        self._need_figures = False
        self._details_due = 0.0
        self._details_waiting = False
        self.controls = ScenarioControls(st, watch=False)
        self.effect_helper = EffectHelper(st)
        self.allocation = AllocationPanel(st)
        self.densities = DensityFigure()
        self.effect_curve = EffectCurveFigure()
        self.n_curve = NCurveFigure()
        self._views = (self.densities, self.effect_curve, self.n_curve)
        self.readout = Readout(st)
        self.working = Working(st)
        self.sim = SimulationPanel(st, on_result=self._simulated)
        self.basis = BasisField(st)
        self.pins = PinBoard(st, self.effect_curve, self.n_curve, basis=lambda: self.basis.value,
                             set_basis=lambda b: setattr(self.basis, "value", b))
        self.justification = JustificationCard(st, pins=self.pins, basis=self.basis)
        self.share = SharePanel(st, simulation=lambda: self.simulation, pins=self.pins, basis=self.basis)
        self.uncertainty = UncertaintyPanel(st, on_band=self._band)
        self.scale = pn.widgets.RadioButtonGroup(
            options={v: k for k, v in SCALE_LABELS.items()}, value=st.scale,
            **button_look(), css_classes=["pl-scale"],
            stylesheets=[WIDGET_CSS], margin=(4, 10))
        self.scale.param.watch(lambda e: setattr(st, "scale", e.new), "value")
        st.param.watch(self._changed, list(WATCHED))
        self._layout = self._build_layout()
        if query:
            self.share.apply_link(query)
        self.refresh()

    def __panel__(self):
        return self._layout

    @property
    def simulation(self):
        """The last simulation of the scenario behind the views, as a dict (None when there is none)."""
        if getattr(self, "_simulation_override", None) is not None:
            return self._simulation_override
        return self.sim.current()

    @simulation.setter
    def simulation(self, value) -> None:
        self._simulation_override = value

    def _simulated(self) -> None:
        snap = self.state.snapshot
        if snap is not None:
            self.n_curve.set_simulated(self.sim.points_for(snap.result.solved))
        self.sim.refresh()

    def _band(self, effect_band, n_band) -> None:
        """Draw (or clear, with None) the uncertainty panel's band on the two power curves."""
        if effect_band is None:
            self.effect_curve.set_band(None)
        else:
            self.effect_curve.set_band(*effect_band)
        if n_band is None:
            self.n_curve.set_band(None)
        else:
            self.n_curve.set_band(*n_band)

    def _changed(self, *events) -> None:
        """Schedule one refresh of the page on the server's event loop.

        Widget events run in the worker threads (the computing happens there); the page's models
        are then changed on the event loop inside one ``hold``, which Panel sends to the browser
        as a single message. Changes that arrive while a refresh is pending share it.
        """
        with self._lock:
            self._need_figures |= any(e.name == "snapshot" for e in events)
            if self._pending:
                return
            self._pending = True
        pn.state.execute(self._run_refresh, schedule=True)

    def _run_refresh(self) -> None:
        with self._lock:
            figures, self._need_figures, self._pending = self._need_figures, False, False
        doc = pn.state.curdoc
        if doc is None or doc.session_context is None:    # not served (tests): all at once
            self.refresh(figures=figures)
            return
        self.refresh(figures=figures, details=False)
        self._details_due = time.monotonic() + SETTLE_MS / 1000
        if not self._details_waiting:
            self._details_waiting = True
            doc.add_timeout_callback(self._details_when_settled, SETTLE_MS)

    def _details_when_settled(self) -> None:
        """Refresh the details once no change has come for ``SETTLE_MS`` (a drag has paused)."""
        wait = self._details_due - time.monotonic()
        doc = pn.state.curdoc
        if wait > 0.002 and doc is not None:
            doc.add_timeout_callback(self._details_when_settled, int(wait * 1000) + 1)
            return
        self._details_waiting = False
        with pn.io.hold():
            self._refresh_details()

    def refresh(self, figures: bool = True, details: bool = True) -> None:
        """Bring the controls and views in line with the state, as one batch of changes.

        The controls, the three views with their captions, the readout and the share link follow
        every change. The ``details`` (the working, justification, pins, helpers and uncertainty
        card) are heavier to send and to redraw: while a slider is dragged the page refreshes them
        only once the hand has rested for ``SETTLE_MS``.

        The captions are drawn inside the figures, so they travel with the new data: changed apart
        from it, they made the browser paint each figure a second time at every rest (measured in
        headless Chromium: 20 paints for 10 changes, against 10 with them here).
        """
        st = self.state
        with pn.io.hold():
            self.controls.refresh()
            snap = st.snapshot
            if figures and snap is not None:
                for view in self._views:
                    view.update(snap)
                    view.set_caption(snap)      # no-op when unchanged
                self.n_curve.set_simulated(self.sim.points_for(snap.result.solved))
            self.readout.update()
            self.share.update()    # the link and file name that the copy and export buttons read in the browser
            if self.scale.value != st.scale:
                self.scale.value = st.scale
            if details:
                self._refresh_details()

    def _refresh_details(self) -> None:
        snap = self.state.snapshot
        self.effect_helper.update()
        self.allocation.update()
        if snap is not None:
            self.working.update()
        self.basis.update()
        self.pins.update()
        self.justification.update()
        self.sim.refresh()
        self.uncertainty.update()

    def _build_layout(self):
        header = pn.pane.HTML(
            '<h1>Powerlens <span style="font-weight:400">— sample size explorer</span></h1>'
            '<p class="pl-sub">Set the assumptions on the left; choose what to find. The views follow as '
            'you drag.</p>', stylesheets=[PANE_CSS], sizing_mode="stretch_width", margin=(4, 10))
        cautions = pn.pane.HTML(
            '<div class="pl-cautions" role="note">'
            + "".join(f"<p><b>{'Caution' if i == 0 else 'Warning'}:</b> {html.escape(c)}</p>"
                      for i, c in enumerate(CAUTIONS))
            + "</div>", stylesheets=[PANE_CSS], sizing_mode="stretch_width", margin=(0, 10),
            css_classes=["pl-cautions-pane"])
        demo = pn.pane.HTML(f'<div class="pl-demo"><b>Invented demo.</b> {html.escape(DEMO["story"])}</div>',
                            stylesheets=[PANE_CSS], sizing_mode="stretch_width", margin=(0, 10),
                            css_classes=["pl-demo-pane"])
        sidebar = pn.Column(self.controls, self.basis, self.effect_helper, self.allocation,
                            width=400, margin=(0, 6), css_classes=["pl-sidebar"],
                            styles={"background": "white", "border-right": "1px solid #DDDDDD"})
        draw_row = pn.Row(pn.pane.HTML('<p class="pl-label">Densities of:</p>', stylesheets=[PANE_CSS],
                                       margin=(10, 4, 0, 10)), self.scale, margin=0)
        main = pn.Column(
            self.readout,
            self.pins,
            self.sim,
            self.share,
            draw_row,
            self.densities,
            pn.Row(self.effect_curve, self.n_curve, sizing_mode="stretch_width", margin=0,
                   styles={"flex-wrap": "wrap"}),
            self.uncertainty,
            self.working,
            self.justification,
            sizing_mode="stretch_width", margin=0, css_classes=["pl-main"])
        return pn.Column(header, cautions, demo,
                         pn.Row(sidebar, main, sizing_mode="stretch_width", margin=0),
                         sizing_mode="stretch_width", margin=0, css_classes=["pl-page"])


def session_query() -> dict[str, str]:
    """The query fields of the page address that opened this session (a copied link)."""
    args = getattr(pn.state, "session_args", None) or {}
    out = {}
    for k, vals in args.items():
        if vals:
            v = vals[-1]
            out[k] = v.decode("utf-8", "replace") if isinstance(v, bytes) else str(v)
    return out


def create_app() -> Explorer:
    """A fresh page with its own state, for one browser session (restoring a link's scenario)."""
    explorer = Explorer(query=session_query())
    if pn.state.curdoc is not None:
        speedups.install(pn.state.curdoc)
    return explorer
