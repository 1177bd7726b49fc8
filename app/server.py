"""`powerlens serve`: the explorer on a local web server.

Binds 127.0.0.1 unless told otherwise, checks every request's Host header
against an allow-list (a DNS-rebinding page cannot read the server), accepts
websocket connections only from the same explicit origins (never ``*``),
serves every script and style sheet itself (the page works offline), handles
sessions in a thread pool, and stops cleanly on Ctrl-C or SIGTERM.

Sharing on a network (``--address`` other than loopback) needs a password unless
``--no-password`` is given explicitly. The password comes from the environment
variable ``POWERLENS_PASSWORD``, a file (``--password-file``) or a prompt
(``--ask-password``), never from a command-line value (which ``ps`` shows to every
user of the machine). It is checked in constant time on a login page; a signed
cookie (random secret per server start) then admits the page and its websocket.
Without it neither a session nor a websocket is opened.

``POWERLENS_DEBUG_STATS=1`` adds ``/debug/stats`` (JSON: live sessions, live
``ExplorerState`` objects, simulation threads, resident memory), answered only to
requests from this computer; off by default, for the load benchmark and tests.

``add_arguments`` and ``run`` are what the ``powerlens`` CLI calls;
``python -m app.server`` runs the same thing on its own.
"""
from __future__ import annotations

import argparse
import asyncio
import errno
import gc
import getpass
import hashlib
import hmac
import html
import ipaddress
import json
import os
import secrets
import signal
import socket
import sys
import threading
import time
import weakref
from typing import Iterable

__all__ = ["DEBUG_STATS_ENV", "DEFAULT_PORT", "MIN_PASSWORD", "PASSWORD_ENV", "PasswordError",
           "add_arguments", "allowed_hosts", "main", "password_auth", "read_password", "run"]

DEFAULT_PORT = 5150
LOOPBACK = ("127.0.0.1", "localhost")
PASSWORD_ENV = "POWERLENS_PASSWORD"
DEBUG_STATS_ENV = "POWERLENS_DEBUG_STATS"
MIN_PASSWORD = 8
COOKIE = "powerlens_auth"
# A closed tab's session is discarded once it has had no connection for UNUSED_LIFETIME_MS, checked
# every CHECK_UNUSED_MS. Bokeh checks every 17 s, so a session could outlive its tab by half a minute;
# checking every 2 s costs a loop over the sessions. The lifetime stays Bokeh's 15 s: it also covers
# the gap between loading the page and its websocket connecting, which a busy machine stretches.
CHECK_UNUSED_MS = 2_000
UNUSED_LIFETIME_MS = 15_000


