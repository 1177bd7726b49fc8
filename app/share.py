"""Export and sharing on the page: pictures, the record, import, and a link.

* PNG (1x, 2x, 3x) and SVG of each view and of the whole board are made in the user's browser from
  the Bokeh views (a small JS callback: find the view, raise ``devicePixelRatio`` for the export,
  call the view's ``export``, download the blob). The board is the three views composited as they
  sit on screen, on white. The captions are inside the figures, so the pictures keep them.
* "Download record" gives the assumptions record (JSON) of the scenario behind the views, with the
  basis of its assumed effect and the pinned scenarios.
* "Import record…" opens a file picker in the browser; a file over ``MAX_RECORD_BYTES`` is refused
  there, before it is read or sent; a smaller one is read on the server by ``read_record``. Its
  pinned scenarios replace the page's; a bad one is named in the message and the rest still come back.
* "Copy link" writes every scenario field into the page address and copies it to the clipboard.
"""
from __future__ import annotations

import html
import io
import json
from typing import Any, Callable

import panel as pn

from . import sharing
from .sharing import MAX_RECORD_BYTES, VIEWS
from .state import ExplorerState
from .theme import PANE_CSS, WIDGET_CSS, button_look

__all__ = ["EXPORT_JS", "SharePanel"]

VIEW_LABELS = {"densities": "distributions", "power-effect": "power vs effect", "power-n": "power vs n",
               "board": "whole board"}

# Shared by the PNG and SVG buttons: `kind` is set by each. Exposes window.powerlensExport for tests.
EXPORT_JS = r"""
const NAMES = ['densities', 'power-effect', 'power-n'];
const WORDS = {'densities': 'density', 'power-effect': 'power-effect', 'power-n': 'power-n'};
const doc = cb_obj.document || Bokeh.documents[0];
function viewOf(name) {
  const m = doc.get_model_by_name(name);
  return m ? Bokeh.index.find_one(m) : null;
}
async function oneBlob(name, type, scale) {
  const view = viewOf(name);
  if (!view) throw new Error('no view ' + name);
  const own = Object.getOwnPropertyDescriptor(window, 'devicePixelRatio');
  if (type === 'png') Object.defineProperty(window, 'devicePixelRatio', {get: () => scale, configurable: true});
  try {
    return await view.export(type, true).to_blob();
  } finally {
    if (type === 'png') {
      if (own) Object.defineProperty(window, 'devicePixelRatio', own); else delete window.devicePixelRatio;
    }
  }
}
function rectOf(name) {
  const v = viewOf(name); const r = v.el.getBoundingClientRect();
  return {x: r.left + window.scrollX, y: r.top + window.scrollY, w: v.bbox.width, h: v.bbox.height};
}
async function board(type, scale) {
  const rects = NAMES.map(rectOf);
  const x0 = Math.min(...rects.map(r => r.x)), y0 = Math.min(...rects.map(r => r.y));
  const W = Math.ceil(Math.max(...rects.map(r => r.x + r.w)) - x0);
  const H = Math.ceil(Math.max(...rects.map(r => r.y + r.h)) - y0);
  const blobs = [];
  for (const n of NAMES) blobs.push(await oneBlob(n, type, scale));
  if (type === 'png') {
    const c = document.createElement('canvas');
    c.width = Math.round(W * scale); c.height = Math.round(H * scale);
    const g = c.getContext('2d');
    g.fillStyle = '#ffffff'; g.fillRect(0, 0, c.width, c.height);
    for (let i = 0; i < NAMES.length; i++) {
      const img = await createImageBitmap(blobs[i]);
      g.drawImage(img, Math.round((rects[i].x - x0) * scale), Math.round((rects[i].y - y0) * scale));
    }
    return await new Promise(res => c.toBlob(res, 'image/png'));
  }
  const NS = 'http://www.w3.org/2000/svg';
  const out = document.implementation.createDocument(NS, 'svg', null);
  const root = out.documentElement;
  root.setAttribute('width', W); root.setAttribute('height', H);
  root.setAttribute('viewBox', `0 0 ${W} ${H}`); root.setAttribute('version', '1.1');
  const bg = out.createElementNS(NS, 'rect');
  bg.setAttribute('width', W); bg.setAttribute('height', H); bg.setAttribute('fill', '#ffffff');
  root.appendChild(bg);
  for (let i = 0; i < NAMES.length; i++) {
    const part = new DOMParser().parseFromString(await blobs[i].text(), 'image/svg+xml').documentElement;
    part.setAttribute('x', rects[i].x - x0); part.setAttribute('y', rects[i].y - y0);
    part.setAttribute('id', 'powerlens-' + NAMES[i]);
    root.appendChild(out.importNode(part, true));
  }
  return new Blob([new XMLSerializer().serializeToString(out)], {type: 'image/svg+xml'});
}
async function make(view, type, scale) {
  return view === 'board' ? await board(type, scale) : await oneBlob(view, type, scale);
}
function save(blob, filename) {
  const a = document.createElement('a');
  a.href = URL.createObjectURL(blob); a.download = filename;
  document.body.appendChild(a); a.click(); a.remove();
  setTimeout(() => URL.revokeObjectURL(a.href), 60000);
}
window.powerlensExport = make;
const VIEWS = ['densities', 'power-effect', 'power-n', 'board'];
const view = VIEWS[which.active];
const scale = [1, 2, 3][scales.active];
const word = view === 'board' ? 'board' : WORDS[view];
const name = `${base.value}_${word}.${kind}`;
status.text = 'making ' + name + ' …';
make(view, kind, scale).then(blob => { save(blob, name); status.text = 'saved ' + name; })
  .catch(e => { status.text = 'export failed: ' + e; });
"""

