"""Practical adjustments: allowance for dropout, and α split over several tests.

* Dropout: the analysed sample size is what the power calculation needs; each
  group is enrolled as ``ceil(n / (1 − dropout))`` so that, after the expected
  loss, the analysed n remains.
* Multiplicity: with ``comparisons`` = m tests (endpoints or comparisons) the
  per-test level is α/m (Bonferroni) or 1 − (1 − α)^(1/m) (Šidák, exact for
  independent tests); α in the scenario is the familywise level.
"""
from __future__ import annotations

import math
from typing import Any, Mapping

import numpy as np

from .errors import InvalidParameter

__all__ = ["DEFAULTS", "MULTIPLICITY", "enrolled", "familywise_alpha", "test_alpha", "validate"]

MULTIPLICITY = ("none", "bonferroni", "sidak")
DEFAULTS: dict[str, Any] = {"dropout": 0.0, "comparisons": 1, "multiplicity": "none"}
MAX_COMPARISONS = 10_000


def validate(adj: Any) -> dict[str, Any]:
    """Checked adjustments with defaults filled in; errors name ``adjustments.<field>``."""
    if adj is None:
        adj = {}
    if not isinstance(adj, Mapping):
        raise InvalidParameter("adjustments", "must be an object", adj)
    unknown = sorted(set(adj) - set(DEFAULTS))
    if unknown:
        raise InvalidParameter(f"adjustments.{unknown[0]}", f"is not an adjustment (known: {sorted(DEFAULTS)})",
                               adj[unknown[0]])
    out = {**DEFAULTS, **adj}
    d = out["dropout"]
    if isinstance(d, bool) or not isinstance(d, (int, float)) or not math.isfinite(d) or not 0 <= d < 1:
        raise InvalidParameter("adjustments.dropout", "must be a proportion in [0, 1)", d)
    m = out["comparisons"]
    if isinstance(m, float) and m.is_integer():
        m = int(m)
    if isinstance(m, bool) or not isinstance(m, int) or not 1 <= m <= MAX_COMPARISONS:
        raise InvalidParameter("adjustments.comparisons", f"must be a whole number in [1, {MAX_COMPARISONS}]", m)
    if m > 1 and "multiplicity" not in adj:   # never a silent choice between α per test and familywise α
        raise InvalidParameter("adjustments.multiplicity", f"must be given with {m} comparisons: one of "
                               f"{list(MULTIPLICITY)} (none runs each test at the full α)", None)
    if out["multiplicity"] not in MULTIPLICITY:
        raise InvalidParameter("adjustments.multiplicity", f"must be one of {list(MULTIPLICITY)}",
                               out["multiplicity"])
    return {"dropout": float(d), "comparisons": m, "multiplicity": out["multiplicity"]}


def test_alpha(alpha: float, adj: Mapping[str, Any]) -> float:
    """The level each single test is run at, from the familywise α."""
    m, how = adj["comparisons"], adj["multiplicity"]
    if how == "none" or m == 1:
        return alpha
    if how == "bonferroni":
        return alpha / m
    return float(-np.expm1(np.log1p(-alpha) / m))


def familywise_alpha(alpha_test: float, adj: Mapping[str, Any]) -> float:
    """The familywise α that a per-test level corresponds to (inverse of ``test_alpha``)."""
    m, how = adj["comparisons"], adj["multiplicity"]
    if how == "none" or m == 1:
        return alpha_test
    if how == "bonferroni":
        return min(alpha_test * m, 1.0 - 1e-15)
    return float(-np.expm1(m * np.log1p(-alpha_test)))


def enrolled(sizes: tuple[int, ...], dropout: float) -> tuple[int, ...]:
    """Each group's enrolment so that the analysed size remains after the expected dropout."""
    if dropout == 0:
        return tuple(sizes)
    return tuple(int(math.ceil(s / (1.0 - dropout) - 1e-9)) for s in sizes)
