"""Tests against a margin: non-inferiority and superiority by a margin (means, two proportions),
and equivalence of two means by two one-sided tests.

Sign convention, explicit and checked: the effect ``delta`` is oriented so that a
**positive value favours the new treatment** (group 2). If lower values of the
outcome are better (pain, failures), enter ``delta`` as control minus new. The
``margin`` M is always a positive number in the outcome's units:

* non-inferiority: H0 δ ≤ −M against H1 δ > −M (new is not worse by M or more);
* superiority by a margin: H0 δ ≤ +M against H1 δ > +M (new is better by more than M);
* equivalence: H0 |δ| ≥ M against H1 |δ| < M, two one-sided tests each at α.
"""
from __future__ import annotations

import numpy as np
from scipy import special

from .design import RATIO, TWO_GROUP_N, Design, Explanation, Statistic, TwoGroups, fmt, register
from .distributions import Normal, StudentT
from .errors import InvalidParameter
from .spec import ParamSpec
from .standard import PerProportion, PerSD

__all__ = ["EquivalenceMeans", "NonInferiorityMeans", "NonInferiorityProportions", "SuperiorityMeans",
           "SuperiorityProportions", "tost_power"]

_MARGIN_MEAN = ParamSpec("margin", "margin M", "data units", 3.0,
                         "positive margin in the outcome's units (see the sign convention)",
                         low=0.0, soft=(0.1, 20.0), step=0.1)
_MARGIN_PROP = ParamSpec("margin", "margin M", "proportion", 0.1,
                         "positive margin on the difference in proportions (see the sign convention)",
                         low=0.0, high=1.0, soft=(0.01, 0.3), step=0.005)
_DELTA_MEAN = ParamSpec("delta", "true difference δ (new − control)", "data units", 0.0,
                        "true difference, positive when the new treatment is better",
                        soft=(-20.0, 20.0), step=0.1)
_DELTA_PROP = ParamSpec("delta", "true difference p2 − p1", "proportion", 0.0,
                        "true difference in the proportion with the favourable outcome, new minus control",
                        low=-1.0, high=1.0, soft=(-0.3, 0.3), step=0.005)
_SD = ParamSpec("sd", "common SD σ", "data units", 10.0, "SD of single observations, the same in both groups",
                low=0.0, soft=(0.5, 40.0), step=0.1)
_P1 = ParamSpec("p1", "proportion in the control group p1", "proportion", 0.7,
                "proportion with the favourable outcome in the control group (group 1)",
                low=0.0, high=1.0, soft=(0.01, 0.99), step=0.005)

_CONVENTION = ("Sign convention: δ is new − control, positive when the new treatment is better; "
               "if lower values are better, enter control − new. The margin M is positive.")


class _Margin(TwoGroups, Design):
    family = "margins"
    directions = ("upper",)
    n = TWO_GROUP_N
    sign = -1.0   # −1: non-inferiority (null at −M); +1: superiority by a margin (null at +M)

    def null_effect(self, p):
        return self.sign * p["margin"]


