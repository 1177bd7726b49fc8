"""Effect-size helpers in one place: data units ↔ standardized effects, both ways.

Each helper lives with its family; this module gathers them so that the app and
scripts find them together.
"""
from __future__ import annotations

import numpy as np

from .standard import cohens_h, proportion_from_h
from .survival import hazard_ratio_from_medians, median_from_hazard_ratio

__all__ = ["cohens_d", "cohens_h", "d_from_dz", "dz_from_d", "hazard_ratio_from_medians",
           "mean_difference", "median_from_hazard_ratio", "proportion_from_h", "sd_of_differences"]


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
