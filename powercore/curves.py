"""Power curves and sampling densities, vectorised, for the views and the record."""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import adjust
from .design import get_design
from .engine import _reachable, critical_values, power_at
from .result import Result
from .scenario import Scenario

__all__ = ["Curve", "Densities", "curve_effect", "curve_n", "densities", "effect_range", "n_range"]


@dataclass(frozen=True)
class Curve:
    """Power at each ``x`` (an effect in data units, or a whole sample size)."""

    x: np.ndarray
    power: np.ndarray
    x_label: str

    def to_dict(self) -> dict:
        return {"x": self.x.tolist(), "power": self.power.tolist(), "x_label": self.x_label}


@dataclass(frozen=True)
class Densities:
    """Null and alternative densities of the statistic (or of the estimate in data units).

    For exact discrete tests ``x`` holds the possible values and the densities
    are probability masses. ``critical`` is (lower, upper), NaN for an unused side.
    """

    x: np.ndarray
    null: np.ndarray
    alt: np.ndarray
    critical: tuple[float, float]
    scale: str
    discrete: bool
    x_label: str
    rejects: str = "outside"   # "inside": the rejection region lies between the critical values


def effect_range(result: Result) -> tuple[float, float]:
    """A range of effects that shows the curve rising to near 1 on each tested side."""
    d = get_design(result.scenario.design)
    p = dict(result.solved.params)
    direction = result.solved.direction
    lo_b, hi_b = d.effect_bounds(p)
    pad = 1e-6 * (min(hi_b, 1e6) - max(lo_b, -1e6))
    ends = []
    for side, e0, sign, _ in d.effect_sides(p, direction):
        reach = max(abs(result.effect - e0), d.effect_scale(p) * 0.1,
                    abs(result.detectable[side] - e0) if result.detectable.get(side) is not None else 0.0)
        ends += [e0, e0 + sign * 1.6 * reach]
    return float(max(min(ends), lo_b + pad)), float(min(max(ends), hi_b - pad))


def n_range(result: Result) -> tuple[int, int]:
    """Whole sample sizes from the design's minimum to past both the current and the required n."""
    d = get_design(result.scenario.design)
    n_min = d.min_n(dict(result.solved.params))
    top = result.n
    if result.sample_size is not None:
        top = max(top, result.sample_size.n)
    return n_min, max(n_min + 10, int(math.ceil(1.6 * top)))


def curve_effect(scenario: Scenario, lo: float, hi: float, points: int = 400) -> Curve:
    """Power against the effect (data units) at the scenario's n and α."""
    d = get_design(scenario.design)
    x = np.linspace(lo, hi, points)
    p = {**scenario.params, d.effect: x}
    y = power_at(d, p, scenario.n, adjust.test_alpha(scenario.alpha, scenario.adjustments), scenario.direction)
    return Curve(x, np.broadcast_to(y, x.shape).copy(), f"{d.effect_label} ({d.param(d.effect).unit})")


def curve_n(scenario: Scenario, lo: int, hi: int, points: int = 400) -> Curve:
    """Power against whole sample sizes from ``lo`` to ``hi`` (at most ``points`` of them)."""
    d = get_design(scenario.design)
    x = np.unique(np.round(np.linspace(lo, hi, points)))
    y = power_at(d, dict(scenario.params), x, adjust.test_alpha(scenario.alpha, scenario.adjustments),
                 scenario.direction)
    return Curve(x, np.broadcast_to(y, x.shape).copy(), f"sample size ({d.n.unit})")


def densities(scenario: Scenario, scale: str = "statistic", points: int = 400) -> Densities:
    """The null and alternative sampling distributions at the scenario's values."""
    if scale not in ("statistic", "data"):
        raise ValueError(f"scale must be 'statistic' or 'data', got {scale!r}")
    d = get_design(scenario.design)
    p = dict(scenario.params)
    sizes = d.group_sizes(p, scenario.n, integer=True)
    st = d.statistic(p, sizes)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    rejects = "outside"
    if d.custom_power is not None:
        rejects = "inside"
        lo, hi = (float(v) for v in d.inside_region(p, sizes, alpha)[:2])
    elif not np.all(_reachable(d, p, sizes, alpha, scenario.direction)):
        lo = hi = math.nan   # the real test cannot reject at these sizes: no rejection region to draw
    else:
        lo, hi = (float(v) for v in critical_values(st, alpha, scenario.direction))
    a0, b0 = st.null.span()
    a1, b1 = st.alt.span()
    left, right = float(min(a0, a1)), float(max(b0, b1))
    if d.discrete:
        t = np.arange(math.floor(left), math.ceil(right) + 1, dtype=float)
        f0, f1 = st.null.pdf(t), st.alt.pdf(t)
    else:
        t = np.linspace(left, right, points)
        f0, f1 = st.null.pdf(t), st.alt.pdf(t)
    label = f"test statistic {d.statistic_symbol}"
    if scale == "data":
        x = np.asarray(st.to_data(t), dtype=float)
        if not d.discrete:
            jac = np.abs(np.gradient(x, t))
            f0, f1 = f0 / jac, f1 / jac
        crit = tuple(float(st.to_data(c)) if not math.isnan(c) else math.nan for c in (lo, hi))
        t, label = x, d.estimate_label
    else:
        crit = (lo, hi)
    return Densities(np.asarray(t), np.asarray(f0, dtype=float), np.asarray(f1, dtype=float),
                     crit, scale, d.discrete, label, rejects)
