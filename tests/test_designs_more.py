"""References for the ANOVA, chi-square, regression, McNemar, Poisson-rate and rank designs.

Sources, beside each number: statsmodels 0.15 (``statsmodels.stats.power``), direct scipy 1.17
computation (ncf, ncx2, norm, nct), Cohen (1988) tables quoted from memory (each one checked
against the direct computation), hand arithmetic, and seeded Monte Carlo of the real test
(scipy.stats.f_oneway, chisquare, chi2_contingency, mannwhitneyu, wilcoxon; McNemar's and the
Poisson score statistic, cross-checked with statsmodels). Monte Carlo tolerances are 4 standard
errors, plus the approximation error the design's notes state where the design is approximate.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats
from statsmodels.stats import power as smp
from statsmodels.stats.contingency_tables import mcnemar
from statsmodels.stats import rates as sm_rates

import powercore as pc
from powercore.anova import f_from_means, sd_of_means
from powercore.chisquare import w_from_proportions, w_from_table
from powercore.paired_props import discordant_from_margins
from powercore.rank import ARE, are_of
from powercore.regression import f2_from_r2

SEED = 20261201


def power(design, params, n, alpha=0.05, direction=None):
    d = pc.get_design(design)
    p = d.normalize({**d.defaults(), **params}, params)   # as Scenario does (a bare ARE picks its parent)
    return float(pc.power_at(d, p, n, alpha, direction or d.directions[0]))


def mc_tol(analytic, reps, approx=0.0):
    """4 Monte Carlo standard errors at the analytic power, plus a stated approximation error."""
    return 4 * math.sqrt(analytic * (1 - analytic) / reps) + approx


# ---- statsmodels 0.15 -------------------------------------------------------------------
@pytest.mark.parametrize("f, k, n, alpha", [(0.25, 4, 45, 0.05), (0.1, 3, 100, 0.01), (0.4, 6, 12, 0.1),
                                            (0.25, 2, 64, 0.05)])
def test_anova_matches_statsmodels(f, k, n, alpha):
    """One-way ANOVA power equals statsmodels FTestAnovaPower (effect size f; nobs is the TOTAL k·n)."""
    ref = smp.FTestAnovaPower().power(effect_size=f, nobs=k * n, alpha=alpha, k_groups=k)  # statsmodels 0.15
    ours = power("anova-oneway", {"delta": f * 10.0, "sd": 10.0, "k": float(k)}, n, alpha)
    assert ours == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize("u, v, r2_base, dr2, n", [(3, 0, 0.0, 0.13, 60), (1, 0, 0.0, 0.05, 120),
                                                   (2, 3, 0.2, 0.05, 80), (5, 4, 0.3, 0.1, 50)])
def test_regression_matches_statsmodels(u, v, r2_base, dr2, n):
    """Regression power equals statsmodels FTestPower and FTestPowerF2 with ncc = v + 1 (so λ = f²·N).

    statsmodels puts λ = f²·(df_denom + df_num + ncc); with df_denom = N − u − v − 1 and
    df_num = u, ncc = v + 1 gives f²·N (its default ncc = 1 is right only for v = 0).
    FTestPower's keywords are reversed (its df_num is the denominator df, as its docstring warns).
    """
    f2 = dr2 / (1 - r2_base - dr2)
    df2 = n - u - v - 1
    old = smp.FTestPower().power(effect_size=math.sqrt(f2), df_num=df2, df_denom=u, alpha=0.05, ncc=v + 1)
    new = smp.FTestPowerF2().power(effect_size=f2, df_num=u, df_denom=df2, alpha=0.05, ncc=v + 1)
    if v == 0:
        ours = power("regression-r2", {"delta": dr2, "u": float(u)}, n)
    else:
        ours = power("regression-r2-change", {"delta": dr2, "r2_base": r2_base, "u": float(u), "v": float(v)}, n)
    assert ours == pytest.approx(old, rel=1e-9) and ours == pytest.approx(new, rel=1e-9)  # statsmodels 0.15


@pytest.mark.parametrize("design", ["chisquare-gof", "chisquare-independence"])
@pytest.mark.parametrize("w, df, n, alpha", [(0.3, 1, 88, 0.05), (0.2, 3, 200, 0.05), (0.1, 5, 1000, 0.01)])
def test_chisquare_matches_statsmodels(design, w, df, n, alpha):
    """Chi-square power equals statsmodels GofChisquarePower with n_bins = df + 1 (the same noncentral χ²)."""
    ref = smp.GofChisquarePower().power(effect_size=w, nobs=n, alpha=alpha, n_bins=df + 1)  # statsmodels 0.15
    assert power(design, {"delta": w, "df": float(df)}, n, alpha) == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize("p10, p01, n, direction", [(0.1, 0.2, 100, "two-sided"), (0.25, 0.1, 150, "lower"),
                                                    (0.05, 0.12, 300, "upper")])
def test_mcnemar_matches_statsmodels_normal_power_het(p10, p01, n, direction):
    """McNemar power equals statsmodels normal_power_het with SD √ψ under H0 and √(ψ − δ²) under H1."""
    psi, d = p10 + p01, p01 - p10
    alt = {"two-sided": "two-sided", "upper": "larger", "lower": "smaller"}[direction]
    ref = smp.normal_power_het(d, n, 0.05, std_null=math.sqrt(psi), std_alternative=math.sqrt(psi - d * d),
                               alternative=alt)  # statsmodels 0.15
    assert power("mcnemar", {"delta": d, "psi": psi}, n, 0.05, direction) == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize("rate1, delta, t, n, direction", [(1.0, 0.5, 1.0, 50, "two-sided"),
                                                           (0.2, -0.08, 3.0, 200, "lower")])
def test_rates_match_statsmodels_normal_power_het(rate1, delta, t, n, direction):
    """Two-rate power equals normal_power_het with the pooled-rate SD under H0 and the unpooled SD under H1.

    Ratio 2, so group 2 has exactly 2n subjects; SDs are per √n1 as normal_power_het expects.
    """
    rate2 = rate1 + delta
    pooled = (rate1 + 2 * rate2) / 3
    sd0 = math.sqrt(pooled * (1 / t + 1 / (2 * t)))
    sd1 = math.sqrt(rate1 / t + rate2 / (2 * t))
    alt = {"two-sided": "two-sided", "upper": "larger", "lower": "smaller"}[direction]
    ref = smp.normal_power_het(delta, n, 0.05, std_null=sd0, std_alternative=sd1, alternative=alt)  # statsmodels 0.15
    ours = power("two-rates", {"rate1": rate1, "delta": delta, "exposure": t, "ratio": 2.0}, n, 0.05, direction)
    assert ours == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize("are, n, ratio, d", [(3 / math.pi, 20, 1.0, 0.8), (1.5, 30, 2.0, 0.5), (1.0, 12, 1.0, 1.0)])
def test_rank_designs_match_statsmodels_t_power_at_are_times_n(are, n, ratio, d):
    """The rank designs equal statsmodels TTestIndPower / TTestPower evaluated at ARE·n observations."""
    ref2 = smp.TTestIndPower().power(effect_size=d, nobs1=are * n, ratio=ratio, alpha=0.05)  # statsmodels 0.15
    ref1 = smp.TTestPower().power(effect_size=d, nobs=are * n, alpha=0.05)  # statsmodels 0.15
    wmw = power("wilcoxon-mann-whitney", {"delta": d * 4.0, "sd": 4.0, "are": are, "ratio": ratio}, n)
    sr = power("wilcoxon-signed-rank", {"delta": d * 4.0, "sd_diff": 4.0, "are": are}, n)
    assert wmw == pytest.approx(ref2, rel=1e-7) and sr == pytest.approx(ref1, rel=1e-7)


# ---- direct scipy computation -------------------------------------------------------------
def test_anova_direct_noncentral_f():
    """ANOVA power is ncf.sf at the central F critical value, λ = f²·k·n (direct scipy computation)."""
    f, k, n = 0.3, 5, 15
    crit = stats.f.isf(0.05, k - 1, k * n - k)
    ref = stats.ncf.sf(crit, k - 1, k * n - k, f * f * k * n)
    assert power("anova-oneway", {"delta": 3.0, "sd": 10.0, "k": 5.0}, n) == pytest.approx(ref, rel=1e-10)


def test_chisquare_direct_noncentral_chi2():
    """Chi-square power is ncx2.sf at the central critical value, λ = w²·N (direct scipy computation)."""
    crit = stats.chi2.isf(0.01, 4)
    ref = stats.ncx2.sf(crit, 4, 0.25 ** 2 * 300)
    assert power("chisquare-independence", {"delta": 0.25, "df": 4.0}, 300, 0.01) == pytest.approx(ref, rel=1e-10)


def test_regression_conventions_differ_as_the_notes_say():
    """At u = 3, f² = 0.15, N = 40 power is 0.471 with f²·N and 0.428 with f²·(N − u − 1) (direct scipy)."""
    crit = stats.f.isf(0.05, 3, 36)
    assert power("regression-r2", {"delta": 0.15 / 1.15, "u": 3.0}, 40) == pytest.approx(
        stats.ncf.sf(crit, 3, 36, 0.15 * 40), rel=1e-10)
    assert stats.ncf.sf(crit, 3, 36, 0.15 * 40) == pytest.approx(0.471, abs=5e-4)
    assert stats.ncf.sf(crit, 3, 36, 0.15 * 36) == pytest.approx(0.428, abs=5e-4)
    crit200 = stats.f.isf(0.05, 3, 196)
    gap = stats.ncf.sf(crit200, 3, 196, 0.03 * 200) - stats.ncf.sf(crit200, 3, 196, 0.03 * 196)
    assert gap == pytest.approx(0.009, abs=5e-4)


# ---- published tables (from memory, each reproduced by the direct computation) ------------
@pytest.mark.parametrize("f, k, n", [
    (0.25, 4, 45),   # Cohen 1988, Table 8.4.4 (α = .05, u = 3, f = .25, power .80): n = 45 per group, from memory
    (0.10, 4, 274),  # Cohen 1988, Table 8.4.4 (u = 3, f = .10): n = 274 per group, from memory
    (0.25, 2, 64),   # Cohen 1988, Table 8.4.4 (u = 1, f = .25, i.e. d = .5): n = 64 per group, from memory
])
def test_anova_sample_size_matches_cohen(f, k, n):
    """The solved n per group for power 0.80 at α = 0.05 matches Cohen's table."""
    r = pc.evaluate(pc.Scenario("anova-oneway", {"delta": f * 10.0, "sd": 10.0, "k": float(k)}, n=None, find="n"))
    assert r.n == n and r.group_sizes == (n,) * k and r.total == k * n


