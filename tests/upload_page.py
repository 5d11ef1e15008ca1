"""Steps a browser test takes on the Measured data tab: open it, drop a file on the upload widget, and wait
for the page's answer (shared by tests/test_measured_browser.py and tests/test_upload_gallery_browser.py)."""
from __future__ import annotations

import re

from porefill.explorer.server.testing import text_of


def open_tab(page):
    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    page.get_by_text("Measured data", exact=True).first.click()
    page.locator(".porefill-dropper input[type=file]").first.wait_for(state="attached", timeout=10_000)


def wait_for_text(page, selector, words, timeout_s=20.0):
    import time
    deadline = time.time() + timeout_s
    while True:
        text = text_of(page, selector)
        if words in text or time.time() > deadline:
            return text
        page.wait_for_timeout(200)


def refused_by_widget(widget_text: str) -> bool:
    return "invalid" in widget_text.lower() or "large" in widget_text.lower()


def answer_to_upload(page, name: str, timeout_s: float = 60.0) -> tuple[str, str]:
    """(the file problems' text, the upload widget's own status) once either names the file's fate: the
    page's message naming ``name``, or the widget's refusal of a file it will not send (which would otherwise
    be waited out for the whole timeout)."""
    import time
    deadline = time.time() + timeout_s
    polls, widget = 0, ""
    while True:
        shown = text_of(page, ".porefill-file-problems p")
        if polls % 5 == 4:                  # the widget's list is slower to read: once a second
            widget = widget_status_of(page, name)
        if name in shown or refused_by_widget(widget) or time.time() > deadline:
            return shown, widget
        polls += 1
        page.wait_for_timeout(200)


def widget_status_of(page, name: str) -> str:
    """The upload widget's status line for the file ``name`` ("" if not listed): its list keeps every file it
    was given, so an earlier file's refusal must not stand for this one's."""
    info = page.locator(".filepond--file-info-main", has_text=re.compile(rf"^\s*{re.escape(name)}\s*$"))
    item = page.locator(".porefill-dropper .filepond--item").filter(has=info)
    return " ".join(item.locator(".filepond--file-status-main").all_inner_texts())


def upload(page, path):
    page.locator(".porefill-dropper input[type=file]").first.set_input_files(str(path))
