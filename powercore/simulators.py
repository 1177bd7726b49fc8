"""Simulators: for each design, draw raw data for ``reps`` studies and apply the study's real test.

Each returns a boolean array of rejections. Tests come from scipy.stats where it
has them (t tests, Welch, Pearson's r via its t form); the rest are written out
here, vectorised over replicates, and say so in ``test``.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy import special, stats

__all__ = ["SIMULATORS", "Simulator"]

_ALT = {"two-sided": "two-sided", "upper": "greater", "lower": "less"}


@dataclass(frozen=True)
class Simulator:
    """How one design is simulated: the function, the test it applies, and why it may differ."""

    run: Callable
    test: str
    why_differs: str = "the analytic method is an approximation for this scenario; see the design's notes"


SIMULATORS: dict[str, Simulator] = {}


def _register(*ids: str, test: str, why: str | None = None):
    def deco(fn):
        for i in ids:
            SIMULATORS[i] = Simulator(fn, test, why or Simulator.why_differs)
        return fn
    return deco


def _z_reject(z, alpha, direction, shift=0.0):
    """Reject a z statistic against normal critical values (shift moves them outward)."""
    if direction == "two-sided":
        c = -special.ndtri(alpha / 2) + shift
        return (z >= c) | (z <= -c)
    c = -special.ndtri(alpha) + shift
    return z >= c if direction == "upper" else z <= -c


def _normal(rng, mean, sd, shape):
    return mean + sd * rng.standard_normal(shape)


# ---- means ----------------------------------------------------------------------
@_register("mean-z", test="one-sample z test with the planned σ, on raw normal data")
def _mean_z(p, sizes, alpha, direction, reps, rng):
    n = sizes[0]
    x = _normal(rng, p["mu0"] + p["delta"], p["sd"], (reps, n))
    return _z_reject((x.mean(1) - p["mu0"]) / (p["sd"] / np.sqrt(n)), alpha, direction)


@_register("mean-t", test="scipy.stats.ttest_1samp on raw normal data")
def _mean_t(p, sizes, alpha, direction, reps, rng):
    x = _normal(rng, p["mu0"] + p["delta"], p["sd"], (reps, sizes[0]))
    return stats.ttest_1samp(x, p["mu0"], axis=1, alternative=_ALT[direction]).pvalue <= alpha


@_register("paired-t", test="scipy.stats.ttest_rel on raw pairs (differences normal with SD σ_d)")
def _paired(p, sizes, alpha, direction, reps, rng):
    n = sizes[0]
    before = _normal(rng, 50.0, 5.0, (reps, n))
    after = before + _normal(rng, p["delta"], p["sd_diff"], (reps, n))
    return stats.ttest_rel(after, before, axis=1, alternative=_ALT[direction]).pvalue <= alpha


def _two_groups(rng, mu1, mu2, sd1, sd2, sizes, reps):
    n1, n2 = sizes
    return _normal(rng, mu1, sd1, (reps, n1)), _normal(rng, mu2, sd2, (reps, n2))


@_register("two-means-z", test="two-sample z test with the planned SDs, on raw normal data")
def _two_z(p, sizes, alpha, direction, reps, rng):
    a, b = _two_groups(rng, 0.0, p["delta"], p["sd1"], p["sd2"], sizes, reps)
    se = np.sqrt(p["sd1"] ** 2 / sizes[0] + p["sd2"] ** 2 / sizes[1])
    return _z_reject((b.mean(1) - a.mean(1)) / se, alpha, direction)


@_register("two-means-t", test="scipy.stats.ttest_ind (pooled variance) on raw normal data")
def _two_t(p, sizes, alpha, direction, reps, rng):
    a, b = _two_groups(rng, 0.0, p["delta"], p["sd"], p["sd"], sizes, reps)
    return stats.ttest_ind(b, a, axis=1, alternative=_ALT[direction]).pvalue <= alpha


@_register("two-means-welch", test="scipy.stats.ttest_ind(equal_var=False) (Welch) on raw normal data",
           why="the analytic power fixes the Welch–Satterthwaite df at the planned SDs; the real df vary")
def _welch(p, sizes, alpha, direction, reps, rng):
    a, b = _two_groups(rng, 0.0, p["delta"], p["sd1"], p["sd2"], sizes, reps)
    return stats.ttest_ind(b, a, axis=1, equal_var=False, alternative=_ALT[direction]).pvalue <= alpha


# ---- proportions ------------------------------------------------------------------
@_register("proportion-normal", test="score z test of one proportion on binomial counts",
           why="the normal approximation to the binomial is rough at this n")
def _prop_normal(p, sizes, alpha, direction, reps, rng):
    n, p0 = sizes[0], p["p0"]
    x = rng.binomial(n, p0 + p["delta"], reps)
    return _z_reject((x / n - p0) / np.sqrt(p0 * (1 - p0) / n), alpha, direction)


@_register("proportion-exact", test="exact binomial test (at most α/2 per tail when two-sided) on binomial counts")
def _prop_exact(p, sizes, alpha, direction, reps, rng):
    n, p0 = sizes[0], p["p0"]
    x = rng.binomial(n, p0 + p["delta"], reps)
    if direction == "two-sided":
        return (stats.binom.sf(x - 1, n, p0) <= alpha / 2) | (stats.binom.cdf(x, n, p0) <= alpha / 2)
    if direction == "upper":
        return stats.binom.sf(x - 1, n, p0) <= alpha
    return stats.binom.cdf(x, n, p0) <= alpha


@_register("two-proportions", test="two-proportion z test with pooled variance (optionally continuity-corrected)",
           why="the normal approximation is rough with few expected events per cell")
def _two_props(p, sizes, alpha, direction, reps, rng):
    n1, n2 = sizes
    x1 = rng.binomial(n1, p["p1"], reps)
    x2 = rng.binomial(n2, p["p1"] + p["delta"], reps)
    pbar = (x1 + x2) / (n1 + n2)
    se0 = np.sqrt(pbar * (1 - pbar) * (1 / n1 + 1 / n2))
    diff = x2 / n2 - x1 / n1
    if p["continuity"]:
        c = (1 / n1 + 1 / n2) / 2
        diff = np.sign(diff) * np.maximum(np.abs(diff) - c, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(se0 > 0, diff / se0, 0.0)
    return _z_reject(z, alpha, direction)


@_register("two-proportions-arcsine", test="z test on arcsine-square-root transformed proportions")
def _two_props_arcsine(p, sizes, alpha, direction, reps, rng):
    n1, n2 = sizes
    x1 = rng.binomial(n1, p["p1"], reps)
    x2 = rng.binomial(n2, p["p1"] + p["delta"], reps)
    h = 2 * np.arcsin(np.sqrt(x2 / n2)) - 2 * np.arcsin(np.sqrt(x1 / n1))
    return _z_reject(h / np.sqrt(1 / n1 + 1 / n2), alpha, direction)


# ---- correlation ----------------------------------------------------------------------
def _sample_r(rng, rho, n, reps):
    x = rng.standard_normal((reps, n))
    y = rho * x + np.sqrt(1 - rho * rho) * rng.standard_normal((reps, n))
    x = x - x.mean(1, keepdims=True)
    y = y - y.mean(1, keepdims=True)
    return (x * y).sum(1) / np.sqrt((x * x).sum(1) * (y * y).sum(1))


@_register("correlation-fisher", test="z test on Fisher's z of Pearson's r, from bivariate normal pairs",
           why="Fisher's z is an approximation, least accurate at small n and large |ρ|")
def _corr_fisher(p, sizes, alpha, direction, reps, rng):
    n = sizes[0]
    r = _sample_r(rng, p["rho0"] + p["delta"], n, reps)
    z = (np.arctanh(np.clip(r, -1 + 1e-15, 1 - 1e-15)) - np.arctanh(p["rho0"])) * np.sqrt(n - 3)
    return _z_reject(z, alpha, direction)


@_register("correlation-exact", test="test of Pearson's r against the exact null quantiles of r, bivariate normal pairs")
def _corr_exact(p, sizes, alpha, direction, reps, rng):
    from .distributions import SampleCorrelation
    n = sizes[0]
    r = _sample_r(rng, p["rho0"] + p["delta"], n, reps)
    null = SampleCorrelation(n, p["rho0"])
    if direction == "two-sided":
        return (r >= float(null.isf(alpha / 2))) | (r <= float(null.ppf(alpha / 2)))
    return r >= float(null.isf(alpha)) if direction == "upper" else r <= float(null.ppf(alpha))


# ---- margins -------------------------------------------------------------------------
def _margin_sim(sign):
    def run(p, sizes, alpha, direction, reps, rng):
        a, b = _two_groups(rng, 0.0, p["delta"], p["sd"], p["sd"], sizes, reps)
        return stats.ttest_ind(b - sign * p["margin"], a, axis=1, alternative="greater").pvalue <= alpha
    return run


SIMULATORS["two-means-noninferiority"] = Simulator(
    _margin_sim(-1.0), "one-sided pooled t test of H0 δ ≤ −M (scipy.stats.ttest_ind on data shifted by M)")
SIMULATORS["two-means-superiority"] = Simulator(
    _margin_sim(1.0), "one-sided pooled t test of H0 δ ≤ +M (scipy.stats.ttest_ind on data shifted by −M)")


def _props_margin_sim(sign):
    def run(p, sizes, alpha, direction, reps, rng):
        n1, n2 = sizes
        x1 = rng.binomial(n1, p["p1"], reps) / n1
        x2 = rng.binomial(n2, p["p1"] + p["delta"], reps) / n2
        se = np.sqrt(x1 * (1 - x1) / n1 + x2 * (1 - x2) / n2)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.where(se > 0, (x2 - x1 - sign * p["margin"]) / se, 0.0)
        return _z_reject(z, alpha, "upper")
    return run


_WHY_WALD = "the Wald test estimates the variance from the data; the analytic method uses the planning values"
SIMULATORS["two-proportions-noninferiority"] = Simulator(
    _props_margin_sim(-1.0), "one-sided Wald z test of H0 p2 − p1 ≤ −M on binomial counts", _WHY_WALD)
SIMULATORS["two-proportions-superiority"] = Simulator(
    _props_margin_sim(1.0), "one-sided Wald z test of H0 p2 − p1 ≤ +M on binomial counts", _WHY_WALD)


@_register("two-means-equivalence", test="two one-sided pooled t tests (TOST), each at α, on raw normal data")
def _tost(p, sizes, alpha, direction, reps, rng):
    a, b = _two_groups(rng, 0.0, p["delta"], p["sd"], p["sd"], sizes, reps)
    m = p["margin"]
    lo = stats.ttest_ind(b + m, a, axis=1, alternative="greater").pvalue <= alpha
    hi = stats.ttest_ind(b - m, a, axis=1, alternative="less").pvalue <= alpha
    return lo & hi


# ---- time to event ---------------------------------------------------------------------
def logrank_z(time, event, group):
    """Log-rank z statistic per replicate (rows), new (group 1) against control (group 0).

    Negative when the new arm has fewer events than expected (hazard ratio below 1).
    """
    order = np.argsort(time, axis=1, kind="stable")
    ev = np.take_along_axis(event, order, 1).astype(float)
    g = np.take_along_axis(group, order, 1).astype(float)
    n = time.shape[1]
    at_risk = n - np.arange(n)                                   # everyone from this position on
    at_risk_new = np.cumsum(g[:, ::-1], axis=1)[:, ::-1]
    expected = ev * at_risk_new / at_risk
    var = ev * (at_risk_new / at_risk) * (1 - at_risk_new / at_risk)
    o_minus_e = (ev * g).sum(1) - expected.sum(1)
    v = var.sum(1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(v > 0, o_minus_e / np.sqrt(v), 0.0)


def _exp_times(rng, hazard, shape):
    return rng.exponential(1.0, shape) / hazard


@_register("logrank-events", test="log-rank test on exponential event times, followed until the planned events",
           why="the normal log-rank approximations (Schoenfeld, Freedman) drift with strong effects or "
               "unequal allocation")
def _logrank_events(p, sizes, alpha, direction, reps, rng):
    events = sizes[0]
    r = p["ratio"]
    # enrol enough subjects that all of them eventually have an event; stop at the D-th event
    n1 = max(int(np.ceil(events / (1 + r))), 1)
    n2 = max(int(np.ceil(r * n1)), 1)
    total = n1 + n2
    group = np.concatenate([np.zeros(n1), np.ones(n2)])[None, :].repeat(reps, 0)
    hazard = np.where(group == 1, p["hr"], 1.0)
    t = _exp_times(rng, hazard, (reps, total))
    cutoff = np.sort(t, axis=1)[:, min(events, total) - 1][:, None]
    event = t <= cutoff
    return _z_reject(logrank_z(np.minimum(t, cutoff), event, group), alpha, direction)


@_register("logrank-subjects", test="log-rank test on exponential event times with uniform entry and "
                                    "administrative censoring at the end of follow-up",
           why="the normal log-rank approximations (Schoenfeld, Freedman) drift with strong effects")
def _logrank_subjects(p, sizes, alpha, direction, reps, rng):
    n1, n2 = sizes
    group = np.concatenate([np.zeros(n1), np.ones(n2)])[None, :].repeat(reps, 0)
    lam1 = np.log(2) / p["median_control"]
    hazard = np.where(group == 1, lam1 * p["hr"], lam1)
    t = _exp_times(rng, hazard, group.shape)
    entry = rng.uniform(0, p["accrual"], group.shape) if p["accrual"] > 0 else np.zeros(group.shape)
    limit = p["accrual"] + p["follow_up"] - entry
    return _z_reject(logrank_z(np.minimum(t, limit), t <= limit, group), alpha, direction)


# ---- cluster randomised ------------------------------------------------------------------
def _cluster_counts(p, sizes, design_counts_clusters):
    if design_counts_clusters:
        k, m = int(sizes[0]), p["m"]
    else:
        k, m = int(round(p["k"])), sizes[0] / p["k"]
    return k, m


def _cluster_sizes(rng, k, m, cv, reps):
    """Cluster sizes with mean m and coefficient of variation cv (gamma-distributed, at least 1)."""
    if cv == 0:
        return np.full((reps, k), max(int(round(m)), 1))
    shape = 1 / cv ** 2
    return np.maximum(np.rint(rng.gamma(shape, m / shape, (reps, k))), 1).astype(int)


def _cluster_means_run(counts_clusters):
    def run(p, sizes, alpha, direction, reps, rng):
        k, m = _cluster_counts(p, sizes, counts_clusters)
        sb, sw = p["sd"] * np.sqrt(p["icc"]), p["sd"] * np.sqrt(1 - p["icc"])
        arms = []
        for mu in (0.0, p["delta"]):
            size = _cluster_sizes(rng, k, m, p["cv"], reps)
            # a cluster mean of size s: cluster effect plus the mean of s within-cluster errors
            arms.append(mu + sb * rng.standard_normal((reps, k)) + sw * rng.standard_normal((reps, k)) / np.sqrt(size))
        return stats.ttest_ind(arms[1], arms[0], axis=1, alternative=_ALT[direction]).pvalue <= alpha
    return run


_WHY_CLUSTER = ("the design effect with unequal cluster sizes is an approximation, and the analysis "
                "weights clusters equally")
for _id, _cc in (("cluster-means-clusters", True), ("cluster-means-size", False)):
    SIMULATORS[_id] = Simulator(_cluster_means_run(_cc), "t test on cluster means (clusters of random "
                                "sizes when cv > 0), data with a random cluster effect", _WHY_CLUSTER)


def _cluster_props_run(counts_clusters):
    def run(p, sizes, alpha, direction, reps, rng):
        k, m = _cluster_counts(p, sizes, counts_clusters)
        rho = max(p["icc"], 1e-9)
        props = []
        for prop in (p["p1"], p["p1"] + p["delta"]):
            size = _cluster_sizes(rng, k, m, p["cv"], reps)
            a, b = prop * (1 - rho) / rho, (1 - prop) * (1 - rho) / rho
            pj = rng.beta(a, b, (reps, k)) if p["icc"] > 0 else np.full((reps, k), prop)
            x = rng.binomial(size, pj)
            props.append((x.sum(1), size.sum(1)))
        (x1, n1), (x2, n2) = props
        q1, q2 = x1 / n1, x2 / n2
        mbar = (n1 + n2) / (2 * k)
        de = 1 + ((p["cv"] ** 2 + 1) * mbar - 1) * p["icc"]
        se = np.sqrt((q1 * (1 - q1) / n1 + q2 * (1 - q2) / n2) * de)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.where(se > 0, (q2 - q1) / se, 0.0)
        return _z_reject(z, alpha, direction)
    return run


for _id, _cc in (("cluster-proportions-clusters", True), ("cluster-proportions-size", False)):
    SIMULATORS[_id] = Simulator(_cluster_props_run(_cc), "z test of pooled arm proportions with variance "
                                "inflated by the design effect; beta-binomial cluster data", _WHY_CLUSTER)


# ---- several groups, contingency tables, regression ----------------------------------------
def _spread(k, sd_of_means):
    """k equally spaced group means with population SD ``sd_of_means`` (the noncentrality depends on it alone)."""
    z = np.linspace(-1.0, 1.0, k)
    z = z / z.std() if k > 1 else z
    return sd_of_means * z


@_register("anova-oneway", test="scipy.stats.f_oneway on raw normal data, equally spaced group means")
def _anova(p, sizes, alpha, direction, reps, rng):
    k = int(round(p["k"]))
    n = int(sizes[0])
    means = _spread(k, p["delta"])
    groups = [_normal(rng, m, p["sd"], (reps, n)) for m in means]
    return stats.f_oneway(*groups, axis=1).pvalue <= alpha


def _gof_cells(w, df):
    """Null and alternative cell proportions with k = df + 1 equal null cells and Cohen's w = w."""
    k = df + 1
    p0 = np.full(k, 1.0 / k)
    v = np.zeros(k)
    half = k // 2
    v[:half], v[half:2 * half] = 1.0, -1.0       # zero-sum deviation pattern
    c = w / np.sqrt(np.sum(v * v) * k)           # w² = Σ (c·v)²/(1/k)
    p1 = p0 + c * v
    return p0, p1


