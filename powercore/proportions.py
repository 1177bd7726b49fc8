"""Tests of one proportion (normal approximation, exact binomial) and of two proportions."""
from __future__ import annotations

import numpy as np

from .design import RATIO, TWO_GROUP_N, Design, Explanation, Statistic, TwoGroups, fmt, register
from .distributions import Binomial, Normal
from .spec import NSpec, ParamSpec
from .standard import PerProportion, cohens_h

__all__ = ["OneProportionExact", "OneProportionNormal", "TwoProportions", "TwoProportionsArcsine",
           "cohens_h"]


def _prop(name, label, default, doc):
    return ParamSpec(name, label, "proportion", default, doc, low=0.0, high=1.0, soft=(0.01, 0.99), step=0.005)


DELTA_P = ParamSpec("delta", "difference in proportions", "proportion", 0.15,
                    "alternative proportion minus the reference proportion",
                    low=-1.0, high=1.0, soft=(-0.5, 0.5), step=0.005)


class _OneProportion(PerProportion, Design):
    family = "proportions"
    base_param = "p0"
    estimate_label = "sample proportion p̂"
    params = (_prop("p0", "proportion under the null p0", 0.3, "proportion under the null hypothesis"),
              DELTA_P)
    n = NSpec("observations", "observations", 2, 60, (2, 500), "number of observations (trials)")


