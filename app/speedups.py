"""Measured speed-ups for building and redrawing the page: eight in the browser (BokehJS 3.9), four on the server.

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

3. On the server, Bokeh 3.9 sends a message as separate websocket frames (header, metadata,
   content, then a header and a payload for each binary array) and waits for each frame to be
   flushed before writing the next. Every wait is a trip round the event loop; with the worker
   threads holding the GIL a trip can take milliseconds, and one slider change's message has about
   60 frames (each view's arrays travel as binary buffers). Measured: the frames of one change
   arrived spread over 12-50 ms. ``install_server`` makes ``Message.send`` write all frames of a
   message at once, in order, under the connection's write lock, then wait for them all together
   (so that a browser going away mid-message is one handled error, not a logged traceback).
   Tornado queues each frame in order as it is written, so the browser receives the same bytes.

4. A plot reads its element's computed font size (``getComputedStyle``) for every text it measures,
   which forced a style recalculation per tick label after each change; the page's font size never
   changes, so each plot now reads it once.
5. A hatched area redrew its hatch pattern on two new canvases at every data change; the pattern
   now comes from a cache keyed by pattern, colour, alpha, scale, weight and pixel ratio. This
   covers both kinds of hatch BokehJS has: an annotation's, and a glyph's with one value for all
   its items (``HatchScalar``: the shaded rejection region, whose five glyph views each made a
   pattern canvas at every change).
6. A Bokeh ``Div`` whose text changes is rendered again and then makes the whole page compute its
   layout (measuring every element: about 10 ms a change here, with a forced style recalculation).
   For the page's live text (``theme.LiveHTML``, CSS class ``pl-live``) the new text is put in
   place, and the layout is computed again only when the element's size changed (a
   ``ResizeObserver``).
7. A slider sends its ``value`` while it moves and, at each key press and at the end of a drag,
   a second message for ``value_throttled``, which the server parses, applies and answers in
   the same moments as the change itself. The page never reads ``value_throttled``
   (``controls._LiveOnly``), so the slider now sets only ``value`` (unchanged by then, so nothing
   is sent).
8. On the server, every numpy array in a message (each column of each data source a view
   changes) travels as a binary buffer of its own: two websocket frames, and for the page two
   more messages to take in. One slider change's message held 14 buffers of 3 KB in all, so 31
   frames. ``install_server`` puts an array of at most ``INLINE_BYTES`` in the message's JSON as
   base64 (gzip first, as Bokeh embeds arrays in a file), which BokehJS reads as the same typed
   array; larger arrays still go as buffers. A change's message is now 3 frames. A sampling
   profiler had put a quarter of the event loop's busy time in these socket writes, but strace
   timed all the server's socket writes at 1.3% of the wall time under load: the gain is fewer
   messages for the page, not cheaper writes (bench_app medians 55-56 ms after, 59-74 ms before,
   on a noisy machine).
9. On the server, every patch message Bokeh 3.9 writes starts by making a reference (``{"id": ...}``)
   for every model of the session's document, some 560 on this page, to recognise the few the
   message mentions: 4.1 ms a message, timed on this page's document (a sampling profiler had
   put even more of each change's busy time there). ``install_server`` makes that reference only
   for a model the message meets (``_SyncedRefs``), by the same test (in the document and
   already sent to the page), so the message is the same: 0.3 ms a message.
10. A legend re-rendered all its items (a new canvas and elements for each) whenever anything
   reachable from them changed, data included: the page's three legends made some 60 canvases
   at every slider change. An item is now rendered again only when what it shows changes (the
   items, their labels and visibility, their renderers and the legend's layout); a label read
   from the data keeps Bokeh's behaviour. Browser main-thread work per slider change with a rest
   after it, measured with Chromium's own counters: 74 ms before the glyph hatch of item 5 and
   item 10, 65 ms after; the page's whole Chromium (all its processes) used 115-130 ms of CPU a
   change before, 90 after.
11. BokehJS gives each glyph renderer an element of its own, placed over the glyph's bounding box
   by a small style sheet that it writes again at every paint. For a glyph drawn on the canvas
   that element is empty (only style sheets inside, no pointer events), yet every write made the
   browser recompute styles and then lay the page out again in the middle of the next figure's
   paint: 9-10 sheets a slider step here. The element is now placed once, as BokehJS would, and
   left where it is while it stays empty. Measured per slider change (Chromium's trace, 10
   changes, two runs each): style recalculation 4.6-4.8 -> 1.3-1.4 ms, layout 3.2-3.7 ->
   2.4-2.7 ms, the renderer's main thread 75-84 -> 66-68 ms. Screenshots of the page after the
   same eight steps are identical pixel for pixel with and without it.
12. On the server, Bokeh 3.9 works out a property's default afresh at every read of a property
   that was never set: it merges the overrides of every class in the model's ancestry, validates
   the value again, asks whether the default is one to keep per object (importing two names
   inside the function each time), and looks for a theme through a failing attribute lookup. A
   page build read some 21,000 defaults this way. ``install_server`` keeps, per class and
   property, the merged overrides, the answer to "kept per object?", and a default that cannot be
   changed in place (a number, string, ``None`` or a tuple of them; a list, dict or model is
   still made anew for each object, as Bokeh does); a theme's values still come first. Measured
   in one process, CPU time to build a page and its document and serialize it, 8 alternating
   rounds: minimum 866-981 ms without, 612-650 ms with.
"""
from __future__ import annotations

