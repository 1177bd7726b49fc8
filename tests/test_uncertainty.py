"""Assurance, the upper confidence limit of an SD, and sensitivity tables."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import powercore as pc
from powercore.engine import power_at
from powercore.uncertainty import assurance, sd_upper_limit, sensitivity_effect_power, sensitivity_sd_dropout


@pytest.mark.parametrize("direction", ["two-sided", "upper"])
def test_assurance_closed_form_equals_numerical_integration(direction):
    """For a z test the closed form equals direct numerical integration of power over the prior (scipy quad)."""
    sc = pc.Scenario("two-means-z", {"delta": 5.0, "sd1": 10.0, "sd2": 10.0}, n=64, direction=direction)
    a = assurance(sc, 5.0, 2.0)
    d = pc.get_design("two-means-z")
    p = dict(sc.params)
    from scipy.integrate import quad
    direct, _ = quad(lambda e: float(power_at(d, {**p, "delta": e}, 64, 0.05, direction))
                     * stats.norm.pdf(e, 5.0, 2.0), -30, 40, epsabs=1e-12)   # direct scipy computation
    assert a.method.startswith("closed form") and a.assurance == pytest.approx(direct, abs=1e-9)


def test_assurance_by_integration_matches_simulation():
    """Assurance of a t test (numerical) matches simulating effect draws and then data, within 4 SE."""
    sc = pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=40)
    a = assurance(sc, 4.0, 3.0)
    reps, rng = 20000, np.random.default_rng(9)
    eff = rng.normal(4.0, 3.0, reps)
    x = rng.normal(0, 10, (reps, 40))
    y = rng.normal(eff[:, None], 10, (reps, 40))
    sim = np.mean(stats.ttest_ind(y, x, axis=1).pvalue <= 0.05)
    assert abs(sim - a.assurance) <= 4 * math.sqrt(a.assurance * (1 - a.assurance) / reps)


def test_assurance_is_below_power_at_the_prior_mean_and_spread_is_reported():
    """With an uncertain effect the assurance falls below the power at the prior mean; quantiles are ordered."""
    a = assurance(pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=64), 5.0, 2.5)
    q = list(a.quantiles.values())
    assert a.assurance < a.power_at_prior_mean and q == sorted(q)


def test_zero_prior_sd_gives_the_power():
    """A prior with no spread gives the plain power at its mean."""
    sc = pc.Scenario("mean-t", {"delta": 3.0, "sd": 10.0}, n=40)
    assert assurance(sc, 3.0, 0.0).assurance == pytest.approx(pc.power(sc), rel=1e-9)


@pytest.mark.parametrize("s, df, conf", [(10.0, 20, 0.8), (4.0, 9, 0.95), (1.0, 1, 0.5)])
def test_sd_upper_limit_is_the_chi_square_formula(s, df, conf):
    """σ_U = s·√(df/χ²_{df, 1−γ}) (Browne 1995, from memory; the chi-square pivot, common practice)."""
    assert sd_upper_limit(s, df, conf) == pytest.approx(s * math.sqrt(df / stats.chi2.ppf(1 - conf, df)),
                                                        rel=1e-12)


def test_sensitivity_tables_match_direct_solves_and_csv():
    """Each cell equals a direct sample-size solve; n falls with the effect and rises with power and dropout."""
    sc = pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=64)
    t = sensitivity_effect_power(sc, [3.0, 4.0, 5.0], [0.8, 0.9])
    direct = pc.evaluate(sc.replace(find="n", params={"delta": 4.0}, target_power=0.9)).n
    assert t.cells[1][1] == direct
    assert t.cells[0][0] > t.cells[2][0] and t.cells[0][1] > t.cells[0][0]
    u = sensitivity_sd_dropout(sc, "sd", [8.0, 10.0], [0.0, 0.2])
    assert u.cells[1][0] == 128 and u.cells[1][1] == 2 * math.ceil(64 / 0.8)
    assert t.to_csv().splitlines()[0] == "difference \\ target power,0.8,0.9"


@pytest.mark.parametrize("call, field", [
    (lambda: sd_upper_limit(-1.0, 5), "pilot_sd"), (lambda: sd_upper_limit(1.0, 0), "df"),
    (lambda: assurance(pc.Scenario("mean-t", n=20), 1.0, -1.0), "prior_sd"),
    (lambda: assurance(pc.Scenario("mean-t", n=20), float("nan"), 1.0), "prior_mean"),
])
def test_bad_uncertainty_input_names_the_field(call, field):
    """Bad inputs are refused naming the field."""
    with pytest.raises(pc.InvalidParameter) as info:
        call()
    assert info.value.field == field


# ---- assurance against three independent computations -------------------------------------------
Z_CASES = [("two-sided", 5.0, 2.0, 64), ("upper", 3.0, 4.0, 40), ("lower", -4.0, 3.0, 50)]


@pytest.mark.parametrize("direction, m, s, n", Z_CASES)
def test_assurance_closed_form_vs_quad_vs_seeded_effect_draws(direction, m, s, n):
    """Closed form = scipy quad of power × prior density = mean power over seeded prior draws (within 4 SE)."""
    from scipy.integrate import quad
    sc = pc.Scenario("two-means-z", {"delta": m, "sd1": 10.0, "sd2": 10.0}, n=n, direction=direction)
    a = assurance(sc, m, s)
    d, p = pc.get_design("two-means-z"), dict(sc.params)
    direct, _ = quad(lambda e: float(power_at(d, {**p, "delta": e}, n, 0.05, direction)) * stats.norm.pdf(e, m, s),
                     m - 12 * s, m + 12 * s, epsabs=1e-12, limit=200)   # direct scipy computation
    draws = np.random.default_rng(11).normal(m, s, 200_000)            # seeded simulation of the prior
    pw = power_at(d, {**p, "delta": draws}, n, 0.05, direction)
    assert a.method.startswith("closed form")
    assert a.assurance == pytest.approx(direct, abs=1e-9)
    assert abs(pw.mean() - a.assurance) <= 4 * pw.std() / math.sqrt(len(pw))


def test_assurance_z_test_full_simulation_effect_then_data_then_test():
    """Draw the effect from the prior, then the data, then run the two-sided z test: rejection rate = assurance."""
    sc = pc.Scenario("two-means-z", {"delta": 4.0, "sd1": 10.0, "sd2": 10.0}, n=50)
    a = assurance(sc, 4.0, 3.0)
    reps, rng = 40_000, np.random.default_rng(23)
    eff = rng.normal(4.0, 3.0, reps)
    x = rng.normal(0.0, 10.0, (reps, 50))
    y = rng.normal(eff[:, None], 10.0, (reps, 50))
    z = (y.mean(axis=1) - x.mean(axis=1)) / (10.0 * math.sqrt(2 / 50))   # known σ: the z statistic
    sim = np.mean(np.abs(z) >= stats.norm.isf(0.025))                     # scipy normal quantile
    assert abs(sim - a.assurance) <= 4 * math.sqrt(a.assurance * (1 - a.assurance) / reps)


@pytest.mark.parametrize("design, params, m, s", [
    ("two-means-t", {"delta": 5.0, "sd": 10.0}, 5.0, 3.0),
    ("two-proportions", {"p1": 0.3, "delta": 0.15}, 0.15, 0.06),
    ("mean-t", {"delta": 2.0, "sd": 5.0}, 2.0, 1.5),
])
def test_numerical_assurance_equals_quad_of_power_times_prior(design, params, m, s):
    """Gauss–Hermite assurance equals scipy quad of power × prior density over the effect's domain."""
    from scipy.integrate import quad
    sc = pc.Scenario(design, params, n=60)
    a = assurance(sc, m, s)
    d, p = pc.get_design(design), dict(sc.params)
    lo, hi = d.effect_bounds(p)
    lo, hi = max(lo + 1e-9, m - 10 * s), min(hi - 1e-9, m + 10 * s)
    direct, _ = quad(lambda e: float(power_at(d, {**p, "delta": e}, 60, 0.05, "two-sided")) * stats.norm.pdf(e, m, s),
                     lo, hi, epsabs=1e-10, limit=200)   # direct scipy computation (prior mass outside: < 1e-3)
    assert a.method.startswith("numerical")
    assert a.assurance == pytest.approx(direct, abs=2e-3)


