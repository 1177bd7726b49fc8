"""“Work out the effect”: convert what a planner knows into the design's effect, and back.

``EffectHelper(state)`` shows, for the current design, a collapsed card with the
converter that fits the design's effect (two means and an SD → Cohen's d, two
proportions → Cohen's h, cell proportions → Cohen's w, group means → Cohen's f,
R² → f², two median survival times → hazard ratio). A live read-out gives the
conversion both ways: from the typed values to the standardized effect, and from
the current effect back to the typed scale. "Use this effect" puts the typed
values into the scenario. Designs without a converter show nothing.

The arithmetic is in :mod:`powercore.effects`; this module only reads boxes and
writes messages. Bad input is reported under the box at fault and never reaches
the state.
"""
from __future__ import annotations

import html
import math
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np
import panel as pn

import powercore as pc
from powercore import Design, InvalidParameter, effects
from powercore.standard import PerProportion, PerRmsSD, PerSD

from .state import ExplorerState
from .text import effect_unit, num, value_unit
from .theme import PANE_CSS, WIDGET_CSS, fill_when_opened, label_kw, show_message

__all__ = ["EffectHelper", "HelperInputError", "card_heading", "converter_for", "primary_button"]


#: shown above the last good read-out while a box holds a value that cannot be used
STALE = "Last good values (fix the box marked ⚠ to update):"


def card_heading(title: str, sub: str = "") -> str:
    """The header of a collapsible card in the sidebar: a label-sized title and an optional second line."""
    line = f'<br><span class="pl-unit" style="font-size:15px">{html.escape(sub)}</span>' if sub else ""
    return f'<p class="pl-label" style="margin:0; text-align:left">{html.escape(title)}{line}</p>'


def primary_button() -> dict:
    """Keyword arguments for a filled primary button (Panel 1.9 renamed ``button_type`` to ``color``)."""
    return {"color": "primary"} if "color" in pn.widgets.Button.param else {"button_type": "primary"}