@pytest.mark.parametrize("w, df, n", [
    (0.3, 1, 88),    # Cohen 1988, Table 7.4.6 (α = .05, u = 1, w = .30, power .80): N = 88, from memory
    (0.1, 1, 785),   # Cohen 1988, Table 7.4.6 (u = 1, w = .10): N = 785, from memory
])
def test_chisquare_sample_size_matches_cohen(w, df, n):
    """The solved total N for power 0.80 at α = 0.05 matches Cohen's table."""
    r = pc.evaluate(pc.Scenario("chisquare-gof", {"delta": w, "df": float(df)}, n=None, find="n"))
    assert r.n == n


# ---- effect helpers ------------------------------------------------------------------------
def test_effect_helpers_by_hand():
    """Each helper reproduces a value worked by hand."""
    # means (0, 0, 0, 4): grand mean 1, squared deviations 1 + 1 + 1 + 9 = 12, /4 = 3 (hand arithmetic)
    assert sd_of_means([0, 0, 0, 4]) == pytest.approx(math.sqrt(3))
    assert f_from_means([0, 0, 0, 4], 2.0) == pytest.approx(math.sqrt(3) / 2)
    # p0 = (.5, .5), p1 = (.6, .4): w² = 2·0.01/0.5 = 0.04 (hand arithmetic)
    assert w_from_proportions([0.5, 0.5], [0.6, 0.4]) == pytest.approx(0.2)
    # R² 0.3 over a base of 0.2: f² = 0.1/0.7 (hand arithmetic)
    assert f2_from_r2(0.3, 0.2) == pytest.approx(0.1 / 0.7)
    # margins 0.4 and 0.5, φ = 0: p11 = 0.2, p10 = 0.2, p01 = 0.3 (hand arithmetic)
    p10, p01 = discordant_from_margins(0.4, 0.5, 0.0)
    assert (float(p10), float(p01)) == pytest.approx((0.2, 0.3))
    with pytest.raises(ValueError):
        w_from_proportions([0.5, 0.5], [0.7, 0.4])


