"""Tests of means: one sample, paired, two samples (z, pooled t, Welch)."""
from __future__ import annotations

import numpy as np

from .design import RATIO, TWO_GROUP_N, Design, Explanation, Statistic, TwoGroups, fmt, register
from .distributions import Normal, StudentT
from .spec import NSpec, ParamSpec
from .standard import PerRmsSD, PerSD

__all__ = ["MeanT", "MeanZ", "PairedT", "TwoMeansT", "TwoMeansWelch", "TwoMeansZ"]


def _delta(doc: str) -> ParamSpec:
    return ParamSpec("delta", "difference δ", "data units", 5.0, doc, soft=(-20.0, 20.0), step=0.1)


def _sd(name: str, label: str, doc: str) -> ParamSpec:
    return ParamSpec(name, label, "data units", 10.0, doc, low=0.0, soft=(0.5, 40.0), step=0.1)


MU0 = ParamSpec("mu0", "mean under the null μ0", "data units", 0.0,
                "mean under the null hypothesis; only shifts the data-unit scale",
                soft=(-100.0, 100.0), step=0.1)

ONE_SAMPLE_N = NSpec("observations", "observations", 2, 25, (2, 200), "number of observations")


class _OneMean(PerSD, Design):
    family = "means"
    estimate_label = "sample mean x̄"
    params = (_delta("true mean minus μ0"), _sd("sd", "standard deviation σ", "SD of single observations"), MU0)

    def _se(self, p, sizes):
        return p["sd"] / np.sqrt(sizes[0])


@register
class MeanZ(_OneMean):
    id = "mean-z"
    title = "One mean, σ known (z test)"
    test = "one-sample z test with known σ"
    method = "exact: normal sampling distribution of the mean"

    def statistic(self, p, sizes):
        se = self._se(p, sizes)
        nc = p["delta"] / se
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda t: p["mu0"] + t * se)

    def explain(self, p, sizes, st):
        n = sizes[0]
        return Explanation(
            se=f"SE = σ/√n = {fmt(p['sd'])}/√{fmt(n)} = {fmt(st.se)}",
            null="Z ~ N(0, 1)", alt=f"Z ~ N({fmt(st.noncentrality)}, 1)",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}")


@register
class MeanT(_OneMean):
    id = "mean-t"
    title = "One mean, σ estimated (t test)"
    statistic_symbol = "t"
    test = "one-sample t test"
    method = "exact: noncentral t with n − 1 degrees of freedom"
    notes = ("The critical value in data units uses the planned σ in place of the sample SD.",)

    def statistic(self, p, sizes):
        n = sizes[0]
        se = self._se(p, sizes)
        nc = p["delta"] / se
        return Statistic(StudentT(n - 1), StudentT(n - 1, nc), se, nc, lambda t: p["mu0"] + t * se)

    def explain(self, p, sizes, st):
        n = sizes[0]
        df = fmt(n - 1)
        return Explanation(
            se=f"SE = σ/√n = {fmt(p['sd'])}/√{fmt(n)} = {fmt(st.se)}",
            null=f"T ~ t({df})", alt=f"T ~ noncentral t({df}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}")


@register
class PairedT(PerSD, Design):
    id = "paired-t"
    title = "Paired means (paired t test)"
    family = "means"
    statistic_symbol = "t"
    standardized_name = "d_z"
    estimate_label = "mean difference d̄"
    test = "paired t test on the within-pair differences"
    method = "exact: noncentral t with (pairs − 1) degrees of freedom"
    notes = ("SD of the differences σ_d = σ·√(2(1 − ρ)) for single-measurement SD σ and within-pair "
             "correlation ρ, so d_z = d/√(2(1 − ρ)) where d = δ/σ.",
             "The critical value in data units uses the planned σ_d in place of the sample SD.")
    params = (_delta("mean of the within-pair differences"),
              _sd("sd_diff", "SD of the differences σ_d", "SD of the within-pair differences"))
    n = NSpec("pairs", "pairs", 2, 20, (2, 200), "number of pairs (each pair measured twice)")
    sd_param = "sd_diff"

    def statistic(self, p, sizes):
        n = sizes[0]
        se = p["sd_diff"] / np.sqrt(n)
        nc = p["delta"] / se
        return Statistic(StudentT(n - 1), StudentT(n - 1, nc), se, nc, lambda t: t * se)

    def explain(self, p, sizes, st):
        n = sizes[0]
        df = fmt(n - 1)
        return Explanation(
            se=f"SE = σ_d/√pairs = {fmt(p['sd_diff'])}/√{fmt(n)} = {fmt(st.se)}",
            null=f"T ~ t({df})", alt=f"T ~ noncentral t({df}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}")


class _TwoMeans(TwoGroups, Design):
    family = "means"
    estimate_label = "difference in means ȳ2 − ȳ1"
    n = TWO_GROUP_N


