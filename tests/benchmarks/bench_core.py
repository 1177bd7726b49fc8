"""Benchmark of the core: sample-size solves against statsmodels, and curve cost against bare scipy.

Run by hand: ``python3 tests/benchmarks/bench_core.py``. Prints figures; asserts nothing.
Budgets (DESIGN.md §7): solving at least 10x faster than statsmodels ``solve_power`` at equal or
better accuracy; a 400-point curve within about the cost of the vectorised scipy calls it needs.
"""
from __future__ import annotations

import itertools
import statistics
import time

import numpy as np
from scipy import special
from statsmodels.stats.power import NormalIndPower, TTestIndPower, TTestPower

import powercore as pc
from powercore.engine import power_at

ALT = {"two-sided": "two-sided", "upper": "larger", "lower": "smaller"}


def cases():
    """(our scenario, statsmodels solver, its kwargs, effect size) over a grid of 144 cases."""
    out = []
    for d, alpha, target, direction in itertools.product((0.2, 0.35, 0.5, 0.8), (0.01, 0.05, 0.1),
                                                         (0.8, 0.9), ("two-sided", "upper")):
        sign = 1.0
        out.append((pc.Scenario("mean-t", {"delta": sign * d, "sd": 1.0}, find="n", alpha=alpha,
                                target_power=target, direction=direction),
                    TTestPower(), {"effect_size": d}, 0))
        out.append((pc.Scenario("two-means-t", {"delta": d, "sd": 1.0, "ratio": 1.0}, find="n", alpha=alpha,
                                target_power=target, direction=direction),
                    TTestIndPower(), {"effect_size": d, "ratio": 1.0}, 0))
        out.append((pc.Scenario("two-proportions-arcsine", {"p1": 0.5, "delta": d / 2.2, "ratio": 1.0},
                                find="n", alpha=alpha, target_power=target, direction=direction),
                    NormalIndPower(), None, 0))
    return out


def best_of(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        value = fn()
        times.append(time.perf_counter() - t)
    return min(times), value


def main():
    rows = cases()
    ours_t, sm_t, worst_resid_ours, worst_resid_sm, mismatches, worst_n_gap = [], [], 0.0, 0.0, 0, 0
    for sc, solver, kw, _ in rows:
        d = pc.get_design(sc.design)
        p = dict(sc.params)
        if kw is None:
            kw = {"effect_size": float(d.standardized(p)), "ratio": 1.0}
        args = dict(kw, alpha=sc.alpha, power=sc.target_power, alternative=ALT[sc.direction], nobs1=None)
        if isinstance(solver, TTestPower):
            args["nobs"] = args.pop("nobs1")
            args.pop("ratio", None)
        t_ours, ss = best_of(lambda: pc.sample_size(d, p, sc.alpha, sc.direction, sc.target_power))
        t_sm, n_sm = best_of(lambda: solver.solve_power(**args), repeat=3)
        ours_t.append(t_ours)
        sm_t.append(t_sm)

        def exact(n):
            return float(power_at(d, p, n, sc.alpha, sc.direction, integer=False))
        worst_resid_ours = max(worst_resid_ours, abs(exact(ss.n_continuous) - sc.target_power))
        worst_resid_sm = max(worst_resid_sm, abs(exact(float(n_sm)) - sc.target_power))
        gap = abs(ss.n - int(np.ceil(float(n_sm) - 1e-9)))
        mismatches += gap != 0
        worst_n_gap = max(worst_n_gap, gap)
    mo, ms = statistics.median(ours_t), statistics.median(sm_t)
    print(f"sample-size solves: {len(rows)} cases (one-sample t, two-sample t, two proportions arcsine)")
    print(f"  powercore median {mo * 1e3:.3f} ms, statsmodels solve_power median {ms * 1e3:.3f} ms, "
          f"ratio {ms / mo:.1f}x (budget >= 10x)")
    print(f"  totals: powercore {sum(ours_t) * 1e3:.1f} ms, statsmodels {sum(sm_t) * 1e3:.1f} ms, "
          f"ratio {sum(sm_t) / sum(ours_t):.1f}x")
    print(f"  accuracy |power(root) - target| (exact power function): powercore {worst_resid_ours:.2e}, "
          f"statsmodels {worst_resid_sm:.2e}")
    print(f"  integer n differs from ceil(statsmodels nobs) in {mismatches} cases, by at most {worst_n_gap}")

    # 400-point power curve against effect, two-sample t, versus the bare scipy calls it needs
    sc = pc.Scenario("two-means-t", {"delta": 3.0, "sd": 10.0, "ratio": 1.0}, n=80)
    effects = np.linspace(-10, 10, 400)
    t_curve, _ = best_of(lambda: pc.curve_effect(sc, -10, 10, 400), repeat=50)
    n1 = n2 = 80.0
    df = n1 + n2 - 2

    def bare():
        c = -special.stdtrit(df, 0.025)
        nc = effects / (10.0 * np.sqrt(1 / n1 + 1 / n2))
        return special.nctdtr(df, -nc, -c) + special.nctdtr(df, nc, -c)
    t_bare, ref = best_of(bare, repeat=50)
    ours = pc.curve_effect(sc, -10, 10, 400).power
    print(f"400-point power curve (two-sample t): powercore {t_curve * 1e3:.3f} ms, bare scipy.special calls "
          f"{t_bare * 1e3:.3f} ms (ratio {t_curve / t_bare:.2f}); max |difference| {np.max(np.abs(ours - ref)):.1e}")
    for design in ("mean-z", "two-proportions", "proportion-exact", "correlation-fisher"):
        d = pc.get_design(design)
        s = pc.Scenario(design, n=d.n.default)
        r = pc.evaluate(s)
        lo, hi = pc.effect_range(r)
        t_c, _ = best_of(lambda: pc.curve_effect(s, lo, hi, 400), repeat=20)
        t_e, _ = best_of(lambda: pc.evaluate(s), repeat=5)
        print(f"  {design:20s} 400-point curve {t_c * 1e3:7.3f} ms; full evaluate (power, n, effects, working) "
              f"{t_e * 1e3:7.2f} ms")


if __name__ == "__main__":
    main()
