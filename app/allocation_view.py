"""“Allocation and budget”: the best split between two groups, and what a budget buys.

``AllocationPanel(state)`` is shown only for two-group designs (those with an
allocation ``ratio``). With unit costs per arm it gives (a) the ratio n2/n1 that
maximises power for the current total sample size, and, when the arms cost
differently, for the same spending; (b) for a typed budget, the whole group sizes
it buys at the current ratio, their cost, the power and the smallest detectable
effect. "Use this ratio" and "Use these sizes" put them into the scenario.

The numbers come from :mod:`powercore.allocation` (``best_ratio``, ``budget_plan``);
the panel computes only while it is open. Bad input is reported under its box.
"""
from __future__ import annotations

import html
import math
from typing import Any, Callable

import panel as pn

from powercore import InvalidParameter, NoSolution
from powercore.allocation import Allocation, BudgetPlan, best_ratio, budget_plan

from .effect_helper import STALE, card_heading, primary_button
from .state import ExplorerState
from .text import effect_unit, num, value_unit
from .theme import PANE_CSS, WIDGET_CSS, fill_when_opened, label_kw, show_message

__all__ = ["AllocationPanel", "is_two_group"]


def is_two_group(design) -> bool:
    """True for designs with an allocation ratio n2/n1."""
    return "ratio" in {s.name for s in design.params}


class _Box:
    """A labelled number box with its message line (the look of the scenario controls)."""

    def __init__(self, key: str, label: str, value: float | None, on_change: Callable[[], None]) -> None:
        self.key = key
        self.label = label
        self.input = pn.widgets.FloatInput(value=value, format="0[.][000000]", sizing_mode="stretch_width",
                                           css_classes=[f"pl-alloc-{key}"], stylesheets=[WIDGET_CSS],
                                           margin=(2, 10))
        self.message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10, 4, 10),
                                    css_classes=[f"pl-msg-alloc-{key}"])
        self.input.param.watch(lambda e: on_change(), "value")
        head = pn.pane.HTML(f'<p class="pl-label">{html.escape(label)}</p>', stylesheets=[PANE_CSS],
                            margin=(6, 10, 0, 10))
        self.layout = pn.Column(head, self.input, self.message, sizing_mode="stretch_width", margin=0)

    @property
    def value(self):
        return self.input.value

    def set_message(self, text: str | None) -> None:
        show_message(self.message, text)


def _positive(box: _Box) -> float:
    v = box.value
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise InvalidParameter(box.key, "must be a number", v)
    if v <= 0:
        raise InvalidParameter(box.key, "must be greater than 0", v)
    return float(v)


def _lines(rows) -> str:
    return "".join(f'<p class="pl-alloc-line" style="margin:2px 0">{html.escape(t)}</p>' for t in rows)


def _mark_stale(pane) -> None:
    """Keep the last good read-out, marked as such (the message is under the box at fault)."""
    mark = f'<p class="pl-stale">{html.escape(STALE)}</p>'
    if pane.object and not pane.object.startswith(mark):
        pane.object = mark + pane.object


