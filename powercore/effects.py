"""Effect-size helpers in one place: data units ↔ standardized effects, both ways.

Each helper lives with its family; this module gathers them so that the app and
scripts find them together, and adds the inverse directions (from a standardized
effect back to the quantities a planner would type).
"""
from __future__ import annotations

import math

import numpy as np

from .anova import f_from_means, sd_of_means
from .chisquare import w_from_proportions, w_from_table
from .regression import f2_from_r2
from .standard import cohens_h, proportion_from_h
from .survival import hazard_ratio_from_medians, median_from_hazard_ratio

__all__ = ["cohens_d", "cohens_h", "d_from_dz", "dz_from_d", "f2_from_r2", "f_from_means",
           "hazard_ratio_from_medians", "mean_difference", "means_at_f", "median_from_hazard_ratio",
           "proportion_from_h", "proportions_at_w", "r2_from_f2", "sd_of_differences", "sd_of_means",
           "w_from_proportions", "w_from_table"]


def cohens_d(mean1, mean2, sd):
    """Standardized difference d = (mean2 − mean1)/sd."""
    return (np.asarray(mean2, dtype=float) - np.asarray(mean1, dtype=float)) / sd


def mean_difference(d, sd):
    """The difference in data units for a standardized difference d and an SD."""
    return np.asarray(d, dtype=float) * sd


def sd_of_differences(sd, rho):
    """SD of within-pair differences from the SD of single measurements and their correlation ρ."""
    return np.asarray(sd, dtype=float) * np.sqrt(2 * (1 - np.asarray(rho, dtype=float)))


def dz_from_d(d, rho):
    """Paired standardized effect d_z = d/√(2(1 − ρ))."""
    return np.asarray(d, dtype=float) / np.sqrt(2 * (1 - np.asarray(rho, dtype=float)))


def d_from_dz(dz, rho):
    """Inverse of ``dz_from_d``."""
    return np.asarray(dz, dtype=float) * np.sqrt(2 * (1 - np.asarray(rho, dtype=float)))


def r2_from_f2(f2, r2_base=0.0):
    """Inverse of ``f2_from_r2``: the full-model R² giving Cohen's f² over a base model's R².

    From f² = (R²_full − R²_base)/(1 − R²_full): R²_full = (R²_base + f²)/(1 + f²).
    """
    f2, base = np.asarray(f2, dtype=float), np.asarray(r2_base, dtype=float)
    if np.any(f2 < 0) or np.any((base < 0) | (base >= 1)):
        raise ValueError(f"need f² ≥ 0 and 0 ≤ r2_base < 1, got f² = {f2!r}, r2_base = {r2_base!r}")
    return (base + f2) / (1 + f2)


def means_at_f(means, sd, f) -> np.ndarray:
    """Group means with the same pattern as ``means`` (and the same grand mean) whose Cohen's f is ``f``.

    The departures from the grand mean are scaled by f / f(means); the pattern must not be flat.
    """
    m = np.asarray(means, dtype=float)
    f0 = f_from_means(m, sd)
    if not f0 > 0:
        raise ValueError("the group means are all equal, so no pattern can be scaled to another f")
    if not (math.isfinite(f) and f >= 0):
        raise ValueError(f"f must be ≥ 0, got {f!r}")
    return m.mean() + (m - m.mean()) * (f / f0)


def proportions_at_w(p0, p1, w) -> np.ndarray:
    """Alternative cell proportions on the line from ``p0`` through ``p1`` whose Cohen's w is ``w``.

    p = p0 + (w / w(p0, p1))·(p1 − p0); still sums to 1. Raises ValueError when a cell
    would leave [0, 1] (no table with that w has this pattern) or when p1 = p0.
    """
    a, b = np.asarray(p0, dtype=float), np.asarray(p1, dtype=float)
    w0 = w_from_proportions(a, b)
    if not w0 > 0:
        raise ValueError("the alternative proportions equal the null ones, so no pattern can be scaled")
    if not (math.isfinite(w) and w >= 0):
        raise ValueError(f"w must be ≥ 0, got {w!r}")
    p = a + (w / w0) * (b - a)
    if np.any(p < -1e-12) or np.any(p > 1 + 1e-12):
        raise ValueError(f"no cell proportions with this pattern have w = {w:g}")
    return np.clip(p, 0.0, 1.0)