@pytest.mark.parametrize("joint", [[[0.3, 0.2], [0.1, 0.4]], [[0.22, 0.16, 0.12], [0.12, 0.16, 0.22]],
                                   [[0.1, 0.1, 0.05], [0.05, 0.2, 0.1], [0.1, 0.05, 0.25]]])
def test_w_from_table_is_cramers_v_rescaled(joint):
    """w from a joint table equals Cramér's V·√(min(r, c) − 1) (scipy.stats.contingency.association)."""
    counts = np.rint(np.asarray(joint) * 10_000).astype(int)
    v = stats.contingency.association(counts, method="cramer")
    assert w_from_table(joint) == pytest.approx(v * math.sqrt(min(counts.shape) - 1), rel=1e-9)


@pytest.mark.parametrize("parent, density", [
    ("normal", stats.norm.pdf), ("uniform", stats.uniform(-0.5, 1).pdf),
    ("logistic", stats.logistic.pdf), ("laplace", stats.laplace.pdf)])
def test_are_table_is_12_sigma2_integral_f2_squared(parent, density):
    """Each tabled ARE equals 12σ²(∫f²)² computed by quadrature (Hodges and Lehmann 1956 formula)."""
    dist = {"normal": stats.norm, "uniform": stats.uniform(-0.5, 1), "logistic": stats.logistic,
            "laplace": stats.laplace}[parent]
    lo, hi = (-0.5, 0.5) if parent == "uniform" else (-np.inf, np.inf)
    integral = integrate.quad(lambda x: density(x) ** 2, lo, hi)[0]
    assert are_of(parent) == pytest.approx(12 * dist.var() * integral ** 2, rel=1e-8)
    assert ARE[parent] == are_of(parent)


