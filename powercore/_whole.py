"""Checks shared by designs with whole-number parameters (groups, degrees of freedom, predictors).

``ParamSpec`` has only real and bool kinds; a whole-number parameter is a real one with
``step = 1``, and a design lists it in ``whole_params`` so that ``check`` refuses 2.5.
The same check lets the effect sit on a closed lower bound (0 is the null of an F or
chi-square test, whose effect cannot be negative).
"""
from __future__ import annotations

from .errors import InvalidParameter

__all__ = ["WholeParams"]


class WholeParams:
    """Mixin for a Design: whole-number parameters, and an effect allowed on a closed lower bound."""

    whole_params: tuple[str, ...] = ()

    def check(self, p):
        for name in self.whole_params:
            value = p.get(name)
            if value is not None and not float(value).is_integer():
                spec = self.param(name)
                raise InvalidParameter(name, f"must be a whole number in {spec.domain_text()}", value)
        x = p.get(self.effect)
        if x is None:
            return
        spec = self.param(self.effect)
        lo, hi = self.effect_bounds(p)
        above = x >= lo if (spec.low_closed and lo == spec.low) else x > lo
        if not (above and x < hi):
            left = "[" if spec.low_closed and lo == spec.low else "("
            raise InvalidParameter(self.effect, f"must be in {left}{lo:g}, {hi:g}) given the other parameters", x)
