"""Slider keys that compute where they stop: a burst of arrow-key presses sends the server one value, the last.

Bokeh 3.9's slider (noUiSlider underneath) sets ``value_throttled``, the value porefill's sliders are linked by
(``throttled=True``), on every key press as it does on a mouse release, so six presses asked the server for six
computations (its `LatestRunner` then computed the first and the last). Once the page is drawn (Bokeh's
``document_ready`` event) a `CustomJS` wraps ``_change``, the one method of Bokeh's slider views that sets
``value_throttled``, on their shared prototype, so sliders drawn later (tabs filled in, the Quantum states
tab's body) are covered too:

- a change made while a key event is being dispatched (Arrow keys, PageUp/PageDown, Home/End on a focused
  handle) moves the handle and ``value`` at once, so the title follows every press, and sends
  ``value_throttled`` only once that slider has had no key for ``settle_ms``;
- a change from the pointer (a drag released, a click on the track) is sent at once, as before, and drops a
  key burst's pending send (its value is the pointer's now).

A person pressing a key again and again leaves 100–250 ms between presses (common practice, no source), so
``settle_ms`` is the server's burst gap (`porefill.explorer.jobs.compute.SLIDER_SETTLE_S`, 0.3 s): a single key
press computes 0.3 s later than a mouse release, which is the price of not computing the positions a person
only passes through. `CustomJS` is compiled with ``new Function``, which the page's content-security policy
already allows (`porefill.explorer.server.security`); no inline script is added.
"""
from __future__ import annotations

from bokeh.models import CustomJS

from porefill.explorer.jobs.compute import SLIDER_SETTLE_S

__all__ = ["SLIDER_KEYS_JS", "coalesce_slider_keys"]

SLIDER_KEYS_JS = """
if (window.__porefill_slider_keys) return;
// the key event being dispatched now, if any: noUiSlider moves the handle inside its keydown listener, so a
// change made while this event is still in dispatch (eventPhase not NONE) came from a key
let key = null;
document.addEventListener("keydown", (event) => { key = event; }, true);
const owner = (view) => {
  for (let p = Object.getPrototypeOf(view); p != null; p = Object.getPrototypeOf(p))
    if (Object.prototype.hasOwnProperty.call(p, "_change")) return p;
  return null;
};
const slider = [...cb_context.index.query((v) => v._noUiSlider != null && typeof v._change == "function")][0];
const proto = slider == null ? null : owner(slider);
if (proto == null) return;
window.__porefill_slider_keys = true;
const change = proto._change;
proto._change = function (values) {
  clearTimeout(this.__porefill_send);
  this.__porefill_send = null;
  if (key == null || key.eventPhase === Event.NONE) return change.call(this, values);
  this.model.value = this._calc_from(values);         // the handle and the title follow every press
  this.__porefill_send = setTimeout(() => {
    this.__porefill_send = null;
    this.model.setv({value_throttled: this.model.value});
  }, settle_ms);
};
"""


def coalesce_slider_keys(doc) -> None:
    """Make every slider of the served Bokeh document ``doc`` send one value per burst of key presses, once
    the page is drawn (nothing without a document: a notebook cell keeps Bokeh's sliders as they are)."""
    if doc is None:
        return
    doc.js_on_event("document_ready", CustomJS(args={"settle_ms": round(1e3 * SLIDER_SETTLE_S)},
                                               code=SLIDER_KEYS_JS))