class HelperInputError(ValueError):
    """A typed value the helper cannot use; ``field`` names the helper box at fault."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field


@dataclass(frozen=True)
class Box:
    """One input of a converter: key, label, ``"number"`` or ``"list"``, and its starting value."""

    key: str
    label: str
    kind: str
    start: Any


@dataclass(frozen=True)
class Conversion:
    """What the typed values give: read-out lines, the standardized effect, and the state change."""

    lines: tuple[str, ...]
    values: dict[str, Any] | None = None     # design parameters to set, by name
    standardized: float | None = None        # or: a standardized effect to set through the state
    sources: dict[str, str] | None = None    # design parameter → helper box it came from


# ---- reading boxes ---------------------------------------------------------------------------
def _number(key: str, v: Any, label: str) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise HelperInputError(key, f"{label} must be a number")
    return float(v)


def _positive(key: str, v: Any, label: str) -> float:
    x = _number(key, v, label)
    if x <= 0:
        raise HelperInputError(key, f"{label} must be greater than 0, got {x:g}")
    return x


def _proportion(key: str, v: Any, label: str) -> float:
    x = _number(key, v, label)
    if not 0 < x < 1:
        raise HelperInputError(key, f"{label} must be between 0 and 1, got {x:g}")
    return x


def parse_list(key: str, text: Any, label: str, minimum: int = 2) -> np.ndarray:
    """Numbers typed as a list ("0.25, 0.25, 0.5"; commas, semicolons or spaces)."""
    if not isinstance(text, str) or not text.strip():
        raise HelperInputError(key, f"{label}: type at least {minimum} numbers separated by commas")
    parts = [t for t in text.replace(";", ",").replace(" ", ",").split(",") if t]
    try:
        out = np.array([float(t) for t in parts])
    except ValueError:
        bad = next(t for t in parts if not _is_float(t))
        raise HelperInputError(key, f"{label}: {bad!r} is not a number") from None
    if not np.all(np.isfinite(out)):
        raise HelperInputError(key, f"{label}: every value must be a finite number")
    if out.size < minimum:
        raise HelperInputError(key, f"{label}: need at least {minimum} values, got {out.size}")
    return out


def _is_float(t: str) -> bool:
    try:
        float(t)
        return True
    except ValueError:
        return False


def _cells(key: str, text: Any, label: str) -> np.ndarray:
    p = parse_list(key, text, label)
    if np.any(p < 0) or np.any(p > 1):
        raise HelperInputError(key, f"{label}: each proportion must be between 0 and 1")
    total = float(p.sum())
    if abs(total - 1) > 1e-9:
        raise HelperInputError(key, f"{label} add up to {total:.6g}; they must add up to 1")
    return p


def _fmt_list(a) -> str:
    return ", ".join(num(float(x), 4) for x in a)


# ---- converters ------------------------------------------------------------------------------
class Converter:
    """The boxes of one kind of conversion and what they give. Subclasses set ``boxes`` per design."""

    title = ""
    note = ""

    def __init__(self, d: Design, state: ExplorerState) -> None:
        self.d, self.state = d, state
        self.boxes: tuple[Box, ...] = ()

    def convert(self, v: dict[str, Any]) -> Conversion:
        raise NotImplementedError

    def back(self, v: dict[str, Any], s: float) -> str:
        """The current standardized effect ``s`` on the typed scale (one line)."""
        raise NotImplementedError


class MeansToD(Converter):
    title = "Two means and an SD ↔ Cohen's d"

    def __init__(self, d, state):
        super().__init__(d, state)
        names = {s.name for s in d.params}
        self.spread = None if isinstance(d, PerRmsSD) else next(n for n in ("sd", "sd_diff") if n in names)
        self.one_sample = "mu0" in names
        self.paired = self.spread == "sd_diff"
        sym = d.standardized_name
        m1 = float(state.value("mu0")) if self.one_sample else 0.0
        delta = state.value(d.effect)
        sd = state.value(self.spread) if self.spread else _rms(state)
        if self.one_sample:
            labels = ("mean under the null μ0", "expected mean")
        elif self.paired:
            labels = ("mean of the first measurement", "mean of the second measurement")
        else:
            labels = ("mean in group 1", "mean in group 2")
        sd_label = ("SD of the differences σ_d" if self.paired else
                    "SD for the standardizing σ" if self.spread is None else "common SD σ")
        self.boxes = (Box("mean1", labels[0], "number", m1),
                      Box("mean2", labels[1], "number", m1 + delta if _finite(delta) else None),
                      Box("sd", sd_label, "number", sd if _finite(sd) else None))
        self.note = (f"{sym} = (mean 2 − mean 1)/SD."
                     + (" The design keeps its own two SDs: the effect is set to d × √((σ1² + σ2²)/2)."
                        if self.spread is None else ""))

    def convert(self, v):
        m1 = _number("mean1", v["mean1"], self.boxes[0].label)
        m2 = _number("mean2", v["mean2"], self.boxes[1].label)
        sd = _positive("sd", v["sd"], self.boxes[2].label)
        s = float(effects.cohens_d(m1, m2, sd))
        sym = self.d.standardized_name
        unit = value_unit(effect_unit(self.d, self.state.unit_name)) or "data units"
        lines = (f"{sym} = ({num(m2, 6)} − {num(m1, 6)})/{num(sd, 6)} = {num(s, 4)}",
                 f"difference = {num(m2 - m1, 6)} {unit}")
        if self.spread is None:
            return Conversion(lines, standardized=s)
        values = {self.d.effect: m2 - m1, self.spread: sd}
        sources = {self.d.effect: "mean2", self.spread: "sd"}
        if self.one_sample:
            values["mu0"], sources["mu0"] = m1, "mean1"
        return Conversion(lines, values=values, sources=sources)

    def back(self, v, s):
        m1 = _number("mean1", v["mean1"], self.boxes[0].label)
        sd = _positive("sd", v["sd"], self.boxes[2].label)
        m2 = m1 + float(effects.mean_difference(s, sd))
        return (f"current {self.d.standardized_name} = {num(s, 4)}: mean 2 = {num(m1, 6)} + "
                f"{num(s, 4)} × {num(sd, 6)} = {num(m2, 6)}")


class ProportionsToH(Converter):
    title = "Two proportions ↔ Cohen's h"
    note = "h = 2·asin√p2 − 2·asin√p1; the effect is the difference p2 − p1."

    def __init__(self, d, state):
        super().__init__(d, state)
        self.base = d.base_param
        b, delta = state.value(self.base), state.value(d.effect)
        one = self.base == "p0"
        self.boxes = (Box("p1", "proportion under the null p0" if one else "proportion in group 1 p1",
                          "number", b),
                      Box("p2", "expected proportion" if one else "proportion in group 2 p2", "number",
                          b + delta if _finite(b) and _finite(delta) else None))

    def convert(self, v):
        p1 = _proportion("p1", v["p1"], self.boxes[0].label)
        p2 = _proportion("p2", v["p2"], self.boxes[1].label)
        h = float(effects.cohens_h(p1, p2))
        return Conversion((f"h = 2·asin√{num(p2, 4)} − 2·asin√{num(p1, 4)} = {num(h, 4)}",
                           f"difference p2 − p1 = {num(p2 - p1, 4)}"),
                          values={self.base: p1, self.d.effect: p2 - p1},
                          sources={self.base: "p1", self.d.effect: "p2"})

    def back(self, v, s):
        p1 = _proportion("p1", v["p1"], self.boxes[0].label)
        p2 = float(effects.proportion_from_h(p1, s))
        if not math.isfinite(p2):
            return f"current h = {num(s, 4)}: no proportion has this h from p1 = {num(p1, 4)}"
        return f"current h = {num(s, 4)}: p2 = {num(p2, 4)} from p1 = {num(p1, 4)}"


class CellsToW(Converter):
    title = "Cell proportions ↔ Cohen's w"

    def __init__(self, d, state):
        super().__init__(d, state)
        self.gof = d.id == "chisquare-gof"
        null = ("null cell proportions" if self.gof else
                "null cell proportions (row total × column total, cell by cell)")
        self.boxes = (Box("p0", null, "list", "0.25, 0.25, 0.25, 0.25"),
                      Box("p1", "alternative cell proportions (same cells, same order)", "list",
                          "0.35, 0.25, 0.2, 0.2"))
        self.note = ("w = √Σ (p1 − p0)²/p0 over the cells, proportions separated by commas."
                     + (" The degrees of freedom become cells − 1." if self.gof else ""))

    def convert(self, v):
        p0 = _cells("p0", v["p0"], "null cell proportions")
        p1 = _cells("p1", v["p1"], "alternative cell proportions")
        if p0.size != p1.size:
            raise HelperInputError("p1", f"alternative cell proportions: {p1.size} cells, but the null "
                                         f"has {p0.size}")
        if np.any(p0 <= 0):
            raise HelperInputError("p0", "null cell proportions: every cell must be greater than 0")
        w = effects.w_from_proportions(p0, p1)
        lines = [f"w = {num(w, 4)} over {p0.size} cells"]
        values, sources = {self.d.effect: w}, {self.d.effect: "p1"}
        if self.gof:
            lines.append(f"degrees of freedom = {p0.size} − 1 = {p0.size - 1}")
            values["df"], sources["df"] = float(p0.size - 1), "p0"
        return Conversion(tuple(lines), values=values, sources=sources)

    def back(self, v, s):
        p0 = _cells("p0", v["p0"], "null cell proportions")
        p1 = _cells("p1", v["p1"], "alternative cell proportions")
        try:
            cells = effects.proportions_at_w(p0, p1, s)
        except ValueError as e:
            return f"current w = {num(s, 4)}: {e}"
        return f"current w = {num(s, 4)}: with the same pattern, cells {_fmt_list(cells)}"


class MeansToF(Converter):
    title = "Group means and a common SD ↔ Cohen's f"
    note = "f = σ_m/σ, σ_m the SD of the group means about their mean (divisor k); k becomes the count."

    def __init__(self, d, state):
        super().__init__(d, state)
        sd = state.value("sd")
        self.boxes = (Box("means", "group means (one per group)", "list", "10, 12, 15"),
                      Box("sd", "common SD σ", "number", sd if _finite(sd) else None))

    def convert(self, v):
        means = parse_list("means", v["means"], "group means")
        sd = _positive("sd", v["sd"], "common SD σ")
        sm = effects.sd_of_means(means)
        f = effects.f_from_means(means, sd)
        return Conversion((f"σ_m = {num(sm, 4)} over k = {means.size} groups",
                           f"f = {num(sm, 4)}/{num(sd, 6)} = {num(f, 4)}"),
                          values={self.d.effect: sm, "sd": sd, "k": float(means.size)},
                          sources={self.d.effect: "means", "sd": "sd", "k": "means"})

    def back(self, v, s):
        means = parse_list("means", v["means"], "group means")
        sd = _positive("sd", v["sd"], "common SD σ")
        try:
            m = effects.means_at_f(means, sd, s)
        except ValueError as e:
            return f"current f = {num(s, 4)}: {e}"
        return f"current f = {num(s, 4)}: with the same pattern, means {_fmt_list(m)}"


class R2ToF2(Converter):
    title = "R² ↔ Cohen's f²"

    def __init__(self, d, state):
        super().__init__(d, state)
        self.change = "r2_base" in {s.name for s in d.params}
        delta = state.value(d.effect)
        if self.change:
            base = state.value("r2_base")
            self.boxes = (Box("r2_full", "R² of the full model", "number",
                              base + delta if _finite(base) and _finite(delta) else None),
                          Box("r2_reduced", "R² of the reduced model", "number", base))
            self.note = "f² = (R²_full − R²_reduced)/(1 − R²_full)."
        else:
            self.boxes = (Box("r2_full", "R² of the model", "number", delta),)
            self.note = "f² = R²/(1 − R²)."

    def _r2(self, key, v, label):
        x = _number(key, v, label)
        if not 0 <= x < 1:
            raise HelperInputError(key, f"{label} must be in [0, 1), got {x:g}")
        return x

    def convert(self, v):
        full = self._r2("r2_full", v["r2_full"], self.boxes[0].label)
        if not self.change:
            f2 = float(effects.f2_from_r2(full))
            return Conversion((f"f² = {num(full, 4)}/(1 − {num(full, 4)}) = {num(f2, 4)}",),
                              values={self.d.effect: full}, sources={self.d.effect: "r2_full"})
        red = self._r2("r2_reduced", v["r2_reduced"], self.boxes[1].label)
        if red >= full:
            raise HelperInputError("r2_reduced", f"R² of the reduced model must be below the full model's "
                                                 f"{num(full, 4)}, got {num(red, 4)}")
        f2 = float(effects.f2_from_r2(full, red))
        return Conversion((f"f² = ({num(full, 4)} − {num(red, 4)})/(1 − {num(full, 4)}) = {num(f2, 4)}",
                           f"increase in R² = {num(full - red, 4)}"),
                          values={self.d.effect: full - red, "r2_base": red},
                          sources={self.d.effect: "r2_full", "r2_base": "r2_reduced"})

    def back(self, v, s):
        red = self._r2("r2_reduced", v["r2_reduced"], self.boxes[1].label) if self.change else 0.0
        full = float(effects.r2_from_f2(s, red))
        if self.change:
            return f"current f² = {num(s, 4)}: full R² = {num(full, 4)} over the reduced {num(red, 4)}"
        return f"current f² = {num(s, 4)}: R² = f²/(1 + f²) = {num(full, 4)}"


class MediansToHR(Converter):
    title = "Two median survival times ↔ hazard ratio"
    note = ("Exponential survival: hazard = ln 2/median, so HR (new : control) = median control/median new; "
            "HR below 1 means the new treatment lengthens survival.")

    def __init__(self, d, state):
        super().__init__(d, state)
        self.has_median = "median_control" in {s.name for s in d.params}
        mc = state.value("median_control") if self.has_median else 12.0
        hr = state.value("hr")
        self.boxes = (Box("median_control", "median survival, control", "number", mc),
                      Box("median_new", "median survival, new treatment", "number",
                          mc / hr if _finite(mc) and _finite(hr) and hr > 0 else None))

    def convert(self, v):
        mc = _positive("median_control", v["median_control"], self.boxes[0].label)
        mn = _positive("median_new", v["median_new"], self.boxes[1].label)
        hr = float(effects.hazard_ratio_from_medians(mc, mn))
        values, sources = {"hr": hr}, {"hr": "median_new"}
        if self.has_median:
            values["median_control"], sources["median_control"] = mc, "median_control"
        return Conversion((f"HR = {num(mc, 6)}/{num(mn, 6)} = {num(hr, 4)}",), values=values, sources=sources)

    def back(self, v, s):
        mc = _positive("median_control", v["median_control"], self.boxes[0].label)
        hr = self.state.value("hr")
        if not _finite(hr) or hr <= 0:
            return "current HR is not a positive number"
        return (f"current HR = {num(hr, 4)}: median new = {num(mc, 6)}/{num(hr, 4)} = "
                f"{num(float(effects.median_from_hazard_ratio(mc, hr)), 6)}")


def converter_for(d: Design) -> type[Converter] | None:
    """The converter that fits a design's effect, or None when the helper has none for it."""
    if d.id.startswith("chisquare"):
        return CellsToW
    if d.id == "anova-oneway":
        return MeansToF
    if d.family == "regression":
        return R2ToF2
    if d.effect == "hr":
        return MediansToHR
    if isinstance(d, PerProportion):
        return ProportionsToH
    if isinstance(d, PerSD) and d.effect == "delta" and d.standardized_name in ("d", "d_z"):
        return MeansToD
    return None


