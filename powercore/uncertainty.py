"""Planning under uncertainty: assurance, an uncertain SD, and sensitivity tables.

* Assurance (expected power, the probability of success): power averaged over a
  normal prior on the effect, N(mean, sd²) (O'Hagan, Stevens and Campbell 2005).
  For z tests the average has a closed form: the statistic is then marginally
  N(m/SE, 1 + s²/SE²). Otherwise it is integrated numerically (Gauss–Hermite,
  the prior truncated to the effect's domain); ``power_distribution`` shows how
  power is spread under the prior, not only its mean.
* Uncertain SD: from a pilot SD with ν degrees of freedom, the one-sided upper
  confidence limit σ_U = s·√(ν/χ²_{ν, 1−γ}) (chi-square quantile, lower tail),
  and the sample size that σ_U implies.
* Sensitivity: required n over a grid of effects × target powers, or of SDs ×
  dropout rates (enrolled n), with a CSV rendering.
"""
from __future__ import annotations

import io
import math
from dataclasses import dataclass

import numpy as np
from scipy import special, stats

from . import adjust
from .design import get_design
from .distributions import Normal
from .engine import power_at, sample_size
from .errors import InvalidParameter, NoSolution
from .scenario import Scenario

__all__ = ["Assurance", "SensitivityTable", "assurance", "sd_upper_limit", "sensitivity_effect_power",
           "sensitivity_sd_dropout"]

_GH_X, _GH_W = np.polynomial.hermite_e.hermegauss(80)   # ∫ f(x) φ(x) dx ≈ Σ w f(x) / √(2π)


@dataclass(frozen=True)
class Assurance:
    """Power averaged over a normal prior on the effect, and how power is spread under the prior."""

    assurance: float
    method: str
    prior_mean: float
    prior_sd: float
    power_at_prior_mean: float
    quantiles: dict[str, float]
    prob_power_above_target: float


def _positive(name, x, allow_zero=False):
    ok = isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x) and (x >= 0 if allow_zero else x > 0)
    if not ok:
        raise InvalidParameter(name, "must be a positive number" if not allow_zero else "must be ≥ 0", x)
    return float(x)


def assurance(scenario: Scenario, prior_mean: float, prior_sd: float, *, draws: int = 20_000,
              seed: int = 0) -> Assurance:
    """Assurance of the scenario at its n and α for an effect ~ N(prior_mean, prior_sd²)."""
    d = get_design(scenario.design)
    if isinstance(prior_mean, bool) or not isinstance(prior_mean, (int, float)) or not math.isfinite(prior_mean):
        raise InvalidParameter("prior_mean", "must be a finite number", prior_mean)
    prior_sd = _positive("prior_sd", prior_sd, allow_zero=True)
    if scenario.n is None:
        raise InvalidParameter("n", "is needed for assurance (find the sample size first)", None)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    lo, hi = d.effect_bounds(p)
    st = d.statistic({**p, d.effect: prior_mean}, d.group_sizes(p, scenario.n))
    closed = (isinstance(st.null, Normal) and isinstance(st.alt, Normal) and float(st.alt.scale) == 1.0
              and d.custom_power is None and float(np.asarray(st.shift)) == 0.0 and math.isinf(lo) and math.isinf(hi)
              and d.null_effect(p) == 0.0)

    def pw(effects):
        return power_at(d, {**p, d.effect: effects}, scenario.n, alpha, scenario.direction)

    if closed and prior_sd > 0:
        se = float(np.asarray(st.se))
        scale = math.sqrt(1 + (prior_sd / se) ** 2)
        mu = prior_mean / se
        a = alpha / 2 if scenario.direction == "two-sided" else alpha
        z = -special.ndtri(a)
        up = special.ndtr((mu - z) / scale) if scenario.direction in ("two-sided", "upper") else 0.0
        down = special.ndtr((-z - mu) / scale) if scenario.direction in ("two-sided", "lower") else 0.0
        value, method = float(up + down), "closed form (z test with a normal prior)"
    else:
        x = np.clip(prior_mean + prior_sd * _GH_X, lo + 1e-12 * (1 + abs(lo)) if math.isfinite(lo) else -np.inf,
                    hi - 1e-12 * (1 + abs(hi)) if math.isfinite(hi) else np.inf)
        value = float(np.sum(_GH_W * pw(x)) / math.sqrt(2 * math.pi))
        method = "numerical integration (80-point Gauss–Hermite; prior clipped to the effect's domain)"
    rng = np.random.default_rng(seed)
    eff = prior_mean + prior_sd * rng.standard_normal(draws)
    if math.isfinite(lo) or math.isfinite(hi):
        eff = np.clip(eff, lo + 1e-9 if math.isfinite(lo) else -np.inf, hi - 1e-9 if math.isfinite(hi) else np.inf)
    powers = pw(eff)
    qs = {f"{int(q * 100)}%": float(np.quantile(powers, q)) for q in (0.05, 0.25, 0.5, 0.75, 0.95)}
    return Assurance(assurance=value, method=method, prior_mean=float(prior_mean), prior_sd=prior_sd,
                     power_at_prior_mean=float(pw(np.asarray(prior_mean))), quantiles=qs,
                     prob_power_above_target=float(np.mean(powers >= scenario.target_power)))


