"""`powerlens serve`: address, Host allow-list, websocket origin, port clash, Ctrl-C, the sharing password."""
from __future__ import annotations

import argparse
import http.client
import os
import socket

import pytest

from app.server import DEFAULT_PORT, add_arguments, allowed_hosts
from browser_support import needs_browser, start_server, stop_server


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


def test_page_loads_only_the_bundles_it_uses(served):
    """BokehJS's WebGL bundle, which no view uses, is not loaded (server.BOKEH_BUNDLES); the others are."""
    import re
    from app.server import BOKEH_BUNDLES
    _, body = get(served.port)
    scripts = set(re.findall(rb'src="[^"]*static/js/([a-z-]+)\.min\.js', body))
    assert b"bokeh-gl" not in scripts
    assert {b"bokeh", b"bokeh-widgets", b"bokeh-tables"} <= scripts <= {b.encode() for b in BOKEH_BUNDLES}


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


# ---- password for sharing ------------------------------------------------------------------------

PASSWORD = "meeting-room-7"   # common practice, no source: a made-up password of 14 characters


def parse(argv):
    parser = argparse.ArgumentParser()
    add_arguments(parser)
    return parser.parse_args(argv)


def test_password_sources(tmp_path):
    """The password comes from exactly one of the variable, a file or a prompt; never from argv."""
    from app.server import PASSWORD_ENV, read_password
    pw_file = tmp_path / "pw"
    pw_file.write_text(PASSWORD + "\nsecond line is ignored\n", encoding="utf-8")
    assert read_password(parse([]), environ={}) is None
    assert read_password(parse([]), environ={PASSWORD_ENV: PASSWORD}) == PASSWORD
    assert read_password(parse(["--password-file", str(pw_file)]), environ={}) == PASSWORD
    assert read_password(parse(["--ask-password"]), environ={}, prompt=lambda _: PASSWORD) == PASSWORD
    for argv in (["--password", PASSWORD], ["--passw", PASSWORD]):   # never a value on the command line
        with pytest.raises(SystemExit):
            parse(argv)


@pytest.mark.parametrize("argv, environ, message", [
    (["--no-password"], {"POWERLENS_PASSWORD": PASSWORD}, "--no-password contradicts POWERLENS_PASSWORD"),
    (["--password-file", "PW", "--ask-password"], {}, "one way only"),
    (["--password-file", "PW"], {"POWERLENS_PASSWORD": PASSWORD}, "one way only"),
    (["--password-file", "MISSING"], {}, "cannot read the password file"),
    ([], {"POWERLENS_PASSWORD": "short"}, "at least 8 characters, got 5"),
])
def test_password_mistakes_are_named(tmp_path, argv, environ, message):
    """Contradicting sources, an unreadable file and a short password each get a plain message."""
    from app.server import PasswordError, read_password
    (tmp_path / "PW").write_text(PASSWORD, encoding="utf-8")
    argv = [str(tmp_path / a) if a in ("PW", "MISSING") else a for a in argv]
    with pytest.raises(PasswordError, match=message):
        read_password(parse(argv), environ=environ)


def test_network_sharing_without_password_is_refused():
    """--address off loopback with no password stops before listening, saying how to give one."""
    import subprocess
    import sys
    env = {k: v for k, v in os.environ.items() if k != "POWERLENS_PASSWORD"}
    proc = subprocess.run([sys.executable, "-m", "app.server", "--address", "192.0.2.10", "--port", "0"],
                          capture_output=True, text=True, timeout=60, env=env,
                          cwd=os.path.dirname(os.path.dirname(__file__)))
    assert proc.returncode == 2
    assert "needs a password" in proc.stderr and "--password-file" in proc.stderr
    assert "--no-password" in proc.stderr and "Traceback" not in proc.stderr


def request(port, method="GET", path="/", body=None, cookie=None, headers=None):
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=20)
    hdrs = {"Host": f"127.0.0.1:{port}", **(headers or {})}
    if cookie:
        hdrs["Cookie"] = cookie
    if body is not None:
        hdrs["Content-Type"] = "application/x-www-form-urlencoded"
    conn.request(method, path, body=body, headers=hdrs)
    resp = conn.getresponse()
    data = resp.read()
    conn.close()
    return resp, data


def stats(port) -> dict:
    import json
    resp, data = request(port, path="/debug/stats")
    assert resp.status == 200, resp.status
    return json.loads(data)


