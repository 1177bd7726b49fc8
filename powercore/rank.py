"""Rank tests (Wilcoxon–Mann–Whitney, Wilcoxon signed-rank) through their efficiency against the t test."""
from __future__ import annotations

import math

import numpy as np
from scipy.special import gammaln

from .design import RATIO, TWO_GROUP_N, Design, Explanation, Statistic, TwoGroups, fmt, register
from .distributions import StudentT
from .spec import NSpec, ParamSpec
from .standard import PerSD

__all__ = ["ARE", "PARENTS", "SignedRank", "WilcoxonMannWhitney", "are_of", "efficiency"]

# Asymptotic relative efficiency of the Wilcoxon tests to the t test for a shift in a
# parent distribution (Hodges and Lehmann 1956; Lehmann 1975, ch. 2): 12σ²(∫f²)².
ARE = {"normal": 3 / math.pi, "uniform": 1.0, "logistic": math.pi ** 2 / 9, "laplace": 1.5}


def are_of(parent: str) -> float:
    """The ARE of the Wilcoxon tests to the t test for a named parent distribution."""
    try:
        return ARE[parent]
    except KeyError:
        raise ValueError(f"parent must be one of {sorted(ARE)}, got {parent!r}") from None


#: the parent distributions offered by name, and "other" for an ARE typed by the planner
PARENTS = (*ARE, "other")

PARENT_SPEC = ParamSpec("parent", "parent distribution", "", "normal",
                        "shape of the data the rank test will see; it fixes the efficiency against the t "
                        "test (normal 3/π = 0.955, uniform 1, logistic π²/9 = 1.097, double exponential "
                        "(Laplace) 1.5) and the distribution simulated; choose other to type the ARE",
                        kind="choice", choices=PARENTS)

ARE_SPEC = ParamSpec("are", "efficiency against the t test (ARE)", "ratio", ARE["normal"],
                     "asymptotic relative efficiency of the rank test to the t test, used when the parent "
                     "distribution is other (for a named parent it is that parent's value); never below "
                     "0.864 for a shift in any continuous parent (Hodges and Lehmann 1956)",
                     low=0.864, low_closed=True, high=100.0, soft=(0.864, 2.0), step=0.001,
                     used_when=("parent", "other"))


def efficiency(p) -> float:
    """The ARE a rank design uses: the named parent's, or the typed ``are`` when the parent is other."""
    parent = p.get("parent", "other")
    return p["are"] if parent == "other" else ARE[parent]


def _are_text(p) -> str:
    parent = p.get("parent", "other")
    where = "typed" if parent == "other" else f"{parent} parent"
    return f"ARE = {fmt(efficiency(p))} ({where})"


def _parent_for(are) -> str:
    """The named parent whose ARE is ``are`` (to 1e-9), else "other": reads records made before ``parent``."""
    for name, value in ARE.items():
        if abs(float(are) - value) <= 1e-9:
            return name
    return "other"


COMMON_NOTES = ("Approximation by efficiency: power is that of the t test with n·ARE observations in place "
                "of n (Lehmann 1975). Choose the parent distribution you expect (it sets the ARE), or "
                "other to type the ARE; are_of(name) gives the standard values.",
                "The rank tests are discrete: with very small groups some levels cannot be reached at all "
                "(the signed-rank test with 5 pairs cannot reject two-sided at α = 0.05: its smallest "
                "p-value is 2/2^5 = 0.0625). Power is set to 0 wherever α is below the smallest p-value "
                "the exact test can give, so the sample size found is never one at which the test "
                "cannot reject.",
                "The critical value in data units is a shift on the t test's scale, with the planned SD.")


def _both_tails(one_tail, direction):
    """The smallest reachable level from the smallest one-tailed p-value (doubled when two-sided)."""
    return np.minimum(2 * one_tail, 1.0) if direction == "two-sided" else one_tail


class _Rank(PerSD, Design):
    family = "rank tests"
    statistic_symbol = "t"
    standardized_name = "d"
    effect_label = "shift δ"

    def normalize(self, p, given):
        p = dict(p)
        if "parent" not in given and "are" in given:   # a record from before the parent choice
            p["parent"] = _parent_for(p["are"])
        if p["parent"] != "other":
            p["are"] = ARE[p["parent"]]
        return p


