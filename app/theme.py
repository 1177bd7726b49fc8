"""Palette, type sizes and page CSS of the explorer.

Colours come from the Okabe–Ito set (safe for the common colour-vision
deficiencies); every pair that must be told apart also differs in line style,
hatching or lightness, so that a grey-scale print keeps them apart.
"""
from __future__ import annotations

import panel as pn
from bokeh.models import Div

__all__ = ["BAND", "CSS", "FONT", "INK", "PALETTE", "PIN_STYLES", "LiveHTML", "button_look", "fill_when_opened",
           "keep_shown", "label_kw", "page_models", "page_value", "style_figure"]

PALETTE = {
    "null": "#6E6E6E",         # neutral grey: the null hypothesis
    "null_fill": "#BDBDBD",
    "alt": "#0072B2",          # blue: the alternative
    "reject": "#D55E00",       # vermillion: rejection region (area α under the null), hatched
    "power": "#E69F00",        # orange: power (area under the alternative over the rejection region)
    "target": "#009E73",       # bluish green: target power
    "current": "#000000",      # black: the current point
    "detect": "#CC79A7",       # reddish purple: smallest detectable effect / required n
    "grid": "#E4E4E4",
}
#: pinned scenarios on the power curves: (colour, dash) per slot. Vermillion and sky blue from the
#: Okabe–Ito set, indigo, olive, wine and teal from Paul Tol's colour-blind-safe "muted" set — none is
#: the blue of the current curve, the green of the target or the purple of the required n, and each
#: has its own dash so that a grey-scale print keeps them apart.
PIN_STYLES = (
    ("#D55E00", "dashed"),
    ("#332288", "dotdash"),
    ("#999933", [2, 3]),
    ("#882255", "dashdot"),
    ("#56B4E9", [12, 4]),
    ("#44AA99", [12, 3, 3, 3, 3, 3]),
)
BAND = "#0072B2"      # the current curve's blue, translucent: uncertainty band around it
INK = "#1A1A1A"
FONT = "'DejaVu Sans', 'Segoe UI', Helvetica, Arial, sans-serif"
AXIS_LABEL_PT = "15pt"
TICK_PT = "13pt"
TITLE_PT = "16pt"
CAPTION_PT = "12pt"


def style_figure(fig) -> None:
    """Large, high-contrast type and quiet grid lines for a projector."""
    fig.background_fill_color = "white"
    fig.border_fill_color = "white"
    fig.outline_line_color = None
    fig.title.text_font_size = TITLE_PT
    fig.title.text_color = INK
    fig.title.text_font = FONT
    for axis in (*fig.xaxis, *fig.yaxis):
        axis.axis_label_text_font_size = AXIS_LABEL_PT
        axis.axis_label_text_font_style = "normal"
        axis.axis_label_text_color = INK
        axis.axis_label_text_font = FONT
        axis.major_label_text_font_size = TICK_PT
        axis.major_label_text_color = INK
        axis.major_label_text_font = FONT
        axis.axis_line_color = INK
        axis.major_tick_line_color = INK
        axis.minor_tick_line_color = None
    for grid in (*fig.xgrid, *fig.ygrid):
        grid.grid_line_color = PALETTE["grid"]
    fig.toolbar.logo = None


# Custom properties inherit into the widgets' shadow roots, so these reach Bokeh's widgets.
CSS = f"""
:root, :host {{
  --bokeh-font-size: 16px;
  --bokeh-base-font: {FONT};
  --pl-ink: {INK};
  --pl-muted: #3F3F3F;
  --pl-warn-bg: #FFF4E0;
  --pl-warn-edge: {PALETTE["reject"]};
  --pl-error: #B00020;
}}
body {{
  font-family: {FONT};
  font-size: 16px;
  color: var(--pl-ink);
  background: #FAFAFA;
  margin: 0;
}}
"""

# Style sheets handed to individual components (they live in shadow roots).
PANE_CSS = f"""
:host {{ font-family: {FONT}; color: {INK}; font-size: 16px; line-height: 1.4; }}
h1 {{ font-size: 28px; margin: 4px 0 2px 0; }}
h2 {{ font-size: 20px; margin: 8px 0 4px 0; }}
.pl-sub {{ color: #3F3F3F; font-size: 16px; margin: 0; }}
.pl-cautions {{ background: #FFF4E0; border-left: 6px solid {PALETTE["reject"]}; padding: 8px 14px;
  margin: 6px 0; font-size: 16px; }}
.pl-cautions p {{ margin: 4px 0; }}
.pl-demo {{ background: #EAF3FA; border-left: 6px solid {PALETTE["alt"]}; padding: 6px 14px; margin: 6px 0; }}
.pl-label {{ font-weight: 600; font-size: 16px; margin: 0; }}
.pl-unit {{ font-weight: 400; color: #3F3F3F; }}
.pl-found {{ font-size: 18px; font-weight: 700; padding: 6px 10px; background: #F0F0F0;
  border: 2px dashed #6E6E6E; border-radius: 4px; margin: 0; }}
.pl-found .pl-tag {{ font-size: 14px; font-weight: 400; color: #3F3F3F; }}
.pl-msg {{ color: #B00020; font-weight: 600; font-size: 15px; margin: 0; }}
.pl-msg::before {{ content: "⚠ "; }}
table.pl-readout {{ border-collapse: collapse; width: 100%; font-size: 17px; }}
table.pl-readout th {{ text-align: left; font-weight: 600; padding: 3px 12px 3px 0; vertical-align: top;
  white-space: nowrap; }}
table.pl-readout td {{ padding: 3px 0; vertical-align: top; }}
table.pl-readout td.pl-big {{ font-size: 24px; font-weight: 700; }}
.pl-stale {{ color: #B00020; font-weight: 600; margin: 0 0 6px 0; }}
.pl-note {{ color: #3F3F3F; font-size: 15px; }}
table.pl-working {{ border-collapse: collapse; width: 100%; font-size: 16px; }}
table.pl-working td {{ padding: 4px 10px 4px 0; border-bottom: 1px solid #DDDDDD; vertical-align: top; }}
table.pl-working td.pl-step {{ font-weight: 600; white-space: nowrap; }}
table.pl-working td.pl-num {{ font-family: 'DejaVu Sans Mono', monospace; white-space: nowrap; }}
"""

