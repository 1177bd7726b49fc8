"""A measured speed-up for redrawing the figures in the browser (Bokeh 3.9).

BokehJS lets every line, fill and text property of a figure be overridden by a CSS variable
(``--bk-line-color`` and so on). To find out whether one is set, it calls
``getComputedStyle(el).getPropertyValue(...)`` for each such property of every axis, grid,
label, span, legend and title, on every repaint (an open upstream issue, bokeh/bokeh#15286).
Bokeh also rewrites its own positioning style sheets while painting, so each of those calls
forces the browser to recompute styles first. Measured on the explorer page in headless
Chromium: 42 style recalculations per slider change, 26 without the lookups; the animation
frame that repaints the three figures 47-76 ms with them, 38-47 ms without.

Powerlens never sets those variables (``VISUAL_CSS_VARIABLES`` lists their prefixes, and a test
checks that no style sheet of the app defines one), so the lookup can only ever return "". This
module installs, once the page's views exist, a lookup that returns "" at once. Figures look the
same pixel for pixel; the browser test ``test_visual_css_lookup_is_skipped`` checks it is installed.
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
    for (const vis of Object.values(view.visuals ?? {})) {
      let proto = Object.getPrototypeOf(vis);
      while (proto && !Object.prototype.hasOwnProperty.call(proto, '_get_css_value'))
        proto = Object.getPrototypeOf(proto);
      if (proto) {
        if (!proto.__powerlens_skip) {
          proto._get_css_value = function () { return ''; };
          proto.__powerlens_skip = true;
        }
        window.__powerlens_css_lookup_skipped = true;
        return true;
      }
    }
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
    """Skip BokehJS's per-paint CSS-variable lookups on this document's page, once it is ready."""
    doc.js_on_event("document_ready", CustomJS(code=SKIP_CSS_LOOKUP_JS))
