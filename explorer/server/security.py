"""Who may reach the served dashboard, and what every response tells the browser.

The Bokeh server behind Panel trusts its clients more than a dashboard on a shared network should. This
module puts a gate in front of it (`install`), on the Tornado application, before Bokeh's own routes:

- the ``Host`` header must be one of the names the server is meant to be reached by (`AccessPolicy.hosts`),
  so a page on another domain that rebinds its name to 127.0.0.1 gets 403 and no data;
- an ``Origin`` header, when present (always, on a browser's websocket), must name one of those hosts too,
  and a browser's cross-site sub-requests (``Sec-Fetch-Site``) are refused;
- ``/autoload.js`` (a session token for embedding the app in other sites) is switched off;
- a session id chosen by the client (``bokeh-session-id``) is refused: ids come from the server, signed;
- ``/components/<module>/...`` is served only for Panel modules already imported, so a URL never
  imports a module;
- with a password, every request except the login page needs a signed cookie;
- every HTTP response carries a Content-Security-Policy and the usual hardening headers.

The checks and the option parsing use only the standard library and Tornado, so the command line can run
them before it imports Panel.
"""
from __future__ import annotations

import hashlib
import hmac
import html
import ipaddress
import math
import os
import re
import secrets
import socket
import sys
import threading
import time
from dataclasses import dataclass
from pathlib import Path
from urllib.parse import urlsplit

__all__ = ["AccessPolicy", "ServeError", "AUTH_COOKIE", "PAGE_TEMPLATE", "PASSWORD_ENV", "SECURITY_HEADERS",
           "answer_bad_requests", "check_address", "check_can_listen", "content_security_policy", "install",
           "is_loopback", "page_nonce", "parse_allowed_origin", "read_password"]

AUTH_COOKIE = "porefill_auth"
PASSWORD_ENV = "POREFILL_PASSWORD"
LOGIN_PATH = "/login"
LOGOUT_PATH = "/logout"
_COOKIE_MAX_AGE_DAYS = 1
MAX_PASSWORD_FILE_BYTES = 64 * 1024

# What the Panel 1.9 / Bokeh 3.9 page needs in Chromium (measured by removing one source at a time and
# loading the page, switching every tab, opening a scenario and a measured file; tests/test_server.py keeps
# the page free of violations under it):
# - script-src: the page's inline <script> blocks (Bokeh's set_log_level, and the block that starts the
#   document, which holds the session token, so no fixed hash would do) carry this response's nonce
#   (`PAGE_TEMPLATE`); 'unsafe-inline' is gone, so an injected inline handler or <script> does not run.
#   'unsafe-eval' stays: Panel's ReactiveHTML components (pn.FlexBox, which lays out the Pore and Measured
#   tabs, is one) compile their HTML templates with `new Function` in panel.min.js; without it no root
#   renders. blob: is not needed (es-module-shims, Panel's loader for ES-module components, found no module
#   to load on this page).
# - style-src 'unsafe-inline': Bokeh writes thousands of <style> elements into its views' shadow roots
#   (bokeh.min.js) and Panel sets style="" attributes at run time; neither can carry a nonce.
# - img-src data: for the icons of Bokeh's toolbar. The websocket goes back to 'self'.
SCRIPT_SOURCES = "'self' 'unsafe-eval'"


def content_security_policy(nonce: str | None = None) -> str:
    """The Content-Security-Policy of a response; ``nonce`` lets the inline scripts that carry it run."""
    scripts = SCRIPT_SOURCES if nonce is None else f"{SCRIPT_SOURCES} 'nonce-{nonce}'"
    return "; ".join([
        "default-src 'self'",
        f"script-src {scripts}",
        "style-src 'self' 'unsafe-inline'",
        "img-src 'self' data:",
        "font-src 'self'",
        "connect-src 'self'",
        "worker-src 'self'",
        "object-src 'none'",
        "base-uri 'none'",
        "form-action 'self'",
        "frame-ancestors 'none'",
    ])


