"""The readout (numbers with their units) and the working, step by step."""
from __future__ import annotations

import html

import numpy as np
import panel as pn

from .state import ExplorerState, Snapshot
from .text import FIND_LABELS, effect_unit, effect_value, num, value_unit
from .theme import CARD_CSS, LiveHTML

__all__ = ["Readout", "Working", "readout_rows", "working_rows"]


def _e(text) -> str:
    return html.escape(str(text))


def _region(lo, hi, sym: str, unit: str = "") -> str:
    """'t ≤ −1.98 or ≥ 1.98' (the symbol once), with the unit after each value."""
    u = f" {unit}" if unit else ""
    parts = []
    if lo is not None:
        parts.append(f"≤ {num(lo, 4)}{u}")
    if hi is not None:
        parts.append(f"≥ {num(hi, 4)}{u}")
    return f"{sym} " + " or ".join(parts) if parts else "—"


def readout_rows(snap: Snapshot) -> list[tuple[str, str, str]]:
    """(key, label, text) rows of the readout for a good snapshot; plain text, units included."""
    d, res = snap.design, snap.result
    sc = res.solved
    unit = effect_unit(d, snap.unit_name)
    eunit = value_unit(unit)
    find = res.scenario.find
    found = " (found)"
    rows = [("power", "power", f"{num(res.power, 4)}" + (found if find == "power" else "")),
            ("beta", "β = 1 − power", num(res.beta, 4)),
            ("alpha", "significance level α", num(res.alpha, 4) + (found if find == "alpha" else "")
             + ("" if not d.conservative_at(dict(sc.params))
                else f"; actual size of the test {num(res.size, 4)} (at most α)"))]
    adj = dict(sc.adjustments)
    k = int(adj.get("comparisons", 1) or 1)
    method = adj.get("multiplicity", "none")
    if k > 1 or method != "none":
        how = {"none": "no correction", "bonferroni": "Bonferroni", "sidak": "Šidák"}.get(method, method)
        rows.append(("alpha-test", "significance level per test",
                     f"{num(res.alpha_test, 4)} ({k} tests, {how}; α = {num(res.alpha, 4)} over all)"))
    crit = res.critical
    if snap.interval:   # rejects inside an interval (equivalence)
        u = f" {eunit}" if eunit else ""
        s_lo, s_hi = crit["statistic"]
        x_lo, x_hi = crit["data"]
        rows.append(("critical-statistic", "rejection interval, test statistic",
                     f"{num(s_lo, 4)} ≤ {d.statistic_symbol} ≤ {num(s_hi, 4)}"
                     + (" (empty: lower bound above upper)" if s_lo is not None and s_hi is not None
                        and s_lo > s_hi else "")))
        rows.append(("critical-data", "rejection interval, data units",
                     f"{num(x_lo, 4)}{u} ≤ {d.estimate_label} ≤ {num(x_hi, 4)}{u}"))
    else:
        rows.append(("critical-statistic", "critical values, test statistic",
                     _region(*crit["statistic"], d.statistic_symbol)))
        rows.append(("critical-data", "critical values, data units",
                     _region(*crit["data"], d.estimate_label, eunit)))
    groups = " + ".join(str(g) for g in res.group_sizes)
    n_text = f"n = {res.n} {d.n.unit}"
    if len(res.group_sizes) > 1:
        n_text += f" (groups {groups} = {res.total} {d.n.total_unit})"
    rows.append(("n", "sample size analysed" + (found if find == "n" else ""), n_text))
    enrolled = getattr(res, "enrolled_sizes", None) or res.group_sizes
    e_total = getattr(res, "enrolled_total", None) or res.total
    drop = float(adj.get("dropout", 0.0) or 0.0)
    e_text = f"{enrolled[0]} {d.n.unit}"
    if len(enrolled) > 1:
        e_text += f" (groups {' + '.join(str(g) for g in enrolled)} = {e_total} {d.n.total_unit})"
    e_text += f"; expected dropout {num(drop * 100, 3)}%" if drop > 0 else "; no dropout assumed"
    rows.append(("enrolled", "sample size to enrol", e_text))
    ss = res.sample_size
    target = num(sc.target_power, 3)
    if ss is not None:
        text = f"{ss.n} {d.n.unit}"
        if len(ss.group_sizes) > 1:
            text += f" (groups {' + '.join(str(g) for g in ss.group_sizes)} = {ss.total} {d.n.total_unit})"
        text += f"; power {num(ss.power, 4)} at {ss.n}"
        if ss.n_below is not None and ss.power_below is not None:
            text += f", {num(ss.power_below, 4)} at {ss.n_below}"
        if ss.stays_from != ss.n:
            text += f"; power stays at or above the target from n = {ss.stays_from}"
            if ss.checked_to:
                text += f" (checked to {ss.checked_to})"
        rows.append(("required-n", f"required n for power {target}", text))
    else:
        msg = res.messages.get("n", "not available")
        rows.append(("required-n", f"required n for power {target}", msg))
    det = res.detectable
    p = dict(sc.params)
    parts = []
    for side in ("upper", "lower"):
        v = det.get(side)
        if v is None:
            continue
        with np.errstate(all="ignore"):
            s = float(d.standardized({**p, d.effect: v}))
        parts.append(f"{side} {effect_value(d, p, v, 4)}{(' ' + eunit) if eunit else ''} "
                     f"({d.standardized_name} = {num(s, 3)})")
    if parts:
        rows.append(("detectable", f"smallest detectable effect at n = {res.n}, power {target}",
                     "; ".join(parts)))
    else:
        rows.append(("detectable", f"smallest detectable effect at n = {res.n}",
                     res.messages.get("effect", "not available")))
    rows.append(("effect", "effect assumed" if find != "effect" else "effect (found)",
                 f"{d.effect_label} {effect_value(d, p, res.effect, 4)}{(' ' + eunit) if eunit else ''}; "
                 f"standardized {d.standardized_name} = {num(res.standardized_effect, 4)}; "
                 f"noncentrality {num(res.noncentrality, 4)}"))
    return rows


