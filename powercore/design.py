"""The design protocol and the registry of designs.

A design declares its parameters once and supplies the null and alternative
distributions of its test statistic (a :class:`Statistic`). Everything else —
validation, critical regions, power, curves and every solver — is shared code
in :mod:`powercore.engine`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from .errors import InvalidParameter
from .spec import NSpec, ParamSpec

__all__ = ["Design", "Explanation", "Statistic", "designs", "get_design", "register"]


@dataclass
class Statistic:
    """The test statistic of a design at given parameters and group sizes.

    ``to_data`` maps a value of the statistic to the estimate in data units (for
    example a z value to a sample mean); ``shift`` moves the critical values
    outward in statistic units (a continuity correction); ``se`` is the standard
    error of the estimate under the planning values.
    """

    null: Any
    alt: Any
    se: Any
    noncentrality: Any
    to_data: Callable[[Any], Any]
    shift: Any = 0.0


@dataclass
class Explanation:
    """Plain-text pieces of the working that only the design knows."""

    se: str
    null: str
    alt: str
    noncentrality: str
    extra: list[tuple[str, str]] = field(default_factory=list)


class Design:
    """Base class for a design. Subclasses set the class attributes and implement ``statistic``."""

    id: str = ""
    title: str = ""
    family: str = ""
    test: str = ""          # the test the study will run
    method: str = ""        # how power is computed, with its source
    notes: tuple[str, ...] = ()
    params: tuple[ParamSpec, ...] = ()
    effect: str = "delta"   # name of the effect parameter (data units)
    effect_label: str = "difference"
    standardized_name: str = "d"
    statistic_symbol: str = "z"
    estimate_label: str = "estimate"
    n: NSpec = NSpec("observations", "observations", 2, 30, (2, 200), "number of observations")
    directions: tuple[str, ...] = ("two-sided", "upper", "lower")   # alternatives the test offers
    discrete: bool = False       # exact discrete test: power is a saw-tooth in n
    conservative: bool = False   # size at most alpha rather than exactly alpha

    # ---- parameters -------------------------------------------------------
    def param(self, name: str) -> ParamSpec:
        for spec in self.params:
            if spec.name == name:
                return spec
        raise KeyError(name)

    def defaults(self) -> dict[str, float | bool]:
        return {s.name: s.default for s in self.params}

    def effect_bounds(self, p: dict) -> tuple[float, float]:
        """Open interval the effect may take given the other parameters."""
        spec = self.param(self.effect)
        return spec.low, spec.high

    def null_effect(self, p: dict) -> float:
        """The effect at the boundary of the null hypothesis (0, or a margin)."""
        return 0.0

    def effect_sides(self, p: dict, direction: str) -> list[tuple[str, float, float, float]]:
        """For each side the test detects: (name, null effect, sign, bound of the effect).

        The effect on a side is ``null + sign·m`` for ``m >= 0``, and power rises with ``m``.
        """
        lo, hi = self.effect_bounds(p)
        e0 = self.null_effect(p)
        names = {"two-sided": ("upper", "lower"), "upper": ("upper",), "lower": ("lower",)}[direction]
        return [(s, e0, 1.0, hi) if s == "upper" else (s, e0, -1.0, lo) for s in names]

    def alternative_gap(self, p: dict, direction: str) -> str | None:
        """Why the effect lies where power cannot rise with n (``None`` when it can)."""
        x, e0 = p[self.effect], self.null_effect(p)
        where = "at" if x == e0 else ("below" if x < e0 else "above")
        if x == e0:
            return f"the effect is {where} its null value {e0:g}, so power stays at α whatever the sample size"
        if direction == "upper" and x < e0:
            return f"the effect is {where} its null value {e0:g} but the alternative is upper"
        if direction == "lower" and x > e0:
            return f"the effect is {where} its null value {e0:g} but the alternative is lower"
        return None

    custom_power = None  # a design whose rejection region is not a tail sets this to a method

    def smallest_level(self, p: dict, sizes: tuple, direction: str):
        """The smallest significance level the real test can reach at these sizes, or ``None``.

        A design approximating a discrete test whose smallest p-value can exceed α at small sizes
        (the rank tests) returns it here; power is 0 wherever α is below it, since that test can
        never reject there, whatever the approximation says.
        """
        return None

    def power_ceiling(self, p: dict, alpha: float, direction: str) -> tuple[float, str] | None:
        """The highest power any n can give, with the reason, for designs where it is below 1."""
        return None

    def normalize(self, p: dict, given) -> dict:
        """The checked parameters ``p`` made consistent (``given``: what the caller passed).

        A design whose parameters depend on each other (a choice that fixes a number) or that
        reads older records lacking a newer parameter settles them here; the default keeps ``p``.
        """
        return p

    def check(self, p: dict) -> None:
        """Cross-parameter checks; raise InvalidParameter naming the field."""
        lo, hi = self.effect_bounds(p)
        x = p.get(self.effect)
        if x is not None and not (lo < x < hi):
            raise InvalidParameter(self.effect, f"must be in ({lo:g}, {hi:g}) given the other parameters", x)

    # ---- effect sizes -----------------------------------------------------
    def standardized(self, p: dict):
        raise NotImplementedError

    def from_standardized(self, p: dict, s):
        raise NotImplementedError

    # ---- sample size ------------------------------------------------------
    def group_sizes(self, p: dict, n, integer: bool = True) -> tuple:
        return (np.asarray(n, dtype=float),)

    def min_n(self, p: dict) -> int:
        """Smallest allowed ``n`` under the parameters (the allocation ratio may raise it)."""
        return self.n.minimum

    def statistic(self, p: dict, sizes: tuple) -> Statistic:
        raise NotImplementedError

    def explain(self, p: dict, sizes: tuple, st: Statistic) -> Explanation:
        raise NotImplementedError

    def conservative_at(self, p: dict) -> bool:
        """True when the test's size is at most α (exact or corrected) rather than exactly α."""
        return self.conservative

    def effect_scale(self, p: dict) -> float:
        """A natural scale of the effect, for curve ranges and solver brackets."""
        return 1.0