# A response without a page of its own (login, refusals, Tornado's 400) allows no inline script at all.
CONTENT_SECURITY_POLICY = content_security_policy()

# The request attribute that holds its response's nonce (set by the gate's output transform before any
# handler runs; Bokeh's session context passes attribute reads through to the request).
NONCE_ATTRIBUTE = "porefill_csp_nonce"

# The dashboard page's template: Panel's own (``base``), with the response's nonce added to the inline
# <script> tags Bokeh and Panel write themselves (their resources block and the block that starts the
# document). Only those two strings, made by Bokeh from our scripts and ids, are touched: user text never
# reaches the HTML page (it arrives over the websocket), and a tag without a nonce stays blocked. The nonce
# on the es-module-shims options block is how that library finds the nonce for the scripts it adds.
PAGE_TEMPLATE = """\
{% set nonced = ' nonce="' ~ csp_nonce ~ '">' %}
{% block js_resources %}{% filter replace('<script type="esms-options">', '<script type="esms-options"' ~ nonced)
  | replace('<script type="text/javascript">', '<script type="text/javascript"' ~ nonced)
  | replace('<script type="module">', '<script type="module"' ~ nonced) %}{{ super() }}{% endfilter %}{% endblock %}
{% block inner_body %}{% filter replace('<script>', '<script' ~ nonced) %}{{ super() }}{% endfilter %}{% endblock %}
"""


def page_nonce(request) -> str | None:
    """The CSP nonce of the response to ``request`` (a Tornado request or Bokeh's proxy of one), or None
    when no gate is installed."""
    return getattr(request, NONCE_ATTRIBUTE, None)


SECURITY_HEADERS = {
    "Content-Security-Policy": CONTENT_SECURITY_POLICY,
    "X-Content-Type-Options": "nosniff",
    "Referrer-Policy": "no-referrer",
    "X-Frame-Options": "DENY",
    "Cross-Origin-Opener-Policy": "same-origin",
    "Cross-Origin-Resource-Policy": "same-origin",
}


class ServeError(Exception):
    """The server cannot start as asked; the message is one line naming the option and the problem."""


# ---------------------------------------------------------------------------------------------------------
# Options, checked before anything heavy is imported


_HOSTNAME = re.compile(r"^(?=.{1,253}$)[a-z0-9]([a-z0-9-]{0,61}[a-z0-9])?(\.[a-z0-9]([a-z0-9-]{0,61}[a-z0-9])?)*$")


def is_loopback(address: str) -> bool:
    """True for ``localhost`` and loopback IP addresses (127.0.0.0/8, ::1)."""
    if address.lower() == "localhost":
        return True
    try:
        return ipaddress.ip_address(address.strip("[]")).is_loopback
    except ValueError:
        return False


def _is_wildcard(address: str) -> bool:
    try:
        return ipaddress.ip_address(address.strip("[]")).is_unspecified
    except ValueError:
        return address == ""


def _host_name(name: str) -> str:
    """A host name or IP address as it appears in a Host header (IPv6 in brackets), lower case."""
    try:
        ip = ipaddress.ip_address(name.strip("[]"))
    except ValueError:
        return name.lower()
    return f"[{ip}]" if ip.version == 6 else str(ip)


def parse_allowed_origin(text: str) -> tuple[str, int | None]:
    """Split ``HOST[:PORT]`` (``--allow-origin``) into a host name and an optional port.

    Raises
    ------
    ServeError
        For a scheme, a path, a wildcard, a malformed name or a port outside 1–65535.
    """
    value = text.strip()
    problem = f"--allow-origin {text!r} is not HOST[:PORT] (e.g. lab-pc.example.org:5006 or 192.168.1.20)"
    if not value or "/" in value or "*" in value or "@" in value:
        raise ServeError(problem)
    if value.startswith("["):                      # [IPv6]:port
        host, _, rest = value[1:].partition("]")
        if rest and not rest.startswith(":"):
            raise ServeError(problem)
        port_text = rest[1:] if rest else None
    elif value.count(":") == 1:
        host, port_text = value.split(":")
    elif ":" in value:                             # bare IPv6
        host, port_text = value, None
    else:
        host, port_text = value, None
    port = None
    if port_text is not None:
        if not port_text.isdigit() or not 0 < int(port_text) < 65536:
            raise ServeError(problem)
        port = int(port_text)
    try:
        ipaddress.ip_address(host)
    except ValueError:
        if not _HOSTNAME.match(host.lower()):
            raise ServeError(problem) from None
    return _host_name(host), port