def sd_upper_limit(pilot_sd: float, df: int, confidence: float = 0.8) -> float:
    """One-sided upper confidence limit of σ from a pilot SD with ``df`` degrees of freedom."""
    pilot_sd = _positive("pilot_sd", pilot_sd)
    if isinstance(df, bool) or not isinstance(df, int) or df < 1:
        raise InvalidParameter("df", "must be a whole number ≥ 1", df)
    if not (isinstance(confidence, (int, float)) and 0 < confidence < 1):
        raise InvalidParameter("confidence", "must be in (0, 1)", confidence)
    return float(pilot_sd * math.sqrt(df / stats.chi2.ppf(1 - confidence, df)))


@dataclass(frozen=True)
class SensitivityTable:
    """Required n over a grid; ``cells[i][j]`` for ``rows[i]`` × ``columns[j]`` (None where there is none)."""

    row_label: str
    column_label: str
    rows: tuple[float, ...]
    columns: tuple[float, ...]
    cells: tuple[tuple[int | None, ...], ...]
    value_label: str

    def to_csv(self) -> str:
        out = io.StringIO()
        out.write(f"{self.row_label} \\ {self.column_label},{','.join(f'{c:g}' for c in self.columns)}\n")
        for r, row in zip(self.rows, self.cells):
            out.write(f"{r:g}," + ",".join("" if v is None else str(v) for v in row) + "\n")
        return out.getvalue()


def _n_or_none(d, p, alpha, direction, target):
    try:
        return sample_size(d, p, alpha, direction, target)
    except NoSolution:
        return None


def sensitivity_effect_power(scenario: Scenario, effects, powers) -> SensitivityTable:
    """Required n (the design's unit) for each effect × target power."""
    d = get_design(scenario.design)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    cells = []
    for e in effects:
        row = []
        for t in powers:
            ss = _n_or_none(d, {**p, d.effect: float(e)}, alpha, scenario.direction, float(t))
            row.append(None if ss is None else ss.n)
        cells.append(tuple(row))
    return SensitivityTable(d.effect_label, "target power", tuple(map(float, effects)), tuple(map(float, powers)),
                            tuple(cells), f"n ({d.n.unit})")


def sensitivity_sd_dropout(scenario: Scenario, sd_name: str, sds, dropouts) -> SensitivityTable:
    """Enrolled total for each SD (parameter ``sd_name``) × dropout rate, at the scenario's target power."""
    d = get_design(scenario.design)
    if sd_name not in {s.name for s in d.params}:
        raise InvalidParameter("sd_name", f"must be a parameter of design {d.id}", sd_name)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    cells = []
    for sd in sds:
        ss = _n_or_none(d, {**p, sd_name: float(sd)}, alpha, scenario.direction, scenario.target_power)
        row = []
        for drop in dropouts:
            row.append(None if ss is None else sum(adjust.enrolled(ss.group_sizes, float(drop))))
        cells.append(tuple(row))
    return SensitivityTable(sd_name, "dropout", tuple(map(float, sds)), tuple(map(float, dropouts)),
                            tuple(cells), f"enrolled {d.n.total_unit}")
