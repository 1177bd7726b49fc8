"""Multiple regression: the F test of R², and of an increase in R² for added predictors."""
from __future__ import annotations

import numpy as np

from ._whole import WholeParams
from .design import Design, Explanation, Statistic, fmt, register
from .distributions import FDist
from .spec import NSpec, ParamSpec

__all__ = ["RegressionR2", "RegressionR2Change", "f2_from_r2"]


def f2_from_r2(r2_full, r2_base=0.0):
    """Cohen's f² = (R²_full − R²_base)/(1 − R²_full) (Cohen 1988, §9.2); with no base, R²/(1 − R²)."""
    full, base = np.asarray(r2_full, dtype=float), np.asarray(r2_base, dtype=float)
    if np.any((full < base) | (base < 0) | (full >= 1)):
        raise ValueError(f"need 0 ≤ r2_base ≤ r2_full < 1, got r2_base = {r2_base!r}, r2_full = {r2_full!r}")
    return (full - base) / (1 - full)


def _count(name, label, default, doc, low):
    return ParamSpec(name, label, "predictors", default, doc, low=low, high=200.0, low_closed=True,
                     high_closed=True, soft=(low if low > 0 else 0.0, 10.0), step=1.0)


U = _count("u", "predictors tested u", 3.0, "number of predictors whose coefficients the F test sets to 0", 1.0)
V = _count("v", "predictors already in the model v", 2.0,
           "number of predictors (covariates) in the base model, kept in both models", 0.0)
R2_NOTES = ("Noncentrality λ = f²·N, N the total sample size. This is Cohen's (1988, ch. 9) "
            "λ = f²(u + v_e + 1), v_e the error df, when no predictors are held fixed, and it is exact for "
            "fixed predictors whose own spread (divisor N) gives the planned f². Another convention uses "
            "the error df, λ = f²·(N − u − v − 1); the ratio of the two is (N − u − v − 1)/N, which matters "
            "at small N: at u = 3, f² = 0.15, N = 40 power is 0.471 with f²·N and 0.428 with "
            "f²·(N − u − 1); at N = 200 (f² = 0.03, power near 0.5) they differ by 0.009.",
            "Random predictors: with normal predictors drawn afresh in each study, simulation of the real "
            "F test (tests/test_designs_more.py) gives a little less power than f²·N: 0.455 (SE 0.0016) "
            "against 0.471 at u = 3, f² = 0.15, N = 40, and 0.492 against 0.514 for ΔR² = 0.05 over "
            "R²_base = 0.2 with u = 2, v = 3, N = 80. Plan with a few more observations when the "
            "predictors are not fixed by design.")


class _Regression(WholeParams, Design):
    family = "regression"
    statistic_symbol = "F"
    standardized_name = "f²"
    directions = ("upper",)
    whole_params = ("u",)
    n = NSpec("observations", "observations", 3, 60, (5, 300),
              "total number of observations N (each with the outcome and every predictor)")

    @staticmethod
    def counts(p) -> tuple[int, int]:
        return int(round(float(p["u"]))), int(round(float(p.get("v", 0.0))))

    def base(self, p):
        return p.get("r2_base", 0.0)

    def min_n(self, p):
        u, v = self.counts(p)
        return max(self.n.minimum, u + v + 2)   # at least one error degree of freedom

    def effect_bounds(self, p):
        return 0.0, 1.0 - self.base(p)

    def standardized(self, p):
        d = np.asarray(p["delta"], dtype=float)
        return d / (1 - self.base(p) - d)

    def from_standardized(self, p, s):
        s = np.asarray(s, dtype=float)
        return s * (1 - self.base(p)) / (1 + s)

    def effect_scale(self, p):
        return 0.1 * (1 - self.base(p))

    def statistic(self, p, sizes):
        n = sizes[0]
        u, v = self.counts(p)
        df2 = n - u - v - 1
        f2 = self.standardized(p)
        lam = f2 * n
        b = self.base(p)
        return Statistic(FDist(u, df2), FDist(u, df2, lam), 1 / np.sqrt(df2), lam,
                         lambda x: np.maximum(x, 0) * u * (1 - b) / (df2 + np.maximum(x, 0) * u))

    def explain(self, p, sizes, st):
        n = sizes[0]
        u, v = self.counts(p)
        df2 = n - u - v - 1
        f2 = float(self.standardized(p))
        return Explanation(
            se=(f"SE of f̂ ≈ 1/√(N − u − v − 1) = 1/√{fmt(df2)} = {fmt(st.se)} (for u = 1, f̂·√(error df) "
                "is |t|; for reference, the test uses F)"),
            null=f"F ~ F({u}, {fmt(df2)})",
            alt=f"F ~ noncentral F({u}, {fmt(df2)}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = f²·N = {fmt(f2)}·{fmt(n)} = {fmt(st.noncentrality)}",
            extra=[("Cohen's f²", self.f2_text(p, f2)),
                   ("degrees of freedom", f"u = {u} and N − u − v − 1 = {fmt(n)} − {u} − {v} − 1 = {fmt(df2)}"),
                   ("alternative convention", f"λ = f²·(N − u − v − 1) = {fmt(f2 * df2)} would give lower power"),
                   ("data units", self.data_text)])


