"""'Confirm by simulation': run powercore.simulate off the request thread, with progress and cancel.

The run happens in a thread of its own (the session's worker threads and the event loop stay free,
so the page keeps answering and other sessions are unaffected); progress and the result reach the
page through ``doc.add_next_tick_callback`` on the session's document, so every model change
happens on the event loop. Without a server (tests) the run happens in the calling thread.
"""
from __future__ import annotations

import html
import os
import sys
import threading
import time
from typing import Any, Callable

import panel as pn

from powercore import Scenario
from powercore.simulate import simulate

from .state import ExplorerState
from .text import num
from .theme import PANE_CSS, WIDGET_CSS, button_look, page_value

__all__ = ["REPS", "SIM_NICE", "SimulationPanel", "same_but_n", "yield_cpu"]

REPS = {"1,000": 1000, "10,000": 10_000, "100,000": 100_000}


def same_but_n(a: Scenario, b: Scenario) -> bool:
    """The same scenario apart from n (points at several n share one curve)."""
    da, db = a.to_dict(), b.to_dict()
    da.pop("n", None), db.pop("n", None)
    da.pop("find", None), db.pop("find", None)
    return da == db


#: how much lower the simulation thread's CPU priority is than the server's other threads (Linux nice)
SIM_NICE = 10


def yield_cpu() -> None:
    """Lower the calling thread's CPU priority by SIM_NICE (Linux only; elsewhere nothing changes).

    A simulation runs for seconds to minutes in its own thread while the other sessions keep
    changing. NumPy computes its arrays mostly with the GIL released, so on a busy machine it
    competed for the cores with the event loop, the other sessions' workers and (in a meeting on
    one laptop) the browser itself. At a lower priority it takes what is left over and runs
    longer instead.
    On Linux a thread has its own nice value, set through its native id; on other systems that
    id is not a process id, so nothing is changed there.
    """
    if not sys.platform.startswith("linux"):
        return
    try:
        tid = threading.get_native_id()
        os.setpriority(os.PRIO_PROCESS, tid, os.getpriority(os.PRIO_PROCESS, tid) + SIM_NICE)
    except OSError:        # not permitted here: run at the usual priority
        pass