class _RefuseInline(argparse.Action):
    """``--password VALUE`` is refused: every user of the machine could read it with ``ps``.

    Declared (hidden) so that argparse does not take ``--password`` as short for ``--password-file``.
    """

    def __call__(self, parser, namespace, values, option_string=None):
        parser.error(f"the password is never given on the command line (others see it with ps); set "
                     f"{PASSWORD_ENV}, or use --password-file FILE or --ask-password")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``powerlens serve``."""
    parser.add_argument("--port", type=int, default=None,
                        help=f"port to listen on (default {DEFAULT_PORT}, or a free one if that is taken; "
                             "0 picks a free one)")
    parser.add_argument("--address", default="127.0.0.1",
                        help="address to bind (default 127.0.0.1, this computer only). Another address "
                             "shares the page on your network: only in a trusted room")
    parser.add_argument("--allow-host", action="append", default=[], metavar="NAME",
                        help="another host name the browser may use to reach the server (repeatable), "
                             "e.g. this machine's network name when sharing")
    parser.add_argument("--password", nargs="?", action=_RefuseInline, help=argparse.SUPPRESS)
    parser.add_argument("--password-file", metavar="FILE",
                        help=f"ask for the password in this file (its first line) before the page opens; "
                             f"or set {PASSWORD_ENV}. Needed to share on a network")
    parser.add_argument("--ask-password", action="store_true",
                        help="type the password at a prompt when the server starts (not echoed)")
    parser.add_argument("--no-password", action="store_true",
                        help="share on a network without a password (only in a trusted room)")
    parser.add_argument("--threads", type=int, default=4,
                        help="worker threads shared by the sessions (default 4; 0 handles every change on "
                             "the server's event loop)")
    parser.add_argument("--show", action="store_true", help="open the page in the default browser")


def allowed_hosts(address: str, port: int, extra: Iterable[str] = ()) -> list[str]:
    """Host header values (host:port) the server answers; the websocket origins are the same."""
    names = [address]
    if _is_loopback(address):
        names += [h for h in LOOPBACK if h != address]
    names += [h.strip() for h in extra if h.strip()]
    out: list[str] = []
    for name in names:
        host = f"[{name}]" if ":" in name and not name.startswith("[") else name
        entry = f"{host.lower()}:{port}"
        if entry not in out:
            out.append(entry)
    return out


def _is_loopback(address: str) -> bool:
    if address == "localhost":
        return True
    try:
        return ipaddress.ip_address(address).is_loopback
    except ValueError:
        return False


def _free_port(address: str) -> int:
    family = socket.AF_INET6 if ":" in address else socket.AF_INET
    with socket.socket(family, socket.SOCK_STREAM) as s:
        s.bind((address, 0))
        return s.getsockname()[1]


class PasswordError(ValueError):
    """The password could not be read, or the options contradict each other."""


def read_password(args: argparse.Namespace, environ=None, prompt=getpass.getpass) -> str | None:
    """The password from exactly one of $POWERLENS_PASSWORD, --password-file, --ask-password; or None."""
    environ = os.environ if environ is None else environ
    env = environ.get(PASSWORD_ENV, "")
    sources = [name for name, given in ((PASSWORD_ENV, bool(env)),
                                        ("--password-file", bool(args.password_file)),
                                        ("--ask-password", args.ask_password)) if given]
    if args.no_password and sources:
        raise PasswordError(f"--no-password contradicts {sources[0]}; give one or the other")
    if len(sources) > 1:
        raise PasswordError(f"give the password one way only, not by {' and '.join(sources)}")
    if not sources:
        return None
    if env:
        password = env
    elif args.password_file:
        try:
            with open(args.password_file, encoding="utf-8") as f:
                password = f.readline().rstrip("\r\n")
        except OSError as e:
            raise PasswordError(f"cannot read the password file {args.password_file}: {e.strerror or e}")
        except UnicodeDecodeError:
            raise PasswordError(f"the password file {args.password_file} is not UTF-8 text")
    else:
        password = prompt("Password for the shared page: ")
    if len(password) < MIN_PASSWORD:
        where = args.password_file or sources[0]
        raise PasswordError(f"the password from {where} must have at least {MIN_PASSWORD} characters, "
                            f"got {len(password)}")
    return password


LOGIN_PAGE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Powerlens explorer: password</title>
<meta name="viewport" content="width=device-width, initial-scale=1">
<style>body{{font-family:system-ui,sans-serif;background:#F4F4F4;margin:0}}
main{{max-width:22rem;margin:12vh auto;background:white;border:1px solid #DDDDDD;padding:1.5rem 2rem}}
h1{{font-size:1.3rem;margin:0 0 .5rem}} p{{color:#333}} label{{display:block;margin:1rem 0 .3rem}}
input{{font-size:1rem;width:100%;box-sizing:border-box;padding:.4rem}}
button{{margin-top:1rem;font-size:1rem;padding:.4rem 1rem}} .pl-login-error{{color:#A63A00;font-weight:600}}
</style></head><body><main>
<h1>Powerlens explorer</h1>
<p>This page is shared on the room's network. Ask the presenter for the password.</p>
{error}
<form method="post" action="{action}" class="pl-login">
<input type="hidden" name="next" value="{next}">
<label for="pl-password">Password</label>
<input id="pl-password" name="password" type="password" autocomplete="current-password" autofocus required>
<button type="submit">Open the explorer</button>
</form></main></body></html>
"""


def _local_path(value: str | None) -> str:
    """``value`` if it is a path on this server (no scheme, no other host), else ``/``."""
    if not value or not value.startswith("/") or value.startswith("//") or "\\" in value:
        return "/"
    return value