@register
class RegressionR2(_Regression):
    id = "regression-r2"
    title = "Multiple regression: test of R² (F test)"
    effect_label = "R²"
    estimate_label = "sample R²"
    test = "F test that all u regression coefficients are 0 (R² = 0), with an intercept"
    method = ("noncentral F with (u, N − u − 1) degrees of freedom and λ = f²·N, f² = R²/(1 − R²) "
              "(Cohen 1988, ch. 9); exact for fixed predictors with λ read as f²·N")
    notes = ("f2_from_r2(r2) gives Cohen's f² = R²/(1 − R²). Cohen's conventional small, medium and large "
             "f² are 0.02, 0.15 and 0.35.",) + R2_NOTES
    data_text = "sample R² = uF/(uF + N − u − 1)"
    params = (ParamSpec("delta", "R² of the u predictors", "proportion of variance", 0.13,
                        "proportion of the outcome's variance that the u predictors explain; 0 is the null",
                        low=0.0, high=1.0, low_closed=True, soft=(0.0, 0.6), step=0.005),
              U)

    def f2_text(self, p, f2):
        return f"f² = R²/(1 − R²) = {fmt(p['delta'])}/{fmt(1 - p['delta'])} = {fmt(f2)}"


@register
class RegressionR2Change(_Regression):
    id = "regression-r2-change"
    title = "Multiple regression: increase in R² for added predictors (F test)"
    effect_label = "increase in R² (ΔR²)"
    estimate_label = "sample ΔR² (base R² at its planned value)"
    test = "partial F test that the u added coefficients are 0, with v predictors and an intercept kept"
    method = ("noncentral F with (u, N − u − v − 1) degrees of freedom and λ = f²·N, "
              "f² = ΔR²/(1 − R²_base − ΔR²) (Cohen 1988, ch. 9, error model 1)")
    notes = ("f2_from_r2(r2_full, r2_base) gives Cohen's f² = (R²_full − R²_base)/(1 − R²_full).",
             "With v predictors held fixed Cohen's λ = f²(u + v_e + 1) is f²·(N − v), between f²·N used "
             "here and f²·(N − u − v − 1).") + R2_NOTES
    data_text = "sample ΔR² = uF(1 − R²_base)/(N − u − v − 1 + uF), with R²_base at its planned value"
    params = (ParamSpec("delta", "increase in R² (ΔR²)", "proportion of variance", 0.05,
                        "R² of the full model minus R² of the base model; 0 is the null",
                        low=0.0, high=1.0, low_closed=True, soft=(0.0, 0.4), step=0.005),
              ParamSpec("r2_base", "R² of the base model", "proportion of variance", 0.2,
                        "proportion of variance explained by the v predictors already in the model",
                        low=0.0, high=1.0, low_closed=True, soft=(0.0, 0.5), step=0.01),
              U, V)
    whole_params = ("u", "v")

    def f2_text(self, p, f2):
        full = p["r2_base"] + p["delta"]
        return (f"f² = ΔR²/(1 − R²_full) = {fmt(p['delta'])}/(1 − {fmt(full)}) = {fmt(f2)}, "
                f"R²_full = R²_base + ΔR² = {fmt(full)}")