# ---- domains and the working -----------------------------------------------------------------
@pytest.mark.parametrize("design, params, field", [
    ("anova-oneway", {"k": 2.5}, "k"), ("anova-oneway", {"k": 1.0}, "k"), ("chisquare-gof", {"df": 0.0}, "df"),
    ("chisquare-independence", {"df": 1.5}, "df"), ("regression-r2", {"u": 2.5}, "u"),
    ("regression-r2-change", {"r2_base": 0.7, "delta": 0.35}, "delta"), ("regression-r2-change", {"v": 1.2}, "v"),
    ("mcnemar", {"psi": 0.2, "delta": 0.25}, "delta"), ("two-rates", {"rate1": 0.5, "delta": -0.5}, "delta"),
    ("wilcoxon-mann-whitney", {"are": 0.8}, "are"), ("anova-oneway", {"delta": -1.0}, "delta"),
])
def test_bad_parameters_are_refused_by_field(design, params, field):
    """A value outside a parameter's domain (or not whole where it must be) is refused naming that field."""
    with pytest.raises(pc.InvalidParameter) as info:
        pc.Scenario(design, params, n=50)
    assert info.value.field == field


@pytest.mark.parametrize("design", ["anova-oneway", "chisquare-gof", "chisquare-independence", "regression-r2",
                                    "regression-r2-change"])
def test_f_and_chisquare_designs_are_upper_only_and_take_a_zero_effect(design):
    """The F and χ² designs offer only the upper alternative; effect 0 is valid and gives power α."""
    assert pc.get_design(design).directions == ("upper",)
    with pytest.raises(pc.InvalidParameter) as info:
        pc.Scenario(design, n=50, direction="two-sided")
    assert info.value.field == "direction"
    r = pc.evaluate(pc.Scenario(design, {"delta": 0.0}, n=50, alpha=0.05))
    assert r.power == pytest.approx(0.05, rel=1e-9)
    with pytest.raises(pc.NoSolution):
        pc.evaluate(pc.Scenario(design, {"delta": 0.0}, n=None, find="n"))


