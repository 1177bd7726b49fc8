"""powercore: power, sample size and detectable effect for planned studies.

Build a :class:`Scenario` (from keyword arguments or ``Scenario.from_dict``),
then call :func:`evaluate`; the :class:`Result` holds the numbers, the working
and ``to_dict()`` for the JSON record. ``designs()`` lists the registered designs.
"""
# Importing the family modules registers their designs, in this order (the picker's order).
from . import means, proportions, correlation, anova, chisquare, regression, paired_props, rates, rank, margins, survival, cluster  # noqa: F401,I001
from .curves import Curve, Densities, curve_effect, curve_n, densities, effect_range, n_range
from .design import Design, designs, get_design
from .engine import (critical_values, detectable_effect, evaluate, power, power_at, sample_size,
                     significance_level)
from .errors import InvalidParameter, NoSolution, RecordError
from .result import Result, SampleSize, Step
from .scenario import DIRECTIONS, FINDS, SCHEMA_VERSION, Scenario

__version__ = "0.1.0"

__all__ = sorted([
    "Curve", "DIRECTIONS", "Densities", "Design", "FINDS", "InvalidParameter", "NoSolution",
    "RecordError", "Result", "SCHEMA_VERSION", "SampleSize", "Scenario", "Step", "critical_values",
    "curve_effect", "curve_n", "densities", "designs", "detectable_effect", "effect_range",
    "evaluate", "get_design", "n_range", "power", "power_at", "sample_size", "significance_level",
])