class TwoGroups:
    """Mixin: group 2 has ``ratio`` times as many units as group 1, rounded up."""

    min_group2: int = 1

    def min_n(self, p):
        # ceil(r·n1) >= k exactly when r·n1 > k − 1
        need = math.floor((self.min_group2 - 1) / float(p["ratio"]) + 1e-9) + 1
        return max(self.n.minimum, need)

    def group_sizes(self, p, n, integer=True):
        n1 = np.asarray(n, dtype=float)
        n2 = np.asarray(p["ratio"], dtype=float) * n1
        if integer:
            n2 = np.ceil(n2 - 1e-9)
        else:   # the real-valued relaxation used by the solver never has fewer than the whole minimum
            n2 = np.maximum(n2, self.min_group2)
        return n1, n2


RATIO = ParamSpec("ratio", "allocation ratio n2/n1", "ratio", 1.0,
                  "size of group 2 divided by size of group 1; group 2 is rounded up",
                  low=0.0, high=1000.0, soft=(0.25, 4.0), step=0.05)

TWO_GROUP_N = NSpec("subjects in group 1", "subjects in both groups", 2, 30, (2, 300),
                    "number of subjects in group 1; group 2 has ratio × n1, rounded up")

_REGISTRY: dict[str, Design] = {}


def register(cls: type[Design]) -> type[Design]:
    """Class decorator: add a design (one instance) to the registry."""
    inst = cls()
    if not inst.id or inst.id in _REGISTRY:
        raise ValueError(f"design id missing or already registered: {inst.id!r}")
    names = [s.name for s in inst.params]
    if inst.effect not in names or len(set(names)) != len(names):
        raise ValueError(f"design {inst.id}: bad parameter list {names}")
    _REGISTRY[inst.id] = inst
    return cls


def designs() -> list[Design]:
    """All registered designs, in registration order."""
    return list(_REGISTRY.values())


def get_design(design_id: str) -> Design:
    try:
        return _REGISTRY[design_id]
    except (KeyError, TypeError):
        raise InvalidParameter("design", f"must be one of {sorted(_REGISTRY)}", design_id) from None


def fmt(x, digits: int = 4) -> str:
    """Format a number for the working: significant digits, no trailing noise."""
    x = float(np.asarray(x))
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "∞" if x > 0 else "−∞"
    return f"{x:.{digits}g}"