def read_password(path: str | None, environ: os._Environ | dict | None = None) -> str | None:
    """The dashboard password: the first line of ``path``, else ``$POREFILL_PASSWORD``, else None.

    Raises
    ------
    ServeError
        When the file cannot be read or the password is empty.
    """
    environ = os.environ if environ is None else environ
    if path is not None:
        from porefill.explorer.files.bounded import FileTooLarge, read_bounded, size_text

        try:   # at most MAX_PASSWORD_FILE_BYTES, also from a pipe or a device
            text = read_bounded(path, MAX_PASSWORD_FILE_BYTES).decode("utf-8-sig")   # a byte-order mark is no part of it
        except IsADirectoryError:
            raise ServeError(f"--password-file {path}: is a directory, not a file") from None
        except FileNotFoundError:
            raise ServeError(f"--password-file {path}: no such file") from None
        except FileTooLarge:
            raise ServeError(f"--password-file {path}: more than the {size_text(MAX_PASSWORD_FILE_BYTES)} a "
                             "password file holds (the password is its first line)") from None
        except (OSError, UnicodeDecodeError) as exc:
            raise ServeError(f"--password-file {path}: cannot read it ({getattr(exc, 'strerror', None) or exc})"
                             ) from None
        lines = text.splitlines()
        password = lines[0] if lines else ""
        if not password:
            raise ServeError(f"--password-file {path}: the first line (the password) is empty")
        return password
    password = environ.get(PASSWORD_ENV)
    if password is None:
        return None
    if not password:
        raise ServeError(f"{PASSWORD_ENV} is set but empty")
    return password


def check_address(address: str) -> None:
    """Check that ``address`` is a name or IP address this machine can look up (nothing is bound).

    Raises
    ------
    ServeError
        Naming the address and the resolver's reason.
    """
    try:
        ipaddress.ip_address(address.strip("[]") if address.startswith("[") else address)
    except ValueError:
        if not _HOSTNAME.match(address.lower()) or re.fullmatch(r"[\d.]+", address):  # no need to ask DNS
            raise ServeError(f"--address {address!r} is not a host name or IP address") from None
    try:
        socket.getaddrinfo(address, None, socket.AF_UNSPEC, socket.SOCK_STREAM, 0, socket.AI_PASSIVE)
    except (OSError, UnicodeError) as exc:
        reason = getattr(exc, "strerror", None) or str(exc)
        raise ServeError(f"--address {address!r} is not a host name or IP address ({reason})") from None


def check_can_listen(address: str, port: int) -> None:
    """Bind and release ``address:port`` the way the server will, to report a busy port or a bad address.

    Raises
    ------
    ServeError
        Naming the address, the port and the system's reason.
    """
    from tornado.netutil import bind_sockets

    check_address(address)
    try:
        sockets = bind_sockets(port, address=address)
    except OSError as exc:
        raise ServeError(f"cannot listen on {address} port {port}: {exc.strerror or exc}") from None
    for s in sockets:
        s.close()


