"""Pinned scenarios, side by side: pin the current scenario, compare, overlay, show again.

``PinBoard`` keeps up to ``MAX_PINS`` pinned scenarios of one session. Each keeps a slot (its colour
and dash on the power curves, from ``theme.PIN_STYLES``) for as long as it is pinned. The board shows
a name box and "Pin this scenario" (names trimmed, unique, at most ``MAX_NAME`` characters, message at
the field otherwise; a message at the button when all slots are taken), one row per pin (rename,
"Show" loads it back into the state, remove), and a table with a column per scenario (the current
one first) in which every value that differs from the current scenario is marked.

Pinned curves go to the two power figures' fixed overlay pools (``set_pins``): on power vs effect
only pins of the current design (the effect axis means the same), on power vs n pins whose n counts
the same thing. ``update()`` is called by the page after every change.
"""
from __future__ import annotations

import html
import string
from dataclasses import dataclass, replace
from typing import Callable, Iterable

import numpy as np
import panel as pn

import powercore as pc
from powercore import RecordError, Result, Scenario
from powercore.justification import BASES
from powercore.record import MAX_NAME, MAX_PINNED, Pinned, check_pin_name

from .state import ExplorerState
from .text import DIRECTION_LABELS, FIND_LABELS, MULTIPLICITY_LABELS, effect_unit, effect_value, num, \
    param_unit, value_unit
from .theme import PANE_CSS, PIN_STYLES, WIDGET_CSS, button_look, keep_shown

__all__ = ["MAX_PINS", "Pin", "PinBoard", "comparison_rows", "dash_svg"]

MAX_PINS = min(MAX_PINNED, len(PIN_STYLES))

TABLE_CSS = PANE_CSS + """
.pl-pins-wrap { overflow-x: auto; }
table.pl-pins { border-collapse: collapse; font-size: 16px; min-width: 60%; }
table.pl-pins th, table.pl-pins td { padding: 4px 12px; border-bottom: 1px solid #DDDDDD; text-align: left;
  vertical-align: top; }
table.pl-pins thead th { border-bottom: 2px solid #1A1A1A; white-space: nowrap; }
table.pl-pins tbody th { font-weight: 600; white-space: nowrap; color: #3F3F3F; }
table.pl-pins td.pl-cur { background: #F3F3F3; }
table.pl-pins td.pl-diff { background: #FFF1C2; font-weight: 700; }
"""

_SVG_DASH = {"solid": "", "dashed": "6 4", "dotted": "2 4", "dotdash": "2 4 6 4", "dashdot": "6 4 2 4"}


def dash_svg(colour: str, dash, width: int = 44) -> str:
    """A short inline SVG line in the pin's colour and dash (the key between table and curves)."""
    pattern = " ".join(str(v) for v in dash) if isinstance(dash, (list, tuple)) else _SVG_DASH.get(dash, "")
    extra = f' stroke-dasharray="{pattern}"' if pattern else ""
    return (f'<svg width="{width}" height="12" aria-hidden="true" style="vertical-align:middle">'
            f'<line x1="1" y1="6" x2="{width - 1}" y2="6" stroke="{colour}" stroke-width="3"{extra}/></svg>')


@dataclass(frozen=True)
class Pin:
    """A pinned scenario with what the board draws for it."""

    slot: int
    name: str
    scenario: Scenario
    result: Result
    unit_name: str
    basis: str | None
    effect_curve: tuple[np.ndarray, np.ndarray]
    n_curve: tuple[np.ndarray, np.ndarray]

    @property
    def design(self):
        return pc.get_design(self.scenario.design)

    def as_pinned(self) -> Pinned:
        return Pinned(self.name, self.scenario, self.unit_name, self.basis, self.result)


