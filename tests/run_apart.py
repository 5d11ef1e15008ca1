"""Run a piece of a test in a thread of its own: Playwright's sync API (the browser tests) leaves an asyncio
event loop running in the main thread for the rest of the session, and code that starts or expects no loop
(``asyncio.run``, param's async callbacks run at once) must not meet it."""
from __future__ import annotations

import threading


def in_a_thread(fn):
    """``fn()`` in a fresh thread; its result returned, or its exception raised here."""
    out = {}

    def run():
        try:
            out["value"] = fn()
        except BaseException as exc:          # noqa: BLE001 - handed back to the test
            out["error"] = exc

    worker = threading.Thread(target=run)
    worker.start()
    worker.join()
    if "error" in out:
        raise out["error"]
    return out.get("value")