def test_anova_working_and_data_scale():
    """ANOVA reports k groups of n, λ = f²·N, and the data-unit critical value σ·√(F_c(k − 1)/(k·n)) (direct scipy)."""
    r = pc.evaluate(pc.Scenario("anova-oneway", {"delta": 2.5, "sd": 10.0, "k": 4.0}, n=45))
    fc = stats.f.isf(0.05, 3, 176)
    assert r.group_sizes == (45,) * 4 and r.total == 180
    assert r.noncentrality == pytest.approx(0.0625 * 180)
    assert r.critical["statistic"][1] == pytest.approx(fc, rel=1e-10)
    assert r.critical["data"][1] == pytest.approx(10.0 * math.sqrt(fc * 3 / (4 * 45)), rel=1e-10)
    assert any("λ = f²·N" in s.text for s in r.working)


def test_regression_data_scale_is_the_r2_that_gives_the_critical_f():
    """The critical sample ΔR² turns back into the critical F through F = (ΔR²/u)/((1 − R²_full)/df2)."""
    r = pc.evaluate(pc.Scenario("regression-r2-change", {"delta": 0.05, "r2_base": 0.2, "u": 2.0, "v": 3.0}, n=80))
    dr2, fc = r.critical["data"][1], r.critical["statistic"][1]
    df2 = 80 - 2 - 3 - 1
    assert (dr2 / 2) / ((1 - 0.2 - dr2) / df2) == pytest.approx(fc, rel=1e-10)
    assert fc == pytest.approx(stats.f.isf(0.05, 2, df2), rel=1e-10)  # direct scipy computation


def test_chisquare_data_scale_is_observed_w():
    """The critical observed ŵ is √(χ²_crit/N) (direct scipy computation)."""
    r = pc.evaluate(pc.Scenario("chisquare-gof", {"delta": 0.3, "df": 3.0}, n=100))
    assert r.critical["data"][1] == pytest.approx(math.sqrt(stats.chi2.isf(0.05, 3) / 100), rel=1e-10)


# ---- McNemar: the exact power of the uncorrected z test --------------------------------------
def mcnemar_exact_power(p10, p01, n, alpha=0.05):
    """Exact rejection probability of |n01 − n10|/√(n01 + n10) ≥ z_{α/2}, summed over the discordant count."""
    psi = p10 + p01
    crit = stats.norm.isf(alpha / 2)
    total = 0.0
    for nd in range(1, n + 1):
        k = np.arange(nd + 1)
        reject = np.abs(2 * k - nd) / math.sqrt(nd) >= crit
        total += stats.binom.pmf(nd, n, psi) * stats.binom.pmf(k[reject], nd, p01 / psi).sum()
    return total


@pytest.mark.parametrize("p10, p01, n, exact, tol", [
    (0.1, 0.2, 100, 0.4592, 0.015),    # 30 discordant pairs expected; exact power by enumeration, computed here
    (0.2, 0.3, 150, 0.4142, 0.015),    # 75 expected
    (0.05, 0.15, 100, 0.6390, 0.03),   # 20 expected: the notes say 0.028 low
])
def test_mcnemar_against_exact_enumeration(p10, p01, n, exact, tol):
    """Connor's approximation is within the notes' stated distance of the exact power of the uncorrected test."""
    ex = mcnemar_exact_power(p10, p01, n)
    assert ex == pytest.approx(exact, abs=1e-4)   # enumeration over binomial outcomes (scipy.stats.binom)
    assert abs(power("mcnemar", {"delta": p01 - p10, "psi": p10 + p01}, n) - ex) <= tol


# ---- seeded Monte Carlo with the real tests ---------------------------------------------------
def _draw(parent, rng, size, sd):
    """Draws with mean 0 and SD ``sd`` from a named parent distribution."""
    if parent == "normal":
        return rng.normal(0, sd, size)
    if parent == "laplace":
        return rng.laplace(0, sd / math.sqrt(2), size)
    h = sd * math.sqrt(3)
    return rng.uniform(-h, h, size)


def test_anova_simulation_f_oneway():
    """Simulated scipy.stats.f_oneway power at k = 4, n = 20, f = 0.3 agrees within 4 SE (exact design)."""
    rng, reps = np.random.default_rng(SEED), 6000
    means = 0.3 * np.array([-3, -1, 1, 3]) / math.sqrt(5)      # σ_m = 0.3 with σ = 1
    assert sd_of_means(means) == pytest.approx(0.3)
    groups = [rng.normal(m, 1.0, size=(reps, 20)) for m in means]
    sim = float(np.mean(stats.f_oneway(*groups, axis=1).pvalue < 0.05))
    an = power("anova-oneway", {"delta": 0.3, "sd": 1.0, "k": 4.0}, 20)
    assert abs(sim - an) <= mc_tol(an, reps)


