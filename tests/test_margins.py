"""Non-inferiority, superiority by a margin, and equivalence (TOST)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

import powercore as pc
from powercore.margins import tost_power


def _sim_two_sample_t(delta, sd, n1, n2, reps, seed):
    """Raw normal data for two groups; returns the difference in means and its pooled SE per replicate."""
    rng = np.random.default_rng(seed)
    a = rng.normal(0.0, sd, size=(reps, n1))
    b = rng.normal(delta, sd, size=(reps, n2))
    diff = b.mean(1) - a.mean(1)
    sp2 = ((n1 - 1) * a.var(1, ddof=1) + (n2 - 1) * b.var(1, ddof=1)) / (n1 + n2 - 2)
    return diff, np.sqrt(sp2 * (1 / n1 + 1 / n2))


@pytest.mark.parametrize("design, delta, margin, null", [
    ("two-means-noninferiority", 0.0, 3.0, -3.0),
    ("two-means-superiority", 6.0, 3.0, 3.0),
])
def test_margin_power_is_the_shifted_noncentral_t(design, delta, margin, null):
    """Power equals P(T ≥ t_{1−α}) with noncentrality (δ − δ0)/SE; direct scipy computation."""
    n = 60
    r = pc.evaluate(pc.Scenario(design, {"delta": delta, "sd": 10.0, "margin": margin}, n=n, direction="upper"))
    se, df = 10.0 * np.sqrt(2 / n), 2 * n - 2
    ref = stats.nct.sf(stats.t.isf(0.05, df), df, (delta - null) / se)   # direct scipy computation
    assert r.power == pytest.approx(ref, rel=1e-9)
    assert r.size == pytest.approx(0.05, abs=1e-12)


def test_noninferiority_matches_simulation_of_the_real_test():
    """Simulated one-sided t test of H0: δ ≤ −M agrees with the analytic power within 4 standard errors."""
    n, reps = 40, 20000
    r = pc.evaluate(pc.Scenario("two-means-noninferiority", {"delta": 1.0, "sd": 8.0, "margin": 4.0}, n=n,
                                direction="upper"))
    diff, se = _sim_two_sample_t(1.0, 8.0, n, n, reps, seed=11)
    sim = np.mean((diff + 4.0) / se >= stats.t.isf(0.05, 2 * n - 2))
    assert abs(sim - r.power) <= 4 * np.sqrt(r.power * (1 - r.power) / reps)


def test_noninferiority_proportions_matches_the_blackwelder_formula():
    """Required n per group matches n = (z_α + z_β)²(p1q1 + p2q2)/(δ + M)²; Blackwelder (1982), from memory."""
    r = pc.evaluate(pc.Scenario("two-proportions-noninferiority", {"p1": 0.8, "delta": 0.0, "margin": 0.1},
                                find="n", direction="upper", alpha=0.025, target_power=0.9))
    z = stats.norm.isf(0.025) + stats.norm.isf(0.1)
    n_formula = z ** 2 * (0.8 * 0.2 * 2) / 0.1 ** 2
    assert r.n == int(np.ceil(n_formula))


@pytest.mark.parametrize("params, field", [
    ({"margin": 0.0}, "margin"),
    ({"margin": -2.0}, "margin"),
])
def test_margin_must_be_positive(params, field):
    """The margin is a positive number; zero or negative values are refused at the field."""
    with pytest.raises(pc.InvalidParameter) as info:
        pc.Scenario("two-means-noninferiority", params, n=30, direction="upper")
    assert info.value.field == field


def test_margin_designs_offer_only_the_upper_alternative():
    """The sign convention fixes the direction: asking for a lower or two-sided test is refused."""
    with pytest.raises(pc.InvalidParameter) as info:
        pc.Scenario("two-means-noninferiority", n=30, direction="lower")
    assert info.value.field == "direction"


def test_effect_worse_than_the_margin_has_no_sample_size():
    """A true effect at or beyond the non-inferiority margin gives NoSolution for n, naming n."""
    with pytest.raises(pc.NoSolution) as info:
        pc.evaluate(pc.Scenario("two-means-noninferiority", {"delta": -3.0, "margin": 3.0}, find="n",
                                direction="upper"))
    assert info.value.field == "n"


def test_tost_is_never_negative_where_the_shortcut_is():
    """At small n the shortcut P1 + P2 − 1 is negative; the exact TOST power is not."""
    n, sd, m, a = 6, 10.0, 5.0, 0.05
    df, se = 2 * n - 2, sd * np.sqrt(2 / n)
    t = stats.t.isf(a, df)
    p1 = stats.nct.sf(t, df, (0 + m) / se)       # direct scipy computation: test of H0 δ ≤ −M
    p2 = stats.nct.cdf(-t, df, (0 - m) / se)     # test of H0 δ ≥ M
    assert p1 + p2 - 1 < 0
    assert 0 <= tost_power(0.0, m, se, df, a) < 0.05


@pytest.mark.parametrize("n, delta", [(20, 0.0), (40, 2.0), (80, -3.0)])
def test_tost_matches_simulation(n, delta):
    """Simulated two one-sided t tests agree with the exact TOST power within 4 standard errors."""
    reps, sd, m = 20000, 10.0, 6.0
    r = pc.evaluate(pc.Scenario("two-means-equivalence", {"delta": delta, "sd": sd, "margin": m}, n=n))
    diff, se = _sim_two_sample_t(delta, sd, n, n, reps, seed=n)
    t = stats.t.isf(0.05, 2 * n - 2)
    sim = np.mean(((diff + m) / se >= t) & ((diff - m) / se <= -t))
    assert abs(sim - r.power) <= 4 * np.sqrt(max(r.power * (1 - r.power), 1e-4) / reps)


def test_tost_rejects_inside_and_reports_the_interval():
    """The equivalence result says it rejects inside an interval symmetric about zero."""
    r = pc.evaluate(pc.Scenario("two-means-equivalence", {"delta": 0.0, "sd": 10.0, "margin": 6.0}, n=80))
    lo, hi = r.critical["data"]
    se = 10.0 * np.sqrt(2 / 80)
    assert r.rejects == "inside" and hi == pytest.approx(6.0 - stats.t.isf(0.05, 158) * se, rel=1e-12)
    assert lo == pytest.approx(-hi, rel=1e-12)


def test_tost_sample_size_is_near_the_normal_formula():
    """The t-based n is at most a few above n = 2σ²(z_α + z_{β/2})²/M² (normal theory, common practice)."""
    r = pc.evaluate(pc.Scenario("two-means-equivalence", {"delta": 0.0, "sd": 10.0, "margin": 5.0}, find="n"))
    z = stats.norm.isf(0.05) + stats.norm.isf(0.1)
    approx = 2 * 100 * z ** 2 / 25
    assert approx <= r.n <= approx + 4


@pytest.mark.parametrize("n, delta, alpha", [(3, 0.0, 0.05), (15, 2.0, 0.05), (30, 0.0, 0.05), (50, 4.5, 0.001),
                                             (100, 0.0, 0.001), (400, 2.0, 0.001), (5000, 4.5, 0.05)])
def test_tost_matches_adaptive_quadrature(n, delta, alpha):
    """Exact TOST power (margin 5, SD 10, n per group) equals scipy's adaptive quad of the same integral to 1e-9."""
    from scipy import integrate, special
    sd_d, df = 10.0 * np.sqrt(2 / n), 2 * n - 2
    t = stats.t.isf(alpha, df)
    x_max = df * (5.0 / t / sd_d) ** 2

    def integrand(x):   # χ²(df) density × P(both one-sided tests reject | S = sd_d·√(x/df))
        s = sd_d * np.sqrt(x / df)
        return stats.chi2.pdf(x, df) * max(0.0, special.ndtr((5.0 - t * s - delta) / sd_d)
                                           - special.ndtr((-5.0 + t * s - delta) / sd_d))

    lo, hi = stats.chi2.ppf(1e-25, df), min(stats.chi2.isf(1e-25, df), x_max)
    edges = np.linspace(lo, hi, 41) if hi > lo else []
    ref = sum(integrate.quad(integrand, a, b, epsabs=1e-15, epsrel=1e-12)[0] for a, b in zip(edges[:-1], edges[1:]))
    # reference: direct scipy computation (integrate.quad on 40 panels over the χ² bulk)
    assert float(tost_power(delta, 5.0, sd_d, df, alpha)) == pytest.approx(ref, abs=1e-9)