import asyncio
import json
import logging

from bokeh.core.has_props import HasProps
from bokeh.core.property.bases import Property
from bokeh.core.property.descriptors import PropertyDescriptor
from bokeh.core.serialization import Buffer, BytesRep, Ref, Serializer
from bokeh.document import Document
from bokeh.model import Model
from bokeh.models import CustomJS
from bokeh.protocol.message import Message
from bokeh.protocol.messages.patch_doc import PatchJson, patch_doc
from tornado.iostream import StreamClosedError
from tornado.websocket import WebSocketClosedError, WebSocketHandler

__all__ = ["INLINE_BYTES", "SKIP_CSS_LOOKUP_JS", "VISUAL_CSS_VARIABLES", "install", "install_server", "quiet_closed_writes"]

log = logging.getLogger(__name__)

#: arrays up to this size travel inside a message's JSON (base64) rather than as separate frames
INLINE_BYTES = 16_384

#: the CSS variable prefixes BokehJS consults for visual properties (none is used here)
VISUAL_CSS_VARIABLES = ("--bk-line-", "--bk-fill-", "--bk-hatch-", "--bk-text-", "--bk-background-",
                        "--bk-border-", "--bk-outline-", "--bk-major-", "--bk-minor-", "--bk-axis-",
                        "--bk-grid-", "--bk-label-", "--bk-title-", "--bk-band-")