@_register("chisquare-gof", test="Pearson chi-square goodness-of-fit test (scipy.stats.chisquare) on multinomial counts",
           why="the noncentral chi-square is a large-sample approximation")
def _chisq_gof(p, sizes, alpha, direction, reps, rng):
    df = int(round(p["df"]))
    p0, p1 = _gof_cells(p["delta"], df)
    if np.any(p1 < 0):
        raise ValueError("w too large for the simulator's cell pattern")
    n = int(sizes[0])
    counts = rng.multinomial(n, p1, size=reps)
    return stats.chisquare(counts, n * p0, axis=1).pvalue <= alpha


@_register("chisquare-independence", test="Pearson chi-square test of independence (no continuity correction) on "
                                          "multinomial 2 × (df + 1) tables, expected counts from the margins",
           why="the noncentral chi-square is a large-sample approximation")
def _chisq_ind(p, sizes, alpha, direction, reps, rng):
    df = int(round(p["df"]))
    cols = df + 1
    base = np.full((2, cols), 1.0 / (2 * cols))
    d = np.zeros((2, cols))
    d[0, 0] = d[1, 1] = 1.0
    d[0, 1] = d[1, 0] = -1.0
    c = p["delta"] * np.sqrt(2 * cols) / 2        # w² = Σ (c·d)²/(2·cols) · ... with uniform margins
    joint = base * (1 + c * d)
    n = int(sizes[0])
    counts = rng.multinomial(n, joint.ravel(), size=reps).reshape(reps, 2, cols).astype(float)
    rows, colsum = counts.sum(2, keepdims=True), counts.sum(1, keepdims=True)
    expected = rows * colsum / n
    with np.errstate(divide="ignore", invalid="ignore"):
        chi2 = np.nansum(np.where(expected > 0, (counts - expected) ** 2 / expected, 0.0), axis=(1, 2))
    return chi2 >= stats.chi2.isf(alpha, df)