def comparison_rows(result: Result, unit_name: str = "", basis: str | None = None) -> list[tuple[str, str]]:
    """(row label, text) of one scenario's column in the comparison table."""
    d = pc.get_design(result.scenario.design)
    sc = result.solved
    p = dict(sc.params)
    unit = value_unit(effect_unit(d, unit_name))
    spreads, others = [], []
    for spec in d.params:
        if spec.name == d.effect:
            continue
        v = p.get(spec.name)
        if spec.kind == "bool":
            others.append(f"{spec.label}: {'yes' if v else 'no'}")
            continue
        if spec.kind != "real" and not isinstance(v, (int, float)):
            others.append(f"{spec.label}: {v}")
            continue
        u = value_unit(param_unit(d, spec.name, unit_name))
        text = f"{spec.label} = {num(v, 4)}" + (f" {u}" if u else "")
        (spreads if spec.unit == "data units" and spec.name != "mu0" else others).append(text)
    adj = dict(sc.adjustments)
    alpha = num(result.alpha, 4)
    if adj.get("comparisons", 1) > 1 and adj.get("multiplicity", "none") != "none":
        alpha += (f" over {adj['comparisons']} tests ({MULTIPLICITY_LABELS.get(adj['multiplicity'])}: "
                  f"{num(result.alpha_test, 4)} each)")
    groups = " + ".join(str(g) for g in result.group_sizes)
    per_group = f"{result.n} {d.n.unit}" + (f" ({groups})" if len(result.group_sizes) > 1 else "")
    ss = result.sample_size
    rows = [
        ("design", d.title),
        ("find", FIND_LABELS[result.scenario.find]),
        ("direction", DIRECTION_LABELS[sc.direction]),
        ("significance level α", alpha),
        ("effect (data units)", f"{d.effect_label} {effect_value(d, p, result.effect, 4)}" + (f" {unit}" if unit else "")),
        ("standardized effect", f"{d.standardized_name} = {num(result.standardized_effect, 3)}"),
        ("spreads", "; ".join(spreads) or "—"),
        ("other assumptions", "; ".join(others) or "—"),
        ("n per group", per_group),
        ("n total", f"{result.total} {d.n.total_unit}"),
        ("dropout; enrol", (f"{num(100 * adj['dropout'], 3)}%; {result.enrolled_total} in total"
                            if adj.get("dropout") else "none")),
        ("power", num(result.power, 3)),
        ("target power", num(sc.target_power, 3)),
        ("required n", "—" if ss is None else f"{ss.n} ({ss.total} in total)"),
        ("basis of the effect", BASES.get(basis, "not stated") if basis else "not stated"),
    ]
    return rows


class _Row:
    """The controls of one pin slot: colour key, name box (rename), Show, Remove, and a message line."""

    def __init__(self, slot: int, board: "PinBoard") -> None:
        look = button_look()
        colour, dash = PIN_STYLES[slot]
        self.key = pn.pane.HTML(dash_svg(colour, dash), margin=(14, 4, 0, 10), width=52)
        self.name_box = pn.widgets.TextInput(value="", width=220, max_length=200, margin=(6, 6),
                                         css_classes=[f"pl-pin-name-{slot}"], stylesheets=[WIDGET_CSS])
        self.rename = pn.widgets.Button(label="Rename", **look, width=100, margin=(6, 4),
                                        css_classes=[f"pl-pin-rename-{slot}"], stylesheets=[WIDGET_CSS])
        self.show = pn.widgets.Button(label="Show", **look, width=80, margin=(6, 4),
                                      css_classes=[f"pl-pin-show-{slot}"], stylesheets=[WIDGET_CSS])
        self.remove = pn.widgets.Button(label="Remove", **look, width=100, margin=(6, 4),
                                        css_classes=[f"pl-pin-remove-{slot}"], stylesheets=[WIDGET_CSS])
        self.message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10),
                                    css_classes=[f"pl-msg-pin-{slot}"])
        self.rename.on_click(lambda _e: board.rename(slot, self.name_box.value))
        self.name_box.param.watch(lambda e: board.rename(slot, e.new) if e.new != board.name_of(slot) else None,
                              "value")
        self.show.on_click(lambda _e: board.show(slot))
        self.remove.on_click(lambda _e: board.remove(slot))
        self.layout = pn.Column(pn.Row(self.key, self.name_box, self.rename, self.show, self.remove, margin=0),
                                self.message, margin=0, visible=False, css_classes=[f"pl-pin-row-{slot}"])


