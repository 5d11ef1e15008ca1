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
    """Drag a slider handle by dx pixels; return the perf_counter time of the release."""
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


def wait_for_text_change(page, selector: str, before: str, timeout_s: float = 20.0) -> float:
    """Poll until the text under ``selector`` differs from ``before``; return the time it did."""
    deadline = time.perf_counter() + timeout_s
    while time.perf_counter() < deadline:
        if text_of(page, selector) != before:
            return time.perf_counter()
        page.wait_for_timeout(5)
    raise TimeoutError(f"the text of {selector} did not change")


def readout_text(page) -> str:
    """The potential readout under the map."""
    return text_of(page, READOUT)


def wait_for_readout_change(page, before: str, timeout_s: float = 20.0) -> float:
    return wait_for_text_change(page, READOUT, before, timeout_s)
