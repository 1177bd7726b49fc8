"""Allocation and budget: the ratio that maximises power, and what a budget buys.

Both work for every two-group design (those with an allocation ``ratio``
parameter): power is evaluated through the shared engine with group sizes
n1 = N/(1 + r), n2 = r·N/(1 + r), or n1 = B/(c1 + r·c2) under a budget B with
unit costs c1, c2. The best ratio is found by a bounded scalar search on log r;
for two means with SDs σ1, σ2 it agrees with Neyman's r = (σ2/σ1)·√(c1/c2).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from . import adjust
from .design import get_design
from .engine import detectable_effect, power_at, sample_size
from .errors import InvalidParameter, NoSolution
from .scenario import Scenario

__all__ = ["Allocation", "BudgetPlan", "best_ratio", "budget_plan"]

RATIO_RANGE = (0.01, 100.0)


@dataclass(frozen=True)
class Allocation:
    """The allocation ratio n2/n1 that maximises power, with the power there and at 1 : 1."""

    ratio: float
    power: float
    power_equal: float
    n1: float
    n2: float
    total: float | None
    budget: float | None
    costs: tuple[float, float]


@dataclass(frozen=True)
class BudgetPlan:
    """What a budget buys at the scenario's ratio: whole group sizes, their cost, power and detectable effect."""

    n1: int
    n2: int
    cost: float
    budget: float
    power: float
    detectable: dict[str, float | None]
    required_n: int | None
    required_cost: float | None


def _two_group(scenario: Scenario):
    d = get_design(scenario.design)
    if "ratio" not in {s.name for s in d.params}:
        raise InvalidParameter("design", "must be a two-group design with an allocation ratio", scenario.design)
    return d


def _costs(costs) -> tuple[float, float]:
    try:
        c1, c2 = (float(c) for c in costs)
    except (TypeError, ValueError):
        raise InvalidParameter("costs", "must be two positive numbers (cost per unit in group 1, group 2)",
                               costs) from None
    if not (math.isfinite(c1) and math.isfinite(c2) and c1 > 0 and c2 > 0):
        raise InvalidParameter("costs", "must be two positive numbers", costs)
    return c1, c2


def _positive(name, x):
    if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x) or x <= 0:
        raise InvalidParameter(name, "must be a positive number", x)
    return float(x)


def best_ratio(scenario: Scenario, *, total: float | None = None, budget: float | None = None,
               costs=(1.0, 1.0)) -> Allocation:
    """The ratio n2/n1 that maximises power for a fixed total N, or for a fixed budget and unit costs."""
    d = _two_group(scenario)
    c1, c2 = _costs(costs)
    if (total is None) == (budget is None):
        raise InvalidParameter("total", "give either a total sample size or a budget", total)
    if total is not None:
        total = _positive("total", total)
    else:
        budget = _positive("budget", budget)
    p = dict(scenario.params)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)

    def sizes(r):
        n1 = total / (1 + r) if total is not None else budget / (c1 + r * c2)
        return n1, r * n1

    def pw(r):
        n1, _ = sizes(r)
        return float(power_at(d, {**p, "ratio": r}, n1, alpha, scenario.direction, integer=False))

    lo, hi = math.log(RATIO_RANGE[0]), math.log(RATIO_RANGE[1])
    grid = np.linspace(lo, hi, 41)
    vals = [pw(math.exp(u)) for u in grid]
    i = int(np.argmax(vals))
    a, b = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    best = minimize_scalar(lambda u: -pw(math.exp(u)), bounds=(a, b), method="bounded",
                           options={"xatol": 1e-8})
    r = float(math.exp(best.x))
    n1, n2 = sizes(r)
    return Allocation(ratio=r, power=pw(r), power_equal=pw(1.0), n1=n1, n2=n2, total=total, budget=budget,
                      costs=(c1, c2))


def budget_plan(scenario: Scenario, budget: float, costs=(1.0, 1.0)) -> BudgetPlan:
    """The largest whole n1 (n2 = ratio·n1, rounded up) whose cost fits the budget, and its power."""
    d = _two_group(scenario)
    c1, c2 = _costs(costs)
    budget = _positive("budget", budget)
    p = dict(scenario.params)

    def cost(n1):
        n1_, n2_ = d.group_sizes(p, n1, integer=True)
        return float(c1 * n1_ + c2 * n2_)

    n1 = int(budget // (c1 + p["ratio"] * c2)) + 1
    while n1 > 0 and cost(n1) > budget:
        n1 -= 1
    if n1 < d.min_n(p):
        raise NoSolution("budget", f"buys fewer than the design's minimum of {d.min_n(p)} {d.n.unit}", budget)
    g1, g2 = (int(round(float(x))) for x in d.group_sizes(p, n1, integer=True))
    alpha, direction = adjust.test_alpha(scenario.alpha, scenario.adjustments), scenario.direction
    power = float(power_at(d, p, n1, alpha, direction))
    try:
        det = detectable_effect(d, p, n1, alpha, direction, scenario.target_power)
    except NoSolution:
        det = {"upper": None, "lower": None}
    try:
        need = sample_size(d, p, alpha, direction, scenario.target_power)
        req, req_cost = need.n, cost(need.n)
    except NoSolution:
        req, req_cost = None, None
    return BudgetPlan(n1=g1, n2=g2, cost=cost(n1), budget=budget, power=power, detectable=det,
                      required_n=req, required_cost=req_cost)
