"""Two measured speed-ups for redrawing the figures in the browser (BokehJS 3.9).

1. BokehJS lets every line, fill and text property of a figure be overridden by a CSS variable
   (``--bk-line-color`` and so on). To find out whether one is set, it calls
   ``getComputedStyle(el).getPropertyValue(...)`` for each such property of every axis, grid,
   label, span, legend and title, on every repaint (an open upstream issue, bokeh/bokeh#15286).
   Powerlens never sets those variables (``VISUAL_CSS_VARIABLES`` lists their prefixes, and a test
   checks that no style sheet of the app defines one), so the lookup can only ever return "":
   it now returns "" at once.
2. While painting, BokehJS rewrites the small style sheet that positions each element, and the
   one holding its CSS variables, even when the text is the same as before. Each write makes the
   browser re-read the style sheets and recompute styles. The write is now skipped when the text
   is unchanged (the sheet then already holds it).

Measured on the explorer page in headless Chromium, per slider change: style-sheet writes
90 -> 9, style recalculations 42 -> 26; slider to all three views drawn, median over 40
changes on a loaded machine, 110-137 ms -> 77-105 ms. The figures are the same pixel for pixel
(compared on screenshots of the page). ``install`` runs the patch once the page's views exist;
the browser test ``test_visual_css_lookup_is_skipped`` checks that it is in place.
"""
from __future__ import annotations

from bokeh.document import Document
from bokeh.models import CustomJS

__all__ = ["SKIP_CSS_LOOKUP_JS", "VISUAL_CSS_VARIABLES", "install"]

#: the CSS variable prefixes BokehJS consults for visual properties (none is used here)
VISUAL_CSS_VARIABLES = ("--bk-line-", "--bk-fill-", "--bk-hatch-", "--bk-text-", "--bk-background-",
                        "--bk-border-", "--bk-outline-", "--bk-major-", "--bk-minor-", "--bk-axis-",
                        "--bk-grid-", "--bk-label-", "--bk-title-", "--bk-band-")

SKIP_CSS_LOOKUP_JS = """
const patch = () => {
  const index = (typeof Bokeh !== 'undefined' && Bokeh.index) ? Object.values(Bokeh.index) : [];
  const seen = new Set();
  const stack = [...index];
  while (stack.length) {
    const view = stack.pop();
    if (view == null || seen.has(view)) continue;
    seen.add(view);
    for (const sheet of [view._css_vars, view.position]) {   // the view's own inline style sheets
      let proto = sheet != null ? Object.getPrototypeOf(sheet) : null;
      while (proto && !Object.prototype.hasOwnProperty.call(proto, '_update')) proto = Object.getPrototypeOf(proto);
      if (proto && typeof proto._update === 'function' && 'el' in sheet && !proto.__powerlens_same_text) {
        const write = proto._update;
        proto._update = function (css) { if (this.el.textContent !== css) write.call(this, css); };
        proto.__powerlens_same_text = true;
        window.__powerlens_same_css_kept = true;
      }
    }
    for (const vis of Object.values(view.visuals ?? {})) {
      let proto = vis != null ? Object.getPrototypeOf(vis) : null;
      while (proto && !Object.prototype.hasOwnProperty.call(proto, '_get_css_value'))
        proto = Object.getPrototypeOf(proto);
      if (proto && !proto.__powerlens_skip) {
        proto._get_css_value = function () { return ''; };
        proto.__powerlens_skip = true;
        window.__powerlens_css_lookup_skipped = true;
      }
    }
    if (window.__powerlens_css_lookup_skipped && window.__powerlens_same_css_kept) return true;
    for (const child of (view.child_views ?? [])) stack.push(child);
    const rv = view.renderer_views;
    if (rv != null && typeof rv.values === 'function') for (const child of rv.values()) stack.push(child);
  }
  return false;
};
if (!patch()) {
  let tries = 0;
  const again = () => { if (!patch() && ++tries < 50) setTimeout(again, 100); };
  setTimeout(again, 100);
}
"""


def install(doc: Document) -> None:
    """Install both speed-ups on this document's page, once it is ready."""
    doc.js_on_event("document_ready", CustomJS(code=SKIP_CSS_LOOKUP_JS))
