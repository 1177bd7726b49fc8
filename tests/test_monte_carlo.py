"""Seeded simulation spot checks: simulate raw data, run the real test, compare the rejection rate with powercore.

Each check draws data with a numpy Generator under a fixed seed, applies the test a study
would run (scipy.stats ttest_ind / ttest_1samp / ttest_rel / Welch ttest_ind(equal_var=False)
/ binomtest / pearsonr, or the pooled two-proportion z test written out), and requires
|simulated − analytic| ≤ 4 Monte Carlo standard errors, SE = √(p(1 − p)/R). The
simulated rates are the reference (``Monte Carlo, seeded``); the analytic values are
powercore's. For approximate designs the approximation error is part of what is checked,
so those cases sit where the approximation is documented to be good.

Two measurements print their tables (run with ``-s`` to see them) and check the accuracy
the design notes claim: Welch at 10 per group with an SD ratio of 3, and Fisher z at n = 20.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import powercore as pc

R = 20_000          # replicates per spot check: SE ≤ 0.0035
R_MEASURE = 100_000  # replicates for the two measurements: SE ≤ 0.0016


def power(design_id, params, n, alpha=0.05, direction="two-sided"):
    """powercore's power through a validated scenario."""
    return pc.power(pc.Scenario(design_id, params, n=n, alpha=alpha, direction=direction))


def within_4se(sim, analytic, reps):
    """Assert the simulated rate is within 4 Monte Carlo SE of the analytic power."""
    se = math.sqrt(max(analytic * (1 - analytic), 1e-12) / reps)
    assert abs(sim - analytic) <= 4 * se, f"simulated {sim:.4f}, analytic {analytic:.4f}, 4 SE = {4 * se:.4f}"


SCIPY_ALT = {"two-sided": "two-sided", "upper": "greater", "lower": "less"}


# ---- t tests ----------------------------------------------------------------------
@pytest.mark.parametrize("delta, sd, ratio, n1, direction, seed", [
    (0.8, 1.0, 1.0, 20, "two-sided", 1), (0.7, 2.0, 2.0, 15, "upper", 2), (-0.5, 1.0, 0.5, 40, "lower", 3),
])
def test_two_sample_t_by_simulation(delta, sd, ratio, n1, direction, seed):
    """Pooled two-sample t power matches the rejection rate of scipy.stats.ttest_ind on normal data."""
    rng = np.random.default_rng(seed)
    n2 = math.ceil(ratio * n1 - 1e-9)
    g1 = rng.normal(0.0, sd, (R, n1))
    g2 = rng.normal(delta, sd, (R, n2))
    sim = np.mean(stats.ttest_ind(g2, g1, axis=1, alternative=SCIPY_ALT[direction]).pvalue <= 0.05)  # Monte Carlo, seeded
    within_4se(sim, power("two-means-t", {"delta": delta, "sd": sd, "ratio": ratio}, n1, 0.05, direction), R)


@pytest.mark.parametrize("delta, sd, n, direction, seed", [(0.6, 1.0, 15, "two-sided", 4), (3.0, 10.0, 40, "upper", 5)])
def test_one_sample_t_by_simulation(delta, sd, n, direction, seed):
    """One-sample t power matches the rejection rate of scipy.stats.ttest_1samp."""
    rng = np.random.default_rng(seed)
    x = rng.normal(delta, sd, (R, n))
    sim = np.mean(stats.ttest_1samp(x, 0.0, axis=1, alternative=SCIPY_ALT[direction]).pvalue <= 0.05)  # Monte Carlo
    within_4se(sim, power("mean-t", {"delta": delta, "sd": sd}, n, 0.05, direction), R)


@pytest.mark.parametrize("delta, rho, n, direction, seed", [(0.5, 0.5, 20, "two-sided", 6), (-0.4, 0.3, 30, "lower", 7)])
def test_paired_t_by_simulation(delta, rho, n, direction, seed):
    """Paired t power with σ_d = σ√(2(1 − ρ)) matches the rejection rate of scipy.stats.ttest_rel on correlated pairs."""
    rng = np.random.default_rng(seed)
    z1, z2 = rng.standard_normal((2, R, n))
    before = z1
    after = delta + rho * z1 + math.sqrt(1 - rho * rho) * z2
    sim = np.mean(stats.ttest_rel(after, before, axis=1, alternative=SCIPY_ALT[direction]).pvalue <= 0.05)  # Monte Carlo
    sd_diff = math.sqrt(2 * (1 - rho))
    within_4se(sim, power("paired-t", {"delta": delta, "sd_diff": sd_diff}, n, 0.05, direction), R)


