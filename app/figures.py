"""The three linked views, each a Bokeh figure built once per session.

Updates replace ``ColumnDataSource.data`` (numpy arrays) and move annotations
in place; no figure is ever rebuilt and no pane swapped. The two power curves also hold a fixed
pool of ``MAX_PINS`` overlay lines for pinned scenarios (``set_pins``) and one translucent band
(``set_band``, for an uncertainty panel), all made once and hidden until used; their legend
above the frame names each pin and shows only while something is overlaid. Each figure carries
its own caption (design, direction, α, effect, spread, n, power, date, version) as one Bokeh
``Title`` inside the figure, so an exported PNG or SVG keeps it.
"""
from __future__ import annotations

import functools
import math
import threading

import numpy as np
import panel as pn
from bokeh.models import (ColumnDataSource, HoverTool, Label, Legend, LegendItem, Range1d, Span, Title, Whisker)
from bokeh.core.properties import value
from bokeh.plotting import figure

from .state import Snapshot
from .text import caption, effect_unit, effect_value, estimate_unit, num, with_unit
from .theme import BAND, CAPTION_PT, FONT, INK, PALETTE, PIN_STYLES, style_figure

__all__ = ["MAX_PINS", "DensityFigure", "EffectCurveFigure", "NCurveFigure"]

HEIGHT = 540
EMPTY = np.zeros(0)
MAX_PINS = len(PIN_STYLES)


def _base_figure(name: str, title: str, height: int = HEIGHT):
    fig = figure(name=name, height=height, sizing_mode="stretch_width", min_width=360,
                 tools="pan,box_zoom,reset,save", toolbar_location="right",
                 x_range=Range1d(0, 1), y_range=Range1d(0, 1), title=title)
    style_figure(fig)
    # one Title of four lines (one text to lay out and paint, not four)
    cap = Title(text=" ", text_font_size=CAPTION_PT, text_font=FONT, text_color=INK, text_font_style="normal",
                align="left", text_line_height=1.3, standoff=0, name=f"{name}-caption")
    fig.add_layout(cap, "below")
    return fig, cap


def _set_captions(cap: Title, snap: Snapshot) -> None:
    text = "\n".join(caption(snap.design, snap.result, snap.unit_name))
    if cap.text != text:
        cap.text = text


def _set_range(rng: Range1d, lo: float, hi: float, keep: float = 0.7, pad: float = 0.06,
               floor: float | None = None) -> None:
    """Show [lo, hi]; keep the current range while it holds the data and the data fill ``keep`` of it.

    The hysteresis keeps axes still while a slider is dragged (steadier to read, and the browser
    need not lay the axes out again on every step). A new range gets ``pad`` of room on each
    side (never below ``floor``).
    """
    if not (math.isfinite(lo) and math.isfinite(hi)) or lo >= hi:
        return
    start, end = rng.start, rng.end
    if start <= lo and hi <= end and (hi - lo) >= keep * (end - start):
        return
    m = pad * (hi - lo)
    lo, hi = lo - m, hi + m
    if floor is not None:
        lo = max(lo, floor)
    if start != lo or end != hi:
        rng.update(start=lo, end=hi)


def _legend(fig, items) -> Legend:
    legend = Legend(items=[LegendItem(label=label, renderers=r) for label, r in items],
                    orientation="horizontal", location="top_left", label_text_font_size="12.5pt",
                    label_text_font=FONT, label_text_color=INK, glyph_width=28, spacing=14,
                    background_fill_alpha=0.0, border_line_color=None, margin=2, padding=2)
    fig.add_layout(legend, "above")
    return legend


def _text(label) -> str:
    """A legend label as text (Bokeh may hold it as a ``value()`` spec)."""
    return str(getattr(label, "value", label))


