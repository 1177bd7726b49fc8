"""`powerlens serve`: the explorer on a local web server.

Binds 127.0.0.1 unless told otherwise, checks every request's Host header
against an allow-list (a DNS-rebinding page cannot read the server), accepts
websocket connections only from the same explicit origins (never ``*``),
serves every script and style sheet itself (the page works offline), handles
sessions in a thread pool, and stops cleanly on Ctrl-C or SIGTERM.

``add_arguments`` and ``run`` are what the ``powerlens`` CLI calls;
``python -m app.server`` runs the same thing on its own.
"""
from __future__ import annotations

import argparse
import errno
import ipaddress
import signal
import socket
import sys
from typing import Iterable

__all__ = ["DEFAULT_PORT", "add_arguments", "allowed_hosts", "main", "run"]

DEFAULT_PORT = 5150
LOOPBACK = ("127.0.0.1", "localhost")


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
    parser.add_argument("--threads", type=int, default=4,
                        help="worker threads shared by the sessions (default 4)")
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


def _make_server(port: int, address: str, allowed: list[str]):
    import panel as pn

    from .explorer import create_app

    return pn.serve(create_app, port=port, address=address, websocket_origin=allowed, show=False,
                    start=False, title="Powerlens explorer", location=False, verbose=False)


def run(args: argparse.Namespace) -> int:
    """Serve the explorer until Ctrl-C; returns the process exit code."""
    import panel as pn
    from bokeh.settings import settings

    from .theme import CSS

    settings.resources.set_value("server")   # every script from this server, whatever BOKEH_RESOURCES says
    address = args.address
    if args.threads < 1:
        print("powerlens serve: --threads must be at least 1", file=sys.stderr)
        return 2
    pn.config.nthreads = args.threads
    pn.config.raw_css = [*pn.config.raw_css, CSS]
    explicit = args.port is not None
    port = args.port if explicit else DEFAULT_PORT
    server = None
    for _ in range(5):
        if port == 0:
            port = _free_port(address)
        allowed = allowed_hosts(address, port, args.allow_host)
        try:
            server = _make_server(port, address, allowed)
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
    if not _is_loopback(address):
        print("WARNING: the explorer is reachable from other computers on this network. Use this only in "
              "a trusted room; for anything wider, put it behind a password and TLS.", file=sys.stderr)
        print(f"It answers only to these host names: {', '.join(allowed)} (add others with --allow-host).",
              file=sys.stderr)
    print(f"Powerlens explorer: {url}  (press Ctrl-C to stop)", flush=True)

    loop = server.io_loop

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