def password_auth(password: str, login_url: str = "/login", logout_url: str = "/logout",
                   failure_delay: float = 1.0):
    """A Bokeh auth provider: one shared password, checked in constant time, then a signed cookie."""
    from bokeh.server.auth_provider import AuthProvider
    from tornado.web import RequestHandler

    digest = hashlib.sha256(password.encode("utf-8")).digest()

    def check(given: str) -> bool:
        # compare fixed-length digests, so neither the content nor the length leaks through timing
        return hmac.compare_digest(hashlib.sha256(given.encode("utf-8")).digest(), digest)

    class Login(RequestHandler):
        def _page(self, error: str = "") -> None:
            nxt = _local_path(self.get_argument("next", "/"))
            self.set_header("Content-Type", "text/html; charset=utf-8")
            self.set_header("Cache-Control", "no-store")
            self.set_header("X-Frame-Options", "DENY")
            msg = f'<p class="pl-login-error" role="alert">{html.escape(error)}</p>' if error else ""
            self.finish(LOGIN_PAGE.format(error=msg, action=html.escape(login_url),
                                          next=html.escape(nxt, quote=True)))

        def get(self) -> None:
            self._page()

        async def post(self) -> None:
            if check(self.get_body_argument("password", "", strip=False)):   # tornado strips by default
                self.set_signed_cookie(COOKIE, "ok", expires_days=None, httponly=True, samesite="Strict")
                self.redirect(_local_path(self.get_body_argument("next", "/")))
                return
            print(f"powerlens serve: refused a wrong password from {self.request.remote_ip}",
                  file=sys.stderr, flush=True)
            await asyncio.sleep(failure_delay)   # slows guessing; the event loop stays free
            self.set_status(401)
            self._page("Wrong password. Try again.")

    class Logout(RequestHandler):
        def get(self) -> None:
            self.clear_cookie(COOKIE)
            self.redirect(login_url)

    class PasswordAuth(AuthProvider):
        @property
        def get_user(self):
            def user(handler):
                value = handler.get_signed_cookie(COOKIE, max_age_days=1)
                return "guest" if value == b"ok" else None
            return user

        @property
        def login_url(self):
            return login_url

        @property
        def login_handler(self):
            return Login

        @property
        def logout_url(self):
            return logout_url

        @property
        def logout_handler(self):
            return Logout

    return PasswordAuth()


class _GcPauses:
    """How long Python's cyclic garbage collector stopped the server, per generation (for /debug/stats).

    A full (generation 2) collection walks every object of every open session: with twenty sessions
    about 1.4 million objects and some 0.6 s, during which no session is answered.
    """

    _clock = staticmethod(time.perf_counter)   # held by the class: the callback also runs at interpreter exit

    def __init__(self) -> None:
        self.count = [0, 0, 0]
        self.total_ms = [0.0, 0.0, 0.0]
        self.full_ms: list[float] = []       # every generation-2 pause, in order
        self._t0 = 0.0
        self.paused = False                  # the stats request's own collection is not counted

    def __call__(self, phase: str, info: dict) -> None:
        if phase == "start":
            self._t0 = self._clock()
            return
        if self.paused:
            return
        g, ms = info["generation"], (self._clock() - self._t0) * 1000
        self.count[g] += 1
        self.total_ms[g] += ms
        if g == 2:
            self.full_ms.append(round(ms, 1))

    def as_dict(self) -> dict:
        return {"count": self.count, "total_ms": [round(t, 1) for t in self.total_ms], "full_ms": self.full_ms}


_gc_pauses = _GcPauses()