def _finite(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _rms(state: ExplorerState) -> float | None:
    a, b = state.value("sd1"), state.value("sd2")
    return math.sqrt((a * a + b * b) / 2) if _finite(a) and _finite(b) else None


# ---- the view --------------------------------------------------------------------------------
class _Field:
    """A labelled box (number or list) with its message line, in the look of the scenario controls."""

    def __init__(self, box: Box, on_change: Callable[[], None]) -> None:
        self.box = box
        label = pn.pane.HTML(f'<p class="pl-label">{html.escape(box.label)}</p>', stylesheets=[PANE_CSS],
                             margin=(6, 10, 0, 10))
        common = dict(sizing_mode="stretch_width", css_classes=[f"pl-helper-{box.key}"],
                      stylesheets=[WIDGET_CSS], margin=(2, 10))
        if box.kind == "list":
            self.input = pn.widgets.TextInput(value=box.start or "", **common)
        else:
            start = float(f"{box.start:.10g}") if _finite(box.start) else None
            self.input = pn.widgets.FloatInput(value=start, format="0[.][000000]", **common)
        self.message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10, 4, 10),
                                    css_classes=[f"pl-msg-helper-{box.key}"])
        self.input.param.watch(lambda e: on_change(), "value")
        self.layout = pn.Column(label, self.input, self.message, sizing_mode="stretch_width", margin=0)

    @property
    def value(self):
        return self.input.value

    def set_message(self, text: str | None) -> None:
        show_message(self.message, text)


