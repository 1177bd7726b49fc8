"""powercore against statsmodels 0.15 ``statsmodels.stats.power`` (and its proportion helpers).

Every expected value here is computed at test time by statsmodels 0.15 (``stats.power``
``TTestPower``, ``TTestIndPower``, ``NormalIndPower``, ``normal_power_het``, the
``tt_solve_power`` / ``tt_ind_solve_power`` / ``zt_ind_solve_power`` solvers, and
``stats.proportion.power_proportions_2indep``). Directions map as
two-sided ↔ 'two-sided', upper ↔ 'larger', lower ↔ 'smaller'.

Tolerances follow the reference's precision:

* power: statsmodels evaluates the same closed forms with scipy (upper t tails as
  ``1 - nctdtr``, so about 1e-16 absolute), so we ask for 1e-6 relative and 1e-12 absolute;
* solved effect and α: statsmodels' ``solve_power`` stops its root finder at
  ``brentq_expanding``'s default ``xtol = 1e-5`` (absolute, in the solved variable), so
  the solved values are compared to within 2e-5; the tight check is that statsmodels'
  own power function, at our solution, gives the target to 1e-9;
* sample size: statsmodels returns a real-valued nobs (also to xtol = 1e-5). Our n is
  the smallest whole n reaching the target, so with group 2 the same whole multiple of
  group 1 (ratio 1, 2, 3) it is exactly ceil(nobs); the cases are chosen with nobs at
  least 1e-3 away from a whole number so that statsmodels' 1e-5 cannot flip the ceiling.
  Under a ratio that does not give whole groups, powercore rounds group 2 up to
  ceil(ratio·n1), which only adds subjects; statsmodels keeps nobs2 = ratio·nobs1 real.
  Our n1 is then at most ceil(nobs1), sometimes one less, and is exactly the smallest
  n1 whose statsmodels power at the *whole* group sizes (ratio_sm = ceil(r·n1)/n1)
  reaches the target; both facts are checked.

Two-sided t power: statsmodels 0.15 ``ttest_power`` adds both rejection tails (the far
tail included), as powercore does; a test below pins that, and pins that statsmodels
returns NaN where scipy's ``nctdtr`` is NaN (huge noncentrality at tiny n), where
powercore is finite.
"""
from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.power import (NormalIndPower, TTestIndPower, TTestPower, normal_power_het,
                                     tt_ind_solve_power, tt_solve_power, ttest_power, zt_ind_solve_power)
from statsmodels.stats.proportion import power_proportions_2indep, proportion_effectsize

import powercore as pc

SM = {"two-sided": "two-sided", "upper": "larger", "lower": "smaller"}
DIRECTIONS = list(SM)
POWER_REL, POWER_ABS = 1e-6, 1e-12
SOLVE_ABS = 2e-5  # statsmodels solve_power: brentq_expanding xtol = 1e-5


@pytest.fixture(autouse=True)
def _quiet_statsmodels():
    """statsmodels warns about deprecated spellings and convergence; the values are what we test."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        yield


def ours(design_id, params, n, alpha, direction):
    """powercore's power through a validated scenario."""
    s = pc.Scenario(design_id, params, n=n, alpha=alpha, direction=direction)
    return pc.power(s)


def whole_sizes(ratio, n1):
    """Group sizes as powercore forms them: group 2 is ratio·n1 rounded up (design.TwoGroups)."""
    return n1, math.ceil(ratio * n1 - 1e-9)


