"""Time of ``UncertaintyPanel.update()`` per design; prints figures (not a pytest test).

    python3 tests/benchmarks/bench_uncertainty.py [--repeats 15]

For each design's default scenario (and the invented demo) it times, in this process and without a
browser, ``update()`` right after a live change of the scenario (n steps up by one): with the card closed
(only the band, ticked here, is computed) and open (assurance with its distribution, σ's upper limit
and its n, the sensitivity table); then each tab's computation alone. The page computes the tabs
only while the card is open, and on request for designs where they took over ``SLOW_MS``.
"""
from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))          # repository root

import numpy as np  # noqa: E402

import powercore as pc  # noqa: E402
from app.state import ExplorerState  # noqa: E402
from app.uncertainty_view import UncertaintyPanel  # noqa: E402


def timed(fn, repeats: int) -> tuple[float, float]:
    fn()   # warm
    out = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        out.append(1000 * (time.perf_counter() - t0))
    return statistics.median(out), max(out)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeats", type=int, default=15)
    ap.add_argument("--designs", nargs="*", default=None)
    args = ap.parse_args()
    ids = args.designs or ["demo"] + [d.id for d in pc.designs()]
    print(f"UncertaintyPanel.update() after a change of n, in ms, median (max) of {args.repeats}; band drawn; "
          "then each tab's computation alone")
    print(f"{'design':32s} {'closed':>14s} {'open':>14s} {'assurance':>10s} {'spread':>8s} {'table':>8s}")
    worst = []
    for did in ids:
        st = ExplorerState(demo=True) if did == "demo" else ExplorerState(demo=False, design=did)
        if st.snapshot is None:
            print(f"{did:32s} (no good default scenario: {st.errors})")
            continue
        bands = []
        panel = UncertaintyPanel(st, on_band=lambda e, n: bands.append(e))
        panel.band_show.value = True
        panel.update()
        n0 = int(st.n) if st.find != "n" else None

        def changed_then_update():
            """One live change of the scenario (n steps by one), then update(); only update() is timed."""
            if n0 is not None:
                st.n = st.n + 1
            else:
                st.target_power = round(st.target_power + 0.001, 3)
            t0 = time.perf_counter()
            panel.update()
            return 1000 * (time.perf_counter() - t0)

        def per_change(k):
            changed_then_update()
            out = [changed_then_update() for _ in range(k)]
            return statistics.median(out), max(out)

        closed = per_change(args.repeats)
        panel.card.collapsed = False
        opened = per_change(args.repeats)
        stale = panel._stale_row.visible
        snap = st.snapshot
        parts = [timed(lambda f=f: f(snap), max(3, args.repeats // 3))[0]
                 for f in (panel._assurance, panel._spread, panel._table)]
        worst.append((sum(parts), did))
        print(f"{did:32s} {closed[0]:7.1f} ({closed[1]:5.1f}) {opened[0]:7.1f} ({opened[1]:5.1f}) "
              f"{parts[0]:10.1f} {parts[1]:8.1f} {parts[2]:8.1f}" + ("  on request" if stale else ""))
    worst.sort(reverse=True)
    med = float(np.median([w for w, _ in worst])) if worst else float("nan")
    print(f"\nall three tabs: median over designs {med:.1f} ms; slowest "
          f"{', '.join(f'{d} {w:.0f} ms' for w, d in worst[:3])}")
    print("'on request': the tabs took over SLOW_MS, so a change marks them out of date (button) instead")


if __name__ == "__main__":
    main()
