"""Many sessions at once in one headless Chromium, for tests/test_load.py and tests/benchmarks/bench_load.py.

Playwright's sync API cannot be shared by threads, so every session here is driven by the async API
from one thread: each session is one browser context with one page, and ``asyncio.gather`` runs
them side by side. Latency is measured on each page's own clock with the hooks of
``browser_support.HOOK_JS`` (keydown on the effect slider to the last of the three figures redrawn).
"""
from __future__ import annotations

import asyncio
import json
import os
import random
import re
import shlex
import tempfile
import urllib.parse
import urllib.request

from browser_support import CHROMIUM, CHROMIUM_ARGS, HOOK_JS, POWER, READY_JS, WAIT_JS, demo

__all__ = ["LoadSession", "cycle_sessions", "debug_stats", "expected_power_text", "key_plan", "launch",
           "wait_released"]

EFFECT_HANDLE = ".pl-slider-effect .noUi-handle"
EFFECT_STEP = 0.1      # the effect slider's step for the demo design (powercore/means.py, ParamSpec delta)


async def launch(playwright, nice: int = 0):
    """Debian's Chromium, headless, never a downloaded one.

    ``nice`` > 0 starts it (and so every renderer it spawns) at that lower CPU priority, through a
    small ``exec nice`` wrapper script: meant to stand in for browsers on the meeting's own laptops
    (on our 2-core VM it did not lower the server's figures: runs there vary twofold).
    """
    exe = CHROMIUM
    if nice:
        fd, exe = tempfile.mkstemp(prefix="powerlens-nice-chromium-", suffix=".sh")
        with os.fdopen(fd, "w") as f:
            f.write(f'#!/bin/sh\nexec nice -n {int(nice)} {shlex.quote(CHROMIUM)} "$@"\n')
        os.chmod(exe, 0o700)
    try:
        return await playwright.chromium.launch(executable_path=exe, args=CHROMIUM_ARGS)
    finally:
        if nice:
            os.unlink(exe)    # the browser has started (exec replaced the shell); the script is not needed


def debug_stats(port: int) -> dict:
    """The server's /debug/stats counts (started with POWERLENS_DEBUG_STATS=1)."""
    with urllib.request.urlopen(f"http://127.0.0.1:{port}/debug/stats", timeout=60) as r:
        return json.loads(r.read())


async def wait_released(port: int, live: int = 0, timeout: float = 40.0) -> tuple[dict, float]:
    """Wait until no more than ``live`` sessions and ExplorerState objects remain; (last counts, seconds)."""
    loop = asyncio.get_running_loop()
    t0 = loop.time()
    while True:
        s = await asyncio.to_thread(debug_stats, port)
        if (s["sessions"] <= live and s["explorer_states"] <= live) or loop.time() - t0 > timeout:
            return s, loop.time() - t0
        await asyncio.sleep(1.0)


def key_plan(net: int, changes: int, seed: int) -> list[str]:
    """``changes`` arrow presses whose net move is ``net`` steps, in a seeded order."""
    if (changes + net) % 2 or abs(net) > changes:
        raise ValueError(f"cannot move {net} steps net in {changes} presses")
    right = (changes + net) // 2
    keys = ["ArrowRight"] * right + ["ArrowLeft"] * (changes - right)
    random.Random(seed).shuffle(keys)
    return keys


def expected_power_text(effect: float) -> str:
    """powercore's power for the demo at this effect, as the readout prints it."""
    import powercore as pc
    from app.text import num
    return num(pc.evaluate(demo(params={**demo().params, "delta": effect})).power, 4)


# The page's websocket, timed on the page clock: when a change leaves (the first message sent after
# ``sent`` is cleared) and when the server's patch with the new views has fully arrived (its last
# frame). Their difference is the server's part of an update plus the wire, without the drawing.
SOCKET_TIMES_JS = """(() => {
  const Native = window.WebSocket;
  window.__sock = {sent: null, patch: null, frames: 0};
  // each key press starts a new timing (the press itself, so the driver needs no call of its own)
  document.addEventListener('keydown', () => { window.__sock.sent = null; window.__sock.patch = null; }, true);
  window.WebSocket = function (...args) {
    const ws = new Native(...args);
    ws.addEventListener('message', (e) => {
      const S = window.__sock;
      if (S.sent === null) return;
      if (S.patch !== null) return;                        // the first patch after the change only
      if (typeof e.data === 'string' && e.data.includes('"msgtype": "PATCH-DOC"')) {
        const m = /"num_buffers": (\\d+)/.exec(e.data);
        S.frames = 2 + 2 * (m ? Number(m[1]) : 0);      // metadata, content, then ref + bytes per buffer
        return;
      }
      if (S.frames > 0 && --S.frames === 0) S.patch = performance.now();
    });
    const send = ws.send.bind(ws);
    ws.send = (data) => { if (window.__sock.sent === null) window.__sock.sent = performance.now(); return send(data); };
    return ws;
  };
  window.WebSocket.prototype = Native.prototype;
  Object.assign(window.WebSocket, Native);
})();"""