# ---- power ----------------------------------------------------------------------
ONE_SAMPLE_T = [  # (delta, sd, n, alpha)
    (5.0, 10.0, 20, 0.05), (2.0, 10.0, 50, 0.05), (15.0, 10.0, 10, 0.01), (0.5, 10.0, 400, 0.05),
    (30.0, 10.0, 5, 0.05), (-3.0, 4.0, 12, 0.1), (1.0, 1.0, 2, 0.2),
]


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd, n, alpha", ONE_SAMPLE_T)
def test_one_sample_t_power(delta, sd, n, alpha, direction):
    """One-sample t power equals statsmodels TTestPower with d = δ/σ."""
    expected = TTestPower().power(delta / sd, n, alpha, alternative=SM[direction])  # statsmodels 0.15 stats.power
    got = ours("mean-t", {"delta": delta, "sd": sd}, n, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd, n, alpha", ONE_SAMPLE_T)
def test_paired_t_power(delta, sd, n, alpha, direction):
    """Paired t power (n pairs, SD of differences) equals statsmodels TTestPower with d_z = δ/σ_d."""
    expected = TTestPower().power(delta / sd, n, alpha, alternative=SM[direction])  # statsmodels 0.15 stats.power
    got = ours("paired-t", {"delta": delta, "sd_diff": sd}, n, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd, n, alpha", ONE_SAMPLE_T)
def test_one_sample_z_power(delta, sd, n, alpha, direction):
    """One-sample z power equals statsmodels NormalIndPower with ratio = 0 (its one-sample form)."""
    expected = NormalIndPower().power(delta / sd, n, alpha, ratio=0, alternative=SM[direction])  # statsmodels 0.15
    got = ours("mean-z", {"delta": delta, "sd": sd}, n, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


TWO_SAMPLE_T = [  # (delta, sd, ratio, n1, alpha)
    (5.0, 10.0, 1.0, 64, 0.05), (5.0, 10.0, 2.0, 30, 0.05), (5.0, 10.0, 0.5, 31, 0.05),
    (2.0, 10.0, 1.5, 101, 0.01), (8.0, 10.0, 0.3, 17, 0.1), (-4.0, 6.0, 3.0, 9, 0.05), (1.0, 1.0, 1.0, 2, 0.2),
]


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd, ratio, n1, alpha", TWO_SAMPLE_T)
def test_two_sample_pooled_t_power(delta, sd, ratio, n1, alpha, direction):
    """Pooled two-sample t power equals statsmodels TTestIndPower at the whole group sizes powercore uses."""
    a, b = whole_sizes(ratio, n1)
    expected = TTestIndPower().power(delta / sd, a, alpha, ratio=b / a,  # statsmodels 0.15 stats.power
                                     alternative=SM[direction])
    got = ours("two-means-t", {"delta": delta, "sd": sd, "ratio": ratio}, n1, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("delta, sd1, sd2, ratio, n1, alpha", [
    (3.0, 8.0, 12.0, 1.5, 40, 0.05), (5.0, 10.0, 10.0, 1.0, 30, 0.05), (1.0, 1.0, 3.0, 0.5, 11, 0.01),
    (-2.0, 5.0, 2.0, 2.0, 25, 0.1),
])
def test_two_sample_z_power(delta, sd1, sd2, ratio, n1, alpha, direction):
    """Two-sample z power with unequal known SDs equals statsmodels NormalIndPower after standardizing."""
    # NormalIndPower has one σ: with r = n2/n1 its statistic is d·√(n1·r/(1 + r)), so
    # d = δ/√((σ1² + σ2²/r)·r/(1 + r)) reproduces SE = √(σ1²/n1 + σ2²/n2) exactly.
    a, b = whole_sizes(ratio, n1)
    r = b / a
    d = delta / math.sqrt((sd1 ** 2 + sd2 ** 2 / r) * r / (1 + r))
    expected = NormalIndPower().power(d, a, alpha, ratio=r, alternative=SM[direction])  # statsmodels 0.15
    got = ours("two-means-z", {"delta": delta, "sd1": sd1, "sd2": sd2, "ratio": ratio}, n1, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


PROPORTION_PAIRS = [  # (p1 (control), delta, ratio, n1, alpha)
    (0.3, 0.15, 1.0, 50, 0.05), (0.3, 0.15, 2.0, 50, 0.05), (0.5, -0.2, 0.5, 41, 0.01),
    (0.05, 0.1, 1.0, 120, 0.05), (0.9, -0.3, 3.0, 15, 0.1), (0.2, 0.6, 1.0, 6, 0.05),
]


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("p1, delta, ratio, n1, alpha", PROPORTION_PAIRS)
def test_two_proportions_arcsine_power(p1, delta, ratio, n1, alpha, direction):
    """Arcsine two-proportion power equals statsmodels NormalIndPower with Cohen's h from proportion_effectsize."""
    a, b = whole_sizes(ratio, n1)
    h = proportion_effectsize(p1 + delta, p1)  # statsmodels 0.15: 2·asin√p2 − 2·asin√p1
    expected = NormalIndPower().power(h, a, alpha, ratio=b / a, alternative=SM[direction])  # statsmodels 0.15
    got = ours("two-proportions-arcsine", {"p1": p1, "delta": delta, "ratio": ratio}, n1, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("p1, delta, ratio, n1, alpha", PROPORTION_PAIRS)
def test_two_proportions_pooled_power(p1, delta, ratio, n1, alpha, direction):
    """Pooled-null two-proportion power (no correction) equals statsmodels power_proportions_2indep."""
    # statsmodels' sample 1 carries prop2 + diff; we make it our group 2 (p1 + δ, n2 subjects)
    # with statsmodels' ratio = n1/n2, so that diff = δ and the directions map unchanged.
    a, b = whole_sizes(ratio, n1)
    expected = power_proportions_2indep(delta, p1, b, ratio=a / b, alpha=alpha,  # statsmodels 0.15 stats.proportion
                                        alternative=SM[direction]).power
    got = ours("two-proportions", {"p1": p1, "delta": delta, "ratio": ratio, "continuity": False}, n1, alpha,
               direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("p0, delta, n, alpha", [
    (0.3, 0.12, 60, 0.05), (0.5, -0.1, 200, 0.01), (0.05, 0.05, 150, 0.05), (0.8, 0.15, 20, 0.1),
])
def test_one_proportion_normal_power(p0, delta, n, alpha, direction):
    """One-proportion score-test power equals statsmodels normal_power_het with null and alternative SDs."""
    p1 = p0 + delta
    expected = normal_power_het(delta, n, alpha, std_null=math.sqrt(p0 * (1 - p0)),  # statsmodels 0.15 stats.power
                                std_alternative=math.sqrt(p1 * (1 - p1)), alternative=SM[direction])
    got = ours("proportion-normal", {"p0": p0, "delta": delta}, n, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("rho0, delta, n, alpha", [
    (0.0, 0.3, 85, 0.05), (0.2, 0.3, 40, 0.01), (-0.5, -0.3, 30, 0.05), (0.6, 0.25, 12, 0.1),
])
def test_correlation_fisher_power(rho0, delta, n, alpha, direction):
    """Fisher-z correlation power equals statsmodels NormalIndPower(ddof=3) one-sample with q = atanh ρ − atanh ρ0."""
    q = math.atanh(rho0 + delta) - math.atanh(rho0)
    expected = NormalIndPower(ddof=3).power(q, n, alpha, ratio=0, alternative=SM[direction])  # statsmodels 0.15
    got = ours("correlation-fisher", {"rho0": rho0, "delta": delta}, n, alpha, direction)
    assert got == pytest.approx(expected, rel=POWER_REL, abs=POWER_ABS)


# ---- how statsmodels treats the far tail ----------------------------------------
def test_statsmodels_two_sided_t_power_includes_the_far_tail():
    """statsmodels 0.15 two-sided t power is the sum of both tails, as powercore's, not the near tail alone."""
    d, n, alpha = 0.1, 5, 0.05
    c = stats.t.isf(alpha / 2, n - 1)
    near = stats.nct.sf(c, n - 1, d * math.sqrt(n))    # direct scipy computation
    far = stats.nct.cdf(-c, n - 1, d * math.sqrt(n))   # direct scipy computation
    sm = TTestPower().power(d, n, alpha)  # statsmodels 0.15 stats.power
    assert far > 0.01  # the far tail is not negligible here
    assert sm == pytest.approx(near + far, rel=1e-12), "statsmodels changed its two-sided t power (far tail)"
    assert ours("mean-t", {"delta": d, "sd": 1.0}, n, alpha, "two-sided") == pytest.approx(sm, rel=POWER_REL)


@pytest.mark.parametrize("d, n", [(12.0, 4), (12.0, 5), (5.0, 6)])
def test_statsmodels_t_power_is_nan_where_powercore_is_finite(d, n):
    """Where scipy's nctdtr is NaN far in the lower tail, statsmodels 0.15 returns NaN and powercore a power near 1."""
    sm = ttest_power(d, n, 0.05)  # statsmodels 0.15 stats.power
    assert math.isnan(sm), f"statsmodels (or scipy) now returns {sm!r} at d={d}, n={n}: re-check this note"
    got = ours("mean-t", {"delta": d, "sd": 1.0}, n, 0.05, "two-sided")
    upper_only = stats.nct.sf(stats.t.isf(0.025, n - 1), n - 1, d * math.sqrt(n))  # direct scipy computation
    assert math.isfinite(got) and got == pytest.approx(upper_only, rel=1e-9)


# ---- sample size ----------------------------------------------------------------
def _clear_of_whole(x, gap=1e-3):
    return abs(x - round(x)) > gap


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("design_id, sd_name, d, alpha, target", [
    ("mean-t", "sd", 0.5, 0.05, 0.8), ("mean-t", "sd", 0.1, 0.05, 0.8), ("mean-t", "sd", 1.2, 0.01, 0.9),
    ("paired-t", "sd_diff", 0.3, 0.05, 0.8), ("paired-t", "sd_diff", 0.8, 0.05, 0.95),
])
def test_one_sample_t_sample_size_is_ceiling_of_statsmodels(design_id, sd_name, d, alpha, target, direction):
    """The one-sample and paired t sample size is ceil of tt_solve_power's nobs, with power at n and n − 1 as statsmodels gives."""
    delta = -d if direction == "lower" else d
    nobs = tt_solve_power(effect_size=delta, nobs=None, alpha=alpha, power=target,  # statsmodels 0.15 stats.power
                          alternative=SM[direction])
    assert _clear_of_whole(nobs)
    r = pc.evaluate(pc.Scenario(design_id, {"delta": delta, sd_name: 1.0}, alpha=alpha, direction=direction,
                                find="n", target_power=target))
    assert r.n == math.ceil(nobs)
    assert r.sample_size.power == pytest.approx(TTestPower().power(delta, r.n, alpha, alternative=SM[direction]),
                                                rel=POWER_REL)
    assert r.sample_size.power_below == pytest.approx(
        TTestPower().power(delta, r.n - 1, alpha, alternative=SM[direction]), rel=POWER_REL)
    assert r.sample_size.n_continuous == pytest.approx(nobs, abs=1e-3)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("d, ratio, alpha, target", [
    (0.5, 1.0, 0.05, 0.8), (0.2, 1.0, 0.05, 0.8), (0.8, 1.0, 0.05, 0.8), (0.5, 2.0, 0.05, 0.8),
    (0.2, 2.0, 0.05, 0.9), (0.8, 3.0, 0.01, 0.8),
])
def test_two_sample_t_sample_size_with_whole_ratio_is_ceiling(d, ratio, alpha, target, direction):
    """With group 2 a whole multiple of group 1, the pooled-t n1 is exactly ceil of tt_ind_solve_power's nobs1."""
    delta = -d if direction == "lower" else d
    nobs1 = tt_ind_solve_power(effect_size=delta, nobs1=None, alpha=alpha, power=target, ratio=ratio,
                               alternative=SM[direction])  # statsmodels 0.15 stats.power
    assert _clear_of_whole(nobs1)
    r = pc.evaluate(pc.Scenario("two-means-t", {"delta": delta, "sd": 1.0, "ratio": ratio}, alpha=alpha,
                                direction=direction, find="n", target_power=target))
    assert r.n == math.ceil(nobs1)
    assert r.group_sizes == (r.n, int(ratio) * r.n)


@pytest.mark.parametrize("d, ratio", [(0.5, 0.5), (0.5, 1.5), (0.5, 0.3), (0.8, 0.3), (0.2, 0.3), (0.5, 2.7),
                                      (0.8, 1.5), (0.2, 2.7)])
def test_two_sample_t_sample_size_under_a_fractional_ratio(d, ratio):
    """Under a fractional ratio n1 ≤ ceil(nobs1), and n1 is the smallest n1 whose statsmodels power at whole groups reaches the target."""
    nobs1 = tt_ind_solve_power(effect_size=d, nobs1=None, alpha=0.05, power=0.8, ratio=ratio)  # statsmodels 0.15
    r = pc.evaluate(pc.Scenario("two-means-t", {"delta": d, "sd": 1.0, "ratio": ratio}, find="n"))
    n1 = r.n
    assert n1 <= math.ceil(nobs1)

    def sm_whole(k):  # statsmodels 0.15 stats.power at powercore's whole group sizes
        a, b = whole_sizes(ratio, k)
        return TTestIndPower().power(d, a, 0.05, ratio=b / a)

    assert sm_whole(n1) >= 0.8 > sm_whole(n1 - 1)
    assert r.group_sizes == whole_sizes(ratio, n1)


def _es_mean_z(p):
    return p["delta"] / p["sd"]


def _es_two_means_z(p):
    return p["delta"] / p["sd1"]   # cases below have sd1 = sd2


def _es_arcsine(p):
    return proportion_effectsize(p["p1"] + p["delta"], p["p1"])  # statsmodels 0.15: Cohen's h


def _es_fisher(p):
    return math.atanh(p["rho0"] + p["delta"]) - math.atanh(p["rho0"])


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("design_id, params, effect_of, ddof, ratio", [
    ("mean-z", {"delta": 0.35, "sd": 1.0}, _es_mean_z, 0, 0),
    ("two-means-z", {"delta": 0.4, "sd1": 1.0, "sd2": 1.0, "ratio": 1.0}, _es_two_means_z, 0, 1.0),
    ("two-means-z", {"delta": 0.4, "sd1": 1.0, "sd2": 1.0, "ratio": 2.0}, _es_two_means_z, 0, 2.0),
    ("two-proportions-arcsine", {"p1": 0.3, "delta": 0.15, "ratio": 1.0}, _es_arcsine, 0, 1.0),
    ("correlation-fisher", {"rho0": 0.0, "delta": 0.3}, _es_fisher, 3, 0),
    ("correlation-fisher", {"rho0": 0.2, "delta": 0.25}, _es_fisher, 3, 0),
])
def test_normal_sample_sizes_are_ceiling_of_zt_ind_solve_power(design_id, params, effect_of, ddof, ratio, direction):
    """z-type sample sizes (one-sample, two-sample, arcsine, Fisher z) are ceil of NormalIndPower's nobs1."""
    # For Fisher z statsmodels' NormalIndPower(ddof=3).solve_power is unusable (its bracket
    # starts at nobs = 2, below ddof, and it returns 3.0000004), so the one-sample z problem
    # is solved with ddof = 0 and the 3 added back: nobs = nobs_z + ddof.
    p = {**params, "delta": -params["delta"] if direction == "lower" else params["delta"]}
    nobs1 = ddof + zt_ind_solve_power(effect_size=effect_of(p), nobs1=None, alpha=0.05, power=0.8, ratio=ratio,
                                      alternative=SM[direction])  # statsmodels 0.15 stats.power
    assert _clear_of_whole(nobs1)
    check_power = NormalIndPower(ddof=ddof).power  # statsmodels 0.15 stats.power
    assert check_power(effect_of(p), nobs1, 0.05, ratio=ratio, alternative=SM[direction]) == pytest.approx(0.8, abs=1e-4)
    r = pc.evaluate(pc.Scenario(design_id, p, direction=direction, find="n"))
    assert r.n == math.ceil(nobs1)


# ---- detectable effect and significance level ------------------------------------
@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("n, alpha, target", [(30, 0.05, 0.8), (10, 0.01, 0.9), (200, 0.05, 0.5), (4, 0.1, 0.8)])
def test_one_sample_t_detectable_effect(n, alpha, target, direction):
    """The smallest detectable δ/σ matches tt_solve_power(effect_size=None), and statsmodels' power there is the target."""
    sign = -1.0 if direction == "lower" else 1.0
    es = tt_solve_power(effect_size=None, nobs=n, alpha=alpha, power=target,  # statsmodels 0.15 stats.power
                        alternative=SM[direction])
    r = pc.evaluate(pc.Scenario("mean-t", {"delta": sign * 1.0, "sd": 2.0}, n=n, alpha=alpha, direction=direction,
                                find="effect", target_power=target))
    got = r.effect / 2.0
    assert abs(got) == pytest.approx(abs(es), abs=SOLVE_ABS)
    assert TTestPower().power(got, n, alpha, alternative=SM[direction]) == pytest.approx(target, abs=1e-9)
    if direction == "two-sided":
        assert r.detectable["lower"] == pytest.approx(-r.detectable["upper"], rel=1e-9)


@pytest.mark.parametrize("ratio", [1.0, 2.0, 0.5])
def test_two_sample_t_detectable_effect(ratio):
    """The pooled-t detectable effect matches tt_ind_solve_power(effect_size=None) at powercore's whole group sizes."""
    n1 = 40
    a, b = whole_sizes(ratio, n1)
    es = tt_ind_solve_power(effect_size=None, nobs1=a, alpha=0.05, power=0.8, ratio=b / a)  # statsmodels 0.15
    r = pc.evaluate(pc.Scenario("two-means-t", {"delta": None, "sd": 1.0, "ratio": ratio}, n=n1, find="effect"))
    assert r.detectable["upper"] == pytest.approx(es, abs=SOLVE_ABS)
    assert TTestIndPower().power(r.detectable["upper"], a, 0.05, ratio=b / a) == pytest.approx(0.8, abs=1e-9)


@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("d, n, target", [(0.5, 30, 0.8), (0.3, 100, 0.9), (1.0, 10, 0.8)])
def test_one_sample_t_significance_level(d, n, target, direction):
    """The solved α matches tt_solve_power(alpha=None), and statsmodels' power at our α is the target."""
    delta = -d if direction == "lower" else d
    a_sm = tt_solve_power(effect_size=delta, nobs=n, alpha=None, power=target,  # statsmodels 0.15 stats.power
                          alternative=SM[direction])
    r = pc.evaluate(pc.Scenario("mean-t", {"delta": delta, "sd": 1.0}, n=n, alpha=None, direction=direction,
                                find="alpha", target_power=target))
    assert r.alpha == pytest.approx(a_sm, abs=SOLVE_ABS)
    assert TTestPower().power(delta, n, r.alpha, alternative=SM[direction]) == pytest.approx(target, abs=1e-9)


def test_two_sample_z_significance_level():
    """The solved α of the two-sample z test matches zt_ind_solve_power(alpha=None)."""
    a_sm = zt_ind_solve_power(effect_size=0.4, nobs1=50, alpha=None, power=0.8, ratio=1.0)  # statsmodels 0.15
    r = pc.evaluate(pc.Scenario("two-means-z", {"delta": 0.4, "sd1": 1.0, "sd2": 1.0, "ratio": 1.0}, n=50,
                                alpha=None, find="alpha"))
    assert r.alpha == pytest.approx(a_sm, abs=SOLVE_ABS)
    assert NormalIndPower().power(0.4, 50, r.alpha, ratio=1.0) == pytest.approx(0.8, abs=1e-9)


def test_vectorised_power_matches_statsmodels_over_a_grid():
    """powercore's vectorised power over 40 sample sizes matches statsmodels TTestIndPower point by point."""
    d = pc.get_design("two-means-t")
    ns = np.arange(2, 42, dtype=float)
    got = pc.power_at(d, {"delta": 0.6, "sd": 1.0, "ratio": 1.0}, ns, 0.05, "two-sided")
    expected = TTestIndPower().power(0.6, ns, 0.05, ratio=1.0)  # statsmodels 0.15 stats.power
    np.testing.assert_allclose(got, expected, rtol=POWER_REL, atol=POWER_ABS)
