"""Guards in the core that the views rely on."""
from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import stats

import powercore as pc
from powercore.distributions import StudentT


def test_scipy_nct_pdf_still_overflows_at_large_df():
    """scipy 1.17's nct.pdf raises OverflowError at 1000 df in the lower tail; if this fails, scipy fixed it
    and the fallback in StudentT.pdf may go."""
    with pytest.raises(OverflowError), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        stats.nct.pdf(-5.0, 1000, 3.0)


def test_noncentral_t_pdf_is_finite_and_integrates_to_one_at_large_df():
    """Our noncentral t density stays finite at 2000 df and integrates to 1 (trapezoid rule, ±1e-4)."""
    x = np.linspace(-6, 12, 4001)
    f = StudentT(2000, 3.0).pdf(x)
    assert np.all(np.isfinite(f)) and np.trapezoid(f, x) == pytest.approx(1.0, abs=1e-4)
    # close to N(3, 1) at this df (normal limit, common practice)
    assert np.max(np.abs(f - stats.norm.pdf(x, 3.0, 1.0))) < 2e-3


def test_densities_for_large_groups():
    """The density view works for two groups of 1000 (a case that used to overflow)."""
    dens = pc.densities(pc.Scenario("two-means-t", {"delta": 1.0, "sd": 10.0}, n=1000))
    assert np.all(np.isfinite(dens.alt)) and dens.alt.max() > 0.3


def test_densities_use_the_per_test_level():
    """With a multiplicity adjustment the drawn critical value is the adjusted one."""
    sc = pc.Scenario("mean-z", n=30, adjustments={"comparisons": 5, "multiplicity": "bonferroni"})
    dens = pc.densities(sc)
    assert dens.critical[1] == pytest.approx(stats.norm.isf(0.005), rel=1e-12)   # 0.05/5 two-sided


def test_equivalence_densities_carry_the_inside_region_on_both_scales():
    """For TOST the densities say they reject inside, and both scales give the same interval."""
    sc = pc.Scenario("two-means-equivalence", {"delta": 0.0, "sd": 10.0, "margin": 6.0}, n=80)
    r = pc.evaluate(sc)
    stat, data = pc.densities(sc, "statistic"), pc.densities(sc, "data")
    assert stat.rejects == data.rejects == "inside" == r.rejects
    assert data.critical == pytest.approx(r.critical["data"], rel=1e-12)
    assert stat.critical == pytest.approx(r.critical["statistic"], rel=1e-12)
    se = 10.0 * np.sqrt(2 / 80)
    assert 6.0 + stat.critical[1] * se == pytest.approx(data.critical[1], rel=1e-12)   # T = (D − M)/SE
