"""Shared pieces of the browser tests: the server subprocess, headless Chromium, a guarded page.

Import the fixtures into a test module with ``from browser_support import *``. The
server runs as ``python3 -m app.server --port 0`` (the same code as ``powerlens serve``)
and is stopped with SIGINT by its PID; Chromium is Debian's, driven by Playwright,
never downloaded.
"""
from __future__ import annotations

import os
import re
import shutil
import signal
import subprocess
import sys
import time
import urllib.parse
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
ARTIFACTS = ROOT / "tests" / "artifacts"
CHROMIUM = (os.environ.get("PLAYWRIGHT_CHROMIUM_EXECUTABLE") or shutil.which("chromium")
            or "/usr/bin/chromium")
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-quic"]

try:
    from playwright.sync_api import expect, sync_playwright
    expect.set_options(timeout=15_000)   # generous: CI machines may be busy; passing waits end early
    HAVE_PLAYWRIGHT = True
except ImportError:   # pragma: no cover - CI installs it
    HAVE_PLAYWRIGHT = False

skip_reason = None
if not HAVE_PLAYWRIGHT:
    skip_reason = "playwright (python) is not installed: pip install -e '.[test]'"
elif not (os.path.exists(CHROMIUM) and os.access(CHROMIUM, os.X_OK)):
    skip_reason = f"no Chromium at {CHROMIUM}: apt-get install chromium (as .ci/run does)"

needs_browser = pytest.mark.skipif(skip_reason is not None, reason=skip_reason or "")

__all__ = ["ARTIFACTS", "DONE_JS", "ELAPSED_JS", "GuardedPage", "HOOK_JS", "WAIT_JS", "browser", "needs_browser",
           "open_page", "server", "start_server", "stop_server", "wait_ready"]

READY_JS = """() => { const d = window.Bokeh && Bokeh.documents[0];
    const names = ['densities', 'power-effect', 'power-n'];
    return !!d && names.every(n => { const m = d.get_model_by_name(n);
        const v = m && Bokeh.index.find_one(m); return !!(v && v.has_finished()); }); }"""


# Slider latency on the page clock (tests/benchmarks/bench_app.py, bench_load.py): HOOK_JS marks each
# keydown, then the first data change and the first repaint after it in each of the three figures;
# DONE_JS says all three have repainted, ELAPSED_JS gives keydown to the last repaint in ms.
# WAIT_JS (evaluated after the key press) resolves with that figure once all three have repainted: the
# page tells the driver, where DONE_JS would have the driver poll the page every few ms (under load,
# twenty pages polling cost the machine CPU that the page itself then lacks).
HOOK_JS = """() => {
  const doc = Bokeh.documents[0];
  const figs = ['densities', 'power-effect', 'power-n'];
  const sources = {densities: ['density-curve', 'density-bars-null', 'density-bars-alt'],
                   'power-effect': ['effect-curve'], 'power-n': ['n-curve']};
  window.__lat = {t0: null, data: {}, paint: {}, done: null};
  document.addEventListener('keydown', () => {
    window.__lat = {t0: performance.now(), data: {}, paint: {}, done: null}; }, true);
  for (const f of figs) {
    for (const s of sources[f]) {
      const src = doc.get_model_by_name(s);
      src.properties.data.change.connect(() => {
        const L = window.__lat; if (L.t0 !== null && L.data[f] === undefined) L.data[f] = performance.now(); });
    }
    const view = Bokeh.index.find_one(doc.get_model_by_name(f));
    view.repainted.connect(() => { const L = window.__lat;
      if (L.t0 === null || L.data[f] === undefined || L.paint[f] !== undefined) return;
      L.paint[f] = performance.now();
      if (L.done !== null && figs.every(g => L.paint[g] !== undefined)) L.done(); });
  }
}"""
DONE_JS = "() => ['densities', 'power-effect', 'power-n'].every(f => window.__lat.paint[f] !== undefined)"
ELAPSED_JS = "() => Math.max(...Object.values(window.__lat.paint)) - window.__lat.t0"
WAIT_JS = f"""(timeout) => new Promise((resolve, reject) => {{
  const L = window.__lat;
  const finish = () => resolve(({ELAPSED_JS})());
  if (({DONE_JS})()) return finish();
  const timer = setTimeout(() => reject(new Error('the three figures did not all redraw in ' + timeout + ' ms')),
                           timeout);
  L.done = () => {{ clearTimeout(timer); finish(); }};
}})"""


