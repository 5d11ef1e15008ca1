"""Helpers that drive the served dashboard in a browser (used by tests and benchmarks)."""
from __future__ import annotations

import time

READOUT = ".porefill-readout p"
HANDLE = ".noUi-handle"


def slider_handle(page, label_start: str):
    """The noUiSlider handle of the slider whose title starts with ``label_start``."""
    titles = page.locator(".bk-slider-title")
    titles.first.wait_for(timeout=30_000)
    texts = titles.all_inner_texts()
    for i, text in enumerate(texts):
        if text.startswith(label_start):
            return page.locator(HANDLE).nth(i)
    raise LookupError(f"no slider titled {label_start!r}; sliders: {texts}")


def drag_handle(page, handle, dx: float) -> float:
    """Drag a slider handle by dx pixels, scrolled into view first as a person would; return the
    perf_counter time of the release."""
    handle.scroll_into_view_if_needed()
    box = handle.bounding_box()
    x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    page.mouse.move(x, y)
    page.mouse.down()
    page.mouse.move(x + dx, y, steps=4)
    released = time.perf_counter()
    page.mouse.up()
    return released


def text_of(page, selector: str) -> str:
    return page.locator(selector).first.inner_text()


# true once the element has left the page or its text is no longer ``before`` (`text_of` reads innerText too)
_TEXT_CHANGED = "([element, before]) => !element.isConnected || element.innerText !== before"


def wait_for_text_change(page, selector: str, before: str, timeout_s: float = 60.0) -> float:
    """Wait until the text under ``selector`` differs from ``before``; return the time it did.

    The page watches the element itself, once a frame, rather than being read from here every few
    milliseconds: each read is a round trip that competes with the server for the CPU while it computes.
    The watch lasts at most half a second before `text_of` looks again, as the selector's first match may be
    another element by then."""
    from playwright.sync_api import TimeoutError as PlaywrightTimeout

    deadline = time.perf_counter() + timeout_s
    while time.perf_counter() < deadline:
        if text_of(page, selector) != before:
            return time.perf_counter()
        element = page.locator(selector).first.element_handle()
        try:
            page.wait_for_function(_TEXT_CHANGED, arg=[element, before], polling="raf", timeout=500)
            seen = time.perf_counter()
            if text_of(page, selector) != before:
                return seen
        except PlaywrightTimeout:
            pass
        finally:
            element.dispose()
    raise TimeoutError(f"the text of {selector} did not change")


def readout_text(page) -> str:
    """The potential readout under the map."""
    return text_of(page, READOUT)


def wait_for_readout_change(page, before: str, timeout_s: float = 20.0) -> float:
    return wait_for_text_change(page, READOUT, before, timeout_s)


# a key on a focused slider handle, once at once and once after each gap (ms): every press is set on the
# page's clock beforehand, as a person's keys are (Playwright's round trip per key can take longer than a
# person's pace on a busy machine); after each press, the page's time (ms) and the slider's title
_PRESS_KEYS = """(handle, [key, gaps]) => new Promise((done) => {
  const times = [], titles = [];
  const title = handle.getRootNode().querySelector(".bk-slider-title");
  const codes = {ArrowRight: 39, ArrowLeft: 37, ArrowUp: 38, ArrowDown: 40};
  const press = () => {
    times.push(performance.now());
    for (const type of ["keydown", "keyup"])
      handle.dispatchEvent(new KeyboardEvent(type, {key, code: key, keyCode: codes[key], which: codes[key],
                                                    bubbles: true, composed: true}));
    titles.push(title ? title.textContent : "");
    if (times.length > gaps.length) done([times, titles]);
  };
  let at = 0;
  setTimeout(press, 0);
  for (const gap of gaps) { at += gap; setTimeout(press, at); }
})"""


def press_keys(handle, key: str, gaps_ms) -> tuple[list[float], list[str]]:
    """Press ``key`` (``ArrowRight``, ``ArrowLeft``, ...) on a focused slider ``handle`` once at once and once
    after each of ``gaps_ms``, timed by the page's own clock; return the page's times of the presses (ms,
    ``performance.now()``) and the slider's title after each."""
    handle.focus()
    times, titles = handle.evaluate(_PRESS_KEYS, [key, list(gaps_ms)])
    return times, titles


LOADING = "pn-loading"      # the class Panel 1.9 puts on a component while its `loading` is True


def slider_track(page, label_start: str):
    """The noUiSlider track (``.noUi-target``) of the slider whose title starts with ``label_start``."""
    titles = page.locator(".bk-slider-title")
    titles.first.wait_for(timeout=30_000)
    for i, text in enumerate(titles.all_inner_texts()):
        if text.startswith(label_start):
            return page.locator(".noUi-target").nth(i)
    raise LookupError(f"no slider titled {label_start!r}")


def slider_title(page, label_start: str) -> str:
    """The title of a slider, with its value (e.g. ``Temperature (K): 1.50``)."""
    for text in page.locator(".bk-slider-title").all_inner_texts():
        if text.startswith(label_start):
            return text
    raise LookupError(f"no slider titled {label_start!r}")


def handle_fraction(page, label_start: str) -> float:
    """Where the slider's handle sits along its track, 0 (left end) to 1 (right end)."""
    track = slider_track(page, label_start).bounding_box()
    handle = slider_handle(page, label_start).bounding_box()
    return (handle["x"] + handle["width"] / 2 - track["x"]) / track["width"]