def working_rows(snap: Snapshot) -> list[tuple[str, str, str]]:
    """(step, how, value) rows of the working."""
    return [(s.label, s.text, "" if s.value is None else num(s.value, 6)) for s in snap.result.working]


class Readout(pn.viewable.Viewer):
    """Power, β, critical values, required n and detectable effect, with units; and any message."""

    def __init__(self, state: ExplorerState) -> None:
        super().__init__()
        self.state = state
        self.pane = LiveHTML(css_classes=["pl-readout"], margin=(4, 10))

    def __panel__(self):
        return self.pane

    def update(self) -> None:
        st = self.state
        snap = st.snapshot
        parts = []
        if st.errors:
            items = "".join(f'<li data-field="{_e(k)}">{_e(v)}</li>' for k, v in st.errors.items())
            parts.append(f'<div class="pl-stale" role="alert">Check the input — the views still show the last '
                         f'good scenario.<ul>{items}</ul></div>')
        if snap is not None:
            rows = readout_rows(snap)
            body = []
            for key, label, text in rows:
                cls = ' class="pl-big"' if key == "power" else ""
                body.append(f'<tr><th>{_e(label)}</th><td{cls} data-key="{key}">{_e(text)}</td></tr>')
            find = FIND_LABELS[snap.result.scenario.find]
            parts.append(f'<table class="pl-readout" aria-label="readout, finding {_e(find)}">'
                         f'{"".join(body)}</table>')
        text = "".join(parts)
        if self.pane.object != text:
            self.pane.object = text


class Working(pn.viewable.Viewer):
    """The working for the current result, in a collapsible card."""

    def __init__(self, state: ExplorerState) -> None:
        super().__init__()
        self.state = state
        self.pane = LiveHTML(css_classes=["pl-working"], margin=(5, 10))   # new text at every rest of a slider
        self.card = pn.Card(self.pane, title="Working, step by step", collapsed=False,
                            sizing_mode="stretch_width", css_classes=["pl-working-card"], margin=(6, 10),
                            header_css_classes=["card-header", "pl-working-header"],
                            stylesheets=[CARD_CSS])

    def __panel__(self):
        return self.card

    def update(self) -> None:
        snap = self.state.snapshot
        if snap is None:
            return
        rows = "".join(f'<tr><td class="pl-step">{i}. {_e(a)}</td><td>{_e(b)}</td>'
                       f'<td class="pl-num">{_e(c)}</td></tr>'
                       for i, (a, b, c) in enumerate(working_rows(snap), 1))
        notes = "".join(f"<li>{_e(n)}</li>" for n in snap.result.notes)
        text = (f'<table class="pl-working">{rows}</table>'
                f'<p class="pl-note"><b>Method and notes</b></p><ul class="pl-note">{notes}</ul>')
        if self.pane.object != text:
            self.pane.object = text