def test_gof_simulation_chisquare():
    """Simulated scipy.stats.chisquare power at N = 200, w = 0.2 (4 cells) agrees within 4 SE + 0.01."""
    rng, reps = np.random.default_rng(SEED + 1), 8000
    p0, p1 = [0.25] * 4, [0.3, 0.3, 0.2, 0.2]
    obs = rng.multinomial(200, p1, size=reps)
    sim = float(np.mean(stats.chisquare(obs, f_exp=200 * np.asarray(p0), axis=1).pvalue < 0.05))
    an = power("chisquare-gof", {"delta": w_from_proportions(p0, p1), "df": 3.0}, 200)
    assert abs(sim - an) <= mc_tol(an, reps, 0.01)


def test_independence_simulation_chi2_contingency():
    """Simulated chi2_contingency (no Yates) power at N = 150 in a 2 × 3 table agrees within 4 SE + 0.015."""
    rng, reps = np.random.default_rng(SEED + 2), 1500
    joint = np.array([[0.22, 0.16, 0.12], [0.12, 0.16, 0.22]])
    tables = rng.multinomial(150, joint.ravel(), size=reps).reshape(reps, 2, 3)
    rejected = 0
    for t in tables:
        t = t[:, t.sum(axis=0) > 0]   # an empty column (never at these sizes) would leave no test
        rejected += stats.chi2_contingency(t, correction=False).pvalue < 0.05
    sim = rejected / reps
    an = power("chisquare-independence", {"delta": w_from_table(joint), "df": 2.0}, 150)
    assert abs(sim - an) <= mc_tol(an, reps, 0.015)


def _regression_sim(rng, u, v, r2_base, dr2, n, reps, fixed):
    """Rejection rate of the partial F test of u added predictors over v, normal errors, real least squares."""
    k = u + v
    if fixed:   # one design, centred and whitened so that its own spread (divisor N) gives the planned f²
        x0 = rng.standard_normal((n, k))
        x0 -= x0.mean(axis=0)
        x0 = x0 @ np.linalg.inv(np.linalg.cholesky(x0.T @ x0 / n)).T
        x = np.broadcast_to(x0, (reps, n, k))
    else:
        x = rng.standard_normal((reps, n, k))
    beta = np.concatenate([np.full(v, math.sqrt(r2_base / v) if v else 0.0), np.full(u, math.sqrt(dr2 / u))])
    y = x @ beta + rng.standard_normal((reps, n)) * math.sqrt(1 - r2_base - dr2)
    ones = np.ones((reps, n, 1))

    def rss(m):
        m = np.concatenate([ones, m], axis=2)
        mt = np.swapaxes(m, 1, 2)
        resid = y - (m @ np.linalg.solve(mt @ m, mt @ y[..., None]))[..., 0]
        return np.sum(resid ** 2, axis=1)

    full, base = rss(x), rss(x[:, :, :v])
    df2 = n - u - v - 1
    return float(np.mean(stats.f.sf(((base - full) / u) / (full / df2), u, df2) < 0.05))


def test_regression_simulation_fixed_predictors_is_exact():
    """With fixed predictors the F test's simulated power matches λ = f²·N within 4 SE (R² and ΔR² designs)."""
    rng, reps = np.random.default_rng(SEED + 3), 6000
    r2 = 0.15 / 1.15
    an = power("regression-r2", {"delta": r2, "u": 3.0}, 40)
    assert abs(_regression_sim(rng, 3, 0, 0.0, r2, 40, reps, True) - an) <= mc_tol(an, reps)
    an = power("regression-r2-change", {"delta": 0.05, "r2_base": 0.2, "u": 2.0, "v": 3.0}, 80)
    assert abs(_regression_sim(rng, 2, 3, 0.2, 0.05, 80, reps, True) - an) <= mc_tol(an, reps)