class _HandlingTimes:
    """Server-side time of each change: a page's message arriving to the patch answering it written.

    Measured on the server's clock, so that it holds nothing of the browser's own delays (the load
    benchmark's page-clock figure also holds the page sending and receiving on a busy machine).
    Only messages carrying a widget's new value count (not the page reporting its size and the
    like). A message is answered by the next patch Panel writes to that page; messages that arrive
    while a refresh is pending share it and each counts from its own arrival.
    """

    _clock = staticmethod(time.perf_counter)

    def __init__(self) -> None:
        self._pending: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()
        self.ms: list[float] = []

    def install(self) -> None:
        from bokeh.server.session import ServerSession
        from panel.io import document as pn_document
        if getattr(ServerSession._handle_patch, "_powerlens_timed", False):
            return
        handle_patch, dispatch = ServerSession._handle_patch, pn_document.dispatch_tornado

        def timed_patch(session, message, connection):
            events = message.content.get("events") or [{}]
            if all(e.get("kind") == "ModelChanged" and e.get("attr") == "value" for e in events):
                self._pending.setdefault(session, []).append(self._clock())   # a widget's value, not the page's size
            return handle_patch(session, message, connection)

        def timed_dispatch(conn, events=None, msg=None):
            futures = dispatch(conn, events, msg)
            session = getattr(conn, "_session", None)
            if futures and events and session is not None:
                now = self._clock()
                for t in self._pending.pop(session, ()):
                    if len(self.ms) < 200_000:
                        self.ms.append(round((now - t) * 1000, 2))
            return futures

        timed_patch._powerlens_timed = True
        ServerSession._handle_patch = timed_patch
        pn_document.dispatch_tornado = timed_dispatch


_handling = _HandlingTimes()


def _debug_stats_pattern():
    """``/debug/stats``: counts for the load benchmark and tests, only to requests from this computer.

    Also starts what the counts need: the garbage-collector callback and the timing of changes.
    """
    from tornado.web import RequestHandler

    if _gc_pauses not in gc.callbacks:
        gc.callbacks.append(_gc_pauses)
    _handling.install()

    class DebugStats(RequestHandler):
        def get(self) -> None:
            try:
                local = ipaddress.ip_address(self.request.remote_ip).is_loopback
            except ValueError:
                local = False
            if not local:
                self.send_error(404)
                return
            from bokeh.settings import settings

            from .explorer import Explorer
            from .state import ExplorerState
            _gc_pauses.paused = True
            try:
                gc.collect()
            finally:
                _gc_pauses.paused = False
            objs = gc.get_objects()
            sessions = sum(len(list(ctx.sessions)) for ctx in self.application._applications.values())
            stats = {"sessions": sessions,
                     "explorer_states": sum(isinstance(o, ExplorerState) for o in objs),
                     "explorers": sum(isinstance(o, Explorer) for o in objs),
                     "simulation_threads": sum(t.name == "powerlens-simulation" for t in threading.enumerate()),
                     "threads": threading.active_count(),
                     "rss_kb": _rss_kb(),
                     "gc_pauses": _gc_pauses.as_dict(),
                     "gc_enabled": gc.isenabled(),
                     "gc_frozen": gc.get_freeze_count(),
                     "switch_interval_s": sys.getswitchinterval(),
                     "error_diagnostics": bool(settings.perform_error_diagnostics()),
                     "handled_ms": _handling.ms}
            del objs
            self.set_header("Content-Type", "application/json")
            self.set_header("Cache-Control", "no-store")
            self.finish(json.dumps(stats))

    return ("/debug/stats", DebugStats)


def _rss_kb() -> int | None:
    try:
        with open("/proc/self/status", encoding="ascii") as f:
            for line in f:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1])
    except OSError:
        pass
    return None


def _host_guard(server, allowed: list[str]) -> None:
    """Refuse (403) any HTTP or websocket request whose Host header is not allowed."""
    from tornado.routing import Router
    from tornado.web import RequestHandler

    allow = {h.lower() for h in allowed}

    class Forbidden(RequestHandler):
        def prepare(self):
            self.set_status(403)
            self.set_header("Content-Type", "text/plain; charset=utf-8")
            self.finish("This server answers only to its own address.\n")

    class HostGuard(Router):
        def __init__(self, app):
            self.app = app

        def find_handler(self, request, **kwargs):
            if request.headers.get("Host", "").lower() not in allow:
                return self.app.get_handler_delegate(request, Forbidden)
            return self.app.find_handler(request, **kwargs)

    # Bokeh 3.x keeps its tornado Application and HTTP server in private attributes; pyproject pins
    # Bokeh below 3.10 and tests/test_browser.py checks the refusal, so a change here is noticed.
    http, app = getattr(server, "_http", None), getattr(server, "_tornado", None)
    if http is None or app is None or not hasattr(http, "request_callback"):
        raise RuntimeError("cannot install the Host check on this Bokeh version; refusing to serve")
    http.request_callback = HostGuard(app)