def test_power_distribution_mean_and_probability_of_reaching_the_target():
    """Mean power over the prior's quantiles ≈ assurance; P(power ≥ target) equals the prior mass past the
    detectable effect (upper z test: e* = SE·(z_{1−α} + z_{target}), direct scipy computation)."""
    sc = pc.Scenario("two-means-z", {"delta": 3.0, "sd1": 10.0, "sd2": 10.0}, n=40, direction="upper",
                     target_power=0.8)
    a = assurance(sc, 3.0, 4.0)
    se = 10.0 * math.sqrt(2 / 40)
    e_star = se * (stats.norm.isf(0.05) + stats.norm.ppf(0.8))
    exact = stats.norm.sf(e_star, 3.0, 4.0)
    assert a.prob_power_above_target == pytest.approx(exact, abs=1e-3)
    assert a.distribution.powers.mean() == pytest.approx(a.assurance, abs=1e-3)
    edges, probs = a.distribution.histogram(20)
    assert len(edges) == 21 and probs.sum() == pytest.approx(1.0)
    x, f = a.distribution.cdf()
    assert np.all(np.diff(x) >= 0) and f[-1] == 1.0


def test_assurance_needs_n():
    """A scenario without n (sample size to be found) is refused naming n."""
    with pytest.raises(pc.InvalidParameter) as info:
        assurance(pc.Scenario("mean-t", find="n"), 1.0, 1.0)
    assert info.value.field == "n"