def _on_loop(method):
    """Make a figure change on the session's event loop, even when a worker thread asks for it.

    Panel runs widget callbacks (a pin button, a record arriving, the uncertainty card's fields)
    in worker threads. A Panel object changed there is safe: Panel hands the change to the loop.
    These figures are plain Bokeh models, changed inside ``pn.io.hold``; but a hold that a worker
    thread joins ends when the loop's own batch (a slider's refresh) ends, and a change after that
    reached Bokeh outside the document lock ("_pending_writes should be non-None", seen in a
    browser test importing a record with pins). Off the loop, in a served session, the change is
    queued for the loop's next tick (Bokeh's thread-safe way in); otherwise it runs at once.
    """
    @functools.wraps(method)
    def wrapper(self, *args, **kwargs):
        doc = self.fig.document
        if doc is not None and doc.session_context is not None:
            loop_thread = pn.state._thread_id_.get(doc, threading.main_thread().ident)
            if threading.get_ident() != loop_thread:
                doc.add_next_tick_callback(functools.partial(method, self, *args, **kwargs))
                return None
        return method(self, *args, **kwargs)
    return wrapper


class _Overlays:
    """Pinned curves and one band on a power figure: renderers made once, data set in place."""

    def _make_overlays(self, fig, main_line, x: str) -> None:
        self._x = x
        self.src_band = ColumnDataSource({x: EMPTY, "lo": EMPTY, "hi": EMPTY}, name=f"{fig.name}-band")
        self.band = fig.varea(x, "lo", "hi", source=self.src_band, fill_color=BAND, fill_alpha=0.25,
                              visible=False, level="underlay", name=f"{fig.name}-band-area")
        self.src_pins = [ColumnDataSource({x: EMPTY, "power": EMPTY}, name=f"{fig.name}-pin-{i}")
                         for i in range(MAX_PINS)]
        self.pin_lines = [fig.line(x, "power", source=src, line_color=colour, line_dash=dash, line_width=3,
                                   visible=False, name=f"{fig.name}-pin-line-{i}")
                          for i, (src, (colour, dash)) in enumerate(zip(self.src_pins, PIN_STYLES))]
        self._pin_keys: list = [None] * MAX_PINS
        # each pin's own operating point, in its colour (one renderer for all of them)
        self.src_pin_points = ColumnDataSource({x: EMPTY, "power": EMPTY, "colour": np.zeros(0, dtype=object)},
                                               name=f"{fig.name}-pin-points")
        self.pin_points = fig.scatter(x, "power", source=self.src_pin_points, marker="square", size=12,
                                      fill_color="colour", line_color="white", line_width=1.5,
                                      name=f"{fig.name}-pin-points")
        self._point_key = None
        self.overlay_legend = Legend(
            items=[LegendItem(label="current scenario", renderers=[main_line]),
                   LegendItem(label="band", renderers=[self.band], visible=False),
                   *[LegendItem(label=f"pin {i + 1}", renderers=[r], visible=False)
                     for i, r in enumerate(self.pin_lines)]],
            orientation="horizontal", ncols=3, location="top_left", label_text_font_size="12.5pt",
            label_text_font=FONT, label_text_color=INK, glyph_width=34, spacing=12, label_standoff=6,
            background_fill_alpha=0.0, border_line_color=None, margin=2, padding=2, visible=False,
            name=f"{fig.name}-legend")
        fig.add_layout(self.overlay_legend, "above")

    def _legend_visible(self) -> None:
        show = any(item.visible for item in self.overlay_legend.items[1:])
        if self.overlay_legend.visible != show:
            self.overlay_legend.visible = show

    @_on_loop
    def set_pins(self, curves) -> None:
        """Overlay pinned curves: ``{slot: (name, x, power[, (x0, power0)])}``, slot 0..MAX_PINS−1 fixing
        colour and dash; the optional ``(x0, power0)`` is the pin's own point, marked in its colour.

        Slots left out are hidden; a slot whose name and arrays are the ones already shown is not sent again.
        """
        points = sorted((slot, e[3]) for slot, e in curves.items() if len(e) > 3 and e[3] is not None)
        key = tuple((slot, float(a), float(b)) for slot, (a, b) in points)
        if key != self._point_key:
            self.src_pin_points.data = {self._x: np.array([k[1] for k in key]),
                                        "power": np.array([k[2] for k in key]),
                                        "colour": np.array([PIN_STYLES[k[0]][0] for k in key], dtype=object)}
            self._point_key = key
        for slot in range(MAX_PINS):
            item = self.overlay_legend.items[2 + slot]
            entry = curves.get(slot)
            if entry is None:
                if self.pin_lines[slot].visible:
                    self.pin_lines[slot].visible = False
                    item.visible = False
                    self._pin_keys[slot] = None
                continue
            name, xs, ys = entry[:3]
            key = (name, id(xs), id(ys))
            if self._pin_keys[slot] != key:
                self.src_pins[slot].data = {self._x: np.asarray(xs, dtype=float), "power": np.asarray(ys, dtype=float)}
                if _text(item.label) != name:
                    item.label = value(name)   # a plain string would be read as a column name
                self._pin_keys[slot] = key
            if not self.pin_lines[slot].visible:
                self.pin_lines[slot].visible = True
                item.visible = True
        self._legend_visible()

    def pin_names(self) -> list[str]:
        """The legend names of the pinned curves shown, in slot order."""
        return [_text(item.label) for item in self.overlay_legend.items[2:] if item.visible]

    def legend_labels(self) -> list[str]:
        """Every entry the overlay legend shows (empty while it is hidden)."""
        if not self.overlay_legend.visible:
            return []
        return [_text(item.label) for item in self.overlay_legend.items if item.visible]

    @_on_loop
    def _set_band(self, x, lo, hi, label: str) -> None:
        item = self.overlay_legend.items[1]
        if x is None:
            if self.band.visible:
                self.band.visible = False
                item.visible = False
                self.src_band.data = {self._x: EMPTY, "lo": EMPTY, "hi": EMPTY}
            self._legend_visible()
            return
        xs, a, b = (np.asarray(v, dtype=float).ravel() for v in (x, lo, hi))
        if not (xs.shape == a.shape == b.shape):
            raise ValueError(f"band arrays must have one length, got {xs.size}, {a.size} and {b.size}")
        self.src_band.data = {self._x: xs, "lo": a, "hi": b}
        if _text(item.label) != label:
            item.label = value(label)
        self.band.visible = True
        item.visible = True
        self._legend_visible()