IMPORT_JS = """
const inp = document.createElement('input');
inp.type = 'file'; inp.accept = '.json,application/json'; inp.style.display = 'none';
inp.className = 'pl-import-file';
document.body.appendChild(inp);
inp.addEventListener('change', () => {
  const f = inp.files && inp.files[0]; inp.remove();
  if (!f) return;
  const stamp = Date.now() + '-' + Math.random();
  if (f.size > max) {   // refused here: the file is neither read nor sent
    payload.value = JSON.stringify({name: f.name, size: f.size, too_large: true, stamp});
    return;
  }
  f.text().then(t => { payload.value = JSON.stringify({name: f.name, size: f.size, text: t, stamp}); });
});
inp.click();
"""

COPY_JS = """
const url = window.location.origin + window.location.pathname + link.value;
window.history.replaceState(null, '', url);
const fallback = () => {
  const t = document.createElement('textarea'); t.value = url; document.body.appendChild(t); t.select();
  let ok = false; try { ok = document.execCommand('copy'); } catch (e) {}
  t.remove();
  status.text = ok ? 'link copied' : 'the link is in the address bar: copy it from there';
};
if (navigator.clipboard && window.isSecureContext) {
  navigator.clipboard.writeText(url).then(() => { status.text = 'link copied'; }, fallback);
} else { fallback(); }
window.powerlensLink = url;
"""


