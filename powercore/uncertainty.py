"""Planning under uncertainty: assurance, an uncertain SD, and sensitivity tables.

* Assurance (expected power, the probability of success): power averaged over a
  normal prior on the effect, N(mean, sd²) (O'Hagan, Stevens and Campbell 2005).
  For z tests the average has a closed form: the statistic is then marginally
  N(m/SE, 1 + s²/SE²). Otherwise it is integrated numerically (Gauss–Hermite,
  the prior truncated to the effect's domain); ``power_distribution`` shows how
  power is spread under the prior, not only its mean (power at equally likely
  quantiles of the prior, so the spread is deterministic).
* Uncertain SD: from a pilot SD with ν degrees of freedom, the one-sided upper
  confidence limit σ_U = s·√(ν/χ²_{ν, 1−γ}) (chi-square quantile, lower tail),
  and the sample size that σ_U implies; ``power_band`` gives power over the
  effect or n for the SD at both ends of a range (the band drawn on the curves).
* Sensitivity: required n over a grid of effects × target powers, or of SDs ×
  dropout rates (enrolled n), with a CSV rendering; a cell with no n keeps the
  reason.
"""
from __future__ import annotations

import csv
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

__all__ = ["Assurance", "PowerBand", "PowerDistribution", "SensitivityTable", "assurance", "band_range", "power_band",
           "power_distribution", "sd_interval", "sd_params", "sd_upper_limit", "sensitivity_effect_power",
           "sensitivity_sd_dropout"]

_GH_X, _GH_W = np.polynomial.hermite_e.hermegauss(80)   # ∫ f(x) φ(x) dx ≈ Σ w f(x) / √(2π)


@dataclass(frozen=True)
class PowerDistribution:
    """Power at ``points`` equally likely quantiles of the prior: how power is spread under it.

    ``effects[i]`` is the prior's quantile at (i + ½)/points (clipped to the effect's domain) and
    ``powers[i]`` the power there, so every entry carries probability 1/points.
    """

    effects: np.ndarray
    powers: np.ndarray

    def prob_at_least(self, target: float) -> float:
        """Probability under the prior that power reaches ``target``."""
        return float(np.mean(self.powers >= target))

    def quantile(self, q: float) -> float:
        return float(np.quantile(self.powers, q))

    def histogram(self, bins: int = 20) -> tuple[np.ndarray, np.ndarray]:
        """(edges over [0, 1], probability in each bin)."""
        counts, edges = np.histogram(np.clip(self.powers, 0.0, 1.0), bins=bins, range=(0.0, 1.0))
        return edges, counts / max(len(self.powers), 1)

    def cdf(self) -> tuple[np.ndarray, np.ndarray]:
        """(sorted powers, P(power ≤ value)) — the empirical distribution function of power."""
        x = np.sort(self.powers)
        return x, np.arange(1, len(x) + 1) / max(len(x), 1)


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
    distribution: PowerDistribution | None = None


def _positive(name, x, allow_zero=False):
    ok = isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x) and (x >= 0 if allow_zero else x > 0)
    if not ok:
        raise InvalidParameter(name, "must be a positive number" if not allow_zero else "must be ≥ 0", x)
    return float(x)


def _finite(name, x):
    if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
        raise InvalidParameter(name, "must be a finite number", x)
    return float(x)


def _clip_to(d, p, x):
    lo, hi = d.effect_bounds(p)
    return np.clip(x, lo + 1e-9 * (1 + abs(lo)) if math.isfinite(lo) else -np.inf,
                   hi - 1e-9 * (1 + abs(hi)) if math.isfinite(hi) else np.inf)


def power_distribution(scenario: Scenario, prior_mean: float, prior_sd: float,
                       points: int = 2000, grid: int | None = None) -> PowerDistribution:
    """Power at ``points`` equally likely quantiles of the prior N(prior_mean, prior_sd²).

    With ``grid`` (fewer than ``points``), power is computed at ``grid`` effects evenly spaced
    between the outermost quantiles and interpolated linearly in between (for designs whose power
    is costly to compute; power is smooth in the effect).
    """
    d = get_design(scenario.design)
    prior_mean = _finite("prior_mean", prior_mean)
    prior_sd = _positive("prior_sd", prior_sd, allow_zero=True)
    if scenario.n is None:
        raise InvalidParameter("n", "is needed for assurance (find the sample size first)", None)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    eff = _clip_to(d, p, prior_mean + prior_sd * special.ndtri((np.arange(points) + 0.5) / points))
    at = eff
    if grid is not None and 2 <= grid < points and eff[-1] > eff[0]:
        at = np.linspace(eff[0], eff[-1], int(grid))
    with np.errstate(all="ignore"):
        powers = np.broadcast_to(np.asarray(power_at(d, {**p, d.effect: at}, scenario.n, alpha, scenario.direction),
                                            dtype=float), at.shape)
    if at is not eff:
        powers = np.interp(eff, at, powers)
    return PowerDistribution(effects=eff, powers=np.array(powers))


