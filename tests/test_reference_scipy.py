"""powercore against power written out independently here with scipy.stats, and against published values.

The reference functions below are written from the textbook definition of each test,
without importing powercore's distributions: critical values from the null
distribution, power as the alternative's probability of the rejection region (both
tails for two-sided tests). Each expected value is marked with its source:
``direct scipy computation``, a published table (``from memory`` when recalled),
a textbook formula, or ``common practice, no source``.

Tolerances: the reference and powercore evaluate the same scipy special functions on
slightly different routes, so power agrees to 1e-9 relative (1e-12 absolute). Sample
sizes from closed-form normal-theory formulas agree exactly as whole numbers: the
formulas ignore the far rejection tail, which at these n (tens to hundreds) moves the
real-valued n by well under the 1e-3 kept between each formula value and a whole
number (asserted case by case). At n in the millions it does not; test_edge_cases.py
solves with both tails there.
"""
from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy import integrate, stats

import powercore as pc

REL, ABS = 1e-9, 1e-12
DIRECTIONS = ["two-sided", "upper", "lower"]


def ours(design_id, params, n, alpha=0.05, direction="two-sided"):
    """powercore's power through a validated scenario."""
    return pc.power(pc.Scenario(design_id, params, n=n, alpha=alpha, direction=direction))


def solve_n(design_id, params, alpha=0.05, direction="two-sided", target=0.8):
    """powercore's sample-size result through a validated scenario."""
    return pc.evaluate(pc.Scenario(design_id, params, alpha=alpha, direction=direction, find="n",
                                   target_power=target)).sample_size


# ---- reference power functions (direct scipy computation) -------------------------
def z_power(nc, alpha, direction, sd_alt=1.0, shift=0.0):
    """Power of a z test whose statistic is N(nc, sd_alt²) under H1; ``shift`` moves the critical values outward."""
    a = alpha / 2 if direction == "two-sided" else alpha
    c = stats.norm.isf(a) + shift
    up = stats.norm.sf(c, loc=nc, scale=sd_alt) if direction in ("two-sided", "upper") else 0.0
    lo = stats.norm.cdf(-c, loc=nc, scale=sd_alt) if direction in ("two-sided", "lower") else 0.0
    return up + lo


def t_power(df, nc, alpha, direction):
    """Power of a t test with noncentral t(df, nc) under H1; P(T ≤ −c) is taken as P(−T ≥ c), −T ~ t(df, −nc)."""
    a = alpha / 2 if direction == "two-sided" else alpha
    c = stats.t.isf(a, df)
    up = stats.nct.sf(c, df, nc) if direction in ("two-sided", "upper") else 0.0
    lo = stats.nct.sf(c, df, -nc) if direction in ("two-sided", "lower") else 0.0
    return up + lo


def binom_region(n, p0, alpha, direction):
    """Rejection region of the exact binomial test, at most α (α/2 per tail if two-sided): (c_low, c_up)."""
    a = alpha / 2 if direction == "two-sided" else alpha
    k = np.arange(n + 1)
    up_tail = stats.binom.sf(k - 1, n, p0)     # P0(X ≥ k)
    low_tail = stats.binom.cdf(k, n, p0)       # P0(X ≤ k)
    c_up = int(k[up_tail <= a][0]) if np.any(up_tail <= a) else n + 1
    c_low = int(k[low_tail <= a][-1]) if np.any(low_tail <= a) else -1
    if direction == "upper":
        c_low = -1
    if direction == "lower":
        c_up = n + 1
    return c_low, c_up


def binom_power(n, p0, p1, alpha, direction):
    """Exact binomial power: P1(X ≥ c_up) + P1(X ≤ c_low) for the region of ``binom_region``."""
    c_low, c_up = binom_region(n, p0, alpha, direction)
    return stats.binom.sf(c_up - 1, n, p1) + (stats.binom.cdf(c_low, n, p1) if c_low >= 0 else 0.0)


def welch_df(s1, s2, n1, n2):
    """Welch–Satterthwaite degrees of freedom (Satterthwaite 1946; Welch 1947)."""
    v1, v2 = s1 ** 2 / n1, s2 ** 2 / n2
    return (v1 + v2) ** 2 / (v1 ** 2 / (n1 - 1) + v2 ** 2 / (n2 - 1))


