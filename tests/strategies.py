"""Hypothesis strategies shared by the test modules, built from each design's own declarations.

Everything is drawn from what a design declares through the protocol: each ParamSpec's
``soft`` range (the slider range; whole numbers where the step is 1 or the design lists
the parameter in ``whole_params``), the effect's hard bounds given the other parameters,
the sides the test detects (``effect_sides``: null value, sign, bound), the directions it
offers, its own cross-parameter ``check``, and the NSpec ``soft`` range raised to
``min_n``. A design registered tomorrow is covered without touching this file.

Cost: a design whose power takes milliseconds per point (numerical integration) gets a
smaller example budget and coarser grids; see :func:`budget`.
"""
from __future__ import annotations

import functools
import math
import os
import time
from dataclasses import dataclass

import numpy as np
from hypothesis import HealthCheck, Phase, assume, settings
from hypothesis import strategies as st

import powercore
from powercore import InvalidParameter
from powercore.design import Design

__all__ = ["ALPHAS", "EXAMPLES", "TARGETS", "Budget", "adjustments", "budget", "effect_on_side", "inputs", "modest_n", "n_for",
           "params", "side_reach", "sides", "solvable_n_inputs"]

# Significance levels a planner actually uses, plus a small and a generous one; 0.05 first,
# since hypothesis treats the first as the simplest and draws it most often.
ALPHAS = st.sampled_from([0.05, 0.01, 0.1, 0.025, 0.001, 0.2])
TARGETS = st.sampled_from([0.5, 0.8, 0.9, 0.95])

# Keep draws a hair inside open bounds so a value is never refused for sitting on one.
_INSIDE = 1e-6


@dataclass(frozen=True)
class Budget:
    """How hard to test one design: hypothesis settings (light and evaluate-heavy properties) and grid sizes."""

    settings: settings
    heavy: settings
    grid: int
    n_span: int


def _settings(examples: int, shrink: bool = True) -> settings:
    # Reproducible (derandomize) and side-effect free (no example database in the tree);
    # no deadline: the first scipy call in a process is slow. Slow designs skip shrinking,
    # which would re-run a failing example hundreds of times.
    phases = [Phase.explicit, Phase.reuse, Phase.generate] + ([Phase.shrink] if shrink else [])
    return settings(max_examples=examples, deadline=None, derandomize=True, database=None, phases=phases,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much,
                                           HealthCheck.data_too_large])


