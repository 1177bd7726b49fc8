"""Test of a correlation coefficient (Fisher z)."""
from __future__ import annotations

import numpy as np

from .design import Design, Explanation, Statistic, fmt, register
from .distributions import Normal, SampleCorrelation
from .spec import NSpec, ParamSpec

__all__ = ["CorrelationExact", "CorrelationFisher"]


class _Correlation(Design):
    family = "correlation"
    standardized_name = "q"
    estimate_label = "sample correlation r"
    effect_label = "ρ − ρ0"
    params = (ParamSpec("rho0", "correlation under the null ρ0", "correlation", 0.0,
                        "correlation under the null hypothesis", low=-1.0, high=1.0, soft=(-0.9, 0.9)),
              ParamSpec("delta", "difference ρ − ρ0", "correlation", 0.3,
                        "true correlation minus ρ0", low=-2.0, high=2.0, soft=(-0.9, 0.9)))
    n = NSpec("pairs of observations", "pairs of observations", 4, 50, (4, 300),
              "number of units, each measured on both variables")

    def effect_bounds(self, p):
        return -1 - p["rho0"], 1 - p["rho0"]

    def standardized(self, p):
        return np.arctanh(p["rho0"] + np.asarray(p["delta"])) - np.arctanh(p["rho0"])

    def from_standardized(self, p, s):
        return np.tanh(np.arctanh(p["rho0"]) + np.asarray(s)) - p["rho0"]

    def effect_scale(self, p):
        return 0.3


@register
class CorrelationFisher(_Correlation):
    id = "correlation-fisher"
    title = "Correlation (Fisher z)"
    test = "z test on Fisher's z = atanh(r)"
    method = ("approximate: atanh(r) is normal with mean atanh(ρ) and variance 1/(n − 3) (Fisher 1921); "
              "the small bias ρ/(2(n − 1)) is ignored")
    notes = ("Approximation: at n = 20 Fisher's z understates power by up to about 0.022 against the "
             "exact distribution of r (ρ = 0.5, two-sided α = 0.05; tests/test_monte_carlo.py measures it); "
             "use the exact design for small n.",)

    def statistic(self, p, sizes):
        n = sizes[0]
        se = 1 / np.sqrt(n - 3)
        q = self.standardized(p)
        nc = q / se
        z0 = np.arctanh(p["rho0"])
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda t: np.tanh(z0 + t * se))

    def explain(self, p, sizes, st):
        n = sizes[0]
        q = self.standardized(p)
        return Explanation(
            se=f"SE = 1/√(n − 3) = 1/√{fmt(n - 3)} = {fmt(st.se)} (Fisher z units)",
            null="Z ~ N(0, 1)", alt=f"Z ~ N({fmt(st.noncentrality)}, 1)",
            noncentrality=f"λ = (atanh ρ − atanh ρ0)/SE = {fmt(q)}/{fmt(st.se)} = {fmt(st.noncentrality)}")


@register
class CorrelationExact(_Correlation):
    id = "correlation-exact"
    title = "Correlation (exact distribution of r)"
    statistic_symbol = "r"
    test = "test of Pearson's r against ρ0 using the exact null distribution of r (the t test when ρ0 = 0)"
    method = ("exact for bivariate normal data: density of r from Hotelling (1953), integrated "
              "numerically; critical values from the exact null distribution")
    notes = ("Slower than the Fisher z design (numerical integration at every point); use it to "
             "check the approximation at small n.",)

    def statistic(self, p, sizes):
        n = sizes[0]
        rho0 = p["rho0"]
        rho1 = rho0 + np.asarray(p["delta"])
        se = 1 / np.sqrt(n - 3)
        nc = self.standardized(p) / se
        return Statistic(SampleCorrelation(n, rho0), SampleCorrelation(n, rho1), se, nc, lambda r: r)

    def explain(self, p, sizes, st):
        n = sizes[0]
        rho1 = p["rho0"] + p["delta"]
        return Explanation(
            se=f"SE of atanh(r) ≈ 1/√(n − 3) = {fmt(st.se)} (for reference; the test uses r itself)",
            null=f"r ~ exact distribution with n = {fmt(n)}, ρ = {fmt(p['rho0'])}",
            alt=f"r ~ exact distribution with n = {fmt(n)}, ρ = {fmt(rho1)}",
            noncentrality=f"(atanh ρ − atanh ρ0)·√(n − 3) = {fmt(st.noncentrality)} (reference only)")