class _FigureView(pn.viewable.Viewer):
    """A Bokeh figure held in one pane for the life of the session."""

    fig = None
    min_width = 560

    def __panel__(self):
        return self._pane

    def set_caption(self, snap: Snapshot) -> None:
        """Write the scenario under the figure (part of a refresh's details: see ``Explorer.refresh``)."""
        _set_captions(self.captions, snap)

    def _finish(self) -> None:
        self._pane = pn.pane.Bokeh(self.fig, sizing_mode="stretch_width", margin=(6, 6),
                                   css_classes=[f"pl-fig-{self.fig.name}"], min_width=self.min_width)


class DensityFigure(_FigureView):
    """Null and alternative sampling distributions, rejection region and power shaded."""

    def __init__(self) -> None:
        super().__init__()
        fig, self.captions = _base_figure("densities", "Sampling distributions under H0 and H1")
        self.fig = fig
        self.src_curve = ColumnDataSource(dict(x=EMPTY, null=EMPTY, alt=EMPTY), name="density-curve")
        self.src_tail = [ColumnDataSource(dict(x=EMPTY, null=EMPTY, alt=EMPTY),
                                          name=f"density-tail-{side}") for side in ("lower", "upper")]
        # exact designs: bars of the pmf, H0 left of each value and H1 right; inside the rejection
        # region the H0 bars are hatched vermillion and the H1 bars orange
        self.src_bars = {key: ColumnDataSource(dict(x=EMPTY, x0=EMPTY, null=EMPTY, alt=EMPTY, width=EMPTY),
                                               name=f"density-bars-{key}")
                         for key in ("null", "null-reject", "alt", "alt-reject")}
        pw, rj = [], []
        for src in self.src_tail:
            pw.append(fig.varea(x="x", y1=0, y2="alt", source=src, fill_color=PALETTE["power"], fill_alpha=0.55))
            rj.append(fig.varea(x="x", y1=0, y2="null", source=src, fill_color=PALETTE["reject"], fill_alpha=0.18,
                                hatch_pattern="/", hatch_color=PALETTE["reject"], hatch_alpha=0.9,
                                hatch_scale=9, hatch_weight=1.6))
        null_line = fig.line("x", "null", source=self.src_curve, line_color=PALETTE["null"], line_width=3,
                             line_dash="dashed", name="null-line")
        alt_line = fig.line("x", "alt", source=self.src_curve, line_color=PALETTE["alt"], line_width=3.5,
                            name="alt-line")
        bars = {
            "null": fig.vbar(x="x0", top="null", width="width", source=self.src_bars["null"],
                             fill_color=PALETTE["null_fill"], line_color=PALETTE["null"], name="null-bars"),
            "null-reject": fig.vbar(x="x0", top="null", width="width", source=self.src_bars["null-reject"],
                                    fill_color=PALETTE["reject"], fill_alpha=0.25, line_color=PALETTE["reject"],
                                    hatch_pattern="/", hatch_color=PALETTE["reject"], hatch_scale=7,
                                    hatch_weight=1.4, name="null-reject-bars"),
            "alt": fig.vbar(x="x0", top="alt", width="width", source=self.src_bars["alt"],
                            fill_color=PALETTE["alt"], line_color=PALETTE["alt"], name="alt-bars"),
            "alt-reject": fig.vbar(x="x0", top="alt", width="width", source=self.src_bars["alt-reject"],
                                   fill_color=PALETTE["power"], fill_alpha=0.8, line_color="#8A5F00",
                                   name="alt-reject-bars"),
        }
        self._legend_renderers = {
            False: [[null_line], [alt_line], rj, pw],
            True: [[bars["null"]], [bars["alt"]], [bars["null-reject"]], [bars["alt-reject"]]],
        }
        self.crit_lines = [Span(location=0, dimension="height", line_color=PALETTE["reject"], line_width=2.5,
                                line_dash="dotdash", visible=False) for _ in range(2)]
        # rotated, on the side toward the null's centre, so the power area stays clear
        self.crit_labels = [Label(x=0, y=6, y_units="screen", text="", text_font_size="12.5pt", text_font=FONT,
                                  text_color="#A34400", text_font_style="bold", angle=math.pi / 2,
                                  text_baseline="top" if i == 0 else "bottom", x_offset=4 if i == 0 else -4,
                                  background_fill_color="white", background_fill_alpha=0.85,
                                  visible=False, name=f"crit-label-{i}") for i in range(2)]
        for obj in (*self.crit_lines, *self.crit_labels):
            fig.add_layout(obj)
        self.legend = _legend(fig, [("H0 (null)", [null_line]), ("H1 (alternative)", [alt_line]),
                                    ("rejection region (α under H0)", rj), ("power (H1 there)", pw)])
        self._discrete_legend = False
        hover_lines = HoverTool(renderers=[alt_line], mode="vline", tooltips=[
            ("x", "@x{0.0000}"), ("H0 density", "@null{0.0000}"), ("H1 density", "@alt{0.0000}")])
        hover_bars = HoverTool(renderers=list(bars.values()), tooltips=[
            ("value", "@x{0.0000}"), ("P under H0", "@null{0.00000}"), ("P under H1", "@alt{0.00000}")])
        fig.add_tools(hover_lines, hover_bars)
        fig.yaxis.axis_label = "density"
        self._finish()

    def update(self, snap: Snapshot) -> None:
        dens = snap.densities
        d = snap.design
        x, f0, f1 = (np.asarray(a, dtype=float) for a in (dens.x, dens.null, dens.alt))
        lo, hi = snap.region
        if dens.scale == "data":
            self.fig.xaxis.axis_label = with_unit(dens.x_label, estimate_unit(d, snap.unit_name))
        else:
            self.fig.xaxis.axis_label = dens.x_label
        if self._discrete_legend != dens.discrete:
            for item, renderers in zip(self.legend.items, self._legend_renderers[dens.discrete]):
                item.renderers = renderers
            self._discrete_legend = dens.discrete
        if dens.discrete:
            self._update_discrete(x, f0, f1, lo, hi)
            self.fig.yaxis.axis_label = "probability"
        else:
            self._update_continuous(x, f0, f1, lo, hi, snap.interval)
            self.fig.yaxis.axis_label = "density"
        sym = f" {d.statistic_symbol}" if dens.scale == "statistic" else ""
        for i, c in enumerate((lo, hi)):
            ok = c is not None and math.isfinite(c)
            self.crit_lines[i].visible = ok
            self.crit_labels[i].visible = ok
            if ok:
                where = float(c)
                if dens.discrete and x.size > 1:   # between the last kept and the first rejected value
                    half = 0.5 * float(np.min(np.diff(x)))
                    where += half if i == 0 else -half
                self.crit_lines[i].location = where
                self.crit_labels[i].x = where
                self.crit_labels[i].text = f"critical{sym} = {num(c, 4)}"
                # inside an interval region the labels sit outside it, away from the shading
                self.crit_labels[i].text_baseline = ("bottom" if i == 0 else "top") if snap.interval else \
                    ("top" if i == 0 else "bottom")
                self.crit_labels[i].x_offset = (-4 if i == 0 else 4) if snap.interval else (4 if i == 0 else -4)

    def _clear_bars(self) -> None:
        for src in self.src_bars.values():
            if len(src.data["x"]):
                src.data = dict(x=EMPTY, x0=EMPTY, null=EMPTY, alt=EMPTY, width=EMPTY)

    def _update_continuous(self, x, f0, f1, lo, hi, interval: bool = False) -> None:
        self._clear_bars()
        self.src_curve.data = dict(x=x, null=f0, alt=f1)
        if interval:   # the test rejects inside [lo, hi] (empty when lo > hi)
            empty = dict(x=EMPTY, null=EMPTY, alt=EMPTY)
            if lo is not None and hi is not None and lo < hi:
                inside = (x > lo) & (x < hi)
                xs = np.concatenate(([lo], x[inside], [hi]))
                self.src_tail[0].data = dict(x=xs, null=np.interp(xs, x, f0), alt=np.interp(xs, x, f1))
            else:
                self.src_tail[0].data = empty
            self.src_tail[1].data = empty
            lo = hi = None
        for i, (c, side) in enumerate(((lo, "lower"), (hi, "upper"))):
            if interval:
                break
            if c is None or not math.isfinite(c):
                self.src_tail[i].data = dict(x=EMPTY, null=EMPTY, alt=EMPTY)
                continue
            mask = x <= c if side == "lower" else x >= c
            xs = np.concatenate(([c], x[mask])) if side == "upper" else np.concatenate((x[mask], [c]))
            n0 = np.interp(xs, x, f0)
            n1 = np.interp(xs, x, f1)
            self.src_tail[i].data = dict(x=xs, null=n0, alt=n1)
        top = float(np.nanmax(np.concatenate((f0, f1)))) if x.size else 1.0
        _set_range(self.fig.x_range, float(x.min()), float(x.max()))
        _set_range(self.fig.y_range, 0.0, top * 1.08, floor=0.0)

    def _update_discrete(self, x, f0, f1, lo, hi) -> None:
        if len(self.src_curve.data["x"]):
            self.src_curve.data = dict(x=EMPTY, null=EMPTY, alt=EMPTY)
        for src in self.src_tail:
            if len(src.data["x"]):
                src.data = dict(x=EMPTY, null=EMPTY, alt=EMPTY)
        step = float(np.min(np.diff(x))) if x.size > 1 else 1.0
        reject = np.zeros(x.shape, dtype=bool)
        if lo is not None and math.isfinite(lo):
            reject |= x <= lo + 1e-9 * step
        if hi is not None and math.isfinite(hi):
            reject |= x >= hi - 1e-9 * step
        w = np.full(x.shape, 0.42 * step)
        for key, mask, shift in (("null", ~reject, -0.21), ("null-reject", reject, -0.21),
                                 ("alt", ~reject, 0.21), ("alt-reject", reject, 0.21)):
            self.src_bars[key].data = dict(x=x[mask], x0=x[mask] + shift * step, null=f0[mask], alt=f1[mask],
                                           width=w[mask])
        top = float(np.nanmax(np.concatenate((f0, f1)))) if x.size else 1.0
        _set_range(self.fig.x_range, float(x.min() - step), float(x.max() + step))
        _set_range(self.fig.y_range, 0.0, top * 1.08, floor=0.0)