@dataclass(frozen=True)
class AccessPolicy:
    """What the gate lets through.

    Parameters
    ----------
    hosts
        Accepted ``Host`` header values (lower case, ``name`` or ``name:port``); an ``Origin`` must name
        one of them too.
    password
        The dashboard password, or None for no login.
    cookie_secret
        Key that signs the login cookie (random per server run).
    """

    hosts: frozenset[str]
    password: str | None = None
    cookie_secret: bytes = b""

    def __post_init__(self):
        if not self.hosts:
            raise ValueError("hosts must name at least one host the server is reached by")
        if self.password is not None and len(self.cookie_secret) < 32:
            raise ValueError("cookie_secret must be at least 32 bytes when a password is set")

    @classmethod
    def for_server(cls, *, address: str, port: int, allowed_origins: tuple[str, ...] = (),
                   password: str | None = None) -> "AccessPolicy":
        """The policy of a server listening on ``address:port``.

        Served names: the address itself (unless it is a wildcard such as 0.0.0.0), ``localhost`` and
        127.0.0.1 when the loopback interface is listened on, and every ``--allow-origin``. A name given
        without a port is accepted with the server's port and without one (behind a reverse proxy).
        """
        hosts: set[str] = set()

        def add(name: str, p: int | None) -> None:
            name = _host_name(name)
            if p is None:
                hosts.update({name, f"{name}:{port}"})
            else:
                hosts.add(f"{name}:{p}")
                if p in (80, 443):                 # browsers leave the default port out
                    hosts.add(name)

        if not _is_wildcard(address):
            add(address, port)
        if is_loopback(address) or _is_wildcard(address):
            for name in ("localhost", "127.0.0.1"):
                add(name, port)
        for text in allowed_origins:
            add(*parse_allowed_origin(text))
        secret = secrets.token_bytes(48) if password is not None else b""
        return cls(hosts=frozenset(hosts), password=password, cookie_secret=secret)

    def host_allowed(self, host: str | None) -> bool:
        return bool(host) and host.lower() in self.hosts

    def origin_allowed(self, origin: str) -> bool:
        parts = urlsplit(origin)
        if parts.scheme not in ("http", "https") or not parts.netloc:
            return False                           # includes the opaque origin "null"
        return parts.netloc.lower() in self.hosts

    def password_matches(self, candidate: str) -> bool:
        if self.password is None:
            return False
        digest = hashlib.sha256
        return hmac.compare_digest(digest(candidate.encode()).digest(), digest(self.password.encode()).digest())


# ---------------------------------------------------------------------------------------------------------
# The gate on the Tornado application

def _refusal(policy: AccessPolicy, request) -> tuple[int, str] | None:
    """Why a request is refused (status, one-line text), or None to let it through."""
    headers = request.headers
    if not policy.host_allowed(headers.get("Host")):
        return 403, "This server does not answer to that host name."
    origin = headers.get("Origin")
    site = headers.get("Sec-Fetch-Site")
    # Under "Referrer-Policy: no-referrer" a browser sends "Origin: null" with its own form posts; the
    # browser-set Sec-Fetch-Site (which no page can forge) tells those apart from a foreign page's.
    own_post = origin == "null" and site == "same-origin"
    if origin is not None and not own_post and not policy.origin_allowed(origin):
        return 403, "Requests from other sites are refused."
    if site in ("cross-site", "same-site") and not (
            headers.get("Sec-Fetch-Mode") == "navigate" and request.method in ("GET", "HEAD")):
        return 403, "Requests from other sites are refused."
    path = request.path
    if path.endswith("/autoload.js"):
        return 404, "Not found."
    if "bokeh-session-id" in request.query_arguments or "Bokeh-Session-Id" in headers:
        return 400, "Session ids are chosen by the server; open the page without bokeh-session-id."
    if path.startswith("/components/"):
        module = path[len("/components/"):].split("/", 1)[0]
        if not ((module == "panel" or module.startswith("panel.")) and module in sys.modules):
            return 404, "Not found."
    return None


