"""The scenario: a validated, immutable statement of what the planner assumes."""
from __future__ import annotations

import math
import numbers
import types
from dataclasses import dataclass, field, replace
from typing import Any, Mapping

import numpy as np

from . import adjust
from .design import get_design
from .errors import InvalidParameter, RecordError

__all__ = ["DIRECTIONS", "FINDS", "N_MAX", "SCHEMA_VERSION", "Scenario"]

SCHEMA_VERSION = 1
DIRECTIONS = ("two-sided", "upper", "lower")
FINDS = ("power", "n", "effect", "alpha")
N_MAX = 10**9
_KEYS = ("design", "find", "direction", "alpha", "target_power", "n", "params", "adjustments")


@dataclass(frozen=True)
class Scenario:
    """What the planner assumes: design, its parameters, α, direction, n, and what to find.

    ``find`` names the unknown: ``"power"``, ``"n"`` (sample size), ``"effect"``
    (smallest detectable effect) or ``"alpha"`` (significance level). The unknown
    may be left as ``None``; every other value is checked against its domain.
    Missing design parameters take the design's defaults. ``adjustments`` holds
    the dropout allowance and the split of α over several tests (see
    :mod:`powercore.adjust`); α is then the familywise level.
    """

    design: str
    params: Mapping[str, Any] = field(default_factory=dict)
    n: int | None = None
    alpha: float | None = 0.05
    direction: str | None = None   # None: the design's first (usually two-sided)
    find: str = "power"
    target_power: float = 0.8
    adjustments: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        d = get_design(self.design)
        if not isinstance(self.params, Mapping):
            raise InvalidParameter("params", "must be an object of parameter values", self.params)
        known = {s.name for s in d.params}
        for name in self.params:
            if name not in known:
                raise InvalidParameter(name, f"is not a parameter of design {d.id} (known: {sorted(known)})",
                                       self.params[name])
        if self.find not in FINDS:
            raise InvalidParameter("find", f"must be one of {list(FINDS)}", self.find)
        if self.direction is None:
            object.__setattr__(self, "direction", d.directions[0])
        if self.direction not in DIRECTIONS:
            raise InvalidParameter("direction", f"must be one of {list(DIRECTIONS)}", self.direction)
        if self.direction not in d.directions:
            raise InvalidParameter("direction", f"must be one of {list(d.directions)} for design {d.id}",
                                   self.direction)
        params: dict[str, Any] = {}
        for spec in d.params:
            value = self.params.get(spec.name, spec.default)
            if value is None and spec.name == d.effect and self.find == "effect":
                params[spec.name] = None
                continue
            params[spec.name] = spec.check(value)
        params = d.normalize(params, self.params)
        d.check(params)
        object.__setattr__(self, "params", types.MappingProxyType(params))

        alpha = self.alpha
        if not (alpha is None and self.find == "alpha"):
            alpha = _open_unit("alpha", alpha)
        object.__setattr__(self, "alpha", alpha)
        object.__setattr__(self, "target_power", _open_unit("target_power", self.target_power))
        if self.find in ("n", "effect") and alpha is not None and self.target_power <= alpha:
            raise InvalidParameter("target_power", f"must exceed alpha = {alpha:g}", self.target_power)
        n = self.n
        if not (n is None and self.find == "n"):
            n = _whole("n", n)
            low = d.min_n(params)
            if n < low:
                raise InvalidParameter("n", f"must be at least {low} {d.n.unit} for design {d.id}", n)
            if n > N_MAX:
                raise InvalidParameter("n", f"must be at most {N_MAX:g}", n)
        object.__setattr__(self, "n", n)
        object.__setattr__(self, "adjustments", types.MappingProxyType(adjust.validate(self.adjustments)))

    # ---- conversion -------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        """A plain, JSON-ready dict; ``Scenario.from_dict`` of it gives this scenario back."""
        return {"design": self.design, "find": self.find, "direction": self.direction,
                "alpha": self.alpha, "target_power": self.target_power, "n": self.n,
                "params": dict(self.params), "adjustments": dict(self.adjustments)}

    @classmethod
    def from_dict(cls, data: Any) -> "Scenario":
        """Build from a plain dict, as read from JSON; unknown keys are refused by name."""
        if not isinstance(data, Mapping):
            raise RecordError("scenario", f"must be a JSON object, got {type(data).__name__}")
        extra = [k for k in data if k not in _KEYS and k != "schema_version"]
        if extra:
            raise InvalidParameter(str(extra[0]), f"is not a scenario field (known: {list(_KEYS)})",
                                   data[extra[0]])
        if "schema_version" in data and data["schema_version"] != SCHEMA_VERSION:
            raise InvalidParameter("schema_version", f"must be {SCHEMA_VERSION}", data["schema_version"])
        if "design" not in data:
            raise InvalidParameter("design", "is required", None)
        kwargs = {k: data[k] for k in _KEYS if k in data}
        return cls(**kwargs)

    def replace(self, **changes: Any) -> "Scenario":
        """A copy with some fields changed; ``params`` given here are merged into the current ones."""
        if "params" in changes:
            changes["params"] = {**self.params, **changes["params"]}
        if "adjustments" in changes:
            changes["adjustments"] = {**self.adjustments, **changes["adjustments"]}
        return replace(self, **changes)


def _open_unit(name: str, value: Any) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise InvalidParameter(name, "must be a number in (0, 1)", value)
    x = float(value)
    if not (math.isfinite(x) and 0.0 < x < 1.0):
        raise InvalidParameter(name, "must be in (0, 1)", value)
    return x


def _whole(name: str, value: Any) -> int:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise InvalidParameter(name, "must be a whole number", value)
    if not isinstance(value, numbers.Integral):
        value = float(value)
    if isinstance(value, float) and not (math.isfinite(value) and value.is_integer()):
        raise InvalidParameter(name, "must be a whole number", value)
    if isinstance(value, float) and abs(value) > 1e15:
        raise InvalidParameter(name, f"must be at most {N_MAX:g}", value)
    return int(value)