class LoadSession:
    """One browser context and page on the explorer; records console errors and requests off 127.0.0.1."""

    def __init__(self, browser, url: str, password: str | None = None, name: str = "") -> None:
        self.browser, self.url, self.password, self.name = browser, url, password, name
        self.errors: list[str] = []
        self.external: list[str] = []
        self.latencies: list[tuple[float, float]] = []   # (event-loop time of the press in s, latency in ms)
        self.round_trips: list[float] = []   # ms from the change leaving the page to the server's patch arriving
        self.context = self.page = None

    async def _guard(self, route) -> None:
        if urllib.parse.urlparse(route.request.url).hostname == "127.0.0.1":
            await route.continue_()
        else:
            self.external.append(route.request.url)
            await route.abort()

    async def open(self, timeout: float = 120_000) -> None:
        self.context = await self.browser.new_context(viewport={"width": 1400, "height": 1000})
        await self.context.route("**/*", self._guard)
        await self.context.add_init_script(SOCKET_TIMES_JS)
        self.page = page = await self.context.new_page()
        page.on("console", lambda m: self.errors.append(f"{self.name}: {m.text}") if m.type == "error" else None)
        page.on("pageerror", lambda e: self.errors.append(f"{self.name}: pageerror: {e}"))
        page.on("requestfailed", lambda r: self.errors.append(f"{self.name}: request failed: {r.url} {r.failure}"))
        await page.goto(self.url, timeout=timeout)
        if self.password is not None:
            await page.fill("#pl-password", self.password)
            async with page.expect_navigation(wait_until="commit", timeout=timeout):
                await page.click("button[type=submit]", no_wait_after=True)
        await page.wait_for_function(READY_JS, timeout=timeout)

    async def hook(self) -> None:
        await self.page.evaluate(HOOK_JS)
        await self.page.locator(EFFECT_HANDLE).focus()

    async def change(self, key: str, timeout: float = 30_000) -> float:
        """Press one arrow key on the effect slider; the latency in ms until all three views are redrawn."""
        pressed = asyncio.get_running_loop().time()
        await self.page.keyboard.press(key)
        ms, trip = await self.page.evaluate(f"(t) => ({WAIT_JS})(t).then(ms => [ms, __sock.patch - __sock.sent])",
                                            timeout)
        self.latencies.append((pressed, ms))
        if trip is not None and trip > 0:
            self.round_trips.append(trip)
        return ms

    async def effect(self) -> float:
        return float(await self.page.locator(EFFECT_HANDLE).get_attribute("aria-valuenow"))

    async def power_text(self) -> str:
        return (await self.page.locator(POWER).inner_text()).strip()

    async def shows_power(self, want: str, timeout: float = 15.0) -> bool:
        """Whether the power readout comes to show ``want`` (its first word) within ``timeout`` s."""
        loop = asyncio.get_running_loop()
        t0 = loop.time()
        while loop.time() - t0 < timeout:
            if re.match(rf"^{re.escape(want)}\b", await self.power_text()):
                return True
            await asyncio.sleep(0.2)
        return False

    async def close(self) -> None:
        if self.context is not None:
            await self.context.close()
            self.context = None


async def cycle_sessions(browser, url: str, cycles: int, batch: int, password: str | None = None) -> list[str]:
    """Open and close ``cycles`` sessions, ``batch`` at a time; returns their console errors."""
    errors: list[str] = []
    done = 0
    while done < cycles:
        group = [LoadSession(browser, url, password, name=f"cycle {done + i}")
                 for i in range(min(batch, cycles - done))]
        await asyncio.gather(*(s.open() for s in group))
        for s in group:
            await s.close()
            errors += s.errors + [f"{s.name}: request off 127.0.0.1: {u}" for u in s.external]
        done += len(group)
    return errors
