"""Chi-square tests of goodness of fit and of independence, through Cohen's w."""
from __future__ import annotations

import numpy as np

from ._whole import WholeParams
from .design import Design, Explanation, Statistic, fmt, register
from .distributions import ChiSquare
from .spec import NSpec, ParamSpec

__all__ = ["ChiSquareGoodnessOfFit", "ChiSquareIndependence", "w_from_proportions", "w_from_table"]


def _proportions(x, name: str) -> np.ndarray:
    a = np.asarray(x, dtype=float)
    if a.size < 2 or not np.all(np.isfinite(a)) or np.any(a < 0) or abs(a.sum() - 1) > 1e-9:
        raise ValueError(f"{name} must be at least 2 proportions, each ≥ 0, summing to 1, got {x!r}")
    return a


def w_from_proportions(p0, p1) -> float:
    """Cohen's w for goodness of fit: √Σ (p1 − p0)²/p0 over the cells (Cohen 1988, §7.2).

    ``p0`` are the cell proportions under the null (all > 0), ``p1`` under the alternative.
    """
    a, b = _proportions(p0, "p0"), _proportions(p1, "p1")
    if a.shape != b.shape:
        raise ValueError(f"p0 and p1 must have the same cells, got shapes {a.shape} and {b.shape}")
    if np.any(a <= 0):
        raise ValueError("every null proportion p0 must be > 0")
    return float(np.sqrt(np.sum((b - a) ** 2 / a)))


def w_from_table(joint) -> float:
    """Cohen's w for independence from the alternative's joint cell proportions (an r × c table).

    The null proportions are the products of the table's own margins:
    w = √Σ (p_ij − p_i· p_·j)²/(p_i· p_·j); the test has (r − 1)(c − 1) degrees of freedom.
    """
    t = np.asarray(joint, dtype=float)
    if t.ndim != 2 or min(t.shape) < 2:
        raise ValueError(f"joint must be a table with at least 2 rows and 2 columns, got shape {t.shape}")
    _proportions(t.ravel(), "joint")
    expected = np.outer(t.sum(axis=1), t.sum(axis=0))
    if np.any(expected <= 0):
        raise ValueError("every row and column of joint must have a positive total")
    return float(np.sqrt(np.sum((t - expected) ** 2 / expected)))


W = ParamSpec("delta", "Cohen's w", "Cohen's w", 0.3,
              "effect size w = √Σ (p1 − p0)²/p0 over the cells; 0 is the null",
              low=0.0, low_closed=True, soft=(0.0, 1.0), step=0.01)


def _df(default: float, doc: str) -> ParamSpec:
    return ParamSpec("df", "degrees of freedom", "degrees of freedom", default, doc, low=1.0, high=1000.0,
                     low_closed=True, high_closed=True, soft=(1.0, 12.0), step=1.0)


class _ChiSquare(WholeParams, Design):
    family = "contingency tables"
    statistic_symbol = "X²"
    standardized_name = "w"
    effect_label = "Cohen's w"
    estimate_label = "observed ŵ = √(X²/N)"
    directions = ("upper",)
    whole_params = ("df",)
    n = NSpec("observations", "observations", 2, 100, (5, 500),
              "total number of observations N, counted over all cells")
    common_notes = ("The critical value in data units is the smallest observed ŵ = √(X²/N) that rejects.",
                    "Approximation: the noncentral chi-square is the large-sample distribution of X²; "
                    "keep every expected count at 5 or more.")

    def effect_bounds(self, p):
        return 0.0, np.inf

    def standardized(self, p):
        return np.asarray(p["delta"], dtype=float)

    def from_standardized(self, p, s):
        return np.asarray(s, dtype=float)

    def effect_scale(self, p):
        return 0.3

    def statistic(self, p, sizes):
        n = sizes[0]
        w = np.asarray(p["delta"], dtype=float)
        lam = w * w * n
        return Statistic(ChiSquare(p["df"]), ChiSquare(p["df"], lam), 1 / np.sqrt(n), lam,
                         lambda x: np.sqrt(np.maximum(x, 0) / n))

    def explain(self, p, sizes, st):
        n = sizes[0]
        df = fmt(p["df"])
        return Explanation(
            se=(f"SE of ŵ ≈ 1/√N = 1/√{fmt(n)} = {fmt(st.se)} (exact for df = 1, where √X² = ŵ√N "
                "is |normal| with unit variance)"),
            null=f"X² ~ χ²({df})",
            alt=f"X² ~ noncentral χ²({df}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = w²·N = {fmt(p['delta'])}²·{fmt(n)} = {fmt(st.noncentrality)}",
            extra=[("degrees of freedom", self.df_text(p))])


@register
class ChiSquareGoodnessOfFit(_ChiSquare):
    id = "chisquare-gof"
    title = "Goodness of fit (chi-square test, Cohen's w)"
    test = "Pearson's chi-square test of goodness of fit to fully specified cell proportions"
    method = ("approximate: X² is noncentral chi-square with df = cells − 1 and λ = w²·N under the "
              "alternative (Cohen 1988, ch. 7; the limiting power of the chi-square test, Mitra 1958)")
    notes = ("w_from_proportions(p0, p1) computes w from the null and alternative cell proportions. "
             "Cohen's conventional small, medium and large w are 0.1, 0.3 and 0.5.",
             "Checked against simulation of scipy.stats.chisquare (tests/test_designs_more.py): at N = 200, "
             "4 equal null cells, w = 0.2 the approximation gives 0.654 and 100 000 simulated studies "
             "0.655 (SE 0.0015).", *_ChiSquare.common_notes)
    params = (W, _df(3.0, "number of cells minus 1 (minus any parameters estimated from the data)"))

    def df_text(self, p):
        return f"cells − 1 = {fmt(p['df'])}, so {fmt(p['df'] + 1)} cells"


@register
class ChiSquareIndependence(_ChiSquare):
    id = "chisquare-independence"
    title = "Independence in an r × c table (chi-square test, Cohen's w)"
    test = "Pearson's chi-square test of independence in an r × c table, without continuity correction"
    method = ("approximate: X² is noncentral chi-square with df = (r − 1)(c − 1) and λ = w²·N under the "
              "alternative (Cohen 1988, ch. 7; Mitra 1958)")
    notes = ("w_from_table(joint) computes w from the alternative's joint cell proportions; the margins are "
             "estimated, which is what costs the (r − 1) + (c − 1) degrees of freedom. For a 2 × 2 table "
             "w equals |φ|.",
             "Checked against simulation of scipy.stats.chi2_contingency without Yates' correction "
             "(tests/test_designs_more.py): at N = 150, a 2 × 3 table with w = 0.243, the approximation "
             "gives 0.762 and 25 000 simulated studies 0.773 (SE 0.003), so it is about 0.01 low. Yates' "
             "correction (the scipy default for 2 × 2 tables) lowers power below this design's figure.",
             *_ChiSquare.common_notes)
    params = (W, _df(1.0, "(rows − 1) × (columns − 1) of the table; 1 for a 2 × 2 table"))
    n = NSpec("observations", "observations", 2, 100, (5, 500),
              "total number of observations N in the table, over all cells")

    def df_text(self, p):
        return f"(r − 1)(c − 1) = {fmt(p['df'])}"