def _message(pane, text: str | None) -> None:
    body = f'<p class="pl-msg" role="alert">{html.escape(text)}</p>' if text else ""
    if pane.object != body:
        pane.object = body
    if pane.visible != bool(text):
        pane.visible = bool(text)


class PinBoard(pn.viewable.Viewer):
    """Up to ``MAX_PINS`` pinned scenarios: pin, rename, show, remove, compare, and overlay on the curves.

    ``figures`` are the views with ``set_pins`` (the power-vs-effect and power-vs-n figures);
    ``basis`` returns the current basis of the assumed effect (kept with each pin), ``set_basis``
    restores a pin's basis when it is shown again.
    """

    def __init__(self, state: ExplorerState, *figures, basis: Callable[[], str | None] | None = None,
                 set_basis: Callable[[str | None], None] | None = None) -> None:
        super().__init__()
        self.state = state
        self.figures = figures
        self._basis = basis or (lambda: None)
        self._set_basis = set_basis
        self.pins: list[Pin] = []
        self._columns: dict[int, tuple] = {}   # slot → (result, (unit, basis), table column)
        self._listeners: list[Callable[[], None]] = []
        self._suggested = ""
        look = button_look()
        solid = {k: v for k, v in look.items() if k in ("color", "button_type")}
        self.name_box = pn.widgets.TextInput(value="", placeholder="a name for the pin", width=220, max_length=200,
                                         css_classes=["pl-pin-name"], stylesheets=[WIDGET_CSS], margin=(6, 6))
        self.pin_button = pn.widgets.Button(label="Pin this scenario", **solid, width=180, margin=(6, 6),
                                            css_classes=["pl-pin-add"], stylesheets=[WIDGET_CSS])
        self.pin_button.on_click(lambda _e: self.pin())
        self.name_message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10),
                                         css_classes=["pl-msg-pin-name"])
        self.button_message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10),
                                           css_classes=["pl-msg-pin-add"])
        self.rows = [_Row(slot, self) for slot in range(MAX_PINS)]
        self.table = pn.pane.HTML("", visible=False, stylesheets=[TABLE_CSS], sizing_mode="stretch_width",
                                  css_classes=["pl-pins-table"], margin=(4, 10))
        label = pn.pane.HTML('<p class="pl-label">Side by side:</p>', stylesheets=[PANE_CSS], margin=(14, 4, 0, 10))
        hint = pn.pane.HTML(f'<p class="pl-note">Pin up to {MAX_PINS} scenarios to compare them here and on the '
                            'power curves.</p>', stylesheets=[PANE_CSS], margin=(10, 6, 0, 6))
        self._shown_rows = pn.Column(sizing_mode="stretch_width", margin=0)   # the rows of the pins there are
        self._layout = pn.Column(
            pn.Row(label, self.name_box, self.pin_button, hint, margin=0, styles={"flex-wrap": "wrap"}),
            self.name_message, self.button_message, self._shown_rows, self.table,
            sizing_mode="stretch_width", margin=(0, 0, 4, 0), css_classes=["pl-pins"])
        self.update()

    def __panel__(self):
        return self._layout

    def on_change(self, callback: Callable[[], None]) -> None:
        """Call ``callback()`` after pins are added, renamed, removed or restored."""
        self._listeners.append(callback)

    # ---- queries ------------------------------------------------------------------------------
    def names(self) -> list[str]:
        return [p.name for p in self.pins]

    def name_of(self, slot: int) -> str | None:
        return next((p.name for p in self.pins if p.slot == slot), None)

    def entries(self) -> list[Pinned]:
        """The pins as ``powercore.record.Pinned`` (for the record), in pinning order."""
        return [p.as_pinned() for p in self.pins]

    def default_name(self) -> str:
        taken = set(self.names())
        for letter in string.ascii_uppercase:
            if letter not in taken:
                return letter
        k = 1
        while f"pin {k}" in taken:
            k += 1
        return f"pin {k}"

    # ---- actions ------------------------------------------------------------------------------
    def pin(self, name: str | None = None) -> bool:
        """Pin the scenario behind the views under ``name`` (the name box when None)."""
        name = self.name_box.value if name is None else name
        _message(self.button_message, None)
        if len(self.pins) >= MAX_PINS:
            _message(self.button_message, f"All {MAX_PINS} places are taken: remove a pinned scenario "
                                          "before pinning another.")
            return False
        snap = self.state.snapshot
        if snap is None or self.state.errors:
            _message(self.button_message, "The inputs have a problem (see the message at the field); nothing was "
                                          "pinned. Fix it and pin again.")
            return False
        try:
            name = check_pin_name(name, self.names(), "name")
        except RecordError as e:
            _message(self.name_message, f"Name {e.problem}.")
            return False
        _message(self.name_message, None)
        cur_e, cur_n = snap.effect_curve, snap.n_curve
        self._add(name, snap.scenario, snap.result, snap.unit_name, self._basis(),
                  (np.asarray(cur_e.x, dtype=float), np.asarray(cur_e.power, dtype=float)),
                  (np.asarray(cur_n.x, dtype=float), np.asarray(cur_n.power, dtype=float)))
        self.name_box.value = ""   # update() offers the next default name
        self._changed()
        return True

    def _add(self, name, scenario, result, unit_name, basis, effect_curve, n_curve) -> Pin:
        used = {p.slot for p in self.pins}
        slot = next(s for s in range(MAX_PINS) if s not in used)
        pin = Pin(slot, name, scenario, result, unit_name or "", basis, effect_curve, n_curve)
        self.pins.append(pin)
        return pin

    def rename(self, slot: int, new: str) -> bool:
        row = self.rows[slot]
        i = next((k for k, p in enumerate(self.pins) if p.slot == slot), None)
        if i is None:
            return False
        others = [p.name for p in self.pins if p.slot != slot]
        try:
            name = check_pin_name(new, others, "name")
        except RecordError as e:
            _message(row.message, f"Name {e.problem}; kept {self.pins[i].name!r}.")
            return False
        _message(row.message, None)
        if name != self.pins[i].name:
            self.pins[i] = replace(self.pins[i], name=name)
            self._changed()
        elif row.name_box.value != name:
            row.name_box.value = name
        return True

    def remove(self, slot: int) -> None:
        before = len(self.pins)
        self.pins = [p for p in self.pins if p.slot != slot]
        _message(self.rows[slot].message, None)
        if len(self.pins) != before:
            _message(self.button_message, None)
            self._changed()

    def show(self, slot: int) -> bool:
        """Load the pinned scenario into the state (the views follow)."""
        pin = next((p for p in self.pins if p.slot == slot), None)
        if pin is None:
            return False
        if self._set_basis is not None:
            self._set_basis(pin.basis)
        self.state.load(pin.scenario, pin.unit_name)
        return True

    def clear(self) -> None:
        if self.pins:
            self.pins = []
            self._changed()

    def restore(self, pinned: Iterable[Pinned]) -> dict[str, str]:
        """Replace the pins with ``pinned`` (read from a record); returns {pin: problem} for those refused."""
        self.pins = []
        problems: dict[str, str] = {}
        for i, item in enumerate(pinned):
            label = f"pinned scenario {item.name!r}"
            if len(self.pins) >= MAX_PINS:
                problems[label] = f"at most {MAX_PINS} scenarios can be pinned"
                continue
            try:
                name = check_pin_name(item.name, self.names(), "name")
                with np.errstate(all="ignore"):
                    result = item.result or pc.evaluate(item.scenario)
                    lo, hi = pc.effect_range(result)
                    a, b = pc.n_range(result)
                    ce = pc.curve_effect(result.solved, lo, hi, points=300)
                    cn = pc.curve_n(result.solved, a, b, points=300)
            except (ValueError, ArithmeticError) as e:   # RecordError, InvalidParameter, NoSolution...
                problems[label] = getattr(e, "problem", None) or getattr(e, "reason", None) or str(e)
                continue
            self._add(name, item.scenario, result, (item.unit_name or "")[:MAX_NAME], item.basis,
                      (np.asarray(ce.x, dtype=float), np.asarray(ce.power, dtype=float)),
                      (np.asarray(cn.x, dtype=float), np.asarray(cn.power, dtype=float)))
        _message(self.button_message, None)
        self._changed()
        return problems

    def _changed(self) -> None:
        self.update()
        for callback in self._listeners:
            callback()

    # ---- the view -------------------------------------------------------------------------------
    def drawn_on(self, pin: Pin) -> tuple[bool, bool]:
        """(on power vs effect, on power vs n) for the current design."""
        snap = self.state.snapshot
        if snap is None:
            return False, False
        d = snap.design
        return pin.scenario.design == d.id, pin.design.n.unit == d.n.unit

    def update(self) -> None:
        """Bring the board, the overlays and the table in line with the pins and the current scenario."""
        with pn.io.hold():
            full = len(self.pins) >= MAX_PINS
            if self.pin_button.disabled != full:
                self.pin_button.disabled = full
            suggested = self.default_name()
            if self.name_box.value in ("", self._suggested) and self.name_box.value != suggested:
                self.name_box.value = suggested   # the planner's own typing is kept
            self._suggested = suggested
            by_slot = {p.slot: p for p in self.pins}
            for slot, row in enumerate(self.rows):
                pin = by_slot.get(slot)
                if pin is None:
                    if row.layout.visible:
                        row.layout.visible = False
                    continue
                if row.name_box.value != pin.name:
                    row.name_box.value = pin.name
                if not row.layout.visible:
                    row.layout.visible = True
            keep_shown(self._shown_rows, [r.layout for r in self.rows])
            effect, n = {}, {}
            for pin in self.pins:
                on_e, on_n = self.drawn_on(pin)
                res = pin.result
                if on_e:
                    effect[pin.slot] = (pin.name, *pin.effect_curve, (res.effect, res.power))
                if on_n:
                    n[pin.slot] = (pin.name, *pin.n_curve, (float(res.n), res.power))
            for fig in self.figures:
                fig.set_pins(n if fig.fig.name == "power-n" else effect)
            self._update_table()

    def _column(self, pin: Pin) -> list[tuple[str, str]]:
        """A pin's column of the table, made once per pin (only the current column changes while dragging)."""
        cache = self._columns
        made = cache.get(pin.slot)
        if made is None or made[0] is not pin.result or made[1] != (pin.unit_name, pin.basis):
            made = cache[pin.slot] = (pin.result, (pin.unit_name, pin.basis),
                                      comparison_rows(pin.result, pin.unit_name, pin.basis))
        return made[2]

    def _update_table(self) -> None:
        snap = self.state.snapshot
        if not self.pins or snap is None:
            if self.table.visible:
                self.table.visible = False
            return
        current = comparison_rows(snap.result, snap.unit_name, self._basis())
        columns = [self._column(p) for p in self.pins]
        head = ['<th scope="col">current scenario</th>']
        for p in self.pins:
            colour, dash = PIN_STYLES[p.slot]
            head.append(f'<th scope="col" data-pin="{html.escape(p.name)}">{dash_svg(colour, dash, 34)} '
                        f'{html.escape(p.name)}</th>')
        drawn = []
        for p in self.pins:
            on_e, on_n = self.drawn_on(p)
            drawn.append("both curves" if on_e and on_n else "power vs n only" if on_n
                         else "not drawn: another design")
        body = []
        for r, (label, cur) in enumerate(current):
            cells = [f'<td class="pl-cur">{html.escape(cur)}</td>']
            for col in columns:
                text = col[r][1]
                cls = ' class="pl-diff"' if text != cur else ""
                cells.append(f"<td{cls}>{html.escape(text)}</td>")
            body.append(f'<tr><th scope="row">{html.escape(label)}</th>{"".join(cells)}</tr>')
        body.append('<tr><th scope="row">on the curves</th><td class="pl-cur">solid blue</td>'
                    + "".join(f"<td>{html.escape(t)}</td>" for t in drawn) + "</tr>")
        text = (f'<div class="pl-pins-wrap"><table class="pl-pins" aria-label="pinned scenarios side by side">'
                f'<thead><tr><th></th>{"".join(head)}</tr></thead><tbody>{"".join(body)}</tbody></table>'
                f'<p class="pl-note">Values that differ from the current scenario are marked.</p></div>')
        if self.table.object != text:
            self.table.object = text
        if not self.table.visible:
            self.table.visible = True
