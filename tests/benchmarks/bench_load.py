"""Many sessions at once in headless Chromium; prints figures (not a pytest test).

    python3 tests/benchmarks/bench_load.py [--sessions 20] [--changes 50] [--think 2000] [--cycles 200] [--batch 5]

One Chromium, one context and page per session, all driven from one thread with Playwright's async
API (tests/load_support.py). The server runs with POWERLENS_DEBUG_STATS=1 for its counts.

1. Errors: console errors, page errors and requests off 127.0.0.1 in every session (none allowed).
2. Isolation: session i makes ``--changes`` arrow presses on the effect slider whose net move is
   different for every session; at the end each slider must sit at its own effect and each readout
   must show powercore's power for that effect.
3. Update latency: keydown to the last of the three figures redrawn (page clock), over every change
   of every session after its first three: p50, p95, max (budget p95 < 250 ms). Each session pauses
   ``--think`` ms (times a random 0.5-1.5) after each change, as people adjust and look; ``--think 0``
   drives all at once flat out, which on two cores measures mostly the twenty browsers drawing.
   Also the server's part: the change leaving the page to the server's patch arriving.
4. Simulation in one session: session 0 runs the page's confirm-by-simulation on a large run
   (log-rank, 1,000 events, 100,000 replicates) while the others keep changing, each at the pace
   of step 3 (pressing all at once would measure a burst of 19 changes, not the simulation). Stall measure:
   the rise of the other sessions' p95 latency over their p95 in step 3, and their longest single
   update, for the changes pressed while the simulation was running (budget: p95 rise < 150 ms).
5. Open and close ``--cycles`` sessions, ``--batch`` at a time: server RSS once a first batch has
   come and gone, and after all cycles once the closed sessions are discarded (budget growth < 10%);
   live sessions and ExplorerState objects in the server before and after (must return to 0).
"""
from __future__ import annotations

import argparse
import asyncio
import random
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))          # tests/
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))          # repository root

from playwright.async_api import async_playwright  # noqa: E402

import powercore as pc  # noqa: E402
from browser_support import start_server, stop_server  # noqa: E402
from load_support import (EFFECT_STEP, LoadSession, cycle_sessions, debug_stats, expected_power_text,  # noqa: E402
                          key_plan, launch, wait_released)

WARMUP = 3     # the first changes of each session warm caches in the browser and the server


def percentile(xs, q):
    xs = sorted(xs)
    k = (len(xs) - 1) * q
    lo, hi = int(k), min(int(k) + 1, len(xs) - 1)
    return xs[lo] + (xs[hi] - xs[lo]) * (k - lo)


def summary(ms) -> str:
    return (f"p50 {statistics.median(ms):6.1f} ms   p95 {percentile(ms, 0.95):6.1f} ms   max {max(ms):6.1f} ms"
            f"   ({len(ms)} changes)")


def counts(stats: dict) -> dict:
    return {k: v for k, v in stats.items() if k not in ("gc_pauses", "handled_ms")}


def gc_summary(before: dict, after: dict) -> str:
    """The server's garbage-collector pauses between two /debug/stats answers."""
    full = after["full_ms"][len(before["full_ms"]):]
    young = [after["count"][g] - before["count"][g] for g in (0, 1)]
    young_ms = sum(after["total_ms"][g] - before["total_ms"][g] for g in (0, 1))
    return (f"server GC: {len(full)} full collections ({', '.join(f'{ms:.0f}' for ms in full) or 'none'} ms), "
            f"{sum(young)} young ones ({young_ms:.0f} ms in all)")


async def start_simulation(s: LoadSession) -> None:
    """Session ``s``: log-rank design at 1,000 events, 100,000 replicates, start (tests/test_browser_share.py)."""
    page = s.page
    d = pc.get_design("logrank-events")
    await page.locator(".pl-design select").select_option(label=d.title)
    # the switch must have reached the page before n is typed (typing at once can lose the value)
    await page.locator(".pl-control-effect .pl-label").filter(has_text=d.param(d.effect).label).wait_for(
        timeout=30_000)
    await page.wait_for_timeout(1000)
    want = expected_for(pc.Scenario(design=d.id, params=d.defaults(), n=1000))
    box = page.locator(".pl-box-n input")
    await box.fill("1000")
    await box.press("Enter")
    if not await s.shows_power(want, timeout=30):
        raise RuntimeError("session 0 did not switch to the log-rank design at 1,000 events")
    await page.locator(".pl-sim-reps button", has_text="100,000").click()
    await page.locator(".pl-sim-start button").click()
    for _ in range(300):                     # the Cancel button is enabled while the run goes on
        if await simulation_running(s):
            return
        await asyncio.sleep(0.1)
    raise RuntimeError("the simulation in session 0 did not start")


def expected_for(scenario) -> str:
    from app.text import num
    return num(pc.evaluate(scenario).power, 4)