def _ols_r2(X, y):
    """R² of least squares with an intercept, for each replicate (rows of the batched X, y)."""
    Xc = X - X.mean(1, keepdims=True)
    yc = y - y.mean(1, keepdims=True)
    beta = np.linalg.solve(np.einsum("rni,rnj->rij", Xc, Xc), np.einsum("rni,rn->ri", Xc, yc)[..., None])[..., 0]
    fitted = np.einsum("rni,ri->rn", Xc, beta)
    return (fitted ** 2).sum(1) / (yc ** 2).sum(1)


_WHY_RANDOM_X = ("the analytic power treats the predictors as fixed (Cohen's λ = f²·N); the simulation draws "
                 "random normal predictors, which lowers power a little at small N")


@_register("regression-r2", test="overall F test of R² by least squares, random normal predictors",
           why=_WHY_RANDOM_X)
def _reg_r2(p, sizes, alpha, direction, reps, rng):
    u, n = int(round(p["u"])), int(sizes[0])
    r2 = p["delta"]
    X = rng.standard_normal((reps, n, u))
    beta = np.full(u, np.sqrt(r2 / (1 - r2) / u))
    y = X @ beta + rng.standard_normal((reps, n))
    r = _ols_r2(X, y)
    f = (r / u) / ((1 - r) / (n - u - 1))
    return f >= stats.f.isf(alpha, u, n - u - 1)


