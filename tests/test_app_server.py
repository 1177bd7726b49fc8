"""`powerlens serve` without a browser: address, Host allow-list, websocket origin, port clash, Ctrl-C."""
from __future__ import annotations

import argparse
import http.client
import os
import socket

import pytest

from app.server import DEFAULT_PORT, add_arguments, allowed_hosts
from browser_support import start_server, stop_server


@pytest.fixture(scope="module")
def served():
    srv = start_server()
    yield srv
    code, out, err = stop_server(srv.proc)
    assert code == 0 and "stopped" in out, (code, out, err[-2000:])
    assert "Traceback" not in err


def get(port: int, path: str = "/", host: str | None = None, headers: dict | None = None):
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=10)
    hdrs = {"Host": host or f"127.0.0.1:{port}", **(headers or {})}
    conn.request("GET", path, headers=hdrs)
    resp = conn.getresponse()
    body = resp.read()
    conn.close()
    return resp.status, body


def test_arguments_and_defaults():
    """The serve options parse, and bind 127.0.0.1 by default."""
    parser = argparse.ArgumentParser()
    add_arguments(parser)
    args = parser.parse_args([])
    assert args.address == "127.0.0.1" and args.port is None and args.threads >= 2
    args = parser.parse_args(["--port", "8123", "--threads", "2", "--allow-host", "lab-pc"])
    assert (args.port, args.threads, args.allow_host) == (8123, 2, ["lab-pc"])


@pytest.mark.parametrize("address, extra, expected", [
    ("127.0.0.1", [], ["127.0.0.1:5150", "localhost:5150"]),
    ("192.168.1.20", ["lab-pc"], ["192.168.1.20:5150", "lab-pc:5150"]),
])
def test_allowed_hosts(address, extra, expected):
    """The allow-list names exactly the addresses the page may be reached at, never a wildcard."""
    hosts = allowed_hosts(address, 5150, extra)
    assert hosts == expected and "*" not in "".join(hosts)


def test_page_served_on_loopback(served):
    """The page and its scripts come from the server itself, on 127.0.0.1."""
    status, body = get(served.port)
    assert status == 200 and b"Powerlens explorer" in body
    assert b"cdn." not in body and b"https://" not in body.replace(b"https://bokeh.org", b"")
    status, _ = get(served.port, "/static/js/bokeh.min.js")
    assert status == 200


@pytest.mark.parametrize("path", ["/", "/static/js/bokeh.min.js", "/ws"])
def test_foreign_host_header_refused(served, path):
    """A request naming another host (DNS rebinding) is refused with 403, websocket included."""
    status, body = get(served.port, path, host=f"rebind.example:{served.port}",
                       headers={"Upgrade": "websocket", "Connection": "Upgrade"} if path == "/ws" else None)
    assert status == 403 and b"only to its own address" in body


def test_websocket_from_foreign_origin_refused(served):
    """A websocket handshake with a foreign Origin is refused even with a good Host."""
    headers = {"Upgrade": "websocket", "Connection": "Upgrade", "Sec-WebSocket-Version": "13",
               "Sec-WebSocket-Key": "dGhlIHNhbXBsZSBub25jZQ==", "Origin": "http://rebind.example"}
    status, _ = get(served.port, "/ws", headers=headers)
    assert status == 403


def test_taken_port_is_reported_plainly():
    """An explicit port that is in use gives a plain message and exit code 1, no traceback."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        s.listen(1)
        port = s.getsockname()[1]
        import subprocess
        import sys
        proc = subprocess.run([sys.executable, "-m", "app.server", "--port", str(port)], capture_output=True,
                              text=True, timeout=60, cwd=os.path.dirname(os.path.dirname(__file__)))
    assert proc.returncode == 1
    assert f"port {port} on 127.0.0.1 is already in use" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_default_port_constant():
    """The default port is a fixed, documented number (a free one is picked if it is taken)."""
    assert DEFAULT_PORT == 5150