# ---- SD: confidence limits and the band -----------------------------------------------------------
@pytest.mark.parametrize("s, df, conf", [(10.0, 20, 0.8), (4.0, 9, 0.95)])
def test_sd_interval_is_the_chi_square_pivot(s, df, conf):
    """Two-sided interval s·√(df/χ²_{(1+γ)/2}) to s·√(df/χ²_{(1−γ)/2}) (common practice, no source); it holds the
    one-sided upper limit at the same level inside it."""
    lo, hi = pc.uncertainty.sd_interval(s, df, conf)
    assert lo == pytest.approx(s * math.sqrt(df / stats.chi2.ppf((1 + conf) / 2, df)), rel=1e-12)
    assert hi == pytest.approx(s * math.sqrt(df / stats.chi2.ppf((1 - conf) / 2, df)), rel=1e-12)
    assert lo < s < sd_upper_limit(s, df, conf) < hi


def test_sd_upper_limit_coverage_by_seeded_simulation():
    """σ_U covers the true σ in a fraction γ of seeded pilot samples (within 4 SE)."""
    from powercore.uncertainty import sd_upper_limit as ul
    rng, reps, df = np.random.default_rng(5), 20_000, 14
    s = rng.normal(0.0, 3.0, (reps, df + 1)).std(axis=1, ddof=1)
    k = stats.chi2.ppf(1 - 0.8, df)
    covered = np.mean(s * np.sqrt(df / k) >= 3.0)
    assert ul(1.0, df, 0.8) == pytest.approx(math.sqrt(df / k))
    assert abs(covered - 0.8) <= 4 * math.sqrt(0.8 * 0.2 / reps)


def test_power_band_matches_power_at_each_end_and_is_ordered():
    """Band ends are powercore's power at SD low and SD high, vectorised over the effect and over n."""
    from powercore.uncertainty import power_band
    sc = pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=40)
    d, p = pc.get_design("two-means-t"), dict(sc.params)
    x = np.linspace(-10, 10, 41)
    b = power_band(sc, "sd", 8.0, 12.0, effects=x)
    np.testing.assert_allclose(b.upper, power_at(d, {**p, "delta": x, "sd": 8.0}, 40, 0.05, "two-sided"))
    np.testing.assert_allclose(b.lower, power_at(d, {**p, "delta": x, "sd": 12.0}, 40, 0.05, "two-sided"))
    ns = np.arange(2, 200)
    c = power_band(sc, "sd", 8.0, 12.0, ns=ns)
    assert np.all(c.lower <= c.upper) and np.all(np.diff(c.lower) >= -1e-12)
    assert c.upper[38] == pytest.approx(pc.power(sc.replace(params={"sd": 8.0})))