def _local_style_sheets() -> None:
    """Point this session's Panel style sheets at this server before any model is made.

    Panel 1.9 files each model's style sheets under its CDN address and rewrites them to this
    server's ``dist_url`` only when it renders the page, reading the URL from the document's
    template variables. A model made before that (or beside it, while five pages open at once) kept
    the CDN address: the browser then asked cdn.holoviz.org for ``loading.css`` and
    ``listpanel.css``. Setting the variable first, as Panel itself later does, leaves nothing to
    rewrite.
    """
    import panel as pn
    from panel.io.resources import LOCAL_DIST

    doc = pn.state.curdoc
    if doc is not None:
        rel = pn.state.rel_path
        doc._template_variables.setdefault("dist_url", f"{rel}/{LOCAL_DIST}" if rel else LOCAL_DIST)


def _session_page():
    """One browser session's page, with what Panel keeps after the session ends released at its end.

    Panel 1.9 files every ``js_on_click``/``jscallback`` in ``panel.links.Callback.registry``, a
    ``WeakKeyDictionary`` keyed by the widget, whose value (the Callback) holds the widget again as
    its ``source``: the key never dies, and through the callback's ``args`` it keeps the whole page,
    its ``ExplorerState`` and figures alive after the tab is closed (measured: one page leaked per
    session, and every later page render walks the grown registry). When Bokeh destroys the
    session, the page's entries are dropped: those filed while the page was built, and those of
    every object on the page at that moment.
    """
    import weakref

    import panel as pn
    from panel.links import Callback

    from .explorer import create_app

    _local_style_sheets()
    before = {id(k) for k in list(Callback.registry.keys())}
    page = create_app()
    filed = [weakref.ref(k) for k in list(Callback.registry.keys()) if id(k) not in before]
    page_ref = weakref.ref(page)

    def release(_session_context) -> None:
        objs = [r() for r in filed]
        live = page_ref()
        if live is not None:
            objs += live.__panel__().select()
        for obj in objs:
            if obj is not None:
                Callback.registry.pop(obj, None)

    pn.state.on_session_destroyed(release)
    return page


def _make_server(port: int, address: str, allowed: list[str], password: str | None = None,
                 debug_stats: bool = False):
    import panel as pn

    extra = {}
    if password is not None:
        # a new random cookie secret and session-signing key at every start: a restart logs everyone out
        extra = dict(auth_provider=password_auth(password), cookie_secret=secrets.token_urlsafe(32),
                     secret_key=secrets.token_urlsafe(32), sign_sessions=True)
    return pn.serve(_session_page, port=port, address=address, websocket_origin=allowed, show=False,
                    start=False, title="Powerlens explorer", location=False, verbose=False,
                    check_unused_sessions_milliseconds=CHECK_UNUSED_MS,
                    unused_session_lifetime_milliseconds=UNUSED_LIFETIME_MS,
                    extra_patterns=[_debug_stats_pattern()] if debug_stats else [], **extra)


#: BokehJS bundles the page loads. Bokeh's default also has bokeh-gl (WebGL drawing), which no view
#: of the page uses: leaving it out saves the browser fetching and parsing it before the first paint.
#: bokeh-tables stays although the page shows no data table: Panel's own bundle does not load without it.
BOKEH_BUNDLES = ["bokeh", "bokeh-widgets", "bokeh-tables", "bokeh-mathjax"]


def _only_needed_bundles() -> None:
    from bokeh.resources import Resources
    Resources._default_components = list(BOKEH_BUNDLES)


