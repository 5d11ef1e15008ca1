"""Serving the dashboard with Panel's Bokeh server."""
from __future__ import annotations

import panel as pn

from physics.scenario import Scenario

from .app import create_app

__all__ = ["serve"]


def serve(scenario: Scenario | None, *, address: str = "127.0.0.1", port: int = 5006, show: bool = False):
    url = f"http://{address}:{port}/"
    print(f"porefill dashboard at {url}  (Ctrl-C stops it)", flush=True)
    origins = [f"{address}:{port}", f"localhost:{port}", f"127.0.0.1:{port}"]
    def page():
        return create_app(scenario)

    pn.serve({"/": page}, address=address, port=port, show=show,
             websocket_origin=origins, title="porefill", print_url=False,
             websocket_max_message_size=50 * 1024 * 1024)