def is_loading(page, selector: str) -> bool:
    """Whether the first component under ``selector`` shows Panel's loading state."""
    return page.locator(selector).first.evaluate(f"e => e.classList.contains('{LOADING}')")


def wait_for_loading(page, selector: str, loading: bool, timeout_s: float = 60.0) -> None:
    """Wait until the component's loading state is ``loading``."""
    deadline = time.perf_counter() + timeout_s
    while time.perf_counter() < deadline:
        if is_loading(page, selector) == loading:
            return
        page.wait_for_timeout(10)
    raise TimeoutError(f"{selector} did not {'start' if loading else 'stop'} loading")


def serve_scenario(scenario_file, port: int, *extra: str, env: dict | None = None, output=None,
                   timeout_s: float = 60.0):
    """Start ``porefill serve`` on ``scenario_file`` at 127.0.0.1:``port`` (with ``extra`` arguments and the
    environment ``env``, default this process's) in a subprocess, its output to ``output`` (an open file;
    default a pipe); return it once the port accepts connections (the caller terminates it)."""
    import os
    import socket
    import subprocess
    import sys
    from pathlib import Path

    exe = Path(sys.executable).with_name("porefill")
    environment = {**(os.environ if env is None else env), "PYTHONUNBUFFERED": "1"}
    proc = subprocess.Popen([str(exe), "serve", "--scenario", str(scenario_file), "--port", str(port), *extra],
                            stdout=subprocess.PIPE if output is None else output, stderr=subprocess.STDOUT,
                            text=True, env=environment)
    deadline = time.time() + timeout_s
    while time.time() < deadline:
        try:
            socket.create_connection(("127.0.0.1", port), timeout=0.5).close()
            return proc
        except OSError:
            if proc.poll() is not None:
                raise RuntimeError(f"server exited: {proc.stdout.read() if proc.stdout else 'see its log'}")
            time.sleep(0.2)
    proc.kill()
    raise RuntimeError(f"server did not start within {timeout_s:g} s")


_RECORDER = """([host, key]) => {
  window.__porefill = window.__porefill || {};
  if (window.__porefillFrame === undefined) {        // counts painted frames
    window.__porefillFrame = 0;
    const tick = () => { window.__porefillFrame += 1; requestAnimationFrame(tick); };
    requestAnimationFrame(tick);
  }
  const log = window.__porefill[key] = [];
  const note = () => log.push({t: Date.now(), frame: window.__porefillFrame,
                               loading: host.classList.contains('pn-loading'),
                               text: host.shadowRoot ? host.shadowRoot.textContent : host.textContent});
  const observer = new MutationObserver(note);
  observer.observe(host, {attributes: true, attributeFilter: ['class']});
  if (host.shadowRoot) observer.observe(host.shadowRoot, {childList: true, subtree: true, characterData: true});
  note();
}"""


def record_changes(page, selector: str, key: str) -> None:
    """From now on, record in the page every change of the component under ``selector``: its loading
    state and its text, with the browser's clock (read back with `recorded`). Records are made by the
    page itself as the DOM changes, so none are missed while the test is busy elsewhere."""
    host = page.locator(selector).first.element_handle()
    page.evaluate(_RECORDER, [host, key])


def recorded(page, key: str) -> list[dict]:
    """The records of `record_changes`: dicts with ``t`` (ms, browser clock), ``frame`` (frames painted
    so far: changes with the same number reached the screen together), ``loading`` and ``text``."""
    return page.evaluate("key => window.__porefill[key]", key)


_FIRST_SEEN = """(selectors) => {
  // before the page's own scripts: note the browser time (ms after navigation start) at which each selector
  // first matches an element that is drawn (it has a size). A selector "A >>> B" is B anywhere beneath an A,
  // through shadow roots (Bokeh and Panel draw inside them)
  window.__porefillSeen = {};
  const all = (start, sel) => {
    const out = [], stack = [start];
    while (stack.length) {
      const root = stack.pop();
      out.push(...root.querySelectorAll(sel));
      for (const el of root.querySelectorAll("*")) if (el.shadowRoot) stack.push(el.shadowRoot);
      if (root.shadowRoot) stack.push(root.shadowRoot);
    }
    return out;
  };
  const drawn = (chain) => {
    let found = [document];
    for (const sel of chain.split(">>>").map((s) => s.trim())) found = found.flatMap((el) => all(el, sel));
    return found.some((el) => { const r = el.getBoundingClientRect(); return r.width > 0 && r.height > 0; });
  };
  const look = () => {
    const seen = window.__porefillSeen;
    for (const [key, sel] of Object.entries(selectors))
      if (!(key in seen) && document.body && drawn(sel)) seen[key] = Math.round(performance.now());
    if (Object.keys(seen).length < Object.keys(selectors).length) setTimeout(look, 25);
  };
  look();
}"""


def record_first_seen(page, selectors: dict[str, str]) -> None:
    """Before the next navigation of ``page``: have the page note when each of ``selectors`` ({key: CSS, with
    ``A >>> B`` for a B beneath an A through shadow roots}) is first drawn (read back with `first_seen`)."""
    import json

    page.add_init_script(f"({_FIRST_SEEN})({json.dumps(selectors)})")


def first_seen(page) -> dict[str, float]:
    """{key: ms after navigation start} of `record_first_seen`'s selectors drawn so far."""
    return page.evaluate("() => window.__porefillSeen || {}")