@register
class WilcoxonMannWhitney(TwoGroups, _Rank):
    id = "wilcoxon-mann-whitney"
    title = "Two groups, rank test (Wilcoxon–Mann–Whitney)"
    estimate_label = "estimated shift (t-test scale)"
    test = "Wilcoxon–Mann–Whitney rank-sum test of a shift between two groups"
    method = ("approximate: noncentral t of the pooled t test at effective sizes ARE·n1 and ARE·n2, "
              "df = ARE·(n1 + n2) − 2 (asymptotic relative efficiency, Hodges and Lehmann 1956)")
    notes = ("Checked against 100 000 simulated studies with scipy.stats.mannwhitneyu "
             "(tests/test_designs_more.py). Normal data, 20 per group, d = 0.8: 0.672 against 0.666 "
             "simulated. Other parents reach their ARE only as n grows, so the approximation overstates "
             "power at small n: double exponential (ARE 1.5) by 0.051 at 20 per group, 0.025 at 50 and "
             "0.011 at 100; uniform (ARE 1) by 0.067, 0.048 and 0.039; logistic by 0.017, 0.008 and 0.005 "
             "(power near 0.6 in each case). Treat a non-normal ARE as optimistic for small studies.",
             *COMMON_NOTES)
    params = (ParamSpec("delta", "shift δ", "data units", 5.0,
                        "how far group 2's distribution is shifted from group 1's", soft=(-20.0, 20.0), step=0.1),
              ParamSpec("sd", "common SD σ", "data units", 10.0,
                        "SD of single observations, the same in both groups", low=0.0, soft=(0.5, 40.0), step=0.1),
              PARENT_SPEC, ARE_SPEC, RATIO)
    n = TWO_GROUP_N

    def spread(self, p):
        return p["sd"]

    def statistic(self, p, sizes):
        n1, n2 = sizes
        a = efficiency(p)
        se = p["sd"] * np.sqrt(1 / n1 + 1 / n2) / np.sqrt(a)
        nc = p["delta"] / se
        df = a * (n1 + n2) - 2
        return Statistic(StudentT(df), StudentT(df, nc), se, nc, lambda t: t * se)

    def smallest_level(self, p, sizes, direction):
        # the most extreme of the C(n1 + n2, n1) equally likely rankings under H0 (no ties)
        n1, n2 = (np.asarray(x, dtype=float) for x in sizes)
        return _both_tails(np.exp(gammaln(n1 + 1) + gammaln(n2 + 1) - gammaln(n1 + n2 + 1)), direction)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        a = efficiency(p)
        df = fmt(a * (n1 + n2) - 2)
        return Explanation(
            se=(f"SE = σ·√(1/n1 + 1/n2)/√ARE = {fmt(p['sd'])}·√(1/{fmt(n1)} + 1/{fmt(n2)})/√{fmt(a)} "
                f"= {fmt(st.se)}"),
            null=f"T ~ t({df})", alt=f"T ~ noncentral t({df}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("effective sizes", f"{_are_text(p)}; ARE·n1 = {fmt(a * n1)}, ARE·n2 = {fmt(a * n2)}; "
                    f"df = ARE·(n1 + n2) − 2 = {df}")])


@register
class SignedRank(_Rank):
    id = "wilcoxon-signed-rank"
    title = "Paired or one sample, rank test (Wilcoxon signed-rank)"
    standardized_name = "d_z"
    estimate_label = "estimated shift (t-test scale)"
    test = "Wilcoxon signed-rank test of a shift in the paired differences (or of one sample about a value)"
    method = ("approximate: noncentral t of the one-sample t test at ARE·n observations, df = ARE·n − 1 "
              "(asymptotic relative efficiency, Hodges and Lehmann 1956); the differences are assumed "
              "symmetric about δ")
    notes = ("Checked against 100 000 simulated studies with scipy.stats.wilcoxon "
             "(tests/test_designs_more.py). Normal differences, 20 pairs, d_z = 0.6: 0.699 against 0.697 "
             "simulated. Double exponential differences (ARE 1.5), 20 pairs, d_z = 0.5: 0.754 against "
             "0.666, so the approximation overstates power by 0.09 at this size.",) + COMMON_NOTES
    params = (ParamSpec("delta", "shift δ", "data units", 5.0,
                        "centre of the within-pair differences (or of the sample minus the null value)",
                        soft=(-20.0, 20.0), step=0.1),
              ParamSpec("sd_diff", "SD of the differences σ_d", "data units", 10.0,
                        "SD of the within-pair differences", low=0.0, soft=(0.5, 40.0), step=0.1),
              PARENT_SPEC, ARE_SPEC)
    n = NSpec("pairs", "pairs", 2, 20, (2, 200),
              "number of pairs (or of observations, for one sample)")

    def spread(self, p):
        return p["sd_diff"]

    def statistic(self, p, sizes):
        n = sizes[0]
        a = efficiency(p)
        se = p["sd_diff"] / np.sqrt(a * n)
        nc = p["delta"] / se
        df = a * n - 1
        return Statistic(StudentT(df), StudentT(df, nc), se, nc, lambda t: t * se)

    def smallest_level(self, p, sizes, direction):
        # all n signs alike: 1 of the 2^n equally likely sign patterns under H0 (no zeros, no ties)
        return _both_tails(np.exp2(-np.asarray(sizes[0], dtype=float)), direction)

    def explain(self, p, sizes, st):
        n = sizes[0]
        a = efficiency(p)
        df = fmt(a * n - 1)
        return Explanation(
            se=f"SE = σ_d/√(ARE·n) = {fmt(p['sd_diff'])}/√({fmt(a)}·{fmt(n)}) = {fmt(st.se)}",
            null=f"T ~ t({df})", alt=f"T ~ noncentral t({df}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("effective size", f"{_are_text(p)}; ARE·n = {fmt(a * n)}; df = ARE·n − 1 = {df}")])
