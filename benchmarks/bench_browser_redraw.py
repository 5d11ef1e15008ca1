"""Browser time from a slider release to the redrawn potential map (prints JSON lines).

Serves the dashboard on the demo scenario, drives Debian's Chromium with Playwright; first loads the page a few
times and records when its frame (header, tab strip, controls) and its first plot (the map) were first drawn,
in ms after navigation start (the server warm, the demo's isotherm already computed once); then drags the
side-length slider back and forth and, for each release, records when the readout text changed and
when the map canvas's pixels changed; then drags the temperature slider and records when both the isotherm
plot's pixels and the steps table had changed; then presses the side-length slider's arrow key in bursts at a
person's pace (4 presses, 150 ms apart, on the page's clock) and records, for each burst, the positions the
server was asked for and the time from the last press to the redrawn map (a key burst is sent once no key
has come for 0.3 s: explorer/views/slider_keys.py). Run: .venv/bin/python benchmarks/bench_browser_redraw.py

``--contention`` measures instead session B's map redraw while session A keeps asking for isotherms of
60–100 Å pores, once with the isotherms in worker processes and once in threads
(``POREFILL_ISOTHERM_WORKERS``), and prints both.
"""
from __future__ import annotations

import json
import os
import socket
import statistics
import subprocess
import sys
import time
from pathlib import Path

from playwright.sync_api import sync_playwright

from porefill.explorer.server.testing import (drag_handle, first_seen, press_keys, readout_text, record_changes,
                                              recorded, record_first_seen,
                                              slider_handle, text_of)

ROOT = Path(__file__).resolve().parents[1]
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", "--no-first-run"]
CANVAS_SIGNATURE = """(host) => {
  const stack = [host];
  let h = 0;
  while (stack.length) {
    const el = stack.pop();
    if (el.tagName === 'CANVAS' && el.width > 200) {
      const ctx = el.getContext('2d');
      if (ctx) {
        const d = ctx.getImageData(0, 0, el.width, el.height).data;
        for (let i = 0; i < d.length; i += 97) h = (h * 31 + d[i]) | 0;
      }
    }
    if (el.shadowRoot) stack.push(...el.shadowRoot.children);
    stack.push(...el.children);
  }
  return h;
}"""