# Examples per design and property. The default keeps the examples per property across all
# ~30 registered designs near 500 (about 11 designs x 40-50, the budget first planned) and the
# battery near 30 s on two cores; POWERLENS_EXAMPLES=50 (say) runs a longer search by hand.
EXAMPLES = int(os.environ.get("POWERLENS_EXAMPLES", "16"))
FAST = Budget(_settings(EXAMPLES), _settings(max(2, EXAMPLES // 2)), grid=121, n_span=60)
SLOW = Budget(_settings(3, shrink=False), _settings(2, shrink=False), grid=9, n_span=4)


@functools.lru_cache(maxsize=None)
def budget(design_id: str) -> Budget:
    """FAST unless a 16-point power call or one full evaluate() at the defaults takes over 25 ms (measured once)."""
    d = powercore.get_design(design_id)
    p = d.defaults()
    n = max(d.n.default, d.min_n(p))
    ns = np.arange(n, n + 16, dtype=float)
    scenario = powercore.Scenario(d.id, p, n=n)
    powercore.power_at(d, p, ns, 0.05, d.directions[0])  # warm up
    t = time.perf_counter()
    powercore.power_at(d, p, ns, 0.05, d.directions[0])
    t_power = time.perf_counter() - t
    t = time.perf_counter()
    powercore.evaluate(scenario)
    t_eval = time.perf_counter() - t
    return FAST if max(t_power, t_eval) < 0.025 else SLOW


def _is_whole(design: Design, spec) -> bool:
    return spec.step == 1.0 or spec.name in getattr(design, "whole_params", ())


def _value(design: Design, spec) -> st.SearchStrategy:
    """One parameter's value from its soft range, respecting open hard bounds."""
    if spec.kind == "bool":
        return st.booleans()
    if spec.kind == "choice":
        return st.sampled_from(spec.choices)
    lo, hi = float(spec.soft[0]), float(spec.soft[1])
    if _is_whole(design, spec):
        a = math.ceil(lo) if (spec.low_closed or lo > spec.low) else math.floor(lo) + 1
        b = math.floor(hi) if (spec.high_closed or hi < spec.high) else math.ceil(hi) - 1
        return st.integers(min_value=a, max_value=max(a, b)).map(float)
    return st.floats(min_value=lo, max_value=hi, allow_nan=False, allow_infinity=False,
                     exclude_min=(lo <= spec.low and not spec.low_closed),
                     exclude_max=(hi >= spec.high and not spec.high_closed))


def sides(design: Design, p: dict, direction: str):
    """The design's tested sides ``(name, null effect, sign, bound)`` for parameters ``p``."""
    return design.effect_sides(p, direction)


def side_reach(design: Design, p: dict, side) -> float:
    """How far the effect may move from its null value along a side, within its soft range and bounds."""
    _, e0, sign, bound = side
    spec = design.param(design.effect)
    lo_b, hi_b = design.effect_bounds(p)
    soft_edge = spec.soft[1] if sign > 0 else spec.soft[0]
    hard_edge = min(bound, hi_b) if sign > 0 else max(bound, lo_b)
    reach = min(sign * (soft_edge - e0), sign * (hard_edge - e0))
    return max(0.0, reach * (1 - _INSIDE) - _INSIDE * max(1e-3, abs(e0)))


def effect_on_side(design: Design, p: dict, side, m) -> np.ndarray | float:
    """The effect at distance ``m`` from the null along ``side``."""
    _, e0, sign, _ = side
    return e0 + sign * np.asarray(m, dtype=float) if np.ndim(m) else e0 + sign * float(m)


def _accept(design: Design, p: dict) -> bool:
    try:
        design.check(dict(p))
    except InvalidParameter:
        return False
    return True


@st.composite
def params(draw, design: Design, direction: str | None = None, on_side: bool = False,
           min_fraction: float = 0.0):
    """A full parameter dict: every non-effect parameter from its soft range, then the effect.

    With ``on_side`` the effect lies on one of the sides ``direction`` tests, at least
    ``min_fraction`` of the way from its null value to the edge of its range; otherwise it
    is anywhere in its soft range inside its hard bounds. Draws that the design's own
    ``check`` refuses are discarded.
    """
    p: dict = {}
    for spec in design.params:
        if spec.name != design.effect:
            p[spec.name] = draw(_value(design, spec))
    p[design.effect] = design.null_effect(p)
    if on_side:
        side = draw(st.sampled_from(sides(design, p, direction)))
        reach = side_reach(design, p, side)
        assume(reach > 0)
        # at least 1e-9 of the range: subnormal effects hit a separate scipy defect (test_scipy_defects.py)
        m = draw(st.floats(min_value=max(min_fraction, 1e-9) * reach, max_value=reach, allow_nan=False))
        p[design.effect] = effect_on_side(design, p, side, m)
    else:
        spec = design.param(design.effect)
        lo_b, hi_b = design.effect_bounds(p)
        lo, hi = max(spec.soft[0], lo_b), min(spec.soft[1], hi_b)
        pad = _INSIDE * max(1.0, hi - lo)
        assume(hi - lo > 2 * pad)
        p[design.effect] = draw(st.floats(min_value=lo + pad, max_value=hi - pad, allow_nan=False))
    assume(_accept(design, p))
    return p


def n_for(design: Design, p: dict) -> st.SearchStrategy[int]:
    """Whole sample sizes in the NSpec soft range, never below the design's minimum."""
    lo = max(int(design.n.soft[0]), design.min_n(p))
    hi = max(lo, int(design.n.soft[1]))
    return st.integers(min_value=lo, max_value=hi)


def _reach_at(design: Design, p: dict, n: float) -> float:
    sizes = design.group_sizes(p, n, integer=False)
    return abs(float(np.asarray(design.statistic(p, sizes).noncentrality)))


def modest_n(design: Design, p: dict, n_cap: float = 1e5) -> bool:
    """True unless the effect is so close to its null that the required n would exceed about ``n_cap``.

    ``evaluate`` always solves for the sample size too, and for an exact test that is a scan
    over n; this keeps such scans short. The estimate n ≈ 100·(4.5/λ(100))² is a filter only.
    """
    if any(p[design.effect] == e0 for _, e0, _, _ in design.effect_sides(p, design.directions[0])):
        return True
    lam = _reach_at(design, p, 100.0)
    return math.isfinite(lam) and lam >= 4.5 * math.sqrt(100.0 / n_cap)


@st.composite
def inputs(draw, design: Design, direction: str | None = None, on_side: bool = False,
           evaluable: bool = False):
    """``(params, n, alpha, direction)`` anywhere in the soft ranges, in a direction the design offers.

    ``evaluable`` keeps only inputs whose full ``evaluate`` (which also solves for n) stays quick.
    """
    direction = direction or draw(st.sampled_from(list(design.directions)))
    p = draw(params(design, direction, on_side=on_side))
    if evaluable:
        assume(modest_n(design, p))
    return p, draw(n_for(design, p)), draw(ALPHAS), direction


@st.composite
def solvable_n_inputs(draw, design: Design, n_cap: float = 1e5):
    """``(params, alpha, direction, target)`` with the effect on a tested side and n roughly below ``n_cap``.

    The normal-theory estimate n ≈ 100·(4.5/λ(100))² only filters out effects so small that
    an exact scan would be slow; it is never used as an expected value.
    """
    direction = draw(st.sampled_from(list(design.directions)))
    p = draw(params(design, direction, on_side=True, min_fraction=0.02))
    alpha = draw(ALPHAS)
    target = draw(TARGETS.filter(lambda t: t > alpha + 0.05))
    lam = _reach_at(design, p, 100.0)
    assume(math.isfinite(lam) and lam >= 4.5 * math.sqrt(100.0 / n_cap))
    return p, alpha, direction, target


def adjustments() -> st.SearchStrategy[dict]:
    """Dropout allowance and multiplicity split, as a scenario's ``adjustments`` object."""
    return st.fixed_dictionaries({
        "dropout": st.sampled_from([0.0, 0.1, 0.25]),
        "comparisons": st.integers(min_value=1, max_value=4),
        "multiplicity": st.sampled_from(["none", "bonferroni", "sidak"]),
    })