@_register("regression-r2-change", test="F test of the R² increase for u added predictors, least squares, "
                                        "independent random normal predictors", why=_WHY_RANDOM_X)
def _reg_change(p, sizes, alpha, direction, reps, rng):
    u, v, n = int(round(p["u"])), int(round(p["v"])), int(sizes[0])
    full = p["r2_base"] + p["delta"]
    X = rng.standard_normal((reps, n, u + v))
    beta = np.concatenate([np.full(v, np.sqrt(p["r2_base"] / (1 - full) / v)) if v else np.zeros(0),
                           np.full(u, np.sqrt(p["delta"] / (1 - full) / u))])
    y = X @ beta + rng.standard_normal((reps, n))
    r_full = _ols_r2(X, y)
    r_base = _ols_r2(X[:, :, :v], y) if v else np.zeros(reps)
    f = ((r_full - r_base) / u) / ((1 - r_full) / (n - u - v - 1))
    return f >= stats.f.isf(alpha, u, n - u - v - 1)


# ---- paired proportions, rates, rank tests ---------------------------------------------------
@_register("mcnemar", test="McNemar's test without continuity correction, z = (n01 − n10)/√(n01 + n10), on "
                           "multinomial pairs", why="the normal approximation to McNemar's test is rough with "
                                                    "few discordant pairs")
