"""The one bracketed root-finder behind every solve (sample size, effect, significance level).

The function is evaluated on small vectors of points at a time (every power
function in powercore is vectorised), so each round costs about as much as one
scalar evaluation. Each round keeps a bracket ``[a, b]`` with ``f(a) < target <=
f(b)``; it places half its points evenly across the bracket (so the bracket
shrinks at least ``points/2``-fold) and half in a narrow cluster around the root
predicted by interpolating probit-transformed values, which is nearly linear for
power functions. Everything is bounded: no loop runs without a limit.
"""
from __future__ import annotations

import math
from typing import Callable

import numpy as np
from scipy.special import ndtri

from .errors import NoSolution

__all__ = ["solve_increasing"]

MAX_ROUNDS = 60
OFFSETS = np.array([-0.1, -0.03, 0.03, 0.1])  # round 1, around the start, on a log scale
_EPS = 1e-15


def _probit(f: float) -> float:
    return float(ndtri(min(max(float(f), _EPS), 1 - _EPS)))


def _interpolate(a, b, fa, fb, target):
    ta, tb, tt = _probit(fa), _probit(fb), _probit(target)
    if not tb > ta:
        return 0.5 * (a + b)
    return min(max(a + (b - a) * (tt - ta) / (tb - ta), a), b)


def _first_at_or_above(xs, fs, target):
    up = np.nonzero(fs >= target)[0]
    return int(up[0]) if up.size else -1


def solve_increasing(f: Callable[[np.ndarray], np.ndarray], target: float, lo: float, hi: float, *,
                     field: str, start: float | None = None, what: str = "the target",
                     xtol: float = 1e-10, rtol: float = 1e-12, limit: float = math.inf,
                     steps: bool = False) -> float:
    """The ``x`` in ``[lo, hi]`` where the non-decreasing, vectorised ``f`` crosses ``target``.

    Returns ``lo`` when ``f(lo)`` already reaches the target. ``hi`` may be
    infinite: the bracket then grows geometrically from ``start`` (at most up to
    ``limit``). Raises :class:`NoSolution` naming ``field`` when the target is not
    reached. The bracket ends within ``xtol + rtol·|x|`` of each other; the value
    returned is interpolated inside it, usually far closer to the crossing. For a
    step function (``steps=True``, exact discrete tests) the upper bracket end is
    returned instead, where ``f`` is known to reach the target.
    """
    def g(x):
        x = np.asarray(x, dtype=float)
        y = np.asarray(f(x), dtype=float)
        return y if y.shape == x.shape else np.broadcast_to(y, x.shape)

    if start is None or not (lo < start < hi) or not math.isfinite(start):
        start = lo + 1.0 if math.isinf(hi) else 0.5 * (lo + hi)
    span = start - lo
    # round 1: lo and four points around the starting guess
    xs = np.concatenate([[lo], lo + span * np.exp(OFFSETS)])
    xs = xs[xs <= hi]
    fs = g(xs)
    if fs[0] >= target:
        return lo
    i = _first_at_or_above(xs, fs, target)
    rounds = 0
    while i < 0:  # grow the bracket upward, geometrically and boundedly
        if rounds >= MAX_ROUNDS or xs[-1] >= min(hi, limit):
            top = min(xs[-1], hi, limit)
            raise NoSolution(field, f"{what} is not reached anywhere up to {top:.6g}")
        rounds += 1
        base = xs[-1] - lo
        grown = lo + base * 4.0 ** np.arange(1, 5)
        grown = np.minimum(grown, min(hi, limit))
        grown = np.unique(grown)
        fg = g(grown)
        xs, fs = np.concatenate([xs[-1:], grown]), np.concatenate([fs[-1:], fg])
        i = _first_at_or_above(xs, fs, target)
    a, b, fa, fb = xs[i - 1], xs[i], fs[i - 1], fs[i]
    wide = 3e-4
    for _ in range(MAX_ROUNDS):
        if b - a <= xtol + rtol * abs(b):
            break
        r = _interpolate(a, b, fa, fb, target)
        w = max((b - a) * wide, 0.25 * (xtol + rtol * abs(b)))
        pts = [r - w, r, r + w]
        if steps or wide > 3e-4:   # a step function, or the cluster missed: the midpoint guarantees halving
            pts.append(0.5 * (a + b))
        grid = np.unique(pts)
        grid = grid[(grid > a) & (grid < b)]
        if grid.size == 0:
            grid = np.array([0.5 * (a + b)])
        vals = g(grid)
        j = _first_at_or_above(grid, vals, target)
        if j < 0:
            a, fa = grid[-1], vals[-1]
        else:
            b, fb = grid[j], vals[j]
            if j > 0:
                a, fa = grid[j - 1], vals[j - 1]
        # the cluster missed the crossing: widen it next time, up to a plain bisection-like split
        captured = j > 0
        wide = 3e-4 if captured else min(0.25, wide * 30)
    return b if steps else _interpolate(a, b, fa, fb, target)