class EffectHelper(pn.viewable.Viewer):
    """The “Work out the effect” card for one session; the page calls ``update()`` after each change."""

    def __init__(self, state: ExplorerState) -> None:
        super().__init__()
        self.state = state
        self._design_id: str | None = None
        self.converter: Converter | None = None
        self.fields: dict[str, _Field] = {}
        self._conversion: Conversion | None = None
        self._last_good: tuple[str, ...] = ()
        self.note = pn.pane.HTML("", stylesheets=[PANE_CSS], margin=(4, 10), css_classes=["pl-helper-note"])
        self.readout = pn.pane.HTML("", stylesheets=[PANE_CSS], margin=(4, 10), sizing_mode="stretch_width",
                                    css_classes=["pl-helper-readout"])
        self.use = pn.widgets.Button(**label_kw("Use this effect"), **primary_button(),
                                     css_classes=["pl-helper-use"], stylesheets=[WIDGET_CSS], margin=(6, 10))
        self.use.on_click(lambda e: self.apply())
        self.message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], margin=(0, 10, 4, 10),
                                    css_classes=["pl-msg-helper-use"])
        self._boxes = pn.Column(sizing_mode="stretch_width", margin=0)
        self.heading = pn.pane.HTML(card_heading("Work out the effect"), stylesheets=[PANE_CSS], margin=(2, 4),
                                    css_classes=["pl-helper-title"])
        self.card = pn.Card(header=self.heading, collapsed=True, sizing_mode="stretch_width",
                            margin=(8, 10), css_classes=["pl-effect-helper"], stylesheets=[PANE_CSS])
        self.card.param.watch(self._opened, "collapsed")
        fill_when_opened(self.card, [self.note, self._boxes, self.readout, self.use, self.message])
        self.update()

    def __panel__(self):
        return self.card

    # ---- building and refreshing ---------------------------------------------------------------
    def _build(self, d: Design) -> None:
        self._design_id = d.id
        kind = converter_for(d)
        self.converter = kind(d, self.state) if kind is not None else None
        if self.converter is None:
            self.fields = {}
            self._boxes.objects = []
            self.card.visible = False
            return
        self.heading.object = card_heading("Work out the effect", self.converter.title)
        self.note.object = f'<p class="pl-note">{html.escape(self.converter.note)}</p>'
        self._last_good = ()
        self.fields = {b.key: _Field(b, self._recompute) for b in self.converter.boxes}
        self._boxes.objects = [f.layout for f in self.fields.values()]
        self.card.visible = True

    def update(self) -> None:
        """Follow the state: a new design gets its converter; the read-out shows the current effect.

        While the card is closed the read-out is left alone and brought up to date when it opens:
        changing the text of a closed card made the browser lay out the whole page again, about
        100 ms per slider change (measured in Chromium).
        """
        d = self.state.current_design()
        if d.id != self._design_id:
            self._build(d)
        if self.converter is None:
            return
        if self.card.collapsed:
            self._stale = True
            return
        self._recompute()

    def _opened(self, event) -> None:
        if not event.new and getattr(self, "_stale", False):
            self._stale = False
            self._recompute()

    def values(self) -> dict[str, Any]:
        return {k: f.value for k, f in self.fields.items()}

    def _recompute(self) -> None:
        conv = self.converter
        if conv is None:
            return
        for f in self.fields.values():
            f.set_message(None)
        lines: list[str] = []
        stale = ""
        try:
            self._conversion = conv.convert(self.values())
            lines += self._conversion.lines
            self._last_good = self._conversion.lines
        except (HelperInputError, ValueError) as e:
            self._conversion = None
            self._show_error(e)
            if self._last_good:
                stale = f'<p class="pl-stale">{html.escape(STALE)}</p>'
                lines += self._last_good
        s = self.state.standardized()
        if s is not None:
            try:
                lines.append(conv.back(self.values(), s))
            except (HelperInputError, ValueError):
                pass   # the message is already under the box
        self.use.disabled = self._conversion is None
        rows = "".join(f"<p class=\"pl-helper-line\" style=\"margin:2px 0\">{html.escape(t)}</p>" for t in lines)
        self.readout.object = f'<div class="pl-helper-out">{stale}{rows}</div>'

    def _show_error(self, e: Exception) -> None:
        key = getattr(e, "field", None)
        target = self.fields.get(key) if key else None
        (target or next(iter(self.fields.values()))).set_message(str(e))

    def _set_message(self, text: str | None) -> None:
        self.message.object = f'<p class="pl-msg" role="alert">{html.escape(text)}</p>' if text else ""
        self.message.visible = bool(text)

    # ---- using the effect ----------------------------------------------------------------------
    def apply(self) -> bool:
        """Put the typed values into the scenario; False (state untouched) when they cannot be used.

        When the page was finding the smallest detectable effect, it finds power at the new effect.
        """
        self._recompute()
        conv, c = self.converter, self._conversion
        self._set_message(None)
        if conv is None or c is None:
            return False
        st, d = self.state, conv.d
        if c.standardized is not None:
            self._stop_finding_effect()
            st.set_standardized(c.standardized)
            return True
        new = {**{s.name: st.value(s.name) for s in d.params}, **c.values}
        try:
            for name, value in c.values.items():
                new[name] = d.param(name).check(value)
            d.check(_checked_others(d, new))
        except InvalidParameter as e:
            box = (c.sources or {}).get(e.field)
            msg = f"the design refuses this: {e}"
            if box in self.fields:
                self.fields[box].set_message(msg)
            else:
                self._set_message(msg)
            return False
        self._stop_finding_effect()
        st.values = {**st.values, **c.values}
        return True

    def _stop_finding_effect(self) -> None:
        """An effect put in by hand is an input: when the page was finding the effect, it now finds power."""
        if self.state.find == "effect":
            self.state.find = "power"


def _checked_others(d: Design, p: dict) -> dict:
    """The other parameters as the design's check sees them (refused ones are left to the controls)."""
    out = {}
    for spec in d.params:
        try:
            out[spec.name] = spec.check(p[spec.name])
        except InvalidParameter:
            out[spec.name] = spec.default
    return out
