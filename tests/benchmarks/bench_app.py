"""Explorer benchmarks in headless Chromium; prints figures (not a pytest test).

    python3 tests/benchmarks/bench_app.py [--changes 60] [--sessions 10] [--screenshot assets/explorer.png]

1. Server start to first paint: from spawning ``python3 -m app.server`` to all three
   figures drawn in an already running browser (budget < 5 s).
2. Slider change to new data drawn in all three views: keydown on the effect slider's
   handle to the first repaint of each figure after its data source changed, the last
   of the three (page clock), median and 95th percentile over the changes, per design
   (budget: median < 80 ms, p95 < 120 ms).
3. Memory per open session: growth of the server's resident set over extra sessions,
   divided by their number (budget < 30 MB).
"""
from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))          # tests/ (browser_support)
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))          # repository root

from playwright.sync_api import expect, sync_playwright  # noqa: E402

import powercore as pc  # noqa: E402
from browser_support import (CHROMIUM, CHROMIUM_ARGS, HOOK_JS, WAIT_JS, GuardedPage,  # noqa: E402
                             start_server, stop_server)

DESIGNS = ("two-means-t", "two-proportions", "correlation-fisher")



def percentile(xs, q):
    xs = sorted(xs)
    k = (len(xs) - 1) * q
    lo, hi = int(k), min(int(k) + 1, len(xs) - 1)
    return xs[lo] + (xs[hi] - xs[lo]) * (k - lo)


def rss_mb(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    raise RuntimeError("no VmRSS")


def latency(page, design_id: str, changes: int) -> list[float]:
    d = pc.get_design(design_id)
    if page.locator(".pl-design select").input_value() != d.title:
        page.locator(".pl-design select").select_option(label=d.title)
        # settled: the effect control carries the new design's label, then a pause for the last redraws
        expect(page.locator(".pl-control-effect .pl-label")).to_contain_text(d.param(d.effect).label,
                                                                             timeout=20000)
        page.wait_for_timeout(1500)
    page.evaluate(HOOK_JS)
    handle = page.locator(".pl-slider-effect .noUi-handle")
    handle.focus()
    out = []
    for i in range(changes + 3):
        page.keyboard.press("ArrowRight" if (i // 2) % 2 == 0 else "ArrowLeft")
        ms = page.evaluate(WAIT_JS, 10000)
        if i >= 3:          # the first few warm up caches in the browser and the server
            out.append(ms)
        page.wait_for_timeout(60)
    return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--changes", type=int, default=60)
    ap.add_argument("--sessions", type=int, default=10)
    ap.add_argument("--no-bytecode", action="store_true",
                    help="do not compile app/ and powercore/ to bytecode first (a first start on a machine that "
                         "never ran the server, or one that sets PYTHONDONTWRITEBYTECODE as this sandbox does)")
    ap.add_argument("--screenshot", metavar="PNG", help="also save a 1600×1540 picture of the page at start "
                    "(the README's assets/explorer.png is made this way)")
    args = ap.parse_args()
    root = Path(__file__).resolve().parents[2]
    if not args.no_bytecode:     # Python caches bytecode after a first start; PYTHONDONTWRITEBYTECODE stops that
        import compileall
        for package in ("app", "powercore"):
            compileall.compile_dir(str(root / package), quiet=1)
        print("bytecode of app/ and powercore/ compiled first (as after any earlier start; --no-bytecode to skip)")
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        t0 = time.perf_counter()
        srv = start_server()
        try:
            gp = GuardedPage(browser, srv.url)
            gp.page.goto(srv.url)
            from browser_support import wait_ready
            wait_ready(gp.page)
            first_paint = time.perf_counter() - t0
            if args.screenshot:
                shot = GuardedPage(browser, srv.url, viewport=(1600, 1540))
                shot.open()
                shot.page.wait_for_timeout(500)
                shot.page.screenshot(path=args.screenshot)
                shot.close()
                print(f"screenshot saved to {args.screenshot}")
            print(f"server start to first paint: {first_paint:.2f} s (address printed after "
                  f"{srv.ready - srv.started:.2f} s)  budget < 5 s")
            print(f"slider change -> new data drawn in all three views ({args.changes} changes each):")
            for design_id in DESIGNS:
                ms = latency(gp.page, design_id, args.changes)
                print(f"  {design_id:22s} median {statistics.median(ms):6.1f} ms   p95 {percentile(ms, 0.95):6.1f} ms"
                      f"   max {max(ms):6.1f} ms   (budget median < 80, p95 < 120)")
            ms = latency(gp.page, "proportion-exact", 20)
            print(f"  {'proportion-exact':22s} median {statistics.median(ms):6.1f} ms   p95 {percentile(ms, 0.95):6.1f} ms"
                  f"   (exact design, for reference: 20 changes)")
            base = rss_mb(srv.proc.pid)
            pages = []
            for _ in range(args.sessions):
                extra = GuardedPage(browser, srv.url)
                extra.open()
                pages.append(extra)
            time.sleep(1.0)
            grown = rss_mb(srv.proc.pid)
            print(f"memory: server RSS {base:.1f} MB with one session, {grown:.1f} MB with {args.sessions} more: "
                  f"{(grown - base) / args.sessions:.1f} MB per session  budget < 30 MB")
            errors = [e for g in [gp, *pages] for e in g.errors]
            external = [e for g in [gp, *pages] for e in g.external]
            print(f"console errors: {len(errors)}; requests off 127.0.0.1: {len(external)}")
            for g in pages:
                g.close()
            gp.close()
        finally:
            code, _, err = stop_server(srv.proc)
            print(f"server stopped, exit code {code}")
        browser.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