class LoginSessions:
    """Who is signed in, kept on the server: each sign-in gets a random token (carried by the signed,
    HttpOnly, SameSite=Strict cookie), and signing out forgets it, so a copied cookie stops working at once.
    Failed attempts from one address are slowed down: after ``free_failures`` in a row, each further try
    waits twice as long as the last (1 s, 2 s, 4 s, ... at most ``max_wait_s``), answered 429 until then."""

    def __init__(self, policy: "AccessPolicy", *, free_failures: int = 5, max_wait_s: float = 300.0,
                 clock=time.monotonic):
        self.policy = policy
        self.free_failures = free_failures
        self.max_wait_s = max_wait_s
        self.clock = clock
        self._tokens: dict[str, float] = {}            # token -> when it was issued
        self._failures: dict[str, tuple[int, float]] = {}   # address -> (failures in a row, next try allowed at)
        self._lock = threading.Lock()

    # signing in and out ----------------------------------------------------------------------------
    def open(self) -> str:
        token = secrets.token_urlsafe(32)
        with self._lock:
            self._tokens[token] = self.clock()
        return token

    def close(self, token: str | None) -> None:
        with self._lock:
            self._tokens.pop(token or "", None)

    def token_of(self, request) -> str | None:
        """The valid session token of a request's cookie, or None."""
        from tornado.web import decode_signed_value

        morsel = request.cookies.get(AUTH_COOKIE)
        if morsel is None:
            return None
        value = decode_signed_value(self.policy.cookie_secret, AUTH_COOKIE, morsel.value,
                                    max_age_days=_COOKIE_MAX_AGE_DAYS)
        if value is None:
            return None
        token = value.decode("ascii", "replace")
        with self._lock:
            issued = self._tokens.get(token)
        if issued is None or self.clock() - issued > _COOKIE_MAX_AGE_DAYS * 86400.0:
            return None
        return token

    def form_token(self, token: str) -> str:
        """The sign-out form's token: tied to the session, so no other page can post it."""
        return hmac.new(self.policy.cookie_secret, b"logout:" + token.encode(), hashlib.sha256).hexdigest()

    # slowing down guesses ---------------------------------------------------------------------------
    def wait_s(self, address: str) -> float:
        """Seconds before ``address`` may try a password again (0: now)."""
        with self._lock:
            _, allowed_at = self._failures.get(address, (0, 0.0))
        return max(0.0, allowed_at - self.clock())

    def failed(self, address: str) -> None:
        with self._lock:
            count, _ = self._failures.get(address, (0, 0.0))
            count += 1
            extra = count - self.free_failures
            wait = 0.0 if extra < 0 else min(self.max_wait_s, 2.0 ** extra)
            self._failures[address] = (count, self.clock() + wait)
            if len(self._failures) > 10_000:           # bounded: the oldest addresses are forgotten
                for key in list(self._failures)[:1000]:
                    del self._failures[key]

    def succeeded(self, address: str) -> None:
        with self._lock:
            self._failures.pop(address, None)


_LOGIN_PAGE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>porefill: sign in</title>
<meta name="viewport" content="width=device-width, initial-scale=1"></head>
<body>
<h1>porefill</h1>
{message}<form method="post" action="{action}">
<p><label>Password <input type="password" name="password" autocomplete="current-password" autofocus required></label>
<button type="submit">Sign in</button></p>
</form>
</body></html>
"""


_LOGOUT_PAGE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>porefill: sign out</title>
<meta name="viewport" content="width=device-width, initial-scale=1"></head>
<body>
<h1>porefill</h1>
<form method="post" action="{action}"><input type="hidden" name="form_token" value="{token}">
<p><button type="submit">Sign out</button></p>
</form>
</body></html>
"""


def logout_page(form_token: str) -> str:
    """The sign-out form, carrying the session's form token."""
    return _LOGOUT_PAGE.format(action=html.escape(LOGOUT_PATH, quote=True), token=html.escape(form_token, quote=True))


def login_page(message: str = "") -> str:
    """The login form; ``message`` is shown as escaped text."""
    note = f"<p role=\"alert\">{html.escape(message)}</p>\n" if message else ""
    return _LOGIN_PAGE.format(message=note, action=html.escape(LOGIN_PATH, quote=True))