def assurance(scenario: Scenario, prior_mean: float, prior_sd: float, *, points: int = 2000,
              grid: int | None = None) -> Assurance:
    """Assurance of the scenario at its n and α for an effect ~ N(prior_mean, prior_sd²).

    The spread of power (quantiles, the chance of reaching the target power) comes from
    :func:`power_distribution` with ``points`` quantiles of the prior (and its ``grid``).
    """
    d = get_design(scenario.design)
    prior_mean = _finite("prior_mean", prior_mean)
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
    dist = power_distribution(scenario, prior_mean, prior_sd, points, grid)
    qs = {f"{int(q * 100)}%": dist.quantile(q) for q in (0.05, 0.25, 0.5, 0.75, 0.95)}
    return Assurance(assurance=value, method=method, prior_mean=prior_mean, prior_sd=prior_sd,
                     power_at_prior_mean=float(pw(np.asarray(_clip_to(d, p, prior_mean)))), quantiles=qs,
                     prob_power_above_target=dist.prob_at_least(scenario.target_power), distribution=dist)


def sd_upper_limit(pilot_sd: float, df: int, confidence: float = 0.8) -> float:
    """One-sided upper confidence limit of σ from a pilot SD with ``df`` degrees of freedom."""
    pilot_sd = _positive("pilot_sd", pilot_sd)
    if isinstance(df, bool) or not isinstance(df, int) or df < 1:
        raise InvalidParameter("df", "must be a whole number ≥ 1", df)
    if not (isinstance(confidence, (int, float)) and not isinstance(confidence, bool) and 0 < confidence < 1):
        raise InvalidParameter("confidence", "must be in (0, 1)", confidence)
    return float(pilot_sd * math.sqrt(df / stats.chi2.ppf(1 - confidence, df)))


def sd_interval(pilot_sd: float, df: int, confidence: float = 0.8) -> tuple[float, float]:
    """Two-sided ``confidence`` interval of σ from a pilot SD: s·√(ν/χ²_{ν, (1+γ)/2}) to s·√(ν/χ²_{ν, (1−γ)/2})."""
    pilot_sd = _positive("pilot_sd", pilot_sd)
    sd_upper_limit(pilot_sd, df, confidence)   # the same checks of df and confidence
    lo = pilot_sd * math.sqrt(df / stats.chi2.isf((1 - confidence) / 2, df))
    hi = pilot_sd * math.sqrt(df / stats.chi2.ppf((1 - confidence) / 2, df))
    return float(lo), float(hi)


def sd_params(design_id: str) -> tuple[str, ...]:
    """Names of the design's spread (SD) parameters, in data units (none for most count designs)."""
    d = get_design(design_id)
    return tuple(s.name for s in d.params if s.name.startswith("sd") and s.unit == "data units")


@dataclass(frozen=True)
class PowerBand:
    """Power over ``x`` (effects or n) with the SD at each end of [sd_low, sd_high]; lower ≤ upper."""

    x: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    sd_name: str
    sd_low: float
    sd_high: float


def band_range(scenario: Scenario, sd_name: str, sd_low: float, sd_high: float) -> tuple[float, float]:
    """The SD range of a :func:`power_band`, checked as it checks it: ``(sd_low, sd_high)`` as floats.

    Raises :class:`InvalidParameter` naming the field at fault, without computing any power.
    """
    d = get_design(scenario.design)
    if sd_name not in sd_params(d.id):
        raise InvalidParameter("sd_name", f"must be an SD parameter of design {d.id}", sd_name)
    sd_low = _positive("sd_low", sd_low)
    sd_high = _positive("sd_high", sd_high)
    if sd_high < sd_low:
        raise InvalidParameter("sd_high", f"must be at least the low end {sd_low:g}", sd_high)
    spec = d.param(sd_name)
    spec.check(sd_low), spec.check(sd_high)
    return sd_low, sd_high