@register
class OneProportionNormal(_OneProportion):
    id = "proportion-normal"
    title = "One proportion (normal approximation)"
    test = "score z test of one proportion, null variance p0(1 − p0)/n"
    method = ("approximate: Z = (p̂ − p0)/√(p0(1 − p0)/n) is normal, with variance p1(1 − p1)/n under "
              "the alternative")
    notes = ("Approximation: the count is discrete, so the real score test neither keeps α exactly nor has "
             "exactly this power. Measured by summing binomial probabilities (two-sided α = 0.05, a "
             "difference of 0.1): at n = 100, p0 = 0.3 its actual size is 0.063 and its power 0.618 against "
             "0.582 here; over n = 30-100 and p0 = 0.1-0.5 the two differ by up to ±0.07; from n = 200 by "
             "0.015 at most, and from n = 500 by under 0.001. Below a few hundred observations, plan with "
             "the exact binomial design.",)

    def statistic(self, p, sizes):
        n = sizes[0]
        p0, p1 = p["p0"], p["p0"] + np.asarray(p["delta"])
        se0 = np.sqrt(p0 * (1 - p0) / n)
        se1 = np.sqrt(p1 * (1 - p1) / n)
        nc = (p1 - p0) / se0
        return Statistic(Normal(0, 1), Normal(nc, se1 / se0), se0, nc, lambda t: p0 + t * se0)

    def explain(self, p, sizes, st):
        n = sizes[0]
        p0, p1 = p["p0"], p["p0"] + p["delta"]
        return Explanation(
            se=f"SE0 = √(p0(1 − p0)/n) = √({fmt(p0)}·{fmt(1 - p0)}/{fmt(n)}) = {fmt(st.se)}",
            null="Z ~ N(0, 1)",
            alt=f"Z ~ N({fmt(st.noncentrality)}, {fmt(st.alt.scale)}²) with p1 = {fmt(p1)}",
            noncentrality=f"λ = (p1 − p0)/SE0 = {fmt(p1 - p0)}/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("SD under the alternative", f"√(p1(1 − p1))/√(p0(1 − p0)) = {fmt(st.alt.scale)}")])


@register
class OneProportionExact(_OneProportion):
    id = "proportion-exact"
    title = "One proportion (exact binomial test)"
    statistic_symbol = "x"
    test = "exact binomial test"
    method = "exact: binomial distribution of the number of successes"
    notes = ("A two-sided exact test here puts at most α/2 in each tail.",
             "Power of an exact test is a saw-tooth in n: a larger n can have lower power. The sample "
             "size reports the first n that reaches the target and the n from which it stays there.",
             "The actual size of the test is at most α, often well below it.")
    discrete = True
    conservative = True

    def statistic(self, p, sizes):
        n = sizes[0]
        p0, p1 = p["p0"], p["p0"] + np.asarray(p["delta"])
        se0 = np.sqrt(p0 * (1 - p0) / n)
        nc = (p1 - p0) / se0
        return Statistic(Binomial(n, p0), Binomial(n, p1), se0, nc, lambda k: k / n)

    def explain(self, p, sizes, st):
        n = sizes[0]
        p0, p1 = p["p0"], p["p0"] + p["delta"]
        return Explanation(
            se=f"SE0 = √(p0(1 − p0)/n) = {fmt(st.se)} (for reference; the test is exact)",
            null=f"X ~ Binomial({fmt(n)}, {fmt(p0)})", alt=f"X ~ Binomial({fmt(n)}, {fmt(p1)})",
            noncentrality=f"(p1 − p0)/SE0 = {fmt(st.noncentrality)} (reference only)")


class _TwoProportions(PerProportion, TwoGroups, Design):
    family = "proportions"
    standardized_name = "h"
    n = TWO_GROUP_N


CONTINUITY = ParamSpec("continuity", "continuity correction", "", False,
                       "subtract (1/n1 + 1/n2)/2 from |p̂2 − p̂1| before standardizing (Yates-type)",
                       kind="bool", low=0, high=1, soft=(0, 1), step=1)


@register
class TwoProportions(_TwoProportions):
    id = "two-proportions"
    title = "Two proportions (normal approximation, pooled null variance)"
    estimate_label = "difference in proportions p̂2 − p̂1"
    test = ("z test of two proportions with the pooled variance under the null, optionally with a "
            "continuity correction")
    method = ("approximate: Z = (p̂2 − p̂1)/SE0 with SE0 from the pooled proportion, and the unpooled "
              "variance under the alternative (Fleiss, Levin and Paik 2003, ch. 4); the continuity "
              "correction moves the critical values outward by (1/n1 + 1/n2)/2")
    notes = ("Approximation: compare with simulation of the chi-square / z test; accurate to about ±0.01 "
             "when every expected cell count is 10 or more.",)
    params = (_prop("p1", "proportion in group 1 p1", 0.3, "proportion with the outcome in group 1 (control)"),
              DELTA_P, RATIO, CONTINUITY)

    def conservative_at(self, p):
        return bool(p["continuity"])

    def statistic(self, p, sizes):
        n1, n2 = sizes
        p1 = p["p1"]
        p2 = p1 + np.asarray(p["delta"])
        pbar = (n1 * p1 + n2 * p2) / (n1 + n2)
        se0 = np.sqrt(pbar * (1 - pbar) * (1 / n1 + 1 / n2))
        se1 = np.sqrt(p1 * (1 - p1) / n1 + p2 * (1 - p2) / n2)
        nc = (p2 - p1) / se0
        shift = (1 / n1 + 1 / n2) / 2 / se0 if p["continuity"] else 0.0
        return Statistic(Normal(0, 1), Normal(nc, se1 / se0), se0, nc, lambda t: t * se0, shift)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        p1, p2 = p["p1"], p["p1"] + p["delta"]
        pbar = (n1 * p1 + n2 * p2) / (n1 + n2)
        extra = [("SD under the alternative", f"√(p1q1/n1 + p2q2/n2)/SE0 = {fmt(st.alt.scale)}")]
        if p["continuity"]:
            extra.append(("continuity correction", f"(1/n1 + 1/n2)/2 = {fmt((1 / n1 + 1 / n2) / 2)} "
                          f"added to |critical difference|, {fmt(st.shift)} in z units"))
        return Explanation(
            se=(f"SE0 = √(p̄(1 − p̄)(1/n1 + 1/n2)) with p̄ = {fmt(pbar)}: "
                f"√({fmt(pbar)}·{fmt(1 - pbar)}·(1/{fmt(n1)} + 1/{fmt(n2)})) = {fmt(st.se)}"),
            null="Z ~ N(0, 1)", alt=f"Z ~ N({fmt(st.noncentrality)}, {fmt(st.alt.scale)}²) with p2 = {fmt(p2)}",
            noncentrality=f"λ = (p2 − p1)/SE0 = {fmt(p2 - p1)}/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=extra)


@register
class TwoProportionsArcsine(_TwoProportions):
    id = "two-proportions-arcsine"
    title = "Two proportions (arcsine transform, Cohen's h)"
    estimate_label = "ĥ = 2·asin√p̂2 − 2·asin√p̂1"
    test = "z test on the arcsine-square-root transformed proportions"
    method = ("approximate: 2·asin√p̂ has variance 1/n, so Z = ĥ/√(1/n1 + 1/n2) ~ N(h/√(1/n1 + 1/n2), 1) "
              "(Cohen 1988, ch. 6)")
    notes = ("The data-unit scale of this design is Cohen's h (arcsine units), not a difference in "
             "proportions.",)
    params = (_prop("p1", "proportion in group 1 p1", 0.3, "proportion with the outcome in group 1 (control)"),
              DELTA_P, RATIO)

    def statistic(self, p, sizes):
        n1, n2 = sizes
        h = self.standardized(p)
        se = np.sqrt(1 / n1 + 1 / n2)
        nc = h / se
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda t: t * se)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        h = self.standardized(p)
        return Explanation(
            se=f"SE = √(1/n1 + 1/n2) = √(1/{fmt(n1)} + 1/{fmt(n2)}) = {fmt(st.se)} (arcsine units)",
            null="Z ~ N(0, 1)", alt=f"Z ~ N({fmt(st.noncentrality)}, 1)",
            noncentrality=f"λ = h/SE = {fmt(h)}/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("Cohen's h", f"2·asin√{fmt(p['p1'] + p['delta'])} − 2·asin√{fmt(p['p1'])} = {fmt(h)}")])
