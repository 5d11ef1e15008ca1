"""Serving the dashboard with Panel's Bokeh server, behind the gate of `porefill.explorer.server.security`."""
from __future__ import annotations

import logging
import os
import secrets

from porefill.physics.scenario import Scenario

from porefill.explorer.server.security import (AUTH_COOKIE, PAGE_TEMPLATE, AccessPolicy, ServeError,
                                               answer_bad_requests, install, page_nonce)

__all__ = ["serve", "start_server", "quiet_closed_pages"]

log = logging.getLogger("porefill.explorer.server")


def _closed_page(exc: BaseException | None) -> bool:
    from tornado.iostream import StreamClosedError
    from tornado.websocket import WebSocketClosedError

    return isinstance(exc, (WebSocketClosedError, StreamClosedError))


class _ClosedPageFilter(logging.Filter):
    """Bokeh's and Panel's warning for a message to a page that has closed, made one debug line: a closed tab
    is no fault."""

    def filter(self, record: logging.LogRecord) -> bool:
        if record.getMessage().startswith("Failed sending message as connection was closed"):
            log.debug("a page closed before a message reached it")
            return False
        return True


class _EarlyCloseFilter(logging.Filter):
    """A tab closed while its websocket was still being set up: Bokeh's ``on_close`` then asserts that the
    session exists (bokeh/server/connection.py) and Tornado logs it as an uncaught exception. The page is gone
    and nothing is lost: one debug line instead of a traceback (found by the 116-session soak)."""

    def filter(self, record: logging.LogRecord) -> bool:
        exc = record.exc_info[1] if record.exc_info else None
        if isinstance(exc, AssertionError) and record.getMessage().startswith("Uncaught exception GET /ws"):
            tb = exc.__traceback__
            while tb is not None and tb.tb_next is not None:
                tb = tb.tb_next
            if tb is not None and tb.tb_frame.f_code.co_filename.replace("\\", "/").endswith(
                    "bokeh/server/connection.py"):
                log.debug("a page closed before its session was set up")
                return False
        return True


def quiet_closed_pages(loop) -> None:
    """A browser tab that closes while the server writes to it is no error: the writes' unretrieved
    WebSocketClosedError (or StreamClosedError), which asyncio would log with a traceback, and the warnings of
    Bokeh and Panel become debug lines; every other exception of the asyncio ``loop`` goes to the handler it had."""
    previous = loop.get_exception_handler()

    def handler(loop, context: dict) -> None:
        if _closed_page(context.get("exception")):
            log.debug("a page closed while the server wrote to it (%s)", type(context["exception"]).__name__)
        elif previous is not None:
            previous(loop, context)
        else:
            loop.default_exception_handler(context)

    loop.set_exception_handler(handler)
    for name in ("bokeh.server.views.ws", "panel.io.document"):      # the loggers that warn of it
        writer = logging.getLogger(name)
        if not any(isinstance(f, _ClosedPageFilter) for f in writer.filters):
            writer.addFilter(_ClosedPageFilter())
    tornado_log = logging.getLogger("tornado.application")
    if not any(isinstance(f, _EarlyCloseFilter) for f in tornado_log.filters):
        tornado_log.addFilter(_EarlyCloseFilter())


def use_nonce(doc) -> None:
    """Render the page of ``doc`` (a Bokeh document being served) with its response's CSP nonce on the inline
    scripts (`porefill.explorer.server.security.PAGE_TEMPLATE`); without the gate's nonce, nothing changes."""
    context = doc.session_context
    nonce = page_nonce(context.request) if context is not None and context.request is not None else None
    if nonce is not None:
        doc.template = PAGE_TEMPLATE
        doc.template_variables["csp_nonce"] = nonce


def _secret_key() -> str:
    """Key that signs the Bokeh session ids: ``$BOKEH_SECRET_KEY`` if set, else random for this run."""
    return os.environ.get("BOKEH_SECRET_KEY") or secrets.token_urlsafe(48)


def start_server(scenario: Scenario | None, *, address: str, port: int, policy: AccessPolicy):
    """Build the Bokeh server for the dashboard with the gate installed; the caller starts its loop.

    Raises
    ------
    ServeError
        When the address and port cannot be listened on.
    """
    import panel as pn

    from porefill.physics.pore import compiled

    compiled.enable()          # potential maps run in the server's threads: the compiled edge sum pays here

    from porefill.explorer.views.dashboard import create_app

    from porefill.explorer.jobs.file_parse import keep_ready
    from porefill.explorer.server.session_memory import session_closed, session_opened

    def page():
        use_nonce(pn.state.curdoc)
        try:
            pn.state.on_session_destroyed(session_closed)     # the last one out gives the caches back
            session_opened()
        except Exception:          # noqa: BLE001 - the page matters more than the memory bookkeeping
            logging.getLogger("porefill.explorer").exception("cannot watch this session's end")
        try:
            keep_ready()           # a file reader started ahead of the first file this page drops
        except Exception:          # noqa: BLE001 - without it each file starts its own reader, as before
            logging.getLogger("porefill.explorer").exception("cannot start a file reader ahead of need")
        return create_app(scenario)

    secret_key = _secret_key()
    try:
        server = pn.serve(
            {"/": page}, address=address, port=port, show=False, start=False, title="porefill",
            verbose=False, websocket_max_message_size=50 * 1024 * 1024,
            websocket_origin=sorted(policy.hosts),
            # session ids made and signed here, never taken from the client
            sign_sessions=True, secret_key=secret_key, generate_session_ids=True,
            # the session token sits in the page: keep the login cookie out of it
            exclude_cookies=[AUTH_COOKIE], exclude_headers=["Cookie", "Authorization"],
        )
    except OSError as exc:
        raise ServeError(f"cannot listen on {address} port {port}: {exc.strerror or exc}") from None
    install(server._tornado, policy, session_secret=secret_key)  # noqa: SLF001 - Bokeh keeps its Tornado application there
    answer_bad_requests(server._http)  # noqa: SLF001 - Bokeh keeps its Tornado HTTP server there
    quiet_closed_pages(server.io_loop.asyncio_loop)
    return server


def serve(scenario: Scenario | None, *, address: str = "127.0.0.1", port: int = 5006,
          policy: AccessPolicy | None = None, show: bool = False) -> None:
    """Serve the dashboard until interrupted.

    Parameters
    ----------
    scenario
        The scenario the page opens with (None: built-in defaults).
    address, port
        Where to listen.
    policy
        Accepted host names and the password; default: this address and port only, no password.
    show
        Open a browser window on the page.
    """
    policy = policy or AccessPolicy.for_server(address=address, port=port)
    server = start_server(scenario, address=address, port=port, policy=policy)
    shown = address if address not in ("0.0.0.0", "::", "") else "127.0.0.1"
    if ":" in shown:
        shown = f"[{shown}]"
    login = " (sign in with the password)" if policy.password is not None else ""
    print(f"porefill dashboard at http://{shown}:{server.port}/{login}  (Ctrl-C stops it)", flush=True)
    server.start()
    if show:
        server.io_loop.add_callback(server.show, "/")
    try:
        server.io_loop.start()
    except KeyboardInterrupt:
        pass
    finally:
        server.stop()