@register
class TwoMeansZ(PerRmsSD, _TwoMeans):
    id = "two-means-z"
    title = "Two means, σ known (z test)"
    test = "two-sample z test with known SDs"
    method = "exact: normal sampling distribution of the difference in means"
    params = (_delta("mean of group 2 minus mean of group 1"),
              _sd("sd1", "SD in group 1 σ1", "SD of single observations in group 1"),
              _sd("sd2", "SD in group 2 σ2", "SD of single observations in group 2"), RATIO)

    def statistic(self, p, sizes):
        n1, n2 = sizes
        se = np.sqrt(p["sd1"] ** 2 / n1 + p["sd2"] ** 2 / n2)
        nc = p["delta"] / se
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda t: t * se)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        return Explanation(
            se=(f"SE = √(σ1²/n1 + σ2²/n2) = √({fmt(p['sd1'])}²/{fmt(n1)} + {fmt(p['sd2'])}²/{fmt(n2)}) "
                f"= {fmt(st.se)}"),
            null="Z ~ N(0, 1)", alt=f"Z ~ N({fmt(st.noncentrality)}, 1)",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("standardized effect", "d = δ/√((σ1² + σ2²)/2)")])


@register
class TwoMeansT(PerSD, _TwoMeans):
    id = "two-means-t"
    title = "Two means, common σ (pooled t test)"
    statistic_symbol = "t"
    test = "two-sample t test with pooled variance"
    method = "exact: noncentral t with n1 + n2 − 2 degrees of freedom"
    notes = ("The critical value in data units uses the planned σ in place of the pooled sample SD.",)
    params = (_delta("mean of group 2 minus mean of group 1"),
              _sd("sd", "common SD σ", "SD of single observations, the same in both groups"), RATIO)

    def statistic(self, p, sizes):
        n1, n2 = sizes
        se = p["sd"] * np.sqrt(1 / n1 + 1 / n2)
        nc = p["delta"] / se
        df = n1 + n2 - 2
        return Statistic(StudentT(df), StudentT(df, nc), se, nc, lambda t: t * se)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        df = fmt(n1 + n2 - 2)
        return Explanation(
            se=f"SE = σ·√(1/n1 + 1/n2) = {fmt(p['sd'])}·√(1/{fmt(n1)} + 1/{fmt(n2)}) = {fmt(st.se)}",
            null=f"T ~ t({df})", alt=f"T ~ noncentral t({df}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}")


def welch_df(v1, v2, n1, n2):
    """Welch–Satterthwaite degrees of freedom from the variances of the two group means."""
    return (v1 + v2) ** 2 / (v1 ** 2 / (n1 - 1) + v2 ** 2 / (n2 - 1))


@register
class TwoMeansWelch(PerRmsSD, _TwoMeans):
    id = "two-means-welch"
    title = "Two means, unequal SDs (Welch test)"
    statistic_symbol = "t"
    test = "Welch's unequal-variance t test"
    method = ("approximate: noncentral t with the Welch–Satterthwaite degrees of freedom evaluated "
              "at the planned SDs (Satterthwaite 1946; Welch 1947)")
    notes = ("Approximation: the real df are random; fixing them at the planned SDs makes power "
             "accurate to about ±0.01 against simulation for 10 or more per group "
             "(tests/test_simulation.py measures it).",
             "The critical value in data units uses the planned SDs.")
    min_group2 = 2
    params = (_delta("mean of group 2 minus mean of group 1"),
              _sd("sd1", "SD in group 1 σ1", "SD of single observations in group 1"),
              _sd("sd2", "SD in group 2 σ2", "SD of single observations in group 2"), RATIO)

    def statistic(self, p, sizes):
        n1, n2 = sizes
        v1, v2 = p["sd1"] ** 2 / n1, p["sd2"] ** 2 / n2
        se = np.sqrt(v1 + v2)
        nc = p["delta"] / se
        df = welch_df(v1, v2, n1, n2)
        return Statistic(StudentT(df), StudentT(df, nc), se, nc, lambda t: t * se)

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        v1, v2 = p["sd1"] ** 2 / n1, p["sd2"] ** 2 / n2
        df = fmt(welch_df(v1, v2, n1, n2))
        return Explanation(
            se=(f"SE = √(σ1²/n1 + σ2²/n2) = √({fmt(p['sd1'])}²/{fmt(n1)} + {fmt(p['sd2'])}²/{fmt(n2)}) "
                f"= {fmt(st.se)}"),
            null=f"T ~ t({df})", alt=f"T ~ noncentral t({df}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = δ/SE = {fmt(p['delta'])}/{fmt(st.se)} = {fmt(st.noncentrality)}",
            extra=[("degrees of freedom", f"Welch–Satterthwaite: (v1 + v2)²/(v1²/(n1−1) + v2²/(n2−1)) = {df}")])