def groups(ratio, n1):
    """Group sizes as the designs document them: group 2 is ratio × n1, rounded up."""
    return n1, math.ceil(ratio * n1 - 1e-9)


# ---- critical values -----------------------------------------------------------
@pytest.mark.parametrize("design_id, alpha, direction, expected", [
    ("mean-z", 0.05, "two-sided", 1.959964),   # common practice, no source
    ("mean-z", 0.05, "upper", 1.644854),       # common practice, no source
    ("mean-z", 0.05, "lower", -1.644854),      # common practice, no source
    ("correlation-fisher", 0.05, "two-sided", 1.959964),  # common practice, no source
])
def test_z_critical_values(design_id, alpha, direction, expected):
    """The critical z value in the working is the familiar 1.959964 (two-sided) or 1.644854 (one-sided) at α = 0.05."""
    r = pc.evaluate(pc.Scenario(design_id, n=30, alpha=alpha, direction=direction))
    lo, hi = r.critical["statistic"]
    got = hi if hi is not None else lo
    assert got == pytest.approx(expected, abs=5e-7)
    if direction == "two-sided":
        assert lo == pytest.approx(-expected, abs=5e-7)


# ---- power, design by design ------------------------------------------------------
@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd, n, alpha", [(5.0, 10.0, 20, 0.05), (-2.0, 3.0, 9, 0.01), (0.3, 1.0, 150, 0.1),
                                                 (1.0, 1.0, 2, 0.2)])
def test_mean_z_power(delta, sd, n, alpha, direction):
    """One-sample z power is the normal tail probability at noncentrality δ√n/σ."""
    expected = z_power(delta * math.sqrt(n) / sd, alpha, direction)  # direct scipy computation
    assert ours("mean-z", {"delta": delta, "sd": sd}, n, alpha, direction) == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("design_id, sd_name", [("mean-t", "sd"), ("paired-t", "sd_diff")])
@pytest.mark.parametrize("delta, sd, n, alpha", [(5.0, 10.0, 20, 0.05), (-2.0, 3.0, 9, 0.01), (0.3, 1.0, 150, 0.1),
                                                 (3.0, 1.0, 3, 0.05)])
def test_one_sample_and_paired_t_power(design_id, sd_name, delta, sd, n, alpha, direction):
    """One-sample and paired t power is the noncentral t(n − 1, δ√n/σ) probability of the rejection region."""
    expected = t_power(n - 1, delta * math.sqrt(n) / sd, alpha, direction)  # direct scipy computation
    got = ours(design_id, {"delta": delta, sd_name: sd}, n, alpha, direction)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd1, sd2, ratio, n1, alpha", [
    (3.0, 8.0, 12.0, 1.5, 40, 0.05), (-1.0, 1.0, 3.0, 0.5, 11, 0.01), (2.0, 2.0, 2.0, 1.0, 2, 0.2),
])
def test_two_means_z_power(delta, sd1, sd2, ratio, n1, alpha, direction):
    """Two-sample z power uses SE = √(σ1²/n1 + σ2²/n2) with group 2 rounded up."""
    a, b = groups(ratio, n1)
    expected = z_power(delta / math.sqrt(sd1 ** 2 / a + sd2 ** 2 / b), alpha, direction)  # direct scipy computation
    got = ours("two-means-z", {"delta": delta, "sd1": sd1, "sd2": sd2, "ratio": ratio}, n1, alpha, direction)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd, ratio, n1, alpha", [
    (5.0, 10.0, 1.0, 64, 0.05), (5.0, 10.0, 0.3, 31, 0.05), (-4.0, 6.0, 3.0, 9, 0.01), (1.0, 1.0, 1.0, 2, 0.2),
])
def test_two_means_pooled_t_power(delta, sd, ratio, n1, alpha, direction):
    """Pooled t power is the noncentral t(n1 + n2 − 2, δ/(σ√(1/n1 + 1/n2))) probability of the rejection region."""
    a, b = groups(ratio, n1)
    expected = t_power(a + b - 2, delta / (sd * math.sqrt(1 / a + 1 / b)), alpha, direction)  # direct scipy computation
    got = ours("two-means-t", {"delta": delta, "sd": sd, "ratio": ratio}, n1, alpha, direction)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd1, sd2, ratio, n1, alpha", [
    (5.0, 10.0, 30.0, 1.0, 10, 0.05), (3.0, 8.0, 12.0, 1.5, 40, 0.05), (-2.0, 1.0, 4.0, 0.5, 13, 0.01),
    (1.0, 3.0, 1.0, 2.0, 5, 0.1),
])
def test_two_means_welch_power(delta, sd1, sd2, ratio, n1, alpha, direction):
    """Welch power is noncentral t with the Welch–Satterthwaite df at the planned SDs and SE √(σ1²/n1 + σ2²/n2)."""
    a, b = groups(ratio, n1)
    nc = delta / math.sqrt(sd1 ** 2 / a + sd2 ** 2 / b)
    expected = t_power(welch_df(sd1, sd2, a, b), nc, alpha, direction)  # direct scipy computation
    got = ours("two-means-welch", {"delta": delta, "sd1": sd1, "sd2": sd2, "ratio": ratio}, n1, alpha, direction)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("p0, delta, n, alpha", [(0.3, 0.12, 60, 0.05), (0.5, -0.1, 200, 0.01), (0.05, 0.05, 150, 0.05),
                                                 (0.8, 0.15, 20, 0.1)])