def test_regression_simulation_random_predictors_as_the_notes_say():
    """With random normal predictors simulated power is below f²·N by the notes' 0.016 (u = 3, N = 40), within 4 SE."""
    rng, reps = np.random.default_rng(SEED + 4), 8000
    r2 = 0.15 / 1.15
    an = power("regression-r2", {"delta": r2, "u": 3.0}, 40)
    sim = _regression_sim(rng, 3, 0, 0.0, r2, 40, reps, False)
    assert abs((an - sim) - 0.016) <= mc_tol(an, reps)


def test_mcnemar_simulation_and_statistic():
    """Simulated uncorrected McNemar power (100 pairs, p10 = .1, p01 = .2) is within 4 SE of the exact power."""
    # the statistic used is statsmodels' McNemar chi-square (exact=False, correction=False), squared z
    for n10, n01 in [(10, 20), (5, 17), (30, 12)]:
        z = (n01 - n10) / math.sqrt(n10 + n01)
        assert mcnemar([[50, n10], [n01, 20]], exact=False, correction=False).statistic == pytest.approx(z * z)
    rng, reps = np.random.default_rng(SEED + 5), 8000
    c = rng.multinomial(100, [0.1, 0.2, 0.7], size=reps)
    disc = c[:, 0] + c[:, 1]
    z = np.where(disc > 0, (c[:, 1] - c[:, 0]) / np.sqrt(np.maximum(disc, 1)), 0.0)
    sim = float(np.mean(np.abs(z) >= stats.norm.isf(0.025)))
    exact = mcnemar_exact_power(0.1, 0.2, 100)
    assert abs(sim - exact) <= mc_tol(exact, reps)
    assert abs(power("mcnemar", {"delta": 0.1, "psi": 0.3}, 100) - sim) <= mc_tol(exact, reps, 0.015)


def test_rates_simulation_score_test():
    """Simulated Poisson score-test power (50 per group, t = 1, λ 1 → 1.5) agrees within 4 SE + 0.01."""
    # the statistic is statsmodels' score test of the rate difference (groups in the other order)
    for x1, x2 in [(50, 75), (10, 25)]:
        z = (x2 / 50 - x1 / 50) / math.sqrt((x1 + x2) / 100 * (2 / 50))
        # statsmodels 0.15
        ref = sm_rates.test_poisson_2indep(x2, 50.0, x1, 50.0, method="score", compare="diff").statistic
        assert z == pytest.approx(ref, rel=1e-12)
    rng, reps = np.random.default_rng(SEED + 6), 8000
    x1, x2 = rng.poisson(50 * 1.0, reps), rng.poisson(50 * 1.5, reps)
    z = (x2 / 50 - x1 / 50) / np.sqrt((x1 + x2) / 100 * (2 / 50))
    sim = float(np.mean(np.abs(z) >= stats.norm.isf(0.025)))
    an = power("two-rates", {"rate1": 1.0, "delta": 0.5, "exposure": 1.0}, 50)
    assert abs(sim - an) <= mc_tol(an, reps, 0.01)


def test_wmw_simulation_normal_parent():
    """Simulated mannwhitneyu power (normal data, 20 per group, d = 0.8) agrees within 4 SE + 0.01."""
    rng, reps = np.random.default_rng(SEED + 7), 6000
    a, b = _draw("normal", rng, (reps, 20), 1.0), _draw("normal", rng, (reps, 20), 1.0) + 0.8
    sim = float(np.mean(stats.mannwhitneyu(b, a, axis=1).pvalue < 0.05))
    an = power("wilcoxon-mann-whitney", {"delta": 0.8, "sd": 1.0, "are": ARE["normal"]}, 20)
    assert abs(sim - an) <= mc_tol(an, reps, 0.01)


@pytest.mark.parametrize("parent, n, d, overstated", [
    ("laplace", 20, 0.6, 0.051),    # the WMW design's notes
    ("uniform", 20, 0.8, 0.067),    # the WMW design's notes
])
def test_wmw_simulation_non_normal_parent_overstates_as_the_notes_say(parent, n, d, overstated):
    """For a non-normal parent the ARE method overstates simulated mannwhitneyu power by the notes' figure (4 SE)."""
    rng, reps = np.random.default_rng(SEED + 8), 6000
    a, b = _draw(parent, rng, (reps, n), 1.0), _draw(parent, rng, (reps, n), 1.0) + d
    sim = float(np.mean(stats.mannwhitneyu(b, a, axis=1).pvalue < 0.05))
    an = power("wilcoxon-mann-whitney", {"delta": d, "sd": 1.0, "are": ARE[parent]}, n)
    assert abs((an - sim) - overstated) <= mc_tol(an, reps)