class EffectCurveFigure(_Overlays, _FigureView):
    """Power against the effect at the current n and α (with pinned curves and a band, when set)."""

    def __init__(self) -> None:
        super().__init__()
        fig, self.captions = _base_figure("power-effect", "Power against effect size")
        self.fig = fig
        self.src_curve = ColumnDataSource(dict(x=EMPTY, power=EMPTY, std=EMPTY), name="effect-curve")
        self.src_point = ColumnDataSource(dict(x=EMPTY, power=EMPTY, std=EMPTY), name="effect-point")
        line = fig.line("x", "power", source=self.src_curve, line_color=PALETTE["alt"], line_width=3.5,
                        name="effect-line")
        self.target = Span(location=0.8, dimension="width", line_color=PALETTE["target"], line_width=2.5,
                           line_dash="dashed")
        self.alpha_line = Span(location=0.05, dimension="width", line_color=PALETTE["null"], line_width=1.5,
                               line_dash="dotted")
        self.detect = [Span(location=0, dimension="height", line_color=PALETTE["detect"], line_width=2.5,
                            line_dash="dashdot", visible=False) for _ in range(2)]
        self.detect_labels = [Label(x=0, y=0.04, text="", text_font_size="12.5pt", text_font=FONT,
                                    text_color="#8E3B6D", text_font_style="bold", background_fill_color="white",
                                    background_fill_alpha=0.85, visible=False, angle=math.pi / 2,
                                    text_baseline="bottom" if i == 0 else "top",
                                    x_offset=-4 if i == 0 else 4, name=f"detect-label-{i}")
                              for i in range(2)]
        self.target_label = Label(x=0, y=0.8, x_units="screen", x_offset=6, y_offset=4, text="target power",
                                  text_font_size="12.5pt", text_font=FONT, text_color="#006B4E",
                                  background_fill_color="white", background_fill_alpha=0.8)
        for obj in (self.target, self.alpha_line, *self.detect, *self.detect_labels, self.target_label):
            fig.add_layout(obj)
        point = fig.scatter("x", "power", source=self.src_point, size=15, marker="circle",
                            fill_color=PALETTE["current"], line_color="white", line_width=2, name="effect-now")
        fig.add_tools(HoverTool(renderers=[line], mode="vline", tooltips=[
            ("effect", "@x{0.0000}"), ("standardized", "@std{0.000}"), ("power", "@power{0.0000}")]))
        fig.add_tools(HoverTool(renderers=[point], tooltips=[
            ("current effect", "@x{0.0000}"), ("power", "@power{0.0000}")]))
        self._make_overlays(fig, line, "x")
        fig.yaxis.axis_label = "power"
        self._finish()

    def set_band(self, x, lo=None, hi=None, label: str = "") -> None:
        """Shade power between ``lo`` and ``hi`` at each effect ``x`` (legend ``label``); ``set_band(None)`` clears."""
        self._set_band(x, lo, hi, label)

    def update(self, snap: Snapshot) -> None:
        d, res, cur = snap.design, snap.result, snap.effect_curve
        x = np.asarray(cur.x, dtype=float)
        p = {**res.solved.params}
        with np.errstate(all="ignore"):
            std = np.broadcast_to(np.asarray(d.standardized({**p, d.effect: x}), dtype=float), x.shape)
        self.src_curve.data = dict(x=x, power=np.asarray(cur.power, dtype=float), std=np.array(std))
        # one point: plain lists travel inside the message (arrays become separate binary frames)
        self.src_point.data = dict(x=[float(res.effect)], power=[float(res.power)],
                                   std=[float(res.standardized_effect)])
        unit = effect_unit(d, snap.unit_name)
        self.fig.xaxis.axis_label = with_unit(f"effect: {d.param(d.effect).label}", unit)
        self.target.location = res.solved.target_power
        self.target_label.y = res.solved.target_power
        self.target_label.text = f"target power {num(res.solved.target_power, 3)}"
        self.alpha_line.location = res.alpha
        for i, side in enumerate(("lower", "upper")):
            v = res.detectable.get(side)
            ok = v is not None and math.isfinite(v)
            self.detect[i].visible = ok
            self.detect_labels[i].visible = ok
            if ok:
                self.detect[i].location = v
                self.detect_labels[i].x = v
                self.detect_labels[i].text = f"detectable {effect_value(d, p, v, 3)}"
        lo = float(min(x.min(), res.effect)) if x.size else 0.0
        hi = float(max(x.max(), res.effect)) if x.size else 1.0
        _set_range(self.fig.x_range, lo, hi, pad=0.03)
        _set_range(self.fig.y_range, 0.0, 1.04, keep=1.0, pad=0.0)


