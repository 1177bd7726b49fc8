"""Benchmark of the simulators: replicates per second per design, and against scipy.stats.power.

Run by hand: ``python3 tests/benchmarks/bench_simulation.py``. Prints figures; asserts nothing.
Budget (DESIGN.md §7): 100,000 simulated two-sample t tests at 50 per group in under 1 s, and at
least as fast as ``scipy.stats.power`` on the same scenario (aim: 5x).
"""
from __future__ import annotations

import time

import numpy as np
from scipy import stats

import powercore as pc
from powercore.simulate import simulate
from powercore.simulators import SIMULATORS


def main():
    sc = pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=50)
    best = min(simulate(sc, 100_000, seed=s).elapsed for s in range(3))
    rng = np.random.default_rng(0)
    t = time.perf_counter()
    stats.power(stats.ttest_ind, rvs=(lambda size: rng.normal(0, 10, size=size),
                                      lambda size: rng.normal(5, 10, size=size)),
                n_observations=(50, 50), n_resamples=100_000, vectorized=True, significance=0.05)
    ref = time.perf_counter() - t
    print(f"two-sample t, 50 per group, 100,000 replicates: powercore {best:.3f} s "
          f"({100_000 / best:,.0f} per s), scipy.stats.power {ref:.3f} s; ratio {ref / best:.1f}x")
    print("replicates per second, default scenario of each design:")
    for d in pc.designs():
        if d.id not in SIMULATORS:
            print(f"  {d.id:32s} (no simulator)")
            continue
        reps = 2_000 if d.id.startswith("logrank") else 20_000
        r = simulate(pc.Scenario(d.id, n=d.n.default, direction=d.directions[0]), reps, seed=1)
        print(f"  {d.id:32s} {reps / r.elapsed:12,.0f} per s   (n = {d.n.default} {d.n.unit})")


if __name__ == "__main__":
    main()
