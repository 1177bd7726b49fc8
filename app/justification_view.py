"""Where the assumed effect comes from, and the sample-size justification of each scenario.

* ``BasisField`` — a select "Basis of the assumed effect" (smallest difference that matters, pilot
  study, published studies, the observed result of this same study). Choosing the last shows a
  warning at the field: observed power restates the p-value. For designs whose effect is itself a
  standardized effect (Cohen's w, f², R²...) it shows the DELTA2 note: give the difference in data
  units too.
* ``JustificationCard`` — a collapsible card with the ``powercore.justification`` paragraph of the
  current scenario and of each pinned one, each with a "Copy" button (the browser's clipboard; where
  the clipboard is refused the text is selected for the planner to copy by hand).
"""
from __future__ import annotations

import html
from typing import TYPE_CHECKING, Callable

import panel as pn

import powercore as pc
from powercore.justification import BASES, DELTA2_NOTE, OBSERVED_WARNING, check_basis, justification, standardized_only

from .state import ExplorerState
from .theme import CARD_CSS, PANE_CSS, PIN_STYLES, WIDGET_CSS, LiveHTML, button_look, keep_shown, label_kw

if TYPE_CHECKING:   # pragma: no cover
    from .pins import PinBoard

__all__ = ["BASIS_LABELS", "COPY_TEXT_JS", "BasisField", "JustificationCard"]

#: the select's words → the record's basis id ("" stands for "not stated")
BASIS_LABELS = {
    "not stated": "",
    "smallest difference that matters (clinical or practical relevance)": "relevance",
    "pilot study": "pilot",
    "published studies": "published",
    "the observed result of this same study": "observed",
}
assert set(BASIS_LABELS.values()) - {""} == set(BASES)

WARN_CSS = PANE_CSS + """
.pl-warn { background: #FDE7E9; border-left: 6px solid #B00020; padding: 6px 12px; margin: 4px 0;
  font-weight: 600; color: #5C0010; }
.pl-delta2 { background: #FFF4E0; border-left: 6px solid #D55E00; padding: 6px 12px; margin: 4px 0; }
.pl-just { margin: 2px 0 6px 0; line-height: 1.5; }
.pl-just-head { font-weight: 700; margin: 8px 0 2px 0; }
"""

# Copy the paragraph: the clipboard where the page may use it, else select the text for Ctrl+C.
COPY_TEXT_JS = """
const value = text.value;
function selectIt() {
  const view = Bokeh.index.find_one(para);
  const root = view && (view.shadow_el || view.el.shadowRoot || view.el);
  const node = root && (root.querySelector('.pl-just') || root);
  let ok = false;
  if (node) {
    const range = document.createRange(); range.selectNodeContents(node);
    const sel = window.getSelection(); sel.removeAllRanges(); sel.addRange(range);
    try { ok = document.execCommand('copy'); } catch (e) { ok = false; }
  }
  status.text = ok ? 'copied' : 'the clipboard is not available here: the text is selected, press Ctrl+C';
}
if (navigator.clipboard && window.isSecureContext) {
  navigator.clipboard.writeText(value).then(() => { status.text = 'copied'; }, selectIt);
} else { selectIt(); }
"""


class BasisField(pn.viewable.Viewer):
    """The select for the basis of the assumed effect, with its warning and the DELTA2 note."""

    def __init__(self, state: ExplorerState) -> None:
        super().__init__()
        self.state = state
        self.select = pn.widgets.Select(options=BASIS_LABELS, value="", **label_kw("Basis of the assumed effect"),
                                        sizing_mode="stretch_width", css_classes=["pl-basis"],
                                        stylesheets=[WIDGET_CSS], margin=(6, 10, 2, 10))
        self.warning = pn.pane.HTML(f'<p class="pl-warn" role="alert">{html.escape(OBSERVED_WARNING)}</p>',
                                    visible=False, stylesheets=[WARN_CSS], sizing_mode="stretch_width",
                                    css_classes=["pl-msg-basis"], margin=(0, 10, 4, 10))
        self.delta2 = pn.pane.HTML(f'<p class="pl-delta2" role="note"><b>Note:</b> {html.escape(DELTA2_NOTE)}</p>',
                                   visible=False, stylesheets=[WARN_CSS], sizing_mode="stretch_width",
                                   css_classes=["pl-delta2-note"], margin=(0, 10, 4, 10))
        self._listeners: list[Callable[[], None]] = []
        self.select.param.watch(self._chosen, "value")
        self._layout = pn.Column(self.select, self.warning, self.delta2, sizing_mode="stretch_width", margin=0,
                                 css_classes=["pl-basis-field"])
        self.update()

    def __panel__(self):
        return self._layout

    @property
    def value(self) -> str | None:
        """The basis id (a key of ``powercore.justification.BASES``), None when not stated."""
        return self.select.value or None

    @value.setter
    def value(self, basis: str | None) -> None:
        check_basis(basis)
        self.select.value = basis or ""

    def on_change(self, callback: Callable[[], None]) -> None:
        self._listeners.append(callback)

    def _chosen(self, _event) -> None:
        self.update()
        for callback in self._listeners:
            callback()

    def update(self) -> None:
        observed = self.value == "observed"
        if self.warning.visible != observed:
            self.warning.visible = observed
        snap = self.state.snapshot
        only_std = snap is not None and standardized_only(snap.design)
        if self.delta2.visible != only_std:
            self.delta2.visible = only_std