class _MeansMargin(PerSD, _Margin):
    statistic_symbol = "t"
    estimate_label = "difference in means ȳ2 − ȳ1"
    params = (_DELTA_MEAN, _SD, _MARGIN_MEAN, RATIO)
    method = "exact: noncentral t with n1 + n2 − 2 degrees of freedom, shifted by the margin"

    def statistic(self, p, sizes):
        n1, n2 = sizes
        se = p["sd"] * np.sqrt(1 / n1 + 1 / n2)
        d0 = self.null_effect(p)
        nc = (np.asarray(p["delta"]) - d0) / se
        df = n1 + n2 - 2
        return Statistic(StudentT(df), StudentT(df, nc), se, nc, lambda t: d0 + t * se)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        d0 = self.null_effect(p)
        return Explanation(
            se=f"SE = σ·√(1/n1 + 1/n2) = {fmt(p['sd'])}·√(1/{fmt(n1)} + 1/{fmt(n2)}) = {fmt(st.se)}",
            null=f"T = (ȳ2 − ȳ1 − ({fmt(d0)}))/SE ~ t({fmt(n1 + n2 - 2)}) at the null boundary δ = {fmt(d0)}",
            alt=f"T ~ noncentral t({fmt(n1 + n2 - 2)}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = (δ − δ0)/SE = ({fmt(p['delta'])} − ({fmt(d0)}))/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("sign convention", _CONVENTION)])


@register
class NonInferiorityMeans(_MeansMargin):
    id = "two-means-noninferiority"
    title = "Two means, non-inferiority by a margin (t test)"
    test = "one-sided t test of H0: δ ≤ −M (pooled variance)"
    notes = (_CONVENTION,)


@register
class SuperiorityMeans(_MeansMargin):
    id = "two-means-superiority"
    title = "Two means, superiority by a margin (t test)"
    test = "one-sided t test of H0: δ ≤ +M (pooled variance)"
    notes = (_CONVENTION,)
    sign = 1.0
    params = (ParamSpec("delta", "true difference δ (new − control)", "data units", 6.0,
                        "true difference, positive when the new treatment is better", soft=(-20.0, 20.0),
                        step=0.1), _SD, _MARGIN_MEAN, RATIO)


class _PropsMargin(PerProportion, _Margin):
    estimate_label = "difference in proportions p̂2 − p̂1"
    params = (_P1, _DELTA_PROP, _MARGIN_PROP, RATIO)
    method = ("approximate: z test of p̂2 − p̂1 − δ0 with the unpooled variance at the planning values "
              "(Blackwelder 1982)")

    def check(self, p):
        super().check(p)
        d0 = self.null_effect(p)
        if not -p["p1"] < d0 < 1 - p["p1"]:
            raise InvalidParameter("margin", f"puts the null difference {d0:g} outside what p1 = {p['p1']:g} allows",
                                   p["margin"])

    def statistic(self, p, sizes):
        n1, n2 = sizes
        p1 = p["p1"]
        p2 = p1 + np.asarray(p["delta"])
        se = np.sqrt(p1 * (1 - p1) / n1 + p2 * (1 - p2) / n2)
        d0 = self.null_effect(p)
        nc = (p2 - p1 - d0) / se
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda z: d0 + z * se)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        d0 = self.null_effect(p)
        p2 = p["p1"] + p["delta"]
        return Explanation(
            se=(f"SE = √(p1(1 − p1)/n1 + p2(1 − p2)/n2) = √({fmt(p['p1'])}·{fmt(1 - p['p1'])}/{fmt(n1)} + "
                f"{fmt(p2)}·{fmt(1 - p2)}/{fmt(n2)}) = {fmt(st.se)}"),
            null=f"Z = (p̂2 − p̂1 − ({fmt(d0)}))/SE ~ N(0, 1) at the null boundary",
            alt=f"Z ~ N({fmt(st.noncentrality)}, 1)",
            noncentrality=f"λ = (δ − δ0)/SE = ({fmt(p['delta'])} − ({fmt(d0)}))/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("sign convention", _CONVENTION)])


@register
class NonInferiorityProportions(_PropsMargin):
    id = "two-proportions-noninferiority"
    title = "Two proportions, non-inferiority by a margin (z test)"
    test = "one-sided z test of H0: p2 − p1 ≤ −M"
    notes = (_CONVENTION, "Approximation: the unpooled variance at the planning values; within about ±0.02 "
             "of simulation when every expected cell count is 10 or more.")


@register
class SuperiorityProportions(_PropsMargin):
    id = "two-proportions-superiority"
    title = "Two proportions, superiority by a margin (z test)"
    test = "one-sided z test of H0: p2 − p1 ≤ +M"
    notes = NonInferiorityProportions.notes
    sign = 1.0
    params = (ParamSpec("p1", "proportion in the control group p1", "proportion", 0.5,
                        "proportion with the favourable outcome in the control group (group 1)",
                        low=0.0, high=1.0, soft=(0.01, 0.99), step=0.005),
              ParamSpec("delta", "true difference p2 − p1", "proportion", 0.25,
                        "true difference in the proportion with the favourable outcome, new minus control",
                        low=-1.0, high=1.0, soft=(-0.3, 0.5), step=0.005), _MARGIN_PROP, RATIO)


# ---- equivalence ----------------------------------------------------------------
_GL_X, _GL_W = np.polynomial.legendre.leggauss(96)
#: the chi-square mass left outside the integration range, at each end
_TAIL = 1e-20


def tost_power(delta, margin, sigma_d, df, alpha):
    """Exact power of two one-sided t tests for equivalence, |δ| < M, each at level α.

    The difference D ~ N(δ, σ_D²) and its estimated SE S = σ_D·√(X/df), X ~ χ²(df), are
    independent; both tests reject when −M + t·S ≤ D ≤ M − t·S (t the upper-α quantile of
    t(df)), which needs S < M/t. Power is the integral over X of the χ² density times that
    normal probability, by 96-point Gauss–Legendre quadrature over the part of X's range that
    holds all but 10⁻²⁰ of its mass at each end (accurate to about 1e-13 against adaptive
    quadrature; tests/test_margins.py). It is never negative, unlike the shortcut P1 + P2 − 1.
    """
    delta, margin, sigma_d, df, alpha = np.broadcast_arrays(*(np.asarray(v, dtype=float)
                                                              for v in (delta, margin, sigma_d, df, alpha)))
    t = -special.stdtrit(df, alpha)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return _tost(delta, margin, sigma_d, df, t)


def _tost(delta, margin, sigma_d, df, t):
    x_max = np.where(t > 0, df * (margin / np.where(t > 0, t, 1.0) / sigma_d) ** 2, np.inf)
    a = 2 * special.gammaincinv(df / 2, _TAIL)
    b = np.minimum(2 * special.gammainccinv(df / 2, _TAIL), x_max)
    width = np.maximum(b - a, 0.0)
    x = a[..., None] + width[..., None] * (_GL_X + 1) / 2
    k = df[..., None] / 2
    density = np.exp(special.xlogy(k - 1, x) - x / 2 - k * np.log(2) - special.gammaln(k))
    s = sigma_d[..., None] * np.sqrt(x / df[..., None])
    hi = (margin[..., None] - t[..., None] * s - delta[..., None]) / sigma_d[..., None]
    lo = (-margin[..., None] + t[..., None] * s - delta[..., None]) / sigma_d[..., None]
    inner = np.clip(special.ndtr(hi) - special.ndtr(lo), 0.0, 1.0)
    return np.clip(width / 2 * np.sum(_GL_W * density * inner, axis=-1), 0.0, 1.0)


@register
class EquivalenceMeans(PerSD, TwoGroups, Design):
    id = "two-means-equivalence"
    title = "Two means, equivalence within ±M (two one-sided t tests)"
    family = "margins"
    statistic_symbol = "t"
    estimate_label = "difference in means ȳ2 − ȳ1"
    test = "two one-sided t tests (TOST) of H0: |δ| ≥ M, each at level α"
    method = ("exact: integral over the distribution of the estimated SE of the normal probability that "
              "both one-sided tests reject (Gauss–Legendre, 96 nodes over the χ² range holding all but "
              "1e-20 of its mass)")
    notes = ("Exact, never negative; the shortcut P(test 1) + P(test 2) − 1 falls below zero at small n.",
             "Two-sided direction here means the two one-sided tests, each at α (the usual 90% CI rule for α = 0.05).")
    directions = ("two-sided",)
    params = (ParamSpec("delta", "true difference δ", "data units", 0.0, "true difference, new − control",
                        soft=(-20.0, 20.0), step=0.1), _SD,
              ParamSpec("margin", "equivalence margin M", "data units", 5.0,
                        "equivalence is |δ| < M; M is positive", low=0.0, soft=(0.1, 30.0), step=0.1), RATIO)
    n = TWO_GROUP_N
    conservative = True

    def effect_bounds(self, p):
        return -p["margin"], p["margin"]

    def effect_sides(self, p, direction):
        m = p["margin"]
        return [("upper", m, -1.0, 0.0), ("lower", -m, 1.0, 0.0)]

    def alternative_gap(self, p, direction):
        x, m = p["delta"], p["margin"]
        if abs(x) >= m:
            return f"|δ| = {abs(x):g} is not inside the equivalence margin {m:g}"
        return None

    def null_effect(self, p):
        return p["margin"]

    def check(self, p):
        x = p.get("delta")
        if x is not None and not -p["margin"] <= x <= p["margin"]:
            raise InvalidParameter("delta", f"must lie within the margin [−{p['margin']:g}, {p['margin']:g}]", x)

    def effect_scale(self, p):
        return float(p["margin"])

    def _sd_diff(self, p, sizes):
        n1, n2 = sizes
        return p["sd"] * np.sqrt(1 / n1 + 1 / n2), n1 + n2 - 2

    def custom_power(self, p, sizes, alpha, direction):
        se, df = self._sd_diff(p, sizes)
        return tost_power(p["delta"], p["margin"], se, df, alpha)

    def inside_region(self, p, sizes, alpha):
        """Equivalence is concluded for −M + t·SE ≤ D ≤ M − t·SE; on the scale of the statistic drawn,
        T = (D − M)/SE, that is t − 2M/SE ≤ T ≤ −t. Returns (statistic lo, hi, data lo, hi)."""
        se, df = self._sd_diff(p, sizes)
        t = float(-special.stdtrit(df, alpha))
        m = p["margin"]
        return t - 2 * m / se, -t, -m + t * se, m - t * se

    def statistic(self, p, sizes):
        # the upper one-sided test, H0 δ ≥ M, for the working and the density view
        se, df = self._sd_diff(p, sizes)
        nc = (np.asarray(p["delta"]) - p["margin"]) / se
        return Statistic(StudentT(df), StudentT(df, nc), se, nc, lambda t: p["margin"] + t * se)

    def explain(self, p, sizes, st):
        se, df = self._sd_diff(p, sizes)
        return Explanation(
            se=f"SE = σ·√(1/n1 + 1/n2) = {fmt(st.se)}",
            null=f"each one-sided statistic ~ t({fmt(df)}) at its margin",
            alt=f"ȳ2 − ȳ1 ~ N({fmt(p['delta'])}, {fmt(se)}²); SE estimated with {fmt(df)} df",
            noncentrality=(f"(δ − M)/SE = {fmt((p['delta'] - p['margin']) / se)}, "
                           f"(δ + M)/SE = {fmt((p['delta'] + p['margin']) / se)}"),
            extra=[("equivalence region", "conclude equivalence if −M + t·SE ≤ ȳ2 − ȳ1 ≤ M − t·SE, t the "
                    "upper-α point of t(df); it needs SE < M/t"),
                   ("power", "integrated exactly over the distribution of the estimated SE")])