SKIP_CSS_LOOKUP_JS = """
const patch = () => {
  const index = (typeof Bokeh !== 'undefined' && Bokeh.index) ? Object.values(Bokeh.index) : [];
  const seen = new Set();
  const stack = [...index];
  const own = (obj, name) => {      // the prototype in obj's chain that defines name itself
    let proto = obj != null ? Object.getPrototypeOf(obj) : null;
    while (proto && !Object.prototype.hasOwnProperty.call(proto, name)) proto = Object.getPrototypeOf(proto);
    return proto;
  };
  const done = () => window.__powerlens_css_lookup_skipped && window.__powerlens_same_css_kept &&
                     window.__powerlens_font_size_kept && window.__powerlens_hatch_kept &&
                     window.__powerlens_glyph_hatch_kept && window.__powerlens_legend_kept &&
                     window.__powerlens_live_text && window.__powerlens_one_message &&
                     window.__powerlens_glyph_place_kept;
  while (stack.length) {
    const view = stack.pop();
    if (view == null || seen.has(view)) continue;
    seen.add(view);
    for (const sheet of [view._css_vars, view.position]) {   // the view's own inline style sheets
      const proto = own(sheet, '_update');
      if (proto && typeof proto._update === 'function' && 'el' in sheet && !proto.__powerlens_same_text) {
        const write = proto._update;
        proto._update = function (css) { if (this.el.textContent !== css) write.call(this, css); };
        proto.__powerlens_same_text = true;
        window.__powerlens_same_css_kept = true;
      }
    }
    if (view.renderer_views != null && 'el' in view) {       // a plot: its font size, read once
      const proto = own(view, 'base_font_size');
      const desc = proto && Object.getOwnPropertyDescriptor(proto, 'base_font_size');
      if (desc && desc.get && !proto.__powerlens_font_size) {
        Object.defineProperty(proto, 'base_font_size', {
          configurable: true, set: desc.set,
          get() { if (this.__powerlens_bfs == null) this.__powerlens_bfs = desc.get.call(this);
                  return this.__powerlens_bfs; }});
        proto.__powerlens_font_size = true;
        window.__powerlens_font_size_kept = true;
      }
    }
    if (typeof view._calc_from === 'function' && typeof view._slide === 'function') {   // a slider
      const proto = own(view, '_change');
      if (proto && !proto.__powerlens_one) {
        proto._change = function (values) { this.model.value = this._calc_from(values); };
        proto.__powerlens_one = true;
        window.__powerlens_one_message = true;
      }
    }
    if ('markup_el' in view && typeof view.process_tex === 'function') {   // a Div: live text in place
      const proto = own(view, 'rerender');
      if (proto && !proto.__powerlens_live) {
        const rerender = proto.rerender;
        proto.rerender = function () {
          if (this.markup_el == null || this.model.render_as_text ||
              !(this.model.css_classes ?? []).includes('pl-live')) return rerender.call(this);
          const text = this.model.text;
          this.markup_el.innerHTML = this.has_math_disabled() ? text : this.process_tex(text);
          if (this.__powerlens_resize == null) {     // the page is laid out again only if the size changed
            let first = true;
            this.__powerlens_resize = new ResizeObserver(() => {
              if (first) { first = false; return; }
              this.invalidate_layout();
            });
            this.__powerlens_resize.observe(this.el);
          }
        };
        proto.__powerlens_live = true;
        window.__powerlens_live_text = true;
      }
    }
    for (const vis of Object.values(view.visuals ?? {})) {
      const proto = own(vis, '_get_css_value');
      if (proto && !proto.__powerlens_skip) {
        proto._get_css_value = function () { return ''; };
        proto.__powerlens_skip = true;
        window.__powerlens_css_lookup_skipped = true;
      }
      const hatch = own(vis, 'update');
      if (hatch && 'get_hatch_pattern' in vis && !hatch.__powerlens_hatch) {
        const update = hatch.update;
        const cache = new Map();
        hatch.update = function () {
          if (!this.doit || this.get_hatch_extra() != null && Object.keys(this.get_hatch_extra()).length) {
            return update.call(this);
          }
          const key = [this.get_hatch_pattern(), this.get_hatch_color(), this.get_hatch_alpha(), this.get_hatch_scale(),
                       this.get_hatch_weight(), window.devicePixelRatio].join('|');
          const hit = cache.get(key);
          if (hit !== undefined) {
            this._update_iteration++;
            this._hatch_image = hit[0];
            this._hatch_svg = hit[1];
            return;
          }
          update.call(this);
          if (this._hatch_image != null) cache.set(key, [this._hatch_image, this._hatch_svg]);
        };
        hatch.__powerlens_hatch = true;
        window.__powerlens_hatch_kept = true;
      }
      const glyphHatch = own(vis, 'update');     // a glyph's hatch, one value for all items (HatchScalar): item 5
      if (glyphHatch && '_compute_static_doit' in vis && !('v_doit' in vis) && !glyphHatch.__powerlens_hatch) {
        const update = glyphHatch.update;
        const cache = new Map();
        const plain = (extra) => extra == null || (extra instanceof Map ? extra.size == 0 : Object.keys(extra).length == 0);
        glyphHatch.update = function () {
          if (!this._compute_static_doit() || !plain(this.hatch_extra.value)) return update.call(this);
          const key = [this.hatch_pattern.value, this.hatch_color.value, this.hatch_alpha.value, this.hatch_scale.value,
                       this.hatch_weight.value, window.devicePixelRatio].join('|');
          const hit = cache.get(key);
          if (hit !== undefined) {
            this._update_iteration++;
            this._static_doit = true;
            this._hatch_image = new hit.Uniform(hit.pattern, this.hatch_color.length);
            return;
          }
          update.call(this);
          const image = this._hatch_image;
          if (image != null && image.value != null) cache.set(key, {Uniform: image.constructor, pattern: image.value});
        };
        glyphHatch.__powerlens_hatch = true;
        window.__powerlens_glyph_hatch_kept = true;
      }
    }
    if (typeof view._render_items === 'function' && 'grid_el' in view) {   // a legend: item 10
      const proto = own(view, '_render_items');
      if (proto && !proto.__powerlens_legend) {
        const renderItems = proto._render_items;
        proto._render_items = function () {
          const m = this.model;
          const items = m.items ?? [];
          if (items.some(it => it.label != null && typeof it.label === 'object' && 'field' in it.label)) {
            return renderItems.call(this);     // a label read from the data: follow every change
          }
          const key = JSON.stringify([m.orientation, m.ncols, m.nrows, m.click_policy, m.item_background_policy,
            items.map(it => [it.id, it.visible, it.index, it.get_labels_list_from_label_prop(),
                             it.renderers.map(r => [r.id, r.visible, r.muted])])]);
          if (key === this.__powerlens_items && this.entries.length > 0 &&
              this.grid_el.childElementCount === this.entries.length) return;
          this.__powerlens_items = key;
          return renderItems.call(this);
        };
        proto.__powerlens_legend = true;
        window.__powerlens_legend_kept = true;
      }
    }
    if (view.model != null && view.model.type === 'GlyphRenderer' && 'shadow_el' in view) {   // item 11
      const proto = own(view, 'update_position');
      if (proto && !proto.__powerlens_place) {
        const place = proto.update_position;
        const empty = (root) => {
          if (root == null) return false;
          for (const child of root.children) if (child.nodeName !== 'STYLE') return false;
          return true;
        };
        proto.update_position = function () {
          if (this.model.type === 'GlyphRenderer' && this.__powerlens_placed && empty(this.shadow_el)) return;
          this.__powerlens_placed = true;
          return place.call(this);
        };
        proto.__powerlens_place = true;
        window.__powerlens_glyph_place_kept = true;
      }
    }
    if (done()) return true;
    for (const child of (view.child_views ?? [])) stack.push(child);
    for (const name of ['glyph', 'selection_glyph', 'nonselection_glyph', 'hover_glyph', 'muted_glyph',
                        'decimated_glyph']) {
      if (view[name] != null && typeof view[name] === 'object') stack.push(view[name]);
    }
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
    """Install the browser speed-ups (notes 1, 2, 4, 5, 6, 7, 10, 11) on this document's page, once it is ready."""
    doc.js_on_event("document_ready", CustomJS(code=SKIP_CSS_LOOKUP_JS))