def _websocket_token_signed(request, secret_key: str) -> bool:
    """Whether a websocket upgrade carries a Bokeh session token signed with ``secret_key``.

    Bokeh reads the token from the second ``Sec-WebSocket-Protocol`` entry (after "bokeh") and would
    otherwise find a bad one only after the handshake.
    """
    from bokeh.util.token import check_token_signature

    protocols = [p.strip() for p in request.headers.get("Sec-WebSocket-Protocol", "").split(",")]
    if len(protocols) != 2 or protocols[0] != "bokeh":
        return False
    try:
        return check_token_signature(protocols[1], secret_key=secret_key, signed=True)
    except Exception:                              # a malformed token is simply not signed
        return False


def install(app, policy: AccessPolicy, *, session_secret: str) -> None:
    """Put the gate and the response headers in front of every route of a Tornado application.

    Parameters
    ----------
    app : tornado.web.Application
        The Bokeh server's application (before it starts serving).
    policy
        Hosts, origins and password to enforce.
    session_secret
        The key Bokeh signs session ids and tokens with; a websocket whose token it did not sign is
        refused at the handshake.
    """
    from tornado.routing import Matcher, PathMatches, Rule
    from tornado.web import OutputTransform, RequestHandler, create_signed_value

    class Refused(RequestHandler):
        SUPPORTED_METHODS = RequestHandler.SUPPORTED_METHODS

        def initialize(self, status: int = 403, message: str = "Forbidden.") -> None:
            self.status, self.message = status, message

        def prepare(self) -> None:
            self.clear_header("Server")
            self.set_status(self.status)
            self.set_header("Content-Type", "text/plain; charset=utf-8")
            self.set_header("Cache-Control", "no-store")
            self.finish(self.message + "\n")

    class RefusalMatcher(Matcher):
        def match(self, request):
            verdict = _refusal(policy, request)
            if (verdict is None and request.headers.get("Upgrade", "").lower() == "websocket"
                    and not _websocket_token_signed(request, session_secret)):
                verdict = 403, "The session token was not issued by this server."
            if verdict is None:
                return None
            return {"target_kwargs": {"status": verdict[0], "message": verdict[1]}}

    sessions = LoginSessions(policy)

    class NotLoggedIn(Matcher):
        def match(self, request):
            return None if sessions.token_of(request) is not None else {}

    class LoginRequired(RequestHandler):
        def prepare(self) -> None:
            self.set_header("Cache-Control", "no-store")
            if self.request.method in ("GET", "HEAD") and self.request.headers.get("Upgrade") is None:
                self.redirect(LOGIN_PATH)
            else:
                self.set_status(403)
                self.set_header("Content-Type", "text/plain; charset=utf-8")
                self.finish("Sign in first.\n")

    class Login(RequestHandler):
        def get(self) -> None:
            self._form(200)

        def post(self) -> None:
            address = self.request.remote_ip or "?"
            wait = sessions.wait_s(address)
            if wait > 0:
                self.set_header("Retry-After", str(math.ceil(wait)))
                self._form(429, f"Too many wrong passwords: try again in {math.ceil(wait)} s.")
                return
            if policy.password_matches(self.get_body_argument("password", default="")):
                sessions.succeeded(address)
                value = create_signed_value(policy.cookie_secret, AUTH_COOKIE, sessions.open())
                self.set_cookie(AUTH_COOKIE, value.decode(), path="/", httponly=True, samesite="Strict",
                                secure=self.request.protocol == "https")
                self.redirect("/", status=303)
            else:
                sessions.failed(address)
                self._form(403, "Wrong password.")

        def _form(self, status: int, message: str = "") -> None:
            self.set_status(status)
            self.set_header("Content-Type", "text/html; charset=utf-8")
            self.set_header("Cache-Control", "no-store")
            self.finish(login_page(message))

    class Logout(RequestHandler):
        """GET shows a sign-out button (a link or a foreign page cannot sign anyone out); POST with the
        session's form token ends the session on the server and clears the cookie."""

        def get(self) -> None:
            token = sessions.token_of(self.request)
            self.set_header("Cache-Control", "no-store")
            if token is None:
                self.redirect(LOGIN_PATH)
                return
            self.set_header("Content-Type", "text/html; charset=utf-8")
            self.finish(logout_page(sessions.form_token(token)))

        def post(self) -> None:
            token = sessions.token_of(self.request)
            self.set_header("Cache-Control", "no-store")
            given = self.get_body_argument("form_token", default="")
            if token is None or not hmac.compare_digest(given, sessions.form_token(token)):
                self.set_status(403)
                self.set_header("Content-Type", "text/plain; charset=utf-8")
                self.finish("Sign out from porefill's own sign-out page.\n")
                return
            sessions.close(token)
            self.clear_cookie(AUTH_COOKIE, path="/")
            self.redirect(LOGIN_PATH, status=303)

    class Headers(OutputTransform):
        def __init__(self, request) -> None:
            # made before any handler runs, so the page's template and this header share it
            super().__init__(request)
            self.nonce = secrets.token_urlsafe(18)
            setattr(request, NONCE_ATTRIBUTE, self.nonce)

        def transform_first_chunk(self, status_code, headers, chunk, finishing):
            for name, value in SECURITY_HEADERS.items():
                headers[name] = value
            headers["Content-Security-Policy"] = content_security_policy(self.nonce)
            headers.pop("Server", None)
            return status_code, headers, chunk

    rules = [Rule(RefusalMatcher(), Refused)]
    if policy.password is not None:
        rules += [Rule(PathMatches(re.escape(LOGIN_PATH) + "$"), Login),
                  Rule(PathMatches(re.escape(LOGOUT_PATH) + "$"), Logout),
                  Rule(NotLoggedIn(), LoginRequired)]
    # Tornado's public extension point: host handlers added to the application are tried before its own
    # routes (Bokeh's), and a request none of these rules takes falls through to them.
    app.add_handlers(r".*$", rules)
    app.add_transform(Headers)