def _mcnemar(p, sizes, alpha, direction, reps, rng):
    n = int(sizes[0])
    p01 = (p["psi"] + p["delta"]) / 2
    p10 = (p["psi"] - p["delta"]) / 2
    counts = rng.multinomial(n, [p10, p01, 1 - p10 - p01], size=reps)
    n10, n01 = counts[:, 0], counts[:, 1]
    disc = n10 + n01
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(disc > 0, (n01 - n10) / np.sqrt(disc), 0.0)
    return _z_reject(z, alpha, direction)


@_register("two-rates", test="score z test of two Poisson rates with the pooled rate, on Poisson event counts",
           why="the normal approximation is rough with few expected events")
def _rates(p, sizes, alpha, direction, reps, rng):
    n1, n2 = sizes
    t1, t2 = n1 * p["exposure"], n2 * p["exposure"]
    x1 = rng.poisson(p["rate1"] * t1, reps)
    x2 = rng.poisson((p["rate1"] + p["delta"]) * t2, reps)
    pooled = (x1 + x2) / (t1 + t2)
    se = np.sqrt(pooled * (1 / t1 + 1 / t2))
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(se > 0, (x2 / t2 - x1 / t1) / se, 0.0)
    return _z_reject(z, alpha, direction)


_ARE_OF = {"normal": 3 / np.pi, "uniform": 1.0, "logistic": np.pi ** 2 / 9, "laplace": 1.5}