class ServerProcess:
    def __init__(self, proc: subprocess.Popen, url: str, started: float, ready: float) -> None:
        self.proc, self.url, self.started, self.ready = proc, url, started, ready

    @property
    def port(self) -> int:
        return int(urllib.parse.urlparse(self.url).port)


def start_server(*extra: str, timeout: float = 30.0, env: dict | None = None) -> ServerProcess:
    """Start ``python3 -m app.server --port 0`` and wait for the address it prints (``env``: extra variables)."""
    env = {**os.environ, "PYTHONUNBUFFERED": "1", **(env or {})}
    started = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-m", "app.server", "--port", "0", *extra], cwd=ROOT, env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.time() + timeout
    while time.time() < deadline:
        line = proc.stdout.readline()
        if not line:
            if proc.poll() is not None:
                raise RuntimeError(f"server exited early: {proc.stderr.read()}")
            continue
        m = re.search(r"(http://127\.0\.0\.1:\d+/)", line)
        if m:
            return ServerProcess(proc, m.group(1), started, time.perf_counter())
    stop_server(proc)
    raise RuntimeError("server did not print its address in time")


def stop_server(proc: subprocess.Popen, timeout: float = 15.0) -> tuple[int, str, str]:
    """Ctrl-C the server by its PID; returns (exit code, rest of stdout, stderr)."""
    if proc.poll() is None:
        proc.send_signal(signal.SIGINT)
    try:
        out, err = proc.communicate(timeout=timeout)
    except subprocess.TimeoutExpired:
        proc.kill()
        out, err = proc.communicate()
    return proc.returncode, out, err


@pytest.fixture(scope="module")
def server():
    srv = start_server()
    yield srv
    code, out, err = stop_server(srv.proc)
    assert code == 0, f"server exit code {code}: {err[-2000:]}"
    assert "stopped" in out
    assert "Traceback" not in err, err[-3000:]


@pytest.fixture(scope="module")
def browser():
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield b
        b.close()


class GuardedPage:
    """A page in a fresh context that refuses every request off 127.0.0.1 and records console errors."""

    def __init__(self, browser, url: str, viewport=(1600, 1000), scale: float = 1.0) -> None:
        self.external: list[str] = []
        self.errors: list[str] = []
        self.context = browser.new_context(viewport={"width": viewport[0], "height": viewport[1]},
                                           device_scale_factor=scale)
        self.context.route("**/*", self._guard)
        self.page = self.context.new_page()
        self.page.on("console", lambda m: self.errors.append(m.text) if m.type == "error" else None)
        self.page.on("pageerror", lambda e: self.errors.append(f"pageerror: {e}"))
        self.url = url

    def _guard(self, route) -> None:
        host = urllib.parse.urlparse(route.request.url).hostname
        if host == "127.0.0.1":
            route.continue_()
        else:
            self.external.append(route.request.url)
            route.abort()

    def open(self) -> float:
        t0 = time.perf_counter()
        self.page.goto(self.url)
        wait_ready(self.page)
        return time.perf_counter() - t0

    def close(self) -> None:
        self.context.close()


def wait_ready(page, timeout: float = 30000) -> None:
    page.wait_for_function(READY_JS, timeout=timeout)


@pytest.fixture
def open_page(browser, server):
    """Factory: open_page() gives a loaded GuardedPage; checks at the end that it stayed local and clean."""
    pages: list[GuardedPage] = []

    def make(**kw) -> GuardedPage:
        gp = GuardedPage(browser, server.url, **kw)
        gp.open()
        pages.append(gp)
        return gp

    yield make
    for gp in pages:
        gp.close()
    for gp in pages:
        assert gp.external == [], f"requests left 127.0.0.1: {gp.external}"
        assert gp.errors == [], f"browser console errors: {gp.errors}"


POWER = '.pl-readout td[data-key="power"]'


def demo(**changes):
    """The page's invented demo scenario, optionally changed."""
    import powercore as pc
    from app.state import DEMO
    sc = pc.Scenario(design=DEMO["design"], params=DEMO["params"], n=DEMO["n"], alpha=DEMO["alpha"],
                     direction=DEMO["direction"], target_power=DEMO["target_power"])
    return sc.replace(**changes) if changes else sc


def expect_power(page, scenario) -> None:
    """Wait until the page's power readout shows powercore's power for ``scenario``."""
    import powercore as pc
    from playwright.sync_api import expect
    from app.text import num
    want = num(pc.evaluate(scenario).power, 4)
    expect(page.locator(POWER)).to_have_text(re.compile(rf"^{re.escape(want)}\b"), timeout=10000)