class SimulationPanel(pn.viewable.Viewer):
    """Replicates, start, progress, cancel, and the simulated result beside the analytic one."""

    def __init__(self, state: ExplorerState, on_result: Callable[[], None] | None = None,
                 seed: int | None = None) -> None:
        super().__init__()
        self.state = state
        self._on_result = on_result or (lambda: None)
        self._seed = seed
        self._cancel = threading.Event()
        self._lock = threading.Lock()
        self._busy = False            # from a start until its result (or cancel, or error) is shown
        self._last_progress = 0.0
        self.result = None            # the last finished SimulationResult (not cancelled)
        self.scenario: Scenario | None = None
        self.points: list[tuple[Scenario, Any]] = []   # finished runs, for the power-against-n view
        look = button_look()
        solid = {k: v for k, v in look.items() if k in ("color", "button_type")}
        self.reps = pn.widgets.RadioButtonGroup(options=list(REPS), value="10,000", **look,
                                                css_classes=["pl-sim-reps"], stylesheets=[WIDGET_CSS],
                                                margin=(4, 6))
        self.start = pn.widgets.Button(label="Confirm by simulation", **solid, css_classes=["pl-sim-start"],
                                       stylesheets=[WIDGET_CSS], margin=(4, 6), width=220)
        self.cancel = pn.widgets.Button(label="Cancel", **look, disabled=True, css_classes=["pl-sim-cancel"],
                                        stylesheets=[WIDGET_CSS], margin=(4, 6), width=100)
        self.progress = pn.indicators.Progress(value=0, max=100, visible=False, width=260, margin=(14, 6),
                                               css_classes=["pl-sim-progress"])
        self.pane = pn.pane.HTML("", stylesheets=[PANE_CSS], sizing_mode="stretch_width",
                                 css_classes=["pl-sim-result"], margin=(0, 10))
        self.start.on_click(lambda e: self.run())
        self.cancel.on_click(lambda e: self._cancel.set())
        label = pn.pane.HTML('<p class="pl-label">Simulation replicates:</p>', stylesheets=[PANE_CSS],
                             margin=(12, 4, 0, 10))
        self._layout = pn.Column(pn.Row(label, self.reps, self.start, self.cancel, self.progress, margin=0,
                                        styles={"flex-wrap": "wrap"}),
                                 self.pane, sizing_mode="stretch_width", margin=(0, 0, 4, 0),
                                 css_classes=["pl-sim"])

    def __panel__(self):
        return self._layout

    @property
    def running(self) -> bool:
        """A run was started and its end is not shown yet.

        Not the thread's life: the thread lives on for a moment after handing its result to the
        page, and a Start clicked in that moment (the button is enabled again) was ignored.
        """
        return self._busy

    def current(self) -> dict | None:
        """The last result as a dict, if it belongs to the scenario behind the views (for the record)."""
        snap = self.state.snapshot
        if self.result is None or snap is None or self.scenario != snap.scenario:
            return None
        return self.result.to_dict()

    # ---- running -----------------------------------------------------------------------------
    def run(self) -> None:
        snap = self.state.snapshot
        with self._lock:
            if snap is None or self._busy:
                return
            self._busy = True
        scenario = snap.result.solved   # the scenario with its unknown filled in
        reps = self._chosen_reps()
        doc = pn.state.curdoc if pn.state.curdoc is not None and pn.state.curdoc.session_context else None
        self._cancel.clear()
        self._set(start_disabled=True, cancel_disabled=False, progress=0, visible=True,
                  text=f'<p class="pl-note">Simulating {reps:,} replicates…</p>')

        def later(fn: Callable[[], None]) -> None:
            if doc is None:
                fn()
            else:
                doc.add_next_tick_callback(fn)

        def progress(done: int, total: int) -> None:
            now = time.monotonic()
            if now - self._last_progress < 0.15 and done < total:
                return
            self._last_progress = now
            pct = int(100 * done / max(total, 1))
            later(lambda: self._set(progress=pct))

        def work() -> None:
            try:
                res = simulate(scenario, reps, seed=self._seed, progress=progress, cancel=self._cancel.is_set)
            except Exception as e:   # shown on the page; the session goes on
                msg = f"the simulation failed: {e}"
                later(lambda: self._finished(None, snap.scenario, scenario, msg))
                return
            later(lambda: self._finished(res, snap.scenario, scenario, None))

        if doc is None:
            work()
        else:
            def background() -> None:
                yield_cpu()          # this thread only, which ends with the run
                work()
            threading.Thread(target=background, name="powerlens-simulation", daemon=True).start()

    def _chosen_reps(self) -> int:
        """The replicates chosen last in the page.

        A click on Start is handled at once, a choice of replicates only after its 50 ms debounce:
        choosing 1,000 and clicking Start quickly ran the replicates chosen before (100,000, in
        the browser test, twice in full suites); ``theme.page_value`` holds the newest choice.
        """
        labels = list(REPS)
        active = page_value(self.reps, "active")
        if isinstance(active, int) and 0 <= active < len(labels):
            return REPS[labels[active]]
        return REPS[self.reps.value]

    def _set(self, start_disabled=None, cancel_disabled=None, progress=None, visible=None, text=None) -> None:
        if start_disabled is not None:
            self.start.disabled = start_disabled
        if cancel_disabled is not None:
            self.cancel.disabled = cancel_disabled
        if progress is not None:
            self.progress.value = progress
        if visible is not None:
            self.progress.visible = visible
        if text is not None:
            self.pane.object = text

    def _finished(self, res, scenario: Scenario, solved: Scenario, error: str | None) -> None:
        self._busy = False
        if error is not None:
            self._set(False, True, 0, False, f'<p class="pl-stale" role="alert">{html.escape(error)}</p>')
            return
        if res.cancelled:
            self._set(False, True, None, False,
                      f'<p class="pl-note" data-state="cancelled">Cancelled after {res.reps:,} replicates '
                      f'(partial: simulated power {num(res.power, 4)}); nothing was kept.</p>')
            return
        self.result, self.scenario = res, scenario
        self.points = [(s, r) for s, r in self.points if same_but_n(s, solved) and s.n != solved.n]
        self.points.append((solved, res))
        self._set(False, True, 100, False, self.result_html(res))
        self._on_result()

    def result_html(self, res) -> str:
        lo, hi = res.interval
        verdict = "agrees" if res.agrees else "differs"
        rows = [("simulated power", f"{num(res.power, 4)} ± {num(res.mc_se, 2)} (Monte Carlo SE)", "sim-power"),
                ("95% Wilson interval", f"{num(lo, 4)} to {num(hi, 4)}", "sim-interval"),
                ("analytic power", num(res.analytic, 4), "sim-analytic"),
                ("replicates, seed, time", f"{res.reps:,} replicates, seed {res.seed}, {res.elapsed:.2f} s",
                 "sim-reps"),
                ("test simulated", res.test, "sim-test"),
                ("agreement", res.statement, "sim-statement")]
        body = "".join(f'<tr><th>{html.escape(a)}</th><td data-key="{k}">{html.escape(str(b))}</td></tr>'
                       for a, b, k in rows)
        return (f'<table class="pl-readout" data-verdict="{verdict}" aria-label="simulation result">'
                f"{body}</table>")

    def refresh(self) -> None:
        """Mark the shown result stale when the scenario behind the views has changed."""
        snap = self.state.snapshot
        if self.result is None or snap is None:
            return
        stale = self.scenario != snap.scenario
        note = ('<p class="pl-note" data-state="stale">The simulation below is for an earlier scenario; '
                'run it again for this one.</p>') if stale else ""
        text = note + self.result_html(self.result)
        if not self.running and self.pane.object != text:
            self.pane.object = text

    def points_for(self, scenario: Scenario) -> list[tuple[int, float, float, float]]:
        """(n, power, low, high) of finished runs that share the scenario apart from n."""
        out = []
        for s, r in self.points:
            if same_but_n(s, scenario) and s.n is not None:
                out.append((int(s.n), float(r.power), float(r.interval[0]), float(r.interval[1])))
        return sorted(out)

