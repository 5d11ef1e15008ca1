"""Tabs a screen reader names and a keyboard works: the WAI-ARIA tabs pattern on Bokeh's tab strips.

Bokeh 3.9 draws each tab as a focusable ``div`` with no role, and only a click switches it. Once the page's
views are drawn (Bokeh's ``document_ready`` event) a `CustomJS` gives every tab strip on the page
``role="tablist"``, each tab ``role="tab"`` with ``aria-selected`` and ``aria-controls``, each panel
``role="tabpanel"`` named by its tab, and keys: ←/→ (and ↑/↓) move along the strip, Home/End to its ends,
Enter or Space shows the focused tab. Only the shown tab is in the Tab order (a roving ``tabindex``), so Tab
reaches the strip once and goes on into the panel. Moving along the strip does not switch tabs by itself
("manual activation"): the Quantum states tab starts a computation when it is shown.

`CustomJS` is compiled with ``new Function``, which the page's content-security policy already allows for
Panel's own components ('unsafe-eval', `porefill.explorer.server.security`); no inline script is added.
"""
from __future__ import annotations

from bokeh.models import CustomJS

__all__ = ["TAB_KEYS_JS", "make_tabs_accessible"]

TAB_KEYS_JS = """
const views = [...cb_context.index.query((v) => v.header_el != null && v.header_els != null &&
                                               v.model.tabs != null)];
for (const view of views) {
  if (view.__porefill_tabs) continue;
  view.__porefill_tabs = true;
  const id = (kind, i) => `porefill-${kind}-${view.model.id}-${i}`;
  const mark = () => {
    const active = view.model.active;
    view.headers_wrapper_el.setAttribute("role", "tablist");
    view.header_els.forEach((el, i) => {
      el.setAttribute("role", "tab");
      el.id = id("tab", i);
      el.setAttribute("aria-selected", i == active ? "true" : "false");
      el.setAttribute("aria-controls", id("panel", i));
      el.tabIndex = i == active ? 0 : -1;
    });
    view.child_views.forEach((child, i) => {
      if (child == null || child.el == null) return;
      child.el.setAttribute("role", "tabpanel");
      child.el.id = id("panel", i);
      child.el.setAttribute("aria-labelledby", id("tab", i));
      child.el.setAttribute("aria-label", view.model.tabs[i].title);
    });
  };
  const keys = (event) => {
    const tabs = view.header_els;
    const i = tabs.indexOf(event.target);
    if (i < 0) return;
    const n = tabs.length;
    let next = null;
    switch (event.key) {
      case "ArrowRight": case "ArrowDown": next = (i + 1) % n; break;
      case "ArrowLeft": case "ArrowUp": next = (i - 1 + n) % n; break;
      case "Home": next = 0; break;
      case "End": next = n - 1; break;
      case "Enter": case " ":
        event.preventDefault();
        if (!view.model.disabled && !view.model.tabs[i].disabled) view.change_active(i);
        tabs[i].focus();
        return;
      default: return;
    }
    event.preventDefault();
    tabs.forEach((el, k) => { el.tabIndex = k == next ? 0 : -1; });
    tabs[next].focus();
  };
  const attach = () => {
    const header = view.header_el;
    if (header == null) return;
    // the strip first in the shadow root, so Tab reaches it before the panel (the grid still draws it above)
    if (view.shadow_el.firstChild !== header) view.shadow_el.prepend(header);
    if (header.__porefill_keys) return;
    header.__porefill_keys = true;
    header.addEventListener("keydown", keys);
    header.addEventListener("focusout", (event) => {
      // leaving the strip: the shown tab is again the one Tab comes back to
      if (!header.contains(event.relatedTarget)) mark();
    });
  };
  for (const name of ["render", "update_active", "_update_headers"]) {   // Bokeh redraws the strip in these
    const original = view[name].bind(view);
    view[name] = (...args) => { const out = original(...args); attach(); mark(); return out; };
  }
  attach();
  mark();
}
"""


def make_tabs_accessible(doc) -> None:
    """Give every tab strip of the served Bokeh document ``doc`` the tab roles and keys once it is drawn
    (nothing without a document: a notebook cell keeps Bokeh's tabs as they are)."""
    if doc is None:
        return
    doc.js_on_event("document_ready", CustomJS(code=TAB_KEYS_JS))