def map_signature(page, selector: str = ".porefill-map") -> int:
    return page.locator(selector).first.evaluate(CANVAS_SIGNATURE)


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def serve(port: int, workers: str = "process") -> subprocess.Popen:
    exe = Path(sys.executable).with_name("porefill")
    proc = subprocess.Popen([str(exe), "serve", "--scenario", str(ROOT / "scenarios/demo-hexagon-helium.toml"),
                             "--port", str(port)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            env={**os.environ, "POREFILL_ISOTHERM_WORKERS": workers})
    for _ in range(300):
        try:
            socket.create_connection(("127.0.0.1", port), timeout=0.2).close()
            return proc
        except OSError:
            time.sleep(0.1)
    proc.kill()
    raise RuntimeError("server did not start")


FRAME_PARTS = {"header": ".porefill-header >>> h1", "tab": ".bk-tab", "controls": ".porefill-controls >>> .noUi-handle",
               "map": ".porefill-map >>> canvas", "isotherm": ".porefill-isotherm >>> canvas"}


def page_loads(browser, url: str, reps: int = 5) -> tuple[list[float], list[float], list[float]]:
    """ms after navigation start to the frame, the first plot (map) and the isotherm, for ``reps`` loads."""
    frame, first_plot, isotherm = [], [], []
    for _ in range(reps):
        context = browser.new_context(viewport={"width": 1500, "height": 1100})
        page = context.new_page()
        record_first_seen(page, FRAME_PARTS)
        page.goto(url, timeout=120_000)
        page.locator(".porefill-isotherm canvas").first.wait_for(timeout=60_000)
        page.wait_for_timeout(300)
        seen = first_seen(page)
        frame.append(max(seen["header"], seen["tab"], seen["controls"]))
        first_plot.append(seen["map"])
        isotherm.append(seen["isotherm"])
        context.close()
    return frame, first_plot, isotherm


def main(reps: int = 12) -> None:
    port = free_port()
    proc = serve(port)
    try:
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path="/usr/bin/chromium", headless=True, args=ARGS)
            page_loads(browser, f"http://127.0.0.1:{port}/", reps=1)      # workers started, isotherm cached
            frame_ms, plot_ms, iso_ms_load = page_loads(browser, f"http://127.0.0.1:{port}/")
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            page.goto(f"http://127.0.0.1:{port}/")
            page.locator(".porefill-map canvas").first.wait_for(timeout=30_000)
            page.wait_for_timeout(1500)
            # the page's own clock as well: the release (pointerup) and every change of the readout, recorded by
            # the page as they happen (the polling below waits on the page between its reads)
            page.evaluate("() => document.addEventListener('pointerup', () => { window.__porefillUp = Date.now(); },"
                          " true)")
            record_changes(page, ".porefill-readout", "readout")
            text_ms, map_ms, page_ms = [], [], []
            for i in range(reps):
                handle = slider_handle(page, "Side length")
                before_text, before_sig = readout_text(page), map_signature(page)
                seen = len(recorded(page, "readout"))
                released = drag_handle(page, handle, 25 if i % 2 == 0 else -25)
                got_text = got_map = None
                deadline = released + 15
                while time.perf_counter() < deadline and (got_text is None or got_map is None):
                    now = time.perf_counter()
                    if got_text is None and readout_text(page) != before_text:
                        got_text = now
                    if got_map is None and map_signature(page) != before_sig:
                        got_map = now
                if got_text is not None:
                    text_ms.append(1e3 * (got_text - released))
                if got_map is not None:
                    map_ms.append(1e3 * (got_map - released))
                page.wait_for_timeout(400)
                up = page.evaluate("() => window.__porefillUp")
                later = [r for r in recorded(page, "readout")[seen:]
                         if r["t"] >= up and not r["loading"] and before_text not in r["text"]]
                if later:
                    page_ms.append(later[0]["t"] - up)
            iso_ms = []
            for i in range(reps):
                handle = slider_handle(page, "Temperature")
                before_text = text_of(page, ".porefill-steps table")
                before_sig = map_signature(page, ".porefill-isotherm")
                released = drag_handle(page, handle, 8 if i % 2 == 0 else -8)
                deadline = released + 15
                while time.perf_counter() < deadline:
                    if (map_signature(page, ".porefill-isotherm") != before_sig
                            and text_of(page, ".porefill-steps table") != before_text):
                        iso_ms.append(1e3 * (time.perf_counter() - released))
                        break
                page.wait_for_timeout(500)
            burst_ms, burst_asked = key_bursts(page, max(4, reps // 3))
            browser.close()
    finally:
        proc.terminate()
        proc.wait(timeout=10)
    for name, values in (("frame", frame_ms), ("first_plot", plot_ms), ("isotherm_plot", iso_ms_load)):
        print(json.dumps({"benchmark": f"browser_page_load_to_{name}", "median_ms": round(statistics.median(values)),
                          "max_ms": round(max(values)), "n": len(values)}))
    print(json.dumps({"benchmark": "browser_slider_release_to_redrawn_map",
                      "median_ms": round(statistics.median(map_ms), 1),
                      "max_ms": round(max(map_ms), 1), "n": len(map_ms)}))
    print(json.dumps({"benchmark": "browser_slider_release_to_updated_readout",
                      "median_ms": round(statistics.median(text_ms), 1), "n": len(text_ms),
                      "how": "polled from Python between canvas reads"}))
    if page_ms:
        print(json.dumps({"benchmark": "browser_slider_release_to_updated_readout_page_clock",
                          "median_ms": round(statistics.median(page_ms), 1), "max_ms": round(max(page_ms), 1),
                          "n": len(page_ms), "how": "pointerup to the readout's new text, both on the page's clock"}))
    print(json.dumps({"benchmark": "browser_temperature_release_to_redrawn_isotherm_and_steps",
                      "median_ms": round(statistics.median(iso_ms), 1), "max_ms": round(max(iso_ms), 1),
                      "n": len(iso_ms), "of": reps}))
    print(json.dumps({"benchmark": "browser_key_burst_last_press_to_redrawn_map", "presses": 4, "gap_ms": 150,
                      "median_ms": round(statistics.median(burst_ms), 1), "max_ms": round(max(burst_ms), 1),
                      "n": len(burst_ms), "positions_asked_per_burst": burst_asked}))


def key_bursts(page, bursts: int) -> tuple[list[float], list[int]]:
    """Bursts of four arrow-key presses 150 ms apart on the side-length slider, right then left: ms from the
    last press to the changed map pixels (both on the page's clock), and the positions each burst asked for."""
    caption = page.locator(".porefill-isotherm-caption p").first
    times, asked = [], []
    for i in range(bursts):
        before_sig = map_signature(page)
        before = int(caption.get_attribute("data-asked"))
        pressed, _ = press_keys(slider_handle(page, "Side length"), "ArrowRight" if i % 2 == 0 else "ArrowLeft",
                                [150, 150, 150])
        deadline = time.perf_counter() + 15
        while time.perf_counter() < deadline:
            if map_signature(page) != before_sig:
                times.append(page.evaluate("() => performance.now()") - pressed[-1])
                break
        page.wait_for_timeout(1500)         # the isotherm too, before the next burst
        asked.append(int(caption.get_attribute("data-asked")) - before)
    return times, asked


def map_redraw_ms(page, dx: float) -> float | None:
    """Drag the side-length slider by dx and return ms from release to changed map pixels."""
    before = map_signature(page)
    released = drag_handle(page, slider_handle(page, "Side length"), dx)
    deadline = released + 30
    while time.perf_counter() < deadline:
        if map_signature(page) != before:
            return 1e3 * (time.perf_counter() - released)
    return None


def contention(workers: str, reps: int = 10) -> None:
    port = free_port()
    proc = serve(port, workers)
    try:
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path="/usr/bin/chromium", headless=True, args=ARGS)
            a = browser.new_context(viewport={"width": 1400, "height": 900}).new_page()
            b = browser.new_context(viewport={"width": 1400, "height": 900}).new_page()
            for page in (a, b):
                page.goto(f"http://127.0.0.1:{port}/")
                page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
            b.wait_for_timeout(1000)
            quiet = [map_redraw_ms(b, 25 if i % 2 == 0 else -25) for i in range(reps)]
            busy = []
            drag_handle(a, slider_handle(a, "Side length"), 600)        # A: 100 Å
            for i in range(reps):
                if i % 3 == 0:         # A keeps asking for new large pores (60–100 Å)
                    drag_handle(a, slider_handle(a, "Side length"), -40 if i % 2 == 0 else 40)
                busy.append(map_redraw_ms(b, 25 if i % 2 == 0 else -25))
                b.wait_for_timeout(300)
            browser.close()
    finally:
        proc.terminate()
        proc.wait(timeout=30)
    for name, values in (("idle", quiet), ("while_other_session_computes", busy)):
        got = [v for v in values if v is not None]
        print(json.dumps({"benchmark": f"browser_map_redraw_{name}", "isotherm_workers": workers,
                          "median_ms": round(statistics.median(got), 1), "max_ms": round(max(got), 1),
                          "n": len(got), "of": len(values)}))


if __name__ == "__main__":
    if "--contention" in sys.argv:
        for kind in ("process", "thread"):
            contention(kind)
    else:
        main()
