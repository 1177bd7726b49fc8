"""Several sessions at once, quickly: each keeps its own state, nothing errs, closed sessions are released.

The full-size version with latency figures is tests/benchmarks/bench_load.py; this one asserts
correctness only (no timing). The server asks for a password, so every session here also logs in
through the login page in Chromium.
"""
from __future__ import annotations

import asyncio

import pytest

from browser_support import needs_browser, start_server, stop_server

pytestmark = [needs_browser, pytest.mark.browser, pytest.mark.slow]

PASSWORD = "load-test-pass"   # common practice, no source: a made-up password
NETS = (-4, -2, 0, 2, 6)      # net effect-slider steps of the five sessions: each ends somewhere else
CHANGES = 10


@pytest.fixture(scope="module")
def load_server(tmp_path_factory):
    pw = tmp_path_factory.mktemp("load") / "password"
    pw.write_text(PASSWORD + "\n", encoding="utf-8")
    srv = start_server("--password-file", str(pw), env={"POWERLENS_DEBUG_STATS": "1"}, timeout=60)
    yield srv
    code, out, err = stop_server(srv.proc)
    assert code == 0 and "stopped" in out, (code, err[-2000:])
    assert "Traceback" not in err, err[-3000:]


def test_five_sessions_keep_their_own_state(load_server):
    """Five sessions move the effect slider by different amounts at once; each ends at its own effect
    and powercore's power for it, with no console errors and no request off 127.0.0.1."""
    from playwright.async_api import async_playwright

    from load_support import EFFECT_STEP, LoadSession, debug_stats, expected_power_text, key_plan, launch

    handled_before = len(debug_stats(load_server.port)["handled_ms"])

    async def run():
        async with async_playwright() as p:
            browser = await launch(p)
            sessions = [LoadSession(browser, load_server.url, PASSWORD, name=f"session {i}")
                        for i in range(len(NETS))]
            await asyncio.gather(*(s.open() for s in sessions))
            start = [await s.effect() for s in sessions]
            await asyncio.gather(*(s.hook() for s in sessions))

            async def drive(s, net, seed):
                for key in key_plan(net, CHANGES, seed):
                    await s.change(key)

            await asyncio.gather(*(drive(s, net, i) for i, (s, net) in enumerate(zip(sessions, NETS))))
            out = []
            for s, s0, net in zip(sessions, start, NETS):
                effect = await s.effect()
                want = expected_power_text(effect)
                out.append((s0, net, effect, want, await s.shows_power(want), len(s.latencies)))
            for s in sessions:
                await s.close()
            await browser.close()
            return out, [e for s in sessions for e in s.errors], [u for s in sessions for u in s.external]

    out, errors, external = asyncio.run(run())
    assert errors == [] and external == []
    for s0, net, effect, want, shown, n in out:
        assert n == CHANGES
        assert effect == pytest.approx(s0 + net * EFFECT_STEP, abs=1e-9)
        assert shown, f"the readout does not show powercore's {want} for effect {effect}"
    assert len({effect for _, _, effect, *_ in out}) == len(NETS)   # no session took another's moves
    # the server timed each slider change from its message arriving to its patch written (bench_load prints it)
    handled = debug_stats(load_server.port)["handled_ms"][handled_before:]
    assert len(handled) == CHANGES * len(NETS) and all(ms > 0 for ms in handled), handled


def test_closed_sessions_are_released(load_server):
    """After 12 sessions are opened and closed (six at a time), the live sessions and ExplorerState
    objects in the server go back to the count before (none left behind by Panel's registries or
    threads). One leaked page per session would show here; bench_load.py runs 200 cycles."""
    from playwright.async_api import async_playwright

    from load_support import cycle_sessions, launch, wait_released

    async def run():
        before, _ = await wait_released(load_server.port)
        async with async_playwright() as p:
            browser = await launch(p)
            errors = await cycle_sessions(browser, load_server.url, cycles=12, batch=6, password=PASSWORD)
            await browser.close()
        after, _ = await wait_released(load_server.port, live=before["sessions"])
        return before, after, errors

    before, after, errors = asyncio.run(run())
    assert errors == []
    assert before["sessions"] == 0 and before["explorer_states"] == 0, before
    assert after["sessions"] == 0 and after["explorer_states"] == 0 and after["explorers"] == 0, after
    assert after["simulation_threads"] == 0