_bokeh_send = Message.send


async def _send_at_once(self: Message, conn) -> int:
    """``Message.send`` writing every frame before waiting (see the module's note 3)."""
    if not isinstance(conn, WebSocketHandler):      # a client connection: Bokeh's own way
        return await _bokeh_send(self, conn)
    frames: list[tuple[str | bytes, bool]] = [(self.header_json, False), (self.metadata_json, False),
                                              (self.content_json, False)]
    for buffer in self._buffers:
        frames += [(json.dumps(buffer.ref), False), (buffer.to_bytes(), True)]
    with await conn.write_lock.acquire():
        # every write is waited for, not only the last: if the browser goes away mid-message, the
        # writes already queued fail, and a failure nobody awaits is logged by asyncio as a traceback
        writes = []
        try:
            for data, binary in frames:
                writes.append(WebSocketHandler.write_message(conn, data, binary=binary))
        except WebSocketClosedError:          # closed before this frame: collect the earlier ones
            await asyncio.gather(*writes, return_exceptions=True)
            raise
        await asyncio.gather(*writes)
    return sum(len(data) for data, _ in frames)


def quiet_closed_writes(loop: asyncio.AbstractEventLoop) -> None:
    """Let ``loop`` drop asyncio's report of a failed write to a closed websocket that nobody awaited.

    Panel sends a held batch of changes (``pn.io.hold``) by writing every frame at once and awaits
    the writes later in a task of its own. When a tab closes in between, or the server stops while
    a page is being updated, the writes fail after their awaiting task has gone (the loop may have
    stopped), and asyncio logged each one as "Task exception was never retrieved" with a
    traceback. Bokeh itself treats a closed connection as a warning, not an error; here it is
    logged at debug level. Every other report goes to the loop's default handler.
    """
    def handler(loop, context) -> None:
        exc = context.get("exception")
        if isinstance(exc, (WebSocketClosedError, StreamClosedError)) and \
                "never retrieved" in str(context.get("message", "")):
            log.debug("a write to a closed websocket failed: %s", exc)
            return
        loop.default_exception_handler(context)
    loop.set_exception_handler(handler)


_encode_bytes_as_buffer = Serializer._encode_bytes


def _encode_small_bytes_inline(self: Serializer, obj: bytes | memoryview) -> BytesRep:
    """Bokeh's ``Serializer._encode_bytes``, but a small array goes in the JSON (speed-up 8)."""
    size = obj.nbytes if isinstance(obj, memoryview) else len(obj)
    if self._deferred and size <= INLINE_BYTES:
        return BytesRep(type="bytes", data=Buffer("inline", obj).to_base64())
    return _encode_bytes_as_buffer(self, obj)