@pytest.mark.parametrize("kw, field", [
    (dict(sd_name="delta", sd_low=1.0, sd_high=2.0), "sd_name"),
    (dict(sd_name="sd", sd_low=-1.0, sd_high=2.0), "sd_low"),
    (dict(sd_name="sd", sd_low=3.0, sd_high=2.0), "sd_high"),
])
def test_power_band_refuses_bad_ranges(kw, field):
    """A band needs an SD parameter and 0 < low ≤ high; ``band_range`` refuses the same, naming the same field."""
    from powercore.uncertainty import band_range, power_band
    with pytest.raises(pc.InvalidParameter) as info:
        power_band(pc.Scenario("two-means-t", n=40), effects=[1.0], **kw)
    assert info.value.field == field
    with pytest.raises(pc.InvalidParameter) as info:
        band_range(pc.Scenario("two-means-t", n=40), **kw)
    assert info.value.field == field


def test_band_range_gives_the_checked_floats():
    from powercore.uncertainty import band_range
    assert band_range(pc.Scenario("two-means-t", n=40), "sd", 8, 12) == (8.0, 12.0)


# ---- sensitivity tables ---------------------------------------------------------------------------
def test_every_effect_power_cell_equals_a_direct_evaluate_and_csv_parses_back():
    """Each cell equals pc.evaluate(find='n') on the same scenario; the CSV reads back with the csv module."""
    import csv
    import io
    sc = pc.Scenario("two-proportions", {"p1": 0.3, "delta": 0.15}, n=60)
    effects, powers = [0.0, 0.1, 0.15, 0.2], [0.8, 0.9, 0.95]
    t = sensitivity_effect_power(sc, effects, powers)
    for i, e in enumerate(effects):
        for j, w in enumerate(powers):
            try:
                want = pc.evaluate(sc.replace(find="n", params={"delta": e}, target_power=w)).n
            except pc.NoSolution:
                want = None
            assert t.cells[i][j] == want
            assert (t.reason(i, j) is None) == (want is not None)
    assert "null value" in t.reason(0, 0)
    rows = list(csv.reader(io.StringIO(t.to_csv())))
    assert [float(c) for c in rows[0][1:]] == powers
    assert [float(r[0]) for r in rows[1:]] == effects
    assert [[None if c == "" else int(c) for c in r[1:]] for r in rows[1:]] == [list(r) for r in t.cells]


def test_every_sd_dropout_cell_equals_a_direct_evaluate_enrolled_total():
    """Each SD × dropout cell equals the enrolled total of pc.evaluate(find='n') with that SD and dropout."""
    import csv
    import io
    sc = pc.Scenario("two-means-t", {"delta": 20.0, "sd": 45.0, "ratio": 1.5}, n=60)
    sds, drops = [35.0, 45.0, 55.0], [0.0, 0.15, 0.3]
    t = sensitivity_sd_dropout(sc, "sd", sds, drops)
    for i, s in enumerate(sds):
        for j, q in enumerate(drops):
            r = pc.evaluate(sc.replace(find="n", params={"sd": s}, adjustments={"dropout": q}))
            assert t.cells[i][j] == r.enrolled_total
    rows = list(csv.reader(io.StringIO(t.to_csv())))
    assert rows[0][0] == "sd \\ dropout" and [int(c) for c in rows[2][1:]] == list(t.cells[1])


@pytest.mark.parametrize("design, params, m, s", [
    ("two-means-t", {"delta": 20.0, "sd": 45.0}, 20.0, 10.0),
    ("two-proportions", {"p1": 0.3, "delta": 0.15}, 0.15, 0.1),
    ("two-means-equivalence", {"delta": 0.0, "sd": 10.0, "margin": 5.0}, 0.0, 2.0),
])
def test_interpolated_power_distribution_is_close_to_the_full_one(design, params, m, s):
    """Power on a 201-point effect grid, interpolated, gives the spread of the full 2,000-point computation
    to within 0.005 (quantiles, P(power ≥ target))."""
    sc = pc.Scenario(design, params, n=60)
    full = pc.uncertainty.power_distribution(sc, m, s)
    fast = pc.uncertainty.power_distribution(sc, m, s, grid=201)
    np.testing.assert_allclose(fast.powers, full.powers, atol=5e-3)
    for q in (0.05, 0.5, 0.95):
        assert fast.quantile(q) == pytest.approx(full.quantile(q), abs=5e-3)
    assert abs(fast.prob_at_least(0.8) - full.prob_at_least(0.8)) <= 5e-3