@pytest.mark.parametrize("delta, sd1, sd2, ratio, n1, seed", [(1.2, 1.0, 2.5, 2.0, 12, 8), (2.0, 3.0, 1.0, 1.0, 20, 9)])
def test_welch_by_simulation(delta, sd1, sd2, ratio, n1, seed):
    """Welch power matches the rejection rate of scipy.stats.ttest_ind(equal_var=False) at 12 or more per group."""
    rng = np.random.default_rng(seed)
    n2 = math.ceil(ratio * n1 - 1e-9)
    g1 = rng.normal(0.0, sd1, (R, n1))
    g2 = rng.normal(delta, sd2, (R, n2))
    sim = np.mean(stats.ttest_ind(g2, g1, axis=1, equal_var=False).pvalue <= 0.05)  # Monte Carlo, seeded
    within_4se(sim, power("two-means-welch", {"delta": delta, "sd1": sd1, "sd2": sd2, "ratio": ratio}, n1), R)


# ---- proportions --------------------------------------------------------------------
def binomtest_rejects(n, p0, alpha, direction):
    """For every count 0..n, whether scipy.stats.binomtest rejects (one-sided tests at α/2 each when two-sided)."""
    a = alpha / 2 if direction == "two-sided" else alpha
    out = np.zeros(n + 1, dtype=bool)
    for k in range(n + 1):
        if direction in ("two-sided", "upper"):
            out[k] |= stats.binomtest(k, n, p0, alternative="greater").pvalue <= a
        if direction in ("two-sided", "lower"):
            out[k] |= stats.binomtest(k, n, p0, alternative="less").pvalue <= a
    return out


@pytest.mark.parametrize("p0, delta, n, direction, seed", [(0.3, 0.2, 40, "two-sided", 10), (0.5, 0.15, 90, "upper", 11),
                                                           (0.2, -0.12, 120, "lower", 12)])
def test_exact_binomial_by_simulation(p0, delta, n, direction, seed):
    """Exact binomial power is the probability of binomtest's rejection set, and matches its simulated rejection rate."""
    reject = binomtest_rejects(n, p0, 0.05, direction)
    exact = float(np.sum(stats.binom.pmf(np.arange(n + 1), n, p0 + delta)[reject]))  # direct scipy computation
    analytic = power("proportion-exact", {"p0": p0, "delta": delta}, n, 0.05, direction)
    assert analytic == pytest.approx(exact, rel=1e-9)
    rng = np.random.default_rng(seed)
    sim = np.mean(reject[rng.binomial(n, p0 + delta, R)])  # Monte Carlo, seeded (vectorised over the region)
    within_4se(sim, analytic, R)


def pooled_z_rejects(x1, n1, x2, n2, alpha, direction, continuity):
    """The pooled two-proportion z test on arrays of counts (optionally with the (1/n1 + 1/n2)/2 correction)."""
    p1, p2 = x1 / n1, x2 / n2
    pbar = (x1 + x2) / (n1 + n2)
    se0 = np.sqrt(pbar * (1 - pbar) * (1 / n1 + 1 / n2))
    diff = p2 - p1
    c = (1 / n1 + 1 / n2) / 2 if continuity else 0.0
    a = alpha / 2 if direction == "two-sided" else alpha
    zc = stats.norm.isf(a)
    with np.errstate(divide="ignore", invalid="ignore"):
        up = (diff - c) / se0 >= zc
        lo = (diff + c) / se0 <= -zc
    up, lo = np.nan_to_num(up, nan=0).astype(bool), np.nan_to_num(lo, nan=0).astype(bool)
    return {"two-sided": up | lo, "upper": up, "lower": lo}[direction]


def test_pooled_z_helper_agrees_with_statsmodels():
    """The simulation's pooled z test gives the same decisions as statsmodels proportions_ztest on a grid of tables."""
    from statsmodels.stats.proportion import proportions_ztest
    for x1, x2 in [(45, 68), (30, 31), (10, 25), (60, 40)]:
        _, pv = proportions_ztest([x2, x1], [150, 150])  # statsmodels 0.15 stats.proportion
        ours = pooled_z_rejects(np.array(x1), 150, np.array(x2), 150, 0.05, "two-sided", False)
        assert bool(ours) == (pv <= 0.05)


