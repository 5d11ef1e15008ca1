"""Every file of the reader's bad-file gallery dropped on the Measured data tab of a real browser.

A file of its own (split from tests/test_measured_browser.py): most of its time is the upload widget's own wait
before it sends a file, so it runs beside the other files under pytest-xdist rather than after them.
"""
from __future__ import annotations

from pathlib import Path

import pytest

from upload_page import answer_to_upload, open_tab, refused_by_widget, upload

pytestmark = pytest.mark.browser


def test_the_whole_bad_file_gallery_through_the_upload(page, tmp_path):
    """Every file of the reader's gallery (tests/test_measured_files.py: empty, binary, huge, wrong encodings,
    formula cells, NaN, a million rows, ...) dropped on the page one after another: each gets a message naming
    it and no traceback, and the page still answers afterwards. Skipped: files the upload widget itself refuses
    (0 bytes, extensions it does not take) and entries that need reader arguments the page sets elsewhere."""
    from test_measured_files import GALLERY

    open_tab(page)
    sent = 0
    on_page = 0
    for i, (label, name, data, kwargs, _) in enumerate(GALLERY):
        data = data() if callable(data) else data
        suffix = Path(name).suffix.lower()
        if kwargs or not data or suffix not in (".csv", ".txt", ".tsv", ".dat", ".xlsx"):
            continue
        if on_page == 20:
            # a fresh page every 20 files: the upload widget keeps every file it was given (tens of MB here),
            # which slows the browser itself, not the server; the server must answer all of them
            page.reload()
            open_tab(page)
            on_page = 0
        path = tmp_path / f"g{i:03d}{suffix}"
        path.write_bytes(data)
        upload(page, path)
        on_page += 1
        shown, widget = answer_to_upload(page, path.name)
        if path.name not in shown:
            # the upload widget refused it itself (e.g. a binary's sniffed type): it says so in its own list
            assert refused_by_widget(widget), (label, shown, widget)
            continue
        assert "Traceback" not in shown, (label, shown)
        sent += 1
    assert sent >= 50
    page.get_by_text("Pore", exact=True).first.click()
    page.locator(".porefill-steps table").first.wait_for(state="visible", timeout=30_000)
    assert page.console_errors == []
