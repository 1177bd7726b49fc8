"""The one bracketed root-finder behind every solve (sample size, effect, significance level)."""
from __future__ import annotations

import math
from typing import Callable

from scipy.optimize import brentq

from .errors import NoSolution

__all__ = ["solve_increasing"]

MAX_DOUBLINGS = 80


def solve_increasing(f: Callable[[float], float], target: float, lo: float, hi: float, *,
                     field: str, start: float | None = None, what: str = "the target",
                     xtol: float = 1e-10, rtol: float = 1e-12) -> float:
    """Smallest ``x`` in ``[lo, hi]`` with ``f(x) = target`` for a non-decreasing ``f``.

    ``hi`` may be infinite: the bracket then grows from ``start`` by doubling its
    distance from ``lo``, at most ``MAX_DOUBLINGS`` times. Returns ``lo`` when
    ``f(lo)`` already reaches the target. Raises :class:`NoSolution` naming
    ``field`` when ``f(hi)`` (or the last bracket tried) falls short.
    """
    f_lo = f(lo)
    if f_lo >= target:
        return lo
    if math.isinf(hi):
        step = max((start if start is not None else lo + 1.0) - lo, 1e-12)
        for _ in range(MAX_DOUBLINGS):
            top = lo + step
            if f(top) >= target:
                break
            lo, step = top, step * 2
        else:
            raise NoSolution(field, f"{what} is not reached up to {lo + step:.3g}")
        hi = top
    elif f(hi) < target:
        raise NoSolution(field, f"{what} is not reached anywhere up to {hi:.6g}")
    return brentq(lambda x: f(x) - target, lo, hi, xtol=xtol, rtol=rtol, maxiter=500)