@pytest.mark.parametrize("continuity", [False, True])
@pytest.mark.parametrize("p1, delta, ratio, n1, direction, seed", [
    (0.3, 0.15, 1.0, 150, "two-sided", 13), (0.5, -0.12, 2.0, 120, "lower", 14),
])
def test_two_proportions_by_simulation(p1, delta, ratio, n1, direction, continuity, seed):
    """Pooled two-proportion z power (with or without the continuity correction) matches the simulated z test."""
    rng = np.random.default_rng(seed)
    n2 = math.ceil(ratio * n1 - 1e-9)
    x1 = rng.binomial(n1, p1, R)
    x2 = rng.binomial(n2, p1 + delta, R)
    sim = np.mean(pooled_z_rejects(x1, n1, x2, n2, 0.05, direction, continuity))  # Monte Carlo, seeded
    analytic = power("two-proportions", {"p1": p1, "delta": delta, "ratio": ratio, "continuity": continuity}, n1,
                     0.05, direction)
    within_4se(sim, analytic, R)


def score_test_power(n, p0, p1, alpha=0.05):
    """Exact power of the score z test of one proportion: binomial mass of its rejection set (direct scipy computation)."""
    k = np.arange(n + 1)
    z = (k / n - p0) / math.sqrt(p0 * (1 - p0) / n)
    reject = np.abs(z) >= stats.norm.isf(alpha / 2)
    return float(np.sum(stats.binom.pmf(k, n, p1)[reject])), reject


def test_one_proportion_normal_by_simulation():
    """The one-proportion normal approximation matches the simulated score z test at n = 1000 (n·p0 = 300)."""
    n, p0, p1 = 1000, 0.3, 0.34
    exact, reject = score_test_power(n, p0, p1)
    rng = np.random.default_rng(15)
    sim = float(np.mean(reject[rng.binomial(n, p1, R)]))  # Monte Carlo, seeded
    within_4se(sim, exact, R)   # the simulation reproduces the real test
    within_4se(sim, power("proportion-normal", {"p0": p0, "delta": p1 - p0}, n), R)


def test_one_proportion_normal_discreteness_is_measured():
    """At n = 100-400 the real score test's power differs from the normal approximation by its saw-tooth; print it."""
    rows = []
    for n, p0, p1 in [(100, 0.3, 0.42), (200, 0.3, 0.39), (400, 0.3, 0.36), (400, 0.5, 0.57)]:
        exact, reject = score_test_power(n, p0, p1)
        size, _ = score_test_power(n, p0, p0)
        approx = power("proportion-normal", {"p0": p0, "delta": p1 - p0}, n)
        rows.append(f"n={n} p0={p0:g} p1={p1:g}: exact score test {exact:.4f} (size {size:.4f}), "
                    f"normal approximation {approx:.4f}, diff {exact - approx:+.4f}")
        # the real test's size is not α: that, not the code, is the whole of the difference
        assert abs(exact - approx) <= abs(size - 0.05) * 10 + 0.005, rows[-1]
    print("\nOne proportion, score z test, α = 0.05 two-sided (exact binomial sums):\n" + "\n".join(rows))


def test_one_proportion_normal_note_states_the_measured_error():
    """The design's note quotes the gap to the real score test; recompute it by binomial sums (direct scipy)."""
    note = " ".join(pc.get_design("proportion-normal").notes)
    exact, _ = score_test_power(100, 0.3, 0.4)
    size, _ = score_test_power(100, 0.3, 0.3)
    approx = power("proportion-normal", {"p0": 0.3, "delta": 0.1}, 100)
    assert f"actual size is {size:.3f}" in note and f"power {exact:.3f} against {approx:.3f}" in note
    gaps = {n: max(abs(score_test_power(n, p0, p0 + dl)[0] - power("proportion-normal", {"p0": p0, "delta": dl}, n))
                   for p0 in (0.1, 0.3, 0.5) for dl in (0.1, -0.1) if p0 + dl > 0)
            for n in (30, 50, 100, 200, 500)}
    assert max(gaps[n] for n in (30, 50, 100)) <= 0.07 < max(gaps[n] for n in (30, 50, 100)) + 0.01   # "up to ±0.07"
    assert gaps[200] <= 0.015 and gaps[500] < 0.001   # "from n = 200 by 0.015 at most, from n = 500 under 0.001"