class _Block:
    """One scenario's paragraph with its Copy button (a fixed pool: the current one and one per pin slot)."""

    def __init__(self, key: str) -> None:
        look = {k: v for k, v in button_look().items()}
        self.head = pn.pane.HTML("", stylesheets=[WARN_CSS], margin=(0, 10), sizing_mode="stretch_width",
                                 css_classes=[f"pl-just-head-{key}"])
        # the paragraph changes at every slider step while the card is open: text set in place
        self.para = LiveHTML(css_classes=[f"pl-just-text-{key}"], margin=(0, 10), css=WARN_CSS)
        self.text = pn.widgets.TextAreaInput(value="", visible=False, css_classes=[f"pl-just-value-{key}"])
        self.status = pn.widgets.StaticText(value="", margin=(8, 6), css_classes=[f"pl-just-status-{key}"],
                                            stylesheets=[":host { font-size: 15px; color: #3F3F3F; }"])
        self.copy = pn.widgets.Button(label="Copy", **look, width=90, margin=(4, 10),
                                      css_classes=[f"pl-just-copy-{key}"], stylesheets=[WIDGET_CSS])
        self.copy.js_on_click(args=dict(text=self.text, para=self.para.div, status=self.status), code=COPY_TEXT_JS)
        self.layout = pn.Column(self.head, self.para, pn.Row(self.copy, self.status, self.text, margin=0),
                                sizing_mode="stretch_width", margin=(0, 0, 6, 0), visible=False,
                                css_classes=[f"pl-just-{key}"])

    def show(self, head_html: str | None, text: str = "", warn: bool = False) -> None:
        if head_html is None:
            if self.layout.visible:
                self.layout.visible = False
            return
        body = f'<p class="pl-just">{html.escape(text)}</p>'
        if warn:
            body = f'<p class="pl-warn" role="alert">{html.escape(OBSERVED_WARNING)}</p>' + body
        if self.head.object != head_html:
            self.head.object = head_html
        if self.para.object != body:
            self.para.object = body
            self.status.value = ""
        if self.text.value != text:
            self.text.value = text
        if not self.layout.visible:
            self.layout.visible = True


class JustificationCard(pn.viewable.Viewer):
    """The justification paragraph of the current scenario and of each pinned one, in a collapsible card."""

    def __init__(self, state: ExplorerState, pins: "PinBoard | None" = None, basis: BasisField | None = None) -> None:
        super().__init__()
        self.state = state
        self.pins = pins
        self.basis = basis
        self.current = _Block("current")
        self.blocks = [_Block(str(i)) for i in range(len(PIN_STYLES))]
        self._made: dict[int, tuple] = {}
        intro = pn.pane.HTML('<p class="pl-note">Each paragraph takes every number from the assumptions record of '
                             'its scenario. Check the wording against the reporting rules that apply to the '
                             'study.</p>', stylesheets=[PANE_CSS], margin=(0, 10), sizing_mode="stretch_width")
        self._shown_blocks = pn.Column(sizing_mode="stretch_width", margin=0)   # the blocks of the pins there are
        self.card = pn.Card(intro, self.current.layout, self._shown_blocks,
                            title="Sample-size justification", collapsed=False, sizing_mode="stretch_width",
                            css_classes=["pl-justification-card"], margin=(6, 10),
                            header_css_classes=["card-header", "pl-justification-header"], stylesheets=[CARD_CSS])
        if basis is not None:
            basis.on_change(self.update)
        if pins is not None:
            pins.on_change(self.update)

    def __panel__(self):
        return self.card

    def texts(self) -> dict[str, str]:
        """The paragraphs shown: 'current' and each pin's name → text."""
        out = {}
        if self.current.layout.visible:
            out["current"] = self.current.text.value
        for pin in self.pins.pins if self.pins is not None else []:
            out[pin.name] = self.blocks[pin.slot].text.value
        return out

    def update(self) -> None:
        snap = self.state.snapshot
        version = pc.__version__
        if snap is None:
            self.current.show(None)
        else:
            basis = self.basis.value if self.basis is not None else None
            self.current.show('<p class="pl-just-head">Current scenario</p>',
                              justification(snap.result, version, basis, snap.unit_name),
                              warn=basis == "observed")
        pins = self.pins.pins if self.pins is not None else []
        by_slot = {p.slot: p for p in pins}
        for slot, block in enumerate(self.blocks):
            pin = by_slot.get(slot)
            if pin is None:
                block.show(None)
                continue
            colour = PIN_STYLES[slot][0]
            head = (f'<p class="pl-just-head"><span style="color:{colour}">■</span> Pinned: '
                    f'{html.escape(pin.name)}</p>')
            made = self._made.get(slot)
            if made is None or made[0] is not pin.result or made[1] != pin.basis:   # made once per pin
                made = self._made[slot] = (pin.result, pin.basis,
                                           justification(pin.result, version, pin.basis, pin.unit_name))
            block.show(head, made[2], warn=pin.basis == "observed")
        keep_shown(self._shown_blocks, [b.layout for b in self.blocks])