def test_signed_rank_simulation_normal_and_laplace():
    """Simulated wilcoxon power: normal (20 pairs, d_z = 0.6) within 4 SE + 0.01; Laplace overstated by 0.088."""
    rng, reps = np.random.default_rng(SEED + 9), 6000
    sim = float(np.mean(stats.wilcoxon(_draw("normal", rng, (reps, 20), 1.0) + 0.6, axis=1).pvalue < 0.05))
    an = power("wilcoxon-signed-rank", {"delta": 0.6, "sd_diff": 1.0, "are": ARE["normal"]}, 20)
    assert abs(sim - an) <= mc_tol(an, reps, 0.01)
    sim = float(np.mean(stats.wilcoxon(_draw("laplace", rng, (reps, 20), 1.0) + 0.5, axis=1).pvalue < 0.05))
    an = power("wilcoxon-signed-rank", {"delta": 0.5, "sd_diff": 1.0, "are": ARE["laplace"]}, 20)
    assert abs((an - sim) - 0.088) <= mc_tol(an, reps)


@pytest.mark.parametrize("design, params, direction, level, n_found", [
    # smallest exact p-values by counting (common practice, no source): signed rank 2/2^n two-sided,
    # 1/2^n one-sided; rank sum 2/C(n1 + n2, n1) two-sided. Large effects, so only the level limits n.
    ("wilcoxon-signed-rank", {"delta": 30.0, "sd_diff": 10.0, "parent": "normal"}, "two-sided", 2 / 2**6, 6),
    ("wilcoxon-signed-rank", {"delta": 30.0, "sd_diff": 10.0, "parent": "normal"}, "upper", 1 / 2**5, 5),
    ("wilcoxon-mann-whitney", {"delta": 40.0, "sd": 10.0, "parent": "normal", "ratio": 1.0}, "two-sided",
     2 / math.comb(8, 4), 4),
    ("wilcoxon-mann-whitney", {"delta": 40.0, "sd": 10.0, "parent": "normal", "ratio": 1.0}, "upper",
     1 / math.comb(6, 3), 3),
])
def test_rank_sample_size_is_never_one_where_the_exact_test_cannot_reject(design, params, direction, level,
                                                                         n_found):
    """For a huge shift the rank designs' n is the first at which the exact test's smallest p-value is at most α;
    one unit fewer has power 0 and the working says why."""
    r = pc.evaluate(pc.Scenario(design, params, find="n", direction=direction, target_power=0.8))
    assert r.n == n_found
    assert r.sample_size.power_below == 0.0
    step = {s.label: s for s in r.working}["smallest reachable level"]
    assert step.value == pytest.approx(level, rel=1e-12)
    below = pc.evaluate(pc.Scenario(design, params, n=n_found - 1, direction=direction))
    assert below.power == 0.0
    assert "can never reject" in {s.label: s for s in below.working}["smallest reachable level"].text
    assert all(math.isnan(c) for c in pc.densities(below.solved).critical)   # no rejection region drawn
    assert not any(math.isnan(c) for c in pc.densities(r.solved).critical if direction == "two-sided")


def test_rank_tests_really_cannot_reject_below_the_smallest_level():
    """scipy's exact tests reject none of 2,000 huge-shift samples at 5 pairs or 3 per group (seeded simulation)."""
    rng = np.random.default_rng(SEED + 10)
    x = rng.normal(30.0, 1.0, (2000, 5))
    assert np.all(stats.wilcoxon(x, axis=1).pvalue >= 0.0625 - 1e-12)
    a, b = rng.normal(0.0, 1.0, (2000, 3)), rng.normal(40.0, 1.0, (2000, 3))
    assert np.all(stats.mannwhitneyu(b, a, axis=1).pvalue >= 0.1 - 1e-12)
    assert power("wilcoxon-signed-rank", {"delta": 30.0, "sd_diff": 1.0, "parent": "normal"}, 5) == 0.0
    assert power("wilcoxon-mann-whitney", {"delta": 40.0, "sd": 1.0, "parent": "normal"}, 3) == 0.0