class AllocationPanel(pn.viewable.Viewer):
    """The allocation and budget card of one session; the page calls ``update()`` after each change."""

    def __init__(self, state: ExplorerState) -> None:
        super().__init__()
        self.state = state
        self.best: Allocation | None = None
        self.plan: BudgetPlan | None = None
        self._key: Any = None
        self.cost1 = _Box("cost1", "cost per subject, group 1", 1.0, self._typed)
        self.cost2 = _Box("cost2", "cost per subject, group 2", 1.0, self._typed)
        self.budget = _Box("budget", "total budget", None, self._typed)
        self.ratio_out = pn.pane.HTML("", stylesheets=[PANE_CSS], margin=(4, 10), sizing_mode="stretch_width",
                                      css_classes=["pl-alloc-ratio"])
        self.plan_out = pn.pane.HTML("", stylesheets=[PANE_CSS], margin=(4, 10), sizing_mode="stretch_width",
                                     css_classes=["pl-alloc-plan"])
        self.use_ratio = pn.widgets.Button(**label_kw("Use this ratio"), **primary_button(), disabled=True,
                                           css_classes=["pl-alloc-use-ratio"], stylesheets=[WIDGET_CSS],
                                           margin=(6, 10))
        self.use_sizes = pn.widgets.Button(**label_kw("Use these sizes"), **primary_button(), disabled=True,
                                           css_classes=["pl-alloc-use-sizes"], stylesheets=[WIDGET_CSS],
                                           margin=(6, 10))
        self.use_ratio.on_click(lambda e: self.apply_ratio())
        self.use_sizes.on_click(lambda e: self.apply_sizes())
        heading = pn.pane.HTML('<p class="pl-label">Best allocation ratio n2/n1</p>', stylesheets=[PANE_CSS],
                               margin=(10, 10, 0, 10))
        heading2 = pn.pane.HTML('<p class="pl-label">What the budget buys (at the current ratio)</p>',
                                stylesheets=[PANE_CSS], margin=(10, 10, 0, 10))
        self.card = pn.Card(header=pn.pane.HTML(card_heading("Allocation and budget"), stylesheets=[PANE_CSS],
                                                margin=(2, 4)), collapsed=True, sizing_mode="stretch_width",
                            margin=(8, 10), css_classes=["pl-allocation"], stylesheets=[PANE_CSS])
        fill_when_opened(self.card, [self.cost1.layout, self.cost2.layout, heading, self.ratio_out, self.use_ratio,
                                     heading2, self.budget.layout, self.plan_out, self.use_sizes])
        self.card.param.watch(lambda e: self.update(), "collapsed")
        self.update()

    def __panel__(self):
        return self.card

    # ---- computing -----------------------------------------------------------------------------
    def _typed(self) -> None:
        self._key = None
        self.update()

    def update(self) -> None:
        """Show the panel for two-group designs and, while it is open, recompute for the current scenario."""
        d = self.state.current_design()
        two = is_two_group(d)
        if self.card.visible != two:
            self.card.visible = two
        snap = self.state.snapshot
        if not two or self.card.collapsed or snap is None or snap.scenario.design != d.id:
            return
        key = (id(snap), self.cost1.value, self.cost2.value, self.budget.value)
        if key == self._key:
            return
        self._key = key
        res = snap.result
        sc = res.solved
        for box in (self.cost1, self.cost2, self.budget):
            box.set_message(None)
        if self.budget.value is None:
            self.budget.input.value = float(res.total)   # a starting budget: the current plan at unit cost 1
            return   # the box's watcher computes again
        try:
            c1, c2 = _positive(self.cost1), _positive(self.cost2)
        except InvalidParameter as e:
            self._refuse(e, both=True)
            return
        # (a) the best ratio for the current total, and for the same spending at these unit costs
        n1, n2 = res.group_sizes[0], res.group_sizes[1]
        try:
            by_total = best_ratio(sc, total=float(res.total))
            rows = [f"for the same total of {res.total} {d.n.total_unit}: ratio {num(by_total.ratio, 3)}, "
                    f"power {num(by_total.power, 4)} (at 1 : 1: {num(by_total.power_equal, 4)}; now "
                    f"{num(res.power, 4)} at ratio {num(sc.params['ratio'], 3)})"]
            self.best = by_total
            if c1 != c2:
                spend = c1 * n1 + c2 * n2
                by_cost = best_ratio(sc, budget=spend, costs=(c1, c2))
                rows.append(f"for the same spending ({num(spend, 6)} at these unit costs): ratio "
                            f"{num(by_cost.ratio, 3)}, n1 ≈ {num(by_cost.n1, 4)}, n2 ≈ {num(by_cost.n2, 4)}, "
                            f"power {num(by_cost.power, 4)}")
                self.best = by_cost
            self.ratio_out.object = _lines(rows)
            self.use_ratio.name = f"Use this ratio ({num(self.best.ratio, 3)})"
            self.use_ratio.disabled = False
        except (InvalidParameter, NoSolution) as e:
            self.best = None
            self.use_ratio.disabled = True
            self.ratio_out.object = _lines([f"no best ratio here: {e}"])
        # (b) the budget plan
        try:
            budget = _positive(self.budget)
            plan = budget_plan(sc, budget, (c1, c2))
        except (InvalidParameter, NoSolution) as e:
            self._refuse(e)
            return
        self.plan = plan
        unit = value_unit(effect_unit(d, self.state.unit_name))
        det = [f"{side} {num(v, 4)}{(' ' + unit) if unit else ''}" for side, v in plan.detectable.items()
               if v is not None]
        rows = [f"n1 = {plan.n1}, n2 = {plan.n2} ({d.n.total_unit}: {plan.n1 + plan.n2}), cost "
                f"{num(plan.cost, 6)} of {num(plan.budget, 6)}",
                f"power {num(plan.power, 4)} at α = {num(sc.alpha, 3)}",
                "smallest detectable effect at power " + f"{num(sc.target_power, 3)}: "
                + (", ".join(det) if det else "none within the design's range")]
        if plan.required_n is not None:
            rows.append(f"the target power needs n1 = {plan.required_n}, costing {num(plan.required_cost, 6)}")
        self.plan_out.object = _lines(rows)
        self.use_sizes.disabled = False

    def _refuse(self, e: Exception, both: bool = False) -> None:
        field = getattr(e, "field", "budget")
        box = {"cost1": self.cost1, "cost2": self.cost2, "costs": self.cost1}.get(field, self.budget)
        if isinstance(e, NoSolution):
            box.set_message(f"{box.label}: {e.reason}")
        elif isinstance(e, InvalidParameter):
            box.set_message(f"{box.label} {e.constraint}" + ("" if e.value is None else f", got {e.value!r}"))
        else:
            box.set_message(str(e))
        self.plan = None
        self.use_sizes.disabled = True
        _mark_stale(self.plan_out)
        if both:
            self.best = None
            self.use_ratio.disabled = True
            _mark_stale(self.ratio_out)

    # ---- using the results ---------------------------------------------------------------------
    def apply_ratio(self) -> bool:
        """Set the scenario's ratio to the best one shown, with n1 keeping the total (or the spending).

        When the page finds n, only the ratio changes. False when there is no ratio to use.
        """
        if self.best is None:
            return False
        st = self.state
        values = {**st.values, "ratio": float(f"{self.best.ratio:.4g}")}
        if st.find == "n":
            st.values = values
        else:
            st.param.update(values=values, n=max(int(round(self.best.n1)), st.current_design().n.minimum))
        return True

    def apply_sizes(self) -> bool:
        """Set n (group 1) to the budget plan's; when the page was finding n, it now finds power."""
        if self.plan is None:
            return False
        if self.state.find == "n":
            self.state.find = "power"
        self.state.n = self.plan.n1
        return True

