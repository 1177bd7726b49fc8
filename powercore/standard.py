"""Standardized effects shared by many designs: δ/σ for means, Cohen's h for proportions.

Mixins to put before :class:`~powercore.design.Design` in a design's bases, so
that a design states which parameter is its spread or its reference proportion
instead of writing the conversions again.
"""
from __future__ import annotations

import numpy as np

__all__ = ["PerProportion", "PerRmsSD", "PerSD", "cohens_h", "proportion_from_h"]


def cohens_h(p_from, p_to):
    """Cohen's h: difference of the arcsine-square-root transforms, 2·asin√p_to − 2·asin√p_from."""
    return 2 * np.arcsin(np.sqrt(p_to)) - 2 * np.arcsin(np.sqrt(p_from))


def proportion_from_h(p_from, h):
    """The proportion whose h from ``p_from`` is ``h`` (NaN when none exists)."""
    angle = (np.asarray(h) + 2 * np.arcsin(np.sqrt(p_from))) / 2
    ok = (angle > 0) & (angle < np.pi / 2)
    return np.where(ok, np.sin(np.clip(angle, 0, np.pi / 2)) ** 2, np.nan)


class PerSD:
    """Standardized effect δ/σ, σ being the parameter named ``sd_param``."""

    sd_param = "sd"

    def spread(self, p):
        return p[self.sd_param]

    def standardized(self, p):
        return np.asarray(p[self.effect]) / self.spread(p)

    def from_standardized(self, p, s):
        return np.asarray(s) * self.spread(p)

    def effect_scale(self, p):
        return float(np.asarray(self.spread(p)))


class PerRmsSD(PerSD):
    """Standardized effect δ/√((σ1² + σ2²)/2) for two groups with their own SDs."""

    def spread(self, p):
        return np.sqrt((p["sd1"] ** 2 + p["sd2"] ** 2) / 2)


class PerProportion:
    """Effect = alternative proportion minus the reference ``base_param``; standardized as Cohen's h."""

    base_param = "p1"
    standardized_name = "h"

    def effect_bounds(self, p):
        return -p[self.base_param], 1 - p[self.base_param]

    def standardized(self, p):
        b = p[self.base_param]
        return cohens_h(b, b + np.asarray(p[self.effect]))

    def from_standardized(self, p, s):
        return proportion_from_h(p[self.base_param], s) - p[self.base_param]

    def effect_scale(self, p):
        b = p[self.base_param]
        return float(np.sqrt(b * (1 - b)))