def login(port, password, next_path="/"):
    import urllib.parse
    body = urllib.parse.urlencode({"password": password, "next": next_path})
    return request(port, "POST", "/login", body=body)


@pytest.fixture(scope="module")
def guarded(tmp_path_factory):
    pw_file = tmp_path_factory.mktemp("pw") / "password"
    pw_file.write_text(PASSWORD + "\n", encoding="utf-8")
    srv = start_server("--password-file", str(pw_file), env={"POWERLENS_DEBUG_STATS": "1"})
    yield srv
    code, out, err = stop_server(srv.proc)
    assert code == 0 and "stopped" in out, (code, out, err[-2000:])
    assert "Traceback" not in err, err[-3000:]
    assert "refused a wrong password from 127.0.0.1" in err


def test_password_server_refuses_without_credentials(guarded):
    """Without the cookie the page redirects to the login form and no session is made."""
    before = stats(guarded.port)["sessions"]
    resp, _ = request(guarded.port, path="/?n=30")
    assert resp.status == 302 and resp.getheader("Location").startswith("./login?next=")
    resp, body = request(guarded.port, path="/login")
    assert resp.status == 200 and b'type="password"' in body and b"https://" not in body
    resp, _ = request(guarded.port, cookie="powerlens_auth=ok")   # a forged, unsigned cookie
    assert resp.status == 302
    assert stats(guarded.port)["sessions"] == before


def test_wrong_password_refused(guarded):
    """A wrong password gets 401 and the form again, no cookie, no session."""
    before = stats(guarded.port)["sessions"]
    for wrong in ("", "meeting-room-8", PASSWORD + " ", PASSWORD[:-1]):
        resp, body = login(guarded.port, wrong)
        assert resp.status == 401 and b"Wrong password" in body, wrong
        assert not any("powerlens_auth=" in v for v in resp.headers.get_all("Set-Cookie") or [])
    assert stats(guarded.port)["sessions"] == before


def websocket_handshake(port, cookie=None, token=None):
    headers = {"Upgrade": "websocket", "Connection": "Upgrade", "Sec-WebSocket-Version": "13",
               "Sec-WebSocket-Key": "dGhlIHNhbXBsZSBub25jZQ==", "Origin": f"http://127.0.0.1:{port}"}
    if token:
        headers["Sec-WebSocket-Protocol"] = f"bokeh, {token}"
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=20)
    conn.request("GET", "/ws", headers={"Host": f"127.0.0.1:{port}", **headers,
                                        **({"Cookie": cookie} if cookie else {})})
    resp = conn.getresponse()
    status = resp.status
    conn.close()
    return status


def test_right_password_serves_page_and_websocket(guarded):
    """The right password sets a signed HttpOnly cookie; with it the page and its websocket open."""
    import re
    resp, _ = login(guarded.port, PASSWORD, next_path="/?n=30")
    assert resp.status == 302 and resp.getheader("Location") == "/?n=30"
    set_cookie = next(v for v in resp.headers.get_all("Set-Cookie") if v.startswith("powerlens_auth="))
    assert "HttpOnly" in set_cookie and "SameSite=Strict" in set_cookie
    cookie = set_cookie.split(";")[0]
    resp, body = request(guarded.port, cookie=cookie)
    assert resp.status == 200 and b"Powerlens explorer" in body
    token = re.search(rb'"token":"([^"]+)"', body).group(1).decode()
    assert websocket_handshake(guarded.port, token=token) == 403            # the session token alone is not enough
    assert websocket_handshake(guarded.port, cookie=cookie, token=token) == 101
    resp, _ = login(guarded.port, PASSWORD, next_path="https://elsewhere.example/")
    assert resp.getheader("Location") == "/"                                 # never sends you off this server


def test_loopback_without_password_unchanged(served):
    """Without a password the page opens directly, as before; no login page, no debug counts."""
    status, body = get(served.port)
    assert status == 200 and b"Powerlens explorer" in body
    assert get(served.port, "/login")[0] == 404
    assert get(served.port, "/debug/stats")[0] == 404


