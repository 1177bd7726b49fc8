"""One-way analysis of variance across k equal groups (F test)."""
from __future__ import annotations

import numpy as np

from ._whole import WholeParams
from .design import Design, Explanation, Statistic, fmt, register
from .distributions import FDist
from .spec import NSpec, ParamSpec
from .standard import PerSD

__all__ = ["OneWayAnova", "f_from_means", "sd_of_means"]


def sd_of_means(means) -> float:
    """σ_m: the SD of the group means about their unweighted mean, divisor k (Cohen 1988, §8.2)."""
    m = np.asarray(means, dtype=float)
    if m.ndim != 1 or m.size < 2:
        raise ValueError(f"means must be a list of at least 2 group means, got {means!r}")
    return float(np.sqrt(np.mean((m - m.mean()) ** 2)))


def f_from_means(means, sd) -> float:
    """Cohen's f = σ_m/σ from the planned group means and the common within-group SD σ."""
    if not sd > 0:
        raise ValueError(f"sd must be > 0, got {sd!r}")
    return sd_of_means(means) / float(sd)


K = ParamSpec("k", "number of groups k", "groups", 3.0,
              "number of groups compared, all of the same size n", low=2.0, high=100.0,
              low_closed=True, high_closed=True, soft=(2.0, 10.0), step=1.0)


@register
class OneWayAnova(PerSD, WholeParams, Design):
    id = "anova-oneway"
    title = "Several means (one-way ANOVA F test)"
    family = "several groups"
    statistic_symbol = "F"
    standardized_name = "f"
    effect_label = "SD of the group means σ_m"
    estimate_label = "SD of the sample group means s_m"
    test = "one-way ANOVA F test of equal means across k groups of equal size"
    method = ("exact for normal data with a common SD: F is noncentral F with (k − 1, N − k) degrees of "
              "freedom and noncentrality λ = f²·N, N = k·n (Cohen 1988, ch. 8)")
    notes = ("Cohen's f = σ_m/σ, with σ_m the SD of the k group means about their unweighted mean "
             "(divisor k); f_from_means(means, sd) computes it from planned means. Cohen's "
             "conventional small, medium and large f are 0.10, 0.25 and 0.40.",
             "Groups are of equal size n; the total is N = k·n.",
             "Exact, and checked against simulation of scipy.stats.f_oneway (tests/test_designs_more.py): at "
             "k = 4, n = 20, f = 0.3 power is 0.5786 and 100 000 simulated studies gave 0.5785 (SE 0.0016).",
             "The critical value in data units is the SD of the sample means, s_m = σ·√(F(k − 1)/(k·n)), "
             "with the planned σ in place of the pooled sample SD.")
    params = (ParamSpec("delta", "SD of the group means σ_m", "data units", 2.5,
                        "SD of the k true group means about their unweighted mean (divisor k); 0 is the null",
                        low=0.0, low_closed=True, soft=(0.0, 10.0), step=0.1),
              ParamSpec("sd", "common SD σ", "data units", 10.0,
                        "SD of single observations within each group, the same in every group",
                        low=0.0, soft=(0.5, 40.0), step=0.1),
              K)
    n = NSpec("subjects per group", "subjects in all groups", 2, 20, (2, 200),
              "number of subjects in each of the k equal groups; the total is N = k·n")
    directions = ("upper",)
    whole_params = ("k",)

    def effect_bounds(self, p):
        return 0.0, np.inf

    @staticmethod
    def groups(p) -> int:
        return int(round(float(p["k"])))

    def group_sizes(self, p, n, integer=True):
        return (np.asarray(n, dtype=float),) * self.groups(p)

    def statistic(self, p, sizes):
        n, k = sizes[0], len(sizes)
        total = k * n
        f = self.standardized(p)
        lam = f * f * total
        sd = p["sd"]
        return Statistic(FDist(k - 1, total - k), FDist(k - 1, total - k, lam), sd / np.sqrt(n), lam,
                         lambda x: sd * np.sqrt(np.maximum(x, 0) * (k - 1) / (k * n)))

    def explain(self, p, sizes, st):
        n, k = sizes[0], len(sizes)
        total = k * n
        f = float(self.standardized(p))
        d1, d2 = fmt(k - 1), fmt(total - k)
        return Explanation(
            se=f"SE of one group mean = σ/√n = {fmt(p['sd'])}/√{fmt(n)} = {fmt(st.se)}",
            null=f"F ~ F({d1}, {d2})",
            alt=f"F ~ noncentral F({d1}, {d2}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = f²·N = {fmt(f)}²·{fmt(total)} = {fmt(st.noncentrality)}",
            extra=[("Cohen's f", f"f = σ_m/σ = {fmt(p['delta'])}/{fmt(p['sd'])} = {fmt(f)}"),
                   ("degrees of freedom", f"k − 1 = {d1} and N − k = {fmt(total)} − {k} = {d2}"),
                   ("data units", "s_m = σ·√(F·(k − 1)/(k·n)): the SD of the k sample means (divisor k)")])
