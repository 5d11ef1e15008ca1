"""Serving the dashboard with Panel's Bokeh server."""
from __future__ import annotations

import threading

import panel as pn

from physics.scenario import Scenario

from .app import create_app

__all__ = ["serve"]


def _warm_up() -> None:
    """Import CoolProp (about 4 s) in the background so the first classical gas a user picks is quick."""
    try:
        import CoolProp.CoolProp  # noqa: F401
    except Exception:   # the page reports vapour-pressure problems itself when it needs them
        pass


def serve(scenario: Scenario | None, *, address: str = "127.0.0.1", port: int = 5006, show: bool = False):
    threading.Thread(target=_warm_up, daemon=True).start()
    url = f"http://{address}:{port}/"
    print(f"porefill dashboard at {url}  (Ctrl-C stops it)", flush=True)
    origins = [f"{address}:{port}", f"localhost:{port}", f"127.0.0.1:{port}"]
    def page():
        return create_app(scenario)

    pn.serve({"/": page}, address=address, port=port, show=show,
             websocket_origin=origins, title="porefill", print_url=False,
             websocket_max_message_size=50 * 1024 * 1024)