class NCurveFigure(_Overlays, _FigureView):
    """Power against the sample size at the current effect and α (with pinned curves and a band, when set)."""

    def __init__(self) -> None:
        super().__init__()
        fig, self.captions = _base_figure("power-n", "Power against sample size")
        self.fig = fig
        self.src_curve = ColumnDataSource(dict(n=EMPTY, power=EMPTY), name="n-curve")
        self.src_point = ColumnDataSource(dict(n=EMPTY, power=EMPTY), name="n-point")
        line = fig.line("n", "power", source=self.src_curve, line_color=PALETTE["alt"], line_width=3.5,
                        name="n-line")
        self.target = Span(location=0.8, dimension="width", line_color=PALETTE["target"], line_width=2.5,
                           line_dash="dashed")
        self.required = Span(location=0, dimension="height", line_color=PALETTE["detect"], line_width=2.5,
                             line_dash="dashdot", visible=False)
        self.required_label = Label(x=0, y=0.04, x_offset=4, text="", text_font_size="12.5pt", text_font=FONT,
                                    text_color="#8E3B6D", text_font_style="bold", background_fill_color="white",
                                    background_fill_alpha=0.85, visible=False, angle=math.pi / 2,
                                    text_baseline="top", name="required-label")
        self.current = Span(location=0, dimension="height", line_color=PALETTE["current"], line_width=1.5,
                            line_dash="dotted")
        self.target_label = Label(x=0, y=0.8, x_units="screen", x_offset=6, y_offset=4, text="target power",
                                  text_font_size="12.5pt", text_font=FONT, text_color="#006B4E",
                                  background_fill_color="white", background_fill_alpha=0.8)
        for obj in (self.target, self.required, self.required_label, self.current, self.target_label):
            fig.add_layout(obj)
        point = fig.scatter("n", "power", source=self.src_point, size=15, marker="circle",
                            fill_color=PALETTE["current"], line_color="white", line_width=2, name="n-now")
        fig.add_tools(HoverTool(renderers=[line], mode="vline", tooltips=[
            ("n", "@n{0}"), ("power", "@power{0.0000}")]))
        fig.add_tools(HoverTool(renderers=[point], tooltips=[("current n", "@n{0}"), ("power", "@power{0.0000}")]))
        # simulated power at the n of each finished run, with its 95% Wilson interval
        self.src_sim = ColumnDataSource(dict(n=EMPTY, power=EMPTY, lower=EMPTY, upper=EMPTY), name="n-sim")
        fig.add_layout(Whisker(base="n", lower="lower", upper="upper", source=self.src_sim,
                               line_color=PALETTE["power"], line_width=2.5, name="n-sim-interval"))
        sim = fig.scatter("n", "power", source=self.src_sim, size=13, marker="diamond",
                          fill_color=PALETTE["power"], line_color=INK, line_width=1.5, name="n-sim-points")
        fig.add_tools(HoverTool(renderers=[sim], tooltips=[("n", "@n{0}"), ("simulated power", "@power{0.0000}"),
                                                           ("95% interval", "@lower{0.0000} to @upper{0.0000}")]))
        # inside the frame (right, below the curve), so the figure keeps the height of its neighbour
        self._sim_legend = Legend(items=[LegendItem(label="simulated power, 95% interval", renderers=[sim])],
                                  location="center_right", label_text_font_size="12.5pt", label_text_font=FONT,
                                  label_text_color=INK, background_fill_alpha=0.85, border_line_color=None,
                                  visible=False)
        fig.add_layout(self._sim_legend)
        self._make_overlays(fig, line, "n")
        fig.yaxis.axis_label = "power"
        self._finish()

    def set_band(self, n, lo=None, hi=None, label: str = "") -> None:
        """Shade power between ``lo`` and ``hi`` at each sample size ``n`` (legend ``label``); ``set_band(None)`` clears."""
        self._set_band(n, lo, hi, label)

    @_on_loop
    def set_simulated(self, points) -> None:
        """Show simulated (n, power, low, high) points; none hides them."""
        arr = np.asarray(points, dtype=float).reshape(-1, 4)
        if not len(arr) and not len(self.src_sim.data["n"]):
            return
        self.src_sim.data = dict(n=arr[:, 0], power=arr[:, 1], lower=arr[:, 2], upper=arr[:, 3])
        self._sim_legend.visible = bool(len(arr))

    def update(self, snap: Snapshot) -> None:
        d, res, cur = snap.design, snap.result, snap.n_curve
        x = np.asarray(cur.x, dtype=float)
        self.src_curve.data = dict(n=x, power=np.asarray(cur.power, dtype=float))
        self.src_point.data = dict(n=[float(res.n)], power=[float(res.power)])
        self.fig.xaxis.axis_label = f"sample size n ({d.n.unit})"
        self.target.location = res.solved.target_power
        self.target_label.y = res.solved.target_power
        self.target_label.text = f"target power {num(res.solved.target_power, 3)}"
        self.current.location = float(res.n)
        ss = res.sample_size
        ok = ss is not None
        self.required.visible = ok
        self.required_label.visible = ok
        if ok:
            self.required.location = float(ss.n)
            self.required_label.x = float(ss.n)
            self.required_label.text = f"required n = {ss.n}"
        hi = float(max(x.max(), res.n)) if x.size else 10.0
        lo = float(x.min()) if x.size else 0.0
        _set_range(self.fig.x_range, lo, hi, pad=0.03, floor=lo)
        _set_range(self.fig.y_range, 0.0, 1.04, keep=1.0, pad=0.0)