async def simulation_running(s: LoadSession) -> bool:
    return await s.page.locator(".pl-sim-cancel button").is_enabled()


async def drive(s: LoadSession, keys: list[str], seed: int, think_ms: float, stop=None) -> None:
    """Press ``keys`` in session ``s``, pausing ``think_ms`` x U(0.5, 1.5) after each; ``stop()`` ends early."""
    pace = random.Random(seed)
    await asyncio.sleep(pace.uniform(0, think_ms / 1000))     # people do not start together
    for key in keys:
        if stop is not None and stop():
            return
        await s.change(key)
        await asyncio.sleep(think_ms / 1000 * pace.uniform(0.5, 1.5))


async def run(args) -> int:
    password = "bench-load-pass"   # invented
    pw_file = Path("/tmp") / f"powerlens-bench-load-{int(time.time())}.pw"
    pw_file.write_text(password + "\n", encoding="utf-8")
    srv = start_server("--password-file", str(pw_file), env={"POWERLENS_DEBUG_STATS": "1"}, timeout=60)
    pw_file.unlink()
    print(f"server on {srv.url} (password login in every session; POWERLENS_DEBUG_STATS=1)")
    ok = True
    try:
        async with async_playwright() as p:
            browser = await launch(p, nice=args.nice_browsers)
            if args.nice_browsers:
                print(f"Chromium runs at nice {args.nice_browsers}, meant to stand in for browsers on other machines "
                      f"(on a 2-core VM it did not lower the server's figures)")
            n = args.sessions
            sessions = [LoadSession(browser, srv.url, password, name=f"session {i}") for i in range(n)]
            t0 = time.perf_counter()
            for i in range(0, n, args.batch):      # people join a few at a time
                await asyncio.gather(*(s.open() for s in sessions[i:i + args.batch]))
            print(f"{n} sessions open (login, page, three figures drawn; {args.batch} at a time) in "
                  f"{time.perf_counter() - t0:.1f} s; server: {counts(debug_stats(srv.port))}")
            start = [await s.effect() for s in sessions]
            await asyncio.gather(*(s.hook() for s in sessions))
            nets = [2 * i - n for i in range(n)]          # -20, -18, ..., 18: a different end for each

            stats0 = debug_stats(srv.port)
            gc0 = stats0["gc_pauses"]
            t0 = time.perf_counter()
            await asyncio.gather(*(drive(s, key_plan(net, args.changes, i), i, args.think)
                                   for i, (s, net) in enumerate(zip(sessions, nets))))
            wall = time.perf_counter() - t0
            own = 0
            for i, (s, s0, net) in enumerate(zip(sessions, start, nets)):
                effect = await s.effect()
                want = expected_power_text(effect)
                right = abs(effect - (s0 + net * EFFECT_STEP)) < 1e-9 and await s.shows_power(want)
                own += right
                if not right:
                    print(f"  session {i}: effect {effect} (expected {s0 + net * EFFECT_STEP:.1f}), "
                          f"readout {await s.power_text()!r}, powercore {want}")
            ok &= own == n
            print(f"isolation: {own}/{n} sessions end at their own effect (net moves {nets[0]}..{nets[-1]} "
                  f"steps of {EFFECT_STEP}) with powercore's power in the readout")
            base = [ms for s in sessions for _, ms in s.latencies[WARMUP:]]
            trips = [ms for s in sessions for ms in s.round_trips[WARMUP:]]
            pacing = (f"each session waits {args.think / 1000:g} s x U(0.5, 1.5) after each change: "
                      f"{n * args.changes / wall:.1f} changes/s in all" if args.think else
                      f"flat out, no pause between changes: {n * args.changes / wall:.1f} changes/s")
            print(f"update latency, {n} sessions x {args.changes} changes ({wall:.1f} s wall; {pacing}):")
            print(f"  all sessions     {summary(base)}   budget p95 < 250 ms")
            if trips:
                print(f"  of which server  {summary(trips)}   (change sent -> server's patch received, page clock)")
            stats1 = debug_stats(srv.port)
            gc1 = stats1["gc_pauses"]
            handled = stats1["handled_ms"][len(stats0["handled_ms"]):]
            if handled:
                print(f"  server's clock   {summary(handled)}   (a change's message arriving -> its patch written; every change, warm-up included)")
            print(f"  {gc_summary(gc0, gc1)}")
            others_base = [ms for s in sessions[1:] for _, ms in s.latencies[WARMUP:]]

            # ---- a simulation in session 0 while the others change ------------------------------
            sim = sessions[0]
            for s in sessions[1:]:
                s.latencies.clear()
            await start_simulation(sim)
            loop = asyncio.get_running_loop()
            sim_start = loop.time()
            print("simulation running in session 0 (log-rank, 1,000 events, 100,000 replicates)")
            running = True

            async def watch():
                nonlocal running
                while running:
                    running = await simulation_running(sim)
                    await asyncio.sleep(0.25)

            watcher = asyncio.create_task(watch())
            # the same pacing as step 3 (each person on their own clock), so that only the simulation differs
            keys = ["ArrowRight", "ArrowLeft"] * (args.sim_rounds // 2) + ["ArrowRight"] * (args.sim_rounds % 2)
            await asyncio.gather(*(drive(s, keys, 100 + i, args.think, lambda: not running)
                                   for i, s in enumerate(sessions[1:])))
            rounds = min(len(s.latencies) for s in sessions[1:])
            running = False
            await watcher
            still = await simulation_running(sim)
            sim_end = loop.time()
            if still:
                await sim.page.locator(".pl-sim-cancel button").click()
            during = [ms for s in sessions[1:] for pressed, ms in s.latencies if sim_start <= pressed <= sim_end]
            gc2 = debug_stats(srv.port)["gc_pauses"]
            if during:
                rise = percentile(during, 0.95) - percentile(others_base, 0.95)
                print(f"  other sessions, before           {summary(others_base)}")
                print(f"  other sessions, while simulating {summary(during)}")
                print(f"  stall measure: p95 rise {rise:+.1f} ms (budget < 150 ms); longest update "
                      f"{max(during):.1f} ms; at least {rounds} changes a session in {sim_end - sim_start:.1f} s of "
                      f"simulation ({'cancelled after the rounds' if still else 'it finished first'})")
                print(f"  {gc_summary(gc1, gc2)}")
            else:
                print("  no change was pressed while the simulation ran")
            errors = [e for s in sessions for e in s.errors]
            external = [u for s in sessions for u in s.external]
            print(f"errors: {len(errors)} console/page errors, {len(external)} requests off 127.0.0.1 (none allowed)")
            for e in (errors + external)[:10]:
                print("  ", e)
            ok &= not errors and not external
            for s in sessions:
                await s.close()
            released, secs = await wait_released(srv.port, timeout=60)
            print(f"after closing the {n} sessions: {counts(released)} ({secs:.1f} s)")

            # ---- open and close -----------------------------------------------------------------
            warm_errors = await cycle_sessions(browser, srv.url, args.batch, args.batch, password)
            before, _ = await wait_released(srv.port, timeout=60)
            t0 = time.perf_counter()
            cycle_errors = await cycle_sessions(browser, srv.url, args.cycles, args.batch, password)
            took = time.perf_counter() - t0
            after, secs = await wait_released(srv.port, timeout=60)
            growth = (after["rss_kb"] - before["rss_kb"]) / before["rss_kb"]
            print(f"{args.cycles} open-and-close cycles, {args.batch} at a time, in {took:.0f} s "
                  f"(after {args.batch} warm-up cycles):")
            print(f"  server RSS {before['rss_kb'] / 1024:.1f} MB before, {after['rss_kb'] / 1024:.1f} MB after: "
                  f"{100 * growth:+.1f}%  budget < 10%")
            print(f"  live sessions {before['sessions']} -> {after['sessions']}, ExplorerState objects "
                  f"{before['explorer_states']} -> {after['explorer_states']}, simulation threads "
                  f"{after['simulation_threads']} ({secs:.1f} s after the last close)")
            print(f"  errors in the cycles: {len(warm_errors + cycle_errors)}")
            ok &= after["explorer_states"] == 0 and after["sessions"] == 0 and not (warm_errors + cycle_errors)
            await browser.close()
    finally:
        code, _, err = stop_server(srv.proc)
        print(f"server stopped, exit code {code}{'; Traceback in its log:' if 'Traceback' in err else ''}")
        if "Traceback" in err:
            print("\n".join("    " + line for line in err[err.index("Traceback"):].splitlines()[:40]))
    print("all checks passed" if ok else "SOME CHECKS FAILED")
    return 0 if ok else 1


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sessions", type=int, default=20)
    ap.add_argument("--changes", type=int, default=50)
    ap.add_argument("--sim-rounds", type=int, default=20, help="most changes a session makes while the simulation runs (default 20)")
    ap.add_argument("--think", type=float, default=2000,
                    help="ms each session waits after a change, times U(0.5, 1.5) (default 2000: twenty people "
                         "each adjusting and looking; all twenty browsers share this machine's two cores, which a "
                         "meeting's laptops do not); 0 drives every session flat out")
    ap.add_argument("--nice-browsers", type=int, default=0, metavar="N",
                    help="run Chromium at nice N (e.g. 19), meant to stand in for each person's browser on their "
                         "own laptop; report beside the default run, not instead")
    ap.add_argument("--cycles", type=int, default=200)
    ap.add_argument("--batch", type=int, default=5, help="sessions opened at once (default 5)")
    args = ap.parse_args()
    if args.changes < args.sessions or (args.changes + args.sessions) % 2:
        ap.error("--changes must be at least --sessions and of the same parity (each session's net move differs)")
    return asyncio.run(run(args))


if __name__ == "__main__":
    sys.exit(main())