def test_one_proportion_normal_power(p0, delta, n, alpha, direction):
    """Score-test power: Z = (p̂ − p0)/√(p0q0/n) is N((p1 − p0)/SE0, p1q1/(p0q0)) under H1."""
    p1 = p0 + delta
    se0 = math.sqrt(p0 * (1 - p0) / n)
    expected = z_power(delta / se0, alpha, direction, sd_alt=math.sqrt(p1 * (1 - p1) / (p0 * (1 - p0))))  # direct scipy
    assert ours("proportion-normal", {"p0": p0, "delta": delta}, n, alpha, direction) == pytest.approx(
        expected, rel=REL, abs=ABS)


EXACT_BINOMIAL = [(0.3, 0.2, 40, 0.05), (0.5, -0.15, 77, 0.05), (0.1, 0.1, 120, 0.01), (0.9, -0.3, 12, 0.1),
                  (0.02, 0.08, 150, 0.05), (0.5, 0.3, 2, 0.2)]


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("p0, delta, n, alpha", EXACT_BINOMIAL)
def test_one_proportion_exact_power(p0, delta, n, alpha, direction):
    """Exact binomial power is the alternative's probability of the largest region with at most α (α/2 per tail)."""
    expected = binom_power(n, p0, p0 + delta, alpha, direction)  # direct scipy computation
    assert ours("proportion-exact", {"p0": p0, "delta": delta}, n, alpha, direction) == pytest.approx(
        expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("p0, delta, n, alpha", EXACT_BINOMIAL)
def test_one_proportion_exact_region_and_size(p0, delta, n, alpha, direction):
    """The exact test's critical counts and actual size are those of the binomial null, and the size is at most α."""
    c_low, c_up = binom_region(n, p0, alpha, direction)  # direct scipy computation
    r = pc.evaluate(pc.Scenario("proportion-exact", {"p0": p0, "delta": delta}, n=n, alpha=alpha, direction=direction))
    lo, hi = r.critical["statistic"]
    if direction in ("two-sided", "upper"):
        assert hi == c_up
    if direction in ("two-sided", "lower"):
        assert lo == c_low
    size = binom_power(n, p0, p0, alpha, direction)  # direct scipy computation
    assert r.size == pytest.approx(size, rel=REL, abs=ABS) and r.size <= alpha


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("continuity", [False, True])
@pytest.mark.parametrize("p1, delta, ratio, n1, alpha", [
    (0.3, 0.15, 1.0, 50, 0.05), (0.3, 0.15, 2.0, 50, 0.05), (0.5, -0.2, 0.5, 41, 0.01), (0.05, 0.1, 1.0, 120, 0.05),
    (0.2, 0.6, 1.0, 6, 0.05),
])
def test_two_proportions_pooled_power(p1, delta, ratio, n1, alpha, continuity, direction):
    """Pooled-null two-proportion power, with the continuity correction (1/n1 + 1/n2)/2 moving each critical difference outward."""
    # Source of the model: Fleiss, Levin and Paik (2003), ch. 4, from memory — SE0 from the
    # pooled p̄ = (n1·p1 + n2·p2)/(n1 + n2), unpooled SE1 under the alternative.
    a, b = groups(ratio, n1)
    p2 = p1 + delta
    pbar = (a * p1 + b * p2) / (a + b)
    se0 = math.sqrt(pbar * (1 - pbar) * (1 / a + 1 / b))
    se1 = math.sqrt(p1 * (1 - p1) / a + p2 * (1 - p2) / b)
    shift = (1 / a + 1 / b) / 2 / se0 if continuity else 0.0
    expected = z_power(delta / se0, alpha, direction, sd_alt=se1 / se0, shift=shift)  # direct scipy computation
    got = ours("two-proportions", {"p1": p1, "delta": delta, "ratio": ratio, "continuity": continuity}, n1, alpha,
               direction)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("p1, delta, ratio, n1, alpha", [(0.3, 0.15, 1.0, 50, 0.05), (0.5, -0.2, 0.5, 41, 0.01),
                                                         (0.05, 0.1, 3.0, 30, 0.05)])
def test_two_proportions_arcsine_power(p1, delta, ratio, n1, alpha, direction):
    """Arcsine power: Cohen's h = 2·asin√p2 − 2·asin√p1 over √(1/n1 + 1/n2) is the noncentrality of a unit normal."""
    a, b = groups(ratio, n1)
    h = 2 * math.asin(math.sqrt(p1 + delta)) - 2 * math.asin(math.sqrt(p1))
    expected = z_power(h / math.sqrt(1 / a + 1 / b), alpha, direction)  # direct scipy computation
    got = ours("two-proportions-arcsine", {"p1": p1, "delta": delta, "ratio": ratio}, n1, alpha, direction)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("rho0, delta, n, alpha", [(0.0, 0.3, 85, 0.05), (0.2, 0.3, 40, 0.01), (-0.5, -0.3, 30, 0.05),
                                                   (0.6, 0.25, 12, 0.1), (0.0, 0.5, 4, 0.2)])
def test_correlation_fisher_power(rho0, delta, n, alpha, direction):
    """Fisher-z power: (atanh ρ − atanh ρ0)·√(n − 3) is the noncentrality of a unit normal (Fisher 1921)."""
    nc = (math.atanh(rho0 + delta) - math.atanh(rho0)) * math.sqrt(n - 3)
    expected = z_power(nc, alpha, direction)  # direct scipy computation
    assert ours("correlation-fisher", {"rho0": rho0, "delta": delta}, n, alpha, direction) == pytest.approx(
        expected, rel=REL, abs=ABS)


def correlation_power_by_conditioning(rho, n, alpha):
    """Exact two-sided power of the t test of ρ = 0 for bivariate normal data, by conditioning on the x values.

    Given the x's, T = r√(n − 2)/√(1 − r²) is noncentral t(n − 2) with noncentrality
    ρ/√(1 − ρ²)·√V, V = Σ(x − x̄)²/σx² ~ χ²(n − 1); integrate over V (direct scipy computation).
    """
    df = n - 2
    c = stats.t.isf(alpha / 2, df)
    k = rho / math.sqrt(1 - rho * rho)

    def integrand(v):
        nc = k * math.sqrt(v)
        return (stats.nct.sf(c, df, nc) + stats.nct.sf(c, df, -nc)) * stats.chi2.pdf(v, n - 1)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", integrate.IntegrationWarning)
        val, _ = integrate.quad(integrand, 0, stats.chi2.isf(1e-14, n - 1), epsabs=1e-12, epsrel=1e-10, limit=200)
    return val


@pytest.mark.parametrize("rho, n", [(0.3, 30), (0.5, 12), (-0.2, 60), (0.7, 6)])
def test_correlation_exact_power_at_rho0_zero(rho, n):
    """The exact-r design at ρ0 = 0 matches the conditional noncentral-t route to the same exact power."""
    expected = correlation_power_by_conditioning(rho, n, 0.05)  # direct scipy computation
    got = ours("correlation-exact", {"rho0": 0.0, "delta": rho}, n, 0.05, "two-sided")
    assert got == pytest.approx(expected, rel=1e-6, abs=1e-10)


# ---- designs against a margin, time to event, clusters (closed forms in their docstrings) ----
@pytest.mark.parametrize("design_id, sign", [("two-means-noninferiority", -1.0), ("two-means-superiority", 1.0)])
@pytest.mark.parametrize("delta, sd, margin, ratio, n1, alpha", [(0.0, 10.0, 3.0, 1.0, 139, 0.025),
                                                                 (6.0, 10.0, 3.0, 2.0, 40, 0.05)])
def test_means_margin_power(design_id, sign, delta, sd, margin, ratio, n1, alpha):
    """Margin t tests: one-sided noncentral t with (δ − δ0)/SE, δ0 = −M (non-inferiority) or +M (superiority)."""
    a, b = groups(ratio, n1)
    nc = (delta - sign * margin) / (sd * math.sqrt(1 / a + 1 / b))
    expected = t_power(a + b - 2, nc, alpha, "upper")  # direct scipy computation
    got = ours(design_id, {"delta": delta, "sd": sd, "margin": margin, "ratio": ratio}, n1, alpha, "upper")
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("hr, ratio, events", [(0.7, 1.0, 247), (1.4, 2.0, 100), (0.5, 0.5, 40)])
def test_logrank_events_power_schoenfeld(hr, ratio, events, direction):
    """Log-rank power by events: the statistic is N(log(HR)·√(D·r)/(1 + r), 1) (Schoenfeld 1983)."""
    nc = math.log(hr) * math.sqrt(events * ratio) / (1 + ratio)
    expected = z_power(nc, 0.05, direction)  # direct scipy computation
    got = ours("logrank-events", {"hr": hr, "ratio": ratio, "freedman": False}, events, 0.05, direction)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


@pytest.mark.parametrize("delta, sd, icc, m, cv, k", [(5.0, 10.0, 0.05, 20.0, 0.0, 8), (2.0, 5.0, 0.1, 10.0, 0.5, 15)])
def test_cluster_means_power(delta, sd, icc, m, cv, k):
    """Cluster means: SE = σ√(2·DE/(k·m)), DE = 1 + ((cv² + 1)m − 1)ρ (Eldridge, Ashby and Kerry 2006), t on 2(k − 1) df."""
    de = 1 + ((cv * cv + 1) * m - 1) * icc
    expected = t_power(2 * (k - 1), delta / (sd * math.sqrt(2 * de / (k * m))), 0.05, "two-sided")  # direct scipy
    got = ours("cluster-means-clusters", {"delta": delta, "sd": sd, "icc": icc, "m": m, "cv": cv}, k)
    assert got == pytest.approx(expected, rel=REL, abs=ABS)


# ---- sample sizes against normal-theory formulas ------------------------------------
def z_quantiles(alpha, target, direction):
    a = alpha / 2 if direction == "two-sided" else alpha
    return stats.norm.isf(a), stats.norm.isf(1 - target)


@pytest.mark.parametrize("direction", ["two-sided", "upper"])
@pytest.mark.parametrize("delta, sd, target", [(5.0, 10.0, 0.8), (1.0, 10.0, 0.9), (0.35, 1.0, 0.8)])
def test_mean_z_sample_size_formula(delta, sd, target, direction):
    """The one-sample z n is ceil(((z_a + z_b)·σ/δ)²), the textbook formula (common practice, no source)."""
    za, zb = z_quantiles(0.05, target, direction)
    n_formula = ((za + zb) * sd / delta) ** 2  # direct scipy computation of the textbook formula
    assert abs(n_formula - round(n_formula)) > 1e-3
    assert solve_n("mean-z", {"delta": delta, "sd": sd}, direction=direction, target=target).n == math.ceil(n_formula)


@pytest.mark.parametrize("direction", ["two-sided", "upper"])
@pytest.mark.parametrize("p0, delta", [(0.3, 0.12), (0.5, 0.1), (0.1, 0.05)])
def test_one_proportion_normal_sample_size_formula(p0, delta, direction):
    """The score-test n is ceil(((z_a·√(p0q0) + z_b·√(p1q1))/δ)²) (common practice, no source)."""
    p1 = p0 + delta
    za, zb = z_quantiles(0.05, 0.8, direction)
    n_formula = ((za * math.sqrt(p0 * (1 - p0)) + zb * math.sqrt(p1 * (1 - p1))) / delta) ** 2  # direct scipy
    assert abs(n_formula - round(n_formula)) > 1e-3
    assert solve_n("proportion-normal", {"p0": p0, "delta": delta}, direction=direction).n == math.ceil(n_formula)


@pytest.mark.parametrize("rho0, delta", [(0.0, 0.3), (0.0, 0.1), (0.3, 0.2)])
def test_correlation_fisher_sample_size_formula(rho0, delta):
    """The Fisher-z n is ceil(((z_a + z_b)/q)² + 3), q = atanh ρ − atanh ρ0 (common practice, no source)."""
    za, zb = z_quantiles(0.05, 0.8, "two-sided")
    q = math.atanh(rho0 + delta) - math.atanh(rho0)
    n_formula = ((za + zb) / q) ** 2 + 3  # direct scipy computation of the textbook formula
    assert solve_n("correlation-fisher", {"rho0": rho0, "delta": delta}).n == math.ceil(n_formula)


def flp_uncorrected_n(p1, p2, r, alpha, target, direction):
    """Group-1 n for the pooled z test, n2 = r·n1 (Fleiss, Levin and Paik 2003, ch. 4, from memory)."""
    za, zb = z_quantiles(alpha, target, direction)
    pbar = (p1 + r * p2) / (1 + r)
    d = abs(p2 - p1)
    return (za * math.sqrt((r + 1) * pbar * (1 - pbar)) + zb * math.sqrt(r * p1 * (1 - p1) + p2 * (1 - p2))) ** 2 / (r * d * d)


def flp_corrected_n(n, r, d):
    """Continuity-corrected n_cc = n/4·(1 + √(1 + 2(r + 1)/(r·n·|δ|)))² (Fleiss, Levin and Paik 2003, ch. 4, from memory)."""
    return n / 4 * (1 + math.sqrt(1 + 2 * (r + 1) / (r * n * abs(d)))) ** 2


TWO_PROPORTION_N = [(0.3, 0.15, 1.0), (0.5, 0.1, 1.0), (0.1, 0.1, 1.0), (0.3, 0.15, 2.0), (0.6, -0.2, 1.0),
                    (0.2, 0.05, 1.0), (0.3, 0.15, 3.0)]


@pytest.mark.parametrize("direction", ["two-sided", "upper"])
@pytest.mark.parametrize("p1, delta, ratio", TWO_PROPORTION_N)
@pytest.mark.parametrize("continuity", [False, True])
def test_two_proportions_sample_size_against_fleiss_levin_paik(p1, delta, ratio, continuity, direction):
    """With whole ratios the pooled z n1 is ceil of Fleiss–Levin–Paik's n (uncorrected) or n_cc (continuity-corrected)."""
    # The corrected formula solves exactly the same one-tail equation δ − (1/n1 + 1/n2)/2 =
    # z_a·SE0 + z_b·SE1 that powercore's shifted critical value gives, so the whole numbers agree.
    if direction == "upper" and delta < 0:
        pytest.skip("effect on the other side")
    n0 = flp_uncorrected_n(p1, p1 + delta, ratio, 0.05, 0.8, direction)
    expected = flp_corrected_n(n0, ratio, delta) if continuity else n0
    assert abs(expected - round(expected)) > 1e-3
    ss = solve_n("two-proportions", {"p1": p1, "delta": delta, "ratio": ratio, "continuity": continuity},
                 direction=direction)
    assert ss.n == math.ceil(expected)


def test_two_proportions_sample_size_under_a_fractional_ratio_is_at_most_the_formula():
    """Under ratio 0.5 group 2 is rounded up, so n1 is at most ceil of the Fleiss–Levin–Paik n_cc, and reaches the target."""
    n0 = flp_uncorrected_n(0.3, 0.45, 0.5, 0.05, 0.8, "upper")
    ncc = flp_corrected_n(n0, 0.5, 0.15)  # Fleiss, Levin and Paik 2003, ch. 4, from memory
    ss = solve_n("two-proportions", {"p1": 0.3, "delta": 0.15, "ratio": 0.5, "continuity": True}, direction="upper")
    assert ss.n <= math.ceil(ncc) and ss.power >= 0.8


@pytest.mark.parametrize("p1, delta, ratio", [(0.3, 0.15, 1.0), (0.3, 0.15, 2.0), (0.5, -0.1, 1.0)])
def test_two_proportions_arcsine_sample_size_formula(p1, delta, ratio):
    """The arcsine n1 is ceil((z_a + z_b)²·(1 + 1/r)/h²) (Cohen 1988, ch. 6, from memory)."""
    za, zb = z_quantiles(0.05, 0.8, "two-sided")
    h = 2 * math.asin(math.sqrt(p1 + delta)) - 2 * math.asin(math.sqrt(p1))
    n_formula = (za + zb) ** 2 * (1 + 1 / ratio) / h ** 2  # direct scipy computation of the formula
    assert abs(n_formula - round(n_formula)) > 1e-3
    assert solve_n("two-proportions-arcsine", {"p1": p1, "delta": delta, "ratio": ratio}).n == math.ceil(n_formula)


# ---- exact binomial sample size: first n and where power stays --------------------
@pytest.mark.parametrize("p0, delta, direction, alpha, target", [
    (0.3, 0.2, "two-sided", 0.05, 0.8), (0.5, 0.15, "upper", 0.05, 0.8), (0.1, 0.15, "upper", 0.01, 0.9),
    (0.8, -0.2, "lower", 0.05, 0.8), (0.5, -0.25, "two-sided", 0.05, 0.9),
])
def test_exact_binomial_sample_size_first_n_and_stays_from(p0, delta, direction, alpha, target):
    """The exact test's n is the first n reaching the target and stays_from the n after the last dip, by an independent scan."""
    ss = solve_n("proportion-exact", {"p0": p0, "delta": delta}, alpha=alpha, direction=direction, target=target)
    ns = np.arange(2, ss.checked_to + 1)   # every n up to the end of the window the result says it checked
    power = np.array([binom_power(int(n), p0, p0 + delta, alpha, direction) for n in ns])  # direct scipy computation
    first = int(ns[np.argmax(power >= target)])
    assert power.max() >= target and ss.n == first
    dips = ns[(ns >= first) & (power < target)]
    assert ss.stays_from == (first if dips.size == 0 else int(dips[-1]) + 1)
    assert ss.power == pytest.approx(power[ns == first][0], rel=REL)


def test_exact_binomial_power_is_a_saw_tooth():
    """Exact binomial power is not monotone in n (so stays_from can exceed n), as direct computation shows."""
    ns = np.arange(10, 80)
    power = np.array([binom_power(int(n), 0.3, 0.5, 0.05, "two-sided") for n in ns])  # direct scipy computation
    assert np.any(np.diff(power) < -1e-3)
    d = pc.get_design("proportion-exact")
    got = pc.power_at(d, {"p0": 0.3, "delta": 0.2}, ns.astype(float), 0.05, "two-sided")
    np.testing.assert_allclose(got, power, rtol=REL, atol=ABS)


# ---- published values --------------------------------------------------------------
@pytest.mark.parametrize("d, published, slack", [
    (0.2, 393, 1),  # Cohen 1988, Table 2.4.1, from memory (the exact noncentral t gives 394: Cohen's
                    # tables use an approximation, so one unit of slack here and none below)
    (0.5, 64, 0),   # Cohen 1988, Table 2.4.1, from memory
    (0.8, 26, 0),   # Cohen 1988, Table 2.4.1, from memory
])
def test_cohen_two_sample_t_table(d, published, slack):
    """Two-sample t, α = .05 two-sided, power .80: n per group is Cohen's tabled 393, 64 and 26 for d = .2, .5, .8."""
    ss = solve_n("two-means-t", {"delta": d, "sd": 1.0, "ratio": 1.0})
    assert abs(ss.n - published) <= slack
    assert ss.group_sizes == (ss.n, ss.n)


def test_cohen_correlation_table():
    """Correlation r = .3, α = .05 two-sided, power .80 needs 85 pairs (Cohen 1988, Table 3.4.1, from memory)."""
    assert solve_n("correlation-fisher", {"rho0": 0.0, "delta": 0.3}).n == 85  # Cohen 1988, Table 3.4.1, from memory