@needs_browser
@pytest.mark.browser
def test_login_in_chromium(guarded):
    """In Chromium: a wrong password shows the message at the form; the right one opens the explorer."""
    from playwright.sync_api import sync_playwright
    from browser_support import CHROMIUM, CHROMIUM_ARGS, GuardedPage, POWER, wait_ready
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        gp = GuardedPage(b, guarded.url)
        page = gp.page
        page.goto(guarded.url)
        page.fill("#pl-password", "not the password")
        page.click("button[type=submit]")
        assert "Wrong password" in page.locator(".pl-login-error").inner_text()
        page.fill("#pl-password", PASSWORD)
        page.click("button[type=submit]")
        wait_ready(page)
        assert page.locator(POWER).inner_text().strip() != ""
        gp.close()
        b.close()
    assert gp.external == []
    assert [e for e in gp.errors if "401" not in e] == []   # the refused login is the only error logged


def test_gc_pauses_are_counted_for_the_load_benchmark(guarded):
    """/debug/stats reports the collector's pauses (bench_load prints the full ones per phase); the stats
    request's own full collection is not among them."""
    import gc
    from app.server import _GcPauses
    rec = _GcPauses()
    gc.callbacks.append(rec)
    try:
        gc.collect(0)
        gc.collect(2)
        rec.paused = True
        gc.collect(2)
    finally:
        gc.callbacks.remove(rec)
    assert rec.count[0] >= 1 and rec.count[2] >= 1 and len(rec.full_ms) == rec.count[2]
    assert all(ms >= 0 for ms in rec.full_ms) and rec.total_ms[2] >= 0
    first = stats(guarded.port)["gc_pauses"]
    second = stats(guarded.port)["gc_pauses"]
    assert set(first) == {"count", "total_ms", "full_ms"} and len(first["count"]) == 3
    assert second["full_ms"] == first["full_ms"]       # the two requests' own collections are not counted


def test_server_starts_with_its_imports_out_of_the_collectors_way(guarded):
    """run() keeps the cyclic collector off while Panel, SciPy and the page are imported, then freezes
    what they made and turns it back on before the address is printed (app.server._warm_start)."""
    got = stats(guarded.port)
    assert got["gc_enabled"] is True
    assert got["gc_frozen"] > 100_000     # the imports' long-lived objects (261,178 on a running server)


def test_server_hands_the_gil_over_every_millisecond(guarded):
    """The serving process switches threads every SWITCH_INTERVAL_S (1 ms), not Python's 5 ms."""
    from app.server import SWITCH_INTERVAL_S
    assert SWITCH_INTERVAL_S == 0.001
    assert stats(guarded.port)["switch_interval_s"] == pytest.approx(SWITCH_INTERVAL_S)


def test_server_skips_bokehs_callback_signature_checks(guarded):
    """The serving process builds pages without Bokeh's error diagnostics (a signature check per
    synced property); the tests, which build pages in their own process, keep them on."""
    from bokeh.settings import settings
    assert stats(guarded.port)["error_diagnostics"] is False
    assert settings.perform_error_diagnostics() is True


def test_panels_busy_count_survives_worker_threads():
    """``serialize_busy_count``: four threads adding and removing 100 events each leave none behind
    and raise nothing (without it, Panel 1.9's copy-and-replace of its one list lost about 24 of
    the 400 removals here, and the read-only flags it toggles could be restored mid-write)."""
    import sys
    import threading
    import uuid

    from panel.io.state import state

    from app.server import serialize_busy_count
    serialize_busy_count()
    serialize_busy_count()                  # idempotent: still one lock, not two layers
    ours, errors = set(), []

    def work():
        for _ in range(100):
            event = f"test-{uuid.uuid4().hex}"
            ours.add(event)
            try:
                state._add_busy_event(event)
                state._remove_busy_event(event)
            except Exception as e:          # noqa: BLE001 - any failure is the finding
                errors.append(repr(e))

    interval = sys.getswitchinterval()
    sys.setswitchinterval(1e-4)             # switch threads often, as a loaded server does
    try:
        threads = [threading.Thread(target=work) for _ in range(4)]
        for t in threads:
            t.start()
        for t in threads:
            t.join()
    finally:
        sys.setswitchinterval(interval)
    assert errors == []
    assert [e for e, _ in state._busy_counter if e in ours] == []
    locked = type(state)._add_busy_event
    assert getattr(locked, "__powerlens_locked", False)
    assert not getattr(locked.__kwdefaults__["_step"], "__powerlens_locked", False)   # Panel's own step inside
