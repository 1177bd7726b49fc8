"""Result objects: frozen, echoing their inputs, serialisable to the JSON record."""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import Any

from .scenario import Scenario

__all__ = ["Result", "SampleSize", "Step"]


@dataclass(frozen=True)
class Step:
    """One line of the working: what is computed, how, and its value."""

    label: str
    text: str
    value: float | None = None


@dataclass(frozen=True)
class SampleSize:
    """The smallest n reaching the target power, with the power at n and at n − 1.

    For exact discrete tests ``stays_from`` is the n from which power stays at or
    above the target (checked up to ``checked_to``); elsewhere it equals ``n``, and
    ``n_continuous`` is the real-valued n at which power equals the target exactly (``None``
    when even the smallest allowed n exceeds the target).
    """

    n: int
    power: float
    n_below: int | None
    power_below: float | None
    group_sizes: tuple[int, ...]
    total: int
    target: float
    stays_from: int
    checked_to: int | None = None
    n_continuous: float | None = None   # the real-valued root, for continuous designs


@dataclass(frozen=True)
class Result:
    """Everything ``evaluate`` found for a scenario, with the working that led there.

    ``solved`` is the scenario with the unknown filled in; ``critical`` holds the
    lower and upper critical values on the statistic and data scales (``None``
    where a side does not reject); ``detectable`` the smallest detectable effect
    on each side at the current n; ``size`` the probability of rejecting when
    the null hypothesis holds (α, or less for exact and corrected tests).
    ``alpha`` is the familywise level of the scenario and ``alpha_test`` the level
    of each test after the multiplicity adjustment; ``group_sizes`` are analysed
    and ``enrolled_sizes`` enrolled (after the dropout allowance).
    """

    scenario: Scenario
    solved: Scenario
    design_title: str
    power: float
    n: int
    n_unit: str
    group_sizes: tuple[int, ...]
    total: int
    total_unit: str
    alpha: float
    alpha_test: float
    enrolled_sizes: tuple[int, ...]
    enrolled_total: int
    effect: float
    standardized_effect: float
    standardized_name: str
    se: float
    noncentrality: float
    critical: dict[str, tuple[float | None, float | None]]
    rejects: str          # "outside": reject beyond the critical values; "inside": between them
    size: float
    sample_size: SampleSize | None
    detectable: dict[str, float | None]
    working: tuple[Step, ...]
    notes: tuple[str, ...]
    messages: dict[str, str]

    @property
    def beta(self) -> float:
        """Type II error probability, 1 − power."""
        return 1.0 - self.power

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dict (NaN and infinities become ``None``)."""
        out = {
            "scenario": self.scenario.to_dict(),
            "solved": self.solved.to_dict(),
            "design_title": self.design_title,
            "power": self.power,
            "beta": self.beta,
            "n": self.n,
            "n_unit": self.n_unit,
            "group_sizes": list(self.group_sizes),
            "total": self.total,
            "total_unit": self.total_unit,
            "alpha": self.alpha,
            "alpha_test": self.alpha_test,
            "enrolled_sizes": list(self.enrolled_sizes),
            "enrolled_total": self.enrolled_total,
            "effect": self.effect,
            "standardized_effect": self.standardized_effect,
            "standardized_name": self.standardized_name,
            "se": self.se,
            "noncentrality": self.noncentrality,
            "critical": {k: list(v) for k, v in self.critical.items()},
            "rejects": self.rejects,
            "size": self.size,
            "sample_size": None if self.sample_size is None else asdict(self.sample_size),
            "detectable": dict(self.detectable),
            "working": [asdict(s) for s in self.working],
            "notes": list(self.notes),
            "messages": dict(self.messages),
        }
        return _json_safe(out)


def _json_safe(x: Any) -> Any:
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, dict):
        return {k: _json_safe(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_json_safe(v) for v in x]
    return x