def power_band(scenario: Scenario, sd_name: str, sd_low: float, sd_high: float, *, effects=None,
               ns=None) -> PowerBand:
    """Power at each effect (at the scenario's n) or at each n (at its effect), for SD low and SD high.

    Give exactly one of ``effects`` and ``ns``. Power falls as the SD grows, so ``upper`` is the
    power at ``sd_low``; both ends are computed and ordered pointwise all the same.
    """
    d = get_design(scenario.design)
    sd_low, sd_high = band_range(scenario, sd_name, sd_low, sd_high)
    if (effects is None) == (ns is None):
        raise InvalidParameter("effects", "give either effects or ns", None)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    if effects is not None:
        x = np.asarray(effects, dtype=float)
        base, n = {**p, d.effect: x}, scenario.n
        if n is None:
            raise InvalidParameter("n", "is needed for a band over the effect", None)
    else:
        x = np.asarray(ns, dtype=float)
        base, n = p, x
    with np.errstate(all="ignore"):
        a = np.broadcast_to(power_at(d, {**base, sd_name: sd_low}, n, alpha, scenario.direction), x.shape)
        b = np.broadcast_to(power_at(d, {**base, sd_name: sd_high}, n, alpha, scenario.direction), x.shape)
    return PowerBand(x=x, lower=np.minimum(a, b), upper=np.maximum(a, b), sd_name=sd_name, sd_low=sd_low,
                     sd_high=sd_high)


@dataclass(frozen=True)
class SensitivityTable:
    """Required n over a grid; ``cells[i][j]`` for ``rows[i]`` × ``columns[j]`` (None where there is none).

    ``reasons[i][j]`` says why a cell has no n (None where it has one).
    """

    row_label: str
    column_label: str
    rows: tuple[float, ...]
    columns: tuple[float, ...]
    cells: tuple[tuple[int | None, ...], ...]
    value_label: str
    reasons: tuple[tuple[str | None, ...], ...] = ()

    def reason(self, i: int, j: int) -> str | None:
        return self.reasons[i][j] if self.reasons else None

    def to_csv(self) -> str:
        """Header row (row label \\ column label, then the columns), one row per ``rows``; empty: no n."""
        out = io.StringIO()
        w = csv.writer(out, lineterminator="\n")
        w.writerow([f"{self.row_label} \\ {self.column_label}", *(f"{c:g}" for c in self.columns)])
        for r, row in zip(self.rows, self.cells):
            w.writerow([f"{r:g}", *("" if v is None else str(v) for v in row)])
        return out.getvalue()


def _n_or_reason(d, p, alpha, direction, target):
    """(SampleSize, None) or (None, why there is no n)."""
    try:
        return sample_size(d, p, alpha, direction, target), None
    except NoSolution as e:
        return None, str(e)
    except InvalidParameter as e:
        return None, str(e)


def sensitivity_effect_power(scenario: Scenario, effects, powers) -> SensitivityTable:
    """Required n (the design's unit) for each effect × target power."""
    d = get_design(scenario.design)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    cells, reasons = [], []
    for e in effects:
        row, why = [], []
        for t in powers:
            ss, r = _n_or_reason(d, {**p, d.effect: float(e)}, alpha, scenario.direction, float(t))
            row.append(None if ss is None else ss.n)
            why.append(r)
        cells.append(tuple(row))
        reasons.append(tuple(why))
    return SensitivityTable(d.effect_label, "target power", tuple(map(float, effects)), tuple(map(float, powers)),
                            tuple(cells), f"n ({d.n.unit})", tuple(reasons))


def sensitivity_sd_dropout(scenario: Scenario, sd_name: str, sds, dropouts) -> SensitivityTable:
    """Enrolled total for each SD (parameter ``sd_name``) × dropout rate, at the scenario's target power."""
    d = get_design(scenario.design)
    if sd_name not in {s.name for s in d.params}:
        raise InvalidParameter("sd_name", f"must be a parameter of design {d.id}", sd_name)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    cells, reasons = [], []
    for sd in sds:
        ss, r = _n_or_reason(d, {**p, sd_name: float(sd)}, alpha, scenario.direction, scenario.target_power)
        row, why = [], []
        for drop in dropouts:
            if ss is None:
                row.append(None)
                why.append(r)
                continue
            try:
                row.append(sum(adjust.enrolled(ss.group_sizes, float(drop))))
                why.append(None)
            except InvalidParameter as e:
                row.append(None)
                why.append(str(e))
        cells.append(tuple(row))
        reasons.append(tuple(why))
    return SensitivityTable(sd_name, "dropout", tuple(map(float, sds)), tuple(map(float, dropouts)),
                            tuple(cells), f"enrolled {d.n.total_unit}", tuple(reasons))