class SharePanel(pn.viewable.Viewer):
    """The export, record and link controls of one session."""

    def __init__(self, state: ExplorerState, simulation: Callable[[], Any] | None = None,
                 pins: Any = None, basis: Any = None) -> None:
        """``pins``: the page's PinBoard (``entries()``, ``restore()``); ``basis``: its BasisField (``value``)."""
        super().__init__()
        self.state = state
        self._simulation = simulation or (lambda: None)
        self._pins = pins
        self._basis = basis
        look = button_look()
        solid = {k: v for k, v in look.items() if k in ("color", "button_type")}
        self.which = pn.widgets.RadioButtonGroup(options=list(VIEW_LABELS.values()), value=VIEW_LABELS["densities"],
                                                 **look, css_classes=["pl-export-view"], stylesheets=[WIDGET_CSS],
                                                 margin=(4, 6))
        self.scales = pn.widgets.RadioButtonGroup(options=["1x", "2x", "3x"], value="2x", **look,
                                                  css_classes=["pl-export-scale"], stylesheets=[WIDGET_CSS],
                                                  margin=(4, 6))
        self.base = pn.widgets.TextInput(value="", visible=False, css_classes=["pl-base-name"])
        self.link = pn.widgets.TextInput(value="", visible=False, css_classes=["pl-link-query"])
        self.payload = pn.widgets.TextAreaInput(value="", visible=False, css_classes=["pl-import-payload"])
        self.status = pn.widgets.StaticText(value="", css_classes=["pl-share-status"], margin=(10, 6),
                                            stylesheets=[":host { font-size: 15px; color: #3F3F3F; }"])
        self.png = pn.widgets.Button(label="PNG", **solid, css_classes=["pl-export-png"],
                                     stylesheets=[WIDGET_CSS], margin=(4, 4), width=70)
        self.svg = pn.widgets.Button(label="SVG", **solid, css_classes=["pl-export-svg"],
                                     stylesheets=[WIDGET_CSS], margin=(4, 4), width=70)
        args = dict(which=self.which, scales=self.scales, base=self.base, status=self.status)
        self.png.js_on_click(args=args, code="const kind = 'png';\n" + EXPORT_JS)
        self.svg.js_on_click(args=args, code="const kind = 'svg';\n" + EXPORT_JS)
        self.download = pn.widgets.FileDownload(callback=self._record_file, filename="powerlens.json",
                                                label="Download record", **look, css_classes=["pl-download-record"],
                                                stylesheets=[WIDGET_CSS], margin=(4, 6), width=170)
        self.import_button = pn.widgets.Button(label="Import record…", **look, css_classes=["pl-import-record"],
                                               stylesheets=[WIDGET_CSS], margin=(4, 6), width=160)
        self.import_button.js_on_click(args=dict(payload=self.payload, max=MAX_RECORD_BYTES), code=IMPORT_JS)
        self.copy = pn.widgets.Button(label="Copy link", **look,
                                      css_classes=["pl-copy-link"], stylesheets=[WIDGET_CSS], margin=(4, 6),
                                      width=120)
        self.copy.js_on_click(args=dict(link=self.link, status=self.status), code=COPY_JS)
        self.message = pn.pane.HTML("", visible=False, stylesheets=[PANE_CSS], sizing_mode="stretch_width",
                                    css_classes=["pl-share-msg"], margin=(0, 10))
        self.payload.param.watch(self._payload_arrived, "value")
        label = pn.pane.HTML('<p class="pl-label">Export:</p>', stylesheets=[PANE_CSS], margin=(12, 4, 0, 10))
        self._layout = pn.Column(
            pn.Row(label, self.which, self.scales, self.png, self.svg, margin=0, styles={"flex-wrap": "wrap"}),
            pn.Row(self.download, self.import_button, self.copy, self.status, self.base, self.link, self.payload,
                   margin=0, styles={"flex-wrap": "wrap"}),
            self.message, sizing_mode="stretch_width", margin=(0, 0, 4, 0), css_classes=["pl-share"])

    def __panel__(self):
        return self._layout

    # ---- kept in step with the state ------------------------------------------------------
    def update(self) -> None:
        st = self.state
        if st.snapshot is None:
            return
        base = sharing.base_name(st.snapshot.scenario.design)
        if self.base.value != base:
            self.base.value = base
        if self.download.filename != base + ".json":
            self.download.filename = base + ".json"
        q = sharing.query_string(st)
        if self.link.value != q:
            self.link.value = q

    # ---- record out and in -----------------------------------------------------------------
    def record_text(self) -> str:
        sim = self._simulation()
        pins = self._pins.entries() if self._pins is not None else ()
        basis = self._basis.value if self._basis is not None else None
        return sharing.record_json(self.state, sim, pins, basis)

    def _record_file(self):
        return io.BytesIO(self.record_text().encode("utf-8"))

    def show_message(self, text: str, items: dict[str, str] | None = None, error: bool = True) -> None:
        if not text:
            self.message.param.update(object="", visible=False)
            return
        lis = "".join(f'<li data-field="{html.escape(k)}"><b>{html.escape(k)}</b>: {html.escape(v)}</li>'
                      for k, v in (items or {}).items())
        cls = "pl-stale" if error else "pl-note"
        role = ' role="alert"' if error else ""
        body = f'<div class="{cls}"{role}>{html.escape(text)}' + (f"<ul>{lis}</ul>" if lis else "") + "</div>"
        self.message.param.update(object=body, visible=True)

    def _payload_arrived(self, event) -> None:
        if not event.new:
            return
        try:
            msg = json.loads(event.new)
            name, size = str(msg.get("name", "file"))[:200], int(msg.get("size", 0))
        except (ValueError, TypeError, AttributeError):
            self.show_message("The file could not be received; the view is unchanged.")
            return
        finally:
            self.payload.value = ""
        self.import_file(name, msg.get("text", "") if not msg.get("too_large") else None, size)

    def import_file(self, name: str, text: str | None, size: int) -> bool:
        """Load a record; a message names the field at fault and the view stays as it was."""
        if text is None or size > MAX_RECORD_BYTES:
            ok, field, message = False, "file", (f"is {size:,} bytes; records are at most "
                                                 f"{MAX_RECORD_BYTES:,} bytes (the file was not read)")
        else:
            ok, field, message = sharing.import_record(self.state, text.encode("utf-8"), size=size)
            if not ok and message.startswith(f"{field}: "):
                message = message[len(field) + 2:]
        if ok:
            problems = self._restore_pins(text)
            if problems:
                self.show_message(f"Loaded {name}; these pinned scenarios were not restored:", problems)
            else:
                self.show_message(f"Loaded {name}.", error=False)
        else:
            self.show_message(f"{name} was not loaded; the view is unchanged.", {field: message})
        return ok

    def _restore_pins(self, text: str) -> dict[str, str]:
        """Pins and basis of a record that loaded; {field: problem} for each pin refused."""
        pins, basis, problems = sharing.record_pins(text.encode("utf-8"))
        if self._basis is not None:
            self._basis.value = basis
        if self._pins is not None:
            problems.update(self._pins.restore(pins))
        return problems

    def apply_link(self, query: dict[str, str]) -> dict[str, str]:
        """Restore the view a link describes; report every value that was refused."""
        problems = sharing.apply_query(self.state, query)
        if problems:
            self.show_message("Some values in the link were not used (the page kept its own for them):",
                              problems)
        return problems