# ---- correlation ----------------------------------------------------------------------
def pearson_rate(rng, rho, n, reps, alpha=0.05):
    """Rejection rate of scipy.stats.pearsonr (two-sided, ρ0 = 0) on bivariate normal samples."""
    z = rng.standard_normal((reps, n, 2))
    x = z[..., 0]
    y = rho * z[..., 0] + math.sqrt(1 - rho * rho) * z[..., 1]
    return float(np.mean(stats.pearsonr(x, y, axis=1).pvalue <= alpha))


@pytest.mark.parametrize("design_id, rho, n, seed", [("correlation-fisher", 0.3, 100, 16),
                                                      ("correlation-exact", 0.45, 20, 17)])
def test_correlation_by_simulation(design_id, rho, n, seed):
    """Correlation power matches the rejection rate of scipy.stats.pearsonr (Fisher z at n = 100, exact r at n = 20)."""
    sim = pearson_rate(np.random.default_rng(seed), rho, n, R)  # Monte Carlo, seeded
    within_4se(sim, power(design_id, {"rho0": 0.0, "delta": rho}, n), R)


# ---- measurements of the documented approximation errors -------------------------------
def test_welch_at_10_per_group_sd_ratio_3_is_within_the_documented_0_01():
    """Welch power at 10 per group with SD ratio 3 agrees with simulated Welch tests to ±0.01, as its notes claim."""
    rng = np.random.default_rng(18)
    rows, worst = [], 0.0
    for sd1, sd2 in [(1.0, 3.0), (3.0, 1.0)]:
        for delta in [1.0, 2.0, 3.0, 4.0]:
            g1 = rng.normal(0.0, sd1, (R_MEASURE, 10))
            g2 = rng.normal(delta, sd2, (R_MEASURE, 10))
            sim = float(np.mean(stats.ttest_ind(g2, g1, axis=1, equal_var=False).pvalue <= 0.05))  # Monte Carlo
            an = power("two-means-welch", {"delta": delta, "sd1": sd1, "sd2": sd2, "ratio": 1.0}, 10)
            se = math.sqrt(an * (1 - an) / R_MEASURE)
            rows.append(f"sd1={sd1:g} sd2={sd2:g} δ={delta:g}: simulated {sim:.4f} analytic {an:.4f} "
                        f"diff {sim - an:+.4f} (SE {se:.4f})")
            worst = max(worst, abs(sim - an) - 4 * se)
    table = "\n".join(rows)
    print("\nWelch, 10 per group, SD ratio 3, α = 0.05 two-sided:\n" + table)
    assert worst <= 0.01, "Welch approximation off by more than 0.01 beyond 4 SE:\n" + table


def test_fisher_z_at_n_20_is_within_the_documented_0_025():
    """Fisher-z power at n = 20 is within 0.025 of the exact power of Pearson's r, as the design's notes state."""
    rng = np.random.default_rng(19)
    rows, worst = [], 0.0
    for rho in [0.2, 0.3, 0.4, 0.5, 0.6]:
        sim = pearson_rate(rng, rho, 20, R_MEASURE)  # Monte Carlo, seeded
        fisher = power("correlation-fisher", {"rho0": 0.0, "delta": rho}, 20)
        exact = power("correlation-exact", {"rho0": 0.0, "delta": rho}, 20)
        se = math.sqrt(sim * (1 - sim) / R_MEASURE)
        # the exact design is the yardstick only if it agrees with simulation
        assert abs(sim - exact) <= 4 * se, f"exact r design {exact:.4f} vs simulated {sim:.4f} at ρ = {rho}"
        rows.append(f"ρ={rho:g}: simulated {sim:.4f} (SE {se:.4f}) exact {exact:.4f} Fisher z {fisher:.4f} "
                    f"Fisher − exact {fisher - exact:+.4f}")
        worst = max(worst, abs(fisher - exact))
    table = "\n".join(rows)
    print("\nFisher z against the exact distribution of r, n = 20, α = 0.05 two-sided:\n" + table)
    assert worst <= 0.025, f"Fisher z is off by up to {worst:.4f} at n = 20 (notes state about 0.022):\n" + table