class _SyncedRefs(Serializer):
    """A Serializer that knows the document's synced models without listing them first (speed-up 9).

    Bokeh's ``patch_doc.create`` passes ``doc.models.synced_references`` (every model of the
    document not new since the last message), and ``Serializer.__init__`` makes a reference for
    each. Here a model gets its reference when the message meets it and it is one of those.
    """

    def __init__(self, models) -> None:
        super().__init__()
        self._models = models       # the document's DocumentModelManager

    def _synced_ref(self, obj) -> Ref | None:
        if isinstance(obj, Model):
            models = self._models
            if models._models.get(obj.id) is obj and obj not in models._new_models:
                ref = self._references[id(obj)] = obj.ref
                return ref
        return None

    def has_ref(self, obj) -> bool:
        return id(obj) in self._references or self._synced_ref(obj) is not None

    def get_ref(self, obj) -> Ref | None:
        ref = self._references.get(id(obj))
        return ref if ref is not None else self._synced_ref(obj)


#: Bokeh's own ``patch_doc.create`` (tests compare the two)
_bokeh_create_patch = patch_doc.__dict__["create"]


def _create_patch(cls, events, **metadata):
    """Bokeh 3.9's ``patch_doc.create`` with ``_SyncedRefs`` in place of the full list (speed-up 9)."""
    header = cls.create_header()
    if not events:
        raise ValueError("PATCH-DOC message requires at least one event")
    docs = {event.document for event in events}
    if len(docs) != 1:
        raise ValueError("PATCH-DOC message configured with events for more than one document")
    [doc] = docs
    serializer = _SyncedRefs(doc.models)
    patch_json = PatchJson(events=serializer.encode(events))
    doc.models.flush_synced(lambda model: not serializer.has_ref(model))
    msg = cls(header, metadata, patch_json)
    msg.add_buffers(*serializer.buffers)
    return msg


#: Bokeh's own property-default steps (tests compare them with the kept ones of speed-up 12)
_bokeh_themed_default = Property.themed_default
_bokeh_overridden_defaults = HasProps.__dict__["_overridden_defaults"]
_bokeh_has_unstable_default = PropertyDescriptor.has_unstable_default
_bokeh_themed_values = HasProps.themed_values

_IMMUTABLE = (str, int, float, bool, type(None))
_MISSING = object()
_overrides_kept: dict[type, dict] = {}
_defaults_kept: dict[tuple, object] = {}
_unstable_kept: dict[tuple, bool] = {}


def _immutable(value) -> bool:
    return isinstance(value, _IMMUTABLE) or (type(value) is tuple and all(_immutable(v) for v in value))


def _overridden_defaults(cls) -> dict:
    """``HasProps._overridden_defaults``, merged once per class (speed-up 12). Read-only to callers."""
    merged = _overrides_kept.get(cls)
    if merged is None:
        merged = {}
        for c in reversed(cls.__mro__):
            merged.update(getattr(c, "__overridden_defaults__", {}))
        _overrides_kept[cls] = merged
    return merged


def _themed_default(self, cls, name, theme_overrides, *, no_eval=False):
    """``Property.themed_default``, kept per class when the value cannot change (speed-up 12)."""
    if theme_overrides is not None and name in theme_overrides:
        return _bokeh_themed_default(self, cls, name, theme_overrides, no_eval=no_eval)
    key = (id(self), cls, name, no_eval)
    value = _defaults_kept.get(key, _MISSING)
    if value is _MISSING:
        value = _bokeh_themed_default(self, cls, name, None, no_eval=no_eval)
        if _immutable(value):
            _defaults_kept[key] = value
    return value


def _has_unstable_default(self, obj) -> bool:
    """``PropertyDescriptor.has_unstable_default``: it depends only on the descriptor and the
    object's class (speed-up 12)."""
    key = (id(self), type(obj))
    answer = _unstable_kept.get(key)
    if answer is None:
        answer = _unstable_kept[key] = bool(_bokeh_has_unstable_default(self, obj))
    return answer


def _themed_values(self):
    """``HasProps.themed_values`` without a failing attribute lookup (speed-up 12)."""
    return self.__dict__.get("__themed_values__")


def install_server() -> None:
    """Send each Bokeh message's frames in one go, small arrays inside the JSON, patches without a
    reference for every model, property defaults kept per class (idempotent; server process)."""
    Message.send = _send_at_once
    Serializer._encode_bytes = _encode_small_bytes_inline
    patch_doc.create = classmethod(_create_patch)
    HasProps._overridden_defaults = classmethod(_overridden_defaults)
    Property.themed_default = _themed_default
    PropertyDescriptor.has_unstable_default = _has_unstable_default
    HasProps.themed_values = _themed_values
