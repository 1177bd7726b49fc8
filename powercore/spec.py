"""Declarations of a design's parameters and of what its sample size counts."""
from __future__ import annotations

import math
import numbers

import numpy as np
from dataclasses import dataclass

from .errors import InvalidParameter

__all__ = ["KINDS", "NSpec", "ParamSpec"]

KINDS = ("real", "bool", "choice")


@dataclass(frozen=True)
class ParamSpec:
    """One parameter of a design: its hard domain, the range a slider shows, and its meaning.

    ``low``/``high`` are enforced (open unless ``low_closed``/``high_closed``);
    ``soft`` is the typical range a slider offers. ``kind`` is ``"real"``, ``"bool"`` or
    ``"choice"``; a choice takes one of the strings in ``choices`` (its ``default`` is one of them).
    ``used_when`` = (other parameter, value) says the parameter matters only when the other
    parameter takes that value (views may hide it otherwise).
    """

    name: str
    label: str
    unit: str
    default: float | bool | str
    doc: str
    low: float = -math.inf
    high: float = math.inf
    soft: tuple[float, float] = (0.0, 1.0)
    low_closed: bool = False
    high_closed: bool = False
    step: float = 0.01
    kind: str = "real"
    choices: tuple[str, ...] = ()
    used_when: tuple[str, str] | None = None

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"kind must be one of {list(KINDS)}, got {self.kind!r}")
        if self.kind == "choice" and (len(self.choices) < 2 or self.default not in self.choices):
            raise ValueError(f"choice parameter {self.name} needs at least 2 choices including its default")

    def check(self, value: object) -> float | bool:
        """Return ``value`` converted to the parameter's type, or raise InvalidParameter."""
        if self.kind == "bool":
            if isinstance(value, (bool, np.bool_)):
                return bool(value)
            raise InvalidParameter(self.name, "must be true or false", value)
        if self.kind == "choice":
            if isinstance(value, str) and value in self.choices:
                return value
            raise InvalidParameter(self.name, f"must be one of {list(self.choices)}", value)
        if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
            raise InvalidParameter(self.name, "must be a number", value)
        x = float(value)
        if not math.isfinite(x):
            raise InvalidParameter(self.name, "must be a finite number", value)
        below = x < self.low if self.low_closed else x <= self.low
        above = x > self.high if self.high_closed else x >= self.high
        if below or above:
            raise InvalidParameter(self.name, f"must be in {self.domain_text()}", value)
        return x

    def domain_text(self) -> str:
        if self.kind == "choice":
            return "one of " + ", ".join(self.choices)
        if self.kind == "bool":
            return "true/false"
        left = "[" if self.low_closed else "("
        right = "]" if self.high_closed else ")"
        return f"{left}{_num(self.low)}, {_num(self.high)}{right}"


@dataclass(frozen=True)
class NSpec:
    """What the design's sample size ``n`` counts, and its smallest allowed value.

    ``unit`` is a short plural noun ("observations", "pairs", "subjects in group 1");
    ``total_unit`` names what the total counts.
    """

    unit: str
    total_unit: str
    minimum: int
    default: int
    soft: tuple[int, int]
    doc: str


def _num(x: float) -> str:
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:g}"