def run(args: argparse.Namespace) -> int:
    """Serve the explorer until Ctrl-C; returns the process exit code.

    Python's cyclic garbage collector is off while the server starts (it comes back on before the
    address is printed, and on every way out): the imports of Panel, Bokeh, SciPy and the page
    allocate some 260,000 long-lived objects (261,178 frozen, counted on a running server), and the
    collector walked them again and again while they were made (measured in one process: 0.3 s of
    collections; the imports and a first page took 1.93 s with it off against 2.13 s with it on).
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        return _serve(args)
    finally:
        if enabled:
            gc.enable()


def _warm_start() -> None:
    """Import the page before the first visitor asks for it, then let the collector run again.

    What was imported is moved out of the collector's sight (``gc.freeze``): it lives as long as
    the server, and each later full collection (with twenty sessions, some 1.4 million objects)
    no longer walks it.
    """
    from . import explorer  # noqa: F401  (the first page no longer waits for this import)
    gc.freeze()
    gc.enable()


#: how long a thread may hold the GIL while another waits for it (Python's default is 5 ms)
SWITCH_INTERVAL_S = 0.001

_BUSY_LOCK = threading.RLock()


def serialize_busy_count() -> None:
    """Make Panel's count of events in progress safe to change from several threads at once.

    Panel 1.9 keeps one process-wide list of the events being handled (``pn.state.busy``) and
    rewrites it, and the read-only flags of all ``pn.state``'s parameters, at the start and end of
    every event a widget receives. With ``--threads`` those run on worker threads side by side.
    Two threads then copy the list at the same time and one's entry is lost (counted: 24 of 400
    entries left behind by four threads), and one thread can restore the read-only flags while
    another is still writing: a load test with twenty sessions saw a worker fail inside that
    bookkeeping, and the change it carried never reached the figures. Each of these three steps now
    runs under one lock (re-entrant: adding an event tidies the list first). Idempotent.
    """
    from panel.io.state import _state

    for name in ("_add_busy_event", "_remove_busy_event", "_cleanup_busy_counter"):
        step = getattr(_state, name)
        if getattr(step, "__powerlens_locked", False):
            continue

        def locked(self, *args, _step=step, **kwargs):
            with _BUSY_LOCK:
                return _step(self, *args, **kwargs)
        locked.__powerlens_locked = True
        locked.__name__ = locked.__qualname__ = name
        locked.__doc__ = step.__doc__
        setattr(_state, name, locked)


def _serve(args: argparse.Namespace) -> int:
    import panel as pn
    from bokeh.settings import settings

    from .theme import CSS

    settings.resources.set_value("server")   # every script from this server, whatever BOKEH_RESOURCES says
    # ...and the same when the value above is unset: Panel 1.9's ``set_resource_mode`` swaps this global
    # setting in and out while pages render, so concurrent renders can restore it to "unset", and
    # Bokeh's fallback is its CDN (seen with five sessions opening at once: the page asked
    # cdn.holoviz.org for its style sheets). The variable makes the fallback this server too.
    os.environ["BOKEH_RESOURCES"] = "server"
    # Bokeh checks the signature of every callback given to ``on_change`` (``inspect.signature``), and
    # Panel gives one for each synced property of each model of a new page: some 7% of building a
    # page (CPU time, 8 alternating rounds in one process: median 602 ms with the checks, 555 without).
    # The callbacks are Panel's own and ours, and the tests run with the checks on.
    settings.perform_error_diagnostics.set_value(False)
    address = args.address
    if args.threads < 0:
        print("powerlens serve: --threads must be 0 or more", file=sys.stderr)
        return 2
    shared = not _is_loopback(address)
    try:
        password = read_password(args)
    except PasswordError as e:
        print(f"powerlens serve: {e}", file=sys.stderr)
        return 2
    if shared and password is None and not args.no_password:
        print(f"powerlens serve: sharing on {address} needs a password, so that only the people in the room "
              f"can open the page. Set {PASSWORD_ENV}, or put it in a file and add --password-file FILE, "
              f"or add --ask-password to type it; to share without one on a network you trust, add "
              f"--no-password.", file=sys.stderr)
        return 2
    debug_stats = os.environ.get(DEBUG_STATS_ENV, "") == "1"
    pn.config.nthreads = args.threads or None
    serialize_busy_count()
    # The event loop (reading the sessions' messages, writing their patches) shares the GIL with the
    # worker threads computing the changes. With Python's 5 ms switch interval a message could wait
    # 5 ms at each hand-over while a worker computed. bench_load (20 sessions x 50 changes), p95 of
    # all sessions on one machine in one hour: 254 and 255 ms at 5 ms; 172, 193 and 276 ms at 1 ms
    # (the server's own p95: 119 and 129 ms; 77, 88 and 125 ms). Runs here vary up to twofold.
    sys.setswitchinterval(SWITCH_INTERVAL_S)
    from . import speedups
    speedups.install_server()
    _only_needed_bundles()
    pn.config.raw_css = [*pn.config.raw_css, CSS]
    explicit = args.port is not None
    port = args.port if explicit else DEFAULT_PORT
    server = None
    for _ in range(5):
        if port == 0:
            port = _free_port(address)
        allowed = allowed_hosts(address, port, args.allow_host)
        try:
            server = _make_server(port, address, allowed, password, debug_stats)
            break
        except OSError as e:
            if e.errno == errno.EADDRINUSE and not (explicit and args.port != 0):
                if port == DEFAULT_PORT and not explicit:
                    print(f"powerlens serve: port {port} on {address} is taken; using a free port instead.",
                          file=sys.stderr, flush=True)
                port = 0
                continue
            if e.errno == errno.EADDRINUSE:
                print(f"powerlens serve: port {port} on {address} is already in use. Stop the program "
                      f"using it, or choose another port with --port (0 picks a free one).", file=sys.stderr)
            else:
                print(f"powerlens serve: cannot listen on {address}:{port}: {e.strerror or e}",
                      file=sys.stderr)
            return 1
    if server is None:
        print(f"powerlens serve: found no free port on {address}", file=sys.stderr)
        return 1
    _host_guard(server, allowed)

    wildcard = address in ("0.0.0.0", "::")
    shown = args.allow_host[0] if wildcard and args.allow_host else address
    host = f"[{shown}]" if ":" in shown else shown
    url = f"http://{host}:{port}/"
    if shared:
        if password is None:
            print("WARNING: no password: ANYONE who can reach this computer on the network can open the "
                  "explorer. Use this only on a network you trust.", file=sys.stderr)
        print(f"Sharing on this network at {address} port {port}; it answers only to the host names "
              f"{', '.join(allowed)} (add others with --allow-host).", file=sys.stderr)
        who = "Anyone on the network with the password" if password is not None else "Anyone on the network"
        print(f"{who} can open the page. Each person gets a session of their own: what they change "
              f"(assumptions, design, imported records, simulations) changes only their own view, never "
              f"yours or anyone else's.", file=sys.stderr)
        print("The connection is not encrypted: the password and the page travel in clear on this network.",
              file=sys.stderr)
        print(f"To stop sharing: press Ctrl-C here (or end process {os.getpid()}).", file=sys.stderr)
    elif password is not None:
        print("A password is asked before the page opens.", file=sys.stderr)
    if debug_stats:
        print(f"{DEBUG_STATS_ENV}=1: counts at {url}debug/stats (answered to this computer only).",
              file=sys.stderr)
    _warm_start()
    print(f"Powerlens explorer: {url}  (press Ctrl-C to stop)", flush=True)

    loop = server.io_loop
    speedups.quiet_closed_writes(loop.asyncio_loop)

    def _stop(*_):
        loop.asyncio_loop.call_soon_threadsafe(loop.stop)

    signal.signal(signal.SIGINT, _stop)
    signal.signal(signal.SIGTERM, _stop)
    server.start()
    if args.show:
        loop.add_callback(lambda: server.show("/"))
    try:
        loop.start()
    except KeyboardInterrupt:
        pass
    finally:
        server.stop()
        server.unlisten()
    print("Powerlens explorer stopped.", flush=True)
    return 0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="powerlens serve", description="Serve the Powerlens explorer.")
    add_arguments(parser)
    return run(parser.parse_args(argv))


if __name__ == "__main__":
    sys.exit(main())