WIDGET_CSS = """
:host { --font-size: 16px; font-size: 16px; }
.bk-input, select, input { font-size: 16px; min-height: 34px; }
.bk-btn { font-size: 16px; }
label, .bk-input-group label { font-size: 16px; }
"""

SLIDER_CSS = """
:host { --font-size: 16px; }
.noUi-handle { width: 26px !important; height: 26px !important; right: -13px !important; top: -9px !important;
  border: 2px solid #1A1A1A; border-radius: 50%; }
.noUi-handle:focus { outline: 3px solid #0072B2; outline-offset: 2px; }
.noUi-handle::before, .noUi-handle::after { display: none; }
.noUi-connect { background: #0072B2; }
"""


def button_look() -> dict:
    """Keyword arguments for outlined primary buttons (Panel 1.9 renamed them)."""
    import panel as pn

    if "variant" in pn.widgets.RadioButtonGroup.param:
        return {"color": "primary", "variant": "outline"}
    return {"button_type": "primary", "button_style": "outline"}


def label_kw(text: str) -> dict:
    """The keyword for a widget's visible label (``label`` from Panel 1.9, ``name`` before)."""
    import panel as pn

    return {"label": text} if "label" in pn.widgets.TextInput.param else {"name": text}


#: the look of the page's collapsible cards (readable type). A card given ``header_css_classes`` must
#: keep "card-header" in them: without it Panel's header is no longer a row and the open/close arrow
#: sits on a line of its own above the title.
CARD_CSS = ":host { font-size: 17px; } .card-title { font-size: 18px; font-weight: 700; }"


def fill_when_opened(card, objects: list) -> None:
    """Give a closed ``card`` its ``objects`` only when it is first opened (at once if it is open).

    A closed Panel card still builds all of its contents in the browser, only hidden: the three
    closed cards of the page held some 1,500 of its elements. Every element adds to the page's
    first build and to each style recalculation while a slider is dragged. The Python objects
    exist from the start, so the card's logic works the same whether it was opened or not.
    """
    if not card.collapsed:
        card.objects = list(objects)
        return
    card.objects = []

    def opened(event) -> None:
        if not event.new and not card.objects:
            card.objects = list(objects)
    card.param.watch(opened, "collapsed")


def keep_shown(column, objects: list) -> None:
    """Hold in ``column`` only those of ``objects`` that are ``visible``, in order.

    A hidden Panel object is still built in the browser; the page's six empty pin rows and six
    empty justification slots came to some 1,400 hidden elements. Only a list that differs is sent.
    """
    shown = [o for o in objects if o.visible]
    if [id(o) for o in column.objects] != [id(o) for o in shown]:
        column.objects = shown


class LiveHTML(pn.viewable.Viewer):
    """HTML whose text changes at every slider step: a plain Bokeh ``Div``, its text set in place.

    Changing a Panel HTML pane re-derives all of the pane's properties on the server (about 4 ms
    a change here) and runs Panel's script handling in the browser; the Div changes one property.
    ``object`` reads and writes the HTML like a pane's.
    """

    def __init__(self, css_classes: list[str], margin=(4, 10), css: str = PANE_CSS) -> None:
        super().__init__()
        self.div = Div(text="", css_classes=["pl-live", *css_classes], stylesheets=[css],
                       sizing_mode="stretch_width", margin=margin)
        self._pane = pn.pane.Bokeh(self.div, sizing_mode="stretch_width", margin=0)

    def __panel__(self):
        return self._pane

    @property
    def object(self) -> str:
        return self.div.text

    @object.setter
    def object(self, text: str) -> None:
        if self.div.text != text:
            self.div.text = text


def page_models(widget) -> list:
    """The Bokeh models a Panel widget has made (one per page it is shown in)."""
    return [model for model, _ in list(widget._models.values())]


def page_value(widget, prop: str = "value"):
    """A widget's property as the page sent it last (None before any model exists).

    Panel hands each change to a worker thread (after its debounce, a click at once), so
    changes can be handled out of order; the widget's Bokeh model is set on the server's event
    loop in the order the page's messages arrive, so it holds the newest.
    """
    for model in page_models(widget):
        v = getattr(model, prop, None)
        if v is not None:
            return v
    return None


def show_message(pane, text: str | None) -> None:
    """Show ``text`` as a field's message in its HTML ``pane`` (hidden when None or empty).

    Only what changed is set, so a message that stays the same sends nothing to the browser.
    """
    import html

    obj = f'<p class="pl-msg" role="alert">{html.escape(text)}</p>' if text else ""
    if pane.object != obj:
        pane.object = obj
    if pane.visible != bool(text):
        pane.visible = bool(text)