def _parent_name(p) -> str:
    """The parent to draw from: the chosen one, or for a typed ARE (parent other) the named parent nearest it."""
    parent = p.get("parent", "other")
    if parent != "other":
        return parent
    return min(_ARE_OF, key=lambda k: abs(_ARE_OF[k] - p["are"]))


def _parent(rng, name, shape):
    """Standardized draws (mean 0, SD 1) from the named parent distribution."""
    if name == "uniform":
        return rng.uniform(-np.sqrt(3), np.sqrt(3), shape)
    if name == "logistic":
        return rng.logistic(0, np.sqrt(3) / np.pi, shape)
    if name == "laplace":
        return rng.laplace(0, 1 / np.sqrt(2), shape)
    return rng.standard_normal(shape)


_WHY_ARE = "the efficiency (ARE) is reached only as n grows; at small n the approximation overstates power"


@_register("wilcoxon-mann-whitney", test="scipy.stats.mannwhitneyu (asymptotic) on shifted draws from the chosen parent "
                                         "distribution (for a typed ARE, the named parent nearest it)", why=_WHY_ARE)
def _wmw(p, sizes, alpha, direction, reps, rng):
    n1, n2 = sizes
    a = p["sd"] * _parent(rng, _parent_name(p), (reps, n1))
    b = p["delta"] + p["sd"] * _parent(rng, _parent_name(p), (reps, n2))
    return stats.mannwhitneyu(b, a, axis=1, alternative=_ALT[direction], method="asymptotic").pvalue <= alpha


@_register("wilcoxon-signed-rank", test="scipy.stats.wilcoxon (normal approximation) on within-pair differences "
                                        "from the chosen parent distribution (for a typed ARE, the named parent "
                                        "nearest it)", why=_WHY_ARE)
def _signed_rank(p, sizes, alpha, direction, reps, rng):
    n = sizes[0]
    dif = p["delta"] + p["sd_diff"] * _parent(rng, _parent_name(p), (reps, n))
    return stats.wilcoxon(dif, axis=1, alternative=_ALT[direction], method="approx").pvalue <= alpha