def answer_bad_requests(http_server) -> None:
    """Give Tornado's own 400 answer (a request whose Host header is missing or malformed, refused before
    any route sees it) the same security headers as every other response, and a line of text.

    ``http_server`` is the `tornado.httpserver.HTTPServer` serving the application: its ``request_callback``
    (an `HTTPServerConnectionDelegate`) is wrapped so that the request's construction error is answered here,
    through the connection's public ``write_headers``/``finish``, instead of as the bare status line Tornado
    writes (``HTTP/1.1 400 Bad Request`` and nothing else). Malformed start lines and headers, which Tornado
    refuses before any delegate is asked, still get its bare line.
    """
    from tornado import httputil

    class Answered(httputil.HTTPMessageDelegate):
        def __init__(self, inner, connection):
            self.inner, self.connection, self.refused = inner, connection, False

        def headers_received(self, start_line, headers):
            try:
                return self.inner.headers_received(start_line, headers)
            except httputil.HTTPInputError as exc:
                self.refused = True
                body = f"Bad request: {str(exc)[:200]}.\n".encode("utf-8", "replace")
                answer = httputil.HTTPHeaders({**SECURITY_HEADERS, "Content-Type": "text/plain; charset=utf-8",
                                               "Cache-Control": "no-store", "Content-Length": str(len(body)),
                                               "Connection": "close"})
                self.connection.write_headers(httputil.ResponseStartLine("HTTP/1.1", 400, "Bad Request"),
                                              answer, body)
                self.connection.finish()          # before the body is read: the connection closes after it
                return None

        def data_received(self, chunk):
            return None if self.refused else self.inner.data_received(chunk)

        def finish(self) -> None:
            if not self.refused:
                self.inner.finish()

        def on_connection_close(self) -> None:
            if not self.refused:             # a refused request never reached the inner delegate
                self.inner.on_connection_close()

    class Server(httputil.HTTPServerConnectionDelegate):
        def __init__(self, inner):
            self.inner = inner

        def start_request(self, server_conn, request_conn):
            return Answered(self.inner.start_request(server_conn, request_conn), request_conn)

        def on_close(self, server_conn) -> None:
            self.inner.on_close(server_conn)

    http_server.request_callback = Server(http_server.request_callback)
